"""The criteria, check and claims commands through the real CLI entry point.

Every error path of the criteria loader is driven through ``lumeval criteria explain`` (and
``lumeval check``): exit code 2, one line on stderr naming file, line and key, no traceback.

Numeric outside sources: a Planckian radiator is its own CIE 13.3 reference, so Ra = R9 = 100
and Duv = 0 (CIE 13.3-1995 definition); CIE F12 has CCT ≈ 3000 K and Ra = 83 (CIE 15:2004
Table T.8.1).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from lumeval.metrics.planck import planck_exitance
from lumeval.render.tables import read_csv_report

from .conftest import run_cli_in_process as run


@pytest.fixture(scope="module")
def spectra_dir(tmp_path_factory, colour):
    d = tmp_path_factory.mktemp("spd")
    wl = np.arange(380.0, 781.0, 1.0)
    s = planck_exitance(wl, 3000.0)
    s = s / s.max()
    (d / "planck3000.csv").write_text("wavelength_nm,planck3000\n" + "".join(f"{w:.0f},{v:.8f}\n" for w, v in zip(wl, s)))
    f12 = colour.SDS_ILLUMINANTS["FL12"]
    (d / "f12.csv").write_text("wavelength_nm,F12\n" + "".join(f"{w:.0f},{v:.6f}\n" for w, v in zip(f12.wavelengths, f12.values)))
    return d


def write(tmp_path, text, name="c.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


GOOD = """\
lumeval_criteria = 1
[identification]
project = "Test"
[[clause]]
id = "chroma"
kind = "ansi_quadrangle"
nominal_cct = 3000
[[clause]]
id = "Ra"
figure = "Ra"
min = 80
[[clause]]
id = "R9"
figure = "R9"
min = 50
"""

# (criteria text, expected line, expected key in the message, words the message must contain)
BAD = [
    ("[[clause]\nfigure = 1", 1, None, ["not valid TOML"]),
    ("identifcation = 1\n[[clause]]\nfigure='Ra'\nmin=1", 1, "identifcation", ["did you mean 'identification'"]),
    ("[identification]\nprojekt = 'x'\n[[clause]]\nfigure='Ra'\nmin=1", 2, "projekt", ["did you mean 'project'"]),
    ("lumeval_criteria = 2\n[[clause]]\nfigure='Ra'\nmin=1", 1, "lumeval_criteria", ["unsupported format version"]),
    # a clause over a range of settings against one that applies everywhere (found by a review)
    ("[[clause]]\nfigure='Ra'\nmin=90\n[[clause]]\nfigure='Ra'\nmax=80\nover=[2700,3000]", 4, None,
     ["contradict each other", "at the settings 2700-3000"]),
    # true and 1.0 equal 1 in Python, but are no version number (found by exploratory testing)
    ("lumeval_criteria = true\n[[clause]]\nfigure='Ra'\nmin=1", 1, "lumeval_criteria", ["unsupported format version True"]),
    ("lumeval_criteria = 1.0\n[[clause]]\nfigure='Ra'\nmin=1", 1, "lumeval_criteria", ["unsupported format version 1.0"]),
    ("[identification]\nproject = 'x'\n", None, None, ["no clauses"]),
    ("[[clause]]\nmin = 3\n", 1, None, ["has no `kind`"]),
    ("[[clause]]\nkind = 'sdcn'\n", 2, "kind", ["did you mean 'sdcm'"]),
    ("[[clause]]\nfigure = 'Ra'\nmni = 80\n", 3, "mni", ["did you mean 'min'", "allowed:"]),
    ("[[clause]]\nfigure = 'Ra'\nmin = 80\ncentre = 'F3000'\n", 4, "centre", ["'centre' belongs to sdcm clauses"]),
    ("[[clause]]\nfigure = 'R_9'\nmin = 50\n", 2, "figure", ["did you mean 'R9'"]),
    ("[[clause]]\nfigure = 'Rcs_h17'\nmin = 50\n", 2, "figure", ["unknown figure"]),
    ("[[clause]]\nfigure = 'Ra'\nmin = 95\nmax = 90\n", 3, "min", ["above max", "contradict"]),
    ("[[clause]]\nfigure = 'Ra'\nrange = [95, 90]\n", 3, "range", ["above high limit"]),
    ("[[clause]]\nfigure = 'Ra'\nrange = [90, 95]\nmin = 91\n", 3, "range", ["cannot be combined"]),
    ("[[clause]]\nfigure = 'Ra'\nrange = [90]\n", 3, "range", ["two numbers"]),
    ("[[clause]]\nfigure = 'Ra'\n", 1, None, ["no limit"]),
    ("[[clause]]\nfigure = 'Ra'\nmin = '90'\n", 3, "min", ["must be a number"]),
    ("[[clause]]\nfigure = 'Ra'\nmin = nan\n", 3, "min", ["finite"]),
    ("[[clause]]\nid = 'a'\nfigure = 'Ra'\nmin = 1\n[[clause]]\nid = 'a'\nfigure = 'R9'\nmin = 1\n", 6, "id", ["duplicate clause id"]),
    ("[[clause]]\nid = ''\nfigure = 'Ra'\nmin = 1\n", 2, "id", ["non-empty"]),
    ("[[clause]]\nlabel = 3\nfigure = 'Ra'\nmin = 1\n", 2, "label", ["must be a string"]),
    ("[[clause]]\nkind = 'ansi_quadrangle'\nnominal_cct = 3100\n", 3, "nominal_cct", ["allowed: 2200, 2500"]),
    ("[[clause]]\nkind = 'ansi_quadrangle'\n", 1, None, ["needs `nominal_cct`"]),
    ("[[clause]]\nkind = 'ansi_quadrangle'\nnominal_cct = 'flexible'\n", 1, None, ["needs `target_cct_K`"]),
    ("[[clause]]\nkind = 'ansi_quadrangle'\nnominal_cct = 'flexible'\ntarget_cct_K = 9000\n", 4, "target_cct_K", ["outside the flexible range"]),
    ("[[clause]]\nkind = 'ansi_quadrangle'\nnominal_cct = 3000\ntolerance_K = 100\n", 4, "tolerance_K", ["only to a flexible"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre = 'F3000'\n", 1, None, ["needs `max_steps`"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre = 'F3000'\nmax_steps = 0\n", 4, "max_steps", ["greater than zero"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre = 'F3000'\nmacadam1942 = 3\nmax_steps = 3\n", 4, "macadam1942", ["exactly one"]),
    ("[[clause]]\nkind = 'sdcm'\nmax_steps = 3\n", 1, None, ["exactly one"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre = 'F3100'\nmax_steps = 3\n", 3, "centre", ["unknown centre", "allowed: F6500"]),
    ("[[clause]]\nkind = 'sdcm'\nmacadam1942 = 26\nmax_steps = 3\n", 3, "macadam1942", ["1 to 25"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre_xy = [0.44, 0.40]\ng11 = 1e6\nmax_steps = 3\n", 1, None, ["missing g12, g22"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre_xy = [0.44, 0.40]\ng11 = 1\ng12 = 2\ng22 = 1\nmax_steps = 3\n", 4, "g11", ["do not describe an ellipse"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre = 'F3000'\ng11 = 1\nmax_steps = 3\n", 4, "g11", ["only with `centre_xy`"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre_xy = [1.4, 0.40]\ng11 = 1\ng12 = 0\ng22 = 1\nmax_steps = 3\n", 3, "centre_xy", ["0 < x, y < 1"]),
    ("[[clause]]\nkind = 'tm30_design_intent'\nlevel = 'p1'\n", 3, "level", ["did you mean 'P1'"]),
    ("[[clause]]\nkind = 'tm30_design_intent'\n", 1, None, ["needs `level`"]),
    ("clause = 3\n", 1, "clause", ["array of tables"]),
    ("clause = []\n", None, None, ["no clauses"]),
    ("identification = 3\n[[clause]]\nfigure='Ra'\nmin=1\n", 1, "identification", ["must be a table"]),
    ("[identification]\nproject = [1]\n[[clause]]\nfigure='Ra'\nmin=1\n", 2, "project", ["single value"]),
    ("[[clause]]\nkind = 'figure'\nmin = 1\n", 1, None, ["needs `figure`"]),
    ("[[clause]]\nfigure = 9\nmin = 1\n", 2, "figure", ["figure name in quotes"]),
    ("[[clause]]\nfigure = 'Ra'\nrange = [nan, 1]\n", 3, "range", ["finite"]),
    ("[[clause]]\nnote = 1\nfigure = 'Ra'\nmin = 1\n", 2, "note", ["must be a string"]),
    ("[[clause]]\nkind = 'ansi_quadrangle'\nnominal_cct = 'flexible'\ntarget_cct_K = 3800\ntolerance_K = 0\n", 5, "tolerance_K", ["greater than zero"]),
    ("[[clause]]\nkind = 'ansi_quadrangle'\nnominal_cct = true\n", 3, "nominal_cct", ["not a nominal CCT category"]),
    ("[[clause]]\nkind = 'sdcm'\ncentre = 3000\nmax_steps = 3\n", 3, "centre", ["must be a string"]),
]


@pytest.mark.parametrize("text,line,key,words", BAD)
def test_every_loader_error_through_the_cli(tmp_path, capsys, text, line, key, words):
    p = write(tmp_path, text)
    code, out, err = run(["criteria", "explain", p], capsys)
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    msg = lines[0]
    assert "Traceback" not in err
    where = f"{p}:{line}" if line is not None else f"{p}"
    assert msg.startswith(f"lumeval: error: {where}"), msg
    if key is not None:
        assert f"field {key!r}" in msg, msg
    for w in words:
        assert w in msg, msg
    assert " — " in msg  # every message says what would fix it


def test_non_utf8_criteria_file(tmp_path, capsys):
    p = tmp_path / "latin1.toml"
    p.write_bytes("[identification]\nproject = 'Caf\u00e9'\n".encode("latin-1"))
    code, out, err = run(["criteria", "explain", p], capsys)
    assert code == 2 and out == "" and "UTF-8" in err and len(err.strip().splitlines()) == 1


def test_missing_and_directory_criteria_files(tmp_path, capsys):
    code, _, err = run(["criteria", "explain", tmp_path / "nope.toml"], capsys)
    assert code == 2 and "no such file" in err and len(err.strip().splitlines()) == 1
    code, _, err = run(["criteria", "explain", tmp_path], capsys)
    assert code == 2 and "is a directory" in err


def test_check_refuses_bad_criteria_before_computing(tmp_path, capsys, spectra_dir):
    p = write(tmp_path, "[[clause]]\nfigure = 'Ra'\nmin = 95\nmax = 90\n")
    code, out, err = run(["check", spectra_dir / "planck3000.csv", "--criteria", p], capsys)
    assert code == 2 and out == "" and f"{p}:3 field 'min'" in err


def test_bad_criteria_in_a_real_process_has_no_traceback(tmp_path):
    p = write(tmp_path, "[[clause]]\nfigure = 'R99'\nmin = 1\n")
    r = subprocess.run([sys.executable, "-m", "lumeval", "criteria", "explain", str(p)], capture_output=True, text=True)
    assert r.returncode == 2
    assert r.stdout == ""
    assert r.stderr.count("\n") == 1 and "Traceback" not in r.stderr and "field 'figure'" in r.stderr


def test_check_passes_a_planckian_source(tmp_path, capsys, spectra_dir):
    """Planckian 3000 K: Ra = R9 = 100, Duv = 0 (CIE 13.3: it is its own reference)."""
    crit = write(tmp_path, GOOD + "[[clause]]\nid='Duv'\nfigure='duv'\nrange=[-0.0002, 0.0002]\n[[clause]]\nid='CCT'\nfigure='cct_K'\nrange=[2995, 3005]\n")
    code, out, err = run(["check", spectra_dir / "planck3000.csv", "--criteria", crit, "--format", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["overall"] == "pass" and doc["exit_code"] == 0
    (s,) = doc["spectra"]
    by = {c["id"]: c for c in s["clauses"]}
    assert by["Ra"]["measured"] == pytest.approx(100.0, abs=0.05)
    assert by["R9"]["measured"] == pytest.approx(100.0, abs=0.05)
    assert by["Ra"]["margin"] == pytest.approx(by["Ra"]["measured"] - 80)
    assert by["chroma"]["details"]["duv"] == pytest.approx(0.0, abs=2e-5)
    assert by["chroma"]["margin"] > 0.004
    assert by["chroma"]["uncertainty"] is None and by["chroma"]["decision_rule"].startswith("simple acceptance")


def test_check_fails_f12_on_r9_in_every_format(tmp_path, capsys, spectra_dir):
    """CIE F12 (CIE 15:2004 Table T.8.1: CCT 3000 K, Ra 83) meets Ra ≥ 80 but not R9 ≥ 50."""
    crit = write(tmp_path, GOOD)
    files = [spectra_dir / "planck3000.csv", spectra_dir / "f12.csv"]
    code, out, _ = run(["check", *files, "--criteria", crit, "--format", "json"], capsys)
    assert code == 1
    doc = json.loads(out)
    f12 = doc["spectra"][1]
    by = {c["id"]: c for c in f12["clauses"]}
    assert by["Ra"]["measured"] == pytest.approx(83, abs=0.6) and by["Ra"]["outcome"] == "pass"
    assert by["R9"]["outcome"] == "fail" and by["R9"]["margin"] < 0
    assert f12["verdict"] == "fail" and doc["spectra"][0]["verdict"] == "pass" and doc["overall"] == "fail"

    code, out, _ = run(["check", *files, "--criteria", crit, "--format", "csv"], capsys)
    assert code == 1
    rows = read_csv_report(out)  # the note rows (cautions) that end the CSV left out
    assert len(rows) == 2 * 3
    assert out.startswith("spectrum,source,verdict,clause_id")
    assert any(r["clause_id"] == "R9" and r["outcome"] == "fail" and r["reason"] == "" for r in rows)

    code, out, _ = run(["check", *files, "--criteria", crit], capsys)
    assert code == 1
    assert "✘ FAIL" in out and ">>" in out and "OVERALL: ✘ FAIL" in out and "IEC 62471" in out

    report = tmp_path / "report.json"
    code, out, _ = run(["check", *files, "--criteria", crit, "--format", "json", "--output", report], capsys)
    assert code == 1 and out == "" and json.loads(report.read_text())["overall"] == "fail"


def test_check_with_missing_spectrum_is_exit_2(tmp_path, capsys):
    crit = write(tmp_path, GOOD)
    code, out, err = run(["check", tmp_path / "none.csv", "--criteria", crit], capsys)
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1


def test_criteria_new_writes_a_file_that_loads(tmp_path, capsys):
    from lumeval.criteria import load_criteria

    for nominal, level in ((3000, "good"), (2200, "basic"), (6500, "high"), (4500, "good")):
        p = tmp_path / f"n{nominal}{level}.toml"
        code, out, err = run(["criteria", "new", p, "--nominal-cct", nominal, "--level", level], capsys)
        assert code == 0, err
        c = load_criteria(p)
        kinds = [k.KIND for k in c.clauses]
        assert "ansi_quadrangle" in kinds and c.clauses[0].nominal == nominal
        assert "sdcm" not in kinds  # offered commented out, centred on the category (test_criteria_new_defaults.py)
    code, _, err = run(["criteria", "new", p], capsys)  # exists
    assert code == 2 and "file exists" in err
    code, out, _ = run(["criteria", "new", "--nominal-cct", 3000], capsys)
    assert code == 0 and out.startswith("# lumeval acceptance criteria")
    code, _, err = run(["criteria", "new", "--nominal-cct", 3100], capsys)
    assert code == 2 and "3100" in err


def test_explain_gives_tender_wording(tmp_path, capsys):
    crit = write(
        tmp_path,
        GOOD
        + "[[clause]]\nkind='sdcm'\ncentre='F3000'\nmax_steps=3\n"
        + "[[clause]]\nid='intent'\nkind='tm30_design_intent'\nlevel='P2'\nnote='Preferred for the reading room.'\n",
    )
    code, out, _ = run(["criteria", "explain", crit], capsys)
    assert code == 0
    assert out.startswith("# Colour-quality acceptance criteria: Test")
    for needle in ("1. **chroma**", "ANSI C78.377-2017", "2870 K", "3220 K", "R9", "CIE 13.3-1995",
                   "3 steps", "IEC 60081", "ANSI/IES TM-30-20 Annex E", "Preferred for the reading room.",
                   "## Cautions", "IEC 62471"):
        assert needle in out, needle


CLAIMS = """\
lumeval_claims = 1
[supplier]
name = "Invented Co."
[claims]
cct_K = 3000
Ra = ">= 90"
R9 = ">= 50"
lifetime_h = 50000
"""


def test_claims_command(tmp_path, capsys, spectra_dir):
    p = write(tmp_path, CLAIMS, "claims.toml")
    code, out, err = run(["claims", spectra_dir / "planck3000.csv", "--claims", p, "--format", "json"], capsys)
    assert code == 0, err
    cl = {c["key"]: c for c in json.loads(out)["spectra"][0]["claims"]}
    assert cl["cct_K"]["outcome"] == "supported" and cl["lifetime_h"]["outcome"] == "not checkable"
    code, out, _ = run(["claims", spectra_dir / "f12.csv", "--claims", p, "--format", "json"], capsys)
    assert code == 1
    cl = {c["key"]: c for c in json.loads(out)["spectra"][0]["claims"]}
    assert cl["Ra"]["outcome"] == "contradicted"
    assert cl["Ra"]["excess"] == pytest.approx(cl["Ra"]["measured"] - 90)
    assert cl["cct_K"]["outcome"] == "supported"  # F12 ≈ 3000 K (CIE 15 Table T.8.1)
    code, out, _ = run(["claims", spectra_dir / "f12.csv", "--claims", p], capsys)
    assert code == 1 and "CONTRADICTED" in out and "over-claims" in out
    code, out, _ = run(["claims", spectra_dir / "f12.csv", "--claims", p, "--format", "csv"], capsys)
    assert code == 1 and out.splitlines()[0].startswith("spectrum,claim,as_stated")


@pytest.mark.parametrize(
    "text,key,words",
    [
        ("[claims]\nRa9 = '>= 50'\n", "Ra9", ["unknown claim", "did you mean"]),
        ("[claims]\nRa = 'about ninety'\n", "Ra", ["cannot read the claim"]),
        ("[claims]\ncct_K = '2,700 K'\n", "cct_K", ["neither as a thousands separator nor as a decimal mark",
                                                   "2700, not 2,700"]),
        ("[claims]\ncct_K = '3000 lm/W'\n", "cct_K", ["does not fit"]),
        ("[claims]\nRa = '>= 90 ± 2'\n", "Ra", ["cannot be combined"]),
        ("[claims]\ncct_K = 12000\n", "cct_K", ["no default tolerance"]),
        ("[tolerances]\nRa = -1\n[claims]\nRa = 90\n", "Ra", ["non-negative"]),
        ("[supplier]\nnmae = 'x'\n[claims]\nRa = 90\n", "nmae", ["did you mean 'name'"]),
        ("[suppliers]\nname = 'x'\n", "suppliers", ["did you mean 'supplier'"]),
    ],
)
def test_claims_errors_through_the_cli(tmp_path, capsys, spectra_dir, text, key, words):
    p = write(tmp_path, text, "claims.toml")
    code, out, err = run(["claims", spectra_dir / "planck3000.csv", "--claims", p], capsys)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and f"field {key!r}" in err
    for w in words:
        assert w in err, err


def test_check_writes_the_html_report(tmp_path, capsys, spectra_dir):
    crit = write(tmp_path, GOOD)
    html = tmp_path / "report.html"
    code, out, err = run(["check", spectra_dir / "f12.csv", "--criteria", crit, "--html", html, "--format", "json"], capsys)
    assert code == 1, err
    text = html.read_text(encoding="utf-8")
    assert "FAIL" in text and "R9" in text


def test_demo_criteria_and_claims_files_load():
    """The demo scenario's files are valid (the demo itself runs in `make demo`)."""
    from lumeval.criteria import load_claims, load_criteria

    root = Path(__file__).resolve().parents[1] / "spectra_demo"
    c = load_criteria(root / "tender_criteria.toml")
    assert [k.clause_id for k in c.clauses][:4] == ["chromaticity", "Duv", "Ra", "R9"]
    cl = load_claims(root / "supplier_claims.toml")
    assert {x.key for x in cl.claims} >= {"cct_K", "Ra", "R9", "luminous_flux_lm"}


