"""Absolute photometry: illuminance / luminance and melanopic EDI / EDL from absolute spectra.

Oracles
-------
- luxpy 1.12.5 ``spd_to_aopicEDI(..., out='EDI,Ev', K=683)`` (GPLv3, test-only): an
  independent implementation of CIE S 026 with its own tables and integration.
- colour-science 0.4.7 ``luminous_flux`` (Km · ∫ S V dλ, trapezoid rule, its own V(λ) table).
- CIE S 026 worked example as published in the Lighting Toolbox documentation (ciespec2aopic):
  illuminant A at 100 lx has a melanopic irradiance of 0.065754 W/m², D65 at 100 lx 0.132621
  W/m²; so the melanopic EDI of A at 100 lx is 100 · 0.065754 / 0.132621 = 49.580 lx.
- SI prefixes (BIPM SI Brochure, 9th ed.) for the unit factors.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.errors import InputError
from lumeval.metrics.absolute import absolute_photometry
from lumeval.spectra.units import (
    IRRADIANCE,
    RADIANCE,
    SpectralQuantity,
    quantity_of,
    spectral_quantity,
)

KM = 683.0


@pytest.mark.parametrize(
    "text,kind,factor",
    [
        ("Spectral irradiance [W/(m²·nm)]", IRRADIANCE, 1.0),
        ("W/m2/nm", IRRADIANCE, 1.0),
        ("W m-2 nm-1", IRRADIANCE, 1.0),
        ("mW/(m^2 nm)", IRRADIANCE, 1e-3),
        ("µW/cm²/nm", IRRADIANCE, 1e-6 * 1e4),
        ("uW/cm2/nm", IRRADIANCE, 1e-6 * 1e4),
        ("nW/(mm²·nm)", IRRADIANCE, 1e-9 * 1e6),
        ("W/(sr·m²·nm)", RADIANCE, 1.0),
        ("W·sr⁻¹·m⁻²·nm⁻¹", RADIANCE, 1.0),
        ("mW/sr/m2/nm", RADIANCE, 1e-3),
        ("W m^-2 nm^-1", IRRADIANCE, 1.0),
        ("W sr-1 m-2 nm-1", RADIANCE, 1.0),
        ("LED 103 (W/m2/nm)", IRRADIANCE, 1.0),  # a number in a column's name is no scale
    ],
)
def test_recognised_units(text, kind, factor):
    q = spectral_quantity(text)
    assert q is not None and q.kind == kind
    np.testing.assert_allclose(q.factor, factor, rtol=1e-15)


@pytest.mark.parametrize(
    "text",
    ["W/nm", "W/(sr·nm)", "W/m2", "counts", "relative", "W/(m²·µm)", "W/(m2 nm) or mW/(m2 nm)", "a.u.", "", None,
     "W/(sr·sr·m²·nm)",
     # a scale beside the unit, or a wavelength interval other than one nm: a factor lumeval would
     # have to guess ("x 1e-3" was read as plain W/(m² nm), 1000x too high; found by a review)
     "irradiance (W/(m2 nm)) x 1e-3", "irradiance [mW/(m² nm) x1000]", "W/(m2 sr nm) [x 1e-3]",
     "W/(m2 nm) × 10^-3", "1e-3 W/(m2 nm)", "W/(m2 nm) *1000", "W/(m2 5nm)", "W/(m2 10 nm)"],
)
def test_anything_else_gives_no_absolute_quantity(text):
    assert spectral_quantity(text) is None


def test_only_spectra_the_reader_marked_absolute_count():
    assert quantity_of({"lumeval.scale": "absolute", "lumeval.value_unit": "W/(m²·nm)"}).kind == IRRADIANCE
    assert quantity_of({"lumeval.scale": "relative", "lumeval.value_unit": "W/(m²·nm)"}) is None
    assert quantity_of({}) is None


def _evaluate(colour, names, scale):
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    shape = colour.SpectralShape(380, 780, 1)
    sds = [colour.SDS_ILLUMINANTS[n].copy().align(shape) for n in names]
    wl = np.asarray(sds[0].wavelengths, float)
    vals = np.stack([np.asarray(sd.values, float) * scale for sd in sds])
    return wl, vals, evaluate(SpectrumSet(wl, vals, tuple(names), tuple(names)))


@pytest.mark.parametrize("name", ["A", "D65", "FL2", "LED-B3"])
def test_illuminance_and_melanopic_edi_against_luxpy(colour, luxpy, name):
    from luxpy.toolboxes import photbiochem as pb

    wl, vals, ev = _evaluate(colour, [name], 2e-3)  # W/(m²·nm): a few hundred lx
    res = absolute_photometry(ev.XYZ[:, 1], ev.photometry.melanopic_der, [SpectralQuantity(IRRADIANCE, 1.0, "W/m2/nm")])
    edi, e_v = pb.spd_to_aopicEDI(np.vstack([wl, vals[0]]), K=KM, out="EDI,Ev")
    e_v = float(np.ravel(e_v)[0])
    mel = float(np.ravel(np.asarray(edi))[-1])  # luxpy's last α-opic column is melanopic
    # luxpy's V(λ) is its own copy of the CIE table and it interpolates D65 from its own 1 nm table
    np.testing.assert_allclose(res.illuminance_lx[0], e_v, rtol=1e-5)
    np.testing.assert_allclose(res.melanopic_edi_lx[0], mel, rtol=1e-5)
    assert np.isnan(res.luminance_cd_m2[0]) and np.isnan(res.melanopic_edl_cd_m2[0])


def test_illuminance_against_colour_science_luminous_flux(colour):
    wl, vals, ev = _evaluate(colour, ["FL11"], 1e-2)
    res = absolute_photometry(ev.XYZ[:, 1], ev.photometry.melanopic_der, [SpectralQuantity(IRRADIANCE, 1.0, "W/m2/nm")])
    sd = colour.SpectralDistribution(dict(zip(wl, vals[0])))
    theirs = colour.luminous_flux(sd, K_m=KM)  # trapezoid: differs by the half end samples only
    np.testing.assert_allclose(res.illuminance_lx[0], theirs, rtol=1e-4)


def test_melanopic_edi_of_illuminant_a_at_100_lx_matches_the_published_example(colour):
    _, _, ev = _evaluate(colour, ["A"], 1.0)
    Y = ev.XYZ[:, 1]
    f = 100.0 / (KM * Y[0])  # scale the file's unit so that A gives 100 lx
    res = absolute_photometry(Y, ev.photometry.melanopic_der, [SpectralQuantity(IRRADIANCE, f, "scaled")])
    np.testing.assert_allclose(res.illuminance_lx[0], 100.0, rtol=1e-12)
    # published: 100 · 0.065754 / 0.132621 = 49.580 lx (5 significant digits in the source)
    np.testing.assert_allclose(res.melanopic_edi_lx[0], 100 * 0.065754 / 0.132621, atol=0.01)


def test_d65_edi_equals_its_illuminance(colour):
    # CIE S 026: the melanopic EDI of D65 equals its illuminance by definition (DER = 1)
    _, _, ev = _evaluate(colour, ["D65"], 1e-3)
    res = absolute_photometry(ev.XYZ[:, 1], ev.photometry.melanopic_der, [SpectralQuantity(IRRADIANCE, 1.0, "x")])
    np.testing.assert_allclose(res.melanopic_edi_lx, res.illuminance_lx, rtol=1e-5)


def test_radiance_gives_luminance_and_edl_and_relative_gives_nothing(colour):
    _, _, ev = _evaluate(colour, ["A", "A", "A"], 1e-3)
    qs = [SpectralQuantity(RADIANCE, 1.0, "W/(sr·m²·nm)"), None, SpectralQuantity(IRRADIANCE, 1e-3, "mW/(m²·nm)")]
    res = absolute_photometry(ev.XYZ[:, 1], ev.photometry.melanopic_der, qs)
    assert res.quantity == ("radiance", "", "irradiance")
    np.testing.assert_allclose(res.luminance_cd_m2[0], KM * ev.XYZ[0, 1], rtol=1e-12)
    np.testing.assert_allclose(res.melanopic_edl_cd_m2[0] / res.luminance_cd_m2[0], 0.4958, atol=1e-4)
    assert np.isnan(res.illuminance_lx[:2]).all() and np.isnan(res.luminance_cd_m2[1:]).all()
    # a file in mW is a thousand times smaller in W
    np.testing.assert_allclose(res.illuminance_lx[2], res.luminance_cd_m2[0] * 1e-3, rtol=1e-12)
    # relative data only (a lot's usual case, its own short path): what the mixed run gave the
    # relative spectrum, for every spectrum
    rel = absolute_photometry(ev.XYZ[:, 1], ev.photometry.melanopic_der, [None, None, None])
    assert rel.quantity == ("", "", "") and rel.unit_text == ("", "", "") and res.unit_text[1] == ""
    for k in ("illuminance_lx", "luminance_cd_m2", "melanopic_edi_lx", "melanopic_edl_cd_m2"):
        assert getattr(rel, k).shape == (3,) and np.isnan(getattr(rel, k)).all() and np.isnan(getattr(res, k)[1])


def test_photometric_scale_uncertainty_reaches_illuminance_only():
    # A common factor with relative standard uncertainty u_r scales illuminance and melanopic EDI
    # by the same factor: u(E_v)/E_v = u_r (GUM, JCGM 100:2008 §5.1, a linear model), while the
    # ratios do not move. 400 draws: the relative standard error of a standard deviation is
    # 1/sqrt(2·400) = 3.5 %, so 0.05 is checked to ±15 %.
    from lumeval.spectra.model import SpectrumSet
    from lumeval.uncertainty import InstrumentModel, MonteCarloSettings, propagate

    wl = np.arange(380.0, 781.0, 1.0)
    s = 1e-3 * (np.exp(-0.5 * ((wl - 450) / 10) ** 2) + 0.8 * np.exp(-0.5 * ((wl - 590) / 60) ** 2))
    meta = ({"lumeval.scale": "absolute", "lumeval.value_unit": "W/(m²·nm)"},)
    res = propagate(SpectrumSet(wl, s[None], ("t",), ("t",), metadata=meta), InstrumentModel(0, 0, 0, 0, 0.05, 0),
                    MonteCarloSettings(draws=400, seed=5), figures=("illuminance_lx", "melanopic_edi_lx", "Ra"))
    rel = res.u[0] / res.measured[0]
    np.testing.assert_allclose(rel[:2], 0.05, rtol=0.15)
    assert rel[2] < 1e-9


@pytest.mark.parametrize("header, unit_line", [("wl,relative intensity (a.u.)", ""), ("wl,lamp", "# unit: %\n"),
                                               ("wl,counts", "")])
def test_a_declared_scale_that_contradicts_the_stated_one_is_refused(tmp_path, header, unit_line):
    """A `# lumeval.scale: absolute` comment (what lumeval's own CSV writer writes to keep a
    scale through a conversion) made a column headed "relative intensity (a.u.)" absolute, and
    the reports then gave illuminance and melanopic EDI for it (found by a review). A declared
    scale that contradicts the header or a unit line is refused naming both; one the file does
    not contradict is kept (the round trip, test below)."""
    from lumeval.spectra.read import read_spectra

    f = tmp_path / "c.csv"
    f.write_text("# lumeval.scale: absolute\n# lumeval.value_unit: W/(m2 nm)\n" + unit_line + header + "\n"
                 + "".join(f"{w},{1.0 + w / 1000:.4f}\n" for w in range(380, 781, 5)), encoding="utf-8")
    with pytest.raises(InputError, match=r"'lumeval.scale: absolute' line contradicts the relative scale"):
        read_spectra(f)


@pytest.mark.parametrize("name", ["lamp", "lamp at 50% dimming", "Harbour lamp", "rel. lamp", "counts lamp",
                                  "lamp (50% dimming)", "lamp 3000K/50%", "lamp [rel. position 2]", "LED module (1 W)"])
def test_a_declared_scale_survives_a_conversion_to_csv(tmp_path, name):
    """The other side: an absolute spectrum written to CSV by lumeval (its `# lumeval.scale`
    line, a header of names) reads back absolute with the same illuminance, whatever words its
    name holds ("%", "rel", "arb" in "Harbour": the first conflict check read them as a
    relative unit and refused lumeval's own file; found by a review)."""
    import json

    import lumeval

    wl = np.arange(380.0, 781.0, 5.0)
    v = 1e-3 * np.exp(-0.5 * ((wl - 560.0) / 60.0) ** 2)
    src = tmp_path / "abs.csv"
    src.write_text("wl,lamp W/(m2 nm)\n" + "".join(f"{a:g},{b:.6e}\n" for a, b in zip(wl, v)), encoding="utf-8")
    js = tmp_path / "abs.json"
    lumeval.convert(src, js)  # renamed there (a JSON spectrum keeps any name)
    doc = json.loads(js.read_text(encoding="utf-8"))
    doc["spectra"][0]["name"] = name
    js.write_text(json.dumps(doc), encoding="utf-8")
    out = tmp_path / "round.csv"
    lumeval.convert(js, out)
    assert "# lumeval.scale: absolute" in out.read_text(encoding="utf-8") and name in out.read_text(encoding="utf-8")
    a, b = (lumeval.inspect([p]).figure("illuminance_lx")[0] for p in (src, out))
    assert np.isfinite(a)
    np.testing.assert_allclose(b, a, rtol=1e-12)  # the same values (the writer keeps every digit read)


def test_a_declared_absolute_scale_keeps_the_unit_of_an_ordinary_unit_line(tmp_path):
    """`# lumeval.scale: absolute` with `# unit: mW/(m2 nm)` gave no absolute figure (the
    declared scale took its unit from lumeval.value_unit only; found by a review); the same
    file without the scale line gave it. Both now give the same illuminance (683 lm/W × Σ E V Δλ,
    CIE 15:2004 / the SI definition of the lumen at 540 THz: Km = 683 lm/W)."""
    import lumeval

    wl = np.arange(380.0, 781.0, 5.0)
    v = 1e-3 / (wl**5 * np.expm1(1.4388e7 / (wl * 2856.0)))
    v = v / v.max() * 1e-3
    rows = "wl,A\n" + "".join(f"{a:g},{b:.6e}\n" for a, b in zip(wl, v))
    declared = tmp_path / "declared.csv"
    declared.write_text("# lumeval.scale: absolute\n# unit: mW/(m2 nm)\n" + rows)
    plain = tmp_path / "plain.csv"
    plain.write_text("# unit: mW/(m2 nm)\n" + rows)
    a, b = (lumeval.inspect([p]).figure("illuminance_lx")[0] for p in (declared, plain))
    assert np.isfinite(a)
    np.testing.assert_allclose(a, b, rtol=1e-12)


@pytest.mark.parametrize("name", ["LED module (1 W)", "lamp 350mA/1W"])
def test_a_declared_relative_scale_survives_a_conversion_whatever_the_name(tmp_path, name):
    """The relative side of the round trip: a spectrum read as relative, renamed with words of
    an absolute unit, written to CSV by lumeval and read back, stays relative (it was refused:
    the name was read as a statement of scale; found by a review)."""
    import json

    import lumeval
    from lumeval.spectra.read import read_spectra

    src = tmp_path / "rel.csv"
    src.write_text("wl,relative intensity (a.u.)\n" + "".join(f"{w},{1.0 + w / 1000:.4f}\n" for w in range(380, 781, 5)),
                   encoding="utf-8")
    js = tmp_path / "rel.json"
    lumeval.convert(src, js)
    doc = json.loads(js.read_text(encoding="utf-8"))
    doc["spectra"][0]["name"] = name
    js.write_text(json.dumps(doc), encoding="utf-8")
    out = tmp_path / "round.csv"
    lumeval.convert(js, out)
    assert "# lumeval.scale: relative" in out.read_text(encoding="utf-8")
    assert read_spectra(out).metadata[0]["lumeval.scale"] == "relative"
