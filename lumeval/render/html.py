"""The HTML report: one self-contained file to send to a client or a supplier.

Layout (our own design): verdict summary first; then the key figures per spectrum, the
figures (spectrum against its reference, chromaticity diagram, R1..R14, TM-30 hue bins, and
for a lot the distributions of the key figures) and the tables behind them; then the notes
on the data, the provenance (input files with SHA-256, software versions, methods and
standard editions, date and time) and the cautions.

The file needs nothing but itself: figures are inline SVG (text drawn as paths; above 500
points a scatter is an inline PNG data: image inside its SVG), the style sheet is inline,
there is no script, no font file and no URL fetched when it is viewed. A
print style sheet lays it out for A4 and US Letter alike (15 mm margins, 178 mm content
width). Verdicts are given in words and symbols (✓ PASS, ✗ FAIL, ? INDETERMINATE,
– NOT JUDGED); colour only repeats them.

Entry points
------------
:func:`write_outputs` (both options in one call: targets checked first, figures drawn
once), :func:`write_html_report` (the ``--html FILE`` option), :func:`write_plots` (the
``--plots DIR`` option), :func:`validate_targets`, :func:`render_html_report` (the HTML as a
string) and :func:`report_figures` (the figures as matplotlib objects). All accept the same optional
inputs:

``verdicts``
    A ``lumeval.criteria.verdicts.CheckResult`` (anything with ``.results``: clause results
    with ``label, figure, unit, measured (N,), lower, upper, limit_text, margin (N,),
    outcome (N,), reason (N,)``); or a sequence of rows, each a mapping or object with the
    keys ``sample, clause, figure, measured, unit, limit, lower, upper, margin, outcome``
    (``"pass" | "fail" | "indeterminate" | "not judged"``; or ``passed``: True/False/None)
    and optionally ``reason``; or a sequence mixing both (a row without ``sample`` judges
    the whole lot, e.g. a lot-clause result).
``limits``
    ``{figure name: (lower or None, upper or None)}`` drawn on the charts; by default taken
    from the verdict rows' ``lower``/``upper`` (the tightest per figure).
``regions``
    Sequence of chromaticity regions to draw: mappings ``{"label", "vertices", "space"}``
    (space ``"uv"``, ``"u'v'"`` or ``"xy"``), or objects with ``name`` and
    ``corners_upvp`` (a quadrangle), or ``(ellipse, n_steps)`` pairs where the ellipse has
    ``name`` and ``boundary_xy(n_steps)``.
``lot``
    Lot statistics: a ``lumeval.lots.statistics.LotStatistics`` (its figure summaries become the table,
    centroid, largest pairwise Δu′v′, yield and outliers the notes), a sequence of rows
    (mappings or dataclasses, shown as a table with their keys as columns), or a mapping
    ``{"title": str, "rows": [...], "notes": [str, ...]}``. Giving a lot draws every chart in
    aggregate (medians with min–max whiskers, centroid and spread, distributions).
"""

from __future__ import annotations

import html as _html
import math
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import UsageError

#: Without a lot, every spectrum gets its own section (SPD, CRI and hue-bin charts and tables): a
#: comparison of bids is per product. The aggregate drawing (all spectra in one SPD chart, medians
#: with min-max whiskers, distributions) belongs to a lot (``lot=``) or to an explicit
#: ``per_sample_max=N``, which the report then announces. None: no limit.
PER_SAMPLE_MAX: int | None = None

#: Up to this many spectra, the checks are shown as a criterion x spectrum grid; more get a list
#: of the checks that did not pass (and each spectrum's section its own checks).
CHECK_GRID_MAX = 6

#: Per-sample tables list at most this many rows (failed samples first); the rest are counted.
#: Every figure of every sample is in the JSON and CSV outputs.
MAX_TABLE_ROWS = 100

#: Figures whose distributions are drawn for a lot (plus any figure a limit names).
LOT_FIGURES = ("cct_K", "duv", "Ra", "R9", "Rf", "Rg")

_OUTCOME_ORDER = ("pass", "not judged", "indeterminate", "not valid", "fail")
_OUTCOME_TEXT = {
    "pass": ("✓", "PASS"),
    "fail": ("✗", "FAIL"),
    "not valid": ("✗", "NOT VALID"),
    "indeterminate": ("?", "INDETERMINATE"),
    "not judged": ("–", "NOT JUDGED"),
}


# --------------------------------------------------------------------------- inputs


@dataclass(frozen=True)
class VerdictRow:
    """One (spectrum, clause) verdict as the report shows it."""

    sample: str | None
    clause: str
    figure: str
    measured: float | str | None
    unit: str
    limit: str
    lower: float | None
    upper: float | None
    margin: float | None
    outcome: str
    reason: str = ""
    #: Expanded uncertainty U = k·u of the judged quantity and the probability of conformance,
    #: when the check ran under measurement uncertainty (lumeval.uncertainty).
    expanded_uncertainty: float | None = None
    p_conformance: float | None = None


def _get(obj, *names, default=None):
    for n in names:
        if isinstance(obj, Mapping):
            if n in obj:
                return obj[n]
        elif hasattr(obj, n):
            return getattr(obj, n)
    return default


def _opt_float(v):
    if v is None:
        return None
    try:
        return float(v)
    except (TypeError, ValueError):
        return None


def _outcome_of(row) -> str:
    o = _get(row, "outcome", "verdict")
    if o is not None:
        o = str(o).strip().lower().replace("_", " ")
        if o in ("passed", "ok"):
            o = "pass"
        if o in ("failed",):
            o = "fail"
        if o not in _OUTCOME_TEXT:
            raise ValueError(f"unknown verdict outcome {o!r}")
        return o
    p = _get(row, "passed")
    return "not judged" if p is None else ("pass" if bool(p) else "fail")


def _is_check_result(obj) -> bool:
    return not isinstance(obj, (Mapping, list, tuple)) and hasattr(obj, "results")


def _expand_check(check, names: Sequence[str]) -> list[VerdictRow]:
    rows: list[VerdictRow] = []
    vnames = list(_get(check, "names", default=names) or names)
    for r in check.results:
        outcome = tuple(r.outcome)
        measured = np.atleast_1d(np.asarray(r.measured, dtype=float))
        margin = np.atleast_1d(np.asarray(r.margin, dtype=float))
        reason = tuple(getattr(r, "reason", ()) or ())
        big_u = (getattr(r, "details", None) or {}).get("U")
        p_c = getattr(r, "p_conformance", None)
        for i, o in enumerate(outcome):
            rows.append(
                VerdictRow(
                    sample=vnames[i] if i < len(vnames) else str(i + 1),
                    clause=str(getattr(r, "label", "")),
                    figure=str(getattr(r, "figure", "")),
                    measured=float(measured[i]) if i < measured.size else None,
                    unit=str(getattr(r, "unit", "") or ""),
                    limit=str(getattr(r, "limit_text", "") or ""),
                    lower=_opt_float(getattr(r, "lower", None)),
                    upper=_opt_float(getattr(r, "upper", None)),
                    margin=float(margin[i]) if i < margin.size else None,
                    outcome=_outcome_of({"outcome": o}),
                    reason=reason[i] if i < len(reason) else "",
                    expanded_uncertainty=_opt_float(big_u[i]) if big_u is not None and i < len(big_u) else None,
                    p_conformance=_opt_float(p_c[i]) if p_c is not None and i < len(p_c) else None,
                )
            )
    return rows


def _one_row(row) -> VerdictRow:
    m = _get(row, "measured")
    sample = _get(row, "sample")
    return VerdictRow(
        sample=None if sample is None else str(sample),
        clause=str(_get(row, "clause", "label", "criterion", default="")),
        figure=str(_get(row, "figure", default="") or ""),
        measured=m if isinstance(m, str) else _opt_float(m),
        unit=str(_get(row, "unit", default="") or ""),
        limit=str(_get(row, "limit", "limit_text", default="") or ""),
        lower=_opt_float(_get(row, "lower", "min")),
        upper=_opt_float(_get(row, "upper", "max")),
        margin=_opt_float(_get(row, "margin")),
        outcome=_outcome_of(row),
        reason=str(_get(row, "reason", "note", default="") or ""),
    )


