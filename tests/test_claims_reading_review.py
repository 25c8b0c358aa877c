"""Datasheet claims: fixes of a review of how claims are read (lumeval/criteria/claims.py).

1. the tolerance implied by the precision written is capped by the figure's scale ("Duv < 0"
   was read as Duv ≤ 0.5);
2. every spelling of the SDCM figure is not checkable (``SDCM = 3`` was judged as 2.5 … 3.5);
3. a maximum Duv bounds |Duv|;
4. two spellings of one figure are refused;
5. supplier block in HTML, measured decimals, TOML float precision, specific hints.

The reading rules are common practice, no source (docs/criteria.md, "How a claim is read"):
the caps (Duv 0.0005, S/P 0.05, indices 0.5) and the |Duv| reading of "Duv < 0.003" are
conventions, not values of a standard. Spectra of the command-line tests are Planck's law
(CIE 15:2018 eq. for a blackbody, c2 = 1.4388e-2 m·K) or Gaussians built here with numpy; their
Duv is computed here with colour-science (Ohno 2013/2014 method).
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from lumeval.criteria import parse_claims
from lumeval.criteria.claims import CONTRADICTED, NOT_CHECKABLE, SUPPORTED
from lumeval.errors import CriteriaError

from .test_criteria_claims import Ev  # figures given by hand (decision logic only)

REPO = Path(__file__).resolve().parents[1]
WL = np.arange(380.0, 781.0, 1.0)


def claims(body: str):
    return parse_claims("lumeval_claims = 1\n[claims]\n" + body, "claims.toml")


def run(tmp_path, spectrum: np.ndarray, body: str, *extra: str) -> subprocess.CompletedProcess:
    spd = tmp_path / "spd.csv"
    spd.write_text("wavelength_nm,value\n" + "".join(f"{w:.0f},{v:.8g}\n" for w, v in zip(WL, spectrum / spectrum.max())))
    cf = tmp_path / "claims.toml"
    cf.write_text(body)
    return subprocess.run([sys.executable, "-m", "lumeval", "claims", str(spd), "--claims", str(cf), *extra],
                          capture_output=True, text=True, cwd=tmp_path, timeout=300, env=dict(os.environ, COLUMNS="200"))


def planck(T: float) -> np.ndarray:
    lam = WL * 1e-9
    return 1.0 / (lam**5 * (np.exp(1.4388e-2 / (lam * T)) - 1.0))  # relative: c1 left out


# ----------------------------------------------------------------------------- 1. capped precision


@pytest.mark.parametrize(("line", "lower", "upper"), [
    # a whole number on a small-scale figure says nothing of the finer digits: capped
    ('duv = "< 0"', None, 0.0005),
    ('duv = "<= 0.00"', None, 0.0005),
    ('duv = ">= 0"', -0.0005, None),
    ('duv = "0 - 0.006"', -0.0005, 0.0065),
    ('"S/P" = ">= 1"', 0.95, None),
    ('mDER = ">= 1"', 0.95, None),
    ('x = "0"', -0.005, 0.005),
    ('Rf = "> 1e2"', 99.5, None),      # "1e2": one significant digit, resolution 100: the cap 0.5
    ('Ra = ">= 0.9e2"', 89.5, None),
    ('Rf = ">= 1.00e2"', 99.5, None),  # resolution 1: half a unit 0.5, the cap changes nothing
    # written more finely than the cap: the precision written is kept, as before
    ('duv = "<= -0.0030"', None, -0.00295),
    ('"S/P" = "1.5"', 1.45, 1.55),
    ('"S/P" = "1.50"', 1.495, 1.505),
    ('x = "0.44"', 0.435, 0.445),
    ('Ra = ">= 90"', 89.5, None),
    ('cct_K = ">= 2700"', 2699.5, None),
])
def test_the_precision_written_is_capped_by_the_figures_scale(line, lower, upper):
    """Caps: Duv 0.0005, chromaticity coordinates 0.005, S/P and melanopic DER 0.05, indices 0.5
    (common practice, no source). Bounds checked to 1e-12 (float rounding of the sums)."""
    c = claims(line + "\n").claims[0]
    for got, want in ((c.lower, lower), (c.upper, upper)):
        assert (got is None) == (want is None), (line, c)
        if want is not None:
            assert_allclose(got, want, rtol=0, atol=1e-12)


def test_a_whole_number_duv_bound_no_longer_accepts_half_a_unit():
    """The reviewer's repro: a source at Duv +0.004 against "Duv < 0" was supported (read ≤ 0.5)."""
    chk = claims('duv = "< 0"\n').check(Ev(duv=[0.0040, 0.0004, -0.002]))
    r = chk.results[0]
    assert r.outcome == (CONTRADICTED, SUPPORTED, SUPPORTED)
    assert_allclose(r.excess[0], 0.0040, rtol=0, atol=1e-12)  # measured − stated bound 0
    assert "the most a written precision implies for duv" in chk.results[0].claim.tolerance_note


