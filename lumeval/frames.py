"""Tables of results: an :class:`~lumeval.engine.Evaluation` or a lot as Arrow / pandas.

* :func:`evaluation_to_arrow` / :func:`evaluation_to_pandas` (also ``Evaluation.to_arrow()``
  and ``Evaluation.to_pandas()``): one row per spectrum; columns ``name``, ``source``, the
  spectrum's metadata (a Parquet archive's metadata columns, or a file's header keys), one
  float64 column per figure of the registry (:func:`lumeval.figures.names`) (NaN = undefined; in
  pandas a NaN), and ``warnings`` (the spectrum's warnings joined with `` | ``).
* :func:`lot_samples_table` / :func:`write_samples_parquet`: the per-sample rows of a lot
  (``lumeval lot --samples-parquet``), the archive's metadata columns with their Parquet types.

Numbers are the engine's float64 values, unrounded. pyarrow and pandas are imported only when
these functions run (``pip install lumeval[archive]``).
"""

from __future__ import annotations

import numpy as np

#: Metadata keys that describe how a file was read (not data about the sample).
from .spectra.model import DERIVED_KEYS as _READ_KEYS


def _pa():
    try:
        import pyarrow as pa
    except ImportError:  # pragma: no cover - the extra is part of the test install
        from .errors import UsageError

        raise UsageError("Arrow and pandas tables need pyarrow", fix="pip install 'lumeval[archive]'") from None
    return pa


def _figure_names() -> tuple[str, ...]:
    from .figures import names

    return names()


def _metadata_columns(metadata, reserved: set[str]) -> dict[str, list]:
    keys: list[str] = []
    for m in metadata:
        for k in m:
            if k not in _READ_KEYS and k not in keys:
                keys.append(k)
    out = {}
    for k in keys:
        col = f"meta:{k}" if k in reserved else k
        out[col] = [m.get(k) for m in metadata]
    return out


def evaluation_to_arrow(ev):
    """An Evaluation as a ``pyarrow.Table`` (see the module docstring)."""
    pa = _pa()
    names = _figure_names()
    reserved = {"name", "source", "warnings", *names}
    cols: dict[str, object] = {
        "name": pa.array(list(ev.spectra.names), type=pa.string()),
        "source": pa.array(list(ev.spectra.sources), type=pa.string()),
    }
    for k, values in _metadata_columns(ev.spectra.metadata, reserved).items():
        try:
            cols[k] = pa.array(values)
        except (pa.ArrowException, TypeError, ValueError):  # mixed kinds: keep the text
            cols[k] = pa.array([None if v is None else str(v) for v in values], type=pa.string())
    for k in names:
        cols[k] = pa.array(np.asarray(ev.figure(k), dtype=float), type=pa.float64())
    cols["warnings"] = pa.array([" | ".join(w) for w in ev.warnings], type=pa.string())
    return pa.table(cols)


def evaluation_to_pandas(ev):
    """An Evaluation as a ``pandas.DataFrame`` (see the module docstring); the index is the
    row number."""
    import pandas as pd

    names = _figure_names()
    reserved = {"name", "source", "warnings", *names}
    data: dict[str, object] = {"name": list(ev.spectra.names), "source": list(ev.spectra.sources)}
    data.update(_metadata_columns(ev.spectra.metadata, reserved))
    for k in names:
        data[k] = np.asarray(ev.figure(k), dtype=float)
    data["warnings"] = [" | ".join(w) for w in ev.warnings]
    return pd.DataFrame(data)


# --------------------------------------------------------------------------- lots


