"""Photometric figures (lumeval.metrics.photometry) against sources outside the project.

Sources used (each check names its own beside it):
- CIE S 026/E:2018 α-opic data table, DOI 10.25039/CIE.DS.vqqhzp5a: checksums recorded in the
  CIE's metadata file for the table (as reported by public repositories that validated the
  CIE file against that metadata; we could not read the CIE site from this machine).
- CIE S 026/E:2018 D65 α-opic efficacies of luminous radiation (mW/lm): S 0.8173, M 1.4558,
  L 1.6289, rhodopic 1.4497, melanopic 1.3262 — secondary (shared/reference-values.md), and the
  six-digit values printed in the documentation of an open MATLAB lighting toolbox
  (F. Rudawski, "Lighting Toolbox", function ciespec2aopic, https://frudawski.de/ciespec2aopic:
  D65 at 100 lx → 0.081729 0.145582 0.162890 0.144970 0.132621 W/m²; illuminant A at 100 lx →
  melanopic 0.065754 W/m², i.e. melanopic DER of A = 0.065754 / 0.132621 = 0.4958).
- luxpy 1.12.5 (GPLv3), an independent general-purpose library, as a test-only oracle:
  ``spd_to_ler`` and the CIE S 026 functions ``spd_to_aopicELR`` / ``spd_to_aopicDER`` (its
  own copy of the action spectra and of V(λ)). Used, never copied.
- colour-science 0.4.7 per-spectrum functions (``luminous_flux``, ``luminous_efficacy``) and
  its copies of CIE tables (illuminants A and D65 from CIE 15:2004 Table T.1, CIE 1951 V′(λ)).
- Wien's displacement constant b = 2.897771955e-3 m K (CODATA 2018, ``scipy.constants``).
"""

from __future__ import annotations

import hashlib
from importlib import resources

import numpy as np
import pytest

from lumeval.errors import ComputationError, GridError
from lumeval.metrics.photometry import (
    ALPHA_OPIC_NAMES,
    KM_LM_PER_W,
    alpha_opic_action_spectra_at,
    d65_alpha_opic_elr_W_per_lm,
    photometry,
)
from lumeval.metrics.planck import C1_CODATA, C2_CODATA, planck_exitance

from .conftest import cie_illuminant

# luxpy returns its five α-opic columns as (L-cone, M-cone, S-cone, rhodopic, melanopic);
# ours follow the CIE data table: (S-cone, M-cone, L-cone, rhodopic, melanopic).
LUXPY_TO_OURS = [2, 1, 0, 3, 4]

#: CIE S 026/E:2018, D65 α-opic efficacies of luminous radiation in mW/lm, 4 decimals.
D65_ELR_CIE_S026 = np.array([0.8173, 1.4558, 1.6289, 1.4497, 1.3262])


def _on_grid(colour, name: str, step: int = 1, lo: int = 360, hi: int = 780):
    """A CIE illuminant from colour-science's table, linearly interpolated onto an integer grid
    (colour-science's own interpolator for its CIE illuminant tables is linear)."""
    wl_t, v_t = cie_illuminant(colour, name)
    wl = np.arange(lo, hi + 1, step, dtype=float)
    return wl, np.interp(wl, wl_t, v_t)


# --------------------------------------------------------------------------- the data file


def test_action_spectra_file_is_the_cie_file():
    # CIE data table "CIE alpha-opic action spectra" (DOI 10.25039/CIE.DS.vqqhzp5a): the
    # checksums the CIE metadata file records for CIE_a-opic_action_spectra.csv.
    raw = (resources.files("lumeval") / "data" / "CIE_a-opic_action_spectra.csv").read_bytes()
    assert hashlib.sha256(raw).hexdigest() == "d69ff61bd49d63f530b4fcc7be9ba2db37bf31cba1bb50a8e87c1bc86f725250"
    assert hashlib.md5(raw).hexdigest() == "f1ddfef144176812c3cb9d8fba1f3141"


def test_action_spectra_agree_with_luxpys_independent_copy(luxpy):
    # luxpy ships its own copy of CIE S 026 Table 2 (wavelengths 380-780 nm).
    from luxpy.toolboxes.photbiochem import alpha_opic_quantities_cie_s026_2018_cie_tn003_2015 as m

    table = np.asarray(m._ACTIONSPECTRA_CIES026, dtype=float)
    theirs = np.nan_to_num(table[1:]).T[:, LUXPY_TO_OURS]
    ours = alpha_opic_action_spectra_at(table[0])
    # S-, M-, L-cone-opic and melanopic: identical values.
    np.testing.assert_allclose(ours[:, [0, 1, 2, 4]], theirs[:, [0, 1, 2, 4]], rtol=0, atol=1e-12)
    # Rhodopic: luxpy carries V'(λ) to 4 digits, the CIE table to 3 significant figures.
    np.testing.assert_allclose(ours[:, 3], theirs[:, 3], rtol=5e-3, atol=1e-12)


