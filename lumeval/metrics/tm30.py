"""CIE 224:2017 colour fidelity index and ANSI/IES TM-30 (-18, -20) Rf, Rg and hue-bin values.

Vectorised over N spectra: every array operation runs over all spectra at once (the 99 colour
evaluation samples, the CIECAM02 / CAM02-UCS conversion, the hue-bin averages and the gamut
polygons). One spectrum is the case N = 1.

Sources
-------
- CIE 224:2017 *CIE 2017 Colour Fidelity Index for accurate scientific use* (CIE TC 1-90):
  the 99 colour evaluation samples (CES), the CIE 1964 10° observer for all colorimetry except
  the CCT, the reference illuminant (Planckian below 4000 K, CIE daylight above 5000 K, a blend
  of the two normalised to equal Y in between), CIECAM02 with L_A = 100 cd/m², Y_b = 20,
  average surround and complete adaptation (D = 1), the CAM02-UCS uniform space, the colour
  difference ΔE′ (Euclidean in J′a′b′) and the scaling ``Rf = 10 ln(exp((100 − 6.73 ΔE′)/10) + 1)``
  (CIE 224:2017 §4; clause numbers quoted from memory, not re-read for this module).
- ANSI/IES TM-30-18 and TM-30-20 *IES Method for Evaluating Light Source Color Rendition*: the
  same Rf (TM-30-18 aligned its fidelity index with CIE 224:2017, including c = 6.73), plus
  16 hue bins of 22.5° defined on the *reference* hue angle of each CES, the bin-average
  (a′, b′) of test and reference, the gamut index Rg = 100 · A_test / A_ref from the areas of the
  two 16-gon polygons through the bin averages, the local fidelity Rf,hj (Rf scaling applied to
  the bin-mean ΔE′), the local chroma shift Rcs,hj and the local hue shift Rhs,hj, both projected
  on the unit vector bisecting bin j and divided by the radius of the reference bin average.
- CES spectral reflectances: colour-science 0.4.7's copy of the CIE 224:2017 1 nm table
  (``colour/quality/datasets/tcs_cfi2017_1_nm.csv.gz``, 380-780 nm); on a 5 nm grid every fifth
  row is used (colour's 5 nm file is exactly that subsample).
- CIECAM02 and CAM02-UCS: a direct numpy forward model for the fixed CIE 224:2017 viewing
  conditions (:func:`lumeval.metrics.cam02ucs.cam02ucs_cie224`; CIE 159:2004; Moroney et al. (2002); Luo, Cui & Li (2006)
  Color Res. Appl. 31(4):320-330), tested against colour-science's
  vectorised ``XYZ_to_CIECAM02`` + ``JMh_CIECAM02_to_CAM02UCS`` to ≤ 1e-10
  (tests/test_metrics_tm30_cam02.py).
- Reference SPDs: :mod:`lumeval.metrics.reference` (Planck with c2 = 1.4388e-2 m K; CIE daylight
  with M1, M2 rounded to three decimals and the 5 nm S0, S1, S2 basis interpolated *linearly* to
  1 nm — see "Differences from colour-science" below).

Wavelength range and grid
-------------------------
Spectra arrive prepared (uniform 1 nm on integers or 5 nm on multiples of 5 nm, covering 380-780 nm; see
the shared interface notes). CIE 224:2017 evaluates over 380-780 nm: the spectra are cropped to
that range here, and all sums (test, reference, CES, CMFs) run over it on the spectra's own grid.

Differences from colour-science 0.4.7 (measured; see tests/test_metrics_tm30.py)
--------------------------------------------------------------------------------
With the same CCT and the same reference rules the two engines agree to ≤ 2e-11 on Rf, Rg,
Rf,CES, Rf,h, Rcs,h and Rhs,h (1 nm and 5 nm). The rules differ in three places:

1. CCT: lumeval passes its own Ohno (2014) CCT (CIE 1931 2°, computed on the prepared grid);
   colour computes Ohno 2013 on the 380-780 nm crop. The caller supplies ``cct_K``.
2. Daylight basis on a 1 nm grid: colour interpolates the 5 nm S0, S1, S2 with Sprague;
   :mod:`lumeval.metrics.reference` interpolates linearly (its docstring cites CIE 15:2004
   §3.1; the 5 nm table is itself a linear interpolation of the original 10 nm data:
   Kránicz & Schanda (2000) Color Res. Appl. 25(4):250-259, abstract). luxpy 1.12.5 also
   interpolates linearly, and on 1 nm daylight-range sources lumeval agrees with luxpy more
   closely than colour does (e.g. CIE LED-B5: 6e-5 against 4.8e-3 in Rf). On 5 nm grids the two
   are identical. Effect on 1 nm daylight/blend sources: Rf ≤ 6e-3, Rg ≤ 1.4e-3.
3. Blend normalisation (4000-5000 K): both components are scaled to equal Y before mixing.
   colour uses the CIE 1931 2° ȳ for both methods; luxpy 1.12.5 uses the CIE 1964 10° ȳ for
   TM-30-18/-20/-24 and the 2° ȳ for CIE 224:2017; the R package colorSpec (``computeTM30``,
   TM-30-20) also scales both components to Y10 = 100. :func:`tm30` follows the two independent
   TM-30 implementations (``blend_observer``, default 10°) and :func:`cie2017_rf` luxpy's CIE 224
   choice (2°). This was not read in the standards' text (not available to us); the effect is
   ≤ 1.3e-4 in Rf.

Known limit: under very warm references (measured: 1000 K and 1100 K Planckian) some hue bins
hold no CES; Rg and those bins' Rf,h / Rcs,h / Rhs,h are then NaN (colour-science gives NaN too;
colorSpec instead drops the empty bins from the polygons, which TM-30 does not describe) while
Rf stays defined. ``reason`` says so.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, cast

import numpy as np
from numpy.typing import ArrayLike

from ..errors import GridError, InputError
from ._rowwise import mm
from .cam02ucs import L_A, Y_B, _cam02ucs, cam02ucs_cie224  # noqa: F401  (cam02ucs_cie224: public here too)
from .ces import (  # noqa: F401  (here too)
    _ces_cmf_kernel,
    _ces_table,
    _ces_xyz,
    _cfi_tables,
    ces_interpolation,
    ces_reflectances,
)
from .colorimetry import OBSERVER_2, OBSERVER_10, cmfs_at
from .reference import daylight_spd, planckian_spd

#: Wavelength range of the CIE 224:2017 computation (nm).
CFI_RANGE_NM = (380.0, 780.0)
#: Scaling constant of the Rf formula (CIE 224:2017; ANSI/IES TM-30-18 onward).
C_F = 6.73
#: Number of hue bins (TM-30-18) and their width in degrees.
N_BINS = 16
BIN_WIDTH_DEG = 22.5
#: A CES whose reference hue lies within this many degrees of a hue-bin edge sits on a knife
#: edge: implementations that agree to 0.01° on the hue (different CAM02 rounding, CMF
#: interpolation or summation order) may put it in either bin, and the bin values Rf,hj,
#: Rcs,hj, Rhs,hj of both bins can then differ by several points (ANSI/IES TM-30-18 assigns a
#: CES to bin j = floor(h / 22.5°) with no tolerance; the 0.01° band is lumeval's choice).
HUE_EDGE_TOLERANCE_DEG = 0.01
#: Below this CCT the reference is Planckian, above ``BLEND_HI_K`` CIE daylight, in between a
#: blend (CIE 224:2017; TM-30-18).
BLEND_LO_K = 4000.0
BLEND_HI_K = 5000.0
#: Observer whose ȳ sets the equal-Y normalisation of the two blend components.
BLEND_OBSERVER_DEFAULT = OBSERVER_10

REFERENCE_PLANCKIAN = "Planckian"
REFERENCE_DAYLIGHT = "CIE daylight"
REFERENCE_BLEND = "blend"


@dataclass(frozen=True)
class TM30Result:
    """CIE 224:2017 / ANSI/IES TM-30-18 figures for N spectra (NaN where not computable).

    Attributes
    ----------
    Rf : ndarray (N,)
        Fidelity index Rf (CIE 224:2017 Rf; TM-30-18 Rf).
    Rg : ndarray (N,)
        Gamut index Rg = 100 · A_test / A_ref (TM-30-18).
    Rf_ces : ndarray (N, 99)
        Special fidelity index of each colour evaluation sample, Rf,CESi ((N, 0) when not
        computed: ``tm30(..., details=False)``, the engine's ``keep_details=False``).
    delta_E_ces : ndarray (N, 99)
        ΔE′ (CAM02-UCS) of each CES between test and reference.
    Rf_h : ndarray (N, 16)
        Local fidelity index per hue bin, Rf,hj (Rf scaling of the bin-mean ΔE′).
    Rcs_h : ndarray (N, 16)
        Local chroma shift per hue bin, Rcs,hj, in PERCENT (TM-30 reports it as a percentage).
    Rhs_h : ndarray (N, 16)
        Local hue shift per hue bin, Rhs,hj: dimensionless (the tangential shift of the bin
        average divided by the reference bin radius; for small shifts it approximates the
        hue-angle shift in radians). TM-30-18 reports it unscaled; it is not a percentage.
    avg_ab_test, avg_ab_ref : ndarray (N, 16, 2)
        Bin-average (a′, b′) in CAM02-UCS under the test source and the reference.
    bin_count : ndarray (N, 16) of int
        Number of CES whose reference hue falls in each bin.
    hue_bin : ndarray (N, 99) of int
        Bin index (0-15) of each CES, from its reference hue angle h (floor(h / 22.5°)).
    Jab_test, Jab_ref : ndarray (N, 99, 3)
        CAM02-UCS (J′, a′, b′) of each CES under the test source and the reference.
    cct_K : ndarray (N,)
        The CCT used to build the reference (as passed in).
    daylight_fraction : ndarray (N,)
        Share of CIE daylight in the reference: 0 (Planckian), 1 (daylight), between for blends.
    reference : tuple of str (N,)
        'Planckian', 'CIE daylight', 'blend', or '' where no reference was built.
    reason : tuple of str (N,)
        Empty where the figures were computed, otherwise why they are NaN.
    spacing_nm : float
        Grid spacing the computation ran on (1 or 5 nm).
    blend_observer : str
        Observer whose ȳ normalised the blend components.
    hue_edge_pairs : tuple (N,) of tuple of (int, int)
        Per spectrum, the (hue bin, CES) pairs on a knife edge: CES whose reference hue lies
        within :data:`HUE_EDGE_TOLERANCE_DEG` of a bin edge, listed with both bins the edge
        separates (1-based: bins 1-16, CES 1-99); see :func:`hue_edge_pairs`.
    """

    Rf: np.ndarray
    Rg: np.ndarray
    Rf_ces: np.ndarray
    delta_E_ces: np.ndarray
    Rf_h: np.ndarray
    Rcs_h: np.ndarray
    Rhs_h: np.ndarray
    avg_ab_test: np.ndarray
    avg_ab_ref: np.ndarray
    bin_count: np.ndarray
    hue_bin: np.ndarray
    Jab_test: np.ndarray
    Jab_ref: np.ndarray
    cct_K: np.ndarray
    daylight_fraction: np.ndarray
    reference: tuple[str, ...]
    reason: tuple[str, ...]
    spacing_nm: float
    blend_observer: str
    hue_edge_pairs: tuple[Any, ...] = ()


# --------------------------------------------------------------------------- input checks


def _crop_grid(wavelengths_nm: ArrayLike, values: ArrayLike) -> tuple[np.ndarray, np.ndarray, float]:
    wl = np.asarray(wavelengths_nm, dtype=float)
    if wl.ndim != 1 or wl.size < 2:
        raise GridError(
            "wavelengths must be a 1-D array of at least two values",
            fix="prepare the spectra (lumeval.spectra) before computing metrics",
        )
    vals = np.asarray(values, dtype=float)
    if vals.ndim == 1:
        vals = vals[None, :]
    if vals.ndim != 2 or vals.shape[1] != wl.size:
        raise GridError(
            f"values of shape {np.shape(values)} do not match {wl.size} wavelengths",
            fix="pass values of shape (N, W) or (W,) on the wavelength grid",
        )
    key = wl.tobytes()
    hit = _GRIDS_OK.get(key)
    if hit is not None:  # a grid already checked: the same crop
        return hit[0], vals[:, hit[1]], hit[2]
    d = np.diff(wl)
    step = float(d[0])
    if not (np.allclose(d, step, rtol=0, atol=1e-9) and step in (1.0, 5.0)):
        raise GridError(
            "CIE 224:2017 / TM-30 need a uniform 1 nm or 5 nm grid",
            fix="prepare the spectra (Sprague-interpolate to 1 nm) first",
        )
    if not np.allclose(wl, np.rint(wl), rtol=0, atol=1e-9):
        raise GridError("wavelengths must be integers (nm)", fix="prepare the spectra first")
    lo, hi = CFI_RANGE_NM
    if wl[0] > lo or wl[-1] < hi:
        raise GridError(
            f"spectrum covers {wl[0]:g}-{wl[-1]:g} nm; CIE 224:2017 needs 380-780 nm",
            fix="extend or re-measure the spectrum to cover 380-780 nm",
        )
    keep_mask = (wl >= lo - 1e-9) & (wl <= hi + 1e-9)
    i0 = int(np.argmax(keep_mask))
    keep = slice(i0, i0 + int(keep_mask.sum()))  # a contiguous range: a view, not a copy
    wl_c = np.rint(wl[keep])
    if (wl_c[0] - lo) % step or (hi - wl_c[-1]) % step or wl_c[0] != lo or wl_c[-1] != hi:
        raise GridError(
            f"the {step:g} nm grid does not fall on 380 nm and 780 nm",
            fix="prepare the spectra on integer wavelengths that are multiples of the spacing",
        )
    if len(_GRIDS_OK) < 64:
        wl_c.setflags(write=False)
        _GRIDS_OK[key] = (wl_c, keep, step)
    return wl_c, vals[:, keep], step


#: Grids that passed :func:`_crop_grid`'s checks: (cropped wavelengths, slice, step) by bytes.
_GRIDS_OK: dict[bytes, tuple[np.ndarray, slice, float]] = {}


# --------------------------------------------------------------------------- reference


def reference_spd(
    wavelengths_nm: ArrayLike, cct_K: ArrayLike, *, blend_observer: str = BLEND_OBSERVER_DEFAULT
) -> tuple[np.ndarray, np.ndarray]:
    """CIE 224:2017 / TM-30-18 reference illuminant at ``cct_K`` on ``wavelengths_nm``.

    Planckian radiator for T < 4000 K, CIE daylight for T > 5000 K, and for
    4000 K ≤ T ≤ 5000 K the blend ``S_r = (1 − m) S_P / Y_P + m S_D / Y_D`` with
    m = (T − 4000 K) / 1000 K, each component normalised to equal Y computed on the same grid
    with ``blend_observer``'s ȳ (CIE 224:2017 §4 reference illuminant; TM-30-18 §4 — clause
    numbers from memory).

    Returns
    -------
    spd : ndarray (N, W)
        Relative SPD (scale arbitrary: every use is relative colorimetry). NaN rows where the
        CCT is not finite.
    daylight_fraction : ndarray (N,)
        m as above (0 below 4000 K, 1 above 5000 K), NaN where the CCT is not finite.
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    T = np.atleast_1d(np.asarray(cct_K, dtype=float))
    out = np.full((T.size, wl.size), np.nan)
    ok = np.isfinite(T) & (T > 0)
    m = np.where(ok, np.clip((T - BLEND_LO_K) / (BLEND_HI_K - BLEND_LO_K), 0.0, 1.0), np.nan)
    need_p = ok & (T <= BLEND_HI_K)
    need_d = ok & (T >= BLEND_LO_K)
    P = np.zeros((T.size, wl.size))
    D = np.zeros((T.size, wl.size))
    if need_p.any():
        P[need_p] = planckian_spd(wl, T[need_p])
    if need_d.any():
        D[need_d] = daylight_spd(wl, T[need_d])
    pl = ok & (T < BLEND_LO_K)
    dl = ok & (T > BLEND_HI_K)
    bl = need_p & need_d
    out[pl] = P[pl]
    out[dl] = D[dl]
    if bl.any():
        out[bl] = blend_spd(wl, P[bl], D[bl], m[bl], blend_observer)
    return out, m


