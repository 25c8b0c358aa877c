"""Hostile values in a Parquet archive's columns (lumeval.spectra.archive_values and the
archive's metadata in every output), found by a review of the archive path: each case is a
file written with pyarrow and run through the command line, the expected behaviour being the
project's promise for bad input (exit 2, one line naming the file, column and row, no output
file) or the documented form of each metadata value."""

from __future__ import annotations

import csv
import decimal
import io
import json

import numpy as np
import pytest

from tests.conftest import assert_clean_error
from tests.conftest import run_cli_in_process as run

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

WL = np.arange(380, 781, 5)


def _archive(path, n=2, names=None, **meta):
    v = np.exp(-(((WL - 600) / 120.0) ** 2)) + 0.5 * np.exp(-(((WL - 450) / 15.0) ** 2))
    cols = {"name": names if names is not None else [f"s{i}" for i in range(n)], **meta}
    cols.update({str(w): [float(x) * (1 + 0.01 * i) for i in range(n)] for w, x in zip(WL, v)})
    pq.write_table(pa.table(cols), path)
    return path


def _not_utf8(values):
    """A string array whose bytes are given as they are (not UTF-8 where they say so)."""
    b = pa.array(values, pa.binary())
    return pa.Array.from_buffers(pa.string(), len(b), b.buffers())


@pytest.mark.parametrize("case, needles", [
    ("name", ["'name' column", "row 2", "not valid UTF-8"]),
    ("meta", ["'station' column", "row 2", "not valid UTF-8"]),
    ("nested", ["'tags' column", "not valid UTF-8"]),
    ("timestamp", ["'measured_at' column", "row 2", "year 1 to 9999"]),
    ("duration", ["'dur' column", "row 2", "999,999,999 days"]),
])
@pytest.mark.parametrize("command", ["lot", "inspect", "convert"])
def test_values_no_output_can_show_are_refused_with_the_column_and_row(tmp_path, capsys, case, needles, command):
    # before: exit 3 (internal error: UnicodeDecodeError / OverflowError) from inspect, check,
    # convert and the lot's CSV and JSON, and exit 0 with an invalid --samples-parquet table
    kw = {"name": {"names": _not_utf8([b"ok", b"bad\xff"])},
          "meta": {"station": _not_utf8([b"A", b"B\xff"])},
          "nested": {"tags": pa.ListArray.from_arrays(pa.array([0, 1, 2], pa.int32()), _not_utf8([b"x", b"y\xfe"]))},
          "timestamp": {"measured_at": pa.array([0, 253402300800], pa.timestamp("s"))},
          "duration": {"dur": pa.array([0, 2**62], pa.duration("s"))}}[case]
    f = _archive(tmp_path / "a.parquet", **kw)
    out = tmp_path / "out.csv"
    argv = {"lot": ["lot", f, "--quiet", "--processes", "1", "--samples-csv", out, "--samples-parquet",
                    tmp_path / "s.parquet"],
            "inspect": ["inspect", f, "--validate-only"],
            "convert": ["convert", f, out]}[command]
    code, stdout, err = run(argv, capsys)
    if command == "inspect":  # the report lists the refused entry, then one error line
        assert code == 2 and "internal error" not in err, err
        assert all(n in stdout + err for n in needles), stdout + err
    else:
        assert_clean_error(code, err, "a.parquet", *needles)
    if command == "lot":  # a lot lists an unreadable input and judges the rest (here: none)
        assert "s1" not in (out.read_text(encoding="utf-8") if out.exists() else "")
        if (tmp_path / "s.parquet").exists():
            pq.read_table(tmp_path / "s.parquet").validate(full=True)  # was: invalid UTF-8 written
    else:
        assert not out.exists()


def test_dates_near_the_limits_are_read(tmp_path, capsys):
    f = _archive(tmp_path / "a.parquet", measured_at=pa.array([-62135596800, 253402300799], pa.timestamp("s")))
    code, _, err = run(["lot", f, "--quiet", "--processes", "1", "--json", tmp_path / "l.json"], capsys)
    assert code == 0, err
    got = [s["metadata"]["measured_at"] for s in json.loads((tmp_path / "l.json").read_text())["samples"]]
    assert got == ["0001-01-01T00:00:00", "9999-12-31T23:59:59"]


