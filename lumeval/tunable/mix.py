"""Channel mixes of a tunable-white luminaire: weights that reach target CCTs (and Duv).

The model
---------
A luminaire with K channels (warm and cool LEDs, sometimes a third or more), each measured at
full drive, emits at drive weights w = (w₁ … w_K), wᵢ ≥ 0, the spectrum

    S(λ; w) = Σᵢ wᵢ · Sᵢ(λ)

— linear in radiant power (superposition of the channels' emissions). This is an
**assumption**, and these effects are not modelled: thermal droop (a channel's output and
spectrum change as the board warms, and the board warms with the other channels' power),
current-dependent spectra (an LED's peak shifts and broadens with drive current, so a channel
at 20 % current is not 0.2 × its full-drive spectrum), PWM versus constant-current dimming,
and driver nonlinearity. A weight is therefore a *radiant-power* fraction of full output, not
a driver setting; measured series (:mod:`lumeval.tunable.series`) show what the real product
does.

Because tristimulus values are linear in the spectrum (CIE 15:2004 Eq. 7.1), the mix's
XYZ = Σ wᵢ·XYZᵢ. Chromaticity is *not* linear in w: the mix of two channels lies on the
straight line between their chromaticities (in x, y and in u, v alike, since both are
projective maps of XYZ), but its position along that line is a fraction of X+Y+Z (or of
X+15Y+3Z), not of w. Weights are therefore solved exactly, never by interpolating
chromaticity.

Two channels
    w = (1 − f, f). CCT(f), computed with lumeval's CCT function (Ohno 2014, on the mix's
    exact XYZ), is sampled on a fine grid of f; every bracket where CCT − target changes sign
    is refined by bisection to machine precision in f. The Duv of the mix is whatever the
    line between the channels gives there; it is reported, not chosen.
Three or more channels
    The target chromaticity (u, v) is the point at distance Duv from the Planckian locus along
    its normal at the target CCT (Ohno 2014, Eqs. 13-14; :func:`lumeval.criteria.regions.uv_from_cct_duv`).
    Reaching it is two *linear* equations in w (CIE 15:2004 §8.1: u·(X+15Y+3Z) = 4X,
    v·(X+15Y+3Z) = 6Y); with the luminance normalisation Σ wᵢYᵢ = 1 the solutions form a
    convex polytope whose vertices are the basic solutions with at most three channels lit
    (linear-programming theory: the vertices of {w ≥ 0, A w = b} with three equality rows have
    at most three non-zero components). With three channels the solution is unique; with
    more, the polytope is searched for the weights that maximise the chosen figure: first a
    batch of candidates for many setpoints at once (their vertices and random convex
    combinations, evaluated by :func:`lumeval.engine.evaluate` in chunks of at most
    :data:`CANDIDATE_BATCH` spectra), then SLSQP (``scipy.optimize.minimize``) from the best
    candidate over the convex-combination coefficients, every step of which stays exactly on
    the target chromaticity; a setpoint where SLSQP stops at its iteration limit says so. A
    target outside the convex hull of the channels' chromaticities is *not reachable*. At most
    :data:`MAX_CHANNELS` channels are accepted, none proportional to another.

Weights are reported normalised so that the largest is 1.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations
from math import comb
from typing import Any

import numpy as np

from .._paths import source_file
from ..errors import InputError, UsageError, plain_number, quote
from ..spectra.model import SpectrumSet

#: ``--maximise`` choices -> lumeval figure names.
MAXIMISE: dict[str, str] = {"Rf": "Rf", "Ra": "Ra", "ler": "ler_lm_per_W"}

#: The assumption every mix report carries.
MODEL_NOTE = (
    "mix model: spectrum = Σ wᵢ·Sᵢ of the channels measured at full drive (linear in radiant power); "
    "thermal droop, current-dependent spectral shifts and driver nonlinearity are not modelled — "
    "confirm chosen setpoints by measuring the product (lumeval series)"
)

#: Samples of the mixing fraction for the two-channel bracket search (then bisection).
TWO_CHANNEL_GRID = 2049
#: Bisection steps: 2⁻⁶⁰ of the bracket, below double precision in f.
BISECTIONS = 60
#: Random convex combinations per setpoint in the batched candidate search (K ≥ 4).
CANDIDATES = 48
#: Most channels a mix accepts. The candidate search enumerates every channel triple
#: (C(K, 3) vertices per setpoint) and SLSQP differentiates over the feasible ones, so the cost
#: grows about as K³. Measured on the 2-core project machine (one setpoint, maximise Rf): 0.1-1 s
#: at 8-10 channels, 1-1.7 s at 12, up to 5-9 s at 14-16 and 38 s at 20 (docs/tunable.md).
MAX_CHANNELS = 12
#: Two channels whose spectra, each divided by its own peak, differ by at most this fraction of
#: the peak at every wavelength are one channel given twice, or scaled (common practice for
#: "equal up to a factor": a copy written with six or more significant digits stays below it —
#: the reviewer's ×2 copy at nine digits differs by 3e-9 — while the noise of a real measurement
#: alone is 1e-4 of the peak or more).
PROPORTIONAL_TOL = 1e-5
#: Most candidate spectra one engine call evaluates in the K ≥ 4 search: setpoints are solved
#: in chunks of at most this many candidates (at least one setpoint), bounding memory.
CANDIDATE_BATCH = 20000
#: SLSQP iterations per setpoint; where the limit is reached the setpoint carries :data:`LIMIT_NOTE`.
SLSQP_MAXITER = 40
#: The note of a setpoint whose search stopped at the iteration limit.
LIMIT_NOTE = ("the optimiser stopped at its iteration limit before converging: the maximised figure may be slightly "
              "below the best these channels can reach at this setpoint")
#: Half-width (K) of the band around the CIE 13.3 reference switch (5000 K) in which a setpoint
#: carries :data:`REFERENCE_SWITCH_NOTE`. The mix reaches its target CCT to numerical precision,
#: so in the model only a target at 5000 K itself sits on the switch; but a product built to the
#: setpoint, or the same chromaticity through another valid CCT method, is not held within a
#: few kelvin of it (Ohno 2014 states about 1 K for his method, quoted from memory; the model leaves out droop and current shifts,
#: :data:`MODEL_NOTE`), and 10 K at 5000 K is a chromaticity step of only Δuv ≈ 0.00014 — below
#: what a re-measurement of chromaticity usually repeats (common practice, no source). ±10 K
#: covers that reach of the switch while leaving the neighbours on the usual 50 K and 100 K
#: setpoint grids (4950 K, 5050 K) without the note.
REFERENCE_SWITCH_BAND_K = 10.0
#: The note of a setpoint whose target CCT lies within :data:`REFERENCE_SWITCH_BAND_K` of 5000 K.
REFERENCE_SWITCH_NOTE = (
    f"reference switch: the target CCT lies within ±{REFERENCE_SWITCH_BAND_K:g} K of 5000 K, where CIE 13.3 "
    "changes Ra's reference from the Planckian radiator (below) to CIE daylight (from 5000 K on); Ra and R1-R14 "
    "can jump between setpoints either side of it, and the product measured a few kelvin off this target may be "
    "rated against the other reference"
)
#: Most setpoints one run accepts (a 1 K step over 1000-20000 K is 19,001).
MAX_SETPOINTS = 20001
#: Target CCT range: where lumeval reports CCT (Ohno 2014's stated range).
TARGET_RANGE_K = (1000.0, 20000.0)


@dataclass(frozen=True)
class MixResult:
    """Weights and figures of a channel mix at N setpoints.

    Attributes
    ----------
    channels : SpectrumSet
        The K channels on one computation grid (``notes`` say what preparation did).
    target_cct_K : ndarray (N,)
    target_duv : ndarray (N,)
        NaN with two channels (the Duv follows from the line between them).
    reachable : ndarray of bool (N,)
    reason : tuple of str (N,)
        Why a setpoint is not reachable ("" where it is).
    weights : ndarray (N, K)
        Radiant-power weights of the channels, the largest 1; NaN where not reachable.
    evaluation : Evaluation or None
        Every lumeval figure of the reachable mixes, in setpoint order (None if none is).
    index : ndarray of int (N,)
        Row of each setpoint in ``evaluation``, −1 where not reachable.
    maximise : str or None
        The figure maximised (three or more channels).
    method : str
        How the weights were found.
    notes : tuple of str
        What every report must say about this run (the model, grids, targets).
    """

    channels: SpectrumSet
    target_cct_K: np.ndarray
    target_duv: np.ndarray
    reachable: np.ndarray
    reason: tuple[str, ...]
    weights: np.ndarray
    evaluation: Any
    index: np.ndarray
    maximise: str | None
    method: str
    notes: tuple[str, ...]

    def __len__(self) -> int:
        return int(self.target_cct_K.size)

    @property
    def channel_names(self) -> tuple[str, ...]:
        return self.channels.names

    @property
    def names(self) -> tuple[str, ...]:
        """Setpoint labels, e.g. ``"3000 K"`` or ``"3000 K, Duv +0.0010"``."""
        out = []
        for t, d in zip(self.target_cct_K, self.target_duv):
            out.append(f"{t:g} K" if not np.isfinite(d) else f"{t:g} K, Duv {d:+.4f}")
        return tuple(out)

    def figure(self, name: str) -> np.ndarray:
        """The figure ``name`` at every setpoint, shape (N,), NaN where not reachable."""
        out = np.full(len(self), np.nan)
        if self.evaluation is not None:
            ok = self.index >= 0
            out[ok] = np.asarray(self.evaluation.figure(name), dtype=float)[self.index[ok]]
        return out

    def spectra(self) -> np.ndarray:
        """The mixed spectra (N, W) on the channels' grid (NaN rows where not reachable)."""
        w = np.where(np.isfinite(self.weights), self.weights, np.nan)
        return w @ self.channels.values


