"""Control charts over production lots: pure functions of arrays, no I/O (like :mod:`lumeval.metrics`).

Every chart takes per-lot numbers (arrays of shape (m,)) and a boolean baseline mask that says
which lots estimate the process (Phase I); it returns a frozen dataclass of arrays with its
centre line, control limits and plotted statistic for every lot. Signals are found by
:func:`western_electric` and :func:`beyond_limits`.

Sources (the formulas below are the textbook ones; the book is quoted from memory where said):

* Montgomery, D. C., *Introduction to Statistical Quality Control*, 6th edition, Wiley 2009
  (below "Montgomery"): §6.3.1 X̄ and s charts (eqs. 6.27-6.30, limits ``x̿ ± A3 s̄``,
  ``B3 s̄``, ``B4 s̄``), §6.3.2 variable sample size (s̄ pooled, eq. 6.31), §6.4 individuals
  and moving range (``x̄ ± 3 MR̄/d2``, ``D4 MR̄``), §9.2 EWMA (eqs. 9.22-9.25), §5.3.6 the
  Western Electric rules; Appendix VI, the table of factors (c4, A3, B3, B4, d2, D3, D4).
* Western Electric Company, *Statistical Quality Control Handbook*, 1956 (the rules, in the
  numbering Montgomery §5.3.6 gives them).
* ISO 7870-2:2013, *Control charts — Part 2: Shewhart control charts*, Table 2 (the same
  factors; memory).

The factors are *computed*, not typed in: c4 from its gamma-function definition, d2 and d3
from the distribution of the range of n normal observations (numerical integration); the tests
compare them with the published table values.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

#: Multiple of sigma at the Shewhart control limits (Montgomery §5.3.2: "three-sigma" limits).
L_SHEWHART = 3.0
#: EWMA weight and limit width (Montgomery §9.2.2: λ in 0.05-0.25 works well, L = 3 with
#: λ = 0.2 gives an in-control ARL near 500 (Lucas & Saccucci 1990, Technometrics 32:1-12;
#: memory)).
EWMA_LAMBDA = 0.2
EWMA_L = 3.0


# --------------------------------------------------------------------------- factors


def c4(n) -> np.ndarray:
    """c4(n) = sqrt(2/(n-1)) · Γ(n/2) / Γ((n-1)/2): E[s] = c4 σ for n normal observations.

    Montgomery, Appendix VI and §6.3.1 (the definition); computed with log-gamma, and from
    :data:`C4_SERIES_N` on by its asymptotic series c4 = 1 − 1/(4n) − 7/(32n²) − 19/(128n³)
    + O(n⁻⁴) (the expansion given with the definition in the literature on unbiased estimation
    of σ; quoted from memory, checked against the log-gamma form where both are accurate):
    the difference of two large log-gammas loses digits (B4 − 1 was 5e-4 off at n = 10⁶, and
    c4 came out above 1 at n = 10⁹), where the series' next term is below 1e-14. NaN for n < 2.
    """
    n = np.asarray(n, dtype=float)
    lg = np.vectorize(lambda a: math.lgamma(a) if a > 0 else math.nan, otypes=[float])  # no scipy import
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        small = np.where(n < C4_SERIES_N, n, np.nan)
        out = np.sqrt(2.0 / (small - 1.0)) * np.exp(lg(small / 2.0) - lg((small - 1.0) / 2.0))
        inv = 1.0 / n
        series = 1.0 - inv * (0.25 + inv * (7.0 / 32.0 + inv * (19.0 / 128.0)))
    return np.where(n >= C4_SERIES_N, series, np.where(n >= 2, out, np.nan))


#: Sizes from which :func:`c4` takes its asymptotic series.
C4_SERIES_N = 2000


def a3(n) -> np.ndarray:
    """A3 = 3 / (c4 √n) (Montgomery §6.3.1, eq. 6.29)."""
    n = np.asarray(n, dtype=float)
    return L_SHEWHART / (c4(n) * np.sqrt(n))


def b3(n) -> np.ndarray:
    """B3 = max(0, 1 − 3 √(1 − c4²) / c4) (Montgomery §6.3.1, eq. 6.28)."""
    c = c4(n)
    return np.maximum(0.0, 1.0 - L_SHEWHART * np.sqrt(1.0 - c * c) / c)


def b4(n) -> np.ndarray:
    """B4 = 1 + 3 √(1 − c4²) / c4 (Montgomery §6.3.1, eq. 6.28)."""
    c = c4(n)
    return 1.0 + L_SHEWHART * np.sqrt(1.0 - c * c) / c


@lru_cache(maxsize=64)
def _range_moments(n: int) -> tuple[float, float]:
    """(d2, d3): mean and standard deviation of the range W of n standard normal observations.

    E[W] = ∫ 1 − (1 − Φ(x))ⁿ − Φ(x)ⁿ dx; E[W²] = 2 ∫∫_{y<x} 1 − Φ(x)ⁿ − (1 − Φ(y))ⁿ
    + (Φ(x) − Φ(y))ⁿ dy dx (the standard results for the range of a sample, e.g. Montgomery
    §6.2 and the references there; Tippett 1925, Biometrika 17:364-387, who tabulated d2 first).
    The second moment uses E[W²] = 2 ∫_0^∞ w P(W > w) dw with
    P(W ≤ w) = n ∫ φ(x) (Φ(x) − Φ(x − w))^(n−1) dx.
    """
    if n < 2:
        return float("nan"), float("nan")
    if n == 2:  # |X1 − X2| with X1 − X2 ~ N(0, 2): the closed forms (the moving range of charts)
        return 2.0 / math.sqrt(math.pi), math.sqrt(2.0 - 4.0 / math.pi)
    from scipy import integrate
    from scipy.stats import norm

    d2 = integrate.quad(lambda x: 1.0 - norm.sf(x) ** n - norm.cdf(x) ** n, -12, 12, limit=200)[0]

    def cdf_w(w: float) -> float:
        return n * integrate.quad(lambda x: norm.pdf(x) * (norm.cdf(x) - norm.cdf(x - w)) ** (n - 1), -12, 12,
                                  limit=200)[0]

    ew2 = 2.0 * integrate.quad(lambda w: w * (1.0 - cdf_w(w)), 0, 16, limit=200)[0]
    return d2, math.sqrt(max(ew2 - d2 * d2, 0.0))


def d2(n: int) -> float:
    """d2(n) = E[R]/σ for the range R of n normal observations (see :func:`_range_moments`).
    For n = 2 it equals 2/√π exactly."""
    return _range_moments(int(n))[0]


def d3(n: int) -> float:
    """d3(n) = sd(R)/σ (see :func:`_range_moments`); for n = 2, √(2 − 4/π)."""
    return _range_moments(int(n))[1]


def d4(n: int) -> float:
    """D4 = 1 + 3 d3/d2, the moving-range (n = 2) or range chart's upper factor (Montgomery §6.2)."""
    return 1.0 + L_SHEWHART * d3(n) / d2(n)


