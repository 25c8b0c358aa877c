"""Spectrum archives in Apache Parquet: many spectra, one row each, read in bounded memory.

The format (docs/input-files.md, "Parquet archives")
---------------------------------------------------
* **One row per spectrum.**
* **Every column whose name is a number is a wavelength in nm** (``"380"``, ``"380.0"``,
  ``"382.5"``); its values are the spectral values at that wavelength (any integer, floating
  or decimal Parquet type; a null is a missing value). Column order does not matter; the
  wavelengths are sorted ascending.
* **A** ``name`` **column** (text) names each spectrum. Without one the spectra are named
  ``row 1``, ``row 2``… in file order.
* **Every other column is metadata** (sample id, station, timestamp, product, drive
  current…): carried, with its Parquet type, into every per-sample output (``lot
  --samples-parquet``, the per-sample CSV and JSON, :meth:`Evaluation.to_arrow`).
* **A folder of Parquet files is one archive**: every file directly inside it whose name ends
  in ``.parquet``/``.parq``/``.pq`` (hidden files skipped), in name order.

Each spectrum's source is ``FILE#row K`` (K counted from 1 within the file), so an error or a
report line names the row to look at.

Streaming
---------
:func:`iter_batches` reads a file row group by row group (``pyarrow.parquet.ParquetFile
.iter_batches``) and yields :class:`ArchiveBatch` es of at most ``batch_rows`` spectra; only the
current batch and the row group being decoded are in memory, whatever the archive's size.
Batches never span two *partitions* (runs of whole row groups planned by
:func:`plan_partitions`): a lot run on one machine and on a Dask cluster
(:mod:`lumeval.lots.dask_runner`) then evaluate exactly the same batches.

pyarrow is imported only here, and only when an archive is read or written (``pip install
lumeval[archive]``).
"""

from __future__ import annotations

import math
import os
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, cast

import numpy as np

from ..errors import InputError, UsageError, quote
from .archive_values import check_batch, is_text_type
from .model import DERIVED_KEYS as _DERIVED
from .model import SpectrumSet

#: File name endings of Parquet files (inside an archive folder too).
PARQUET_SUFFIXES = (".parquet", ".parq", ".pq")
#: The four bytes every Parquet file starts (and ends) with.
PARQUET_MAGIC = b"PAR1"
#: Spectra per batch when streaming (the lot command passes its own batch size).
BATCH_ROWS = 2048
#: Rows per partition: whole row groups are joined until a partition holds at least this many.
PARTITION_ROWS = 16384
#: Rows per row group written by :func:`write_archive`.
ROW_GROUP_ROWS = 16384
#: The column that names the spectra.
NAME_COLUMN = "name"
#: Largest wavelength (nm) an archive column may name (common practice, no source: far beyond
#: any spectroradiometer; a larger number is a slip).
MAX_WAVELENGTH_NM = 100000.0


def _nameable(w: float) -> bool:
    """Whether a wavelength column may name ``w`` nm (finite, above 0, at most
    :data:`MAX_WAVELENGTH_NM`): the one rule of the reader and the writer."""
    return math.isfinite(w) and 0 < w <= MAX_WAVELENGTH_NM

_NUMBER = re.compile(r"^\s*[+]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?\s*$")
_FIX_INSTALL = "install the archive extra: pip install 'lumeval[archive]'"


def _pa():
    """(pyarrow, pyarrow.parquet), imported on first use."""
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:  # pragma: no cover - the extra is part of the test install
        raise UsageError("reading or writing Parquet archives needs pyarrow", fix=_FIX_INSTALL) from None
    return pa, pq


# --------------------------------------------------------------------------- recognising


def _parquet_entries(folder: Path) -> list:
    """The folder's entries named like Parquet files (not hidden), by name."""
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return []
    return sorted((e for e in entries if not e.name.startswith(".") and e.name.lower().endswith(PARQUET_SUFFIXES)),
                  key=lambda e: e.name)


def _parquet_files_in(folder: Path) -> list[Path]:
    return [Path(e.path) for e in _parquet_entries(folder) if e.is_file()]