def test_rhodopic_is_cie_1951_scotopic_rounded(colour):
    # CIE S 026/E:2018: the rhodopic action spectrum is the CIE 1951 scotopic V'(λ) (quoted from
    # memory); the CIE data table gives it to 3 significant figures. colour-science's V'(λ) is an
    # independent copy of the CIE 1951 table.
    sd = colour.SDS_LEFS["CIE 1951 Scotopic Standard Observer"]
    wl = np.asarray(sd.wavelengths, dtype=float)
    vp = np.asarray(sd.values, dtype=float)
    rh = alpha_opic_action_spectra_at(wl)[:, 3]
    half_unit_3sf = 0.5 * 10.0 ** (np.floor(np.log10(rh)) - 2)
    assert np.all(np.abs(rh - vp) <= half_unit_3sf * (1 + 1e-9))


def test_action_spectra_peaks_and_range():
    # CIE S 026/E:2018 Table 2: each action spectrum is normalised to a maximum of 1 (the cone
    # functions peak between 1 nm samples, so their largest tabulated value is just below 1);
    # the melanopic one peaks at 490 nm (CIE table row "490,...,1.00000E+00"). Zero outside
    # 380-780 nm.
    wl = np.arange(360.0, 831.0)
    s = alpha_opic_action_spectra_at(wl)
    assert np.all(s.max(axis=0) <= 1.0) and np.all(s.max(axis=0) > 0.9999)
    assert s[wl == 490.0, 4][0] == 1.0
    assert wl[np.argmax(s[:, 4])] == 490.0
    assert np.all(s[(wl < 380) | (wl > 780)] == 0.0)
    assert ALPHA_OPIC_NAMES[4] == "melanopic"


# --------------------------------------------------------------------------- CIE S 026 ratios


def test_d65_reference_efficacies_match_cie_s026():
    # CIE S 026/E:2018: D65 α-opic ELRs rounded to 4 decimals (mW/lm).
    elr = d65_alpha_opic_elr_W_per_lm() * 1000.0
    # rounded to 4 decimals: within half a unit of the last place (plus round-off)
    np.testing.assert_allclose(elr, D65_ELR_CIE_S026, rtol=0, atol=0.5e-4 + 1e-12)
    # Lighting Toolbox documentation (ciespec2aopic, D65 at 100 lx), 6 digits: these were
    # computed over 360-830 nm; our 380-780 nm reference agrees to 2.5e-5 relative.
    toolbox = np.array([0.081729, 0.145582, 0.162890, 0.144970, 0.132621]) * 10.0
    np.testing.assert_allclose(elr, toolbox, rtol=2.5e-5)


@pytest.mark.parametrize("lo,hi,step,tol", [(380, 780, 1, 1e-12), (360, 780, 1, 3e-6), (360, 780, 5, 2e-4)])
def test_melanopic_der_of_d65_is_one(colour, lo, hi, step, tol):
    # CIE S 026/E:2018 definition: the α-opic DER of D65 is 1. On a 1 nm grid over the action
    # spectra's range this is exact; extending to 360 nm adds V(λ) below 380 nm (≈1.4e-6); a
    # 5 nm grid carries the summation error of coarser sampling (measured: melanopic 1.0e-4,
    # all five α-opic DERs ≤ 2.9e-4).
    wl, d65 = _on_grid(colour, "D65", step, lo, hi)
    res = photometry(wl, d65)
    np.testing.assert_allclose(res.melanopic_der, 1.0, rtol=0, atol=tol)
    np.testing.assert_allclose(res.alpha_opic_der[0], 1.0, rtol=0, atol=max(tol, 3e-4 if step == 5 else tol))


def test_melanopic_der_of_illuminant_a_matches_published(colour):
    # Lighting Toolbox documentation (ciespec2aopic): A at 100 lx has E_mel = 0.065754 W/m²,
    # D65 at 100 lx 0.132621 W/m² → DER(A) = 0.4958 (4 digits; shared/reference-values.md).
    wl, a = _on_grid(colour, "A", 1)
    res = photometry(wl, a)
    assert abs(res.melanopic_der[0] - 0.4958) < 1e-4
    assert abs(res.alpha_opic_elr_mW_per_lm[0, 4] - 0.65754) < 1e-4


