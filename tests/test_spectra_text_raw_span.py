"""A large file's clean data block converted from the file's bytes (lumeval.spectra.text_fast:
``raw_lines``, ``RawLines``, ``span_convert``) gives exactly what joining its lines gives.

References, none written by this project:

- the line-by-line path is the reader's documented rule set (as in
  tests/test_spectra_text_dialects.py): the same spectra, compared exactly (every path converts
  the same decimal text of each cell with a correctly rounded conversion), or the same message;
- Python's ``str.split("\\n")`` is the reference for where the reader's lines lie in the bytes
  (:class:`RawLines`).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from lumeval.errors import InputError
from lumeval.spectra import text as T
from lumeval.spectra import text_fast as F
from lumeval.spectra.read import parse_spectra

from .test_spectra_fuzz import SETTINGS, csv_text
from .test_spectra_text_dialects import DIALECTS, _dialect_file


def _outcome(fn):
    try:
        return "ok", fn()
    except InputError as exc:
        return "error", exc.message


def _assert_same_outcome(a, b) -> None:
    assert a[0] == b[0], (a, b)
    if a[0] == "error":
        assert a[1] == b[1]
        return
    x, y = a[1], b[1]
    np.testing.assert_array_equal(x.wavelengths_nm, y.wavelengths_nm)  # exact: same text, same conversion
    np.testing.assert_array_equal(x.values, y.values)
    assert (x.names, x.sources, x.notes, x.metadata) == (y.names, y.sources, y.notes, y.metadata)


@pytest.fixture
def spans(monkeypatch):
    """Every file given its bytes (no size floor); each block's outcome of ``span_convert``
    recorded (True: converted from the bytes; False: handed to the joined lines)."""
    taken: list[bool] = []
    real = F.span_convert

    def counted(*a):
        got = real(*a)
        taken.append(got[0])
        return got

    monkeypatch.setattr(F, "RAW_SPAN_BYTES", 0)
    monkeypatch.setattr(F, "span_convert", counted)
    return taken


def _check_bytes(raw: bytes, file: str = "d/lamp.csv"):
    """parse_spectra of ``raw`` (the bytes route where it applies) against the line-by-line path
    on the same decoded text, and against parse_spectra with the bytes route off."""
    got = _outcome(lambda: parse_spectra(raw, file))
    try:
        text = T._decode(raw, file)
    except InputError as exc:
        assert got == ("error", exc.message)
        return got
    _assert_same_outcome(got, _outcome(lambda: T.parse_text(text, file, fast=False)))
    saved = F.raw_lines
    F.raw_lines = lambda raw: None
    try:
        _assert_same_outcome(got, _outcome(lambda: parse_spectra(raw, file)))
    finally:
        F.raw_lines = saved
    return got


@pytest.mark.parametrize(("delim", "dc"), DIALECTS)
@pytest.mark.parametrize("extras", ["none", "comments", "footer", "crlf", "bom", "descending", "wide", "units"])
@pytest.mark.parametrize("arrow", [False, True])
def test_bytes_route_equals_line_by_line_path_on_dialects(spans, monkeypatch, delim, dc, extras, arrow):
    if arrow:
        pytest.importorskip("pyarrow")
        monkeypatch.setattr(F, "ARROW_BYTES", 64)
        monkeypatch.setattr(F, "ARROW_PIECE_BYTES", 300)
    text = _dialect_file(delim, dc, header="units" if extras == "units" else "plain",
                         comments=extras == "comments", footer=extras == "footer", bom=extras == "bom",
                         descending=extras == "descending", newline="\r\n" if extras == "crlf" else "\n",
                         cols=40 if extras == "wide" else 3, rows=401 if extras == "wide" else 81)
    kind, s = _check_bytes(text.encode("utf-8"))
    assert kind == "ok" and s.values.shape[0] == (40 if extras == "wide" else 3)
    # which blocks come from the bytes: a single-character delimiter that is not white space,
    # no space in the block (Windows line ends are fine); a comment line inside the block: no
    # span of the bytes is looked at
    if extras == "comments":
        assert spans == []
    else:
        assert spans == [delim in {",", ";"}]


@pytest.mark.parametrize("enc", ["cp1252", "latin-1", "utf-8-sig", "utf-16"])
def test_bytes_route_with_non_ascii_header_and_other_encodings(spans, enc):
    """A header with µ and ² before the block (offsets in bytes differ from offsets in
    characters); UTF-16 bytes are never taken as lines."""
    text = "Operator: Zoë\nwavelength (nm);S [µW/(cm²·nm)];T\n" + "".join(
        f"{380 + k};{k / 7:.6f};{k / 3:.5f}\n" for k in range(81))
    kind, s = _check_bytes(text.encode(enc))
    assert kind == "ok" and s.values.shape == (2, 81)
    assert spans == ([] if enc == "utf-16" else [True])


@pytest.mark.parametrize("fault", ["bad cell", "short row", "long row", "too large", "space", "tab", "non-ASCII",
                                   "blank line", "comment line", "empty cell", "nbsp"])
@pytest.mark.parametrize("where", [0.02, 0.5, 0.98])
@pytest.mark.parametrize("arrow", [False, True])
def test_a_fault_anywhere_in_the_block_gives_the_line_by_line_outcome(spans, monkeypatch, fault, where, arrow):
    if arrow:
        pytest.importorskip("pyarrow")
        monkeypatch.setattr(F, "ARROW_BYTES", 64)
        monkeypatch.setattr(F, "ARROW_PIECE_BYTES", 300)
    rows = [f"{380 + k},{k / 7:.5f},{k / 3:.4f}" for k in range(300)]
    k = int(where * len(rows))
    rows[k] = {"bad cell": f"{380 + k},1-2,3", "short row": f"{380 + k},1", "long row": f"{380 + k},1,2,3",
               "too large": f"{380 + k},1e999,3", "space": f"{380 + k}, 1,3", "tab": f"{380 + k},1\t,3",
               "non-ASCII": f"{380 + k},1,٣", "blank line": f"{380 + k},1,3\n", "comment line": f"{380 + k},1,3\n# x",
               "empty cell": f"{380 + k},,3", "nbsp": f"{380 + k},1\u00a0,3"}[fault]
    _check_bytes(("wl,S,T\n" + "\n".join(rows) + "\n").encode("utf-8"))
    if fault in {"space", "tab", "non-ASCII", "nbsp"}:  # not pure: the joined lines decide
        assert spans == [False] or spans == []


@pytest.mark.parametrize("arrow", [False, True])
@pytest.mark.parametrize("fault", ["space", "no-break space", "byte-order mark", "none"])
def test_a_block_impure_past_its_first_64_kib_is_not_taken(spans, monkeypatch, arrow, fault):
    """The first 64 KiB of a block are looked at first; an impurity after them is found by the
    whole block's check (numpy's route) or the translation's (Arrow's route)."""
    if arrow:
        pytest.importorskip("pyarrow")
        monkeypatch.setattr(F, "ARROW_BYTES", 1000)
    rows = [f"{380 + k * 0.01:.2f},{k / 7:.9f},{k / 3:.9f}" for k in range(5000)]  # about 170 kB
    rows[4900] += {"space": " ", "no-break space": "\u00a0", "byte-order mark": "\ufeff", "none": ""}[fault]
    kind, s = _check_bytes(("wl,S,T\n" + "\n".join(rows) + "\n").encode())
    assert kind == "ok" and s.values.shape == (2, 5000)
    assert spans == [fault == "none"]


def test_the_bytes_route_is_taken_for_a_clean_wide_file_and_gives_its_numbers(spans):
    """Values checked against Python's float() of the cells written (a reference outside the reader)."""
    rng = np.random.default_rng(5)
    vals = rng.uniform(0, 2, (401, 30))
    cells = [[f"{380 + i}"] + [repr(float(v)) for v in row] for i, row in enumerate(vals)]
    text = "wavelength_nm," + ",".join(f"L{j}" for j in range(30)) + "\n" + "\n".join(",".join(c) for c in cells)
    kind, s = _check_bytes(text.encode("ascii"))
    assert kind == "ok" and spans == [True]
    np.testing.assert_array_equal(s.values, np.array([[float(c) for c in r[1:]] for r in cells]).T)


