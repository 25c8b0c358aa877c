"""Machine-readable renderings of an :class:`~lumeval.engine.Evaluation`: JSON and CSV.

The JSON document is a stable interface (documented in docs/output-formats.md): names never
change meaning; new names may be added. Numbers are unrounded; an undefined figure is
``null`` (JSON) or an empty cell (CSV), never a made-up number.
"""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np

JSON_SCHEMA_VERSION = 1


def _num(v):
    """A JSON-safe float: NaN and infinities become None."""
    f = float(v)
    return f if math.isfinite(f) else None


def _nums(a):
    return [_num(v) for v in np.asarray(a, dtype=float).ravel()]


def spectrum_record(ev, i: int) -> dict:
    """One spectrum's figures as the JSON object documented in docs/output-formats.md."""
    cri, tm, ph = ev.cri, ev.tm30, ev.photometry
    cct = _num(ev.cct_K[i])
    return {
        "name": ev.spectra.names[i],
        "source": ev.spectra.sources[i],
        "X": _num(ev.XYZ[i, 0]),
        "Y": _num(ev.XYZ[i, 1]),
        "Z": _num(ev.XYZ[i, 2]),
        "x": _num(ev.x[i]),
        "y": _num(ev.y[i]),
        "u": _num(ev.u[i]),
        "v": _num(ev.v[i]),
        "u_prime": _num(ev.u_prime[i]),
        "v_prime": _num(ev.v_prime[i]),
        "cct_K": cct,
        "cct_undefined_reason": ev.cct_reason[i] or None,
        "duv": _num(ev.duv[i]),
        "cri": {
            "Ra": _num(cri.Ra[i]),
            "R": {f"R{k + 1}": _num(cri.R[i, k]) for k in range(14)},
            "dc": _num(cri.dc[i]),
            "reference": cri.reference[i] if cct is not None else None,
        },
        "cie2017": {"Rf": _num(ev.cie2017_Rf[i])},
        "tm30": {
            "Rf": _num(tm.Rf[i]),
            "Rg": _num(tm.Rg[i]),
            "Rf_h": _nums(tm.Rf_h[i]),
            "Rcs_h": _nums(tm.Rcs_h[i]),
            "Rhs_h": _nums(tm.Rhs_h[i]),
            "reference": tm.reference[i] if cct is not None else None,
        },
        "ler_lm_per_W": _num(ph.ler_lm_per_W[i]),
        "sp_ratio": _num(ph.sp_ratio[i]),
        "melanopic_der": _num(ph.melanopic_der[i]),
        "peak_nm": _num(ph.peak_nm[i]),
        "warnings": list(ev.warnings[i]),
    }


def evaluation_document(ev) -> dict:
    """The whole JSON document for an evaluation."""
    from .. import __version__

    return {
        "lumeval_version": __version__,
        "schema_version": JSON_SCHEMA_VERSION,
        "methods": dict(ev.methods),
        "grid": {
            "start_nm": _num(ev.spectra.wavelengths_nm[0]),
            "end_nm": _num(ev.spectra.wavelengths_nm[-1]),
            "step_nm": ev.spectra.spacing_nm,
        },
        "spectra": [spectrum_record(ev, i) for i in range(len(ev))],
        "cautions": list(CAUTIONS),
    }


def to_json(ev) -> str:
    return json.dumps(evaluation_document(ev), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


#: Column order of the per-spectrum CSV (one row per spectrum).
CSV_COLUMNS: tuple[str, ...] = (
    ("name", "source", "x", "y", "u_prime", "v_prime", "cct_K", "duv", "Ra")
    + tuple(f"R{k}" for k in range(1, 15))
    + ("dc", "cie2017_Rf", "Rf", "Rg")
    + tuple(f"Rf_h{j}" for j in range(1, 17))
    + tuple(f"Rcs_h{j}" for j in range(1, 17))
    + tuple(f"Rhs_h{j}" for j in range(1, 17))
    + ("ler_lm_per_W", "sp_ratio", "melanopic_der", "peak_nm", "warnings")
)


def csv_rows(ev):
    """Yield one dict per spectrum with the :data:`CSV_COLUMNS` keys (numbers unrounded)."""
    for i in range(len(ev)):
        row = {"name": ev.spectra.names[i], "source": ev.spectra.sources[i]}
        for col in CSV_COLUMNS[2:-1]:
            v = float(ev.figure(col)[i])
            row[col] = repr(v) if math.isfinite(v) else ""
        row["warnings"] = " | ".join(ev.warnings[i])
        yield row


def to_csv(ev) -> str:
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(CSV_COLUMNS), lineterminator="\n")
    w.writeheader()
    for row in csv_rows(ev):
        w.writerow(row)
    return buf.getvalue()


#: The cautions every report carries (docs/cautions.md explains them).
CAUTIONS: tuple[str, ...] = (
    "Colour metrics only: this is not a photobiological (IEC 62471), flicker or electrical safety assessment.",
    "Results are only as good as the measured spectrum (instrument calibration, bandwidth, stray light, noise, "
    "operating point and temperature of the sample).",
    "Acceptance decisions defer to the contract, local codes and licensed professional practice.",
)
