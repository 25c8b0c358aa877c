"""Judge a criteria file over the settings of a mix or a measured series (pure computation).

Per-sample clauses without ``over`` apply at every setting that could be evaluated; clauses
with ``over = [low, high]`` and the range kinds (``series_shift``, ``track_locus``) apply at
every setting in their range, and a setting there that could not be evaluated (not reachable)
is *not judged*, so the range does not pass. Lot clauses are not judged here (noted). See
:mod:`lumeval.criteria.range_clauses`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..criteria.range_clauses import (
    NOT_APPLICABLE,
    OverRange,
    RangeClauseResult,
    RangeKind,
    summarise,
)
from ..criteria.verdicts import PASS, combine_outcomes


@dataclass(frozen=True)
class SetpointView:
    """The figures at N settings as a clause sees them (NaN where a setting was not evaluated)."""

    names: tuple[str, ...]
    figure_fn: Callable[[str], Any]
    cct_reason: tuple[str, ...]
    outside_fn: Callable[[str], Any] | None = None
    validity_fn: Callable[[int], str] | None = None

    def figure(self, name: str) -> np.ndarray:
        return np.asarray(self.figure_fn(name), dtype=float)

    def outside_validity_of(self, name: str) -> np.ndarray:
        """Where ``name`` was computed outside its validity range (see the engine), shape (N,)."""
        if self.outside_fn is None:
            return np.zeros(len(self.names), dtype=bool)
        return np.asarray(self.outside_fn(name), dtype=bool)

    def validity_reason(self, i: int) -> str:
        return "" if self.validity_fn is None else self.validity_fn(i)

    def __getattr__(self, name: str):
        if name in ("x", "y", "u", "v", "u_prime", "v_prime", "cct_K", "duv"):
            return self.figure(name)
        raise AttributeError(name)


def view_of_mix(res) -> SetpointView:
    """A :class:`SetpointView` of a :class:`lumeval.tunable.mix.MixResult`."""
    reasons = list(res.reason)
    if res.evaluation is not None:
        for i in np.flatnonzero(res.index >= 0):
            r = res.evaluation.cct_reason[res.index[i]]
            reasons[i] = f"CCT undefined: {r}" if r else ""
    ev, idx = res.evaluation, res.index

    def outside(name):
        out = np.zeros(len(res), dtype=bool)
        flag = getattr(ev, "outside_validity_of", None)
        if flag is not None:
            ok = idx >= 0
            out[ok] = np.asarray(flag(name), dtype=bool)[idx[ok]]
        return out

    def why(i):
        f = getattr(ev, "validity_reason", None)
        return f(int(idx[i])) if (f is not None and idx[i] >= 0) else ""

    return SetpointView(res.names, res.figure, tuple(reasons), outside, why)


@dataclass(frozen=True)
class RangeCheck:
    """Every clause judged at every setting, with a verdict per setting and for the range.

    Attributes
    ----------
    labels : tuple of str (N,)
        The settings as text.
    settings : ndarray (N,)
    unit : str
    available : ndarray of bool (N,)
        Settings that could be evaluated (reachable targets; every spectrum of a series).
    unavailable_reason : tuple of str (N,)
    results : tuple of RangeClauseResult
    criteria_file : str
    identification : dict
    notes : tuple of str
    """

    labels: tuple[str, ...]
    settings: np.ndarray
    unit: str
    available: np.ndarray
    unavailable_reason: tuple[str, ...]
    results: tuple[RangeClauseResult, ...]
    criteria_file: str
    identification: dict = field(default_factory=dict)
    notes: tuple[str, ...] = ()

    def verdict(self, i: int) -> str:
        """The setting's verdict over the clauses that apply to it (``n/a`` if none does)."""
        outs = [r.outcome[i] for r in self.results if r.outcome[i] != NOT_APPLICABLE]
        return combine_outcomes(outs) if outs else NOT_APPLICABLE

    @property
    def verdicts(self) -> tuple[str, ...]:
        return tuple(self.verdict(i) for i in range(self.settings.size))

    @property
    def overall(self) -> str:
        return combine_outcomes([r.range_outcome for r in self.results])

    @property
    def exit_code(self) -> int:
        """0 when every clause passes over its range (or nothing was judged), 1 otherwise."""
        return 0 if all(r.range_outcome == PASS for r in self.results) else 1


def judge(criteria, view, settings, *, labels, unit: str = "", available=None, unavailable_reason=None) -> RangeCheck:
    """Judge ``criteria`` at every setting of ``view``.

    Parameters
    ----------
    criteria : lumeval.criteria.Criteria
    view : object with ``figure(name)``, ``u_prime``, ``v_prime``, ``duv``... of shape (N,)
        (an Evaluation, or a :class:`SetpointView`).
    settings : array_like (N,)
    labels : sequence of str (N,)
    available : ndarray of bool (N,), optional
        Settings that could be evaluated (default: all).
    unavailable_reason : sequence of str (N,), optional
    """
    s = np.asarray(settings, dtype=float)
    n = s.size
    avail = np.ones(n, dtype=bool) if available is None else np.asarray(available, dtype=bool)
    why = tuple(unavailable_reason) if unavailable_reason is not None else ("",) * n
    results: list[RangeClauseResult] = []
    notes: list[str] = list(getattr(criteria, "warning_notes", ()))
    for c in criteria.clauses:
        scope = getattr(c, "SCOPE", "sample")
        if scope == "lot":
            notes.append(f"clause {c.clause_id!r} (kind {c.KIND!r}) applies to a production lot: judged by `lumeval lot`, not here")
            continue
        if isinstance(c, OverRange):
            rs, over = c.evaluate(view), c.over
        elif isinstance(c, RangeKind):
            rs, over = c.evaluate_range(view, s), c.over  # type: ignore[attr-defined]  # every range kind has one
        else:
            rs, over = c.evaluate(view), None
        if over is not None:
            applies = (s >= over[0]) & (s <= over[1])
        elif isinstance(c, RangeKind):
            applies = np.ones(n, dtype=bool)
        else:
            applies = avail.copy()
        for r in rs:
            results.append(summarise(r, applies, over, ~avail, why))
    return RangeCheck(tuple(labels), s, unit, avail, why, tuple(results), getattr(criteria, "file", ""),
                      dict(getattr(criteria, "identification", {}) or {}), tuple(notes))
