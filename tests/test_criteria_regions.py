"""Chromaticity regions: ANSI C78.377-2017 quadrangles and SDCM ellipses.

Outside sources used (named beside each check):
- ANSI C78.377-2017 Table 1 (target CCT ± tolerance, target Duv ± 0.006) and the published
  category centres (x, y) — secondary copies (project reference notes, agreeing with
  a second public copy), see lumeval/criteria/regions.py.
- ANSI C78.377-2008 corner coordinates of the 2700 K quadrangle — quoted from memory.
- colour-science's ``CCT_to_uv_Ohno2013`` (independent implementation of Ohno 2014).
- MacAdam (1942) ellipses as tabulated in Wyszecki & Stiles Table 2(5.4.1), colour-science's copy.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.criteria import regions as R
from lumeval.metrics.colorimetry import cct_duv_ohno, xy_from_uv

# ANSI C78.377-2017 (and -2015) published category centres (x, y), 4 decimals — secondary,
# from /work/shared/reference-values.md.
PUBLISHED_CENTRES = {
    2200: (0.5018, 0.4153), 2500: (0.4806, 0.4141), 2700: (0.4578, 0.4101), 3000: (0.4339, 0.4033),
    3500: (0.4078, 0.3930), 4000: (0.3818, 0.3797), 4500: (0.3613, 0.3670), 5000: (0.3446, 0.3551),
    5700: (0.3287, 0.3425), 6500: (0.3123, 0.3283),
}
NOMINALS = sorted(R.ANSI_C78377_2017)


def _xy(upvp):
    upvp = np.atleast_2d(upvp)
    return xy_from_uv(np.stack([upvp[:, 0], upvp[:, 1] / 1.5], axis=-1))


def _upvp(cct, duv):
    return R.upvp_from_uv(R.uv_from_cct_duv(np.atleast_1d(cct), np.atleast_1d(duv)))


# --------------------------------------------------------------------------- conversions


def test_cct_duv_to_uv_matches_colour_science(colour):
    """Ohno (2014) Eqs. 13-14 against colour-science's independent CCT_to_uv_Ohno2013."""
    T = np.array([2200.0, 2700.0, 3000.0, 4000.0, 5000.0, 6500.0, 6500.0, 3500.0])
    D = np.array([0.0, 0.006, -0.006, 0.001, -0.01, 0.003, 0.02, -0.02])
    ours = R.uv_from_cct_duv(T, D)
    ref = np.array([colour.temperature.CCT_to_uv_Ohno2013(np.array([t, d])) for t, d in zip(T, D)])
    assert np.max(np.abs(ours - ref)) < 5e-6


def test_cct_duv_roundtrip_through_ohno_inverse():
    """Our forward conversion and the engine's Ohno (2014) inverse agree (sign: + above the locus)."""
    T = np.array([2300.0, 3000.0, 4100.0, 6000.0])
    D = np.array([0.004, -0.005, 0.0, 0.0055])
    r = cct_duv_ohno(R.uv_from_cct_duv(T, D))
    assert np.allclose(r.cct_K, T, atol=0.05)
    assert np.allclose(r.duv, D, atol=1e-7)


# --------------------------------------------------------------------------- ANSI table


def test_table_duv_targets_follow_the_flexible_formula():
    """ANSI C78.377-2017 Table 1: each target Duv equals 57700/T² − 44.6/T + 0.00854 at the
    target CCT (0 below 2780 K), rounded to 4 decimals (two copies of the same table)."""
    for c in R.ANSI_C78377_2017.values():
        assert round(float(R.ansi_flexible_duv(c.target_cct_K)), 4) == pytest.approx(c.target_duv, abs=1e-9)


def test_centres_reproduce_published_xy():
    """Published category centres (ANSI C78.377-2017, 4 decimals) within their rounding."""
    for n in NOMINALS:
        q = R.ansi_quadrangle(n)
        xy = _xy(q.centre_upvp)[0]
        assert np.max(np.abs(xy - np.array(PUBLISHED_CENTRES[n]))) <= 6e-5, n


