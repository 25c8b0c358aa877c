"""The text reader's fast path (dialect from a sample of lines, the data block converted by
numpy in one call: lumeval.spectra.text_fast) gives exactly what the line-by-line path gives.

References, none written by this project:

- the line-by-line path is the reader's documented rule set; the fast path must give the same
  spectra (values compared exactly: both convert the same decimal text of each cell with a
  correctly rounded string-to-float conversion, so the floats are equal by construction) or
  the same error message;
- Python's ``float()`` (correctly rounded, IEEE 754 binary64) is the reference for numpy's text
  parser on the digit strings the fast path lets through.
"""

from __future__ import annotations

import random

import numpy as np
import pytest
from hypothesis import given

from lumeval.errors import InputError
from lumeval.spectra import text as T
from lumeval.spectra import text_fast as F
from lumeval.spectra.read import parse_spectra

from .test_spectra_fuzz import CORPUS, SETTINGS, csv_text


def _both(text: str, file: str = "d/lamp.csv"):
    out = []
    for fast in (True, False):
        try:
            s = T.parse_text(text, file, fast=fast)
            out.append(("ok", s))
        except InputError as exc:
            out.append(("error", exc.message))
    return out


def _assert_same(text: str, file: str = "d/lamp.csv"):
    (k1, a), (k2, b) = _both(text, file)
    assert k1 == k2, (a, b)
    if k1 == "error":
        assert a == b
        return None
    np.testing.assert_array_equal(a.wavelengths_nm, b.wavelengths_nm)  # exact: same text, same conversion
    np.testing.assert_array_equal(a.values, b.values)
    assert (a.names, a.sources, a.notes, a.metadata) == (b.names, b.sources, b.notes, b.metadata)
    return a


def _took_fast_path(text: str) -> bool:
    lines = T._content_lines(text)
    return F.fast_block(T.non_comment_lines(text, lines), T._RowMemo()) is not None


