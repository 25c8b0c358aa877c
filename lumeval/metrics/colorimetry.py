"""Tristimulus values, chromaticity, CCT and Duv, vectorised over many spectra.

Conventions
-----------
- Observer: CIE 1931 2° standard colorimetric observer (CIE 15:2004 §3.2), the colour-matching
  functions as colour-science ships them (1 nm, 360-830 nm, from CIE 15:2004 Table T.4).
- Integration: a plain sum of S(λ)·x̄(λ)·Δλ on the spectrum's own uniform 1 nm or 5 nm grid
  (CIE 15:2004 §7.1 and §7.2: summation at 1 nm or 5 nm intervals with the CMFs sampled at
  the same wavelengths; no weighting-table correction). CIE 15:2004 Table T.8.1 is reproduced
  this way to within 5e-5 in x and y.
- CCT and Duv: Ohno (2014), "Practical use and calculation of CCT and Duv", LEUKOS 10(1):47-55,
  combined triangular/parabolic solution on a Planckian table in CIE 1960 (u, v). The table is
  computed here from Planck's law with c2 = 1.4388e-2 m K (CIE 15:2004) and the 1 nm CIE 1931
  CMFs over 360-830 nm.
- Duv is positive above the Planckian locus (ANSI C78.377 sign convention).
- CCT is reported within 1000-25000 K: CIE daylight, the reference illuminant of CIE 13.3 and
  CIE 224 above 5000 K, is defined up to 25,000 K (CIE 15:2004 §3.1); Ohno (2014) states his
  method's accuracy (1 K) for 1000-20000 K, and the test suite checks this implementation against
  an exact minimum-distance search up to 25,000 K. Beyond 25,000 K there is no reference
  illuminant, so neither CCT nor CRI/TM-30 is given (the reason says so).
- Where |Duv| > 0.05, CCT is undefined for reporting (CIE 15:2004 §9.5: the concept of CCT is
  not meaningful so far from the locus), but the nearest Planckian temperature is still the
  temperature of the reference illuminant for CRI and TM-30 (``reference_cct_K``), and those
  figures are flagged as computed outside their validity range (``outside_validity``).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from typing import cast

import numpy as np
from numpy.typing import ArrayLike

from ..errors import GridError
from .planck import C2_CIE, planck_exitance

#: Range in which CCT is reported: from Ohno (2014)'s lower end to the upper end of CIE daylight
#: (25,000 K, CIE 15:2004 §3.1), the reference illuminant above 5000 K.
CCT_MIN_K = 1000.0
CCT_MAX_K = 25000.0
#: Largest |Duv| at which CCT is still reported (CIE 15:2004 §9.5).
DUV_LIMIT = 0.05

OBSERVER_2 = "CIE 1931 2 Degree Standard Observer"
OBSERVER_10 = "CIE 1964 10 Degree Standard Observer"


def _cmfs_table(observer: str) -> tuple[np.ndarray, np.ndarray]:
    """colour-science's 1 nm CMF table of ``observer`` (see :mod:`lumeval._tables`)."""
    from .._tables import table

    return table({OBSERVER_2: "cmf_2", OBSERVER_10: "cmf_10"}[observer])


def cmfs_at(wavelengths_nm: ArrayLike, observer: str = OBSERVER_2) -> np.ndarray:
    """Colour-matching functions sampled at ``wavelengths_nm``, shape (W, 3).

    Wavelengths on the 1 nm table's integer grid are taken as tabulated (CIE 15:2004 Table
    T.4); others are linearly interpolated between table entries. Outside 360-830 nm the
    functions are zero (CIE 15 tabulates them over 360-830 nm only).
    """
    wl_t, cm_t = _cmfs_table(observer)
    wl = np.asarray(wavelengths_nm, dtype=float)
    out = np.empty((wl.size, 3))
    for k in range(3):
        out[:, k] = np.interp(wl, wl_t, cm_t[:, k], left=0.0, right=0.0)
    return out