def test_metadata_cells_of_the_lot_csv_are_written_as_the_json_shows_them(tmp_path, capsys):
    # binary and nested values were Python reprs (b'ok', {'a': 1}) and a negative decimal was
    # neutralised as text ('-2.50); the JSON output is the reference for the form
    f = _archive(tmp_path / "a.parquet",
                 bin=pa.array([b"\xff\xfe", b"ok"]), nested=pa.array([{"a": 1}, {"a": 2}]),
                 tags=pa.array([["x", "=y"], []]), offset=pa.array([decimal.Decimal("-2.50"), decimal.Decimal("1.00")],
                                                                    pa.decimal128(5, 2)))
    code, _, err = run(["lot", f, "--quiet", "--processes", "1", "--samples-csv", tmp_path / "s.csv",
                        "--json", tmp_path / "l.json"], capsys)
    assert code == 0, err
    rows = [r for r in csv.DictReader(io.StringIO((tmp_path / "s.csv").read_text(encoding="utf-8")))
            if r["name"] in ("s0", "s1")]
    assert [r["bin"] for r in rows] == ["0xfffe", "ok"]
    assert [r["nested"] for r in rows] == ['{"a": 1}', '{"a": 2}']
    assert [r["offset"] for r in rows] == ["-2.50", "1.00"]
    assert rows[0]["tags"] == '["x", "=y"]' and rows[1]["tags"] == "[]"
    meta = [s["metadata"] for s in json.loads((tmp_path / "l.json").read_text())["samples"]]
    assert [m["bin"] for m in meta] == [r["bin"] for r in rows]
    assert [m["nested"] for m in meta] == [r["nested"] for r in rows]


def test_a_column_of_text_in_one_file_and_binary_in_another_is_carried_as_text(tmp_path, capsys):
    # Arrow's permissive promotion made the text binary: b's' in the CSV, binary in Parquet
    d = tmp_path / "arch"
    d.mkdir()
    _archive(d / "1.parquet", lens=pa.array([b"\xff", b"=z"]))
    _archive(d / "2.parquet", names=["t0", "t1"], lens=pa.array(["s", "t"]))
    code, out, err = run(["lot", d, "--processes", "1", "--samples-csv", tmp_path / "s.csv",
                          "--samples-parquet", tmp_path / "s.parquet"], capsys)
    assert code == 0, err
    rows = {r["name"]: r["lens"] for r in csv.DictReader(io.StringIO((tmp_path / "s.csv").read_text(encoding="utf-8")))
            if r["name"] in ("s0", "s1", "t0", "t1")}
    assert rows == {"s0": "0xff", "s1": "'=z", "t0": "s", "t1": "t"}
    col = pq.read_table(tmp_path / "s.parquet").column("lens")
    assert pa.types.is_string(col.type) and col.to_pylist()[2:] == ["s", "t"]
    assert "'lens' is carried as text" in " ".join(out.split())


def test_only_the_column_whose_values_do_not_fit_is_carried_as_text(tmp_path, capsys):
    # uint64 2**64 − 1 beside int64 cannot be joined as numbers; float32 beside float64 can:
    # the note named both as "cannot be unified" and made both text
    d = tmp_path / "arch"
    d.mkdir()
    _archive(d / "1.parquet", serial=pa.array([2**64 - 1, 5], pa.uint64()), f32=pa.array([0.5, 1.5], pa.float32()))
    _archive(d / "2.parquet", names=["t0", "t1"], serial=pa.array([-1, 5], pa.int64()), f32=pa.array([2.5, 3.5], pa.float64()))
    code, out, err = run(["lot", d, "--processes", "1", "--samples-parquet", tmp_path / "s.parquet"], capsys)
    assert code == 0, err
    tbl = pq.read_table(tmp_path / "s.parquet")
    assert pa.types.is_floating(tbl.column("f32").type) and tbl.column("f32").to_pylist() == [0.5, 1.5, 2.5, 3.5]
    assert pa.types.is_string(tbl.column("serial").type)
    assert tbl.column("serial").to_pylist() == ["18446744073709551615", "5", "-1", "5"]
    text = " ".join(out.split())
    assert "'serial' is carried as text" in text and "values do not fit one type" in text and "'f32'" not in text


