"""SDCM clauses that agree with the rest of the file.

`lumeval criteria new` used to end with a commented example ``centre = "F3000"`` whatever the
nominal CCT: uncommented in a 4000 K file it failed every 4000 K source at about 31 steps. The
example now uses the IEC 60081 centre nearest the category, and only where a source at the
category's centre (and a Planckian source at its target CCT) lies within the example's steps;
elsewhere it says why no fixed centre is offered. And a file whose SDCM ellipse shares no
chromaticity with its quadrangle, its CCT band or another ellipse gets the loader's contradiction
warning, as two disjoint quadrangles do (and so does a quadrangle outside the file's CCT band).

Outside sources: IEC 60081 centres and ellipses (secondary, see lumeval/criteria/regions.py);
ANSI C78.377-2017 Table 1 (secondary, same module); a Planckian radiator (Planck's law,
CIE 15:2004) has Duv = 0 by definition and is its own CIE 13.3 / CIE 224 reference.
"""

from __future__ import annotations

import re

import numpy as np
import pytest

import lumeval
from lumeval.commands.criteria_cmd import new_criteria_text
from lumeval.criteria import parse_criteria, regions

from .conftest import run_cli_in_process as run

CATEGORIES = sorted(regions.ANSI_C78377_2017)
LEVELS = ("basic", "good", "high")
_TOML_LINE = re.compile(r"^# (\[\[clause\]\]|[A-Za-z0-9_]+ = .*)$")


def uncomment_examples(text: str) -> str:
    """The generated file with the "More clause kinds" examples uncommented, as a specifier
    would do it (every commented TOML line after the marker)."""
    head, sep, tail = text.partition("# More clause kinds")
    assert sep, "the generated file has no example block"
    lines = [ln[2:] if _TOML_LINE.match(ln) else ln for ln in tail.splitlines()]
    return head + sep + "\n".join(lines) + "\n"


@pytest.mark.parametrize("nominal", CATEGORIES)
def test_uncommented_examples_pass_a_source_of_the_files_own_category(planckians, nominal):
    ev = lumeval.inspect([planckians[nominal]])
    for level in LEVELS:
        text = uncomment_examples(new_criteria_text(nominal, level))
        crit = parse_criteria(text, f"new_{nominal}_{level}.toml")
        assert not crit.warnings, (nominal, level, crit.warnings)
        result = lumeval.check(ev, crit)
        failing = [(r.clause_id, r.limit_text, float(r.measured[0])) for r in result.results if r.outcome[0] != "pass"]
        assert result.exit_code == 0, (nominal, level, failing)


@pytest.mark.parametrize("nominal", CATEGORIES)
def test_the_fixed_centre_example_is_the_nearest_iec_centre_or_none(nominal):
    """Where the example names an IEC 60081 centre, it is the one nearest the category centre and
    the category centre lies within the example's steps of it; otherwise no centre is written
    and the comment names the nearest and how far it is."""
    cat = regions.ANSI_C78377_2017[nominal]
    from lumeval.criteria import presets

    sd = presets.sdcm_suggestion(nominal)
    for level in LEVELS:
        tail = new_criteria_text(nominal, level).partition("# More clause kinds")[2]
        m = re.search(r'^# centre = "(F\d+)"', tail, flags=re.M)
        if m is None:
            assert sd.shape_from in tail and "steps" in tail, (nominal, level)
            continue
        assert m.group(1) == sd.shape_from, (nominal, level)
        steps = float(re.search(r"^# max_steps = ([\d.]+)", tail, flags=re.M).group(1))
        e = regions.iec60081_ellipse(m.group(1))
        assert e.steps(np.array([sd.centre_xy]))[0] <= steps, (nominal, level, cat)
    assert 'centre = "F3000"' not in new_criteria_text(4000, "basic")


def test_the_reviewers_4000K_file_passes_a_4000K_source(tmp_path, capsys, planckians):
    """`criteria new --nominal-cct 4000 --level basic` with every example uncommented (the
    review's office file): a 4000 K Planckian source passes, exit 0, no warning."""
    crit = tmp_path / "office.toml"
    code, _out, err = run(["criteria", "new", crit, "--nominal-cct", 4000, "--level", "basic", "--project", "Office"], capsys)
    assert code == 0, err
    crit.write_text(uncomment_examples(crit.read_text(encoding="utf-8")), encoding="utf-8")
    code, out, err = run(["check", planckians[4000], "--criteria", crit], capsys)
    assert code == 0, out + err
    assert "warning" not in err


