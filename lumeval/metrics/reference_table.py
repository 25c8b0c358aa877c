"""The reference side of CIE 13.3 and CIE 224 / TM-30, tabulated by CCT once per grid.

Every reference-based figure compares a test side (the samples under the spectrum itself) with
a reference side (the same samples under the reference illuminant at the spectrum's reference
temperature T). The reference side depends on T and on the wavelength grid only, never on the
test spectrum, so the engine takes it from tables instead of building a reference SPD and
running CIECAM02 for every spectrum:

- CIE 13.3 (:mod:`lumeval.metrics.cri`): the reference's CIE 1960 (u, v) and the U*V*W* of the
  14 test-colour samples (44 numbers), on the spectrum's own prepared grid;
- CIE 224 / TM-30 (:mod:`lumeval.metrics.tm30`): the CAM02-UCS J′a′b′ of the 99 colour
  evaluation samples (297 numbers) on the 1 nm or 5 nm grid of 380-780 nm, with the blend
  normalised with the CIE 1964 10° ȳ (TM-30) and, for 4000-5000 K, also with the 2° ȳ (CIE 224
  Rf); the reference hue is atan2(b′, a′) of these (:func:`lumeval.metrics.tm30.reference_hue`).

How each range of T is tabulated (T_lo = 900 K, T_hi = 40,000 K, the range of the Ohno table,
so every reference temperature the engine produces, 999.5-25,000.5 K, lies inside):

1. **Planckian** (T < 4000 K for TM-30, T < 5000 K for CIE 13.3): Planck's law is analytic in
   1/T, so the quantities are tabulated on nodes uniform in mired (μ = 10⁶/T, spacing ≤ 1 MK⁻¹)
   and interpolated by the 6-point Lagrange polynomial through the nearest nodes (a one-sided
   stencil at the ends of a range; common practice, no source). Measured error of this
   interpolation against the direct computation: ≤ 3e-11 in J′a′b′ (1000-4000 K).
2. **CIE daylight** (T > 5000 K for TM-30, T ≥ 5000 K for CIE 13.3): CIE 15:2004 rounds M1 and
   M2 to three decimals, so the daylight SPD is a step function of T: every rounded pair
   (M1, M2) holds over a small range of temperatures. The table is indexed by that pair
   (computed from T exactly as the direct path does, both branches of x_D included), so these
   entries are the direct computation itself, not an approximation (up to the last bits of the
   row-by-row products they are computed with, below).
3. **Blend** (4000 K ≤ T ≤ 5000 K, TM-30 / CIE 224): the reference depends on T (Planckian
   part, weight m) and on the rounded (M1, M2). With d = (M1, M2)_rounded − (M1, M2)_exact
   (|d| ≤ 5e-4 per coefficient) the quantities are a second-order Taylor expansion in d
   around the unrounded coefficients: F + G·d + ½ dᵀHd, tabulated per node (nodes ≤ 0.5 MK⁻¹
   apart): F by 4-point and G by 3-point Lagrange interpolation in mired, H at the nearest
   node; G and H by central differences with step 5e-4. Both blend normalisations (10° ȳ for
   TM-30, 2° ȳ for CIE 224 Rf) sit side by side in one table. Measured error ≤ 2e-9 in J′a′b′.

Outside T_lo-T_hi (not produced by the engine) the reference side is computed directly; a
non-finite or non-positive T gives NaN rows. The whole set is checked against the direct
computation (tests/test_metrics_reference_table.py): every figure (Ra, R1-R14, DC, Rf, Rg,
Rf,h, Rcs,h, Rhs,h, CIE 224 Rf) within 1e-7 over a dense sweep of 1000-25,000 K including the
switches at 4000, 5000 and 7000 K, off the locus to |Duv| = 0.08, on 1 nm and 5 nm grids.

Tables are filled lazily: a node or daylight pair is computed the first time a spectrum needs
it, with matrix products whose rows do not depend on the other rows computed with them
(:mod:`lumeval.metrics._rowwise`) and one BLAS thread, so that an entry is the same bits
whatever the process needed before (a BLAS product's rows change in their last bits with the
other rows of the product: before, the same lot gave figures differing in the 13th digit from
run to run when its batches went to worker processes in another order). One spectrum costs a
handful of reference computations and a long lot at most the whole
table (≈ 2 MB for the Planckian range, ≈ 2.9 MB for the blend, ≈ 2.4 kB per daylight pair). They are cached per grid
(the last 8 grids) and filled under a lock.
"""

