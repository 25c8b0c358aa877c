"""Decision rules under measurement uncertainty (ISO 14253-1:2017, JCGM 106:2012).

A clause's requirement is a *tolerance interval* [T_L, T_U] for a measurand (either bound may
be absent). The measured value y has a standard uncertainty u (from the Monte Carlo
propagation) and an expanded uncertainty U = k·u (k = 2 by default, about 95 % for a normal
distribution). A decision rule sets *acceptance limits* by a guard band w = r·U (JCGM 106:2012
§8.3, r = 1 by default, as in ISO 14253-1:2017):

============================ =================================== ============================ ==========================
rule                         pass                                indeterminate                fail
============================ =================================== ============================ ==========================
``simple``                   y inside [T_L, T_U]                 never                        y outside
``guarded-acceptance``       y inside [T_L + w, T_U − w]         inside, but within w of a    y outside [T_L, T_U]
                                                                 limit (conformance not
                                                                 proven)
``guarded-rejection``        y inside [T_L, T_U]                 outside, but within w        y outside [T_L − w,
                                                                 (non-conformance not         T_U + w]
                                                                 proven)
============================ =================================== ============================ ==========================

- ``simple``: JCGM 106:2012 §8.2 "simple acceptance" (shared risk): the measured value decides.
- ``guarded-acceptance``: the acceptance zone is the tolerance zone reduced by w on each side
  (JCGM 106:2012 §8.3.2; ISO 14253-1:2017 "conformity zone": conformity is *proven* only
  there). Read "indeterminate" as "not accepted" to recover JCGM 106's two-outcome rule. Use
  it when the buyer must be protected (datasheet claims, tender acceptance).
- ``guarded-rejection``: the rejection zone is the region beyond the tolerance limits by more
  than w (JCGM 106:2012 §8.3.3; ISO 14253-1:2017 "non-conformity zone": non-conformity is
  *proven* only there). Read "indeterminate" as "not rejected" to recover JCGM 106's rule. Use
  it before returning goods or penalising a supplier.

In margin form (m = signed distance of y to the nearer limit, positive inside, the form every
lumeval clause already computes) the three rules are: pass ⇔ m ≥ w (guarded acceptance) or
m ≥ 0; fail ⇔ m < 0 (simple, guarded acceptance) or m < −w (guarded rejection). With u = 0 the
guard band vanishes and every rule gives the plain (simple) verdict.

Probability of conformance for a normal PDF N(y, u²) of the measurand (JCGM 106:2012 §7.3 for
a single limit, §7.4 for two limits; clause numbers quoted from memory):

- single upper limit: p_c = Φ((T_U − y)/u);
- single lower limit: p_c = 1 − Φ((T_L − y)/u) = Φ((y − T_L)/u);
- two limits: p_c = Φ((T_U − y)/u) − Φ((T_L − y)/u);

with Φ the standard normal distribution function. For a chromaticity region the decision
quantity is the signed distance m to the region's boundary, with the single lower limit 0,
so p_c = Φ(m/u(m)).

Exit codes (lumeval check / lot): 0 only when every clause of every spectrum passes; 1 when any
clause fails *or is indeterminate* (an indeterminate result never looks like a pass to a
script; the JSON output says which); 2 bad input.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import CriteriaError, finite_float, shown
from .instrument import key_line

PASS = "pass"
FAIL = "fail"
INDETERMINATE = "indeterminate"
NOT_JUDGED = "not judged"

SIMPLE = "simple"
GUARDED_ACCEPTANCE = "guarded-acceptance"
GUARDED_REJECTION = "guarded-rejection"
RULES = (SIMPLE, GUARDED_ACCEPTANCE, GUARDED_REJECTION)

_SOURCES = {
    SIMPLE: "JCGM 106:2012 §8.2 (simple acceptance)",
    GUARDED_ACCEPTANCE: "JCGM 106:2012 §8.3.2, ISO 14253-1:2017 (conformity proven)",
    GUARDED_REJECTION: "JCGM 106:2012 §8.3.3, ISO 14253-1:2017 (non-conformity proven)",
}


@dataclass(frozen=True)
class DecisionRule:
    """A decision rule: which zones decide, and how wide the guard band is.

    Attributes
    ----------
    rule : str
        ``"simple"``, ``"guarded-acceptance"`` or ``"guarded-rejection"``.
    guard_band_factor : float
        r in w = r·U (JCGM 106:2012 §8.3; r = 1 is the ISO 14253-1:2017 choice).
    coverage_factor : float
        k in U = k·u (k = 2: about 95 % coverage for a normal distribution, JCGM 100:2008 §6.3).
    """

    rule: str = SIMPLE
    guard_band_factor: float = 1.0
    coverage_factor: float = 2.0

    def __post_init__(self) -> None:
        if self.rule not in RULES:
            raise ValueError(f"unknown decision rule {self.rule!r}")
        if not (self.guard_band_factor >= 0 and self.coverage_factor > 0):
            raise ValueError("guard_band_factor must be ≥ 0 and coverage_factor > 0")

    @property
    def guarded(self) -> bool:
        return self.rule != SIMPLE

    @property
    def source(self) -> str:
        return _SOURCES[self.rule]

    def guard_band(self, u) -> np.ndarray:
        """w = r·k·u (zero for simple acceptance), same shape as ``u``."""
        u = np.asarray(u, dtype=float)
        if not self.guarded:
            return np.zeros_like(u)
        return self.guard_band_factor * self.coverage_factor * u

    def summary(self) -> str:
        """One line naming the rule, its source and its guard band (for every clause row)."""
        if self.rule == SIMPLE:
            return "simple acceptance (JCGM 106:2012 §8.2): the measured value decides; no guard band"
        w = f"w = {self.guard_band_factor:g} × U, U = {self.coverage_factor:g} × u"
        if self.rule == GUARDED_ACCEPTANCE:
            return (f"guarded acceptance ({self.source}); {w}: pass only inside the limits by at least w, "
                    "indeterminate within w inside a limit")
        return (f"guarded rejection ({self.source}); {w}: fail only outside the limits by more than w, "
                "indeterminate within w outside a limit")

    def describe(self) -> str:
        """One paragraph for reports: what the rule is and how to read its outcomes."""
        if self.rule == SIMPLE:
            return (
                "Decision rule: simple acceptance (JCGM 106:2012 §8.2). The measured value decides: inside the "
                "limits passes, outside fails. Uncertainties and probabilities of conformance are shown for "
                "information; a value close to a limit may pass or fail on measurement error alone."
            )
        k, r = self.coverage_factor, self.guard_band_factor
        w = f"w = {r:g} × U, U = {k:g} × u"
        if self.rule == GUARDED_ACCEPTANCE:
            return (
                f"Decision rule: guarded acceptance ({self.source}); guard band {w}. A clause passes only when the "
                "measured value lies inside the limits by at least w (conformity proven); it fails when the value "
                "lies outside the limits; in between it is indeterminate (conformity not proven, treat as not "
                "accepted). Indeterminate results give exit code 1, like failures."
            )
        return (
            f"Decision rule: guarded rejection ({self.source}); guard band {w}. A clause fails only when the "
            "measured value lies outside the limits by more than w (non-conformity proven); it passes when the "
            "value lies inside the limits; in between it is indeterminate (non-conformity not proven, treat as "
            "not rejected). Indeterminate results give exit code 1, so a script never reads them as passes."
        )


def _phi(z):
    from scipy.special import ndtr

    return ndtr(z)


def probability_of_conformance(y, u, lower: float | None = None, upper: float | None = None) -> np.ndarray:
    """Probability that the true value lies in [lower, upper] for a normal PDF N(y, u²).

    JCGM 106:2012 §7.3 (single limit) and §7.4 (two limits) (clause numbers quoted from
    memory): p_c = Φ((T_U − y)/u) − Φ((T_L − y)/u), a missing limit contributing Φ(+∞) = 1 or
    Φ(−∞) = 0.

    Parameters
    ----------
    y, u : array_like (N,)
        Measured value and standard uncertainty (u ≥ 0). Where u = 0 the result is 1 inside the
        closed interval and 0 outside; NaN y or u gives NaN.
    lower, upper : float or None

    Returns
    -------
    ndarray (N,)
    """
    y = np.asarray(y, dtype=float)
    u = np.asarray(u, dtype=float)
    y, u = np.broadcast_arrays(y, u)
    out = np.full(y.shape, np.nan)
    ok = np.isfinite(y) & np.isfinite(u) & (u >= 0)
    pos = ok & (u > 0)
    zero = ok & (u == 0)
    hi = np.ones(y.shape)
    lo = np.zeros(y.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        if upper is not None:
            hi = np.where(pos, _phi((float(upper) - y) / np.where(pos, u, 1.0)), hi)
        if lower is not None:
            lo = np.where(pos, _phi((float(lower) - y) / np.where(pos, u, 1.0)), lo)
    if upper is None and lower is not None:
        # Φ((y − T_L)/u) directly: 1 − Φ(·) would lose precision in the tail
        with np.errstate(divide="ignore", invalid="ignore"):
            hi = np.where(pos, _phi((y - float(lower)) / np.where(pos, u, 1.0)), hi)
        lo = np.zeros(y.shape)
    out[pos] = (hi - lo)[pos]
    inside = np.ones(y.shape, dtype=bool)
    if upper is not None:
        inside &= y <= float(upper)
    if lower is not None:
        inside &= y >= float(lower)
    out[zero] = inside[zero].astype(float)
    return out


def probability_from_margin(margin, u_margin) -> np.ndarray:
    """p_c = Φ(m/u(m)) for a decision quantity m that conforms when m ≥ 0 (a single lower
    limit at zero, JCGM 106:2012 §7.3)."""
    return probability_of_conformance(margin, u_margin, lower=0.0, upper=None)


@dataclass(frozen=True)
class Decision:
    """Outcomes of one decision rule for N items.

    Attributes
    ----------
    outcome : tuple of str (N,)
        ``pass``, ``fail``, ``indeterminate`` or ``not judged`` (margin undefined).
    p_conformance : ndarray (N,)
        Probability of conformance (normal PDF), NaN where not computable.
    guard_band : ndarray (N,)
        w in the unit of the margin (0 for simple acceptance).
    rule : DecisionRule
    """

    outcome: tuple[str, ...]
    p_conformance: np.ndarray
    guard_band: np.ndarray
    rule: DecisionRule


def outcomes_from_margin(margin, w, rule: DecisionRule) -> tuple[str, ...]:
    """Apply ``rule`` to signed margins m (positive inside) with guard band w (see module table).

    NaN margin → ``not judged``; +inf (no limit) → ``pass``. A NaN guard band (uncertainty
    undefined) under a guarded rule gives ``indeterminate`` unless the plain verdict is a fail
    under guarded acceptance.
    """
    m = np.asarray(margin, dtype=float).reshape(-1)
    w = np.broadcast_to(np.asarray(w, dtype=float), m.shape)
    out = []
    for mi, wi in zip(m, w):
        if np.isnan(mi):
            out.append(NOT_JUDGED)
            continue
        if rule.rule == SIMPLE:
            out.append(PASS if mi >= 0 else FAIL)
        elif rule.rule == GUARDED_ACCEPTANCE:
            if mi < 0:
                out.append(FAIL)
            elif np.isnan(wi):
                out.append(INDETERMINATE)
            else:
                out.append(PASS if mi >= wi else INDETERMINATE)
        else:
            if mi >= 0:
                out.append(PASS)
            elif np.isnan(wi):
                out.append(INDETERMINATE)
            else:
                out.append(FAIL if mi < -wi else INDETERMINATE)
    return tuple(out)


def margin_to_limits(measured, lower: float | None, upper: float | None) -> np.ndarray:
    """min(y − T_L, T_U − y): the signed distance of y to the nearer tolerance limit, positive
    inside (+inf without limits, NaN for undefined y). The guard band is not subtracted."""
    y = np.asarray(measured, dtype=float).reshape(-1)
    parts = []
    if lower is not None:
        parts.append(y - float(lower))
    if upper is not None:
        parts.append(float(upper) - y)
    return np.minimum.reduce(parts) if parts else np.full(y.shape, np.inf)


def decide(measured, u, lower: float | None, upper: float | None, rule: DecisionRule) -> Decision:
    """Decide a figure clause [lower, upper] for N measured values with standard uncertainties u.

    The margin is min(y − T_L, T_U − y) (the distance to the nearer limit, positive inside,
    :func:`margin_to_limits`); guard band w = r·k·u; outcomes per :func:`outcomes_from_margin`;
    p_c per :func:`probability_of_conformance`.
    """
    y = np.asarray(measured, dtype=float).reshape(-1)
    u = np.broadcast_to(np.asarray(u, dtype=float), y.shape)
    margin = margin_to_limits(y, lower, upper)
    w = rule.guard_band(u)
    return Decision(
        outcome=outcomes_from_margin(margin, w, rule),
        p_conformance=probability_of_conformance(y, u, lower, upper),
        guard_band=w,
        rule=rule,
    )


def decide_margin(margin, u_margin, rule: DecisionRule) -> Decision:
    """Decide a clause whose decision quantity is a signed margin m (conforming when m ≥ 0),
    e.g. the Δu'v' distance to a chromaticity region's boundary, with standard uncertainty
    u(m) from the Monte Carlo draws of m."""
    m = np.asarray(margin, dtype=float).reshape(-1)
    um = np.broadcast_to(np.asarray(u_margin, dtype=float), m.shape)
    w = rule.guard_band(um)
    return Decision(
        outcome=outcomes_from_margin(m, w, rule),
        p_conformance=probability_from_margin(m, um),
        guard_band=w,
        rule=rule,
    )


_RULE_KEYS = {"rule", "guard_band_factor", "coverage_factor"}


def rule_from_table(table: dict, *, file: str | None = None, text: str | None = None,
                    table_name: str = "decision") -> DecisionRule:
    """Build a :class:`DecisionRule` from a parsed ``[decision]`` TOML table.

    Keys: ``rule`` (``"simple"`` | ``"guarded-acceptance"`` | ``"guarded-rejection"``, default
    simple), ``guard_band_factor`` r (0 < r ≤ 3, default 1), ``coverage_factor`` k
    (1 ≤ k ≤ 3, default 2). Unknown keys and bad values raise :class:`CriteriaError` naming
    the line and key.
    """
    if not isinstance(table, dict):
        raise CriteriaError(f"[{table_name}] must be a table", file=file, line=key_line(text, table_name))
    for key in table:
        if key not in _RULE_KEYS:
            raise CriteriaError(f"unknown key {key!r} in [{table_name}]", file=file,
                                line=key_line(text, table_name, key), field=f"{table_name}.{key}",
                                fix="allowed keys: " + ", ".join(sorted(_RULE_KEYS)))
    kw = {}
    if "rule" in table:
        r = table["rule"]
        if r not in RULES:
            raise CriteriaError(f"unknown decision rule {r!r}", file=file, line=key_line(text, table_name, "rule"),
                                field=f"{table_name}.rule", fix="use one of: " + ", ".join(f'"{x}"' for x in RULES))
        kw["rule"] = r
    for key, lo, hi, fix in (
        ("guard_band_factor", 0.0, 3.0, "r in w = r·U; ISO 14253-1 uses r = 1"),
        ("coverage_factor", 1.0, 3.0, "k in U = k·u; k = 2 gives about 95 % coverage"),
    ):
        if key in table:
            v = table[key]

            def outside(shown_v: str, key=key, lo=lo, hi=hi, fix=fix) -> CriteriaError:
                return CriteriaError(f"{key} = {shown_v} is outside the accepted range ({lo:g} to {hi:g})", file=file,
                                     line=key_line(text, table_name, key), field=f"{table_name}.{key}", fix=fix)

            if isinstance(v, bool) or not isinstance(v, (int, float)):
                raise outside(shown(v))
            f = finite_float(v, outside)  # a huge integer or inf/nan: outside the range as well
            if not (lo < f <= hi if key == "guard_band_factor" else lo <= f <= hi):
                raise outside(shown(v))
            kw[key] = f
    return DecisionRule(**kw)
