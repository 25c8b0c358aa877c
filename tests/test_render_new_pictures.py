"""Content of the CIE 1931 (x, y) diagram, the TM-30 colour vectors and the Rf–Rg chart,
checked against numbers the project did not write.

Oracles
-------
- colour-science 0.4.7: ``XYZ_to_xy`` of its CIE 1931 2° CMF table (the spectrum locus),
  ``planck_law`` + CMFs (an independent Planckian locus), ``UCS_uv_to_xy``,
  ``uv_to_CCT_Ohno2013`` (CCT/Duv of points on drawn isotemperature lines) and
  ``colour_fidelity_index(..., 'ANSI/IES TM-30-18')`` (Rf, Rg, bin averages, Rcs,h).
- luxpy 1.12.5's encoding of the ANSI/IES TM-30-20 Annex E table (GPLv3, test-only).
- ANSI C78.377-2017 3000 K published corners as transcribed (s006112/PER, secondary; see
  lumeval/criteria/regions.py), written out here digit for digit.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.render import plots, tm30_plots


def _lines(fig, gid_prefix):
    out = {}
    for ax in [a for top in fig.axes for a in (top, *top.child_axes)]:  # the xy overview is an inset
        for ln in ax.get_lines():
            g = ln.get_gid()
            if g and g.startswith(gid_prefix):
                out[g] = np.column_stack([ln.get_xdata(), ln.get_ydata()]).astype(float)
    return out


@pytest.fixture(scope="module")
def f2(colour):
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    sd = colour.SDS_ILLUMINANTS["FL2"]
    ev = evaluate(SpectrumSet(np.asarray(sd.wavelengths, float), np.asarray(sd.values, float)[None], ("F2",), ("F2",)))
    spec = colour.colour_fidelity_index(sd, True, method="ANSI/IES TM-30-18")
    return ev, spec


@pytest.fixture(scope="module")
def xy_diagram():
    from lumeval.criteria.regions import ansi_quadrangle
    from lumeval.render.html import _regions

    fig = plots.chromaticity_xy_figure([0.4373, 0.4402], [0.4042, 0.4031], labels=["F12", "F4"],
                                       regions=_regions([ansi_quadrangle(3000)]))
    return fig


def test_overview_shows_the_cie_1931_spectrum_locus(xy_diagram, colour):
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    ref = colour.XYZ_to_xy(np.asarray(cmfs.values, float))  # 360-830 nm at 1 nm
    drawn = _lines(xy_diagram, "spectrum-locus")["spectrum-locus"]
    np.testing.assert_allclose(drawn[:-1], ref, atol=1e-12)
    np.testing.assert_array_equal(drawn[-1], drawn[0])  # closed by the purple line


def test_planckian_locus_in_xy_lies_on_an_independent_locus(xy_diagram, colour):
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    wl = np.asarray(cmfs.wavelengths, float)
    T = np.geomspace(950.0, 26000.0, 4000)
    XYZ = colour.colorimetry.planck_law(wl * 1e-9, T).T @ np.asarray(cmfs.values, float)
    ref = colour.XYZ_to_xy(XYZ)
    drawn = _lines(xy_diagram, "planckian-locus")["planckian-locus"]
    d = [np.min(np.hypot(*(ref - p).T)) for p in drawn]
    assert max(d) < 3e-4  # spacing of the reference table; the curves coincide


def test_isotemperature_lines_in_xy_have_their_cct(xy_diagram, colour):
    for T in (2700, 3000, 3500):
        seg = _lines(xy_diagram, f"isotemperature-{T}")[f"isotemperature-{T}"]
        mid = seg[[10, 20, 30]]  # Duv −0.025, 0, +0.025
        uv = colour.xy_to_UCS_uv(mid)
        cct = np.array([colour.temperature.uv_to_CCT_Ohno2013(p)[0] for p in uv])
        np.testing.assert_allclose(cct, T, atol=2.0)


def test_quadrangle_is_drawn_at_its_published_xy_corners(xy_diagram):
    poly = next(p for ax in xy_diagram.axes for p in ax.patches if p.get_gid() == "region-0")
    xy = poly.get_xy()[:4]
    published = np.array([(0.4373, 0.3893), (0.4562, 0.4260), (0.4303, 0.4173), (0.4150, 0.3821)])
    np.testing.assert_allclose(xy, published, atol=1e-12)


def test_samples_sit_at_their_xy(xy_diagram):
    pts = _lines(xy_diagram, "samples-unjudged")["samples-unjudged"]
    np.testing.assert_allclose(pts, [[0.4373, 0.4042], [0.4402, 0.4031]], atol=1e-12)


def test_colour_vectors_sit_at_colour_sciences_bin_averages(f2, colour):
    from lumeval.metrics.tm30_views import colour_vectors

    ev, spec = f2
    ref_unit, test = colour_vectors(ev.tm30.avg_ab_test[0], ev.tm30.avg_ab_ref[0])
    fig = tm30_plots.colour_vector_figure(ref_unit, test, Rcs_h=ev.tm30.Rcs_h[0])
    ln = _lines(fig, "")
    norms = np.linalg.norm(np.asarray(spec.averages_reference), axis=1)[:, None]
    their_ref = np.asarray(spec.averages_reference) / norms
    their_test = their_ref + (np.asarray(spec.averages_test) - np.asarray(spec.averages_reference)) / norms
    # CCT differs by < 1 K between the two engines: positions agree to 1e-3 of the reference chroma
    np.testing.assert_allclose(ln["reference-points"], their_ref, atol=1e-3)
    np.testing.assert_allclose(ln["test-points"], their_test, atol=1e-3)
    arrows = {p.get_gid(): p for ax in fig.axes for p in ax.patches if (p.get_gid() or "").startswith("vector-h")}
    assert sorted(arrows) == sorted(f"vector-h{j}" for j in range(1, 17))
    # chroma gained (Rcs,h > 0 in colour-science) is drawn solid blue, lost dashed vermillion
    from matplotlib.colors import to_hex

    for j, rcs in enumerate(np.asarray(spec.R_cs), start=1):
        if abs(rcs) < 0.5:  # the two engines' CCTs differ slightly: no sign test at zero
            continue
        col = to_hex(arrows[f"vector-h{j}"].get_edgecolor())
        assert col == (plots.PALETTE["blue"] if rcs > 0 else plots.PALETTE["vermillion"]).lower(), (j, rcs)
    for pct in (80, 100, 120):
        ring = next(p for ax in fig.axes for p in ax.patches if p.get_gid() == f"ring-{pct}")
        assert ring.get_radius() == pytest.approx(pct / 100)


def test_colour_vectors_of_a_lot_draw_medians_and_every_sample():
    rng = np.random.default_rng(1)
    ang = np.radians((np.arange(16) + 0.5) * 22.5)
    ref = np.stack([np.cos(ang), np.sin(ang)], axis=-1)
    test = ref[None] * (1 + 0.1 * rng.standard_normal((7, 16, 1)))
    fig = tm30_plots.colour_vector_figure(np.broadcast_to(ref, test.shape), test)
    ln = _lines(fig, "")
    np.testing.assert_allclose(ln["test-points"], np.median(test, axis=0), rtol=1e-12)
    assert ln["lot-points"].shape == (7 * 16, 2)


def test_fidelity_gamut_chart_marks_and_annex_e_lines(f2, luxpy):
    from luxpy.color.cri.iestm30.metrics import _IES_TM30_ANNEX_E_TABLE as LX

    ev, spec = f2
    fig = tm30_plots.fidelity_gamut_figure(ev.tm30.Rf, ev.tm30.Rg, labels=["F2"], limits={"Rf": (80, None)})
    ln = _lines(fig, "")
    np.testing.assert_allclose(ln["samples-unjudged"], [[spec.R_f, spec.R_g]], atol=0.2)
    for lv in ("P1", "P2", "P3"):
        corner = ln[f"intent-{lv}"][1]
        assert corner.tolist() == [LX["Preference"][lv]["Rf"][0], LX["Preference"][lv]["Rg"][0]]
    for lv in ("V1", "V2", "V3"):
        assert set(ln[f"intent-{lv}"][:, 1]) == {LX["Vividness"][lv]["Rg"][0]}
    for lv in ("F1", "F2", "F3"):
        assert set(ln[f"intent-{lv}"][:, 0]) == {LX["Fidelity"][lv]["Rf"][0]}
    assert set(ln["limit-Rf-min"][:, 0]) == {80.0}