def blend_spd(wavelengths_nm: ArrayLike, P: np.ndarray, D: np.ndarray, m: np.ndarray, blend_observer: str) -> np.ndarray:
    """The 4000-5000 K blend ``(1 − m) P / Y_P + m D / Y_D`` of Planckian ``P`` and daylight ``D``
    (N, W), each normalised to equal Y with ``blend_observer``'s ȳ (CIE 224:2017; TM-30-18)."""
    ybar = cmfs_at(np.asarray(wavelengths_nm, dtype=float), blend_observer)[:, 1]
    YP = mm(P, ybar)
    YD = mm(D, ybar)
    mb = np.asarray(m, dtype=float)[:, None]
    return cast("np.ndarray", (1.0 - mb) * P / YP[:, None] + mb * D / YD[:, None])


# --------------------------------------------------------------------------- core


def _Rf_scale(delta_E: ArrayLike) -> np.ndarray:
    """Rf = 10 ln(exp((100 − 6.73 ΔE′)/10) + 1) (CIE 224:2017; TM-30-18).

    Written with ``np.log`` of 1 + exp(…), not ``np.log1p``: numpy's logarithm is vectorised
    and its log1p is not (5.4 against 13 ns a value on this machine, 2026-12-05). log1p is
    only more accurate where exp(…) is far below 1, i.e. Rf near 0; the two differ by at most
    3·10⁻¹⁴ in Rf (two units in the last place of a value near 100; ΔE′ from 0 to 40 in steps
    of 0.0004, compared once), and Rf is judged on absolute differences."""
    y = np.asarray(np.exp((100.0 - C_F * np.asarray(delta_E, dtype=float)) / 10.0))
    y += 1.0
    np.log(y, out=y)
    y *= 10.0
    return y


