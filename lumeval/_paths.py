"""Paths as text: file names from other people's systems need not be valid UTF-8."""

from __future__ import annotations

import os


def display_path(path: str | os.PathLike | bytes) -> str:
    """The text to show for a path: valid UTF-8 as is, undecodable bytes as U+FFFD.

    On POSIX, Python keeps the undecodable bytes of a file name as lone surrogates (PEP 383,
    ``surrogateescape``) so that the name still opens the file; such a string cannot be encoded
    to UTF-8, so any writer (terminal, JSON, CSV, HTML) would fail on it. This gives the form to
    show and to record; open files with the original path.
    """
    p = os.fsdecode(path) if isinstance(path, bytes) else os.fspath(path)
    if isinstance(p, bytes):  # a PathLike returning bytes
        p = os.fsdecode(p)
    try:
        p.encode("utf-8")
        return p
    except UnicodeEncodeError:
        return p.encode("utf-8", "surrogateescape").decode("utf-8", "replace")


def command_line() -> str:
    """The command as it was run (``lumeval lot …``), for the provenance of reports: every
    argument in its printable form (:func:`display_path`), so that a file name's undecodable
    bytes cannot stop a writer (an HTML report of a lot with such a file name failed to encode)."""
    import sys

    return " ".join(["lumeval", *map(display_path, sys.argv[1:])])


def source_file(source: str, known: dict[str, bool] | None = None) -> str:
    """The file a spectrum's source names. A source is ``FILE`` or ``FILE#LOCATOR`` (a column's
    name or number, ``row N``), and a file name may itself hold ``#`` (``lot#3.csv#2``): the
    longest part before a ``#`` that is an existing file, else the whole source if it is one,
    else the part before the first ``#`` (the file no longer there or never one: messages
    only). Splitting at the first ``#`` named ``lot`` for ``lot#3.csv`` (found by a review).
    ``known``: a dict kept across calls of what is a file, so that a million sources of a few
    files cost a few file-system lookups."""
    text = str(source)
    if "#" not in text:
        return text
    known = {} if known is None else known

    def is_file(p: str) -> bool:
        hit = known.get(p)
        if hit is None:
            hit = known[p] = os.path.isfile(p)
        return hit

    cut = len(text)
    while (cut := text.rfind("#", 0, cut)) > 0:
        if is_file(text[:cut]):
            return text[:cut]
    return text if os.path.isfile(text) else text.partition("#")[0]