# --------------------------------------------------------------------------- setpoints


def parse_setpoints(text: str, *, option: str = "--cct") -> np.ndarray:
    """Target CCTs from ``LOW:HIGH:STEP`` (inclusive), ``A,B,C`` or one number, in K.

    Raises :class:`UsageError` naming ``option`` for anything else, a step that does not
    divide the range, or targets outside 1000-20000 K (where lumeval reports CCT).
    """
    s = str(text).strip()
    fix = f"write {option} LOW:HIGH:STEP (e.g. 2700:6500:100), a list 2700,3000,4000 or one value, in the digits 0-9"
    try:
        if ":" in s:
            parts = [plain_number(p, ValueError) for p in s.split(":")]
            if len(parts) != 3:
                raise ValueError
            lo, hi, step = parts
            if not (np.isfinite(lo) and np.isfinite(hi) and np.isfinite(step)) or step <= 0 or hi < lo:
                raise UsageError(f"{option} {s!r}: need LOW ≤ HIGH and a positive STEP", fix=fix)
            n = (hi - lo) / step
            if not np.isfinite(n):  # a step so small that the count overflows
                raise UsageError(f"{option} {s!r}: the step {step:g} gives more than {MAX_SETPOINTS} setpoints",
                                 fix="use a larger step")
            if n + 1 > MAX_SETPOINTS:
                many = f"{int(n) + 1}" if n < 1e15 else f"about {n:.3g}"
                raise UsageError(f"{option} {s!r} gives {many} setpoints, more than {MAX_SETPOINTS}", fix="use a larger step")
            k = int(round(n))
            if abs(n - k) > 1e-9 * max(1.0, n):
                raise UsageError(f"{option} {s!r}: the step {step:g} does not divide {lo:g}…{hi:g}", fix=fix)
            targets = lo + step * np.arange(k + 1)
        else:
            targets = np.array([plain_number(p, ValueError) for p in s.split(",")])
    except ValueError:
        raise UsageError(f"{option} {s!r} is not a list of numbers", fix=fix) from None
    if targets.size == 0 or not np.all(np.isfinite(targets)):
        raise UsageError(f"{option} {s!r} is not a list of numbers", fix=fix)
    lo, hi = TARGET_RANGE_K
    bad = targets[(targets < lo) | (targets > hi)]
    if bad.size:
        raise UsageError(f"{option}: target {bad[0]:g} K is outside {lo:.0f}-{hi:.0f} K, where lumeval reports CCT",
                         fix=f"choose targets between {lo:.0f} and {hi:.0f} K")
    if targets.size > MAX_SETPOINTS:
        raise UsageError(f"{option} gives {targets.size} setpoints, more than {MAX_SETPOINTS}", fix="use fewer")
    return targets


