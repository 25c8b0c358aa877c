"""The direct CIECAM02 / CAM02-UCS forward model of lumeval.metrics.tm30 against colour-science.

Outside reference: colour-science 0.4.7's vectorised ``colour.appearance.XYZ_to_CIECAM02``
(CIE 159:2004) followed by ``colour.models.JMh_CIECAM02_to_CAM02UCS`` (Luo, Cui & Li 2006), a
general-purpose library the project did not write, run with the CIE 224:2017 viewing conditions
(L_A = 100 cd/m², Y_b = 20, average surround, illuminant discounted: D = 1).

Inputs: thousands of random tristimulus values under random white points, and the 99 CIE 224:2017
colour evaluation samples (CES) under Planckian, CIE daylight and generated LED sources on 1 nm and
5 nm grids (the XYZ the TM-30 computation feeds to the model). Tolerance 1e-10 in J′, a′, b′ and
in the hue angle h (degrees, wherever M′ ≥ 1; near grey the hue is ill-conditioned); the measured
difference is ~1e-12 (floating-point order of operations only).
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.metrics import tm30 as T
from lumeval.metrics.colorimetry import OBSERVER_10, cmfs_at
from lumeval.metrics.reference import daylight_spd, planckian_spd

TOL = 1e-10


def _colour_science(XYZ, XYZ_w):
    """(J′a′b′ (M, K, 3), h (M, K)) by colour-science 0.4.7 (the reference)."""
    from lumeval._colour import load

    colour = load()
    from colour.appearance import VIEWING_CONDITIONS_CIECAM02, XYZ_to_CIECAM02
    from colour.models import JMh_CIECAM02_to_CAM02UCS

    with colour.utilities.domain_range_scale("reference"):
        s = XYZ_to_CIECAM02(XYZ, XYZ_w[:, None, :], 100.0, 20.0, VIEWING_CONDITIONS_CIECAM02["Average"],
                            discount_illuminant=True, compute_H=False)
        J, M, h = (np.asarray(v, dtype=float) for v in (s.J, s.M, s.h))
        Jab = np.asarray(JMh_CIECAM02_to_CAM02UCS(np.stack([J, M, h], axis=-1)), dtype=float)
    return Jab, h


def _compare(XYZ, XYZ_w):
    Jab, h = T.cam02ucs_cie224(XYZ, XYZ_w)
    Jab_ref, h_ref = _colour_science(XYZ, XYZ_w)
    assert Jab.shape == Jab_ref.shape and h.shape == h_ref.shape
    assert np.all(np.isfinite(Jab)) and np.all(np.isfinite(Jab_ref))
    dJab = np.abs(Jab - Jab_ref).max()
    # Hue difference across the 0/360 seam. Near the achromatic point h is ill-conditioned (a
    # 1e-12 change of a′, b′ turns it by more): there the arc length M′·Δh, already bounded by the
    # a′b′ check, is what matters; h itself is checked wherever M′ ≥ 1.
    dh_all = np.abs((h - h_ref + 180.0) % 360.0 - 180.0)
    chromatic = np.hypot(Jab_ref[..., 1], Jab_ref[..., 2]) >= 1.0
    dh = dh_all[chromatic].max() if chromatic.any() else 0.0
    assert dJab <= TOL, dJab
    assert dh <= TOL, dh
    assert np.all((h >= 0.0) & (h < 360.0))
    return dJab, dh


def test_random_colours_under_random_whites():
    """5,000 random surface-like colours (Y 1-95 %) under 50 whites spanning ~2,000-10,000 K."""
    rng = np.random.default_rng(224)
    m, k = 50, 100
    XYZ_w = np.column_stack([rng.uniform(80.0, 115.0, m), np.full(m, 100.0), rng.uniform(25.0, 130.0, m)])
    # random chromaticities inside a generous gamut, scaled to random Y
    x = rng.uniform(0.15, 0.6, (m, k))
    y = rng.uniform(0.15, 0.6, (m, k))
    Y = rng.uniform(1.0, 95.0, (m, k))
    XYZ = np.stack([x / y * Y, Y, (1.0 - x - y) / y * Y], axis=-1)
    XYZ = np.where(XYZ < 0, 0.5, XYZ)
    _compare(XYZ, XYZ_w)


def test_white_and_grey_independent_of_illuminant():
    """CIE 159:2004 definitions: the white has A = A_w, hence J = 100 (J′ = 170 / 1.7 = 100);
    with D = 1 the adapted white is R_c = G_c = B_c = Y_w for every illuminant, so a white and a
    grey of the same relative Y look the same under D65-like and A-like whites."""
    XYZ_w = np.array([[95.047, 100.0, 108.883], [109.85, 100.0, 35.585]])
    XYZ = np.stack([XYZ_w, XYZ_w * 0.2], axis=1)  # (2, 2, 3)
    Jab, _ = T.cam02ucs_cie224(XYZ, XYZ_w)
    assert np.allclose(Jab[:, 0, 0], 1.7 * 100.0 / (1.0 + 0.007 * 100.0), rtol=0, atol=1e-12)
    assert np.allclose(Jab[0], Jab[1], rtol=0, atol=1e-11)
    _compare(XYZ, XYZ_w)


@pytest.mark.parametrize("step", [1.0, 5.0])
def test_ces_under_reference_and_led_sources(step):
    """The 99 CES under 300 sources (Planckian 1,000-5,000 K, daylight 4,000-20,000 K, LEDs)."""
    wl = np.arange(380.0, 781.0, step)
    cmf10 = cmfs_at(wl, OBSERVER_10)
    R = T.ces_reflectances(wl)
    rng = np.random.default_rng(17)
    P = planckian_spd(wl, np.linspace(1000.0, 5000.0, 100))
    D = daylight_spd(wl, np.linspace(4000.0, 20000.0, 100))
    pump = np.exp(-0.5 * ((wl[None, :] - rng.uniform(440, 465, (100, 1))) / rng.uniform(8, 12, (100, 1))) ** 2)
    phos = np.exp(-0.5 * ((wl[None, :] - rng.uniform(535, 600, (100, 1))) / rng.uniform(35, 60, (100, 1))) ** 2)
    L = rng.uniform(0.1, 1.0, (100, 1)) * pump + phos
    S = np.concatenate([P, D, L])
    XYZ_w = S @ cmf10
    k = 100.0 / XYZ_w[:, 1]
    XYZ = np.einsum("mw,iw,wc->mic", S, R, cmf10) * k[:, None, None]
    _compare(XYZ, XYZ_w * k[:, None])
    # the same numbers through the TM-30 path (_jab builds XYZ with its own kernel)
    Jab, h = T._jab(wl, S, R, cmf10)
    Jab_ref, h_ref = _colour_science(XYZ, XYZ_w * k[:, None])
    assert np.abs(Jab - Jab_ref).max() <= TOL
    # the hue by the rule of _compare: h itself wherever M′ ≥ 1; below that (a few CES under the
    # 1,000 K Planckian sit at M′ ≈ 0.25) h is ill-conditioned and the arc length M′·Δh (radians)
    # is the quantity bounded. _jab builds XYZ with a kernel different from the einsum above, so
    # the inputs already differ by ~1e-13 relative; at M′ ≈ 0.25 that turned h by 1.3e-10° on
    # another machine's BLAS while M′·Δh stayed ~1e-12.
    dh = np.abs((h - h_ref + 180.0) % 360.0 - 180.0)
    M = np.hypot(Jab_ref[..., 1], Jab_ref[..., 2])
    assert dh[M >= 1.0].max() <= TOL
    assert (M * np.radians(dh)).max() <= TOL


def test_powers_and_the_rf_scale_agree_with_numpys_direct_functions():
    """The power and logarithm the forward model and the Rf scale are computed with (exp/log,
    numpy's vectorised functions) against numpy's ``np.power`` and ``np.log1p`` (the direct
    definitions): relative 1e-14 for the powers over the values the model meets and beyond
    (10⁻¹⁰ … 10⁶, exponents 0.42, 0.9 and c·z from 0.69·1.48 to 0.69·2.5), absolute 5e-14 for
    Rf = 10 ln(1 + exp((100 − 6.73 ΔE′)/10)) over ΔE′ 0 … 60 (CIE 224:2017 Eq. for Rf)."""
    from lumeval.metrics.cam02ucs import _pow_into, _spow_into

    rng = np.random.default_rng(11)
    y = 10.0 ** rng.uniform(-10, 6, 200_000)
    for p in (0.42, 0.9, 0.69 * 1.48, 0.69 * 2.5):
        np.testing.assert_allclose(_pow_into(y.copy(), p), np.power(y, p), rtol=1e-14, atol=0)
    p_arr = rng.uniform(0.69 * 1.48, 0.69 * 2.5, (1000, 1))
    x = rng.normal(size=(1000, 99)) * 10.0
    np.testing.assert_allclose(_spow_into(x.copy(), p_arr), np.sign(x) * np.power(np.abs(x), p_arr), rtol=1e-14, atol=0)
    special = np.array([0.0, np.inf, np.nan])
    got = _pow_into(special.copy(), 0.42)
    assert got[0] == 0.0 and got[1] == np.inf and np.isnan(got[2])
    assert np.signbit(_spow_into(np.array([-0.0, -8.0]), 0.42)).all()
    de = np.linspace(0.0, 60.0, 150_001)
    want = 10.0 * np.log1p(np.exp((100.0 - T.C_F * de) / 10.0))
    np.testing.assert_allclose(T._Rf_scale(de), want, rtol=0, atol=5e-14)


def test_ces_table_is_sprague_interpolation_of_its_5nm_values():
    """The CES 1 nm table as ``N @ A`` (lumeval.metrics.ces.ces_interpolation), which the 1 nm
    TM-30 product uses to regroup its sum (``_ces_xyz``).

    Outside references: the table itself (colour-science 0.4.7's copy of the CIE 224:2017 1 nm
    CES), reproduced within 4 units of 2⁻⁵³ of its largest value; and colour-science's
    ``SpragueInterpolator`` (CIE 167:2005), whose weights (the interpolation of each unit
    vector of the 5 nm nodes) the coefficients between 390 and 770 nm equal within 1e-12. The
    first and last two 5 nm intervals of the table follow another end rule than colour-science's
    extrapolation (e.g. 381 nm = 0.8496 R(380) + 0.1744 R(385) − 0.0256 R(390) + 0.0016 R(395));
    they are checked through the table only. Interior coefficients one fifth of the way, as
    CIE 167:2005 lists them (quoted from memory): 0.0128, −0.0976, 0.9344, 0.1744, −0.0256, 0.0016."""
    from lumeval._colour import load

    colour = load()
    got = T.ces_interpolation()
    assert got is not None
    N, A = got
    wl, R = T._ces_table()
    assert N.shape == (99, 81) and A.shape == (81, 401)
    np.testing.assert_allclose(N @ A, R, rtol=0, atol=4 * np.finfo(float).eps * np.abs(R).max())
    x5 = np.arange(380.0, 781.0, 5.0)
    weights = np.array([colour.SpragueInterpolator(x5, e)(wl) for e in np.eye(81)])  # (81, 401)
    interior = (wl >= 390.0) & (wl <= 770.0)
    np.testing.assert_allclose(A[:, interior], weights[:, interior], rtol=0, atol=1e-12)
    np.testing.assert_allclose(A[38:44, wl == 581.0].ravel(), [0.0128, -0.0976, 0.9344, 0.1744, -0.0256, 0.0016],
                               rtol=0, atol=1e-15)


@pytest.mark.parametrize("shift", [0.0, -0.05])
def test_ces_xyz_regrouped_equals_the_kernel_product(shift):
    """On the 1 nm grid the CES tristimulus values are computed as Σ_k N_ik Σ_λ S x̄ A_kλ
    (``_ces_xyz``); against the direct product with the (401, 297) kernel (the sum in the
    order CIE 224:2017 writes it) within 1e-13 of each source's largest value, for LED-like
    sources, Planckian ones and sources with negative values (measured noise; ``shift``)."""
    wl = np.arange(380.0, 781.0)
    cmf10, R, kernel = T._cfi_tables(wl)
    rng = np.random.default_rng(5)
    pump = np.exp(-0.5 * ((wl[None, :] - rng.uniform(440, 465, (200, 1))) / rng.uniform(8, 12, (200, 1))) ** 2)
    phos = np.exp(-0.5 * ((wl[None, :] - rng.uniform(535, 600, (200, 1))) / rng.uniform(35, 60, (200, 1))) ** 2)
    S = np.concatenate([rng.uniform(0.1, 1.0, (200, 1)) * pump + phos, planckian_spd(wl, np.linspace(1000, 25000, 50))])
    S = S / S.max(axis=1, keepdims=True) + shift * rng.random(S.shape)
    got = T._ces_xyz(wl, np.ascontiguousarray(S), kernel)
    want = (S @ kernel).reshape(S.shape[0], 99, 3)
    scale = np.abs(want).max(axis=(1, 2))[:, None, None]
    assert (np.abs(got - want) / scale).max() <= 1e-13
    # a view with a row stride (the 380-780 nm crop of a 360-830 nm spectrum) gives the same
    # (the library packs both alike; 1e-15 of the scale allows for a BLAS that does not)
    wide = np.zeros((S.shape[0], 471))
    wide[:, 20:421] = S
    assert (np.abs(T._ces_xyz(wl, wide[:, 20:421], kernel) - got) / scale).max() <= 1e-15
    # a kernel of other samples than the 99 CES is used as it is, on any grid
    few = kernel[:, :30]
    np.testing.assert_array_equal(T._ces_xyz(wl, S, few), (S @ few).reshape(S.shape[0], 10, 3))
    # the 5 nm grid keeps the kernel product itself
    wl5 = wl[::5]
    k5 = T._cfi_tables(wl5)[2]
    np.testing.assert_array_equal(T._ces_xyz(wl5, S[:, ::5], k5), (S[:, ::5] @ k5).reshape(S.shape[0], 99, 3))
