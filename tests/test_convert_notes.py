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


def test_parquet_keeps_metadata_keys_that_would_read_back_as_names_or_wavelengths(tmp_path):
    """A metadata key "name" or "555" was dropped from a Parquet archive without a note (a column
    so named is the names, or a wavelength; found by a review). It is kept as "meta:KEY", and
    the note says so; the values and the spectra read back exactly."""
    s = _set(["a", "b"], [{"555": "filter", "name": "other name", "station": "S1"}, {"555": "none", "station": "S2"}])
    src = tmp_path / "in.json"
    convert_notes: list[str] = []
    convert(write_json(s, src), tmp_path / "out.parquet", notes=convert_notes)
    assert len(convert_notes) == 1 and '"555" as "meta:555"' in convert_notes[0], convert_notes
    back = read_spectra(tmp_path / "out.parquet")
    assert back.names == ("a", "b")
    np.testing.assert_array_equal(back.values, s.values)
    np.testing.assert_array_equal(back.wavelengths_nm, WL)
    assert back.metadata[0]["meta:555"] == "filter" and back.metadata[0]["meta:name"] == "other name"
    assert back.metadata[1]["meta:555"] == "none" and back.metadata[1]["station"] == "S2"


def test_an_archive_folder_is_never_written_into(tmp_path, capsys):
    """`convert FOLDER FOLDER/member.parquet --force` replaced a member of the input archive with
    the whole output (a second run then read 399 spectra of 200; found by a review); a new
    .parquet in the folder would join the archive. Both refused, the folder unchanged."""
    folder = tmp_path / "arch"
    folder.mkdir()
    for k in range(2):
        write_archive(_set([f"s{k}"], [{"station": f"S{k}"}]), folder / f"part{k}.parquet")
    before = {p.name: p.read_bytes() for p in folder.iterdir()}
    for target, extra in ((folder / "part0.parquet", ["--force"]), (folder / "new.parquet", [])):
        code, out, err = run_cli_in_process(["convert", folder, target, *extra], capsys)
        assert code == 2 and "input archive folder" in err, err
    assert {p.name: p.read_bytes() for p in folder.iterdir()} == before
    code, out, err = run_cli_in_process(["convert", "-q", folder, tmp_path / "all.parquet"], capsys)
    assert code == 0, err
    assert len(read_spectra(tmp_path / "all.parquet")) == 2


def write_json(spectra, path):
    from lumeval.spectra.write import serialise

    path.write_bytes(serialise(spectra, "json"))
    return path


@pytest.mark.parametrize("suffix", [".csv", ".xml"])
def test_text_formats_say_when_a_key_or_a_name_reads_back_otherwise(tmp_path, suffix):
    """A metadata key holding ": " (and in CSV " = ") is split there when read back, spaces
    around keys and values are lost, and a lone CSV column headed "380" is read as a plain value
    column (named after the file): each was silent (found by a review). The notes say so, and
    what they announce is what the file reads back as; the values stay exact."""
    s = _set(["380"], [{"a: b": "c", " padded ": "v ", "station": "S1"}])
    notes: list[str] = []
    src = write_json(s, tmp_path / "in.json")
    out = tmp_path / f"out{suffix}"
    convert(src, out, notes=notes)
    back = read_spectra(out)
    np.testing.assert_array_equal(back.values, s.values)
    assert back.metadata[0]["station"] == "S1"
    assert "a: b" not in back.metadata[0] and "padded" in back.metadata[0]  # what the note announces
    assert any("metadata key(s) read back otherwise" in n for n in notes), notes
    if suffix == ".csv":
        assert back.names == ("out",)
        assert any('the spectrum name "380" reads back as the file\'s name' in n for n in notes), notes
    # a plain conversion has none of these notes
    plain: list[str] = []
    convert(write_json(_set(["lamp"], [{"station": "S1"}]), tmp_path / "p.json"), tmp_path / f"p{suffix}", notes=plain)
    assert plain == []