def target_duvs(targets_K: np.ndarray, duv) -> tuple[np.ndarray, str]:
    """Target Duv per setpoint: a number, or ``"ansi"`` for ANSI C78.377-2017's flexible-CCT
    target Duv (:func:`lumeval.criteria.regions.ansi_flexible_duv`). Returns (values, note)."""
    if isinstance(duv, str):
        if duv.strip().lower() != "ansi":
            try:
                duv = plain_number(duv, ValueError)
            except ValueError:
                raise UsageError(f"--duv {duv!r} is neither a number nor 'ansi'",
                                 fix="write e.g. --duv 0, --duv 0.002 or --duv ansi (a number in the digits 0-9)") from None
        else:
            from ..criteria import regions

            lo, hi = regions.ANSI_FLEXIBLE_RANGE_K
            note = f"target Duv: the {regions.ANSI_EDITION} flexible-CCT target Duv at each target CCT"
            if np.any((targets_K < lo) | (targets_K > hi)):
                note += f" (the formula is defined for {lo:.0f}-{hi:.0f} K; applied outside that range as written)"
            return np.asarray(regions.ansi_flexible_duv(targets_K), dtype=float), note
    d = float(duv)
    if not np.isfinite(d) or abs(d) > 0.05:
        raise UsageError(f"--duv {d:g} is outside ±0.05, where CCT is not meaningful (CIE 15:2004)",
                         fix="write a value between -0.05 and 0.05")
    return np.full(targets_K.shape, d), f"target Duv {d:+.4f} at every setpoint"