from __future__ import annotations

import itertools
import threading
from collections.abc import Callable
from dataclasses import dataclass
from functools import lru_cache
from typing import cast

import numpy as np
from numpy.typing import ArrayLike

from .._workers import one_blas_thread
from ._rowwise import rowwise_products
from .colorimetry import OBSERVER_2, OBSERVER_10
from .cri import CRIReference, cri_reference, cri_reference_from_spd
from .reference import daylight_m, daylight_spd_from_m, planckian_spd

#: Temperature range of the tables (K); outside it the reference side is computed directly.
T_TABLE_LO_K = 900.0
T_TABLE_HI_K = 40000.0
#: Largest node spacing in mired (MK⁻¹) and the number of Lagrange points: Planckian range;
#: blend (its value; its first derivatives by 3 points, its second derivatives taken at the
#: nearest node).
MIRED_STEP = 1.0
LAGRANGE_POINTS = 6
BLEND_MIRED_STEP = 0.5
BLEND_POINTS = 4
#: Step of the central differences in (M1, M2) for the blend's Taylor terms.
TAYLOR_STEP = 5e-4
#: CIE 224 / TM-30 switch temperatures (K) and the CIE 13.3 switch.
_BLEND_LO, _BLEND_HI, _CRI_DAYLIGHT = 4000.0, 5000.0, 5000.0

_Compute = Callable[[np.ndarray, "np.ndarray | None"], np.ndarray]


