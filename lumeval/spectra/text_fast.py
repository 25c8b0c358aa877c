"""The text reader's fast path: the dialect chosen on a sample of lines, the data block
converted by numpy in one call (a large block by Arrow's CSV reader where pyarrow is installed).

:func:`fast_block` either returns exactly what the line-by-line stages would find (dialect,
data block with its numbers, where the trailing lines start), or None, and the reader then takes
the line-by-line path, which gives the same result or the exact error message. It never raises.

Why the result is the same (each point is checked, or the fast path gives up):

* **Sample.** The delimiter is chosen (:func:`~lumeval.spectra.text_dialect._choose_delimiter`,
  the same function) on the lines up to the first line that looks like a number plus
  :data:`HEAD_ROWS` more, and the last :data:`TAIL_LINES` lines. Every other line (the
  "middle") must turn out to be a clean row of the data block (below); such a line counts one
  for the chosen delimiter and at most one for any other, so the choice on all lines is the
  choice on the sample.
* **Decimal mark.** When the delimiter is not a comma, the sample's number rows are scanned
  as the line-by-line path scans them and the middle's text is searched for ``,`` and ``.``:
  both marks anywhere sends the file to the line-by-line path (which refuses it with its
  message); otherwise a comma anywhere means decimal commas.
* **Block.** It starts at the first row of numbers (searched in the sample's head; the middle
  may not precede it) and ends after the last line of the tail that is a clean row (same
  regular expression as the large-file path); the lines after it are handled line by line
  (trailing text, a row after text, a wavelength without value: same state, same messages).
* **Numbers.** The block's text may hold only ASCII digits, ``. e E + -``, the delimiter,
  spaces and tabs (and ``,`` with decimal commas): within these characters numpy's text
  parser (``numpy.loadtxt``; Python's correctly rounded string-to-float conversion) accepts a
  cell exactly when it matches the reader's number grammar (sign, digits, one decimal mark,
  exponent), and gives the same float as ``float(cell)``. numpy checks that every line has the
  first line's cell count; a number too large for a float (``1e999``) sends the file to the
  line-by-line path, which names it.
* **Large blocks** (over :data:`ARROW_BYTES`) are converted by Arrow's CSV reader when pyarrow
  is installed (:func:`_arrow_convert`: ~4x numpy's speed on a 64 MB wide CSV, on Arrow's
  threads); it accepts exactly the cells numpy accepts within these characters, with the same
  floats, checks each row's cell count itself, and leaves the block to numpy on any doubt.
* **Bytes** (files over :data:`RAW_SPAN_BYTES`, :func:`span_convert`): when the block's lines
  are consecutive lines of the file and its bytes hold only digits, ``. e E + -``, line breaks
  (``\n``, or ``\r\n`` throughout), the delimiter (one character, not white space) and the
  decimal comma, those bytes are the joined block's text itself (with ``\r\n`` for ``\n``),
  and the block is converted from them (no join, no encoding, one translation for Arrow's
  pieces); anything else joins the lines as above.
"""

from __future__ import annotations

import io
import itertools
import re
from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar

import numpy as np

from .text_dialect import (
    _NUM_ANY,
    _NUM_POINT,
    Dialect,
    _choose_delimiter,
    _RowMemo,
    scan_decimal_marks,
)
from .text_rows import Block

#: Lines of the sample after the first line that looks like a number (header lines before it
#: are all in the sample).
HEAD_ROWS = 4
#: Last lines of the sample (where trailing text would be).
TAIL_LINES = 6

_ALLOWED = b"0123456789.eE+- \t\n"


def _looks_numeric(s: str) -> bool:
    """The filter of the delimiter choice: a line that could be a row of numbers."""
    c0 = s.lstrip('"')[:1]
    return c0.isdigit() or (c0 != "" and c0 in "+-.")


def clean_row_matcher(delim: str | None, ncols: int, decimal_comma: bool):
    """``fullmatch`` of a clean row: ``ncols`` numbers of the reader's grammar separated by
    ``delim`` (no quotes; the large-file path's rule)."""
    num = _NUM_ANY if decimal_comma else _NUM_POINT
    sep = r"\s+" if delim is None else r"\s*" + re.escape(delim) + r"\s*"
    trail = "" if delim is None else r"(?:\s*" + re.escape(delim) + r")*"
    return re.compile(rf"{num}(?:{sep}{num}){{{ncols - 1}}}+{trail}").fullmatch


