"""Lot clauses: requirements on a production lot as a whole (``SCOPE = "lot"``).

They plug into the criteria model through :func:`lumeval.criteria.model.register_clause_kind`
(importing this module registers them). Per-sample evaluation
(:meth:`lumeval.criteria.model.Criteria.evaluate`) skips them; ``lumeval lot`` judges them with
:func:`evaluate_lot_clauses` against :class:`lumeval.lots.statistics.LotStatistics`.

Kinds
-----
``lot_centroid_steps``  every sample within ``max_steps`` ellipse steps of the lot's own
    chromaticity centroid (steps by the MacAdam (1942) quadratic form in CIE 1931 (x, y), with
    the coefficients of the IEC 60081 ellipse named by ``ellipse``, default the one nearest the
    centroid; see :mod:`lumeval.lots.statistics`). Judged per sample; the lot passes when every sample does.
``lot_max_pairwise``    the largest Δu'v' between any two samples at most ``max_delta_upvp``
    (CIE 1976 u'v', CIE 15:2004 §8.1).
``lot_yield``           at least ``min_percent`` of the samples pass every per-sample clause of
    the same file (samples not judged count as not passing).

All use simple acceptance: the measured value decides, with no guard band.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from . import regions
from .model import (
    ClauseKind,
    KeySpec,
    ParseError,
    key_table,
    limit_number,
    number,
    register_clause_kind,
    string,
    suggest,
)
from .verdicts import FAIL, NOT_JUDGED, PASS, SIMPLE_ACCEPTANCE


@dataclass(frozen=True)
class LotClauseResult:
    """The verdict of one lot clause.

    Attributes
    ----------
    clause_id, label, kind : str
    figure : str
        What was measured (e.g. ``"largest pairwise Δu'v'"``).
    unit : str
    measured : float
        The lot figure (for ``lot_centroid_steps`` the largest sample's steps).
    lower, upper : float or None
    limit_text : str
    margin : float
        Positive inside the limit, negative outside, NaN when undefined.
    outcome : str
        ``pass``, ``fail`` or ``not judged``.
    sample_outcome : tuple of str (N,) or None
        Per-sample outcome, for clauses judged sample by sample.
    sample_measured : ndarray (N,) or None
    reason : str
        Why the clause could not be judged ("" otherwise).
    source : str
    line : int or None
    decision_rule : str
    """

    clause_id: str
    label: str
    kind: str
    figure: str
    unit: str
    measured: float
    lower: float | None
    upper: float | None
    limit_text: str
    margin: float
    outcome: str
    sample_outcome: tuple[str, ...] | None = None
    sample_measured: np.ndarray | None = None
    reason: str = ""
    source: str = ""
    line: int | None = None
    decision_rule: str = SIMPLE_ACCEPTANCE


def _outcome(margin: float) -> str:
    if not np.isfinite(margin):
        return NOT_JUDGED
    return PASS if margin >= 0 else FAIL


class LotClause(ClauseKind):
    """Base of lot clauses: :meth:`evaluate` is per-sample and returns nothing."""

    SCOPE: ClassVar[str] = "lot"

    def evaluate(self, ev):  # per-sample evaluation: a lot clause has nothing to judge there
        return ()

    def evaluate_lot(self, stats, sample_verdicts) -> LotClauseResult:  # pragma: no cover - abstract
        raise NotImplementedError


@register_clause_kind
@dataclass(frozen=True)
class LotCentroidStepsClause(LotClause):
    """Every sample within n ellipse steps of the lot's chromaticity centroid."""

    KIND: ClassVar[str] = "lot_centroid_steps"
    TITLE: ClassVar[str] = "Lot: every sample within n steps of the lot centroid"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("max_steps", "positive number", "largest acceptable ellipse steps of any sample from the lot centroid", True),
        KeySpec(
            "ellipse",
            '"F6500", "F5000", "F4000", "F3500", "F3000" or "F2700"',
            "IEC 60081 ellipse whose coefficients give the steps (default: the one nearest the lot centroid)",
        ),
    )

    max_steps: float
    ellipse: str | None

    @classmethod
    def parse(cls, table: dict, common: dict) -> LotCentroidStepsClause:
        steps = number(table, "max_steps", positive=True, allow_zero=False)
        if steps is None:
            raise ParseError(None, "a lot_centroid_steps clause needs `max_steps`", "add max_steps = e.g. 3")
        ell = string(table, "ellipse")
        if ell is not None and ell not in regions.IEC60081_CENTRES:
            s = suggest(ell, regions.IEC60081_CENTRES)
            hint = f"did you mean {s!r}? " if s else ""
            raise ParseError("ellipse", f"unknown ellipse {ell!r}", f"{hint}allowed: {', '.join(regions.IEC60081_CENTRES)}")
        label = common["label"] or f"every sample within {steps:g} steps of the lot centroid"
        return cls(common["id"], label, common["note"], common["line"], steps, ell)

    def steps(self, stats, xy) -> tuple[np.ndarray, str, str]:
        """Steps of each sample (N,) from the centroid, and the ellipse's name and source."""
        if self.ellipse is None:
            return stats.steps_centroid, stats.ellipse_name, stats.ellipse_source
        from ..lots.statistics import steps_from_centroid

        e = regions.iec60081_ellipse(self.ellipse)
        return steps_from_centroid(e, stats.centroid_xy, xy, stats.d_upvp_centroid), e.name, e.source

    def evaluate_lot(self, stats, sample_verdicts, xy=None) -> LotClauseResult:
        st, name, source = self.steps(stats, xy)
        st = np.asarray(st, dtype=float)
        margins = self.max_steps - st
        per = tuple(_outcome(m) for m in margins)
        worst = float(np.nanmax(st)) if np.isfinite(st).any() else float("nan")
        margin = self.max_steps - worst
        outcome = FAIL if FAIL in per else _outcome(margin)
        return LotClauseResult(
            clause_id=self.clause_id,
            label=self.label,
            kind=self.KIND,
            figure="largest steps from the lot centroid",
            unit="steps",
            measured=worst,
            lower=None,
            upper=self.max_steps,
            limit_text=f"≤ {self.max_steps:g} steps ({name} coefficients)",
            margin=margin,
            outcome=outcome,
            sample_outcome=per,
            sample_measured=st,
            reason="" if np.isfinite(worst) else "no sample has a defined chromaticity",
            source=source,
            line=self.line,
        )

    def tender_text(self) -> str:
        which = f"the IEC 60081 {self.ellipse} ellipse" if self.ellipse else "the IEC 60081 ellipse nearest the lot centroid"
        return (
            f"Every sample of the lot shall lie within {self.max_steps:g} steps of the lot's chromaticity centroid "
            f"(mean CIE 1976 u', v' of the samples), steps computed as √(g11 Δx² + 2 g12 Δx Δy + g22 Δy²) in CIE 1931 "
            f"(x, y) with the coefficients of {which}."
        )

    def sources(self) -> tuple[str, ...]:
        return (regions.IEC60081_SOURCE, "MacAdam (1942) JOSA 32(5):247")