def d3_lower(n: int) -> float:
    """D3 = max(0, 1 − 3 d3/d2) (Montgomery §6.2); 0 for n ≤ 6."""
    return max(0.0, 1.0 - L_SHEWHART * d3(n) / d2(n))


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class XbarSChart:
    """X̄ and s charts of m lots.

    Attributes
    ----------
    mean, s, n : ndarray (m,)
        Each lot's mean, standard deviation (ddof 1) and sample count.
    baseline : ndarray of bool (m,)
    grand_mean : float
        x̿: the baseline lots' mean of means (weighted by n when the sizes differ).
    s_bar : float
        s̄: the mean of the baseline s (equal sizes) or the pooled s (sizes differ; eq. 6.31).
    sigma : float
        σ̂, the within-lot process standard deviation: s̄ / c4(n) for lots of one size n;
        s̄ / c4(ν + 1) with ν = Σ (nᵢ − 1) for the pooled s̄ of lots of different sizes.
    xbar_ucl, xbar_lcl, s_centre, s_ucl, s_lcl : ndarray (m,)
        Limits of every lot (they differ only where n differs).
    equal_n : bool
    """

    mean: np.ndarray
    s: np.ndarray
    n: np.ndarray
    baseline: np.ndarray
    grand_mean: float
    s_bar: float
    sigma: float
    xbar_ucl: np.ndarray
    xbar_lcl: np.ndarray
    s_centre: np.ndarray
    s_ucl: np.ndarray
    s_lcl: np.ndarray
    equal_n: bool