def _lagrange(s: np.ndarray, n_nodes: int, points: int) -> tuple[np.ndarray, np.ndarray]:
    """Node indices (m, points) and Lagrange weights (m, points) at fractional node positions
    ``s`` (m,): the ``points`` nodes around s, shifted inwards at the ends of the table.

    w_k = Π_{j≠k} (t − j) / (k − j) with t = s − first node, from prefix and suffix products."""
    i0 = np.clip(np.floor(s).astype(np.int64) - (points // 2 - 1), 0, n_nodes - points)
    diff = (s - i0)[:, None] - np.arange(points)[None, :]  # t − j, (m, points)
    ones = np.ones((s.size, 1))
    before = np.cumprod(np.concatenate([ones, diff[:, :-1]], axis=1), axis=1)
    after = np.cumprod(np.concatenate([ones, diff[:, :0:-1]], axis=1), axis=1)[:, ::-1]
    return i0[:, None] + np.arange(points)[None, :], before * after * _DENOMS[points]


#: 1 / Π_{j≠k} (k − j) for the Lagrange weights, by number of points.
_DENOMS = {p: np.array([1.0 / np.prod([k - j for j in range(p) if j != k]) for k in range(p)]) for p in (2, 3, 4, 6)}


class _MiredTable:
    """A vector function of T on [t_lo, t_hi], on nodes uniform in mired, filled lazily.

    ``compute(T, d)`` gives the function (m, width) at temperatures T (m,), and with ``taylor``
    at (M1, M2) = unrounded daylight coefficients + d (m, 2). Stored node-major: row
    ``node · terms + term`` of :attr:`rows` (terms: F, and with ``taylor`` also ∂F/∂M1, ∂F/∂M2,
    ∂²F/∂M1², ∂²F/∂M1∂M2, ∂²F/∂M2²), so the rows that spectra of similar T need are adjacent."""

    def __init__(self, t_lo: float, t_hi: float, width: int, compute: _Compute, taylor: bool) -> None:
        mu_lo, mu_hi = 1e6 / t_hi, 1e6 / t_lo
        self.points = BLEND_POINTS if taylor else LAGRANGE_POINTS
        step = BLEND_MIRED_STEP if taylor else MIRED_STEP
        n = max(int(np.ceil((mu_hi - mu_lo) / step - 1e-9)) + 1, self.points)
        self.mu0, self.h, self.n = mu_lo, (mu_hi - mu_lo) / (n - 1), n
        self.T = 1e6 / (mu_lo + self.h * np.arange(n))
        self.T[0], self.T[-1] = t_hi, t_lo
        self.terms = 6 if taylor else 1
        self.values = np.zeros((n, self.terms, width))  # zeros: unfilled rows may meet a zero weight
        self.rows = self.values.reshape(n * self.terms, width)
        self.filled = np.zeros(n, dtype=bool)
        self.compute = compute
        self.lock = threading.Lock()

    def _fill(self, nodes: np.ndarray) -> None:
        if self.filled[nodes].all():
            return
        with self.lock:
            need = np.unique(nodes)
            need = need[~self.filled[need]]
            if need.size:
                # rows independent of the other nodes computed with them, with one BLAS thread:
                # an entry is the same bits whatever the process needed before (module docstring)
                with one_blas_thread(), rowwise_products():
                    self._fill_nodes(need)

    def _fill_nodes(self, need: np.ndarray) -> None:
        """Compute the nodes ``need`` (the caller holds the lock)."""
        T = self.T[need]
        if self.terms == 1:
            self.values[need, 0] = self.compute(T, None)
        else:
            e = TAYLOR_STEP
            offs = np.array([[0, 0], [e, 0], [-e, 0], [0, e], [0, -e], [e, e], [e, -e], [-e, e], [-e, -e]])
            m = T.size
            f = self.compute(np.tile(T, 9), np.repeat(offs, m, axis=0)).reshape(9, m, -1)
            self.values[need, 0] = f[0]
            self.values[need, 1] = (f[1] - f[2]) / (2 * e)
            self.values[need, 2] = (f[3] - f[4]) / (2 * e)
            self.values[need, 3] = (f[1] - 2 * f[0] + f[2]) / e**2
            self.values[need, 4] = (f[5] - f[6] - f[7] + f[8]) / (4 * e**2)
            self.values[need, 5] = (f[3] - 2 * f[0] + f[4]) / e**2
        self.filled[need] = True

    def __call__(self, T: np.ndarray, d: np.ndarray | None = None) -> np.ndarray:
        """Interpolated values (m, width) at T (m,) inside [t_lo, t_hi] (``d`` (m, 2): the
        rounded minus unrounded daylight coefficients, for a Taylor table)."""
        s = (1e6 / T - self.mu0) / self.h
        idx, w = _lagrange(s, self.n, self.points)
        if self.terms == 1:
            nodes, flat, wts = idx, idx, w
        else:
            assert d is not None
            idx4, w4 = _lagrange(s, self.n, 3)
            near = np.clip(np.rint(s).astype(np.int64), 0, self.n - 1)[:, None]
            d1, d2 = d[:, 0:1], d[:, 1:2]
            nodes = np.concatenate([idx, idx4, near], axis=1)
            flat = np.concatenate([idx * 6, idx4 * 6 + 1, idx4 * 6 + 2, near * 6 + 3, near * 6 + 4, near * 6 + 5], axis=1)
            wts = np.concatenate([w, w4 * d1, w4 * d2, 0.5 * d1 * d1, d1 * d2, 0.5 * d2 * d2], axis=1)
        self._fill(nodes.ravel())
        return _weighted_rows(flat, wts, self.rows)


#: Widest run of table rows one dense weight matrix spans, in rows per weight of a spectrum.
_SPAN_PER_WEIGHT = 8


def _weighted_rows(flat: np.ndarray, wts: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """Σ_p wts[i, p] · rows[flat[i, p]] for each spectrum i, shape (m, width).

    The spectra are taken in order of their first row and cut into groups whose rows span at
    most :data:`_SPAN_PER_WEIGHT` × P table rows (spectra of similar T need adjacent rows); each
    group is one dense weight matrix over its rows and one matrix product (all spectra in one
    group when their T are close, as in a production lot). No sparse-matrix library: its import
    alone cost 0.2 s per process."""
    m, P = flat.shape
    out = np.empty((m, rows.shape[1]))
    if m == 0:
        return out
    first, last = flat.min(axis=1), flat.max(axis=1)
    order = np.argsort(first, kind="stable")
    f_sorted, l_sorted = first[order], last[order]
    # groups of first rows within `step` of each other: with a spectrum's own rows spanning at
    # most `width`, a group spans at most step + width ≤ the allowed span
    width = int((l_sorted - f_sorted).max()) + 1
    step = max(1, _SPAN_PER_WEIGHT * P - width)
    gid = (f_sorted - f_sorted[0]) // step
    starts = [0, *(np.flatnonzero(np.diff(gid)) + 1).tolist(), m]
    for a, b in itertools.pairwise(starts):
        idx = order[a:b]
        lo, hi = int(f_sorted[a]), int(l_sorted[a:b].max()) + 1
        W = np.zeros((b - a, hi - lo))
        W[np.repeat(np.arange(b - a), P), (flat[idx] - lo).ravel()] = wts[idx].ravel()
        out[idx] = W @ rows[lo:hi]
    return out


def _pair_key(M1: np.ndarray, M2: np.ndarray) -> np.ndarray:
    return np.rint(M1 * 1000.0).astype(np.int64) * (1 << 32) + np.rint(M2 * 1000.0).astype(np.int64)


class _PairTable:
    """Daylight quantities indexed by the rounded (M1, M2) pair, filled lazily (entries computed
    from the rounded pair, as the direct path computes them), called with temperatures (the
    pairs are :func:`lumeval.metrics.reference.daylight_m`'s).

    ``data`` = (sorted keys, their rows in the store, the store) is replaced as one tuple when
    pairs are added, so that a reader in another thread never pairs new keys with old rows; the
    store grows by doubling (rows are appended past those any reader can index)."""

    def __init__(self, width: int, compute: Callable[[np.ndarray, np.ndarray], np.ndarray]) -> None:
        empty = np.empty(0, dtype=np.int64)
        self.data: tuple[np.ndarray, np.ndarray, np.ndarray] = (empty, empty, np.empty((64, width)))
        self.compute = compute
        self.lock = threading.Lock()

    def __call__(self, T: np.ndarray) -> np.ndarray:
        M1, M2 = daylight_m(T)
        key = _pair_key(M1, M2)
        keys, where, store = self.data
        pos = np.searchsorted(keys, key)
        found = pos < keys.size
        found[found] = keys[pos[found]] == key[found]
        if not found.all():
            with self.lock:
                self._add(key[~found], M1[~found], M2[~found])
                keys, where, store = self.data
            pos = np.searchsorted(keys, key)
        return cast("np.ndarray", store[where[pos]])

    def _add(self, key: np.ndarray, M1: np.ndarray, M2: np.ndarray) -> None:
        """Compute the pairs ``key`` that the table lacks and add them."""
        keys, where, store = self.data
        new, first = np.unique(key, return_index=True)
        fresh = ~np.isin(new, keys)
        if not fresh.any():
            return
        i = first[fresh]
        # rows independent of the other pairs computed with them, with one BLAS thread: an
        # entry is the same bits whatever the process needed before (module docstring)
        with one_blas_thread(), rowwise_products():
            rows = self.compute(M1[i], M2[i])
        n0, n1 = keys.size, keys.size + rows.shape[0]  # the store's rows in use: one per key
        if n1 > store.shape[0]:  # a new store: readers keep the old one
            grown = np.empty((max(n1, 2 * store.shape[0]), store.shape[1]))
            grown[:n0] = store[:n0]
            store = grown
        store[n0:n1] = rows
        all_keys = np.concatenate([keys, new[fresh]])
        order = np.argsort(all_keys, kind="stable")
        self.data = (all_keys[order], np.concatenate([where, np.arange(n0, n1)])[order], store)


@dataclass(frozen=True)
class ReferenceSide:
    """The reference side of every reference-based figure for N spectra (one per spectrum,
    shared by CIE 13.3, TM-30 and CIE 224).

    Attributes
    ----------
    cct_K : ndarray (N,)
        The reference temperatures.
    cri : CRIReference
        CIE 13.3: (u, v) of the reference and U*V*W* of TCS01-14 under it.
    tm30_jab : ndarray (N, 99, 3)
        CAM02-UCS J′a′b′ of the 99 CES under the TM-30 reference (blend normalised with
        ``tm30_blend_observer``'s ȳ).
    cie224_jab : ndarray (N, 99, 3)
        The same under the CIE 224 reference (blend normalised with ``cie224_blend_observer``'s
        ȳ); equal to ``tm30_jab`` outside 4000-5000 K.
    """

    cct_K: np.ndarray
    cri: CRIReference
    tm30_jab: np.ndarray
    cie224_jab: np.ndarray


# --------------------------------------------------------------------------- direct computations


def _tm30_grid(step: int) -> np.ndarray:
    return np.arange(380.0, 781.0, float(step))


def _jab_flat(wl: np.ndarray, spd: np.ndarray) -> np.ndarray:
    from .tm30 import reference_jab

    return reference_jab(wl, spd).reshape(spd.shape[0], -1)


def _blend_compute(wl: np.ndarray, observers: tuple[str, ...]) -> _Compute:
    """The blend's J′a′b′ for each observer's ȳ normalisation, side by side (m, 297 · k)."""

    def compute(T: np.ndarray, d: np.ndarray | None) -> np.ndarray:
        from .tm30 import blend_spd

        M1, M2 = daylight_m(T, round_m=False)
        if d is not None:
            M1, M2 = M1 + d[:, 0], M2 + d[:, 1]
        m = np.clip((T - _BLEND_LO) / (_BLEND_HI - _BLEND_LO), 0.0, 1.0)
        P, D = planckian_spd(wl, T), daylight_spd_from_m(wl, M1, M2)
        return np.concatenate([_jab_flat(wl, blend_spd(wl, P, D, m, o)) for o in observers], axis=1)

    return compute


def _cri_flat(ref: CRIReference) -> np.ndarray:
    return np.concatenate([ref.uv, ref.UVW.reshape(ref.uv.shape[0], -1)], axis=1)


class _TM30Tables:
    def __init__(self, step: int) -> None:
        wl = _tm30_grid(step)
        self.wl = wl
        self.planck = _MiredTable(T_TABLE_LO_K, _BLEND_LO, 297, lambda T, d: _jab_flat(wl, planckian_spd(wl, T)), False)
        self.daylight = _PairTable(297, lambda M1, M2: _jab_flat(wl, daylight_spd_from_m(wl, M1, M2)))
        self.blend: dict[tuple[str, ...], _MiredTable] = {}
        self.lock = threading.Lock()

    def blend_table(self, observers: tuple[str, ...]) -> _MiredTable:
        with self.lock:
            if observers not in self.blend:
                self.blend[observers] = _MiredTable(
                    _BLEND_LO, _BLEND_HI, 297 * len(observers), _blend_compute(self.wl, observers), True)
            return self.blend[observers]


class _CRITables:
    def __init__(self, start: int, stop: int, step: int) -> None:
        wl = np.arange(start, stop + 1, step, dtype=float)
        self.planck = _MiredTable(
            T_TABLE_LO_K, _CRI_DAYLIGHT, 44, lambda T, d: _cri_flat(cri_reference_from_spd(wl, planckian_spd(wl, T))), False)
        self.daylight = _PairTable(44, lambda M1, M2: _cri_flat(cri_reference_from_spd(wl, daylight_spd_from_m(wl, M1, M2))))


@lru_cache(maxsize=8)
def _tm30_tables(step: int) -> _TM30Tables:
    return _TM30Tables(step)


@lru_cache(maxsize=8)
def _cri_tables(start: int, stop: int, step: int) -> _CRITables:
    return _CRITables(start, stop, step)


# --------------------------------------------------------------------------- lookups


def tm30_reference_jab(step: int, cct_K: ArrayLike, blend_observer: str = OBSERVER_10) -> np.ndarray:
    """CAM02-UCS J′a′b′ (N, 99, 3) of the CES under the CIE 224 / TM-30 reference at ``cct_K``
    on the 380-780 nm grid of ``step`` (1 or 5) nm, from the tables (see the module docstring).

    The same quantity as :func:`lumeval.metrics.tm30.reference_jab` of
    :func:`lumeval.metrics.tm30.reference_spd` (the direct computation), within the bound
    stated in the module docstring; NaN rows where T is not finite or not positive."""
    return _tm30_sides(int(step), np.atleast_1d(np.asarray(cct_K, dtype=float)), (blend_observer,))[0]


def _tm30_sides(step: int, T: np.ndarray, observers: tuple[str, ...]) -> list[np.ndarray]:
    """:func:`tm30_reference_jab` for several blend observers at once (one blend lookup)."""
    tab = _tm30_tables(step)
    first = np.full((T.size, 297), np.nan)
    ok = np.isfinite(T) & (T > 0)
    inside = ok & (T >= T_TABLE_LO_K) & (T <= T_TABLE_HI_K)
    pl = inside & (T < _BLEND_LO)
    bl = inside & (T >= _BLEND_LO) & (T <= _BLEND_HI)
    dl = inside & (T > _BLEND_HI)
    if pl.any():
        first[pl] = tab.planck(T[pl])
    if dl.any():
        first[dl] = tab.daylight(T[dl])
    direct = ok & ~inside
    if direct.any():  # outside the tables (and the blend): the same reference for every observer
        from .tm30 import reference_spd

        first[direct] = _jab_flat(tab.wl, reference_spd(tab.wl, T[direct], blend_observer=observers[0])[0])
    # every row but the blend's is the same for every blend observer: one copy each
    outs = [first] + [first.copy() for _ in observers[1:]]
    if bl.any():
        Tb = T[bl]
        r1, r2 = daylight_m(Tb)
        u1, u2 = daylight_m(Tb, round_m=False)
        both = tab.blend_table(observers)(Tb, np.column_stack([r1 - u1, r2 - u2]))
        for j, out in enumerate(outs):
            out[bl] = both[:, 297 * j : 297 * (j + 1)]
    return [out.reshape(T.size, 99, 3) for out in outs]


def cri_reference_tabulated(wavelengths_nm: ArrayLike, cct_K: ArrayLike) -> CRIReference:
    """The CIE 13.3 reference side (:class:`lumeval.metrics.cri.CRIReference`) at ``cct_K`` on a
    prepared grid, from the tables (see the module docstring); the same quantity as
    :func:`lumeval.metrics.cri.cri_reference` within the stated bound."""
    wl = np.asarray(wavelengths_nm, dtype=float)
    T = np.atleast_1d(np.asarray(cct_K, dtype=float))
    tab = _cri_tables(int(round(wl[0])), int(round(wl[-1])), int(round(wl[1] - wl[0])))
    out = np.full((T.size, 44), np.nan)
    ok = np.isfinite(T) & (T > 0)
    inside = ok & (T >= T_TABLE_LO_K) & (T <= T_TABLE_HI_K)
    pl = inside & (T < _CRI_DAYLIGHT)
    dl = inside & (T >= _CRI_DAYLIGHT)
    if pl.any():
        out[pl] = tab.planck(T[pl])
    if dl.any():
        out[dl] = tab.daylight(T[dl])
    direct = ok & ~inside
    if direct.any():
        out[direct] = _cri_flat(cri_reference(wl, T[direct]))
    return CRIReference(uv=out[:, :2], UVW=out[:, 2:].reshape(T.size, 14, 3))


def reference_side(
    wavelengths_nm: ArrayLike, cct_K: ArrayLike, *, tm30_blend_observer: str = OBSERVER_10,
    cie224_blend_observer: str = OBSERVER_2,
) -> ReferenceSide:
    """One reference side per spectrum for CIE 13.3, TM-30 and CIE 224, from the tables.

    ``wavelengths_nm`` is the spectra's prepared grid (uniform 1 nm on integers or 5 nm on multiples of 5, covering
    380-780 nm within 360-830 nm); the CIE 13.3 part is computed on it, the CIE 224 part on
    its 380-780 nm crop. ``cct_K`` (N,): each spectrum's reference temperature (NaN: none).
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    T = np.atleast_1d(np.asarray(cct_K, dtype=float))
    step = int(round(wl[1] - wl[0]))
    if cie224_blend_observer == tm30_blend_observer:
        jab = jab2 = _tm30_sides(step, T, (tm30_blend_observer,))[0]
    else:
        jab, jab2 = _tm30_sides(step, T, (tm30_blend_observer, cie224_blend_observer))
    return ReferenceSide(cct_K=T, cri=cri_reference_tabulated(wl, T), tm30_jab=jab, cie224_jab=jab2)
