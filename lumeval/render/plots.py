"""Figures for reports: plain, printable, colour-blind-safe charts drawn with matplotlib.

Every function here takes numbers (arrays) and returns a :class:`matplotlib.figure.Figure`;
:func:`figure_svg` and :func:`figure_png` turn a figure into bytes or text. Nothing here
computes a colour metric: the only colour computations are those needed to *draw*:

- the Planckian locus, from :func:`lumeval.metrics.colorimetry.planckian_uv` (Planck's law with
  c2 = 1.4388e-2 m K, CIE 1931 2° CMFs at 1 nm, CIE 15:2004);
- isotemperature lines and lines of constant Duv, built with the geometry that Ohno (2014),
  LEUKOS 10(1):47-55, uses to define CCT and Duv: a point at signed distance Duv along the
  locus normal at temperature T has CCT = T and that Duv (positive above the locus, ANSI
  C78.377 sign convention). The normal is the locus tangent dT-derivative rotated by 90°.
- conversions of region vertices into CIE 1960 (u, v) (CIE 15:2004 §8.1).

Chromaticity diagrams are drawn in **CIE 1960 (u, v)**: the space in which CCT and Duv are
defined (CIE 15:2004 §9.5; Ohno 2014), so isotemperature lines are straight and meet the
locus at right angles.

Palette: Okabe & Ito (2008), "Color Universal Design", distinguishable with the common forms
of colour-vision deficiency; meanings are always also carried by line style, marker shape or
hatching, never by colour alone.

matplotlib is imported lazily and only its object-oriented API is used (no pyplot, no global
state): the Agg canvas renders PNG and the SVG backend writes SVG with text as paths, so the
output needs no fonts on the viewing machine.
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence

import numpy as np

#: Okabe-Ito palette (Okabe & Ito 2008).
PALETTE = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky": "#56B4E9",
    "green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "purple": "#CC79A7",
    "grey": "#7F7F7F",
}

#: The band shaded as "visible" on spectral plots: 380-780 nm (common practice, no source;
#: CIE 15:2004 tabulates the CMFs over 360-830 nm).
VISIBLE_NM = (380.0, 780.0)

#: Isotemperature lines are drawn at these temperatures when they fall in view (K).
ISOTEMPERATURES_K = (
    1000, 1200, 1500, 1800, 2000, 2200, 2500, 2700, 3000, 3500, 4000, 4500, 5000, 5700,
    6500, 7500, 8500, 10000, 12000, 15000, 20000,
)

#: Above this many spectra, a spectral plot shows their range and median instead of every line.
MAX_LINES = 40

#: Above this many points, scatter markers are embedded as a raster image inside the SVG
#: (a data: URI, still self-contained) so that files stay small.
RASTER_POINTS = 500

#: Figure width in inches: 7 in = 178 mm fits A4 and US Letter with 15 mm margins.
WIDTH_IN = 7.0

_RC = {
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.labelsize": 9.0,
    "xtick.labelsize": 8.0,
    "ytick.labelsize": 8.0,
    "legend.fontsize": 8.0,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "svg.fonttype": "path",
    "svg.hashsalt": "lumeval",
    "figure.dpi": 100,
}


def _mpl():
    import matplotlib

    return matplotlib


def _new_figure(height_in: float, **kwargs):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    with _mpl().rc_context(_RC):
        fig = Figure(figsize=(WIDTH_IN, height_in), layout="constrained", **kwargs)
    FigureCanvasAgg(fig)  # the Agg (headless raster) canvas, attached to this figure only
    return fig


def _ctx():
    return _mpl().rc_context(_RC)


# --------------------------------------------------------------------------- output


class _Quiet:
    """Silence matplotlib's "Glyph ... missing from font" warnings while saving: a spectrum name
    in a script the bundled font lacks (e.g. CJK) is drawn as boxes in the figure but written in
    full in the report's text, and a successful run keeps standard error clean."""

    def __enter__(self):
        import warnings

        self._w = warnings.catch_warnings()
        self._w.__enter__()
        warnings.filterwarnings("ignore", message=r"Glyph .* missing from font", category=UserWarning)
        return self

    def __exit__(self, *exc):
        return self._w.__exit__(*exc)


def figure_svg(fig) -> str:
    """The figure as a standalone SVG document (text drawn as paths, no external references)."""
    buf = io.StringIO()
    with _ctx(), _Quiet():
        fig.savefig(buf, format="svg", dpi=150,
                    metadata={"Date": None, "Creator": None, "Format": None, "Type": None})
    return buf.getvalue()


def figure_png(fig, dpi: int = 150) -> bytes:
    """The figure as PNG bytes at ``dpi``."""
    buf = io.BytesIO()
    with _ctx(), _Quiet():
        fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()


#: Characters of a text from a file shown in a figure at most (a longer one ends in "…").
PLOT_TEXT_MAX = 40