def integration_weights(wavelengths_nm: ArrayLike) -> np.ndarray:
    """Δλ for each sample of a uniform grid (rectangle rule, CIE 15:2004 §7.1), shape (W,)."""
    wl = np.asarray(wavelengths_nm, dtype=float)
    if wl.size < 2:
        raise GridError("need at least two wavelengths", field="wavelengths_nm", fix="prepare the spectra first")
    d = np.diff(wl)
    if not np.allclose(d, d[0], rtol=0, atol=1e-9):
        raise GridError("tristimulus summation needs a uniform wavelength grid", field="wavelengths_nm",
                        fix="prepare the spectra first")
    return np.full(wl.size, d[0])


def tristimulus(wavelengths_nm: ArrayLike, values: ArrayLike, observer: str = OBSERVER_2) -> np.ndarray:
    """Tristimulus values X, Y, Z = Σ S(λ) x̄(λ) Δλ (CIE 15:2004 Eq. 7.1 with k = 1).

    Parameters
    ----------
    wavelengths_nm : array_like, shape (W,)
        A uniform grid (see :func:`lumeval.spectra.prepare.prepare`).
    values : array_like, shape (W,) or (N, W)
        Spectral values.
    observer : str
        colour-science's name of the CMF set.

    Returns
    -------
    ndarray, shape (3,) or (N, 3)
        Unnormalised tristimulus values, in the unit of ``values`` times nm. Multiply Y by
        Km = 683 lm/W for luminous quantities when ``values`` are radiometric in W/nm.
    """
    w = integration_weights(wavelengths_nm)
    cm = cmfs_at(wavelengths_nm, observer) * w[:, None]
    return cast("np.ndarray", np.asarray(values, dtype=float) @ cm)


def xy_from_XYZ(XYZ: ArrayLike) -> np.ndarray:
    """CIE 1931 chromaticity x = X/(X+Y+Z), y = Y/(X+Y+Z) (CIE 15:2004 Eq. 7.3)."""
    XYZ = np.asarray(XYZ, dtype=float)
    s = XYZ.sum(axis=-1, keepdims=True)
    return cast("np.ndarray", XYZ[..., :2] / s)


def uv_from_XYZ(XYZ: ArrayLike) -> np.ndarray:
    """CIE 1960 UCS u = 4X/(X+15Y+3Z), v = 6Y/(X+15Y+3Z) (CIE 15:2004 §8.1, note 1)."""
    XYZ = np.asarray(XYZ, dtype=float)
    X, Y, Z = XYZ[..., 0], XYZ[..., 1], XYZ[..., 2]
    d = X + 15.0 * Y + 3.0 * Z
    return np.stack([4.0 * X / d, 6.0 * Y / d], axis=-1)


def upvp_from_XYZ(XYZ: ArrayLike) -> np.ndarray:
    """CIE 1976 UCS u' = 4X/(X+15Y+3Z), v' = 9Y/(X+15Y+3Z) (CIE 15:2004 Eq. 8.1-8.2)."""
    uv = uv_from_XYZ(XYZ)
    return np.stack([uv[..., 0], uv[..., 1] * 1.5], axis=-1)


def uv_from_xy(xy: ArrayLike) -> np.ndarray:
    """CIE 1960 (u, v) from CIE 1931 (x, y): u = 4x/(−2x+12y+3), v = 6y/(−2x+12y+3)."""
    xy = np.asarray(xy, dtype=float)
    x, y = xy[..., 0], xy[..., 1]
    d = -2.0 * x + 12.0 * y + 3.0
    return np.stack([4.0 * x / d, 6.0 * y / d], axis=-1)


def xy_from_uv(uv: ArrayLike) -> np.ndarray:
    """CIE 1931 (x, y) from CIE 1960 (u, v): x = 3u/(2u−8v+4), y = 2v/(2u−8v+4)."""
    uv = np.asarray(uv, dtype=float)
    u, v = uv[..., 0], uv[..., 1]
    d = 2.0 * u - 8.0 * v + 4.0
    return np.stack([3.0 * u / d, 2.0 * v / d], axis=-1)


def upvp_from_uv(uv: ArrayLike) -> np.ndarray:
    """CIE 1976 (u', v') = (u, 1.5 v) from CIE 1960 (u, v) (CIE 15:2004 §8.1)."""
    uv = np.asarray(uv, dtype=float)
    return np.stack([uv[..., 0], 1.5 * uv[..., 1]], axis=-1)


