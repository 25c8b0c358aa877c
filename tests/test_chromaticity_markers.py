"""The markers of the chromaticity diagrams show the chromaticity requirements only.

A sample that failed only Ra (a colour-rendering clause) while inside its ANSI quadrangle was
drawn with the ✗ of a failed sample inside the quadrangle it met — misleading on a diagram of
chromaticity. The marker now follows the chromaticity clauses (quadrangle, SDCM ellipse, CCT and
Duv bands: :func:`lumeval.criteria.verdicts.judges_chromaticity`); the legend and the caption say
so; the overall verdict stays in the verdict table. Tested on the functions that decide the
markers and on the legend text, never on pixels. Spectra: the demo downlights (3000 K bids,
one 4000 K) and invented two-channel mixes.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import lumeval
from lumeval.criteria import parse_criteria
from lumeval.criteria.verdicts import judges_chromaticity
from lumeval.render.report_figures import _sample_failed, chromaticity_markers, report_figures
from lumeval.render.report_inputs import verdict_rows

REPO = Path(__file__).resolve().parents[1]
BIDS = REPO / "spectra_demo" / "downlights"
#: A (Ra 91.6) and C (Ra 85.1) lie inside the ANSI 3000 K quadrangle; D is a 4000 K source.
FILES = [BIDS / "candidate_A_aurora_3000K.csv", BIDS / "candidate_C_claritas_3000K.csv",
         BIDS / "candidate_D_northlight_4000K.csv"]

QUAD_AND_RA = """
[[clause]]
id = "white"
kind = "ansi_quadrangle"
nominal_cct = 3000
[[clause]]
id = "Ra"
figure = "Ra"
min = 90
"""

RA_ONLY = """
[[clause]]
id = "Ra"
figure = "Ra"
min = 90
"""


@pytest.fixture(scope="module")
def ev():
    return lumeval.inspect([str(f) for f in FILES])


def _check(ev, text):
    return lumeval.check(ev, parse_criteria(text, "t.toml"))


def test_a_sample_that_failed_only_ra_inside_its_quadrangle_gets_the_pass_marker(ev):
    res = _check(ev, QUAD_AND_RA)
    names = list(ev.spectra.names)
    by_id = {r.clause_id: r for r in res.results}
    # the case as built: C inside the quadrangle but below the Ra limit; D outside the quadrangle
    assert by_id["white"].outcome == ("pass", "pass", "fail")
    assert by_id["Ra"].outcome == ("pass", "fail", "pass")
    rows = verdict_rows(res, names)
    assert _sample_failed(rows, names) == [False, True, True]  # the overall verdicts: unchanged
    assert chromaticity_markers(rows, names) == [False, False, True]


def test_without_a_chromaticity_requirement_no_sample_is_marked_failed(ev):
    names = list(ev.spectra.names)
    rows = verdict_rows(_check(ev, RA_ONLY), names)
    assert chromaticity_markers(rows, names) == [None, None, None]  # hollow: nothing of chromaticity judged


@pytest.mark.parametrize(("kind", "figure", "expected"), [
    ("ansi_quadrangle", "u'v'", True), ("sdcm", "SDCM steps", True), ("track_locus", "|Duv|", True),
    ("series_shift", "Δu'v'", True), ("lot_centroid_steps", "SDCM steps", True),
    ("figure", "cct_K", True), ("figure", "duv", True), ("figure", "ansi_category_K", True),
    ("figure", "sdcm_steps", True), ("", "CCT", True),  # a row given as a mapping: by its figure
    ("figure", "Ra", False), ("figure", "R9", False), ("figure", "Rf", False), ("tm30_design_intent", "Rf", False),
    ("", "Ra", False), ("", "", False),
])
def test_which_clauses_are_chromaticity_requirements(kind, figure, expected):
    assert judges_chromaticity(kind, figure) is expected


def test_mapping_rows_carry_their_kind():
    rows = verdict_rows([{"sample": "a", "clause": "q", "figure": "u'v'", "kind": "ansi_quadrangle", "outcome": "pass"},
                         {"sample": "a", "clause": "Ra", "figure": "Ra", "kind": "figure", "outcome": "fail"}], ["a"])
    assert chromaticity_markers(rows, ["a"]) == [False]


def test_the_diagrams_draw_and_name_the_chromaticity_markers(ev):
    res = _check(ev, QUAD_AND_RA)
    figs = {f.key: f for f in report_figures(ev, verdicts=res)}
    for key in ("chromaticity", "chromaticity-xy"):
        f = figs[key]
        assert "chromaticity requirements only" in f.caption and "verdict table" in f.caption
        lines = {ln.get_gid(): ln for ln in f.figure.axes[0].get_lines() if (ln.get_gid() or "").startswith("samples-")}
        assert np.asarray(lines["samples-pass"].get_xdata()).size == 2  # A and C
        assert np.asarray(lines["samples-fail"].get_xdata()).size == 1  # D, outside the quadrangle
        legend = [t.get_text() for leg in f.figure.legends for t in leg.get_texts()]
        assert "sample (chromaticity requirements): passed (2)" in legend, legend
        assert "sample (chromaticity requirements): failed (1)" in legend, legend


# ----------------------------------------------------------------------------- mix / series trajectory

WL = np.arange(380.0, 781.0, 1.0)


def _g(p, w):
    return np.exp(-0.5 * ((WL - p) / w) ** 2)


BAND_AND_RA = """
[[clause]]
id = "band"
figure = "cct_K"
range = [2500, 3500]
[[clause]]
id = "Ra"
figure = "Ra"
min = 99
"""


def test_the_trajectory_marks_settings_by_their_chromaticity_requirements(tmp_path):
    from lumeval.render.tunable_html import trajectory_figure, trajectory_markers
    from lumeval.tunable.api import mix_files

    warm = 0.35 * _g(450, 10) + _g(600, 45) + 0.3 * _g(650, 25)
    cool = 2.0 * _g(452, 10) + _g(560, 50)
    chans = tmp_path / "channels.csv"
    chans.write_text("wavelength_nm,warm,cool\n" + "".join(f"{w:g},{a:.6f},{b:.6f}\n" for w, a, b in zip(WL, warm, cool)),
                     encoding="utf-8")
    crit = tmp_path / "c.toml"
    crit.write_text(BAND_AND_RA, encoding="utf-8")
    rep = mix_files([chans], "3000,4000", criteria=crit)
    assert rep.check.verdicts == ("fail", "fail")  # both below Ra 99
    assert trajectory_markers(rep) == [False, True]  # 3000 K inside the CCT band, 4000 K outside
    legend = [t.get_text() for leg in trajectory_figure(rep).legends for t in leg.get_texts()]
    assert "setting (chromaticity requirements): passed (1)" in legend, legend
