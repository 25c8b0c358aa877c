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

from pathlib import Path
from typing import TYPE_CHECKING

from .._io import special_file_kind  # their one home; still importable from here (lots, store)
from ..errors import InputError
from .model import SpectrumSet

# The stages live in text_dialect, text_rows and text_header; these names stay importable here.
from .text_dialect import (  # noqa: F401  (re-exported)
    _COMMENT_PREFIXES,
    _DELIM_NAMES,
    _DELIMITERS,
    _INFINITE,
    _LINE_SPLIT,
    _MISSING,
    _NUM_ANY,
    _NUM_POINT,
    _NUMBER,
    _NUMERIC_CHARS_ONLY,
    _ROW,
    Dialect,
    _all_numbers,
    _choose_delimiter,
    _content_lines,
    _describe_cell,
    _foreign_digit,
    _is_comment,
    _is_number,
    _numeric_lines,
    _RowMemo,
    _split,
    _to_float,
    choose_dialect,
    comment_lines,
    non_comment_lines,
)
from .text_header import (  # noqa: F401  (re-exported)
    _ABSOLUTE,
    _GENERIC_WORDS,
    _LENGTH_OR_AXIS,
    _RELATIVE,
    _UNIT_CELL,
    _UNIT_SPOT,
    _UNIT_WORD,
    _WAVELENGTH_LABEL,
    _WL_BAD_UNITS,
    _WL_UNITS,
    Header,
    _generic_value_name,
    _key_value,
    _scale,
    _unit_words,
    _wavelength_unit,
    collect_metadata,
    find_header,
    name_spectra,
    wavelength_axis,
)
from .text_rows import Block, _bulk_rows, convert_rows, find_start, take_rows  # noqa: F401

if TYPE_CHECKING:
    from .text_fast import RawLines

