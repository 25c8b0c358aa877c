"""Wide text files read in column blocks (lumeval.spectra.text_columns, used by lots for text
files over the single-file limit) give what reading the whole file gives.

The reference is the whole-file reader (parse_text, the documented rules). Values are compared
exactly: both convert the same decimal text of each cell with numpy's correctly rounded parser,
so the floats are equal by construction. Lot figures are compared with rtol = atol = 1e-10: the engine
sees the same spectra, but in other batches, and only the order of summation inside the
matrix products (BLAS blocking) can differ.
"""

from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

from lumeval.errors import InputError
from lumeval.lots import reading
from lumeval.lots.run import run_lot
from lumeval.spectra import text as T
from lumeval.spectra.text_columns import NotStreamable, plan_columns, read_column_blocks

from .test_spectra_text_dialects import _dialect_file


def reading_unreadable(shown, message):
    from lumeval.lots.inputs import Unreadable

    return Unreadable(shown, message)


def _whole(path):
    return T.parse_text(T._decode(path.read_bytes(), str(path)), str(path))


def _assert_blocks_equal_whole(path, block_cols, keep_values=None):
    kw = {} if keep_values is None else {"keep_values": keep_values}
    blocks = list(read_column_blocks(path, file=str(path), block_cols=block_cols, **kw))
    whole = _whole(path)
    assert all(len(b) <= block_cols for b in blocks)
    np.testing.assert_array_equal(np.concatenate([b.values for b in blocks]), whole.values)
    for b in blocks:
        np.testing.assert_array_equal(b.wavelengths_nm, whole.wavelengths_nm)
    assert sum((b.names for b in blocks), ()) == whole.names
    assert sum((b.sources for b in blocks), ()) == whole.sources
    assert sum((b.notes for b in blocks), ()) == whole.notes
    assert sum((b.metadata for b in blocks), ()) == whole.metadata
    return blocks


@pytest.mark.parametrize(("delim", "dc"), [(",", False), (";", True), ("\t", False), (" ", False), (", ", False)])
@pytest.mark.parametrize("extras", ["none", "comments", "footer", "crlf", "bom", "descending", "units"])
@pytest.mark.parametrize("keep", [None, 0])
def test_column_blocks_equal_whole_file(tmp_path, delim, dc, extras, keep):
    text = _dialect_file(delim, dc, rows=60, cols=23, header="units" if extras == "units" else "plain",
                         comments=extras == "comments", footer=extras == "footer", bom=extras == "bom",
                         descending=extras == "descending", newline="\r\n" if extras == "crlf" else "\n")
    p = tmp_path / "wide.csv"
    p.write_bytes(text.encode("utf-8"))
    for block_cols in (1, 5, 64):
        _assert_blocks_equal_whole(p, block_cols, keep)


def test_micrometres_and_metadata(tmp_path):
    rows = "".join(f"{0.38 + 0.005 * k:.3f},{1 + k},{2 + k}\n" for k in range(81))
    p = tmp_path / "um.csv"
    p.write_text("Instrument: X\nwavelength (µm),A,B\n" + rows + "End\n", encoding="cp1252")
    blocks = _assert_blocks_equal_whole(p, 1)
    assert "converted to nm" in blocks[0].notes[0][0]