def test_flexible_tolerance_formula_reproduces_table_ends():
    """The flexible tolerance cubic (memory) gives Table 1's ±145 K at 2725 K and ±510 K at 6532 K."""
    assert float(R.ansi_flexible_tolerance_K(2725.0)) == pytest.approx(145.0, abs=1.0)
    assert float(R.ansi_flexible_tolerance_K(6532.0)) == pytest.approx(510.0, abs=1.0)


def test_2700K_corners_equal_the_2008_published_corners():
    """Where both editions agree (target Duv 0 at both edges of the 2700 K category), the corners
    equal ANSI C78.377-2008's published 2700 K quadrangle (x, y to 4 decimals; quoted from memory)."""
    published = np.array([[0.4593, 0.3944], [0.4813, 0.4319], [0.4562, 0.4260], [0.4373, 0.3893]])
    got = R.ansi_quadrangle(2700).corners_xy
    assert np.max(np.abs(got - published)) <= 6e-5


# --------------------------------------------------------------------------- membership


@pytest.mark.parametrize("nominal", NOMINALS)
def test_centre_is_inside(nominal):
    q = R.ansi_quadrangle(nominal)
    cat = R.ANSI_C78377_2017[nominal]
    # the published centre (secondary) and the table's (target CCT, target Duv)
    pub = R.upvp_from_xy(np.array([PUBLISHED_CENTRES[nominal]]))
    assert q.contains(pub)[0]
    assert q.contains(_upvp(cat.target_cct_K, cat.target_duv))[0]
    assert q.margin(pub)[0] > 0.004  # well inside: the region is about ±0.006 Duv wide


@pytest.mark.parametrize("nominal", NOMINALS)
def test_points_just_inside_and_outside_each_edge(nominal):
    """Points built from the table's CCT ± tolerance and Duv ± 0.006 fall on the right side."""
    q = R.ansi_quadrangle(nominal)
    cat = R.ANSI_C78377_2017[nominal]
    lo, hi = cat.target_cct_K - cat.tolerance_K, cat.target_cct_K + cat.tolerance_K
    D = lambda T: float(R.ansi_flexible_duv(T))  # noqa: E731
    mid = cat.target_cct_K
    near = lo + 0.02 * (hi - lo)  # close to a corner the straight edge and the Duv curve coincide
    inside = [
        _upvp(lo + 2.0, D(lo)),  # low-CCT edge
        _upvp(hi - 2.0, D(hi)),  # high-CCT edge
        _upvp(near, D(near) + 0.006 - 1e-4),  # upper Duv edge, near a corner
        _upvp(near, D(near) - 0.006 + 1e-4),  # lower Duv edge, near a corner
        _upvp(mid, D(mid) + 0.006 - 4e-4),  # mid-edge: the edge is a straight chord between the
        _upvp(mid, D(mid) - 0.006 + 4e-4),  # corners, within 2.7e-4 of the ±0.006 Duv curves
    ]
    outside = [
        _upvp(lo - 2.0, D(lo)),
        _upvp(hi + 2.0, D(hi)),
        _upvp(near, D(near) + 0.006 + 1e-4),
        _upvp(near, D(near) - 0.006 - 1e-4),
        _upvp(mid, D(mid) + 0.006 + 4e-4),
        _upvp(mid, D(mid) - 0.006 - 4e-4),
    ]
    assert all(q.contains(p)[0] for p in inside)
    assert not any(q.contains(p)[0] for p in outside)
    # the four corners themselves are on the boundary (margin 0), and a step of 1e-6 along
    # each edge's inward normal crosses it
    C = q.corners_upvp
    for k in range(4):
        a, b = C[k], C[(k + 1) % 4]
        m = 0.5 * (a + b)
        nrm = np.array([-(b - a)[1], (b - a)[0]]) / np.hypot(*(b - a))
        if q.margin(m + 1e-6 * nrm)[0] < 0:
            nrm = -nrm
        assert q.margin(m + 1e-6 * nrm)[0] == pytest.approx(1e-6, rel=1e-3)
        assert q.margin(m - 1e-6 * nrm)[0] == pytest.approx(-1e-6, rel=1e-3)
    assert np.allclose(q.margin(C), 0.0, atol=1e-12)