@pytest.mark.parametrize("odd", ["link", "folder"])
@pytest.mark.parametrize("command", ["inspect", "convert", "check"])
def test_a_folder_archive_with_an_entry_that_is_not_a_file_is_refused(tmp_path, capsys, odd, command):
    # inspect, check and convert left a dangling link (or a folder named like a Parquet file)
    # out without a word and exited 0; a lot lists it as unreadable
    import os

    d = tmp_path / "arch"
    d.mkdir()
    _archive(d / "1.parquet")
    if odd == "link":
        os.symlink(tmp_path / "gone.parquet", d / "2.parquet")
    else:
        (d / "2.parquet").mkdir()
    crit = tmp_path / "c.toml"
    crit.write_text('[[clause]]\nfigure = "Ra"\nmin = 80\n', encoding="utf-8")
    out = tmp_path / "x.parquet"
    argv = {"inspect": ["inspect", d, "--validate-only"], "convert": ["convert", d, out],
            "check": ["check", d, "-c", crit]}[command]
    code, stdout, err = run(argv, capsys)
    assert code == 2 and "internal error" not in err, err
    assert "2.parquet" in stdout + err
    assert ("dangling symbolic link" if odd == "link" else "not a regular file") in stdout + err
    assert not out.exists()


def test_archive_columns_named_like_lumevals_own_read_keys_are_kept_apart(tmp_path, capsys):
    # a column 'lumeval.format' replaced lumeval's own key (inspect showed "mine" as the file's
    # format) and convert dropped it with 'lumeval.column'; they are kept as meta:KEY, while
    # lumeval.scale keeps carrying a spectrum's scale (lumeval's own archives write it)
    f = _archive(tmp_path / "a.parquet", **{"lumeval.format": ["mine"] * 2, "lumeval.column": ["c"] * 2,
                                             "lumeval.scale": ["relative"] * 2})
    code, out, err = run(["inspect", f, "--validate-only"], capsys)
    assert code == 0, err
    assert "Parquet archive" in out and "mine" not in out and "scale relative" in out
    code, _, err = run(["convert", f, tmp_path / "a.json"], capsys)
    assert code == 0, err
    spec = json.loads((tmp_path / "a.json").read_text())["spectra"][0]
    meta = spec["metadata"]
    assert meta["meta:lumeval.format"] == "mine" and meta["meta:lumeval.column"] == "c"
    assert "relative" in json.dumps({k: v for k, v in spec.items() if k != "values"})


def test_an_archive_with_one_wavelength_column_is_refused_in_the_readers_words(tmp_path, capsys):
    # it said "the wavelengths are missing or not finite numbers" for row 1
    f = tmp_path / "a.parquet"
    pq.write_table(pa.table({"name": ["a"], "555": [1.0]}), f)
    code, out, err = run(["convert", f, tmp_path / "a.json"], capsys)
    assert_clean_error(code, err, "a.parquet", "'555'", "at least two wavelengths")


@pytest.mark.parametrize("command", ["inspect", "check"])
def test_a_parquet_output_into_the_input_archive_folder_is_refused(tmp_path, capsys, command):
    # `inspect ARCHIVE -o ARCHIVE/new.parquet` wrote its text report into the archive's folder,
    # and every later read of the archive failed; convert refused it already (a lot's own
    # per-sample table there is set aside by the next lot, lumeval.lots.own_reports)
    d = tmp_path / "arch"
    d.mkdir()
    _archive(d / "1.parquet")
    crit = tmp_path / "c.toml"
    crit.write_text('[[clause]]\nfigure = "Ra"\nmin = 80\n', encoding="utf-8")
    target = d / "new.parquet"
    argv = {"inspect": ["inspect", d, "-o", target], "check": ["check", d, "-c", crit, "-o", target]}[command]
    code, _, err = run(argv, capsys)
    assert_clean_error(code, err, "new.parquet", "input archive folder")
    assert sorted(p.name for p in d.iterdir()) == ["1.parquet"]