def verdict_rows(verdicts, names: Sequence[str]) -> list[VerdictRow]:
    """Normalise the ``verdicts`` input (see the module docstring) to :class:`VerdictRow` s.

    ``verdicts`` may be a check result, a sequence of rows, or a sequence mixing check results
    and rows (e.g. a lot's per-sample check result followed by its lot-clause results; a row
    without ``sample`` is a verdict on the whole lot).
    """
    if verdicts is None:
        return []
    if _is_check_result(verdicts):
        return _expand_check(verdicts, names)
    rows: list[VerdictRow] = []
    for item in verdicts:
        if _is_check_result(item):
            rows.extend(_expand_check(item, names))
        else:
            rows.append(_one_row(item))
    return rows


def _verdict_meta(verdicts):
    """(identification dict, criteria file) of the first check result in ``verdicts``."""
    items = [verdicts] if _is_check_result(verdicts) else list(verdicts or ())
    for it in items:
        if _is_check_result(it):
            return _get(it, "identification"), _get(it, "criteria_file")
    return None, None


def _limits_from_rows(rows: list[VerdictRow]) -> dict[str, tuple[float | None, float | None]]:
    out: dict[str, list] = {}
    for r in rows:
        if not r.figure or (r.lower is None and r.upper is None):
            continue
        lo, hi = out.get(r.figure, [None, None])
        if r.lower is not None:
            lo = r.lower if lo is None else max(lo, r.lower)
        if r.upper is not None:
            hi = r.upper if hi is None else min(hi, r.upper)
        out[r.figure] = [lo, hi]
    return {k: (v[0], v[1]) for k, v in out.items()}


def _lot_spectra_for_display(ev, k: int):
    """(wavelengths, values (N, W), reference) for the lot's spectrum figure: all spectra on the
    grid of sample ``k`` (the one whose reference is drawn). Spectra on other grids are linearly
    interpolated onto it for the drawing only (their end values repeated where they are shorter:
    every prepared spectrum covers 380-780 nm)."""
    wl = ev.spectra.wavelengths(k)
    if ev.spectra.one_grid:
        return wl, ev.spectra.values, ev.reference_spd(k)
    rows = []
    for i in range(len(ev.spectra)):
        w, v = ev.spectra.spectrum(i)
        rows.append(np.interp(wl, w, v))
    return wl, np.vstack(rows), ev.reference_spd(k)


def _regions(regions) -> list[dict]:
    out = []
    for r in regions or ():
        if isinstance(r, Mapping):
            out.append({"label": str(r.get("label", "region")), "vertices": np.asarray(r["vertices"], float),
                        "space": r.get("space", "uv")})
        elif isinstance(r, tuple) and len(r) == 2 and hasattr(r[0], "boundary_xy"):
            ell, steps = r
            out.append({"label": f"{getattr(ell, 'name', 'ellipse')}, {steps:g} steps",
                        "vertices": np.asarray(ell.boundary_xy(steps, 240), float), "space": "xy"})
        elif hasattr(r, "corners_upvp"):
            out.append({"label": str(getattr(r, "name", "quadrangle")), "vertices": np.asarray(r.corners_upvp, float),
                        "space": "u'v'"})
        else:
            raise ValueError(f"cannot draw region {r!r}: give a mapping with 'vertices' and 'space'")
    return out


def regions_from_criteria(criteria) -> list:
    """The chromaticity regions a criteria object's clauses define, ready for ``regions=``.

    Duck-typed on ``criteria.clauses``: a clause with a ``quadrangle`` (ANSI C78.377 clause)
    gives that quadrangle; a clause with ``ellipse`` and ``max_steps`` (SDCM clause) gives the
    ellipse at that many steps. Other clauses define no region.
    """
    out = []
    for c in getattr(criteria, "clauses", ()) or ():
        q = getattr(c, "quadrangle", None)
        if q is not None and not callable(q):
            out.append(q)
        elif callable(q):
            out.append(q())
        elif hasattr(getattr(c, "ellipse", None), "steps") and getattr(c, "max_steps", None) is not None:
            # an SDCM clause around a fixed centre; a lot clause naming an ellipse by its
            # label (steps around the lot's own centroid) has no fixed region to draw
            out.append((c.ellipse, float(c.max_steps)))
    return out


def _as_lot(lot, n: int, per_sample_max: int | None) -> bool:
    """Whether the report draws the spectra in aggregate: a lot, or more spectra than an
    explicit ``per_sample_max``."""
    return lot is not None or (per_sample_max is not None and n > per_sample_max)


def _lot_block(lot, names=None):
    if lot is None:
        return None
    if hasattr(lot, "figures") and hasattr(lot, "n_samples"):  # lumeval.lots.statistics.LotStatistics
        notes = [f"{lot.n_samples} samples."]
        c = getattr(lot, "centroid_xy", None)
        if c is not None and np.all(np.isfinite(c)):
            notes.append(f"Chromaticity centroid x, y = {c[0]:.4f}, {c[1]:.4f}.")
        mp = getattr(lot, "max_pairwise_d_upvp", None)
        if mp is not None and math.isfinite(mp):
            notes.append(f"Largest Δu′v′ between two samples: {mp:.4f}.")
        y = getattr(lot, "yield_", None)
        if y is not None:
            notes.append(f"Yield: {y.passed} of {y.total} passed ({y.percent:.1f} %); {y.failed} failed, "
                         f"{y.indeterminate} indeterminate, {y.not_judged} not judged.")
        out = getattr(lot, "outlier", None)
        if out is not None and np.any(out):
            k = int(np.sum(out))
            notes.append(f"{k} sample{'s' if k != 1 else ''} flagged as outlier{'s' if k != 1 else ''} "
                         f"({getattr(lot, 'outlier_rule', '')}).")
            reasons = getattr(lot, "outlier_reasons", ())
            if names is not None and len(names) == len(out):
                idx = [int(i) for i in np.flatnonzero(out)]
                for i in idx[:MAX_TABLE_ROWS]:
                    why = "; ".join(reasons[i]) if i < len(reasons) and reasons[i] else ""
                    notes.append(f"Outlier: {names[i]}" + (f" ({why})." if why else "."))
                if len(idx) > MAX_TABLE_ROWS:
                    notes.append(f"… and {len(idx) - MAX_TABLE_ROWS} further outliers (see the JSON output).")
        notes += [str(n) for n in getattr(lot, "notes", ())]
        return {"title": "Lot statistics", "rows": [_summary_row(f) for f in lot.figures], "notes": notes,
                "numeric": _SUMMARY_NUMERIC}
    if isinstance(lot, Mapping):
        return {"title": str(lot.get("title", "Lot statistics")), "rows": list(lot.get("rows", ())),
                "notes": [str(n) for n in lot.get("notes", ())]}
    rows = _get(lot, "rows")
    if rows is not None and not isinstance(lot, (list, tuple)):
        return {"title": str(_get(lot, "title", default="Lot statistics")), "rows": list(rows),
                "notes": [str(n) for n in (_get(lot, "notes", default=()) or ())]}
    return {"title": "Lot statistics", "rows": list(lot), "notes": []}


_SUMMARY_COLUMNS = ("figure", "n", "undefined", "mean", "std", "min", "p5", "median", "p95", "max")
_SUMMARY_NUMERIC = [c != "figure" for c in _SUMMARY_COLUMNS]


def _summary_row(f) -> dict:
    """One figure's lot statistics with the registry's label, unit and precision (the standard
    deviation with one more decimal)."""
    from .. import figures

    try:
        fig = figures.get(f.name)
    except KeyError:
        fig = None

    def v(x, extra=0):
        return fig.format(x, extra, sign=False) if fig is not None else _num(x)

    return {"figure": fig.heading if fig is not None else f.name, "n": str(f.count), "undefined": str(f.undefined),
            "mean": v(f.mean), "std": v(f.std, 1), "min": v(f.min), "p5": v(f.p05), "median": v(f.median),
            "p95": v(f.p95), "max": v(f.max)}


