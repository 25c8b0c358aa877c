"""The acceptance-criteria model: clause kinds, their keys, their evaluation.

A criteria file is a list of clauses. Each clause has a *kind*; each kind is a class
registered in :data:`CLAUSE_KINDS` that declares the keys it accepts (:class:`KeySpec`),
parses a TOML table into a frozen clause object, evaluates that clause for N spectra at once,
and words it for a tender. New kinds plug in with :func:`register_clause_kind` (for example
lot clauses, which declare ``SCOPE = "lot"`` and evaluate against lot statistics instead of
per-sample figures; the loader, the ``explain`` wording and the documentation check pick
registered kinds up without change).

Evaluation is vectorised: a clause receives an *evaluation* object with ``figure(name)``
returning arrays of shape (N,) and the attributes ``x, y, u_prime, v_prime, cct_K, duv``
(:class:`lumeval.engine.Evaluation` provides them), and returns :class:`ClauseResult` objects
with per-spectrum arrays.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field, replace
from typing import Any, ClassVar

import numpy as np

from .. import figures
from ..errors import FINITE_FIX, finite_float, shown
from . import plausible, presets, regions, rounding
from .figure_notes import nearest_category_notes as _nearest_category_notes
from .figure_notes import with_hue_edge_warnings as _with_hue_edge_warnings
from .undefined import undefined_reasons
from .verdicts import (
    NOT_VALID,
    SIMPLE_ACCEPTANCE,
    CheckResult,
    ClauseResult,
    NotJudgedHere,
    margin_to_limits,
    simple_outcomes,
)

# --------------------------------------------------------------------------- figures

def describe(name: str) -> tuple[str, str]:
    """(what the figure is, the standard that defines it), from the figure registry."""
    try:
        f = figures.get(name)
    except KeyError:
        return (name, "")
    return (f.description, f.source)


def display_name(name: str) -> str:
    """How a figure is written for people (the registry's label): ``cct_K`` -> ``CCT``,
    ``Rcs_h1`` -> ``Rcs,h1``; the name itself when it is not a figure."""
    return figures.label(name)


def figure_unit(name: str) -> str:
    return figures.unit(name)


def suggest(name: str, choices, *, cutoff: float = 0.5) -> str | None:
    """The closest valid name to ``name`` (difflib), case-insensitive; None when nothing is close."""
    choices = list(choices)
    low = {c.lower(): c for c in choices}
    if str(name).lower() in low:
        return low[str(name).lower()]
    m = difflib.get_close_matches(str(name).lower(), list(low), n=1, cutoff=cutoff)
    return low[m[0]] if m else None


def fmt_number(v: float | None, unit: str = "") -> str:
    """A limit or value as a human reads it (no trailing zeros; unit appended)."""
    if v is None:
        return "—"
    if not np.isfinite(v):
        return "undefined"
    text = f"{v:.6g}" if abs(v) >= 1e-3 or v == 0 else f"{v:.2e}"
    sp = "" if unit in ("", "%") else " "
    return f"{text}{sp}{unit}"


def limit_number(v: float | None, unit: str = "") -> str:
    """A limit as the criteria file writes it: the shortest decimal that reads back as the same
    number (Python's ``repr``), in positional notation, without a trailing ".0" (91.61096 stays
    91.61096, −0.0005 stays −0.0005; a review found them shown as 91.611 and −5.00e-04 in the
    tender text and every report); unit appended."""
    if v is None or not np.isfinite(v):
        return fmt_number(v, unit)
    text = repr(float(v))
    if "e" in text:
        from decimal import Decimal

        text = format(Decimal(text), "f")
    text = text.removesuffix(".0")
    sp = "" if unit in ("", "%") else " "
    return f"{text}{sp}{unit}"


def limit_text(lower: float | None, upper: float | None, unit: str) -> str:
    if lower is not None and upper is not None:
        return f"{limit_number(lower, unit)} … {limit_number(upper, unit)}"
    if lower is not None:
        return f"≥ {limit_number(lower, unit)}"
    return f"≤ {limit_number(upper, unit)}"


def _not_valid(ev, figure: str, n: int, outcome: tuple, reason: tuple, accept: bool) -> tuple[tuple, tuple]:
    """Where ``figure`` was computed outside its validity range: ``not valid`` (with the reason),
    or, when the clause accepts such figures, the plain outcome with a note."""
    flag = getattr(ev, "outside_validity_of", None)
    outside = np.asarray(flag(figure), dtype=bool) if flag is not None else np.zeros(n, dtype=bool)
    if not outside.any():
        return outcome, reason
    outcome_l, reason_l = list(outcome), list(reason) if reason else [""] * n
    for i in np.flatnonzero(outside):
        why = ev.validity_reason(int(i)) if hasattr(ev, "validity_reason") else "outside the validity range"
        if accept:
            reason_l[i] = f"judged all the same (accept_outside_validity = true): {why}"
        elif np.isfinite(np.asarray(ev.figure(figure), dtype=float)[i]):
            outcome_l[i] = NOT_VALID
            reason_l[i] = f"not valid: {why} To judge it all the same: accept_outside_validity = true."
    return tuple(outcome_l), tuple(reason_l)


def figure_result(
    ev, *, clause_id: str, label: str, kind: str, figure: str, lower, upper, source: str, group: str, line,
    accept_outside_validity: bool = False, round_to: int | None = None,
) -> ClauseResult:
    """Judge ``lower ≤ figure ≤ upper`` for every spectrum (simple acceptance); with ``round_to``
    the figure rounded to that many decimals is judged (:mod:`.rounding`; ``details["compared"]``).

    A figure computed outside its validity range (:meth:`lumeval.engine.Evaluation.outside_validity_of`)
    is ``not valid`` unless ``accept_outside_validity``."""
    m = np.asarray(ev.figure(figure), dtype=float)
    unit = figure_unit(figure)
    c = m if round_to is None else rounding.round_half_even(m, round_to)
    margin = margin_to_limits(c, lower, upper)
    margin = np.where(np.isfinite(m), margin, np.nan)
    outcome, reason = simple_outcomes(margin, undefined_reasons(ev, figure, m))
    outcome, reason = _not_valid(ev, figure, m.size, outcome, reason, accept_outside_validity)
    reason = _with_hue_edge_warnings(ev, figure, reason)
    return ClauseResult(
        clause_id=clause_id,
        label=label,
        kind=kind,
        figure=figure,
        unit=unit,
        measured=m,
        lower=None if lower is None else float(lower),
        upper=None if upper is None else float(upper),
        limit_text=rounding.marked(limit_text(lower, upper, unit), round_to, unit),
        margin=margin,
        outcome=outcome,
        details={} if round_to is None else {rounding.COMPARED: c},
        reason=reason,
        source=source,
        group=group,
        line=line,
        round_to=round_to,
        decision_rule=rounding.decision_rule(round_to, unit) or SIMPLE_ACCEPTANCE,
    )


# --------------------------------------------------------------------------- registry


@dataclass(frozen=True)
class KeySpec:
    """One key a clause kind accepts: its name, what values are allowed, what it means."""

    name: str
    allowed: str
    meaning: str
    required: bool = False


def key_table(*specs: KeySpec) -> dict[str, KeySpec]:
    """``{spec.name: spec}`` in the order given: a clause kind's ``KEYS``."""
    return {k.name: k for k in specs}


#: Keys every clause accepts, whatever its kind.
COMMON_KEYS: dict[str, KeySpec] = key_table(
    KeySpec("kind", "one of the clause kinds", "what kind of requirement this is (may be omitted when `figure` is given)"),
    KeySpec("id", "non-empty string, unique in the file", "a short name for the clause in reports (default: C1, C2, ...)"),
    KeySpec("label", "string", "the requirement in your own words, shown in reports"),
    KeySpec("note", "string", "free text carried into the tender wording"),
    # judged by lumeval.tunable over the settings of a mix or series (criteria/range_clauses.py)
    KeySpec("over", "array of two numbers [low, high]", "judge the clause at every setting from low to high inclusive "
            "(`lumeval mix`, `lumeval series`; in the settings' unit)"),
)


class ParseError(Exception):
    """Raised by clause parsers; the loader turns it into a CriteriaError with the line."""

    def __init__(self, key: str | None, problem: str, fix: str | None = None) -> None:
        super().__init__(problem)
        self.key, self.problem, self.fix = key, problem, fix


@dataclass(frozen=True)
class ClauseKind:
    """Base class of clause kinds. Subclasses are frozen dataclasses that add their own fields.

    Class attributes
    ----------------
    KIND : str
        The value of ``kind`` in the criteria file.
    TITLE : str
        A short title for documentation.
    SCOPE : str
        ``"sample"`` (judged per spectrum) or, for future kinds, ``"lot"``.
    KEYS : dict of str -> KeySpec
        Kind-specific keys (the :data:`COMMON_KEYS` are accepted too).
    """

    KIND: ClassVar[str] = ""
    TITLE: ClassVar[str] = ""
    SCOPE: ClassVar[str] = "sample"
    KEYS: ClassVar[dict[str, KeySpec]] = {}

    # every clause's own fields (dataclass fields: they come first in every kind's fields)
    clause_id: str
    label: str
    note: str
    line: int | None

    @classmethod
    def parse(cls, table: dict, common: dict) -> ClauseKind:  # pragma: no cover - abstract
        raise NotImplementedError

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:  # pragma: no cover - abstract
        raise NotImplementedError

    def tender_text(self) -> str:  # pragma: no cover - abstract
        raise NotImplementedError

    def sources(self) -> tuple[str, ...]:
        return ()


CLAUSE_KINDS: dict[str, type[ClauseKind]] = {}


def register_clause_kind(cls: type[ClauseKind]) -> type[ClauseKind]:
    """Register a clause kind (usable as a class decorator)."""
    if not cls.KIND:
        raise ValueError("a clause kind needs KIND")
    overlap = set(cls.KEYS) & set(COMMON_KEYS)
    if overlap:
        raise ValueError(f"clause kind {cls.KIND!r} redefines common keys {sorted(overlap)}")
    CLAUSE_KINDS[cls.KIND] = cls
    return cls


# --------------------------------------------------------------------------- value helpers


def is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def number(table: dict, key: str, *, positive: bool = False, allow_zero: bool = True) -> float | None:
    if key not in table:
        return None
    v = table[key]
    if not is_number(v):
        raise ParseError(key, f"must be a number, got {shown(v)}", "write a plain number, e.g. 90 or 0.0035")
    v = finite_float(v, lambda s: ParseError(key, f"must be a finite number, got {s}", FINITE_FIX))
    if positive and (v < 0 or (v == 0 and not allow_zero)):
        raise ParseError(key, f"must be greater than zero, got {v:g}", "write a positive number")
    return v


def boolean(table: dict, key: str) -> bool:
    """An optional true/false key (default false)."""
    v = table.get(key, False)
    if not isinstance(v, bool):
        raise ParseError(key, f"must be true or false, got {v!r}", f"write {key} = true or {key} = false (no quotes)")
    return v


#: Key of the clause kinds that judge reference-based figures (CRI, TM-30).
ACCEPT_OUTSIDE_VALIDITY = KeySpec(
    "accept_outside_validity",
    "true or false (default false)",
    "judge the figure even where it was computed outside its validity range (CRI and TM-30 of a source "
    "with |Duv| > 0.05, against the reference at the nearest Planckian temperature); by default such a "
    "figure is judged 'not valid', which fails the check",
)


def string(table: dict, key: str) -> str | None:
    if key not in table:
        return None
    v = table[key]
    if not isinstance(v, str):
        raise ParseError(key, f"must be a string, got {v!r}", f'write it in quotes, e.g. {key} = "..."')
    return v


# --------------------------------------------------------------------------- figure clauses


@register_clause_kind
@dataclass(frozen=True)
class FigureClause(ClauseKind):
    """A minimum, maximum or range on any figure lumeval computes (CCT band, Duv band, Ra, R9 ...)."""

    KIND: ClassVar[str] = "figure"
    TITLE: ClassVar[str] = "Minimum, maximum or range on one figure"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("figure", "a figure name (see the list of figures)", "the figure judged, e.g. \"R9\", \"cct_K\", \"duv\"", True),
        KeySpec("min", "number", "lowest acceptable value (inclusive)"),
        KeySpec("max", "number", "highest acceptable value (inclusive)"),
        KeySpec("range", "array of two numbers [low, high]", "acceptable range (inclusive); instead of min and max"),
        ACCEPT_OUTSIDE_VALIDITY,
        KeySpec("round_to", rounding.ALLOWED, rounding.MEANING),
    )

    figure: str
    lower: float | None
    upper: float | None
    accept_outside_validity: bool = False
    round_to: int | None = None  #: decimals the value is rounded to before comparison (None: unrounded)

    @classmethod
    def parse(cls, table: dict, common: dict) -> FigureClause:
        fig = table.get("figure")
        if fig is None:
            raise ParseError(None, "a figure clause needs `figure`", 'add e.g. figure = "R9"')
        if not isinstance(fig, str):
            raise ParseError("figure", f"must be a figure name in quotes, got {fig!r}", 'write e.g. figure = "R9"')
        canonical = figures.lookup(fig)
        if canonical is None:
            s = suggest(fig, figures.spellings())
            hint = f"did you mean {s!r}? " if s else ""
            raise ParseError("figure", f"unknown figure {fig!r}", f"{hint}allowed: {', '.join(_figure_summary())}")
        fig = canonical
        lo, hi = number(table, "min"), number(table, "max")
        if "range" in table:
            if lo is not None or hi is not None:
                raise ParseError("range", "`range` cannot be combined with `min` or `max`", "use either range = [low, high] or min/max")
            r = table["range"]
            if not (isinstance(r, list) and len(r) == 2 and all(is_number(v) for v in r)):
                raise ParseError("range", f"must be an array of two numbers, got {shown(r)}", "write e.g. range = [2870, 3220]")
            lo, hi = (finite_float(v, lambda s: ParseError("range", f"limits must be finite numbers, got {s}", FINITE_FIX))
                      for v in r)
            _refuse_implausible(fig, "range", r, [lo, hi])
            if lo > hi:
                raise ParseError("range", f"low limit {lo:g} is above high limit {hi:g}", "write range = [low, high] with low ≤ high")
        elif lo is None and hi is None:
            raise ParseError(None, f"clause on {fig!r} has no limit", "add min = ..., max = ... or range = [low, high]")
        for key, v in (("min", lo), ("max", hi)):
            if v is not None and key in table:
                _refuse_implausible(fig, key, [table[key]], [v])
        if lo is not None and hi is not None and lo > hi:
            raise ParseError("min", f"min = {lo:g} is above max = {hi:g}", "the limits contradict each other; swap or correct them")
        unit, rt = figure_unit(fig), rounding.parse(table)
        label = common["label"] or rounding.marked(f"{display_name(fig)} {limit_text(lo, hi, unit)}", rt, unit)
        return cls(common["id"], label, common["note"], common["line"], fig, lo, hi, boolean(table, ACCEPT_OUTSIDE_VALIDITY.name), rt)

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:
        _desc, std = describe(self.figure)
        r = figure_result(ev, clause_id=self.clause_id, label=self.label, kind=self.KIND, figure=self.figure,
                          lower=self.lower, upper=self.upper, source=std, group=self.clause_id, line=self.line,
                          accept_outside_validity=self.accept_outside_validity, round_to=self.round_to)
        if figures.get(self.figure).name == "ansi_category_K":
            r = _nearest_category_notes(ev, r)
        return (r,)

    def tender_text(self) -> str:
        desc, std = describe(self.figure)
        unit = figure_unit(self.figure)
        if self.lower is not None and self.upper is not None:
            req = f"shall be between {limit_number(self.lower, unit)} and {limit_number(self.upper, unit)} inclusive"
        elif self.lower is not None:
            req = f"shall be at least {limit_number(self.lower, unit)}"
        else:
            req = f"shall not exceed {limit_number(self.upper, unit)}"
        return f"The {desc} (`{self.figure}`, {std}) {req}{rounding.tender_words(self.round_to, unit)}."

    def sources(self) -> tuple[str, ...]:
        return (describe(self.figure)[1],)