def convert_block(text: str, delim: str | None, decimal_comma: bool, nrows: int, ncols: int) -> np.ndarray | None:
    """The (nrows, ncols) numbers of ``text`` (rows separated by newlines), converted by numpy
    in one call, or None when any cell, row or number is not clean (see the module docstring)."""
    if not text.isascii():
        return None
    raw = text.encode("ascii")
    allowed = _ALLOWED + (delim.encode("ascii") if delim is not None else b"") + (b"," if decimal_comma else b"")
    if raw.translate(None, allowed):
        return None
    if decimal_comma:
        raw = raw.replace(b",", b".")
    data = _arrow_convert(raw, delim, nrows, ncols) if len(raw) > ARROW_BYTES else None
    return _numpy_convert(raw, delim, nrows, ncols) if data is None else _checked(data, nrows, ncols)


def _numpy_convert(raw: bytes, delim: str | None, nrows: int, ncols: int) -> np.ndarray | None:
    """:func:`convert_block`'s numpy conversion of the block ``raw`` (decimal points only)."""
    k = _parse_processes(len(raw), nrows)
    if k > 1:
        return _checked(_forked_loadtxt(raw, delim, nrows, ncols, k), nrows, ncols)
    try:
        return _checked(_loadtxt(raw, delim), nrows, ncols)
    except ValueError:
        return None


def _checked(data: np.ndarray | None, nrows: int, ncols: int) -> np.ndarray | None:
    if data is None or data.shape != (nrows, ncols) or not np.isfinite(data).all():
        return None
    return data


#: Files of more bytes than this give the reader their bytes (:class:`RawLines`): a clean data
#: block is then converted from a view of them (:func:`span_convert`).
RAW_SPAN_BYTES = 2**20
#: The characters a block taken from the file's bytes may hold besides its delimiter (and the
#: decimal comma, and the carriage returns of Windows line ends): no space, tab or anything
#: outside ASCII.
_PURE = b"0123456789.eE+-\n"


class RawLines:
    """Where lines lie in the bytes a text was decoded from, for :func:`span_convert`.

    Valid for bytes decoded by an ASCII-compatible decoding (UTF-8, with or without its
    byte-order mark, cp1252, Latin-1: a byte ``\n`` is the character ``\n`` and ASCII bytes are
    their characters) whose carriage returns, if any, all stand before a line feed (Windows line
    ends, ``crlf``), so that the reader's line ``L`` (1-based, lines split at ``\r\n``, a lone
    ``\r`` or ``\n``: :func:`~lumeval.spectra.text_dialect._content_lines`) starts after the
    ``L - 1``-th byte ``\n``. :func:`raw_lines` gives None for any other bytes."""

    def __init__(self, raw: bytes, crlf: bool = False) -> None:
        self.raw = raw
        self.n = raw.count(b"\n") + 1
        self.crlf = crlf

    def start(self, ln: int) -> int:
        """Offset of line ``ln``'s first byte (searched from the nearer end of the bytes)."""
        raw, pos = self.raw, 0
        if ln - 1 <= self.n - ln:
            for _ in range(ln - 1):
                pos = raw.index(b"\n", pos) + 1
            return pos
        pos = len(raw)
        for _ in range(self.n - ln + 1):
            pos = raw.rindex(b"\n", 0, pos)
        return pos + 1

    def span(self, lines: list, i: int, j: int) -> tuple[int, int] | None:
        """(start, end) offsets of ``lines[i:j]`` ((line number, text) tuples) when they are
        consecutive lines of the file (no blank or comment line among them), else None."""
        first, last = lines[i][0], lines[j - 1][0]
        if last - first != j - i - 1:
            return None
        end = self.start(last + 1) - 1 if last < self.n else len(self.raw)
        if self.crlf and self.raw[end - 1: end] == b"\r":  # the last line's end, without its \r
            end -= 1
        return self.start(first), end


