"""Control-chart formulas (lumeval.store.charts) against published worked examples and tables.

Sources named beside each check:

* Montgomery, D. C., *Introduction to Statistical Quality Control*, 6th ed., Wiley 2009:
  Table 6.3 (inside diameters of 25 samples of 5 forged piston rings) and Example 6.3 (X̄ and
  s charts from them). The data table is transcribed from public copies of the table (several
  agree digit for digit, including its x̄_i and s_i columns); the example's results
  (x̿ = 74.001, s̄ = 0.0094, X̄ limits 73.988 / 74.014, s limits 0 / 0.0196, "the process is in
  control") are quoted from memory and agree with the same book's X̄-R limits on this data
  (Example 6.1: 74.001 ± 0.577 · 0.023), which the book's exercise 6.x says are identical.
  Confidence: data high, limits high (4 significant digits, rounded as printed).
* Montgomery, Appendix VI (factors for control charts; memory, 4 decimals): c4, A3, B3, B4, d2,
  D4. The same values appear in ISO 7870-2:2013 Table 2 (memory).
* Montgomery Example 9.2 (EWMA, λ = 0.1, L = 2.7, μ0 = 10, σ = 1) on the 30 observations of
  Table 9.1; data as printed in a public software manual that reproduces the example (IMSL
  "EWMA Example", citing Montgomery p. 428). Results quoted from memory: z1 = 9.945,
  z2 = 9.7495, limits at sample 1 are 10 ± 0.27, steady-state limits 10 ± 0.6194; the chart
  signals near the end of the series, as the tabular CUSUM of the same data does (Example 9.1,
  sample 29). Our recursion first exceeds the UCL at sample 29 (z = 10.6468 > 10.6187).
  Confidence: data high, limits high, the exact first-signal sample medium (memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from lumeval.store import charts

# Montgomery 6th ed. Table 6.3: 25 samples x 5 observations (mm)
PISTON = np.array([
    [74.030, 74.002, 74.019, 73.992, 74.008],
    [73.995, 73.992, 74.001, 74.011, 74.004],
    [73.988, 74.024, 74.021, 74.005, 74.002],
    [74.002, 73.996, 73.993, 74.015, 74.009],
    [73.992, 74.007, 74.015, 73.989, 74.014],
    [74.009, 73.994, 73.997, 73.985, 73.993],
    [73.995, 74.006, 73.994, 74.000, 74.005],
    [73.985, 74.003, 73.993, 74.015, 73.988],
    [74.008, 73.995, 74.009, 74.005, 74.004],
    [73.998, 74.000, 73.990, 74.007, 73.995],
    [73.994, 73.998, 73.994, 73.995, 73.990],
    [74.004, 74.000, 74.007, 74.000, 73.996],
    [73.983, 74.002, 73.998, 73.997, 74.012],
    [74.006, 73.967, 73.994, 74.000, 73.984],
    [74.012, 74.014, 73.998, 73.999, 74.007],
    [74.000, 73.984, 74.005, 73.998, 73.996],
    [73.994, 74.012, 73.986, 74.005, 74.007],
    [74.006, 74.010, 74.018, 74.003, 74.000],
    [73.984, 74.002, 74.003, 74.005, 73.997],
    [74.000, 74.010, 74.013, 74.020, 74.003],
    [73.982, 74.001, 74.015, 74.005, 73.996],
    [74.004, 73.999, 73.990, 74.006, 74.009],
    [74.010, 73.989, 73.990, 74.009, 74.014],
    [74.015, 74.008, 73.993, 74.000, 74.010],
    [73.982, 73.984, 73.995, 74.017, 74.013],
])
# The table's own s_i column for samples 1-16 (as printed, 4 decimals)
PISTON_S_PRINTED = [0.0148, 0.0075, 0.0147, 0.0091, 0.0122, 0.0087, 0.0055, 0.0123, 0.0055, 0.0063,
                    0.0029, 0.0042, 0.0105, 0.0153, 0.0073, 0.0078]


def piston_chart():
    m = PISTON.shape[0]
    return charts.xbar_s_chart(PISTON.mean(axis=1), PISTON.std(axis=1, ddof=1), np.full(m, 5), np.ones(m, bool))


def test_piston_ring_subgroup_s_matches_the_printed_column():
    s = PISTON.std(axis=1, ddof=1)[:16]
    assert_allclose(s, PISTON_S_PRINTED, atol=0.00005 + 1e-12)  # printed to 4 decimals


def test_piston_ring_xbar_s_limits_match_example_6_3():
    ch = piston_chart()
    assert ch.equal_n
    # printed to 3 (x) and 4 (s) decimals: tolerance half a unit of the last printed digit
    assert_allclose(ch.grand_mean, 74.001, atol=0.0005)
    assert_allclose(ch.s_bar, 0.0094, atol=0.00005)
    # the book computes the limits from x̿ and s̄ rounded as printed: from those, our factors
    # give the printed limits to half a unit of their last digit ...
    assert_allclose(74.001 + charts.a3(5) * 0.0094, 74.014, atol=0.0005)
    assert_allclose(74.001 - charts.a3(5) * 0.0094, 73.988, atol=0.0005)
    assert_allclose(charts.b4(5) * 0.0094, 0.0196, atol=0.00005)
    # ... and from the unrounded x̿ and s̄, within that plus the rounding of x̿ (5e-4) and of
    # s̄ (5e-5 · A3)
    tol = 0.0005 + 0.0005 + 1.427 * 0.00005
    assert_allclose(ch.xbar_ucl, 74.014, atol=tol)
    assert_allclose(ch.xbar_lcl, 73.988, atol=tol)
    assert_allclose(ch.s_ucl, 0.0196, atol=0.00005 + 2.089 * 0.00005)
    assert_allclose(ch.s_lcl, 0.0, atol=1e-15)
    # Montgomery's conclusion: no point outside the limits on either chart
    assert charts.beyond_limits(ch.mean, ch.xbar_ucl, ch.xbar_lcl, chart="xbar") == []
    assert charts.beyond_limits(ch.s, ch.s_ucl, ch.s_lcl, chart="s") == []


def test_piston_ring_xbar_limits_agree_with_the_range_method():
    """Example 6.1 (same data, X̄-R): x̿ ± A2 R̄ with A2(5) = 0.577 (Appendix VI, memory)."""
    ch = piston_chart()
    r_bar = float(np.mean(PISTON.max(axis=1) - PISTON.min(axis=1)))
    assert_allclose(r_bar, 0.023, atol=0.0005)  # printed R̄ (memory)
    assert_allclose(ch.xbar_ucl[0], ch.grand_mean + 0.577 * r_bar, atol=0.0005)


@pytest.mark.parametrize("n, c4, a3, b3, b4", [
    (2, 0.7979, 2.659, 0.0, 3.267),
    (5, 0.9400, 1.427, 0.0, 2.089),
    (6, 0.9515, 1.287, 0.030, 1.970),
    (10, 0.9727, 0.975, 0.284, 1.716),
    (25, 0.9896, 0.606, 0.565, 1.435),
])
def test_factors_match_the_published_table(n, c4, a3, b3, b4):
    """Montgomery Appendix VI (memory; 4 and 3 decimals as printed)."""
    assert_allclose(charts.c4(n), c4, atol=0.00005)
    assert_allclose(charts.a3(n), a3, atol=0.0005)
    assert_allclose(charts.b3(n), b3, atol=0.0005)
    assert_allclose(charts.b4(n), b4, atol=0.0005)


def test_c4_large_n_and_its_asymptote():
    """c4 ≈ 4(n−1)/(4n−3) (Montgomery §6.3.1, the approximation for n > 25), whose error
    falls as 1/n² (1.3e-5 at n = 50): the gamma form holds where a typed table ends."""
    for n in (50, 200, 10_000):
        assert_allclose(charts.c4(n), 4 * (n - 1) / (4 * n - 3), rtol=2e-5 * (50 / n) ** 2)
    assert math.isnan(float(charts.c4(1)))


@pytest.mark.parametrize("n, d2, d4", [(2, 1.128, 3.267), (3, 1.693, 2.574), (5, 2.326, 2.114), (10, 3.078, 1.777)])
def test_range_factors_match_the_published_table(n, d2, d4):
    """Montgomery Appendix VI (memory). The table's D4 = 1 + 3 d3/d2 was computed from d2 and d3
    rounded to 3 decimals, hence 1e-3 for D4."""
    assert_allclose(charts.d2(n), d2, atol=0.0005)
    assert_allclose(charts.d4(n), d4, atol=0.001)


def test_range_factors_n2_closed_form_agrees_with_the_integral():
    """n = 2 uses the closed forms d2 = 2/√π, d3 = √(2 − 4/π); the general integral (used for
    n > 2) gives the same at n = 2."""
    charts._range_moments.cache_clear()
    d2_int, d3_int = charts._range_moments.__wrapped__(2.000001)  # the integral path (n is not 2)
    assert_allclose([charts.d2(2), charts.d3(2)], [d2_int, d3_int], rtol=1e-5)


# Montgomery 6th ed. Table 9.1 (30 observations, the first 20 from N(10, 1), then mean 11)
EWMA_DATA = [9.45, 7.99, 9.29, 11.66, 12.16, 10.18, 8.04, 11.46, 9.20, 10.34, 9.03, 11.47, 10.51, 9.40, 10.08,
             9.37, 10.62, 10.31, 8.52, 10.84, 10.90, 9.33, 12.29, 11.50, 10.60, 11.08, 10.38, 11.62, 11.31, 10.52]


def test_ewma_example_9_2():
    ch = charts.ewma_chart(EWMA_DATA, centre=10.0, sigma_point=1.0, lam=0.1, L=2.7)
    assert_allclose(ch.z[:2], [9.945, 9.7495], atol=5e-5)
    assert_allclose([ch.ucl[0], ch.lcl[0]], [10.27, 9.73], atol=0.005)
    # steady state (i → ∞): 10 ± 2.7 √(0.1/1.9) = 10 ± 0.6194
    long = charts.ewma_chart(np.full(400, 10.0), centre=10.0, sigma_point=1.0, lam=0.1, L=2.7)
    assert_allclose([long.ucl[-1], long.lcl[-1]], [10.6194, 9.3806], atol=0.00005)
    assert ch.ucl[-1] < long.ucl[-1]  # the limits widen towards the steady state
    sig = charts.beyond_limits(ch.z, ch.ucl, ch.lcl, chart="ewma", rule="EWMA")
    assert sig and sig[0].index + 1 == 29  # first out-of-control sample
    assert all(s.text.startswith("above") for s in sig)


def test_individuals_chart_by_hand():
    """σ̂ = MR̄/d2 and D4 MR̄ (Montgomery §6.4) on a small series checked by hand arithmetic."""
    x = [10.0, 12.0, 11.0, 14.0, 13.0]
    ch = charts.individuals_chart(x, np.ones(5, bool))
    assert_allclose(ch.mr_bar, (2 + 1 + 3 + 1) / 4, rtol=1e-12)
    assert_allclose(ch.centre, 12.0, rtol=1e-12)
    assert_allclose(ch.ucl, 12.0 + 3 * 1.75 / 1.128, atol=0.005)
    assert_allclose(ch.mr_ucl, 3.267 * 1.75, atol=0.001)
    assert np.isnan(ch.moving_range[0])


def test_variable_sizes_pool_s():
    """Montgomery §6.3.2: s̄ pooled with weights n_i − 1, x̿ weighted by n_i, limits per lot."""
    mean, s, n = [1.0, 2.0, 1.5], [0.1, 0.2, 0.3], [3, 5, 4]
    ch = charts.xbar_s_chart(mean, s, n, [True, True, True])
    assert not ch.equal_n
    assert_allclose(ch.s_bar, math.sqrt((2 * 0.01 + 4 * 0.04 + 3 * 0.09) / 9), rtol=1e-12)
    assert_allclose(ch.grand_mean, (3 + 10 + 6) / 12, rtol=1e-12)
    assert ch.xbar_ucl[0] > ch.xbar_ucl[1]  # smaller lot, wider limits


def _zone_series(z):
    return np.asarray(z, float)  # centre 0, sigma 1


@pytest.mark.parametrize("series, rule, where", [
    ([0, 0.5, -0.5, 3.2, 0], "WE1", [3]),
    ([0, 2.5, 0.3, 2.4, 0], "WE2", [3]),
    ([0, -2.5, -2.1, 0, 0], "WE2", [2]),
    ([1.5, 1.2, 0.2, 1.1, 1.3, 0], "WE3", [4]),
    ([0.1, 0.2, 0.3, 0.1, 0.2, 0.4, 0.1, 0.3, -1], "WE4", [7]),
    # at the start of a series: the pattern is complete before a full window exists (any window
    # of three or five points that holds it qualifies); these were missed (found by a review)
    ([2.5, 2.5, 0, 0, 0], "WE2", [1]),
    ([-2.5, -2.2, 0.1, 0, 0], "WE2", [1]),
    ([1.5, 1.5, 1.5, 1.5, 0, 0], "WE3", [3]),
])
def test_western_electric_rules(series, rule, where):
    """The four rules as Montgomery §5.3.6 states them (exact by construction: each series
    breaks exactly the named rule at the named point and no other rule)."""
    sig = charts.western_electric(_zone_series(series), 0.0, 1.0)
    assert [(s.rule, s.index) for s in sig] == [(rule, i) for i in where]


def test_western_electric_agrees_with_a_scan_of_every_window():
    """Independent check: WE2 and WE3 found by scanning every window of three or five consecutive
    points (the rules' own words, Montgomery §5.3.6), each signal at the pattern's last
    qualifying point; random series, seeded."""
    rng = np.random.default_rng(7)
    for _ in range(300):
        z = rng.normal(0, 1.3, 12)
        expect = set()
        for rule, size, level, need in (("WE2", 3, 2.0, 2), ("WE3", 5, 1.0, 4)):
            for side in (1.0, -1.0):
                for a in range(-size + 1, z.size):  # windows clipped at the series' ends
                    w = range(max(a, 0), min(a + size, z.size))
                    hits = [i for i in w if side * z[i] > level]
                    if len(hits) >= need:
                        expect.add((rule, hits[need - 1] if a < 0 else max(hits)))
        got = {(s.rule, s.index) for s in charts.western_electric(z, 0.0, 1.0, rules=("WE2", "WE3"))}
        assert {g[0] for g in got} <= {"WE2", "WE3"}
        # every pattern the scan finds is signalled at or before its last point, and every signal
        # ends a pattern the scan finds
        for rule, i in expect:
            assert any(r == rule and j <= i for r, j in got), (z, rule, i)
        for rule, j in got:
            assert any(r == rule and i >= j for r, i in expect), (z, rule, j)


def test_ewma_limits_with_lot_sizes_that_differ_use_the_exact_variance():
    """Var(z_i) = Σ_j λ² (1−λ)^(2(i−j)) σ²/n_j for independent lot means (z_i is a weighted sum
    of them; Montgomery eq. 9.24 is its constant-n case), computed here by the sum. The closed
    form with the current lot's n made the limits after a small lot far too narrow (found by a
    review: 0.138 against 0.448 at the lot after two lots of 2 among lots of 50)."""
    n = np.array([50, 50, 50, 50, 2, 2, 50, 50, 50, 50], float)
    lam, L, sigma = 0.2, 3.0, 1.0
    ch = charts.ewma_chart(np.zeros(10), 0.0, sigma / np.sqrt(n), lam=lam, L=L)
    for i in range(10):
        var = sum(lam**2 * (1 - lam) ** (2 * (i - j)) * sigma**2 / n[j] for j in range(i + 1))
        assert_allclose(ch.ucl[i], L * math.sqrt(var), rtol=1e-12)
    assert_allclose(ch.ucl[6:10], [0.448, 0.368, 0.307, 0.260], atol=0.0015)
    # constant n: the textbook closed form (eq. 9.24)
    same = charts.ewma_chart(np.zeros(10), 0.0, 0.5, lam=lam, L=L)
    t = np.arange(1, 11)
    assert_allclose(same.ucl, L * 0.5 * np.sqrt(lam / (2 - lam) * (1 - (1 - lam) ** (2 * t))), rtol=1e-12)


def test_an_undefined_lot_is_skipped_by_the_ewma():
    """A lot without the figure (NaN) adds no observation: z and its variance are carried, the
    lot has no limits and gets no signal (it was signalled with the carried z)."""
    x = np.array([0.0, 0.0, 5.0, np.nan, np.nan, 0.0])
    ch = charts.ewma_chart(x, 0.0, 1.0, lam=0.2, L=3.0)
    assert np.isnan(ch.ucl[3]) and np.isnan(ch.ucl[4]) and ch.z[3] == ch.z[2] == ch.z[4]
    ref = charts.ewma_chart(np.array([0.0, 0.0, 5.0, 0.0]), 0.0, 1.0, lam=0.2, L=3.0)
    assert_allclose([ch.ucl[5], ch.z[5]], [ref.ucl[3], ref.z[3]], rtol=1e-15)
    sig = charts.beyond_limits(ch.z, ch.ucl, ch.lcl, chart="ewma", rule="EWMA")
    assert [s.index for s in sig] == [2]  # lots 3 and 4 (undefined) are not signalled


def test_a_lot_of_one_sample_has_xbar_limits_from_the_baseline_sigma():
    """A one-sample lot has no s (A3(1) does not exist), but its value has the X̄ limits
    x̿ ± 3σ̂ (Montgomery §6.3, limits μ ± 3σ/√n with σ estimated by s̄/c4); they were NaN, and a
    value 10σ̂ away gave no X̄ signal (found by a review)."""
    mean = [10.0, 10.2, 9.9, 10.1, 13.0]
    s, n = [0.3, 0.25, 0.35, 0.3, np.nan], [5, 5, 5, 5, 1]
    ch = charts.xbar_s_chart(mean, s, n, [True, True, True, True, False])
    sigma = float(np.mean([0.3, 0.25, 0.35, 0.3])) / float(charts.c4(5))
    assert_allclose([ch.xbar_ucl[4], ch.xbar_lcl[4]], [ch.grand_mean + 3 * sigma, ch.grand_mean - 3 * sigma],
                    rtol=1e-12)
    assert np.isnan(ch.s_ucl[4])
    sig_pt = (ch.xbar_ucl - ch.grand_mean) / 3.0
    assert [(x.rule, x.index) for x in charts.western_electric(mean, ch.grand_mean, sig_pt)] == [("WE1", 4)]


def test_western_electric_no_signal_in_control():
    assert charts.western_electric([0.5, -0.5, 0.9, -0.9, 1.9, -1.9, 0.2, -0.2, 0.5], 0.0, 1.0) == []


def test_limit_signals_print_both_numbers_positionally_and_distinctly():
    """A limit signal's text: six significant digits of each number in positional notation (a
    Duv of 3.55174e-05 beside a limit of -0.000239336 read as two kinds of number), more where
    the two would print alike. Text only: the chart's arithmetic is tested above."""
    from lumeval.store.charts import beyond_limits

    texts = [s.text for s in beyond_limits([3.55174e-05, 3004.571, -5.0], [-0.000239336, 3004.57, 1.0],
                                           [-1.0, 0.0, -2e-6 * 1e6], chart="EWMA")]
    assert texts == ["above the upper control limit (0.0000355174 > -0.000239336)",
                     "above the upper control limit (3004.571 > 3004.57)",
                     "below the lower control limit (-5 < -2)"]