@register_clause_kind
@dataclass(frozen=True)
class LotMaxPairwiseClause(LotClause):
    """The largest Δu'v' between any two samples of the lot at most a value."""

    KIND: ClassVar[str] = "lot_max_pairwise"
    TITLE: ClassVar[str] = "Lot: largest pairwise Δu'v' at most a value"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("max_delta_upvp", "positive number (e.g. 0.004)", "largest acceptable Δu'v' between any two samples", True),
    )

    max_delta_upvp: float

    @classmethod
    def parse(cls, table: dict, common: dict) -> LotMaxPairwiseClause:
        v = number(table, "max_delta_upvp", positive=True, allow_zero=False)
        if v is None:
            raise ParseError(None, "a lot_max_pairwise clause needs `max_delta_upvp`", "add max_delta_upvp = e.g. 0.004")
        if v >= 0.1:
            raise ParseError("max_delta_upvp", f"{v:g} is not a plausible Δu'v' (the whole white region is about 0.1 wide)", "write it in u'v' units, e.g. 0.004")
        label = common["label"] or f"largest pairwise Δu'v' ≤ {v:g}"
        return cls(common["id"], label, common["note"], common["line"], v)

    def evaluate_lot(self, stats, sample_verdicts, xy=None) -> LotClauseResult:
        d = float(stats.max_pairwise_d_upvp)
        margin = self.max_delta_upvp - d
        enough = stats.n_samples >= 2
        return LotClauseResult(
            clause_id=self.clause_id,
            label=self.label,
            kind=self.KIND,
            figure="largest pairwise Δu'v'",
            unit="",
            measured=d if enough else float("nan"),  # no pair: no largest distance (not 0)
            lower=None,
            upper=self.max_delta_upvp,
            limit_text=f"≤ {limit_number(self.max_delta_upvp)}",
            margin=margin if enough else float("nan"),
            outcome=_outcome(margin) if enough else NOT_JUDGED,
            reason="" if enough and np.isfinite(d) else "fewer than two samples with a defined chromaticity",
            source="CIE 15:2004 §8.1 (CIE 1976 u', v')",
            line=self.line,
        )

    def tender_text(self) -> str:
        return (
            f"The chromaticity difference Δu'v' (CIE 1976 UCS, CIE 15:2004) between any two samples of the lot shall "
            f"not exceed {self.max_delta_upvp:g}."
        )

    def sources(self) -> tuple[str, ...]:
        return ("CIE 15:2004 §8.1",)