# --------------------------------------------------------------------------- contradiction warnings

QUAD_4000 = '[[clause]]\nid = "quad"\nkind = "ansi_quadrangle"\nnominal_cct = 4000\n\n'
SDCM = '[[clause]]\nid = "sdcm"\nkind = "sdcm"\ncentre = "{c}"\nmax_steps = {n}\n\n'


@pytest.mark.parametrize(
    "text, ids",
    [
        (QUAD_4000 + SDCM.format(c="F3000", n=3), ("'quad'", "'sdcm'")),
        (SDCM.format(c="F3000", n=3) + QUAD_4000, ("'quad'", "'sdcm'")),
        ('[[clause]]\nid = "cct"\nfigure = "cct_K"\nrange = [3710, 4260]\n\n' + SDCM.format(c="F3000", n=3), ("'cct'", "'sdcm'")),
        (SDCM.format(c="F3000", n=3) + SDCM.format(c="F6500", n=3).replace('"sdcm"\nkind', '"cool"\nkind'),
         ("'sdcm'", "'cool'")),
        (QUAD_4000 + '[[clause]]\nid = "sdcm"\nkind = "sdcm"\ncentre_xy = [0.4578, 0.4101]\ng11 = 440000\ng12 = -186000\n'
                     'g22 = 270000\nmax_steps = 3\n', ("'quad'", "'sdcm'")),
        (QUAD_4000 + '[[clause]]\nid = "cct"\nfigure = "CCT"\nrange = [2700, 3000]\n', ("'quad'", "'cct'", "3710")),
    ],
    ids=["quadrangle-then-ellipse", "ellipse-then-quadrangle", "cct-band", "two-ellipses", "own-centre",
         "quadrangle-outside-cct-band"],
)
def test_an_ellipse_apart_from_the_rest_of_the_file_is_a_contradiction_warning(text, ids):
    crit = parse_criteria("lumeval_criteria = 1\n" + text, "c.toml")
    assert len(crit.warnings) == 1, crit.warnings
    w = crit.warnings[0]
    assert w.startswith("c.toml:") and "contradict" in w and "no chromaticity in common" in w
    for i in ids:
        assert i in w


@pytest.mark.parametrize(
    "text",
    [
        QUAD_4000 + SDCM.format(c="F4000", n=3),
        QUAD_4000 + SDCM.format(c="F3500", n=7),    # a wide ellipse round the neighbouring centre reaches into it
        '[[clause]]\nid = "cct"\nfigure = "cct_K"\nrange = [3710, 4260]\n\n' + SDCM.format(c="F4000", n=2),
        SDCM.format(c="F4000", n=3) + '[[clause]]\nid = "b"\nkind = "sdcm"\ncentre_xy = [0.3818, 0.3797]\ng11 = 395000\n'
                                       'g12 = -215000\ng22 = 260000\nmax_steps = 1\n',  # 1.2 steps apart
        SDCM.format(c="F3000", n=3) + '[[clause]]\nid = "q"\nkind = "ansi_quadrangle"\nnominal_cct = 4000\nover = [2700, 3000]\n',
    ],
    ids=["same-category", "neighbour-sharing-area", "cct-band-met", "overlapping-ellipses", "over-a-range-not-compared"],
)
def test_ellipses_that_share_chromaticities_are_kept_silently(text):
    crit = parse_criteria("lumeval_criteria = 1\n" + text, "c.toml")
    assert crit.warnings == ()


def test_check_and_explain_both_say_it(tmp_path, capsys, planckians):
    crit = tmp_path / "c.toml"
    crit.write_text("lumeval_criteria = 1\n" + QUAD_4000 + SDCM.format(c="F3000", n=3), encoding="utf-8")
    code, _out, err = run(["check", planckians[4000], "--criteria", crit], capsys)
    assert code == 1  # the 4000 K source is ~30 steps from F3000
    warn = [ln for ln in err.splitlines() if ln.startswith("lumeval: warning: ")]
    assert len(warn) == 1 and "c.toml:" in warn[0] and "'sdcm'" in warn[0], err
    code, out, err = run(["criteria", "explain", crit], capsys)
    assert code == 0 and out.startswith("# Colour-quality acceptance criteria")
    warn = [ln for ln in err.splitlines() if ln.startswith("lumeval: warning: ")]
    assert len(warn) == 1 and "'quad'" in warn[0] and "'sdcm'" in warn[0], err
