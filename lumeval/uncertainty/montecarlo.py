"""Monte Carlo propagation of spectral measurement uncertainty (JCGM 101:2008, GUM Supplement 1).

For each spectrum, M perturbed copies are drawn from the instrument model as one (M, W) array
(:func:`draw_spectra`), all M are evaluated at once by the vectorised engine
(:func:`lumeval.engine.evaluate`), and every figure's M values are summarised
(:func:`summarise`):

- the estimate y, the mean of the M values, and its standard uncertainty u(y), their standard
  deviation (JCGM 101:2008 §7.6);
- the probabilistically symmetric 95 % coverage interval [y_low, y_high] from the sorted values
  (JCGM 101:2008 §7.7.2: with q = pM (rounded up to an integer when pM is not), r = (M − q)/2
  (rounded to an integer), y_low = y_(r), y_high = y_(r+q); 1-based order statistics);
- the fraction of draws for which the figure is undefined (e.g. CCT when a draw falls more than
  0.05 from the Planckian locus); statistics are taken over the defined draws.

The number of draws is fixed (default M = 2000, see
:class:`lumeval.uncertainty.instrument.MonteCarloSettings`) or chosen by the adaptive procedure
of JCGM 101:2008 §7.9.4 (:func:`propagate` with ``settings.draws=None``).

The clause numbers above are quoted from memory of JCGM 101:2008 (freely available from the
BIPM); the formulas are the ones the tests check.

Nothing here prints or touches files.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from ..spectra.model import SpectrumSet
from .instrument import InstrumentModel, MonteCarloSettings

#: Draw and evaluate at most this many perturbed spectra at once: memory stays bounded for any
#: number of draws (measured about 32 kB per draw in flight for one demo spectrum, 1 nm grid:
#: 3.2 GB peak for 10^5 draws in one block).
_DRAW_BLOCK = 20_000

#: Evaluate this many draws per engine chunk (the engine's own default).
_CHUNK = 256


# ------------------------------------------------------------------------------ the draws


def _second_difference(values: np.ndarray) -> np.ndarray:
    """Second difference S[i−1] − 2 S[i] + S[i+1] along the last axis; zero at both ends."""
    d2 = np.zeros_like(values)
    d2[..., 1:-1] = values[..., :-2] - 2.0 * values[..., 1:-1] + values[..., 2:]
    return d2


def bandpass_effect(values: np.ndarray, bandwidth_nm: float, spacing_nm: float) -> np.ndarray:
    """The change one pass through a triangular slit of FWHM b makes to a sampled spectrum.

    To second order in b the slit adds (b²/12)·S''(λ) (a triangle of FWHM b has variance b²/6).
    Estimating S'' by a second difference amplifies the noise of measured data by about
    √6·(b/h)²/12 (13× for b = 8 nm on a 1 nm grid), so where the slit spans several samples
    (b ≥ 2h) the effect is computed as T⊗S − S with the triangle T sampled on the grid
    (end values repeated), scaled so that its variance is exactly b²/6: the same second-order
    term for smooth spectra, but a smoothing (not noise-amplifying) operator, and the full
    slit effect rather than its second-order extrapolation for narrow features. Where the
    slit is narrower than two samples the three-point form (b²/12)(S[i−1] − 2S[i] + S[i+1])/h²
    is used (for b = h: the Stearns & Stearns 1988 correction term, quoted from memory).

    Parameters
    ----------
    values : ndarray (W,)
    bandwidth_nm, spacing_nm : float

    Returns
    -------
    ndarray (W,)
    """
    s = np.asarray(values, dtype=float)
    b, h = float(bandwidth_nm), float(spacing_nm)
    k = int(np.floor(b / h))
    if k < 2:
        return (b * b / 12.0) * _second_difference(s) / (h * h)
    j = np.arange(-k, k + 1)
    w = np.maximum(0.0, 1.0 - np.abs(j) * h / b)
    w /= w.sum()
    var_d = float(np.sum(w * (j * h) ** 2))
    padded = np.pad(s, k, mode="edge")
    conv = np.convolve(padded, w, mode="valid")
    return (conv - s) * ((b * b / 6.0) / var_d)


def shift_spectra(values: np.ndarray, shift_samples: np.ndarray) -> np.ndarray:
    """Evaluate each row at its own offset position: out[m, i] = S_m(i + shift_samples[m]).

    Cubic convolution (Catmull-Rom, Keys 1981 with a = −0.5) between samples, i.e. a cubic
    Hermite interpolant with central-difference slopes, which is exact for quadratics; the end
    values are repeated beyond the grid (CIE 15:2004 §7.2.2.1 practice).

    Parameters
    ----------
    values : ndarray (M, W) or (W,)
    shift_samples : ndarray (M,)
        Offsets in units of the grid spacing (a wavelength offset e in nm is e / h).

    Returns
    -------
    ndarray (M, W)
    """
    v = np.atleast_2d(np.asarray(values, dtype=float))
    s = np.asarray(shift_samples, dtype=float).reshape(-1)
    m = s.size
    if v.shape[0] == 1 and m > 1:
        v = np.broadcast_to(v, (m, v.shape[1]))
    w = v.shape[1]
    k = np.floor(s).astype(np.int64)
    t = (s - k)[:, None]
    base = np.arange(w)[None, :] + k[:, None]

    def at(o):
        idx = np.clip(base + o, 0, w - 1)
        return np.take_along_axis(v, idx, axis=1)

    p0, p1, p2, p3 = at(-1), at(0), at(1), at(2)
    return 0.5 * (
        2.0 * p1
        + (p2 - p0) * t
        + (2.0 * p0 - 5.0 * p1 + 4.0 * p2 - p3) * t**2
        + (3.0 * (p1 - p2) + p3 - p0) * t**3
    )


def draw_spectra(wavelengths_nm, values, instrument: InstrumentModel, draws: int,
                 rng: np.random.Generator) -> np.ndarray:
    """Draw ``draws`` spectra from the instrument model's distribution around one measured spectrum.

    The measurement model: the true spectrum S relates to the measured one S_m by

    S(λ) = (1 + ε) · [ S_b(λ + e) + ζ_s · s · max(S_m) + n(λ) ],
    S_b(λ) = S_m(λ) + ζ_b · B_b[S_m](λ),   B_b[S] ≈ (b²/12) · S''  (:func:`bandpass_effect`),

    with, drawn independently for each trial (numpy ``Generator``, in this order):

    - e ~ N(0, u_λ²): one wavelength-scale offset for the whole spectrum (``wavelength_offset_nm``;
      systematic within a spectrum, hence fully correlated across wavelengths);
    - ζ_b ~ U(−1, 1): the bandpass effect of a triangular slit of FWHM b (``bandwidth_nm``),
      computed by :func:`bandpass_effect`. A
      triangle of FWHM b has variance b²/6, so to second order the slit adds (b²/12)·S''; for
      b equal to the sampling interval h, (b²/12)·S'' ≈ (S[i−1] − 2S[i] + S[i+1])/12 is the
      Stearns & Stearns (1988) three-point correction term (as discussed in CIE 214:2014 —
      both quoted from memory). Whether the data were corrected, and how well, is rarely
      stated on a datasheet: lumeval leaves the data as given and spreads the truth
      symmetrically between "one more slit pass" and "fully corrected" (a rectangular
      distribution of the size of the effect, the conventional treatment of an uncorrected
      systematic effect of known magnitude; common practice, no source). The reported value is
      therefore the one computed from the data, at the centre of the distribution;
    - ζ_s ~ U(−1, 1): residual stray light, flat across wavelength, half-width s · peak
      (``stray_light``);
    - ε ~ N(0, u_ph²): the absolute scale (``photometric_scale``); a common factor that no
      ratio figure sees;
    - n(λ) ~ N(0, (r·S_m(λ))² + (a·peak)²), independent across wavelengths and trials
      (``noise_relative`` r, ``noise_absolute`` a).

    Draws are finally truncated at zero: a spectral power is never negative (where interpolation
    overshoot left the prepared spectrum itself below zero, at that value instead). Drawn
    spectra are evaluated on the spectrum's computation grid without a second preparation. This truncation matters only where
    the signal is within a few noise widths of zero (spectrum tails), where the colour-matching
    and test-colour weights are tiny.

    Parameters
    ----------
    wavelengths_nm : ndarray (W,)
        A uniform grid (spacing h).
    values : ndarray (W,)
        One measured spectrum.
    instrument : InstrumentModel
    draws : int
        M.
    rng : numpy.random.Generator

    Returns
    -------
    ndarray (M, W)
    """
    wl = np.asarray(wavelengths_nm, dtype=float)
    s_m = np.asarray(values, dtype=float).reshape(-1)
    h = float(wl[1] - wl[0])
    m = int(draws)
    peak = float(np.max(s_m))
    e = rng.standard_normal(m) * instrument.wavelength_offset_nm
    zb = rng.uniform(-1.0, 1.0, m)
    zs = rng.uniform(-1.0, 1.0, m)
    eps = rng.standard_normal(m) * instrument.photometric_scale
    noise = rng.standard_normal((m, s_m.size))

    b = instrument.bandwidth_nm
    if b > 0:
        effect = bandpass_effect(s_m, b, h)
        base = s_m[None, :] + zb[:, None] * effect[None, :]
    else:
        base = np.broadcast_to(s_m, (m, s_m.size))
    if instrument.wavelength_offset_nm > 0:
        out = shift_spectra(base, e / h)
    else:
        out = np.array(base, dtype=float)
    out += (zs * instrument.stray_light * peak)[:, None]
    sd = np.sqrt((instrument.noise_relative * s_m) ** 2 + (instrument.noise_absolute * peak) ** 2)
    out += noise * sd[None, :]
    out *= (1.0 + eps)[:, None]
    # truncated at zero, except where the spectrum itself lies below zero (interpolation
    # overshoot kept by preparation): there no draw goes below the spectrum's own value, so
    # that with zero uncertainty every draw equals the spectrum
    np.maximum(out, np.minimum(s_m, 0.0)[None, :], out=out)
    return out


# ------------------------------------------------------------------------------ summaries


def coverage_indices(draws: int, p: float = 0.95) -> tuple[int, int]:
    """0-based indices (r−1, r+q−1) of the probabilistically symmetric 100p % coverage interval
    among ``draws`` sorted values (JCGM 101:2008 §7.7.2, quoted from memory: q = pM if that is
    an integer, else the integer part of pM + 1/2; r = (M − q)/2 if an integer, else
    (M − q + 1)/2; the interval is [y_(r), y_(r+q)])."""
    m = int(draws)
    pm = p * m
    q = int(round(pm)) if abs(pm - round(pm)) < 1e-9 else int(math.floor(pm + 0.5))
    r2 = m - q
    r = r2 // 2 if r2 % 2 == 0 else (r2 + 1) // 2
    r = max(r, 1)
    return r - 1, min(r + q - 1, m - 1)


def summarise(samples: np.ndarray, p: float = 0.95) -> dict[str, np.ndarray]:
    """Estimate, standard uncertainty and coverage interval of Monte Carlo samples.

    Parameters
    ----------
    samples : ndarray (M, F)
        M draws of F figures (NaN where a figure is undefined for that draw).
    p : float
        Coverage probability.

    Returns
    -------
    dict with ``mean``, ``u``, ``low``, ``high``, ``undefined_fraction`` (each (F,)) and ``n``
    (defined draws per figure, (F,)). Statistics use the defined draws only (JCGM 101:2008 §7.6
    with M = their number); a figure with fewer than 2 defined draws gets NaN.
    """
    x = np.asarray(samples, dtype=float)
    if x.ndim == 1:
        x = x[:, None]
    m, f = x.shape
    finite = np.isfinite(x)
    n = finite.sum(axis=0)
    out = {k: np.full(f, np.nan) for k in ("mean", "u", "low", "high")}
    out["undefined_fraction"] = 1.0 - n / max(m, 1)
    out["n"] = n
    full = n == m
    if full.any() and m >= 2:
        xs = x[:, full]
        # shifted by the first draw: exact zero spread for identical draws, and less rounding
        dev = xs - xs[:1]
        out["mean"][full] = xs[0] + dev.mean(axis=0)
        out["u"][full] = dev.std(axis=0, ddof=1)
        srt = np.sort(xs, axis=0)
        lo, hi = coverage_indices(m, p)
        out["low"][full] = srt[lo]
        out["high"][full] = srt[hi]
    for j in np.flatnonzero(~full & (n >= 2)):
        v = np.sort(x[finite[:, j], j])
        dv = v - v[0]
        out["mean"][j] = v[0] + dv.mean()
        out["u"][j] = dv.std(ddof=1)
        lo, hi = coverage_indices(v.size, p)
        out["low"][j] = v[lo]
        out["high"][j] = v[hi]
    return out


def numerical_tolerance(u, significant_digits: int = 1) -> np.ndarray:
    """JCGM 101:2008 §7.9.2 (quoted from memory): write u = c × 10^l with c an integer of
    ``significant_digits`` digits; the numerical tolerance is δ = ½ × 10^l. u is rounded to that
    many digits first, so 0.0989 with one digit is 0.1 = 1 × 10^-1 and δ = 0.05 (taking the
    exponent of u unrounded gave 0.005, ten times too strict; found by a review). Zero or NaN u
    gives δ = inf (nothing to stabilise)."""
    u = np.atleast_1d(np.asarray(u, dtype=float))
    out = np.full(u.shape, np.inf)
    ok = np.isfinite(u) & (u > 0)
    lg = np.floor(np.log10(u[ok])) - (significant_digits - 1)
    c = np.round(u[ok] / 10.0**lg)  # the digits of u; 10^n_dig when rounding carries over
    lg = lg + (c >= 10.0**significant_digits)
    out[ok] = 0.5 * 10.0**lg
    return out


# ------------------------------------------------------------------------------ results


@dataclass(frozen=True)
class UncertaintyResult:
    """Monte Carlo uncertainties of F quantities for N spectra.

    Attributes
    ----------
    names : tuple of str (N,)
    quantities : tuple of str (F,)
        Figure names (:func:`lumeval.figures.names`) followed by any extra quantities
        (e.g. clause margins) the caller asked for.
    measured : ndarray (N, F)
        The value computed from the data as given (the value judged).
    mean : ndarray (N, F)
        Monte Carlo estimate, the mean of the draws (JCGM 101 §7.6).
    u : ndarray (N, F)
        Standard uncertainty (standard deviation of the draws).
    low, high : ndarray (N, F)
        Probabilistically symmetric coverage interval at probability ``settings.coverage``.
    undefined_fraction : ndarray (N, F)
        Fraction of draws where the quantity was undefined (NaN).
    draws : ndarray of int (N,)
        Number of Monte Carlo trials used for each spectrum.
    stabilised : ndarray of bool (N,)
        True when the adaptive procedure stabilised (always True for a fixed M).
    instrument : InstrumentModel
    settings : MonteCarloSettings
    """

    names: tuple[str, ...]
    quantities: tuple[str, ...]
    measured: np.ndarray
    mean: np.ndarray
    u: np.ndarray
    low: np.ndarray
    high: np.ndarray
    undefined_fraction: np.ndarray
    draws: np.ndarray
    stabilised: np.ndarray
    instrument: InstrumentModel
    settings: MonteCarloSettings
    notes: tuple[str, ...] = field(default=())

    def __len__(self) -> int:
        return len(self.names)

    def index(self, name: str) -> int:
        try:
            return self.quantities.index(name)
        except ValueError:
            raise KeyError(f"no uncertainty for {name!r}") from None

    def of(self, name: str) -> dict[str, np.ndarray]:
        """``measured``, ``mean``, ``u``, ``low``, ``high``, ``undefined_fraction`` of one
        quantity, each (N,)."""
        j = self.index(name)
        return {k: getattr(self, k)[:, j] for k in ("measured", "mean", "u", "low", "high", "undefined_fraction")}

    def u_of(self, name: str) -> np.ndarray:
        """Standard uncertainty of one quantity, (N,)."""
        return self.u[:, self.index(name)]


def spectrum_seed(seed: int, wavelengths_nm, values) -> np.random.SeedSequence:
    """The random stream of one spectrum's draws: the user's ``seed`` and the spectrum's content.

    ``SeedSequence(seed, spawn_key=words)`` with ``words`` the SHA-256 digest of the spectrum's
    wavelengths and values (as prepared, little-endian float64 bytes, wavelengths first), read
    as eight 32-bit integers. Two identical spectra get the same draws and so the same verdict,
    wherever they stand in a run, however a lot is batched and on any number of processes
    (a stream keyed to the position in the run gave two copies of one file different draws,
    found by a review); different spectra get unrelated streams.
    """
    import hashlib

    h = hashlib.sha256()
    h.update(np.ascontiguousarray(wavelengths_nm, dtype="<f8").tobytes())
    h.update(np.ascontiguousarray(values, dtype="<f8").tobytes())
    words = tuple(int(w) for w in np.frombuffer(h.digest(), dtype="<u4"))
    return np.random.SeedSequence(int(seed), spawn_key=words)


def _figures_of(evaluation, names) -> np.ndarray:
    return np.column_stack([np.asarray(evaluation.figure(n), dtype=float) for n in names])


def _engine(spectra, chunk_size=_CHUNK):
    from ..engine import evaluate

    return evaluate(spectra, chunk_size=chunk_size, keep_details=False)


def _evaluate_values(wl, values, evaluate_fn, names_f, extra, chunk, metadata=None):
    m = values.shape[0]
    labels = ("draw",) * m
    # drawn from a prepared spectrum, on its computation grid: evaluated as they are (preparing
    # them again would treat kept interpolation overshoot as measured noise); the draws keep the
    # measured spectrum's metadata: its unit decides the absolute figures
    ss = SpectrumSet(wl, values, labels, labels, metadata=(dict(metadata or {}),) * m, prepared=True)
    ev = evaluate_fn(ss) if evaluate_fn else _engine(ss, chunk)
    cols = _figures_of(ev, names_f)
    if extra is not None:
        ex = extra(ev)
        cols = np.column_stack([cols] + [np.asarray(ex[k], dtype=float).reshape(m) for k in ex])
    return cols


def _quantities(evaluation, figures, extra):
    """(figure names, all quantity names, measured values (N, F)) of a propagation: the figures
    asked for (default: every figure of the registry, except those only absolute data have when
    no spectrum has them), then the ``extra`` quantities."""
    from ..figures import FIGURES
    from ..figures import names as _figure_names

    if figures:
        names_f = tuple(figures)
    else:
        names_f = tuple(n for n in _figure_names()
                        if not (FIGURES[n].when_defined and not np.isfinite(FIGURES[n].value(evaluation)).any()))
    n = len(evaluation.spectra)
    measured = _figures_of(evaluation, names_f)
    extra_names: tuple[str, ...] = ()
    if extra is not None:
        ex = extra(evaluation)
        extra_names = tuple(ex)
        measured = np.column_stack([measured] + [np.asarray(ex[k], dtype=float).reshape(n) for k in ex])
    return names_f, names_f + extra_names, measured


def _fixed_draws(run, settings: MonteCarloSettings):
    """(summary, M) of a fixed number of draws M, made in blocks so that memory stays bounded for
    large M (one (M, W) array of drawn spectra is 3.2 GB at M = 10^5); runs of up to
    _DRAW_BLOCK draws are unchanged."""
    assert settings.draws is not None  # a fixed number of draws when not adaptive
    samples = np.concatenate([run(min(_DRAW_BLOCK, settings.draws - k))
                              for k in range(0, settings.draws, _DRAW_BLOCK)], axis=0)
    return summarise(samples, settings.coverage), settings.draws


def _adaptive_draws(run, settings: MonteCarloSettings, stab_idx: np.ndarray):
    """(summary, draws used, stabilised) of the adaptive procedure (see :func:`propagate`)."""
    p = settings.coverage
    block = settings.draws_block
    runs, parts = [], []
    ok = False
    while True:
        smp = run(block)
        parts.append(smp)
        s = summarise(smp, p)
        runs.append(np.stack([s["mean"], s["u"], s["low"], s["high"]]))
        h = len(runs)
        if h >= 2:
            r = np.stack(runs)  # (h, 4, F)
            sd = np.sqrt(np.nansum((r - np.nanmean(r, axis=0)) ** 2, axis=0) / (h * (h - 1)))
            all_s = summarise(np.vstack(parts), p)
            delta = numerical_tolerance(all_s["u"], settings.significant_digits)
            bad = 2.0 * sd[:, stab_idx] > delta[stab_idx][None, :]
            if not bad.any():
                ok = True
                break
        if (h + 1) * block > settings.max_draws:
            break
    samples = np.vstack(parts)
    return summarise(samples, p), samples.shape[0], ok


def propagate(
    spectra,
    instrument: InstrumentModel | None = None,
    settings: MonteCarloSettings | None = None,
    *,
    figures: tuple[str, ...] | None = None,
    extra: Callable[[object], dict[str, np.ndarray]] | None = None,
    stabilise: tuple[str, ...] | None = None,
    evaluation=None,
    evaluate_fn=None,
    chunk_size: int = _CHUNK,
    index_offset: int = 0,
    progress=None,
) -> UncertaintyResult:
    """Propagate the instrument model's uncertainty to every figure by Monte Carlo (JCGM 101).

    Parameters
    ----------
    spectra : SpectrumSet
        The measured spectra (prepared by the engine first; the draws are made on the prepared
        grid).
    instrument : InstrumentModel, optional
        Defaults to :class:`InstrumentModel` () (documented defaults).
    settings : MonteCarloSettings, optional
        Number of draws (or adaptive), seed, coverage probability.
    figures : tuple of str, optional
        Figures to summarise (default: every figure of the registry, :func:`lumeval.figures.names`).
    extra : callable, optional
        ``extra(evaluation) -> {name: ndarray (n,)}``: further quantities computed from an
        :class:`~lumeval.engine.Evaluation` of n spectra (e.g. a clause's signed distance to a
        chromaticity region). Applied to the measured spectra and to the draws alike.
    stabilise : tuple of str, optional
        For the adaptive procedure, the quantities that must stabilise (default: all).
    evaluation : Evaluation, optional
        The engine's evaluation of ``spectra`` if the caller already has it.
    evaluate_fn : callable, optional
        Replacement for :func:`lumeval.engine.evaluate` (tests).
    index_offset : int
        Position of the first spectrum in a larger run. Kept for callers; it no longer changes
        the draws (each spectrum's stream is keyed to its content, :func:`spectrum_seed`).
    progress : callable, optional
        A progress listener (:mod:`lumeval.progress`): called as
        ``progress("Monte Carlo", spectra_done, spectra_total)`` after each spectrum's draws.

    Returns
    -------
    UncertaintyResult

    Notes
    -----
    Each spectrum uses the random stream of :func:`spectrum_seed`: the seed and the spectrum's
    own values, so the same data, model and seed reproduce every number, in any order and
    batching, and two identical spectra get identical results.

    Adaptive procedure (JCGM 101:2008 §7.9.4, quoted from memory): runs of M_b trials
    (``settings.draws_block``, default 2000 instead of the Supplement's max(100/(1−p), 10⁴), to
    keep runs short: a documented departure) are repeated; after h ≥ 2 runs the standard
    deviations s of the h run results for y, u(y), y_low and y_high are computed as
    s² = Σ (z_r − z̄)² / (h(h − 1)); the procedure stops when 2s ≤ δ for all four and for every
    quantity in ``stabilise``, where δ is the numerical tolerance of §7.9.2 for u(y) from all
    draws so far. All h·M_b draws then give the results. It also stops at
    ``settings.max_draws`` with ``stabilised = False``.
    """
    from ..progress import MONTE_CARLO, report

    instrument = instrument or InstrumentModel()
    settings = settings or MonteCarloSettings()
    if evaluation is None:
        evaluation = evaluate_fn(spectra) if evaluate_fn else _engine(spectra, chunk_size)
    names_f, quantities, measured = _quantities(evaluation, figures, extra)
    prepared = evaluation.spectra
    n = len(prepared)
    fq = len(quantities)
    stab_idx = np.array([quantities.index(q) for q in (stabilise or quantities)], dtype=int)

    res = {k: np.full((n, fq), np.nan) for k in ("mean", "u", "low", "high", "undefined_fraction")}
    draws_used = np.zeros(n, dtype=int)
    stabilised = np.ones(n, dtype=bool)

    for i in range(n):
        wl, s_m = prepared.spectrum(i)  # each spectrum on its own computation grid
        rng = np.random.default_rng(spectrum_seed(settings.seed, wl, s_m))

        def run(m):  # called only within this iteration, so the loop variables are current
            vals = draw_spectra(wl, s_m, instrument, m, rng)  # noqa: B023
            return _evaluate_values(wl, vals, evaluate_fn, names_f, extra, chunk_size, prepared.metadata[i])  # noqa: B023

        if not settings.adaptive:
            summ, draws_used[i] = _fixed_draws(run, settings)
        else:
            summ, draws_used[i], stabilised[i] = _adaptive_draws(run, settings, stab_idx)
        for k in res:
            res[k][i] = summ[k]
        report(progress, MONTE_CARLO, i + 1, n)

    notes = []
    if instrument.source == "lumeval defaults":
        notes.append("instrument model: lumeval's documented defaults (no instrument file given)")
    return UncertaintyResult(
        names=prepared.names,
        quantities=quantities,
        measured=measured,
        mean=res["mean"],
        u=res["u"],
        low=res["low"],
        high=res["high"],
        undefined_fraction=res["undefined_fraction"],
        draws=draws_used,
        stabilised=stabilised,
        instrument=instrument,
        settings=settings,
        notes=tuple(notes),
    )
