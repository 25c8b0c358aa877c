"""Monte Carlo propagation (JCGM 101:2008) checked against the GUM law of propagation.

The oracle is first-order propagation (JCGM 100:2008 §5.1.2, u²(y) = Σ c_i² u²(x_i) for
independent inputs) with sensitivity coefficients derived *here*, analytically, from
colour-science's own CIE 1931 2° colour-matching functions and from a test spectrum defined by
closed-form functions (so its derivatives are exact): nothing below reuses lumeval's
colorimetry, interpolation or perturbation code to compute the expected values.

Tolerance: the relative standard deviation of a sample standard deviation from M normal draws
is about 1/√(2(M−1)) (1.3 % at M = 3000); we allow 6 %, i.e. more than 4 such standard
deviations, which also covers the small second-order terms of these small perturbations.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.spectra.model import SpectrumSet
from lumeval.uncertainty import (
    InstrumentModel,
    MonteCarloSettings,
    draw_spectra,
    propagate,
    summarise,
)
from lumeval.uncertainty.montecarlo import coverage_indices, numerical_tolerance, shift_spectra

WL = np.arange(380.0, 781.0, 1.0)


def _spd(lam):
    """A smooth, everywhere-positive white-LED-like test spectrum (closed form)."""
    lam = np.asarray(lam, dtype=float)
    pump = np.exp(-0.5 * ((lam - 452.0) / 9.0) ** 2)
    phosphor = 0.9 * np.exp(-0.5 * ((lam - 600.0) / 55.0) ** 2)
    base = 0.05 + 0.0001 * (lam - 380.0)
    return pump + phosphor + base


def _d1(lam, h=1e-3):
    return (_spd(lam + h) - _spd(lam - h)) / (2 * h)


def _d2(lam, h=1e-2):
    return (_spd(lam + h) - 2 * _spd(lam) + _spd(lam - h)) / (h * h)


@pytest.fixture(scope="module")
def cmf(colour):
    c = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    c = c.copy().align(colour.SpectralShape(380, 780, 1))
    return np.asarray(c.values, dtype=float)  # (W, 3)


def _xy_sensitivities(S, cmf):
    """∂x/∂S_j and ∂y/∂S_j of x = X/(X+Y+Z), y = Y/(X+Y+Z) with X = Σ S x̄ Δλ (CIE 15:2004 §7.1),
    differentiated by hand (quotient rule)."""
    X, Y, Z = S @ cmf
    T = X + Y + Z
    csum = cmf.sum(axis=1)
    cx = (cmf[:, 0] * T - X * csum) / T**2
    cy = (cmf[:, 1] * T - Y * csum) / T**2
    return cx, cy


def _gum_u(model: InstrumentModel, cmf):
    S = _spd(WL)
    peak = S.max()
    cx, cy = _xy_sensitivities(S, cmf)
    out = []
    for c in (cx, cy):
        var = 0.0
        # random noise, independent per wavelength
        sig = np.sqrt((model.noise_relative * S) ** 2 + (model.noise_absolute * peak) ** 2)
        var += np.sum((c * sig) ** 2)
        # wavelength offset e ~ N(0, u²): S(λ + e) ≈ S + e S'
        var += (np.sum(c * _d1(WL)) * model.wavelength_offset_nm) ** 2
        # bandpass: ζ (b²/12) S'' with ζ ~ U(−1, 1), u(ζ) = 1/√3
        var += (np.sum(c * (model.bandwidth_nm**2 / 12) * _d2(WL)) / np.sqrt(3)) ** 2
        # stray light: ζ s peak (flat), ζ ~ U(−1, 1)
        var += (np.sum(c) * model.stray_light * peak / np.sqrt(3)) ** 2
        # photometric scale: x, y are invariant to a common factor (no contribution)
        out.append(np.sqrt(var))
    return np.array(out)


_CASES = {
    "noise": InstrumentModel(0, 0.01, 0.002, 0, 0, 0),
    "wavelength": InstrumentModel(0.3, 0, 0, 0, 0, 0),
    "bandwidth": InstrumentModel(0, 0, 0, 5.0, 0, 0),
    "stray": InstrumentModel(0, 0, 0, 0, 0, 0.002),
    "all": InstrumentModel(0.2, 0.005, 0.001, 3.0, 0.03, 0.001),
}


@pytest.mark.parametrize("case", list(_CASES))
def test_mc_xy_uncertainty_matches_gum_first_order(case, cmf):
    model = _CASES[case]
    ss = SpectrumSet(WL, _spd(WL)[None], ("t",), ("t",))
    res = propagate(ss, model, MonteCarloSettings(draws=3000, seed=7), figures=("x", "y"))
    u_mc = np.array([res.u_of("x")[0], res.u_of("y")[0]])
    u_gum = _gum_u(model, cmf)
    assert np.all(u_gum > 1e-7), u_gum  # the perturbation is not trivially zero
    np.testing.assert_allclose(u_mc, u_gum, rtol=0.06)
    # small perturbations: the estimate stays on the measured value within MC noise (4 u/√M)
    for k, name in enumerate(("x", "y")):
        o = res.of(name)
        assert abs(o["mean"][0] - o["measured"][0]) < 4 * u_mc[k] / np.sqrt(3000) + 1e-9


def test_photometric_scale_changes_no_ratio_figure():
    """A common factor leaves every figure lumeval computes unchanged (they are all ratios,
    chromaticities or wavelengths): their Monte Carlo spread must be at rounding level."""
    ss = SpectrumSet(WL, _spd(WL)[None], ("t",), ("t",))
    res = propagate(ss, InstrumentModel(0, 0, 0, 0, 0.05, 0), MonteCarloSettings(draws=200, seed=3))
    rel = res.u[0] / np.maximum(np.abs(res.measured[0]), 1.0)
    finite = np.isfinite(rel)
    assert finite.all() and finite.size == len(res.quantities) > 70
    assert np.nanmax(rel) < 1e-9


def test_zero_uncertainty_draws_equal_the_data():
    rng = np.random.default_rng(0)
    s = _spd(WL)
    d = draw_spectra(WL, s, InstrumentModel(0, 0, 0, 0, 0, 0), 5, rng)
    assert d.shape == (5, WL.size)
    np.testing.assert_array_equal(d, np.broadcast_to(s, d.shape))


def test_seeded_runs_are_reproducible_and_seeds_differ():
    ss = SpectrumSet(WL, np.vstack([_spd(WL), _spd(WL - 3.0)]), ("a", "b"), ("a", "b"))
    model = InstrumentModel()
    r1 = propagate(ss, model, MonteCarloSettings(draws=150, seed=11), figures=("x", "Ra", "Rf"))
    r2 = propagate(ss, model, MonteCarloSettings(draws=150, seed=11), figures=("x", "Ra", "Rf"))
    r3 = propagate(ss, model, MonteCarloSettings(draws=150, seed=12), figures=("x", "Ra", "Rf"))
    np.testing.assert_allclose(r1.u, r2.u, rtol=1e-12, atol=0)
    np.testing.assert_allclose(r1.low, r2.low, rtol=1e-12, atol=0)
    assert np.nanmax(np.abs(r1.u - r3.u) / r1.u) > 1e-6  # another seed: other draws
    # each spectrum has its own stream: its draws do not depend on the other spectra
    r4 = propagate(ss.subset([0]), model, MonteCarloSettings(draws=150, seed=11), figures=("x", "Ra", "Rf"))
    np.testing.assert_allclose(r4.u[0], r1.u[0], rtol=1e-12, atol=0)
    # the stream is keyed to the spectrum's content, not to its place in the run: the same
    # spectrum in another batch (any index_offset) or another position gets the same draws
    r5 = propagate(ss.subset([1]), model, MonteCarloSettings(draws=150, seed=11), figures=("x", "Ra", "Rf"), index_offset=1)
    np.testing.assert_allclose(r5.u[0], r1.u[1], rtol=1e-12, atol=0)
    r6 = propagate(ss.subset([1]), model, MonteCarloSettings(draws=150, seed=11), figures=("x", "Ra", "Rf"))
    np.testing.assert_allclose(r6.u[0], r1.u[1], rtol=1e-12, atol=0)
    # two identical spectra in one run: identical draws; the two different ones: different draws
    twin = SpectrumSet(WL, np.vstack([_spd(WL), _spd(WL), _spd(WL - 3.0)]), ("a", "a2", "b"), ("a", "a2", "b"))
    r7 = propagate(twin, model, MonteCarloSettings(draws=150, seed=11), figures=("x", "Ra", "Rf"))
    np.testing.assert_allclose(r7.u[1], r7.u[0], rtol=1e-12, atol=0)
    np.testing.assert_allclose(r7.u[2], r1.u[1], rtol=1e-12, atol=0)


def test_shift_is_exact_for_quadratics_and_integer_shifts():
    """Cubic convolution (Keys 1981, a = −0.5) reproduces quadratics exactly and integer shifts
    are pure index moves."""
    x = np.arange(50.0)
    q = 0.3 * x**2 - 2 * x + 5
    out = shift_spectra(q, np.array([0.37, -0.81, 2.0]))
    inner = slice(4, 45)
    for k, s in enumerate((0.37, -0.81, 2.0)):
        xs = x + s
        np.testing.assert_allclose(out[k, inner], (0.3 * xs**2 - 2 * xs + 5)[inner], rtol=0, atol=1e-10)


def test_coverage_interval_indices_follow_jcgm101_7_7():
    # M = 2000, p = 0.95: q = 1900, r = 50 → [y_(50), y_(1950)] (1-based)
    assert coverage_indices(2000, 0.95) == (49, 1949)
    # M = 41: pM = 38.95 → q = 39, M − q = 2 → r = 1 → [y_(1), y_(40)]
    assert coverage_indices(41, 0.95) == (0, 39)
    # M = 100: q = 95, M − q = 5 odd → r = 3 → [y_(3), y_(98)]
    assert coverage_indices(100, 0.95) == (2, 97)


def test_summary_of_normal_samples_matches_scipy_quantiles():
    from scipy.stats import norm

    rng = np.random.default_rng(5)
    z = rng.standard_normal((200_000, 1)) * 2.0 + 10.0
    s = summarise(z, 0.95)
    assert abs(s["mean"][0] - 10.0) < 0.02
    assert abs(s["u"][0] - 2.0) < 0.02
    assert abs(s["low"][0] - (10 + 2 * norm.ppf(0.025))) < 0.05
    assert abs(s["high"][0] - (10 + 2 * norm.ppf(0.975))) < 0.05


def test_undefined_draws_are_counted_not_averaged():
    z = np.array([[1.0, np.nan], [2.0, np.nan], [3.0, 5.0], [4.0, 7.0]])
    s = summarise(z, 0.5)
    assert s["undefined_fraction"][0] == 0 and s["undefined_fraction"][1] == 0.5
    assert s["mean"][1] == 6.0
    assert s["u"][1] == pytest.approx(np.std([5.0, 7.0], ddof=1))


def test_numerical_tolerance_jcgm101_7_9_2():
    # u = 0.0032, one significant digit → 3 × 10⁻³, δ = 0.5 × 10⁻³; two digits → 32 × 10⁻⁴, δ = 0.5 × 10⁻⁴
    np.testing.assert_allclose(numerical_tolerance([0.0032], 1), [0.0005])
    np.testing.assert_allclose(numerical_tolerance([0.0032], 2), [0.00005])
    np.testing.assert_allclose(numerical_tolerance([25.7], 1), [5.0])
    assert np.isinf(numerical_tolerance([0.0], 1))[0]
    # u is written with n_dig digits *after rounding*: 0.0989 → 1 × 10⁻¹ (δ = 0.05), 9.7 → 1 × 10¹
    # (δ = 5), 0.997 with two digits → 10 × 10⁻¹ (δ = 0.05); 0.094 stays 9 × 10⁻² (δ = 0.005).
    # The exponent of u unrounded gave δ ten times too small (found by a review).
    np.testing.assert_allclose(numerical_tolerance([0.0989, 9.7, 0.094], 1), [0.05, 5.0, 0.005])
    np.testing.assert_allclose(numerical_tolerance([0.997], 2), [0.05])


def test_adaptive_procedure_stabilises_in_whole_runs():
    ss = SpectrumSet(WL, _spd(WL)[None], ("t",), ("t",))
    st = MonteCarloSettings(draws=None, seed=2, draws_block=500, max_draws=20_000, significant_digits=1)
    res = propagate(ss, InstrumentModel(), st, figures=("x", "y", "cct_K"), stabilise=("x", "y"))
    assert res.stabilised[0]
    assert res.draws[0] % 500 == 0 and res.draws[0] >= 1000
    # with two significant digits and a tiny cap the procedure must stop and say so
    st2 = MonteCarloSettings(draws=None, seed=2, draws_block=200, max_draws=1000, significant_digits=2)
    res2 = propagate(ss, InstrumentModel(), st2, figures=("x", "y", "cct_K", "Rf"))
    assert res2.draws[0] <= 1000
    assert not res2.stabilised[0]


def test_demo_spectrum_all_figures_have_finite_uncertainty():
    from pathlib import Path

    f = Path(__file__).resolve().parents[1] / "spectra_demo" / "downlights" / "candidate_A_aurora_3000K.csv"
    d = np.loadtxt(f, delimiter=",", skiprows=1)
    ss = SpectrumSet(d[:, 0], d[:, 1][None], ("A",), (str(f),))
    res = propagate(ss, InstrumentModel(), MonteCarloSettings(draws=300, seed=1))
    for name in ("x", "y", "cct_K", "duv", "Ra", "R9", "Rf", "Rg"):
        o = res.of(name)
        assert np.isfinite(o["u"][0]) and o["u"][0] > 0, name
        assert o["low"][0] <= o["measured"][0] <= o["high"][0], name


def test_bandpass_effect_against_a_numerical_slit_convolution():
    """The slit effect T⊗S − S of a triangular bandpass, checked against the convolution of a
    closed-form Gaussian band with a triangle of FWHM b done by scipy's adaptive quadrature
    (independent of the sampled kernel); agreement within the kernel's variance scaling
    (k²/(k²−1) ≤ 3 % for b = 6 nm on a 1 nm grid) plus sampling error."""
    from scipy.integrate import quad

    from lumeval.uncertainty.montecarlo import bandpass_effect

    def g(lam):
        return np.exp(-0.5 * ((lam - 560.0) / 12.0) ** 2)

    b = 6.0
    eff = bandpass_effect(g(WL), b, 1.0)
    for lam in (530.0, 548.0, 560.0, 575.0):
        conv = quad(lambda x, lam=lam: g(lam - x) * max(0.0, 1 - abs(x) / b) / b, -b, b, points=[0.0])[0]
        exact = conv - g(lam)
        i = int(lam - 380)
        assert abs(eff[i] - exact) < 0.05 * abs(exact) + 2e-4, (lam, eff[i], exact)


def test_bandpass_effect_three_point_form_and_noise():
    from lumeval.uncertainty.montecarlo import bandpass_effect

    s = _spd(WL)
    # b = h: (S[i−1] − 2 S[i] + S[i+1]) / 12, the Stearns & Stearns (1988) term
    e1 = bandpass_effect(s, 1.0, 1.0)
    np.testing.assert_allclose(e1[1:-1], (s[:-2] - 2 * s[1:-1] + s[2:]) / 12.0, rtol=1e-12)
    # on white noise the sampled-slit form smooths instead of amplifying (b = 8 nm, 1 nm grid):
    # a second difference would give sd ≈ √6 · 64/12 ≈ 13 times the noise
    rng = np.random.default_rng(0)
    noise = rng.standard_normal(4000)
    assert np.std(bandpass_effect(noise, 8.0, 1.0)) < 1.5


def test_mc_cct_ra_rf_match_gum_with_colour_science_sensitivities(colour):
    """CCT, Ra and Rf under a wavelength-scale offset e ~ N(0, 0.3²): the first-order GUM result
    u = |∂f/∂e|·u(e) (JCGM 100:2008 §5.1.2), with ∂f/∂e by central differences of colour-science's
    own per-spectrum functions (Ohno 2013 CCT, CIE 13.3 Ra, TM-30-18 Rf) on the exactly shifted
    closed-form spectrum, against lumeval's Monte Carlo through its own engine (M = 3000:
    relative MC standard deviation of u ≈ 1.3 %; tolerance 6 %)."""
    import warnings

    def figs(e):
        sd = colour.SpectralDistribution(dict(zip(WL, _spd(WL + e))))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            xy = colour.XYZ_to_xy(colour.sd_to_XYZ(sd, method="Integration"))
            cct = colour.temperature.uv_to_CCT_Ohno2013(colour.xy_to_UCS_uv(xy))[0]
            ra = colour.colour_rendering_index(sd)
            rf = colour.colour_fidelity_index(sd, method="ANSI/IES TM-30-18")
        return np.array([cct, ra, rf], dtype=float)

    d, ue = 0.05, 0.3
    c = (figs(d) - figs(-d)) / (2 * d)
    ss = SpectrumSet(WL, _spd(WL)[None], ("t",), ("t",))
    res = propagate(ss, InstrumentModel(ue, 0, 0, 0, 0, 0), MonteCarloSettings(draws=3000, seed=7),
                    figures=("cct_K", "Ra", "Rf"))
    np.testing.assert_allclose(res.u[0], np.abs(c) * ue, rtol=0.06)