def test_explain_names_a_guarded_decision_rule(tmp_path, capsys):
    crit = write(tmp_path, '[decision]\nrule = "guarded-acceptance"\n' + GOOD.replace("lumeval_criteria = 1\n", ""))
    code, out, err = run(["criteria", "explain", crit], capsys)
    assert code == 0, err
    assert "Decision rule: guarded acceptance" in out and "simple acceptance" not in out


def test_explain_every_region_kind(tmp_path, capsys):
    crit = write(
        tmp_path,
        "[[clause]]\nkind='ansi_quadrangle'\nnominal_cct='flexible'\ntarget_cct_K=3800\n"
        "[[clause]]\nkind='sdcm'\nmacadam1942=14\nmax_steps=2\n"
        "[[clause]]\nkind='sdcm'\ncentre_xy=[0.44, 0.40]\ng11=390000\ng12=-195000\ng22=275000\nmax_steps=4\n"
        "[[clause]]\nkind='tm30_design_intent'\nlevel='F1'\n",
    )
    code, out, err = run(["criteria", "explain", crit], capsys)
    assert code == 0, err
    assert "flexible-CCT quadrangle for 3800 K" in out
    assert "MacAdam (1942) ellipse 14" in out and "Wyszecki & Stiles" in out
    assert "the ellipse centred at x = 0.4400, y = 0.4000" in out and "g11 = 3.9e+05" in out
    assert "Fidelity priority level 1 (F1): Rf ≥ 95; Rf,h1 ≥ 90" in out


