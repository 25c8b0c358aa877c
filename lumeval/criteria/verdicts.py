"""Verdict results: what a clause found for N spectra, and the overall verdict.

Designed so that decision rules under measurement uncertainty can plug in later: every
:class:`ClauseResult` carries optional per-spectrum ``uncertainty`` (standard uncertainty in
the figure's units) and ``p_conformance`` (probability that the true value conforms), the
name of the ``decision_rule`` applied, and an outcome per spectrum that may be
``indeterminate``. With the default *simple acceptance* rule (the measured value decides)
``uncertainty`` and ``p_conformance`` are None and no outcome is indeterminate.

Outcomes and exit codes
-----------------------
Per clause and spectrum: ``pass``, ``fail``, ``indeterminate`` (a decision rule could not
decide), ``not judged`` (the figure is undefined for that spectrum, e.g. Ra when the source lies
beyond 25,000 K) or ``not valid`` (the figure was computed outside its validity range, e.g. Ra
where |Duv| > 0.05, and the clause does not say ``accept_outside_validity = true``). Per
spectrum the verdict is ``fail`` if any clause fails, else ``not valid`` if any is not valid,
else ``indeterminate`` if any is indeterminate, else ``not judged`` if any clause could not be
judged, else ``pass``.
The exit code is 0 only when every spectrum passes (or nothing was judged because there were
no spectra); otherwise 1 — an indeterminate or unjudged clause must never look like a pass to
a script. Exit code 2 (bad input) is raised before any verdict exists.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

PASS = "pass"
FAIL = "fail"
INDETERMINATE = "indeterminate"
NOT_JUDGED = "not judged"
#: The figure was computed outside its validity range (CRI/TM-30 where |Duv| > 0.05) and the
#: clause does not accept that: it cannot show conformance, so it fails the check (exit 1).
NOT_VALID = "not valid"

#: Every outcome, in increasing order of severity for the overall verdict.
OUTCOMES = (PASS, NOT_JUDGED, INDETERMINATE, NOT_VALID, FAIL)

SIMPLE_ACCEPTANCE = "simple acceptance (the measured value decides; no guard band)"


@dataclass(frozen=True)
class ClauseResult:
    """The verdict of one clause (or one condition of a preset) for N spectra.

    Attributes
    ----------
    clause_id : str
        Identifier from the criteria file (or derived from it).
    label : str
        Short human statement of the requirement, e.g. ``"R9 ≥ 50"``.
    kind : str
        The clause kind (``figure``, ``ansi_quadrangle``, ``sdcm``, ``tm30_design_intent``...).
    figure : str
        The figure judged (a lumeval figure name, or e.g. ``"u'v'"`` / ``"SDCM steps"``).
    unit : str
        Unit of ``measured``, ``lower``, ``upper`` and ``margin`` ("" for dimensionless).
    measured : ndarray (N,)
        The measured value in ``unit`` (NaN where undefined).
    lower, upper : float or None
        The acceptance limits in ``unit`` (None = unbounded on that side).
    limit_text : str
        The limits as a human reads them.
    margin : ndarray (N,)
        Distance to the nearest limit in ``unit``; positive inside the acceptance zone,
        negative outside, NaN where undefined.
    outcome : tuple of str (N,)
        One of :data:`OUTCOMES` per spectrum.
    details : dict of str -> ndarray (N,)
        Further figures shown next to the verdict, e.g. ``delta_upvp`` (signed Δu'v' to a
        region boundary, positive inside), ``cct_K``, ``duv``, ``steps``.
    reason : tuple of str (N,)
        Why a spectrum was not judged ("" otherwise).
    source : str
        The standard, edition and table (or other source) the clause relies on.
    group : str
        The criteria-file clause this result belongs to (a preset gives several results).
    line : int or None
        Line of the clause in the criteria file.
    uncertainty : ndarray (N,) or None
        Standard uncertainty of ``measured`` (for decision rules under uncertainty).
    p_conformance : ndarray (N,) or None
        Probability of conformance under the decision rule.
    decision_rule : str
    round_to : int or None
        Decimal places the value was rounded to before comparison (None: unrounded).
    """

    clause_id: str
    label: str
    kind: str
    figure: str
    unit: str
    measured: np.ndarray
    lower: float | None
    upper: float | None
    limit_text: str
    margin: np.ndarray
    outcome: tuple[str, ...]
    details: dict = field(default_factory=dict)
    reason: tuple[str, ...] = ()
    source: str = ""
    group: str = ""
    line: int | None = None
    uncertainty: np.ndarray | None = None
    p_conformance: np.ndarray | None = None
    decision_rule: str = SIMPLE_ACCEPTANCE
    #: The clause's ``note`` from the criteria file (why the requirement is there), shown with
    #: its verdict in the check report.
    note: str = ""
    #: Decimal places the value was rounded to before it was compared with the limits (a figure
    #: clause's ``round_to``; ``details["compared"]`` holds the rounded values, ``margin`` is
    #: theirs); None: the unrounded value was compared (lumeval.criteria.rounding).
    round_to: int | None = None

    def __len__(self) -> int:
        return len(self.outcome)

    @property
    def failed(self) -> np.ndarray:
        """Boolean (N,): the clause failed for that spectrum."""
        return np.array([o == FAIL for o in self.outcome], dtype=bool)


#: Clause kinds that judge where a chromaticity lies: a region (ANSI quadrangle, SDCM ellipse),
#: a shift along a range of settings, the distance from the locus over a range, a lot's
#: chromaticity consistency. A ``figure`` clause is a chromaticity requirement when its figure
#: is (CCT or Duv band, ANSI category, SDCM steps, x, y ...): :func:`judges_chromaticity`.
CHROMATICITY_KINDS = frozenset({"ansi_quadrangle", "sdcm", "series_shift", "track_locus", "lot_centroid_steps",
                                "lot_max_pairwise"})


def judges_chromaticity(kind: str, figure: str) -> bool:
    """Whether a clause result of ``kind`` on ``figure`` is a chromaticity requirement: a kind of
    :data:`CHROMATICITY_KINDS`, or a clause on a figure of the registry's chromaticity group
    (also for a row without a kind, e.g. a verdict row given as a mapping)."""
    if kind in CHROMATICITY_KINDS:
        return True
    if kind not in ("", "figure"):
        return False
    from .. import figures

    name = figures.lookup(figure) if figure else None
    return name is not None and figures.get(name).group == "chromaticity"


def margin_to_limits(measured, lower: float | None, upper: float | None) -> np.ndarray:
    """Signed distance of ``measured`` (N,) to the interval [lower, upper], positive inside.

    The margin is the distance to the nearer limit when inside and minus the distance to the
    violated limit when outside (plain arithmetic on the figure's own scale).
    """
    m = np.asarray(measured, dtype=float)
    parts = []
    if lower is not None:
        parts.append(m - float(lower))
    if upper is not None:
        parts.append(float(upper) - m)
    if not parts:
        return np.full(m.shape, np.inf)
    return np.minimum.reduce(parts) if len(parts) > 1 else parts[0]


def simple_outcomes(margin, undefined_reason: tuple[str, ...] | None = None) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Outcomes under simple acceptance: pass where margin ≥ 0, fail where < 0, not judged
    where the margin is NaN (vectorised). Returns (outcome, reason) tuples of length N."""
    mg = np.asarray(margin, dtype=float)
    undefined = np.isnan(mg)
    out = np.where(undefined, NOT_JUDGED, np.where(mg >= 0, PASS, FAIL))
    why = np.full(mg.shape, "", dtype=object)
    if undefined.any():
        default = "the figure is undefined for this spectrum"
        for i in np.flatnonzero(undefined):
            why[i] = (undefined_reason[i] if undefined_reason and undefined_reason[i] else default)
    return tuple(out.tolist()), tuple(why.tolist())


def combine_outcomes(outcomes: list[str]) -> str:
    """The overall outcome of several: the most severe of :data:`OUTCOMES` (pass if empty)."""
    worst = PASS
    for o in outcomes:
        if OUTCOMES.index(o) > OUTCOMES.index(worst):
            worst = o
    return worst


@dataclass(frozen=True)
class NotJudgedHere:
    """A clause a per-spectrum check leaves to another command (a clause over a range of
    settings, judged by ``mix`` / ``series``; a lot clause, judged by ``lot``), with the note the
    check writes about it (also in :attr:`CheckResult.notes`)."""

    clause_id: str
    kind: str
    scope: str
    judged_by: str
    note: str


@dataclass(frozen=True)
class CheckResult:
    """All clause results for N spectra against one criteria file.

    Attributes
    ----------
    names, sources : tuple of str (N,)
        The spectra judged.
    warnings : tuple of tuple of str (N,)
        What reading/preparing/evaluating did or found for each spectrum.
    results : tuple of ClauseResult
        In the order the criteria file lists the clauses.
    identification : dict
        The criteria file's identification block.
    criteria_file : str
    """

    names: Sequence[str]  # a tuple, or a lot's packed column (lumeval.lots.columns)
    sources: Sequence[str]
    warnings: Sequence[tuple[str, ...]]
    results: tuple[ClauseResult, ...]
    identification: dict
    criteria_file: str
    #: Instrument model, Monte Carlo settings, decision rule and headline uncertainties when
    #: the check ran under uncertainty (lumeval.uncertainty.judge); empty otherwise.
    uncertainty: dict = field(default_factory=dict)
    #: Notes about the check as a whole (e.g. lot clauses that ``check`` does not judge).
    notes: tuple[str, ...] = ()
    #: The clauses not judged per spectrum (their notes are among ``notes``).
    not_judged: tuple[NotJudgedHere, ...] = ()

    def __len__(self) -> int:
        return len(self.names)

    def __repr__(self) -> str:
        """One short line: counts of spectra and clauses, the criteria file, the outcomes."""
        from ..render.report_view import check_summary

        return check_summary(self)

    def _repr_html_(self) -> str:
        """The verdict, per-sample summary and checks as an HTML fragment (Jupyter)."""
        from ..render.html import check_html

        return check_html(self)

    def verdict(self, i: int) -> str:
        """Overall outcome for spectrum i ("not judged" when no clause was judged: never a pass)."""
        if not self.results:
            return NOT_JUDGED
        return combine_outcomes([r.outcome[i] for r in self.results])

    @property
    def verdicts(self) -> tuple[str, ...]:
        return tuple(self.verdict(i) for i in range(len(self)))

    @property
    def overall(self) -> str:
        """The overall outcome across all spectra."""
        return combine_outcomes(list(self.verdicts))

    @property
    def exit_code(self) -> int:
        """0 when every spectrum passes, 1 otherwise (also when no clause was judged)."""
        return 0 if all(v == PASS for v in self.verdicts) else 1

    def counts(self) -> dict[str, int]:
        """Number of (spectrum, clause) outcomes of each kind."""
        c = dict.fromkeys(OUTCOMES, 0)
        for r in self.results:
            for o in r.outcome:
                c[o] += 1
        return c


#: The outcomes whose margin is a judged value's distance to its limits: a "not valid" sample's
#: figure was computed outside its validity range and a "not judged" one is undefined, so their
#: margins are left out of a clause's worst margin over a lot (found by a review: an invalid
#: Ra of −2 of a green source was the lot's "worst margin −82").
JUDGED_OUTCOMES = ("pass", "fail", "indeterminate")


def worst_judged(margins, outcomes) -> int | None:
    """The index of the worst judged sample: the first failed sample without a margin (light in
    no ANSI category for a clause on the category: the worst margin of the others would read as
    the worst, positive while samples fail; found by a review), else the smallest finite margin
    among the samples whose outcome is in :data:`JUDGED_OUTCOMES`; None when there is none."""
    mg = np.asarray(margins, dtype=float)
    bare = np.flatnonzero(np.fromiter((o == FAIL for o in outcomes), dtype=bool, count=mg.size) & ~np.isfinite(mg))
    if bare.size:
        return int(bare[0])
    keep = np.flatnonzero(np.fromiter((o in JUDGED_OUTCOMES for o in outcomes), dtype=bool, count=mg.size)
                          & np.isfinite(mg))
    return int(keep[np.argmin(mg[keep])]) if keep.size else None


def worst_judged_margin(margins, outcomes) -> float:
    """The margin of :func:`worst_judged`'s sample (NaN when none, or when that sample has none)."""
    k = worst_judged(margins, outcomes)
    return float("nan") if k is None else float(np.asarray(margins, dtype=float)[k])
