"""TM-30 colour vectors and Annex E design intents.

Oracles
-------
- colour-science 0.4.7 ``colour_fidelity_index(..., method='ANSI/IES TM-30-18')``: its bin
  averages (``averages_test``, ``averages_reference``) and its own local chroma and hue shifts
  (``R_cs`` in %, ``R_hs``), computed by its independent code from the TM-30-18 definitions.
- luxpy 1.12.5 ``tm30_metrics_to_annexE_recommendations`` (GPLv3, test-only): an independent
  encoding of the ANSI/IES TM-30-20 Annex E table and its classification.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.metrics.tm30_views import ANNEX_E, BIN_CENTRES_DEG, colour_vectors, design_intents


@pytest.mark.parametrize("name", ["FL2", "FL11", "LED-B5", "LED-V1"])
def test_vector_projections_are_colour_sciences_chroma_and_hue_shifts(colour, name):
    spec = colour.colour_fidelity_index(colour.SDS_ILLUMINANTS[name], True, method="ANSI/IES TM-30-18")
    ref_unit, test = colour_vectors(spec.averages_test, spec.averages_reference)
    np.testing.assert_allclose(np.linalg.norm(ref_unit, axis=-1), 1.0, rtol=1e-12)
    d = test - ref_unit
    th = np.radians(BIN_CENTRES_DEG)
    radial = d[:, 0] * np.cos(th) + d[:, 1] * np.sin(th)
    tangential = -d[:, 0] * np.sin(th) + d[:, 1] * np.cos(th)
    np.testing.assert_allclose(100 * radial, spec.R_cs, atol=1e-9)
    np.testing.assert_allclose(tangential, spec.R_hs, atol=1e-11)


def test_vectors_from_lumevals_engine_match_colour_science(colour):
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    sd = colour.SDS_ILLUMINANTS["FL2"]
    ev = evaluate(SpectrumSet(np.asarray(sd.wavelengths, float), np.asarray(sd.values, float)[None], ("F2",), ("F2",)))
    spec = colour.colour_fidelity_index(sd, True, method="ANSI/IES TM-30-18")
    ours = colour_vectors(ev.tm30.avg_ab_test[0], ev.tm30.avg_ab_ref[0])
    theirs = colour_vectors(spec.averages_test, spec.averages_reference)
    # the CCTs differ by < 1 K (Ohno 2014 vs colour's Ohno 2013 on 380-780 nm): positions agree to 1e-3
    for a, b in zip(ours, theirs):
        np.testing.assert_allclose(a, b, atol=1e-3)


def test_empty_bin_gives_nan_vectors():
    t = np.ones((16, 2))
    r = np.ones((16, 2))
    r[3] = 0.0
    ref_unit, test = colour_vectors(t, r)
    assert np.isnan(test[3]).all() and np.isfinite(np.delete(test, 3, axis=0)).all()


def _luxpy_levels(luxpy, Rf, Rg, Rcs1, Rfh1):
    from luxpy.color.cri.iestm30.metrics import tm30_metrics_to_annexE_recommendations

    # luxpy takes Rcs,h1 as a fraction, not in percent; it returns "P-"/"V-"/"F-" for none
    out = tm30_metrics_to_annexE_recommendations(Rf=np.atleast_2d(Rf), Rg=np.atleast_2d(Rg), Rcsh1=Rcs1 / 100.0,
                                                 Rfh1=Rfh1)
    return [[("" if v.endswith("-") else str(v)) for v in row] for row in np.asarray(out)]


def test_design_intents_agree_with_luxpy_on_random_values(luxpy):
    rng = np.random.default_rng(11)
    n = 3000
    Rf = rng.uniform(60, 100, n)
    Rg = rng.uniform(80, 130, n)
    Rcs1 = rng.uniform(-20, 30, n)
    Rfh1 = rng.uniform(70, 100, n)
    # luxpy rounds the figures to 2 decimals (Rcs,h1 to 4 as a fraction) before comparing; keep
    # away from every limit by more than that so the two comparisons cannot differ
    edges = {"Rf": [70, 75, 78, 85, 90, 95], "Rg": [89, 92, 95, 100, 110, 118],
             "Rcs_h1": [-12, -7, -1, 0, 6, 15, 19, 23], "Rf_h1": [85, 90]}
    keep = np.ones(n, dtype=bool)
    for v, k in ((Rf, "Rf"), (Rg, "Rg"), (Rcs1, "Rcs_h1"), (Rfh1, "Rf_h1")):
        keep &= np.min(np.abs(v[:, None] - np.asarray(edges[k])[None, :]), axis=1) > 0.01
    Rf, Rg, Rcs1, Rfh1 = Rf[keep], Rg[keep], Rcs1[keep], Rfh1[keep]
    ours = design_intents(Rf, Rg, Rcs1, Rfh1)
    theirs = _luxpy_levels(luxpy, Rf, Rg, Rcs1, Rfh1)
    assert list(ours.preference) == theirs[0]
    assert list(ours.vividness) == theirs[1]
    assert list(ours.fidelity) == theirs[2]
    # every level occurs, so no branch is left untested
    for intent in (ours.preference, ours.vividness, ours.fidelity):
        assert set(intent) >= {"", *(lv for lv in ANNEX_E if lv[0].lower() == next(x for x in intent if x)[0].lower())}


def test_limits_are_inclusive_and_nan_meets_nothing():
    di = design_intents([78, np.nan], [95, 120], [15, 20], [np.nan, 99])
    assert di.preference == ("P1", "")
    assert di.met["P1"].tolist() == [True, False]
    assert di.fidelity == ("", "")  # Rf 78 < 85; NaN Rf
    assert di.vividness == ("", "V1")


def test_a_level_needs_the_levels_below_it():
    # F1 lists only Rf ≥ 95; ranked levels make it need F2/F3's Rf,h1 too (module docstring)
    di = design_intents([96, 96, 96], [100, 100, 100], [0, 0, 0], [80, 87, 91])
    assert di.fidelity == ("", "F3", "F1")
    assert di.met["F1"].tolist() == [False, False, True]


def test_the_reports_design_intent_note_prints_no_signed_zero(monkeypatch):
    """The HTML report's design-intent note gives each value in the figure registry's format: an
    Rcs,h1 of -0.3 % printed "Rcs,h1 −0 %" (found by a review); it prints "0 %", and -2.6 %
    prints "−3 %" (rounded, as the note says the unrounded values are compared)."""
    import numpy as np

    from lumeval.render import report_figures
    from lumeval.render.report_view import _design_intents

    for rcs, text in ((-0.3, "Rcs,h1 0 %"), (-2.6, "Rcs,h1 −3 %"), (4.6, "Rcs,h1 +5 %")):
        vals = {"Rf": 91.2, "Rg": 101.0, "Rcs_h1": rcs, "Rf_h1": 93.4}
        monkeypatch.setattr(report_figures, "_fig", lambda ev, k, vals=vals: np.array([vals[k]]))
        _table, note = _design_intents(None, 0)
        assert f"With Rf 91, Rg 101, {text}, Rf,h1 93 " in note, note