@pytest.mark.parametrize("value", [-9.5925e-05, 6.2569e-06, -0.00045617, 2973.456, 3.5e-9, 123456.7, -1.0])
def test_trend_numbers_are_positional_with_five_significant_digits(value):
    """The trend table's and limits line's numbers (lumeval.render.trend_report._fmt): no
    exponent beside the positional numbers of the same column, five significant digits kept
    (read back within half a unit of the fifth digit)."""
    from lumeval.render.trend_report import _fmt

    text = _fmt(value)
    assert "e" not in text.lower()
    assert float(text) == pytest.approx(value, rel=5e-5)


def test_an_xbar_s_baseline_without_spread_is_refused():
    """Every baseline s = 0 gives X̄ limits of zero width; a lot 1e-4 away was above the UCL
    yet not signalled (its z was infinite and skipped) while the s and EWMA charts signalled
    it (found by a review). Refused, as the individuals chart refuses a baseline without
    moving range; one sample lot with spread in the baseline is enough."""
    from lumeval.errors import LumevalError
    from lumeval.store.trend import LotPoint, compute_trend

    def pts(s_values):
        return [LotPoint(k + 1, None, "P", "2026-12-01", 5, 80.0 + (1e-4 if k == 5 else 0.0), s)
                for k, s in enumerate(s_values)]

    with pytest.raises(LumevalError, match="no spread within lots"):
        compute_trend(pts([0.0] * 6), [True] * 5 + [False], figure="Ra", chart="xbar-s")
    tr = compute_trend(pts([0.0, 0.0, 0.0, 0.0, 0.1, 0.0]), [True] * 5 + [False], figure="Ra", chart="xbar-s")
    assert math.isfinite(tr.main.sigma) and tr.main.sigma > 0