def _values(n_rows: int, n_cols: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return rng.uniform(0.0, 2.0, (n_rows, n_cols)) * 10.0 ** rng.integers(-4, 3, (n_rows, n_cols))


def _dialect_file(delim: str, decimal_comma: bool, *, rows: int = 81, cols: int = 1, header: str = "plain",
                  comments: bool = False, footer: bool = False, newline: str = "\n", bom: bool = False,
                  descending: bool = False, fmt: str = "{:.9g}") -> str:
    wl = 380.0 + 5.0 * np.arange(rows)
    if descending:
        wl = wl[::-1]
    vals = _values(rows, cols, rows * 7 + cols)
    out = []
    if comments:
        out += ["# Instrument: bench 7", "% operator = Kim", "// exported 2026-01-02"]
    out.append("Date: 2026-01-02")
    names = [f"LED {c + 1}" for c in range(cols)]
    if header == "plain":
        out.append(delim.join(["wavelength (nm)"] + names))
    elif header == "units":
        out.append(delim.join(["Wavelength"] + names))
        out.append(delim.join(["nm"] + ["W/(m2 nm)"] * cols))
    for i in range(rows):
        cells = [fmt.format(wl[i])] + [fmt.format(v) for v in vals[i]]
        if decimal_comma:
            cells = [c.replace(".", ",") for c in cells]
        out.append(delim.join(cells))
        if comments and i == rows // 2:
            out.append("# halfway")
    if footer:
        out += ["", "End of data", "checksum: 1234"]
    text = newline.join(out) + newline
    return ("\ufeff" + text) if bom else text


DIALECTS = [
    (",", False), (";", False), (";", True), ("\t", False), ("\t", True), (" ", False), (" ", True),
    ("   ", False), (", ", False), ("; ", True),
]


@pytest.mark.parametrize(("delim", "dc"), DIALECTS)
@pytest.mark.parametrize("header", ["plain", "units", "none"])
@pytest.mark.parametrize("extras", ["none", "comments", "footer", "crlf", "cr", "bom", "descending", "wide"])
def test_fast_path_equals_line_by_line_path_on_dialects(delim, dc, header, extras):
    kw = {
        "comments": extras == "comments", "footer": extras == "footer", "bom": extras == "bom",
        "descending": extras == "descending", "newline": {"crlf": "\r\n", "cr": "\r"}.get(extras, "\n"),
        "cols": 40 if extras == "wide" else 1, "rows": 401 if extras == "wide" else 81,
    }
    text = _dialect_file(delim, dc, header=header, **kw)
    s = _assert_same(text)
    assert s is not None and s.values.shape == (kw["cols"], kw["rows"])
    # the fast path really was taken (these files have clean data blocks)
    assert _took_fast_path(text)


@pytest.mark.parametrize("extras", ["none", "comments", "footer"])
def test_fast_path_through_the_file_reader(tmp_path, extras):
    """Bytes through parse_spectra (decoding: UTF-8 with BOM, UTF-16, cp1252)."""
    text = _dialect_file(";", True, header="units", comments=extras == "comments", footer=extras == "footer")
    for enc in ("utf-8", "utf-8-sig", "utf-16", "cp1252"):
        a = parse_spectra(text.encode(enc), "d/lamp.csv")
        b = T.parse_text(text, "d/lamp.csv", fast=False)
        np.testing.assert_array_equal(a.values, b.values)
        assert a.names == b.names and a.metadata == b.metadata


@pytest.mark.parametrize("enc", ["utf-32", "utf-32-le", "utf-32-be"])
def test_utf32_is_refused_by_name(enc):
    """A UTF-32 file with a byte-order mark was decoded as UTF-16 (its mark starts with the
    UTF-16 one) and refused as "no rows of numbers found" (found by exploratory testing); it is
    now named. The byte-order marks are the Unicode Standard's (common knowledge, no source checked)."""
    from lumeval.errors import InputError

    raw = ("\ufeff" if enc != "utf-32" else "") + "wl,S\n" + "".join(f"{380 + k},1\n" for k in range(60))
    with pytest.raises(InputError, match="UTF-32 byte-order mark"):
        parse_spectra(raw.encode(enc), "d/lamp.csv")


# Files the fast path hands over (it must give up, and the line-by-line path decides)
HANDED_OVER = {
    "quoted numbers": '"wavelength","S"\n' + "".join(f'"{380 + k}","{k / 7:.5f}"\n' for k in range(60)),
    "trailing delimiters": "wl;S;\n" + "".join(f"{380 + k};{k / 7:.5f};\n" for k in range(60)),
    "mixed marks in the middle": "wl;S\n" + "".join(f"{380 + k};{k / 7:.5f}\n" for k in range(30))
    + "".join(f"{410 + k};{k / 7:.5f}\n".replace(".", ",") for k in range(30)),
    "bad cell in the middle": "wl,S\n" + "".join(f"{380 + k},{'N/A' if k == 30 else k / 7}\n" for k in range(60)),
    "short row in the middle": "wl,S,T\n" + "".join(f"{380 + k},1,{'' if k == 30 else 2}\n" for k in range(60)),
    "too large": "wl,S\n" + "".join(f"{380 + k},{'1e999' if k == 30 else 1}\n" for k in range(60)),
    "text in the middle": "wl,S\n" + "".join(f"{380 + k},1\n" + ("oops\n" if k == 30 else "") for k in range(60)),
    "duplicate wavelength": "wl,S\n" + "".join(f"{380 + k - (k == 31)},1\n" for k in range(60)),
    "foreign digits": "wl,S\n" + "".join(f"{380 + k},{'٣' if k == 30 else 1}\n" for k in range(60)),
    "long footer": "wl,S\n" + "".join(f"{380 + k},1\n" for k in range(60)) + "".join(f"note {k}\n" for k in range(9)),
    "row after footer": "wl,S\n" + "".join(f"{380 + k},1\n" for k in range(60)) + "end\n440,1\n",
    "one value missing at the end": "wl,S\n" + "".join(f"{380 + k},1\n" for k in range(60)) + "440\n",
}


@pytest.mark.parametrize("name", sorted(HANDED_OVER))
def test_fast_path_hands_over_and_messages_are_unchanged(name):
    text = HANDED_OVER[name]
    _assert_same(text)


def test_corpus_files_read_the_same_on_both_paths():
    n_fast = 0
    for p in sorted(CORPUS.glob("*")):
        if p.suffix not in {".csv", ".txt"}:
            continue
        try:
            text = T._decode(p.read_bytes(), p.name)
        except InputError:
            continue
        _assert_same(text, p.name)
        n_fast += _took_fast_path(text)
    assert n_fast >= 10  # most corpus files have clean data blocks


@SETTINGS
@given(text=csv_text())
def test_fast_path_agrees_with_line_by_line_path_generated(text):
    _assert_same(text, "fuzz/gen.csv")


def _random_number_cells(rng: random.Random, n: int) -> list[str]:
    """Well-formed cells of the reader's number grammar: signs, digits before and after a point,
    exponents."""
    cells = []
    for _ in range(n):
        digits = "".join(rng.choice("0123456789") for _ in range(rng.randint(1, 25)))
        k = rng.randint(0, len(digits))
        c = digits[:k] + "." + digits[k:] if rng.random() < 0.8 else digits
        if c == ".":
            c = "0."
        if rng.random() < 0.3:
            c += rng.choice("eE") + rng.choice(["", "+", "-"]) + str(rng.randint(0, 330))
        cells.append(rng.choice(["", "-", "+"]) + c)
    return cells


def test_numpy_text_parser_equals_python_float():
    """numpy.loadtxt, on the characters the fast path lets through, gives float(cell) exactly
    (reference: Python's correctly rounded float(); IEEE 754 binary64)."""
    cells = _random_number_cells(random.Random(11), 20_000)
    want = np.array([float(c) for c in cells])
    finite = np.isfinite(want)
    cells = [c for c, f in zip(cells, finite) if f]
    text = "\n".join(f"{380 + i},{c}" for i, c in enumerate(cells))
    got = F.convert_block(text, ",", False, len(cells), 2)
    assert got is not None
    np.testing.assert_array_equal(got[:, 1], want[finite])
    comma = F.convert_block(text.replace(",", ";").replace(".", ","), ";", True, len(cells), 2)
    np.testing.assert_array_equal(comma[:, 1], want[finite])


# --- large blocks converted by forked processes (lumeval.spectra.text_fast._forked_loadtxt)

_FORKS = pytest.mark.skipif(not __import__("lumeval._workers", fromlist=["x"]).fork_available(),
                            reason="large blocks are converted by forked processes on Linux only")


@pytest.fixture
def forked(monkeypatch):
    """Every block over 64 bytes converted by three processes; the calls counted. (A thread
    that an earlier test left running, e.g. Dask's idle offload thread, would make the reader
    convert here: these tests are about the forked conversion itself.)"""
    calls = []
    real = F._forked_loadtxt
    monkeypatch.setattr(F, "PARALLEL_BYTES", 64)
    monkeypatch.setattr(F, "_other_threads", lambda: False)
    monkeypatch.setattr(F, "_forked_loadtxt", lambda *a: calls.append(a[-1]) or real(*a))
    with F.parse_processes(3):
        yield calls


@_FORKS
def test_forked_conversion_equals_python_float(forked):
    """The pieces converted by forked children give float(cell) exactly, row for row
    (reference: Python's correctly rounded float(); the same numpy call on the same cells)."""
    rng = random.Random(5)
    cells = [f"{rng.uniform(-1e3, 1e3):.{rng.randint(0, 17)}f}" for _ in range(5_000)]
    text = "\n".join(f"{380 + i},{c},{c}e-3" for i, c in enumerate(cells))
    got = F.convert_block(text, ",", False, len(cells), 3)
    assert forked == [3] and got is not None
    np.testing.assert_array_equal(got[:, 0], 380.0 + np.arange(len(cells)))
    np.testing.assert_array_equal(got[:, 1], [float(c) for c in cells])
    np.testing.assert_array_equal(got[:, 2], [float(c + "e-3") for c in cells])


@_FORKS
@pytest.mark.parametrize("where", [0.1, 0.5, 0.9])
@pytest.mark.parametrize("fault", ["bad cell", "short row", "long row", "too large"])
def test_forked_conversion_gives_up_on_a_fault_in_any_piece(forked, where, fault):
    """A fault in the first, middle or last piece: the conversion gives up (None), so the
    line-by-line path reads the file and its message is the one a serial read gives."""
    rows = [f"{380 + k},{k / 7:.5f},{k / 3:.4f}" for k in range(300)]
    k = int(where * len(rows))
    rows[k] = {"bad cell": f"{380 + k},1-2,3", "short row": f"{380 + k},1", "long row": f"{380 + k},1,2,3",
               "too large": f"{380 + k},1e999,3"}[fault]
    assert F.convert_block("\n".join(rows), ",", False, len(rows), 3) is None
    assert forked == [3]
    _assert_same("wl,S,T\n" + "\n".join(rows) + "\n")


@_FORKS
def test_forked_conversion_through_the_reader(forked):
    """Dialect files read by both paths with the forked conversion on: the same spectra."""
    for delim, dc in DIALECTS:
        text = _dialect_file(delim, dc, header="units", cols=40, rows=401)
        s = _assert_same(text)
        assert s is not None and s.values.shape == (40, 401)
    assert len(forked) == len(DIALECTS)


def test_one_process_converts_here(monkeypatch):
    """parse_processes(1) (lot --processes 1): no child, whatever the size."""
    monkeypatch.setattr(F, "PARALLEL_BYTES", 64)
    monkeypatch.setattr(F, "_forked_loadtxt", lambda *a: pytest.fail("forked with one process"))
    with F.parse_processes(1):
        got = F.convert_block("\n".join(f"{380 + k},{k}" for k in range(100)), ",", False, 100, 2)
    np.testing.assert_array_equal(got[:, 1], np.arange(100.0))


# --- large blocks converted by Arrow's CSV reader (lumeval.spectra.text_fast._arrow_convert)
# Reference: Python's float() (correctly rounded, IEEE 754 binary64) for the values, and numpy's
# text parser (the conversion the block had before) for which cells are accepted; exact equality:
# both sides convert the same decimal text with a correctly rounded conversion.



@pytest.fixture
def arrow(monkeypatch):
    """Every block over 64 bytes converted by Arrow, in pieces of about 300 bytes; the calls
    that gave an array counted."""
    pytest.importorskip("pyarrow")
    calls = []
    real = F._arrow_convert

    def counted(*a):
        got = real(*a)
        calls.append(got is not None)
        return got

    monkeypatch.setattr(F, "ARROW_BYTES", 64)
    monkeypatch.setattr(F, "ARROW_PIECE_BYTES", 300)
    monkeypatch.setattr(F, "_arrow_convert", counted)
    return calls


def test_arrow_conversion_equals_python_float(arrow):
    rng = random.Random(23)
    cells = [c for c in _random_number_cells(rng, 20_000) if np.isfinite(float(c))]
    rows = [cells[i: i + 4] for i in range(0, len(cells) - 3, 4)]
    text = "\n".join(f"{380 + i}," + ",".join(r) for i, r in enumerate(rows))
    got = F.convert_block(text, ",", False, len(rows), 5)
    assert arrow == [True] and got is not None
    np.testing.assert_array_equal(got[:, 0], 380.0 + np.arange(len(rows)))
    np.testing.assert_array_equal(got[:, 1:], [[float(c) for c in r] for r in rows])
    comma = F.convert_block(text.replace(",", ";").replace(".", ","), ";", True, len(rows), 5)
    np.testing.assert_array_equal(comma, got)


def test_arrow_accepts_exactly_the_cells_numpy_accepts(arrow):
    """Cells made of the characters that reach the conversion (digits, ``. e E + -``), well
    formed or not: Arrow gives numpy's value, or refuses where numpy refuses."""
    rng = random.Random(29)
    pieces = ["1", "0", "42", ".", "e", "E", "+", "-", "5", "e-3", "E+7", "00", "1e999", "9" * 30]
    for _ in range(3000):
        cell = "".join(rng.choice(pieces) for _ in range(rng.randint(1, 4)))
        raw = f"380,{cell}\n381,2".encode("ascii")
        try:
            want = F._loadtxt(raw, ",")
        except ValueError:
            want = None
        got = F._arrow_convert(raw, ",", 2, 2)
        if want is None:
            assert got is None, cell
        else:
            assert got is not None, cell
            np.testing.assert_array_equal(got, want)


@pytest.mark.parametrize("where", [0.02, 0.5, 0.98])
@pytest.mark.parametrize("fault", ["bad cell", "short row", "long row", "too large", "empty cell", "space"])
def test_arrow_conversion_gives_up_on_a_fault_in_any_piece(arrow, where, fault):
    """A fault in the first, a middle or the last piece: no array from Arrow; the block goes to
    numpy and then, as before, to the line-by-line path, whose message is a serial read's."""
    rows = [f"{380 + k},{k / 7:.5f},{k / 3:.4f}" for k in range(300)]
    k = int(where * len(rows))
    rows[k] = {"bad cell": f"{380 + k},1-2,3", "short row": f"{380 + k},1", "long row": f"{380 + k},1,2,3",
               "too large": f"{380 + k},1e999,3", "empty cell": f"{380 + k},,3", "space": f"{380 + k}, 1,3"}[fault]
    got = F.convert_block("\n".join(rows), ",", False, len(rows), 3)
    # 1e999: Arrow gives inf, as numpy does, and the block is refused for it after either
    assert arrow == [fault == "too large"]
    if fault == "space":  # numpy accepts a space around a cell
        np.testing.assert_array_equal(got[k], [380.0 + k, 1.0, 3.0])
    else:
        assert got is None
    _assert_same("wl,S,T\n" + "\n".join(rows) + "\n")


def test_arrow_conversion_row_count_must_match(arrow):
    rows = "\n".join(f"{380 + k},{k}" for k in range(50))
    assert F._arrow_convert(rows.encode(), ",", 49, 2) is None  # a row more than counted
    assert F._arrow_convert(rows.encode(), ",", 51, 2) is None  # a row fewer
    np.testing.assert_array_equal(F._arrow_convert(rows.encode(), ",", 50, 2)[:, 1], np.arange(50.0))
    # a short row and a long row in one piece: the cell total is right, the rows are not
    swapped = rows.replace("\n384,4\n", "\n384\n").replace("\n386,6\n", "\n386,6,6\n")
    assert swapped.count(",") == rows.count(",") and F._arrow_convert(swapped.encode(), ",", 50, 2) is None


def test_arrow_conversion_through_the_reader(arrow):
    """Dialect files read by both paths with Arrow's conversion on: the same spectra. Whitespace
    delimiters and cells with spaces stay with numpy."""
    for delim, dc in DIALECTS:
        text = _dialect_file(delim, dc, header="units", cols=40, rows=401)
        s = _assert_same(text)
        assert s is not None and s.values.shape == (40, 401)
    assert arrow.count(True) == sum(1 for d, _ in DIALECTS if not d.isspace() and " " not in d)


def test_without_pyarrow_numpy_converts(arrow, monkeypatch):
    monkeypatch.setitem(__import__("sys").modules, "pyarrow", None)  # import pyarrow fails
    got = F.convert_block("\n".join(f"{380 + k},{k}" for k in range(100)), ",", False, 100, 2)
    assert arrow == [False]
    np.testing.assert_array_equal(got[:, 1], np.arange(100.0))


@SETTINGS
@given(text=csv_text())
def test_fast_path_with_arrow_agrees_with_line_by_line_path_generated(text):
    """The generated files of test_fast_path_agrees_with_line_by_line_path_generated with every
    data block converted by Arrow, in pieces of 64 bytes: the same spectra or the same message."""
    pytest.importorskip("pyarrow")
    saved = F.ARROW_BYTES, F.ARROW_PIECE_BYTES
    F.ARROW_BYTES, F.ARROW_PIECE_BYTES = 0, 64
    try:
        _assert_same(text, "fuzz/gen.csv")
    finally:
        F.ARROW_BYTES, F.ARROW_PIECE_BYTES = saved


@pytest.mark.parametrize("trailing", [",", ""])
def test_a_header_naming_a_column_without_values_is_refused(trailing):
    """`wavelength_nm,S1,S2,S3` over rows `λ,a,b,` (or `λ,a,b`): S3 has no values. The header was
    dropped (names became file#1, file#2) and S3 lost silently; a lot of such files passed
    (found by a review). Refused, naming the line and the column."""
    from lumeval.errors import InputError

    rows = "".join(f"{w},{1 + np.sin(w / 40):.4f},{2 + np.cos(w / 50):.4f}{trailing}\n" for w in range(380, 781, 5))
    with pytest.raises(InputError, match=r"names 3 spectra but the rows hold 2 value\(s\): the column 'S3' has no values") as e:
        parse_spectra(("wavelength_nm,S1,S2,S3\n" + rows).encode(), "d/wide.csv")
    assert e.value.line == 1
    # a header naming exactly the columns there are, with trailing delimiters on the rows: read
    ok = parse_spectra(("wavelength_nm,S1,S2\n" + rows).encode(), "d/wide.csv")
    assert ok.names == ("S1", "S2")
    # a metadata line with more cells than the data, not naming a wavelength axis: still metadata
    meta = parse_spectra(("Date,2026-01-02,12:00,UTC\nwavelength_nm,S1,S2\n" + rows).encode(), "d/wide.csv")
    assert meta.names == ("S1", "S2")