def _refuse_odd_entries(folder: Path) -> None:
    """Refuse a folder archive holding a Parquet-named entry that is not a regular file (a link
    to a missing file, a folder, a pipe): reading the others would leave it out without a word
    (``inspect``, ``check`` and ``convert`` did; a lot lists it as unreadable)."""
    from .._paths import display_path

    for e in _parquet_entries(folder):
        if e.is_file():
            continue
        if e.is_symlink() and not os.path.exists(e.path):
            raise InputError("is a dangling symbolic link in the archive's folder (its target does not exist)",
                             file=display_path(e.path), fix="fix or remove the link")
        raise InputError("is in the archive's folder but is not a regular file", file=display_path(e.path),
                         fix="remove it from the archive's folder")


def has_archive_suffix(path: str | os.PathLike) -> bool:
    """True when the name of ``path`` ends with a Parquet extension (no file system access: what
    :func:`is_archive` decides without ``sniff`` for a path known to be a regular file)."""
    return os.fspath(path).lower().endswith(PARQUET_SUFFIXES)


def is_archive(path: str | os.PathLike, *, sniff: bool = True) -> bool:
    """True when ``path`` is a Parquet file (by extension, or with ``sniff`` by its first four
    bytes) or a folder holding Parquet files. Cheap: reads at most four bytes."""
    p = Path(path)
    try:
        if p.suffix.lower() in PARQUET_SUFFIXES:
            return True
        if p.is_dir():
            return bool(_parquet_files_in(p))
        if sniff and p.is_file():
            with open(p, "rb") as fh:
                return fh.read(4) == PARQUET_MAGIC
    except OSError:
        return False
    return False


def archive_files(path: str | os.PathLike) -> list[str]:
    """The Parquet files of an archive: the file itself, or a folder's Parquet files by name."""
    p = Path(path)
    if p.is_dir():
        _refuse_odd_entries(p)
        files = _parquet_files_in(p)
        if not files:
            raise InputError("the folder holds no Parquet files (.parquet, .parq, .pq)", file=str(p),
                             fix="give the archive's folder or one of its files")
        return [str(f) for f in files]
    return [str(p)]


# --------------------------------------------------------------------------- layout


@dataclass(frozen=True)
class Layout:
    """How one Parquet file's columns map onto spectra.

    Attributes
    ----------
    wavelengths_nm : ndarray (W,)
        Ascending.
    wavelength_columns : tuple of str (W,)
        The column of each wavelength, in ascending wavelength order.
    name_column : str or None
    metadata_columns : tuple of str
        Every other column, in file order.
    """

    wavelengths_nm: np.ndarray
    wavelength_columns: tuple[str, ...]
    name_column: str | None
    metadata_columns: tuple[str, ...]


def wavelength_of(column: str) -> float | None:
    """The wavelength a column name states, or None when the name is not a number.

    ASCII only: a name in another script's digits (Arabic-Indic ``'٣٨٠'``, full-width
    ``'３８０'``) is not a number, so it is a metadata column, as any other name is."""
    if not column.isascii() or not _NUMBER.match(column):
        return None
    return float(column)