@dataclass(frozen=True)
class IndividualsChart:
    """Individuals (I) and moving-range (MR) charts of m values.

    Attributes
    ----------
    x : ndarray (m,)
    moving_range : ndarray (m,)
        |x_i − x_{i−1}|; NaN for the first lot.
    baseline : ndarray of bool (m,)
    centre : float
        Mean of the baseline values.
    mr_bar : float
        Mean of the baseline moving ranges (pairs inside the baseline only).
    sigma : float
        σ̂ = MR̄ / d2(2).
    ucl, lcl : float
        centre ± 3 σ̂.
    mr_ucl : float
        D4(2) · MR̄ (MR chart LCL is 0).
    """

    x: np.ndarray
    moving_range: np.ndarray
    baseline: np.ndarray
    centre: float
    mr_bar: float
    sigma: float
    ucl: float
    lcl: float
    mr_ucl: float


@dataclass(frozen=True)
class EwmaChart:
    """EWMA chart: z_i = λ x_i + (1 − λ) z_{i−1}, z_0 = centre (Montgomery §9.2, eq. 9.22).

    Attributes
    ----------
    z, ucl, lcl : ndarray (m,)
        The statistic and its time-varying limits centre ± L √Var(z_i) (eqs. 9.24-9.25, the
        variance carried lot by lot: see :func:`ewma_chart`); NaN limits for a skipped lot.
    centre, lam, L : float
    sigma_point : ndarray (m,)
        Standard deviation of each plotted x_i (σ/√n_i for lot means).
    """

    z: np.ndarray
    ucl: np.ndarray
    lcl: np.ndarray
    centre: float
    lam: float
    L: float
    sigma_point: np.ndarray


@dataclass(frozen=True)
class Signal:
    """One point that breaks a rule: its index in the series, the chart, the rule and a sentence."""

    index: int
    chart: str
    rule: str
    text: str


# --------------------------------------------------------------------------- charts


def _baseline_mask(m: int, baseline) -> np.ndarray:
    b = np.zeros(m, dtype=bool) if baseline is None else np.asarray(baseline, dtype=bool)
    if b.shape != (m,):
        raise ValueError(f"baseline mask must have shape ({m},)")
    return b