# --------------------------------------------------------------------------- channels


def check_channels(channels: SpectrumSet) -> None:
    """Refuse fewer than two channels, more than :data:`MAX_CHANNELS`, two channels with one
    name, and a channel proportional to another (:data:`PROPORTIONAL_TOL`)."""
    if len(channels) < 2:
        src = source_file(channels.sources[0]) if len(channels) else None
        raise InputError(
            f"a mix needs at least two channels, found {len(channels)}",
            file=src,
            fix="give one wide file with a column per channel (at full drive), or several files",
        )
    files = [source_file(s) for s in channels.sources]
    if len(channels) > MAX_CHANNELS:
        raise InputError(
            f"{len(channels)} channels, more than the {MAX_CHANNELS} a mix accepts (the search over their "
            "combinations grows with the cube of the count)", file=_files_of(files),
            fix=f"give at most {MAX_CHANNELS} channels (the ones the luminaire really has)")
    names = channels.names
    seen: dict[str, int] = {}
    for j, n in enumerate(names):
        if n in seen:
            i = seen[n]
            raise InputError(f"two channels are both named {quote(n)}", file=_two_files(files, i, j),
                             fix="give each channel column its own name")
        seen[n] = j
    pair = proportional_pair(channels.values)
    if pair is not None:
        i, j = pair
        raise InputError(
            f"channels {quote(names[i])} and {quote(names[j])} have one spectrum up to a factor (each divided by its "
            f"peak, they differ by at most {PROPORTIONAL_TOL:g} of it), so no mix can tell them apart", file=_two_files(files, i, j), fix="give each channel once (drop the copy or the scaled copy)")


def _two_files(files: list[str], i: int, j: int) -> str:
    """Where channels i and j come from: one file, or "A and B"."""
    return files[i] if files[i] == files[j] else f"{files[i]} and {files[j]}"


def _files_of(files: list[str], most: int = 3) -> str:
    """The distinct files, in order, for a message (the first ``most`` and how many more)."""
    uniq = list(dict.fromkeys(files))
    text = ", ".join(uniq[:most])
    return text + (f" and {len(uniq) - most} more files" if len(uniq) > most else "")


def proportional_pair(values: np.ndarray) -> tuple[int, int] | None:
    """The first pair (i, j), i < j, of channels whose spectra, each divided by its own peak,
    differ by at most :data:`PROPORTIONAL_TOL` at every wavelength (one is the other × k);
    None if there is none. Channels without a positive peak are skipped (refused elsewhere)."""
    v = np.asarray(values, dtype=float)
    peak = v.max(axis=1)
    good = peak > 0
    norm = np.where(good[:, None], v / np.where(good, peak, 1.0)[:, None], np.nan)
    for i in range(v.shape[0] - 1):
        if not good[i]:
            continue
        d = np.max(np.abs(norm[i + 1:] - norm[i][None, :]), axis=1)
        hit = np.flatnonzero(good[i + 1:] & (d <= PROPORTIONAL_TOL))
        if hit.size:
            return i, i + 1 + int(hit[0])
    return None


def channel_tristimulus(channels: SpectrumSet) -> np.ndarray:
    """XYZ (CIE 1931 2°) of each channel on its prepared grid, shape (K, 3)."""
    from ..metrics.colorimetry import tristimulus

    return tristimulus(channels.wavelengths_nm, channels.values)


# --------------------------------------------------------------------------- two channels