def layout_of(schema, file: str) -> Layout:
    """Check an Arrow schema and map its columns (see the module docstring).

    Raises
    ------
    InputError
        No wavelength columns; two columns of the same name (which one holds the names, or the
        metadata, would be a guess); a wavelength of zero or out of range; two columns naming
        one wavelength; a wavelength column that does not hold numbers; a ``name`` column that
        does not hold text.
    """
    pa, _ = _pa()
    wl_cols: list[tuple[float, str]] = []
    meta: list[str] = []
    name_col = None
    seen: dict[float, str] = {}
    names: set[str] = set()
    for fld in schema:
        col = fld.name
        if col in names:
            raise InputError(f"two columns are named {quote(col)}", file=file, field=col,
                             fix="give every column its own name")
        names.add(col)
        w = wavelength_of(col)
        if w is None:
            if col == NAME_COLUMN:
                t = fld.type
                if pa.types.is_dictionary(t):
                    t = t.value_type
                if not is_text_type(t):
                    raise InputError(f"the {NAME_COLUMN!r} column holds {t}, not text", file=file, field=col,
                                     fix="store the spectrum names as strings, or rename the column to keep it as metadata")
                name_col = col
            else:
                meta.append(col)
            continue
        if not _nameable(w):
            raise InputError(f"column {quote(col)} names the wavelength {w:g} nm, which no spectrum has", file=file, field=col,
                             fix="name wavelength columns in nm, e.g. '380' or '380.5'")
        if w in seen:
            raise InputError(f"columns {quote(seen[w])} and {quote(col)} both name {w:g} nm", file=file, field=col,
                             fix="keep one column per wavelength")
        t = fld.type
        if not (pa.types.is_integer(t) or pa.types.is_floating(t) or pa.types.is_decimal(t)):
            raise InputError(f"wavelength column {quote(col)} holds {t}, not numbers", file=file, field=col,
                             fix="store spectral values as floating-point numbers (float64)")
        seen[w] = col
        wl_cols.append((w, col))
    if not wl_cols:
        raise InputError("no column is named by a wavelength: found only "
                         + (", ".join(repr(m) for m in [*([name_col] if name_col else []), *meta][:8]) or "no columns"),
                         file=file,
                         fix="give one column per wavelength, named by the wavelength in nm ('380', '385', …)")
    if len(wl_cols) == 1:  # as the other readers say it (it was "the wavelengths are missing")
        raise InputError(f"only one column is named by a wavelength ({quote(wl_cols[0][1])}): a spectrum needs at "
                         "least two wavelengths", file=file, field=wl_cols[0][1],
                         fix="give one column per wavelength, named by the wavelength in nm ('380', '385', …)")
    wl_cols.sort()
    return Layout(np.array([w for w, _ in wl_cols]), tuple(c for _, c in wl_cols), name_col, tuple(meta))


#: Schema metadata key of the Parquet tables lumeval writes as reports (its value: the table's
#: kind, e.g. ``lumeval.lot-samples``): such a table holds figures, not spectra.
REPORT_KEY = b"lumeval.report"


def report_table_kind(schema) -> str | None:
    """The kind of lumeval report a Parquet file of this Arrow schema is (the value of
    :data:`REPORT_KEY` in its metadata), or None for any other file."""
    kind = (schema.metadata or {}).get(REPORT_KEY)
    return None if kind is None else kind.decode("utf-8", "replace")


def open_file(file: str):
    """(pyarrow.parquet.ParquetFile, Layout) of one archive file, errors as :class:`InputError`."""
    from .._paths import display_path

    pf = _open_parquet(file)
    return pf, layout_of(pf.schema_arrow, display_path(file))


def _open_parquet(file: str):
    """pyarrow.parquet.ParquetFile of ``file`` (its footer read), errors as :class:`InputError`."""
    from .._paths import display_path

    pa, pq = _pa()
    opened_as, file = file, display_path(file)  # open the path as given; show its printable form
    try:
        if opened_as != file:  # undecodable bytes in the name: pyarrow takes only UTF-8 path text
            pf = pq.ParquetFile(pa.OSFile(os.fsencode(opened_as)))
        else:
            pf = pq.ParquetFile(opened_as)
    except FileNotFoundError:
        raise InputError("no such file", file=file, fix="check the path") from None
    except IsADirectoryError:
        raise InputError("is a folder", file=file, fix="give a Parquet file or an archive folder") from None
    except PermissionError:
        raise InputError("cannot be read (permission denied)", file=file, fix="check the file's permissions") from None
    except (pa.ArrowException, OSError, ValueError) as exc:
        raise InputError(f"not a readable Parquet file ({_short(exc)})", file=file,
                         fix="check the file was written completely, or give a CSV, TM-27 or JSON file") from None
    return pf


