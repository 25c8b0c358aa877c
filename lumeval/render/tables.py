"""Machine-readable renderings of an :class:`~lumeval.engine.Evaluation`: JSON and CSV.

The JSON document is a stable interface (documented in docs/output-formats.md): names never
change meaning; new names may be added. Numbers are unrounded; an undefined figure is
``null`` (JSON) or an empty cell (CSV), never a made-up number.
"""

from __future__ import annotations

import csv
import io
import itertools
import json
import math
from collections.abc import Iterable
from typing import Any

import numpy as np

JSON_SCHEMA_VERSION = 1


def _num(v):
    """A JSON-safe float: NaN and infinities become None."""
    f = float(v)
    return f if math.isfinite(f) else None


def _nums(a):
    return [_num(v) for v in np.asarray(a, dtype=float).ravel()]


def _put(rec: dict, path: tuple, value) -> None:
    """Set ``value`` at ``path`` in the nested record (str keys: objects; int keys: arrays)."""
    node: Any = rec
    for k, nxt in itertools.pairwise(path):
        child = node[k] if isinstance(node, list) else node.get(k)
        if child is None:
            child = [] if isinstance(nxt, int) else {}
            if isinstance(node, list):
                node.extend([None] * (k + 1 - len(node)))
                node[k] = child
            else:
                node[k] = child
        node = child
    last = path[-1]
    if isinstance(node, list):
        node.extend([None] * (last + 1 - len(node)))
        node[last] = value
    else:
        node[last] = value


def _grid(wl) -> dict:
    wl = np.asarray(wl, dtype=float)
    return {"start_nm": _num(wl[0]), "end_nm": _num(wl[-1]), "step_nm": _num(wl[1] - wl[0]) if wl.size > 1 else None}


def _outside_validity_figures(ev, i: int) -> list[str]:
    from ..engine import FIGURE_NAMES

    flag = getattr(ev, "outside_validity_of", None)
    if flag is None:
        return []
    return [k for k in FIGURE_NAMES if flag(k)[i]]


def _validity_record(ev, i: int):
    """JSON: null where every figure is within its validity range, else the flag tools read."""
    figs = _outside_validity_figures(ev, i)
    if not figs:
        return None
    from ..engine import OUTSIDE_VALIDITY

    return {"flag": OUTSIDE_VALIDITY, "reason": ev.validity_reason(i), "figures": figs}


def spectrum_records(ev) -> list[dict]:
    """Every spectrum's figures as the JSON objects documented in docs/output-formats.md.

    The figures and where they sit come from the figure registry (:mod:`lumeval.figures`,
    ``json_path``); each figure is read once for all spectra."""
    from .. import figures

    n = len(ev)
    values = {f.name: f.value(ev) for f in figures.FIGURES.values()}
    out = []
    ref_T = ev.cct_K if getattr(ev, "reference_cct_K", None) is None else ev.reference_cct_K
    for i in range(n):
        defined = math.isfinite(float(ref_T[i]))  # a reference illuminant exists
        rec: dict = {
            "name": ev.spectra.names[i],
            "source": ev.spectra.sources[i],
            "X": _num(ev.XYZ[i, 0]),
            "Y": _num(ev.XYZ[i, 1]),
            "Z": _num(ev.XYZ[i, 2]),
        }
        for f in figures.FIGURES.values():
            _put(rec, f.json_path, _num(values[f.name][i]))
            if f.name == "cct_K":
                rec["cct_undefined_reason"] = ev.cct_reason[i] or None
            if f.name == "duv":
                # the reference illuminant's temperature: the CCT, or where |Duv| > 0.05 the
                # nearest Planckian temperature (then "outside_validity" lists the figures
                # computed against it)
                rec["reference_cct_K"] = _num(ref_T[i])
                rec["outside_validity"] = _validity_record(ev, i)
        rec.setdefault("cri", {})["reference"] = ev.cri.reference[i] if defined else None
        rec.setdefault("tm30", {})["reference"] = ev.tm30.reference[i] if defined else None
        rec["grid"] = _grid(ev.spectra.wavelengths(i))  # this spectrum's own computation grid
        _put_class_and_scale(rec, ev, i)
        rec["warnings"] = list(ev.warnings[i])
        out.append(rec)
    return out


def _put_class_and_scale(rec: dict, ev, i: int) -> None:
    """The words beside the registry's numbers: the ANSI C78.377 edition and whether the point is
    inside the category, the SDCM centre, and what absolute quantity the data are (if any)."""
    from ..criteria.regions import ansi_edition_name

    cc = getattr(ev, "chromaticity_class", None)
    if cc is not None and "ansi_c78377" in rec:
        ok = math.isfinite(float(cc.ansi_nominal_K[i]))
        rec["ansi_c78377"]["edition"] = ansi_edition_name(cc.ansi_edition)
        rec["ansi_c78377"]["inside"] = bool(cc.ansi_inside[i]) if ok else None
    if cc is not None and "sdcm" in rec:
        rec["sdcm"]["centre"] = f"IEC 60081 {cc.sdcm_centre[i]}" if cc.sdcm_centre[i] else None
    ab = getattr(ev, "absolute", None)
    if ab is not None:
        rec["absolute_quantity"] = {"quantity": ab.quantity[i] or None, "unit": ab.unit_text[i] or None}