def test_whole_number_duv_cli(tmp_path):
    """End to end: exit 1 and the claim contradicted (old: supported, exit 0). A greenish source:
    its Duv is computed here with colour-science and must be > 0.0005 for the test to mean anything."""
    colour = pytest.importorskip("colour")
    spd = np.exp(-0.5 * ((WL - 450) / 10) ** 2) + 2.6 * np.exp(-0.5 * ((WL - 555) / 50) ** 2)
    sd = colour.SpectralDistribution(spd, WL)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(colour.SpectralShape(380, 780, 1))
    xy = colour.XYZ_to_xy(colour.sd_to_XYZ(sd, cmfs, k=1, method="Integration"))
    duv = colour.temperature.uv_to_CCT_Ohno2013(colour.xy_to_UCS_uv(xy))[1]
    assert duv > 0.001
    r = run(tmp_path, spd, 'lumeval_claims = 1\n[claims]\nduv = "< 0"\n', "--format", "csv")
    assert r.returncode == 1, r.stdout + r.stderr
    row = next(x for x in r.stdout.splitlines() if ",duv," in x)
    assert row.endswith(",contradicted,"), row


# ----------------------------------------------------------------------------- 2. SDCM


@pytest.mark.parametrize("line", ["SDCM = 3", '"MacAdam steps" = 3', "sdcm_steps = 3", 'SDCM = "<= 3"', "sdcm = 3"])
def test_every_spelling_of_sdcm_is_not_checkable(line):
    chk = claims(line + "\nRa = \">= 80\"\n").check(Ev(Ra=[85.0]))
    r = chk.results[0]
    assert r.outcome == (NOT_CHECKABLE,) and "many samples" in r.reason[0]
    assert chk.exit_code == 0


def test_a_3000K_blackbody_does_not_contradict_3_sdcm(tmp_path):
    """The reviewer's repro: an exact 3000 K blackbody (2.3 steps from the F3000 centre) was
    CONTRADICTED by "SDCM = 3", read as 2.5 … 3.5 steps."""
    r = run(tmp_path, planck(3000.0), "lumeval_claims = 1\n[claims]\nSDCM = 3\n", "--format", "csv")
    assert r.returncode == 0, r.stdout + r.stderr
    row = next(x for x in r.stdout.splitlines() if ",SDCM," in x)
    assert ",not checkable," in row, row


# ----------------------------------------------------------------------------- 3. |Duv|


@pytest.mark.parametrize("text", ["<= 0.003", "< 0.003", "max. 0.003", "≤ 0.003", "up to 0.003"])
def test_a_maximum_duv_bounds_its_absolute_value(text):
    c = claims(f'duv = "{text}"\n')
    cl = c.claims[0]
    assert_allclose([cl.lower, cl.upper], [-0.0035, 0.0035], rtol=0, atol=1e-12)
    assert "|Duv|" in cl.tolerance_note
    r = c.check(Ev(duv=[-0.008, -0.0034, 0.0034, 0.0036])).results[0]
    assert r.outcome == (CONTRADICTED, SUPPORTED, SUPPORTED, CONTRADICTED)
    assert_allclose(r.excess[[0, 3]], [-0.008 + 0.003, 0.0036 - 0.003], rtol=0, atol=1e-12)


@pytest.mark.parametrize(("text", "duv", "outcome"), [
    ("< 0", -0.008, SUPPORTED),            # below the locus: signed
    ("<= -0.002", -0.008, SUPPORTED),
    ("-0.006 - 0", 0.004, CONTRADICTED),   # an explicit signed range stays signed
    ("-0.006 - 0", -0.004, SUPPORTED),
    (">= 0.003", -0.008, CONTRADICTED),
])
def test_signed_duv_claims_stay_signed(text, duv, outcome):
    assert claims(f'duv = "{text}"\n').check(Ev(duv=[duv])).results[0].outcome == (outcome,)


def test_a_pink_source_contradicts_duv_below_0_003(tmp_path):
    """End to end: a pink source (Duv < −0.003, computed here with colour-science) against
    "Duv <= 0.003" is contradicted (old: supported)."""
    colour = pytest.importorskip("colour")
    g = lambda mu, sd: np.exp(-0.5 * ((WL - mu) / sd) ** 2)  # noqa: E731
    spd = g(450, 10) + 0.8 * g(610, 20) + 0.2 * g(530, 20)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(colour.SpectralShape(380, 780, 1))
    xy = colour.XYZ_to_xy(colour.sd_to_XYZ(colour.SpectralDistribution(spd, WL), cmfs, k=1, method="Integration"))
    duv = colour.temperature.uv_to_CCT_Ohno2013(colour.xy_to_UCS_uv(xy))[1]
    assert duv < -0.004
    r = run(tmp_path, spd, 'lumeval_claims = 1\n[claims]\nduv = "<= 0.003"\n', "--format", "csv")
    assert r.returncode == 1, r.stdout + r.stderr
    row = next(x for x in r.stdout.splitlines() if ",duv," in x)
    assert ",contradicted," in row and ",-0.0035,0.0035," in row, row


