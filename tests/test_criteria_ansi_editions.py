"""ANSI C78.377 editions in criteria files and in every report, through the real CLI.

Outside sources: a Planckian radiator at 3000 K has Duv = 0 (definition of Duv, CIE 15 /
ANSI C78.377) and CCT 3000 K, so it lies inside the 3000 K quadrangle of both editions (2008:
3045 ± 175 K, target Duv 0.000; 2017: 3045 ± 175 K, target Duv 0.0001 — tables and corner
sources named in lumeval/criteria/regions.py and tests/test_criteria_regions.py).
"""

from __future__ import annotations

import csv
import io
import json

import numpy as np
import pytest

from lumeval.criteria import parse_criteria
from lumeval.metrics.planck import planck_exitance

from .conftest import run_cli_in_process as run


@pytest.fixture(scope="module")
def planck3000(tmp_path_factory):
    d = tmp_path_factory.mktemp("spd")
    wl = np.arange(380.0, 781.0, 1.0)
    s = planck_exitance(wl, 3000.0)
    s = s / s.max()
    p = d / "planck3000.csv"
    p.write_text("wavelength_nm,planck3000\n" + "".join(f"{w:.0f},{v:.8f}\n" for w, v in zip(wl, s)))
    return p


def crit(tmp_path, body: str, name="c.toml"):
    p = tmp_path / name
    p.write_text('lumeval_criteria = 1\n[identification]\nproject = "Editions"\n' + body, encoding="utf-8")
    return p


CLAUSE_2008 = '[[clause]]\nid = "q08"\nkind = "ansi_quadrangle"\nnominal_cct = 3000\nedition = 2008\nlabel = "white point"\n'
CLAUSE_2017 = '[[clause]]\nid = "q17"\nkind = "ansi_quadrangle"\nnominal_cct = 3000\nedition = "2017"\n'
CLAUSE_DEFAULT = '[[clause]]\nid = "qdef"\nkind = "ansi_quadrangle"\nnominal_cct = 2200\n'


def test_edition_key_parses_and_defaults_to_2017():
    c = parse_criteria('lumeval_criteria = 1\n' + CLAUSE_2008 + CLAUSE_2017 + CLAUSE_DEFAULT, "t")
    q08, q17, qdef = c.clauses
    assert (q08.edition, q17.edition, qdef.edition) == ("2008", "2017", "2017")
    assert q08.quadrangle.edition == "2008" and q08.quadrangle.corners_origin == "published"
    assert qdef.quadrangle.corners_origin == "computed"  # 2200 K: no published copy found
    flex = parse_criteria('[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = "flexible"\ntarget_cct_K = 3800\nedition = 2008\n', "t")
    assert flex.clauses[0].quadrangle.edition == "2008" and "2008" in flex.clauses[0].label


@pytest.mark.parametrize(
    "body,key,words",
    [
        ('[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = 3000\nedition = 2011\n', "edition", ["2011", "2008 or 2017"]),
        ('[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = 3000\nedition = true\n', "edition", ["not an encoded edition"]),
        ('[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = 2200\nedition = 2008\n', "nominal_cct",
         ["ANSI C78.377-2008", "edition 2017"]),
        ('[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = "flexible"\ntarget_cct_K = 6800\nedition = 2008\n',
         "target_cct_K", ["2700-6500"]),
    ],
)
def test_bad_edition_is_one_clear_line(tmp_path, capsys, body, key, words):
    code, out, err = run(["criteria", "explain", crit(tmp_path, body)], capsys)
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert key in err
    for w in words:
        assert w in err, (w, err)


def test_every_report_names_the_edition(tmp_path, capsys, planck3000):
    """A Planckian 3000 K source passes both editions' 3000 K quadrangles; the terminal, JSON,
    CSV and HTML reports and `criteria explain` each name the edition of each clause, and say
    whether its corners are published or computed."""
    c = crit(tmp_path, CLAUSE_2008 + CLAUSE_2017 + CLAUSE_DEFAULT)
    # terminal (the 2008 clause has a label of its own, so the edition must come from the limit text)
    code, out, err = run(["check", planck3000, "--criteria", c], capsys)
    assert code == 1, err  # the 2200 K clause fails a 3000 K source
    flat = " ".join(out.split())
    assert "ANSI C78.377-2008" in flat and "ANSI C78.377-2017" in flat
    assert "published corners" in flat and "corners computed by formula" in flat
    # JSON
    code, out, _ = run(["check", planck3000, "--criteria", c, "--format", "json"], capsys)
    by = {r["id"]: r for r in json.loads(out)["spectra"][0]["clauses"]}
    assert by["q08"]["outcome"] == "pass" and by["q17"]["outcome"] == "pass" and by["qdef"]["outcome"] == "fail"
    assert by["q08"]["limit"].startswith("ANSI C78.377-2008, published corners")
    assert by["q17"]["limit"].startswith("ANSI C78.377-2017, published corners")
    assert by["qdef"]["limit"].startswith("ANSI C78.377-2017, corners computed by formula")
    assert "ANSI C78.377-2008" in by["q08"]["source"] and "secondary" in by["q08"]["source"]  # the copies are named in regions.py, not in reports
    assert "2017 Table 1" in by["q17"]["source"] and "s006112" not in by["q17"]["source"]
    # both well inside (the nearest edge, the 2870 K one, is common to both editions)
    assert by["q08"]["margin"] > 0.004 and by["q17"]["margin"] > 0.004
    # CSV
    code, out, _ = run(["check", planck3000, "--criteria", c, "--format", "csv"], capsys)
    rows = {r["clause_id"]: r for r in csv.DictReader(io.StringIO(out))}
    assert rows["q08"]["limit"].startswith("ANSI C78.377-2008")
    assert rows["q17"]["limit"].startswith("ANSI C78.377-2017")
    # HTML
    html = tmp_path / "r.html"
    code, _, err = run(["check", planck3000, "--criteria", c, "--html", html, "--format", "json"], capsys)
    text = html.read_text(encoding="utf-8")
    assert "ANSI C78.377-2008" in text and "ANSI C78.377-2017" in text
    # criteria explain: the edition and, for published corners, the corners themselves
    code, out, _ = run(["criteria", "explain", c], capsys)
    assert code == 0
    assert "3000 K nominal CCT category of ANSI C78.377-2008" in out
    assert "(0.4147, 0.3814)" in out  # a published 2008 3000 K corner (Harold2017/myfirstflasky)
    assert "3000 K nominal CCT category of ANSI C78.377-2017" in out and "(0.4150, 0.3821)" in out
    assert "2200 K nominal CCT category of ANSI C78.377-2017" in out and "each edge" in out