@pytest.mark.parametrize("name", ["A", "D65", "FL2", "FL11", "LED-B3", "LED-V1"])
def test_alpha_opic_against_luxpy(colour, luxpy, name):
    # luxpy 1.12.5 spd_to_aopicELR / spd_to_aopicDER with K = 683 lm/W (ours), 1 nm grid.
    from luxpy.toolboxes import photbiochem as pb

    wl, s = _on_grid(colour, name, 1, 380, 780)
    data = np.vstack([wl, s])
    res = photometry(wl, s)
    elr_lx = np.asarray(pb.spd_to_aopicELR(data.copy(), K=KM_LM_PER_W))[0, LUXPY_TO_OURS] * 1000.0
    der_lx = np.asarray(pb.spd_to_aopicDER(data.copy(), K=KM_LM_PER_W))[0, LUXPY_TO_OURS]
    cols = [0, 1, 2, 4]  # identical action spectra
    np.testing.assert_allclose(res.alpha_opic_elr_mW_per_lm[0, cols], elr_lx[cols], rtol=1e-7)
    # DER: luxpy takes D65 from its own 1 nm table, we interpolate CIE 15 5 nm data (2.5e-7)
    np.testing.assert_allclose(res.alpha_opic_der[0, cols], der_lx[cols], rtol=1e-6)
    # rhodopic: luxpy's 4-digit V'(λ) against the CIE table's 3 significant figures
    np.testing.assert_allclose(res.alpha_opic_elr_mW_per_lm[0, 3], elr_lx[3], rtol=2e-4)


def test_alpha_opic_5nm_against_luxpy(colour, luxpy):
    # The 5 nm tables of CIE 15:2004 used as measured (5 nm grid). luxpy interpolates 5 nm data
    # to 1 nm before summing, we sum at 5 nm (CIE 15:2004 §7.1), so the two agree closely for
    # smooth spectra (measured ≤ 8e-6) and less for line spectra (FL2/FL11: ≈2e-4).
    from luxpy.toolboxes import photbiochem as pb

    for name, rtol in (("A", 2e-5), ("D65", 2e-5), ("LED-B3", 2e-5), ("FL2", 3e-4), ("FL11", 3e-4)):
        wl, s = _on_grid(colour, name, 5, 380, 780)
        res = photometry(wl, s)
        der_lx = np.asarray(pb.spd_to_aopicDER(np.vstack([wl, s]), K=KM_LM_PER_W))[0, LUXPY_TO_OURS]
        np.testing.assert_allclose(res.melanopic_der[0], der_lx[4], rtol=rtol)


# --------------------------------------------------------------------------- LER and S/P


@pytest.mark.parametrize(
    "name,lo,hi,step",
    [("A", 360, 780, 1), ("A", 380, 780, 5), ("D65", 360, 780, 1), ("D65", 380, 780, 5), ("E", 360, 830, 1), ("E", 380, 780, 1)],
)
def test_ler_against_luxpy(colour, luxpy, name, lo, hi, step):
    # luxpy.spd_to_ler (its own V(λ) table; sum over the data's own grid) with K = 683 lm/W.
    if name == "E":
        wl = np.arange(lo, hi + 1, step, dtype=float)
        s = np.full(wl.size, 100.0)  # equal-energy spectrum (CIE illuminant E)
    else:
        wl, s = _on_grid(colour, name, step, lo, hi)
    ours = photometry(wl, s).ler_lm_per_W[0]
    theirs = float(np.ravel(luxpy.spd_to_ler(np.vstack([wl, s]), K=KM_LM_PER_W))[0])
    assert ours == pytest.approx(theirs, rel=1e-9)


def test_ler_range_dependence_example(luxpy):
    # The module docstring's example (equal-energy spectrum: 155.0 lm/W over 360-830 nm, 182.0 over
    # 380-780 nm), checked with luxpy.spd_to_ler.
    for lo, hi, expected in ((360, 830, 155.0), (380, 780, 182.0)):
        wl = np.arange(lo, hi + 1, dtype=float)
        ours = photometry(wl, np.ones(wl.size)).ler_lm_per_W[0]
        theirs = float(np.ravel(luxpy.spd_to_ler(np.vstack([wl, np.ones(wl.size)]), K=KM_LM_PER_W))[0])
        assert ours == pytest.approx(theirs, rel=1e-9)
        assert round(ours, 1) == expected


