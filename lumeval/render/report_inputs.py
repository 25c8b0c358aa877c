"""What the HTML report is given, normalised: verdict rows, limits, chromaticity regions.

The report entry points of :mod:`lumeval.render.html` accept loosely typed inputs (a
``CheckResult``, rows as mappings or objects, regions as mappings, quadrangles or ellipses;
see that module's docstring). This module turns them into lumeval's own small types
(:class:`VerdictRow`, region dicts) once, before the view-model
(:mod:`lumeval.render.report_view`) and the figures (:mod:`lumeval.render.report_figures`)
read them. Nothing is computed or drawn here.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

#: Worst last: the order in which outcomes decide a summary.
OUTCOME_ORDER = ("pass", "not judged", "indeterminate", "not valid", "fail")
#: Each outcome in a symbol and a word (colour only repeats them).
OUTCOME_TEXT = {
    "pass": ("✓", "PASS"),
    "fail": ("✗", "FAIL"),
    "not valid": ("✗", "NOT VALID"),
    "indeterminate": ("?", "INDETERMINATE"),
    "not judged": ("–", "NOT JUDGED"),
}
_OUTCOME_TEXT = OUTCOME_TEXT


@dataclass(frozen=True)
class Wording:
    """The words a report gives its verdicts: criteria are met or not; a datasheet's claims are
    supported or contradicted by the supplier's own spectrum (``lumeval claims --html``)."""

    #: outcome -> (symbol, word) of the badges
    outcome_text: Mapping[str, tuple[str, str]]
    #: overall outcome -> the verdict's sentence
    summary: Mapping[str, str]
    #: the heading of the column naming what was checked
    noun: str
    #: the heading of the limit column, the word before a margin in a grid cell, the heading of
    #: the margin column, and the note under the grid saying what the margin is
    limit_heading: str = "Limit"
    margin_word: str = "margin"
    margin_heading: str = "Margin (+ inside)"
    grid_note: str = "Each cell: verdict, measured value, margin to the nearest limit (+ inside the limits, − outside)."


CRITERIA_WORDING = Wording(OUTCOME_TEXT, {
    "pass": "Every criterion is met.",
    "fail": "At least one criterion is not met.",
    "indeterminate": "No criterion fails, but at least one cannot be decided.",
    "not judged": "No criterion fails, but at least one could not be judged.",
    "not valid": "At least one criterion rests on a figure outside its validity range "
                 "(CRI/TM-30 with |Duv| > 0.05): not a pass.",
}, "Criterion")
CLAIMS_WORDING = Wording({
    "pass": ("✓", "SUPPORTED"),
    "fail": ("✗", "CONTRADICTED"),
    "not valid": ("✗", "NOT VALID"),
    "indeterminate": ("?", "INDETERMINATE"),
    "not judged": ("–", "NOT CHECKABLE"),
}, {
    "pass": "No claim is contradicted by the supplier's own spectrum.",
    "fail": "At least one claim is contradicted by the supplier's own spectrum: the datasheet over-claims.",
    "indeterminate": "No claim is contradicted, but at least one cannot be decided.",
    "not judged": "No claim is contradicted, but at least one could not be checked from the spectrum.",
    "not valid": "At least one claim rests on a figure outside its validity range "
                 "(CRI/TM-30 with |Duv| > 0.05).",
}, "Claim", limit_heading="Accepted as", margin_word="by how much", margin_heading="By how much",
    grid_note="Each cell: verdict, measured value and, for a contradicted claim, by how much it misses: measured − "
              "stated bound (+ above a maximum, − below a minimum), as the terminal, JSON and CSV reports give it.")


def worst(outcomes) -> str:
    """The worst of ``outcomes`` (``"pass"`` for none)."""
    w = "pass"
    for o in outcomes:
        if OUTCOME_ORDER.index(o) > OUTCOME_ORDER.index(w):
            w = o
    return w


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
    #: The clause kind (``figure``, ``ansi_quadrangle``, ``sdcm``...; "" when a row given as a
    #: mapping does not say): with ``figure`` it tells a chromaticity requirement from others.
    kind: str = ""
    #: Expanded uncertainty U = k·u of the judged quantity and the probability of conformance,
    #: when the check ran under measurement uncertainty (lumeval.uncertainty).
    expanded_uncertainty: float | None = None
    p_conformance: float | None = None
    #: The measured value and margin in words, as the clause kind states them (a chromaticity
    #: region: CCT and Duv measured, the margin in Δu'v'); None: from the figure registry.
    measured_text: str | None = None
    margin_text: str | None = None
    #: (clause result, spectrum index) the row was read from: its words are made only for the
    #: rows a report shows (:meth:`words`), not for every sample of a large lot.
    origin: Any = field(default=None, repr=False, compare=False)

    def words(self) -> tuple[str, str] | None:
        """(measured, margin) in the clause kind's own words, or None (then the registry's format)."""
        if self.measured_text is not None and self.margin_text is not None:
            return self.measured_text, self.margin_text
        if self.origin is not None:
            t = _clause_texts(*self.origin)
            if t:
                return t["measured_text"], t["margin_text"]
        return None


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
        kind = str(getattr(r, "kind", "") or "")
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
                    kind=kind,
                    expanded_uncertainty=_opt_float(big_u[i]) if big_u is not None and i < len(big_u) else None,
                    p_conformance=_opt_float(p_c[i]) if p_c is not None and i < len(p_c) else None,
                    origin=(r, i),
                )
            )
    return rows


def _clause_texts(r, i: int) -> dict[str, str]:
    """The measured value and the margin of clause result ``r`` for spectrum ``i`` in the words
    of the terminal report (:func:`lumeval.render.verdicts.measured_text`); nothing for a result
    that is not one of lumeval's clause results."""
    if not hasattr(r, "kind") or not hasattr(r, "details"):
        return {}
    from .verdicts import margin_text, measured_text

    try:
        return {"measured_text": measured_text(r, i), "margin_text": margin_text(r, i)}
    except (KeyError, IndexError, TypeError, ValueError, AttributeError):
        return {}


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
        kind=str(_get(row, "kind", default="") or ""),
        measured_text=_get(row, "measured_text"),
        margin_text=_get(row, "margin_text"),
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


def as_lot(lot, n: int, per_sample_max: int | None) -> bool:
    """Whether the report draws the spectra in aggregate: a lot, or more spectra than an
    explicit ``per_sample_max``."""
    return lot is not None or (per_sample_max is not None and n > per_sample_max)