# ----------------------------------------------------------------------------- 4. one figure, two keys


@pytest.mark.parametrize(("body", "first", "second"), [
    ('Ra = ">= 80"\n"CRI Ra" = "<= 70"\n', "Ra", "CRI Ra"),
    ('CCT = "2700 K"\ncct_K = "4000 K"\n', "CCT", "cct_K"),
    ('Ra = ">= 80"\nra = ">= 90"\n', "Ra", "ra"),
    ("sdcm_steps = 3\nSDCM = 3\n", "sdcm_steps", "SDCM"),
])
def test_two_spellings_of_one_figure_are_refused(body, first, second):
    with pytest.raises(CriteriaError) as e:
        claims(body)
    msg = str(e.value)
    assert msg.startswith(f"claims.toml:4 field '{second}': "), msg
    assert f"'{first}'" in msg and f"'{second}'" in msg and "same figure" in msg, msg


def test_two_spellings_cli_exit_2_no_file(tmp_path):
    out = tmp_path / "out.json"
    r = run(tmp_path, planck(3000.0), 'lumeval_claims = 1\n[claims]\nCCT = "2700 K"\ncct_K = "4000 K"\n',
            "--format", "json", "--output", str(out), "--html", str(tmp_path / "r.html"))
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1 and "'cct_K' and 'CCT'" in r.stderr, r.stderr
    assert not out.exists() and not (tmp_path / "r.html").exists()


# ----------------------------------------------------------------------------- 5. reports, hints


def test_html_report_shows_the_supplier_block_escaped(tmp_path):
    body = ('lumeval_claims = 1\n[supplier]\nname = "Acme <img src=x onerror=alert(1)>"\nproduct = "DL-30"\n'
            'datasheet = "rev C"\n[claims]\nRa = ">= 80"\n')
    html = tmp_path / "r.html"
    r = run(tmp_path, planck(3000.0), body, "--html", str(html), "-q")
    assert r.returncode == 0, r.stderr
    page = html.read_text()
    assert "supplier: Acme &lt;img src=x onerror=alert(1)&gt;" in page
    assert "product: DL-30" in page and "datasheet: rev C" in page
    assert "<img src=x" not in page


def test_a_supported_measured_value_has_the_decimals_of_its_bounds():
    from lumeval.commands.check import plain_text
    from lumeval.render.claims_report import claims_renderables

    chk = claims('Rg = "99.3 ± 0.003"\n').check(Ev(Rg=[99.3012]))
    text = plain_text(claims_renderables(chk))
    row = next(x for x in text.splitlines() if "99.3 ± 0.003" in x)
    assert "99.301" in row and "99.297 … 99.303" in row, row


@pytest.mark.parametrize(("line", "lower", "upper"), [
    ('"S/P" = 1.50', 1.495, 1.505),
    ('"S/P" = 1.50   # from the datasheet', 1.495, 1.505),
    ("Ra = 90.0", 89.95, 90.05),
    ('x = 0.4400', 0.43995, 0.44005),
])
def test_a_toml_float_keeps_the_precision_written(line, lower, upper):
    """TOML gives 1.50 as the number 1.5 (read ± 0.05 before); the claim is read as written."""
    c = claims(line + "\n").claims[0]
    assert_allclose([c.lower, c.upper], [lower, upper], rtol=0, atol=1e-12)


@pytest.mark.parametrize(("line", "words"), [
    ('duv = "\u22120.002"', ["Unicode minus sign", "'-0.002'"]),
    ('Ra = "CRI 90+"', ["repeats the figure's name 'CRI'", "Ra = '90+'"]),
    ('Rf = "Rf ≥ 90"', ["repeats the figure's name 'Rf'", "Rf = '≥ 90'"]),
    ('cct_K = "3000 K ± 3 SDCM"', ["SDCM (MacAdam) steps are a claim of their own", "sdcm_steps = 3"]),
])
def test_usual_slips_get_a_specific_hint(line, words):
    with pytest.raises(CriteriaError) as e:
        claims(line + "\n")
    msg = str(e.value)
    assert msg.startswith("claims.toml:3 ") and "cannot read the claim" in msg, msg
    for w in words:
        assert w in msg, msg