def _short(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    return text[:160] + ("…" if len(text) > 160 else "")


# --------------------------------------------------------------------------- partitions


def plan_partitions(pf, partition_rows: int | None = None) -> list[tuple[int, list[int]]]:
    """Runs of whole row groups holding at least ``partition_rows`` (default
    :data:`PARTITION_ROWS`) rows each (the last may hold fewer): ``[(first_row, [row group
    indices]), ...]``. ``first_row`` counts from 0."""
    partition_rows = partition_rows or PARTITION_ROWS
    md = pf.metadata
    out: list[tuple[int, list[int]]] = []
    start = 0
    cur: list[int] = []
    cur_rows = 0
    row = 0
    for g in range(md.num_row_groups):
        n = md.row_group(g).num_rows
        if not cur:
            start = row
        cur.append(g)
        cur_rows += n
        row += n
        if cur_rows >= partition_rows:
            out.append((start, cur))
            cur, cur_rows = [], 0
    if cur:
        out.append((start, cur))
    return out


# --------------------------------------------------------------------------- reading


@dataclass(frozen=True)
class ArchiveBatch:
    """A batch of spectra read from one archive file.

    Attributes
    ----------
    spectra : SpectrumSet
        Raw (not prepared). ``metadata`` holds each row's metadata columns as Python values
        only when asked for (``row_metadata=True``).
    metadata : pyarrow.Table or None
        The batch's metadata columns with their Parquet types (None when the file has none).
    first_row : int
        Index (from 0) of the batch's first row within its file.
    """

    spectra: SpectrumSet
    metadata: Any
    first_row: int


def _values(batch, layout: Layout) -> np.ndarray:
    """(n, W) float64 matrix of the wavelength columns of a record batch (nulls → NaN)."""
    pa, _ = _pa()
    n = batch.num_rows
    out = np.empty((n, len(layout.wavelength_columns)))
    names = batch.schema.names
    for j, col in enumerate(layout.wavelength_columns):
        arr = batch.column(names.index(col))
        v = float_values(pa, arr)
        if v is None:  # integer and decimal columns
            if arr.null_count:
                arr = arr.cast("float64").fill_null(float("nan"))
            v = arr.to_numpy(zero_copy_only=False)
        out[:, j] = v
    return out


def float_values(pa, arr) -> np.ndarray | None:
    """The values of a float32 or float64 Arrow array as float64, nulls as NaN, read from the
    array's buffers (a view when float64 without nulls); None for any other type.

    (``Array.to_numpy`` and ``fill_null`` with a Python value import pandas when it is
    installed, 0.2-0.3 s and 45 MB per process; an archive lot does not otherwise need it.)"""
    if arr.type not in (pa.float64(), pa.float32()):
        return None
    if arr.type != pa.float64():
        arr = arr.cast(pa.float64())  # exact
    n, off = len(arr), arr.offset
    if n == 0:
        return np.empty(0)
    buffers = arr.buffers()
    vals = np.frombuffer(buffers[1], dtype=np.float64, count=off + n)[off:]
    if arr.null_count:
        valid = np.unpackbits(np.frombuffer(buffers[0], dtype=np.uint8), count=off + n, bitorder="little")[off:]
        vals = np.where(valid.astype(bool), vals, np.nan)
    return vals


def _names(batch, layout: Layout, file: str, first_row: int) -> list[str]:
    n = batch.num_rows
    if layout.name_column is None:
        return [f"row {first_row + k + 1}" for k in range(n)]
    col = batch.column(batch.schema.names.index(layout.name_column))
    if col.null_count:
        k = int(np.flatnonzero(col.is_null().to_numpy(zero_copy_only=False))[0])
        raise InputError(f"row {first_row + k + 1} has no name (null in the {NAME_COLUMN!r} column)", file=file,
                         field=NAME_COLUMN, fix="give every spectrum a name")
    names = col.to_pylist()  # str already: layout_of admits text name columns only, and nulls are refused above
    blank = None
    if "" in names or any(map(str.isspace, names)):  # at C speed; the row found only when one is blank
        blank = next(k for k, s in enumerate(names) if not s or s.isspace())
    if blank is not None:  # as a null: a spectrum needs a name (the JSON reader refuses an empty one too)
        raise InputError(f"row {first_row + blank + 1} has an empty name in the {NAME_COLUMN!r} column", file=file,
                         field=NAME_COLUMN, fix="give every spectrum a name")
    return names


def json_safe(v):
    """A metadata value as JSON-friendly Python (numbers, text, booleans; others as text:
    binary by :func:`bytes_text`, lists, structs and maps by :func:`nested_text`)."""
    if v is None or isinstance(v, (bool, int, str)):
        return v
    if isinstance(v, float):
        return v if math.isfinite(v) else None
    if isinstance(v, bytes):
        return bytes_text(v)
    if isinstance(v, (list, tuple, dict)):
        return nested_text(v)
    if hasattr(v, "isoformat"):
        return v.isoformat()
    return str(v)


def bytes_text(b: bytes) -> str:
    """Binary as its UTF-8 text when it is valid UTF-8, else ``0x`` and its hex digits."""
    try:
        return b.decode("utf-8")
    except UnicodeDecodeError:
        return "0x" + b.hex()


def nested_text(value) -> str:
    """A nested value (list, struct, map) as JSON-like text: ``["a", "b"]``, ``{"k": 1}``."""
    import json

    def plain(v):
        if isinstance(v, float):
            return v if math.isfinite(v) else None
        if isinstance(v, bytes):
            return bytes_text(v)
        if isinstance(v, dict):
            return {str(k): plain(x) for k, x in v.items()}
        if isinstance(v, list | tuple):
            return [plain(x) for x in v]
        if v is None or isinstance(v, bool | int | str):
            return v
        return v.isoformat() if hasattr(v, "isoformat") else str(v)

    return json.dumps(plain(value), ensure_ascii=False)


def _batch_from_record(batch, layout: Layout, file: str, first_row: int, row_metadata: bool) -> ArchiveBatch:
    pa, _ = _pa()
    # text that is not UTF-8, dates beyond the year 9999: refused here, before any output
    check_batch(batch, [*([layout.name_column] if layout.name_column else []), *layout.metadata_columns],
                file, first_row)
    values = _values(batch, layout)
    names = _names(batch, layout, file, first_row)
    sources = [f"{file}#row {first_row + k + 1}" for k in range(batch.num_rows)]
    meta_tbl = None
    if layout.metadata_columns:
        idx = [batch.schema.names.index(c) for c in layout.metadata_columns]
        meta_tbl = pa.Table.from_batches([batch.select(idx)])
    if row_metadata:
        rows = _python_rows(pa, meta_tbl) if meta_tbl is not None else [{} for _ in names]
        keys = {k: _own_metadata_key(k) for k in (layout.metadata_columns if meta_tbl is not None else ())}
        # a null, or a float that is not finite (no text or JSON number holds it), is no value:
        # the key is absent (NaN was written as the text "None"). The scale is unknown unless a
        # lumeval.scale column states it, as in a JSON document without one, and it is said, so
        # that a text output does not let a metadata line such as "unit: W/(m² nm)" decide it
        # when read back (both found by a review)
        metas = tuple({"lumeval.format": "Parquet archive", "lumeval.scale": "unknown",
                       **{keys[k]: x for k, v in r.items() if (x := json_safe(v)) is not None}}
                      for r in rows)
    else:
        metas = ()
    s = SpectrumSet(layout.wavelengths_nm, values, tuple(names), tuple(sources), (), metas)
    return ArchiveBatch(s, meta_tbl, first_row)


def _python_rows(pa, tbl) -> list[dict]:
    """The rows of the metadata table ``tbl`` as Python dicts (``Table.to_pylist``), through
    :func:`nanosecond_times_as_text`."""
    return cast(list, nanosecond_times_as_text(tbl).to_pylist())


def metadata_values(tbl, start: int = 0, length: int | None = None) -> list[tuple[str, list]]:
    """(column, Python values) of the metadata table ``tbl`` (None: none), ``length`` rows from
    ``start`` (default: all), through :func:`nanosecond_times_as_text`."""
    if tbl is None:
        return []
    if start or length is not None:
        tbl = tbl.slice(start, length)
    tbl = nanosecond_times_as_text(tbl)
    return [(name, tbl.column(name).to_pylist()) for name in tbl.column_names]


def nanosecond_times_as_text(tbl):
    """``tbl`` (an Arrow table) with every time of day in nanoseconds (time64[ns], also inside
    lists and structs) as its text to the nanosecond (``"12:34:56.123456789"``, Arrow's cast):
    Python's ``datetime.time``, which ``to_pylist`` gives, holds microseconds and dropped the
    rest (found by a review). Every reader of archive metadata as Python values goes through
    this, so that inspect, convert and a lot's outputs show the same text."""
    pa, _ = _pa()

    def texts(t):
        if pa.types.is_time64(t) and t.unit == "ns":
            return pa.string()
        if pa.types.is_list(t) or pa.types.is_large_list(t) or pa.types.is_fixed_size_list(t):
            v = texts(t.value_type)
            if v == t.value_type:
                return t
            return (pa.large_list(v) if pa.types.is_large_list(t) else pa.list_(v, t.list_size)
                    if pa.types.is_fixed_size_list(t) else pa.list_(v))
        if pa.types.is_struct(t):
            fields = [t.field(i) for i in range(t.num_fields)]
            new = [f.with_type(texts(f.type)) for f in fields]
            return t if all(a.type == b.type for a, b in zip(fields, new)) else pa.struct(new)
        return t

    for j, f in enumerate(tbl.schema):
        t = texts(f.type)
        if t != f.type:
            tbl = tbl.set_column(j, f.name, tbl.column(j).cast(t))
    return tbl


def _own_metadata_key(column: str) -> str:
    """The metadata key of an archive column: the column's name, or ``meta:NAME`` for one of the
    keys by which lumeval says how a file was read (``lumeval.format``, ``lumeval.column``…):
    such a column replaced lumeval's own (``lumeval.format = mine`` shown as the file's format)
    and ``convert`` dropped it. ``lumeval.scale`` and ``lumeval.value_unit`` are kept: they
    carry a spectrum's scale through lumeval's own archives."""
    return f"meta:{column}" if column in _DERIVED else column


def iter_batches(
    file: str,
    *,
    batch_rows: int = BATCH_ROWS,
    partitions: Sequence[tuple[int, list[int]]] | None = None,
    row_metadata: bool = False,
    opened=None,
) -> Iterator[ArchiveBatch]:
    """Stream one archive file as batches of at most ``batch_rows`` raw spectra.

    Parameters
    ----------
    file : str
    batch_rows : int
    partitions : list of (first_row, row groups), optional
        Read only these partitions (default: every partition of :func:`plan_partitions`).
        Batches restart at each partition.
    row_metadata : bool
        Also put each row's metadata into ``SpectrumSet.metadata`` as Python values (for
        reports of a few spectra; a lot keeps the Arrow table instead).
    opened : (ParquetFile, Layout), optional
        An already opened file.

    Raises
    ------
    InputError
        A bad layout (see :func:`layout_of`), a row without a name, or a file that cannot be
        decoded.
    """
    from .._paths import display_path

    pa, _ = _pa()
    pf, layout = opened if opened is not None else open_file(file)
    file = display_path(file)
    if partitions is None:
        partitions = plan_partitions(pf)
    columns = [*([layout.name_column] if layout.name_column else []), *layout.wavelength_columns,
               *layout.metadata_columns]
    for first_row, groups in partitions:
        row = first_row
        try:
            reader = pf.iter_batches(batch_size=batch_rows, row_groups=groups, columns=columns, use_threads=False)
            pending = []
            pending_rows = 0
            for rb in reader:
                # pyarrow may cut batches at row-group ends: join them back to batch_rows
                pending.append(rb)
                pending_rows += rb.num_rows
                while pending_rows >= batch_rows:
                    tbl = pa.Table.from_batches(pending)
                    head = tbl.slice(0, batch_rows).combine_chunks().to_batches()
                    rest = tbl.slice(batch_rows)
                    yield _batch_from_record(_one(pa, head, tbl.schema), layout, file, row, row_metadata)
                    row += batch_rows
                    pending = rest.combine_chunks().to_batches() if rest.num_rows else []
                    pending_rows = rest.num_rows
            if pending_rows:
                tbl = pa.Table.from_batches(pending).combine_chunks()
                yield _batch_from_record(_one(pa, tbl.to_batches(), tbl.schema), layout, file, row, row_metadata)
        except (pa.ArrowException, OSError) as exc:
            raise InputError(f"cannot be decoded near row {row + 1} ({_short(exc)})", file=file,
                             fix="check the file was written completely") from None


def _one(pa, batches, schema):
    if len(batches) == 1:
        return batches[0]
    if not batches:
        return pa.RecordBatch.from_pylist([], schema=schema)
    return pa.Table.from_batches(batches).combine_chunks().to_batches()[0]


def read_archive(path: str | os.PathLike) -> SpectrumSet:
    """Read a whole archive (a Parquet file or a folder of them) into one raw SpectrumSet.

    For commands that report on every spectrum (``inspect``, ``check``, ``convert``); a lot
    streams instead. Each spectrum's ``metadata`` holds its row's metadata columns (as Python
    values; timestamps as ISO 8601 text). Every file of a folder must give the same
    wavelengths.

    A folder's Parquet tables that lumeval wrote as reports (``lot --samples-parquet`` written
    into the archive's folder: :data:`REPORT_KEY`) hold figures, not spectra: they are left out,
    and the first spectrum's notes name them (a lot lists them as skipped). A file named as the
    archive itself is read as given (and refused: it has no wavelength columns).
    """
    from .._paths import display_path

    files = archive_files(path)
    folder = Path(path).is_dir()
    sets: list[SpectrumSet] = []
    left_out: list[str] = []
    wl, first = None, ""
    for f in files:
        pf = _open_parquet(f)
        kind = report_table_kind(pf.schema_arrow) if folder else None
        if kind is not None:
            left_out.append(f"{display_path(f)} is a lumeval Parquet table ({kind}) of figures, not spectra")
            continue
        opened = (pf, layout_of(pf.schema_arrow, display_path(f)))
        if wl is not None and not np.array_equal(opened[1].wavelengths_nm, wl):
            raise InputError("its wavelength columns differ from those of " + first, file=display_path(f),
                             fix="keep one wavelength grid per archive folder, or read the files one by one")
        if wl is None:
            wl, first = opened[1].wavelengths_nm, display_path(f)
        sets.extend(b.spectra for b in iter_batches(f, batch_rows=65536, row_metadata=True, opened=opened))
    if left_out and wl is None:
        raise InputError("holds no spectra: " + "; ".join(left_out), file=display_path(path),
                         fix="give the archive's folder of spectra, or a CSV, TM-27 or JSON file")
    if not sets:
        raise no_rows_error(path)
    out = sets[0] if len(sets) == 1 else SpectrumSet.concatenate(sets)
    if left_out:  # one note, on the first spectrum (not one per spectrum of a large archive)
        note = "left out of the archive folder: " + "; ".join(left_out)
        out = replace(out, notes=((*out.notes[0], note), *out.notes[1:]))
    return out


def no_rows_error(path: str | os.PathLike) -> InputError:
    """The error of an archive (a file, or a folder of them) without a single row: ``inspect``
    and ``check`` refuse it, a lot lists such a file as unreadable (an export that wrote no
    spectrum must not pass as a lot that was read)."""
    from .._paths import display_path

    return InputError("the archive holds no rows", file=display_path(path), fix="give an archive with at least one spectrum")


def count_rows(path: str | os.PathLike) -> int:
    """Rows (spectra) of an archive, from the Parquet footers alone."""
    return sum(open_file(f)[0].metadata.num_rows for f in archive_files(path))


# --------------------------------------------------------------------------- writing


def wavelength_column_name(wl: float) -> str:
    """``"380"`` for whole nanometres, else Python's shortest round-trip repr (``"380.5"``)."""
    w = float(wl)
    return str(int(w)) if w.is_integer() else repr(w)




def archive_table(spectra: SpectrumSet):
    """The spectra as an Arrow table in the archive layout: ``name``, then one text column
    per metadata key (keys describing how a file was read are left out; a spectrum without
    the key gets a null), then one float64 column per wavelength."""
    pa, _ = _pa()
    keys: list[str] = []
    for m in spectra.metadata:
        for k in m:
            if k not in _DERIVED and k not in keys:
                keys.append(k)
    if all(m.get("lumeval.scale", "unknown") == "unknown" for m in spectra.metadata) and "lumeval.scale" in keys:
        keys.remove("lumeval.scale")  # an archive's scale is unknown unless a column states it
    from ..frames import float_array, string_array  # from buffers: pa.array would import pandas

    cols = {NAME_COLUMN: string_array(pa, spectra.names)}
    for k in keys:
        cols[metadata_column_name(k, cols)] = string_array(pa, [None if m.get(k) is None else str(m[k])
                                                                for m in spectra.metadata])
    for j, w in enumerate(spectra.wavelengths_nm):
        if not _nameable(w):
            raise InputError(f"has a row at {w:g} nm, which a Parquet archive cannot name (its wavelength columns "
                             f"lie above 0 and up to {MAX_WAVELENGTH_NM:g} nm; lumeval's reading drops such a row "
                             "before the figures are computed)", file=_first_source(spectra),
                             fix="delete that row, or convert to CSV or JSON, which keep it")
        cols[wavelength_column_name(w)] = float_array(pa, spectra.values[:, j])
    return pa.table(cols)


def _first_source(spectra: SpectrumSet) -> str:
    """The file the spectra were read from, for a message (their first source, without ``#...``)."""
    from .._paths import source_file

    return source_file(spectra.sources[0]) if len(spectra) else "<spectra>"


def metadata_column_name(key: str, taken) -> str:
    """The column a metadata key is written to: the key itself, or ``meta:KEY`` when the key
    would be read back as something else (``name`` names the spectra, a number is a wavelength)
    or is taken. They were dropped without a word (found by a review); the conversion notes say
    so (:func:`lumeval.spectra.write.conversion_notes`)."""
    col = key
    while col == NAME_COLUMN or wavelength_of(col) is not None or col in taken:
        col = f"meta:{col}"
    return col


def to_parquet_bytes(spectra: SpectrumSet, *, row_group_rows: int = ROW_GROUP_ROWS) -> bytes:
    """Serialise spectra as one Parquet file (written as :func:`write_options` says, row groups of
    ``row_group_rows``).
    Values are float64: reading the file back is exact."""
    pa, pq = _pa()
    sink = pa.BufferOutputStream()
    table = archive_table(spectra)
    pq.write_table(table, sink, row_group_size=row_group_rows, **write_options(table.schema))
    return sink.getvalue().to_pybytes()


def write_archive(spectra: SpectrumSet, path: str | os.PathLike, *, row_group_rows: int = ROW_GROUP_ROWS) -> None:
    """Write ``spectra`` as one Parquet archive file, atomically."""
    from .._io import write_bytes

    write_bytes(path, to_parquet_bytes(spectra, row_group_rows=row_group_rows))


def write_options(schema) -> dict:
    """How lumeval writes every Parquet file (archives and per-sample tables): one home.

    * zstd at level -1 (one of zstd's fast levels) for every column;
    * floating-point columns (spectral values, figures) with Parquet's ``BYTE_STREAM_SPLIT``
      encoding and no dictionary: their values are nearly all distinct, so a dictionary only
      costs (pyarrow tries one for every column by default and falls back page by page:
      writing 200,000 per-sample rows took 1.14 s with it on every column, 0.50 s without it
      on the floats, and the file was 19 % smaller), while splitting each value's bytes into
      streams puts the exponent and high mantissa bytes together, which zstd compresses
      where it could not compress whole doubles. Measured on this machine (2026-12-05, one
      core): the benchmark's 200,000-spectrum archive (5 nm) written 0.30 → 0.22 CPU-s,
      122.7 → 115.7 MB, read back 0.19 → 0.12 CPU-s; the per-sample table of a 200,000-sample
      lot written 0.35 → 0.29 CPU-s, 122.6 → 113.5 MB. The values are unchanged (an encoding,
      not a rounding). ``BYTE_STREAM_SPLIT`` is in the Parquet format since version 2.8
      (2019): pyarrow, DuckDB, polars and Spark 3.2 or later read it; an older reader may not;
    * names, stations, verdicts and warnings (everything not floating-point) dictionary-
      encoded: they repeat.
    """
    import pyarrow as pa

    floats = [f.name for f in schema if pa.types.is_float32(f.type) or pa.types.is_float64(f.type)]
    taken = set(floats)
    return {"compression": "zstd", "compression_level": -1,
            "use_dictionary": [f.name for f in schema if f.name not in taken and not pa.types.is_floating(f.type)],
            "column_encoding": dict.fromkeys(floats, "BYTE_STREAM_SPLIT")}


def write_tables(path: str | os.PathLike, schema, tables, *, option: str | None = None) -> None:
    """Write Arrow ``tables`` (an iterable, consumed one at a time: bounded memory) as one
    Parquet file with ``schema``, through the one atomic writer (:func:`lumeval._io.atomic_output`:
    a temporary file renamed over ``path`` when complete; nothing left behind on failure)."""
    from .._io import atomic_output

    _, pq = _pa()
    with atomic_output(path, option=option) as fh:
        writer = pq.ParquetWriter(fh, schema, **write_options(schema))
        try:
            for t in tables:
                writer.write_table(t)
        finally:
            writer.close()
