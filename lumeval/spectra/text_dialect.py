"""Stage 1 of the text reader: cells, numbers and the dialect of a delimited text file.

The dialect is the delimiter (tab, semicolon, comma or runs of white space), the decimal mark
and which lines are comments; the rules are those of :mod:`lumeval.spectra.text` (module
docstring) and ``docs/input-files.md``. Everything here works on the file's non-blank lines as
``(1-based line number, stripped text)`` tuples (:func:`_content_lines`).
"""

from __future__ import annotations

import csv
import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..errors import InputError

# [0-9], not \d: digits of other scripts (Arabic-Indic, full-width...) are refused, not read
_NUMBER = re.compile(r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$")
_MISSING = {"", "nan", "na", "n/a", "n.a.", "-", "--", "null", "none", "?"}
_INFINITE = {"inf", "+inf", "-inf", "infinity", "+infinity", "-infinity"}
_COMMENT_PREFIXES = ("#", "%", "//")
_DELIMITERS = ("\t", ";", ",", None)  # None = runs of white space
_DELIM_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", None: "white space"}
_LINE_SPLIT = re.compile(r"\r\n|\r|\n")
_KEY_VALUE_SIGN = re.compile(r"[:=]")


def split_key_value(s: str) -> tuple[str, str] | None:
    """``(key, value)`` of a "key: value" or "key = value" line, both stripped, the key 1 to 80
    characters long; None when the line has no ":" or "=" or the key does not fit.

    Done with ``str`` methods rather than one regular expression: Python's backtracking ``re``
    took time quadratic in the length of a white-space run (a 200 kB metadata line: minutes)."""
    m = _KEY_VALUE_SIGN.search(s)
    if m is None:
        return None
    key = s[: m.start()].strip()
    if not 1 <= len(key) <= 80:
        return None
    return key, s[m.end():].strip()

_ANY_SPACE = re.compile(r"\s")


def _split(line: str, delim: str | None) -> list[str]:
    """Split one line into stripped cells, dropping trailing empty cells."""
    if delim is None:
        cells = line.split()
    elif '"' not in line:
        # Without a quote character the csv module splits exactly at the delimiter (lines hold
        # no CR/LF here): plain str.split gives the same cells, much faster. str.strip and the
        # regex class \s use the same whitespace test, so a line without \s needs no stripping.
        cells = line.split(delim)
        if len(cells) == 1:
            cells = [cells[0].strip()]
        elif _ANY_SPACE.search(line):
            cells = [c.strip() for c in cells]
    else:
        try:
            cells = next(csv.reader([line], delimiter=delim, quotechar='"', skipinitialspace=True))
        except (csv.Error, StopIteration):
            cells = line.split(delim)
        cells = [c.strip() for c in cells]
    while cells and cells[-1] == "":
        cells.pop()
    return cells


def _is_number(cell: str, decimal_comma: bool) -> bool:
    if decimal_comma and "," in cell:
        if "." in cell or cell.count(",") > 1:
            return False
        cell = cell.replace(",", ".")
    return bool(_NUMBER.match(cell))


_NUM_POINT = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"
_NUM_ANY = r"[+-]?(?:[0-9]+(?:[.,][0-9]*)?|[.,][0-9]+)(?:[eE][+-]?[0-9]+)?"
# Possessive repetitions (*+, ++, {n}+): a row is matched without a backtracking stack per cell
# (a 20,000-cell row would otherwise take megabytes); giving back a matched cell never helps,
# since a number cannot match the separator or the end.
_ROW = {
    False: re.compile(rf"(?:{_NUM_POINT})(?:\x1f(?:{_NUM_POINT}))*+\Z"),
    True: re.compile(rf"(?:{_NUM_ANY})(?:\x1f(?:{_NUM_ANY}))*+\Z"),
}


def _all_numbers(cells: list[str], decimal_comma: bool) -> bool:
    """True when every cell is a number (one regex per row; same rule as :func:`_is_number`)."""
    if not cells:
        return False
    joined = "\x1f".join(cells)
    if joined.count("\x1f") != len(cells) - 1:  # a cell holds the separator itself
        return all(_is_number(c, decimal_comma) for c in cells)
    return bool(_ROW[decimal_comma].match(joined))


#: A character outside these cannot be part of a number (per decimal-mark rule). Within them,
#: the number grammar of ``_NUMBER`` / ``_ROW`` is exactly the grammar numpy's str -> float
#: conversion accepts (sign, digits, one decimal mark, exponent; no spaces, underscores, inf or
#: nan), so a row made only of these characters is all numbers iff its conversion succeeds.
_NUMERIC_CHARS_ONLY = {
    False: re.compile(r"[^0-9.eE+\-\x1f]"),
    True: re.compile(r"[^0-9.,eE+\-\x1f]"),
}


class _RowMemo:
    """Per-file memo of line splits and row checks, so that choosing the delimiter, finding the
    data block and converting the numbers split and check each line once. Same rules as
    :func:`_split`, :func:`_all_numbers` and the conversion in :func:`parse_text`."""

    def __init__(self, cache: bool = True) -> None:
        self._cells: dict[tuple[str, str | None], list[str]] = {}
        self._numeric: dict[tuple[int, bool], bool] = {}
        self._values: dict[tuple[int, bool], np.ndarray] = {}
        #: False for large files: nothing is kept (memory stays proportional to the file)
        self.cache = cache

    def split(self, line: str, delim: str | None) -> list[str]:
        if not self.cache:
            return _split(line, delim)
        key = (line, delim)
        cells = self._cells.get(key)
        if cells is None:
            cells = self._cells[key] = _split(line, delim)
        return cells

    def all_numbers(self, cells: list[str], decimal_comma: bool) -> bool:
        """:func:`_all_numbers` of ``cells`` (a list returned by :meth:`split`)."""
        if not self.cache:
            return _all_numbers(cells, decimal_comma)
        key = (id(cells), decimal_comma)
        ok = self._numeric.get(key)
        if ok is not None:
            return ok
        if not cells:
            ok = False
        else:
            joined = "\x1f".join(cells)
            if joined.count("\x1f") != len(cells) - 1 or _NUMERIC_CHARS_ONLY[decimal_comma].search(joined):
                ok = _all_numbers(cells, decimal_comma)
            else:
                try:
                    vals = np.array(
                        (joined.replace(",", ".") if decimal_comma else joined).split("\x1f"), dtype=float
                    )
                except ValueError:
                    ok = False
                else:
                    ok = True
                    self._values[key] = vals
        self._numeric[key] = ok
        return ok

    def values(self, cells: list[str], decimal_comma: bool) -> np.ndarray:
        """The numbers of a row for which :meth:`all_numbers` is True (as the reader converts
        them: decimal commas read as points)."""
        vals = self._values.get((id(cells), decimal_comma)) if self.cache else None
        if vals is None:
            vals = np.array([c.replace(",", ".") for c in cells] if decimal_comma else cells, dtype=float)
        return vals


def _to_float(cell: str, decimal_comma: bool) -> float:
    if decimal_comma:
        cell = cell.replace(",", ".")
    return float(cell)


def _content_lines(text: str) -> list[tuple[int, str]]:
    """(1-based line number, text) of every non-blank line."""
    # Same breaks as _LINE_SPLIT (CRLF, then lone CR, then LF), by plain string operations.
    parts = (text.replace("\r\n", "\n").replace("\r", "\n") if "\r" in text else text).split("\n")
    if "\ufeff" not in text:  # the same lines without the second strip (one comprehension)
        return [(i, s) for i, s in enumerate(map(str.strip, parts), start=1) if s]
    out = []
    for i, line in enumerate(parts, start=1):
        s = line.strip().strip("\ufeff")
        if s:
            out.append((i, s))
    return out


def _no_comment_mark(text: str, lines: list) -> bool:
    """True when ``text`` has no comment mark at all (searched in the text when its lines are
    short: quicker than looking at each line; long lines are looked at one by one)."""
    if len(text) > 256 * len(lines):
        return not any(s.startswith(_COMMENT_PREFIXES) for _, s in lines)
    return "#" not in text and "%" not in text and "//" not in text


def comment_lines(text: str, lines: list[tuple[int, str]]) -> list[tuple[int, str]]:
    """The comment lines among ``lines`` (the non-blank lines of ``text``)."""
    if _no_comment_mark(text, lines):
        return []
    return [t for t in lines if t[1].startswith(_COMMENT_PREFIXES)]


def non_comment_lines(text: str, lines: list[tuple[int, str]]) -> list[tuple[int, str]]:
    """The lines of ``lines`` that are not comments (the same tuples, not copies)."""
    if _no_comment_mark(text, lines):
        return lines
    return [t for t in lines if not t[1].startswith(_COMMENT_PREFIXES)]


def _is_comment(s: str) -> bool:
    return s.startswith(_COMMENT_PREFIXES)


def _could_be_row(c0: str) -> bool:
    """The first character of a line that could be a row of numbers (a digit, a sign or a point)."""
    return c0.isdigit() or (c0 != "" and c0 in "+-.")


def _choose_delimiter(lines: list[tuple[int, str]], memo: _RowMemo | None = None) -> tuple[str | None, int]:
    memo = memo if memo is not None else _RowMemo()
    best, best_score = None, -1
    # the lines that could be rows of numbers (the others score for no delimiter)
    rows = [s for _, s in lines if not _is_comment(s) and _could_be_row(s.lstrip('"')[:1])]
    for d in _DELIMITERS:
        score = 0
        for s in rows:
            # a line without the delimiter is one cell (a line is stripped: without inner white
            # space it is one cell for the white-space delimiter): it cannot score
            if (d not in s) if d is not None else not _ANY_SPACE.search(s):
                continue
            cells = memo.split(s, d)
            if len(cells) >= 2 and memo.all_numbers(cells, d != ","):
                score += 1
        if score > best_score:
            best, best_score = d, score
    return best, best_score


def _numeric_lines(non_comment: list, delim: str | None):
    """The lines of ``non_comment`` that are rows of two or more numbers with either decimal
    mark (what the decimal-mark scan of :func:`parse_text` looks at), found by one regex per
    line instead of a split and a conversion: the large-file path scans every line this way."""
    sep = r"\s+" if delim is None else r"\s*" + re.escape(delim) + r"\s*"
    trail = "" if delim is None else r"(?:\s*" + re.escape(delim) + r")*"
    match = re.compile(rf"{_NUM_ANY}(?:{sep}{_NUM_ANY})++{trail}").fullmatch
    for ln, s in non_comment:
        if match(s):
            yield ln, s

def _foreign_digit(text: str) -> str | None:
    """The first decimal digit in ``text`` that is not one of ASCII 0-9, or None."""
    for ch in text:
        if ch.isdecimal() and not ("0" <= ch <= "9"):
            return ch
    return None


def _describe_cell(cell: str) -> str:
    c = cell.strip().lower()
    ch = _foreign_digit(cell)
    if ch is not None:
        import unicodedata

        return (f"{cell[:40]!r}, which uses the digit {ch!r} ({unicodedata.name(ch, 'a non-ASCII digit')}; "
                "only the digits 0-9 are read)")
    if c == "":
        return "an empty cell"
    if c in _MISSING:
        return f"a missing value ({cell!r})"
    if c in _INFINITE:
        return f"an infinite value ({cell!r})"
    return f"{cell!r}, which is not a number"

@dataclass(frozen=True)
class Dialect:
    """How the lines of one file are read: ``delim`` (None = runs of white space) and the
    decimal mark; ``non_comment`` are the file's non-blank lines that are not comments."""

    delim: str | None
    decimal_comma: bool
    non_comment: list


def _no_numbers(lines: Sequence[tuple[int, str]], file: str) -> InputError:
    """The error for a file in which no delimiter gives a row of numbers."""
    for ln, s in lines:
        ch = None if _is_comment(s) else _foreign_digit(s)
        if ch is not None:
            import unicodedata

            return InputError(
                f"numbers written with the digit {ch!r} ({unicodedata.name(ch, 'a non-ASCII digit')}): "
                "only the digits 0-9 are read",
                file=file, line=ln, fix="export the numbers with the digits 0-9",
            )
    first = next((ln for ln, s in lines if not _is_comment(s)), lines[0][0])
    return InputError(
        "no rows of numbers (wavelength, value) found",
        file=file,
        line=first,
        fix="give one row per wavelength: wavelength then value(s), separated by comma, "
        "semicolon, tab or spaces",
    )


def scan_decimal_marks(rows, delim: str | None, memo: _RowMemo) -> tuple[int | None, int | None]:
    """(line of the first comma, line of the first point) among ``rows`` that read as two or
    more numbers with either decimal mark (stops as soon as both are seen)."""
    saw_comma = saw_point = None
    for ln, s in rows:
        cells = memo.split(s, delim)
        if not (len(cells) >= 2 and memo.all_numbers(cells, True)):
            continue
        joined = "".join(cells)
        if saw_comma is None and "," in joined:
            saw_comma = ln
        if saw_point is None and "." in joined:
            saw_point = ln
        if saw_comma is not None and saw_point is not None:
            break
    return saw_comma, saw_point


def mixed_marks_error(saw_comma: int, saw_point: int, file: str) -> InputError:
    return InputError(
        "the data mix decimal points and decimal commas "
        f"(a comma on line {saw_comma}, a point on line {saw_point})",
        file=file,
        line=max(saw_comma, saw_point),
        fix="use one decimal mark throughout, with no thousands separators",
    )


def choose_dialect(lines: list[tuple[int, str]], file: str, memo: _RowMemo, sample=None) -> Dialect:
    """The dialect of a file's non-blank ``lines``: the delimiter under which the most lines
    read as rows of two or more numbers, then the decimal mark (comma when the delimiter is not
    a comma and no data cell uses a point).

    ``sample`` (large files): a function giving the lines the delimiter is first chosen on;
    every line is then scanned for decimal marks by one regex per line.

    Raises
    ------
    InputError
        No rows of numbers (naming a foreign digit when that is why), or mixed decimal marks.
    """
    delim, score = _choose_delimiter(sample(lines) if sample is not None else lines, memo)
    if sample is not None and score <= 0:
        delim, score = _choose_delimiter(lines, memo)
    if score <= 0:
        raise _no_numbers(lines, file)
    non_comment = [t for t in lines if not _is_comment(t[1])]  # the same tuples, not copies
    decimal_comma = False
    if delim != ",":
        scanned = _numeric_lines(non_comment, delim) if sample is not None else non_comment
        saw_comma, saw_point = scan_decimal_marks(scanned, delim, memo)
        if saw_comma is not None and saw_point is not None:
            raise mixed_marks_error(saw_comma, saw_point, file)
        decimal_comma = saw_comma is not None
    return Dialect(delim, decimal_comma, non_comment)
