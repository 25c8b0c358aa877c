"""CIE 13.3-1995 colour rendering index (Ra, R1..R14), vectorised over many spectra.

Method (CIE 13.3-1995, "Method of measuring and specifying colour rendering properties of light
sources", the Test-Colour Method). The standard itself was not available to us: the steps
below are cited by the topic of the clause (titles paraphrased from memory, clause and equation
*numbers* deliberately not given because we could not verify them); every equation was checked
numerically against colour-science's and luxpy's independent implementations (see the tests):

1. Reference illuminant (CIE 13.3 "Reference illuminant"): the Planckian radiator below 5000 K,
   a phase of CIE daylight from 5000 K, at the CCT of the test source. The CCT is lumeval's own
   (Ohno 2014, :func:`lumeval.metrics.colorimetry.cct_duv_ohno`), passed in by the caller; the
   spectra come from :func:`lumeval.metrics.reference.cri_reference_spd`.
2. Test colour samples TCS01-TCS14 (CIE 13.3 Table 1 / the spectral radiance factors tabulated
   in the report at 5 nm, 360-830 nm), as colour-science ships them
   (``colour.quality.datasets.tcs.SDS_TCS['CIE 1995']``). On a 5 nm grid the tabulated values
   are used as they are; on a 1 nm grid they are interpolated with the Sprague (1880) method,
   the interpolation CIE 15:2004 §7.2.1 and CIE 167:2005 recommend for uniformly spaced data.
3. Colorimetry (CIE 13.3 "Determination of colorimetric data"): CIE 1931 2° observer, plain
   summation S(λ)·β_i(λ)·x̄(λ)·Δλ on the spectrum's grid (CIE 15:2004 §7.1), each source
   normalised so that its own Y = 100; chromaticities in the CIE 1960 UCS (u, v).
4. Adaptive colour shift (CIE 13.3 "Consideration of adaptive colour shift", a von Kries-type
   transform in the CIE 1960 UCS):
   c = (4 − u − 10 v) / v,  d = (1.708 v + 0.404 − 1.481 u) / v, and for sample i
   u'_k,i = (10.872 + 0.404 (c_r/c_k) c_k,i − 4 (d_r/d_k) d_k,i)
            / (16.518 + 1.481 (c_r/c_k) c_k,i − (d_r/d_k) d_k,i),
   v'_k,i = 5.520 / (16.518 + 1.481 (c_r/c_k) c_k,i − (d_r/d_k) d_k,i).
   Applied to the test source itself the transform gives exactly (u_r, v_r) (algebraic
   identity), so the adapted white point is the reference's chromaticity.
5. Uniform colour space (CIE 13.3 "Determination of resultant colour shift"; CIE 1964
   U*V*W*, CIE 15:2004 Appendix on superseded spaces): W* = 25 Y^(1/3) − 17,
   U* = 13 W* (u − u_white), V* = 13 W* (v − v_white), with Y of the sample relative to the
   source's Y = 100; ΔE_i = sqrt(ΔU*² + ΔV*² + ΔW*²).
6. Special index R_i = 100 − 4.6 ΔE_i; general index Ra = mean of R1..R8 (CIE 13.3
   "Special colour rendering indices" and "General colour rendering index"). No rounding is
   applied here (rounding is a presentation matter; CIE 13.3 reports integers).
7. Chromaticity difference DC = sqrt((u_k − u_r)² + (v_k − v_r)²) between the test source and its
   reference in the CIE 1960 UCS. CIE 13.3 gives a tolerance DC < 5.4e-3 for the result to be
   meaningful — SECONDARY source only: the header of ``ciecri.m`` in the open-source Lighting
   Toolbox (F. Rudawski, 2020, github Frudawski/LightingToolbox), which cites CIE 13.3:1995 and
   states "the tolerance of dC is 5.4·10⁻³, which is about 15 MK⁻¹"; not read in the standard.

Everything is array arithmetic over the N spectra (the 14 samples are one more array axis).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from numpy.typing import ArrayLike

from ..errors import GridError, InputError
from ._rowwise import mm
from .colorimetry import OBSERVER_2, cmfs_at
from .reference import cri_reference_spd

#: CIE 13.3 validity limit on DC in the CIE 1960 UCS (secondary source, see module docstring).
DC_LIMIT = 5.4e-3
#: Reference illuminant switches from Planckian to CIE daylight at this CCT (CIE 13.3).
DAYLIGHT_FROM_K = 5000.0
#: Names of the 14 CIE 13.3 test colour samples, in order R1..R14.
TCS_NAMES = tuple(f"TCS{i:02d}" for i in range(1, 15))

PLANCKIAN = "Planckian"
DAYLIGHT = "CIE daylight"


@dataclass(frozen=True)
class CRIResult:
    """CIE 13.3-1995 colour rendering of N spectra.

    Attributes
    ----------
    Ra : ndarray (N,)
        General colour rendering index, mean of R1..R8. NaN where the CCT is undefined.
    R : ndarray (N, 14)
        Special colour rendering indices R1..R14 (column i-1 is Ri).
    dc : ndarray (N,)
        Chromaticity difference DC between test source and reference illuminant in the CIE 1960
        UCS (u, v).
    within_dc_limit : ndarray of bool (N,)
        ``dc < DC_LIMIT`` (5.4e-3); False where DC is NaN.
    reference : tuple of str (N,)
        'Planckian' or 'CIE daylight'; '' where the CCT is undefined.
    reference_cct_K : ndarray (N,)
        The CCT at which the reference illuminant was built (the CCT passed in).
    uv_test, uv_reference : ndarray (N, 2)
        CIE 1960 (u, v) of the test source and of the reference illuminant.
    UVW_test : ndarray (N, 14, 3)
        U*, V*, W* of each sample under the test source after the adaptive colour shift.
    UVW_reference : ndarray (N, 14, 3)
        U*, V*, W* of each sample under the reference illuminant.
    delta_E : ndarray (N, 14)
        ΔE_i in CIE 1964 U*V*W*.
    """

    Ra: np.ndarray
    R: np.ndarray
    dc: np.ndarray
    within_dc_limit: np.ndarray
    reference: tuple[str, ...]
    reference_cct_K: np.ndarray
    uv_test: np.ndarray
    uv_reference: np.ndarray
    UVW_test: np.ndarray
    UVW_reference: np.ndarray
    delta_E: np.ndarray


# --------------------------------------------------------------------------- input checks


def _check_grid(wl: np.ndarray) -> None:
    if wl.ndim == 1 and wl.tobytes() in _GRIDS_OK:
        return
    _check_grid_once(wl)
    if len(_GRIDS_OK) < 64:
        _GRIDS_OK.add(wl.tobytes())


#: Grids that passed :func:`_check_grid` (by bytes).
_GRIDS_OK: set[bytes] = set()


def _check_grid_once(wl: np.ndarray) -> None:
    fix = "prepare the spectra first (uniform 1 nm or 5 nm integer grid covering 380-780 nm within 360-830 nm)"
    if wl.ndim != 1 or wl.size < 2:
        raise GridError("wavelengths must be a 1-D array of at least two values", field="wavelengths_nm", fix=fix)
    if not np.all(np.isfinite(wl)):
        raise GridError("wavelengths contain non-finite values", field="wavelengths_nm", fix=fix)
    step = wl[1] - wl[0]
    if step not in (1.0, 5.0) or not np.allclose(np.diff(wl), step, rtol=0.0, atol=1e-9):
        raise GridError(
            f"wavelength spacing must be exactly 1 nm or 5 nm (found {np.diff(wl).min():g}-{np.diff(wl).max():g} nm)",
            field="wavelengths_nm",
            fix=fix,
        )
    if not np.allclose(wl, np.round(wl), rtol=0.0, atol=1e-9):
        raise GridError("wavelengths must be integers in nm", field="wavelengths_nm", fix=fix)
    if wl[0] < 360.0 or wl[-1] > 830.0 or wl[0] > 380.0 or wl[-1] < 780.0:
        raise GridError(
            f"wavelength range {wl[0]:g}-{wl[-1]:g} nm must cover 380-780 nm and lie within 360-830 nm",
            field="wavelengths_nm",
            fix=fix,
        )


@lru_cache(maxsize=32)
def _tcs_on_grid(start: int, stop: int, step: int) -> np.ndarray:
    """Spectral radiance factors of TCS01-14 on the grid, shape (14, W).

    Grid points on the 5 nm table are taken as tabulated (CIE 13.3); others are Sprague
    interpolated (CIE 15:2004 §7.2.1, CIE 167:2005) with colour-science's implementation, as
    tabulated at 1 nm by :mod:`lumeval._tables`.
    """
    from .._tables import table

    wl_t, tcs = table("tcs")
    idx = np.arange(start, stop + 1, step) - int(wl_t[0])
    out = np.array(tcs[:, idx])
    out.setflags(write=False)
    return out


# --------------------------------------------------------------------------- the computation


def _uv(XYZ: np.ndarray) -> np.ndarray:
    """CIE 1960 UCS u = 4X/(X+15Y+3Z), v = 6Y/(X+15Y+3Z) (CIE 15:2004 §8.1 note), on the last axis."""
    X, Y, Z = XYZ[..., 0], XYZ[..., 1], XYZ[..., 2]
    d = X + 15.0 * Y + 3.0 * Z
    return np.stack([4.0 * X / d, 6.0 * Y / d], axis=-1)


def _cd(u: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """CIE 13.3 adaptive-shift terms c = (4 − u − 10v)/v, d = (1.708v + 0.404 − 1.481u)/v."""
    return (4.0 - u - 10.0 * v) / v, (1.708 * v + 0.404 - 1.481 * u) / v


def _sample_colorimetry(S: np.ndarray, weighted: np.ndarray, ybar_w: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Y-normalised XYZ of the source (N, 3) and of the 14 samples (N, 14, 3).

    ``weighted`` is the (W, 14*3) matrix β_i(λ)·x̄(λ)·Δλ; the normalisation makes the source's
    own Y equal to 100 (CIE 13.3, CIE 15:2004 Eq. 7.1 with k = 100 / Σ S ȳ Δλ).
    """
    k = 100.0 / mm(S, ybar_w)  # (N,)
    samples = mm(S, weighted).reshape(S.shape[0], len(TCS_NAMES), 3) * k[:, None, None]
    return k, samples


