"""ANSI C78.377 category, SDCM steps from the nearest IEC 60081 centre, and Re.

Oracles
-------
- Chromaticities of (CCT, Duv) pairs from colour-science 0.4.7's ``CCT_to_uv_Ohno2013`` (an
  independent implementation of Ohno (2014)), not from lumeval's own inverse.
- Category centres x, y of ANSI C78.377-2017 Table 1 as listed in the project's reference notes
  (secondary; /work/shared/reference-values.md), independent of lumeval's corner tables.
- IEC 60081 colour centres from the same notes (secondary).
- colour-science's ``colour_rendering_index(..., additional_data=True)`` R1..R14 for Re.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.metrics.classify import ansi_category, classify, extended_rendering_index, nearest_sdcm

#: ANSI C78.377-2017 Table 1 centres (x, y) — secondary, reference notes.
ANSI_2017_CENTRES = {
    2200: (0.5018, 0.4153), 2500: (0.4806, 0.4141), 2700: (0.4578, 0.4101), 3000: (0.4339, 0.4033),
    3500: (0.4078, 0.3930), 4000: (0.3818, 0.3797), 4500: (0.3613, 0.3670), 5000: (0.3446, 0.3551),
    5700: (0.3287, 0.3425), 6500: (0.3123, 0.3283),
}
#: IEC 60081 colour centres (x, y) — secondary, reference notes.
IEC_CENTRES = {"F6500": (0.313, 0.337), "F5000": (0.346, 0.359), "F4000": (0.380, 0.380),
               "F3500": (0.409, 0.394), "F3000": (0.440, 0.403), "F2700": (0.463, 0.420)}


def _upvp_from_xy(xy):
    xy = np.atleast_2d(np.asarray(xy, float))
    x, y = xy[:, 0], xy[:, 1]
    d = -2 * x + 12 * y + 3  # CIE 15:2004 Eq. 8.3-8.4
    return np.stack([4 * x / d, 9 * y / d], axis=-1)


def _colour_upvp(colour, cct, duv):
    """(u', v') of (CCT, Duv) by colour-science's Ohno 2013 inverse (u' = u, v' = 1.5 v)."""
    uv = np.array([colour.temperature.CCT_to_uv_Ohno2013(np.array([t, d])) for t, d in zip(cct, duv)])
    return np.stack([uv[:, 0], 1.5 * uv[:, 1]], axis=-1)


def test_published_category_centres_fall_in_their_own_category():
    noms = sorted(ANSI_2017_CENTRES)
    xy = np.array([ANSI_2017_CENTRES[k] for k in noms])
    nominal, inside, margin = ansi_category(_upvp_from_xy(xy), "2017")
    np.testing.assert_array_equal(nominal, noms)
    assert inside.all()
    # a centre lies well inside: the Duv half-width is 0.006, i.e. at least ~0.004 in Δu'v'
    assert (margin > 0.003).all()


def test_2008_edition_has_no_2200_or_2500_category():
    xy = np.array([ANSI_2017_CENTRES[2200], ANSI_2017_CENTRES[3000]])
    nominal, inside, margin = ansi_category(_upvp_from_xy(xy), "2008")
    assert nominal[0] == 2700 and not inside[0] and margin[0] < 0  # nearest, outside
    assert nominal[1] == 3000 and inside[1]


def test_points_just_outside_are_reported_with_their_distance(colour):
    # 3045 K (the 3000 K target) with Duv 0.0001 + 0.006 + 0.003: 3e-3 in Duv above the top edge.
    # Duv is a distance in (u, v); v' = 1.5 v stretches it by between 1 and 1.5 in (u', v').
    p = _colour_upvp(colour, [3045.0, 3045.0], [0.0091, -0.0089])
    nominal, inside, margin = ansi_category(p, "2017")
    np.testing.assert_array_equal(nominal, [3000, 3000])
    assert not inside.any()
    assert np.all((-margin > 0.003 * 0.95) & (-margin < 0.003 * 1.55)), margin


def test_boundary_between_2700_and_3000_k(colour):
    # 2017 Table 1: 2725 + 145 = 3045 − 175 = 2870 K: the shared isotemperature edge
    p = _colour_upvp(colour, [2840.0, 2900.0], [0.0, 0.0])
    nominal, inside, _ = ansi_category(p, "2017")
    np.testing.assert_array_equal(nominal, [2700, 3000])
    assert inside.all()


def test_far_points_get_the_nearest_category(colour):
    p = _colour_upvp(colour, [10000.0, 1800.0], [0.0, 0.0])
    nominal, inside, margin = ansi_category(p, "2017")
    np.testing.assert_array_equal(nominal, [6500, 2200])
    assert not inside.any() and np.all(margin < -0.005)


def test_nan_chromaticity_gives_nan_not_a_category():
    nominal, inside, margin = ansi_category(np.array([[np.nan, np.nan], [0.25, 0.52]]), "2017")
    assert np.isnan(nominal[0]) and np.isnan(margin[0]) and not inside[0]
    assert np.isfinite(nominal[1])


def test_nan_chromaticity_gives_no_sdcm_centre():
    xy = np.array([IEC_CENTRES["F3000"], [np.nan, 0.4], IEC_CENTRES["F6500"]])
    centres, steps = nearest_sdcm(xy)
    assert centres == ("F3000", "", "F6500")
    assert all(type(c) is str for c in centres)
    assert np.isnan(steps[1]) and np.all(np.isfinite(steps[[0, 2]]))


def test_iec_centres_are_zero_steps_from_themselves():
    names = list(IEC_CENTRES)
    centres, steps = nearest_sdcm(np.array([IEC_CENTRES[k] for k in names]))
    assert list(centres) == names
    np.testing.assert_allclose(steps, 0.0, atol=1e-12)


def test_nearest_centre_is_the_one_with_fewest_steps():
    from lumeval.criteria.regions import iec60081_ellipse

    rng = np.random.default_rng(5)
    xy = np.column_stack([rng.uniform(0.30, 0.47, 200), rng.uniform(0.32, 0.43, 200)])
    centres, steps = nearest_sdcm(xy)
    table = {k: iec60081_ellipse(k).steps(xy) for k in IEC_CENTRES}
    for i in range(xy.shape[0]):
        best = min(table, key=lambda k: table[k][i])
        assert centres[i] == best
        assert steps[i] == table[best][i]  # the same number, selected: exact by construction


def test_classify_reports_the_edition():
    xy = np.array([ANSI_2017_CENTRES[4000]])
    assert classify(xy, _upvp_from_xy(xy)).ansi_edition == "2017"
    assert classify(xy, _upvp_from_xy(xy), "ANSI C78.377-2008").ansi_edition == "2008"


@pytest.mark.parametrize("name", ["FL2", "FL11", "LED-B3"])
def test_re_is_the_mean_of_r1_to_r14_of_colour_science(colour, name):
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    sd = colour.SDS_ILLUMINANTS[name]
    ev = evaluate(SpectrumSet(np.asarray(sd.wavelengths, float), np.asarray(sd.values, float)[None], (name,), (name,)))
    spec = colour.colour_rendering_index(sd, additional_data=True)
    theirs = np.mean([spec.Q_as[i].Q_a for i in range(1, 15)])
    # CCT differs slightly (Ohno vs Robertson in colour-science): Ri agree to ≤ 0.2 (test_metrics_cri)
    np.testing.assert_allclose(extended_rendering_index(ev.cri.R)[0], theirs, atol=0.2)


def test_re_rejects_a_wrong_number_of_indices():
    with pytest.raises(ValueError):
        extended_rendering_index(np.ones((2, 8)))
