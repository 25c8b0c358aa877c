"""Limits that a slip of units makes meaningless or impossible are refused when the criteria file
is read (exit code 2, one line naming file, line and field, with the value probably meant).

Outside sources (the bounds lumeval checks against):
- CCT is reported from 1000 K to 25000 K (lumeval.metrics.colorimetry.CCT_MIN_K / CCT_MAX_K:
  Ohno (2014) LEUKOS 10(1):47-55 at the low end, CIE daylight up to 25000 K, CIE 15:2004 §3.1);
- CIE 13.3-1995: Ri = 100 − 4.6 ΔEi with ΔEi ≥ 0, so Ri, Ra (mean of R1..R8) and their mean Re
  are at most 100;
- CIE 224:2017 / ANSI/IES TM-30-20: Rf = 10 ln(exp((100 − 6.73 ΔE′)/10) + 1), at most
  10 ln(e¹⁰ + 1) ≈ 100.00045 (at ΔE′ = 0), so "Rf ≥ 100" is possible and stays accepted;
- CIE 15:2004 §9.5: CCT is not meaningful beyond |Duv| = 0.05 (lumeval reports no CCT there);
- Km = 683 lm/W with V(λ) ≤ 1 (CIE 15:2004, quoted from memory): LER is at most 683 lm/W.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from lumeval.criteria import parse_criteria
from lumeval.errors import CriteriaError
from lumeval.metrics.planck import planck_exitance

from .conftest import assert_clean_error
from .conftest import run_cli_in_process as run

HEAD = "lumeval_criteria = 1\n[[clause]]\nid = \"X\"\n"  # the limit is on line 5 (after `figure`)


def _file(tmp_path, body: str):
    p = tmp_path / "c.toml"
    p.write_text(HEAD + body, encoding="utf-8")
    return p


@pytest.fixture(scope="module")
def planck_4000(tmp_path_factory):
    d = tmp_path_factory.mktemp("spd")
    wl = np.arange(360.0, 831.0, 1.0)
    s = planck_exitance(wl, 4000.0)
    p = d / "planck4000.csv"
    p.write_text("wavelength_nm,planck4000\n" + "".join(f"{w:.0f},{v:.10g}\n" for w, v in zip(wl, s / s.max())))
    return p


# (figure and limit lines, key, needles of the message: the problem and the value probably meant)
REFUSED = [
    ('figure = "cct_K"\nrange = [3.8, 4.3]\n', "range", ["3.8", "1000-25000 K", "kelvin", "range = [3800, 4300]"]),
    ('figure = "CCT"\nmin = 2.7\n', "min", ["2.7", "1000-25000 K", "min = 2700"]),
    ('figure = "cct_K"\nmax = 45000\n', "max", ["45000", "1000-25000 K", "max = 4500"]),
    ('figure = "cct_K"\nrange = [3800, 430]\n', "range", ["430", "1000-25000 K", "range = [3800, 4300]"]),
    ('figure = "cct_K"\nrange = [-100, 4300]\n', "range", ["-100", "1000-25000 K"]),
    ('figure = "ansi_category_K"\nrange = [3.5, 4.0]\n', "range", ["3.5", "range = [3500, 4000]"]),
    ('figure = "Ra"\nmin = 800\n', "min", ["800", "at most 100", "CIE 13.3", "min = 80"]),
    ('figure = "CRI"\nrange = [800, 1000]\n', "range", ["800", "at most 100", "range = [80, 100]"]),
    ('figure = "R9"\nmin = 500\n', "min", ["R9", "at most 100", "min = 50"]),
    ('figure = "Re"\nmin = 101\n', "min", ["Re", "at most 100"]),
    ('figure = "Rf"\nmin = 880\n', "min", ["Rf", "100.000454", "CIE 224", "min = 88"]),
    ('figure = "cie2017_Rf"\nmin = 100.01\n', "min", ["100.01", "100.000454"]),
    ('figure = "Rf_h1"\nmin = 850\n', "min", ["Rf,h1", "min = 85"]),
    ('figure = "duv"\nmax = 3\n', "max", ["3", "0.05", "CIE 15:2004", "thousandths", "max = 0.003"]),
    ('figure = "Duv"\nrange = [-6, 6]\n', "range", ["-6", "0.05", "range = [-0.006, 0.006]"]),
    ('figure = "duv"\nmin = -0.06\n', "min", ["-0.06", "0.05"]),
    ('figure = "LER"\nmin = 3300\n', "min", ["3300", "683 lm/W", "min = 330"]),
    # the same limits judged over a range of settings (tunable products)
    ('figure = "Ra"\nmin = 900\nover = [2700, 5000]\n', "min", ["900", "min = 90"]),
    ('figure = "cct_K"\nrange = [2.7, 3.2]\nover = [0, 100]\n', "range", ["range = [2700, 3200]"]),
]


@pytest.mark.parametrize("body, key, needles", REFUSED, ids=[f"{i}-{b.split(chr(34))[1]}-{k}" for i, (b, k, _) in enumerate(REFUSED)])
@pytest.mark.parametrize("command", ["explain", "check"])
def test_implausible_limits_are_refused_with_the_value_meant(tmp_path, capsys, planck_4000, body, key, needles, command):
    crit = _file(tmp_path, body)
    argv = ["criteria", "explain", crit] if command == "explain" else ["check", planck_4000, "--criteria", crit]
    code, _out, err = run(argv, capsys)
    assert_clean_error(code, err, "c.toml:5", f"field '{key}'", *needles)


ACCEPTED = [
    'figure = "Rf"\nmin = 100\n',              # a perfect match reaches 100.00045: "Rf ≥ 100" is possible
    'figure = "Rf"\nmin = 100.0004\n',
    'figure = "Ra"\nmin = 100\n',
    'figure = "Ra"\nmax = 800\n',              # a maximum above the bound is always met, not impossible
    'figure = "R9"\nmin = -250\n',             # Ri can be far below zero
    'figure = "Rg"\nmin = 150\n',              # no published upper bound on Rg
    'figure = "cct_K"\nrange = [1000, 25000]\n',
    'figure = "duv"\nrange = [-0.05, 0.05]\n',
    'figure = "LER"\nmin = 683\n',
    'figure = "Ra"\nmin = 90\nover = [2.7, 5]\n',  # `over` is in the settings' own unit: never judged here
]


@pytest.mark.parametrize("body", ACCEPTED)
def test_unusual_but_possible_limits_are_kept(body):
    c = parse_criteria(HEAD + body, "c.toml")
    assert len(c.clauses) == 1


def test_the_rf_bound_is_the_one_lumeval_computes():
    """The largest Rf is what lumeval's own scaling gives at ΔE′ = 0 (CIE 224:2017, TM-30-20)."""
    from lumeval.criteria import plausible
    from lumeval.metrics.tm30 import _Rf_scale

    assert pytest.approx(float(_Rf_scale(0.0)), abs=1e-12) == plausible.RF_MAX
    assert pytest.approx(10 * math.log(math.exp(10) + 1), abs=1e-12) == plausible.RF_MAX
    assert 100.0 < plausible.RF_MAX < 100.001


