"""The check terminal report fits the terminal (issue 13, item 3), as the inspect report does
(tests/test_terminal_layout.py): at 80 columns the five demo bids switch to one row per
spectrum with the key figures, names whole and numbers unsplit, and the report says how to see
the rest; at 120 columns each spectrum keeps its section with every clause, measured values and
margins on one line each; more than 12 spectra give one row per spectrum at any width; --wide
keeps the sections. Layout checks only: the numbers printed are compared with the same
files' inspect JSON (the figures themselves are tested against published values elsewhere).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from lumeval.figures import FIGURES

REPO = Path(__file__).resolve().parents[1]
BIDS = sorted(str(p) for p in (REPO / "spectra_demo" / "downlights").glob("*.csv"))
LOT = sorted(str(p) for p in (REPO / "spectra_demo" / "lot_2026w48").glob("AD30-w48-0*.csv"))[:13]
CRITERIA = str(REPO / "spectra_demo" / "tender_criteria.toml")


def run(columns: int, command: str, files, *extra: str) -> subprocess.CompletedProcess:
    env = dict(os.environ, COLUMNS=str(columns))
    args = [command, *files, *extra] + (["-c", CRITERIA] if command == "check" else [])
    return subprocess.run([sys.executable, "-m", "lumeval", *args], capture_output=True, text=True, env=env,
                          timeout=300, cwd=REPO)


def figures_of(files):
    r = run(200, "inspect", files, "--format", "json")
    assert r.returncode == 0, r.stderr
    return json.loads(r.stdout)["spectra"]


def row_of(lines, rec, number):
    """The compact table row of a spectrum: by its name, or by its number when the names are
    listed under the table."""
    marks = ("✔", "✘", "?", "–")
    rows = [c[1:] if c[:1] == [">>"] else c for c in (x.split() for x in lines)]
    rows = [c for c in rows if c[:1] and c[0] in marks and len(c) >= 9]
    row = next((c for c in rows if c[2] == rec["name"]), None)
    if row is None:
        row = next(c for c in rows if c[2] == str(number))
        assert any(x.split() == [str(number), rec["name"]] for x in lines), f"{rec['name']} not listed whole"
    return row


@pytest.fixture(scope="module")
def bids():
    return figures_of(BIDS)


def test_80_columns_one_row_per_spectrum_names_whole(bids):
    r = run(80, "check", BIDS)
    assert r.returncode == 1, r.stderr  # four of the five bids fail a requirement
    lines = r.stdout.splitlines()
    assert max(len(x) for x in lines) <= 80
    flat = " ".join(r.stdout.split())
    assert "One row per spectrum (the terminal is 80 columns wide)" in flat
    assert "lumeval check --wide" in flat and "--format csv" in flat
    for k, rec in enumerate(bids, start=1):
        cells = row_of(lines, rec, k)
        # CCT to 1 K and Duv to 4 decimals, as the figure registry formats them, on the spectrum's row
        assert f"{rec['cct_K']:.0f}" in cells and FIGURES["duv"].format(rec["duv"]) in cells
        assert f"{rec['cri']['Ra']:.0f}" in cells and f"{rec['cri']['R']['R9']:.0f}" in cells
    # the spectra that failed are named with their failed clauses
    assert "candidate_B_basicline_3000K: R9 (-12)" in flat


def test_120_columns_keeps_a_section_per_spectrum_with_numbers_whole(bids):
    r = run(120, "check", BIDS)
    assert r.returncode == 1, r.stderr
    lines = r.stdout.splitlines()
    assert max(len(x) for x in lines) <= 120
    assert "One row per spectrum" not in r.stdout
    for rec in bids:
        assert any(rec["name"] in x and ("PASS" in x or "FAIL" in x) for x in lines)  # its verdict line
        measured = f"CCT {rec['cct_K']:.0f} K, Duv {FIGURES['duv'].format(rec['duv'])}"
        assert any(measured in x and "Δu'v'" in x for x in lines), measured  # value and margin on one line


def test_many_spectra_one_row_each_at_any_width():
    recs = figures_of(LOT)
    r = run(120, "check", LOT)
    assert r.returncode in (0, 1), r.stderr
    lines = r.stdout.splitlines()
    assert max(len(x) for x in lines) <= 120
    assert "One row per spectrum (more than 12 spectra)" in " ".join(r.stdout.split())
    assert "clause by clause" in r.stdout  # the per-clause summary stays
    for k, rec in enumerate(recs, start=1):
        cells = row_of(lines, rec, k)
        assert f"{rec['cct_K']:.0f}" in cells and FIGURES["duv"].format(rec["duv"]) in cells


def test_wide_keeps_the_sections_at_80_columns():
    r = run(80, "check", BIDS, "--wide")
    assert r.returncode == 1, r.stderr
    assert "One row per spectrum" not in r.stdout and "requirement" in r.stdout
