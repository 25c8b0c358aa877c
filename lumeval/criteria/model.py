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
from . import plausible, rounding
from .figure_notes import judges_category as _judges_category
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
        if _judges_category(self.figure):
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
        tail = ""
        if _judges_category(self.figure):  # (figure_notes.nearest_category_notes)
            tail = " A chromaticity outside every quadrangle of the edition is in no category and does not meet it."
        return f"The {desc} (`{self.figure}`, {std}) {req}{rounding.tender_words(self.round_to, unit)}.{tail}"

    def sources(self) -> tuple[str, ...]:
        return (describe(self.figure)[1],)


def _refuse_implausible(figure: str, key: str, raw: list, values: list[float]) -> None:
    """Raise :class:`ParseError` for a limit only a slip of units explains (:mod:`.plausible`)."""
    found = plausible.check_limits(figure, key, raw, values)
    if found is not None:
        raise ParseError(key, *found)


def _figure_summary() -> list[str]:
    return figures.summary_text()


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
    def uncertainty_tables(self) -> tuple[str, ...]:
        """The tables that ask for a judgement under measurement uncertainty: ``"instrument"``
        for an ``[instrument]`` table, ``"decision"`` for a guarded ``[decision]`` rule
        (docs/uncertainty.md; a ``[monte_carlo]`` table alone asks for nothing)."""
        unc = self.uncertainty or {}
        return tuple(t for t, asks in (("instrument", unc.get("instrument") is not None),
                                       ("decision", bool(getattr(unc.get("decision"), "guarded", False)))) if asks)

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

