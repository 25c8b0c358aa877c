"""Stages 2 and 5 of the text reader: the data block (where the rows of numbers start and
end) and the numbers in it.

A data block starts at the first line that reads as two or more numbers under the file's
dialect; it runs to the first line that is not a row (trailing text is kept as metadata, and a
row after such text is an error). Rows are converted to floats here, with every error naming
the line and the column (:func:`convert_rows`).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .text_dialect import (
    _NUM_ANY,
    _NUM_POINT,
    Dialect,
    _describe_cell,
    _foreign_digit,
    _is_comment,
    _is_number,
    _RowMemo,
    _split,
    _to_float,
)


@dataclass
class Block:
    """The data block of a file.

    ``start`` is the index in ``Dialect.non_comment`` of the first data row (line
    ``first_ln``, ``ncols`` cells); ``bulk`` (m, ncols) holds rows already converted in one
    call, with their line numbers ``bulk_ln``; ``rows`` the other rows as (line, cells), in
    order after the bulk; ``footer`` the text lines after the data.
    """

    start: int
    first_ln: int
    ncols: int
    rows: list = field(default_factory=list)
    footer: list = field(default_factory=list)
    bulk: np.ndarray | None = None
    bulk_ln: np.ndarray | None = None


def _bulk_rows(non_comment: list, start: int, delim: str | None, ncols: int, decimal_comma: bool):
    """(values (m, ncols), line numbers (m,), index of the first line not taken) for the longest
    run of clean data rows from ``non_comment[start]``.

    A clean row is ``ncols`` numbers in the reader's number grammar separated by the delimiter
    (no quotes): exactly the rows the line-by-line path would accept as data, so taking them
    here changes no result and no message; the first line that is not one is left to that path
    (footer, bad cell, wrong cell count). The numbers are converted by numpy in one call.
    """
    num = _NUM_ANY if decimal_comma else _NUM_POINT
    sep = r"\s+" if delim is None else r"\s*" + re.escape(delim) + r"\s*"
    trail = "" if delim is None else r"(?:\s*" + re.escape(delim) + r")*"
    rx = re.compile(rf"{num}(?:{sep}{num}){{{ncols - 1}}}+{trail}")
    match = rx.fullmatch
    end = start
    n = len(non_comment)
    while end < n and match(non_comment[end][1]):
        end += 1
    if end - start < 2:
        return None, None, start
    text = "\n".join(s for _, s in non_comment[start:end])
    if delim is not None:
        text = text.replace(delim, " ")
    if decimal_comma:
        text = text.replace(",", ".")
    # numpy's C text parser (whitespace-separated; newlines count as whitespace); the regex above
    # has checked every cell, and the count is checked below
    values = np.fromstring(text, dtype=float, sep=" ")
    del text
    if values.size != (end - start) * ncols:  # pragma: no cover - the regex guarantees the count
        return None, None, start
    lns = np.fromiter((ln for ln, _ in non_comment[start:end]), dtype=np.int64, count=end - start)
    return values.reshape(end - start, ncols), lns, end


def find_start(d: Dialect, memo: _RowMemo, file: str) -> Block:
    """The first data row (the first line of two or more numbers) and its cell count."""
    start = None
    for i, (_, s) in enumerate(d.non_comment):
        cells = memo.split(s, d.delim)
        if len(cells) >= 2 and memo.all_numbers(cells, d.decimal_comma):
            start = i
            break
    if start is None:  # pragma: no cover - the delimiter choice guarantees a numeric row
        raise InputError("no rows of numbers (wavelength, value) found", file=file, fix="check the file's layout")
    first_ln, first_s = d.non_comment[start]
    return Block(start, first_ln, len(memo.split(first_s, d.delim)))


def take_rows(d: Dialect, b: Block, memo: _RowMemo, rest: int, file: str) -> None:
    """Go through the lines from ``non_comment[rest]`` on, one by one: rows go to ``b.rows``
    (checked cell by cell later), trailing text to ``b.footer``.

    Raises
    ------
    InputError
        A wavelength without a value, a row after trailing text, a wavelength written with
        foreign digits.
    """
    delim, decimal_comma, ncols = d.delim, d.decimal_comma, b.ncols
    rows, footer = b.rows, b.footer
    for ln, s in d.non_comment[rest:]:
        cells = memo.split(s, delim)
        is_row = len(cells) >= 2 and _is_number(cells[0], decimal_comma) and not footer
        if not is_row and not footer and len(cells) >= 1 and _is_number(cells[0], decimal_comma):
            # a wavelength with no value
            raise InputError(
                f"wavelength {cells[0]} has no value (the data have {ncols - 1} value column(s))",
                file=file,
                line=ln,
                fix="fill in the missing value or delete the row",
            )
        if is_row:
            rows.append((ln, cells))
        else:
            if cells and not _is_comment(s) and _foreign_digit(cells[0]) is not None and all(
                ch.isdecimal() or ch in ".,+-eE" for ch in cells[0]
            ):
                raise InputError(
                    f"this row's wavelength is {_describe_cell(cells[0])}",
                    file=file, line=ln, fix="export the numbers with the digits 0-9",
                )
            if footer or not _is_comment(s):
                if cells and _is_number(cells[0], decimal_comma) and footer:
                    raise InputError(
                        f"the data are interrupted by text on line {footer[0][0]} ({footer[0][1][:40]!r})",
                        file=file,
                        line=footer[0][0],
                        fix="delete that line or turn it into a comment starting with '#'",
                    )
                footer.append((ln, s))


def convert_rows(d: Dialect, b: Block, memo: _RowMemo, names_hdr: list[str] | None,
                 file: str) -> tuple[np.ndarray, np.ndarray]:
    """(data (rows, ncols), line number of each row): the bulk rows and every other row,
    converted cell by cell.

    Raises
    ------
    InputError
        A row with another number of cells than the first, a cell that is not a finite number
        (named by its column header when there is one), a number too large for a float.
    """
    delim, decimal_comma, ncols = d.delim, d.decimal_comma, b.ncols
    rows, bulk = b.rows, b.bulk
    m = 0 if bulk is None else bulk.shape[0]
    n_rows = m + len(rows)
    if bulk is not None and not rows:  # the bulk is every row: used as it is (no copy)
        data = bulk
        b.bulk = None
    else:
        data = np.empty((n_rows, ncols))
        if bulk is not None:
            data[:m] = bulk
            b.bulk = None
        del bulk
    row_ln = np.concatenate([b.bulk_ln if b.bulk_ln is not None else np.empty(0, dtype=np.int64),
                             np.array([ln for ln, _ in rows], dtype=np.int64)])

    def cell_text(r: int, c: int) -> str:
        if r < m:
            return _split(d.non_comment[b.start + r][1], delim)[c]
        return rows[r - m][1][c]

    for r, (ln, cells) in enumerate(rows, start=m):
        if len(cells) != ncols:
            what = "fewer" if len(cells) < ncols else "more"
            raise InputError(
                f"this row has {len(cells)} cells, {what} than the {ncols} of the first data row "
                f"(line {b.first_ln})",
                file=file,
                line=ln,
                fix="give every row a wavelength and one value per spectrum column; fill in empty cells",
            )
        if memo.all_numbers(cells, decimal_comma):
            data[r] = memo.values(cells, decimal_comma)
            continue
        for c, cell in enumerate(cells):
            if not _is_number(cell, decimal_comma):
                col = (
                    f" in column {names_hdr[c]!r}"
                    if names_hdr and names_hdr[c]
                    else f" in column {c + 1}"
                )
                raise InputError(
                    f"{_describe_cell(cell)}{col}",
                    file=file,
                    line=ln,
                    fix="every cell must be a finite number: fill in or correct it, or delete the row",
                )
            data[r, c] = _to_float(cell, decimal_comma)
    if not np.all(np.isfinite(data)):
        r, c = np.argwhere(~np.isfinite(data))[0]
        raise InputError(
            f"the number {cell_text(int(r), int(c))[:40]!r} in column {c + 1} is too large to represent",
            file=file,
            line=int(row_ln[r]),
            fix="correct the value",
        )
    return data, row_ln