def xbar_s_chart(mean, s, n, baseline) -> XbarSChart:
    """X̄ and s charts with limits estimated from the baseline lots.

    Equal sizes (Montgomery §6.3.1): x̿ = mean of the x̄_i, s̄ = mean of the s_i,
    σ̂ = s̄ / c4(n); the limits are X̄ x̿ ± A3 s̄, s B3 s̄ and B4 s̄.
    Sizes that differ (Montgomery §6.3.2, eqs. 6.31-6.32): x̿ = Σ n_i x̄_i / Σ n_i,
    s̄ = √(Σ (n_i − 1) s_i² / Σ (n_i − 1)) (pooled, ν = Σ (n_i − 1) degrees of freedom),
    σ̂ = s̄ / c4(ν + 1).

    Every lot i gets limits from σ̂ with its own n_i: x̿ ± 3σ̂/√n_i, s chart centre c4(n_i) σ̂
    and limits B5(n_i) σ̂, B6(n_i) σ̂ (for one size everywhere, exactly the A3, B3, B4 limits;
    the book's A3(n_i) s̄ etc. with the pooled s̄ are 1/c4(n_i) too wide: see the code).

    Lots with n < 2 have no s: they are excluded from the estimate and get NaN limits on the
    s chart; a lot of one sample gets the X̄ limits x̿ ± 3σ̂ (no A3 exists for n = 1). NaN
    everywhere when the baseline holds no lot with n ≥ 2.
    """
    mean = np.asarray(mean, dtype=float)
    s = np.asarray(s, dtype=float)
    n = np.asarray(n, dtype=float)
    m = mean.size
    b = _baseline_mask(m, baseline)
    use = b & (n >= 2) & np.isfinite(mean) & np.isfinite(s)
    nan = np.full(m, np.nan)
    if not use.any():
        return XbarSChart(mean, s, n, b, float("nan"), float("nan"), float("nan"), nan, nan, nan, nan, nan,
                          bool(np.unique(n[b]).size <= 1))
    nb = n[use]
    equal = bool(np.all(nb == nb[0]))
    if equal:
        grand = float(np.mean(mean[use]))
        s_bar = float(np.mean(s[use]))
        n_c4 = float(nb[0])
    else:
        grand = float(np.sum(nb * mean[use]) / np.sum(nb))
        s_bar = float(np.sqrt(np.sum((nb - 1.0) * s[use] ** 2) / np.sum(nb - 1.0)))
        # the pooled s has ν = Σ (nᵢ − 1) degrees of freedom: for normal data s̄² = σ² χ²_ν / ν,
        # so E[s̄] = c4(ν + 1) σ (c4's definition with ν + 1 observations); c4 of the mean size
        # (used before) made σ̂ several per cent too large for lots of a few samples
        n_c4 = float(np.sum(nb - 1.0)) + 1.0
    sigma = s_bar / float(c4(n_c4))
    with np.errstate(invalid="ignore"):
        # every lot's limits come from σ̂ with the lot's own n (Montgomery §6.3.1, the limits
        # with σ given: μ ± 3σ/√n, s chart centre c4 σ, limits B5 σ and B6 σ; memory), σ̂
        # estimated from the baseline as above. With one size everywhere these are exactly
        # x̿ ± A3 s̄, s̄, B3 s̄ and B4 s̄; a lot of another size gets its own (A3(2) s̄ would be
        # 24 % too wide beside lots of 30), as its EWMA point σ̂/√n has. For sizes that differ,
        # §6.3.2 prints A3(nᵢ) s̄, B3(nᵢ) s̄, B4(nᵢ) s̄ with the pooled s̄, which estimates σ
        # itself: those divide by c4(nᵢ) a second time (limits 25 % too wide at nᵢ = 2, 6 % at
        # 5), so they are not used. A lot of one sample has no s chart limits (c4(1) is
        # undefined) but has its X̄ limits x̿ ± 3σ̂.
        nn = np.where(n >= 2, n, np.nan)
        c = c4(nn)
        half = L_SHEWHART * sigma / np.sqrt(np.where(n >= 1, n, np.nan))
        s_centre = c * sigma
        s_ucl = (c + L_SHEWHART * np.sqrt(1.0 - c * c)) * sigma
        s_lcl = np.maximum(0.0, c - L_SHEWHART * np.sqrt(1.0 - c * c)) * sigma
        ucl = grand + half
        lcl = grand - half
    return XbarSChart(mean, s, n, b, grand, s_bar, sigma, ucl, lcl, s_centre, s_ucl, s_lcl, equal)