@pytest.mark.parametrize("text", ["\u0661..\u0662", "\uff11..\uff12", "1..\u0662"])
def test_baseline_range_takes_the_digits_0_9_only(text):
    """--baseline A..B reads lot numbers with the digits 0-9, as every number lumeval reads
    (other scripts' digits were read by Python's \\d and int())."""
    from lumeval.store.db import StoreError
    from lumeval.store.trend import baseline_mask

    with pytest.raises(StoreError, match="digits 0-9"):
        baseline_mask([1, 2, 3], text)
    mask, _ = baseline_mask([1, 2, 3], "1..2")
    assert mask.tolist() == [True, True, False]


def test_sigma_of_lots_of_different_sizes_is_unbiased_for_the_pooled_s():
    """Lots of different sizes: σ̂ = s̄ / c4(ν + 1) with the pooled s̄ of ν = Σ (nᵢ − 1)
    degrees of freedom. Outside checks: E[s̄]/σ for ν degrees of freedom is the mean of the chi
    distribution over √ν (scipy.stats.chi), and a Monte Carlo of normal lots (numpy's
    generator) gives E[σ̂] = σ within its standard error; c4 of the mean size (used before)
    was 3 % off here."""
    from scipy import stats

    sizes = np.array([3, 5, 8])
    nu = int(np.sum(sizes - 1))
    assert_allclose(float(charts.c4(nu + 1)), stats.chi(nu).mean() / np.sqrt(nu), rtol=1e-12)
    rng = np.random.default_rng(20261205)
    reps, sigma = 20_000, 2.0
    est = np.empty(reps)
    for k in range(reps):
        lots = [rng.normal(10.0, sigma, m) for m in sizes]
        ch = charts.xbar_s_chart([x.mean() for x in lots], [x.std(ddof=1) for x in lots], sizes, [True] * 3)
        est[k] = ch.sigma
    se = est.std(ddof=1) / np.sqrt(reps)
    assert abs(est.mean() - sigma) < 4 * se  # unbiased
    old = est * float(charts.c4(nu + 1)) / float(charts.c4(sizes.mean()))
    assert abs(old.mean() - sigma) > 10 * se  # the former estimate's bias is far outside the noise


