"""Rows of numbers as CSV text: every finite value in Python's shortest repr, read back bit for bit.

A lot's per-sample CSV holds some 100 numbers per sample (two million for 20,000 samples);
formatted with ``repr`` one Python float at a time they were most of the time of writing it.
For large blocks the text of every cell is made by Arrow's cast of float64 to string (C++,
the shortest round-trip digits, as ``repr``) and the cells of each row joined by Arrow
(``binary_join``), about four times faster (0.23 → 0.06 s for 4,096 rows × 95 columns,
measured side by side); ``lumeval convert``'s CSV (one row per wavelength, a cell per
spectrum) is made the same way.

Arrow writes the same digits as ``repr`` but not always in the same form: a whole number
without ``.0`` (``600`` for ``600.0``), positional notation down to 1e-6 (``0.00005`` for
``5e-05``) and exponents at other thresholds above 1e10. So Arrow's text is used only for
values whose form is the same in both, non-integral with 1e-4 <= |v| < 1e10 (over 27 million
values of many magnitudes and bit patterns, the two texts were identical there: checked while
writing this, and on a probe of such values the first time a process uses it — any difference,
say from another pyarrow version, and ``repr`` is used throughout); every other value is
formatted by ``repr``, and missing or non-finite values are empty cells.
"""

from __future__ import annotations

import math

import numpy as np

#: Blocks with fewer cells than this are formatted by ``repr`` alone (importing pyarrow costs
#: ~0.1 s, which a few thousand cells do not repay).
ARROW_CELLS = 50_000
#: Arrow's text equals ``repr`` for non-integral values of magnitude in [LOW, HIGH).
LOW, HIGH = 1e-4, 1e10

_arrow_ok: bool | None = None


def _python_cells(block: np.ndarray) -> list[str]:
    """The rows of ``block`` as comma-joined ``repr`` cells (empty for non-finite values),
    column by column from Python floats."""
    rows, ncols = block.shape
    if ncols == 0:
        return [""] * rows
    finite = np.isfinite(block)
    cols: list[list[str]] = []
    for c, ok in enumerate(finite.all(axis=0).tolist()):
        vals = block[:, c].tolist()
        if ok:
            cols.append(list(map(repr, vals)))
        elif not finite[:, c].any():
            cols.append([""] * rows)
        else:
            cols.append([repr(v) if math.isfinite(v) else "" for v in vals])
    return list(map(",".join, zip(*cols)))


def _plain(v: np.ndarray) -> np.ndarray:
    """Where Arrow's text of ``v`` is ``repr``'s (see the module docstring)."""
    with np.errstate(invalid="ignore"):
        a = np.abs(v)
        return (a >= LOW) & (a < HIGH) & (v != np.floor(v))


def _arrow_texts(pa, v: np.ndarray):
    from ..frames import cast_to_string, float_array

    return cast_to_string(pa, float_array(pa, v))


def _arrow_usable() -> bool:
    """pyarrow installed and its text of a probe of values equal to ``repr``'s (once a process)."""
    global _arrow_ok
    if _arrow_ok is None:
        try:
            import pyarrow as pa
        except ImportError:
            _arrow_ok = False
            return False
        rng = np.random.default_rng(20261203)
        probe = np.concatenate([10.0 ** rng.uniform(-4.0, 10.0, 4000) * np.where(rng.random(4000) < 0.5, -1.0, 1.0),
                                [1.0001e-4, 0.1, 0.3, 2.675, 1 / 3, 9999999999.5, 123456.789, 6.02214076e9]])
        probe = probe[_plain(probe)]
        _arrow_ok = _arrow_texts(pa, probe).to_pylist() == list(map(repr, probe.tolist()))
    return _arrow_ok


def _repr_texts(pa, v: np.ndarray, where: np.ndarray):
    """An Arrow string array as long as ``v``: ``repr`` of the finite values at the sorted
    indices ``where``, empty elsewhere (only those values become Python strings; ``repr`` of a
    float is ASCII, so its bytes are valid UTF-8 as they are)."""
    xs = v[where]
    fin = np.isfinite(xs)
    enc = [repr(x).encode("ascii") for x in xs[fin].tolist()]
    lengths = np.zeros(v.shape[0], dtype=np.int64)
    lengths[where[fin]] = np.fromiter(map(len, enc), dtype=np.int64, count=len(enc))
    offsets = np.zeros(v.shape[0] + 1, dtype=np.int32)  # a block's text is far below 2**31 bytes
    np.cumsum(lengths, out=offsets[1:])
    return pa.StringArray.from_buffers(v.shape[0], pa.py_buffer(offsets), pa.py_buffer(b"".join(enc)))


#: Cells formatted by one Arrow call at most, in whole rows (a row at least): Arrow's cast
#: to text ran at 0.30 s for 4 million cells in calls of 64 k-256 k cells, 0.54 s in one call
#: (its growing output buffer), and its string arrays have 32-bit offsets.
ARROW_CALL_CELLS = 2**18


def number_rows(block: np.ndarray) -> list[str]:
    """Each row of the float block ``block`` (rows, columns) as its cells joined by commas: the
    shortest repr of every finite value, an empty cell for a missing one.

    A large block is formatted by Arrow a few rows at a time, all their cells in one array
    (row by row, whatever the shape: a wide block of a few rows of 20,000 cells, or a tall one),
    each row's cells then joined by one ``binary_join``."""
    block = np.asarray(block, dtype=float)
    rows, ncols = block.shape
    if ncols == 0 or rows * ncols < ARROW_CELLS or not _arrow_usable():
        return _python_cells(block)
    import pyarrow as pa

    from ..frames import arrow_call, bool_array, joined_runs

    step = max(1, ARROW_CALL_CELLS // ncols)
    out: list[str] = []
    for r in range(0, rows, step):
        flat = np.ascontiguousarray(block[r: r + step]).reshape(-1)  # row-major: a row's cells together
        n = flat.shape[0] // ncols
        plain = _plain(flat)
        if not plain.any():
            texts = _repr_texts(pa, flat, np.arange(flat.shape[0]))
        else:
            texts = _arrow_texts(pa, flat)
            if not plain.all():
                texts = arrow_call("if_else", bool_array(pa, plain), texts, _repr_texts(pa, flat, np.flatnonzero(~plain)))
        out += joined_runs(pa, texts, np.arange(0, n * ncols + 1, ncols), b",").to_pylist()
    return out
