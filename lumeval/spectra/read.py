"""Read spectrum files of any supported kind: the public entry points.

* :func:`read_spectra` reads one file (CSV/text, IES TM-27 XML or lumeval JSON, recognised by
  content, then by extension) into a raw :class:`SpectrumSet`.
* :func:`read_many` reads many files; a bad file never stops the others.

Reading does not judge whether the data are fit to compute with: call
:func:`lumeval.spectra.prepare.prepare` (or use ``read_many(..., prepared=True)``).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from pathlib import Path

from ..errors import InputError
from .model import SpectrumSet
from .text import MAX_TEXT_BYTES, _decode, _read_bytes, parse_text

XML_SUFFIXES = {".xml", ".spdx", ".tm27"}
JSON_SUFFIXES = {".json"}


def _kind(path: Path, raw: bytes) -> str:
    head = raw[:512].lstrip(b"\xef\xbb\xbf \t\r\n")
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):
        # UTF-16: peek at the decoded start
        try:
            head = raw[:1024].decode("utf-16", errors="ignore").lstrip().encode("utf-8", errors="replace")
        except Exception:  # pragma: no cover - defensive
            head = b""
    if head.startswith(b"<"):
        return "xml"
    if head.startswith((b"{", b"[")):
        return "json"
    suffix = path.suffix.lower()
    if suffix in XML_SUFFIXES:
        return "xml"
    if suffix in JSON_SUFFIXES:
        return "json"
    return "text"


def read_spectra(path: str | Path) -> SpectrumSet:
    """Read one spectrum file.

    Parameters
    ----------
    path : str or Path
        A CSV/text file (two columns, or a wavelength column and one column per spectrum),
        an IES TM-27 XML file, a lumeval JSON spectra file, or a Parquet archive (a file or a
        folder of them: :mod:`lumeval.spectra.archive`). See ``docs/input-files.md``.

    Returns
    -------
    SpectrumSet
        The spectra as read: ascending wavelengths in nm, values as given. ``sources`` are
        ``path`` (one spectrum) or ``path#column``; ``notes`` say what reading changed
        (sorting, unit conversion); ``metadata`` holds the file's key/value header lines and
        ``lumeval.*`` keys describing how it was read (``lumeval.scale`` is ``absolute``,
        ``relative`` or ``unknown``).

    Raises
    ------
    InputError
        ``FILE:LINE: what is wrong — what would fix it``.
    """
    from .._paths import display_path

    # a Parquet archive (lumeval.spectra.archive): by its name, a folder holding Parquet
    # files, or the file's first bytes; other files pay no extra open or import
    p = Path(path)
    is_dir = p.is_dir()
    if p.suffix.lower() in _PARQUET_SUFFIXES or (is_dir and _archive_folder(p)):
        from .archive import read_archive

        return read_archive(path)
    if is_dir:  # the commands that read single files are often given the folder of a lot
        from ..errors import InputError

        raise InputError("is a folder, not a spectrum file", file=display_path(path),
                         fix="name the files in it (e.g. FOLDER/*.csv); `lumeval lot` is the command that reads "
                             "whole folders")
    raw = _read_bytes(path, MAX_TEXT_BYTES)
    if raw[:4] == b"PAR1":
        from .archive import read_archive

        return read_archive(path)
    # the bytes come from the path as given; names, sources and messages use its printable form
    return parse_spectra(raw, display_path(path))


_PARQUET_SUFFIXES = (".parquet", ".parq", ".pq")


def _archive_folder(p: Path) -> bool:
    from .archive import is_archive

    return is_archive(p)


def parse_spectra(raw: bytes, file: str) -> SpectrumSet:
    """Parse the bytes of a spectrum file named ``file`` (format by content, then extension).

    The in-memory twin of :func:`read_spectra` (used for uploads and by the fuzz tests).
    """
    p = Path(file)
    kind = _kind(p, raw)
    if kind == "xml":
        from .tm27 import parse_tm27

        return parse_tm27(raw, file)
    if kind == "json":
        from .jsonio import parse_json

        return parse_json(raw, file)
    from .text_fast import raw_lines

    return parse_text(_decode(raw, file), file, raw=raw_lines(raw))


def unique_names(s: SpectrumSet, seen: dict[str, int] | SeenNames) -> SpectrumSet:
    """``s`` with every name not yet in ``seen`` kept and every repeated one suffixed
    (``name (2)``, ``name (3)``...), with a note saying so; ``seen`` is updated.

    Names identify spectra in every report, verdict and lot table, so within one run (one
    command's inputs) they must be unique: two files with the same stem in different folders,
    or two columns with the same header, would otherwise be told apart only by their source.
    Pass the same ``seen`` dict for every set of the run, in input order.
    """
    from dataclasses import replace

    renamed = renamed_names(s.names, seen)
    if not renamed:
        return s
    names = list(s.names)
    notes = [tuple(n) for n in s.notes]
    for i, (new, note) in renamed.items():
        names[i] = new
        notes[i] = notes[i] + (note,)
    return replace(s, names=tuple(names), notes=tuple(notes))


class SeenNames:
    """The names a run has given so far, for :func:`unique_names` in place of a dict of them
    (``name -> the last suffix number given``): a set of the names, and the suffix numbers only
    of names given more than once. A lot of 10^6 samples checks each batch of new names at C
    speed (:meth:`add_if_new`): measured 134 against about 400 ns a name with the dict
    (2026-12-05); the memory is about the same (the set of 10^6 names 34 MB, the dict 31 MB,
    the names themselves apart)."""

    __slots__ = ("_last", "_names")

    def __init__(self) -> None:
        self._names: set[str] = set()
        self._last: dict[str, int] = {}

    def __contains__(self, name: object) -> bool:
        return name in self._names

    def __getitem__(self, name: str) -> int:
        if name not in self._names:
            raise KeyError(name)
        return self._last.get(name, 1)

    def __setitem__(self, name: str, k: int) -> None:
        self._names.add(name)
        if k != 1:
            self._last[name] = k
        else:
            self._last.pop(name, None)

    def __len__(self) -> int:
        return len(self._names)

    def add_if_new(self, names: Sequence[str]) -> bool:
        """Add ``names`` and return True when none of them has been given and none repeats
        among them (the usual batch); else change nothing and return False."""
        if not self._names.isdisjoint(names):
            return False
        before = len(self._names)
        self._names.update(names)
        if len(self._names) - before == len(names):
            return True
        self._names.difference_update(names)  # a name repeated within the batch: all were new
        return False


def renamed_names(names, seen: dict[str, int] | SeenNames) -> dict[int, tuple[str, str]]:
    """The renaming :func:`unique_names` makes: index -> (new name, its note) for every name of
    ``names`` already in ``seen`` (updated, in order)."""
    if isinstance(seen, SeenNames) and seen.add_if_new(names):
        return {}
    out: dict[int, tuple[str, str]] = {}
    for i, n in enumerate(names):
        if n not in seen:
            seen[n] = 1
            continue
        k = seen[n] + 1
        while f"{n} ({k})" in seen:
            k += 1
        seen[n] = k
        new = f"{n} ({k})"
        seen[new] = 1
        out[i] = (new, f"named {new!r}: another spectrum of this run is already named {n!r}")
    return out


def read_many(
    paths: Iterable[str | Path], *, prepared: bool = False
) -> tuple[list[SpectrumSet | None], list[tuple[str, InputError]]]:
    """Read many files; a file that fails never stops the others.

    Parameters
    ----------
    paths : iterable of str or Path
    prepared : bool
        Also run :func:`~lumeval.spectra.prepare.prepare` on each file's spectra (so a file
        whose data cannot be used is reported here rather than later).

    Returns
    -------
    sets : list of SpectrumSet or None
        One entry per path, in order; None where the file failed.
    errors : list of (str, InputError)
        The failed paths and their errors, in order.
    """
    sets: list[SpectrumSet | None] = []
    errors: list[tuple[str, InputError]] = []
    for path in paths:
        try:
            s = read_spectra(path)
            if prepared:
                from .prepare import prepare

                s = prepare(s)
        except InputError as exc:
            sets.append(None)
            errors.append((str(path), exc))
        else:
            sets.append(s)
    return sets, errors
