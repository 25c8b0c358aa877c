"""The check CSV carries what the readers did to each spectrum, and the criteria file's warnings.

A test station that reads only ``lumeval check --format csv`` must see that a verdict rests on an
extrapolated spectrum or on a figure outside its validity range (docs/input-files.md: the note
travels into every report): each row carries its spectrum's warnings in a last column,
``warnings``, joined with `` | `` as in the inspect CSV and neutralised for spreadsheets as the
other text columns are. The notes of the check as a whole (the criteria file's warnings, e.g. two
ANSI quadrangles with no chromaticity in common) are ``# note:`` rows after the data, just before
the cautions (docs/output-formats.md, "lumeval check --format csv").

The spectra are made here from Planck's law (scipy.constants); no numeric check here.
"""

from __future__ import annotations

import csv
import dataclasses
import io
from pathlib import Path

import numpy as np
import pytest
from scipy import constants

from lumeval.render.tables import CAUTIONS, read_csv_report
from tests.conftest import run_cli_in_process as run

#: The columns of the check CSV before the warnings were added: they keep their order.
FORMER_COLUMNS = ("spectrum", "source", "verdict", "clause_id", "group", "kind", "label", "figure", "unit",
                  "measured", "lower", "upper", "limit", "margin", "delta_upvp", "u", "p_conformance", "outcome",
                  "reason")
CRITERIA = 'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 80\n' \
           '[[clause]]\nid = "R9"\nfigure = "R9"\nmin = 0\n'
#: Two quadrangles with no chromaticity in common: the loader warns (docs/criteria.md).
DISJOINT = 'lumeval_criteria = 1\n[[clause]]\nid = "q30"\nkind = "ansi_quadrangle"\nnominal_cct = 3000\n' \
           '[[clause]]\nid = "q35"\nkind = "ansi_quadrangle"\nnominal_cct = 3500\n'


def planck_csv(path: Path, name: str, T: float = 4000.0, start: int = 400, end: int = 700) -> Path:
    """A Planckian radiator's relative spectral exitance, 1 nm steps (Planck's law)."""
    lam = np.arange(start, end + 1, dtype=float) * 1e-9
    c2 = constants.h * constants.c / constants.k
    m = 2 * np.pi * constants.h * constants.c**2 / lam**5 / np.expm1(c2 / (lam * T))
    m /= m.max()
    with path.open("w", encoding="utf-8", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["wavelength_nm", name])
        w.writerows((f"{x * 1e9:.0f}", f"{v:.9e}") for x, v in zip(lam, m))
    return path


@pytest.fixture
def files(tmp_path):
    short = planck_csv(tmp_path / "short.csv", "planck_4000K_400_700")
    full = planck_csv(tmp_path / "full.csv", "planck_4000K", start=380, end=780)
    crit = tmp_path / "c.toml"
    crit.write_text(CRITERIA, encoding="utf-8")
    return short, full, crit


def test_extrapolated_spectrum_is_flagged_on_every_row(files, capsys):
    short, full, crit = files
    code, out, err = run(["check", short, full, "-c", crit, "-f", "csv"], capsys)
    assert code in (0, 1), err
    header = next(csv.reader(io.StringIO(out)))
    assert tuple(header[:len(FORMER_COLUMNS) + 1]) == (*FORMER_COLUMNS, "warnings")  # a new column at the end
    assert tuple(header[len(FORMER_COLUMNS) + 1:]) == ("round_to", "compared")  # (added after it, docs/output-formats.md)
    rows = read_csv_report(out)
    by = {name: [r for r in rows if r["spectrum"] == name] for name in ("planck_4000K_400_700", "planck_4000K")}
    assert [len(v) for v in by.values()] == [2, 2]  # one row per spectrum and clause
    for r in by["planck_4000K_400_700"]:
        assert r["warnings"].startswith("EXTRAPOLATED: spectrum extended down to 380 nm"), r
        assert "up to 780 nm" in r["warnings"]
    assert all(r["warnings"] == "" for r in by["planck_4000K"])  # measured over 380-780 nm: nothing to say


def test_the_warnings_cell_is_the_inspect_csvs(files, capsys):
    """Same warnings, same joining (`` | ``) as the inspect CSV for the same spectrum."""
    short, _, crit = files
    code, out, err = run(["inspect", short, "-f", "csv"], capsys)
    assert code == 0, err
    (seen,) = read_csv_report(out)
    code, out, err = run(["check", short, "-c", crit, "-f", "csv"], capsys)
    assert code in (0, 1), err
    assert {r["warnings"] for r in read_csv_report(out)} == {seen["warnings"]}


def test_a_formula_in_a_name_or_a_warning_is_neutralised(tmp_path, files, capsys):
    _, _, crit = files
    hostile = planck_csv(tmp_path / "hostile.csv", '=HYPERLINK("http://evil.example","x")')
    code, out, err = run(["check", hostile, "-c", crit, "-f", "csv"], capsys)
    assert code in (0, 1), err
    for r in read_csv_report(out):
        assert r["spectrum"].startswith("'=HYPERLINK(") and r["warnings"].startswith("EXTRAPOLATED")


def test_a_formula_or_a_control_character_in_a_warning_or_a_note_is_inert(files):
    """Warnings are lumeval's own words, but their cell is protected as every text cell is (the
    CSV writer itself, lumeval.render.tables.check_to_csv)."""
    import lumeval
    from lumeval.render.tables import check_to_csv

    short, _, crit = files
    result = lumeval.check([short], crit)
    result = dataclasses.replace(result, warnings=(("=1+1 lamp", "@SUM(A1)\x1b[2J"),),
                                 notes=("WARNING: =cmd|' /C calc'!A0\nnext\x1b]8;;x\x07",))
    text = check_to_csv(result)
    for r in read_csv_report(text):
        assert r["warnings"] == "'=1+1 lamp | @SUM(A1)\\x1b[2J"
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[-len(CAUTIONS) - 1] == ["# note: WARNING: =cmd|' /C calc'!A0\\nnext\\x1b]8;;x\\x07"]
    assert text.count("\n") == len(rows)  # the note's line break did not make a row of its own


def test_the_criteria_files_warning_is_a_note_row_before_the_cautions(tmp_path, files, capsys):
    short, _, _ = files
    crit = tmp_path / "disjoint.toml"
    crit.write_text(DISJOINT, encoding="utf-8")
    code, out, err = run(["check", short, "-c", crit, "-f", "csv"], capsys)
    assert code == 1, err  # every spectrum fails one of the two quadrangles
    assert "lumeval: warning:" in err and "'q30'" in err  # still said on stderr as well
    rows = list(csv.reader(io.StringIO(out)))
    notes = [r for r in rows if r and r[0].startswith("#")]
    assert notes[-len(CAUTIONS):] == [[f"# caution: {c}"] for c in CAUTIONS]  # the cautions close the file
    (note,) = notes[: -len(CAUTIONS)]
    assert len(note) == 1 and note[0].startswith("# note: WARNING: ")
    assert "'q30'" in note[0] and "'q35'" in note[0] and "no chromaticity in common" in note[0]
    assert rows[-len(notes):] == notes  # after every data row
    data = read_csv_report(out)
    assert len(data) == 2 and all(r["warnings"].startswith("EXTRAPOLATED") for r in data)
