"""The files of one Parquet archive give a metadata column different types.

Columns whose types unify keep them (a dictionary-encoded text column and a plain one are both
text); a column whose types cannot be unified (text in one file, int64 in another; a list in
one file, a number in the other...) is carried as text in every per-sample output, each value
converted as a reader expects (lists as JSON-like text, binary as UTF-8 text or ``0x`` hex), and
the lot says so in a note. The per-sample figures do not change (a spectrum's figures depend on
its own data only).
"""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

from .conftest import run_cli_in_process

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

WL = np.arange(380.0, 781.0, 5.0)


def _planck(T: float) -> np.ndarray:
    """Spectral radiant exitance of a Planckian radiator (Planck's law, CODATA constants from
    scipy.constants), in relative units on the 5 nm grid 380-780 nm."""
    from scipy.constants import Boltzmann as k
    from scipy.constants import Planck as h
    from scipy.constants import speed_of_light as c

    lam = WL * 1e-9
    m = 2 * np.pi * h * c**2 / lam**5 / np.expm1(h * c / (lam * k * T))
    return m / m.max()


def _spectra(temps, names) -> dict:
    cols = {"name": pa.array(names, pa.string())}
    vals = np.array([_planck(T) for T in temps])
    for j, w in enumerate(WL):
        cols[f"{w:g}"] = pa.array(vals[:, j])
    return cols


A = ([2700.0, 3000.0, 3500.0], ["a1", "a2", "a3"])
B = ([4000.0, 5000.0, 6500.0], ["b1", "b2", "b3"])


def _archive(folder, meta_a: dict, meta_b: dict):
    """A folder of two Parquet files (A then B), with the metadata columns given (None: none)."""
    folder.mkdir()
    for fname, (temps, names), meta in (("a.parquet", A, meta_a), ("b.parquet", B, meta_b)):
        cols = _spectra(temps, names)
        table = pa.table({"name": cols.pop("name"), **(meta or {}), **cols})
        pq.write_table(table, folder / fname)
    return folder


