"""Lot statistics (lumeval.lots.statistics) against numpy/scipy computed independently, and hand-made cases.

Outside references used here:
- numpy's mean/std/percentile and scipy.stats (describe, median_abs_deviation) on the same
  numbers with the NaN rows removed by the test itself;
- scipy.spatial.distance.pdist for the largest pairwise distance (all pairs, no hull);
- colour-science's ``xy_to_Luv_uv`` for the CIE 1976 (u', v') transform;
- hand-made lots whose answers follow from the definitions (identical samples -> zero spread,
  a point one known Δx from an ellipse centre -> sqrt(g11)·Δx steps, ...).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats
from scipy.spatial.distance import pdist

from lumeval.lots import pairwise
from lumeval.lots import statistics as lot

RNG = np.random.default_rng(4)


def _lot_xy(n, rng=RNG, centre=(0.4339, 0.4033), sd=0.0012):
    return np.column_stack([rng.normal(centre[0], sd, n), rng.normal(centre[1], sd, n)])


# --------------------------------------------------------------------------- describe


@pytest.mark.parametrize("ddof", [0, 1])
def test_describe_matches_numpy_and_scipy(ddof):
    a = RNG.normal(80.0, 3.0, size=(257, 4))
    a[[3, 50, 51], 1] = np.nan  # undefined samples in one figure
    a[:, 3] = np.nan  # a figure undefined everywhere
    d = lot.describe(a, ddof=ddof)
    for j in range(3):
        col = a[:, j][np.isfinite(a[:, j])]
        s = stats.describe(col, ddof=ddof)
        assert d["count"][j] == col.size == s.nobs
        assert d["undefined"][j] == a.shape[0] - col.size
        assert d["mean"][j] == pytest.approx(s.mean, rel=1e-13)
        assert d["std"][j] == pytest.approx(np.sqrt(s.variance), rel=1e-12)
        assert d["min"][j] == s.minmax[0] and d["max"][j] == s.minmax[1]
        # Hyndman & Fan (1996) definition 7, written out independently from the order statistics
        xs = np.sort(col)
        for p, key in ((0.05, "p05"), (0.95, "p95"), (0.5, "median")):
            h = (xs.size - 1) * p
            lo = int(np.floor(h))
            expect = xs[lo] + (h - lo) * (xs[min(lo + 1, xs.size - 1)] - xs[lo])
            assert d[key][j] == pytest.approx(expect, rel=1e-13)
            assert d[key][j] == pytest.approx(stats.scoreatpercentile(col, 100 * p), rel=1e-13)
    assert d["count"][3] == 0
    for key in ("mean", "std", "min", "max", "median", "p05", "p95"):
        assert np.isnan(d[key][3])


def test_std_undefined_for_single_sample_with_ddof1():
    d = lot.describe(np.array([[5.0]]), ddof=1)
    assert d["mean"][0] == 5.0 and np.isnan(d["std"][0])
    d0 = lot.describe(np.array([[5.0]]), ddof=0)
    assert d0["std"][0] == 0.0


# --------------------------------------------------------------------------- chromaticity


def test_upvp_matches_colour_science(colour):
    xy = _lot_xy(50)
    np.testing.assert_allclose(lot.upvp_from_xy(xy), colour.xy_to_Luv_uv(xy), rtol=0, atol=1e-15)
    np.testing.assert_allclose(lot.xy_from_upvp(colour.xy_to_Luv_uv(xy)), xy, rtol=0, atol=1e-15)


def test_centroid_and_delta_against_numpy():
    up = lot.upvp_from_xy(_lot_xy(300))
    up[7] = np.nan
    c = lot.chromaticity_centroid(up)
    ok = np.all(np.isfinite(up), axis=1)
    np.testing.assert_allclose(c, np.mean(up[ok], axis=0), rtol=1e-14)
    d = lot.delta_upvp(up, c)
    np.testing.assert_allclose(d[ok], np.linalg.norm(up[ok] - c, axis=1), rtol=1e-13)
    assert np.isnan(d[7])


@pytest.mark.parametrize("n", [2, 3, 10, 500, 5000])
def test_max_pairwise_distance_equals_all_pairs(n):
    rng = np.random.default_rng(n)
    P = rng.normal(size=(n, 2)) * [0.002, 0.001]
    dmax, i, j = lot.max_pairwise_distance(P)
    ref = pdist(P).max()
    assert dmax == pytest.approx(ref, rel=1e-12)
    assert np.linalg.norm(P[i] - P[j]) == pytest.approx(ref, rel=1e-12)
    assert lot.max_pairwise_distance_bruteforce(P, chunk=97) == pytest.approx(ref, rel=1e-12)


def _diameter_scipy(P: np.ndarray) -> float:
    """Reference diameter: scipy's ConvexHull (Qhull), then scipy's cdist between its vertices,
    a block of rows at a time (an independent library; the diameter is a hull-vertex pair)."""
    from scipy.spatial import ConvexHull
    from scipy.spatial.distance import cdist

    H = P[ConvexHull(P).vertices]
    return max(float(cdist(H[k: k + 2000], H).max()) for k in range(0, H.shape[0], 2000))


@pytest.mark.parametrize("shape", ["cloud", "circle", "square grid", "two clusters", "disc"])
def test_max_pairwise_distance_large_sets_against_scipy_hull(shape, monkeypatch):
    """20,000 points: after the octagon filter the pairs are compared directly ("cloud", "two
    clusters"), after the finer 32- and 256-gon filters ("disc": about 2,000 points are left
    around the octagon), or through Qhull and rotating calipers when nearly every point is a
    hull vertex ("circle": all 20,000); "square grid": hull points on the octagon's edges, ties.
    Reference: scipy's ConvexHull and cdist over its vertices."""
    rng = np.random.default_rng(7)
    n = 20_000
    if shape == "cloud":
        P = 0.2 + rng.normal(size=(n, 2)) * [0.002, 0.001]
    elif shape == "circle":
        t = rng.uniform(0, 2 * np.pi, n)
        P = np.column_stack([0.3 + 0.01 * np.cos(t), 0.4 + 0.01 * np.sin(t)])
    elif shape == "square grid":
        g = np.arange(142) * 1e-4
        P = np.array([(a, b) for a in g for b in g])[:n]
    elif shape == "disc":
        r, t = np.sqrt(rng.uniform(0, 1, n)), rng.uniform(0, 2 * np.pi, n)
        P = np.column_stack([0.2 + 0.01 * r * np.cos(t), 0.45 + 0.01 * r * np.sin(t)])
        assert pairwise._outside_octagon(P).size > pairwise.BRUTE_FORCE_POINTS  # the case the finer filters are for
    else:
        P = np.vstack([rng.normal(size=(n // 2, 2)) * 1e-4 + [0.2, 0.5], rng.normal(size=(n // 2, 2)) * 1e-4 + [0.25, 0.45]])
    P = P[rng.permutation(P.shape[0])]
    hull, calipers = [], []
    monkeypatch.setattr(pairwise, "_hull_vertices", lambda Q, real=pairwise._hull_vertices: hull.append(1) or real(Q))
    monkeypatch.setattr(pairwise, "_calipers", lambda H, real=pairwise._calipers: calipers.append(1) or real(H))
    d, i, j = lot.max_pairwise_distance(P)
    ref = _diameter_scipy(P)
    assert d == pytest.approx(ref, rel=1e-12)
    assert np.linalg.norm(P[i] - P[j]) == pytest.approx(ref, rel=1e-12)
    assert bool(hull) == bool(calipers) == (shape == "circle")  # the filters leave few points except on a circle


@pytest.mark.parametrize("seed", range(40))
def test_calipers_farthest_pair_of_convex_polygons(seed):
    """Rotating calipers over convex polygons (counter-clockwise, from scipy's ConvexHull) against
    scipy's pdist over all vertex pairs: random points on ellipses, on a coarse grid (parallel
    edges, ties) and in a cloud."""
    from scipy.spatial import ConvexHull

    rng = np.random.default_rng(seed)
    n = int(rng.integers(3, 80))
    if seed % 3 == 0:
        t = rng.uniform(0, 2 * np.pi, n)
        P = np.column_stack([rng.uniform(0.5, 2) * np.cos(t), np.sin(t)])
    elif seed % 3 == 1:
        P = rng.integers(0, 5, (n + 3, 2)).astype(float)
        P[:3] = [[0, 0], [4, 0], [0, 4]]  # never collinear
    else:
        P = rng.normal(size=(n, 2))
    H = P[ConvexHull(P).vertices]
    a, b = pairwise._calipers(H)
    assert np.linalg.norm(H[a] - H[b]) == pytest.approx(pdist(H).max(), rel=1e-12)


def test_max_pairwise_distance_of_points_on_a_circle_in_bounded_memory():
    """50,000 points on a circle are all hull vertices: comparing every pair would need a
    50,000 x 50,000 table (37 GB); the rotating calipers need memory proportional to the points.
    Reference: the diameter of a circle of radius 0.01 is 0.02 (to the points' angular spacing)."""
    import tracemalloc

    t = np.linspace(0, 2 * np.pi, 50_000, endpoint=False)
    P = np.column_stack([0.3 + 0.01 * np.cos(t), 0.4 + 0.01 * np.sin(t)])
    P = P[np.random.default_rng(3).permutation(P.shape[0])]
    tracemalloc.start()
    try:
        d, i, j = lot.max_pairwise_distance(P)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert d == pytest.approx(0.02, rel=1e-9)
    assert np.linalg.norm(P[i] - P[j]) == pytest.approx(d, rel=1e-12)
    assert peak < 100e6


@pytest.mark.parametrize("shape", ["disc", "circle"])
def test_filter_polygons_in_small_blocks_give_the_same_diameter(shape, monkeypatch):
    """The filter polygons' extreme points and edge tests run in blocks of points and edges
    (bounded temporaries); blocks of a few points must give the same diameter as scipy's hull and
    cdist (ties between blocks keep the first extreme point, as one argmax would)."""
    rng = np.random.default_rng(23)
    n = 6_000
    t = rng.uniform(0, 2 * np.pi, n)
    r = np.sqrt(rng.uniform(0, 1, n)) if shape == "disc" else np.ones(n)
    P = np.column_stack([0.2 + 0.01 * r * np.cos(t), 0.45 + 0.01 * r * np.sin(t)])
    monkeypatch.setattr(pairwise, "_TEMP_ELEMENTS", 700)  # 21 points per projection block, 1 edge per test
    monkeypatch.setattr(pairwise, "BRUTE_FORCE_POINTS", 300)
    d, i, j = lot.max_pairwise_distance(P)
    ref = _diameter_scipy(P)
    assert d == pytest.approx(ref, rel=1e-12)
    assert np.linalg.norm(P[i] - P[j]) == pytest.approx(ref, rel=1e-12)


def test_max_pairwise_degenerate_sets():
    # collinear points (Qhull refuses them): exact extreme pair
    t = np.linspace(0.0, 1.0, 40)
    P = np.column_stack([0.2 + 0.003 * t, 0.5 - 0.001 * t])
    P = P[np.random.default_rng(1).permutation(40)]
    d, i, j = lot.max_pairwise_distance(P)
    assert d == pytest.approx(pdist(P).max(), rel=1e-12)
    # identical samples -> zero spread
    same = np.tile([[0.25, 0.52]], (5, 1))
    assert lot.max_pairwise_distance(same)[0] == 0.0
    # NaN points are ignored; a single defined point -> 0; none -> NaN
    Q = np.array([[np.nan, 0.5], [0.2, 0.5], [0.21, 0.5]])
    assert lot.max_pairwise_distance(Q)[0] == pytest.approx(0.01)
    assert lot.max_pairwise_distance(Q[:2])[0] == 0.0
    assert np.isnan(lot.max_pairwise_distance(Q[:1])[0])


# --------------------------------------------------------------------------- outliers


def test_robust_z_matches_scipy_mad():
    x = RNG.normal(3000, 40, 101)
    z = lot.robust_z(x)
    mad = stats.median_abs_deviation(x, scale=1.0)
    np.testing.assert_allclose(z, 0.6745 * (x - np.median(x)) / mad, rtol=1e-12)


def test_robust_z_hand_case_and_mad_zero_fallback():
    # median 3, |dev| = 2,1,0,1,97 -> MAD 1 -> z(100) = 0.6745·97
    z = lot.robust_z([1.0, 2.0, 3.0, 4.0, 100.0])
    assert z[4] == pytest.approx(0.6745 * 97)
    assert z[0] == pytest.approx(-0.6745 * 2)
    # MAD = 0 (most samples identical): mean absolute deviation 4/5 -> z = 4 / (1.253314·0.8)
    z = lot.robust_z([1.0, 1.0, 1.0, 1.0, 5.0])
    assert z[4] == pytest.approx(4.0 / (1.253314 * 0.8))
    assert np.all(z[:4] == 0.0)
    assert np.all(lot.robust_z([2.0, 2.0, 2.0]) == 0.0)


def test_screen_outliers_flags_with_reason():
    n = 60
    rng = np.random.default_rng(7)
    figs = {"Ra": rng.normal(82, 0.5, n), "cct_K": rng.normal(3000, 20, n)}
    figs["Ra"][11] = 70.0
    figs["cct_K"][40] = 3400.0
    flags, reasons, z = lot.screen_outliers(figs)
    assert set(np.flatnonzero(flags)) == {11, 40}
    assert "Ra = 70 lies below" in reasons[11][0]  # Ra in its registry format (integers)
    assert "CCT = 3400 K" in reasons[40][0] and "above" in reasons[40][0]
    assert reasons[0] == ()
    # too few samples: not screened
    flags, _, _ = lot.screen_outliers({"Ra": np.array([80.0, 80.0, 10.0])})
    assert not flags.any()


# --------------------------------------------------------------------------- steps and the whole lot


def test_steps_hand_case_iec60081_ellipse():
    from lumeval.criteria.regions import iec60081_ellipse

    e = iec60081_ellipse("F3000")
    cx, cy = e.centre_xy
    xy = np.array([[cx, cy], [cx + 0.001, cy], [cx, cy - 0.002]])
    st = lot.lot_statistics({}, xy, ellipse=e)
    # MacAdam form sqrt(g11 Δx²) and sqrt(g22 Δy²) with the ellipse's own coefficients
    np.testing.assert_allclose(st.steps_nominal, [0.0, np.sqrt(e.g11) * 0.001, np.sqrt(e.g22) * 0.002], rtol=1e-12)
    assert st.ellipse_name == e.name


def test_two_identical_samples_have_zero_spread():
    xy = np.array([[0.44, 0.40], [0.44, 0.40]])
    figs = {"Ra": np.array([83.0, 83.0]), "cct_K": np.array([2990.0, 2990.0])}
    st = lot.lot_statistics(figs, xy)
    assert st.summary("Ra").std == 0.0 and st.summary("Ra").min == st.summary("Ra").max == 83.0
    assert st.max_pairwise_d_upvp == 0.0
    np.testing.assert_array_equal(st.d_upvp_centroid, 0.0)
    # the centroid goes xy -> u'v' -> xy: zero up to the round-off of that transform
    np.testing.assert_allclose(st.steps_centroid, 0.0, atol=1e-12)
    np.testing.assert_allclose(st.centroid_xy, [0.44, 0.40], rtol=1e-14)
    assert st.nominal_xy is None and st.d_upvp_nominal is None
    assert "IEC 60081" in st.ellipse_name  # default shape named in the result
    assert not st.outlier.any()


def test_lot_statistics_against_independent_computation():
    from lumeval.criteria.regions import iec60081_ellipse

    n = 400
    xy = _lot_xy(n)
    figs = {"Ra": RNG.normal(82, 1.0, n), "R9": RNG.normal(15, 4.0, n)}
    e = iec60081_ellipse("F3000")
    verdicts = ["pass"] * 380 + ["fail"] * 15 + ["not judged"] * 5
    st = lot.lot_statistics(figs, xy, ellipse=e, verdicts=verdicts)
    up = np.column_stack([4 * xy[:, 0], 9 * xy[:, 1]]) / (-2 * xy[:, 0] + 12 * xy[:, 1] + 3)[:, None]
    c = up.mean(axis=0)
    np.testing.assert_allclose(st.centroid_upvp, c, rtol=1e-14)
    # atol 1e-15: the centroid is a correctly rounded mean (math.fsum), numpy's mean may differ
    # from it by an ulp (~1e-16 in u'v'), which moves every distance by up to that much
    np.testing.assert_allclose(st.d_upvp_centroid, np.hypot(*(up - c).T), rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(st.d_upvp_nominal, np.hypot(*(up - st.nominal_upvp).T), rtol=1e-12)
    assert st.max_pairwise_d_upvp == pytest.approx(pdist(up).max(), rel=1e-12)
    # steps from the centroid: the same quadratic form at the centroid's (x, y)
    cxy = np.array([9 * c[0], 4 * c[1]]) / (6 * c[0] - 16 * c[1] + 12)
    dx, dy = xy[:, 0] - cxy[0], xy[:, 1] - cxy[1]
    np.testing.assert_allclose(
        st.steps_centroid, np.sqrt(e.g11 * dx**2 + 2 * e.g12 * dx * dy + e.g22 * dy**2), rtol=1e-10
    )
    assert st.summary("R9").std == pytest.approx(np.std(figs["R9"], ddof=1), rel=1e-12)
    assert st.yield_.percent == pytest.approx(95.0)
    assert (st.yield_.passed, st.yield_.failed, st.yield_.not_judged) == (380, 15, 5)


def test_nan_chromaticity_is_left_out():
    xy = _lot_xy(10)
    xy[3] = np.nan
    st = lot.lot_statistics({"Ra": np.full(10, 80.0)}, xy)
    assert np.isnan(st.d_upvp_centroid[3]) and np.isfinite(st.d_upvp_centroid[[0, 1, 2, 4]]).all()
    ok = np.arange(10) != 3
    assert st.max_pairwise_d_upvp == pytest.approx(pdist(lot.upvp_from_xy(xy[ok])).max(), rel=1e-12)


# --------------------------------------------------------------------------- property checks

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as hs  # noqa: E402
from hypothesis.extra.numpy import arrays  # noqa: E402


@settings(max_examples=150, deadline=None)
@given(
    arrays(
        float,
        hs.tuples(hs.integers(1, 60), hs.just(2)),
        # coarse values make duplicates and collinear sets frequent (Qhull's degenerate cases)
        elements=hs.sampled_from([0.0, 0.001, 0.002, 0.0025, 0.003, 0.01, -0.004]),
    )
)
def test_max_pairwise_matches_all_pairs_on_degenerate_sets(P):
    d, i, j = lot.max_pairwise_distance(P)
    ref = pdist(P).max() if P.shape[0] > 1 else 0.0
    assert d == pytest.approx(ref, rel=1e-12, abs=1e-15)
    assert np.linalg.norm(P[i] - P[j]) == pytest.approx(ref, rel=1e-12, abs=1e-15)


def test_largest_pairwise_pair_of_identical_points_names_two_samples():
    # every point the same: the pair named one sample twice ("s0 – s0"; found by a review);
    # any two distinct samples attain the distance 0 (a point's distance to itself)
    from lumeval.lots.pairwise import max_pairwise_distance

    P = np.array([[np.nan, np.nan], [0.2, 0.5], [0.2, 0.5], [0.2, 0.5]])
    d, i, j = max_pairwise_distance(P)
    assert d == 0.0 and (i, j) == (1, 2)
