"""`lumeval convert` says what the output format cannot keep as it is.

Before: converting to CSV or TM-27 XML changed names silently (control characters and line
breaks left out, a formula-like name quoted for spreadsheets) and CSV dropped metadata that
differs between spectra (a Parquet archive's station or timestamp per row) without a word.
Now the conversion still writes what the format can hold, and says so (one note line each);
JSON and Parquet keep everything and say nothing. Each note's claim is checked against the file
read back. Behaviour checks only: no figure is computed here.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.api import convert
from lumeval.spectra.archive import write_archive
from lumeval.spectra.model import SpectrumSet
from lumeval.spectra.read import read_spectra

from .conftest import run_cli_in_process

WL = np.arange(380.0, 781.0, 5.0)


def _set(names, metadata):
    values = np.vstack([np.linspace(1.0, 2.0 + k, WL.size) for k in range(len(names))])
    return SpectrumSet(WL, values, tuple(names), tuple("test" for _ in names), (), tuple(metadata))


@pytest.fixture
def archive(tmp_path):
    p = tmp_path / "lot.parquet"
    s = _set(["bad\x01name", "=SUM(A1)", "plain"],
             [{"station": "S1", "line": "L1"}, {"station": "S2", "line": "L1"}, {"station": "S1", "line": "L1"}])
    write_archive(s, p)
    return p


def test_csv_notes_match_what_the_file_holds(tmp_path, archive):
    notes: list[str] = []
    out = tmp_path / "lot.csv"
    assert convert(archive, out, notes=notes) == 3
    back = read_spectra(out)
    assert back.names == ("badname", "'=SUM(A1)", "plain")  # what the notes announce
    assert len(notes) == 2, notes
    assert notes[0].startswith('2 spectrum name(s) written as the format can hold them: "bad\\x01name" as "badname"')
    assert notes[1].startswith('metadata that differs between the spectra is not kept in CSV (one header block): "station"')
    assert all(m.get("line") == "L1" and "station" not in m for m in back.metadata)


def test_xml_notes_and_lossless_formats(tmp_path, archive):
    notes: list[str] = []
    convert(archive, tmp_path / "one.xml", column="bad\x01name", notes=notes)
    assert read_spectra(tmp_path / "one.xml").names == ("badname",)
    assert notes == ['1 spectrum name(s) written as the format can hold them: "bad\\x01name" as "badname"']
    for suffix in (".json", ".parquet"):
        notes = []
        out = tmp_path / f"all{suffix}"
        convert(archive, out, notes=notes)
        assert notes == [], suffix
        back = read_spectra(out)
        assert back.names == ("bad\x01name", "=SUM(A1)", "plain")
        assert [m["station"] for m in back.metadata] == ["S1", "S2", "S1"]


def test_the_command_prints_the_notes_and_a_plain_conversion_none(tmp_path, archive, capsys):
    code, _, err = run_cli_in_process(["convert", str(archive), str(tmp_path / "lot.csv")], capsys)
    assert code == 0, err
    lines = err.strip().splitlines()
    assert [ln.split(": ")[0] for ln in lines] == ["lumeval", "lumeval", "lumeval"]
    assert sum(ln.startswith(f"lumeval: note: {tmp_path / 'lot.csv'}: ") for ln in lines) == 2, err
    plain = tmp_path / "plain.csv"
    write_archive(_set(["a", "b"], [{"line": "L1"}, {"line": "L1"}]), tmp_path / "plain.parquet")
    code, _, err = run_cli_in_process(["convert", str(tmp_path / "plain.parquet"), str(plain)], capsys)
    assert code == 0 and "note" not in err, err


def test_a_multi_line_metadata_value_is_kept_in_csv_and_not_noted(tmp_path):
    """CSV writes a value with line breaks as one `# key: line` per line and reads it back
    joined, so it is kept; only the control character of the other value is noted (the first
    version of the notes counted both)."""
    src = tmp_path / "one.json"
    from lumeval.spectra.write import serialise

    src.write_bytes(serialise(_set(["lamp"], [{"k": "first\nsecond", "j": "x\x01y"}]), "json"))
    notes: list[str] = []
    convert(src, tmp_path / "one.csv", notes=notes)
    back = read_spectra(tmp_path / "one.csv").metadata[0]
    assert back["k"] == "first\nsecond" and back["j"] == "xy"
    assert notes == ["1 metadata value(s) written without control characters"]
