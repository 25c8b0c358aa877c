"""The engine end to end: all figures for the CIE F and LED illuminants against an independent
library, and the reference SPD it offers to reports."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from lumeval.engine import evaluate
from lumeval.spectra.model import SpectrumSet

from .conftest import cie_illuminant

F_AND_LED = [f"FL{i}" for i in range(1, 13)] + [
    "LED-B1", "LED-B2", "LED-B3", "LED-B4", "LED-B5", "LED-BH1", "LED-RGB1", "LED-V1", "LED-V2",
]


@pytest.fixture(scope="module")
def cie_sources(colour):
    """The CIE F (5 nm, 380-780) and LED (5 nm, 380-780) illuminants as one set."""
    wl0, _ = cie_illuminant(colour, "FL1")
    vals = []
    for name in F_AND_LED:
        wl, s = cie_illuminant(colour, name)
        vals.append(np.interp(wl0, wl, s))
        assert np.array_equal(wl, wl0)
    return SpectrumSet(wl0, np.array(vals), tuple(F_AND_LED), tuple(F_AND_LED))


@pytest.fixture(scope="module")
def ev(cie_sources):
    return evaluate(cie_sources)


def test_engine_agrees_with_luxpy(ev, cie_sources, luxpy):
    """Independent library (luxpy 1.12.5, its own CCT search, CRI and CIE 224/TM-30 code) on the
    same 5 nm data. Tolerances stated here; the measured agreement of colour-science and luxpy on
    these illuminants (shared colour-science notes) is Rf ≤ 0.002, Rg ≤ 0.001, Ra ≤ 0.07,
    R9 ≤ 0.2, CCT ≤ 0.7 K, Duv ≤ 7e-6; lumeval is closer on CCT because it uses the same method
    as luxpy (Ohno 2014)."""
    wl = cie_sources.wavelengths_nm
    spd = np.vstack([wl, cie_sources.values])
    xyz = luxpy.spd_to_xyz(spd, cieobs="1931_2", relative=True)
    T, duv = luxpy.xyz_to_cct(xyz, cieobs="1931_2", out="cct,duv")
    np.testing.assert_allclose(ev.cct_K, np.ravel(T), atol=0.05)
    np.testing.assert_allclose(ev.duv, np.ravel(duv), atol=1e-6)
    # luxpy's defaults round x, y and average rounded Ri; both switched off to compare unrounded
    ri = np.asarray(
        luxpy.cri.spd_to_cri(
            spd, cri_type="ciera-14", out="Rfi", rf_from_avg_rounded_rfi=False,
            cri_specific_pars={"round_xy_to": None},
        ),
        dtype=float,
    )
    np.testing.assert_allclose(ev.figure("Ra"), ri[:8].mean(axis=0), atol=0.1)
    np.testing.assert_allclose(ev.figure("R9"), ri[8], atol=0.35)
    rf, rg = luxpy.cri.spd_to_cri(spd, cri_type="iesrf-tm30-18", out="Rf,Rg")
    np.testing.assert_allclose(ev.figure("Rf"), np.ravel(rf), atol=0.003)
    np.testing.assert_allclose(ev.figure("Rg"), np.ravel(rg), atol=0.003)


def test_reference_spd_of_a_black_body_is_itself():
    """CIE 13.3: below 5000 K the reference is the Planckian radiator at the source's CCT; for a
    black body it reproduces the source (same luminance scaling)."""
    from colour.colorimetry import planck_law  # independent Planck implementation

    wl = np.arange(360.0, 831.0)
    s = planck_law(wl * 1e-9, 3200.0, c2=1.4388e-2)
    ev = evaluate(SpectrumSet(wl, s[None, :], ("bb",), ("bb",)))
    ref = ev.reference_spd(0)
    np.testing.assert_allclose(ref / s, 1.0, atol=2e-5)


def test_chunking_does_not_change_results(cie_sources, ev):
    small = evaluate(cie_sources, chunk_size=4, keep_details=False)
    for name in ("x", "cct_K", "duv", "Ra", "R9", "Rf", "Rg", "cie2017_Rf", "Rcs_h1", "ler_lm_per_W", "melanopic_der"):
        np.testing.assert_allclose(small.figure(name), ev.figure(name), rtol=1e-12, atol=1e-12)
    assert small.tm30.Jab_test.shape == (len(cie_sources), 0)
    # the per-spectrum texts (reasons, reference kinds, warnings), joined from the chunks in order
    assert small.warnings == ev.warnings and small.cct_reason == ev.cct_reason
    for part in ("cri", "tm30", "photometry"):
        a, b = getattr(small, part), getattr(ev, part)
        texts = [f.name for f in dataclasses.fields(a) if isinstance(getattr(a, f.name), tuple)]
        assert texts, part
        for f in texts:
            assert getattr(a, f) == getattr(b, f) and len(getattr(a, f)) in (0, len(cie_sources)), (part, f)


def test_memory_layout_does_not_change_results(cie_sources):
    """The same spectra as a C-ordered array and as a column-sliced view of a transposed one (a
    wide file's layout): the same bits (the claim, so compared exactly; the engine works on a
    C-ordered copy of each chunk: without it, figures differed by up to 2.5e-9 K in CCT)."""
    from lumeval.figures import names

    v = np.asarray(cie_sources.values, dtype=float)
    wide = np.empty((v.shape[1], v.shape[0] + 3))  # (wavelengths, spectra + 3): rows are wavelengths
    wide[:, 2:-1] = v.T
    view = wide[:, 2:-1].T  # (spectra, wavelengths), neither C- nor F-contiguous in the big block
    assert not view.flags["C_CONTIGUOUS"]
    a = evaluate(SpectrumSet(cie_sources.wavelengths_nm, np.ascontiguousarray(v), cie_sources.names, cie_sources.sources))
    b = evaluate(SpectrumSet(cie_sources.wavelengths_nm, view, cie_sources.names, cie_sources.sources))
    for name in names():
        np.testing.assert_array_equal(b.figure(name), a.figure(name), err_msg=name)


def _clear_cached_tables():
    from lumeval.metrics import colorimetry
    from lumeval.metrics import reference_table as rt

    for f in (rt._tm30_tables, rt._cri_tables, colorimetry._planck_table, colorimetry._planck_search):
        f.cache_clear()


def test_blas_thread_count_does_not_change_results(cie_sources):
    """Evaluated with one BLAS thread, and with every core's thread after the reference and
    Planckian tables were filled by direct calls with every core's thread: the same bits (the
    claim, so compared exactly; the engine and the cached tables run with one BLAS thread).
    On a one-core machine both runs use one thread and this checks nothing more than repeatability."""
    import os

    from threadpoolctl import threadpool_limits

    from lumeval.figures import names
    from lumeval.metrics import reference_table as rt
    from lumeval.metrics.colorimetry import cct_duv_ohno

    wl = cie_sources.wavelengths_nm
    try:
        _clear_cached_tables()
        with threadpool_limits(1):
            a = evaluate(cie_sources)
        _clear_cached_tables()
        with threadpool_limits(os.cpu_count() or 1):
            rt.reference_side(np.arange(380.0, 781.0), np.geomspace(1500.0, 24000.0, 400))
            rt.reference_side(np.asarray(wl, dtype=float), np.geomspace(1500.0, 24000.0, 400))
            cct_duv_ohno(np.array([[0.2, 0.3]]))
            b = evaluate(cie_sources)
    finally:
        _clear_cached_tables()
    for name in names():
        np.testing.assert_array_equal(b.figure(name), a.figure(name), err_msg=name)


def test_every_documented_figure_is_available(ev):
    from lumeval.engine import FIGURE_NAMES

    for name in FIGURE_NAMES:
        assert ev.figure(name).shape == (len(ev),)
    with pytest.raises(KeyError):
        ev.figure("R15")


def test_lots_use_the_engine_default_chunk():
    """lumeval.lots.run keeps its own literal (it must not import numpy at start-up); the two
    must not drift apart."""
    from lumeval.engine import DEFAULT_CHUNK
    from lumeval.lots.run import ENGINE_CHUNK

    assert ENGINE_CHUNK == DEFAULT_CHUNK


def test_dc_warning_is_the_same_alone_and_beside_other_warnings():
    """A DC at or over the CIE 13.3-1995 limit (DC < 5.4e-3, CIE 13.3 §5.3) gets one warning
    with the DC to four decimals, whether it is the spectrum's only warning (the fast path) or
    comes with others (here a photometry reason); a DC below the limit gets none, and notes
    read with the spectrum stay first."""
    from types import SimpleNamespace

    from lumeval.engine import _warnings_for

    n = 4
    spectra = type("S", (), {"notes": (("read note",), (), (), ()), "__len__": lambda self: n})()
    cct = SimpleNamespace(outside_validity=np.zeros(n, bool), reference_cct_K=np.full(n, 4000.0), reason=("",) * n)
    cri = SimpleNamespace(dc=np.array([0.0123, 0.00611, 0.0031, np.nan]), within_dc_limit=np.array([False, False, True, False]))
    fid = SimpleNamespace(reason=("",) * n, hue_edge_pairs=((),) * n)
    phot = SimpleNamespace(reason=("", "no light", "", ""))
    w = _warnings_for(spectra, cct, cri, fid, phot)
    text = ("DC = {} is not below 0.0054 (CIE 13.3 validity limit): the source is too far from the Planckian "
            "locus for the CRI to be meaningful; treat Ra and Ri with caution.")
    assert w[0] == ("read note", text.format("0.0123"))
    assert w[1] == (text.format("0.0061"), "photometry: no light.")
    assert w[2] == ()
    assert w[3] == ()  # no DC (NaN): nothing said about it


def test_per_ces_fidelity_only_with_details(cie_sources, ev):
    """Rf,CESi (the special fidelity index of each CES, CIE 224:2017) is computed when the
    details are kept, and then equals 10·ln(exp((100 − 6.73·ΔE′_i)/10) + 1) of the kept ΔE′_i
    (CIE 224:2017's scaling, c = 6.73); without details it is an empty (N, 0) array like the
    other per-CES arrays, and the general Rf is the same."""
    full = evaluate(cie_sources)
    lean = evaluate(cie_sources, keep_details=False)
    de = full.tm30.delta_E_ces
    assert full.tm30.Rf_ces.shape == de.shape == (len(cie_sources), 99)
    np.testing.assert_allclose(full.tm30.Rf_ces, 10.0 * np.log(np.exp((100.0 - 6.73 * de) / 10.0) + 1.0), rtol=1e-12)
    n = len(cie_sources)
    for name in ("Rf_ces", "delta_E_ces", "hue_bin", "Jab_ref", "Jab_test"):
        assert getattr(lean.tm30, name).shape == (n, 0), name
    assert full.tm30.hue_bin.shape == (n, 99) and full.tm30.Jab_ref.shape == (n, 99, 3)
    for name in ("Rf", "Rg", "Rf_h", "Rcs_h"):
        np.testing.assert_allclose(getattr(lean.tm30, name), getattr(full.tm30, name), rtol=1e-12, err_msg=name)
    np.testing.assert_allclose(lean.figure("cie2017_Rf"), full.figure("cie2017_Rf"), rtol=1e-12)