def raw_lines(raw: bytes) -> RawLines | None:
    """:class:`RawLines` of a file's bytes when they are large enough to be worth it
    (:data:`RAW_SPAN_BYTES`) and valid for it (no UTF-16 byte-order mark; no carriage return but
    in Windows line ends)."""
    if len(raw) <= RAW_SPAN_BYTES or raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        return None
    crlf = b"\r" in raw
    if crlf and raw.count(b"\r") != raw.count(b"\r\n"):  # a lone \r is a line break of its own
        return None
    return RawLines(raw, crlf)


def span_convert(raw: bytes, lo: int, hi: int, delim: str | None, decimal_comma: bool, nrows: int,
                 ncols: int, crlf: bool = False) -> tuple[bool, np.ndarray | None]:
    """(taken, numbers) of the block ``raw[lo:hi]``, whose lines are the block's ``nrows`` lines.

    ``taken`` is False when the bytes hold anything but :data:`_PURE`, the delimiter and the
    decimal comma: the caller then converts the joined lines (:func:`convert_block`). Otherwise
    the bytes *are* the block's text (``"\n".join`` of its stripped lines, in ASCII: no white
    space to strip, line breaks where the lines end), and ``numbers`` is what
    :func:`convert_block` gives for that text, computed without copying it three times: one
    translation of the file's bytes (delimiter to line break, decimal comma to point, every
    other character to NUL: a NUL in the span is anything impure) whose pieces Arrow reads as
    views (:func:`_arrow_convert`), the same pieces as the joined text gives.

    ``crlf``: the file's lines end with ``\r\n`` (:class:`RawLines`): the span's carriage returns
    are kept (Arrow reads ``\r\n`` as one line break, so the cells are the same) and taken out
    for numpy."""
    if delim is None or delim.isspace() or not delim.isascii() or len(delim) != 1 or delim.encode() in _PURE:
        return False, None
    pure = _PURE + (b"\r" if crlf else b"")
    allowed = pure + delim.encode() + (b"," if decimal_comma else b"")
    if hi - lo > ARROW_BYTES:  # Arrow's pieces: views of the translated bytes
        if raw[lo: min(hi, lo + 2**16)].translate(None, allowed):  # a cheap look before the whole file is translated
            return False, None
        table = bytearray(256)  # zeros: every other byte becomes a NUL
        for c in pure:
            table[c] = c
        table[ord(delim)] = ord("\n")
        if decimal_comma:
            table[ord(",")] = ord(".")
        conv = raw.translate(bytes(table))
        if conv.find(b"\0", lo, hi) >= 0:
            return False, None
        data = _arrow_convert(raw, delim, nrows, ncols, lo, hi, conv)
        del conv
        if data is not None:
            return True, _checked(data, nrows, ncols)
    block = raw[lo:hi]
    if hi - lo <= ARROW_BYTES and block.translate(None, allowed):  # (a larger block: checked by the translation)
        return False, None
    block = block.replace(b"\r\n", b"\n") if crlf else block
    return True, _numpy_convert(block.replace(b",", b".") if decimal_comma else block, delim, nrows, ncols)


def _loadtxt(raw: bytes, delim: str | None) -> np.ndarray:
    return np.loadtxt(io.BytesIO(raw), delimiter=delim, dtype=float, comments=None, ndmin=2, quotechar=None)


#: Blocks of more bytes than this are converted by Arrow's CSV reader when pyarrow is installed
#: (:func:`_arrow_convert`; importing pyarrow costs ~0.1 s, which a small file does not repay).
ARROW_BYTES = 8 * 2**20
#: Rows of a block above which :func:`_arrow_convert` leaves it to numpy (it checks each row's
#: cell count in a Python loop).
ARROW_MAX_ROWS = 200_000
#: Bytes of text converted by one call of Arrow's reader (the temporaries of a call are a few
#: times this; a whole 64 MB block at once added ~200 MB to the peak memory of a read).
ARROW_PIECE_BYTES = 4 * 2**20


