"""The figures practitioners look for, through the real ``lumeval inspect``: absolute
illuminance / luminance and melanopic EDI from files in absolute units, Re, the ANSI C78.377
category and the SDCM steps.

Oracles: luxpy 1.12.5 ``spd_to_aopicEDI`` (illuminance and melanopic EDI, K = 683 lm/W, an
independent CIE S 026 implementation; GPLv3, test-only); colour-science's CIE illuminant tables
for the spectra; the ANSI C78.377-2017 Table 1 categories (reference notes, secondary).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from .conftest import run_cli_in_process as run


def _write(path, header, wl, values):
    path.write_text(f"wavelength (nm),{header}\n" + "".join(f"{w:g},{v:.9g}\n" for w, v in zip(wl, values)),
                    encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def illuminant_a(colour):
    sd = colour.SDS_ILLUMINANTS["A"].copy().align(colour.SpectralShape(380, 780, 5))
    return np.asarray(sd.wavelengths, float), np.asarray(sd.values, float) * 2e-3  # ~15 000 lx


def test_irradiance_file_gives_illuminance_and_melanopic_edi(tmp_path, capsys, illuminant_a, luxpy):
    from luxpy.toolboxes import photbiochem as pb

    wl, e = illuminant_a
    f = _write(tmp_path / "a_abs.csv", "Spectral irradiance [W/(m²·nm)]", wl, e)
    code, out, _ = run(["inspect", f, "--format", "json"], capsys)
    assert code == 0
    rec = json.loads(out)["spectra"][0]
    e_read = np.array([float(line.split(",")[1]) for line in f.read_text().splitlines()[1:]])
    # luxpy interpolates to 1 nm before summing; the 5 nm sum differs by ≈1e-5 for a smooth SPD
    edi, e_v = pb.spd_to_aopicEDI(np.vstack([wl, e_read]), K=683.0, out="EDI,Ev")
    np.testing.assert_allclose(rec["illuminance_lx"], float(np.ravel(e_v)[0]), rtol=5e-5)
    np.testing.assert_allclose(rec["melanopic_edi_lx"], float(np.ravel(np.asarray(edi))[-1]), rtol=5e-5)
    assert rec["luminance_cd_m2"] is None and rec["melanopic_edl_cd_m2"] is None
    assert rec["absolute_quantity"]["quantity"] == "irradiance"
    # the terminal report shows them too
    code, out, _ = run(["inspect", f], capsys)
    assert "illuminance (lx)" in out and "melanopic EDI (lx)" in out


def test_radiance_file_gives_luminance(tmp_path, capsys, illuminant_a, luxpy):
    wl, e = illuminant_a
    f = _write(tmp_path / "a_rad.csv", "radiance W/(sr·m²·nm)", wl, e / 1000)
    g = _write(tmp_path / "a_irr.csv", "irradiance W/(m²·nm)", wl, e / 1000)
    code, out, _ = run(["inspect", f, g, "--format", "json"], capsys)
    rad, irr = json.loads(out)["spectra"]
    assert rad["illuminance_lx"] is None and irr["luminance_cd_m2"] is None
    # the same numbers in W/(sr·m²·nm) give the same value in cd/m² as in lx (Km·ΣSVΔλ)
    np.testing.assert_allclose(rad["luminance_cd_m2"], irr["illuminance_lx"], rtol=1e-12)
    np.testing.assert_allclose(rad["melanopic_edl_cd_m2"], irr["melanopic_edi_lx"], rtol=1e-12)


def test_relative_data_give_no_absolute_figure(tmp_path, capsys, illuminant_a):
    wl, e = illuminant_a
    f = _write(tmp_path / "a_rel.csv", "relative power (a.u.)", wl, e)
    code, out, _ = run(["inspect", f, "--format", "json"], capsys)
    rec = json.loads(out)["spectra"][0]
    assert rec["illuminance_lx"] is None and rec["melanopic_edi_lx"] is None
    assert rec["absolute_quantity"] == {"quantity": None, "unit": None}
    code, out, _ = run(["inspect", f], capsys)
    assert "illuminance" not in out and "EDI" not in out  # no row of n/a for relative data


def test_category_sdcm_and_re_in_json_and_terminal(tmp_path, capsys, illuminant_a):
    wl, e = illuminant_a
    f = _write(tmp_path / "a.csv", "relative", wl, e)
    code, out, _ = run(["inspect", f, "--format", "json"], capsys)
    rec = json.loads(out)["spectra"][0]
    # illuminant A: 2856 K on the Planckian locus, inside the 2017 2700 K category (2580-2870 K)
    assert rec["ansi_c78377"]["category_K"] == 2700 and rec["ansi_c78377"]["inside"] is True
    assert rec["ansi_c78377"]["edition"] == "ANSI C78.377-2017"
    assert rec["ansi_c78377"]["distance_upvp"] == 0.0
    assert rec["sdcm"]["centre"].startswith("IEC 60081 F")
    # a Planckian reference renders itself: every Ri is 100, so is Re (CIE 13.3)
    np.testing.assert_allclose(rec["cri"]["Re"], 100.0, atol=0.01)
    code, out, _ = run(["inspect", f, "--format", "csv"], capsys)
    header = out.splitlines()[0].split(",")
    assert {"Re", "ansi_category_K", "ansi_distance_upvp", "sdcm_steps", "illuminance_lx", "melanopic_edi_lx"} <= set(header)


def test_re_and_ansi_category_can_be_judged(tmp_path, capsys, illuminant_a):
    wl, e = illuminant_a
    f = _write(tmp_path / "a.csv", "relative", wl, e)
    crit = tmp_path / "c.toml"
    crit.write_text('lumeval_criteria = 1\n[[clause]]\nfigure = "Re"\nmin = 95\n'
                    '[[clause]]\nfigure = "ANSI distance"\nmax = 0\n', encoding="utf-8")
    code, out, err = run(["check", f, "--criteria", crit], capsys)
    assert code == 0, out + err
