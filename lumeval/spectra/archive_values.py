"""Metadata values of a Parquet archive that no output could show, refused when read.

Every output of a lot or a report turns an archive's metadata into text or Python values
(the per-sample CSV, the JSON, the terminal and HTML reports, ``convert``). Two kinds of value
stopped those outputs with an internal error (exit 3) or went into a ``--samples-parquet``
table that Arrow's own validation rejects (found by a review):

* a text column (``string``, also inside lists, structs, maps or a dictionary) holding bytes
  that are not UTF-8: Parquet's text type is UTF-8, so the file is damaged or was written as
  text by mistake (binary columns are carried, as ``0x`` and hexadecimal digits where they are
  not UTF-8);
* a date, timestamp or duration outside what Python's ``datetime`` holds (years 1-9999,
  durations below 10⁹ days): a value such as the year 10000 is a unit slip or a placeholder.

:func:`check_batch` looks at a batch's metadata columns (every value, at C speed: one UTF-8
validation per text column and the smallest and largest value of each temporal one) and raises
:class:`~lumeval.errors.InputError` naming the file, the column and, for a plain text column,
the row.
"""

from __future__ import annotations

from ..errors import InputError, quote


def check_batch(batch, columns, file: str, first_row: int) -> None:
    """Raise :class:`InputError` for the first column of ``columns`` (names in the record batch
    ``batch``, whose first row is the archive's row ``first_row`` + 1) that holds a value no
    output can show (see the module docstring)."""
    names = batch.schema.names
    for name in columns:
        problem = _problem(batch.column(names.index(name)))
        if problem is None:
            continue
        what, row = problem
        where = f"row {first_row + row + 1}: " if row is not None else ""
        if what == "text":
            raise InputError(f"{where}the {quote(name)} column holds text that is not valid UTF-8", file=file,
                             field=name, fix="write the column as UTF-8 text, or as binary")
        span = "durations up to 999,999,999 days" if what == "duration" else "dates from the year 1 to 9999"
        raise InputError(f"{where}the {quote(name)} column holds a {what} that cannot be shown ({span})",
                         file=file, field=name,
                         fix="check the column's unit and values (a placeholder date, or seconds stored as "
                             "milliseconds?)")


def _problem(arr) -> tuple[str, int | None] | None:
    """('text' or the temporal kind, the row or None) of the first value of the Arrow array
    ``arr`` that no output can show, or None."""
    import pyarrow as pa

    t = arr.type
    types = pa.types
    if types.is_dictionary(t):
        found = _problem(arr.dictionary)
        return None if found is None else (found[0], None)
    if types.is_list(t) or types.is_large_list(t) or types.is_fixed_size_list(t) or _is(types, "is_list_view", t):
        found = _problem(arr.flatten())
        return None if found is None else (found[0], None)
    if types.is_map(t):
        for part in (arr.keys, arr.items):
            found = _problem(part)
            if found is not None:
                return found[0], None
        return None
    if types.is_struct(t):
        for k in range(t.num_fields):
            found = _problem(arr.field(k))
            if found is not None:
                return found[0], None
        return None
    if is_text_type(t):
        try:
            arr.validate(full=True)
        except pa.ArrowInvalid:
            return "text", _bad_text_row(arr)
        return None
    if types.is_timestamp(t) or types.is_date(t) or types.is_duration(t):
        duration = types.is_duration(t)
        from ..frames import arrow_call

        try:
            # (Arrow has no min_max kernel for durations: theirs over the counts of the unit)
            ends = arrow_call("min_max", arr.cast(pa.int64()) if duration else arr)
            for end in ("min", "max"):
                (pa.scalar(ends[end].as_py(), type=t) if duration else ends[end]).as_py()
        except (OverflowError, ValueError, pa.ArrowException):
            return "duration" if duration else "date", _bad_temporal_row(arr)
        return None
    return None


def _is(types, name: str, t) -> bool:
    f = getattr(types, name, None)  # types that older pyarrow versions lack
    return bool(f(t)) if f is not None else False


def is_text_type(t) -> bool:
    """An Arrow text type (string, large string, string view)."""
    import pyarrow as pa

    types = pa.types
    return bool(types.is_string(t) or types.is_large_string(t) or _is(types, "is_string_view", t))


def is_binary_type(t) -> bool:
    """An Arrow binary type (binary, large, fixed-size, view)."""
    import pyarrow as pa

    types = pa.types
    return bool(types.is_binary(t) or types.is_large_binary(t) or types.is_fixed_size_binary(t)
                or _is(types, "is_binary_view", t))


def _bad_text_row(arr) -> int | None:
    """The first row whose text is not UTF-8 (an error path: value by value)."""
    for k in range(len(arr)):
        try:
            arr[k].as_py()
        except UnicodeDecodeError:
            return k
    return None


def _bad_temporal_row(arr) -> int | None:
    """The first row whose date, timestamp or duration Python cannot hold (an error path)."""
    for k in range(len(arr)):
        try:
            arr[k].as_py()
        except (OverflowError, ValueError):
            return k
    return None
