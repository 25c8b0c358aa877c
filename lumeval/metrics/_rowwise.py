"""Matrix products whose every row is independent of the other rows, for cached tables.

A BLAS matrix product's rows change in their last bits with the other rows of the product
(measured: up to 1.4e-13 in a (13, 401) @ (401, 297) product against the same rows one at a
time, and 2e-16 in an (N, 3) @ (3, 3) one; how the library blocks the rows, and which of its
kernels takes which rows, is its own affair). For the test side of the figures that is
harmless (a batch is evaluated the same way in every run), but an entry of a lazily filled
table (:mod:`lumeval.metrics.reference_table`) computed together with whatever other entries a
process needed at that moment would depend on what that process had evaluated before.

Within :func:`rowwise_products`, :func:`mm` computes ``a @ b`` so that each row of the result
depends on its own row of ``a`` only: an inner dimension of at most :data:`SMALL` by explicit
products and sums, term by term (vectorised), a larger one by BLAS products of a fixed number
of rows (:data:`ROW_BLOCK`, the last block padded with zero rows). A product's rows never
depend on the *values* of its other rows, only on how the library's code treats each row
position; so a row's bits are the same in every block where every position is computed alike.
That is checked once a process for each shape of ``b`` (:func:`_blocks_agree`: a block of
random rows against the same rows rotated to other positions, and a row alone with zero rows
under it); where it does not hold, each row is one BLAS call of its own (twice the time for the
tables' 401 × 297 products, ten times for matrix-vector ones). Outside the block, :func:`mm`
is ``a @ b``.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from typing import cast

import numpy as np

#: Largest inner dimension summed term by term (the 3 × 3 and 3 × 5 products of CIECAM02).
SMALL = 8

#: Rows of every BLAS product within :func:`rowwise_products` (an inner dimension above SMALL).
ROW_BLOCK = 16

_ROWWISE: ContextVar[bool] = ContextVar("lumeval_rowwise_products", default=False)
#: (shape, strides, dtype) of ``b`` -> whether a row's bits are those of any position (see there).
_AGREE: dict[tuple[object, ...], bool] = {}


@contextmanager
def rowwise_products() -> Iterator[None]:
    """Within the block, :func:`mm` gives rows independent of the other rows."""
    token = _ROWWISE.set(True)
    try:
        yield
    finally:
        _ROWWISE.reset(token)


def mm(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``a @ b`` for ``a`` (..., k) and ``b`` (k,) or (k, n); row-independent within
    :func:`rowwise_products` (see the module docstring)."""
    if not _ROWWISE.get():
        return cast("np.ndarray", a @ b)
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    k = b.shape[0]
    if k <= SMALL:
        if b.ndim == 1:
            out = a[..., 0] * b[0]
            for j in range(1, k):
                out = out + a[..., j] * b[j]
        else:
            out = a[..., 0, None] * b[0]
            for j in range(1, k):
                out = out + a[..., j, None] * b[j]
        return cast("np.ndarray", out)
    rows = np.ascontiguousarray(a.reshape(-1, k))
    m = rows.shape[0]
    out = np.empty((m,) + b.shape[1:])
    if _blocks_agree(b):
        full = m - m % ROW_BLOCK
        for s in range(0, full, ROW_BLOCK):
            out[s : s + ROW_BLOCK] = rows[s : s + ROW_BLOCK] @ b
        if full < m:
            pad = np.zeros((ROW_BLOCK, k))
            pad[: m - full] = rows[full:]
            out[full:] = (pad @ b)[: m - full]
    else:
        for i in range(m):
            out[i] = rows[i] @ b
    return out.reshape(a.shape[:-1] + b.shape[1:])


def _blocks_agree(b: np.ndarray) -> bool:
    """Whether ``x @ b`` for ``x`` of :data:`ROW_BLOCK` rows gives each row the same bits at
    every position of the block (once a process for each shape, strides and type of ``b``: the
    library's code path depends on those, not on the values): a block of random rows against
    the same block rotated by several offsets, and a row alone with zero rows under it against
    the same row within the block."""
    key = (b.shape, b.strides, b.dtype.str)
    ok = _AGREE.get(key)
    if ok is None:
        x = np.random.default_rng(20261205).normal(size=(ROW_BLOCK, b.shape[0]))
        y = x @ b
        ok = all(np.array_equal(np.roll(x, r, axis=0) @ b, np.roll(y, r, axis=0)) for r in (1, 2, 3, 5, 8, 13))
        alone = np.zeros_like(x)
        alone[0] = x[ROW_BLOCK - 1]
        ok = ok and bool(np.array_equal((alone @ b)[0], y[ROW_BLOCK - 1]))
        _AGREE[key] = ok
    return ok
