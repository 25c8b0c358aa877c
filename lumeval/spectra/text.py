"""Read spectra from delimited text (CSV and its relatives).

The rules are documented for users in ``docs/input-files.md``; in short:

* **Encoding**: UTF-8 (with or without BOM), UTF-16 with BOM; anything else is read as
  Windows-1252 / Latin-1 (so a ``µ`` written by an old instrument survives).
* **Lines**: LF, CRLF or CR. Blank lines are ignored. Lines starting with ``#``, ``%`` or
  ``//`` are comments.
* **Delimiter**: tab, semicolon, comma or runs of white space, chosen as the one under which the
  most lines read as rows of two or more numbers (ties: tab, ``;``, ``,``, white space).
* **Decimal comma**: accepted when the delimiter is not a comma and every decimal mark in the
  data is a comma. A file mixing ``.`` and ``,`` marks is refused (thousands separators are not
  supported).
* **Layout**: optional lines of metadata, an optional header row (same number of cells as the
  data, first cell not a number), the data rows (first column wavelength, then one column per
  spectrum), optional trailing text. Key/value-looking lines (``key: value``, ``key = value``,
  ``key;value``) become metadata.
* **Units**: the wavelength column's header (or a ``wavelength unit`` metadata line) may say
  ``nm``, ``µm``/``um`` or ``Å``; other units (cm⁻¹, THz, eV) are refused.
* **Order**: ascending or descending (sorted, with a note); duplicate or non-monotonic
  wavelengths are an error naming the line.
* **Cells**: every cell must be a finite number; an empty, ``NaN``, ``N/A`` or ``inf`` cell is an
  error naming the line and column.

Nothing here judges whether the data are good enough to compute with: that is
:func:`lumeval.spectra.prepare.prepare`.
"""

from __future__ import annotations

import csv
import re
from pathlib import Path

import numpy as np

from ..errors import InputError
from .model import SpectrumSet

#: Refuse files larger than this many bytes (a spectrum file is kilobytes; 64 MB is a lot run).
MAX_TEXT_BYTES = 64 * 1024 * 1024