def _row_dict(row) -> dict:
    if isinstance(row, Mapping):
        return dict(row)
    if hasattr(row, "__dataclass_fields__"):
        return {k: getattr(row, k) for k in row.__dataclass_fields__}
    return dict(vars(row))


# --------------------------------------------------------------------------- figures


@dataclass(frozen=True)
class ReportFigure:
    """A figure of the report: ``key`` (file stem), ``title``, ``caption``, matplotlib ``figure``."""

    key: str
    title: str
    caption: str
    figure: object


def _slug(s: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "-", s).strip("-").lower()
    return s[:40] or "spectrum"


def _fig(ev, name: str) -> np.ndarray:
    try:
        return np.asarray(ev.figure(name), dtype=float)
    except (KeyError, AttributeError):
        return np.full(len(ev.spectra.names), np.nan)


def _matrix(ev, prefix: str, k: int) -> np.ndarray:
    return np.stack([_fig(ev, f"{prefix}{j}") for j in range(1, k + 1)], axis=-1)


def _reference_label(cct: float) -> str:
    if not math.isfinite(cct):
        return "reference (undefined)"
    kind = "Planckian" if cct < 5000 else "CIE daylight"
    return f"CIE 13.3 reference: {kind} at {cct:.0f} K"


def _sample_failed(rows: list[VerdictRow], names: Sequence[str]) -> list[bool | None]:
    out: list[bool | None] = []
    for n in names:
        mine = [r.outcome for r in rows if r.sample == n]
        if not mine:
            out.append(None)
        elif "fail" in mine:
            out.append(True)
        elif all(o == "pass" for o in mine):
            out.append(False)
        else:
            out.append(None)
    return out


def report_figures(
    evaluation,
    *,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    per_sample_max: int | None = PER_SAMPLE_MAX,
) -> list[ReportFigure]:
    """All figures of the report, in report order (see the module docstring for the inputs)."""
    from . import plots

    ev = evaluation
    names = list(ev.spectra.names)
    n = len(names)
    rows = verdict_rows(verdicts, names)
    lim = dict(_limits_from_rows(rows))
    if limits:
        lim.update({k: tuple(v) for k, v in limits.items()})
    failed = _sample_failed(rows, names)
    as_lot = _as_lot(lot, n, per_sample_max)
    cct = _fig(ev, "cct_K")
    figs: list[ReportFigure] = []

    figs.append(ReportFigure(
        "chromaticity", "Chromaticity near the Planckian locus",
        "CIE 1960 (u, v) diagram: Planckian locus (black), isotemperature lines (grey, labelled in K), "
        "lines of constant Duv (grey dashed)"
        + (", the criteria region(s) (blue dashed, hatched)" if regions else "")
        + (", every sample, their centroid (+) and spread (2σ ellipse)" if as_lot and n >= 2
           else (", the samples" if n > 1 else ", the sample"))
        + ". Markers: ✗ failed a criterion, filled circle passed, hollow circle not judged.",
        plots.chromaticity_figure(_fig(ev, "u"), _fig(ev, "v"), labels=names, failed=failed,
                                  regions=_regions(regions), show_centroid=as_lot and n >= 2),
    ))
    figs += _xy_and_gamut_figures(ev, names, failed, regions, lim, as_lot)

    if not as_lot:
        for i, name in enumerate(names):
            slug = f"{i + 1:02d}-{_slug(name)}"
            ref = ev.reference_spd(i)
            wl_i, values_i = ev.spectra.spectrum(i)
            figs.append(ReportFigure(
                f"spd-{slug}", f"Spectrum: {name}",
                "Test spectrum (solid) and its CIE 13.3 reference at the same CCT (dashed), both scaled to the "
                "same luminous content Y, then jointly to a highest value of 1. Grey: outside 380–780 nm.",
                plots.spd_figure(wl_i, values_i, ref, test_label=name, reference_label=_reference_label(cct[i])),
            ))
            figs.append(ReportFigure(
                f"cri-{slug}", f"Colour rendering indices: {name}",
                "Ra and R1–R14 (CIE 13.3-1995). Black ticks mark criteria limits; a hatched bar is outside its limit.",
                plots.cri_figure(_matrix(ev, "R", 14)[i], _fig(ev, "Ra")[i], limits=lim),
            ))
            figs.append(ReportFigure(
                f"hue-bins-{slug}", f"TM-30 hue bins: {name}",
                "One row per hue bin (CIE 224:2017 / ANSI/IES TM-30), each value beside its bar: local fidelity "
                "Rf,h, chroma shift Rcs,h (%) and hue shift Rhs,h (dimensionless). Black ticks: criteria limits; "
                "hatched: outside.",
                plots.hue_bin_figure(_matrix(ev, "Rcs_h", 16)[i], _matrix(ev, "Rhs_h", 16)[i], _matrix(ev, "Rf_h", 16)[i],
                                     limits=lim),
            ))
            figs += _colour_vector_figures(ev, [i], f"colour-vectors-{slug}", f"TM-30 colour vectors: {name}")
    else:
        with np.errstate(all="ignore"):
            k = int(np.nanargmin(np.abs(cct - np.nanmedian(cct)))) if np.any(np.isfinite(cct)) else 0
        figs.append(ReportFigure(
            "spd-lot", f"Spectra of all {n} samples",
            ("Every spectrum (thin lines)" if n <= plots.MAX_LINES else
             f"The range of all {n} spectra at each wavelength (band) and their median (line)")
            + ", each spectrum scaled to the same luminous content Y, with the CIE 13.3 reference of "
            f"the sample nearest the median CCT ({names[k]}, dashed); jointly scaled to a highest value of 1."
            + ("" if ev.spectra.one_grid else
               " The samples lie on different wavelength grids: for this drawing only, they are linearly "
               f"interpolated onto the grid of {names[k]} (every figure was computed on each spectrum's own grid)."),
            plots.spd_figure(*_lot_spectra_for_display(ev, k), test_label=f"{n} samples",
                             reference_label=_reference_label(cct[k])),
        ))
        figs.append(ReportFigure(
            "cri-lot", f"Colour rendering indices of {n} samples",
            "Median bar with min–max whisker per index (CIE 13.3-1995); black ticks: criteria limits.",
            plots.cri_figure(_matrix(ev, "R", 14), _fig(ev, "Ra"), limits=lim),
        ))
        figs.append(ReportFigure(
            "hue-bins-lot", f"TM-30 hue bins of {n} samples",
            "One row per hue bin: median bar with min–max whisker of local fidelity Rf,h, chroma shift Rcs,h (%) "
            "and hue shift Rhs,h (dimensionless). Black ticks: criteria limits.",
            plots.hue_bin_figure(_matrix(ev, "Rcs_h", 16), _matrix(ev, "Rhs_h", 16), _matrix(ev, "Rf_h", 16), limits=lim),
        ))
        figs += _colour_vector_figures(ev, list(range(n)), "colour-vectors-lot", f"TM-30 colour vectors of {n} samples")

    if as_lot and n >= 2:
        from .. import figures

        keys = list(LOT_FIGURES)
        for f in lim:
            if f not in keys and len(keys) < 10 and np.any(np.isfinite(_fig(ev, f))):
                keys.append(f)
        figs.append(ReportFigure(
            "distributions", f"Distributions over {n} samples",
            "Every sample (dot; ✗ failed a criterion), the interquartile box with the median (thick line), "
            "and the criteria limits (dashed, labelled min/max).",
            plots.distribution_figure({k: _fig(ev, k) for k in keys}, limits=lim, failed=failed,
                                      labels={k: figures.heading(k) for k in keys}),
        ))
    return figs


