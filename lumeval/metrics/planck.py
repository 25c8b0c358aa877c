"""Planck's law for the black-body (Planckian) radiator.

The Planckian radiator is the reference under every CCT, Duv and CRI figure lumeval
reports, so this module is written out explicitly rather than taken on trust.

Sources
-------
- CIE 15:2004 *Colorimetry*, 3rd ed., Appendix E / §3.1: the Planckian radiator is
  ``S(λ, T) = c1 λ^-5 (exp(c2 / (λ T)) - 1)^-1`` with c1 = 3.741771e-16 W m² and
  **c2 = 1.4388e-2 m K** (the value the CIE uses for the Planckian locus and illuminant A).
- CODATA 2018 (via ``scipy.constants``): c1 = 2πhc², c1L = 2hc², c2 = hc/k =
  1.438776877e-2 m K. These are offered for physical checks (Wien, Stefan-Boltzmann).
"""

from __future__ import annotations

from typing import cast

import numpy as np
from numpy.typing import ArrayLike

#: First radiation constant (W m²): the CODATA value rounded to 7 digits. The label "as CIE
#: 15:2004 gives it" was not checked against the standard (its printed value is recalled, from
#: memory, as 3.74183e-16). It scales every Planckian spectrum equally, so no figure lumeval
#: computes depends on it: every one is a ratio of integrals of the same spectrum.
C1_CIE = 3.741771e-16
#: Second radiation constant as CIE 15:2004 uses it for the Planckian locus (m K).
C2_CIE = 1.4388e-2
#: CODATA 2018 exact values (h, c, k exact since the 2019 SI) for physical checks.
H_PLANCK = 6.62607015e-34
C_LIGHT = 299792458.0
K_BOLTZMANN = 1.380649e-23
C1_CODATA = 2.0 * np.pi * H_PLANCK * C_LIGHT**2  # W m²  (= 3.741771852e-16)
C1L_CODATA = 2.0 * H_PLANCK * C_LIGHT**2  # W m² sr⁻¹ (= 1.191042972e-16)
C2_CODATA = H_PLANCK * C_LIGHT / K_BOLTZMANN  # m K (= 1.438776877e-2)


def planck_exitance(
    wavelengths_nm: ArrayLike,
    temperature_K: ArrayLike,
    *,
    c1: float = C1_CIE,
    c2: float = C2_CIE,
    n: float = 1.0,
) -> np.ndarray:
    """Spectral exitance of a black body, M(λ, T), in W m⁻² per metre of wavelength.

    ``M(λ, T) = c1 n⁻² λ⁻⁵ / (exp(c2 / (n λ T)) − 1)`` (CIE 15:2004 Eq. in Appendix E;
    with c1 = 2πhc² this is the hemispherical spectral exitance, π times the radiance).

    Parameters
    ----------
    wavelengths_nm : array_like, shape (W,)
        Wavelengths in nm (in the medium).
    temperature_K : array_like, shape () or (N,)
        Temperatures in kelvin, > 0.
    c1, c2 : float
        Radiation constants; the defaults are the CIE 15 values. Pass ``C1_CODATA`` /
        ``C2_CODATA`` for physics.
    n : float
        Refractive index of the medium (1 for the CIE convention).

    Returns
    -------
    ndarray, shape (W,) or (N, W)
        Spectral exitance. The exponent is evaluated with ``expm1`` so that the long
        wavelength (Rayleigh-Jeans) end keeps full precision, and an overflowing
        exponent gives exactly 0 rather than a warning.
    """
    lam = np.asarray(wavelengths_nm, dtype=float) * 1e-9
    T = np.asarray(temperature_K, dtype=float)
    if np.any(T <= 0):
        raise ValueError("temperature must be positive")
    T_col = T[..., None]
    x = c2 / (n * lam * T_col)
    with np.errstate(over="ignore"):
        denom = np.expm1(x)
    return cast("np.ndarray", c1 / (n**2 * lam**5) / denom)


def planck_relative(wavelengths_nm: ArrayLike, temperature_K: ArrayLike, *, c2: float = C2_CIE) -> np.ndarray:
    """Relative spectral power of a black body, normalised to 1 at 560 nm.

    The normalisation wavelength follows CIE 15 practice for relative SPDs (illuminant A
    is tabulated as 100 at 560 nm). Shapes as in :func:`planck_exitance`.
    """
    s = planck_exitance(wavelengths_nm, temperature_K, c2=c2)
    s560 = planck_exitance(np.array([560.0]), temperature_K, c2=c2)
    return cast("np.ndarray", s / s560)


def wien_peak_nm(temperature_K: ArrayLike, *, c2: float = C2_CODATA) -> np.ndarray:
    """Wavelength of maximum spectral exitance per unit wavelength, in nm.

    Wien's displacement law ``λmax T = c2 / x*`` where x* = 4.965114231744276... is the
    root of ``x = 5 (1 − e^−x)`` (derived by differentiating Planck's law; CODATA 2018
    gives b = 2.897771955e-3 m K for c2 = 1.438776877e-2 m K).
    """
    from scipy.optimize import brentq

    x_star = brentq(lambda x: x - 5.0 * (1.0 - np.exp(-x)), 4.0, 6.0, xtol=1e-15)
    return cast("np.ndarray", c2 / x_star / np.asarray(temperature_K, dtype=float) * 1e9)