def upvp_from_xy(xy: ArrayLike) -> np.ndarray:
    """CIE 1976 (u', v') = (4x, 9y) / (−2x + 12y + 3) (CIE 15:2004 Eqs. 8.1-8.2), shape (..., 2)."""
    xy = np.asarray(xy, dtype=float)
    x, y = xy[..., 0], xy[..., 1]
    d = -2.0 * x + 12.0 * y + 3.0
    return np.stack([4.0 * x / d, 9.0 * y / d], axis=-1)


def xy_from_upvp(upvp: ArrayLike) -> np.ndarray:
    """CIE 1931 (x, y) = (9u', 4v') / (6u' − 16v' + 12) (CIE 15:2004, inverse of Eqs. 8.1-8.2)."""
    p = np.asarray(upvp, dtype=float)
    u, v = p[..., 0], p[..., 1]
    d = 6.0 * u - 16.0 * v + 12.0
    return np.stack([9.0 * u / d, 4.0 * v / d], axis=-1)


# --------------------------------------------------------------------------- Planckian locus

#: The Planckian table: geometric steps of 0.1 % between 900 K and 40 000 K (beyond the
#: 25,000 K reporting limit, so that the search near that limit has neighbours on both sides). The parabolic
#: solution's error falls with the square of the step, so the 0.99991 correction that Ohno
#: (2014) applies to his 1 % table is not needed here (and not applied); the test suite checks
#: the result against an exact minimum-distance search.
_T_LO, _T_HI, _STEP = 900.0, 40000.0, 1.001
#: Coarse search stride in table entries (1 % steps) for the first, global nearest search.
_COARSE = 10
#: Tolerance on the reporting range, so that a point computed at 25000 K is not refused for a
#: rounding excess far below the method's accuracy.
_RANGE_TOL_K = 0.5


@cache
def _planck_table() -> tuple[np.ndarray, np.ndarray]:
    n = int(np.ceil(np.log(_T_HI / _T_LO) / np.log(_STEP))) + 1
    T = _T_LO * _STEP ** np.arange(n)
    from .._workers import one_blas_thread

    with one_blas_thread():  # cached for the process: the same bits whatever the caller's BLAS threads
        uv = planckian_uv(T)
    return T, uv


@cache
def _planck_search() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """What every CCT search reuses of :func:`_planck_table`: the indices of the 1 % coarse
    table, the coarse search's linear form (3, K): rows −2u, −2v and u² + v² of the coarse
    entries, so that (u_q, v_q) @ rows 0-1 + row 2 is the squared distance less u_q² + v_q²
    (the same nearest entry, in one matrix product instead of five passes), ln T of the fine
    table and its v (read-only)."""
    T, tab = _planck_table()
    coarse_idx = np.arange(0, T.size, _COARSE)
    c = tab[coarse_idx]
    form = np.vstack([-2.0 * c[:, 0], -2.0 * c[:, 1], c[:, 0] ** 2 + c[:, 1] ** 2])
    out = (coarse_idx, form, np.log(T), np.ascontiguousarray(tab[:, 1]))
    for a in out:
        a.setflags(write=False)
    return out


def planckian_uv(temperature_K: ArrayLike) -> np.ndarray:
    """CIE 1960 (u, v) of the Planckian radiator at ``temperature_K``, shape (..., 2).

    Computed from Planck's law with c2 = 1.4388e-2 m K (CIE 15:2004) and the CIE 1931 2°
    CMFs at 1 nm over 360-830 nm (CIE 15:2004 §7.1). Vectorised: 1-D input gives (N, 2).
    """
    T = np.atleast_1d(np.asarray(temperature_K, dtype=float))
    wl_t, cm_t = _cmfs_table(OBSERVER_2)
    out = np.empty(T.shape + (2,))
    flat = T.ravel()
    res = np.empty((flat.size, 2))
    for start in range(0, flat.size, 4096):
        chunk = flat[start : start + 4096]
        S = planck_exitance(wl_t, chunk, c2=C2_CIE)
        S = S / S.max(axis=-1, keepdims=True)
        res[start : start + 4096] = uv_from_XYZ(S @ cm_t)
    out[...] = res.reshape(T.shape + (2,))
    if np.ndim(temperature_K) == 0:
        return cast("np.ndarray", out[0])
    return out


