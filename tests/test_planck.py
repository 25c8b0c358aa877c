"""Physics checks of lumeval.metrics.planck against constants and laws the project did not write.

Sources:
- CODATA 2018 recommended values via ``scipy.constants`` (h, c, k exact since the 2019 SI):
  Wien's displacement constant b = 2.897771955e-3 m K, Stefan-Boltzmann σ = 5.670374419e-8
  W m⁻² K⁻⁴, c and k for the Rayleigh-Jeans law.
- Rayleigh-Jeans limit of Planck's law, M → 2πckT/λ⁴ for λT ≫ c2, with M/M_RJ = x/(eˣ − 1)
  = 1 − x/2 + x²/12 − … (x = c2/(λT)); textbook series expansion.
- CIE 15:2004 §3.1 (Eq. for CIE standard illuminant A, quoted from memory as "Eq. 3.1"):
  S_A(λ) = 100 (560/λ)⁵ [exp(1.435e7 / (2848·560)) − 1] / [exp(1.435e7 / (2848 λ)) − 1], λ in nm,
  i.e. a Planckian radiator at T = 2848 K with c2 = 1.435e-2 m K, normalised to 100 at 560 nm.
  The tabulated SPD is colour-science's copy of CIE 15:2004 Table T.1 (``SDS_ILLUMINANTS['A']``).
- colour-science's ``colour.colorimetry.planck_law`` (an independent implementation; it returns
  spectral radiance, π times smaller than the hemispherical exitance).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.constants as sc
from scipy import integrate, optimize

from lumeval.metrics.planck import C1_CODATA, C2_CIE, C2_CODATA, planck_exitance, wien_peak_nm

from .conftest import cie_illuminant

TEMPERATURES_K = (1000.0, 2856.0, 5000.0, 6500.0, 20000.0)


def _M(lam_nm: float, T: float) -> float:
    return float(planck_exitance(np.array([lam_nm]), T, c1=C1_CODATA, c2=C2_CODATA)[0])


def test_codata_constants_match_scipy():
    # CODATA 2018 via scipy.constants: c1 = 2πhc², c2 = hc/k.
    assert pytest.approx(2.0 * np.pi * sc.h * sc.c**2, rel=1e-15) == C1_CODATA
    assert pytest.approx(sc.h * sc.c / sc.k, rel=1e-15) == C2_CODATA
    assert pytest.approx(1.438776877e-2, rel=1e-9) == C2_CODATA  # CODATA 2018 printed value


@pytest.mark.parametrize("T", TEMPERATURES_K)
def test_peak_times_temperature_is_wien_b(T):
    # Wien's displacement law: λmax T = b = 2.897771955e-3 m K (CODATA 2018). The maximum is
    # located by scipy.optimize.brentq on a central difference of planck_exitance itself (a
    # plain function-value optimiser cannot locate a flat maximum better than ~1e-8).
    b = sc.value("Wien wavelength displacement law constant")
    assert b == pytest.approx(2.897771955e-3, rel=1e-10)
    h = 1e-6

    def slope(lam_nm):
        return _M(lam_nm * (1 + h), T) - _M(lam_nm * (1 - h), T)

    guess = b / T * 1e9
    lam_max = optimize.brentq(slope, 0.8 * guess, 1.2 * guess, xtol=1e-13, rtol=1e-15)
    assert lam_max * 1e-9 * T == pytest.approx(b, rel=1e-9)


def test_wien_helper_matches_codata():
    # The lead's wien_peak_nm against scipy's CODATA b.
    T = np.array(TEMPERATURES_K)
    np.testing.assert_allclose(wien_peak_nm(T) * 1e-9 * T, sc.Wien, rtol=1e-12)


@pytest.mark.parametrize("T", (300.0, 3000.0, 6500.0))
@pytest.mark.parametrize("x", (1e-2, 1e-3, 1e-4))
def test_rayleigh_jeans_limit(T, x):
    # M / (2πckT/λ⁴) = x/(eˣ−1) = 1 − x/2 + x²/12 + O(x⁴): the ratio tends to 1 with the
    # first-order correction 1 − x/2; the remainder is the x²/12 term.
    lam_m = C2_CODATA / (x * T)
    ratio = _M(lam_m * 1e9, T) / (2.0 * np.pi * sc.c * sc.k * T / lam_m**4)
    assert abs(ratio - 1.0) <= 0.5 * x * (1 + 1e-6)
    assert ratio - (1.0 - x / 2.0) == pytest.approx(x * x / 12.0, rel=1e-4, abs=1e-15)


@pytest.mark.parametrize("T", TEMPERATURES_K)
def test_total_exitance_is_stefan_boltzmann(T):
    # ∫ M dλ = σ T⁴ (σ from scipy.constants, CODATA 2018). Integrated with scipy.integrate.quad in
    # x = c2/(λT): dλ = c2/(T x²) dx, so the integrand is smooth and decays like x³e⁻ˣ.
    def integrand(x):
        lam_nm = C2_CODATA / (x * T) * 1e9
        return _M(lam_nm, T) * C2_CODATA / (T * x * x)

    low, _ = integrate.quad(integrand, 0.0, 50.0, epsabs=0.0, epsrel=1e-13, limit=200)
    high, _ = integrate.quad(integrand, 50.0, np.inf, epsabs=0.0, epsrel=1e-13, limit=200)
    assert low + high == pytest.approx(sc.Stefan_Boltzmann * T**4, rel=1e-8)


def test_cie_illuminant_a_is_planckian_2848_with_cie_c2(colour):
    # CIE 15:2004 §3.1: illuminant A = Planckian at 2848 K with c2 = 1.435e-2 m K, 100 at 560 nm.
    # The CIE table is printed to 6 significant figures; measured agreement 4e-6.
    wl, table = cie_illuminant(colour, "A")
    ours = planck_exitance(wl, 2848.0, c2=1.435e-2)
    ours = 100.0 * ours / planck_exitance(np.array([560.0]), 2848.0, c2=1.435e-2)[0]
    np.testing.assert_allclose(ours, table, rtol=1e-5)
    # The same curve with c2 = 1.4388e-2 needs T = 2848 × 1.4388/1.435 = 2855.54 K ("2856 K"):
    T_equiv = 2848.0 * C2_CIE / 1.435e-2
    ours2 = planck_exitance(wl, T_equiv, c2=C2_CIE)
    ours2 = 100.0 * ours2 / planck_exitance(np.array([560.0]), T_equiv, c2=C2_CIE)[0]
    np.testing.assert_allclose(ours2, table, rtol=1e-5)
    # ... and exactly 2856 K with 1.4388e-2 is measurably different (≈1.3e-3 at 300 nm).
    ours3 = planck_exitance(wl, 2856.0, c2=C2_CIE)
    ours3 = 100.0 * ours3 / planck_exitance(np.array([560.0]), 2856.0, c2=C2_CIE)[0]
    assert np.max(np.abs(ours3 / table - 1.0)) > 1e-3


@pytest.mark.parametrize("T", (1000.0, 2856.0, 6500.0))
@pytest.mark.parametrize("n", (1.0, 1.000277))
def test_agrees_with_colour_planck_law(colour, T, n):
    # colour.colorimetry.planck_law returns radiance L = M/π; same c1, c2 and refractive index.
    wl = np.arange(300.0, 1001.0)
    ours = planck_exitance(wl, T, c1=C1_CODATA, c2=C2_CODATA, n=n)
    theirs = np.pi * colour.colorimetry.planck_law(wl * 1e-9, T, c1=C1_CODATA, c2=C2_CODATA, n=n)
    np.testing.assert_allclose(ours, theirs, rtol=1e-12)


def test_vectorised_over_temperature():
    # (N,) temperatures give (N, W), each row the scalar result.
    wl = np.arange(380.0, 781.0, 5.0)
    T = np.array(TEMPERATURES_K)
    rows = planck_exitance(wl, T, c1=C1_CODATA, c2=C2_CODATA)
    assert rows.shape == (T.size, wl.size)
    for i, t in enumerate(T):
        # vectorised and scalar exp may use different SIMD kernels: a few ulp apart
        np.testing.assert_allclose(rows[i], planck_exitance(wl, t, c1=C1_CODATA, c2=C2_CODATA), rtol=1e-13)