def _run(folder, tmp_path, capsys):
    out_csv, out_pq = tmp_path / f"{folder.name}.csv", tmp_path / f"{folder.name}.parquet"
    code, out, err = run_cli_in_process(["lot", folder, "--processes", "1", "-f", "json",
                                         "--samples-csv", out_csv, "--samples-parquet", out_pq], capsys)
    assert code == 0, err
    assert "Traceback" not in err and "internal error" not in err, err
    doc = json.loads(out)
    with open(out_csv, newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    return doc, rows, pq.read_table(out_pq)


def _figures(doc) -> dict:
    """Every numeric per-sample figure of the lot JSON, by figure name, as arrays (N,)."""
    keys = [k for k, v in doc["samples"][0].items() if isinstance(v, (int, float)) and not isinstance(v, bool)]
    return {k: np.array([np.nan if s[k] is None else s[k] for s in doc["samples"]], dtype=float) for k in keys}


@pytest.fixture
def plain(tmp_path, capsys):
    """The same spectra without metadata columns: the figures every other run must give."""
    doc, _, _ = _run(_archive(tmp_path / "plain", None, None), tmp_path, capsys)
    return _figures(doc)


def _same_figures(doc, plain):
    got = _figures(doc)
    assert set(plain) <= set(got) and len(plain) > 10
    for k, v in plain.items():
        np.testing.assert_allclose(got[k], v, rtol=1e-12, equal_nan=True, err_msg=k)


def _csv_column(rows, name):
    j = rows[0].index(name)
    return [r[j] for r in rows[1:1 + 6]]


def _notes(doc) -> list[str]:
    return [n for n in doc["notes"] if "carried as text" in n]


def test_text_against_int64_and_a_list_column(tmp_path, capsys, plain):
    """(a) ``station`` is text in one file and int64 in the other; ``tags`` is list<string> in
    one file, absent from the other: station becomes text, tags (one type) stays a list."""
    folder = _archive(
        tmp_path / "clash",
        {"station": pa.array(["S-1", "S-2", None]), "tags": pa.array([["x", "y"], [], None], pa.list_(pa.string()))},
        {"station": pa.array([7, 8, None], pa.int64())},
    )
    doc, rows, table = _run(folder, tmp_path, capsys)
    assert [s["name"] for s in doc["samples"]] == ["a1", "a2", "a3", "b1", "b2", "b3"]
    assert [s["metadata"].get("station") for s in doc["samples"]] == ["S-1", "S-2", None, "7", "8", None]
    assert _csv_column(rows, "station") == ["S-1", "S-2", "", "7", "8", ""]
    assert table.schema.field("station").type == pa.string()
    assert table.column("station").to_pylist() == ["S-1", "S-2", None, "7", "8", None]
    assert table.schema.field("tags").type == pa.list_(pa.string())  # one type: kept
    # in the JSON a kept list reads as the JSON-like text a clashing one gets (was Python's "['x', 'y']")
    assert [s["metadata"].get("tags") for s in doc["samples"]][:2] == ['["x", "y"]', "[]"]
    notes = _notes(doc)
    assert len(notes) == 1 and "'station'" in notes[0] and "int64" in notes[0] and "string" in notes[0], notes
    _same_figures(doc, plain)


def test_list_and_binary_that_clash_become_json_like_and_utf8_or_hex_text(tmp_path, capsys, plain):
    """A list column and a binary column whose types differ between the files are carried as
    text: the list as its JSON-like text, binary as text when it is valid UTF-8, else as hex."""
    folder = _archive(
        tmp_path / "lists",
        {"tags": pa.array([["x", 'q"uote'], [], None], pa.list_(pa.string())),
         "blob": pa.array([b"ok", b"\xff\x00", None], pa.binary())},
        {"tags": pa.array([1, 2, 3], pa.int64()), "blob": pa.array([1.5, None, 3.0])},
    )
    doc, rows, table = _run(folder, tmp_path, capsys)
    tags = [s["metadata"].get("tags") for s in doc["samples"]]
    assert tags == ['["x", "q\\"uote"]', "[]", None, "1", "2", "3"]
    blob = [s["metadata"].get("blob") for s in doc["samples"]]
    assert blob == ["ok", "0xff00", None, "1.5", None, "3"]
    assert table.schema.field("tags").type == pa.string() and table.schema.field("blob").type == pa.string()
    assert table.column("blob").to_pylist() == blob
    assert _csv_column(rows, "blob") == ["ok", "0xff00", "", "1.5", "", "3"]
    notes = _notes(doc)
    assert len(notes) == 2 and any("'tags'" in n for n in notes) and any("'blob'" in n for n in notes), notes
    _same_figures(doc, plain)


def test_dictionary_text_against_plain_text_with_a_binary_column(tmp_path, capsys, plain):
    """(b) ``station`` dictionary-encoded text in one file, plain text in the other (the same
    type of value: kept as text, no note), with a binary column in both files (one type: kept
    binary) and one that is binary in one file and int64 in the other (carried as text, with a
    note)."""
    folder = _archive(
        tmp_path / "dict",
        {"station": pa.array(["S-1", "S-1", "S-2"]).dictionary_encode(),
         "raw": pa.array([b"\xff", b"", None], pa.binary()),
         "blob": pa.array([b"\xff\xfe", "h\u00e9".encode(), None], pa.binary())},
        {"station": pa.array(["S-3", None, "S-1"]), "raw": pa.array([b"\x80\x81", None, b"z"], pa.binary()),
         "blob": pa.array([5, None, 6], pa.int64())},
    )
    doc, rows, table = _run(folder, tmp_path, capsys)
    assert [s["metadata"].get("station") for s in doc["samples"]] == ["S-1", "S-1", "S-2", "S-3", None, "S-1"]
    assert table.schema.field("station").type == pa.string()
    assert table.schema.field("raw").type == pa.binary()
    assert table.column("raw").to_pylist() == [b"\xff", b"", None, b"\x80\x81", None, b"z"]
    assert [s["metadata"].get("blob") for s in doc["samples"]] == ["0xfffe", "h\u00e9", None, "5", None, "6"]
    assert _csv_column(rows, "station") == ["S-1", "S-1", "S-2", "S-3", "", "S-1"]
    notes = _notes(doc)
    assert len(notes) == 1 and "'blob'" in notes[0] and "binary" in notes[0], notes
    _same_figures(doc, plain)


def test_json_safe_writes_binary_and_nested_values_as_the_text_rules_say():
    """A metadata value of a kept binary or nested type reaches the JSON as the same text a column
    carried as text gets (was Python's repr: "b'\\xff'", "['x']")."""
    from lumeval.spectra.archive import json_safe

    assert json_safe(b"\xff\x00") == "0xff00" and json_safe("é".encode()) == "é"
    assert json_safe(["x", 'q"uote']) == '["x", "q\\"uote"]' and json_safe({"k": 1.5}) == '{"k": 1.5}'
    assert json_safe(float("nan")) is None and json_safe(3) == 3