def _xy_and_gamut_figures(ev, names, failed, regions, lim, as_lot) -> list[ReportFigure]:
    """The CIE 1931 (x, y) diagram and the Rf-Rg chart (all spectra in one of each)."""
    from . import plots
    from .tm30_plots import fidelity_gamut_figure

    n = len(names)
    out = [ReportFigure(
        "chromaticity-xy", "Chromaticity in CIE 1931 (x, y)",
        "The same samples and criteria regions in the CIE 1931 (x, y) diagram, where ANSI C78.377 quadrangles and "
        "SDCM ellipses are usually read; Planckian locus, isotemperature lines and lines of constant Duv as in the "
        "(u, v) view. Inset: the whole diagram (spectrum locus, CIE 1931 2°) with the enlarged window.",
        plots.chromaticity_xy_figure(_fig(ev, "x"), _fig(ev, "y"), labels=names, failed=failed,
                                     regions=_regions(regions), show_centroid=as_lot and n >= 2),
    )]
    Rf, Rg = _fig(ev, "Rf"), _fig(ev, "Rg")
    if np.any(np.isfinite(Rf) & np.isfinite(Rg)):
        out.append(ReportFigure(
            "fidelity-gamut", "Fidelity against gamut (TM-30 Rf, Rg)",
            "Each spectrum's fidelity index Rf (across) and gamut index Rg (up). Green corners: the Rf and Rg a "
            "Preference level P1–P3 needs; purple lines: Vividness V1–V3 (Rg); blue dotted lines: Fidelity F1–F3 "
            "(Rf) — ANSI/IES TM-30-20 Annex E. Each level also has a hue-bin-1 condition, checked in the design-intent "
            "table. Vermillion dashed: criteria limits.",
            fidelity_gamut_figure(Rf, Rg, labels=names, failed=failed,
                                  limits={k: v for k, v in lim.items() if k in ("Rf", "Rg")}),
        ))
    return out


def _colour_vector_figures(ev, idx: list[int], key: str, title: str) -> list[ReportFigure]:
    """The TM-30 colour-vector picture of the spectra ``idx`` (none when the bin averages are
    unavailable or undefined)."""
    from ..metrics.tm30_views import colour_vectors
    from .tm30_plots import colour_vector_figure

    tm = getattr(ev, "tm30", None)
    ab_t, ab_r = getattr(tm, "avg_ab_test", None), getattr(tm, "avg_ab_ref", None)
    if ab_t is None or ab_r is None or np.asarray(ab_t).ndim != 3:
        return []
    ref_unit, test = colour_vectors(np.asarray(ab_t)[idx], np.asarray(ab_r)[idx])
    if not np.any(np.isfinite(test)):
        return []
    many = len(idx) > 1
    return [ReportFigure(
        key, title,
        ("Median per hue bin over the samples (arrows) and every sample (grey dots). " if many else "")
        + "Each arrow runs from a hue bin's average colour under the reference (hollow dot, on the 100 % chroma "
        "ring) to the same bin under the test source, in CAM02-UCS scaled by the bin's reference chroma "
        "(ANSI/IES TM-30). Solid blue: chroma gained; dashed vermillion: chroma lost. At the rim: the bin, its "
        "hue and its chroma shift Rcs,h.",
        colour_vector_figure(ref_unit, test, Rcs_h=_matrix(ev, "Rcs_h", 16)[idx]),
    )]


# --------------------------------------------------------------------------- writing


#: The files ``--plots DIR`` writes: ``DIR/<key>.svg`` and ``.png`` for the keys of
#: :func:`report_figures` (``chromaticity``, ``distributions``, ``spd-*``, ``cri-*``,
#: ``hue-bins-*``). Another output of the same run may not be one of them.
PLOT_FILE_PATTERNS = tuple(f"{stem}.{ext}" for stem in ("chromaticity", "distributions", "spd-*", "cri-*", "hue-bins-*")
                           for ext in ("svg", "png"))


def validate_targets(html=None, plots=None) -> None:
    """Check the ``--html FILE`` and ``--plots DIR`` targets before any work or any write.

    Raises :class:`lumeval.errors.UsageError` (exit code 2) when a target cannot be used (see
    :func:`lumeval._io.check_targets`: a missing or unwritable folder, FILE a folder or a
    device, DIR a file, the report one of the files the plots are written to...). Commands call
    this first so that a bad target writes nothing at all.
    """
    from .._io import check_targets

    check_targets(files={"--html": html}, dirs={"--plots": plots}, dir_files={"--plots": PLOT_FILE_PATTERNS})


def write_plots(
    directory,
    evaluation,
    *,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    formats: Sequence[str] = ("svg", "png"),
    per_sample_max: int | None = PER_SAMPLE_MAX,
    figures: Sequence[ReportFigure] | None = None,
) -> list[Path]:
    """Write every report figure as ``DIR/<key>.svg`` and ``DIR/<key>.png`` (each atomically).

    The directory is created when its parent exists. Returns the paths written, in report
    order. Raises :class:`lumeval.errors.UsageError` when the directory cannot be used; in
    that case nothing is written.
    """
    from .._io import check_output_dir, check_output_file, write_bytes
    from .plots import figure_png, figure_svg

    d = Path(directory)
    check_output_dir(d, "--plots", PLOT_FILE_PATTERNS)
    bad = [f for f in formats if f not in ("svg", "png")]
    if bad:
        raise UsageError(f"unknown plot format(s) {bad}", field="--plots", fix="use svg and/or png")
    figs = figures if figures is not None else report_figures(
        evaluation, verdicts=verdicts, limits=limits, regions=regions, lot=lot, per_sample_max=per_sample_max)
    targets = [(f, fmt, d / f"{f.key}.{fmt}") for f in figs for fmt in formats]
    if d.is_dir():
        for _f, _fmt, p in targets:  # every target before the first write: a FIFO among them writes nothing
            if os.path.lexists(p):
                check_output_file(p, "--plots")
    try:
        d.mkdir(exist_ok=True)
    except OSError as exc:
        from ..errors import OutputError

        raise OutputError(f"cannot create the folder: {exc.strerror or exc}", file=str(d), field="--plots",
                          fix="check the free space and the permissions") from None
    out = []
    for f, fmt, p in targets:
        write_bytes(p, figure_svg(f.figure).encode("utf-8") if fmt == "svg" else figure_png(f.figure), option="--plots")
        out.append(p)
    return out


def write_html_report(
    path,
    evaluation,
    *,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    inputs: Sequence | None = None,
    title: str | None = None,
    command: str | None = None,
    generated_at=None,
    per_sample_max: int | None = PER_SAMPLE_MAX,
    figures: Sequence[ReportFigure] | None = None,
    overall: str | None = None,
) -> Path:
    """Write the self-contained HTML report to ``path`` atomically; returns the path.

    Raises :class:`lumeval.errors.UsageError` (nothing written) when the target directory
    does not exist or is not writable. See :func:`render_html_report` for the parameters.
    """
    from .._io import check_output_file, write_bytes

    p = Path(path)
    check_output_file(p, "--html")
    text = render_html_report(evaluation, verdicts=verdicts, limits=limits, regions=regions, lot=lot, inputs=inputs,
                              title=title, command=command, generated_at=generated_at, per_sample_max=per_sample_max,
                              figures=figures, overall=overall)
    write_bytes(p, text.encode("utf-8"), option="--html")
    return p


def write_outputs(
    evaluation,
    *,
    html=None,
    plots=None,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    inputs: Sequence | None = None,
    title: str | None = None,
    command: str | None = None,
    per_sample_max: int | None = PER_SAMPLE_MAX,
    overall: str | None = None,
) -> list[Path]:
    """The ``--html FILE`` and ``--plots DIR`` options in one call: check both targets, draw
    the figures once, write the plots, then the report. Returns the paths written.

    Raises :class:`lumeval.errors.UsageError` before drawing or writing anything when a target
    cannot be used. Does nothing when both are None.
    """
    if html is None and plots is None:
        return []
    validate_targets(html=html, plots=plots)
    figs = report_figures(evaluation, verdicts=verdicts, limits=limits, regions=regions, lot=lot,
                          per_sample_max=per_sample_max)
    out: list[Path] = []
    if plots is not None:
        out += write_plots(plots, evaluation, per_sample_max=per_sample_max, figures=figs)
    if html is not None:
        out.append(write_html_report(html, evaluation, verdicts=verdicts, limits=limits, regions=regions, lot=lot,
                                     inputs=inputs, title=title, command=command, per_sample_max=per_sample_max,
                                     figures=figs, overall=overall))
    return out


# --------------------------------------------------------------------------- HTML


def _e(s) -> str:
    return _html.escape(str(s), quote=True)