@pytest.mark.parametrize("arrow", [False, True])
@pytest.mark.parametrize("ends", ["crlf", "crlf, no final", "lone cr", "cr and crlf", "lf and crlf"])
def test_windows_line_ends(spans, monkeypatch, arrow, ends):
    """Windows line ends throughout: the bytes route keeps the carriage returns (Arrow reads
    CR LF as one line break; numpy is given LF); a lone CR anywhere (a line break of its own)
    keeps the file away from it. Each against the line-by-line path."""
    if arrow:
        pytest.importorskip("pyarrow")
        monkeypatch.setattr(F, "ARROW_BYTES", 64)
        monkeypatch.setattr(F, "ARROW_PIECE_BYTES", 300)
    rows = ["Date: 2026-01-02", "wavelength (nm);S;T"] + [f"{380 + k};{k / 7:.6f};{k / 3:.5f}" for k in range(81)]
    text = {"crlf": "\r\n".join(rows) + "\r\n", "crlf, no final": "\r\n".join(rows),
            "lone cr": "\r".join(rows) + "\r", "cr and crlf": "\r\n".join(rows[:40]) + "\r" + "\r\n".join(rows[40:]),
            "lf and crlf": "\r\n".join(rows[:40]) + "\n" + "\r\n".join(rows[40:]) + "\n"}[ends]
    kind, s = _check_bytes(text.encode())
    assert kind == "ok" and s.values.shape == (2, 81)
    assert spans == ([] if ends in {"lone cr", "cr and crlf"} else [True])


