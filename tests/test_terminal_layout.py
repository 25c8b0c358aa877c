"""The inspect terminal report fits the terminal: at 80 and 120 columns the five demo spectra
(names of 24-28 characters) switch to one row per spectrum, names whole and numbers unsplit;
--wide keeps the side-by-side layout. Layout checks only: the numbers printed are compared with
the same run's JSON (the figures themselves are tested against published values elsewhere)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
FILES = sorted(str(p) for p in (REPO / "spectra_demo" / "downlights").glob("*.csv"))


def run(columns: int, *extra: str) -> subprocess.CompletedProcess:
    env = dict(os.environ, COLUMNS=str(columns))
    return subprocess.run([sys.executable, "-m", "lumeval", "inspect", *FILES, *extra],
                          capture_output=True, text=True, env=env, timeout=300, cwd=REPO)


@pytest.fixture(scope="module")
def figures():
    r = run(200, "--format", "json")
    assert r.returncode == 0, r.stderr
    return json.loads(r.stdout)["spectra"]


@pytest.mark.parametrize("columns", [80, 120])
def test_narrow_terminal_gets_one_row_per_spectrum_names_whole(columns, figures):
    r = run(columns)
    assert r.returncode == 0, r.stderr
    lines = r.stdout.splitlines()
    assert max(len(x) for x in lines) <= columns
    assert "Key figures only" in r.stdout and "--wide" in r.stdout
    assert len(figures) == len(FILES) == 5
    for rec in figures:
        row = next((x for x in lines if rec["name"] in x), None)
        assert row is not None, f"{rec['name']} not printed whole"
        cells = row.split()
        # CCT to 1 K and Duv to 4 decimals, as the figure registry formats them, on the name's row
        assert f"{rec['cct_K']:.0f}" in cells
        assert f"{rec['duv']:+.4f}" in cells


def test_wide_keeps_every_figure_side_by_side():
    r = run(80, "--wide")
    assert r.returncode == 0, r.stderr
    assert "R1-R8" in r.stdout and "Key figures only" not in r.stdout


def test_wide_terminal_keeps_the_full_layout():
    r = run(250)
    assert r.returncode == 0, r.stderr
    assert "R1-R8" in r.stdout and "Key figures only" not in r.stdout