def _num(v, spec: str = "g") -> str:
    if v is None:
        return "n/a"
    if isinstance(v, str):
        return _e(v)
    f = float(v)
    if not math.isfinite(f):
        return "n/a"
    if spec == "int":
        return f"{f:.0f}" if abs(f) >= 0.5 else "0"
    if spec == "g":
        if abs(f) >= 1000:
            return f"{f:.0f}"
        return f"{f:.4g}"
    if spec == "+g":
        s = _num(f, "g")
        return s if s.startswith("-") else "+" + s
    return format(f, spec).replace("-", "−") if spec.startswith("+") else format(f, spec)


def _badge(outcome: str) -> str:
    sym, word = _OUTCOME_TEXT[outcome]
    cls = outcome.replace(" ", "-")
    return f'<span class="badge {cls}"><span class="sym" aria-hidden="true">{sym}</span> {word}</span>'


def _worst(outcomes) -> str:
    worst = "pass"
    for o in outcomes:
        if _OUTCOME_ORDER.index(o) > _OUTCOME_ORDER.index(worst):
            worst = o
    return worst


_ID_RE = re.compile(r'\bid="([^"]+)"')
_HREF_RE = re.compile(r'((?:xlink:)?href)="#([^"]+)"')
_URL_RE = re.compile(r"url\(#([^)]+)\)")


def inline_svg(svg: str, prefix: str, label: str) -> str:
    """Prepare a standalone SVG document for inlining into HTML.

    Drops the XML declaration, DOCTYPE and metadata, prefixes every id (and every reference
    to one) with ``prefix`` so that several figures can share one document, makes the figure
    scale with the page (width 100 %, height from the viewBox) and labels it for screen readers.
    """
    s = re.sub(r"<\?xml[^>]*\?>", "", svg)
    s = re.sub(r"<!DOCTYPE[^>]*>", "", s, flags=re.S)
    s = re.sub(r"<metadata>.*?</metadata>", "", s, flags=re.S)
    s = _ID_RE.sub(lambda m: f'id="{prefix}-{m.group(1)}"', s)
    s = _HREF_RE.sub(lambda m: f'{m.group(1)}="#{prefix}-{m.group(2)}"', s)
    s = _URL_RE.sub(lambda m: f"url(#{prefix}-{m.group(1)})", s)
    s = re.sub(r'<svg\b([^>]*?)\swidth="[^"]*"', r"<svg\1", s, count=1)
    s = re.sub(r'<svg\b([^>]*?)\sheight="[^"]*"', r"<svg\1", s, count=1)
    s = s.replace("<svg ", f'<svg class="chart" role="img" aria-label="{_e(label)}" ', 1)
    return s.strip()


_CSS = """
:root { --ink:#1a1a1a; --muted:#555; --rule:#c8c8c8; --pass:#0072B2; --fail:#D55E00; --warn:#E69F00; }
* { box-sizing: border-box; }
html { color: var(--ink); background: #fff; }
body { font-family: system-ui, "Segoe UI", "Helvetica Neue", Arial, sans-serif; font-size: 15px; line-height: 1.45;
       max-width: 60rem; margin: 0 auto; padding: 1.5rem 1.25rem 3rem; }
h1 { font-size: 1.6rem; margin: 0 0 .25rem; }
h2 { font-size: 1.2rem; margin: 2rem 0 .6rem; padding-bottom: .2rem; border-bottom: 2px solid var(--ink); }
h3 { font-size: 1.02rem; margin: 1.4rem 0 .4rem; }
p.sub { color: var(--muted); margin: 0 0 1rem; }
table { border-collapse: collapse; width: 100%; margin: .4rem 0 1rem; font-size: .86rem; font-variant-numeric: tabular-nums; }
th, td { border-bottom: 1px solid var(--rule); padding: .25rem .45rem; text-align: left; vertical-align: top; }
th { background: #f2f2f2; font-weight: 600; }
td.n, th.n { text-align: right; white-space: nowrap; }
.summary { border: 2px solid var(--ink); border-left-width: 10px; padding: .8rem 1rem; margin: 1rem 0; }
.summary.pass { border-color: var(--pass); } .summary.fail, .summary.not-valid { border-color: var(--fail); }
.summary.indeterminate, .summary.not-judged { border-color: var(--warn); }
.summary .big { font-size: 1.35rem; font-weight: 700; }
.badge { display: inline-block; font-weight: 700; padding: 0 .35rem; border: 1.5px solid currentColor; border-radius: 3px;
         white-space: nowrap; }
.badge.pass { color: var(--pass); } .badge.fail, .badge.not-valid { color: #a33d00; } .badge.indeterminate, .badge.not-judged { color: #7a5600; }
tr.fail td { background: #fdf0e8; }
table.dense th, table.dense td { padding: .2rem .15rem; font-size: .78rem; }
table.grid { table-layout: fixed; } table.grid th, table.grid td { font-size: .8rem; overflow-wrap: anywhere; }
table.grid small { color: var(--muted); }
figure { margin: 1rem 0 1.5rem; break-inside: avoid; page-break-inside: avoid; }
figure svg.chart { display: block; width: 100%; height: auto; max-width: 178mm; }
figcaption { font-size: .85rem; color: var(--muted); margin-top: .3rem; }
figcaption b { color: var(--ink); }
ul.notes li { margin: .15rem 0; }
.cautions { border: 1.5px solid var(--ink); padding: .6rem 1rem; }
code, .mono { font-family: ui-monospace, "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: .82rem; word-break: break-all; }
footer { margin-top: 2rem; color: var(--muted); font-size: .8rem; }
@page { margin: 15mm; }
@media print {
  body { font-size: 9.5pt; max-width: none; padding: 0; }
  h2 { break-after: avoid; page-break-after: avoid; }
  h3 { break-after: avoid; page-break-after: avoid; }
  table { font-size: 8pt; }
  table.dense th, table.dense td { font-size: 7pt; padding: 1pt 1.5pt; }
  tr, .summary, .cautions { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  section.sample { break-before: page; page-break-before: always; }
  .summary, tr.fail td, th { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""


def _table(headers: Sequence[str], rows: Sequence[Sequence[str]], numeric: Sequence[bool] | None = None,
           row_classes: Sequence[str] | None = None, cls: str = "") -> str:
    """An HTML table; ``rows`` cells are HTML already (escape text before), headers are text."""
    numeric = numeric or [False] * len(headers)
    num_attr = [' class="n"' if x else "" for x in numeric]
    out = [f'<table class="{cls}">' if cls else "<table>", "<thead><tr>"]
    out += [f'<th scope="col"{a}>{_e(h)}</th>' for h, a in zip(headers, num_attr)]
    out.append("</tr></thead><tbody>")
    for k, r in enumerate(rows):
        cls = f' class="{row_classes[k]}"' if row_classes and row_classes[k] else ""
        out.append(f"<tr{cls}>" + "".join(f"<td{a}>{cell}</td>" for cell, a in zip(r, num_attr)) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


#: Decimals of judged quantities that are not figures (chromaticity-region margins, SDCM steps).
_OTHER_DECIMALS = {"u'v'": 4, "SDCM steps": 2}


def _judged_decimals(figure: str) -> tuple[int, bool] | None:
    """(decimals, signed) of the quantity a clause judges: the figure registry's format, or
    the precision of a region margin / SDCM steps; None when unknown."""
    from .. import figures

    try:
        f = figures.get(figure)
    except KeyError:
        d = _OTHER_DECIMALS.get(figure)
        return None if d is None else (d, False)
    return f.decimals, f.signed


#: The key-figure tables of the report: (title, figure groups). Columns are the registry's key
#: figures (``summary=True``) of those groups, with its labels, units and number formats.
KEY_FIGURE_TABLES: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("Chromaticity (CIE 1931 2°)", ("chromaticity",)),
    ("Colour rendering and fidelity", ("colour rendering", "fidelity")),
    ("Photometry", ("photometry",)),
)


def _key_figures(groups: tuple[str, ...] | None = None) -> list:
    """Key figures of ``groups`` without the per-bin hue values (those have their own table)."""
    from .. import figures

    return [f for f in figures.summary_figures(groups) if not f.name.startswith(("Rf_h", "Rcs_h", "Rhs_h"))]


def _key_figure_tables(ev, names, order) -> list[str]:
    out = []
    for title, groups in KEY_FIGURE_TABLES:
        figs = [f for f in _key_figures(groups) if not (f.when_defined and not np.isfinite(f.value(ev)).any())]
        if not figs:
            continue
        vals = [f.value(ev) for f in figs]
        heads = ["Spectrum"] + [f.heading for f in figs]
        rows = [[_e(names[i])] + [_e(f.format(v[i])) for f, v in zip(figs, vals)] for i in order]
        cc = getattr(ev, "chromaticity_class", None) if "chromaticity" in groups else None
        if cc is not None:  # where the point sits among the standard categories, in words
            from ..criteria.regions import ansi_edition_name
            from .words import ansi_text, sdcm_text

            heads += [f"{ansi_edition_name(cc.ansi_edition)} (Δu′v′ out)", "SDCM steps (nearest IEC centre)"]
            for row, i in zip(rows, order):
                row += [_e(ansi_text(cc, i)), _e(sdcm_text(cc, i))]
        out.append(f"<h3>{_e(title)}</h3>")
        # the two phrases may wrap (numbers never do)
        out.append(_table(heads, rows, numeric=[False] + [True] * len(figs) + [False] * (len(heads) - 1 - len(figs))))
    return out


def _measured_text(r: VerdictRow) -> tuple[str, str]:
    from ..figures import format_number, margin_extra_decimals

    unit = "" if not r.unit else (r.unit if r.unit == "%" else f" {r.unit}")
    finite = isinstance(r.measured, (int, float)) and math.isfinite(float(r.measured))
    fmt = _judged_decimals(r.figure)
    if fmt is None:
        meas = _num(r.measured) + (unit if finite else "")
        marg = "n/a" if r.margin is None or not math.isfinite(r.margin) else _num(r.margin, "+g") + unit
    else:
        dec, signed = fmt
        k = margin_extra_decimals(r.margin, dec)
        meas = (format_number(r.measured, f"{'+' if signed else ''}.{dec + k}f") + unit) if finite else _num(r.measured)
        marg = "n/a" if r.margin is None or not math.isfinite(r.margin) else format_number(r.margin, f"+.{dec + k}f") + unit
    if r.expanded_uncertainty is not None and math.isfinite(r.expanded_uncertainty):
        # the clause's judged quantity (for a chromaticity region: its Δu'v' margin) ± U
        marg += f" ± {_num(r.expanded_uncertainty, '.2g')}{unit}"
        if r.p_conformance is not None and math.isfinite(r.p_conformance):
            p = r.p_conformance
            marg += f", p_c {'< 0.001' if p < 0.001 else ('> 0.999' if p > 0.999 else format(p, '.3f'))}"
    return meas, marg


def _not_passed_text(outcomes) -> str:
    """"2 failed, 1 indeterminate" (or "none") for one sample's check outcomes."""
    bits = [f"{sum(o == k for o in outcomes)} {_OUTCOME_TEXT[k][1].lower()}"
            for k in ("fail", "not valid", "indeterminate", "not judged") if k in outcomes]
    return ", ".join(bits) or "none"