def _arrow_convert(raw: bytes, delim: str | None, nrows: int, ncols: int, lo: int = 0, hi: int | None = None,
                   conv: bytes | None = None) -> np.ndarray | None:
    """The (nrows, ncols) numbers of ``raw`` converted by Arrow's CSV reader (C++, on Arrow's
    threads), or None to leave the block to numpy: pyarrow not installed, a delimiter that is
    whitespace or none, a space or tab in the text, more than :data:`ARROW_MAX_ROWS` rows, a row
    with another cell count, or any cell Arrow does not convert.

    Every delimiter becomes a line break and the text is read as one column of float64 (a
    reader given 20,000 columns spends its time per column; one column of 8 million cells is
    converted at ~200 MB/s a thread, against numpy's ~45 MB/s). Each row's cell count is
    checked first (one ``bytes.count`` per row), so no cell can move to another row. Arrow
    converts with fast_float (correctly rounded), numpy with Python's correctly rounded
    conversion, so a cell both accept gives the same float; within the characters that reach
    here (digits, ``. e E + -``, the delimiter, line breaks) Arrow accepts exactly the cells
    numpy accepts (tests/test_spectra_text_dialects.py compares the two on well-formed and
    malformed cells), and any cell it refuses sends the block to numpy, which decides as before.

    The block is ``raw[lo:hi]`` (default: all of ``raw``). ``conv``: ``raw`` already translated
    as the pieces need it (the delimiter made a line break, decimal commas points, same length,
    :func:`span_convert`), so that a piece is a view of it instead of two copies of its bytes."""
    hi = len(raw) if hi is None else hi
    if delim is None or delim.isspace() or nrows > ARROW_MAX_ROWS:
        return None
    if conv is None and (raw.find(b" ", lo, hi) >= 0 or raw.find(b"\t", lo, hi) >= 0):
        return None
    try:
        import pyarrow as pa
        import pyarrow.csv as pcsv
    except ImportError:
        return None
    from .._workers import in_worker
    from .archive import float_values

    d = delim.encode("ascii")
    out = np.empty((nrows, ncols))
    flat = out.reshape(-1)  # a view: the pieces' values are written into ``out`` in order
    options = (pcsv.ReadOptions(column_names=["v"], use_threads=not in_worker()),
               pcsv.ParseOptions(quote_char=False, double_quote=False, escape_char=False, newlines_in_values=False,
                                 ignore_empty_lines=False),
               pcsv.ConvertOptions(column_types={"v": pa.float64()}, null_values=[], strings_can_be_null=False,
                                   quoted_strings_can_be_null=False))
    view = memoryview(conv) if conv is not None else None
    a, row, filled = lo, 0, 0
    while row < nrows:
        if a >= hi:  # fewer rows than counted
            return None
        # a piece of whole rows of about ARROW_PIECE_BYTES (bounded temporaries), each row's
        # cell count checked (the rows are separated by single line breaks)
        start, stop = a, min(hi, a + ARROW_PIECE_BYTES)
        while row < nrows and a < stop:
            b = raw.find(b"\n", a, hi)
            b = hi if b < 0 else b
            if raw.count(d, a, b) != ncols - 1:
                return None
            a, row = b + 1, row + 1
        piece = view[start: a - 1] if view is not None else raw[start: a - 1].replace(d, b"\n")
        try:
            table = pcsv.read_csv(pa.py_buffer(piece), *options, memory_pool=pa.system_memory_pool())
        except pa.ArrowException:  # ArrowInvalid: a cell Arrow does not convert
            return None
        col = table.column(0)
        if col.null_count or filled + len(col) != row * ncols:
            return None
        for chunk in col.chunks:
            flat[filled: filled + len(chunk)] = float_values(pa, chunk)
            filled += len(chunk)
    return out if a >= hi else None  # else: more rows than counted


#: Blocks of more bytes than this are converted by several processes (Linux; see
#: :func:`_forked_loadtxt`): numpy's text parser runs at ~40-60 MB/s on one core.
PARALLEL_BYTES = 8 * 2**20
#: Processes converting a large block (None: one per core; 1: this process only). Set for a
#: run with :func:`parse_processes`.
_PROCESSES: ContextVar[int | None] = ContextVar("lumeval_parse_processes", default=None)