@pytest.mark.parametrize("case", ["duplicate", "unit", "interrupted"])
def test_errors_are_those_of_the_whole_file(tmp_path, case):
    rows = [f"{380 + 5 * k},{k},{k + 1}" for k in range(40)]
    head = "wavelength (nm),A,B"
    if case == "duplicate":
        rows[25] = rows[24].replace(",24,", ",9,")
    elif case == "unit":
        head = "wavelength (furlong),A,B"
    else:
        rows += ["end of data", "580,1,2"]
    p = tmp_path / "bad.csv"
    p.write_text(head + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    with pytest.raises(InputError) as whole:
        _whole(p)
    got = list(reading.stream_blocks(str(p), 2))  # the pass finds it (or hands the file to the whole read)
    assert got == [(None, [reading_unreadable(str(p), whole.value.message)])]


@pytest.mark.parametrize("bad", ["1,N/A,2", '"400",1,2', "400,1", "# comment", "400;1;2"])
def test_unclean_rows_are_not_streamed(tmp_path, bad):
    rows = [f"{380 + k},{k},{k + 1}" for k in range(40)]
    if bad.startswith("#"):
        rows.insert(20, bad)  # a comment between the rows is fine
    else:
        rows[20] = bad.replace("1,", f"{400},", 1) if bad == "1,N/A,2" else bad
    p = tmp_path / "bad.csv"
    p.write_text("wavelength,A,B\n" + "\n".join(rows) + "\n", encoding="utf-8")
    if bad.startswith("#"):
        _assert_blocks_equal_whole(p, 1)
        return
    with pytest.raises(NotStreamable) as exc:
        plan_columns(p, file=str(p))
    assert exc.value.line == 22


def test_lot_streams_wide_file_like_reading_it_whole(tmp_path, monkeypatch):
    text = _dialect_file(",", False, rows=401, cols=50)
    p = tmp_path / "lot.csv"
    p.write_text(text, encoding="utf-8")
    whole = run_lot([p], batch_spectra=16)
    monkeypatch.setattr(reading, "STREAM_BYTES", 1000)
    assert reading.is_streamed(str(p))
    streamed = run_lot([p], batch_spectra=16)
    assert len(whole) == 50 and whole.names == streamed.names and whole.sources == streamed.sources
    assert whole.warnings == streamed.warnings and whole.unreadable == streamed.unreadable
    for k in whole.figures:
        np.testing.assert_allclose(streamed.figures[k], whole.figures[k], rtol=1e-10, atol=1e-10)


def test_lot_refuses_unclean_big_file_naming_the_line(tmp_path, monkeypatch):
    rows = [f"{380 + k},{k},{k + 1}" for k in range(40)]
    rows[20] = "400,N/A,1"
    p = tmp_path / "big.csv"
    p.write_text("wavelength,A,B\n" + "\n".join(rows) + "\n", encoding="utf-8")
    monkeypatch.setattr(reading, "STREAM_BYTES", 100)
    # within the single-file limit: read whole, with the whole-file message
    run = run_lot([p])
    with pytest.raises(InputError) as whole:
        _whole(p)
    assert [u.message for u in run.unreadable] == [whole.value.message]
    # over it (limit lowered for the test): refused, naming the line
    monkeypatch.setattr(T, "MAX_TEXT_BYTES", 200)
    run = run_lot([p])
    assert len(run.unreadable) == 1 and ":22:" in run.unreadable[0].message and "column blocks" in run.unreadable[0].message


@pytest.mark.parametrize("rows, words", [
    (0, "no line of it looks like a row of numbers"),
    (1, "it has only a few lines, where a text spectrum file has one line per wavelength"),
    (3, "it has only a few lines, where a text spectrum file has one line per wavelength")])
def test_a_big_file_of_a_few_lines_is_refused_in_plain_words(tmp_path, monkeypatch, rows, words):
    """A file over the single-file limit with only a few lines (one very long header and a row
    or two; limits lowered for the test) is refused saying so, not with the reader's own plan
    ("the file is short: read it whole"; found by a review)."""
    head = "wavelength," + ",".join(f"s{j}" for j in range(200))
    body = "".join(f"{380 + k}," + ",".join("1.0" for _ in range(200)) + "\n" for k in range(rows))
    p = tmp_path / "few.csv"
    p.write_text(head + "\n" + body, encoding="utf-8")
    monkeypatch.setattr(reading, "STREAM_BYTES", 100)
    monkeypatch.setattr(T, "MAX_TEXT_BYTES", 200)
    run = run_lot([p])
    (u,) = run.unreadable
    assert f"cannot be read in column blocks: {words}" in u.message, u.message
    assert "read it whole" not in u.message


def test_a_big_file_without_numbers_is_not_said_to_be_short(tmp_path, monkeypatch):
    """A file over the single-file limit of many lines none of which is a row of numbers is
    refused as such, not as "only a few lines" (the same end of the reader's scan; found by a
    review)."""
    p = tmp_path / "prose.csv"
    p.write_text("".join(f"line {k} of a report about lamps, not a spectrum\n" for k in range(500)), encoding="utf-8")
    monkeypatch.setattr(reading, "STREAM_BYTES", 100)
    monkeypatch.setattr(T, "MAX_TEXT_BYTES", 200)
    (u,) = run_lot([p]).unreadable
    assert "cannot be read in column blocks: no line of it looks like a row of numbers" in u.message, u.message


def test_streaming_memory_is_bounded(tmp_path):
    """Memory probe: the numbers of a wide file (here 401 x 3,000 = 9.6 MB of float64) are
    never all in memory when read in blocks of 8 columns without keeping them."""
    n = 3000
    rng = np.random.default_rng(5)
    vals = rng.uniform(0, 1, (401, n))
    p = tmp_path / "w.csv"
    with open(p, "w", encoding="utf-8") as fh:
        fh.write("wavelength," + ",".join(f"s{j}" for j in range(n)) + "\n")
        for i in range(401):
            fh.write(f"{380 + i}," + ",".join(f"{v:.6f}" for v in vals[i]) + "\n")
    whole_bytes = 401 * n * 8
    tracemalloc.start()
    try:
        count = 0
        for b in read_column_blocks(p, file=str(p), block_cols=8, keep_values=0):
            count += len(b)
            if count >= 64:
                break
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert count == 64
    assert peak < 0.2 * whole_bytes, (peak, whole_bytes)