def _sample_checks_html(rows: list[VerdictRow]) -> str:
    """One spectrum's checks (its section in a report with too many spectra for the grid)."""
    if not rows:
        return ""
    body, classes = [], []
    for r in rows:
        meas, marg = _measured_text(r)
        body.append([_e(r.clause), meas, _e(r.limit), marg,
                     _badge(r.outcome) + (f"<br><small>{_e(r.reason)}</small>" if r.reason else "")])
        classes.append("fail" if r.outcome == "fail" else "")
    return "<h3>Checks</h3>" + _table(["Criterion", "Measured", "Limit", "Margin (+ inside)", "Verdict"], body,
                                      numeric=[False, True, False, True, False], row_classes=classes)


def _checks_html(rows: list[VerdictRow], per_sample_max: int = CHECK_GRID_MAX) -> str:
    """The checks: a criterion × sample grid for a few samples, else a list of the checks that
    did not pass (the passes are counted, not listed)."""
    samples = list(dict.fromkeys(r.sample or "lot" for r in rows))
    clauses = list(dict.fromkeys((r.clause, r.limit) for r in rows))
    out = []
    if len(samples) <= per_sample_max:
        grid = {((r.clause, r.limit), r.sample or "lot"): r for r in rows}
        body = []
        for key in clauses:
            cells = [_e(key[0]), _e(key[1])]
            for sname in samples:
                r = grid.get((key, sname))
                if r is None:
                    cells.append("")
                    continue
                meas, marg = _measured_text(r)
                extra = f"<br><small>{_e(r.reason)}</small>" if r.reason else ""
                cells.append(f"{_badge(r.outcome)}<br>{meas}<br><small>margin {marg}</small>{extra}")
            body.append(cells)
        out.append("<h3>Checks</h3>")
        out.append('<p class="sub">Each cell: verdict, measured value, margin to the nearest limit '
                   "(+ inside the limits, − outside).</p>")
        out.append(_table(["Criterion", "Limit"] + samples, body, cls="grid"))
        return "".join(out)
    not_passed = [r for r in rows if r.outcome != "pass"]
    shown = sorted(not_passed, key=lambda r: r.outcome != "fail")[:MAX_TABLE_ROWS]
    out.append(f"<h3>Checks that did not pass ({len(not_passed)} of {len(rows)})</h3>")
    if len(shown) < len(not_passed):
        out.append(f'<p class="sub">The first {len(shown)} are listed (failures first); all are in the JSON '
                   "and CSV outputs.</p>")
    if not shown:
        out.append("<p>None: every check passed.</p>")
        return "".join(out)
    body, classes = [], []
    for r in shown:
        meas, marg = _measured_text(r)
        body.append([_e(r.sample or "lot"), _e(r.clause), meas, _e(r.limit), marg,
                     _badge(r.outcome) + (f"<br><small>{_e(r.reason)}</small>" if r.reason else "")])
        classes.append("fail" if r.outcome == "fail" else "")
    out.append(_table(["Sample", "Criterion", "Measured", "Limit", "Margin (+ inside)", "Verdict"], body,
                      numeric=[False, False, True, False, True, False], row_classes=classes))
    return "".join(out)