def individuals_chart(x, baseline) -> IndividualsChart:
    """Individuals and moving-range charts (Montgomery §6.4): σ̂ = MR̄/d2(2),
    limits x̄ ± 3 σ̂, MR chart UCL = D4(2) MR̄, LCL 0. MR̄ is the mean of the moving ranges
    whose both lots are in the baseline."""
    x = np.asarray(x, dtype=float)
    m = x.size
    b = _baseline_mask(m, baseline)
    mr = np.full(m, np.nan)
    if m > 1:
        mr[1:] = np.abs(np.diff(x))
    pair = np.zeros(m, dtype=bool)
    if m > 1:
        pair[1:] = b[1:] & b[:-1]
    pair &= np.isfinite(mr)
    base_x = x[b & np.isfinite(x)]
    centre = float(np.mean(base_x)) if base_x.size else float("nan")
    mr_bar = float(np.mean(mr[pair])) if pair.any() else float("nan")
    sigma = mr_bar / d2(2)
    return IndividualsChart(x, mr, b, centre, mr_bar, sigma, centre + L_SHEWHART * sigma, centre - L_SHEWHART * sigma,
                            d4(2) * mr_bar)


def ewma_chart(x, centre: float, sigma_point, lam: float = EWMA_LAMBDA, L: float = EWMA_L) -> EwmaChart:
    """EWMA of the series x (Montgomery §9.2.1, eqs. 9.22-9.25): z_0 = centre,
    z_i = λ x_i + (1 − λ) z_{i−1}; limits centre ± L √Var(z_i), with the exact variance of z_i
    carried by the recursion Var(z_i) = (1 − λ)² Var(z_{i−1}) + λ² σ_i², Var(z_0) = 0 (z_i is
    a weighted sum of independent x_j: Var(z_i) = Σ_j λ² (1−λ)^(2(i−j)) σ_j²). With one σ for
    every point this is σ² λ/(2−λ) [1 − (1−λ)^(2i)], eq. 9.24; with lot means of different
    sizes (σ_j = σ/√n_j) it gives each lot's own limits, which the closed form does not (it
    made the limits after a small lot up to three times too narrow).

    ``sigma_point`` is the standard deviation of one plotted x (scalar or (m,)): σ for
    individuals, σ/√n_i for lot means. A NaN x (the figure undefined in that lot) is skipped:
    z and its variance are carried unchanged and the lot gets NaN limits (no signal).
    """
    x = np.asarray(x, dtype=float)
    m = x.size
    if not 0.0 < lam <= 1.0:
        raise ValueError("the EWMA weight must lie in (0, 1]")
    sp = np.broadcast_to(np.asarray(sigma_point, dtype=float), (m,)).copy()
    z = np.empty(m)
    var = np.full(m, np.nan)
    prev, v = float(centre), 0.0
    for i in range(m):  # a recursion: m is the number of lots (hundreds), not samples
        if np.isfinite(x[i]):
            prev = lam * x[i] + (1.0 - lam) * prev
            v = (1.0 - lam) ** 2 * v + lam**2 * sp[i] ** 2
            var[i] = v
        z[i] = prev
    half = L * np.sqrt(var)
    return EwmaChart(z, centre + half, centre - half, float(centre), float(lam), float(L), sp)


# --------------------------------------------------------------------------- signals

#: The Western Electric rules as Montgomery §5.3.6 numbers them (Western Electric 1956).
WE_RULES = {
    "WE1": "one point beyond a 3-sigma control limit",
    "WE2": "two of three consecutive points beyond 2 sigma on the same side",
    "WE3": "four of five consecutive points beyond 1 sigma on the same side",
    "WE4": "eight consecutive points on the same side of the centre line",
}


