"""``lumeval check`` under measurement uncertainty, through the real CLI entry point.

Outside sources: JCGM 106:2012 §7.3 normal relation p_c = Φ((y − T_L)/u) (checked with scipy on
the reported y and u); ISO 14253-1:2017 / JCGM 106 §8.3.2 guarded acceptance zones (w = 2u).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from scipy.stats import norm

from .conftest import run_cli_in_process as run

DEMO = Path(__file__).resolve().parents[1] / "spectra_demo" / "downlights"
A = DEMO / "candidate_A_aurora_3000K.csv"
B = DEMO / "candidate_B_basicline_3000K.csv"


def write(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


CRIT = """
[decision]
rule = "{rule}"

[[clause]]
id = "Ra"
figure = "Ra"
min = {ra_min}

[[clause]]
id = "chromaticity"
kind = "ansi_quadrangle"
nominal_cct = 3000
"""

INST = """
[instrument]
name = "test spectroradiometer"
wavelength_offset_nm = 0.3
bandwidth_nm = 5

[monte_carlo]
draws = 300
seed = 5
"""


def test_json_carries_uncertainty_probability_and_rule(tmp_path, capsys):
    # candidate A has Ra ≈ 91.61: a limit of 91.55 lies inside the guard band → indeterminate
    crit = write(tmp_path, "c.toml", CRIT.format(rule="guarded-acceptance", ra_min=91.55))
    inst = write(tmp_path, "i.toml", INST)
    code, out, err = run(["check", A, "--criteria", crit, "--instrument", inst, "--format", "json"], capsys)
    assert err == ""
    doc = json.loads(out)
    ra = {c["id"]: c for c in doc["spectra"][0]["clauses"]}["Ra"]
    u = ra["uncertainty"]
    assert 0.005 < u < 0.5
    assert ra["measured"] - 91.55 < 2 * u  # inside the guard band
    assert ra["outcome"] == "indeterminate" and doc["spectra"][0]["verdict"] == "indeterminate"
    assert code == 1 and doc["exit_code"] == 1  # an indeterminate never exits 0
    assert ra["p_conformance"] == pytest.approx(norm.cdf((ra["measured"] - 91.55) / u), rel=1e-9)
    assert ra["details"]["ci95_low"] < ra["measured"] < ra["details"]["ci95_high"]
    assert "guarded acceptance" in ra["decision_rule"]
    unc = doc["uncertainty"]
    assert unc["decision_rule"] == "guarded-acceptance" and unc["monte_carlo"]["draws_used"] == [300]
    assert unc["instrument"]["bandwidth_nm"] == 5.0 and unc["instrument"]["name"] == "test spectroradiometer"
    assert unc["figures"]["cct_K"]["u"][0] > 0


def test_terminal_report_explains_the_rule_and_shows_u(tmp_path, capsys):
    crit = write(tmp_path, "c.toml", CRIT.format(rule="guarded-rejection", ra_min=80))
    inst = write(tmp_path, "i.toml", INST)
    code, out, err = run(["check", A, B, "--criteria", crit, "--instrument", inst], capsys)
    assert code == 0, err
    text = " ".join(out.split())  # the terminal wraps lines
    assert "guarded rejection" in text and "± " in text and "p_c" in text and "Monte Carlo" in text


def test_seeded_runs_reproduce_and_seed_option_changes_them(tmp_path, capsys):
    crit = write(tmp_path, "c.toml", CRIT.format(rule="simple", ra_min=80))
    inst = write(tmp_path, "i.toml", INST)
    outs = []
    for extra in ([], [], ["--seed", "6"]):
        code, out, _ = run(["check", A, "--criteria", crit, "--instrument", inst, "--format", "json", *extra], capsys)
        assert code == 0
        outs.append(json.loads(out)["spectra"][0]["clauses"][0]["uncertainty"])
    assert outs[0] == outs[1] and outs[0] != outs[2]


def test_instrument_table_in_the_criteria_file(tmp_path, capsys):
    text = CRIT.format(rule="simple", ra_min=80) + "\n[instrument]\nnoise_relative = 0.01\n\n[monte_carlo]\ndraws = 200\n"
    crit = write(tmp_path, "c.toml", text)
    code, out, err = run(["check", A, "--criteria", crit, "--format", "csv"], capsys)
    assert code == 0, err
    header, *rows = out.strip().splitlines()
    cols = header.split(",")
    assert "u" in cols and "p_conformance" in cols
    first = dict(zip(cols, rows[0].split(",")))
    assert float(first["u"]) > 0 and float(first["p_conformance"]) > 0.99


@pytest.mark.parametrize(
    "crit_text, inst_text, words",
    [
        (CRIT.format(rule="guarded", ra_min=80), None, ":3"),
        (CRIT.format(rule="simple", ra_min=80) + "\n[instrument]\nbandwith_nm = 3\n", None, "bandwith_nm"),
        (CRIT.format(rule="simple", ra_min=80), "[instrument]\nnoise_relative = 5\n", "i.toml:2"),
    ],
)
def test_bad_uncertainty_input_is_exit_2_one_line(tmp_path, capsys, crit_text, inst_text, words):
    crit = write(tmp_path, "c.toml", crit_text)
    argv = ["check", A, "--criteria", crit]
    if inst_text is not None:
        argv += ["--instrument", write(tmp_path, "i.toml", inst_text)]
    code, out, err = run(argv, capsys)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and words in err and "Traceback" not in err


def test_lot_with_instrument_carries_per_sample_uncertainty(tmp_path, capsys):
    crit = write(tmp_path, "c.toml", CRIT.format(rule="guarded-acceptance", ra_min=91.55))
    inst = write(tmp_path, "i.toml", INST)
    out_json = tmp_path / "lot.json"
    code, out, err = run(["lot", A, B, "--criteria", crit, "--instrument", inst, "--draws", "100", "--quiet",
                          "--json", out_json], capsys)
    doc = json.loads(out_json.read_text())
    assert doc["uncertainty"]["decision_rule"] == "guarded-acceptance"
    a, b = doc["samples"]
    assert a["clauses"]["Ra"]["outcome"] == "indeterminate" and a["verdict"] == "indeterminate"
    assert b["clauses"]["Ra"]["outcome"] == "fail"  # candidate B's Ra ≈ 91.3 is below the limit
    assert a["clauses"]["Ra"]["uncertainty"] > 0 and 0 < a["clauses"]["Ra"]["p_conformance"] < 1
    assert code == 1


def test_worked_example_of_the_docs_holds(tmp_path, capsys):
    """docs/uncertainty.md's worked example: the outcomes it states follow from the CLI's own
    y, u and the zone rules (w = 2u), and are the outcomes the CLI reports."""
    root = Path(__file__).resolve().parents[1]
    doc = (root / "docs" / "uncertainty.md").read_text(encoding="utf-8")
    base = (root / "docs" / "examples" / "tight_criteria_guarded.toml").read_text(encoding="utf-8")
    inst = root / "docs" / "examples" / "instrument_portable.toml"
    got = {}
    for rule in ("simple", "guarded-acceptance", "guarded-rejection"):
        crit = write(tmp_path, f"{rule}.toml", base.replace('rule = "guarded-acceptance"', f'rule = "{rule}"'))
        code, out, err = run(["check", A, B, "--criteria", crit, "--instrument", inst, "--format", "json"], capsys)
        assert err == ""
        for s in json.loads(out)["spectra"]:
            for c in s["clauses"]:
                got[(s["name"][10], c["id"], rule)] = (c["outcome"], c["measured"], c["uncertainty"], c["p_conformance"])
    assert got[("A", "Rf", "guarded-acceptance")][0] == "indeterminate"
    assert got[("A", "Ra", "guarded-acceptance")][0] == "indeterminate"
    assert got[("A", "Rf", "simple")][0] == "pass" and got[("A", "Rf", "guarded-rejection")][0] == "pass"
    assert got[("B", "Ra", "simple")][0] == "fail" and got[("B", "Ra", "guarded-acceptance")][0] == "fail"
    assert got[("B", "Ra", "guarded-rejection")][0] == "indeterminate"
    # the numbers quoted in the docs' table (3 decimals) are the CLI's
    for key in (("A", "Rf"), ("A", "Ra"), ("B", "Ra")):
        _, y, u, p = got[key + ("simple",)]
        assert f"{y:.3f}" in doc and f"{u:.3f}" in doc and f"{p:.3f}" in doc, key


@pytest.mark.parametrize("opt", [["--draws", "50"], ["--seed", "-3"]])
def test_bad_monte_carlo_options_are_exit_2_one_line(tmp_path, capsys, opt):
    crit = write(tmp_path, "c.toml", CRIT.format(rule="simple", ra_min=80))
    code, out, err = run(["check", A, "--criteria", crit, *opt], capsys)
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1 and opt[0] in err


def test_html_report_shows_u_p_and_rule(tmp_path, capsys):
    crit = write(tmp_path, "c.toml", CRIT.format(rule="guarded-acceptance", ra_min=91.55))
    inst = write(tmp_path, "i.toml", INST)
    html = tmp_path / "r.html"
    code, out, err = run(["check", A, "--criteria", crit, "--instrument", inst, "--html", html, "--format", "json"], capsys)
    assert code == 1
    text = html.read_text(encoding="utf-8")
    assert "guarded acceptance" in text and "p_c" in text and "± " in text and "INDETERMINATE" in text


def test_lot_under_a_guarded_rule_says_its_margins_are_to_the_limit(tmp_path, capsys, monkeypatch):
    """Under guarded acceptance (ISO 14253-1 / JCGM 106 §8.3.2) a sample with a positive margin
    can fail to pass (candidate A: Ra ≈ 91.61 against 91.55 is indeterminate): the lot's
    requirement line gives the worst margin "to the limit", and the rule's note says the guard
    band is not subtracted; under simple acceptance neither is said."""
    monkeypatch.setenv("COLUMNS", "200")
    inst = write(tmp_path, "i.toml", INST)
    for rule, said in (("guarded-acceptance", True), ("simple", False)):
        crit = write(tmp_path, f"{rule}.toml", CRIT.format(rule=rule, ra_min=91.55))
        code, out, err = run(["lot", A, B, "--criteria", crit, "--instrument", inst, "--draws", "100", "--quiet"], capsys)
        text = " ".join(out.split())
        assert code == 1, out + err
        line = next(t for t in out.splitlines() if "worst margin" in t and "Ra" in t)
        assert ("to the limit" in line) is said, line
        assert ("the guard band w is not subtracted: a pass needs a margin of at least w" in text) is said