#: Refuse files larger than this many bytes (a spectrum file is kilobytes; 64 MB is a lot run).
MAX_TEXT_BYTES = 64 * 1024 * 1024

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
    if raw.startswith((b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")):  # before UTF-16: the same first two bytes
        raise InputError("starts with a UTF-32 byte-order mark: lumeval reads UTF-8 and UTF-16 text files",
                         file=file, fix="save the file as UTF-8")
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



#: Files with more non-blank lines than this take the large-file path of :func:`parse_text`.
_BIG_LINES = 20_000
#: Lines of a large file on which the delimiter and the decimal mark are chosen (head, tail).
_SAMPLE_HEAD, _SAMPLE_TAIL = 5_000, 1_000


def _sample(lines: list) -> list:
    """The first and last lines of a large file (where headers, data and footers begin and end)."""
    if len(lines) <= _SAMPLE_HEAD + _SAMPLE_TAIL:
        return lines
    return lines[:_SAMPLE_HEAD] + lines[-_SAMPLE_TAIL:]


def parse_text(text: str, file: str, stem: str | None = None, *, fast: bool = True,
               raw: RawLines | None = None) -> SpectrumSet:
    """Parse the decoded text of a delimited spectrum file.

    The reading goes in stages, each a function of its own: dialect
    (:func:`~lumeval.spectra.text_dialect.choose_dialect`) → data block
    (:func:`~lumeval.spectra.text_rows.find_start`, :func:`~lumeval.spectra.text_rows.take_rows`)
    → header and units (:func:`~lumeval.spectra.text_header.find_header`) → metadata
    (:func:`~lumeval.spectra.text_header.collect_metadata`) → numbers
    (:func:`~lumeval.spectra.text_rows.convert_rows`) → axis
    (:func:`~lumeval.spectra.text_header.wavelength_axis`) → names
    (:func:`~lumeval.spectra.text_header.name_spectra`). The first error found, in that
    order, is the one raised. The fast path (``fast=True``) finds the dialect and converts
    the data block in one numpy call when the block is clean, and hands over to the
    line-by-line stages otherwise (same spectra, same messages).

    Parameters
    ----------
    text : str
        The file's text.
    file : str
        The path as the user gave it (used in messages and in ``sources``).
    stem : str, optional
        The display name of a single unnamed spectrum (default: the file's stem).
    fast : bool
        Try the fast path first (:mod:`lumeval.spectra.text_fast`: dialect from a sample of
        lines, the data block converted in one call; it gives the same result or hands over).
        False reads line by line only (tests and ``bench/bench_readers.py`` compare the two).
    raw : RawLines, optional
        The bytes ``text`` was decoded from (:func:`lumeval.spectra.text_fast.raw_lines`): the
        fast path then converts a clean data block from them instead of joining its lines.

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
    return parse_lines(lines, file, stem, fast=fast, comments=comment_lines(text, lines),
                       non_comment=non_comment_lines(text, lines), raw=raw)


def parse_lines(lines: list[tuple[int, str]], file: str, stem: str, *, fast: bool = True,
                comments: list | None = None, non_comment: list | None = None,
                raw: RawLines | None = None) -> SpectrumSet:
    """:func:`parse_text` of a file's non-blank lines, given as (line number, stripped text)
    (``comments``, ``non_comment``: the comment lines and the others, when known; ``raw``:
    as :func:`parse_text` takes it)."""
    if comments is None:
        comments = [t for t in lines if _is_comment(t[1])]
    if non_comment is None:
        non_comment = [t for t in lines if not _is_comment(t[1])]
    # A large file (a million rows of a fine or irregular grid) is read without memoising its
    # lines, choosing the delimiter and decimal mark on a sample of its lines and converting its
    # block of clean rows in bulk (see _bulk_rows): memory stays a small multiple of the file.
    big = len(lines) > _BIG_LINES
    memo = _RowMemo(cache=not big)
    found = None
    if fast:
        from .text_fast import fast_block

        found = fast_block(non_comment, _RowMemo(), raw)
    if found is not None:
        d, block, rest = found
    else:
        d = choose_dialect(lines, file, memo, _sample if big else None)
        block = find_start(d, memo, file)
        rest = block.start
        if big:
            block.bulk, block.bulk_ln, rest = _bulk_rows(d.non_comment, block.start, d.delim, block.ncols,
                                                         d.decimal_comma)
    take_rows(d, block, memo, rest, file)
    h = find_header(d.non_comment[: block.start], d.delim, d.decimal_comma, block.ncols, file)
    meta = collect_metadata(comments, h.before, block.footer, d.delim)
    data, row_ln = convert_rows(d, block, memo, h.cells, file)
    wl, data, wl_unit, notes = wavelength_axis(data, row_ln, h, meta, file)
    return name_spectra(wl, data, h, meta, d, wl_unit, notes, file, stem)


def _read_bytes(path: str | Path, limit: int) -> bytes:
    """The bytes of a regular file of at most ``limit`` bytes.

    The file type is checked before anything is read: the file is opened without blocking
    (``O_NONBLOCK``: opening a FIFO with no writer would otherwise wait forever) and anything
    but a regular file (a FIFO, socket or device) is refused, so an input can neither hang
    lumeval nor stream endless bytes (``/dev/zero``) into it.
    """
    from .._paths import display_path

    raw = with_regular_file(path, lambda fh: read_at_most(fh, limit), limit)
    if len(raw) > limit:
        raise InputError(
            f"is more than the {limit / 1e6:.0f} MB lumeval reads",
            file=display_path(path),
            fix="split the file or check that it is really a spectrum file",
        )
    return raw


def read_at_most(fh, limit: int) -> bytes:
    """The bytes of the open binary file ``fh``, at most ``limit + 1`` of them (one more than
    ``limit`` tells the caller the file is too large). The read is sized by the file's current
    size: a read of ``limit + 1`` bytes makes Python reserve that much (64 MB for a 4 kB file,
    about 20 µs a file); a file that grew since is read on, up to the same bound."""
    import os

    hint = max(0, min(limit, os.fstat(fh.fileno()).st_size))
    raw = fh.read(hint + 1)
    if len(raw) > hint and len(raw) <= limit:  # it grew: read on, up to limit + 1 in all
        raw += fh.read(limit + 1 - len(raw))
    return raw


def with_regular_file(path: str | Path, use, limit: int | None = None):
    """``use(fh)`` on the regular file ``path`` opened for binary reading, with the checks and
    messages of :func:`_read_bytes` (``limit``: the largest size accepted, None for any); an
    ``OSError`` raised while reading becomes the same ``InputError`` as one raised by opening."""
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
        if limit is not None and st.st_size > limit:
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
            return use(fh)
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