def _refuse_implausible(figure: str, key: str, raw: list, values: list[float]) -> None:
    """Raise :class:`ParseError` for a limit only a slip of units explains (:mod:`.plausible`)."""
    found = plausible.check_limits(figure, key, raw, values)
    if found is not None:
        raise ParseError(key, *found)


def _figure_summary() -> list[str]:
    return figures.summary_text()


# --------------------------------------------------------------------------- ANSI quadrangle


@register_clause_kind
@dataclass(frozen=True)
class AnsiQuadrangleClause(ClauseKind):
    """Chromaticity inside the ANSI C78.377 quadrangle of a nominal CCT category (edition 2008 or 2017)."""

    KIND: ClassVar[str] = "ansi_quadrangle"
    TITLE: ClassVar[str] = "Inside an ANSI C78.377 nominal-CCT quadrangle (edition 2008 or 2017)"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec(
            "nominal_cct",
            'one of 2200, 2500, 2700, 3000, 3500, 4000, 4500, 5000, 5700, 6500 (2008: 2700 … 6500), or "flexible"',
            "the nominal CCT category of the edition's Table 1",
            True,
        ),
        KeySpec("edition", f"{' or '.join(regions.ANSI_EDITIONS)} (default {regions.ANSI_DEFAULT_EDITION})",
                "the edition of ANSI C78.377 whose quadrangles are used"),
        KeySpec("target_cct_K", "number, 2200 … 7000 (2008: 2700 … 6500; only with nominal_cct = \"flexible\")", "target CCT of a flexible-CCT category"),
        KeySpec("tolerance_K", "number of kelvin ≥ 1, target ± tolerance within 1000 … 25000 K (only with nominal_cct = \"flexible\")", "CCT tolerance of a flexible category (default: the flexible-CCT formula)"),
    )

    nominal: int | None
    target_cct_K: float | None
    tolerance_K: float | None
    edition: str = regions.ANSI_DEFAULT_EDITION

    @classmethod
    def parse(cls, table: dict, common: dict) -> AnsiQuadrangleClause:
        ed_raw = table.get("edition", regions.ANSI_DEFAULT_EDITION)
        if isinstance(ed_raw, float) and ed_raw.is_integer():
            ed_raw = int(ed_raw)
        try:
            if isinstance(ed_raw, bool) or not isinstance(ed_raw, (int, str)):
                raise ValueError
            ed = regions.normalise_ansi_edition(ed_raw)
        except ValueError:
            raise ParseError("edition", f"{ed_raw!r} is not an encoded edition of ANSI C78.377",
                             f"write edition = {' or '.join(regions.ANSI_EDITIONS)}") from None
        name = regions.ansi_edition_name(ed)
        table_1 = regions.ansi_table(ed)
        nom = table.get("nominal_cct")
        allowed = ", ".join(str(k) for k in table_1) + ', "flexible"'
        if nom is None:
            raise ParseError(None, "an ansi_quadrangle clause needs `nominal_cct`", f"add nominal_cct = one of {allowed}")
        tgt, tol = number(table, "target_cct_K"), number(table, "tolerance_K", positive=True, allow_zero=False)
        if isinstance(nom, str) and nom.lower() == "flexible":
            if tgt is None:
                raise ParseError(None, 'nominal_cct = "flexible" needs `target_cct_K`', "add target_cct_K = e.g. 3800")
            lo, hi = regions.ANSI_FLEXIBLE_RANGES_K[ed]
            if not lo <= tgt <= hi:
                raise ParseError("target_cct_K", f"{tgt:g} K is outside the flexible range {lo:.0f}-{hi:.0f} K of {name}",
                                 plausible.kelvin_fix("target_cct_K", tgt, lambda w: lo <= w <= hi) + f"write a value between {lo:.0f} and {hi:.0f}")
            if tol is not None:
                from ..metrics.colorimetry import CCT_MAX_K, CCT_MIN_K

                # the quadrangle's isotemperature edges must be CCTs lumeval computes, and the
                # band must be wider than the 1 K resolution of a CCT
                if tol < 1.0 or not CCT_MIN_K <= tgt - tol < tgt + tol <= CCT_MAX_K:
                    top = min(tgt - CCT_MIN_K, CCT_MAX_K - tgt)
                    raise ParseError("tolerance_K", f"{tol:g} K leaves a CCT band of {tgt - tol:g} to {tgt + tol:g} K; "
                                     f"the band must lie within {CCT_MIN_K:.0f}-{CCT_MAX_K:.0f} K",
                                     f"write a tolerance from 1 to {top:.0f} K (or leave it out for the flexible-CCT formula)")
            label = common["label"] or f"inside {name} flexible {tgt:.0f} K quadrangle"
            return cls(common["id"], label, common["note"], common["line"], None, tgt, tol, ed)
        if isinstance(nom, str):
            raise ParseError("nominal_cct", *plausible.quoted_category(nom, table_1, allowed))
        # the categories are int keys: 3000.0 finds 3000 without a float() that a huge integer overflows
        if not (is_number(nom) and nom in table_1):
            other = [e for e in regions.ANSI_EDITIONS if e != ed and is_number(nom) and nom in regions.ansi_table(e)]
            hint = f" (it is one of edition {other[0]})" if other else ""
            fix = "" if other or not is_number(nom) else plausible.kelvin_fix("nominal_cct", nom, lambda w: w in table_1)
            raise ParseError("nominal_cct", f"{shown(nom)} is not a nominal CCT category of {name}{hint}", f"{fix}allowed: {allowed}")
        for k in ("target_cct_K", "tolerance_K"):
            if k in table:
                raise ParseError(k, f"`{k}` applies only to a flexible category", 'remove it, or set nominal_cct = "flexible"')
        label = common["label"] or f"inside {name} {int(nom)} K quadrangle"
        return cls(common["id"], label, common["note"], common["line"], int(nom), None, None, ed)

    @property
    def quadrangle(self) -> regions.Quadrangle:
        if self.nominal is not None:
            return regions.ansi_quadrangle(self.nominal, self.edition)
        assert self.target_cct_K is not None  # parse() requires it for a flexible category
        return regions.ansi_flexible_quadrangle(self.target_cct_K, self.tolerance_K, self.edition)

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:
        q = self.quadrangle
        upvp = np.stack([np.asarray(ev.u_prime, float), np.asarray(ev.v_prime, float)], axis=-1)
        margin = q.margin(upvp)
        outcome, reason = simple_outcomes(margin)
        cct, duv = np.asarray(ev.cct_K, float), np.asarray(ev.duv, float)
        lo, hi = q.cct_range_K
        # the edition and how the corners were obtained travel in the limit text, so every
        # report (terminal, JSON "limit", CSV, HTML) names them whatever the clause's label
        lim = f"{regions.ansi_edition_name(self.edition)}, {q.corners_text}: CCT {lo:.0f}–{hi:.0f} K, Duv target ± {regions.ANSI_DUV_TOLERANCE}"
        return (
            ClauseResult(
                clause_id=self.clause_id,
                label=self.label,
                kind=self.KIND,
                figure="u'v'",
                unit="Δu'v'",
                measured=margin,
                lower=0.0,
                upper=None,
                limit_text=lim,
                margin=margin,
                outcome=outcome,
                details={"cct_K": cct, "duv": duv, "u_prime": upvp[:, 0], "v_prime": upvp[:, 1], "delta_upvp": margin},
                reason=reason,
                source=q.source,
                group=self.clause_id,
                line=self.line,
            ),
        )

    def tender_text(self) -> str:
        q = self.quadrangle
        lo, hi = q.cct_range_K
        name = regions.ansi_edition_name(self.edition)
        if self.nominal is not None:
            cat = regions.ansi_table(self.edition)[self.nominal]
            what = (
                f"the quadrangle of the {self.nominal} K nominal CCT category of {name} (Table 1: target CCT "
                f"{cat.target_cct_K:.0f} ± {cat.tolerance_K:.0f} K, i.e. {lo:.0f} K to {hi:.0f} K, target Duv "
                f"{cat.target_duv:+.4f} ± 0.006)"
            )
        else:  # "quadrangle" once (a review found "the quadrangle of the … flexible-CCT quadrangle")
            what = f"the {name} flexible-CCT quadrangle for {self.target_cct_K:.0f} K (CCT {lo:.0f}–{hi:.0f} K)"
        if q.corners_origin == "published":
            xy = q.corners_xy
            corners = "; ".join(f"({x:.4f}, {y:.4f})" for x, y in xy)
            how = f"with the corners published in that edition, CIE 1931 (x, y) = {corners}"
        elif self.edition == "2008":
            how = (f"with corners at CCT {lo:.0f} K and {hi:.0f} K and Duv equal to the edition's flexible-CCT "
                   f"target at the target CCT ± 0.006")
        else:
            how = (f"with corners at CCT {lo:.0f} K and {hi:.0f} K and Duv equal to the standard's flexible-CCT "
                   f"target at each edge ± 0.006")
        return f"The chromaticity shall lie inside {what}, {how}."

    def sources(self) -> tuple[str, ...]:
        return (self.quadrangle.source, "Ohno (2014) LEUKOS 10(1):47-55 for CCT/Duv")


