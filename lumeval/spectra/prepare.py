"""Bring raw spectra onto the computation grid, or refuse them with a reason.

The computation grid (rule set in the shared interfaces): a uniform grid of exactly 1 nm on
integer wavelengths or 5 nm on multiples of 5 nm, inside 360-830 nm, covering at least 380-780 nm.

Rules, applied to each spectrum set in this order (every change leaves a note on the
spectrum, and notes travel into every report):

1. **Wavelengths** must be finite and strictly monotonic; descending data are sorted (note);
   duplicates are an error.
2. **Values** must be finite. Within 360-830 nm the peak must be positive and the data must
   not be constant (an all-zero or flat "spectrum" is an export error). Negative values down to
   ``NEGATIVE_CLIP_FRACTION`` (5 %) of the peak are treated as measurement noise around zero
   and set to zero (note); anything more negative is an error (a baseline or dark-subtraction
   fault that clipping would hide). The 5 % limit is our rule (common practice, no source).
3. **Spacing**: data at exactly 1 nm on integer wavelengths or 5 nm on multiples of 5 nm
   are used as measured (CIE 15:2004 §7.1 summation). Other uniform spacings are interpolated to 1 nm with the
   Sprague (1880) fifth-order method that CIE 167:2005 recommends for uniformly spaced data.
   Irregular grids are interpolated to 1 nm with a not-a-knot cubic spline, the method CIE
   15:2004 recommends for non-uniformly spaced data (as cited by colour-science's
   ``SpectralDistribution`` documentation — secondary source). Spacing coarser than 5 nm is
   warned about (CIE 15 tabulates at 5 nm; narrow LED and fluorescent features are poorly
   resolved); spacing coarser than ``MAX_SPACING_NM`` (10 nm) is refused: a blue LED pump has a
   FWHM of about 20 nm, so coarser sampling gives fewer than two samples across it and the
   figures would depend more on the interpolation than on the lamp (our rule; common practice,
   no source). Interpolation overshoot below zero (next to narrow peaks and lines) is kept
   as computed, with a note: setting it to zero would add power that was never measured and
   bias chromaticity. Only *measured* negative values follow rule 2. The interpolation works
   per output point on the six neighbouring samples (banded), so a finely sampled file
   (0.01 nm, tens of thousands of rows) needs memory in proportion to its length only.
4. **Range**: data outside 360-830 nm are dropped (note). Data short of 380-780 nm are
   extended to 380/780 nm by repeating the end values (CIE 15:2004 §7.2.2.1 practice) with a
   warning. Data starting above ``MAX_START_NM`` (400 nm) or ending below ``MIN_END_NM``
   (700 nm) are refused: for an equal-energy spectrum the CIE 1931 colour-matching functions
   carry 0.49 % of z̄ below 400 nm and 0.15 % of x̄ above 700 nm (computed from colour-science's
   CIE 1931 table, 360-830 nm), but these grow to 1.5 % of z̄ below 410 nm and 0.6 % of x̄
   above 680 nm; and the red test colours (CIE 13.3 R9, TM-30 red hue bins) need the red end
   measured, not guessed.
5. Several sets on **different grids** are never resampled to a common grid: a spectrum's
   figures depend on its own data only. :func:`prepare_groups` prepares each set on its own
   and groups spectra that share a computation grid (:class:`PreparedSpectra`); the engine
   evaluates each group on its grid and returns the results in input order.

Functions here are pure: arrays in, arrays out, no I/O.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import cached_property, lru_cache
from typing import Any, cast

import numpy as np

from ..errors import InputError
from .model import SpectrumSet

CIE_MIN_NM = 360.0
CIE_MAX_NM = 830.0
REQUIRED_START_NM = 380.0
REQUIRED_END_NM = 780.0
MAX_START_NM = 400.0
MIN_END_NM = 700.0
WARN_SPACING_NM = 5.0
MAX_SPACING_NM = 10.0
NEGATIVE_CLIP_FRACTION = 0.05
#: Peak values outside this range are refused: they cannot be a measured spectrum in any unit
#: and would overflow or underflow the sums in the metrics (our rule).
MIN_PEAK = 1e-30
MAX_PEAK = 1e30

# Sprague (1880) boundary coefficients, CIE 167:2005 (as tabulated in colour-science's
# SpragueInterpolator.SPRAGUE_C_COEFFICIENTS): two extra points at each end from six data points.
_SPRAGUE_C = (
    np.array(
        [
            [884, -1960, 3033, -2648, 1080, -180],
            [508, -540, 488, -367, 144, -24],
            [-24, 144, -367, 488, -540, 508],
            [-180, 1080, -2648, 3033, -1960, 884],
        ],
        dtype=float,
    )
    / 209.0
)

# Sprague fifth-order polynomial coefficients a1..a5 as linear combinations of the six points
# p[i-2] .. p[i+3] around interval [x_i, x_{i+1}] (Westland, Ripamonti & Cheung, "Computational
# Colour Science using MATLAB", 2nd ed. 2012, the reference colour-science cites).
_SPRAGUE_A = (
    np.array(
        [
            [2, -16, 0, 16, -2, 0],
            [-1, 16, -30, 16, -1, 0],
            [-9, 39, -70, 66, -33, 7],
            [13, -64, 126, -124, 61, -12],
            [-5, 25, -50, 50, -25, 5],
        ],
        dtype=float,
    )
    / 24.0
)


def _sprague_extend(values: np.ndarray) -> np.ndarray:
    """(N, n) uniform data with the two Sprague boundary points added at each end: (N, n + 4)."""
    lo = values[:, :6] @ _SPRAGUE_C[:2].T
    hi = values[:, -6:] @ _SPRAGUE_C[2:].T
    return np.concatenate([lo, values, hi], axis=1)


#: Rows interpolated together by :func:`sprague`: bounds its working memory to about
#: ``_SPRAGUE_ROWS × M × 11`` doubles (M output wavelengths), whatever the input spacing.
_SPRAGUE_ROWS = 512
#: Up to this many elements (M × W, 16 MB) the operator is applied as a dense matrix, built
#: once per grid pair by the banded method itself and cached: one matrix product is ~4x faster
#: for many spectra on ordinary grids (2-10 nm); finer grids take the banded path.
_DENSE_MAX = 2_000_000


@lru_cache(maxsize=16)
def _dense_sprague(n_in: int, x_key: bytes) -> np.ndarray:
    from .._workers import one_blas_thread

    x = np.frombuffer(x_key, dtype=float)
    with one_blas_thread():  # cached for the process: the same bits whatever the caller's BLAS threads
        out = _sprague_banded(np.eye(n_in), x).T.copy()
    out.setflags(write=False)
    return out


def sprague(wl: np.ndarray, values: np.ndarray, wl_out: np.ndarray) -> np.ndarray:
    """Sprague-interpolate uniform (N, W) data on ``wl`` to ``wl_out`` (inside ``wl``'s range).

    Method: CIE 167:2005 recommends Sprague (1880) for uniformly spaced spectral data; the
    boundary extension (two synthetic points per end) and the quintic coefficients are those
    tabulated by Westland et al. (2012) and used by colour-science's ``SpragueInterpolator``,
    against which the tests check this function.

    Each output value depends on the six input samples around it only. For ordinary grids the
    operator is applied as a dense (M, W) matrix (built once per grid pair and cached; one
    matrix product); where that matrix would exceed ``_DENSE_MAX`` elements the work is done per
    output point on its six samples (banded): memory then grows with the number of output
    points, not with the product of the two lengths. A 0.01 nm file (47,000 samples over
    360-830 nm) needs a few MB, where a dense construction through the full boundary-extended
    operator needed GBs.

    Overshoot: the quintic may dip below zero next to a narrow peak or a line. Those values
    are returned as computed (setting them to zero would add power and bias chromaticity).
    """
    wl = np.asarray(wl, dtype=float)
    values = np.atleast_2d(np.asarray(values, dtype=float))
    n_in = wl.size
    if n_in < 6:
        raise ValueError("Sprague interpolation needs at least 6 points")
    h = wl[1] - wl[0]
    x = (np.asarray(wl_out, dtype=float) - wl[0]) / h
    if x.size * n_in <= _DENSE_MAX:
        return cast("np.ndarray", values @ _dense_sprague(n_in, np.ascontiguousarray(x).tobytes()).T)
    return _sprague_banded(values, x)


def _sprague_banded(values: np.ndarray, x: np.ndarray) -> np.ndarray:
    """The Sprague operator applied per output point on its six neighbouring samples (see
    :func:`sprague`); ``x`` in units of the input spacing from the first sample."""
    n_in = values.shape[1]
    i = np.clip(np.floor(x).astype(int), 0, n_in - 2)
    t = (x - i)[None, :]
    cols = i[:, None] + np.arange(6)[None, :]  # rows of the extended vector: p[i-2] .. p[i+3]
    out = np.empty((values.shape[0], x.size))
    rows = max(1, min(_SPRAGUE_ROWS, (1 << 22) // (n_in + 4)))  # the extended copy stays <= 32 MB
    for start in range(0, values.shape[0], rows):
        block = values[start : start + rows]
        win = _sprague_extend(block)[:, cols]  # (n, M, 6)
        a = win @ _SPRAGUE_A.T  # (n, M, 5): polynomial coefficients of t^1 .. t^5
        acc = a[..., 4]
        for k in range(3, -1, -1):  # Horner
            acc = acc * t + a[..., k]
        out[start : start + rows] = win[..., 2] + acc * t
    return out


def sprague_matrix(n_in: int, x_frac: np.ndarray) -> np.ndarray:
    """Sprague (1880) interpolation of ``n_in`` uniform samples as a dense (M, n_in) matrix.

    ``values @ A.T`` equals :func:`sprague` at the positions ``x_frac`` (in units of the input
    spacing from the first sample). Built by the banded method (identity in, operator out).
    """
    if n_in < 6:
        raise ValueError("Sprague interpolation needs at least 6 points")
    return _sprague_banded(np.eye(n_in), np.asarray(x_frac, dtype=float)).T


def cubic_spline(wl: np.ndarray, values: np.ndarray, wl_out: np.ndarray) -> np.ndarray:
    """Not-a-knot cubic spline of (N, W) data on an irregular grid, evaluated at ``wl_out``.

    CIE 15:2004 recommends a cubic spline for non-uniformly spaced data (secondary: quoted by
    colour-science's ``SpectralDistribution`` documentation).
    """
    from scipy.interpolate import CubicSpline

    if wl.size < 4:
        return np.vstack([np.interp(wl_out, wl, v) for v in np.atleast_2d(values)])
    return cast("np.ndarray", CubicSpline(wl, np.atleast_2d(values), axis=1, bc_type="not-a-knot")(wl_out))


def _fmt(x: float) -> str:
    return f"{x:g}"


def _label(spectra: SpectrumSet, i: int) -> str:
    return spectra.sources[i] if spectra.sources[i] else spectra.names[i]


def _err(spectra: SpectrumSet, i: int, problem: str, fix: str) -> InputError:
    src = spectra.sources[i]
    file, _, col = src.partition("#")
    return InputError(problem, file=file or spectra.names[i], field=col or None, fix=fix)


def _check_values(
    spectra: SpectrumSet, wl: np.ndarray, vals: np.ndarray, notes: _Notes, owned: bool = False
) -> np.ndarray:
    """Validate values inside 360-830 nm; clip small negative noise. Returns the values: ``vals``
    itself when nothing is clipped (``wl`` is increasing), else a copy with the clipped rows
    (``vals`` is changed in place only when ``owned``)."""
    inside = (wl >= CIE_MIN_NM) & (wl <= CIE_MAX_NM)
    if not np.any(inside):
        raise _err(
            spectra,
            0,
            f"no data inside 360-830 nm (the data run from {_fmt(wl[0])} to {_fmt(wl[-1])} nm)",
            "check the wavelength unit (nm expected) and that this is a visible-light spectrum",
        )
    # Vectorised pre-screen: only rows that fail a check (to raise its exact message) or that
    # hold negative values (to note and clip them) go through the per-row checks below, in row
    # order, so the first failing row raises as before. The screen reads views and row-sized
    # reductions: no copy of the values (bounded memory, docs/lots.md).
    first = int(np.argmax(inside))
    in_cols = slice(first, first + int(inside.sum()))  # wl increases: "inside" is one run
    with np.errstate(invalid="ignore"):
        v_in = vals[:, in_cols]
        peak_all = v_in.max(axis=1)
        low_all = v_in.min(axis=1)
        finite_all = np.isfinite(vals.sum(axis=1)) & np.isfinite(peak_all)
        if not finite_all.all():  # an inf or NaN somewhere (or values summing to inf): row by row
            finite_all = np.fromiter((np.isfinite(r).all() for r in vals), dtype=bool, count=vals.shape[0])
        flagged = (
            ~finite_all
            | ~(peak_all > 0)
            | ~((peak_all >= MIN_PEAK) & (peak_all <= MAX_PEAK))
            | (low_all == peak_all)
            | (low_all < 0)
        )
    for i in np.flatnonzero(flagged):
        i = int(i)
        v = vals[i, inside]
        bad = ~np.isfinite(vals[i])
        if bad.any():
            k = int(np.argmax(bad))
            raise _err(
                spectra,
                i,
                f"value at {_fmt(wl[k])} nm is not a finite number",
                "fill in or correct the value",
            )
        peak = float(v.max())
        if peak <= 0:
            raise _err(
                spectra,
                i,
                "no positive value between 360 and 830 nm (all zero or negative)",
                "check the export: the spectrum column seems empty or inverted",
            )
        if not (MIN_PEAK <= peak <= MAX_PEAK):
            raise _err(
                spectra,
                i,
                f"the peak value {peak:.3g} is implausibly {'large' if peak > MAX_PEAK else 'small'} "
                f"(lumeval accepts peaks from {MIN_PEAK:g} to {MAX_PEAK:g})",
                "rescale the data (any constant factor leaves every figure unchanged)",
            )
        if float(v.min()) == peak:
            raise _err(
                spectra,
                i,
                f"every value between 360 and 830 nm is the same ({_fmt(peak)})",
                "check the export: a measured spectrum varies with wavelength",
            )
        low = float(v.min())
        if low < 0:
            if -low > NEGATIVE_CLIP_FRACTION * peak:
                k = int(np.argmin(np.where(inside, vals[i], np.inf)))
                ratio = -low / peak  # as a multiple when large: ratio * 100 overflows for -1e308
                how_far = f"{ratio * 100:.1f} % of the peak" if ratio < 10 else f"{ratio:.3g} times the peak"
                raise _err(
                    spectra,
                    i,
                    f"value {_fmt(low)} at {_fmt(wl[k])} nm is {how_far} "
                    f"below zero, more than the {NEGATIVE_CLIP_FRACTION * 100:g} % lumeval treats as noise",
                    "check the dark/baseline subtraction of the measurement",
                )
            n_neg = int(np.sum(vals[i, inside] < 0))
            notes[i].append(
                f"{n_neg} value(s) between 360 and 830 nm below zero (down to {low:.3g}, "
                f"{(-low / peak) * 100:.2g} % of the peak) treated as noise and set to zero"
            )
            if not owned:  # copy once, at the first row to clip: the input stays as given
                vals, owned = vals.copy(), True
            vals[i] = np.maximum(vals[i], 0.0)
    return vals


def _uniform(d: np.ndarray) -> bool:
    """The (finite) steps ``d`` are one spacing: np.allclose(d, d[0], rtol=0, atol=1e-6), without its overhead."""
    return bool(np.abs(d - d[0]).max() <= 1e-6)


def _computation_step(step: float, wl: np.ndarray) -> bool:
    """True when a uniform ``step`` over increasing ``wl`` is a computation grid (1 nm on
    integer wavelengths, or 5 nm on multiples of 5 nm): such data are used as measured, without
    interpolation. 5 nm data must fall on the 5 nm tabulation of the CIE tables (380, 385 ...
    780 nm: CIE 15:2004 §7.1 sums on that grid, and CIE 224 / TM-30 evaluate 380-780 nm): 5 nm
    data on 382, 387 ... nm are interpolated to 1 nm like any other spacing."""
    if abs(step - 1) < 1e-9:
        return _on_integer_grid(wl)
    return abs(step - 5) < 1e-9 and _on_integer_grid(wl / 5.0)


def used_as_measured(wavelengths_nm: np.ndarray) -> bool:
    """True when :func:`prepare` uses data on ``wavelengths_nm`` as measured (increasing; inside
    360-830 nm uniform 1 nm steps on integer wavelengths or 5 nm steps on multiples of 5 nm;
    samples outside are dropped): only views, cropping and clipping, no arithmetic that could
    depend on how many spectra are prepared together."""
    wl = np.asarray(wavelengths_nm, dtype=float)
    if wl.ndim != 1 or wl.size < 2 or not np.all(np.isfinite(wl)) or not np.all(np.diff(wl) > 0):
        return False
    inside = wl[(wl >= CIE_MIN_NM - 1e-9) & (wl <= CIE_MAX_NM + 1e-9)]
    d = np.diff(inside)
    return bool(inside.size > 1 and _uniform(d) and _computation_step(float(d[0]), inside))


def _on_integer_grid(wl: np.ndarray) -> bool:
    # np.allclose(wl, np.round(wl), rtol=0, atol=1e-9) for finite wl, without its overhead
    return bool(np.abs(wl - np.round(wl)).max() <= 1e-9)


def _prepare_one(spectra: SpectrumSet) -> SpectrumSet:
    if spectra.prepared:
        return spectra
    wl = np.asarray(spectra.wavelengths_nm, dtype=float)
    # The values are copied only where a step changes them (sorting, clipping, interpolating,
    # extending); data already on the computation grid are used as given, so preparing a
    # chunk needs little more than the chunk itself (memory, docs/lots.md).
    vals = np.asarray(spectra.values, dtype=float)
    owned = vals is not spectra.values
    notes = _Notes(spectra.notes)
    n = len(spectra)
    if wl.size < 2 or not np.all(np.isfinite(wl)):
        raise _err(spectra, 0, "the wavelengths are missing or not finite numbers", "check the wavelength column")
    d = np.diff(wl)
    if np.all(d < 0):
        order = np.argsort(wl)
        wl, vals, owned = wl[order], vals[:, order], True
        for k in range(n):
            notes[k].append("wavelengths were in descending order; sorted ascending")
        d = np.diff(wl)
    if not np.all(d > 0):
        k = int(np.argmax(d <= 0))
        raise _err(
            spectra,
            0,
            f"wavelengths are not strictly increasing ({_fmt(wl[k])} nm is followed by {_fmt(wl[k + 1])} nm)",
            "sort the data by wavelength and remove duplicate rows",
        )

    vals = _check_values(spectra, wl, vals, notes, owned)

    # coverage check on the raw data (after cropping to 360-830)
    lo = max(wl[0], CIE_MIN_NM)
    hi = min(wl[-1], CIE_MAX_NM)
    if lo > MAX_START_NM or hi < MIN_END_NM:
        which = []
        if lo > MAX_START_NM:
            which.append(f"start at {_fmt(lo)} nm (after {_fmt(MAX_START_NM)} nm)")
        if hi < MIN_END_NM:
            which.append(f"end at {_fmt(hi)} nm (before {_fmt(MIN_END_NM)} nm)")
        raise _err(
            spectra,
            0,
            "the data " + " and ".join(which) + ": too short to compute the colour figures honestly",
            "measure or export at least 400-700 nm, ideally 380-780 nm",
        )

    # spacing inside the used range
    used = (wl >= CIE_MIN_NM - 1e-9) & (wl <= CIE_MAX_NM + 1e-9)
    idx = np.flatnonzero(used)
    i0, i1 = idx[0], idx[-1]
    # interpolation may use one neighbour just outside 360-830 nm (so the grid can reach the
    # ends), if it is no farther away than the coarsest spacing accepted
    if i0 > 0 and wl[i0] - wl[i0 - 1] <= MAX_SPACING_NM:
        i0 -= 1
    if i1 < wl.size - 1 and wl[i1 + 1] - wl[i1] <= MAX_SPACING_NM:
        i1 += 1
    dd = np.diff(wl[idx[0] : idx[-1] + 1]) if idx.size > 1 else np.array([np.inf])
    max_gap = float(dd.max())
    if max_gap > MAX_SPACING_NM + 1e-9:
        k = idx[0] + int(np.argmax(dd))
        raise _err(
            spectra,
            0,
            f"a gap of {_fmt(max_gap)} nm between {_fmt(wl[k])} and {_fmt(wl[k + 1])} nm: spacing "
            f"coarser than {_fmt(MAX_SPACING_NM)} nm cannot resolve lamp spectra",
            "measure or export at 5 nm spacing or finer (1 nm preferred)",
        )
    # the spacing is judged on the data inside 360-830 nm: a stray row outside (an instrument's
    # 0 nm or 1000 nm line) is dropped anyway and must not turn a clean grid into an irregular one
    as_measured = used_as_measured(wl)
    if max_gap > WARN_SPACING_NM + 1e-9:
        for k in range(n):
            notes[k].append(
                f"data spacing is {_fmt(max_gap)} nm, coarser than the 5 nm CIE 15 recommends: "
                "narrow emission peaks may be misrepresented"
            )

    if as_measured:
        keep = (wl >= CIE_MIN_NM) & (wl <= CIE_MAX_NM)
        first = int(np.argmax(keep))
        cols = slice(first, first + int(keep.sum()))  # one run (wl increases): a view, not a copy
        wl_new, vals_new = np.round(wl[cols]), vals[:, cols]
        h = float(dd[0])
    else:
        h = 1.0
        src_wl, src_vals = wl[i0 : i1 + 1], vals[:, i0 : i1 + 1]
        src_d = np.diff(src_wl)
        uniform, step = _uniform(src_d), float(src_d[0])  # the interpolated samples, neighbours included
        start = max(np.ceil(src_wl[0] - 1e-9), CIE_MIN_NM)
        end = min(np.floor(src_wl[-1] + 1e-9), CIE_MAX_NM)
        wl_new = np.arange(start, end + 0.5, 1.0)
        if uniform and src_wl.size >= 6:
            vals_new = sprague(src_wl, src_vals, wl_new)
            how = f"uniform {_fmt(step)} nm data interpolated to 1 nm (Sprague, CIE 167:2005)"
        else:
            vals_new = cubic_spline(src_wl, src_vals, wl_new)
            how = "irregularly spaced data interpolated to 1 nm (cubic spline, CIE 15:2004 practice)"
        neg = vals_new < 0
        for k in range(n):
            notes[k].append(how)
            if neg[k].any():
                notes[k].append(
                    f"interpolation overshoot below zero at {int(neg[k].sum())} wavelength(s) (down to "
                    f"{vals_new[k].min():.3g}) kept as computed: clipping it would add power and bias the figures"
                )
    if wl[0] < CIE_MIN_NM - 1e-9 or wl[-1] > CIE_MAX_NM + 1e-9:
        parts = []
        if wl[0] < CIE_MIN_NM - 1e-9:
            parts.append(f"below 360 nm (from {_fmt(wl[0])} nm)")
        if wl[-1] > CIE_MAX_NM + 1e-9:
            parts.append(f"above 830 nm (to {_fmt(wl[-1])} nm)")
        for k in range(n):
            notes[k].append("data " + " and ".join(parts) + " dropped (CIE 15 range 360-830 nm)")

    wl_new, vals_new = _extend(wl_new, vals_new, h, REQUIRED_START_NM, REQUIRED_END_NM, notes)
    if np.shares_memory(vals_new, spectra.values):  # a view of the input: read-only, so nothing
        vals_new = vals_new.view()                  # downstream can change the caller's data
        vals_new.flags.writeable = False
    return SpectrumSet(
        wl_new,
        vals_new,
        spectra.names,
        spectra.sources,
        notes.result(),
        spectra.metadata,
        prepared=True,
    )


class _Notes:
    """The per-spectrum notes of a set being prepared: ``notes[k]`` is spectrum k's list, made
    from its notes so far the first time it is asked for (most spectra of a batch get no note:
    no list is made for them, 0.25 µs a spectrum of a Parquet lot)."""

    def __init__(self, base: tuple[tuple[str, ...], ...]) -> None:
        self._base = base
        self._changed: dict[int, list[str]] = {}

    def __len__(self) -> int:
        return len(self._base)

    def __getitem__(self, k: int) -> list[str]:
        got = self._changed.get(k)
        if got is None:
            got = self._changed[k] = list(self._base[k])
        return got

    def result(self) -> tuple[tuple[str, ...], ...]:
        """Every spectrum's notes, as a tuple of tuples."""
        base = tuple(map(tuple, self._base))  # (tuple() of a tuple is that tuple: no copy)
        if not self._changed:
            return base
        out = list(base)
        for k, v in self._changed.items():
            out[k] = tuple(v)
        return tuple(out)


def _extend(
    wl: np.ndarray, vals: np.ndarray, h: float, start: float, end: float, notes: _Notes
) -> tuple[np.ndarray, np.ndarray]:
    """Extend (N, W) data on a uniform grid of step h by constant end values to cover start..end."""
    n_lo = int(np.ceil((wl[0] - start) / h - 1e-9)) if wl[0] > start else 0
    n_hi = int(np.ceil((end - wl[-1]) / h - 1e-9)) if wl[-1] < end else 0
    if n_lo == 0 and n_hi == 0:
        return wl, vals
    lo_wl = wl[0] - h * np.arange(n_lo, 0, -1)
    hi_wl = wl[-1] + h * np.arange(1, n_hi + 1)
    new_wl = np.concatenate([lo_wl, wl, hi_wl])
    new_vals = np.concatenate(
        [np.repeat(vals[:, :1], n_lo, axis=1), vals, np.repeat(vals[:, -1:], n_hi, axis=1)], axis=1
    )
    parts = []
    if n_lo:
        parts.append(f"down to {_fmt(new_wl[0])} nm (data start at {_fmt(wl[0])} nm)")
    if n_hi:
        parts.append(f"up to {_fmt(new_wl[-1])} nm (data end at {_fmt(wl[-1])} nm)")
    for k in range(len(notes)):
        notes[k].append(
            "EXTRAPOLATED: spectrum extended "
            + " and ".join(parts)
            + " by repeating the end values (CIE 15:2004 §7.2.2.1); figures depend on this assumption"
        )
    return new_wl, new_vals


def _grid_key(wl: np.ndarray) -> tuple[float, float, int]:
    """Computation grids are uniform: first wavelength, spacing and length identify one."""
    return (float(wl[0]), float(wl[1] - wl[0]) if wl.size > 1 else 0.0, int(wl.size))


@dataclass(frozen=True)
class PreparedSpectra:
    """N prepared spectra in input order, grouped by their own computation grid.

    A spectrum's figures depend on its own data only, so spectra on different grids are never
    resampled to a common one: each group holds the spectra that share one computation grid
    (a prepared :class:`SpectrumSet`), and ``members[g]`` gives the input positions of the rows
    of ``groups[g]``. Most runs have one group.

    Per-spectrum access works for any number of groups: :meth:`spectrum`, :meth:`wavelengths`,
    ``names``, ``sources``, ``notes``, ``metadata`` (input order). ``wavelengths_nm``,
    ``values`` and ``spacing_nm`` exist only when all spectra share one grid (they raise
    ``ValueError`` otherwise, so that nothing silently mixes grids).
    """

    groups: tuple[SpectrumSet, ...]
    members: tuple[np.ndarray, ...]

    @staticmethod
    def from_sets(sets: Sequence[SpectrumSet]) -> PreparedSpectra:
        """Group prepared sets by grid, in order of first appearance; rows keep input order."""
        by_key: dict[tuple[Any, ...], list[tuple[SpectrumSet, np.ndarray]]] = {}
        pos = 0
        for s in sets:
            idx = np.arange(pos, pos + len(s))
            pos += len(s)
            by_key.setdefault(_grid_key(s.wavelengths_nm), []).append((s, idx))
        groups, members = [], []
        for parts in by_key.values():
            groups.append(parts[0][0] if len(parts) == 1 else SpectrumSet.concatenate([p[0] for p in parts]))
            members.append(np.concatenate([p[1] for p in parts]))
        return PreparedSpectra(tuple(groups), tuple(members))

    def __len__(self) -> int:
        return sum(len(g) for g in self.groups)

    @cached_property
    def _where(self) -> tuple[np.ndarray, np.ndarray]:
        """(group, row) of each input position."""
        n = len(self)
        grp = np.empty(n, dtype=int)
        row = np.empty(n, dtype=int)
        for g, m in enumerate(self.members):
            grp[m] = g
            row[m] = np.arange(m.size)
        return grp, row

    @cached_property
    def order(self) -> np.ndarray:
        """Input positions in group order: ``concat(groups)[k]`` is input spectrum ``order[k]``."""
        return np.concatenate(self.members) if self.members else np.zeros(0, dtype=int)

    def group_of(self, i: int) -> int:
        return int(self._where[0][i])

    def _per_spectrum(self, attr: str) -> tuple[Any, ...]:
        if len(self.groups) == 1:  # one grid, its rows in input order: its own tuple
            m = self.members[0]
            if m.size == 0 or (m[0] == 0 and np.array_equal(m, np.arange(m.size))):
                return tuple(getattr(self.groups[0], attr))
        grp, row = self._where
        return tuple(getattr(self.groups[g], attr)[r] for g, r in zip(grp, row))

    @cached_property
    def names(self) -> tuple[str, ...]:
        return self._per_spectrum("names")

    @cached_property
    def sources(self) -> tuple[str, ...]:
        return self._per_spectrum("sources")

    @cached_property
    def notes(self) -> tuple[tuple[str, ...], ...]:
        return self._per_spectrum("notes")

    @cached_property
    def metadata(self) -> tuple[dict[str, Any], ...]:
        return self._per_spectrum("metadata")

    def wavelengths(self, i: int) -> np.ndarray:
        """The computation grid of spectrum ``i`` (W_i,)."""
        return self.groups[self.group_of(i)].wavelengths_nm

    def spectrum(self, i: int) -> tuple[np.ndarray, np.ndarray]:
        """``(wavelengths (W_i,), values (W_i,))`` of spectrum ``i`` on its own grid."""
        g = self.group_of(i)
        return self.groups[g].wavelengths_nm, self.groups[g].values[self._where[1][i]]

    @property
    def grids(self) -> tuple[np.ndarray, ...]:
        return tuple(g.wavelengths_nm for g in self.groups)

    @property
    def one_grid(self) -> bool:
        return len(self.groups) == 1

    def _single(self) -> SpectrumSet:
        if len(self.groups) != 1:
            raise ValueError(
                f"the spectra lie on {len(self.groups)} different computation grids; use spectrum(i) / wavelengths(i)"
            )
        return self.groups[0]

    @property
    def wavelengths_nm(self) -> np.ndarray:
        return self._single().wavelengths_nm

    @property
    def values(self) -> np.ndarray:
        return self._single().values

    @property
    def spacing_nm(self) -> float | None:
        return self._single().spacing_nm

    def subset(self, index: Any) -> PreparedSpectra:
        """The spectra at input positions ``index``, in that order, grouped as before."""
        idx = np.atleast_1d(np.arange(len(self))[index])
        grp, row = self._where
        groups, members = [], []
        for g in range(len(self.groups)):
            sel = np.flatnonzero(grp[idx] == g)
            if sel.size:
                groups.append(self.groups[g].subset(row[idx[sel]]))
                members.append(sel)
        return PreparedSpectra(tuple(groups), tuple(members))


def prepare_groups(spectra: SpectrumSet | PreparedSpectra | Sequence[SpectrumSet]) -> PreparedSpectra:
    """Prepare every set (see the module docstring) and group the spectra by computation grid.

    No spectrum is resampled to another spectrum's grid: sets that end on the same grid share
    a group, others form their own. Input order is kept (see :class:`PreparedSpectra`).
    """
    if isinstance(spectra, PreparedSpectra):
        return spectra
    if isinstance(spectra, SpectrumSet):
        spectra = [spectra]
    sets = [_prepare_one(s) for s in spectra]
    if not sets:
        raise ValueError("no spectra to prepare")
    return PreparedSpectra.from_sets(sets)


def prepare(spectra: SpectrumSet | Sequence[SpectrumSet]) -> SpectrumSet:
    """Bring spectra onto the computation grid (see the module docstring for every rule).

    Parameters
    ----------
    spectra : SpectrumSet or sequence of SpectrumSet
        Raw spectra as read. A sequence must end on one computation grid (for sets on
        different grids use :func:`prepare_groups`: lumeval never resamples one file's
        spectra to another file's grid).

    Returns
    -------
    SpectrumSet
        Values (N, W) on a uniform 1 nm integer grid or 5 nm grid on multiples of 5 nm, inside 360-830 nm, covering at
        least 380-780 nm; ``notes`` say what was done to each spectrum; ``prepared`` is True
        (preparing it again returns it unchanged).

    Raises
    ------
    InputError
        When a spectrum cannot be used honestly (naming its file and column).
    ValueError
        When the sets of a sequence end on different grids.
    """
    if isinstance(spectra, SpectrumSet):
        return _prepare_one(spectra)
    grouped = prepare_groups(spectra)
    if not grouped.one_grid:
        raise ValueError(
            "these spectra lie on different computation grids after preparation; use prepare_groups() "
            "(each spectrum keeps its own grid)"
        )
    return grouped.groups[0]