def _grid_kernels(start: int, stop: int, step: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(x̄ Δλ (W, 3), ȳ Δλ (W,), β_i x̄ Δλ (W, 42), both side by side (W, 45)) on the grid
    start..stop by step (nm).

    Cached per grid together with the TCS table it was built from (:func:`_tcs_on_grid`, read
    every time: a different table, as a test may substitute, rebuilds the kernels)."""
    tcs = _tcs_on_grid(start, stop, step)  # (14, W)
    hit = _KERNELS.get((start, stop, step))
    if hit is not None and hit[0] is tcs:
        return hit[1]
    wl = np.arange(start, stop + 1, step, dtype=float)
    cmf_w = cmfs_at(wl, OBSERVER_2) * float(step)  # (W, 3): x̄ Δλ
    weighted = (tcs[:, :, None] * cmf_w[None, :, :]).transpose(1, 0, 2).reshape(wl.size, -1)  # (W, 42)
    both = np.ascontiguousarray(np.concatenate([cmf_w, weighted], axis=1))  # (W, 45): one product
    out = (both[:, :3], np.ascontiguousarray(cmf_w[:, 1]), both[:, 3:], both)
    for a in out:
        a.setflags(write=False)
    if len(_KERNELS) < 32:
        _KERNELS[(start, stop, step)] = (tcs, out)
    return out


_KERNELS: dict[tuple[int, int, int], tuple[np.ndarray, tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]]] = {}


def _grid_key(wl: np.ndarray) -> tuple[int, int, int]:
    return int(round(wl[0])), int(round(wl[-1])), int(round(wl[1] - wl[0]))


@dataclass(frozen=True)
class CRIReference:
    """The reference side of CIE 13.3 for N spectra: what the test side is compared with.

    Attributes
    ----------
    uv : ndarray (N, 2)
        CIE 1960 (u, v) of the reference illuminant (NaN rows: no reference).
    UVW : ndarray (N, 14, 3)
        CIE 1964 U*, V*, W* of TCS01-14 under the reference, the white at (u, v) above.
    """

    uv: np.ndarray
    UVW: np.ndarray


def cri_reference_from_spd(wavelengths_nm: ArrayLike, reference_values: ArrayLike) -> CRIReference:
    """CIE 13.3 reference side computed from reference SPDs (N, W) on a prepared grid.

    Steps 3 and 5 of the module docstring applied to the reference illuminant: its (u, v), the
    14 samples' Y-normalised XYZ (source Y = 100) and their U*V*W* with the reference as white
    (CIE 13.3-1995; CIE 15:2004). Rows that are not finite give NaN.
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    S_r = np.atleast_2d(np.asarray(reference_values, dtype=float))
    cmf_w, ybar_w, weighted, _ = _grid_kernels(*_grid_key(wl))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        uv_r = _uv(mm(S_r, cmf_w))
        _, XYZ_ri = _sample_colorimetry(S_r, weighted, ybar_w)
        uv_ri = _uv(XYZ_ri)
        u_w = uv_r[:, 0][:, None]
        v_w = uv_r[:, 1][:, None]
        W_r = 25.0 * np.cbrt(XYZ_ri[..., 1]) - 17.0
        UVW_r = np.stack([13.0 * W_r * (uv_ri[..., 0] - u_w), 13.0 * W_r * (uv_ri[..., 1] - v_w), W_r], axis=-1)
    return CRIReference(uv=uv_r, UVW=UVW_r)


def cri_reference(wavelengths_nm: ArrayLike, cct_K: ArrayLike) -> CRIReference:
    """CIE 13.3 reference side at ``cct_K`` computed directly (reference SPD by
    :func:`lumeval.metrics.reference.cri_reference_spd`, then :func:`cri_reference_from_spd`).
    :func:`lumeval.metrics.reference_table.reference_side` gives the same quantities from a
    table (within its stated bound)."""
    wl = np.asarray(wavelengths_nm, dtype=float)
    T = np.atleast_1d(np.asarray(cct_K, dtype=float))
    return cri_reference_from_spd(wl, cri_reference_spd(wl, T))


def cie133_cri(
    wavelengths_nm: ArrayLike, values: ArrayLike, cct_K: ArrayLike, *, reference: CRIReference | None = None
) -> CRIResult:
    """CIE 13.3-1995 colour rendering indices of N spectra.

    Parameters
    ----------
    wavelengths_nm : array_like, shape (W,)
        A prepared grid: uniform 1 nm on integers or 5 nm on multiples of 5 nm, covering 380-780 nm
        and lying within 360-830 nm.
    values : array_like, shape (N, W) or (W,)
        Spectral power distributions (any radiometric unit; only relative values matter).
    cct_K : array_like, shape (N,) (or scalar for one spectrum)
        CCT of each spectrum from lumeval's Ohno (2014) method. NaN gives NaN results for that
        spectrum (no exception).
    reference : CRIReference, optional
        The reference side at ``cct_K`` already computed (the engine passes the tabulated one,
        :func:`lumeval.metrics.reference_table.reference_side`); computed directly when None.

    Returns
    -------
    CRIResult
        Arrays of shape (N,), (N, 2), (N, 14) and (N, 14, 3); see :class:`CRIResult`.

    Raises
    ------
    lumeval.errors.InputError
        If the grid is not a prepared one or the shapes do not match.

    Notes
    -----
    See the module docstring for the equations and their sources (CIE 13.3-1995; CIE 15:2004).
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    _check_grid(wl)
    S = np.asarray(values, dtype=float)
    if S.ndim == 1:
        S = S[None, :]
    if S.ndim != 2 or S.shape[1] != wl.size:
        raise InputError(
            f"values have shape {np.shape(values)}, expected (N, {wl.size}) to match the wavelengths",
            field="values",
            fix="pass one row per spectrum sampled on the given wavelengths",
        )
    n = S.shape[0]
    T = np.asarray(cct_K, dtype=float)
    if T.ndim == 0:
        T = np.full(n, float(T))
    if T.shape != (n,):
        raise InputError(
            f"cct_K has shape {T.shape}, expected ({n},)",
            field="cct_K",
            fix="pass one CCT per spectrum (NaN where undefined)",
        )
    if reference is not None and reference.uv.shape != (n, 2):
        raise InputError(f"reference side for {reference.uv.shape[0]} spectra, values {n}", field="reference",
                         fix="pass the reference side computed for the same spectra")

    kernel45 = _grid_kernels(*_grid_key(wl))[3]
    defined = np.isfinite(T) & (T > 0)
    if reference is None:
        reference = cri_reference(wl, T)  # NaN rows where T undefined
    uv_r = np.array(reference.uv, dtype=float)
    UVW_r = np.array(reference.UVW, dtype=float)

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # Test source (k): chromaticity of the source itself, samples with the source's Y = 100.
        # source and samples in one product with the (W, 45) kernel [x̄Δλ | β_i x̄Δλ]
        both = S @ kernel45
        XYZ_k = both[:, :3]
        uv_k = _uv(XYZ_k)
        k = 100.0 / XYZ_k[:, 1]  # source Y = 100 (CIE 13.3; CIE 15:2004 Eq. 7.1)
        XYZ_ki = both[:, 3:].reshape(n, len(TCS_NAMES), 3) * k[:, None, None]
        uv_ki = _uv(XYZ_ki)  # (N, 14, 2)

        # Adaptive colour shift (von Kries type in CIE 1960 UCS), CIE 13.3.
        c_k, d_k = _cd(uv_k[:, 0], uv_k[:, 1])
        c_r, d_r = _cd(uv_r[:, 0], uv_r[:, 1])
        c_ki, d_ki = _cd(uv_ki[..., 0], uv_ki[..., 1])
        cc = (c_r / c_k)[:, None] * c_ki
        dd = (d_r / d_k)[:, None] * d_ki
        den = 16.518 + 1.481 * cc - dd
        u_adapt = (10.872 + 0.404 * cc - 4.0 * dd) / den
        v_adapt = 5.520 / den

        # CIE 1964 U*V*W*; the adapted white of the test source is (u_r, v_r).
        u_w = uv_r[:, 0][:, None]
        v_w = uv_r[:, 1][:, None]
        W_k = 25.0 * np.cbrt(XYZ_ki[..., 1]) - 17.0
        UVW_k = np.stack([13.0 * W_k * (u_adapt - u_w), 13.0 * W_k * (v_adapt - v_w), W_k], axis=-1)

        dE = np.sqrt(((UVW_k - UVW_r) ** 2).sum(axis=-1))
        R = 100.0 - 4.6 * dE
        Ra = R[:, :8].mean(axis=1)
        dc = np.hypot(uv_k[:, 0] - uv_r[:, 0], uv_k[:, 1] - uv_r[:, 1])

    # Anything not finite (undefined CCT, an all-zero spectrum) is reported as NaN.
    bad = ~defined | ~np.isfinite(Ra) | ~np.all(np.isfinite(R), axis=1)
    if bad.any():
        for arr in (Ra, dc):
            arr[bad] = np.nan
        for arr in (R, dE, uv_r, UVW_k, UVW_r):
            arr[bad] = np.nan
    within = np.zeros(n, dtype=bool)
    np.less(dc, DC_LIMIT, out=within, where=np.isfinite(dc))
    # "" where undefined, else the reference's kind by its CCT (one array lookup, not a Python
    # expression per spectrum)
    with np.errstate(invalid="ignore"):
        pick = np.where(defined & ~bad, np.where(np.asarray(T, dtype=float) < DAYLIGHT_FROM_K, 1, 2), 0)
    kinds = tuple(np.array(["", PLANCKIAN, DAYLIGHT], dtype=object)[pick].tolist())
    ref_T = np.where(defined & ~bad, T, np.nan)
    return CRIResult(
        Ra=Ra,
        R=R,
        dc=dc,
        within_dc_limit=within,
        reference=kinds,
        reference_cct_K=ref_T,
        uv_test=uv_k,
        uv_reference=uv_r,
        UVW_test=UVW_k,
        UVW_reference=UVW_r,
        delta_E=dE,
    )