def test_ler_of_a_short_spectrum_counts_its_extension(colour, luxpy):
    # docs/metrics.md: a spectrum covering less than 380-780 nm is extended by repeating its end
    # values, and that extension counts in ∫S dλ. A 3000 K Planckian radiator (colour-science's
    # Planck's law) sampled at 400-700 nm, through the engine (which prepares it): luxpy's
    # spd_to_ler of the same spectrum extended by hand gives lumeval's figure; over the 400-700 nm
    # data alone luxpy gives another (the docs' 167.7 and 254.3 lm/W, to 0.1 lm/W).
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    wl = np.arange(400.0, 701.0)
    s = colour.colorimetry.planck_law(wl * 1e-9, 3000.0)
    ev = evaluate(SpectrumSet(wl, s[None], ("bb",), ("bb.csv",)))
    assert any(w.startswith("EXTRAPOLATED") for w in ev.warnings[0])
    ours = ev.figure("ler_lm_per_W")[0]
    wl_x = np.arange(380.0, 781.0)
    s_x = np.concatenate([np.full(20, s[0]), s, np.full(80, s[-1])])
    extended = float(np.ravel(luxpy.spd_to_ler(np.vstack([wl_x, s_x]), K=KM_LM_PER_W))[0])
    measured = float(np.ravel(luxpy.spd_to_ler(np.vstack([wl, s]), K=KM_LM_PER_W))[0])
    assert ours == pytest.approx(extended, rel=1e-9)
    assert (round(ours, 1), round(measured, 1)) == (167.7, 254.3)


def test_ler_against_colour_luminous_efficacy(colour):
    # colour.luminous_efficacy integrates with the trapezoid rule; on a spectrum that vanishes at
    # both ends of the grid the trapezoid and the plain sum coincide, so the values must agree.
    wl = np.arange(360.0, 831.0)
    for centre, width in ((450.0, 10.0), (530.0, 15.0), (610.0, 12.0)):
        s = np.exp(-0.5 * ((wl - centre) / width) ** 2)
        sd = colour.SpectralDistribution(dict(zip(wl, s)))
        assert photometry(wl, s).ler_lm_per_W[0] == pytest.approx(colour.luminous_efficacy(sd), rel=1e-9)


@pytest.mark.parametrize("name,expected", [("A", 1.41), ("D65", 2.46)])
def test_sp_ratio_against_colour_luminous_flux(colour, name, expected):
    # S/P = K'm ∫S V' / (Km ∫S V), computed independently with colour.colorimetry.luminous_flux
    # (CIE 1951 V' with K'm = 1700, CIE 1924 V with Km = 683; trapezoid rule, ends negligible here).
    # shared/reference-values.md quotes ≈1.41 (A) and ≈2.46 (D65) — derived values.
    wl, s = _on_grid(colour, name, 1)
    sd = colour.SpectralDistribution(dict(zip(wl, s)))
    scot = colour.colorimetry.luminous_flux(sd, colour.SDS_LEFS["CIE 1951 Scotopic Standard Observer"], 1700.0)
    phot = colour.colorimetry.luminous_flux(sd, colour.SDS_LEFS["CIE 1924 Photopic Standard Observer"], 683.0)
    ours = photometry(wl, s).sp_ratio[0]
    assert ours == pytest.approx(scot / phot, rel=1e-6)
    assert round(ours, 2) == expected


@pytest.mark.parametrize("name", ["A", "D65", "FL2", "LED-B3"])
def test_sp_ratio_against_luxpy(colour, luxpy, name):
    # luxpy.spd_to_power with its own CIE 1951 scotopic table ('1951_20_scotopic', K'm = 1700)
    # and CIE 1931 V(λ) (Km = 683). luxpy's 1 nm V'(λ) is the CIE 5 nm table linearly
    # interpolated (0.9974 at 508 nm where the CIE 1 nm table, which colour-science and we use,
    # has 1.000), so S/P differs by up to 1.3e-4 for smooth spectra and 3.7e-4 for FL2's lines.
    wl, s = _on_grid(colour, name, 1)
    data = np.vstack([wl, s])
    scot = luxpy.spd_to_power(data, ptype="pu", cieobs="1951_20_scotopic", K=1700.0)
    phot = luxpy.spd_to_power(data, ptype="pu", cieobs="1931_2", K=683.0)
    theirs = float(np.ravel(scot / phot)[0])
    assert photometry(wl, s).sp_ratio[0] == pytest.approx(theirs, rel=5e-4)


# --------------------------------------------------------------------------- peak wavelength