def lot_samples_table(run, start: int = 0, stop: int | None = None):
    """Rows ``start:stop`` of a lot's per-sample table as a ``pyarrow.Table``.

    Columns: ``name``, ``source``, the archive metadata columns (prefixed ``meta:`` on a
    clash), ``verdict`` (null without per-sample clauses), ``outlier``, ``outlier_reasons``,
    ``delta_upvp_centroid``, ``steps_centroid``, ``delta_upvp_nominal``, ``steps_nominal``,
    every figure, ``clause:ID`` per per-sample clause, ``warnings`` — the per-sample CSV's
    columns, typed.
    """
    pa = _pa()
    from .render.lot_report import metadata_headers

    n = len(run)
    stop = n if stop is None else min(stop, n)
    sl = slice(start, stop)
    st = run.stats
    f64 = pa.float64()

    def num(a):
        if a is None:
            return pa.nulls(stop - start, f64)
        return float_array(pa, a[sl])

    cols: dict[str, object] = {
        "name": _text_array(pa, run.names, start, stop),
        "source": _text_array(pa, run.sources, start, stop),
    }
    if run.metadata is not None:
        part = run.metadata.slice(start, stop - start)
        for head, name in zip(metadata_headers(run), run.metadata.column_names):
            cols[head] = part.column(name)
    verdicts = run.sample_verdicts
    cols["verdict"] = string_array(pa, verdicts[sl]) if verdicts is not None else pa.nulls(stop - start, pa.string())
    cols["outlier"] = bool_array(pa, st.outlier[sl])
    cols["outlier_reasons"] = _joined_array(pa, st.outlier_reasons, start, stop)
    cols["delta_upvp_centroid"] = num(st.d_upvp_centroid)
    cols["steps_centroid"] = num(st.steps_centroid)
    cols["delta_upvp_nominal"] = num(st.d_upvp_nominal)
    cols["steps_nominal"] = num(st.steps_nominal)
    from .lots.columns import figure_rows

    mat = figure_rows(run.figures, start, stop)  # rows start:stop of every figure, read once
    for j, k in enumerate(run.figures):
        cols[k] = float_array(pa, mat[:, j])
    if run.check is not None:
        for r in run.check.results:
            cols[f"clause:{r.clause_id}"] = string_array(pa, r.outcome[sl])
    cols["warnings"] = _joined_array(pa, run.warnings, start, stop)
    return pa.table(cols)


# Arrow arrays from their buffers: pyarrow's ``pa.array`` (of a list or an ndarray) and ``pa.scalar``
# import pandas when it is installed (0.2-0.3 s and 45 MB per process), which a lot never needs.


def float_array(pa, a):
    """A float64 Arrow array of the values ``a`` (NaN stays NaN, as ``pa.array`` keeps it)."""
    v = np.ascontiguousarray(a, dtype=float)
    return pa.Array.from_buffers(pa.float64(), v.shape[0], [None, pa.py_buffer(v)])


def bool_array(pa, a):
    """A boolean Arrow array of the values ``a`` (Arrow's bits: least significant first)."""
    v = np.asarray(a, dtype=bool)
    return pa.Array.from_buffers(pa.bool_(), v.shape[0], [None, pa.py_buffer(np.packbits(v, bitorder="little"))])


def string_array(pa, values):
    """An Arrow string array of Python strings, None as null; a lone surrogate raises
    UnicodeEncodeError, as ``pa.array`` does."""
    vals = list(values)
    n = len(vals)
    n_null = vals.count(None)  # (C speed; most columns have none, and then no per-value test)
    if n_null:
        enc = [b"" if v is None else v.encode("utf-8") for v in vals]
    else:
        enc = list(map(str.encode, vals))  # UTF-8, strict: a lone surrogate raises
    data = b"".join(enc)
    if len(data) >= 2**31:
        return pa.array(vals, type=pa.string())
    offsets = np.zeros(n + 1, dtype=np.int32)
    np.cumsum(np.fromiter(map(len, enc), dtype=np.int32, count=n), out=offsets[1:])  # < 2**31 in all
    validity = None
    if n_null:
        nulls = np.fromiter((v is None for v in vals), dtype=bool, count=n)
        validity = pa.py_buffer(np.packbits(~nulls, bitorder="little"))
    return pa.StringArray.from_buffers(n, pa.py_buffer(offsets), pa.py_buffer(data), validity, n_null)


def arrow_strings(pa, data: bytes, offsets: np.ndarray):
    """An Arrow string array from UTF-8 ``data`` and (n + 1) ``offsets``, or None when the bytes
    are not valid UTF-8 (a lone surrogate of an undecodable file name) or do not fit 32-bit
    offsets."""
    if len(data) >= 2**31:
        return None
    arr = pa.StringArray.from_buffers(len(offsets) - 1, pa.py_buffer(offsets.astype(np.int32)), pa.py_buffer(data))
    try:
        arr.validate(full=True)
    except pa.ArrowInvalid:
        return None
    return arr


def _text_array(pa, column, start: int, stop: int):
    """Rows ``start:stop`` of a text column as an Arrow string array: straight from the packed
    bytes of a :class:`lumeval.lots.columns.TextColumn` (no Python string per row), else (or
    for bytes that are not valid UTF-8) one string at a time, as before."""
    if hasattr(column, "utf8_slice"):
        arr = arrow_strings(pa, *column.utf8_slice(start, stop))
        if arr is not None:
            return arr
    return string_array(pa, column[start:stop])


