"""Wide text files read in column blocks: any size, bounded memory (for lots).

A wide CSV holds one spectrum per column; 20,000 spectra at 1 nm make a 113 MB file. A lot
reads such a file here instead of whole (:func:`read_column_blocks`):

1. **One pass over the lines**, one line in memory at a time: the head (metadata, header and
   the first rows) and the last lines are kept as text; every other line must be a clean row
   (the fast path's rule, :mod:`lumeval.spectra.text_fast`: numbers only, the data's cell
   count) and is converted by numpy. The dialect, the data block, the header, the metadata,
   the wavelength axis and the names are then found by the same stages, on the same sample
   of lines, as reading the file whole (:func:`lumeval.spectra.text.parse_text`), so every
   spectrum, name, note and message is the same.
2. **The spectra, in blocks of columns** (``block_cols`` value columns each). When the numbers
   fit in ``keep_values`` floats they are kept from the pass; otherwise the pass keeps only the
   wavelengths and where each row's blocks start in the file, and each block is converted
   again from those bytes: memory stays about one block whatever the file's size.

A file that is not clean in this sense (quoted cells, a bad cell in the middle, UTF-16, text
between the rows...) raises :class:`NotStreamable`; a lot then reads it whole if it is within
the single-file limit, or names the first line that is not a clean row.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .model import SpectrumSet
from .text_dialect import _COMMENT_PREFIXES, Dialect, _choose_delimiter, _content_lines, _RowMemo
from .text_fast import HEAD_ROWS, TAIL_LINES, _looks_numeric, head_tail, sample_plan
from .text_header import Header

#: Value columns per block.
BLOCK_COLUMNS = 2048
#: Numbers kept from the pass (256 MB of float64); beyond, blocks are converted again from the file.
KEEP_VALUES = 32 * 1024 * 1024


#: Why a large file of only a few lines is not read in column blocks (shown to the user when the
#: file is over the single-file limit: "the file is short: read it whole" spoke of the reader's
#: own plan; found by a review).
_FEW_LINES = "it has only a few lines, where a text spectrum file has one line per wavelength"


class NotStreamable(Exception):
    """The file cannot be read in column blocks (``reason``; ``line``: the line at fault)."""

    def __init__(self, reason: str, line: int | None = None) -> None:
        super().__init__(reason)
        self.reason = reason
        self.line = line


@dataclass
class ColumnPlan:
    """What the pass over a wide file found (see the module docstring)."""

    file: str
    stem: str
    dialect: Dialect
    header: Header
    meta: dict
    wl: np.ndarray
    order: np.ndarray
    wl_unit: str | None
    notes: list
    ncols: int
    values: np.ndarray | None
    row_off: np.ndarray
    row_len: np.ndarray

    @property
    def n_spectra(self) -> int:
        return self.ncols - 1


def _stripped(line: bytes) -> bytes:
    return line.strip(b" \t\r\n\x0b\x0c\x1c\x1d\x1e\x1f")


def _is_comment_b(s: bytes) -> bool:
    return s.startswith((b"#", b"%", b"//"))


class _Pass:
    """The one pass over the lines of a file (binary), from :func:`plan_columns`."""

    def __init__(self, fh, file: str, block_cols: int, keep_values: int) -> None:
        self.fh, self.file, self.block_cols, self.keep_values = fh, file, block_cols, keep_values
        self.head: list[tuple[int, bytes]] = []  # non-blank lines of the head, with comments
        self.head_pos: dict[int, tuple[int, int]] = {}  # line -> (offset, length) of its bytes
        self.comments: list[tuple[int, bytes]] = []  # comment lines after the head
        self.tail: deque = deque()  # last non-comment lines: (line, bytes, offset, parsed row or None)
        self.rows: list = []  # parsed rows that left the tail (the middle), in order
        self.middle_comma = self.middle_point = False
        self.kept = 0

    def lines(self):
        """(line number, stripped bytes, offset of the line) of every line (not blank)."""
        fh = self.fh
        head = fh.read(3)
        if head.startswith((b"\xff\xfe", b"\xfe\xff")):
            raise NotStreamable("the file is UTF-16")
        pos = 3 if head == b"\xef\xbb\xbf" else 0
        fh.seek(pos)
        for ln, line in enumerate(fh, start=1):
            body = line[:-1] if line.endswith(b"\n") else line
            if b"\r" in body[:-1]:
                raise NotStreamable("the file has line ends other than LF or CRLF", ln)
            s = _stripped(body)
            if s:
                yield ln, s, (pos, len(body))
            pos += len(line)


def _parse_row(s: bytes, delim: str | None, ncols: int) -> np.ndarray | None:
    """One clean row's numbers (decimal commas read as points), or None (see text_fast)."""
    from .text_fast import convert_block

    if delim is not None and s.count(delim.encode()) != ncols - 1:
        return None
    text = s.decode("ascii", errors="replace")
    dc = delim != "," and "," in text
    if dc and "." in text:
        return None
    out = convert_block(text, delim, dc, 1, ncols)
    return None if out is None else out[0]


