"""The 99 CIE 224:2017 colour evaluation samples (CES) and their tristimulus values under light
sources, for :mod:`lumeval.metrics.tm30` (CIE 224:2017 Rf; ANSI/IES TM-30 Rf, Rg, hue bins).

* :func:`ces_reflectances`: the CES at 1 nm (380-780 nm), colour-science 0.4.7's copy of the
  CIE 224:2017 table (:mod:`lumeval._tables`), or at any grid of its integers;
* :func:`_cfi_tables`: per cropped grid, the CIE 1964 10° CMFs, the CES and the (W, 99·3)
  kernel whose product with spectra gives the CES tristimulus values;
* :func:`ces_interpolation` and :func:`_ces_xyz`: on the 1 nm grid, the same values as
  banded products over the table's 5 nm nodes (the 1 nm table is their interpolation).
"""

from __future__ import annotations

from functools import lru_cache
from typing import cast

import numpy as np
from numpy.typing import ArrayLike

from ._rowwise import mm
from .colorimetry import OBSERVER_10, cmfs_at


def _ces_table() -> tuple[np.ndarray, np.ndarray]:
    """The 99 CES reflectances at 1 nm, 380-780 nm: (wl (401,), R (99, 401)), colour-science's
    copy of the CIE 224:2017 table (see lumeval._tables)."""
    from .._tables import table

    wl, R = table("ces")
    if R.shape != (99, 401) or wl[0] != 380.0 or wl[-1] != 780.0:  # pragma: no cover
        raise RuntimeError(f"unexpected CES table shape {R.shape}")
    return wl, R


def ces_reflectances(wavelengths_nm: ArrayLike) -> np.ndarray:
    """The 99 CIE 224:2017 CES reflectances sampled at ``wavelengths_nm`` (integers in 380-780).

    Returns shape (99, W). Source: colour-science 0.4.7's copy of the CIE 224:2017 1 nm table.
    """
    wl_t, R = _ces_table()
    idx = np.rint(np.asarray(wavelengths_nm, dtype=float) - wl_t[0]).astype(int)
    return R[:, idx]


def _ces_cmf_kernel(R: np.ndarray, cmf10: np.ndarray) -> np.ndarray:
    """(W, 99·3) kernel K[w, 3i + c] = R_i(w) · cmf_c(w): XYZ of the 99 CES in one product."""
    return cast("np.ndarray", (R.T[:, :, None] * cmf10[:, None, :]).reshape(R.shape[1], -1))


@lru_cache(maxsize=8)
def _cfi_tables_cached(key: bytes) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    wl = np.frombuffer(key, dtype=float)
    cmf10 = cmfs_at(wl, OBSERVER_10)
    R = ces_reflectances(wl)
    kernel = _ces_cmf_kernel(R, cmf10)
    for a in (cmf10, R, kernel):
        a.setflags(write=False)
    return cmf10, R, kernel