def _cct_of_fraction(XYZc: np.ndarray, f: np.ndarray):
    from ..metrics.colorimetry import cct_duv_ohno, uv_from_XYZ

    XYZ = (1.0 - f)[:, None] * XYZc[0][None, :] + f[:, None] * XYZc[1][None, :]
    return cct_duv_ohno(uv_from_XYZ(XYZ))


def solve_two_channels(XYZc: np.ndarray, targets_K: np.ndarray) -> tuple[np.ndarray, np.ndarray, tuple[str, ...]]:
    """Weights of two channels that reach each target CCT (vectorised over targets).

    Parameters
    ----------
    XYZc : ndarray (2, 3)
        Tristimulus values of the two channels at full drive.
    targets_K : ndarray (N,)

    Returns
    -------
    weights : ndarray (N, 2), largest 1 (NaN where not reachable)
    reachable : ndarray of bool (N,)
    reason : tuple of str (N,)

    Notes
    -----
    The mix at fraction f has XYZ = (1−f)·XYZ₁ + f·XYZ₂ (CIE 15:2004 Eq. 7.1 is linear in the
    spectrum). CCT(f) by Ohno (2014) is sampled at :data:`TWO_CHANNEL_GRID` fractions; the
    first sign change of CCT(f) − target is bisected :data:`BISECTIONS` times. Where the target
    is met at two fractions (possible only if the line bends back in CCT), the first, from
    channel 1 towards channel 2, is taken.
    """
    targets_K = np.asarray(targets_K, dtype=float)
    n = targets_K.size
    f = np.linspace(0.0, 1.0, TWO_CHANNEL_GRID)
    grid = _cct_of_fraction(XYZc, f).cct_K
    s = grid[None, :] - targets_K[:, None]
    fin = np.isfinite(s)
    br = fin[:, :-1] & fin[:, 1:] & (s[:, :-1] * s[:, 1:] <= 0)
    has = br.any(axis=1)
    k = np.argmax(br, axis=1)
    lo, hi = f[k].copy(), f[np.minimum(k + 1, f.size - 1)].copy()
    s_lo = s[np.arange(n), k]
    for _ in range(BISECTIONS):
        mid = 0.5 * (lo + hi)
        c = _cct_of_fraction(XYZc, mid).cct_K - targets_K
        same = np.sign(np.nan_to_num(c)) == np.sign(s_lo)
        lo = np.where(same, mid, lo)
        hi = np.where(same, hi, mid)
    # pick the end of the final bracket nearer the target (they differ by ~1e-18 in f)
    c_lo = np.abs(_cct_of_fraction(XYZc, lo).cct_K - targets_K)
    c_hi = np.abs(_cct_of_fraction(XYZc, hi).cct_K - targets_K)
    fx = np.where(np.nan_to_num(c_hi, nan=np.inf) < np.nan_to_num(c_lo, nan=np.inf), hi, lo)
    w = np.stack([1.0 - fx, fx], axis=-1)
    w = w / w.max(axis=1, keepdims=True)
    w[~has] = np.nan
    reasons = [""] * n
    if not has.all():
        ok = np.isfinite(grid)
        span = f"{np.nanmin(grid):.0f}-{np.nanmax(grid):.0f} K" if ok.any() else "none"
        extra = "" if ok.all() else " (part of the line is too far from the Planckian locus for a CCT)"
        for i in np.flatnonzero(~has):
            reasons[i] = f"not reachable: the mixes of the two channels span CCT {span}{extra}"
    return w, has, tuple(reasons)


# --------------------------------------------------------------------------- three or more


