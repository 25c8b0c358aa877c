"""``lumeval convert`` through the real command: exit codes, one-line errors, nothing written.

Drives ``lumeval.cli.main`` in-process (the console entry point, which maps errors to exit
code 2) and, once, the installed console script in a subprocess.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from lumeval.spectra.read import read_spectra

from .conftest import run_cli_in_process as run

CORPUS = Path(__file__).parent / "data" / "input_corpus"


def test_convert_csv_to_xml_and_back(tmp_path, capsys):
    code, _, err = run(["convert", str(CORPUS / "metadata_block.csv"), str(tmp_path / "m.xml")], capsys)
    assert code == 0, err
    assert "1 spectrum written to" in err
    code, _, err = run(["convert", str(tmp_path / "m.xml"), str(tmp_path / "m.csv")], capsys)
    assert code == 0, err
    a = read_spectra(CORPUS / "metadata_block.csv")
    b = read_spectra(tmp_path / "m.csv")
    np.testing.assert_array_equal(a.values, b.values)
    assert b.metadata[0]["Serial number"] == "12-345"
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


@pytest.mark.parametrize(
    "bad",
    ["nan_cell.csv", "tm27_xxe.xml", "tm27_billion_laughs.xml", "json_truncated.json", "binary.bin", "empty.csv"],
)
def test_bad_input_exit_2_one_line_nothing_written(tmp_path, capsys, bad):
    out = tmp_path / "out.json"
    code, stdout, err = run(["convert", str(CORPUS / bad), str(out)], capsys)
    assert code == 2
    assert stdout == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert str(CORPUS / bad) in lines[0]
    assert "Traceback" not in err
    assert not out.exists()
    assert list(tmp_path.iterdir()) == []


def test_never_overwrites_input(tmp_path, capsys):
    src = tmp_path / "in.csv"
    shutil.copy(CORPUS / "two_col_header.csv", src)
    before = src.read_bytes()
    code, _, err = run(["convert", str(src), str(src)], capsys)
    assert code == 2 and "overwrite the input" in err
    code, _, err = run(["convert", str(src), str(tmp_path / "." / "in.csv"), "--force"], capsys)
    assert code == 2 and "overwrite the input" in err
    assert src.read_bytes() == before


def test_existing_output_needs_force(tmp_path, capsys):
    out = tmp_path / "o.csv"
    out.write_text("keep me")
    code, _, err = run(["convert", str(CORPUS / "tm27_valid.xml"), str(out)], capsys)
    assert code == 2 and "--force" in err
    assert out.read_text() == "keep me"
    code, _, err = run(["convert", str(CORPUS / "tm27_valid.xml"), str(out), "--force"], capsys)
    assert code == 0
    assert read_spectra(out).names == ("Downlight 3000 K",)


def test_multi_spectrum_to_xml_needs_column(tmp_path, capsys):
    code, _, err = run(["convert", str(CORPUS / "wide_named.csv"), str(tmp_path / "w.xml")], capsys)
    assert code == 2 and "--column" in err
    assert not (tmp_path / "w.xml").exists()
    code, _, err = run(
        ["convert", str(CORPUS / "wide_named.csv"), str(tmp_path / "w.xml"), "--column", "Neutral 4000K"], capsys
    )
    assert code == 0, err
    assert read_spectra(tmp_path / "w.xml").names == ("Neutral 4000K",)
    code, _, err = run(["convert", str(CORPUS / "wide_named.csv"), str(tmp_path / "x.xml"), "--column", "nope"], capsys)
    assert code == 2 and "no spectrum named" in err


def test_unknown_output_extension(tmp_path, capsys):
    code, _, err = run(["convert", str(CORPUS / "wide_named.csv"), str(tmp_path / "w.xlsx")], capsys)
    assert code == 2 and ".xlsx" in err
    assert not (tmp_path / "w.xlsx").exists()


def test_console_script_subprocess(tmp_path):
    exe = Path(sys.executable).with_name("lumeval")
    cmd = [str(exe)] if exe.exists() else [sys.executable, "-m", "lumeval"]
    ok = subprocess.run(cmd + ["convert", str(CORPUS / "spectra_valid.json"), str(tmp_path / "s.csv")],
                        capture_output=True, text=True, timeout=60)
    assert ok.returncode == 0, ok.stderr
    bad = subprocess.run(cmd + ["convert", str(CORPUS / "duplicate_wavelength.csv"), str(tmp_path / "d.xml")],
                         capture_output=True, text=True, timeout=60)
    assert bad.returncode == 2
    assert bad.stderr.strip().count("\n") == 0
    assert "duplicate_wavelength.csv:33:" in bad.stderr
    assert not (tmp_path / "d.xml").exists()