def plan_columns(path: str | Path, *, file: str | None = None, block_cols: int = BLOCK_COLUMNS,
                 keep_values: int = KEEP_VALUES) -> ColumnPlan:
    """The pass over a wide text file (see the module docstring).

    Raises
    ------
    InputError
        What reading the whole file would raise (a file that is not regular, a wavelength
        unit it does not read, repeated wavelengths, a row after trailing text...).
    NotStreamable
        The file is not clean enough to be read in column blocks.
    """
    from .._paths import display_path
    from .text import with_regular_file

    shown = file if file is not None else display_path(path)
    return with_regular_file(path, lambda fh: _plan(fh, shown, block_cols, keep_values))


def _plan(fh, file: str, block_cols: int, keep_values: int) -> ColumnPlan:
    p = _Pass(fh, file, block_cols, keep_values)
    it = p.lines()
    # the head: every line up to the first one that looks like a number, plus HEAD_ROWS more
    n_nc, i0 = 0, None
    for ln, s, where in it:
        p.head.append((ln, s))
        p.head_pos[ln] = where
        if _is_comment_b(s):
            continue
        if i0 is None and _looks_numeric(s.decode("latin-1")):
            i0 = n_nc
        n_nc += 1
        if i0 is not None and n_nc >= i0 + HEAD_ROWS:
            break
    else:  # the end came first: too few lines, or none that looks like a row of numbers
        raise NotStreamable(_FEW_LINES if i0 is not None else "no line of it looks like a row of numbers")
    head_text = _decode_lines(p.head, file)
    head_nc = [t for t in head_text if not t[1].startswith(_COMMENT_PREFIXES)]
    ht = head_tail(head_nc + [(0, "")] * TAIL_LINES)  # the head that reading the whole file samples
    if ht is None or ht[0] != len(head_nc):
        raise NotStreamable("the head reads differently once decoded")
    delim, score = _choose_delimiter(head_nc, _RowMemo(cache=False))
    if score <= 0:
        raise NotStreamable("no rows of numbers at the start")
    memo = _RowMemo(cache=False)
    start = next((i for i, (_, t) in enumerate(head_nc)
                  if len(c := memo.split(t, delim)) >= 2 and memo.all_numbers(c, delim != ",")), None)
    if start is None:
        raise NotStreamable("no rows of numbers at the start")
    ncols = len(memo.split(head_nc[start][1], delim))
    head_rows = [_parse_row(t.encode("latin-1", errors="replace"), delim, ncols) for _, t in head_nc[start:]]
    return _finish(p, it, file, head_text, head_nc, delim, start, ncols, head_rows)


def _decode_lines(lines: list[tuple[int, bytes]], file: str) -> list[tuple[int, str]]:
    """The lines decoded as the whole file would be (UTF-8, else Windows-1252 / Latin-1: the
    rows between them are ASCII, which every one of these reads the same), with their numbers."""
    from .text import _decode

    text = _decode(b"\n".join(s for _, s in lines), file)
    parts = text.split("\n")
    if len(parts) != len(lines):
        raise NotStreamable("a line of the head could not be split")
    out = []
    for (ln, _), t in zip(lines, parts):
        got = _content_lines(t)
        if len(got) != 1:
            raise NotStreamable("a line of the head could not be split", ln)
        out.append((ln, got[0][1]))
    return out


