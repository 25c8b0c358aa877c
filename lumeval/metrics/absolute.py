"""Absolute photometric quantities of spectra measured in absolute units.

When a spectrum is a spectral irradiance E_e,λ in W/(m²·nm) (or a spectral radiance L_e,λ in
W/(sr·m²·nm)), lumeval reports, besides its ratios,

- the **illuminance** E_v = Km Σ E_e,λ V(λ) Δλ in lx (lm/m²), or the **luminance**
  L_v = Km Σ L_e,λ V(λ) Δλ in cd/m² (lm/(sr·m²)) — CIE 15:2004 Eq. 7.1 summation with
  Km = 683 lm/W (see :mod:`lumeval.metrics.photometry` for the constant and the summation rule);
- the **melanopic equivalent daylight (D65) illuminance** (melanopic EDI) of CIE S 026/E:2018:
  E_v,mel^D65 = E_e,mel / K_mel,v^D65, the illuminance of D65 that gives the same melanopic
  irradiance E_e,mel = Σ E_e,λ s_mel(λ) Δλ; in lx. With the melanopic daylight efficacy ratio
  γ_mel,v^D65 = K_mel,v / K_mel,v^D65 and K_mel,v = E_e,mel / E_v this is exactly
  E_v,mel^D65 = E_v · γ_mel,v^D65 (CIE S 026/E:2018, definitions of the α-opic equivalent
  daylight (D65) illuminance and of the α-opic daylight efficacy ratio), which is how it is
  computed here, from the same sums as the melanopic DER lumeval already reports;
- for radiance, the **melanopic equivalent daylight (D65) luminance** (melanopic EDL),
  L_v,mel^D65 = L_v · γ_mel,v^D65 in cd/m² (CIE S 026/E:2018, the radiance counterpart).

The tristimulus value Y that lumeval computes (:func:`lumeval.metrics.colorimetry.tristimulus`,
Σ S ȳ Δλ with k = 1, ȳ = V) is the photometric sum in the file's unit times nm, so
E_v = Km · factor · Y, where ``factor`` converts the file's unit to W/(m²·nm) (or
W/(sr·m²·nm)); :mod:`lumeval.spectra.units` reads it from the unit text.

These figures are only as good as the absolute calibration of the measurement, and they say
nothing about photobiological safety (IEC 62471) or health effects.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from .photometry import KM_LM_PER_W


@dataclass(frozen=True)
class AbsoluteResult:
    """Absolute photometric figures of N spectra (NaN where the data are not absolute).

    Attributes
    ----------
    quantity : tuple of str, length N
        ``"irradiance"``, ``"radiance"`` or ``""`` (relative or unknown scale: no absolute figure).
    unit_text : tuple of str, length N
        The unit text the quantity was read from ("" where none).
    illuminance_lx : ndarray (N,)
        E_v in lx, for spectral irradiance data; NaN otherwise.
    luminance_cd_m2 : ndarray (N,)
        L_v in cd/m², for spectral radiance data; NaN otherwise.
    melanopic_edi_lx : ndarray (N,)
        Melanopic EDI E_v,mel^D65 in lx (CIE S 026/E:2018), for irradiance data; NaN otherwise.
    melanopic_edl_cd_m2 : ndarray (N,)
        Melanopic EDL L_v,mel^D65 in cd/m² (CIE S 026/E:2018), for radiance data; NaN otherwise.
    """

    quantity: tuple[str, ...]
    unit_text: tuple[str, ...]
    illuminance_lx: np.ndarray
    luminance_cd_m2: np.ndarray
    melanopic_edi_lx: np.ndarray
    melanopic_edl_cd_m2: np.ndarray


def absolute_photometry(Y: ArrayLike, melanopic_der: ArrayLike, quantities: Sequence[Any]) -> AbsoluteResult:
    """Illuminance or luminance and melanopic EDI or EDL, vectorised.

    Parameters
    ----------
    Y : array_like, shape (N,)
        Σ S(λ) V(λ) Δλ of each spectrum in its file's unit times nm (lumeval's unnormalised
        tristimulus Y, CIE 15:2004 Eq. 7.1 with k = 1).
    melanopic_der : array_like, shape (N,)
        Melanopic daylight (D65) efficacy ratio γ_mel,v^D65 (CIE S 026/E:2018).
    quantities : sequence of length N
        Per spectrum a :class:`lumeval.spectra.units.SpectralQuantity` (kind and factor to SI)
        or None (no absolute scale).

    Returns
    -------
    AbsoluteResult

    Notes
    -----
    E_v = Km · f · Y (lx) and L_v = Km · f · Y (cd/m²), Km = 683 lm/W (CIE 15:2004 Eq. 7.1);
    E_v,mel^D65 = E_v · γ_mel,v^D65 and L_v,mel^D65 = L_v · γ_mel,v^D65 (CIE S 026/E:2018).
    """
    Y = np.atleast_1d(np.asarray(Y, dtype=float))
    der = np.atleast_1d(np.asarray(melanopic_der, dtype=float))
    qs = list(quantities)
    n = Y.shape[0]
    if der.shape[0] != n or len(qs) != n:
        raise ValueError(f"Y ({n}), melanopic_der ({der.shape[0]}) and quantities ({len(qs)}) differ in length")
    if qs.count(None) == n:  # relative data only (the usual lot): nothing absolute
        return AbsoluteResult(quantity=("",) * n, unit_text=("",) * n, illuminance_lx=np.full(n, np.nan),
                              luminance_cd_m2=np.full(n, np.nan), melanopic_edi_lx=np.full(n, np.nan),
                              melanopic_edl_cd_m2=np.full(n, np.nan))
    kind = np.array([q.kind if q is not None else "" for q in qs], dtype=object)
    factor = np.array([q.factor if q is not None else np.nan for q in qs], dtype=float)
    value = KM_LM_PER_W * factor * Y
    irr = kind == "irradiance"
    rad = kind == "radiance"
    nan = np.full(n, np.nan)
    ev = np.where(irr, value, nan)
    lv = np.where(rad, value, nan)
    return AbsoluteResult(
        quantity=tuple(str(k) for k in kind),
        unit_text=tuple(q.text if q is not None else "" for q in qs),
        illuminance_lx=ev,
        luminance_cd_m2=lv,
        melanopic_edi_lx=ev * der,
        melanopic_edl_cd_m2=lv * der,
    )
