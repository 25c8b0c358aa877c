"""Channel mixes (lumeval.tunable.mix) checked against an independent Planckian locus.

The reference: the CIE 1931 2° colour-matching functions as colour-science ships them (CIE
15:2004 Table T.4) and Planck's law written here with c2 = 1.4388e-2 m K (CIE 15:2004 App. E);
the mix's (u, v) is summed here from those CMFs (CIE 15:2004 Eq. 7.1, §8.1), and its CCT and
Duv are found by an exact minimum-distance search along that locus (bounded scalar
minimisation in T; Duv positive above the locus, ANSI C78.377). None of lumeval's colorimetry
or CCT code is used for the reference.

The channel spectra are invented test data (Gaussian LED models), not measurements.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.optimize import minimize_scalar

from lumeval.errors import InputError, UsageError
from lumeval.spectra.model import SpectrumSet
from lumeval.tunable.mix import mix, parse_setpoints

WL = np.arange(380.0, 781.0, 1.0)
C2 = 1.4388e-2  # m K, CIE 15:2004


def g(peak, width):
    return np.exp(-0.5 * ((WL - peak) / width) ** 2)


WARM = 0.35 * g(450, 10) + g(600, 45) + 0.3 * g(650, 25)
COOL = 1.6 * g(452, 10) + g(560, 50)
COLD = 2.6 * g(452, 10) + g(560, 50)  # about 9400 K, below the locus
GREEN = g(525, 18)
RED = g(630, 12)
BLUE = g(460, 12)


@pytest.fixture(scope="module")
def ref(colour):
    """Independent colorimetry: (uv_of(values), exact_cct_duv(uv))."""
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    wl_t = np.asarray(cmfs.wavelengths, dtype=float)
    cm_t = np.asarray(cmfs.values, dtype=float)

    def uv_of_xyz(XYZ):
        X, Y, Z = XYZ[..., 0], XYZ[..., 1], XYZ[..., 2]
        d = X + 15 * Y + 3 * Z
        return np.stack([4 * X / d, 6 * Y / d], axis=-1)

    cm_wl = np.stack([np.interp(WL, wl_t, cm_t[:, k]) for k in range(3)], axis=-1)

    def uv_of(values):
        return uv_of_xyz(np.atleast_2d(values) @ cm_wl)

    def planck_uv(T):
        lam = wl_t * 1e-9
        S = 1.0 / (lam**5 * (np.exp(C2 / (lam * T)) - 1.0))
        return uv_of_xyz(S @ cm_t)

    def cct_duv(uv):
        out = []
        for p in np.atleast_2d(uv):
            def f(lt, p=p):
                return float(np.sum((planck_uv(np.exp(lt)) - p) ** 2))
            # bracket on a coarse grid, then bounded minimisation in log T
            grid = np.linspace(np.log(1000), np.log(20000), 400)
            k = int(np.argmin([f(x) for x in grid]))
            r = minimize_scalar(f, bounds=(grid[max(k - 1, 0)], grid[min(k + 1, grid.size - 1)]), method="bounded",
                                options={"xatol": 1e-10})
            T = float(np.exp(r.x))
            q = planck_uv(T)
            out.append((T, float(np.sign(p[1] - q[1]) * np.sqrt(r.fun))))
        return np.array(out)

    return uv_of, cct_duv, planck_uv


def channels(*cols, names=None):
    names = names or tuple(f"ch{i + 1}" for i in range(len(cols)))
    return SpectrumSet(WL, np.vstack(cols), names, tuple(f"test#{n}" for n in names))


def test_two_channels_reach_every_target_within_half_a_kelvin(ref):
    uv_of, cct_duv, _ = ref
    targets = np.arange(2700.0, 6501.0, 200.0)
    res = mix(channels(WARM, COOL), targets)
    span = cct_duv(uv_of(np.vstack([WARM, COOL])))[:, 0]
    inside = (targets > span.min() + 2) & (targets < span.max() - 2)
    assert inside.sum() >= 15
    assert np.all(res.reachable[inside])
    # weights normalised: the largest is 1 (exact by construction)
    assert np.all(res.weights[res.reachable].max(axis=1) == 1.0)
    spectra = res.weights[inside] @ np.vstack([WARM, COOL])
    exact = cct_duv(uv_of(spectra))
    # Issue 16: reported CCT within 0.5 K of the target; the exact search is the judge
    assert_allclose(exact[:, 0], targets[inside], atol=0.5, rtol=0)
    # the reported Duv is the mix's own (Ohno 2014 vs exact minimum distance: within 1e-5)
    assert_allclose(res.figure("duv")[inside], exact[:, 1], atol=1e-5, rtol=0)
    # and lumeval's own CCT of the mix agrees with the exact search (Ohno 2014: < 1 K)
    assert_allclose(res.figure("cct_K")[inside], exact[:, 0], atol=0.5, rtol=0)


def test_two_channels_outside_reach_are_not_reachable(ref):
    uv_of, cct_duv, _ = ref
    span = cct_duv(uv_of(np.vstack([WARM, COOL])))[:, 0]
    targets = np.array([span.min() - 100, 4000.0, span.max() + 300])
    res = mix(channels(WARM, COOL), targets)
    assert res.reachable.tolist() == [False, True, False]
    assert "not reachable" in res.reason[0] and "not reachable" in res.reason[2]
    assert np.all(np.isnan(res.weights[[0, 2]]))
    assert np.isnan(res.figure("Ra")[0]) and np.isfinite(res.figure("Ra")[1])


def test_three_channels_hit_cct_and_duv(ref):
    uv_of, cct_duv, _ = ref
    targets = np.arange(3000.0, 6001.0, 500.0)
    for duv in (0.0, 0.003, -0.004):
        res = mix(channels(WARM, COLD, GREEN), targets, duv=duv)
        assert res.reachable.all(), res.reason
        exact = cct_duv(uv_of(res.weights @ np.vstack([WARM, COLD, GREEN])))
        assert_allclose(exact[:, 0], targets, atol=0.5, rtol=0)
        assert_allclose(exact[:, 1], duv, atol=1e-4, rtol=0)
        assert np.all(res.weights >= 0)


def test_three_channels_ansi_duv_target(ref, colour):
    uv_of, cct_duv, _ = ref
    targets = np.array([3000.0, 4000.0, 5000.0])
    res = mix(channels(WARM, COLD, GREEN), targets, duv="ansi")
    # ANSI C78.377-2017 flexible-CCT target Duv 57700/T² − 44.6/T + 0.00854 (T ≥ 2780 K);
    # secondary copy quoted in /work/shared/reference-values.md (Table 1 centres reproduce it)
    want = 57700 / targets**2 - 44.6 / targets + 0.00854
    exact = cct_duv(uv_of(res.weights @ np.vstack([WARM, COLD, GREEN])))
    assert_allclose(exact[:, 1], want, atol=1e-4, rtol=0)
    assert_allclose(exact[:, 0], targets, atol=0.5, rtol=0)


def test_three_channels_outside_gamut_not_reachable():
    res = mix(channels(WARM, COLD, GREEN), np.array([4000.0]), duv=-0.04)
    assert not res.reachable[0]
    assert "not reachable" in res.reason[0]


def test_optimiser_at_least_as_good_as_a_grid_search(colour):
    """Four channels: the optimiser's Rf is at least the best of a fine brute-force grid over
    every non-negative mix reaching the target (less the grid's own resolution, 0.05)."""
    from lumeval.criteria.regions import uv_from_cct_duv
    from lumeval.engine import evaluate

    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    cm = np.stack([np.interp(WL, np.asarray(cmfs.wavelengths, float), np.asarray(cmfs.values, float)[:, k])
                   for k in range(3)], axis=-1)
    cols = np.vstack([WARM, COLD, GREEN, RED])
    XYZc = cols @ cm
    S = XYZc @ np.array([1.0, 15.0, 3.0])
    for target, figure in ((4000.0, "Rf"), (3000.0, "Ra"), (5000.0, "ler_lm_per_W")):
        key = {"Rf": "Rf", "Ra": "Ra", "ler_lm_per_W": "ler"}[figure]
        res = mix(channels(*cols), np.array([target]), duv=0.0, maximise=key)
        assert res.reachable[0]
        u, v = uv_from_cct_duv(np.array([target]), np.array([0.0]))[0]
        a1 = 4 * XYZc[:, 0] - u * S
        a2 = 6 * XYZc[:, 1] - v * S
        t = np.linspace(0.0, 1.0, 161)
        w3, w4 = np.meshgrid(t, t, indexing="ij")
        w3, w4 = w3.ravel(), w4.ravel()
        M = np.array([[a1[0], a1[1]], [a2[0], a2[1]]])
        rhs = -np.stack([a1[2] * w3 + a1[3] * w4, a2[2] * w3 + a2[3] * w4])
        w12 = np.linalg.solve(M, rhs)
        W = np.column_stack([w12[0], w12[1], w3, w4])
        ok = np.all(W >= 0, axis=1) & (W.sum(axis=1) > 0)
        assert ok.sum() > 50, "the grid must cover the feasible mixes"
        W = W[ok]
        ss = SpectrumSet(WL, W @ cols, tuple(str(i) for i in range(W.shape[0])), ("",) * W.shape[0])
        grid_best = np.nanmax(evaluate(ss, keep_details=False).figure(figure))
        got = res.figure(figure)[0]
        assert got >= grid_best - 0.05, (figure, got, grid_best)


def test_parse_setpoints():
    assert_allclose(parse_setpoints("2700:6500:10"), np.arange(2700, 6501, 10.0), rtol=0, atol=1e-9)
    assert parse_setpoints("2700:6500:10").size == 381
    assert parse_setpoints("3000,4000").tolist() == [3000.0, 4000.0]
    for bad in ("2700:6500", "6500:2700:100", "2700:6500:0", "abc", "500,3000", "2700:6500:333"):
        with pytest.raises(UsageError):
            parse_setpoints(bad)
    # a step so small that the count of setpoints overflows a float: a usage error (it was an
    # OverflowError), and a huge count is written short
    with pytest.raises(UsageError, match="more than 20001 setpoints"):
        parse_setpoints("1000:20000:1e-320")
    with pytest.raises(UsageError, match=r"gives about 1e\+303 setpoints"):
        parse_setpoints("3000:4000:1e-300")


def test_bad_channels():
    with pytest.raises(InputError, match="at least two channels"):
        mix(channels(WARM), np.array([3000.0]))
    with pytest.raises(InputError, match="both named"):
        mix(channels(WARM, COOL, names=("a", "a")), np.array([3000.0]))


def test_joined_channels_keep_interpolation_overshoot_and_are_not_prepared_again():
    """Channels brought onto one grid keep Sprague's overshoot below zero as computed (rule of
    docs/input-files.md: only measured negatives are noise); preparing or evaluating the joined
    set must not clip it again. Truth: the joined values themselves (what went in)."""
    import numpy as np
    from numpy.testing import assert_allclose

    from lumeval.spectra.model import SpectrumSet
    from lumeval.spectra.prepare import prepare
    from lumeval.tunable.api import join_grids

    wl5 = np.arange(380.0, 781.0, 5.0)  # 5 nm stays 5 nm in prepare(); join_grids interpolates it
    narrow = np.exp(-0.5 * ((wl5 - 450.0) / 2.0) ** 2) + 1e-3  # a narrow band sampled at 5 nm
    wl1 = np.arange(380.0, 781.0, 1.0)
    broad = np.exp(-0.5 * ((wl1 - 600.0) / 60.0) ** 2)
    a = prepare(SpectrumSet(wl5, narrow[None, :], ("blue",), ("blue.csv",)))
    b = prepare(SpectrumSet(wl1, broad[None, :], ("warm",), ("warm.csv",)))
    joined = join_grids([a, b])
    assert all(s.prepared for s in joined)
    assert joined[0].values.min() < 0  # Sprague overshoot is there, as computed
    again = prepare(joined[0])
    assert_allclose(again.values, joined[0].values, rtol=0, atol=0)  # a copy: exact by construction


def test_nothing_to_maximise_with_two_or_three_channels_is_said():
    """With two channels a CCT fixes the weights, with three a (CCT, Duv) does: the run says that
    --maximise has nothing to choose from instead of implying an optimisation took place."""
    two = mix(channels(WARM, COOL), np.array([3500.0]), maximise="Ra")
    assert any("nothing to maximise (Ra) with two channels" in n for n in two.notes)
    three = mix(channels(WARM, COLD, GREEN), np.array([4000.0]), duv=0.0, maximise="ler")
    assert any("nothing to maximise (ler) with three channels" in n for n in three.notes)


def test_four_channel_mix_reports_progress_per_setpoint():
    """A listener (lumeval.progress) hears every reachable setpoint solved, then the mixes
    evaluated; counts grow to their totals. Behaviour only, no colour-science numbers."""
    from lumeval.progress import EVALUATING, SOLVING

    seen = []
    targets = np.array([3000.0, 3500.0, 4000.0])
    res = mix(channels(WARM, COLD, GREEN, RED), targets, duv=0.0, maximise="Rf",
              progress=lambda s, k, n: seen.append((s, k, n)))
    n = int(res.reachable.sum())
    assert n >= 2
    assert [x for x in seen if x[0] == SOLVING] == [(SOLVING, k, n) for k in range(1, n + 1)]
    assert [x for x in seen if x[0] == EVALUATING][-1] == (EVALUATING, n, n)
    assert seen.index((SOLVING, n, n)) < seen.index((EVALUATING, n, n))
