"""Rendering of verdicts: failures visible without colour, no misleading zeros, undefined values
never printed as numbers, JSON/CSV carry the same verdicts (decision logic on hand-made numbers)."""

from __future__ import annotations

import io
import json

import numpy as np

from lumeval.criteria import parse_criteria
from lumeval.render import verdicts as rv

from .test_criteria_verdicts import FakeEvaluation


def plain(renderables) -> str:
    from rich.console import Console

    c = Console(file=io.StringIO(), width=160, color_system=None)
    for r in renderables:
        c.print(r)
    return c.file.getvalue()


CRIT = parse_criteria(
    '[[clause]]\nid = "R9"\nfigure = "R9"\nmin = 50\n'
    '[[clause]]\nid = "Rcs"\nfigure = "Rcs_h1"\nrange = [-7, 19]\n'
    '[[clause]]\nid = "chroma"\nkind = "ansi_quadrangle"\nnominal_cct = 3000\n',
    "t.toml",
)


def test_failures_are_words_and_marks_not_colour():
    ev = FakeEvaluation([3000, 3000], [0, 0], R9=[60.0, np.nan], Rcs_h1=[-7.03, 0.0])
    text = plain(rv.check_renderables(CRIT.evaluate(ev)))
    fail_lines = [ln for ln in text.splitlines() if "✘ FAIL" in ln and ln.startswith(">>")]
    assert [ln.split()[1] for ln in fail_lines] == ["Rcs"]  # spectrum s0: only Rcs fails
    assert "-7.03%" in text and "-0.03%" in text  # not "-7.0%" with margin "0.0%"
    assert "n/a" in text and "NOT JUDGED" in text
    assert "OVERALL: ✘ FAIL" in text


def test_many_spectra_are_summarised_and_every_failure_listed():
    n = 30
    r9 = np.full(n, 70.0)
    bad = [2, 11, 29]
    r9[bad] = [40.0, 45.0, 49.0]
    ev = FakeEvaluation(np.full(n, 3000.0), np.zeros(n), R9=r9, Rcs_h1=np.zeros(n))
    text = plain(rv.check_renderables(CRIT.evaluate(ev)))
    assert "30 spectra, clause by clause" in text
    assert "Spectra that did not pass (3 of 30)" in text
    for i in bad:
        assert f"s{i}: R9 (" in text
    assert "s2: R9 (-10)" in text  # worst margin of R9 (40 against 50), in R9's own precision (integers)


def test_json_and_csv_carry_the_same_verdicts():
    ev = FakeEvaluation([3000, 3300], [0, 0], R9=[60.0, np.nan], Rcs_h1=[0.0, 25.0])
    res = CRIT.evaluate(ev)
    doc = json.loads(rv.check_to_json(res))
    assert [s["verdict"] for s in doc["spectra"]] == list(res.verdicts)
    r9 = doc["spectra"][1]["clauses"][0]
    assert r9["measured"] is None and r9["margin"] is None and r9["outcome"] == "not judged"
    rows = [ln for ln in rv.check_to_csv(res).strip().splitlines() if not ln.startswith('"# caution: ')]
    assert len(rows) == 1 + 2 * 3
    header = rows[0].split(",")
    i_out, i_meas = header.index("outcome"), header.index("measured")
    cells = rows[4].split(",")  # spectrum 2, clause R9
    assert cells[0] == "s1" and cells[i_meas] == "" and cells[i_out] == "not judged"