def _cfi_tables(wl: ArrayLike) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(CIE 1964 10° CMFs (W, 3), CES reflectances (99, W), XYZ kernel (W, 297)) on the cropped
    380-780 nm grid ``wl``; cached per grid (read-only arrays)."""
    return _cfi_tables_cached(np.ascontiguousarray(wl, dtype=float).tobytes())


#: The CES nodes every 5 nm (380, 385, ..., 780 nm) of which the 1 nm table is the interpolation.
_CES_NODE_STEP = 5

#: Wavelength nodes of each banded product of :func:`_ces_xyz` (12 nodes: measured fastest of
#: 6-81 on this machine, 2026-12-05; any block size gives the same figures to rounding).
_CES_NODES_PER_BLOCK = 12


@lru_cache(maxsize=1)
def ces_interpolation() -> tuple[np.ndarray, np.ndarray] | None:
    """The CES 1 nm table as an interpolation of its own 5 nm values: (N (99, 81), A (81, 401))
    with ``N @ A`` equal to the table (within 4 units of 2⁻⁵³ of its largest value), or None
    where the table is not such an interpolation (then nothing uses this).

    The 1 nm CES of CIE 224:2017 (colour-science's copy) are a linear interpolation of the
    values every 5 nm: the table has rank 81 (the 82nd singular value is 2·10⁻¹⁶ of the first),
    and each 1 nm value is a fixed combination of at most six neighbouring 5 nm values with
    coefficients that are multiples of 1/625: between 390 and 770 nm those of Sprague's formula
    as CIE 167:2005 gives it (0.0128, −0.0976, 0.9344, 0.1744, −0.0256, 0.0016 one fifth of the
    way), in the first and last two intervals another end rule (tests/test_metrics_tm30_cam02.py). A is found from the table itself (least squares,
    then each coefficient rounded to its multiple of 1/625) and checked against the table: no
    coefficient is typed in here.
    """
    wl, R = _ces_table()
    N = np.ascontiguousarray(R[:, ::_CES_NODE_STEP])
    if N.shape[1] != 81 or not np.array_equal(wl[::_CES_NODE_STEP], np.arange(380.0, 781.0, 5.0)):
        return None  # pragma: no cover
    A = np.linalg.lstsq(N, R, rcond=None)[0]
    A = np.rint(A * 625.0) / 625.0
    if np.max(np.abs(N @ A - R)) > 4.0 * np.finfo(float).eps * np.max(np.abs(R)):
        return None  # pragma: no cover  (a table that is not an interpolation of its 5 nm values)
    for a in (N, A):
        a.setflags(write=False)
    return N, A


@lru_cache(maxsize=8)
def _ces_banded_cached(key: bytes) -> tuple[tuple[tuple[int, int, int, int, np.ndarray], ...], np.ndarray] | None:
    wl = np.frombuffer(key, dtype=float)
    f = ces_interpolation()
    if f is None or wl.size != 401 or not np.array_equal(wl, np.arange(380.0, 781.0)):
        return None
    N, A = f
    cmf10 = _cfi_tables_cached(key)[0]  # the grid's CMFs, as the direct kernel has them
    blocks = []
    for k0 in range(0, N.shape[1], _CES_NODES_PER_BLOCK):
        ks = np.arange(k0, min(N.shape[1], k0 + _CES_NODES_PER_BLOCK))
        support = np.flatnonzero(np.any(A[ks] != 0.0, axis=0))
        lo, hi = int(support[0]), int(support[-1]) + 1
        # B[λ, c·nk + i] = cmf_c(λ) · A[k0 + i, λ] over the wavelengths these nodes reach
        B = np.ascontiguousarray((cmf10[lo:hi, :, None] * A[ks, lo:hi].T[:, None, :]).reshape(hi - lo, -1))
        B.setflags(write=False)
        blocks.append((lo, hi, k0, ks.size, B))
    NT = np.ascontiguousarray(N.T)
    NT.setflags(write=False)
    return tuple(blocks), NT


def _ces_xyz(wl: np.ndarray, S: np.ndarray, kernel: np.ndarray) -> np.ndarray:
    """XYZ (M, 99, 3) of the CES under the sources ``S`` (M, W): ``S @ kernel`` regrouped.

    On the 1 nm grid the CES are an interpolation of their 5 nm values (:func:`ces_interpolation`:
    R = N A), so Σ_λ S(λ) x̄_c(λ) R_i(λ) = Σ_k N_ik G_ck with G_ck = Σ_λ S(λ) x̄_c(λ) A_kλ; each
    row of A reaches at most 25 wavelengths, so G is a few banded products (about 19,000
    multiply-adds a spectrum) and the second step 24,000, against 119,000 for the (401, 297)
    kernel: the same sum in another order (within a few units in the last place of the direct
    product; tests/test_metrics_tm30_cam02.py). Elsewhere (5 nm) the kernel product itself."""
    banded = _ces_banded_cached(np.ascontiguousarray(wl, dtype=float).tobytes())
    if banded is None or kernel.shape[1] != 3 * banded[1].shape[1]:  # (a kernel of other samples: itself)
        return mm(S, kernel).reshape(S.shape[0], -1, 3)  # (M, 99, 3)
    blocks, NT = banded
    n = S.shape[0]
    G = np.empty((n, 3, NT.shape[0]))
    for lo, hi, k0, nk, B in blocks:
        G[:, :, k0 : k0 + nk] = mm(S[:, lo:hi], B).reshape(n, 3, nk)
    XYZ = np.empty((n, NT.shape[1], 3))
    for c in range(3):
        XYZ[:, :, c] = mm(G[:, c, :], NT)
    return XYZ