def test_a_fault_in_a_windows_file_gives_the_line_by_line_message(spans, monkeypatch):
    monkeypatch.setattr(F, "ARROW_BYTES", 64)
    monkeypatch.setattr(F, "ARROW_PIECE_BYTES", 300)
    rows = ["wl,S"] + [f"{380 + k},{'1-2' if k == 40 else k / 7}" for k in range(81)]
    kind, msg = _check_bytes(("\r\n".join(rows) + "\r\n").encode())
    assert kind == "error" and "1-2" in msg


def test_no_final_line_break_and_trailing_blank_lines(spans):
    body = "wl;S\n" + "\n".join(f"{380 + k};{k / 9:.6f}" for k in range(81))
    for tail in ("", "\n", "\n\n\n", "\n  \n"):
        spans.clear()
        kind, s = _check_bytes((body + tail).encode())
        assert kind == "ok" and s.values.shape == (1, 81) and spans == [True]


@SETTINGS
@given(text=csv_text())
def test_bytes_route_agrees_with_line_by_line_path_generated(text):
    """The fuzz corpus's generated files (tests/test_spectra_fuzz.py) through the bytes route,
    with Arrow converting in pieces of 64 bytes and with numpy."""
    pytest.importorskip("pyarrow")
    saved = F.RAW_SPAN_BYTES, F.ARROW_BYTES, F.ARROW_PIECE_BYTES
    try:
        raw = text.encode("utf-8")
    except UnicodeEncodeError:
        return
    try:
        F.RAW_SPAN_BYTES = 0
        _check_bytes(raw, "fuzz/gen.csv")
        F.ARROW_BYTES, F.ARROW_PIECE_BYTES = 0, 64
        _check_bytes(raw, "fuzz/gen.csv")
    finally:
        F.RAW_SPAN_BYTES, F.ARROW_BYTES, F.ARROW_PIECE_BYTES = saved


_LINE = st.text(st.sampled_from(list("ab1,; \t\u00e9\u00b5.\ufeff")), max_size=12)


@SETTINGS
@given(lines=st.lists(_LINE, min_size=1, max_size=40), enc=st.sampled_from(["utf-8", "cp1252", "latin-1"]))
def test_raw_lines_find_the_lines_str_split_finds(lines, enc):
    """Reference: ``str.split("\\n")``. Line L of the bytes (1-based) starts where the L-th
    piece of the split starts, from whichever end it is searched; a span of consecutive lines
    ends where its last line ends."""
    text = "\n".join(lines)
    try:
        raw = text.encode(enc)
    except UnicodeEncodeError:
        return
    r = F.RawLines(raw)
    assert r.n == len(lines)
    for ln, line in enumerate(lines, start=1):
        a = r.start(ln)
        assert raw[a: a + len(line.encode(enc))] == line.encode(enc)
        assert a == 0 or raw[a - 1: a] == b"\n"
    numbered = list(enumerate(lines, start=1))
    for i in range(len(numbered)):
        for j in range(i + 1, min(len(numbered), i + 4) + 1):
            a, b = r.span(numbered, i, j)
            assert raw[a:b].decode(enc) == "\n".join(lines[i:j])
    if len(numbered) >= 3:  # lines not consecutive: no span
        assert r.span([numbered[0], numbered[2]], 0, 2) is None


def test_raw_lines_only_for_large_ascii_compatible_bytes_without_lone_carriage_returns():
    big = b"wl,S\n" + b"380,1\n" * (F.RAW_SPAN_BYTES // 6 + 1)
    assert isinstance(F.raw_lines(big), F.RawLines) and not F.raw_lines(big).crlf
    assert F.raw_lines(b"wl,S\n380,1\n") is None  # small: not worth it
    assert F.raw_lines(big.replace(b"\n", b"\r\n")).crlf  # Windows line ends
    assert F.raw_lines(big.replace(b"\n", b"\r")) is None  # old Mac line ends
    assert F.raw_lines(big + b"x\ry\r\n") is None  # one lone carriage return
    assert F.raw_lines(b"\xff\xfe" + big) is None and F.raw_lines(b"\xfe\xff" + big) is None


@SETTINGS
@given(lines=st.lists(_LINE, min_size=1, max_size=30))
def test_raw_lines_of_windows_line_ends(lines):
    """The same with CR LF between the lines: a line starts where the split says, a span ends
    before its last line's CR."""
    text = "\r\n".join(lines)
    raw = text.encode("utf-8")
    r = F.RawLines(raw, crlf=True)
    numbered = list(enumerate(lines, start=1))
    for i in range(len(numbered)):
        assert raw[r.start(i + 1):].decode("utf-8").startswith(lines[i])
        for j in range(i + 1, min(len(numbered), i + 3) + 1):
            a, b = r.span(numbered, i, j)
            assert raw[a:b].decode("utf-8") == "\r\n".join(lines[i:j])