@dataclass(frozen=True)
class CCTResult:
    """CCT and Duv for N chromaticities.

    Attributes
    ----------
    cct_K : ndarray (N,)
        Correlated colour temperature, NaN where undefined (see ``reason``).
    duv : ndarray (N,)
        Signed distance from the Planckian locus in CIE 1960 (u, v); positive above. NaN where
        the nearest Planckian temperature lies beyond the table (900-40000 K).
    cct_raw_K : ndarray (N,)
        The temperature of the nearest Planckian point even where CCT is undefined
        (clamped to the table's 900-40000 K).
    reason : tuple of str (N,)
        Empty where CCT is defined, otherwise why not.
    reference_cct_K : ndarray (N,)
        The temperature of the reference illuminant for CRI and TM-30: the CCT where it is
        defined; where CCT is undefined only because |Duv| > 0.05, the nearest Planckian
        temperature (if within 1000-25000 K); NaN otherwise.
    outside_validity : ndarray (N,) of bool
        True where ``reference_cct_K`` is given but CCT is not (|Duv| > 0.05): figures computed
        against that reference lie outside their validity range.
    """

    cct_K: np.ndarray
    duv: np.ndarray
    cct_raw_K: np.ndarray
    reason: tuple[str, ...]
    reference_cct_K: np.ndarray | None = None
    outside_validity: np.ndarray | None = None


