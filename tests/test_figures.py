"""The figure registry (lumeval.figures) drives every list of figures.

A figure registered in one place (a test-only row) appears in the JSON and CSV outputs, the
terminal and HTML reports, criteria files and lot statistics; names and the trade's spellings
are matched case-insensitively; the human formats are the registry's.
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import numpy as np
import pytest

from lumeval import figures
from lumeval.render.tables import read_csv_report

DEMO = sorted((Path(__file__).resolve().parents[1] / "spectra_demo" / "downlights").glob("*.csv"))


@pytest.fixture(scope="module")
def ev():
    if not DEMO:
        pytest.skip("spectra_demo/downlights has no CSV files")
    from lumeval.api import inspect as inspect_files

    return inspect_files(DEMO[:3])


@pytest.fixture
def extra_figure():
    """A test-only figure: the share of Y in X + Y + Z (which is the chromaticity y by
    definition, CIE 15:2004 §7.3), registered in the photometry group as a key figure."""
    fig = figures.Figure(
        "test_y_share", "Y share", "photometry", "share of Y in X + Y + Z (test only)", "CIE 15:2004 §7.3",
        lambda e: e.XYZ[:, 1] / e.XYZ.sum(axis=1), decimals=3, aliases=("Y-share",), summary=True,
    )
    figures.register(fig)
    try:
        yield fig
    finally:
        figures.unregister(fig.name)


def test_one_registry_row_reaches_every_output(ev, extra_figure):
    from rich.console import Console

    from lumeval.engine import FIGURE_NAMES
    from lumeval.render import html as H
    from lumeval.render.tables import to_csv, to_json
    from lumeval.render.terminal import inspect_renderables

    assert "test_y_share" in FIGURE_NAMES
    # y = Y / (X + Y + Z) by definition (CIE 15:2004 §7.3)
    np.testing.assert_allclose(ev.figure("Y-SHARE"), ev.y, rtol=1e-12)

    doc = json.loads(to_json(ev))
    np.testing.assert_allclose([s["test_y_share"] for s in doc["spectra"]], ev.y, rtol=1e-12)

    rows = read_csv_report(to_csv(ev))
    np.testing.assert_allclose([float(r["test_y_share"]) for r in rows], ev.y, rtol=1e-12)

    con = Console(file=io.StringIO(), width=200, color_system=None)
    for r in inspect_renderables(ev):
        con.print(r)
    term = con.file.getvalue()
    line = next(ln for ln in term.splitlines() if ln.strip().startswith("Y share"))
    assert f"{ev.y[0]:.3f}" in line  # the registry's 3 decimals

    page = H.render_html_report(ev)
    assert "<th scope=\"col\" class=\"n\">Y share</th>" in page
    assert f">{ev.y[0]:.3f}<" in page


def test_extra_figure_in_criteria_and_lot(ev, extra_figure):
    from lumeval.criteria import parse_criteria
    from lumeval.lots.statistics import lot_from_evaluation

    crit = parse_criteria('[[clause]]\nfigure = "y-share"\nmin = 0.1\n', "t.toml")
    assert crit.clauses[0].figure == "test_y_share"
    assert crit.clauses[0].label == "Y share ≥ 0.1"
    res = crit.evaluate(ev)
    assert res.verdicts == ("pass",) * len(ev)
    assert "share of Y in X + Y + Z" in crit.clauses[0].tender_text()
    st = lot_from_evaluation(ev)
    np.testing.assert_allclose(st.summary("test_y_share").mean, np.mean(ev.y), rtol=1e-12)


def test_trade_spellings_are_accepted_case_insensitively():
    for spelling, name in (("CCT", "cct_K"), ("cct", "cct_K"), ("Duv", "duv"), ("DUV", "duv"), ("CRI", "Ra"),
                           ("ra", "Ra"), ("r9", "R9"), ("RF", "Rf"), ("rg", "Rg"), ("LER", "ler_lm_per_W"),
                           ("u'", "u_prime"), ("u′", "u_prime"), ("Rcs,h1", "Rcs_h1"), ("melanopic DER", "melanopic_der")):
        assert figures.lookup(spelling) == name, spelling
    assert figures.lookup("R15") is None and figures.lookup("CRI9") is None


def test_criteria_file_with_trade_spellings():
    from lumeval.criteria import parse_criteria

    crit = parse_criteria('[[clause]]\nfigure = "CCT"\nrange = [2870, 3220]\n[[clause]]\nfigure = "CRI"\nmin = 80\n', "t.toml")
    assert [c.figure for c in crit.clauses] == ["cct_K", "Ra"]
    assert crit.clauses[0].label == "CCT 2870 K … 3220 K"


def test_names_and_aliases_never_collide():
    seen: dict[str, str] = {}
    for f in figures.FIGURES.values():
        for s in (f.name, *f.aliases):
            k = figures._key(s)
            assert seen.setdefault(k, f.name) == f.name, (s, seen[k], f.name)
    with pytest.raises(ValueError):
        figures.register(figures.Figure("cct2", "CCT2", "chromaticity", "", "", lambda e: e.cct_K, aliases=("cct",)))
    assert "cct2" not in figures.FIGURES


def test_human_formats_and_margins():
    cct, duv, ra, rcs = (figures.get(n) for n in ("cct_K", "duv", "Ra", "Rcs_h1"))
    assert cct.format(3045.4, unit=True) == "3045 K"
    assert duv.format(0.00053) == "+0.0005" and duv.format(-0.00004) == "0.0000"  # no sign on a rounded zero
    assert ra.format(float("nan")) == "n/a"
    assert rcs.format(-7.03, unit=True) == "-7%"
    # margins: the figure's own precision, more decimals only where the margin would print as zero
    assert ra.format_margin(-10.2) == "-10" and ra.format_margin(-0.4) == "-0.4"
    assert duv.format_margin(0.005307) == "+0.0053"
    assert rcs.format_margin(-0.03, unit=True) == "-0.03%"
    assert cct.heading == "CCT (K)" and figures.get("ler_lm_per_W").heading == "LER (lm/W)"


def test_every_figure_has_words_and_a_reader(ev):
    for f in figures.FIGURES.values():
        assert f.label and f.description and f.source, f.name
        assert f.value(ev).shape == (len(ev),), f.name
