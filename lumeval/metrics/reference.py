"""Reference illuminants at a given CCT: the Planckian radiator and CIE daylight.

Sources
-------
- Planckian radiator: CIE 15:2004 §3.1 / Appendix E, c2 = 1.4388e-2 m K
  (:mod:`lumeval.metrics.planck`).
- CIE daylight: CIE 15:2004 §3.1, Eqs. 3.3-3.8: x_D from the CCT (two branches, 4000-7000 K and
  7000-25000 K), y_D = −3 x_D² + 2.870 x_D − 0.275, S(λ) = S0(λ) + M1 S1(λ) + M2 S2(λ) with
  M1, M2 from (x_D, y_D) rounded to three decimals as CIE 15 prescribes for D illuminants
  (colour-science does the same by default). The S0, S1, S2 basis is colour-science's copy of
  CIE 15:2004 Table T.2 (5 nm); finer grids are interpolated linearly (CIE 15:2004 §3.1 note).
- CIE 13.3-1995 §5.2: the reference for a CRI is the Planckian radiator below 5000 K and CIE
  daylight from 5000 K.

All functions are vectorised over CCT: ``cct_K`` of shape (N,) gives spectra of shape (N, W).
"""

from __future__ import annotations

from typing import cast

import numpy as np
from numpy.typing import ArrayLike

from .planck import C2_CIE, planck_exitance


def _daylight_basis() -> tuple[np.ndarray, np.ndarray]:
    """colour-science's S0, S1, S2 (CIE 15:2004 Table T.2), shape (3, W) (see lumeval._tables)."""
    from .._tables import table

    return table("d_basis")


def daylight_xy(cct_K: ArrayLike) -> np.ndarray:
    """Chromaticity (x_D, y_D) of CIE daylight at ``cct_K`` (CIE 15:2004 Eqs. 3.3-3.4).

    Defined for 4000-25000 K; outside that range the polynomial is evaluated all the same
    (callers choose the daylight branch only from 5000 K, or 4000 K for CIE 224 blending).
    """
    T = np.asarray(cct_K, dtype=float)
    x_lo = -4.6070e9 / T**3 + 2.9678e6 / T**2 + 0.09911e3 / T + 0.244063
    x_hi = -2.0064e9 / T**3 + 1.9018e6 / T**2 + 0.24748e3 / T + 0.237040
    x = np.where(T <= 7000.0, x_lo, x_hi)
    y = -3.0 * x**2 + 2.870 * x - 0.275
    return np.stack([x, y], axis=-1)


def daylight_m(cct_K: ArrayLike, *, round_m: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """The CIE daylight coefficients (M1, M2) at ``cct_K`` (CIE 15:2004 Eqs. 3.5-3.7).

    ``M = 0.0241 + 0.2562 x_D − 0.7341 y_D``, ``M1 = (−1.3515 − 1.7703 x_D + 5.9114 y_D) / M``,
    ``M2 = (0.0300 − 31.4424 x_D + 30.0717 y_D) / M``, rounded to three decimals when
    ``round_m`` (as CIE 15 prescribes for the D illuminants; colour-science's default too).
    The rounding makes the daylight SPD a step function of the CCT: every (M1, M2) pair holds
    over a small range of temperatures (used by :mod:`lumeval.metrics.reference_table`).
    """
    xy = daylight_xy(cct_K)
    x, y = xy[..., 0], xy[..., 1]
    M = 0.0241 + 0.2562 * x - 0.7341 * y
    M1 = (-1.3515 - 1.7703 * x + 5.9114 * y) / M
    M2 = (0.0300 - 31.4424 * x + 30.0717 * y) / M
    if round_m:
        M1 = np.round(M1, 3)
        M2 = np.round(M2, 3)
    return M1, M2


def daylight_spd_from_m(wavelengths_nm: ArrayLike, M1: ArrayLike, M2: ArrayLike) -> np.ndarray:
    """CIE daylight S0 + M1 S1 + M2 S2 at ``wavelengths_nm`` for given coefficients (CIE 15:2004
    Eq. 3.5), the basis interpolated linearly (see the module docstring). Shape (W,) or (N, W)."""
    wl_b, S = _daylight_basis()
    wl = np.asarray(wavelengths_nm, dtype=float)
    Si = np.stack([np.interp(wl, wl_b, S[k]) for k in range(3)])
    return cast("np.ndarray", Si[0] + np.asarray(M1)[..., None] * Si[1] + np.asarray(M2)[..., None] * Si[2])


def daylight_spd(wavelengths_nm: ArrayLike, cct_K: ArrayLike, *, round_m: bool = True) -> np.ndarray:
    """Relative SPD of CIE daylight at ``cct_K`` sampled at ``wavelengths_nm``.

    Returns shape (W,) for a scalar CCT, (N, W) for shape (N,). Values are as CIE 15 defines
    them (S0 + M1 S1 + M2 S2, about 100 at 560 nm), not renormalised.
    """
    M1, M2 = daylight_m(cct_K, round_m=round_m)
    return daylight_spd_from_m(wavelengths_nm, M1, M2)


def planckian_spd(wavelengths_nm: ArrayLike, cct_K: ArrayLike) -> np.ndarray:
    """Relative SPD of the Planckian radiator (c2 = 1.4388e-2 m K), 100 at 560 nm."""
    wl = np.asarray(wavelengths_nm, dtype=float)
    T = np.asarray(cct_K, dtype=float)
    s = planck_exitance(wl, T, c2=C2_CIE)
    s560 = planck_exitance(np.array([560.0]), T, c2=C2_CIE)
    return cast("np.ndarray", 100.0 * s / s560)


def cri_reference_spd(wavelengths_nm: ArrayLike, cct_K: ArrayLike) -> np.ndarray:
    """CIE 13.3-1995 reference illuminant: Planckian below 5000 K, CIE daylight from 5000 K.

    Shape (N, W) for ``cct_K`` of shape (N,). NaN CCTs give rows of NaN.
    """
    T = np.atleast_1d(np.asarray(cct_K, dtype=float))
    wl = np.asarray(wavelengths_nm, dtype=float)
    out = np.full((T.size, wl.size), np.nan)
    ok = np.isfinite(T) & (T > 0)
    pl = ok & (T < 5000.0)
    dl = ok & (T >= 5000.0)
    if pl.any():
        out[pl] = planckian_spd(wl, T[pl])
    if dl.any():
        out[dl] = daylight_spd(wl, T[dl])
    return out