@contextmanager
def parse_processes(n: int | None) -> Iterator[None]:
    """Within the block: large data blocks are converted by at most ``n`` processes (None:
    one per core, 1: this process only). ``lumeval lot --processes N`` sets it."""
    token = _PROCESSES.set(n)
    try:
        yield
    finally:
        _PROCESSES.reset(token)


def _other_threads() -> bool:
    """True while this process runs a thread besides the calling one."""
    import threading

    return threading.active_count() > 1


def _parse_processes(nbytes: int, nrows: int) -> int:
    """Processes converting a block of ``nbytes`` and ``nrows`` rows: 1 (this process) for a
    small block, outside Linux, in a worker, or while this process runs other threads (the
    threads of a worker pool started before the reading: a child forked while another thread
    holds a lock would find it held for good); else one per core, or as
    :func:`parse_processes` set."""
    if nbytes <= PARALLEL_BYTES or nrows < 2:
        return 1
    from .._workers import default_processes, fork_available, in_worker

    if not fork_available() or in_worker() or _other_threads():
        return 1
    n = _PROCESSES.get()
    return max(1, min(default_processes() if n is None else n, nrows))


def _forked_loadtxt(raw: bytes, delim: str | None, nrows: int, ncols: int, k: int) -> np.ndarray | None:
    """The (nrows, ncols) numbers of ``raw`` converted by ``k`` processes: the rows are cut at
    line breaks into ``k`` pieces; ``k - 1`` forked children each convert one (they share the
    text with this process, copy-on-write) and write its rows into an anonymous shared memory
    map, which becomes the result; this process converts the first piece meanwhile. Each
    piece is converted by the same numpy call as a whole block, so the numbers are the same.
    None when any piece cannot be converted (or has another cell count): the caller then
    takes the line-by-line path, which names the fault."""
    import mmap
    import os

    cuts = [0]
    for q in range(1, k):
        c = raw.find(b"\n", max(cuts[-1], len(raw) * q // k))
        if c < 0:
            break
        cuts.append(c + 1)
    cuts.append(len(raw))
    # (start, end, first row, rows) of each piece: the text holds no blank line (the lines
    # were joined with line breaks), so its rows are its line breaks plus one
    pieces, row = [], 0
    for a, b in itertools.pairwise(cuts):
        if b > a:
            rows = raw.count(b"\n", a, b) + (raw[b - 1: b] != b"\n")
            pieces.append((a, b, row, rows))
            row += rows
    if row != nrows:
        return None
    buf = mmap.mmap(-1, max(1, nrows * ncols * 8))
    out = np.frombuffer(buf, dtype=float, count=nrows * ncols).reshape(nrows, ncols)

    def fill(a: int, b: int, row: int, rows: int) -> bool:
        try:
            data = _loadtxt(raw[a:b], delim)
        except ValueError:
            return False
        if data.shape != (rows, ncols):
            return False
        out[row: row + rows] = data
        return True

    children: list[int] = []
    ok = True
    try:
        for a, b, row, rows in pieces[1:]:
            pid = os.fork()
            if pid == 0:  # the child: convert, write into the shared map, leave at once
                code = 1
                try:
                    code = 0 if fill(a, b, row, rows) else 1
                finally:
                    os._exit(code)
            children.append(pid)
        ok = fill(*pieces[0])
    finally:
        for pid in children:
            try:
                _, status = os.waitpid(pid, 0)
            except ChildProcessError:  # pragma: no cover - reaped elsewhere
                ok = False
                continue
            ok = ok and os.waitstatus_to_exitcode(status) == 0
    return out if ok else None


def sample_plan(head: list, tail: list, middle_comma: bool, middle_point: bool, has_middle: bool,
                memo: _RowMemo) -> tuple[str | None, bool, int, int, int] | None:
    """(delimiter, decimal comma, start, cell count, end) of a file from its sample: the
    ``head`` lines (up to the first line that looks like a number + :data:`HEAD_ROWS`), the
    ``tail`` lines (the last :data:`TAIL_LINES`) and what the lines in between hold (a
    ``,``, a ``.``; ``has_middle``: there are such lines, all of which must then be clean
    rows). ``start`` indexes ``head`` (``head + tail`` without a middle); ``end`` is the end of
    the block in ``tail`` (in ``head + tail`` without a middle). None: the line-by-line path
    must read the file."""
    sample = head + tail
    delim, score = _choose_delimiter(sample, memo)
    if score <= 0:
        return None
    decimal_comma = False
    if delim != ",":
        saw_comma, saw_point = scan_decimal_marks(sample, delim, memo)
        comma = saw_comma is not None or middle_comma
        if comma and (saw_point is not None or middle_point):
            return None
        decimal_comma = comma
    # the first row of numbers: in the head (a middle must be inside the block)
    search = head if has_middle else sample
    start = None
    for i, (_, s) in enumerate(search):
        cells = memo.split(s, delim)
        if len(cells) >= 2 and memo.all_numbers(cells, decimal_comma):
            start = i
            break
    if start is None:
        return None
    ncols = len(memo.split(search[start][1], delim))
    clean = clean_row_matcher(delim, ncols, decimal_comma)
    lines, lo = (tail, 0) if has_middle else (sample, start)
    end = len(lines)
    while end > lo and not clean(lines[end - 1][1]):
        end -= 1
    return delim, decimal_comma, start, ncols, end


def head_tail(non_comment: list) -> tuple[int, int] | None:
    """(end of the head sample, start of the tail sample) in ``non_comment``."""
    n = len(non_comment)
    i0 = next((i for i, (_, s) in enumerate(non_comment) if _looks_numeric(s)), None)
    if i0 is None:
        return None
    head_end = min(n, i0 + HEAD_ROWS)
    return head_end, max(head_end, n - TAIL_LINES)


def fast_block(non_comment: list, memo: _RowMemo, raw: RawLines | None = None) -> tuple[Dialect, Block, int] | None:
    """(dialect, data block with ``bulk`` filled, index in ``non_comment`` of the first line
    after the block) of a file, or None when the line-by-line path must read it.

    ``raw``: where the lines lie in the file's bytes (:func:`raw_lines`), so that a clean block
    is converted from them (:func:`span_convert`) and the lines in the middle of the sample are
    searched there, instead of joining the lines (same result)."""
    nc = non_comment
    ht = head_tail(nc)
    if ht is None:
        return None
    head_end, tail_start = ht
    has_middle = tail_start > head_end

    def middle() -> str:
        return "\n".join([s for _, s in nc[head_end:tail_start]])

    mid = raw.span(nc, head_end, tail_start) if raw is not None and has_middle else None
    middle_text = None
    if raw is not None and mid is not None:
        marks = raw.raw.find(b",", *mid) >= 0, raw.raw.find(b".", *mid) >= 0
    else:
        middle_text = middle()
        marks = "," in middle_text, "." in middle_text
    plan = sample_plan(nc[:head_end], nc[tail_start:], *marks, has_middle, memo)
    if plan is None:
        return None
    delim, decimal_comma, start, ncols, end = plan
    if has_middle:  # start < head_end <= tail_start <= end
        end += tail_start
    if end - start < 2:
        return None
    taken, data = False, None
    span = raw.span(nc, start, end) if raw is not None else None
    if raw is not None and span is not None:
        taken, data = span_convert(raw.raw, *span, delim, decimal_comma, end - start, ncols, raw.crlf)
    if not taken:
        if not has_middle:
            parts = [s for _, s in nc[start:end]]
        else:
            parts = [s for _, s in nc[start:head_end]] + [middle_text if middle_text is not None else middle()]
            parts += [s for _, s in nc[tail_start:end]]
        data = convert_block("\n".join(parts), delim, decimal_comma, end - start, ncols)
    if data is None:
        return None
    block = Block(start, nc[start][0], ncols)
    block.bulk = data
    if nc[end - 1][0] - nc[start][0] == end - start - 1:  # no blank or comment line in between
        block.bulk_ln = np.arange(nc[start][0], nc[end - 1][0] + 1, dtype=np.int64)
    else:
        block.bulk_ln = np.fromiter((ln for ln, _ in nc[start:end]), dtype=np.int64, count=end - start)
    return Dialect(delim, decimal_comma, nc), block, end