def _vertex_solutions(XYZc: np.ndarray, uv_t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Basic solutions (vertices) for every setpoint: weights with at most three channels lit
    that reach the target (u, v), normalised to Σ wᵢYᵢ = 1.

    Returns ``V`` (N, T, K) and ``ok`` (N, T) for the T = C(K, 3) channel triples.
    """
    K = XYZc.shape[0]
    X, Y, Z = XYZc[:, 0], XYZc[:, 1], XYZc[:, 2]
    S = X + 15.0 * Y + 3.0 * Z
    u, v = uv_t[:, 0:1], uv_t[:, 1:2]
    # rows: 4X − u S = 0, 6Y − v S = 0 (CIE 15:2004 §8.1), Y = 1
    A = np.stack([4.0 * X[None, :] - u * S[None, :], 6.0 * Y[None, :] - v * S[None, :],
                  np.broadcast_to(Y[None, :], (uv_t.shape[0], K))], axis=1)  # (N, 3, K)
    triples = list(combinations(range(K), 3))
    n = uv_t.shape[0]
    V = np.zeros((n, len(triples), K))
    ok = np.zeros((n, len(triples)), dtype=bool)
    rhs = np.array([0.0, 0.0, 1.0])
    for t, idx in enumerate(triples):
        M = A[:, :, list(idx)]  # (N, 3, 3)
        det = np.linalg.det(M)
        scale = np.prod(np.linalg.norm(M, axis=1), axis=1)
        good = np.abs(det) > 1e-12 * scale
        sol = np.zeros((n, 3))
        if good.any():
            sol[good] = np.linalg.solve(M[good], np.broadcast_to(rhs, (int(good.sum()), 3))[..., None])[..., 0]
        tol = 1e-9 * np.max(np.abs(sol), axis=1)
        feas = good & np.all(sol >= -tol[:, None], axis=1)
        sol = np.clip(sol, 0.0, None)
        V[:, t][:, list(idx)] = sol
        ok[:, t] = feas
    return V, ok


class _Objective:
    """The figure to maximise as a function of mixing weights, evaluated in batches by the
    engine (one :func:`lumeval.engine.evaluate` call per batch); NaN counts as −∞."""

    def __init__(self, wl: np.ndarray, values: np.ndarray, figure: str) -> None:
        self.wl, self.values, self.figure = wl, values, figure
        self.calls = 0

    def __call__(self, W: np.ndarray) -> np.ndarray:
        from ..engine import evaluate

        W = np.atleast_2d(W)
        self.calls += 1
        spec = W @ self.values
        n = spec.shape[0]
        # mixes of prepared channels lie on their computation grid: not prepared (re-clipped) again
        ss = SpectrumSet(self.wl, spec, tuple(f"c{i}" for i in range(n)), ("",) * n, prepared=True)
        fig = np.asarray(evaluate(ss, keep_details=False).figure(self.figure), dtype=float)
        return np.where(np.isfinite(fig), fig, -np.inf)


def _refine(obj: _Objective, Vf: np.ndarray, lam0: np.ndarray, f0: float) -> tuple[np.ndarray, float, bool]:
    """SLSQP over convex-combination coefficients λ of the feasible vertices ``Vf`` (T, K).

    Every λ ≥ 0 gives weights Vfᵀλ on the target chromaticity (each vertex is on it and the
    constraint is homogeneous), and every lumeval figure is scale-free, so the problem is
    max φ(Vfᵀλ) over λ ≥ 0, Σλ = 1. The gradient is a forward difference computed for all
    coordinates in one batch. Returns (λ, figure, True if SLSQP stopped at its iteration limit
    of :data:`SLSQP_MAXITER` — scipy's status 9 — rather than by converging).
    """
    from scipy.optimize import minimize

    T = Vf.shape[0]
    scale = max(abs(f0), 1.0)
    h = 1e-4
    cache: dict[bytes, tuple[float, np.ndarray]] = {}

    def both(lam):
        key = np.round(lam, 14).tobytes()
        if key not in cache:
            lam = np.clip(lam, 0.0, None)
            if lam.sum() <= 0:
                lam = np.full(T, 1.0 / T)
            pts = np.vstack([lam, lam + h * np.eye(T)])
            vals = obj(pts @ Vf)
            f = -vals[0] / scale
            g = -(vals[1:] - vals[0]) / h / scale
            g = np.where(np.isfinite(g), g, 0.0)
            cache[key] = (f if np.isfinite(f) else 1e6, g)
        return cache[key]

    res = minimize(
        lambda w: both(w)[0], lam0, jac=lambda w: both(w)[1], method="SLSQP",
        bounds=[(0.0, 1.0)] * T, constraints=[{"type": "eq", "fun": lambda w: np.sum(w) - 1.0, "jac": lambda w: np.ones(T)}],
        options={"maxiter": SLSQP_MAXITER, "ftol": 1e-9},
    )
    lam = np.clip(res.x, 0.0, None)
    lam = lam / lam.sum() if lam.sum() > 0 else lam0
    f = float(obj(lam @ Vf)[0])
    return lam, f, int(res.status) == 9


def solve_multi_channels(
    wl: np.ndarray, values: np.ndarray, XYZc: np.ndarray, uv_t: np.ndarray, figure: str, *, seed: int = 1,
    progress=None,
) -> tuple[np.ndarray, np.ndarray, tuple[str, ...], np.ndarray]:
    """Non-negative weights of K ≥ 3 channels reaching each target (u, v), maximising ``figure``.

    Returns (weights (N, K) with the largest 1 and NaN where not reachable, reachable (N,),
    reason (N,), stopped (N,): True where SLSQP ended at its iteration limit). See the module
    docstring for the method. The setpoints are solved in chunks of at most
    :data:`CANDIDATE_BATCH` candidate spectra (one engine call each), in order, with one random
    stream: the result does not depend on the chunk size. ``progress``: a listener
    (:mod:`lumeval.progress`) told of each reachable setpoint solved (four or more channels).
    """
    n, K = uv_t.shape[0], XYZc.shape[0]
    W = np.full((n, K), np.nan)
    reach = np.zeros(n, dtype=bool)
    stopped = np.zeros(n, dtype=bool)
    per = comb(K, 3) + 1 + CANDIDATES  # most candidates one setpoint can have
    step = max(1, CANDIDATE_BATCH // per)
    for start in range(0, n, step):  # which setpoints are reachable (a cheap pass, for progress)
        reach[start:start + step] = _vertex_solutions(XYZc, uv_t[start:start + step])[1].any(axis=1)
    obj = _Objective(wl, values, figure) if K > 3 else None
    rng = np.random.default_rng(seed)
    done = [0, int(reach.sum())]  # reachable setpoints solved, of all reachable
    for start in range(0, n, step):
        sl = slice(start, min(n, start + step))
        V, ok = _vertex_solutions(XYZc, uv_t[sl])
        r = reach[sl]
        if K == 3:
            W[sl][r] = V[r, 0]
        elif r.any():
            W[sl], stopped[sl] = _search_chunk(obj, V, ok, rng, progress, done)
    W[reach] = W[reach] / W[reach].max(axis=1, keepdims=True)
    W[~reach] = np.nan
    reasons = tuple(
        "" if r else "not reachable: the target chromaticity lies outside the channels' gamut (no non-negative mix reaches it)"
        for r in reach
    )
    return W, reach, reasons, stopped


def _search_chunk(obj, V: np.ndarray, ok: np.ndarray, rng, progress, done: list[int]):
    """The K ≥ 4 search for one chunk of setpoints: every candidate of the chunk (vertices,
    centroid, random convex combinations) in one engine call, then SLSQP from the best of each.
    Returns (weights (n, K), NaN rows where not reachable; stopped at the iteration limit (n,))."""
    from ..progress import SOLVING, report

    n, K = V.shape[0], V.shape[2]
    W = np.full((n, K), np.nan)
    stopped = np.zeros(n, dtype=bool)
    rows = np.flatnonzero(ok.any(axis=1))
    cand_w, cand_lam = [], []
    for i in rows:
        Vf = V[i, ok[i]]
        T = Vf.shape[0]
        lams = np.vstack([np.eye(T), np.full((1, T), 1.0 / T), rng.dirichlet(np.ones(T), size=CANDIDATES if T > 1 else 0)])
        cand_lam.append(lams)
        cand_w.append(lams @ Vf)
    vals = obj(np.vstack(cand_w))
    start = 0
    for j, i in enumerate(rows):
        m = cand_lam[j].shape[0]
        v = vals[start:start + m]
        start += m
        b = int(np.argmax(v))
        Vf = V[i, ok[i]]
        lam, fbest = cand_lam[j][b], float(v[b])
        if Vf.shape[0] > 1:
            lam2, f2, limit = _refine(obj, Vf, lam, fbest)
            stopped[i] = limit
            if f2 > fbest:
                lam, fbest = lam2, f2
        W[i] = lam @ Vf
        done[0] += 1
        report(progress, SOLVING, done[0], done[1])
    return W, stopped


# --------------------------------------------------------------------------- the whole job


def mix(
    channels: SpectrumSet,
    targets_K,
    *,
    duv=0.0,
    maximise: str = "Rf",
    notes: tuple[str, ...] = (),
    progress=None,
) -> MixResult:
    """Solve channel weights for every target CCT and evaluate every figure of the mixes.

    Parameters
    ----------
    channels : SpectrumSet
        K ≥ 2 channels at full drive, already prepared onto one grid
        (:func:`lumeval.spectra.prepare.prepare`).
    targets_K : array_like (N,)
        Target CCTs.
    duv : float or "ansi"
        Target Duv (three or more channels; ignored with two, where it follows from the line).
    maximise : "Rf", "Ra" or "ler"
        The figure to maximise among the solutions (four or more channels; three channels have
        one solution per target).
    notes : tuple of str
        Run notes to carry (e.g. how the channels were brought onto one grid).
    progress : callable, optional
        A progress listener (:mod:`lumeval.progress`): setpoints solved, spectra evaluated.

    Returns
    -------
    MixResult
    """
    from ..engine import evaluate

    check_channels(channels)
    if maximise not in MAXIMISE:
        raise UsageError(f"--maximise {maximise!r} is not one of {', '.join(MAXIMISE)}", fix="choose Rf, Ra or ler")
    targets = np.atleast_1d(np.asarray(targets_K, dtype=float))
    K = len(channels)
    XYZc = channel_tristimulus(channels)
    run_notes = [MODEL_NOTE, *notes]
    tduv_all, duv_note = target_duvs(targets, duv)  # validates --duv whatever the channel count
    if K == 2:
        W, reach, reasons = solve_two_channels(XYZc, targets)
        stopped = np.zeros(targets.shape, dtype=bool)
        tduv = np.full(targets.shape, np.nan)
        fig = None
        method = ("two channels: weights (1−f, f); CCT(f) by Ohno (2014) on the mix's exact XYZ, "
                  f"bracketed on {TWO_CHANNEL_GRID} fractions and bisected to double precision; the Duv follows from the line")
        if np.any(tduv_all != 0.0):
            run_notes.append("a target Duv has no effect with two channels: the mixes lie on the line between them")
        run_notes.append(f"nothing to maximise ({maximise}) with two channels: each target CCT fixes the weights")
    else:
        from ..criteria.regions import uv_from_cct_duv

        tduv = tduv_all
        run_notes.append(duv_note)
        uv_t = uv_from_cct_duv(targets, tduv)
        fig = MAXIMISE[maximise]
        W, reach, reasons, stopped = solve_multi_channels(channels.wavelengths_nm, channels.values, XYZc, uv_t, fig,
                                                          progress=progress)
        if K == 3:
            method = ("three channels: the unique non-negative weights reaching the target (u, v) "
                      "(two linear equations in XYZ, CIE 15:2004 §8.1; target point by Ohno 2014 Eqs. 13-14)")
            fig = None
            run_notes.append(f"nothing to maximise ({maximise}) with three channels: each target (CCT, Duv) fixes "
                             "the weights")
        else:
            method = (f"{K} channels: maximise {maximise} over the weights reaching the target (u, v) — batched candidates "
                      "(vertices of the feasible polytope and random convex combinations), then SLSQP (scipy)")
    index = np.full(targets.size, -1)
    index[reach] = np.arange(int(reach.sum()))
    ev = None
    if reach.any():
        wr = W[reach]
        names = tuple(n for n, r in zip(_names(targets, tduv), reach) if r)
        src = tuple("mix: " + ", ".join(f"{c} × {w:.4f}" for c, w in zip(channels.names, row)) for row in wr)
        chan_notes = tuple(dict.fromkeys(x for ns in channels.notes for x in ns))
        # a setpoint whose search stopped at the iteration limit says so with its own figures
        # and one near the CIE 13.3 reference switch that Ra may jump there
        near = reference_switch_near(targets)
        per_notes = tuple(chan_notes + ((LIMIT_NOTE,) if s else ()) + ((REFERENCE_SWITCH_NOTE,) if k else ())
                          for s, k in zip(stopped[reach], near[reach]))
        ss = SpectrumSet(channels.wavelengths_nm, wr @ channels.values, names, src,
                         per_notes, tuple({} for _ in names), prepared=True)
        ev = evaluate(ss, progress=progress)
    return MixResult(channels, targets, tduv, reach, reasons, W, ev, index, fig, method, tuple(run_notes))


def reference_switch_near(targets_K) -> np.ndarray:
    """Boolean (N,): the target CCT lies within :data:`REFERENCE_SWITCH_BAND_K` of the CRI
    reference switch (:data:`lumeval.metrics.cri.DAYLIGHT_FROM_K`, 5000 K), inclusive."""
    from ..metrics.cri import DAYLIGHT_FROM_K

    t = np.asarray(targets_K, dtype=float)
    return np.abs(t - DAYLIGHT_FROM_K) <= REFERENCE_SWITCH_BAND_K


def _names(targets, tduv) -> tuple[str, ...]:
    return tuple(f"{t:g} K" if not np.isfinite(d) else f"{t:g} K, Duv {d:+.4f}" for t, d in zip(targets, tduv))
