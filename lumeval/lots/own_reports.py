"""lumeval's own reports found among a lot's inputs.

A lot's outputs are often written next to its data (``lumeval lot week48/ --json
week48/lot.json``). The next run over the same folder then finds ``lot.json`` and the
per-sample CSV among the spectrum files; read as spectra they fail, and the lot could no
longer pass ("unreadable input"), nor write the same output again (it "is one of the inputs").

:func:`report_kind` recognises a file lumeval wrote as a report, from its own marks only:

* a JSON document that opens with ``{"format": "lumeval.…"`` (every JSON document lumeval
  writes starts so; ``lumeval.spectra``, the spectra document, is an input and not a report);
* a CSV report: it ends with the caution rows lumeval writes under every CSV report
  (:func:`lumeval.render.tables.csv_notes`), exactly;
* a Parquet per-sample table: its schema carries the key
  :data:`lumeval.spectra.archive.REPORT_KEY` (an archive folder read whole leaves it out too).

Such a file found in a folder or by a pattern is listed as skipped with the reason, not read; a
report named explicitly as an input is still an error (it was asked for), with a message saying
what it is. Only files whose reading already failed are examined (no extra work per spectrum
file), plus the run's own output targets before the run.
"""

from __future__ import annotations

import os
import re

_JSON = re.compile(rb'\A(?:\xef\xbb\xbf)?\s*\{\s*"format"\s*:\s*"(lumeval\.[A-Za-z0-9_.-]{1,40})"')
_HEAD = 256


def _csv_tail() -> bytes:
    from ..render.tables import csv_notes

    return csv_notes().encode("utf-8")


def report_kind(path: str | os.PathLike) -> str | None:
    """What lumeval report ``path`` is (e.g. "JSON document (lumeval.lot)", "CSV report"),
    or None when it is not one (or cannot be opened: the reader says why)."""
    tail = _csv_tail()
    try:
        with open(path, "rb") as f:
            head = f.read(_HEAD)
            size = f.seek(0, os.SEEK_END)
            f.seek(max(0, size - len(tail) - 2 * len(tail.splitlines())))
            end = f.read()
    except OSError:
        return None
    m = _JSON.match(head)
    if m is not None:
        kind = m.group(1).decode("ascii")
        return None if kind == "lumeval.spectra" else f"JSON document ({kind})"
    if end.replace(b"\r\n", b"\n").endswith(tail):
        return "CSV report"
    if head.startswith(b"PAR1"):
        return _parquet_kind(path)
    return None


def _parquet_kind(path) -> str | None:
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:
        return None
    from ..spectra.archive import report_table_kind

    try:
        kind = report_table_kind(pq.read_schema(pa.OSFile(os.fsencode(os.fspath(path)))))
    except (OSError, pa.ArrowException):
        return None
    return None if kind is None else f"Parquet table ({kind})"


def set_aside(unreadable, inputs) -> tuple[list, tuple]:
    """Split a lot's unreadable entries: lumeval reports found in a folder or by a pattern
    become skipped entries (with the reason); one named as an input stays unreadable, its
    message saying what it is. Only whole-file failures are examined.

    Returns (the unreadable entries kept, the skipped entries added)."""
    from .._paths import display_path
    from .inputs import Skipped, Unreadable

    by_shown = {display_path(f): f for f in inputs.files}
    given = set(inputs.given)
    kept: list = []
    skipped: list = []
    for u in unreadable:
        f = by_shown.get(u.source)
        kind = report_kind(f) if f is not None else None
        if kind is None:
            kept.append(u)
        elif f in given:
            kept.append(Unreadable(u.source, f"{u.source}: a lumeval {kind}, not a spectrum file \u2014 give the "
                                              "spectrum files (lumeval writes reports; it does not read them back)"))
        else:
            skipped.append(Skipped(u.source, f"a lumeval {kind}, not a spectrum file"))
    return kept, tuple(skipped)