def _jab(
    wl: np.ndarray, S: np.ndarray, R: np.ndarray, cmf10: np.ndarray, kernel: np.ndarray | None = None,
    with_hue: bool = True,
) -> tuple[np.ndarray, np.ndarray]:
    """CAM02-UCS J′a′b′ of the CES under the light sources ``S`` (M, W): (M, 99, 3), h (M, 99).

    Relative colorimetry with the CIE 1964 10° observer: XYZ = 100 Σ R S x̄ / Σ S ȳ (the white
    has Y_w = 100); CIECAM02 with L_A = 100, Y_b = 20, average surround, D = 1 (discounting the
    illuminant), then CAM02-UCS (CIE 224:2017), by :func:`cam02ucs_cie224`. Without
    ``with_hue`` the hue angle is not computed (an empty (M, 0) array is returned for it).
    """
    if kernel is None:
        kernel = _ces_cmf_kernel(R, cmf10)
    XYZ_w = mm(S, cmf10)  # (M, 3)
    k = 100.0 / XYZ_w[:, 1]
    XYZ = _ces_xyz(wl, S, kernel)
    return _cam02ucs(XYZ, XYZ_w, k, L_A, Y_B, with_hue)


def reference_hue(Jab_ref: np.ndarray) -> np.ndarray:
    """CIECAM02 hue angle h (degrees, [0, 360)) of CES from their CAM02-UCS (J′, a′, b′):
    a′ = M′ cos h and b′ = M′ sin h with M′ ≥ 0 (Luo, Cui & Li 2006), so h = atan2(b′, a′)."""
    h = np.degrees(np.arctan2(Jab_ref[..., 2], Jab_ref[..., 1]))  # in [-180°, 180°]
    # h mod 360° without numpy's general remainder: for |h| < 360 it is h + 360 where h < 0
    # (the same addition numpy's remainder makes) and h itself elsewhere
    np.add(h, 360.0, out=h, where=h < 0.0)
    h += 0.0  # -0° (atan2(-0, x)) as +0°, as the remainder gives it
    return cast("np.ndarray", h)


