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
products and sums, term by term (vectorised), a larger one by one BLAS call per row. Outside
it, :func:`mm` is ``a @ b``.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from typing import cast

import numpy as np

#: Largest inner dimension summed term by term (the 3 × 3 and 3 × 5 products of CIECAM02).
SMALL = 8

_ROWWISE: ContextVar[bool] = ContextVar("lumeval_rowwise_products", default=False)


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
    rows = a.reshape(-1, k)
    out = np.empty((rows.shape[0],) + b.shape[1:])
    for i in range(rows.shape[0]):
        out[i] = rows[i] @ b
    return out.reshape(a.shape[:-1] + b.shape[1:])