def _lit(value) -> str:
    """Text from a file (a spectrum name, a criteria label) as literal figure text: control
    characters escaped (:func:`lumeval.render.safe.clean`), ``$`` escaped so that matplotlib never
    parses it as mathtext (``$\\foo$`` in a name used to abort the report), a leading ``_``
    kept visible (matplotlib hides legend labels that start with one), and at most
    :data:`PLOT_TEXT_MAX` characters, the middle of a longer one left out ("…"): a
    20,000-character name took 11 s of text layout a report and squeezed the axes to nothing
    (found by a review); the tables beside give it whole."""
    from .safe import clean

    s = clean(value)
    if len(s) > PLOT_TEXT_MAX:  # the middle left out: names that differ only at the end stay apart
        keep = PLOT_TEXT_MAX - 1
        s = s[: (keep + 1) // 2] + "…" + s[len(s) - keep // 2:]
    s = s.replace("$", r"\$")
    return "\u2009" + s if s.startswith("_") else s


# --------------------------------------------------------------------------- spectra


def spd_figure(
    wavelengths_nm,
    test_values,
    reference_values=None,
    *,
    test_label: str = "test source",
    reference_label: str = "reference illuminant",
    title: str | None = None,
):
    """Test spectrum(s) against a reference illuminant, normalised the same way.

    Normalisation (stated on the y axis): each test spectrum and the reference are first
    scaled to the same luminous content Y (CIE 1931 2°, CIE 15:2004 Eq. 7.1), then all curves
    are divided by one common factor so that the highest value drawn is 1. The shapes can so be
    compared directly: equal areas under V(λ).

    Parameters
    ----------
    wavelengths_nm : array_like, shape (W,)
        A uniform grid (1 nm or 5 nm).
    test_values : array_like, shape (W,) or (N, W)
        One or several test spectra (several: thin lines; more than :data:`MAX_LINES`: the
        range over all of them as a band, and their median).
    reference_values : array_like, shape (W,), optional
        The reference SPD; None or all-NaN draws no reference (CCT undefined).
    """
    from ..metrics.colorimetry import tristimulus

    test_label, reference_label = _lit(test_label), _lit(reference_label)
    title = _lit(title) if title else title
    wl = np.asarray(wavelengths_nm, dtype=float)
    test = np.atleast_2d(np.asarray(test_values, dtype=float))
    Y = tristimulus(wl, test)[:, 1]
    ok = np.isfinite(Y) & (Y > 0)
    scaled = np.where(ok[:, None], test / np.where(ok, Y, 1.0)[:, None], np.nan)
    ref = None
    if reference_values is not None:
        r = np.asarray(reference_values, dtype=float)
        if np.all(np.isfinite(r)):
            Yr = tristimulus(wl, r)[1]
            if Yr > 0:
                ref = r / Yr
    peak = np.nanmax(scaled) if np.any(np.isfinite(scaled)) else 1.0
    if ref is not None:
        peak = max(peak, float(np.max(ref)))
    if not np.isfinite(peak) or peak <= 0:
        peak = 1.0

    fig = _new_figure(3.0)
    with _ctx():
        ax = fig.add_subplot()
        lo, hi = min(360.0, wl[0]), max(830.0, wl[-1])
        ax.axvspan(lo, VISIBLE_NM[0], color="#e6e6e6", lw=0, gid="outside-visible-short")
        ax.axvspan(VISIBLE_NM[1], hi, color="#e6e6e6", lw=0, gid="outside-visible-long")
        many = test.shape[0] > 1
        if test.shape[0] > MAX_LINES:
            # a band from the lowest to the highest value at each wavelength, and the median
            with np.errstate(all="ignore"):
                import warnings

                with warnings.catch_warnings():
                    warnings.simplefilter("ignore", RuntimeWarning)
                    lo_c, med_c, hi_c = (np.nanmin(scaled, 0), np.nanmedian(scaled, 0), np.nanmax(scaled, 0))
            ax.fill_between(wl, lo_c / peak, hi_c / peak, color=PALETTE["sky"], alpha=0.6, lw=0,
                            label=f"{test_label}: range", gid="test-spd-band")
            ax.plot(wl, med_c / peak, color=PALETTE["blue"], lw=1.4, label=f"{test_label}: median", gid="test-spd-median")
        else:
            for k in range(test.shape[0]):
                ax.plot(
                    wl, scaled[k] / peak, color=PALETTE["blue"], lw=0.7 if many else 1.6,
                    alpha=0.6 if many else 1.0, label=test_label if k == 0 else None, gid=f"test-spd-{k}",
                )
        if ref is not None:
            ax.plot(wl, ref / peak, color=PALETTE["black"], lw=1.3, ls=(0, (5, 2)), label=reference_label, gid="reference-spd")
        ax.set_xlim(lo, hi)
        ax.set_ylim(0, 1.08)
        ax.set_xlabel("wavelength λ (nm)")
        ax.set_ylabel("relative spectral power\n(equal Y, highest = 1)")
        ax.text(
            (VISIBLE_NM[0] + VISIBLE_NM[1]) / 2, 1.05, "visible band 380–780 nm (outside: grey)",
            ha="center", va="top", fontsize=7, color="#444444",
        )
        fig.legend(loc="outside lower center", ncols=2, frameon=False)
        if ref is None and reference_values is not None:
            ax.text(0.01, 0.97, "no reference: CCT undefined", transform=ax.transAxes, va="top", fontsize=8)
        if title:
            ax.set_title(title, loc="left")
    return fig


# --------------------------------------------------------------------------- chromaticity


def locus_normal_uv(temperature_K) -> tuple[np.ndarray, np.ndarray]:
    """Planckian point and unit normal in CIE 1960 (u, v), shapes (N, 2) each.

    The normal points to positive Duv (towards larger v, ANSI C78.377 sign). It is the unit
    tangent d(u, v)/dT, by a central difference of ±0.01 % in T, rotated by −90°; along it the
    nearest locus point stays at T, which is how Ohno (2014) defines CCT and Duv.
    """
    from ..metrics.colorimetry import planckian_uv

    T = np.atleast_1d(np.asarray(temperature_K, dtype=float))
    h = 1e-4
    p = planckian_uv(T)
    d = planckian_uv(T * (1 + h)) - planckian_uv(T * (1 - h))
    t = d / np.linalg.norm(d, axis=-1, keepdims=True)
    n = np.stack([t[:, 1], -t[:, 0]], axis=-1)
    n = np.where(n[:, 1:2] < 0, -n, n)
    return p, n


def region_to_uv(vertices, space: str = "uv") -> np.ndarray:
    """Convert region vertices to CIE 1960 (u, v), shape (K, 2).

    ``space`` is ``"uv"`` (CIE 1960), ``"upvp"`` / ``"u'v'"`` (CIE 1976: u = u', v = v'/1.5,
    CIE 15:2004 Eq. 8.2) or ``"xy"`` (CIE 1931, converted by CIE 15:2004 §8.1).
    """
    from ..metrics.colorimetry import uv_from_xy

    pts = np.asarray(vertices, dtype=float).reshape(-1, 2)
    s = space.lower().replace("'", "p").replace(" ", "")
    if s in ("uv", "cie1960"):
        return pts
    if s in ("upvp", "cie1976"):
        return np.stack([pts[:, 0], pts[:, 1] / 1.5], axis=-1)
    if s in ("xy", "cie1931"):
        return uv_from_xy(pts)
    raise ValueError(f"unknown chromaticity space {space!r}; use 'uv', \"u'v'\" or 'xy'")


def _nice_step(span: float) -> float:
    for s in (0.001, 0.002, 0.005, 0.01, 0.02):
        if span / s <= 8:
            return s
    return 0.05


def chromaticity_figure(
    u,
    v,
    *,
    labels: Sequence[str] | None = None,
    failed: Sequence[bool | None] | None = None,
    regions: Sequence[Mapping] | None = None,
    show_centroid: bool | None = None,
    title: str | None = None,
    diagram: str = "uv",
    marker_basis: str | None = None,
):
    """Sample chromaticities near the Planckian locus in CIE 1960 (u, v) or CIE 1931 (x, y).

    Draws the locus (1000-25000 K), isotemperature lines (Duv −0.05..+0.05, the CIE 15 range
    of CCT) at round temperatures in view, lines of constant Duv, the criteria region(s), the
    samples, and for several samples their centroid (mean of the plotted coordinates) and
    spread (the 2σ ellipse of their sample covariance in the plotted coordinates, drawn when
    there are at least 3 samples).

    ``diagram="xy"`` draws the same content in CIE 1931 (x, y), where ANSI C78.377 quadrangles
    and SDCM ellipses are usually read, with a small overview of the whole spectrum locus
    (CIE 1931 2° CMFs, CIE 15:2004 Table T.4) marking the enlarged window. Every line is built
    in (u, v) and mapped with CIE 15:2004 §8.1; the map is projective, so straight lines
    (isotemperature lines, quadrangle edges) stay straight.

    Parameters
    ----------
    u, v : array_like, shape (N,)
        CIE 1960 chromaticities of the samples (NaN entries are skipped), whichever the diagram.
    labels : sequence of str, optional
        Sample names; with one to six samples each point is labelled.
    failed : sequence of bool or None, optional
        Per sample: True draws an ✗ marker (failed a criterion), False a filled circle,
        None (not judged) a hollow circle.
    regions : sequence of mapping, optional
        Each ``{"label": str, "vertices": [(a, b), ...], "space": "uv" | "u'v'" | "xy"}``:
        a polygon (an ellipse is passed as its sampled outline).
    show_centroid : bool, optional
        Default: when N ≥ 2.
    diagram : ``"uv"`` (default) or ``"xy"``
    marker_basis : str, optional
        Which requirements ``failed`` reflects, said in the legend ("sample (<basis>): passed").

    Artists carry ``gid`` values for tests and SVG ids: ``planckian-locus``,
    ``isotemperature-<T>``, ``duv-<value>``, ``region-<k>``, ``samples-pass``,
    ``samples-fail``, ``samples-unjudged``, ``centroid``, ``spread``; in the xy overview
    ``spectrum-locus``, ``overview-planckian-locus`` and ``overview-window``.
    """
    from matplotlib.patches import Rectangle

    from ..metrics.colorimetry import planckian_uv, xy_from_uv

    if diagram not in ("uv", "xy"):
        raise ValueError(f"unknown diagram {diagram!r}; use 'uv' or 'xy'")
    tf = (lambda p: np.asarray(p, dtype=float)) if diagram == "uv" else xy_from_uv
    u = np.atleast_1d(np.asarray(u, dtype=float))
    v = np.atleast_1d(np.asarray(v, dtype=float))
    n = u.size
    fin = np.isfinite(u) & np.isfinite(v)
    P = tf(np.stack([u, v], axis=-1)) if n else np.empty((0, 2))
    pu, pv = P[:, 0], P[:, 1]
    if failed is None:
        failed = [None] * n
    if labels is not None:
        labels = [_lit(x) for x in labels]
    title = _lit(title) if title else title
    regs = []
    for k, r in enumerate(regions or ()):
        regs.append((_lit(r.get("label", f"region {k + 1}")), tf(region_to_uv(r["vertices"], r.get("space", "uv")))))

    xlim, ylim, scale = _chromaticity_window(P[fin], [rv for _, rv in regs], tf, diagram)

    T_line = np.geomspace(1000.0, 25000.0, 600)  # the CCT range lumeval reports
    locus = tf(planckian_uv(T_line))

    fig = _new_figure(5.2)
    with _ctx():
        ax = fig.add_subplot()
        ax.set_aspect("equal", adjustable="box")
        ax.plot(locus[:, 0], locus[:, 1], color=PALETTE["black"], lw=1.4, gid="planckian-locus", label="Planckian locus")

        _draw_duv_lines(ax, tf, T_line, xlim, ylim, scale)
        _draw_isotemperature_lines(ax, tf, xlim, ylim)
        _draw_regions(ax, regs)

        _draw_samples(ax, pu, pv, fin, failed, labels, xlim, ylim, marker_basis)
        if show_centroid is None:
            show_centroid = int(fin.sum()) >= 2
        if show_centroid and fin.any():
            _draw_centroid(ax, pu[fin], pv[fin], diagram)

        ax.set_xlim(*xlim)
        ax.set_ylim(*ylim)
        if diagram == "uv":
            ax.set_xlabel("u (CIE 1960 UCS)")
            ax.set_ylabel("v (CIE 1960 UCS)")
        else:
            ax.set_xlabel("x (CIE 1931)")
            ax.set_ylabel("y (CIE 1931)")
            _xy_overview(fig, ax, Rectangle, xlim, ylim)
        ax.tick_params(labelsize=7)
        fig.legend(loc="outside lower center", ncols=3, frameon=False, fontsize=7)
        if title:
            ax.set_title(title, loc="left")
    return fig


def _chromaticity_window(points, regions, tf, diagram: str):
    """(xlim, ylim, scale) of the chromaticity view: every sample and region with a margin,
    at least 0.012 wide in (u, v) (x, y spread about 1.6 times u, v near the locus)."""
    from ..metrics.colorimetry import planckian_uv

    pts = [points] + list(regions)
    allp = np.concatenate(pts) if sum(p.shape[0] for p in pts) else np.empty((0, 2))
    if allp.shape[0] == 0:
        allp = tf(planckian_uv(np.array([2700.0, 6500.0])))
    lo, hi = allp.min(axis=0), allp.max(axis=0)
    scale = 1.0 if diagram == "uv" else 1.6
    span = max(float(np.max(hi - lo)), 0.012 * scale)
    pad = 0.25 * span + 0.004 * scale
    cu, cv = (lo + hi) / 2
    half = span / 2 + pad
    return (cu - half * 1.45, cu + half * 1.45), (cv - half, cv + half), scale


def _draw_duv_lines(ax, tf, T_line, xlim, ylim, scale) -> None:
    """Lines of constant Duv (Duv is a distance in (u, v): the step follows the uv view)."""
    step = _nice_step((ylim[1] - ylim[0]) / scale)
    duv_labelled = False
    p_l, n_l = locus_normal_uv(T_line)
    for d in np.arange(-0.05, 0.0501, step):
        d = round(float(d), 4)  # type: ignore[arg-type]
        if d == 0:
            continue
        line = tf(p_l + d * n_l)
        ax.plot(line[:, 0], line[:, 1], color=PALETTE["grey"], lw=0.6, ls=(0, (4, 3)), gid=f"duv-{d:+.3f}",
                label=None if duv_labelled else f"constant Duv (step {step:g})")
        duv_labelled = True
        inside = (line[:, 0] > xlim[0]) & (line[:, 0] < xlim[1]) & (line[:, 1] < ylim[1]) & (
            line[:, 1] > ylim[0] + 0.1 * (ylim[1] - ylim[0])
        )
        if inside.any():
            j = np.flatnonzero(inside)[np.argmax(line[inside, 0])]
            ax.annotate(
                f"Duv {d:+.3f}", (line[j, 0], line[j, 1]), fontsize=6.5, color="#555555",
                xytext=(-2, 2), textcoords="offset points", ha="right", va="bottom",
                annotation_clip=True,
            )


def _draw_isotemperature_lines(ax, tf, xlim, ylim) -> None:
    """Isotemperature lines (Duv −0.05..+0.05) at round temperatures, labelled in K."""
    T_iso = np.asarray(ISOTEMPERATURES_K, dtype=float)
    p_i, n_i = locus_normal_uv(T_iso)
    ds = np.linspace(-0.05, 0.05, 41)
    vt = ylim[0] + 0.03 * (ylim[1] - ylim[0])
    for T, p, nn in zip(T_iso, p_i, n_i):
        seg = tf(p[None, :] + ds[:, None] * nn[None, :])
        ax.plot(seg[:, 0], seg[:, 1], color=PALETTE["grey"], lw=0.8, gid=f"isotemperature-{int(T)}",
                label="isotemperature line" if T_iso[0] == T else None)
        # label near the bottom of the view, where the (straight) line crosses it
        a, b = seg[0], seg[-1]
        if b[1] != a[1]:
            t = (vt - a[1]) / (b[1] - a[1])
            q = a + t * (b - a)
            if 0.0 <= t <= 1.0 and xlim[0] < q[0] < xlim[1]:
                ax.text(q[0], q[1], f"{int(T)} K", fontsize=6.5, ha="center", va="bottom", color="#333333",
                        bbox={"fc": "white", "ec": "none", "pad": 0.5}, clip_on=True)


def _draw_regions(ax, regs) -> None:
    """The criteria regions: dashed, hatched polygons (one hatch per region)."""
    from matplotlib.patches import Polygon

    hatches = ("////", "\\\\\\\\", "xxxx", "....")
    for k, (lab, rv) in enumerate(regs):
        poly = Polygon(rv, closed=True, fill=False, ec=PALETTE["blue"], lw=1.4, ls=(0, (6, 2)),
                       hatch=hatches[k % len(hatches)], gid=f"region-{k}", label=f"criteria region: {lab}")
        poly.set_alpha(0.9)
        ax.add_patch(poly)


def _draw_samples(ax, pu, pv, fin, failed, labels, xlim, ylim, basis: str | None = None) -> None:
    """The samples: filled circle passed, ✗ failed, hollow circle not judged (on ``basis``, said
    in the legend); labelled when few."""
    n = pu.size
    f = np.array([None if x is None else bool(x) for x in failed], dtype=object)
    groups = (
        ("samples-pass", f == False, {"marker": "o", "mfc": PALETTE["sky"], "mec": PALETTE["black"]}, "sample: passed"),  # noqa: E712
        ("samples-fail", f == True, {"marker": "X", "mfc": PALETTE["vermillion"], "mec": PALETTE["black"], "ms": 8}, "sample: failed"),  # noqa: E712
        ("samples-unjudged", np.array([x is None for x in f]), {"marker": "o", "mfc": "white", "mec": PALETTE["black"]}, "sample: not judged"),
    )
    ms = 6.5 if n <= 20 else 4.5
    for gid, mask, style, lab in groups:
        m = mask.astype(bool) & fin
        if m.any():
            style = {"ms": ms, "mew": 0.8, "ls": "none", **style}
            lab = lab.replace("sample:", f"sample ({basis}):") if basis else lab
            ax.plot(pu[m], pv[m], gid=gid, label=f"{lab} ({int(m.sum())})", zorder=5,
                    rasterized=bool(fin.sum() > RASTER_POINTS), **style)
    if labels is not None and 1 <= n <= 6:
        _label_points(ax, pu, pv, fin, labels, xlim, ylim)


def _draw_centroid(ax, pu, pv, diagram: str) -> None:
    """The centroid (mean of the plotted coordinates) and, for 3 or more samples, the spread:
    the 2σ ellipse of their sample covariance."""
    from matplotlib.patches import Ellipse

    c = np.array([pu.mean(), pv.mean()])
    ax.plot([c[0]], [c[1]], marker="P", ms=10, mfc="white", mec=PALETTE["black"], mew=1.5, ls="none",
            gid="centroid", zorder=6, label=f"centroid (mean {'u, v' if diagram == 'uv' else 'x, y'})")
    if pu.size >= 3:
        cov = np.cov(np.stack([pu, pv]))
        w, vec = np.linalg.eigh(cov)
        w = np.clip(w, 0, None)
        ang = np.degrees(np.arctan2(vec[1, 1], vec[0, 1]))
        ell = Ellipse(c, 2 * 2 * np.sqrt(w[1]), 2 * 2 * np.sqrt(w[0]), angle=ang, fill=False,  # type: ignore[arg-type]
                      ec=PALETTE["orange"], lw=1.3, ls="-", gid="spread", label="spread (2σ ellipse)")
        ax.add_patch(ell)


def spectrum_locus_xy() -> np.ndarray:
    """The CIE 1931 spectrum locus (x, y) at 1 nm over 360-830 nm, shape (471, 2).

    x = x̄/(x̄+ȳ+z̄), y = ȳ/(x̄+ȳ+z̄) of the CIE 1931 2° CMFs (CIE 15:2004 Table T.4, colour-science's
    copy through :func:`lumeval.metrics.colorimetry.cmfs_at`)."""
    from ..metrics.colorimetry import OBSERVER_2, cmfs_at

    wl = np.arange(360.0, 831.0)
    c = cmfs_at(wl, OBSERVER_2)
    return c[:, :2] / c.sum(axis=1, keepdims=True)


def _xy_overview(fig, ax, Rectangle, xlim, ylim) -> None:
    """A small inset: the whole CIE 1931 diagram, the Planckian locus and the enlarged window."""
    from ..metrics.colorimetry import planckian_uv, xy_from_uv

    ins = ax.inset_axes((0.015, 0.64, 0.3, 0.34))
    loc = spectrum_locus_xy()
    closed = np.vstack([loc, loc[:1]])  # the purple line closes the locus
    ins.plot(closed[:, 0], closed[:, 1], color=PALETTE["black"], lw=0.7, gid="spectrum-locus")
    pl = xy_from_uv(planckian_uv(np.geomspace(1000.0, 25000.0, 200)))
    ins.plot(pl[:, 0], pl[:, 1], color=PALETTE["grey"], lw=0.7, gid="overview-planckian-locus")
    ins.add_patch(Rectangle((xlim[0], ylim[0]), xlim[1] - xlim[0], ylim[1] - ylim[0], fill=False,
                            ec=PALETTE["vermillion"], lw=1.0, gid="overview-window"))
    ins.set_xlim(-0.02, 0.78)
    ins.set_ylim(-0.02, 0.88)
    ins.set_aspect("equal", adjustable="box")
    ins.set_xticks([])
    ins.set_yticks([])
    ins.set_facecolor("white")
    for s in ins.spines.values():
        s.set_visible(True)
        s.set_color("#999999")
        s.set_linewidth(0.6)
    ins.text(0.5, 0.02, "whole diagram", transform=ins.transAxes, ha="center", va="bottom", fontsize=5.5,
             color="#444444")


def chromaticity_xy_figure(x, y, **kwargs):
    """:func:`chromaticity_figure` drawn in CIE 1931 (x, y): same arguments, but the samples are
    given as x, y (converted to (u, v) by CIE 15:2004 §8.1 and back for drawing)."""
    from ..metrics.colorimetry import uv_from_xy

    uv = uv_from_xy(np.stack([np.atleast_1d(np.asarray(x, float)), np.atleast_1d(np.asarray(y, float))], axis=-1))
    return chromaticity_figure(uv[:, 0], uv[:, 1], diagram="xy", **kwargs)


def _label_points(ax, u, v, fin, labels, xlim, ylim) -> None:
    """Label up to six points: one point by its name; several by numbers 1..N (names in the
    legend), each number moved down in steps until it clears the numbers already placed."""
    from matplotlib.lines import Line2D

    idx = list(np.flatnonzero(fin))
    single = len(labels) == 1
    # positions in axes fractions (the view is fixed): labels 4 % wide, 3.5 % tall
    pts = {k: ((u[k] - xlim[0]) / (xlim[1] - xlim[0]), (v[k] - ylim[0]) / (ylim[1] - ylim[0])) for k in idx}
    placed: list[tuple[float, float]] = []
    dirs = [(1, 1), (1, -1), (-1, 1), (-1, -1), (1, 0), (-1, 0), (0, 1), (0, -1)]
    for k in sorted(idx, key=lambda i: -v[i]):
        px0, py0 = pts[k]
        fx, fy = px0 + 0.012, py0 + 0.012
        if not single:
            for r in (0.03, 0.055, 0.08, 0.11, 0.14):
                ok = False
                for dx, dy in dirs:
                    cx, cy = px0 + dx * r, py0 + dy * r * 0.8
                    if not (0.02 < cx < 0.95 and 0.03 < cy < 0.95):
                        continue
                    clash = any(abs(cx - qx) < 0.035 and abs(cy - qy) < 0.035 for qx, qy in placed)
                    clash = clash or any(abs(cx - qx) < 0.025 and abs(cy - qy) < 0.03 for qx, qy in pts.values())
                    if not clash:
                        fx, fy, ok = cx, cy, True
                        break
                if ok:
                    break
            placed.append((fx, fy))
        text = str(labels[k]) if single else str(k + 1)
        ax.annotate(text, (u[k], v[k]), xytext=(fx, fy), textcoords="axes fraction", fontsize=7,
                    fontweight="bold", ha="left" if single else "center", va="bottom" if single else "center",
                    arrowprops=None if single else {"arrowstyle": "-", "lw": 0.5, "color": "#444444",
                                                    "shrinkA": 0, "shrinkB": 3},
                    gid=f"label-{k + 1}")
    if not single:
        for k in idx:
            ax.add_line(Line2D([], [], ls="none", label=f"{k + 1}: {labels[k]}"))

# --------------------------------------------------------------------------- CRI bars


def _off_scale_label(ax, x, lo, hi, value, text, **kw) -> None:
    """Label a criteria limit that lies outside the drawn range ``[lo, hi]`` at the nearer edge
    (drawing it at its own value would stretch or break the axes, e.g. ``min = -1e300``)."""
    above = value > hi
    ax.text(x, hi if above else lo, text + (" ↑" if above else " ↓") + " off scale", va="top" if above else "bottom",
            ha="left", color="#444444", gid="limit-off-scale", **kw)


def _limit_of(limits: Mapping | None, name: str) -> tuple[float | None, float | None]:
    if not limits or name not in limits:
        return None, None
    lo, hi = limits[name]
    return (None if lo is None else float(lo)), (None if hi is None else float(hi))


def _summary(values: np.ndarray):
    """Median and (min, max) over axis 0, NaN-aware; for one row the row itself."""
    if values.shape[0] == 1:
        return values[0], None
    with np.errstate(all="ignore"):
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            return np.nanmedian(values, axis=0), (np.nanmin(values, axis=0), np.nanmax(values, axis=0))


def cri_figure(R, Ra=None, *, limits: Mapping | None = None, title: str | None = None):
    """CIE 13.3 special indices R1..R14 (and Ra) as bars, with criteria limits.

    Parameters
    ----------
    R : array_like, shape (14,) or (N, 14)
        Special colour rendering indices. Several rows (a lot) are drawn as the median bar
        with a min–max whisker.
    Ra : float or array_like (N,), optional
    limits : mapping, optional
        ``{"R9": (lo, hi), "Ra": (lo, None), ...}``; a limit is a thick black tick across
        the bar with its value; a bar (median) outside its limits is hatched.
    """
    R = np.atleast_2d(np.asarray(R, dtype=float))
    names = [f"R{i}" for i in range(1, 15)]
    vals = R
    if Ra is not None:
        vals = np.concatenate([np.atleast_2d(np.asarray(Ra, dtype=float)).reshape(-1, 1), R], axis=1)
        names = ["Ra"] + names
    mid, rng = _summary(vals)
    x = np.arange(len(names), dtype=float)
    if Ra is not None:
        x[1:] += 0.6

    fig = _new_figure(3.0)
    with _ctx():
        ax = fig.add_subplot()
        finite = np.isfinite(mid)
        ymin = min(0.0, float(np.nanmin(rng[0] if rng is not None else mid)) - 5) if np.any(finite) else 0.0
        bars = []
        for k in range(len(names)):
            lo, hi = _limit_of(limits, names[k])
            bad = finite[k] and ((lo is not None and mid[k] < lo) or (hi is not None and mid[k] > hi))
            b = ax.bar(x[k], mid[k] if finite[k] else 0.0, width=0.7,
                       color=PALETTE["orange"] if names[k] == "Ra" else PALETTE["sky"],
                       ec=PALETTE["black"], lw=0.6, hatch="////" if bad else None, gid=f"bar-{names[k]}")
            bars.append(b)
            if finite[k]:
                ytxt = mid[k] if rng is None else max(mid[k], rng[1][k])
                ax.text(x[k], max(ytxt, 0) + 1.5, f"{mid[k]:.0f}", ha="center", va="bottom", fontsize=7)
            else:
                ax.text(x[k], 2, "n/a", ha="center", va="bottom", fontsize=7, rotation=90)
            for lim, sym in ((lo, "≥"), (hi, "≤")):
                if lim is not None and not ymin <= lim <= 110:
                    _off_scale_label(ax, x[k] + 0.47, ymin, 110, lim, f"{sym}{lim:g}", fontsize=6.5)
                elif lim is not None:
                    ax.plot([x[k] - 0.45, x[k] + 0.45], [lim, lim], color=PALETTE["black"], lw=2.2,
                            gid=f"limit-{names[k]}-{'min' if sym == '≥' else 'max'}", solid_capstyle="butt")
                    ax.text(x[k] + 0.47, lim, f"{sym}{lim:g}", fontsize=6.5, va="center", ha="left")
        if rng is not None:
            ok = finite & np.isfinite(rng[0])
            ax.errorbar(x[ok], mid[ok], yerr=[mid[ok] - rng[0][ok], rng[1][ok] - mid[ok]], fmt="none",
                        ecolor=PALETTE["black"], elinewidth=0.9, capsize=2.5, gid="whiskers")
        ax.set_ylim(ymin, 110)
        ax.axhline(0, color="black", lw=0.6)
        ax.set_xticks(x, names)
        ax.set_ylabel("index (CIE 13.3)")
        note = "bars: value" if rng is None else f"bars: median of {R.shape[0]}, whiskers: min–max"
        note += " · hatched: outside its limit · black tick: limit"
        ax.text(0.0, 1.01, note, transform=ax.transAxes, fontsize=6.5, va="bottom", color="#444444")
        if title:
            ax.set_title(_lit(title), loc="left", pad=12)
    return fig


# --------------------------------------------------------------------------- TM-30 hue bins


def hue_bin_figure(Rcs_h, Rhs_h, Rf_h, *, limits: Mapping | None = None, title: str | None = None):
    """The 16 TM-30 hue bins as rows with inline bars: see :func:`lumeval.render.tm30_plots.hue_bin_figure`."""
    from .tm30_plots import hue_bin_figure as draw

    return draw(Rcs_h, Rhs_h, Rf_h, limits=limits, title=title)


# --------------------------------------------------------------------------- lot distributions


def distribution_figure(
    values: Mapping[str, np.ndarray],
    *,
    limits: Mapping | None = None,
    failed: Sequence[bool | None] | None = None,
    units: Mapping[str, str] | None = None,
    title: str | None = None,
    labels: Mapping[str, str] | None = None,
):
    """Distributions of key figures over a lot: one small panel per figure.

    Each panel shows every sample as a dot (spread vertically by a fixed, non-random
    low-discrepancy offset so that equal values stay visible), a box from the first to the
    third quartile with the median as a thick line (numpy's linear quantiles), and the criteria
    limits as dashed vertical lines labelled "min"/"max". Samples that failed any criterion are
    drawn as ✗ markers.

    Parameters
    ----------
    values : mapping name -> array (N,)
    limits : mapping name -> (lo, hi), optional
    failed : sequence of bool or None (N,), optional
    units : mapping name -> unit string, optional
    labels : mapping name -> heading for people (e.g. "CCT (K)"), optional; replaces name and unit
    """
    names = list(values)
    k = len(names)
    ncol = 2 if k > 1 else 1
    nrow = int(np.ceil(k / ncol)) if k else 1
    fig = _new_figure(1.35 * nrow + 0.4)
    with _ctx():
        axes = np.atleast_1d(fig.subplots(nrow, ncol, squeeze=False).ravel())
        for ax in axes[k:]:
            ax.set_visible(False)
        for ax, name in zip(axes, names):
            arr = np.asarray(values[name], dtype=float)
            n = arr.size
            jitter = (np.arange(n) * 0.6180339887) % 1.0 * 0.6 - 0.3
            f = np.array([bool(x) if x is not None else False for x in (failed if failed is not None else [None] * n)])
            fin = np.isfinite(arr)
            ras = bool(fin.sum() > RASTER_POINTS)
            ax.plot(arr[fin & ~f], jitter[fin & ~f], ls="none", marker="o", ms=3.5, mfc=PALETTE["sky"], mec="black",
                    mew=0.4, gid=f"dist-{name}-points", rasterized=ras)
            if (fin & f).any():
                ax.plot(arr[fin & f], jitter[fin & f], ls="none", marker="X", ms=5.5, mfc=PALETTE["vermillion"],
                        mec="black", mew=0.4, gid=f"dist-{name}-failed", rasterized=ras)
            if fin.sum() >= 2:
                q1, med, q3 = np.quantile(arr[fin], [0.25, 0.5, 0.75])
                ax.add_patch(_mpl().patches.Rectangle((q1, -0.42), q3 - q1, 0.84, fill=False, ec="black", lw=0.8, gid=f"dist-{name}-box"))
                ax.plot([med, med], [-0.42, 0.42], color="black", lw=2.0, gid=f"dist-{name}-median")
            lo, hi = _limit_of(limits, name)
            xs = list(arr[fin])
            if xs:  # a limit far from every sample (e.g. min = -1e300) is labelled, not drawn to scale
                d0, d1 = min(xs), max(xs)
                reach = 10 * max(d1 - d0, 0.01 * max(abs(d0), abs(d1)), 1e-3)
                near = (d0 - reach, d1 + reach)
            for lim_v, lab in ((lo, "min"), (hi, "max")):
                if lim_v is not None and arr[fin].size and not near[0] <= lim_v <= near[1]:
                    ax.text(1.0 if lim_v > near[1] else 0.0, 0.52, f" {lab} {lim_v:g} (off scale) ", transform=ax.transAxes,
                            fontsize=6.5, va="bottom", ha="right" if lim_v > near[1] else "left", color="#444444",
                            gid=f"dist-{name}-limit-{lab}-off-scale")
                elif lim_v is not None:
                    ax.axvline(lim_v, color=PALETTE["vermillion"], lw=1.4, ls=(0, (4, 2)), gid=f"dist-{name}-limit-{lab}")
                    ax.text(lim_v, 0.52, f" {lab} {lim_v:g}", fontsize=6.5, va="bottom", ha="left" if lab == "min" else "right")
                    xs.append(lim_v)
            if xs:
                a, b = min(xs), max(xs)
                pad = 0.08 * (b - a) if b > a else (abs(a) * 0.01 + 1e-3)
                ax.set_xlim(a - pad, b + pad)
            ax.set_ylim(-0.6, 0.8)
            ax.set_yticks([])
            ax.spines["left"].set_visible(False)
            unit = (units or {}).get(name, "")
            head = (labels or {}).get(name) or (f"{name}" + (f" ({unit})" if unit else ""))
            ax.set_title(f"{head} · n = {int(fin.sum())}", loc="left", fontsize=8.5)
        if title:
            fig.suptitle(_lit(title), x=0.01, ha="left", fontsize=10)
    return fig
