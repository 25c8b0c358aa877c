"""`lumeval series`: the settings' unit (from a manifest or ``--unit``) is untrusted text.

It used to reach the terminal header raw (an ESC sequence and a right-to-left override U+202E
printed as they are) and, in the HTML report, the figures' SVG text and comments (the labels of
the trajectory's ends and the axis "setting (UNIT)"). Now it is escaped everywhere, and still
shown. The spectra are invented test data.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from .conftest import run_cli_in_process as run

WL = np.arange(380.0, 781.0, 1.0)
HOSTILE = "\x1b[1m=\u202e"
ESCAPED = r"\x1b[1m=\u202e"


def g(p, w):
    return np.exp(-0.5 * ((WL - p) / w) ** 2)


def write(path: Path, values) -> Path:
    path.write_text("wavelength_nm,value\n" + "".join(f"{w:g},{v:.6f}\n" for w, v in zip(WL, values)), encoding="utf-8")
    return path


@pytest.fixture
def two(tmp_path):
    a = write(tmp_path / "dim_005pct.csv", 0.5 * g(450, 10) + g(610, 45) + 0.3 * g(650, 25))
    b = write(tmp_path / "dim_010pct.csv", 0.8 * g(450, 10) + g(590, 50) + 0.2 * g(650, 25))
    return a, b


@pytest.fixture
def manifest(tmp_path, two):
    m = tmp_path / "m.toml"
    m.write_text('unit = "\\u001b[1m=\\u202e"\n[settings]\n'
                 f'"{two[0].name}" = 5\n"{two[1].name}" = 10\n', encoding="utf-8")
    return m


def _no_controls(text: str) -> None:
    assert "\x1b" not in text
    assert "\u202e" not in text


def _words(text: str) -> str:
    """``text`` with its white space runs made single spaces (the header may wrap)."""
    return " ".join(text.split())


def test_manifest_unit_is_escaped_on_the_terminal(two, manifest, capsys):
    code, out, err = run(["series", *two, "--manifest", manifest], capsys)
    assert code == 0, err
    _no_controls(out)
    _no_controls(err)
    assert "unit: " + ESCAPED in _words(out), out


def test_command_line_unit_is_escaped_on_the_terminal(two, capsys, tmp_path):
    # names without a unit: --unit names it (against the "pct" of ``two`` it is refused, escaped)
    bare = [write(tmp_path / f"level_{k}.csv", np.loadtxt(p, delimiter=",", skiprows=1)[:, 1])
            for k, p in ((5, two[0]), (10, two[1]))]
    code, out, err = run(["series", *bare, "--unit", HOSTILE], capsys)
    assert code == 0, err
    _no_controls(out)
    assert "unit: " + ESCAPED in _words(out), out
    code, out, err = run(["series", *two, "--unit", HOSTILE], capsys)
    assert code == 2 and out == "" and ESCAPED in err, err
    _no_controls(err)


def test_unit_is_escaped_in_the_html_report_and_its_figures(two, manifest, capsys, tmp_path):
    html = tmp_path / "out.html"
    code, out, err = run(["series", *two, "--manifest", manifest, "--html", html], capsys)
    assert code == 0, err
    _no_controls(out)
    page = html.read_text(encoding="utf-8")
    _no_controls(page)
    # still shown: in the axis label "setting (UNIT)" and the labels of the trajectory's ends
    assert f"setting ({ESCAPED})" in page
    assert f"5 {ESCAPED}" in page and f"10 {ESCAPED}" in page


def test_a_criteria_file_name_with_brackets_is_shown_as_written(tmp_path, two, manifest, capsys):
    """The criteria table's title named the file through rich markup: "crit[bold]x.toml" lost
    its "[bold]" (it became a style). The name is text, shown as written."""
    crit = tmp_path / "crit[bold]x.toml"
    crit.write_text('lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 1\n', encoding="utf-8")
    code, out, err = run(["series", *two, "--manifest", manifest, "--criteria", crit], capsys)
    assert code in (0, 1), err
    assert "crit[bold]x.toml" in _words(out).replace(" ", "")