def cct_duv_ohno(uv: ArrayLike) -> CCTResult:
    """CCT and Duv from CIE 1960 (u, v) by Ohno (2014), vectorised.

    Ohno, Y. (2014) LEUKOS 10(1):47-55, §3: find the table entry m nearest to (u, v); from the
    distances d(m−1), d(m), d(m+1) compute the *triangular* solution, and where |Duv| ≥ 0.002
    the *parabolic* one (Eqs. 5-12 of the paper). Duv's sign is that of v − v(Tx)
    (ANSI C78.377 convention: positive above the locus).

    The nearest entry is found in two stages (a 1 % coarse table, then the 0.02 % table
    around it), which finds the same entry as an exhaustive search whenever the chromaticity
    lies within the method's domain (|Duv| ≤ 0.05).

    Parameters
    ----------
    uv : array_like, shape (2,) or (N, 2)

    Returns
    -------
    CCTResult with arrays of shape (N,).
    """
    uv = np.atleast_2d(np.asarray(uv, dtype=float))
    T, tab = _planck_table()
    n = uv.shape[0]
    m = np.zeros(n, dtype=int)
    finite = np.all(np.isfinite(uv), axis=1)
    coarse_idx, form, log_T, v_tab = _planck_search()
    for s in range(0, n, 2048):
        sl = slice(s, s + 2048)
        q = uv[sl]
        # nearest coarse entry: argmin of |q − c|² − |q|² (the last bits of a matrix product
        # may tip a near tie between two neighbouring coarse entries; the fine window below
        # holds the nearest fine entry either way, so the entry found is the same)
        mc = np.argmin(q @ form[:2] + form[2], axis=1)
        lo = np.clip(coarse_idx[mc] - _COARSE, 0, T.size - 1)
        win = lo[:, None] + np.arange(2 * _COARSE + 1)[None, :]
        win = np.clip(win, 0, T.size - 1)
        d2f = (q[:, 0:1] - tab[win, 0]) ** 2 + (q[:, 1:2] - tab[win, 1]) ** 2
        m[sl] = win[np.arange(q.shape[0]), np.argmin(d2f, axis=1)]
    m = np.clip(m, 1, T.size - 2)
    i0, i1, i2 = m - 1, m, m + 1
    T0, T1, T2 = T[i0], T[i1], T[i2]
    d0 = np.hypot(uv[:, 0] - tab[i0, 0], uv[:, 1] - tab[i0, 1])
    d1 = np.hypot(uv[:, 0] - tab[i1, 0], uv[:, 1] - tab[i1, 1])
    d2 = np.hypot(uv[:, 0] - tab[i2, 0], uv[:, 1] - tab[i2, 1])

    # Triangular solution (Ohno 2014, Eqs. 5-8)
    side = np.hypot(tab[i2, 0] - tab[i0, 0], tab[i2, 1] - tab[i0, 1])
    x = (d0**2 - d2**2 + side**2) / (2.0 * side)
    Tx_tri = T0 + (T2 - T0) * (x / side)
    duv_tri_abs = np.sqrt(np.clip(d0**2 - x**2, 0.0, None))

    # Parabolic solution (Ohno 2014, Eqs. 9-12)
    X = (T2 - T1) * (T0 - T2) * (T1 - T0)
    a = (T0 * (d2 - d1) + T1 * (d0 - d2) + T2 * (d1 - d0)) / X
    b = -(T0**2 * (d2 - d1) + T1**2 * (d0 - d2) + T2**2 * (d1 - d0)) / X
    c = -(d0 * (T2 - T1) * T1 * T2 + d1 * (T0 - T2) * T0 * T2 + d2 * (T1 - T0) * T0 * T1) / X
    Tx_par = -b / (2.0 * a)
    duv_par_abs = np.abs(a * Tx_par**2 + b * Tx_par + c)

    use_par = duv_tri_abs >= 0.002
    Tx = np.where(use_par, Tx_par, Tx_tri)
    duv_abs = np.where(use_par, duv_par_abs, duv_tri_abs)
    # The sign needs only the locus' v at Tx: interpolating the fine table in log T is exact
    # to ~1e-9 in v, far below any Duv that could change a decision.
    Tx_safe = np.clip(np.where(np.isfinite(Tx) & (Tx > 0), Tx, T1), _T_LO, _T_HI)
    v_locus = np.interp(np.log(Tx_safe), log_T, v_tab)
    sign = np.where(uv[:, 1] - v_locus >= 0.0, 1.0, -1.0)
    # Beyond the table's ends (900 K, 25 000 K) the nearest-point geometry breaks down: the
    # "distance to the locus" would be measured to an end of the table, not to the locus, so
    # Duv is undefined there as well as CCT.
    beyond = finite & ~((Tx >= _T_LO) & (Tx <= _T_HI))
    duv = np.where(finite & ~beyond, sign * duv_abs, np.nan)

    far = finite & ~beyond & (np.abs(duv) > DUV_LIMIT)
    t_outside = (Tx < CCT_MIN_K - _RANGE_TOL_K) | (Tx > CCT_MAX_K + _RANGE_TOL_K) | beyond
    out_of_range = finite & ~far & t_outside
    reasons = [""] * n
    for k in np.flatnonzero(~finite | far | out_of_range):
        if not finite[k]:
            reasons[k] = "chromaticity is not a finite number"
        elif beyond[k]:
            reasons[k] = (
                f"the chromaticity is nearest the Planckian locus beyond its {_T_LO:.0f}-{_T_HI:.0f} K "
                "table: neither CCT nor Duv is defined"
            )
        elif far[k]:
            reasons[k] = (
                f"|Duv| = {abs(duv[k]):.4f} exceeds {DUV_LIMIT} "
                "(CIE 15: CCT is not meaningful so far from the Planckian locus)"
            )
            if t_outside[k]:
                reasons[k] += f"; the nearest Planckian temperature {Tx[k]:.0f} K is outside {_range_text()}"
        elif Tx[k] > CCT_MAX_K:
            reasons[k] = (
                f"nearest Planckian temperature {Tx[k]:.0f} K is above 25,000 K, where CIE daylight (the "
                "CRI and TM-30 reference illuminant) is no longer defined (CIE 15:2004)"
            )
        else:
            reasons[k] = f"nearest Planckian temperature {Tx[k]:.0f} K is outside {_range_text()}"
    cct = np.where(finite & ~far & ~out_of_range, Tx, np.nan)
    raw = np.where(finite, Tx_safe, np.nan)
    off_locus = far & ~t_outside
    ref = np.where(off_locus, Tx, cct)
    return CCTResult(cct_K=cct, duv=duv, cct_raw_K=raw, reason=tuple(reasons), reference_cct_K=ref,
                     outside_validity=off_locus)


def _range_text() -> str:
    return (f"the {CCT_MIN_K:,.0f}-{CCT_MAX_K:,.0f} K range (Ohno 2014 below; CIE daylight, the reference "
            "illuminant, ends at 25,000 K)")