# --------------------------------------------------------------------------- SDCM ellipse


@register_clause_kind
@dataclass(frozen=True)
class SdcmClause(ClauseKind):
    """Chromaticity within n steps (SDCM) of a colour-matching ellipse."""

    KIND: ClassVar[str] = "sdcm"
    TITLE: ClassVar[str] = "Within n steps of an SDCM (MacAdam-type) ellipse"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("max_steps", "positive number", "largest acceptable number of steps from the centre", True),
        KeySpec("centre", '"F6500", "F5000", "F4000", "F3500", "F3000" or "F2700"', "an IEC 60081 colour centre with its ellipse"),
        KeySpec("macadam1942", "integer 1 … 25", "one of MacAdam's (1942) 25 ellipses (Wyszecki & Stiles Table 2(5.4.1))"),
        KeySpec("centre_xy", "array of two numbers [x, y]", "your own centre (CIE 1931 x, y); needs g11, g12, g22"),
        KeySpec("g11", "number", "coefficient of Δx² of your 1-step ellipse"),
        KeySpec("g12", "number", "coefficient of Δx·Δy (the form is g11 Δx² + 2 g12 Δx Δy + g22 Δy²)"),
        KeySpec("g22", "number", "coefficient of Δy² of your 1-step ellipse"),
    )

    ellipse: regions.SdcmEllipse
    max_steps: float

    @classmethod
    def parse(cls, table: dict, common: dict) -> SdcmClause:
        steps = number(table, "max_steps", positive=True, allow_zero=False)
        if steps is None:
            raise ParseError(None, "an sdcm clause needs `max_steps`", "add max_steps = e.g. 3")
        given = [k for k in ("centre", "macadam1942", "centre_xy") if k in table]
        if len(given) != 1:
            raise ParseError(
                given[1] if len(given) > 1 else None,
                "give exactly one of `centre`, `macadam1942` or `centre_xy`" + (f" (found {', '.join(given)})" if given else ""),
                'e.g. centre = "F3000", or centre_xy = [0.44, 0.40] with g11, g12, g22',
            )
        gkeys = [k for k in ("g11", "g12", "g22") if k in table]
        if given[0] != "centre_xy" and gkeys:
            raise ParseError(gkeys[0], f"`{gkeys[0]}` applies only with `centre_xy`", "remove it, or give your own centre_xy")
        if given[0] == "centre":
            c = string(table, "centre")
            if c is None or c not in regions.IEC60081_CENTRES:
                s = suggest(c or "", regions.IEC60081_CENTRES)
                hint = f"did you mean {s!r}? " if s else ""
                raise ParseError("centre", f"unknown centre {c!r}", f"{hint}allowed: {', '.join(regions.IEC60081_CENTRES)}")
            ell = regions.iec60081_ellipse(c)
        elif given[0] == "macadam1942":
            k = table["macadam1942"]
            if not (isinstance(k, int) and not isinstance(k, bool) and 1 <= k <= 25):
                raise ParseError("macadam1942", f"must be an integer from 1 to 25, got {k!r}", "pick an ellipse number from Wyszecki & Stiles Table 2(5.4.1)")
            ell = regions.macadam1942_ellipse(k)
        else:
            c = table["centre_xy"]
            if not (isinstance(c, list) and len(c) == 2 and all(is_number(v) for v in c) and all(0 < v < 1 for v in c)):
                raise ParseError("centre_xy", f"must be [x, y] with 0 < x, y < 1, got {shown(c)}", "write e.g. centre_xy = [0.4338, 0.4030]")
            if len(gkeys) != 3:
                missing = [k for k in ("g11", "g12", "g22") if k not in table]
                raise ParseError(None, f"centre_xy needs the ellipse coefficients; missing {', '.join(missing)}", "add g11, g12 and g22 of your 1-step ellipse")
            g11, g12, g22 = (number(table, k) for k in ("g11", "g12", "g22"))
            assert g11 is not None and g12 is not None and g22 is not None  # all three are given (above)
            ell = regions.SdcmEllipse(f"user ellipse at ({c[0]}, {c[1]})", np.array(c, float), g11, g12, g22, "user-given centre and coefficients")
            if not ell.is_positive_definite:
                raise ParseError("g11", "g11, g12, g22 do not describe an ellipse (need g11 > 0, g22 > 0, g11·g22 > g12²)", "check the coefficients and their signs")
        label = common["label"] or f"within {steps:g} SDCM steps of {ell.name}"
        return cls(common["id"], label, common["note"], common["line"], ell, steps)

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:
        xy = np.stack([np.asarray(ev.x, float), np.asarray(ev.y, float)], axis=-1)
        st = self.ellipse.steps(xy)
        margin = self.max_steps - st
        outcome, reason = simple_outcomes(margin)
        d = self.ellipse.margin_upvp(xy, self.max_steps)
        return (
            ClauseResult(
                clause_id=self.clause_id,
                label=self.label,
                kind=self.KIND,
                figure="SDCM steps",
                unit="steps",
                measured=st,
                lower=None,
                upper=float(self.max_steps),
                limit_text=f"≤ {self.max_steps:g} steps; centre x, y = {self.ellipse.centre_xy[0]:.4f}, {self.ellipse.centre_xy[1]:.4f}",
                margin=margin,
                outcome=outcome,
                details={"steps": st, "delta_upvp": d, "x": xy[:, 0], "y": xy[:, 1]},
                reason=reason,
                source=self.ellipse.source,
                group=self.clause_id,
                line=self.line,
            ),
        )

    def tender_text(self) -> str:
        e = self.ellipse  # a user ellipse's name holds its centre, which the text gives (said twice before)
        return (
            f"The chromaticity shall lie within {self.max_steps:g} steps (standard deviations of colour matching, SDCM) "
            f"of {'the ellipse' if e.name.startswith('user ellipse') else e.name} centred at x = {e.centre_xy[0]:.4f}, y = {e.centre_xy[1]:.4f} (CIE 1931), steps computed as "
            f"√(g11 Δx² + 2 g12 Δx Δy + g22 Δy²) with g11 = {e.g11:.4g}, g12 = {e.g12:.4g}, g22 = {e.g22:.4g}."
        )

    def sources(self) -> tuple[str, ...]:
        return (self.ellipse.source,)


