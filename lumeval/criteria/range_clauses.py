"""Criteria over a range of settings (tunable-white and dimmable products; ``SCOPE = "range"``).

A *setting* is what distinguishes the spectra of one product: a target CCT of a channel mix
(``lumeval mix``), or the CCT setpoint, dimming level or drive current of a measured series
(``lumeval series``). Three things live here:

``over = [low, high]`` on any per-sample clause
    The clause applies at every setting from ``low`` to ``high`` inclusive (in the settings'
    own unit), e.g. Ra ≥ 90 over 2700-5000 K. A setting in the range that could not be
    evaluated (a target the channels cannot reach) is *not judged*, so the range does not pass.
``kind = "series_shift"`` with ``max_delta_upvp``
    Every setting's chromaticity within ``max_delta_upvp`` (Δu′v′, CIE 1976 UCS, CIE 15:2004
    §8.1) of the reference: the chromaticity at the highest setting (full output, default),
    the lowest, a named setting, or each setting's own point on the Planckian locus (settings
    are nominal CCTs in K).
``kind = "track_locus"`` with ``max_abs_duv``
    Every setting's |Duv| (Ohno 2014; CIE 1960 (u, v)) at most ``max_abs_duv``.

Each yields a verdict per setting and one for the range (the worst setting named). Plain
per-sample clauses without ``over`` are judged at every setting that could be evaluated.
``lumeval check`` and ``lumeval lot`` do not judge range clauses (they have no settings) and
say so. All use simple acceptance (the measured value decides, no guard band).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from ..errors import FINITE_FIX, finite_float, shown
from .model import (
    ClauseKind,
    KeySpec,
    ParseError,
    is_number,
    key_table,
    limit_number,
    number,
    register_clause_kind,
)
from .verdicts import (
    FAIL,
    NOT_JUDGED,
    OUTCOMES,
    PASS,
    ClauseResult,
    combine_outcomes,
    simple_outcomes,
)

#: Outcome of a setting outside a clause's range.
NOT_APPLICABLE = "n/a"

#: How ``check`` and ``lot`` name the commands that judge range clauses.
JUDGED_BY = "`lumeval mix` or `lumeval series`"

def parse_over(value) -> tuple[float, float]:
    """``over = [low, high]`` -> (low, high); :class:`ParseError` otherwise."""
    if not (isinstance(value, list) and len(value) == 2 and all(is_number(v) for v in value)):
        raise ParseError("over", f"must be an array of two numbers, got {shown(value)}", "write e.g. over = [2700, 5000]")
    lo, hi = (finite_float(v, lambda s: ParseError("over", f"limits must be finite numbers, got {s}", FINITE_FIX)) for v in value)
    if lo > hi:
        raise ParseError("over", f"low end {lo:g} is above high end {hi:g}", "write over = [low, high] with low ≤ high")
    return lo, hi


def _over_text(over) -> str:
    return f"{over[0]:g}–{over[1]:g}"


@dataclass(frozen=True)
class OverRange:
    """A per-sample clause restricted to the settings in ``over`` (made by the loader when a
    clause has ``over = [low, high]``; not a kind of its own)."""

    SCOPE: ClassVar[str] = "range"
    JUDGED_BY: ClassVar[str] = JUDGED_BY

    inner: ClauseKind
    over: tuple[float, float]

    @property
    def KIND(self) -> str:
        return self.inner.KIND

    @property
    def clause_id(self) -> str:
        return self.inner.clause_id

    @property
    def label(self) -> str:
        return f"{self.inner.label} over {_over_text(self.over)}"

    @property
    def note(self) -> str:
        return self.inner.note

    @property
    def line(self):
        return self.inner.line

    def evaluate(self, ev):
        return self.inner.evaluate(ev)

    def tender_text(self) -> str:
        return (f"{self.inner.tender_text()} This applies at every setting from {self.over[0]:g} to {self.over[1]:g} "
                "inclusive (CCT setpoint, dimming level or drive current, in the unit the settings are given in).")

    def sources(self) -> tuple[str, ...]:
        return self.inner.sources()


def apply_over(clause, value):
    """The loader's hook: attach ``over`` to a parsed clause (a range kind keeps it itself;
    a per-sample clause is wrapped in :class:`OverRange`; a lot clause refuses it)."""
    over = parse_over(value)
    if getattr(clause, "SCOPE", "sample") == "lot":
        raise ParseError("over", f"a {clause.KIND!r} clause judges a whole lot and cannot apply over a range of settings",
                         "remove `over`, or put the requirement in a per-sample clause")
    if isinstance(clause, RangeKind):
        from dataclasses import replace

        kind: Any = clause  # every concrete range kind is a dataclass with an `over` field
        return replace(kind, over=over)
    return OverRange(clause, over)


class RangeKind(ClauseKind):
    """Base of the clause kinds judged over settings (``SCOPE = "range"``)."""

    SCOPE: ClassVar[str] = "range"
    JUDGED_BY: ClassVar[str] = JUDGED_BY

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:  # pragma: no cover - not per sample
        raise NotImplementedError("range clauses are judged by lumeval.tunable.judge")

    def evaluate_range(self, view, settings: np.ndarray) -> tuple[ClauseResult, ...]:  # pragma: no cover
        raise NotImplementedError


def _reference_value(v):
    if isinstance(v, str) and v in ("max", "min", "locus"):
        return v
    if is_number(v):
        return finite_float(v, lambda s: ParseError("reference", f"must be a finite number when it names a setting, got {s}", FINITE_FIX))
    raise ParseError("reference", f"must be \"max\", \"min\", \"locus\" or a setting (number), got {shown(v)}",
                     'write e.g. reference = "max" (full output) or reference = 100')


def reference_points(view, settings: np.ndarray, reference) -> tuple[np.ndarray, str, str]:
    """u′v′ of the reference for every setting, shape (N, 2), with a description, and a reason
    ("" when fine) why no reference exists.

    ``reference`` is ``"max"`` (highest setting: full output of a dimming series), ``"min"``,
    a setting value, or ``"locus"`` (the Planckian point at each setting taken as a nominal CCT
    in K; Planck's law with c2 = 1.4388e-2 m K, CIE 15:2004).
    """
    from ..metrics.colorimetry import planckian_uv, upvp_from_uv

    upvp = np.stack([np.asarray(view.u_prime, float), np.asarray(view.v_prime, float)], axis=-1)
    n = settings.size
    if reference == "locus":
        T = np.asarray(settings, float)
        if np.any((T < 1000) | (T > 25000)):
            return np.full((n, 2), np.nan), "the Planckian locus", "settings are not CCTs in K (1000-25000 K): no locus point"
        return upvp_from_uv(planckian_uv(T)), "the Planckian point at each nominal CCT", ""
    if reference == "max":
        k = int(np.argmax(settings))
        desc = f"the highest setting ({settings[k]:g}, full output)"
    elif reference == "min":
        k = int(np.argmin(settings))
        desc = f"the lowest setting ({settings[k]:g})"
    else:
        r = float(reference)
        hits = (np.flatnonzero(np.isclose(settings, r, rtol=0, atol=1e-9 * max(1.0, abs(r)))) if np.isfinite(r)
                else np.zeros(0, dtype=int))  # inf/nan name no setting (and isclose would warn)
        if hits.size == 0:
            return np.full((n, 2), np.nan), f"setting {r:g}", f"there is no setting {r:g} to refer to"
        k = int(hits[0])
        desc = f"setting {settings[k]:g}"
    p = upvp[k]
    if not np.all(np.isfinite(p)):
        return np.full((n, 2), np.nan), desc, f"the reference ({desc}) could not be evaluated"
    return np.broadcast_to(p, (n, 2)).copy(), desc, ""


@register_clause_kind
@dataclass(frozen=True)
class SeriesShiftClause(RangeKind):
    """Chromaticity shift between settings: every setting within max Δu′v′ of a reference."""

    KIND: ClassVar[str] = "series_shift"
    TITLE: ClassVar[str] = "Chromaticity shift across settings (Δu′v′ from a reference setting)"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("max_delta_upvp", "positive number", "largest acceptable Δu′v′ (CIE 1976 UCS) from the reference", True),
        KeySpec("reference", '"max" (default), "min", "locus" or a setting (number)',
                "what each setting is compared with: the highest setting (full output), the lowest, one named setting, "
                "or each setting's own Planckian point (settings are nominal CCTs in K)"),
    )

    max_delta_upvp: float
    reference: object = "max"
    over: tuple[float, float] | None = None

    @classmethod
    def parse(cls, table: dict, common: dict) -> SeriesShiftClause:
        m = number(table, "max_delta_upvp", positive=True, allow_zero=False)
        if m is None:
            raise ParseError(None, "a series_shift clause needs `max_delta_upvp`", "add e.g. max_delta_upvp = 0.004")
        if m > 0.1:
            raise ParseError("max_delta_upvp", f"{m:g} is not a plausible chromaticity shift (Δu′v′ over 0.1 spans most of the diagram)",
                             "write e.g. 0.004 (about 3-4 steps)")
        ref = _reference_value(table.get("reference", "max"))
        where = {"max": "full output", "min": "the lowest setting", "locus": "the locus"}.get(ref, "") if isinstance(ref, str) \
            else f"setting {ref:g}"
        label = common["label"] or f"Δu′v′ from {where} ≤ {m:g}"
        return cls(common["id"], label, common["note"], common["line"], m, ref)

    def evaluate_range(self, view, settings: np.ndarray) -> tuple[ClauseResult, ...]:
        upvp = np.stack([np.asarray(view.u_prime, float), np.asarray(view.v_prime, float)], axis=-1)
        ref, desc, why = reference_points(view, settings, self.reference)
        d = np.hypot(*(upvp - ref).T)
        margin = self.max_delta_upvp - d
        reasons = _view_reasons(view, settings.size, why)
        outcome, reason = simple_outcomes(margin, reasons)
        return (ClauseResult(
            clause_id=self.clause_id, label=self.label, kind=self.KIND, figure="Δu'v'", unit="",
            measured=d, lower=None, upper=self.max_delta_upvp, limit_text=f"≤ {limit_number(self.max_delta_upvp)} from {desc}",
            margin=margin, outcome=outcome, details={"delta_upvp": d, "u_prime": upvp[:, 0], "v_prime": upvp[:, 1]},
            reason=reason, source="CIE 15:2004 §8.1 (CIE 1976 UCS)", group=self.clause_id, line=self.line,
        ),)

    def tender_text(self) -> str:
        ref = {"max": "its chromaticity at the highest setting (full output)", "min": "its chromaticity at the lowest setting",
               "locus": "the Planckian locus point at the nominal CCT of each setting"}.get(
            self.reference, f"its chromaticity at setting {self.reference}") if isinstance(self.reference, str) else \
            f"its chromaticity at setting {self.reference:g}"
        where = f" at every setting from {self.over[0]:g} to {self.over[1]:g}" if self.over else " at every setting"
        return (f"The chromaticity{where} shall lie within Δu′v′ = {self.max_delta_upvp:g} (CIE 1976 UCS, CIE 15:2004) "
                f"of {ref}.")

    def sources(self) -> tuple[str, ...]:
        return ("CIE 15:2004 §8.1",)


@register_clause_kind
@dataclass(frozen=True)
class TrackLocusClause(RangeKind):
    """Every setting within a Duv band of the Planckian locus."""

    KIND: ClassVar[str] = "track_locus"
    TITLE: ClassVar[str] = "Every setting within a Duv band of the Planckian locus"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("max_abs_duv", "positive number ≤ 0.05", "largest acceptable |Duv| at any setting (ANSI C78.377 sign convention)", True),
    )

    max_abs_duv: float
    over: tuple[float, float] | None = None

    @classmethod
    def parse(cls, table: dict, common: dict) -> TrackLocusClause:
        m = number(table, "max_abs_duv", positive=True, allow_zero=False)
        if m is None:
            raise ParseError(None, "a track_locus clause needs `max_abs_duv`", "add e.g. max_abs_duv = 0.006")
        from .plausible import check_limits

        found = check_limits("duv", "max_abs_duv", [table["max_abs_duv"]], [m])  # |Duv| ≤ 0.05 (CIE 15:2004 §9.5)
        if found is not None:
            raise ParseError("max_abs_duv", *found)
        label = common["label"] or f"|Duv| ≤ {m:g}"
        return cls(common["id"], label, common["note"], common["line"], m)

    def evaluate_range(self, view, settings: np.ndarray) -> tuple[ClauseResult, ...]:
        duv = np.asarray(view.duv, float)
        a = np.abs(duv)
        margin = self.max_abs_duv - a
        outcome, reason = simple_outcomes(margin, _view_reasons(view, settings.size, ""))
        return (ClauseResult(
            clause_id=self.clause_id, label=self.label, kind=self.KIND, figure="|Duv|", unit="",
            measured=a, lower=None, upper=self.max_abs_duv, limit_text=f"≤ {limit_number(self.max_abs_duv)}",
            margin=margin, outcome=outcome, details={"duv": duv}, reason=reason,
            source="ANSI C78.377 (Duv sign); Ohno (2014) LEUKOS 10(1):47-55", group=self.clause_id, line=self.line,
        ),)

    def tender_text(self) -> str:
        where = f"at every setting from {self.over[0]:g} to {self.over[1]:g}" if self.over else "at every setting"
        return (f"The distance from the Planckian locus {where} shall satisfy |Duv| ≤ {self.max_abs_duv:g} "
                "(CIE 1960 UCS; Duv as defined in ANSI C78.377, computed by Ohno 2014).")

    def sources(self) -> tuple[str, ...]:
        return ("ANSI C78.377", "Ohno (2014) LEUKOS 10(1):47-55")


def _view_reasons(view, n: int, extra: str) -> tuple[str, ...]:
    reasons = getattr(view, "cct_reason", None)
    out = []
    for i in range(n):
        r = reasons[i] if reasons is not None and i < len(reasons) else ""
        out.append(extra or r)
    return tuple(out)


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class RangeClauseResult:
    """One clause (or one condition of a preset) judged at N settings.

    ``outcome[i]`` is pass / fail / not judged / indeterminate, or :data:`NOT_APPLICABLE`
    outside the clause's ``over`` range. ``range_outcome`` is the worst outcome over the
    settings it applies to (not judged when it applies to none); ``worst`` the index of the
    setting that decides it (the largest violation, else the smallest margin), or None.
    """

    result: ClauseResult
    over: tuple[float, float] | None
    applies: np.ndarray
    outcome: tuple[str, ...]
    reason: tuple[str, ...]
    range_outcome: str
    worst: int | None
    range_reason: str = ""

    @property
    def clause_id(self) -> str:
        return self.result.clause_id

    @property
    def label(self) -> str:
        return self.result.label


def _distinct_reasons(reasons, most: int = 3) -> str:
    """The distinct non-empty ``reasons``, in order, joined; at most ``most`` of them, then how
    many others."""
    got = list(dict.fromkeys(r for r in reasons if r))
    return "; ".join(got[:most]) + (f"; and {len(got) - most} other reason(s)" if len(got) > most else "")


def summarise(result: ClauseResult, applies: np.ndarray, over, unavailable: np.ndarray, unavailable_reason) -> RangeClauseResult:
    """Per-setting outcomes restricted to ``applies``, with the range verdict and worst setting."""
    n = len(result.outcome)
    out, why = [], []
    for i in range(n):
        if not applies[i]:
            out.append(NOT_APPLICABLE)
            why.append("")
        elif unavailable[i]:
            out.append(NOT_JUDGED)
            why.append(unavailable_reason[i] or "not evaluated")
        else:
            out.append(result.outcome[i])
            why.append(result.reason[i] if i < len(result.reason) else "")
    idx = np.flatnonzero(applies)
    range_reason = ""
    if idx.size == 0:
        rng = "" if over is None else f" in {_over_text(over)}"
        return RangeClauseResult(result, over, applies, tuple(out), tuple(why), NOT_JUDGED, None,
                                 f"no setting{rng} to judge")
    overall = combine_outcomes([out[i] for i in idx])
    margin = np.asarray(result.margin, float)
    severity = tuple(reversed(OUTCOMES))  # most severe first (fail, not valid, ...)
    sev = np.array([severity.index(out[i]) if out[i] in severity else 0 for i in idx])
    first = sev.min()
    cand = idx[sev == first]
    mg = np.where(np.isfinite(margin[cand]), margin[cand], np.inf)
    worst = int(cand[int(np.argmin(mg))])
    if overall == NOT_JUDGED:
        # every distinct reason, in setting order: the first setting's alone named the wrong cause
        # when settings were not judged for different reasons (one not reachable, the others
        # lacking a reference setting; found by a review)
        range_reason = _distinct_reasons(why[i] for i in idx if out[i] == NOT_JUDGED) or why[worst]
    elif overall == FAIL:
        # failures without a margin (light in no ANSI category): their reasons say why, even
        # when the worst setting is another failure with a margin (found by reviews)
        range_reason = _distinct_reasons(why[i] for i in idx if out[i] == FAIL and not np.isfinite(margin[i]))
    return RangeClauseResult(result, over, applies, tuple(out), tuple(why), overall, worst, range_reason)


__all__ = [
    "NOT_APPLICABLE",
    "PASS",
    "OverRange",
    "RangeClauseResult",
    "SeriesShiftClause",
    "TrackLocusClause",
    "apply_over",
    "parse_over",
    "summarise",
]