def _finish(p: _Pass, it, file, head_text, head_nc, delim, start, ncols, head_rows) -> ColumnPlan:
    from .text import collect_metadata, find_header, take_rows, wavelength_axis
    from .text_rows import Block

    rows_ln: list[int] = [ln for ln, _ in head_nc[start:]]
    if any(r is None for r in head_rows):
        raise NotStreamable("a row of the head is not clean", rows_ln[[r is None for r in head_rows].index(True)])
    keep = len(rows_ln) * ncols <= p.keep_values
    wls: list[float] = [float(r[0]) for r in head_rows]  # the wavelengths, always kept
    rows: list = list(head_rows) if keep else []  # every row's numbers, while they fit
    where: list[tuple[int, int]] = [p.head_pos[ln] for ln in rows_ln]
    tail = p.tail
    for ln, s, pos in it:
        if _is_comment_b(s):
            p.comments.append((ln, s))
            continue
        tail.append((ln, s, pos, _parse_row(s, delim, ncols)))
        if len(tail) > TAIL_LINES:
            ln0, s0, pos0, row0 = tail.popleft()
            if row0 is None:
                raise NotStreamable("a line between the rows is not a clean row of numbers", ln0)
            p.middle_comma |= delim != "," and b"," in s0
            p.middle_point |= b"." in s0
            rows_ln.append(ln0)
            where.append(pos0)
            wls.append(float(row0[0]))
            if keep and len(rows_ln) * ncols > p.keep_values:  # too many numbers: keep wavelengths only
                keep = False
                rows = []
            if keep:
                rows.append(row0)
    if len(rows_ln) == len(head_rows):  # no line between the head and the last lines
        raise NotStreamable(_FEW_LINES)
    # decoded together, as the whole file would be (its rows are ASCII)
    all_text = _decode_lines(p.head + p.comments + [(ln, s) for ln, s, _, _ in tail], file)
    if all_text[: len(head_text)] != head_text:
        raise NotStreamable("the head reads differently with the rest of the file")
    tail_text = all_text[len(head_text) + len(p.comments):]
    middle_comments = all_text[len(head_text): len(head_text) + len(p.comments)]
    plan = sample_plan(head_nc, tail_text, p.middle_comma, p.middle_point, True, _RowMemo(cache=False))
    if plan is None or plan[0] != delim or plan[2] != start or plan[3] != ncols:
        raise NotStreamable("the sample of lines reads differently")
    _, decimal_comma, _, _, end = plan
    for ln, _s, pos, row in list(tail)[:end]:  # the tail's rows
        if row is None:
            raise NotStreamable("a line between the rows is not a clean row of numbers", ln)
        rows_ln.append(ln)
        where.append(pos)
        wls.append(float(row[0]))
        if keep:
            rows.append(row)
    # the same stages as reading the whole file, on the lines around the data
    nc_lines = head_nc + tail_text
    d = Dialect(delim, decimal_comma, nc_lines)
    block = Block(start, head_nc[start][0], ncols)
    memo = _RowMemo(cache=False)
    take_rows(d, block, memo, len(head_nc) + end, file)
    if block.rows:  # a row after the block that is not clean: reading the whole file decides
        raise NotStreamable("a row at the end is not a clean row of numbers", block.rows[0][0])
    h = find_header(head_nc[:start], delim, decimal_comma, ncols, file)
    comments = [t for t in head_text + middle_comments + tail_text if t[1].startswith(_COMMENT_PREFIXES)]
    comments.sort(key=lambda t: t[0])  # in the order of the file
    meta = collect_metadata(comments, h.before, block.footer, delim)
    wl_col = np.array(wls)
    row_ln = np.array(rows_ln, dtype=np.int64)
    # the axis stage on (wavelength, row index): its order says how to sort every block
    data = np.column_stack([wl_col, np.arange(len(rows_ln), dtype=float)])
    wl, data, wl_unit, notes = wavelength_axis(data, row_ln, h, meta, file)
    order = data[:, 1].astype(np.int64)
    values = np.vstack(rows) if keep else None
    del rows
    return ColumnPlan(file, Path(file).stem, d, h, meta, wl, order, wl_unit, notes, ncols, values,
                      np.array([w[0] for w in where], dtype=np.int64), np.array([w[1] for w in where], dtype=np.int64))


def column_blocks(path: str | Path, plan: ColumnPlan, block_cols: int = BLOCK_COLUMNS) -> Iterator[SpectrumSet]:
    """The spectra of ``plan`` in blocks of at most ``block_cols`` value columns, in order.
    Together they equal reading the whole file (values, names, sources, notes, metadata)."""
    from .text import name_spectra, with_regular_file

    n = plan.n_spectra
    m = plan.wl.size
    for c0 in range(0, n, block_cols):
        c1 = min(n, c0 + block_cols)
        if plan.values is not None:
            vals = plan.values[:, 1 + c0: 1 + c1]
        else:  # convert the block again from the file, one row at a time
            vals = with_regular_file(path, lambda fh, a=c0, b=c1: _reread(fh, plan, a, b))
        data = np.empty((m, 1 + c1 - c0))
        data[:, 0] = plan.wl
        data[:, 1:] = vals[plan.order]
        yield name_spectra(plan.wl, data, plan.header, plan.meta, plan.dialect, plan.wl_unit, plan.notes,
                           plan.file, plan.stem, first_column=c0, n_total=n)


def _reread(fh, plan: ColumnPlan, c0: int, c1: int) -> np.ndarray:
    from ..errors import InputError

    out = np.empty((plan.row_off.size, c1 - c0))
    for r, (off, size) in enumerate(zip(plan.row_off, plan.row_len)):
        fh.seek(int(off))
        row = _parse_row(_stripped(fh.read(int(size))), plan.dialect.delim, plan.ncols)
        if row is None:
            raise InputError("changed while it was being read", file=plan.file, fix="read it again")
        out[r] = row[1 + c0: 1 + c1]
    return out


def read_column_blocks(path: str | Path, *, file: str | None = None, block_cols: int = BLOCK_COLUMNS,
                       keep_values: int = KEEP_VALUES) -> Iterator[SpectrumSet]:
    """Read a wide text file in blocks of ``block_cols`` spectra (raw, not prepared): the pass
    (:func:`plan_columns`, which raises every error before any block is given), then the
    blocks (:func:`column_blocks`)."""
    plan = plan_columns(path, file=file, block_cols=block_cols, keep_values=keep_values)
    yield from column_blocks(path, plan, block_cols)