#: Degrees beyond the knife-edge tolerance within which :func:`_bin_positions` takes the
#: reference hue from :func:`reference_hue` itself (its quicker form differs from it by about
#: 1e-13°).
_HUE_EXACT_MARGIN_DEG = 1e-6


def _bin_positions(Jab_ref: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(floor(h / 22.5°), h − 22.5°·floor(h / 22.5°), near) of the reference hue h of each CES:
    the hue bin (0-based, before clipping) and the position within it in degrees, as computed
    from :func:`reference_hue`, bit for bit, and where h is near an edge (every knife edge is
    among these).

    numpy's arctan2 is not vectorised (25 ns a value on the project machine, its arctan 9 ns):
    h is taken as arctan(b′/a′) in degrees, plus 180° where a′ < 0 and 360° where it is still
    negative, within about 1e-13° of :func:`reference_hue`. That decides the bin and the knife
    edges (within :data:`HUE_EDGE_TOLERANCE_DEG` of an edge) of every CES farther than the
    tolerance plus :data:`_HUE_EXACT_MARGIN_DEG` from an edge; the others (and a′ = b′ = 0,
    where the ratio is undefined) are computed from :func:`reference_hue`, as before."""
    a, b = Jab_ref[..., 1], Jab_ref[..., 2]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):  # ±∞ ratios: ±90°, near an edge
        h = np.arctan(b / a)
    h *= 180.0 / np.pi
    np.add(h, 180.0, out=h, where=a < 0.0)
    np.add(h, 360.0, out=h, where=h < 0.0)
    fl = _split_bins(h)
    lo = HUE_EDGE_TOLERANCE_DEG + _HUE_EXACT_MARGIN_DEG
    near = ~((h > lo) & (h < BIN_WIDTH_DEG - lo))  # NaN: near
    if near.any():
        hq = reference_hue(Jab_ref[near])
        fl[near], h[near] = _split_bins(hq), hq
    return fl, h, near


def _split_bins(h: np.ndarray) -> np.ndarray:
    """floor(h / 22.5°) of hues ``h`` (degrees), which are made in place the position within
    that bin: (h / 22.5° − floor) · 22.5°."""
    h /= BIN_WIDTH_DEG
    fl = np.floor(h)
    h -= fl
    h *= BIN_WIDTH_DEG
    return cast("np.ndarray", fl)


def hue_edge_pairs(hue_ref_deg: ArrayLike, tolerance_deg: float = HUE_EDGE_TOLERANCE_DEG) -> tuple[tuple[tuple[int, int], ...], ...]:
    """The (hue bin, CES) pairs on a knife edge, per spectrum.

    A CES is on a knife edge when its reference hue h lies within ``tolerance_deg`` of a
    hue-bin edge k·22.5° (bins j = floor(h / 22.5°), ANSI/IES TM-30-18; the edge at 0°/360°
    separates bins 16 and 1). Such a CES is listed with **both** bins the edge separates, since
    either assignment is within the numerical agreement of equally valid implementations.

    Parameters
    ----------
    hue_ref_deg : array_like, shape (N, 99) (or (99,))
        Reference hue angles of the CES in degrees (any real value; taken modulo 360°);
        NaN rows (spectra without TM-30 figures) give no pairs.
    tolerance_deg : float

    Returns
    -------
    tuple (N,) of tuple of (int, int)
        1-based (bin, CES) pairs, ordered by CES then bin.
    """
    h = np.atleast_2d(np.asarray(hue_ref_deg, dtype=float))
    # Distance above the bin edge below: h mod 22.5° (NaN, for no figures, matches nothing).
    with np.errstate(invalid="ignore"):  # ±inf: NaN, no pair
        r = np.mod(h, BIN_WIDTH_DEG)
    edge = (r <= tolerance_deg) | (r >= BIN_WIDTH_DEG - tolerance_deg)
    out: list[tuple[tuple[int, int], ...]] = [()] * h.shape[0]
    rows, cols = np.nonzero(edge)
    if rows.size:
        hh = np.mod(h[rows, cols], 360.0)
        own = np.clip(np.floor(hh / BIN_WIDTH_DEG).astype(int), 0, N_BINS - 1)
        near_low = r[rows, cols] <= tolerance_deg  # just above an edge: the neighbour is the bin below
        other = np.where(near_low, (own - 1) % N_BINS, (own + 1) % N_BINS)
        for i in np.unique(rows).tolist():
            pairs: list[tuple[int, int]] = []
            for j in np.flatnonzero(rows == i).tolist():
                k = int(cols[j])
                a, b = sorted((int(own[j]) + 1, int(other[j]) + 1))
                pairs += [(a, k + 1), (b, k + 1)]
            out[i] = tuple(sorted(pairs, key=lambda t: (t[1], t[0])))
    return tuple(out)


def _edge_pairs(r: np.ndarray, own: np.ndarray, m: int, candidates: tuple[np.ndarray, np.ndarray],
                tolerance_deg: float = HUE_EDGE_TOLERANCE_DEG) -> tuple[Any, ...]:
    """:func:`hue_edge_pairs` from the position within the bin ``r`` (degrees above the bin's
    lower edge) and ``own`` = floor(h / 22.5°) of each (spectrum, CES), shape (m, 99).

    ``candidates``: (rows, columns) in row-major order (``np.nonzero``'s) of the only
    (spectrum, CES) that can lie on an edge (:func:`_bin_positions`' ``near``)."""
    rows, cols = candidates
    rc = r[rows, cols]
    keep = (rc <= tolerance_deg) | (rc >= BIN_WIDTH_DEG - tolerance_deg)
    rows, cols = rows[keep], cols[keep]
    out: list[tuple[tuple[int, int], ...]] = [()] * m
    if not rows.size:
        return tuple(out)
    b0 = own[rows, cols].astype(np.int64) % N_BINS
    b1 = np.where(r[rows, cols] <= tolerance_deg, b0 - 1, b0 + 1) % N_BINS  # just above an edge: the bin below
    lo = (np.minimum(b0, b1) + 1).tolist()
    hi = (np.maximum(b0, b1) + 1).tolist()
    ces = (cols + 1).tolist()
    # each row's CES in increasing order (row-major): pairs ordered by CES, then bin
    cuts = [*(np.flatnonzero(rows[1:] != rows[:-1]) + 1).tolist(), len(ces)]
    start = 0
    for stop in cuts:
        out[int(rows[start])] = tuple(p for j in range(start, stop) for p in ((lo[j], ces[j]), (hi[j], ces[j])))
        start = stop
    return tuple(out)


def hue_edge_warnings(pairs_per_spectrum: Any, i: int) -> list[str]:
    """Warnings for spectrum ``i`` from :attr:`TM30Result.hue_edge_pairs`, one per CES."""
    pairs = pairs_per_spectrum[i] if i < len(pairs_per_spectrum) else ()
    by_ces: dict[int, list[int]] = {}
    for b, c in pairs:
        by_ces.setdefault(c, []).append(b)
    return [
        f"TM-30 hue-bin knife edge: CES {c}'s reference hue lies within {HUE_EDGE_TOLERANCE_DEG:g}° of the edge "
        f"between hue bins {bins[0]} and {bins[-1]}; the bin values (Rf,h, Rcs,h, Rhs,h) of these two bins can "
        "differ between equally valid implementations."
        for c, bins in by_ces.items()
    ]


def _polygon_area(ab: np.ndarray) -> np.ndarray:
    """Signed area of the polygon through the points ``ab`` (N, K, 2), shoelace formula."""
    a, b = ab[..., 0], ab[..., 1]
    return cast("np.ndarray", 0.5 * np.sum(a * np.roll(b, -1, axis=-1) - np.roll(a, -1, axis=-1) * b, axis=-1))


def tm30_from_reference(
    wavelengths_nm: ArrayLike, values: ArrayLike, reference_values: ArrayLike, cct_K: ArrayLike | None = None, *, reference_kind: Any = None,
    daylight_fraction: Any = None, blend_observer: str = BLEND_OBSERVER_DEFAULT,
) -> TM30Result:
    """TM-30-18 figures for test spectra against given reference spectra (same grid).

    Exposed so that a caller (or a test) can supply its own reference illuminant. ``values``
    and ``reference_values`` are (N, W) or (W,) on the same prepared grid; rows with any
    non-finite value or non-positive Y10 give NaN figures.
    """
    wl, S_t, step = _crop_grid(wavelengths_nm, values)
    _, S_r, _ = _crop_grid(wavelengths_nm, reference_values)
    n = S_t.shape[0]
    if S_r.shape[0] != n:
        raise InputError(
            f"{S_r.shape[0]} reference spectra for {n} test spectra",
            fix="pass one reference spectrum per test spectrum",
        )
    return _tm30_core(wl, S_t, reference_jab(wl, S_r), step, cct_K, reference_kind, daylight_fraction, blend_observer)


def reference_jab(wavelengths_nm: ArrayLike, reference_values: ArrayLike) -> np.ndarray:
    """CAM02-UCS J′a′b′ (N, 99, 3) of the CES under reference SPDs (N, W) on a cropped
    380-780 nm grid, computed directly (:func:`_jab`); NaN rows where a reference is not finite
    or its Y10 is not positive."""
    wl = np.asarray(wavelengths_nm, dtype=float)
    S_r = np.atleast_2d(np.asarray(reference_values, dtype=float))
    cmf10, R, kernel = _cfi_tables(wl)
    out = np.full((S_r.shape[0], R.shape[0], 3), np.nan)
    Yr = mm(S_r, cmf10[:, 1])
    ok = np.all(np.isfinite(S_r), axis=1) & np.isfinite(Yr) & (Yr > 0)
    if ok.any():
        out[ok] = _jab(wl, S_r[ok], R, cmf10, kernel, with_hue=False)[0]
    return out


def _tm30_core(
    wl: np.ndarray, S_t: np.ndarray, jab_ref: np.ndarray, step: float, cct_K: ArrayLike | None, reference_kind: Any,
    daylight_fraction: Any, blend_observer: str, details: bool = True,
) -> TM30Result:
    """TM-30-18 figures of test spectra ``S_t`` (N, W) on the cropped grid ``wl`` against the
    reference side ``jab_ref`` (N, 99, 3): the CES's J′a′b′ under each spectrum's reference
    (computed directly or from :mod:`lumeval.metrics.reference_table`). Only the reference hue
    is computed (bins are defined on it); the test side needs J′a′b′ only."""
    n = S_t.shape[0]
    cct = np.full(n, np.nan) if cct_K is None else np.broadcast_to(
        np.asarray(cct_K, dtype=float), (n,)).copy()
    frac = np.full(n, np.nan) if daylight_fraction is None else np.asarray(daylight_fraction, float)
    kinds = tuple(reference_kind) if reference_kind is not None else ("",) * n
    reasons = [""] * n

    cmf10, R, kernel = _cfi_tables(wl)
    Yt = S_t @ cmf10[:, 1]
    ref_ok = np.all(np.isfinite(jab_ref.reshape(n, -1)), axis=1)
    test_finite = np.all(np.isfinite(S_t), axis=1)
    ok = ref_ok & test_finite & np.isfinite(Yt) & (Yt > 0)
    for i in np.flatnonzero(~ok):
        if not ref_ok[i]:
            reasons[i] = "no reference illuminant (CCT undefined)"
        elif not test_finite[i]:
            reasons[i] = "spectrum contains non-finite values"
        else:
            reasons[i] = "spectrum has no luminous content (Y10 ≤ 0)"

    idx = np.flatnonzero(ok)
    m = idx.size

    def place(v: np.ndarray, fill: float = np.nan) -> np.ndarray:
        """Rows of the m computed spectra into an (n, ...) array (no copy when all are computed)."""
        if m == n:
            return v
        out = np.full((n, *v.shape[1:]), fill, dtype=v.dtype)
        out[idx] = v
        return out

    S_ok, jr = (S_t, jab_ref) if m == n else (S_t[idx], jab_ref[idx])
    jt = _jab(wl, S_ok, R, cmf10, kernel, with_hue=False)[0] if m else np.empty((0, 99, 3))
    d = jt - jr
    d *= d  # squared in place: ΔE′ = √(ΔJ′² + Δa′² + Δb′²), summed in that order, (m, 99)
    de = d[..., 0] + d[..., 1]
    de += d[..., 2]
    np.sqrt(de, out=de)
    fl, hq, near = _bin_positions(jr)
    bins = np.clip(fl.astype(int), 0, N_BINS - 1)
    rows, cols = np.nonzero(near)
    edges = _edge_pairs(hq, fl, m, (rows, cols))  # knife edges (see hue_edge_pairs)
    # Per-(spectrum, bin) sums as one weighted bincount over flat indices m·16 + bin.
    flat = (np.arange(m)[:, None] * N_BINS + bins).ravel()

    def binsum(w: np.ndarray) -> np.ndarray:
        return np.bincount(flat, weights=w.ravel(), minlength=m * N_BINS).reshape(m, N_BINS)

    cnt = np.bincount(flat, minlength=m * N_BINS).reshape(m, N_BINS).astype(float)  # (m, 16)
    with np.errstate(invalid="ignore", divide="ignore"):
        at = np.stack([binsum(jt[..., 1]), binsum(jt[..., 2])], axis=-1) / cnt[..., None]
        ar = np.stack([binsum(jr[..., 1]), binsum(jr[..., 2])], axis=-1) / cnt[..., None]
        de_bin = binsum(de) / cnt
        theta = np.deg2rad(BIN_WIDTH_DEG * np.arange(N_BINS) + BIN_WIDTH_DEG / 2.0)
        cos, sin = np.cos(theta), np.sin(theta)
        rr = np.hypot(ar[..., 0], ar[..., 1])
        da = at[..., 0] - ar[..., 0]
        db = at[..., 1] - ar[..., 1]
        Rcs_h = place(100.0 * (da * cos + db * sin) / rr)
        Rhs_h = place((-da * sin + db * cos) / rr)
        Rg = place(100.0 * _polygon_area(at) / _polygon_area(ar))
    Rf = place(_Rf_scale(de.mean(axis=1)))
    Rf_h = place(_Rf_scale(de_bin))
    avg_t, avg_r = place(at), place(ar)
    counts = place(cnt.astype(int), 0)
    Jab_t = place(jt)  # (kept without details: CIE 224's Rf of a blend reuses it)
    if details:
        Rf_ces, dE, hue_bin, Jab_r = place(_Rf_scale(de)), place(de), place(bins, -1), place(jr)
    else:  # the per-CES detail arrays, empty (n, 0): a lot keeps none of them
        Rf_ces = dE = Jab_r = np.empty((n, 0))
        hue_bin = np.empty((n, 0), dtype=int)
    for i in idx[np.any(cnt == 0, axis=1)]:
        reasons[i] = "a hue bin holds no sample: Rg and bin values are undefined"

    return TM30Result(
        Rf=Rf, Rg=Rg, Rf_ces=Rf_ces, delta_E_ces=dE, Rf_h=Rf_h, Rcs_h=Rcs_h, Rhs_h=Rhs_h,
        avg_ab_test=avg_t, avg_ab_ref=avg_r, bin_count=counts, hue_bin=hue_bin,
        Jab_test=Jab_t, Jab_ref=Jab_r, cct_K=cct, daylight_fraction=frac,
        reference=kinds, reason=tuple(reasons), spacing_nm=step, blend_observer=blend_observer,
        hue_edge_pairs=edges if m == n else _placed(edges, idx, n),
    )


def _placed(per_row: tuple[Any, ...], idx: np.ndarray, n: int) -> tuple[Any, ...]:
    """Per-row tuples of the computed rows ``idx`` into a tuple of length ``n`` (``()`` elsewhere)."""
    out: list[Any] = [()] * n
    for i, e in zip(idx.tolist(), per_row):
        out[i] = e
    return tuple(out)


def tm30(
    wavelengths_nm: ArrayLike, values: ArrayLike, cct_K: ArrayLike, *, blend_observer: str = BLEND_OBSERVER_DEFAULT,
    reference: np.ndarray | None = None, details: bool = True,
) -> TM30Result:
    """CIE 224:2017 Rf and ANSI/IES TM-30-18/-20 Rf, Rg and hue-bin figures, vectorised.

    Parameters
    ----------
    wavelengths_nm : array_like, shape (W,)
        Prepared grid: uniform 1 nm on integers or 5 nm on multiples of 5 nm, covering 380-780 nm
        (cropped to 380-780 nm here, as CIE 224:2017 computes over that range).
    values : array_like, shape (N, W) or (W,)
        Spectral power distributions (any radiometric scale: the method is relative).
    cct_K : array_like, shape (N,) or scalar
        CCT of each spectrum from lumeval's Ohno (2014) CCT with the CIE 1931 2° observer
        (CIE 224:2017 computes the CCT with the 2° observer). NaN gives NaN figures and an
        empty ``reference`` entry; no exception.
    blend_observer : str
        Observer whose ȳ normalises the Planckian and daylight components of the 4000-5000 K
        blend (default CIE 1964 10°; colour-science uses CIE 1931 2°).
    reference : ndarray (N, 99, 3), optional
        The reference side already computed: the CES's CAM02-UCS J′a′b′ under each spectrum's
        reference at ``cct_K`` (the engine passes the tabulated one,
        :func:`lumeval.metrics.reference_table.reference_side`); computed directly when None.
    details : bool
        Compute the per-CES detail arrays (``Rf_ces``, ``delta_E_ces``, ``hue_bin``,
        ``Jab_ref``); when False they are empty (N, 0) arrays (a lot keeps none of them: Rf,CESi
        alone is 99 logarithms and exponentials a spectrum). ``Jab_test`` is kept either way.

    Returns
    -------
    TM30Result
        Arrays of shape (N,), (N, 99), (N, 16) and (N, 16, 2); see :class:`TM30Result`.

    Notes
    -----
    ΔE′_i = ‖J′a′b′_test,i − J′a′b′_ref,i‖; Rf from the mean ΔE′ over the 99 CES; Rf,CESi from
    each ΔE′_i (CIE 224:2017). Bins: j = floor(h_ref,i / 22.5°); Rf,hj from the bin-mean ΔE′;
    with the unit vector (cos θj, sin θj), θj = (j + ½)·22.5°, and the bin averages
    (a′_t, b′_t), (a′_r, b′_r): Rcs,hj = 100·(Δa′ cos θj + Δb′ sin θj) / ‖(a′_r, b′_r)‖ in %,
    Rhs,hj = (−Δa′ sin θj + Δb′ cos θj) / ‖(a′_r, b′_r)‖; Rg = 100·A_t/A_r with A the
    polygon areas through the 16 bin averages (ANSI/IES TM-30-18 §4-5; clause numbers from
    memory).
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    vals = np.asarray(values, dtype=float)
    n = 1 if vals.ndim == 1 else vals.shape[0]
    cct = np.broadcast_to(np.atleast_1d(np.asarray(cct_K, dtype=float)), (n,)).copy()
    wl_c, S_t, step = _crop_grid(wl, vals)
    frac = np.where(np.isfinite(cct) & (cct > 0),
                    np.clip((cct - BLEND_LO_K) / (BLEND_HI_K - BLEND_LO_K), 0.0, 1.0), np.nan)
    code = np.where(~(np.isfinite(cct) & (cct > 0)), 0,
                    np.where(cct < BLEND_LO_K, 1, np.where(cct > BLEND_HI_K, 2, 3)))
    names = ("", REFERENCE_PLANCKIAN, REFERENCE_DAYLIGHT, REFERENCE_BLEND)
    kinds = tuple(names[c] for c in code.tolist())
    if reference is None:
        ref, _ = reference_spd(wl_c, cct, blend_observer=blend_observer)
        jab_r = reference_jab(wl_c, ref)
    else:
        jab_r = np.asarray(reference, dtype=float)
        if jab_r.shape != (n, 99, 3):
            raise InputError(f"reference side of shape {jab_r.shape} for {n} spectra",
                             fix="pass the CES J'a'b' under each spectrum's reference, shape (N, 99, 3)")
    return _tm30_core(wl_c, S_t, jab_r, step, cct, kinds, frac, blend_observer, details)


def cie2017_rf(
    wavelengths_nm: ArrayLike, values: ArrayLike, cct_K: ArrayLike, *, blend_observer: str = OBSERVER_2,
    tm30_result: TM30Result | None = None, reference: np.ndarray | None = None,
) -> np.ndarray:
    """CIE 224:2017 general colour fidelity index Rf, shape (N,).

    The computation is the one of :func:`tm30` (TM-30-18 adopted CIE 224:2017's fidelity
    calculation, c = 6.73); colour-science 0.4.7 returns the identical number for its
    'CIE 2017' and 'ANSI/IES TM-30-18' methods (checked in the tests). The one point where
    implementations differ is the observer whose ȳ normalises the two components of the
    4000-5000 K blend: luxpy 1.12.5 uses the CIE 1964 10° ȳ for TM-30-18/-20/-24 and its default
    CIE 1931 2° ȳ for CIE 224:2017, and colour-science uses 2° for both. This function follows
    that split (2° here, 10° in :func:`tm30`); the choice was not read in the standards' text.
    Measured effect of the observer choice: ≤ 4.4e-5 in Rf on the CIE F and LED illuminants,
    ≤ 1.3e-4 on generated LED spectra, and none outside 4000-5000 K.

    ``tm30_result``: pass the :func:`tm30` result for the same spectra to reuse it for every
    spectrum whose reference is not a blend (only blends are recomputed). ``reference``: with
    ``tm30_result``, the CES's J′a′b′ (N, 99, 3) under the ``blend_observer``-normalised
    reference (only the rows of 4000-5000 K are read; the engine passes the tabulated ones).
    """
    vals = np.asarray(values, dtype=float)
    vals2 = vals[None, :] if vals.ndim == 1 else vals
    n = vals2.shape[0]
    cct = np.broadcast_to(np.atleast_1d(np.asarray(cct_K, dtype=float)), (n,)).copy()
    if tm30_result is None or tm30_result.blend_observer == blend_observer:
        if tm30_result is not None:
            return tm30_result.Rf.copy()
        return tm30(wavelengths_nm, vals2, cct, blend_observer=blend_observer).Rf
    if tm30_result.Rf.shape != (n,):
        raise InputError(
            f"tm30_result holds {tm30_result.Rf.shape[0]} spectra, values {n}",
            fix="pass the tm30() result computed for the same spectra",
        )
    out = tm30_result.Rf.copy()
    blend = (cct >= BLEND_LO_K) & (cct <= BLEND_HI_K)
    if not blend.any():
        return out
    jt = tm30_result.Jab_test
    if isinstance(jt, np.ndarray) and jt.shape == (n, 99, 3):
        # The CES under the test source do not depend on the reference: reuse their J′a′b′ and
        # compute only the 2°-normalised blend references. Rows where tm30() gave no Rf (test
        # spectrum not finite or Y10 ≤ 0) stay NaN, as the full computation would leave them.
        wl = np.asarray(wavelengths_nm, dtype=float)
        wl_c, _, _ = _crop_grid(wl, vals2)
        rows = np.flatnonzero(blend & np.isfinite(tm30_result.Rf))
        if rows.size:
            if reference is not None:
                Jab_r = np.asarray(reference, dtype=float)[rows]
            else:
                ref, _ = reference_spd(wl_c, cct[rows], blend_observer=blend_observer)
                Jab_r = reference_jab(wl_c, ref)
            d = jt[rows] - Jab_r
            de = np.sqrt(d[..., 0] ** 2 + d[..., 1] ** 2 + d[..., 2] ** 2)
            out[rows] = _Rf_scale(de.mean(axis=1))
        return out
    out[blend] = tm30(wavelengths_nm, vals2[blend], cct[blend], blend_observer=blend_observer).Rf
    return out
