"""Statistics and consistency of a production lot (many samples of one product).

Everything here is pure: arrays in, frozen dataclasses out; no printing, no files, no
colour-science. The inputs are per-sample figures (as :meth:`lumeval.engine.Evaluation.figure`
returns them) and chromaticities; :func:`lot_from_evaluation` is the convenience that takes an
:class:`~lumeval.engine.Evaluation` directly.

What is computed, and the rule behind each number
-------------------------------------------------
Per figure (NaN = undefined samples are left out and counted as ``undefined``):
    mean; standard deviation with ``ddof`` (default 1: the sample standard deviation, the
    unbiased variance estimator's square root, as usual for a sample drawn from a production
    run); min; max; median; 5th and 95th percentiles by numpy's ``method="linear"`` — Hyndman &
    Fan (1996), "Sample quantiles in statistical packages", Am. Stat. 50(4):361-365,
    definition 7: the p-quantile interpolates linearly between order statistics at position
    (n − 1)·p.
Values computed outside the validity range (left out and counted as ``outside_validity``):
    a sample with |Duv| > 0.05 has no meaningful CCT (CIE 15:2004 §9.5: CCT is then NaN and
    counted as undefined), and its reference-based figures (:data:`lumeval.engine.VALIDITY_FIGURES`:
    CIE 13.3-1995 Ra, R1-R14, DC; CIE 224:2017 / TM-30 Rf, Rg, hue-bin values), computed against the
    reference at the nearest Planckian temperature, lie outside the range where those standards
    define them. Such values are left out of those figures' statistics and of their outlier
    screening exactly as NaN values are, and counted per figure; the sample's other figures
    (x, y, u', v', Duv, LER...) are used as usual (:mod:`lumeval.lots.validity`). So
    ``count + undefined + outside_validity`` is the number of samples.
Chromaticity centroid:
    the arithmetic mean of the samples' CIE 1976 (u', v') (CIE 15:2004 §8.1) — the centre of
    mass of the lot in the (approximately) uniform chromaticity diagram in which Δu'v' is
    measured; it is also given in (x, y) by the inverse projective transform.
Δu'v' of each sample:
    Euclidean distance in (u', v') to the centroid and to the nominal centre (CIE 15:2004
    §8.1; the usual chromaticity-difference measure of IEC/ANSI SSL specifications).
Ellipse steps of each sample:
    ``n = sqrt(g11 Δx² + 2 g12 Δx Δy + g22 Δy²)`` in CIE 1931 (x, y) (MacAdam (1942)
    JOSA 32(5):247; the quadratic form IEC 60081 uses), evaluated by
    :meth:`lumeval.criteria.regions.SdcmEllipse.steps`. Steps *from the nominal centre* use the
    nominal ellipse as given. Steps *from the centroid* use the same ellipse coefficients
    translated to the centroid: the ellipse shape varies slowly across the diagram, and the
    nearest standard ellipse is the shape a lot's own spread is judged with (common practice,
    no source). When no ellipse is given, the IEC 60081 ellipse whose centre is nearest (in
    u'v') to the lot centroid is used and named in the result.
Largest pairwise Δu'v' (:mod:`lumeval.lots.pairwise`):
    exact. The largest distance between points of a finite set is attained between two
    vertices of its convex hull (the diameter of a convex polygon is a vertex pair: e.g.
    Preparata & Shamos (1985) *Computational Geometry*, §4.2.3). The hull is computed with
    scipy.spatial.ConvexHull (Qhull); all pairs of hull vertices (a few dozen) are then
    compared directly. Collinear sets (where Qhull refuses) are handled exactly by their
    extreme points along the line.
Outliers (flagged, never removed):
    modified z-score of Iglewicz & Hoaglin (1993), *How to Detect and Handle Outliers*
    (ASQC Basic References in Quality Control, vol. 16): ``M_i = 0.6745 (x_i − x̃) / MAD``
    with x̃ the median and MAD the median absolute deviation from it; a sample is flagged when
    ``|M_i| > 3.5`` (their recommended cut-off) for any screened figure. When MAD = 0 (more
    than half the samples share one value) the scale falls back to the mean absolute
    deviation from the median, ``M_i = (x_i − x̃) / (1.253314 · MeanAD)`` (common practice, no
    source; 1.253314 = sqrt(π/2) makes MeanAD consistent with σ for normal data). With fewer
    than :data:`OUTLIER_MIN_SAMPLES` defined values a figure is not screened (common practice,
    no source: a median and MAD of a handful of values say little). Values computed outside
    the validity range are not screened (above). Each flag carries its reason, naming the
    figure, the value, the median and M.
Yield:
    the percentage of evaluated samples whose overall verdict is ``pass``. Samples that could
    not be judged, or were indeterminate, count as not passing (a conservative reading; the
    counts of each outcome are given beside the percentage). Unreadable files are not samples
    and are reported separately by the command.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from ..metrics.colorimetry import upvp_from_xy, xy_from_upvp
from .pairwise import BRUTE_FORCE_POINTS, max_pairwise_distance, max_pairwise_distance_bruteforce  # noqa: F401 (API)
from .quantiles import median, percentiles_linear

#: Default figures screened for outliers (lumeval figure names).
OUTLIER_FIGURES: tuple[str, ...] = ("u_prime", "v_prime", "cct_K", "duv", "Ra", "R9", "Rf", "Rg", "ler_lm_per_W")
#: Iglewicz & Hoaglin (1993) cut-off for |modified z|.
OUTLIER_THRESHOLD = 3.5
#: 0.6745 = Φ⁻¹(0.75): makes MAD consistent with σ for normal data (Iglewicz & Hoaglin 1993).
_MAD_K = 0.6745
#: sqrt(π/2): makes the mean absolute deviation consistent with σ for normal data.
_MEANAD_K = 1.253314
#: Figures with fewer defined values than this are not screened for outliers.
OUTLIER_MIN_SAMPLES = 5
#: Default percentile method (numpy name; Hyndman & Fan 1996 definition 7).
PERCENTILE_METHOD = "linear"
#: Default delta degrees of freedom of the standard deviation (sample standard deviation).
DDOF = 1


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class FigureSummary:
    """Summary of one figure over the lot (NaN where no sample defines the figure).

    Attributes
    ----------
    name : str
        lumeval figure name (e.g. ``"Ra"``, ``"cct_K"``).
    count : int
        Samples whose value the statistics use (defined, and inside the validity range).
    undefined : int
        Samples where it is NaN.
    mean, std, min, max, median, p05, p95 : float
        ``std`` with the lot's ``ddof``; percentiles by the lot's ``percentile_method``.
    outside_validity : int
        Samples whose value was computed outside the validity range (|Duv| > 0.05; only the
        figures of :data:`lumeval.engine.VALIDITY_FIGURES`): left out, like the undefined ones.
    """

    name: str
    count: int
    undefined: int
    mean: float
    std: float
    min: float
    max: float
    median: float
    p05: float
    p95: float
    outside_validity: int = 0


@dataclass(frozen=True)
class LotYield:
    """Yield of a lot against a criteria file.

    ``percent = 100 · passed / total``; ``not_judged`` and ``indeterminate`` count as not
    passing; ``failed`` includes the ``not_valid`` samples (a figure judged outside its validity range).
    """

    total: int
    passed: int
    failed: int
    not_judged: int
    indeterminate: int
    percent: float
    not_valid: int = 0


@dataclass(frozen=True)
class LotStatistics:
    """Statistics and consistency of N samples.

    Attributes
    ----------
    n_samples : int
    figures : tuple of FigureSummary
        In the order the figures were given.
    ddof : int
        Delta degrees of freedom of every ``std``.
    percentile_method : str
        numpy percentile method of ``p05`` / ``p95``.
    centroid_upvp, centroid_xy : ndarray (2,)
        Chromaticity centroid (mean u', v'), and the same point in (x, y).
    d_upvp_centroid : ndarray (N,)
        Δu'v' of each sample from the centroid.
    steps_centroid : ndarray (N,)
        Ellipse steps of each sample from the centroid (``ellipse_name``'s coefficients).
    nominal_xy, nominal_upvp : ndarray (2,) or None
        The nominal centre, when one was given.
    d_upvp_nominal, steps_nominal : ndarray (N,) or None
        Δu'v' and ellipse steps from the nominal centre.
    ellipse_name, ellipse_source : str
        The ellipse whose coefficients give the steps, and its source.
    max_pairwise_d_upvp : float
        Largest Δu'v' between any two samples (0 for fewer than two).
    max_pair : tuple of int
        Indices of the two samples at that distance ((-1, -1) when undefined).
    outlier : ndarray of bool (N,)
    outlier_reasons : tuple of tuple of str (N,)
        Why each flagged sample was flagged (empty for the others).
    robust_z : dict of str -> ndarray (N,)
        Modified z-score of each screened figure (NaN where not screened).
    outlier_rule : str
    yield_ : LotYield or None
        Yield against criteria, when a verdict per sample was given.
    notes : tuple of str
        What the statistics could not do (e.g. no defined chromaticity), and which samples'
        values were left out as computed outside the validity range.
    outside_validity : ndarray of bool (N,) or None
        The samples whose reference-based figures were computed outside the validity range
        (as given to :func:`lot_statistics`; None when not given).
    """

    n_samples: int
    figures: tuple[FigureSummary, ...]
    ddof: int
    percentile_method: str
    centroid_upvp: np.ndarray
    centroid_xy: np.ndarray
    d_upvp_centroid: np.ndarray
    steps_centroid: np.ndarray
    nominal_xy: np.ndarray | None
    nominal_upvp: np.ndarray | None
    d_upvp_nominal: np.ndarray | None
    steps_nominal: np.ndarray | None
    ellipse_name: str
    ellipse_source: str
    max_pairwise_d_upvp: float
    max_pair: tuple[int, int]
    outlier: np.ndarray
    outlier_reasons: tuple[tuple[str, ...], ...]
    robust_z: dict = field(default_factory=dict)
    outlier_rule: str = ""
    yield_: LotYield | None = None
    notes: tuple[str, ...] = ()
    outside_validity: np.ndarray | None = None

    def summary(self, name: str) -> FigureSummary:
        """The :class:`FigureSummary` of figure ``name``."""
        for f in self.figures:
            if f.name == name:
                return f
        raise KeyError(f"no statistics for figure {name!r}")


# --------------------------------------------------------------------------- pieces


def describe(values, *, ddof: int = DDOF, percentile_method: str = PERCENTILE_METHOD,
             outside_validity=None) -> dict[str, np.ndarray]:
    """Column statistics of a (N, F) matrix, ignoring NaN and the values of flagged samples.

    Parameters
    ----------
    values : array_like, shape (N,) or (N, F)
    ddof : int
        Delta degrees of freedom of the standard deviation (1 = sample standard deviation).
    percentile_method : str
        numpy percentile method (default ``"linear"``, Hyndman & Fan 1996 definition 7).
    outside_validity : array_like of bool, shape (N,), optional
        Samples whose values (in every column given) were computed outside their validity
        range: left out and counted in ``outside_validity`` (a NaN among them stays undefined).

    Returns
    -------
    dict of ndarray (F,)
        ``count, undefined, mean, std, min, max, median, p05, p95, outside_validity``; NaN where
        a column has no value used (and ``std`` NaN where ``count <= ddof``).
    """
    a = np.asarray(values, dtype=float)
    if a.ndim == 1:
        a = a[:, None]
    F = a.shape[1]
    from .validity import sample_flags

    flag = sample_flags(outside_validity, a.shape[0])  # None when nothing is left out: the usual path
    count = np.zeros(F, dtype=np.int64)
    left_out = np.zeros(F, dtype=np.int64)
    d = {k: np.full(F, np.nan) for k in ("mean", "std", "min", "max", "median", "p05", "p95")}
    # one column at a time, over its defined values only (a lot's column: 10^6 values; each
    # extra full-length temporary cost a few ms per figure)
    for j in range(F):
        col = a[:, j]
        finite = np.isfinite(col)
        if flag is not None:
            left = finite & flag
            left_out[j] = np.count_nonzero(left)
            finite ^= left  # defined and inside the validity range
        x = col if finite.all() else col[finite]
        c = count[j] = x.size
        if c == 0:
            continue
        mean = x.sum() / c
        d["mean"][j] = mean
        if c > ddof:
            # squared in place: the same values as dev * dev, and one temporary of N values, not
            # two (a fresh 8 MB temporary is paged in again each time: 4.1 -> 0.7 ms for 10^6)
            dev = x - mean
            np.multiply(dev, dev, out=dev)
            d["std"][j] = np.sqrt(np.sum(dev) / (c - ddof))  # numpy's pairwise sum: no BLAS threads
        d["min"][j], d["max"][j] = x.min(), x.max()
        if percentile_method == "linear":  # the same values as numpy's, by sampled selection
            d["median"][j], d["p05"][j], d["p95"][j] = percentiles_linear(x, [50.0, 5.0, 95.0])
        else:
            d["median"][j], d["p05"][j], d["p95"][j] = np.percentile(x, [50.0, 5.0, 95.0], method=percentile_method)  # type: ignore[call-overload]
    return {"count": count, "undefined": a.shape[0] - count - left_out, **d, "outside_validity": left_out}


def chromaticity_centroid(upvp) -> np.ndarray:
    """Mean (u', v') of the samples with a defined chromaticity, shape (2,) (NaN if none).

    Each coordinate's sum is correctly rounded (``math.fsum``), so the centroid is the same bits
    whatever the order or memory layout of the samples (numpy's mean over the first axis of an
    (N, 2) array sums in an order that follows the layout: a lot run with worker processes
    and one without gave centroids differing in the last bit)."""
    p = np.atleast_2d(np.asarray(upvp, dtype=float))
    ok = np.all(np.isfinite(p), axis=1)
    if not ok.any():
        return np.full(2, np.nan)
    m = int(ok.sum())
    return np.array([math.fsum(p[ok, 0].tolist()) / m, math.fsum(p[ok, 1].tolist()) / m])


def delta_upvp(upvp, centre) -> np.ndarray:
    """Δu'v' = sqrt(Δu'² + Δv'²) from each point (N, 2) to ``centre`` (2,), shape (N,)."""
    p = np.atleast_2d(np.asarray(upvp, dtype=float))
    c = np.asarray(centre, dtype=float)
    return np.hypot(p[:, 0] - c[0], p[:, 1] - c[1])


def steps_from_centroid(ellipse, centroid_xy, xy, d_upvp_centroid) -> np.ndarray:
    """Ellipse steps (N,) of the samples ``xy`` from the lot centroid: ``ellipse``'s
    coefficients centred on ``centroid_xy``; 0 for a sample at the centroid itself
    (``d_upvp_centroid`` = 0: its u'v' equal the centroid's to the last bit, as in a lot of one
    sample), whose steps would otherwise be the rounding of the centroid's (x, y), taken back
    from (u', v'), against its own (4e-14 steps were printed for a lot of one)."""
    st = replace(ellipse, centre_xy=centroid_xy).steps(xy)
    st[np.asarray(d_upvp_centroid) == 0.0] = 0.0
    return st


def robust_z(values) -> np.ndarray:
    """Modified z-score M_i = 0.6745 (x_i − median) / MAD (Iglewicz & Hoaglin 1993), shape (N,).

    MAD = median |x_i − median|. When MAD = 0, the mean absolute deviation from the median is
    used instead: M_i = (x_i − median) / (1.253314 · MeanAD) (common practice, no source). When
    both are 0 (all defined values equal) M is 0. NaN stays NaN.
    """
    x = np.asarray(values, dtype=float)
    out = np.full(x.shape, np.nan)
    ok = np.isfinite(x)
    if not ok.any():
        return out
    xs = x[ok]
    med = median(xs)  # np.median's values (lumeval.lots.quantiles), found by sampled selection
    dev = xs - med
    mad = median(np.abs(dev))
    if mad > 0:
        out[ok] = _MAD_K * dev / mad
    else:
        mean_ad = float(np.mean(np.abs(dev)))
        out[ok] = dev / (_MEANAD_K * mean_ad) if mean_ad > 0 else 0.0
    return out


def _figure_label(name: str) -> str:
    from .. import figures

    return figures.label(name)


def _fmt(name: str, v: float) -> str:
    """A figure's value in its human format with its unit (the figure registry's; chromaticity-
    scale figures get one more decimal, so a flagged value and the median do not print alike)."""
    from .. import figures

    try:
        f = figures.get(name)
        return f.format(v, 1 if f.decimals >= 3 else 0, unit=True)
    except KeyError:
        return f"{v:.4g}"


def screen_outliers(
    figures: Mapping[str, np.ndarray],
    names: Sequence[str] = OUTLIER_FIGURES,
    *,
    threshold: float = OUTLIER_THRESHOLD,
    min_samples: int = OUTLIER_MIN_SAMPLES,
    outside_validity=None,
) -> tuple[np.ndarray, tuple[tuple[str, ...], ...], dict[str, np.ndarray]]:
    """Flag samples whose |modified z| exceeds ``threshold`` for any screened figure.

    ``outside_validity`` (bool (N,), optional): samples whose reference-based figures
    (:func:`lumeval.engine.is_validity_figure`) were computed outside their validity range;
    those values are not screened (their z is NaN), as undefined values are not, and count
    neither towards ``min_samples`` nor towards the median and MAD.

    Returns
    -------
    flags : ndarray of bool (N,)
    reasons : tuple of tuple of str (N,)
    z : dict of str -> ndarray (N,)
    """
    from .columns import n_samples

    n = n_samples(figures)
    if n is None:
        return np.zeros(0, dtype=bool), (), {}
    flags = np.zeros(n, dtype=bool)
    reasons: dict[int, list[str]] = {}  # flagged samples only (a lot may have 10^6 samples)
    zs: dict[str, np.ndarray] = {}
    from .. import figures as registry
    from ..engine import is_validity_figure
    from .validity import sample_flags

    left_out = sample_flags(outside_validity, n)
    for name in names:
        if name not in figures:
            continue
        x = np.asarray(figures[name], dtype=float)
        if left_out is not None and is_validity_figure(name):
            x = np.where(left_out, np.nan, x)  # left out exactly as an undefined value is
        if np.isfinite(x).sum() < min_samples:
            continue
        z = robust_z(x)
        zs[name] = z
        med = median(x[np.isfinite(x)])
        hit = np.abs(np.nan_to_num(z, nan=0.0)) > threshold
        label = registry.label(name)
        for i in np.flatnonzero(hit):
            side = "above" if z[i] > 0 else "below"
            reasons.setdefault(int(i), []).append(
                f"{label} = {_fmt(name, x[i])} lies {side} the lot median {_fmt(name, med)} "
                f"(modified z = {z[i]:+.1f}, |z| > {threshold:g})"
            )
        flags |= hit
    out: list[tuple[str, ...]] = [()] * n  # most samples have no reason: only the flagged ones set
    for i, why in reasons.items():
        out[i] = tuple(why)
    return flags, tuple(out), zs


def lot_yield(verdicts: Sequence[str]) -> LotYield:
    """Yield from per-sample overall verdicts (``pass``, ``fail``, ``not judged``,
    ``indeterminate`` as in :mod:`lumeval.criteria.verdicts`)."""
    v = list(verdicts)
    total = len(v)
    passed = sum(1 for o in v if o == "pass")
    failed = sum(1 for o in v if o in ("fail", "not valid"))  # 'not valid' counts as a fail
    nj = sum(1 for o in v if o == "not judged")
    ind = sum(1 for o in v if o == "indeterminate")
    pct = 100.0 * passed / total if total else float("nan")
    return LotYield(total, passed, failed, nj, ind, pct, sum(1 for o in v if o == "not valid"))


def nearest_standard_ellipse(centre_upvp):
    """The IEC 60081 ellipse (:func:`lumeval.criteria.regions.iec60081_ellipse`) whose centre is
    nearest in (u', v') to ``centre_upvp``."""
    from ..criteria.regions import IEC60081_CENTRES, iec60081_ellipse

    best, best_d = None, np.inf
    for name in IEC60081_CENTRES:
        e = iec60081_ellipse(name)
        d = float(delta_upvp(upvp_from_xy(e.centre_xy)[None, :], centre_upvp)[0])
        if d < best_d:
            best, best_d = e, d
    return best


# --------------------------------------------------------------------------- the lot


def summarise_figures(figures: Mapping[str, np.ndarray], names: Sequence[str], *, ddof: int = DDOF,
                      percentile_method: str = PERCENTILE_METHOD, left_out=None) -> tuple[FigureSummary, ...]:
    """The :class:`FigureSummary` of each figure ``names`` of ``figures`` by :func:`describe`,
    one figure at a time (temporaries of N values, not N × figures: a lot of 10^6 samples). The
    values of the samples flagged in ``left_out`` (bool (N,) or None) are left out of the
    figures computed against a reference illuminant (:func:`lumeval.engine.is_validity_figure`)."""
    from ..engine import is_validity_figure

    out = []
    for k in names:
        c = describe(np.asarray(figures[k], dtype=float), ddof=ddof, percentile_method=percentile_method,
                     outside_validity=left_out if left_out is not None and is_validity_figure(k) else None)
        f = {key: float(c[key][0]) for key in ("mean", "std", "min", "max", "median", "p05", "p95")}
        out.append(FigureSummary(k, int(c["count"][0]), int(c["undefined"][0]), **f,
                                 outside_validity=int(c["outside_validity"][0])))
    return tuple(out)


def lot_statistics(
    figures: Mapping[str, np.ndarray],
    xy,
    *,
    ellipse=None,
    nominal_xy=None,
    verdicts: Sequence[str] | None = None,
    ddof: int = DDOF,
    percentile_method: str = PERCENTILE_METHOD,
    outlier_figures: Sequence[str] = OUTLIER_FIGURES,
    outlier_threshold: float = OUTLIER_THRESHOLD,
    outside_validity=None,
) -> LotStatistics:
    """Statistics and chromatic consistency of a lot.

    Parameters
    ----------
    figures : mapping of str -> ndarray (N,)
        Per-sample figures by lumeval figure name (NaN = undefined), in report order.
    xy : array_like, shape (N, 2)
        CIE 1931 (x, y) of each sample (CIE 1931 2° observer).
    ellipse : SdcmEllipse, optional
        The nominal colour-matching ellipse (:mod:`lumeval.criteria.regions`): its centre is
        the nominal centre and its coefficients give the steps. Default: the IEC 60081 ellipse
        nearest to the centroid (for steps from the centroid only; no nominal centre).
    nominal_xy : array_like (2,), optional
        The nominal centre when it differs from the ellipse's centre (e.g. an ANSI C78.377
        category centre); steps from it use the ellipse's coefficients.
    verdicts : sequence of str (N,), optional
        Overall verdict per sample against criteria; gives the yield.
    ddof, percentile_method
        See :func:`describe`.
    outlier_figures, outlier_threshold
        See :func:`screen_outliers`.
    outside_validity : array_like of bool (N,), optional
        Samples whose reference-based figures were computed outside their validity range
        (:attr:`lumeval.engine.Evaluation.outside_validity`): their values of those figures
        (:func:`lumeval.engine.is_validity_figure`) are left out of the statistics and
        the outlier screening and counted (``FigureSummary.outside_validity``); a note names them.

    Returns
    -------
    LotStatistics
    """
    from .columns import FigureColumns

    names = list(figures)
    xy = np.atleast_2d(np.asarray(xy, dtype=float))
    n = xy.shape[0]
    if isinstance(figures, FigureColumns):  # one length for all: no column read just to check it
        if figures.n_rows != n:
            raise ValueError(f"figures of {figures.n_rows} samples, expected {n}")
    else:
        for k in names:
            if np.asarray(figures[k]).shape != (n,):
                raise ValueError(f"figure {k!r} has shape {np.shape(figures[k])}, expected ({n},)")
    if verdicts is not None and len(verdicts) != n:
        raise ValueError(f"{len(verdicts)} verdicts for {n} samples")
    notes: list[str] = []
    from .validity import left_out_note, sample_flags

    left_out = sample_flags(outside_validity, n)  # None when no sample is flagged

    summaries = summarise_figures(figures, names, ddof=ddof, percentile_method=percentile_method, left_out=left_out)
    note = left_out_note(left_out, summaries)
    if note:
        notes.append(note)

    upvp = upvp_from_xy(xy)
    centroid = chromaticity_centroid(upvp)
    centroid_xy = xy_from_upvp(centroid)
    if not np.all(np.isfinite(centroid)):
        notes.append("no sample has a defined chromaticity: centroid, Δu'v' and steps are undefined")
    d_c = delta_upvp(upvp, centroid)

    nominal_given = ellipse is not None or nominal_xy is not None
    if ellipse is None and np.all(np.isfinite(centroid)):
        ellipse = nearest_standard_ellipse(centroid)
        notes.append(
            f"steps use the coefficients of the {ellipse.name} ellipse (the standard ellipse nearest to the "
            "lot centroid), translated to each centre"
        )
    if ellipse is not None:
        ell_name, ell_source = ellipse.name, ellipse.source
        steps_c = steps_from_centroid(ellipse, centroid_xy, xy, d_c) if np.all(np.isfinite(centroid)) else np.full(n, np.nan)
    else:
        ell_name, ell_source = "", ""
        steps_c = np.full(n, np.nan)

    nom_xy = nom_upvp = d_n = steps_n = None
    if nominal_given:
        nom_xy = np.asarray(nominal_xy if nominal_xy is not None else ellipse.centre_xy, dtype=float)
        nom_upvp = upvp_from_xy(nom_xy)
        d_n = delta_upvp(upvp, nom_upvp)
        steps_n = replace(ellipse, centre_xy=nom_xy).steps(xy) if ellipse is not None else np.full(n, np.nan)

    dmax, i, j = max_pairwise_distance(upvp)

    flags, reasons, zs = screen_outliers(figures, outlier_figures, threshold=outlier_threshold,
                                         outside_validity=left_out)
    rule = (
        f"modified z-score 0.6745·(x − median)/MAD, flagged when |z| > {outlier_threshold:g} for any of "
        f"{', '.join(_figure_label(f) for f in outlier_figures if f in figures)} "
        f"(Iglewicz & Hoaglin 1993; MAD = 0 falls back to 1.2533·mean absolute deviation; figures with fewer "
        f"than {OUTLIER_MIN_SAMPLES} defined values are not screened)"
    )
    if n < OUTLIER_MIN_SAMPLES:
        notes.append(f"fewer than {OUTLIER_MIN_SAMPLES} samples: no outlier screening")

    return LotStatistics(
        n_samples=n,
        figures=summaries,
        ddof=ddof,
        percentile_method=percentile_method,
        centroid_upvp=centroid,
        centroid_xy=centroid_xy,
        d_upvp_centroid=d_c,
        steps_centroid=steps_c,
        nominal_xy=nom_xy,
        nominal_upvp=nom_upvp,
        d_upvp_nominal=d_n,
        steps_nominal=steps_n,
        ellipse_name=ell_name,
        ellipse_source=ell_source,
        max_pairwise_d_upvp=dmax if n >= 2 or math.isnan(dmax) else 0.0,
        max_pair=(i, j),
        outlier=flags if flags.shape == (n,) else np.zeros(n, dtype=bool),
        outlier_reasons=reasons if len(reasons) == n else tuple(() for _ in range(n)),
        robust_z=zs,
        outlier_rule=rule,
        yield_=lot_yield(verdicts) if verdicts is not None else None,
        notes=tuple(notes),
        outside_validity=None if outside_validity is None else np.asarray(outside_validity, dtype=bool),
    )


#: Figures summarised by default for a lot (every figure of the engine).
def default_figure_names() -> tuple[str, ...]:
    from .. import figures

    return figures.names()


def lot_from_evaluation(ev, *, figure_names: Sequence[str] | None = None, **kwargs) -> LotStatistics:
    """:func:`lot_statistics` of an :class:`~lumeval.engine.Evaluation`.

    ``figure_names`` defaults to every figure of the registry (:func:`lumeval.figures.names`); other
    keyword arguments go to :func:`lot_statistics`. The evaluation's own flag of the samples
    computed outside the validity range (:attr:`~lumeval.engine.Evaluation.outside_validity`)
    decides which values are left out, unless ``outside_validity`` is given.
    """
    names = tuple(figure_names) if figure_names is not None else default_figure_names()
    figs = {k: ev.figure(k) for k in names}
    xy = np.column_stack([ev.x, ev.y])
    flag = getattr(ev, "outside_validity", None)
    kwargs.setdefault("outside_validity", np.zeros(len(xy), dtype=bool) if flag is None else flag)
    return lot_statistics(figs, xy, **kwargs)