def test_margin_is_distance_in_upvp():
    """A point 0.002 outside the middle of the low-CCT edge has margin −0.002 (plain geometry)."""
    q = R.ansi_quadrangle(3000)
    a, b = q.corners_upvp[0], q.corners_upvp[1]
    m = 0.5 * (a + b)
    outward = m - q.centre_upvp
    e = (b - a) / np.hypot(*(b - a))
    nrm = np.array([-e[1], e[0]])
    nrm = nrm if np.dot(nrm, outward) > 0 else -nrm
    assert q.margin(m + 0.002 * nrm)[0] == pytest.approx(-0.002, abs=1e-12)


def test_neighbours_share_edges_and_do_not_overlap():
    """Adjacent categories share the corners of their common CCT edge exactly, and no point of a
    dense grid lies strictly inside two quadrangles."""
    for a, b in zip(NOMINALS[:-1], NOMINALS[1:]):
        qa, qb = R.ansi_quadrangle(a), R.ansi_quadrangle(b)
        assert qa.cct_range_K[1] == qb.cct_range_K[0]
        assert np.allclose(qa.corners_upvp[[3, 2]], qb.corners_upvp[[0, 1]], atol=1e-12)
    u = np.linspace(0.19, 0.29, 260)
    v = np.linspace(0.44, 0.54, 260)
    P = np.stack(np.meshgrid(u, v), axis=-1).reshape(-1, 2)
    M = np.stack([R.ansi_quadrangle(n).margin(P) for n in NOMINALS])
    strictly = (M > 1e-12).sum(axis=0)
    assert strictly.max() == 1  # every quadrangle is hit, none overlaps another
    assert set(np.flatnonzero((M > 1e-12).any(axis=1))) == set(range(len(NOMINALS)))


def test_flexible_quadrangle_at_a_table_cct_matches_the_category():
    """A flexible category at a table's target and tolerance is that category's quadrangle."""
    cat = R.ANSI_C78377_2017[4000]
    f = R.ansi_flexible_quadrangle(cat.target_cct_K, cat.tolerance_K)
    assert np.allclose(f.corners_upvp, R.ansi_quadrangle(4000).corners_upvp, atol=1e-12)


# --------------------------------------------------------------------------- SDCM


@pytest.mark.parametrize("name", R.IEC60081_CENTRES)
def test_iec_centre_is_zero_steps_and_principal_axes_give_n(name):
    """Steps of the MacAdam quadratic form: 0 at the centre; a point on the n-step boundary
    along a principal axis (eigenvectors of [[g11, g12], [g12, g22]], computed here) gives n."""
    e = R.iec60081_ellipse(name)
    assert e.steps(e.centre_xy[None, :])[0] == 0.0
    G = np.array([[e.g11, e.g12], [e.g12, e.g22]])
    w, V = np.linalg.eigh(G)
    for n in (1.0, 2.0, 3.0, 5.0, 7.0):
        for k in range(2):
            p = e.centre_xy + n * V[:, k] / np.sqrt(w[k])
            assert e.steps(p[None, :])[0] == pytest.approx(n, rel=1e-12)
            q = e.centre_xy - n * V[:, k] / np.sqrt(w[k])
            assert e.steps(q[None, :])[0] == pytest.approx(n, rel=1e-12)