# --------------------------------------------------------------------------- TM-30 Annex E


@register_clause_kind
@dataclass(frozen=True)
class Tm30DesignIntentClause(ClauseKind):
    """ANSI/IES TM-30-20 Annex E design-intent priority level (P1-P3, V1-V3, F1-F3)."""

    KIND: ClassVar[str] = "tm30_design_intent"
    TITLE: ClassVar[str] = "ANSI/IES TM-30-20 Annex E design-intent level"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("level", ", ".join(f'"{k}"' for k in presets.LEVELS), "the design intent (Preference, Vividness, Fidelity) and priority level", True),
        ACCEPT_OUTSIDE_VALIDITY,
    )

    level: str
    accept_outside_validity: bool = False

    @classmethod
    def parse(cls, table: dict, common: dict) -> Tm30DesignIntentClause:
        lv = table.get("level")
        if lv is None:
            raise ParseError(None, "a tm30_design_intent clause needs `level`", f"add level = one of {', '.join(presets.LEVELS)}")
        if not isinstance(lv, str) or lv not in presets.TM30_ANNEX_E:
            s = suggest(str(lv), presets.LEVELS, cutoff=0.4)
            hint = f"did you mean {s!r}? " if s else ""
            raise ParseError("level", f"unknown design-intent level {lv!r}", f"{hint}allowed: {', '.join(presets.LEVELS)}")
        label = common["label"] or f"TM-30 Annex E {presets.level_title(lv)}"
        return cls(common["id"], label, common["note"], common["line"], lv, boolean(table, ACCEPT_OUTSIDE_VALIDITY.name))

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:
        out = []
        for c in presets.effective_conditions(self.level):
            unit = figure_unit(c.figure)
            out.append(
                figure_result(
                    ev,
                    clause_id=f"{self.clause_id}:{c.figure}",
                    label=f"{self.level}: {display_name(c.figure)} {limit_text(c.lower, c.upper, unit)}",
                    kind=self.KIND,
                    figure=c.figure,
                    lower=c.lower,
                    upper=c.upper,
                    source=presets.TM30_ANNEX_E_SOURCE,
                    group=self.clause_id,
                    line=self.line,
                    accept_outside_validity=self.accept_outside_validity,
                )
            )
        return tuple(out)

    def tender_text(self) -> str:
        parts = []
        for c in presets.effective_conditions(self.level):
            parts.append(f"{display_name(c.figure)} {limit_text(c.lower, c.upper, figure_unit(c.figure))}")
        return (
            f"The light source shall meet ANSI/IES TM-30-20 Annex E, {presets.level_title(self.level)}: "
            + "; ".join(parts)
            + " (Rf, Rg and hue-bin values per ANSI/IES TM-30-20; Rcs,h1 in percent)."
        )

    def sources(self) -> tuple[str, ...]:
        return ("ANSI/IES TM-30-20 Annex E",)