def test_the_message_names_the_line_of_the_limit_inside_a_longer_file():
    text = ('lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 80\n\n'
            '[[clause]]\nid = "CCT"\nfigure = "cct_K"\nrange = [2.87, 3.22]\n')
    with pytest.raises(CriteriaError) as e:
        parse_criteria(text, "tender.toml")
    assert e.value.line == 10 and e.value.field == "range" and e.value.file == "tender.toml"
    assert "range = [2870, 3220]" in e.value.message


def test_track_locus_in_thousandths_gets_the_value_meant():
    text = 'lumeval_criteria = 1\n[[clause]]\nkind = "track_locus"\nmax_abs_duv = 6\n'
    with pytest.raises(CriteriaError) as e:
        parse_criteria(text, "t.toml")
    assert e.value.line == 4 and e.value.field == "max_abs_duv" and "max_abs_duv = 0.006" in e.value.message


# --------------------------------------------------------------------------- nominal_cct in quotes


@pytest.mark.parametrize("value, fix", [('"4000"', "nominal_cct = 4000"), ('"3000 K"', "nominal_cct = 3000"),
                                        ("'2700'", "nominal_cct = 2700")])
def test_nominal_cct_in_quotes_is_told_to_drop_the_quotes(tmp_path, capsys, value, fix):
    crit = tmp_path / "c.toml"
    crit.write_text(f'lumeval_criteria = 1\n[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = {value}\n', encoding="utf-8")
    code, _out, err = run(["criteria", "explain", crit], capsys)
    line = assert_clean_error(code, err, "c.toml:4", "field 'nominal_cct'", "without quotes", fix)
    assert "not a nominal CCT category" not in line


def test_nominal_cct_text_that_is_no_category_still_lists_the_categories(tmp_path, capsys):
    crit = tmp_path / "c.toml"
    crit.write_text('[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = "4100"\n', encoding="utf-8")
    code, _out, err = run(["criteria", "explain", crit], capsys)
    assert_clean_error(code, err, "c.toml:3", "without quotes", "2200, 2500, 2700")


@pytest.mark.parametrize("body, key, meant", [
    ('nominal_cct = 4.0\n', "nominal_cct", "nominal_cct = 4000"),
    ('nominal_cct = "flexible"\ntarget_cct_K = 3.8\n', "target_cct_K", "target_cct_K = 3800"),
])
def test_a_nominal_cct_in_kilokelvin_gets_the_value_meant(tmp_path, capsys, body, key, meant):
    crit = tmp_path / "c.toml"
    crit.write_text('[[clause]]\nkind = "ansi_quadrangle"\n' + body, encoding="utf-8")
    code, _out, err = run(["criteria", "explain", crit], capsys)
    assert_clean_error(code, err, f"field '{key}'", "kelvin", meant)
