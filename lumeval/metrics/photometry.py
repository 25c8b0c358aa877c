"""Photometric figures of a spectrum: LER, S/P ratio, CIE S 026 α-opic ratios, peak wavelength.

All functions are vectorised: ``values`` of shape (N, W) (or (W,), treated as N = 1) on one
prepared wavelength grid give arrays of shape (N,) (or (N, 5) for the five α-opic figures).

Conventions (apply to every figure here)
----------------------------------------
- **Grid.** The spectra arrive *prepared* (see ``lumeval.spectra.prepare``): a uniform grid of
  1 nm on integer wavelengths or 5 nm on multiples of 5 nm, inside 360-830 nm, covering at
  least 380-780 nm.
- **Integration.** Every integral is the plain sum Σ S(λ) w(λ) Δλ over the spectrum's own grid
  (CIE 15:2004 §7.1 summation, the same rule the tristimulus values use; no trapezoid end
  correction, no weighting tables). Tabulated weighting functions are *sampled* at the grid's
  wavelengths, never interpolated between samples on a 1 nm or 5 nm integer grid.
- **Range.** The weighting functions are zero outside their tables (V(λ): 360-830 nm; V′(λ) and
  the α-opic action spectra: 380-780 nm), so the weighted integrals do not depend on how far the
  data extend beyond those ranges. The *unweighted* radiant integral ∫S dλ in the luminous
  efficacy of radiation does: LER is computed over the spectrum's measured range within
  360-830 nm, and a different range gives a different number. Example: an equal-energy
  spectrum has LER = 155.0 lm/W over 360-830 nm but 182.0 lm/W over 380-780 nm (1 nm grid).
  Compare LER values only between spectra measured over the same range. Where the readers
  extended a short spectrum to 380-780 nm by repeating its end values (a warning says so), the
  extension counts as measured power here too. The integration rule matters as well: the
  trapezoid rule (as in colour-science's ``luminous_efficacy``) halves the two end samples and
  gives 155.7 lm/W instead of 155.3 lm/W for CIE illuminant A over 360-780 nm at 1 nm.
- **Constants.** Km = 683 lm/W and K′m = 1700 lm/W, the rounded maximum photopic and scotopic
  luminous efficacies (Wyszecki & Stiles, *Color Science*, 2nd ed., 1982/2000, as quoted by
  colour-science's ``CONSTANT_K_M`` / ``CONSTANT_KP_M``; CIE 15:2004 Eq. 7.1 uses Km = 683 lm/W
  for photometric quantities — quoted from memory). The unrounded values are 683.002 lm/W and
  1700.06 lm/W (CIE 018:2019 / ISO 23539:2005, from memory). We use the rounded pair so that
  S/P is formed from a consistent pair; the difference is 2.9e-6 relative in LER and in the
  α-opic efficacies, below any figure lumeval reports, and it cancels in the α-opic DER.
- **Observers.** V(λ) is the CIE 1924 photopic luminous efficiency function = ȳ(λ) of the CIE
  1931 2° observer (CIE 15:2004 Table T.4; colour-science's table via
  :func:`lumeval.metrics.colorimetry.cmfs_at`). V′(λ) is the CIE 1951 scotopic function
  (colour-science's ``SDS_LEFS['CIE 1951 Scotopic Standard Observer']``, 380-780 nm at 1 nm).
- **α-opic action spectra.** CIE S 026/E:2018 Table 2 as the CIE's own data table
  (DOI 10.25039/CIE.DS.vqqhzp5a, CC BY-SA 4.0), shipped unmodified in
  ``lumeval/data/CIE_a-opic_action_spectra.csv``; see ``lumeval/data/NOTICE.md``. ``NaN``
  entries (no tabulated value) count as zero.

These are photometric and photobiological *ratios of the spectrum*; they are not a
photobiological safety assessment (IEC 62471) and say nothing about health effects.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import cast

import numpy as np
from numpy.typing import ArrayLike

from ..errors import ComputationError, GridError
from .colorimetry import OBSERVER_2, cmfs_at

#: Maximum photopic luminous efficacy used here, lm/W (rounded value; see module docstring).
KM_LM_PER_W = 683.0
#: Maximum scotopic luminous efficacy used here, lm/W (rounded value; see module docstring).
KPM_LM_PER_W = 1700.0

#: The five α-opic quantities of CIE S 026/E:2018, in the column order of its data table.
ALPHA_OPIC_NAMES: tuple[str, ...] = ("s_cone_opic", "m_cone_opic", "l_cone_opic", "rhodopic", "melanopic")

_ACTION_SPECTRA_FILE = "CIE_a-opic_action_spectra.csv"



@dataclass(frozen=True)
class PhotometryResult:
    """Photometric figures of N spectra.

    Attributes
    ----------
    ler_lm_per_W : ndarray, shape (N,)
        Luminous efficacy of radiation, K = Km ΣS V Δλ / ΣS Δλ, in lm/W, over the spectrum's
        grid (CIE 15:2004 §7.1 summation; the range matters, see the module docstring).
        NaN where ΣS Δλ ≤ 0 or the spectrum has non-finite values.
    sp_ratio : ndarray, shape (N,)
        Scotopic-to-photopic ratio S/P = K′m ΣS V′ / (Km ΣS V) (dimensionless). NaN where
        ΣS V ≤ 0.
    melanopic_der : ndarray, shape (N,)
        Melanopic daylight (D65) efficacy ratio of CIE S 026/E:2018:
        γ_mel,v^D65 = K_mel,v / K_mel,v^D65 = (E_mel / E_v) / (E_mel,D65 / E_v,D65).
        NaN where ΣS V ≤ 0.
    peak_nm : ndarray, shape (N,)
        Wavelength of the largest sample, in nm, on the spectrum's own grid: its resolution is
        the grid spacing (1 nm or 5 nm; no sub-sample interpolation). Ties go to the shortest
        wavelength. NaN where the largest value is not positive or values are non-finite.
    alpha_opic_elr_mW_per_lm : ndarray, shape (N, 5)
        α-opic efficacy of luminous radiation K_α,v = E_e,α / E_v in mW/lm (CIE S 026/E:2018),
        columns in :data:`ALPHA_OPIC_NAMES` order (S-cone, M-cone, L-cone, rhodopic, melanopic).
    alpha_opic_der : ndarray, shape (N, 5)
        α-opic daylight (D65) efficacy ratios, same columns; ``alpha_opic_der[:, 4]`` equals
        ``melanopic_der``.
    reason : tuple of str, length N
        Empty where every figure is defined; otherwise why some are NaN.
    """

    ler_lm_per_W: np.ndarray
    sp_ratio: np.ndarray
    melanopic_der: np.ndarray
    peak_nm: np.ndarray
    alpha_opic_elr_mW_per_lm: np.ndarray
    alpha_opic_der: np.ndarray
    reason: tuple[str, ...]


# --------------------------------------------------------------------------- tabulated data


@lru_cache(maxsize=1)
def _action_spectra_table() -> tuple[np.ndarray, np.ndarray]:
    """The CIE S 026 table as (wavelengths (401,), values (401, 5)), NaN replaced by 0."""
    from importlib import resources

    text = (resources.files("lumeval") / "data" / _ACTION_SPECTRA_FILE).read_text(encoding="ascii")
    rows = [line.split(",") for line in text.splitlines() if line.strip()]
    try:
        table = np.array(rows, dtype=float)
    except ValueError as exc:  # a damaged installation, not a user error
        raise ComputationError(
            f"the packaged CIE S 026 table {_ACTION_SPECTRA_FILE} cannot be read ({exc})",
            file=_ACTION_SPECTRA_FILE,
            fix="reinstall lumeval",
        ) from None
    expected = np.arange(380.0, 781.0)
    if table.shape != (401, 6) or not np.array_equal(table[:, 0], expected):
        raise ComputationError(
            "the packaged CIE S 026 table does not have 401 rows of 380-780 nm and 6 columns",
            file=_ACTION_SPECTRA_FILE,
            fix="reinstall lumeval",
        )
    return table[:, 0].copy(), np.nan_to_num(table[:, 1:], nan=0.0)


def _sample(table_wl: np.ndarray, table_values: np.ndarray, wavelengths_nm: ArrayLike) -> np.ndarray:
    """Sample a 1 nm table at ``wavelengths_nm`` (exact on integer wavelengths, linear between
    table entries otherwise), zero outside the table. Returns (W,) or (W, k)."""
    wl = np.asarray(wavelengths_nm, dtype=float)
    if table_values.ndim == 1:
        return cast("np.ndarray", np.interp(wl, table_wl, table_values, left=0.0, right=0.0))
    return np.stack(
        [np.interp(wl, table_wl, table_values[:, k], left=0.0, right=0.0) for k in range(table_values.shape[1])],
        axis=-1,
    )


def alpha_opic_action_spectra_at(wavelengths_nm: ArrayLike) -> np.ndarray:
    """CIE S 026/E:2018 α-opic action spectra s_α(λ) at ``wavelengths_nm``, shape (W, 5).

    Columns in :data:`ALPHA_OPIC_NAMES` order; each function peaks at 1. Source: CIE S 026
    Table 2 (CIE data table DOI 10.25039/CIE.DS.vqqhzp5a). Zero outside 380-780 nm and where
    the table has no value.
    """
    wl_t, s_t = _action_spectra_table()
    return _sample(wl_t, s_t, wavelengths_nm)


def v_lambda_at(wavelengths_nm: ArrayLike) -> np.ndarray:
    """Photopic luminous efficiency V(λ) = ȳ(λ) of the CIE 1931 2° observer, shape (W,).

    CIE 15:2004 Table T.4 (colour-science's 1 nm table, 360-830 nm); zero outside.
    """
    return cmfs_at(wavelengths_nm, OBSERVER_2)[:, 1]


@lru_cache(maxsize=1)
def _scotopic_table() -> tuple[np.ndarray, np.ndarray]:
    from .._tables import table

    return table("v_scotopic")


def v_prime_lambda_at(wavelengths_nm: ArrayLike) -> np.ndarray:
    """Scotopic luminous efficiency V′(λ), CIE 1951, shape (W,).

    colour-science's ``SDS_LEFS['CIE 1951 Scotopic Standard Observer']`` (CIE table, 380-780 nm
    at 1 nm); zero outside.
    """
    wl_t, v_t = _scotopic_table()
    return _sample(wl_t, v_t, wavelengths_nm)


@lru_cache(maxsize=1)
def d65_alpha_opic_elr_W_per_lm() -> np.ndarray:
    """α-opic efficacies of luminous radiation of CIE standard illuminant D65, W/lm, shape (5,).

    The denominators of the α-opic daylight efficacy ratios (CIE S 026/E:2018). Computed once
    from the D65 relative SPD of CIE 15:2004 Table T.1 (colour-science's
    ``SDS_ILLUMINANTS['D65']``, 5 nm), linearly interpolated to 1 nm over 380-780 nm (the range
    of the action spectra), with the same summation and Km as the test spectra. The result
    reproduces the D65 values CIE S 026 publishes to their four-decimal rounding (in mW/lm:
    0.8173, 1.4558, 1.6289, 1.4497, 1.3262), which the test suite checks.
    """
    from .._tables import table

    wl_d65, v_d65 = table("d65")
    wl = np.arange(380.0, 781.0)
    d65 = np.interp(wl, wl_d65, v_d65)
    from .._workers import one_blas_thread

    with one_blas_thread():  # cached for the process: the same bits whatever the caller's BLAS threads
        e_alpha = d65 @ alpha_opic_action_spectra_at(wl)
        e_v = KM_LM_PER_W * (d65 @ v_lambda_at(wl))
    return cast("np.ndarray", e_alpha / e_v)


# --------------------------------------------------------------------------- the figures


_REASONS = (
    "",
    "spectrum has non-finite values: no photometric figure is computed",
    "spectrum has no positive radiant power: LER, S/P, α-opic figures and peak are undefined",
    "spectrum has no V(λ)-weighted (visible) power: S/P and α-opic ratios are undefined",
    "spectrum has no positive value: the peak wavelength is undefined",
)


@lru_cache(maxsize=16)
def _weights(wl_key: bytes) -> np.ndarray:
    """(W, 8): 1, V(λ), V′(λ) and the five α-opic action spectra on the grid (cached per grid)."""
    wl = np.frombuffer(wl_key, dtype=float)
    w = np.column_stack([np.ones(wl.size), v_lambda_at(wl), v_prime_lambda_at(wl), alpha_opic_action_spectra_at(wl)])
    w.setflags(write=False)
    return w


def _check_grid(wavelengths_nm: ArrayLike, values: ArrayLike) -> tuple[np.ndarray, np.ndarray, float]:
    wl = np.asarray(wavelengths_nm, dtype=float)
    vals = np.asarray(values, dtype=float)
    if vals.ndim == 1:
        vals = vals[None, :]
    if wl.ndim != 1 or wl.size < 2:
        raise GridError(
            f"photometry needs a 1-D wavelength grid of at least 2 points, got shape {wl.shape}",
            fix="prepare the spectra first (lumeval.spectra.prepare)",
        )
    if vals.ndim != 2 or vals.shape[1] != wl.size:
        raise GridError(
            f"spectral values of shape {vals.shape} do not match {wl.size} wavelengths",
            fix="pass values of shape (N, W) on the W wavelengths given",
        )
    steps = np.diff(wl)
    if not np.all(np.isfinite(wl)) or not np.allclose(steps, steps[0], rtol=0.0, atol=1e-9) or steps[0] <= 0:
        raise GridError(
            "photometry needs a uniform, increasing wavelength grid",
            fix="prepare the spectra first (lumeval.spectra.prepare)",
        )
    return wl, vals, float(steps[0])


def photometry(wavelengths_nm: ArrayLike, values: ArrayLike) -> PhotometryResult:
    """Luminous efficacy of radiation, S/P ratio, CIE S 026 α-opic ratios and peak wavelength.

    Parameters
    ----------
    wavelengths_nm : array_like, shape (W,)
        A prepared grid: uniform 1 nm on integers or 5 nm on multiples of 5 nm, inside 360-830 nm,
        covering at least 380-780 nm (other uniform grids are accepted and sampled the same way).
    values : array_like, shape (N, W) or (W,)
        Spectral power (any radiometric unit per nm: the figures are ratios and do not depend
        on the absolute scale). A 1-D input is one spectrum (N = 1).

    Returns
    -------
    PhotometryResult
        Arrays of shape (N,) (α-opic arrays (N, 5)); NaN where a figure is undefined, with the
        reason in ``reason``.

    Notes
    -----
    With Δλ the grid spacing and all sums over the grid (CIE 15:2004 §7.1):

    - LER ``K = Km Σ S V Δλ / Σ S Δλ``: luminous flux over radiant flux of the radiation
      (the "luminous efficacy of radiation" of the CIE International Lighting Vocabulary,
      CIE S 017; quoted from memory). Depends on the grid's range; see the module docstring.
    - S/P ``= K′m Σ S V′ Δλ / (Km Σ S V Δλ)`` (ratio of scotopic to photopic luminous
      quantities; K′m = 1700 lm/W, V′ = CIE 1951).
    - α-opic efficacy of luminous radiation ``K_α,v = Σ S s_α Δλ / (Km Σ S V Δλ)``
      (CIE S 026/E:2018, α-opic irradiance E_e,α = ∫ E_e,λ s_α dλ divided by illuminance).
    - α-opic daylight (D65) efficacy ratio ``γ_α,v^D65 = K_α,v / K_α,v^D65``
      (CIE S 026/E:2018), with :func:`d65_alpha_opic_elr_W_per_lm` as denominator.
    - Peak wavelength: the grid wavelength of the largest value (first one on ties).
    """
    wl, vals, step = _check_grid(wavelengths_nm, values)
    n = vals.shape[0]
    finite = np.all(np.isfinite(vals), axis=1)
    safe = vals if finite.all() else np.where(finite[:, None], vals, 0.0)

    # every weighted sum in one product: columns 1, V, V′ and the five α-opic functions
    sums = (safe @ _weights(np.ascontiguousarray(wl).tobytes())) * step  # (N, 8)
    radiant = sums[:, 0]
    photopic = KM_LM_PER_W * sums[:, 1]
    scotopic = KPM_LM_PER_W * sums[:, 2]
    e_alpha = sums[:, 3:]  # (N, 5)

    has_power = finite & (radiant > 0)
    has_light = finite & (photopic > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        ler = np.where(has_power & (photopic >= 0), photopic / radiant, np.nan)
        sp = np.where(has_light, scotopic / photopic, np.nan)
        elr = np.where(has_light[:, None], e_alpha / photopic[:, None], np.nan)
    der = elr / d65_alpha_opic_elr_W_per_lm()[None, :]

    peak = np.full(n, np.nan)
    ok = np.zeros(n, dtype=bool)
    if n:
        idx = np.argmax(safe, axis=1)
        top = safe[np.arange(n), idx]
        ok = finite & (top > 0)
        peak[ok] = wl[idx[ok]]

    code = np.where(~finite, 1, np.where(~has_power, 2, np.where(~has_light, 3, np.where(~ok, 4, 0))))
    reasons = [_REASONS[c] for c in code.tolist()] if code.any() else [_REASONS[0]] * n

    return PhotometryResult(
        ler_lm_per_W=ler,
        sp_ratio=sp,
        melanopic_der=der[:, 4].copy(),
        peak_nm=peak,
        alpha_opic_elr_mW_per_lm=elr * 1000.0,
        alpha_opic_der=der,
        reason=tuple(reasons),
    )