def test_limits_of_lots_of_different_sizes_are_three_sigma_of_each_lots_mean():
    """Sizes that differ: lot i's X̄ limits are x̿ ± 3σ/√nᵢ and its s chart centre c4(nᵢ) σ on
    average (Montgomery §6.3.1, the limits with σ given, σ estimated without bias from the
    pooled s̄; a Monte Carlo of normal lots with numpy's generator). The §6.3.2 recipe
    A3(nᵢ) s̄ with the pooled s̄ (used before) was 1/c4(nᵢ) too wide: 25 % for a lot of 2
    (found by a review), far outside the noise here."""
    sizes = np.array([2] * 10 + [5] * 10)
    rng = np.random.default_rng(7)
    reps, sigma = 3000, 1.0
    half, centre, book = np.empty(reps), np.empty(reps), np.empty(reps)
    for k in range(reps):
        lots = [rng.normal(0.0, sigma, m) for m in sizes]
        ch = charts.xbar_s_chart([x.mean() for x in lots], [x.std(ddof=1) for x in lots], sizes, [True] * sizes.size)
        half[k], centre[k] = ch.xbar_ucl[0] - ch.grand_mean, ch.s_centre[0]
        book[k] = charts.a3(2) * ch.s_bar
    for got, want in ((half, 3 * sigma / np.sqrt(2)), (centre, float(charts.c4(2)) * sigma)):
        se = got.std(ddof=1) / np.sqrt(reps)
        assert abs(got.mean() - want) < 4 * se, (got.mean(), want)
    assert book.mean() > 1.2 * 3 * sigma / np.sqrt(2)