def test_check_notes_lot_clauses_it_does_not_judge(tmp_path, capsys, spectra_dir):
    crit = write(tmp_path, GOOD + "[[clause]]\nid='yield'\nkind='lot_yield'\nmin_percent=95\n")
    code, out, err = run(["check", spectra_dir / "planck3000.csv", "--criteria", crit, "--format", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert any("'yield'" in n and "lumeval lot" in n for n in doc["notes"])
    assert [c["id"] for c in doc["spectra"][0]["clauses"]] == ["chroma", "Ra", "R9"]


def test_demo_scenario_outcomes_match_the_docs(capsys):
    """docs/criteria.md describes the demo: A passes, B fails on R9 only, D fails only the
    quadrangle, C's datasheet over-claims (Ra, R9, Rf, Rg contradicted; CCT supported)."""
    root = Path(__file__).resolve().parents[1] / "spectra_demo"
    files = sorted((root / "downlights").glob("candidate_*.csv"))
    assert len(files) == 5
    code, out, _ = run(["check", *files, "--criteria", root / "tender_criteria.toml", "--format", "json"], capsys)
    assert code == 1
    doc = json.loads(out)
    failed = {s["name"][:11]: [c["id"] for c in s["clauses"] if c["outcome"] != "pass"] for s in doc["spectra"]}
    assert failed["candidate_A"] == []
    assert failed["candidate_B"] == ["R9"]
    assert failed["candidate_D"] == ["chromaticity"]
    assert set(failed["candidate_C"]) == {"Ra", "R9", "Rf", "Rg"}
    code, out, _ = run(["claims", root / "downlights" / "candidate_C_claritas_3000K.csv", "--claims", root / "supplier_claims.toml",
                        "--format", "json"], capsys)
    assert code == 1
    oc = {c["key"]: c["outcome"] for c in json.loads(out)["spectra"][0]["claims"]}
    assert oc["cct_K"] == "supported" and oc["duv"] == "supported"
    assert {k for k, v in oc.items() if v == "contradicted"} == {"Ra", "R9", "Rf", "Rg"}
    assert oc["luminous_flux_lm"] == oc["lifetime_h"] == "not checkable"


@pytest.mark.parametrize(
    "text,words",
    [("[supplier]\nname = 'x'\n", ["no claims"]), ("[claims\nRa = 1\n", ["not valid TOML"]),
     ("lumeval_claims = 3\n[claims]\nRa = 90\n", ["unsupported format version"]),
     ("lumeval_claims = true\n[claims]\nRa = 90\n", ["unsupported format version True"])],
)
def test_claims_file_level_errors(tmp_path, capsys, spectra_dir, text, words):
    p = write(tmp_path, text, "claims.toml")
    code, out, err = run(["claims", spectra_dir / "planck3000.csv", "--claims", p], capsys)
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1 and str(p) in err
    for w in words:
        assert w in err
    code, _, err = run(["claims", spectra_dir / "planck3000.csv", "--claims", tmp_path / "missing.toml"], capsys)
    assert code == 2 and "no such file" in err


def test_datasheet_wordings_through_the_cli(tmp_path, capsys, spectra_dir, monkeypatch):
    """Ranges and words as datasheets write them; F12's CCT ≈ 3000 K (CIE 15:2004 Table T.8.1)."""
    p = write(tmp_path, '[claims]\ncct_K = "2700 K – 3200 K"\nRa = "min. 90"\nduv = "±0.006"\nRf = "88 to 95"\n',
              "claims.toml")
    code, out, err = run(["claims", spectra_dir / "f12.csv", "--claims", p, "--format", "json"], capsys)
    assert code == 1, err
    cl = {c["key"]: c for c in json.loads(out)["spectra"][0]["claims"]}
    assert cl["cct_K"]["outcome"] == "supported"
    assert cl["Ra"]["outcome"] == "contradicted"
    assert cl["Ra"]["excess"] == pytest.approx(cl["Ra"]["measured"] - 90)
    monkeypatch.setenv("COLUMNS", "160")  # wide enough that no cell wraps
    code, out, _ = run(["claims", spectra_dir / "f12.csv", "--claims", p], capsys)
    # the accepted bounds printed as they are, not at the figure's precision ("≥ 90", "88 … 96")
    for needle in ("2699.5 … 3200.5 K", "≥ 89.5", "87.5 … 95.5", "-0.0060 … 0.0060", "min. 90", "88 to 95"):
        assert needle in out, needle


def test_a_narrowly_contradicted_claim_never_reads_as_inside(tmp_path, capsys, spectra_dir, monkeypatch):
    """A claim missed by less than the figure's printed precision: the terminal shows the
    measured value and "by how much" with the decimals that put it outside the accepted range
    (F12's Ra: 83 in CIE 15:2004 Table T.8.1, shared/reference-values.md; the exact value is
    taken from the JSON of the same run).
    Before, "Ra = c ± 1" missed by 0.3 printed the rounded value and "by how much 0"."""
    p = write(tmp_path, '[claims]\nRa = ">= 1"\n', "probe.toml")
    code, out, err = run(["claims", spectra_dir / "f12.csv", "--claims", p, "--format", "json"], capsys)
    assert code == 0, err
    ra = json.loads(out)["spectra"][0]["claims"][0]["measured"]
    assert ra == pytest.approx(83, abs=0.5)  # CIE 15:2004 Table T.8.1 (F12: Ra 83, rounded)
    c = round(ra + 1.3, 1)  # accepted from c - 1, about 0.3 above the measured value
    p = write(tmp_path, f'[claims]\nRa = "{c} ± 1"\n', "claims.toml")
    monkeypatch.setenv("COLUMNS", "160")
    code, out, err = run(["claims", spectra_dir / "f12.csv", "--claims", p], capsys)
    assert code == 1, err
    row = next(line for line in out.splitlines() if line.startswith(">>") and " Ra " in line).split()
    measured, by = float(row[row.index("±") + 2]), float(row[-3])
    assert measured < c - 1 and measured == pytest.approx(ra, abs=0.05)  # printed to the decimal needed
    assert by != 0 and by == pytest.approx(ra - (c - 1), abs=0.05)


def test_one_row_per_spectrum_table_never_prints_a_failed_value_as_its_limit(tmp_path, capsys, spectra_dir,
                                                                             monkeypatch):
    """The compact check table (one row per spectrum, for many spectra) prints a figure
    that failed a clause by less than its printed precision with the decimals its margin needs:
    F12's Ra (83 in CIE 15:2004 Table T.8.1; the exact value from the JSON of the same run)
    against a minimum about 0.3 above it printed "83" (or "84") beside "Ra ≥ 83.4"."""
    probe = write(tmp_path, 'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 1\n', "probe.toml")
    code, out, err = run(["check", spectra_dir / "f12.csv", "--criteria", probe, "--format", "json"], capsys)
    assert code == 0, err
    ra = json.loads(out)["spectra"][0]["clauses"][0]["measured"]
    assert ra == pytest.approx(83, abs=0.5)  # CIE 15:2004 Table T.8.1 (F12: Ra 83, rounded)
    c = round(ra + 0.3, 1)
    crit = write(tmp_path, f'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = {c}\n')
    copies = []
    for k in range(13):  # more spectra than the per-spectrum sections show: one row each
        copies.append(tmp_path / f"f12_{k:02d}.csv")
        copies[-1].write_bytes((spectra_dir / "f12.csv").read_bytes())
    monkeypatch.setenv("COLUMNS", "120")
    code, out, err = run(["check", *copies, "--criteria", crit], capsys)
    assert code == 1, err
    assert "one row each" in out
    row = next(line for line in out.splitlines() if line.startswith(">>"))
    assert f"{ra:.1f}" in row.split(), row


@pytest.mark.parametrize("clauses, command, judged_by", [
    ('[[clause]]\nfigure = "Ra"\nmin = 90\nover = [2700, 5000]\n', "check", "`lumeval mix` or `lumeval series`"),
    ('[[clause]]\nkind = "lot_yield"\nmin_percent = 90\n', "check", "`lumeval lot`"),
    ('[[clause]]\nfigure = "Ra"\nmin = 90\nover = [2700, 5000]\n', "lot", "`lumeval mix` or `lumeval series`"),
])
def test_criteria_that_the_command_does_not_judge_are_refused(tmp_path, capsys, spectra_dir, clauses, command,
                                                              judged_by):
    """A criteria file with no clause the command judges read as "all 0 requirements met": a
    pass, exit 0, for a spectrum that fails the clause (Ra 90 over 2700-5000 K; found by a
    review). Refused before any work, naming the command that judges the clauses."""
    p = write(tmp_path, "lumeval_criteria = 1\n" + clauses)
    code, out, err = run([command, spectra_dir / "planck3000.csv", "--criteria", p, *(["-q"] if command == "lot" else [])],
                         capsys)
    assert code == 2 and out == "", (code, out, err)
    line = err.strip()
    assert "\n" not in line and f"is judged by `lumeval {command}`" in line and judged_by in line
    # the Python API refuses the same way; a result holding no clause is never a pass
    import lumeval
    from lumeval.criteria.verdicts import CheckResult
    from lumeval.errors import UsageError

    if command == "check":
        with pytest.raises(UsageError):
            lumeval.check([spectra_dir / "planck3000.csv"], p)
    empty = CheckResult(("a",), ("a.csv",), ((),), (), {}, "c.toml")
    assert empty.verdicts == ("not judged",) and empty.exit_code == 1


def test_limits_over_ranges_that_do_not_meet_are_no_contradiction():
    """Ra ≥ 90 over 4000-5000 K and Ra ≤ 80 over 2700-3000 K apply at different settings: a
    tunable product may meet both (docs/tunable.md); they load."""
    from lumeval.criteria import parse_criteria

    c = parse_criteria("lumeval_criteria = 1\n[[clause]]\nid='a'\nfigure='Ra'\nmin=90\nover=[4000,5000]\n"
                       "[[clause]]\nid='b'\nfigure='Ra'\nmax=80\nover=[2700,3000]\n")
    assert [k.clause_id for k in c.clauses] == ["a", "b"]


def test_claims_on_figures_outside_their_validity_range_are_not_checkable(tmp_path, capsys):
    """A narrow green band (|Duv| ≈ 0.16) has Ra and Rf computed outside their validity range
    (CIE 13.3 / CIE 224 apply near the locus; CIE 15:2004 §9.5 for the 0.05 limit): "Ra ≥ -50"
    and "Rf ≤ 5" were reported supported while `check` calls the same figures not valid (found
    by a review). They are not checkable, with the reason."""
    wl = np.arange(380.0, 781.0, 1.0)
    v = np.exp(-0.5 * ((wl - 530.0) / 15.0) ** 2)
    spd = write(tmp_path, "wl,green\n" + "".join(f"{a:g},{b:.6f}\n" for a, b in zip(wl, v)), "green.csv")
    claims = write(tmp_path, 'lumeval_claims = 1\n[claims]\nRa = ">= -50"\nRf = "<= 5"\n', "claims.toml")
    code, out, err = run(["claims", spd, "--claims", claims, "-f", "json"], capsys)
    assert code == 0, err
    import json

    doc = json.loads(out)
    (spectrum,) = doc["spectra"]
    assert spectrum["verdict"] == "not checkable"
    rows = {c["figure"]: c for c in spectrum["claims"]}
    for fig in ("Ra", "Rf"):
        assert rows[fig]["outcome"] == "not checkable", rows[fig]
        assert "outside the validity range" in rows[fig]["reason"]


def test_a_clause_on_the_ansi_category_fails_light_in_no_category(tmp_path, spectra_dir, capsys):
    """The ANSI category figure is the quadrangle containing the chromaticity or the nearest
    (docs/metrics.md); a clause on it requires a category, so a point outside every quadrangle
    fails it, whatever its nearest category (found by reviews: a green line 0.16 off the locus
    passed as "5000 K", a 1500 K Planckian as "2200 K"), with no margin in kelvin and a reason
    giving the distance (the ansi_distance_upvp figure). A 3000 K Planckian lies inside the
    3000 K quadrangle (ANSI C78.377: the categories straddle the locus) and passes; a 1500 K
    Planckian lies beyond the warm end of every category (the lowest is 2200 K) and fails."""
    import lumeval

    wl = np.arange(380.0, 781.0, 1.0)
    v = np.exp(-0.5 * ((wl - 530.0) / 15.0) ** 2)
    green = write(tmp_path, "wl,green\n" + "".join(f"{a:g},{b:.6f}\n" for a, b in zip(wl, v)), "green.csv")
    b = planck_exitance(wl, 1500.0)
    warm = write(tmp_path, "wl,bb1500\n" + "".join(f"{a:g},{x / b.max():.8f}\n" for a, x in zip(wl, b)), "bb1500.csv")
    crit = write(tmp_path, 'lumeval_criteria = 1\n[[clause]]\nfigure = "ansi_category_K"\nrange = [2200, 6500]\n')
    res = lumeval.check([green, spectra_dir / "planck3000.csv", warm], crit)
    (r,) = res.results
    assert r.outcome == ("fail", "pass", "fail")
    assert np.isnan(r.margin[0]) and np.isnan(r.margin[2]) and r.margin[1] > 0
    d = lumeval.inspect([green, spectra_dir / "planck3000.csv", warm]).figure("ansi_distance_upvp")
    for i, nearest in ((0, 5000), (2, 2200)):
        assert r.measured[i] == nearest
        assert r.reason[i].startswith(f"in no ANSI C78.377 category: the chromaticity lies outside every quadrangle "
                                      f"(Δu′v′ = {d[i]:.4f} outside the nearest, {nearest} K)")
        assert 'kind = "ansi_quadrangle"' in r.reason[i]
    assert not r.reason[1]
    code, out, err = run(["check", green, "--criteria", crit], capsys)
    assert code == 1 and "FAIL" in out and "in no ANSI C78.377" in out, out + err


def test_a_margin_of_a_few_units_in_the_last_place_never_prints_as_zero(tmp_path, spectra_dir, capsys):
    """docs/criteria.md: "a margin that would round to zero is printed with more decimals ...
    never 0.0". A limit written to the last digit of a measured Ra, three units in the last
    place below it (numpy.nextafter), fails it by about 4e-14: the terminal and the CSV report
    prints a margin with a non-zero digit (it printed "0.000000 ✘ FAIL"; found by a review), and
    the CSV report carries the margin itself."""
    import re

    import lumeval

    f = spectra_dir / "planck3000.csv"
    ra = float(lumeval.inspect([f]).figure("Ra")[0])
    limit = ra
    for _ in range(3):
        limit = float(np.nextafter(limit, -np.inf))
    crit = write(tmp_path, f'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmax = {limit!r}\n')
    code, out, err = run(["check", f, "--criteria", crit], capsys)
    assert code == 1 and "FAIL" in out, out + err
    margins = re.findall(r"-0\.0*([1-9])", out)
    assert margins, out  # e.g. "-0.00000000000004"
    code, out, err = run(["check", f, "--criteria", crit, "--format", "csv"], capsys)
    assert code == 1
    (row,) = read_csv_report(out)
    assert row["clause_id"] == "Ra" and row["outcome"] == "fail"
    assert_allclose(float(row["margin"]), limit - ra, rtol=1e-12)  # the value as computed, not rounded


def test_light_in_no_ansi_category_fails_in_claims_and_in_a_lot_and_is_refused_under_a_rule(tmp_path, spectra_dir,
                                                                                          capsys):
    """The category failure of light outside every quadrangle holds everywhere (found by reviews
    of the first fix): as a contradicted datasheet claim of that category, and in a lot, whose
    worst margin was then the passing samples' (+800 K while a sample failed): n/a. Under a
    guarded decision rule a clause on the category is refused (exit 2, naming the clause's
    line): the category is a label without a spread in kelvin, and the rule decided again from
    the nearest category (a pass, p_c > 0.999, for light in no category); the quadrangle clause
    takes the guard band on its Δu′v′ margin."""
    import json

    import lumeval

    wl = np.arange(380.0, 781.0, 1.0)
    v = np.exp(-0.5 * ((wl - 530.0) / 15.0) ** 2)
    green = write(tmp_path, "wl,green\n" + "".join(f"{a:g},{b:.6f}\n" for a, b in zip(wl, v)), "green.csv")
    planck = spectra_dir / "planck3000.csv"
    rule = write(tmp_path, 'lumeval_criteria = 1\n[decision]\nrule = "guarded-acceptance"\n[[clause]]\nid = "cat"\n'
                 'figure = "ansi_category_K"\nrange = [2200, 6500]\n', "rule.toml")
    code, out, err = run(["check", green, planck, "--criteria", rule], capsys)
    assert code == 2 and out == "", err
    assert err.startswith(f"lumeval: error: {rule}:4: clause 'cat' judges the ANSI category") and \
        'kind = "ansi_quadrangle"' in err, err
    plain_rule = write(tmp_path, 'lumeval_criteria = 1\n[[clause]]\nid = "cat"\nfigure = "ansi_category_K"\n'
                       'range = [2200, 6500]\n', "plain_rule.toml")
    instrument = Path(__file__).resolve().parents[1] / "docs" / "examples" / "instrument_portable.toml"
    code, out, err = run(["check", green, "--criteria", plain_rule, "--instrument", instrument], capsys)
    assert code == 2 and out == "" and "the check with --instrument decides under measurement uncertainty" in err, err
    claims = write(tmp_path, 'lumeval_claims = 1\n[claims]\nansi_category_K = "5000"\n', "claims.toml")
    (r,) = lumeval.claims([green], claims).results
    assert r.outcome == ("contradicted",) and "in no ANSI C78.377 category" in r.reason[0] and np.isnan(r.excess[0])
    plain = write(tmp_path, 'lumeval_criteria = 1\n[[clause]]\nid = "cat"\nfigure = "ansi_category_K"\n'
                  'range = [2200, 6500]\n', "plain.toml")
    code, out, err = run(["lot", green, planck, "--criteria", plain, "-f", "json"], capsys)
    assert code == 1, err
    (summary,) = json.loads(out)["verdict"]["sample_clauses"]
    assert summary["counts"]["fail"] == 1 and summary["counts"]["pass"] == 1 and summary["worst_margin"] is None
    code, out, err = run(["criteria", "explain", plain], capsys)  # the tender wording says so too
    assert code == 0 and "A chromaticity outside every quadrangle of the edition is in no category and does not " \
                         "meet it." in out, out + err


def test_the_no_category_note_never_prints_a_zero_distance():
    """A chromaticity a hair outside every quadrangle (4.3e-6 in u′v′) read "Δu′v′ = 0.0000
    outside" (found by a review): two significant digits below 5e-5, four decimals above."""
    from lumeval.criteria.figure_notes import no_category_note

    assert "(Δu′v′ = 0.0000043 outside the nearest, 3500 K)" in no_category_note(4.3e-6, 3500.0)
    assert "(Δu′v′ = 0.1674 outside the nearest, 5000 K)" in no_category_note(0.16741, 5000.0)


def test_the_many_spectra_summary_names_a_failure_without_margin_as_the_worst(tmp_path, spectra_dir, capsys):
    """With more spectra than the per-spectrum tables show, the clause-by-clause summary gave
    a passing spectrum's margin as the worst ("worst margin +800 K, worst spectrum p1") while
    light in no ANSI category failed without a margin (found by a review): the failed spectrum
    is named, margin n/a."""
    wl = np.arange(380.0, 781.0, 1.0)
    v = np.exp(-0.5 * ((wl - 530.0) / 15.0) ** 2)
    green = write(tmp_path, "wl,green\n" + "".join(f"{a:g},{b:.6f}\n" for a, b in zip(wl, v)), "green.csv")
    crit = write(tmp_path, 'lumeval_criteria = 1\n[[clause]]\nid = "cat"\nfigure = "ansi_category_K"\n'
                 'range = [2200, 6500]\n')
    code, out, err = run(["check", *([spectra_dir / "planck3000.csv"] * 13), green, "--criteria", crit], capsys)
    assert code == 1, err
    row = next(ln for ln in out.splitlines() if ln.lstrip(">").split()[:1] == ["cat"])
    assert "✘ 1" in row and row.rstrip().endswith("n/a   green"), row