def test_peak_of_gaussian_line():
    # A Gaussian line centred at 532.3 nm: the peak is the grid point nearest the centre
    # (common practice, no source: the maximum of a symmetric line is at its centre).
    for step, expected in ((1, 532.0), (5, 530.0)):
        wl = np.arange(360.0, 831.0, step)
        s = np.exp(-0.5 * ((wl - 532.3) / 8.0) ** 2)
        peak = photometry(wl, s).peak_nm[0]
        assert peak == expected
        assert abs(peak - 532.3) <= step


def test_peak_of_blackbody_follows_wien():
    # Wien's displacement law, b = 2.897771955e-3 m K (CODATA 2018, scipy.constants.Wien).
    import scipy.constants as sc

    T = 5000.0
    lam_wien_nm = sc.Wien / T * 1e9  # 579.55 nm
    for step in (1, 5):
        wl = np.arange(360.0, 831.0, step)
        s = planck_exitance(wl, T, c1=C1_CODATA, c2=C2_CODATA)
        assert abs(photometry(wl, s).peak_nm[0] - lam_wien_nm) <= step


def test_peak_ties_go_to_the_shortest_wavelength():
    # Documented tie rule (lumeval's choice): the first of equal maxima.
    wl = np.arange(380.0, 781.0)
    s = np.zeros(wl.size)
    s[[100, 200]] = 1.0
    assert photometry(wl, s).peak_nm[0] == 480.0


# --------------------------------------------------------------------------- shapes and edges


def test_vectorised_equals_one_by_one(colour):
    # Stacking spectra must not change any figure (arrays (N, W) → (N,), (N, 5)).
    rows = [_on_grid(colour, n, 1, 380, 780)[1] for n in ("A", "D65", "FL2", "LED-B3")]
    wl = np.arange(380.0, 781.0)
    stacked = photometry(wl, np.vstack(rows))
    assert stacked.ler_lm_per_W.shape == (4,) and stacked.alpha_opic_der.shape == (4, 5)
    for i, row in enumerate(rows):
        single = photometry(wl, row)
        assert single.ler_lm_per_W.shape == (1,)
        for field in ("ler_lm_per_W", "sp_ratio", "melanopic_der", "peak_nm"):
            assert getattr(stacked, field)[i] == pytest.approx(getattr(single, field)[0], rel=1e-13)
    np.testing.assert_array_equal(stacked.melanopic_der, stacked.alpha_opic_der[:, 4])


def test_scale_invariance(colour):
    # Every figure is a ratio: scaling the spectrum must not change it (definition).
    wl, s = _on_grid(colour, "FL11", 1, 380, 780)
    a, b = photometry(wl, s), photometry(wl, 1234.5 * s)
    for field in ("ler_lm_per_W", "sp_ratio", "melanopic_der", "peak_nm"):
        assert getattr(b, field)[0] == pytest.approx(getattr(a, field)[0], rel=1e-12)


def test_undefined_figures_are_nan_with_a_reason():
    # Ratios with a zero or negative denominator are undefined (definition); lumeval reports NaN
    # and says why rather than printing a meaningless number.
    wl = np.arange(380.0, 781.0)
    zero = np.zeros(wl.size)
    nan_row = np.ones(wl.size)
    nan_row[10] = np.nan
    dark = np.zeros(wl.size)  # positive radiant power but negative V-weighted sum (noise)
    dark[0], dark[175] = 1.0, -1e-3  # 380 nm (V = 3.9e-5) and 555 nm (V = 1)
    deep_red = np.zeros(wl.size)
    deep_red[-1] = 1.0  # 780 nm only: V(780) = 1.5e-5 > 0, still defined
    res = photometry(wl, np.vstack([zero, nan_row, dark, np.ones(wl.size), deep_red]))
    assert np.isnan(res.ler_lm_per_W[:3]).all() and np.isnan(res.melanopic_der[:3]).all()
    assert np.isnan(res.sp_ratio[:3]).all() and np.isnan(res.peak_nm[:2]).all()
    assert res.peak_nm[2] == 380.0
    assert all(res.reason[:3]) and res.reason[3] == "" and res.reason[4] == ""
    assert "V(λ)" in res.reason[2]
    assert np.isfinite(res.ler_lm_per_W[3:]).all() and np.isfinite(res.melanopic_der[3:]).all()


def test_bad_grid_raises_the_grid_error():
    """GridError (still a ComputationError, what photometry raised before: deprecated base)."""
    wl = np.arange(380.0, 781.0)
    with pytest.raises(GridError):
        photometry(wl, np.ones((2, wl.size - 1)))
    bad = wl.copy()
    bad[5] += 0.5
    with pytest.raises(GridError):
        photometry(bad, np.ones(wl.size))
    with pytest.raises(ComputationError):
        photometry(bad, np.ones(wl.size))