def render_html_report(
    evaluation,
    *,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    inputs: Sequence | None = None,
    title: str | None = None,
    command: str | None = None,
    generated_at=None,
    per_sample_max: int | None = PER_SAMPLE_MAX,
    figures: Sequence[ReportFigure] | None = None,
    overall: str | None = None,
) -> str:
    """The report as one HTML document (a string).

    ``overall`` (``"pass"``, ``"fail"``, ``"indeterminate"`` or ``"not judged"``), when given,
    is the verdict the command decided (a lot with a yield clause passes although some samples
    fail); otherwise the worst outcome of the rows decides.

    Parameters
    ----------
    evaluation : lumeval.engine.Evaluation
        Or any object with ``spectra`` (a SpectrumSet), ``figure(name) -> (N,)``,
        ``reference_spd(i) -> (W,)``, ``warnings`` (N tuples of str) and optionally
        ``methods`` (dict) and ``cct_reason``.
    verdicts, limits, regions, lot
        See the module docstring.
    inputs : sequence of paths, optional
        Files hashed in the provenance; default the spectra's source files (plus the
        criteria file when ``verdicts`` names one).
    title : str, optional
    command : str, optional
        The command line that made the report, shown in the provenance.
    generated_at : datetime, optional
        Default: now.
    per_sample_max : int
        Up to this many spectra get their own charts.
    figures : sequence of ReportFigure, optional
        Figures already made by :func:`report_figures` with the same inputs (to draw them once
        for both the report and ``--plots``).
    """
    from .provenance import collect_provenance, input_paths_from_sources

    try:
        from .tables import CAUTIONS
    except ImportError:  # pragma: no cover - the tables module is part of the package
        CAUTIONS = ()

    ev = evaluation
    names = list(ev.spectra.names)
    n = len(names)
    rows = verdict_rows(verdicts, names)
    grid_max = CHECK_GRID_MAX if per_sample_max is None else min(per_sample_max, CHECK_GRID_MAX)
    figs = list(figures) if figures is not None else report_figures(
        ev, verdicts=verdicts, limits=limits, regions=regions, lot=lot, per_sample_max=per_sample_max)
    if inputs is None:
        inputs = input_paths_from_sources(ev.spectra.sources)
        crit = _verdict_meta(verdicts)[1]
        if crit:
            inputs.append(str(crit))
    prov = collect_provenance(inputs, methods=getattr(ev, "methods", None) or None, generated_at=generated_at)
    title = title or ("Colour quality report: " + (names[0] if n == 1 else f"{n} spectra"))

    from .plots import figure_svg

    body: list[str] = []
    body.append(f"<header><h1>{_e(title)}</h1><p class=\"sub\">{n} spectr{'a' if n != 1 else 'um'} · generated "
                f"{_e(prov.generated_at)} · lumeval {_e(dict(prov.versions).get('lumeval', '?'))}</p></header>")

    # ---- verdict summary
    body.append('<section id="verdict"><h2>Verdict</h2>')
    if not rows:
        body.append('<div class="summary not-judged"><p class="big">' + _badge("not judged")
                    + " No acceptance criteria were given: figures only.</p></div>")
    else:
        ident, crit_file = _verdict_meta(verdicts)
        if ident or crit_file:
            bits = [f"{_e(k)}: {_e(v)}" for k, v in dict(ident or {}).items()]
            if crit_file:
                bits.insert(0, f'criteria file <span class="mono">{_e(crit_file)}</span>')
            body.append('<p class="sub">' + " · ".join(bits) + "</p>")
        overall = overall if overall in _OUTCOME_TEXT else _worst(r.outcome for r in rows)
        counts = {o: sum(r.outcome == o for r in rows) for o in _OUTCOME_ORDER}
        per_sample: dict[Any, Any] = {}
        for r in rows:
            per_sample.setdefault(r.sample or "(lot)", []).append(r.outcome)
        summary_words = {
            "pass": "Every criterion is met.",
            "fail": "At least one criterion is not met.",
            "indeterminate": "No criterion fails, but at least one cannot be decided.",
            "not judged": "No criterion fails, but at least one could not be judged.",
            "not valid": "At least one criterion rests on a figure outside its validity range "
                         "(CRI/TM-30 with |Duv| > 0.05): not a pass.",
        }[overall]
        body.append(f'<div class="summary {overall.replace(" ", "-")}"><p class="big">{_badge(overall)} {_e(summary_words)}</p>'
                    f"<p>{len(rows)} check{'s' if len(rows) != 1 else ''}: " + ", ".join(
                        f"{counts[o]} {_OUTCOME_TEXT[o][1].lower()}" for o in _OUTCOME_ORDER if counts[o]) + ".</p></div>")
        lot_rows = [r for r in rows if r.sample is None]
        if lot is not None and lot_rows:
            body.append("<h3>Lot criteria</h3>")
            body.append(_table(["Criterion", "Measured", "Limit", "Margin", "Verdict"],
                               [[_e(r.clause), _num(r.measured) + (f" {_e(r.unit)}" if r.unit else ""), _e(r.limit),
                                 _num(r.margin), _badge(r.outcome)] for r in lot_rows],
                               numeric=[False, True, False, True, False],
                               row_classes=["fail" if r.outcome == "fail" else "" for r in lot_rows]))
        if len(per_sample) > 1:
            items = list(per_sample.items())  # input order: the numbering of every table and figure
            if lot is not None:  # a lot: list the samples that did not pass; the rest are counted
                passed = sum(_worst(o) == "pass" for s_, o in items if s_ != "(lot)")
                items = [kv for kv in items if kv[0] != "(lot)" and _worst(kv[1]) != "pass"]
                body.append(f'<p class="sub">{passed} of {n} samples met every per-sample criterion'
                            + ("; the others:" if items else ".") + "</p>")
            shown_items = items
            if len(items) > MAX_TABLE_ROWS:  # keep the failed ones, listed in input order
                keep = sorted(range(len(items)), key=lambda j: "fail" not in items[j][1])[:MAX_TABLE_ROWS]
                shown_items = [items[j] for j in sorted(keep)]
            body.append(_table(["Sample", "Verdict", "Checks not passed"],
                               [[_e(s), _badge(_worst(o)), _not_passed_text(o)] for s, o in shown_items],
                               numeric=[False, False, False],
                               row_classes=["fail" if "fail" in o else "" for _, o in shown_items]))
            if len(items) > len(shown_items):
                body.append(f'<p class="sub">{len(shown_items)} of {len(items)} samples listed (failed first, in input order); '
                            "every sample's verdict is in the JSON and CSV outputs.</p>")
        unc = _get(verdicts, "uncertainty") if _is_check_result(verdicts) else None
        if unc:
            inst = unc.get("instrument", {})
            body.append(f'<p class="sub">{_e(unc.get("rule_text", ""))} Margins are shown ± U (expanded uncertainty '
                        f'from the Monte Carlo propagation of the instrument model {_e(inst.get("name") or inst.get("source", ""))}, '
                        "JCGM 101:2008); p_c is the probability of conformance (JCGM 106:2012). See docs/uncertainty.md.</p>")
        body.append(_checks_html(rows, grid_max))
    body.append("</section>")

    as_lot = _as_lot(lot, n, per_sample_max)
    if as_lot and lot is None:
        body.append(f'<p class="sub">The {n} spectra are drawn together (medians, ranges and distributions), '
                    f"as asked (more than {per_sample_max} spectra); every spectrum's figures are in the tables "
                    "below and in the JSON and CSV outputs.</p>")

    # ---- key figures (spectra in input order, the numbering of the figures)
    key: list[str] = ['<section id="figures-table"><h2>Key figures</h2>']
    failed_flags = _sample_failed(rows, names)
    if n > MAX_TABLE_ROWS:  # those that failed a criterion are kept, shown in input order
        keep = sorted(range(n), key=lambda i: failed_flags[i] is not True)[:MAX_TABLE_ROWS]
        order = sorted(keep)
        key.append(f'<p class="sub">{len(order)} of {n} spectra listed (those that failed a criterion first, in '
                   "input order); every spectrum's figures are in the JSON and CSV outputs.</p>")
    else:
        order = list(range(n))
    key.extend(_key_figure_tables(ev, names, order))
    key.append('<p class="sub">' + _e(" ".join(f"{f.label}: {f.description} ({f.source})." for f in _key_figures()
                                               if f.group != "chromaticity"
                                               and not (f.when_defined and not np.isfinite(f.value(ev)).any())))
               + " n/a: undefined for that spectrum (see the notes).</p>")
    key.append("</section>")

    # ---- lot statistics (with the outliers named)
    lot_html: list[str] = []
    lb = _lot_block(lot, names)
    if lb is not None:
        lot_html.append(f'<section id="lot"><h2>{_e(lb["title"])}</h2>')
        dicts = [_row_dict(r) for r in lb["rows"]]
        cols: list[str] = []
        for d in dicts:
            cols += [k for k in d if k not in cols]
        if dicts:
            def cell(v):
                if isinstance(v, (bool, np.bool_)):
                    return _badge("pass" if v else "fail")
                if isinstance(v, str) and v.strip().lower() in _OUTCOME_TEXT:
                    return _badge(v.strip().lower())
                if isinstance(v, (int, float, np.floating, np.integer)):
                    return _num(float(v))
                return _e(v if v is not None else "")
            lot_html.append(_table(cols, [[cell(d.get(c)) for c in cols] for d in dicts],
                               numeric=lb.get("numeric") or [all(isinstance(d.get(c), (int, float, np.floating, np.integer))
                                                                 and not isinstance(d.get(c), bool) for d in dicts) for c in cols]))
        else:
            lot_html.append("<p>No lot statistics.</p>")
        if lb["notes"]:
            lot_html.append('<ul class="notes">' + "".join(f"<li>{_e(x)}</li>" for x in lb["notes"]) + "</ul>")
        lot_html.append("</section>")

    # ---- figures
    charts: list[str] = []
    charts.append('<section id="charts"><h2>Figures</h2>')
    per_sample_figs: dict[str, list[ReportFigure]] = {}
    for k, f in enumerate(figs):
        m = re.match(r"(spd|cri|hue-bins|colour-vectors)-(\d\d)-", f.key)
        if m:
            per_sample_figs.setdefault(m.group(2), []).append(f)
            continue
        charts.append(_figure_html(f, k, figure_svg))
    charts.append("</section>")
    grid_too_wide = len({r.sample for r in rows if r.sample is not None}) > grid_max
    samples_html: list[str] = []
    for _idx, (num, fl) in enumerate(sorted(per_sample_figs.items())):
        i = int(num) - 1
        samples_html.append(f'<section class="sample" id="sample-{num}"><h2>{_e(names[i])}</h2>')
        samples_html.append(f'<p class="sub">Source: <span class="mono">{_e(ev.spectra.sources[i])}</span></p>')
        for f in fl:
            samples_html.append(_figure_html(f, figs.index(f), figure_svg))
        if grid_too_wide:
            samples_html.append(_sample_checks_html([r for r in rows if r.sample == names[i]]))
        R = _matrix(ev, "R", 14)[i]
        samples_html.append("<h3>Special colour rendering indices (CIE 13.3)</h3>")
        samples_html.append(_table([f"R{j}" for j in range(1, 15)], [[_num(v, "int") for v in R]], numeric=[True] * 14, cls="dense"))
        samples_html.append("<h3>Hue bins (CIE 224:2017 / TM-30)</h3>")
        samples_html.append(_table(["bin"] + [f"h{j}" for j in range(1, 17)], [
            ["Rf,h"] + [_num(v, "int") for v in _matrix(ev, "Rf_h", 16)[i]],
            ["Rcs,h (%)"] + [_num(v, "+.0f") for v in _matrix(ev, "Rcs_h", 16)[i]],
            ["Rhs,h"] + [_num(v, "+.2f") for v in _matrix(ev, "Rhs_h", 16)[i]],
        ], numeric=[False] + [True] * 16, cls="dense"))
        samples_html.append(_design_intent_html(ev, i))
        samples_html.append("</section>")

    if lot is not None:  # a lot: verdict, lot figures and named outliers first, per-sample tables last
        body += lot_html + charts + key + samples_html
    else:  # spectra: key figures, the figures, then one section per spectrum
        body += key + lot_html + charts + samples_html

    # ---- notes on the data
    warns = list(getattr(ev, "warnings", ()) or ())
    run_warns = tuple(getattr(ev, "run_warnings", ()) or ())
    body.append('<section id="notes"><h2>Notes on the data</h2>')
    if any(warns) or run_warns:
        body.append('<ul class="notes">')
        for msg in run_warns:  # raised during the vectorised computation, not tied to one spectrum
            body.append(f"<li><b>all spectra</b>: {_e(msg)}</li>")
        # the same note for many samples is listed once, with the samples it concerns
        by_msg: dict[str, list[str]] = {}
        for i, w in enumerate(warns):
            for msg in w:
                by_msg.setdefault(msg, []).append(names[i])
        for msg, who in list(by_msg.items())[:MAX_TABLE_ROWS]:
            whom = ", ".join(who[:5]) + (f" and {len(who) - 5} more" if len(who) > 5 else "")
            body.append(f"<li><b>{_e(whom)}</b>: {_e(msg)}</li>")
        if len(by_msg) > MAX_TABLE_ROWS:
            body.append(f"<li>… and {len(by_msg) - MAX_TABLE_ROWS} further notes (see the JSON output).</li>")
        body.append("</ul>")
    else:
        body.append("<p>Nothing to note: every spectrum was used as read and every figure is defined.</p>")
    body.append("</section>")

    # ---- provenance
    body.append('<section id="provenance"><h2>Provenance</h2>')
    body.append("<h3>Input files</h3>")
    if prov.files:
        body.append(_table(["File", "SHA-256", "Bytes"], [
            [f'<span class="mono">{_e(f.path)}</span>', f'<span class="mono">{_e(f.sha256 or "unreadable")}</span>',
             _e(f.size_bytes if f.size_bytes is not None else "n/a")] for f in prov.files], numeric=[False, False, True]))
    else:
        body.append("<p>No input files (spectra given in memory).</p>")
    body.append("<h3>Software</h3>")
    body.append(_table(["Package", "Version"], [[_e(a), _e(b)] for a, b in prov.versions]))
    body.append("<h3>Methods and standard editions</h3>")
    body.append(_table(["Topic", "Method"], [[_e(a), _e(b)] for a, b in prov.methods]))
    meta = [["Generated", _e(prov.generated_at)]]
    if command:
        meta.append(["Command", f'<span class="mono">{_e(command)}</span>'])
    body.append(_table(["", ""], meta))
    body.append("</section>")

    # ---- cautions
    body.append('<section id="cautions"><h2>Cautions</h2><div class="cautions"><ul>'
                + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS) + "</ul></div></section>")
    body.append("<footer>Made with lumeval. This file is self-contained: it loads nothing from the network.</footer>")

    return (
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
        f"<title>{_e(title)}</title>\n<style>{_CSS}</style>\n</head>\n<body>\n"
        + "\n".join(body)
        + "\n</body>\n</html>\n"
    )