def spectrum_record(ev, i: int) -> dict:
    """One spectrum's figures as the JSON object documented in docs/output-formats.md."""
    return spectrum_records(ev)[i]


def evaluation_document(ev) -> dict:
    """The whole JSON document for an evaluation."""
    from ..schemas import header

    return {
        **header("inspect"),
        "methods": dict(ev.methods),
        # the computation grid shared by every spectrum, or null when they lie on several
        # grids (each spectrum is evaluated on its own; see each record's "grid")
        "grid": _grid(ev.spectra.wavelengths_nm) if ev.spectra.one_grid else None,
        "spectra": spectrum_records(ev),
        "run_warnings": list(ev.run_warnings),
        "cautions": list(CAUTIONS),
    }


def to_json(ev) -> str:
    return json.dumps(evaluation_document(ev), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def csv_columns() -> tuple[str, ...]:
    """Column order of the per-spectrum CSV (one row per spectrum): name, source, every figure
    the registry marks for the CSV (:mod:`lumeval.figures`), warnings."""
    from .. import figures

    return ("name", "source") + tuple(f.name for f in figures.FIGURES.values() if f.csv) + ("warnings", "outside_validity")


def __getattr__(name: str):
    if name == "CSV_COLUMNS":  # the column order as it stands in the registry
        return csv_columns()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def csv_rows(ev):
    """Yield one dict per spectrum with the :func:`csv_columns` keys (numbers unrounded; text
    cells neutralised for spreadsheets, :func:`lumeval.render.safe.csv_text`)."""
    from .. import figures
    from .safe import csv_first_cell, csv_text

    cols = [figures.FIGURES[c] for c in csv_columns()[2:-2]]
    values = {f.name: f.value(ev) for f in cols}
    for i in range(len(ev)):
        row = {"name": csv_first_cell(ev.spectra.names[i]), "source": csv_text(ev.spectra.sources[i])}
        for f in cols:
            v = float(values[f.name][i])
            row[f.name] = repr(v) if math.isfinite(v) else ""
        # warnings of the vectorised run concern every spectrum: each row carries them
        row["warnings"] = csv_text(" | ".join((*ev.warnings[i], *ev.run_warnings)))
        # the figures computed outside their validity range (|Duv| > 0.05), for tools; "" if none
        row["outside_validity"] = " ".join(_outside_validity_figures(ev, i))
        yield row


def to_csv(ev) -> str:
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(csv_columns()), lineterminator="\n")
    w.writeheader()
    for row in csv_rows(ev):
        w.writerow(row)
    return buf.getvalue() + csv_notes()


#: What the note rows at the end of a CSV report start with (docs/output-formats.md, "CSV").
CSV_NOTE = "# caution: "

#: What a note row about the run as a whole starts with (the criteria file's warnings, clauses
#: another command judges, the computation's own warnings): rows just before the cautions.
CSV_RUN_NOTE = "# note: "


def csv_notes(notes: Iterable[str] = ()) -> str:
    """The note rows that end a CSV report, one row of one cell each: first ``# note: ...`` for
    each of ``notes`` (text from files inside them is cleaned of control characters,
    :func:`lumeval.render.safe.csv_text`), then the cautions, ``# caution: Colour metrics only:
    ...`` (quoted where the text holds a comma). Without ``notes``: the cautions only, the exact
    tail by which lumeval knows its own CSV reports (:mod:`lumeval.lots.own_reports`).

    A CSV report is a table for other programs and for spreadsheets: the header stays the first
    row and every data row keeps its place; the notes follow the data, so a spreadsheet shows
    them under the table and a program drops the rows whose first cell starts with ``#`` (data
    rows never do: :func:`lumeval.render.safe.csv_first_cell`). lumeval's own CSV readers skip
    such rows. Nothing goes to stderr (docs/output-formats.md)."""
    from .safe import csv_text

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    for n in notes:
        w.writerow([csv_text(CSV_RUN_NOTE + str(n))])  # starts with "#": a spreadsheet reads it as text
    for c in CAUTIONS:
        w.writerow([CSV_NOTE + c])
    return buf.getvalue()


#: Columns of ``lumeval check --format csv``, one row per spectrum and clause (docs/criteria.md,
#: docs/output-formats.md). Stable order: a new column is added at the end.
CHECK_CSV_COLUMNS = (
    "spectrum", "source", "verdict", "clause_id", "group", "kind", "label", "figure", "unit", "measured",
    "lower", "upper", "limit", "margin", "delta_upvp", "u", "p_conformance", "outcome", "reason", "warnings",
    "round_to", "compared",
)


