"""The check report says what was judged, clause by clause, in every view (a review of the HTML
and terminal reports found four ways they said less than the truth):

1. Each clause has its own row in the HTML "Checks" table: two clauses whose requirement reads
   the same (one label on R9 and R12; two SDCM ellipses with one centre) were one row, the last
   one's verdict shown (a FAIL hidden behind a PASS) while the headline counted both.
2. Clauses ``check`` leaves to another command (``over = [...]``: ``mix`` / ``series``; lot
   clauses: ``lot``) are said to be not judged, in the headline and listed in the HTML; the
   headline no longer says "every requirement is met". The exit code rule is unchanged.
3. The per-spectrum verdict line counts every outcome that is not a pass (failed, not valid, not
   judged), not only the failures.
4. The criteria file's own warnings (two ANSI quadrangles with nothing in common) reach the HTML
   report too, as they reach the terminal and the JSON.

Pages are read with html5lib (a WHATWG-conformant parser) and compared as text, never byte by
byte; the terminal report is compared line by line.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from tests.conftest import run_cli_in_process as run

REPO = Path(__file__).resolve().parents[1]
BIDS = REPO / "spectra_demo" / "downlights"
CANDIDATE_B = BIDS / "candidate_B_basicline_3000K.csv"  # R9 about 15, R12 above 50 (CIE 13.3)

SAME_LABEL = """
[identification]
project = "same-label probe"
[[clause]]
id = "R9"
label = "Saturated colours"
figure = "R9"
min = 50
[[clause]]
id = "R12"
label = "Saturated colours"
figure = "R12"
min = 50
"""

OVER_MIX = """
[[clause]]
id = "Ra-over"
figure = "Ra"
min = 95
over = [2700, 5000]
[[clause]]
id = "R9-any"
figure = "R9"
min = 0
"""

TWO_QUADRANGLES = """
[[clause]]
id = "q3000"
kind = "ansi_quadrangle"
nominal_cct = 3000
[[clause]]
id = "q3500"
kind = "ansi_quadrangle"
nominal_cct = 3500
"""

#: One failure, two figures outside the validity range, one undefined figure and one pass for a
#: green spectrum (|Duv| about 0.07: CCT undefined, CRI and TM-30 not valid).
MIXED = """
[[clause]]
id = "Duv"
figure = "duv"
max = 0.006
[[clause]]
id = "Ra"
figure = "Ra"
min = 0
[[clause]]
id = "Rf"
figure = "Rf"
min = 0
[[clause]]
id = "CCT"
figure = "CCT"
range = [1000, 25000]
[[clause]]
id = "x"
figure = "x"
range = [0, 1]
"""


def _write(tmp_path: Path, name: str, text: str) -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _green(tmp_path: Path) -> Path:
    """A smooth green spectrum well above the Planckian locus (Duv about +0.07)."""
    wl = np.arange(380, 781, 1.0)
    v = np.exp(-0.5 * ((wl - 545.0) / 40.0) ** 2) + 0.03
    p = tmp_path / "green.csv"
    p.write_text("wavelength_nm,green\n" + "".join(f"{a:g},{b:.6g}\n" for a, b in zip(wl, v)), encoding="utf-8")
    return p


def _page(path: Path):
    import html5lib

    return html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(path.read_text(encoding="utf-8"))


def _text(el) -> str:
    return " ".join("".join(el.itertext()).split())


def _verdict_section(doc):
    return next(s for s in doc.iter("section") if s.get("id") == "verdict")


def _checks_table(doc):
    """The table after the "Checks" heading of the verdict section."""
    seen = False
    for el in _verdict_section(doc):
        if el.tag == "h3" and _text(el).startswith("Checks"):
            seen = True
        elif seen and el.tag == "table":
            return el
    raise AssertionError("no Checks table in the verdict section")


def _badges(el) -> list[str]:
    return [_text(b) for b in el.iter("span") if "badge" in (b.get("class") or "").split()]


def _body_rows(table) -> list:
    return [tr for tr in table.iter("tr") if tr.find("td") is not None]


def _check(tmp_path, capsys, monkeypatch, spectra, criteria: Path, *extra):
    monkeypatch.setenv("COLUMNS", "200")
    html = tmp_path / "report.html"
    code, out, err = run(["check", *map(str, spectra), "--criteria", str(criteria), "--html", str(html), "-q",
                          "--wide", *extra], capsys)
    assert code in (0, 1), err
    return code, out, err, _page(html)


# --------------------------------------------------------------------------- 1. one row per clause


def test_html_checks_table_has_one_row_per_clause_even_when_requirements_read_the_same(tmp_path, capsys, monkeypatch):
    crit = _write(tmp_path, "same_label.toml", SAME_LABEL)
    code, _out, _err, doc = _check(tmp_path, capsys, monkeypatch, [CANDIDATE_B], crit)
    assert code == 1  # R9 fails
    rows = [tr for tr in _body_rows(_checks_table(doc)) if _text(tr).startswith("Saturated colours")]
    assert len(rows) == 2, [_text(tr) for tr in rows]
    by_id = {}
    for tr in rows:
        text = _text(tr)
        ids = [i for i in ("R9", "R12") if re.search(rf"\b{i}\b", _text(tr.find("td")))]
        assert len(ids) == 1, text  # each row names its own clause
        by_id[ids[0]] = _badges(tr)
    assert by_id == {"R9": ["✗ FAIL"], "R12": ["✓ PASS"]}


def test_view_keeps_two_ellipses_with_one_centre_apart():
    """Two SDCM clauses with the same centre and different coefficients: the view-model of the
    report and of the notebook fragment each keep both rows with their own outcomes."""
    import lumeval
    from lumeval.criteria import parse_criteria
    from lumeval.render.report_figures import report_figures
    from lumeval.render.report_view import build_report_view, check_view

    ev = lumeval.inspect([str(CANDIDATE_B)])
    x, y = float(ev.figure("x")[0]) + 0.003, float(ev.figure("y")[0])  # about 1.9 steps of the first ellipse
    text = "".join(f'[[clause]]\nid = "{i}"\nkind = "sdcm"\ncentre_xy = [{x:.4f}, {y:.4f}]\n'
                   f"g11 = {g11}\ng12 = {g12}\ng22 = {g22}\nmax_steps = 3\n"
                   for i, g11, g12, g22 in (("wide", 395000, -215000, 260000), ("tight", 6320000, -3440000, 4160000)))
    res = parse_criteria(text, "ellipses.toml").evaluate(ev)
    assert [r.outcome[0] for r in res.results] == ["pass", "fail"]
    assert res.results[0].label == res.results[1].label and res.results[0].limit_text == res.results[1].limit_text
    report = build_report_view(ev, report_figures(ev, verdicts=res), verdicts=res, inline=lambda s, p, t: "<svg/>")
    for view in (report.verdict, check_view(res).verdict):
        rows = view.checks.table.rows
        assert len(rows) == 2
        assert [r.cells[2].outcome for r in rows] == ["pass", "fail"]
        assert [any("wide" in t for t in (r.cells[0].text, *r.cells[0].notes)) for r in rows] == [True, False]
        assert [any("tight" in t for t in (r.cells[0].text, *r.cells[0].notes)) for r in rows] == [False, True]


# --------------------------------------------------------------------------- 2. clauses not judged here


def test_clauses_left_to_another_command_are_said_not_judged(tmp_path, capsys, monkeypatch):
    crit = _write(tmp_path, "over_mix.toml", OVER_MIX)
    code, out, _err, doc = _check(tmp_path, capsys, monkeypatch, [CANDIDATE_B], crit)
    assert code == 0  # the exit code rule is unchanged (docs/criteria.md)
    flat = " ".join(out.split())
    overall = next(line for line in out.splitlines() if line.startswith("OVERALL"))
    assert "every requirement judged here" in overall and "1 requirement not judged by `lumeval check`" in overall
    assert "Ra-over" in overall and "lumeval mix" in overall
    assert "meets every requirement —" not in flat and not overall.rstrip().endswith("every requirement")
    verdict = _text(_verdict_section(doc))
    assert "Every criterion is met." not in verdict
    assert "judged here" in verdict and "not judged by `lumeval check`" in verdict
    listed = next(ul for ul in _verdict_section(doc).iter("ul") if "Ra-over" in _text(ul))
    assert "lumeval mix" in _text(listed)


def test_lot_report_does_not_call_its_own_lot_clauses_not_judged():
    """A lot report judges lot clauses: only a check report lists them as left to `lumeval lot`."""
    from lumeval.criteria.verdicts import NotJudgedHere
    from lumeval.render.verdicts import not_judged_here

    class Result:
        not_judged = (NotJudgedHere("yield", "lot_yield", "lot", "`lumeval lot`", "note 1"),
                      NotJudgedHere("it's", "figure", "range", "`lumeval mix` or `lumeval series`", "note 2"))
        notes = ("note 1", "note 2", "WARNING: something else")

    assert [(c.clause_id, c.scope) for c in not_judged_here(Result())] == [("yield", "lot"), ("it's", "range")]
    assert [c.clause_id for c in not_judged_here(Result(), judged_scopes=("sample", "lot"))] == ["it's"]


def test_the_check_records_the_clauses_it_does_not_judge():
    """Criteria.evaluate records each clause it leaves to another command as data (the reports
    name them from it), with the note it writes about it."""
    import lumeval
    from lumeval.criteria import parse_criteria
    from lumeval.render.verdicts import not_judged_here

    ev = lumeval.inspect([str(CANDIDATE_B)])
    res = parse_criteria(OVER_MIX, "over.toml").evaluate(ev)
    (c,) = not_judged_here(res)
    assert (c.clause_id, c.kind, c.scope, c.judged_by) == ("Ra-over", "figure", "range", "`lumeval mix` or `lumeval series`")
    assert c.note in res.notes


# --------------------------------------------------------------------------- 3. every outcome counted


def test_verdict_line_counts_every_outcome_that_is_not_a_pass(tmp_path, capsys, monkeypatch):
    crit = _write(tmp_path, "mixed.toml", MIXED)
    code, out, _err, doc = _check(tmp_path, capsys, monkeypatch, [_green(tmp_path)], crit)
    assert code == 1
    line = " ".join(next(x for x in out.splitlines() if x.startswith("✘ FAIL")).split())
    assert "1 of 5 requirements FAILED" in line and "2 not valid" in line and "1 not judged" in line, line
    summary = _text(next(d for d in _verdict_section(doc).iter("div") if "summary" in (d.get("class") or "")))
    assert "1 failed" in summary and "2 not valid" in summary and "1 not judged" in summary, summary


# --------------------------------------------------------------------------- 4. the criteria's warnings


def test_criteria_warnings_reach_the_html_report(tmp_path, capsys, monkeypatch):
    from lumeval.criteria import load_criteria

    crit = _write(tmp_path, "quads.toml", TWO_QUADRANGLES)
    warnings = load_criteria(crit).warnings
    assert warnings  # the loader warns: every spectrum fails one of two disjoint quadrangles
    code, out, err, doc = _check(tmp_path, capsys, monkeypatch, [BIDS / "candidate_A_aurora_3000K.csv"], crit)
    page = _text(doc.find("body"))
    for w in warnings:
        assert " ".join(w.split()) in page
        assert " ".join(w.split()) in " ".join(out.split())  # the terminal has it too (the same source)


# --------------------------------------------------------------------------- untrusted text


HOSTILE = """
[[clause]]
id = "<img src=x onerror=alert(1)>"
figure = "Ra"
min = 95
over = [2700, 5000]
[[clause]]
id = "[red]r9[/red]"
label = "<i>Sat</i> {{ 7*7 }}"
figure = "R9"
min = 0
"""


def test_ids_and_labels_in_the_new_lines_are_text_never_markup(tmp_path, capsys, monkeypatch):
    crit = _write(tmp_path, "hostile.toml", HOSTILE)
    code, out, _err, doc = _check(tmp_path, capsys, monkeypatch, [CANDIDATE_B], crit)
    assert code == 0
    assert doc.findall(".//img") == [] and doc.findall(".//script") == [] and doc.findall(".//i") == []
    verdict = _text(_verdict_section(doc))
    assert "<img src=x onerror=alert(1)>: judged by" in verdict and "id: [red]r9[/red]" in verdict
    assert "<i>Sat</i> {{ 7*7 }}" in verdict
    overall = next(line for line in out.splitlines() if line.startswith("OVERALL"))
    assert "(<img src=x onerror=alert(1)>: judged by" in overall and "[red]r9[/red]" in out
    frag = _parse_fragment(tmp_path, crit)
    assert frag.findall(".//img") == [] and "<img src=x onerror=alert(1)>" in _text(frag)


def _parse_fragment(tmp_path, crit):
    """The notebook's view of the same check (``CheckResult._repr_html_``), parsed."""
    import html5lib

    import lumeval
    from lumeval.criteria import load_criteria

    res = load_criteria(crit).evaluate(lumeval.inspect([str(CANDIDATE_B)]))
    return html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parseFragment(res._repr_html_())


def test_key_figures_say_they_are_rounded_and_criteria_compare_unrounded(tmp_path, capsys, monkeypatch):
    """A specifier read the key figures' 'Ra 80' beside a failed 'Ra ≥ 80' (the value 79.6) as a
    wrong verdict: the table says the figures are rounded and the criteria compare unrounded values."""
    from lumeval.render.report_view import ROUNDED_NOTE

    crit = _write(tmp_path, "ra.toml", 'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 80\n')
    _code, _out, _err, doc = _check(tmp_path, capsys, monkeypatch, [CANDIDATE_B], crit)
    section = next(s for s in doc.iter("section") if s.get("id") == "figures-table")
    assert ROUNDED_NOTE in " ".join(_text(section).split())
