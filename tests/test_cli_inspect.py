"""The real `lumeval inspect` command on real files, checked against published tables."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from lumeval.render.tables import read_csv_report

from .conftest import cie_illuminant
from .test_metrics_colorimetry import CIE15_T81

REPO = Path(__file__).resolve().parents[1]

# CIE 15:2004 Table T.8.1 (secondary, shared/reference-values.md): Ra of F1..F12, integers.
CIE15_T81_RA = {
    "FL1": 76, "FL2": 64, "FL3": 57, "FL4": 51, "FL5": 72, "FL6": 59,
    "FL7": 90, "FL8": 95, "FL9": 90, "FL10": 81, "FL11": 83, "FL12": 83,
}


def run_cli(*args, cwd=None):
    env = dict(os.environ, COLUMNS="120")
    return subprocess.run(
        [sys.executable, "-m", "lumeval", *map(str, args)],
        capture_output=True, text=True, cwd=cwd or REPO, env=env, timeout=300,
    )


def write_two_column(path: Path, wl, values, header=True):
    with open(path, "w", encoding="utf-8") as f:
        if header:
            f.write("wavelength_nm,value\n")
        for w, v in zip(wl, values):
            f.write(f"{w:g},{v!r}\n")


@pytest.fixture(scope="module")
def f_series_files(tmp_path_factory, colour):
    d = tmp_path_factory.mktemp("fseries")
    paths = []
    for name in CIE15_T81:
        wl, s = cie_illuminant(colour, name)
        p = d / f"{name}.csv"
        write_two_column(p, wl, s, header=(name != "FL3"))  # one header-less file
        paths.append(p)
    return paths


def test_inspect_json_reproduces_cie15_table_T81(f_series_files):
    """CIE 15:2004 Table T.8.1 through the real command: x, y within 5e-5 (summed at the
    table's own 5 nm spacing, rectangle rule), CCT within one 10 K rounding step, Ra within ±1."""
    r = run_cli("inspect", "--format", "json", *f_series_files)
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    assert doc["lumeval_version"]
    by_name = {Path(s["source"]).stem: s for s in doc["spectra"]}
    assert set(by_name) == set(CIE15_T81)
    for name, (x0, y0, T0) in CIE15_T81.items():
        s = by_name[name]
        assert abs(s["x"] - x0) <= 5e-5, name
        assert abs(s["y"] - y0) <= 5e-5, name
        assert abs(s["cct_K"] - T0) < 10, name
        assert abs(s["cri"]["Ra"] - CIE15_T81_RA[name]) <= 1.0, name
        assert set(s["cri"]["R"]) == {f"R{i}" for i in range(1, 15)}
        assert len(s["tm30"]["Rf_h"]) == len(s["tm30"]["Rcs_h"]) == len(s["tm30"]["Rhs_h"]) == 16
        for key in ("u_prime", "v_prime", "duv", "ler_lm_per_W", "sp_ratio", "melanopic_der", "peak_nm"):
            assert isinstance(s[key], float), key
        # CIE 224 and TM-30-18 Rf are one calculation; they may differ only by the blend
        # normalisation observer between 4000 and 5000 K (≤ 1.3e-4, see lumeval.metrics.tm30)
        assert s["cie2017"]["Rf"] == pytest.approx(s["tm30"]["Rf"], abs=2e-4)
        assert isinstance(s["warnings"], list)


def test_inspect_csv_one_row_per_spectrum(f_series_files):
    r = run_cli("inspect", "--format", "csv", *f_series_files[:3])
    assert r.returncode == 0, r.stderr
    rows = read_csv_report(r.stdout)
    assert len(rows) == 3
    assert float(rows[0]["x"]) == pytest.approx(CIE15_T81["FL1"][0], abs=5e-5)


def test_inspect_terminal_report_groups_and_cautions(f_series_files):
    r = run_cli("inspect", f_series_files[1])
    assert r.returncode == 0, r.stderr
    out = r.stdout
    order = [out.index(h) for h in ("Chromaticity", "Colour rendering", "Fidelity and gamut", "Photometry", "Cautions")]
    assert order == sorted(order)
    assert "IEC 62471" in out
    assert "\x1b[" not in out  # piped output carries no colour codes


@pytest.mark.parametrize(
    "content, expect",
    [
        (None, "no such file"),
        ("wavelength,value\n380,abc\n", "380"),
        ("", "empty"),
    ],
)
def test_unreadable_input_is_one_clean_line(tmp_path, content, expect):
    p = tmp_path / "bad.csv"
    if content is not None:
        p.write_text(content)
    r = run_cli("inspect", p)
    assert r.returncode == 2
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, r.stderr
    assert "Traceback" not in r.stderr
    assert "bad.csv" in lines[0]
    assert expect.lower() in lines[0].lower() or content is not None


def test_blackbody_sources_score_100(tmp_path):
    """CIE 13.3 and CIE 224 define Ra = Rf = 100 for a source identical to its reference; the
    reference below 4000/5000 K is the Planckian radiator at the source's CCT. colour-science's
    own CRI picks a wrong reference below 1667 K (shared notes); ours must not."""
    from lumeval.metrics.planck import planck_exitance

    wl = np.arange(360.0, 831.0)
    paths = []
    for T in (1000.0, 1500.0, 2856.0):
        p = tmp_path / f"bb_{T:.0f}K.csv"
        write_two_column(p, wl, planck_exitance(wl, T) / planck_exitance(np.array([560.0]), T)[0])
        paths.append(p)
    r = run_cli("inspect", "--format", "json", *paths)
    assert r.returncode == 0, r.stderr
    for s, T in zip(json.loads(r.stdout)["spectra"], (1000.0, 1500.0, 2856.0)):
        assert s["cct_K"] == pytest.approx(T, abs=0.5)
        assert abs(s["duv"]) < 1e-5
        assert s["cri"]["Ra"] == pytest.approx(100.0, abs=1e-3)
        assert min(s["cri"]["R"].values()) == pytest.approx(100.0, abs=1e-3)
        # Rf = 10 ln(exp(10) + 1) = 100.00045 for ΔE' = 0 (CIE 224:2017 rescaling formula)
        assert s["tm30"]["Rf"] == pytest.approx(10 * np.log(np.exp(10) + 1), abs=1e-4)
        if T == 1000.0:
            # under a 1000 K reference some of the 16 hue bins hold none of the 99 samples, so
            # the gamut polygon (Rg) is undefined; it must be reported as such, not invented
            assert s["tm30"]["Rg"] is None and any("hue bin" in w for w in s["warnings"])
        else:
            assert s["tm30"]["Rg"] == pytest.approx(100.0, abs=1e-3)


def test_far_from_locus_reports_cct_undefined(tmp_path):
    """CIE 15:2004: no CCT beyond |Duv| 0.05 — null with a reason, never a number. CRI and TM-30
    are then computed against the reference at the nearest Planckian temperature and flagged
    outside the validity range (issue 10); a deep-blue LED, nearest the locus beyond the table,
    has no reference at all."""
    wl = np.arange(380.0, 781.0)
    green = np.exp(-0.5 * ((wl - 530.0) / 15.0) ** 2) + 1e-3
    blue = np.exp(-0.5 * ((wl - 450.0) / 10.0) ** 2)
    p, q = tmp_path / "green.csv", tmp_path / "blue.csv"
    write_two_column(p, wl, green)
    write_two_column(q, wl, blue)
    r = run_cli("inspect", "--format", "json", p, q)
    assert r.returncode == 0, r.stderr
    s, b = json.loads(r.stdout)["spectra"]
    assert s["cct_K"] is None and s["cct_undefined_reason"] and abs(s["duv"]) > 0.05
    assert s["cri"]["Ra"] is not None and s["tm30"]["Rf"] is not None
    assert "Ra" in s["outside_validity"]["figures"] and "Rf" in s["outside_validity"]["figures"]
    assert any("CCT undefined" in w and "OUTSIDE THE VALIDITY RANGE" in w for w in s["warnings"])
    assert b["cct_K"] is None and b["cri"]["Ra"] is None and b["tm30"]["Rf"] is None
    assert b["outside_validity"] is None and any("CCT undefined" in w for w in b["warnings"])


def test_python_api_mirrors_cli(f_series_files):
    import lumeval

    ev = lumeval.inspect(f_series_files[:2])
    assert len(ev) == 2
    assert ev.figure("x")[0] == pytest.approx(CIE15_T81["FL1"][0], abs=5e-5)