def _cells(values: Any, n: int) -> list[str]:
    """Unrounded numbers as CSV cells (NaN, infinities and None: empty); ``n`` empty cells for a
    missing column."""
    if values is None:
        return [""] * n
    return [repr(v) if math.isfinite(v) else "" for v in np.asarray(values, dtype=float).ravel().tolist()]


def check_to_csv(result) -> str:
    """The CSV report of a check (a :class:`lumeval.criteria.verdicts.CheckResult`): one row per
    (spectrum, clause) in the columns :data:`CHECK_CSV_COLUMNS`; undefined numbers are empty
    cells; text cells are neutralised for spreadsheets (:func:`lumeval.render.safe.csv_text`).

    ``warnings`` holds what reading, preparing and evaluating did or found for the row's
    spectrum (extrapolated range, interpolation, figures outside their validity range), joined
    with `` | `` as in the inspect CSV, on every row of that spectrum: a verdict is never read
    apart from them. The notes of the check as a whole (``result.notes``: the criteria file's
    warnings, clauses judged by another command, the computation's own warnings) are ``# note:``
    rows after the data, just before the cautions (:func:`csv_notes`)."""
    from .safe import csv_first_cell as first
    from .safe import csv_text as t

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CHECK_CSV_COLUMNS)
    n = len(result.names)
    cols = []
    for r in result.results:
        lo = _cells([r.lower], 1)[0] if r.lower is not None else ""
        hi = _cells([r.upper], 1)[0] if r.upper is not None else ""
        cols.append((r, _cells(r.measured, n), lo, hi, _cells(r.margin, n), _cells(r.details.get("delta_upvp"), n),
                     _cells(r.uncertainty, n), _cells(r.p_conformance, n), r.reason if r.reason else ("",) * n,
                     "" if getattr(r, "round_to", None) is None else str(r.round_to), _cells(r.details.get("compared"), n)))
    ws = result.warnings
    for i, (name, src, verdict) in enumerate(zip(result.names, result.sources, result.verdicts)):
        warned = t(" | ".join(ws[i])) if i < len(ws) else ""
        for r, meas, lo, hi, mg, d, u, p, why, rt, cmp in cols:
            w.writerow((first(name), t(src), verdict, t(r.clause_id), t(r.group), t(r.kind), t(r.label), t(r.figure), t(r.unit),
                        meas[i], lo, hi, t(r.limit_text), mg[i], d[i], u[i], p[i], r.outcome[i], t(why[i]), warned, rt, cmp[i]))
    return buf.getvalue() + csv_notes(tuple(getattr(result, "notes", ())) + uncertainty_csv_notes(result))


def uncertainty_csv_notes(result) -> tuple[str, ...]:
    """The ``# note:`` rows of a check judged under measurement uncertainty (none otherwise): the
    decision rule with k, r and the Monte Carlo's draws and seed, so that the CSV states the rule
    with the statement of conformity (ISO/IEC 17025:2017 §7.8.6, quoted from memory), then the
    uncertainty block's own notes (default model, few draws, an adaptive run that did not
    stabilise)."""
    info = getattr(result, "uncertainty", None) or {}
    if not info:
        return ()
    mc = info.get("monte_carlo", {})
    used = sorted(set(mc.get("draws_used") or ()))
    draws = ", ".join(map(str, used)) if used else str(mc.get("draws", "?"))
    k, r = info.get("coverage_factor", 2.0), info.get("guard_band_factor", 1.0)
    band = "no guard band (w = 0)" if info.get("decision_rule") == "simple" else f"guard band w = r × U with r = {r:g}"
    return (f"{info.get('rule_text', '')} (decision_rule = {info.get('decision_rule', '?')})",
            f"expanded uncertainty U = k × u with k = {k:g} (u: column u); {band}; margins are to the tolerance limits",
            f"Monte Carlo (JCGM 101:2008): {draws} draws per spectrum"
            f"{' (adaptive)' if mc.get('draws') == 'adaptive' else ''}, seed {mc.get('seed', '?')}",
            *(str(n) for n in info.get("notes", ())))


def data_rows(text: str) -> list[list[str]]:
    """The rows of a CSV report without its note rows (header first): what a program reading
    lumeval's CSV keeps."""
    return [r for r in csv.reader(io.StringIO(text)) if r and not r[0].startswith("#")]


def read_csv_report(text: str) -> list[dict[str, str]]:
    """The data rows of a CSV report as dicts keyed by the header (note rows dropped)."""
    rows = data_rows(text)
    return [dict(zip(rows[0], r)) for r in rows[1:]] if rows else []


#: The cautions every report carries (docs/cautions.md explains them).
CAUTIONS: tuple[str, ...] = (
    "Colour metrics only: this is not a photobiological (IEC 62471), flicker or electrical safety assessment.",
    "Results are only as good as the measured spectrum (instrument calibration, bandwidth, stray light, noise, "
    "operating point and temperature of the sample).",
    "Acceptance decisions defer to the contract, local codes and licensed professional practice.",
)