def _joined_array(pa, column, start: int, stop: int):
    """Rows ``start:stop`` of a column of tuples of strings, each tuple joined with " | ", as an
    Arrow string array (packed :class:`lumeval.lots.columns.TextTuples`: joined by Arrow's
    ``binary_join``; else one ``str.join`` per row)."""
    if hasattr(column, "utf8_slice"):
        data, str_offsets, tuple_offsets = column.utf8_slice(start, stop)
        strings = arrow_strings(pa, data, str_offsets)
        if strings is not None and tuple_offsets[-1] < 2**31:
            return joined_runs(pa, strings, tuple_offsets, b" | ")
    rows = column[start:stop]
    full = np.flatnonzero(np.fromiter(map(len, rows), dtype=np.int64, count=len(rows)))
    if 4 * full.size > len(rows):
        return string_array(pa, [" | ".join(r) for r in rows])
    # mostly empty (the outlier reasons of a lot): only the rows that say something are joined
    enc = [" | ".join(rows[k]).encode("utf-8") for k in full.tolist()]
    lengths = np.zeros(len(rows), dtype=np.int64)
    lengths[full] = np.fromiter(map(len, enc), dtype=np.int64, count=len(enc))
    offsets = np.concatenate([np.zeros(1, dtype=np.int64), np.cumsum(lengths)])
    arr = arrow_strings(pa, b"".join(enc), offsets) if offsets[-1] < 2**31 else None
    return arr if arr is not None else string_array(pa, [" | ".join(r) for r in rows])


def _compute_functions():
    """The module with Arrow's ``call_function`` and ``CastOptions``: the extension module that
    ``pyarrow.compute`` wraps, so that a process that only formats numbers does not import
    ``pyarrow.compute`` itself (that import writes a Python wrapper for each of Arrow's
    functions: measured 0.04 s in a warm process, 0.1 s in each forked worker formatting a
    lot's CSV, against 0.004 s for the extension module); the public module where the
    extension module's layout differs (another pyarrow version)."""
    try:
        import pyarrow._compute as functions
    except ImportError:  # pragma: no cover - another pyarrow layout
        import pyarrow.compute as functions
    return functions


def arrow_call(name: str, *args, options=None):
    """Arrow's compute function ``name`` on ``args`` (``pyarrow.compute.call_function``)."""
    return _compute_functions().call_function(name, list(args), options)


def cast_to_string(pa, arr):
    """``pyarrow.compute.cast(arr, pa.string())`` (a safe cast) through :func:`arrow_call`."""
    return arrow_call("cast", arr, options=_compute_functions().CastOptions.safe(pa.string()))


def joined_runs(pa, strings, offsets: np.ndarray, sep: bytes):
    """Runs of the Arrow string array ``strings`` joined with ``sep``: run k is
    ``strings[offsets[k]:offsets[k + 1]]`` ((runs + 1) int offsets below 2**31), joined by
    Arrow's ``binary_join``; the separator is an Arrow scalar taken from an array
    (``pa.scalar`` imports pandas)."""
    offs = np.ascontiguousarray(offsets, dtype=np.int32)
    lists = pa.ListArray.from_arrays(pa.Array.from_buffers(pa.int32(), offs.shape[0], [None, pa.py_buffer(offs)]),
                                     strings)
    return arrow_call("binary_join", lists, arrow_strings(pa, sep, np.array([0, len(sep)]))[0])


#: Schema metadata key of the cautions in a ``--samples-parquet`` table (a JSON list of strings).
CAUTIONS_KEY = b"lumeval.cautions"

#: Rows converted to Arrow at a time when writing a lot's samples.
SAMPLES_SLICE = 16384


def write_samples_parquet(run, path, *, option: str | None = "--samples-parquet") -> None:
    """Write a lot's per-sample table (:func:`lot_samples_table`) as Parquet, slice by slice,
    atomically (:func:`lumeval.spectra.archive.write_tables`)."""
    import json

    from .render.tables import CAUTIONS
    from .spectra.archive import REPORT_KEY, write_tables

    first = lot_samples_table(run, 0, min(SAMPLES_SLICE, len(run)))
    # marked as lumeval's, so that a later lot over the folder it is written in skips it; the
    # cautions every report carries (docs/cautions.md) as a JSON list of strings: a table of
    # verdicts went without them (found by a review)
    first = first.replace_schema_metadata({**(first.schema.metadata or {}), REPORT_KEY: b"lumeval.lot-samples",
                                           CAUTIONS_KEY: json.dumps(list(CAUTIONS)).encode("utf-8")})

    def slices():
        yield first
        for start in range(SAMPLES_SLICE, len(run), SAMPLES_SLICE):
            yield lot_samples_table(run, start, start + SAMPLES_SLICE).cast(first.schema)

    write_tables(path, first.schema, slices(), option=option)