# [0-9], not \d: digits of other scripts (Arabic-Indic, full-width...) are refused, not read
_NUMBER = re.compile(r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$")
_MISSING = {"", "nan", "na", "n/a", "n.a.", "-", "--", "null", "none", "?"}
_INFINITE = {"inf", "+inf", "-inf", "infinity", "+infinity", "-infinity"}
_COMMENT_PREFIXES = ("#", "%", "//")
_DELIMITERS = ("\t", ";", ",", None)  # None = runs of white space
_DELIM_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", None: "white space"}
_LINE_SPLIT = re.compile(r"\r\n|\r|\n")
_KEY_VALUE = re.compile(r"^\s*([^:=]{1,80}?)\s*[:=]\s*(.*?)\s*$")

# unit hints ---------------------------------------------------------------------------------
_WL_UNITS = [
    (re.compile(r"(?<![a-z])nm\b|nanomet", re.I), "nm", 1.0),
    (re.compile(r"[µμ]m\b|(?<![a-z])um\b|micron|micromet", re.I), "µm", 1000.0),
    (re.compile(r"Å|angstr", re.I), "Å", 0.1),
]
_WAVELENGTH_LABEL = re.compile(
    r"wave|wl|lambda|λ|nm\b|[µμu]m\b|wellenl|longueur|lunghezza|longitud|golflengte|våglängd|^x\b|^\s*$", re.I
)
_UNIT_CELL = re.compile(
    r"^\s*[\[(]?\s*(nm|[µμu]m|Å|a\.?\s*u\.?|%|counts|rel\.?|relative|arb\.?( units)?|"
    r"[mµμun]?w(\s*(/|·|\*|per\b|\s+m\b).*)?|cm-1|thz|ev|)\s*[\])]?\s*$",
    re.I,
)
_WL_BAD_UNITS = re.compile(r"cm\s*[-−⁻]\s*1|cm\^-1|wavenumber|thz|\bhz\b|\bev\b|electron.?volt", re.I)
_ABSOLUTE = re.compile(
    r"(?<![a-z])[mµμun]?w\s*(/|·|\*|\s|per|m)|watt|(?<![a-z])[mµμu]?w\b|lm\b|cd\b|lux|lx\b", re.I
)
_RELATIVE = re.compile(r"relative|\brel\b|a\.\s*u\.|\bau\b|arb|normali[sz]ed|%|percent|counts", re.I)


def _decode(raw: bytes, file: str) -> str:
    if raw.startswith(b"\xef\xbb\xbf"):
        try:
            return raw[3:].decode("utf-8")
        except UnicodeDecodeError as exc:
            raise InputError(
                f"starts with a UTF-8 byte-order mark but byte {exc.start + 3} is not UTF-8",
                file=file,
                fix="save the file as UTF-8",
            ) from None
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return raw.decode("utf-16")
        except UnicodeDecodeError:
            raise InputError(
                "starts with a UTF-16 byte-order mark but is not valid UTF-16",
                file=file,
                fix="save the file as UTF-8",
            ) from None
    if b"\x00" in raw:
        raise InputError(
            "contains NUL bytes: this is a binary file, not a text spectrum file",
            file=file,
            fix="export the spectrum as CSV/text, IES TM-27 XML or lumeval JSON",
        )
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError:
        return raw.decode("cp1252", errors="strict") if _cp1252_ok(raw) else raw.decode("latin-1")


def _cp1252_ok(raw: bytes) -> bool:
    try:
        raw.decode("cp1252")
        return True
    except UnicodeDecodeError:
        return False


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
_ROW = {
    False: re.compile(rf"(?:{_NUM_POINT})(?:\x1f(?:{_NUM_POINT}))*\Z"),
    True: re.compile(rf"(?:{_NUM_ANY})(?:\x1f(?:{_NUM_ANY}))*\Z"),
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
    out = []
    # Same breaks as _LINE_SPLIT (CRLF, then lone CR, then LF), by plain string operations.
    for i, line in enumerate(text.replace("\r\n", "\n").replace("\r", "\n").split("\n"), start=1):
        s = line.strip().strip("\ufeff")
        if s:
            out.append((i, s))
    return out


def _is_comment(s: str) -> bool:
    return s.startswith(_COMMENT_PREFIXES)


def _choose_delimiter(lines: list[tuple[int, str]], memo: _RowMemo | None = None) -> tuple[str | None, int]:
    memo = memo if memo is not None else _RowMemo()
    best, best_score = None, -1
    for d in _DELIMITERS:
        score = 0
        for _, s in lines:
            c0 = s.lstrip('"')[:1]
            if _is_comment(s) or not (c0.isdigit() or (c0 and c0 in "+-.")):
                continue
            cells = memo.split(s, d)
            if len(cells) >= 2 and memo.all_numbers(cells, d != ","):
                score += 1
        if score > best_score:
            best, best_score = d, score
    return best, best_score


#: Files with more non-blank lines than this take the large-file path of :func:`parse_text`.
_BIG_LINES = 20_000
#: Lines of a large file on which the delimiter and the decimal mark are chosen (head, tail).
_SAMPLE_HEAD, _SAMPLE_TAIL = 5_000, 1_000


def _sample(lines: list) -> list:
    """The first and last lines of a large file (where headers, data and footers begin and end)."""
    if len(lines) <= _SAMPLE_HEAD + _SAMPLE_TAIL:
        return lines
    return lines[:_SAMPLE_HEAD] + lines[-_SAMPLE_TAIL:]


def _numeric_lines(non_comment: list, delim: str | None):
    """The lines of ``non_comment`` that are rows of two or more numbers with either decimal
    mark (what the decimal-mark scan of :func:`parse_text` looks at), found by one regex per
    line instead of a split and a conversion: the large-file path scans every line this way."""
    sep = r"\s+" if delim is None else r"\s*" + re.escape(delim) + r"\s*"
    trail = "" if delim is None else r"(?:\s*" + re.escape(delim) + r")*"
    match = re.compile(rf"{_NUM_ANY}(?:{sep}{_NUM_ANY})+{trail}").fullmatch
    for ln, s in non_comment:
        if match(s):
            yield ln, s


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
    rx = re.compile(rf"{num}(?:{sep}{num}){{{ncols - 1}}}{trail}")
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


def _key_value(s: str, delim: str | None) -> tuple[str, str] | None:
    s = s.lstrip("#%/ \t")
    m = _KEY_VALUE.match(s)
    if m and re.search(r"[^\W\d_]", m.group(1)):
        return m.group(1).strip(), m.group(2).strip()
    if delim is not None:
        cells = _split(s, delim)
        if len(cells) == 2 and cells[0] and re.search(r"[^\W\d_]", cells[0]) and len(cells[0]) <= 80:
            return cells[0], cells[1]
    return None


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


#: A unit written after a wavelength label: in brackets, after a slash or after "in".
_UNIT_SPOT = re.compile(r"[\[(]\s*([^\[\]()]{1,24}?)\s*[\])]|/\s*([^\s/]{1,24})\s*$|\bin\s+([^\s()\[\]]{1,24})\s*$", re.I)
#: Words that are not units (notes in brackets such as "(measured)" are not refused).
_LENGTH_OR_AXIS = re.compile(
    r"^(?:[kcmdfpa]?m|mil|mils|in|inch(?:es)?|ft|foot|feet|yd|yards?|miles?|mi|furlongs?|chains?|leagues?|"
    r"fathoms?|rods?|nmi|ly|light.?years?|au|pc|parsecs?|(?:kilo|centi|milli|deci|pico|femto)?met(?:er|re)s?|"
    r"pixels?|px|channels?|ch|index|bins?|points?|samples?|arb\.?|a\.?\s*u\.?)$",
    re.I,
)


def _unit_words(text: str, whole: bool) -> list[str]:
    """Candidate unit words in a header cell (``whole=False``) or a unit-only value (``True``)."""
    if whole:
        return [text.strip()]
    out = []
    for m in _UNIT_SPOT.finditer(text):
        w = next(g for g in m.groups() if g is not None)
        out.append(w.strip())
    return out


def _wavelength_unit(header_cell: str | None, meta: dict, file: str, line: int | None):
    texts = []
    whole: list[bool] = []
    if header_cell:
        texts.append(header_cell)
        whole.append(False)
    for k, v in meta.items():
        kl = k.lower()
        if "wavelength" in kl and ("unit" in kl or kl.strip() in {"wavelength", "wavelengths"}):
            texts.append(v)
            whole.append("unit" in kl)
        elif kl in {"x unit", "x-unit", "xunit", "x units", "x axis unit"}:
            texts.append(v)
            whole.append(True)
    for t in texts:
        if _WL_BAD_UNITS.search(t):
            raise InputError(
                f"the wavelength column is given in {t!r}, which lumeval does not read",
                file=file,
                line=line,
                fix="export the spectrum against wavelength in nm (or µm)",
            )
        for rx, name, factor in _WL_UNITS:
            if rx.search(t):
                return name, factor
    # no unit lumeval reads: a stated unit of any other kind is refused, never taken as nm
    for t, w in zip(texts, whole):
        for word in _unit_words(t, w):
            if word and (w or _LENGTH_OR_AXIS.match(word)):
                raise InputError(
                    f"the wavelength column is given in {word[:30]!r}, a unit lumeval does not read",
                    file=file,
                    line=line,
                    fix="export the wavelengths in nm (or µm, Å), stated in the column header, e.g. 'wavelength (nm)'",
                )
    return None, 1.0


def _scale(header_cell: str | None, meta: dict) -> tuple[str, str | None]:
    declared = meta.get("lumeval.scale")
    if declared in {"absolute", "relative", "unknown"}:
        return declared, meta.get("lumeval.value_unit")
    texts = []
    if header_cell:
        texts.append(header_cell)
    for k, v in meta.items():
        kl = k.lower()
        if kl in {"unit", "units", "y unit", "y-unit", "yunit", "y units", "scale", "spectral quantity",
                  "spectralquantity", "quantity", "value unit", "values"}:
            texts.append(v)
    for t in texts:
        if _RELATIVE.search(t):
            return "relative", t
        if _ABSOLUTE.search(t):
            return "absolute", t
    return "unknown", None


def parse_text(text: str, file: str, stem: str | None = None) -> SpectrumSet:
    """Parse the decoded text of a delimited spectrum file.

    Parameters
    ----------
    text : str
        The file's text.
    file : str
        The path as the user gave it (used in messages and in ``sources``).
    stem : str, optional
        The display name of a single unnamed spectrum (default: the file's stem).

    Returns
    -------
    SpectrumSet
        Raw spectra as read (ascending wavelengths in nm), not yet prepared.

    Raises
    ------
    InputError
        Naming the file, the line and what would fix it.
    """
    stem = stem if stem is not None else Path(file).stem
    lines = _content_lines(text)
    if not lines:
        raise InputError("the file is empty", file=file, fix="export the spectrum data into it")
    # A large file (a million rows of a fine or irregular grid) is read without memoising its
    # lines, choosing the delimiter and decimal mark on a sample of its lines and converting its
    # block of clean rows in bulk (see _bulk_rows): memory stays a small multiple of the file.
    big = len(lines) > _BIG_LINES
    memo = _RowMemo(cache=not big)
    delim, score = _choose_delimiter(_sample(lines) if big else lines, memo)
    if big and score <= 0:
        delim, score = _choose_delimiter(lines, memo)
    if score <= 0:
        for ln, s in lines:
            ch = None if _is_comment(s) else _foreign_digit(s)
            if ch is not None:
                import unicodedata

                raise InputError(
                    f"numbers written with the digit {ch!r} ({unicodedata.name(ch, 'a non-ASCII digit')}): "
                    "only the digits 0-9 are read",
                    file=file, line=ln, fix="export the numbers with the digits 0-9",
                )
        first = next((ln for ln, s in lines if not _is_comment(s)), lines[0][0])
        raise InputError(
            "no rows of numbers (wavelength, value) found",
            file=file,
            line=first,
            fix="give one row per wavelength: wavelength then value(s), separated by comma, "
            "semicolon, tab or spaces",
        )
    non_comment = [t for t in lines if not _is_comment(t[1])]  # the same tuples, not copies

    # decimal mark: comma when the delimiter is not a comma and no data cell uses a point
    def all_numeric(cells, dc):
        return len(cells) >= 2 and memo.all_numbers(cells, dc)

    decimal_comma = False
    if delim != ",":
        saw_comma = saw_point = None
        for ln, s in (_numeric_lines(non_comment, delim) if big else non_comment):
            cells = memo.split(s, delim)
            if not all_numeric(cells, True):
                continue
            joined = "".join(cells)
            if saw_comma is None and "," in joined:
                saw_comma = ln
            if saw_point is None and "." in joined:
                saw_point = ln
            if saw_comma is not None and saw_point is not None:
                break
        if saw_comma is not None and saw_point is not None:
            raise InputError(
                "the data mix decimal points and decimal commas "
                f"(a comma on line {saw_comma}, a point on line {saw_point})",
                file=file,
                line=max(saw_comma, saw_point),
                fix="use one decimal mark throughout, with no thousands separators",
            )
        decimal_comma = saw_comma is not None

    # find the data block
    start = next(
        (i for i, (_, s) in enumerate(non_comment) if all_numeric(memo.split(s, delim), decimal_comma)), None
    )
    if start is None:  # pragma: no cover - the delimiter choice guarantees a numeric row
        raise InputError("no rows of numbers (wavelength, value) found", file=file, fix="check the file's layout")
    first_ln, first_s = non_comment[start]
    ncols = len(memo.split(first_s, delim))
    rows: list[tuple[int, list[str]]] = []
    footer: list[tuple[int, str]] = []
    bulk, bulk_ln, rest = None, None, start
    if big:
        bulk, bulk_ln, rest = _bulk_rows(non_comment, start, delim, ncols, decimal_comma)
    for ln, s in non_comment[rest:]:
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
    # header row and metadata before the data
    before = non_comment[:start]
    header: list[str] | None = None
    header_units: list[tuple[str, str]] | None = None
    header_ln: int | None = None
    if before:
        hln, hs = before[-1]
        hcells = _split(hs, delim)
        if delim is None and len(hcells) != ncols:
            alt = [c.strip() for c in re.split(r"\t|\s{2,}", hs) if c.strip()]
            if len(alt) != ncols:
                # "wavelength (km) S0": a bracketed unit belongs to the word before it
                alt = [c.strip() for c in re.split(r"\s+(?=[^\s(\[])", hs.strip()) if c.strip()]
            if len(alt) == ncols:
                hcells = alt
        if len(hcells) == ncols:
            if _is_number(hcells[0], decimal_comma):
                bad = next((c for c in hcells if not _is_number(c, decimal_comma)), hcells[-1])
                raise InputError(
                    f"this looks like a data row but holds {_describe_cell(bad)}",
                    file=file,
                    line=hln,
                    fix="every cell must be a number: fill in or correct it, or delete the row",
                )
            # A "key;value" metadata line just before the data also has ncols cells: take the
            # line as the header only if its first cell names a wavelength axis, it is the
            # only line before the data, or it names three or more columns.
            if _WAVELENGTH_LABEL.search(hcells[0]) or len(before) == 1 or ncols >= 3:
                header = [c.strip().strip('"') if delim is None else c.strip() for c in hcells]
                header_ln = hln
                before = before[:-1]
                # a row of units under a row of names ("Wavelength,Irradiance" / "nm,W/m2/nm")
                if all(_UNIT_CELL.match(c) for c in header) and before:
                    pln, ps = before[-1]
                    pcells = _split(ps, delim)
                    if len(pcells) == ncols and not _is_number(pcells[0], decimal_comma):
                        units = header
                        header = [f"{n.strip()} ({u})" if u else n.strip() for n, u in zip(pcells, units)]
                        header_units = [(n.strip(), u) for n, u in zip(pcells, units)]
                        header_ln = pln
                        before = before[:-1]

    meta: dict[str, str] = {}
    text_lines: list[str] = []

    def add_meta(s: str) -> None:
        kv = _key_value(s, delim)
        if kv is None:
            t = s.lstrip("#%/ \t").strip()
            if t:
                text_lines.append(t)
            return
        k, v = kv
        if k in meta:
            meta[k] = meta[k] + "\n" + v
        else:
            meta[k] = v

    for _ln, s in lines:
        if _is_comment(s):
            add_meta(s)
    for _, s in before:
        add_meta(s)
    for _, s in footer:
        add_meta(s)
    if text_lines:
        meta["comment"] = "\n".join(text_lines)

    # parse numbers
    m = 0 if bulk is None else bulk.shape[0]
    n_rows = m + len(rows)
    data = np.empty((n_rows, ncols))
    if bulk is not None:
        data[:m] = bulk
        del bulk
    row_ln = np.concatenate([bulk_ln if bulk_ln is not None else np.empty(0, dtype=np.int64),
                             np.array([ln for ln, _ in rows], dtype=np.int64)])

    def cell_text(r: int, c: int) -> str:
        if r < m:
            return _split(non_comment[start + r][1], delim)[c]
        return rows[r - m][1][c]

    names_hdr = header
    for r, (ln, cells) in enumerate(rows, start=m):
        if len(cells) != ncols:
            what = "fewer" if len(cells) < ncols else "more"
            raise InputError(
                f"this row has {len(cells)} cells, {what} than the {ncols} of the first data row "
                f"(line {first_ln})",
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

    # wavelengths: units, order
    wl_unit, factor = _wavelength_unit(header[0] if header else None, meta, file, header_ln)
    wl = data[:, 0] * factor
    if factor != 1.0:
        wl = np.round(wl, 6)
    notes: list[str] = []
    if wl_unit == "µm":
        notes.append("wavelengths were given in µm and converted to nm")
    elif wl_unit == "Å":
        notes.append("wavelengths were given in Å and converted to nm")
    if wl_unit is None and wl.size and np.nanmax(wl) <= 3.0 and np.nanmin(wl) > 0:
        raise InputError(
            f"wavelengths run from {wl.min():g} to {wl.max():g} with no unit stated: "
            "they look like micrometres, not nanometres",
            file=file,
            line=header_ln or int(row_ln[0]),
            fix="state the unit in the wavelength column header, e.g. 'wavelength (µm)', or convert to nm",
        )
    if n_rows < 2:
        raise InputError(
            "only one data row: a spectrum needs values at many wavelengths",
            file=file,
            line=int(row_ln[0]),
            fix="export the full spectrum",
        )
    d = np.diff(wl)
    if np.all(d < 0):
        order = np.argsort(wl)
        wl = wl[order]
        data = data[order]
        row_ln = row_ln[order]
        notes.append("wavelengths were in descending order; sorted ascending")
        d = np.diff(wl)
    if not np.all(d > 0):
        k = int(np.argmax(d <= 0))
        ln_prev, ln_here = int(row_ln[k]), int(row_ln[k + 1])
        if d[k] == 0:
            problem = f"wavelength {data[k + 1, 0]:g} repeats the one on line {ln_prev}"
            fix = "delete or correct the duplicate row"
        else:
            problem = (
                f"wavelength {data[k + 1, 0]:g} comes after {data[k, 0]:g} (line {ln_prev}): "
                "wavelengths must run in one direction"
            )
            fix = "sort the rows by wavelength and check for pasted blocks"
        raise InputError(problem, file=file, line=ln_here, fix=fix)

    values = data[:, 1:].T
    n = values.shape[0]
    names: list[str] = []
    sources: list[str] = []
    metas: list[dict] = []
    for j in range(n):
        col_name = header[j + 1] if header else ""
        col_label = col_name  # with its unit, for the scale
        if header_units:
            col_name = header_units[j + 1][0]
        if n == 1:
            name = col_name if header and col_name and not _generic_value_name(col_name) else stem
            src = file
        else:
            name = col_name or f"{stem}#{j + 1}"
            src = f"{file}#{col_name}" if col_name else f"{file}#{j + 1}"
        m = dict(meta)
        scale, unit = _scale(col_label or None, meta)
        m["lumeval.scale"] = scale
        if unit:
            m["lumeval.value_unit"] = unit
        m["lumeval.wavelength_unit"] = wl_unit or "nm (assumed: no unit stated)"
        m["lumeval.delimiter"] = _DELIM_NAMES[delim] + (" with decimal comma" if decimal_comma else "")
        if header:
            m["lumeval.column"] = col_name
        names.append(name)
        sources.append(src)
        metas.append(m)
    return SpectrumSet(
        wl, values, tuple(names), tuple(sources), tuple(tuple(notes) for _ in range(n)), tuple(metas)
    )


_GENERIC_WORDS = {
    "value", "values", "intensity", "irradiance", "radiance", "power", "flux", "spd", "spectrum", "spectral",
    "data", "relative", "absolute", "counts", "count", "energy", "signal", "y", "s", "distribution", "density",
    "normalised", "normalized", "rel", "abs", "measured", "measurement", "radiant", "exitance", "a.u.",
    "emission", "irradiation", "intensities", "raw", "corrected", "calibrated", "photon", "output",
    "e", "l", "i", "φ", "phi", "λ",  # quantity symbols: E(λ) irradiance, L(λ) radiance, I, Φ
}
#: A bracketed group with no bracket inside (removed repeatedly: nested units such as
#: "[W/(m²·nm)]" go from the inside out).
_INNER_BRACKETS = re.compile(r"\([^()\[\]]*\)|\[[^()\[\]]*\]")
#: Words of a unit (W/(m²·nm), mW/m2/nm, µW/cm²/nm, W/(sr·m²·nm), a.u., %, counts/s...).
_UNIT_WORD = re.compile(r"^(?:[mµμunk]?w|watts?|[mµμunkc]?m[2²3³]?|sr|lm|lx|lux|cd|nits?|j|s|sec|per|sq|au|a\.u\.?|%)$")


def _generic_value_name(col: str) -> bool:
    """True when a single value column's header is a generic quantity label ("irradiance",
    "Spectral irradiance [W/(m²·nm)]", "counts", "W/(m²·nm)", "Intensity (a.u.)"), not a
    spectrum's name: the spectrum is then named by its file stem."""
    t = col
    for _ in range(8):
        u = _INNER_BRACKETS.sub(" ", t)
        if u == t:
            break
        t = u
    words = [w for w in re.split(r"[^\w%.µμ²³]+", t.lower().replace("_", " ")) if w and w != "."]
    return all(w in _GENERIC_WORDS or _UNIT_WORD.match(w) or w.isdigit() for w in words)


def read_text(path: str | Path, raw: bytes | None = None) -> SpectrumSet:
    """Read a delimited text spectrum file (see the module docstring for the rules)."""
    file = str(path)
    if raw is None:
        raw = _read_bytes(path, MAX_TEXT_BYTES)
    return parse_text(_decode(raw, file), file)


def _read_bytes(path: str | Path, limit: int) -> bytes:
    """The bytes of a regular file of at most ``limit`` bytes.

    The file type is checked before anything is read: the file is opened without blocking
    (``O_NONBLOCK``: opening a FIFO with no writer would otherwise wait forever) and anything
    but a regular file (a FIFO, socket or device) is refused, so an input can neither hang
    lumeval nor stream endless bytes (``/dev/zero``) into it.
    """
    import os
    import stat

    from .._paths import display_path

    file = display_path(path)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) | getattr(os, "O_BINARY", 0)
    try:
        st = os.stat(path)
        if stat.S_ISDIR(st.st_mode):
            raise IsADirectoryError
        if not stat.S_ISREG(st.st_mode):
            raise InputError(f"is {special_file_kind(st.st_mode)}, not a regular file: lumeval reads regular files only "
                             "(it does not wait on pipes or devices)", file=file, fix="give a regular file")
        if st.st_size > limit:
            raise InputError(
                f"is {st.st_size / 1e6:.1f} MB, more than the {limit / 1e6:.0f} MB lumeval reads",
                file=file,
                fix="split the file or check that it is really a spectrum file",
            )
        fd = os.open(path, flags)
        with open(fd, "rb", closefd=True) as fh:
            # the path may have been swapped between stat and open: check what was opened
            if not stat.S_ISREG(os.fstat(fh.fileno()).st_mode):
                raise InputError("is not a regular file", file=file, fix="give a regular file")
            raw = fh.read(limit + 1)
    except FileNotFoundError:
        raise InputError("no such file", file=file, fix="check the path") from None
    except IsADirectoryError:
        raise InputError("is a directory, not a file", file=file, fix="name the spectrum file") from None
    except PermissionError:
        raise InputError("cannot be read (permission denied)", file=file, fix="check file permissions") from None
    except OSError as exc:
        import errno

        if exc.errno == errno.ELOOP:
            raise InputError("is a symbolic link that loops", file=file, fix="fix or remove the link") from None
        raise InputError(f"cannot be read ({exc.strerror or exc})", file=file, fix="check the path") from None
    if len(raw) > limit:
        raise InputError(
            f"is more than the {limit / 1e6:.0f} MB lumeval reads",
            file=file,
            fix="split the file or check that it is really a spectrum file",
        )
    return raw


def special_file_kind(mode: int) -> str:
    """A plain-language name of a file type that is neither a regular file nor a folder (the
    readers and the lot input expansion name refused entries with it)."""
    import stat

    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    return "a special file"