def western_electric(values, centre, sigma, *, chart: str = "xbar", rules=("WE1", "WE2", "WE3", "WE4")) -> list[Signal]:
    """Points that break the Western Electric rules.

    ``centre`` and ``sigma`` (the standard deviation of one plotted point) may be scalars or
    (m,) arrays (limits that change with the lot size). A point is attributed the signal when
    it completes the pattern *and* is itself one of the points the rule counts (common practice
    of rule implementations, no source). At the start of a series a pattern may be complete
    before a full window exists: the first two points beyond 2 sigma on one side break WE2 at
    the second, the first four beyond 1 sigma break WE3 at the fourth (any window of three or
    five points that holds them qualifies). Points with NaN value or sigma are skipped (they
    break no run and do not count). Rule names: WE1..WE4 (Montgomery §5.3.6 order).
    """
    x = np.asarray(values, dtype=float)
    m = x.size
    c = np.broadcast_to(np.asarray(centre, dtype=float), (m,))
    sg = np.broadcast_to(np.asarray(sigma, dtype=float), (m,))
    with np.errstate(invalid="ignore", divide="ignore"):
        zed = (x - c) / sg
    ok = np.isfinite(zed)
    idx = np.flatnonzero(ok)
    zv = zed[ok]
    out: list[Signal] = []

    def window(k: int, size: int) -> np.ndarray:
        return zv[max(0, k - size + 1) : k + 1]

    for k, i in enumerate(idx):
        z = zv[k]
        side = 1.0 if z > 0 else -1.0
        if "WE1" in rules and abs(z) > 3.0:
            out.append(Signal(int(i), chart, "WE1", f"{WE_RULES['WE1']} ({z:+.2f} sigma)"))
        if "WE2" in rules and side * z > 2.0:
            w = window(k, 3)  # at the start of a series, the points there are (two of two count)
            if np.sum(side * w > 2.0) >= 2:
                out.append(Signal(int(i), chart, "WE2", WE_RULES["WE2"] + (" (above)" if side > 0 else " (below)")))
        if "WE3" in rules and side * z > 1.0:
            w = window(k, 5)
            if np.sum(side * w > 1.0) >= 4:
                out.append(Signal(int(i), chart, "WE3", WE_RULES["WE3"] + (" (above)" if side > 0 else " (below)")))
        if "WE4" in rules and z != 0.0:
            w = window(k, 8)
            if w.size == 8 and (np.all(side * w > 0.0)):
                out.append(Signal(int(i), chart, "WE4", WE_RULES["WE4"] + (" (above)" if side > 0 else " (below)")))
    return out


def _pair_text(a: float, b: float) -> tuple[str, str]:
    """Two numbers with six significant digits each in positional notation, more when the two
    would print alike (a Duv of 3.55174e-05 beside a limit of -0.000239336 read as two kinds of
    number; now 0.0000355174 and -0.000239336)."""
    from ..figures import format_significant

    digits = 6
    while format_significant(a, digits) == format_significant(b, digits) and a != b and digits < 17:
        digits += 1  # a point just beyond its limit
    return format_significant(a, digits), format_significant(b, digits)


def beyond_limits(values, ucl, lcl, *, chart: str, rule: str = "WE1") -> list[Signal]:
    """Points above ``ucl`` or below ``lcl`` (scalars or (m,) arrays; NaN limits never signal).

    Used for the s, moving-range and EWMA charts, where only the limits are a rule: the zone
    rules assume a symmetric, normal plotted statistic (Montgomery §5.3.6, §9.2).
    """
    x = np.asarray(values, dtype=float)
    m = x.size
    u = np.broadcast_to(np.asarray(ucl, dtype=float), (m,))
    lo = np.broadcast_to(np.asarray(lcl, dtype=float), (m,))
    out = []
    for i in range(m):
        if not np.isfinite(x[i]):
            continue
        if np.isfinite(u[i]) and x[i] > u[i]:
            a, b = _pair_text(float(x[i]), float(u[i]))
            out.append(Signal(i, chart, rule, f"above the upper control limit ({a} > {b})"))
        elif np.isfinite(lo[i]) and x[i] < lo[i]:
            a, b = _pair_text(float(x[i]), float(lo[i]))
            out.append(Signal(i, chart, rule, f"below the lower control limit ({a} < {b})"))
    return out