@register_clause_kind
@dataclass(frozen=True)
class LotYieldClause(LotClause):
    """At least a percentage of the samples pass every per-sample clause."""

    KIND: ClassVar[str] = "lot_yield"
    TITLE: ClassVar[str] = "Lot: yield at least a percentage"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("min_percent", "number 0 … 100", "lowest acceptable share of samples passing every per-sample clause, in %", True),
    )

    min_percent: float

    @classmethod
    def parse(cls, table: dict, common: dict) -> LotYieldClause:
        v = number(table, "min_percent", positive=True)
        if v is None:
            raise ParseError(None, "a lot_yield clause needs `min_percent`", "add min_percent = e.g. 95")
        if v > 100:
            raise ParseError("min_percent", f"must be at most 100, got {v:g}", "write a percentage, e.g. 95")
        label = common["label"] or f"yield ≥ {v:g} %"
        return cls(common["id"], label, common["note"], common["line"], v)

    def evaluate_lot(self, stats, sample_verdicts, xy=None) -> LotClauseResult:
        y = stats.yield_
        pct = float(y.percent) if y is not None else float("nan")
        margin = pct - self.min_percent
        return LotClauseResult(
            clause_id=self.clause_id,
            label=self.label,
            kind=self.KIND,
            figure="yield",
            unit="%",
            measured=pct,
            lower=self.min_percent,
            upper=None,
            limit_text=f"≥ {self.min_percent:g} %",
            margin=margin,
            outcome=_outcome(margin),
            reason="" if np.isfinite(pct) else (
                "no per-sample clause in the criteria, so no sample can pass or fail: a yield needs per-sample "
                "requirements (figure, ansi_quadrangle, sdcm...)" if sample_verdicts is None else "no samples were judged"),
            source="share of samples passing every per-sample clause (not judged counts as not passing)",
            line=self.line,
        )

    def tender_text(self) -> str:
        return (
            f"At least {self.min_percent:g} % of the samples of the lot shall meet every per-sample requirement above "
            "(a sample that cannot be judged counts as not meeting them)."
        )


def lot_clauses(criteria) -> tuple:
    """The lot clauses of a :class:`~lumeval.criteria.model.Criteria`, in file order."""
    return tuple(c for c in criteria.clauses if getattr(c, "SCOPE", "sample") == "lot")


def has_sample_clauses(criteria) -> bool:
    return any(getattr(c, "SCOPE", "sample") == "sample" for c in criteria.clauses)


def evaluate_lot_clauses(criteria, stats, xy, sample_verdicts) -> tuple[LotClauseResult, ...]:
    """Judge every lot clause of ``criteria`` against ``stats`` (LotStatistics).

    ``xy`` (N, 2) are the samples' chromaticities; ``sample_verdicts`` their overall verdicts
    against the per-sample clauses (or None).
    """
    return tuple(c.evaluate_lot(stats, sample_verdicts, xy=xy) for c in lot_clauses(criteria))
