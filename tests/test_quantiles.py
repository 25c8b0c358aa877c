"""Sampled selection (lumeval.lots.quantiles) against numpy, an independent general-purpose library.

Order statistics are values picked from the sample, not computed: they must equal
``np.partition``'s exactly. Percentiles and medians are numpy's arithmetic written out; they are
compared with ``np.percentile(method="linear")`` and ``np.median`` at 1e-15 relative (the same
operations in the same order, so on one machine the bits agree; the tolerance is for the rule
that floats are never compared exactly across code paths).
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.lots import quantiles
from lumeval.lots.quantiles import MIN_SAMPLED, median, order_statistics, percentiles_linear
from lumeval.lots.statistics import describe, robust_z

RTOL = 1e-15


def _shapes(rng, n):
    """Samples that are hard for a sampled bracket: sorted either way, many ties, one value,
    heavy tails, and values arranged so that the strided sample sees only one of them."""
    step = max(n // int(n ** (2.0 / 3.0)), 1)
    trap = rng.normal(size=n)
    trap[::step] = 0.0  # every sampled value is 0: brackets collapse
    return {
        "normal": rng.normal(75.0, 2.0, n),
        "ties": np.round(rng.normal(size=n), 1),
        "ascending": np.sort(rng.normal(size=n)),
        "descending": np.sort(rng.normal(size=n))[::-1].copy(),
        "constant": np.full(n, 3.25),
        "heavy tail": rng.standard_cauchy(n),
        "two values": np.where(rng.random(n) < 0.97, 1.0, 2.0),
        "sample trap": trap,
    }


@pytest.mark.parametrize("n", [1, 2, 3, 7, 1000, MIN_SAMPLED - 1, MIN_SAMPLED, 50_001, 210_000])
def test_order_statistics_are_numpys_partition(n):
    rng = np.random.default_rng(n)
    for kind, x in _shapes(rng, n).items():
        ranks = sorted({0, n - 1, (n - 1) // 2, n // 2, int(0.05 * (n - 1)), min(int(0.05 * (n - 1)) + 1, n - 1),
                        int(rng.integers(n))})
        before = x.copy()
        got = order_statistics(x, ranks)
        np.testing.assert_array_equal(got, np.partition(x, ranks)[ranks], err_msg=f"{kind}, n={n}")
        np.testing.assert_array_equal(x, before, err_msg="the input was modified")


@pytest.mark.parametrize("n", [1, 2, 3, 5, 100, MIN_SAMPLED, 20_001, 123_457])
def test_percentiles_and_median_equal_numpys(n):
    rng = np.random.default_rng(1000 + n)
    for kind, x in _shapes(rng, n).items():
        q = [50.0, 5.0, 95.0, 0.0, 100.0, float(rng.uniform(0, 100))]
        np.testing.assert_allclose(percentiles_linear(x, q), np.percentile(x, q, method="linear"), rtol=RTOL, atol=0,
                                   err_msg=f"{kind}, n={n}")
        np.testing.assert_allclose(median(x), np.median(x), rtol=RTOL, atol=0, err_msg=f"{kind}, n={n}")


def test_a_missed_bracket_falls_back_to_the_full_partition(monkeypatch):
    # a negative half-width makes every bracket empty: each rank must come from the fallback
    monkeypatch.setattr(quantiles, "_BRACKET_SD", -50.0)
    x = np.random.default_rng(7).normal(size=100_000)
    ranks = [5000, 5001, 49_999, 50_000, 95_000]
    np.testing.assert_array_equal(order_statistics(x, ranks), np.partition(x, ranks)[ranks])
    np.testing.assert_allclose(percentiles_linear(x, [5.0, 50.0, 95.0]), np.percentile(x, [5.0, 50.0, 95.0]),
                               rtol=RTOL, atol=0)


def test_empty_and_out_of_range_are_refused():
    with pytest.raises(ValueError):
        median(np.empty(0))
    with pytest.raises(ValueError):
        percentiles_linear(np.empty(0), [50.0])
    with pytest.raises(IndexError):
        order_statistics(np.arange(5.0), [5])


def test_lot_statistics_use_them_with_numpys_values():
    # a lot column of 10^5 values with NaN (undefined samples): describe's percentiles and the
    # outlier screen's median and MAD against numpy on the defined values
    rng = np.random.default_rng(3)
    x = rng.normal(90.0, 1.5, 100_000)
    x[rng.random(x.size) < 0.01] = np.nan
    ok = x[np.isfinite(x)]
    d = describe(x)
    np.testing.assert_allclose([d["median"][0], d["p05"][0], d["p95"][0]],
                               np.percentile(ok, [50.0, 5.0, 95.0], method="linear"), rtol=RTOL, atol=0)
    med = np.median(ok)
    mad = np.median(np.abs(ok - med))
    z = robust_z(x)
    np.testing.assert_allclose(z[np.isfinite(x)], 0.6745 * (ok - med) / mad, rtol=1e-14, atol=0)
    assert np.isnan(z[~np.isfinite(x)]).all()