# --------------------------------------------------------------------------- the criteria


@dataclass(frozen=True)
class Criteria:
    """A parsed criteria file.

    Attributes
    ----------
    clauses : tuple of ClauseKind, in file order
    identification : dict of str -> str
    file : str
    """

    clauses: tuple
    identification: dict
    file: str = "<criteria>"
    #: Optional ``[instrument]``, ``[monte_carlo]`` and ``[decision]`` tables, parsed by
    #: lumeval.uncertainty (keys "instrument", "monte_carlo", "decision"); see docs/uncertainty.md.
    uncertainty: dict = field(default_factory=dict)
    #: Problems of the file as a whole that do not stop it being used (clauses that contradict
    #: each other where a comparison may intend it); every report carries them.
    warnings: tuple = ()
    labelled: frozenset = frozenset()  #: ids of the clauses whose ``label`` the file gives

    @property
    def warning_notes(self) -> tuple[str, ...]:
        """:attr:`warnings` as every judgement's notes carry them (check, lot, mix, series)."""
        return tuple(f"WARNING: {w}" for w in self.warnings)

    def require_clauses_for(self, command: str, scopes: tuple[str, ...] = ("sample",)) -> None:
        """Refuse (:class:`lumeval.errors.UsageError`, exit code 2) criteria with no clause that
        ``lumeval COMMAND`` judges (``scopes``: the clause scopes it judges): a run that judged
        nothing read as "all 0 requirements met", a pass with exit code 0 (found by a review of
        criteria files holding only lot clauses, or only clauses over a range of settings)."""
        if any(getattr(c, "SCOPE", "sample") in scopes for c in self.clauses):
            return
        from ..errors import UsageError

        by = sorted({getattr(c, "JUDGED_BY", f"`lumeval {c.SCOPE}`") for c in self.clauses})
        raise UsageError(f"{self.file}: none of its {len(self.clauses)} clause(s) is judged by `lumeval {command}`: "
                         f"they are judged by {' and '.join(by)}", field="--criteria",
                         fix=f"run {' or '.join(by)}, or add clauses that `lumeval {command}` judges")

    def evaluate(self, ev) -> CheckResult:
        """Judge every clause for every spectrum of ``ev`` (an Evaluation)."""

        results: list[ClauseResult] = []
        notes: list[str] = list(self.warning_notes)
        skipped: list[NotJudgedHere] = []
        for c in self.clauses:
            if c.SCOPE != "sample":
                judged_by = getattr(c, "JUDGED_BY", f"`lumeval {c.SCOPE}`")
                notes.append(f"clause {c.clause_id!r} (kind {c.KIND!r}) applies to a whole {c.SCOPE}: it is judged by "
                             f"{judged_by}, not per spectrum")
                skipped.append(NotJudgedHere(c.clause_id, c.KIND, c.SCOPE, judged_by, notes[-1]))
                continue
            note = getattr(c, "note", "") or ""
            for r in c.evaluate(ev):
                results.append(replace(r, note=note) if note and hasattr(r, "note") and not r.note else r)
        notes += [str(w) for w in getattr(ev, "run_warnings", ())]  # the computation's own warnings
        n = len(np.asarray(ev.x))
        names = tuple(getattr(ev, "names", None) or (f"spectrum {i + 1}" for i in range(n)))
        spectra = getattr(ev, "spectra", None)
        sources = tuple(getattr(spectra, "sources", None) or ("",) * n)
        warnings = tuple(getattr(ev, "warnings", None) or ((),) * n)
        return CheckResult(names, sources, warnings, tuple(results), dict(self.identification), self.file,
                           notes=tuple(notes), not_judged=tuple(skipped))