def test_c4_of_very_large_lots():
    """c4 for lots of 10⁴-10⁹ samples: the difference of two large log-gammas lost digits
    (c4 above 1 at n = 10⁹, and then NaN s limits; found by a review). Outside check: scipy's
    Pochhammer symbol, c4(n) = √(2/(n − 1)) · (x)_{1/2} with x = (n − 1)/2, which is exact to the
    last bits at these sizes; and the two forms agree where both are accurate."""
    from scipy import special

    for n in (1e6, 1e8, 1e9):
        ref = special.poch((n - 1.0) / 2.0, 0.5) * math.sqrt(2.0 / (n - 1.0))
        got = float(charts.c4(n))
        assert got < 1.0
        assert_allclose(1.0 - got, 1.0 - ref, rtol=1e-6)  # what B3, B4 depend on
        assert math.isfinite(float(charts.b4(n))) and math.isfinite(float(charts.b3(n)))
    # the series' switch: the log-gamma form just below it, the series from it on, continuous
    below, at = float(charts.c4(charts.C4_SERIES_N - 1)), float(charts.c4(charts.C4_SERIES_N))
    lg = math.sqrt(2.0 / (charts.C4_SERIES_N - 1.0)) * math.exp(
        math.lgamma(charts.C4_SERIES_N / 2.0) - math.lgamma((charts.C4_SERIES_N - 1.0) / 2.0))
    assert_allclose(at, lg, rtol=1e-12)
    assert 0.0 < at - below < 1e-7