def _design_intent_html(ev, i: int) -> str:
    """Spectrum i against the ANSI/IES TM-30-20 Annex E design intents: a small table."""
    from ..metrics.tm30_views import ANNEX_E, ANNEX_E_SOURCE, DESIGN_INTENTS, design_intents

    vals = {k: float(_fig(ev, k)[i]) for k in ("Rf", "Rg", "Rcs_h1", "Rf_h1")}
    if not all(math.isfinite(v) for v in vals.values()):
        return ""
    di = design_intents(*([vals[k]] for k in ("Rf", "Rg", "Rcs_h1", "Rf_h1")))
    names = {"Rf": "Rf", "Rg": "Rg", "Rcs_h1": "Rcs,h1", "Rf_h1": "Rf,h1"}

    def needs(level: str) -> str:
        parts = []
        for k, (lo, hi) in ANNEX_E[level].items():
            u = " %" if k == "Rcs_h1" else ""
            parts.append(f"{names[k]} ≥ {lo:g}{u}" if hi == math.inf else f"{names[k]} {lo:+g}{u} … {hi:+g}{u}")
        return ", ".join(parts).replace("-", "−")

    rows = []
    for intent, levels in DESIGN_INTENTS.items():
        best = getattr(di, intent)[0]
        cells = [_e(intent.capitalize()), f"<b>{_e(best)}</b>" if best else "none"]
        for lv in levels:
            ok = bool(di.met[lv][0])
            cells.append(f'{"✓" if ok else "✗"} {_e(lv)}<br><small>{_e(needs(lv))}</small>')
        rows.append(cells)
    return (
        "<h3>Design intents (ANSI/IES TM-30-20 Annex E)</h3>"
        + _table(["Design intent", "Best level met", "Level 1", "Level 2", "Level 3"], rows, cls="grid")
        + f'<p class="sub">With Rf {vals["Rf"]:.0f}, Rg {vals["Rg"]:.0f}, Rcs,h1 {_num(vals["Rcs_h1"], "+.0f")} %, '
        f'Rf,h1 {vals["Rf_h1"]:.0f} (unrounded values compared). A level counts only when the levels below it '
        f"are met too. {_e(ANNEX_E_SOURCE)}. Informative guidance, not a verdict: to judge it, write clauses on Rf, "
        "Rg, Rcs_h1 and Rf_h1 in the criteria file.</p>")


def _figure_html(f: ReportFigure, k: int, figure_svg) -> str:
    svg = inline_svg(figure_svg(f.figure), f"f{k}", f.title)
    return (f'<figure id="fig-{_e(f.key)}" data-figure="{_e(f.key)}">{svg}'
            f"<figcaption><b>{_e(f.title)}.</b> {_e(f.caption)}</figcaption></figure>")