def test_macadam_1942_ellipse_axes_reproduce_the_table(colour):
    """Wyszecki & Stiles Table 2(5.4.1) (colour-science copy): the point a·n along the major axis
    at angle θ and b·n along the minor axis are n steps from the centre."""
    data = np.asarray(colour.models.DATA_MACADAM_1942_ELLIPSES, dtype=float)
    for k in (1, 13, 14, 25):
        row = data[k - 1]
        e = R.macadam1942_ellipse(k)
        a, b, th = row[2] * 1e-3, row[3] * 1e-3, np.radians(row[4])
        major = np.array([np.cos(th), np.sin(th)])
        minor = np.array([-np.sin(th), np.cos(th)])
        for n in (1.0, 3.0):
            assert e.steps((row[:2] + n * a * major)[None, :])[0] == pytest.approx(n, rel=1e-9)
            assert e.steps((row[:2] + n * b * minor)[None, :])[0] == pytest.approx(n, rel=1e-9)
        assert e.steps(row[None, :2])[0] == 0.0
        aa, bb, tt = e.axes()
        assert (aa, bb) == pytest.approx((a, b), rel=1e-9)
        assert tt == pytest.approx(row[4] % 180.0, abs=1e-6)


def test_iec_f4000_ellipse_is_macadam_sized(colour):
    """Plausibility against MacAdam (1942): IEC 60081 F4000 (0.380, 0.380) and MacAdam's ellipse 14
    at (0.385, 0.393) (a = 3.8e-3, b = 1.6e-3, θ = 65.5°) agree in size within 25 % and in
    orientation within 15° — a wrong coefficient (e.g. a sign of g12) would fail this."""
    a, b, th = R.iec60081_ellipse("F4000").axes()
    row = np.asarray(colour.models.DATA_MACADAM_1942_ELLIPSES, dtype=float)[13]
    assert abs(a / (row[2] * 1e-3) - 1) < 0.25 and abs(b / (row[3] * 1e-3) - 1) < 0.25
    assert abs(th - row[4]) < 15.0


def test_ellipse_margin_in_upvp():
    """Δu'v' to the n-step boundary: ~0 on it, positive inside, negative outside; and a point
    just outside along the major axis is about (distance in u'v') outside."""
    e = R.iec60081_ellipse("F3000")
    bnd = e.boundary_xy(3.0, 37)
    assert np.all(np.abs(e.margin_upvp(bnd, 3.0)) < 1e-7)
    assert e.margin_upvp(e.centre_xy[None, :], 3.0)[0] > 0
    a, b, th = e.axes()
    d = np.array([np.cos(np.radians(th)), np.sin(np.radians(th))])
    p_out = e.centre_xy + 3.2 * a * d
    p_on = e.centre_xy + 3.0 * a * d
    expect = -np.hypot(*(R.upvp_from_xy(p_out[None, :])[0] - R.upvp_from_xy(p_on[None, :])[0]))
    assert e.margin_upvp(p_out[None, :], 3.0)[0] == pytest.approx(expect, rel=0.05)


def test_polygon_signed_distance_square():
    """Unit square: hand-computed distances (inside, edge, outside, corner region)."""
    sq = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], dtype=float)
    pts = np.array([[0.5, 0.5], [0.1, 0.5], [1.0, 0.3], [1.5, 0.5], [2.0, 2.0], [np.nan, 0]])
    d = R.polygon_signed_distance(sq, pts)
    assert d[:5] == pytest.approx([0.5, 0.1, 0.0, -0.5, -np.sqrt(2)])
    assert np.isnan(d[5])
    # orientation does not matter
    assert R.polygon_signed_distance(sq[::-1], pts)[:5] == pytest.approx(d[:5])


def test_ellipse_margin_matches_a_dense_trace():
    """The fast Δu'v' to the n-step boundary agrees with plain geometry on a 20 000-vertex trace
    of the boundary (sign exact, distance within 2e-7), inside and outside, for every IEC centre."""
    rng = np.random.default_rng(3)
    for name in R.IEC60081_CENTRES:
        e = R.iec60081_ellipse(name)
        a = e.axes()[0]
        for n in (1.0, 3.0, 7.0):
            pts = e.centre_xy + rng.normal(0.0, n * a * 1.2, (120, 2))
            fast = e.margin_upvp(pts, n)
            brute = R.polygon_signed_distance(R.upvp_from_xy(e.boundary_xy(n, 20000)), R.upvp_from_xy(pts))
            assert np.all(np.sign(fast) == np.sign(brute))
            assert np.max(np.abs(fast - brute)) < 2e-7
