"""TM-30 pictures in lumeval's own visual language: hue-bin rows, colour vectors, Rf–Rg chart.

Each function takes numbers (arrays) and returns a matplotlib figure (:func:`lumeval.render.plots.figure_svg`
turns it into SVG text); nothing here computes a colour metric or builds HTML. The style is the
one of :mod:`lumeval.render.plots`: Okabe & Ito (2008) palette, white ground, thin grey guides,
meanings carried by line style and marker shape as well as by colour, text drawn as paths.

Design choices (ours, see docs/report.md):

- **Hue bins as rows** (:func:`hue_bin_figure`): one row per hue bin h1..h16, read like a
  table, with the value printed beside a small horizontal bar in three columns — local
  fidelity Rf,h, chroma shift Rcs,h (%), hue shift Rhs,h — and the criteria limits as black
  ticks across the bin's row.
- **Colour vectors** (:func:`colour_vector_figure`): each hue bin's average colour as an arrow
  from where it sits under the reference (hollow dot on the 100 % chroma ring) to where it
  sits under the test source, in a plane normalised by the reference chroma; arrows that gain
  chroma are solid blue, arrows that lose chroma dashed vermillion. No polygons and no
  coloured background: the hue of each bin is named in words at the rim with its Rcs,h.
- **Fidelity against gamut** (:func:`fidelity_gamut_figure`): Rf across, Rg up, every
  spectrum as a marker, and the ANSI/IES TM-30-20 Annex E design-intent limits as labelled
  threshold lines (corners for Preference, horizontal lines for Vividness, vertical lines for
  Fidelity) rather than filled zones; the hue-bin-1 conditions of each level cannot be drawn in
  this plane and are listed beside the chart by the report.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from .plots import PALETTE, _ctx, _limit_of, _lit, _new_figure, _off_scale_label, _summary

#: Hue names of the 16 bins (common usage for CAM02-UCS hue angles; no source).
BIN_HUES = ("red", "red-orange", "orange", "yellow-orange", "yellow", "yellow-green", "green", "green",
            "green-cyan", "cyan", "blue", "blue", "blue-violet", "violet", "purple", "red-purple")


# --------------------------------------------------------------------------- hue bins as rows


def hue_bin_figure(Rcs_h, Rhs_h, Rf_h, *, limits: Mapping | None = None, title: str | None = None):
    """The 16 hue bins of CIE 224:2017 / ANSI/IES TM-30 as rows with inline bars.

    One row per bin (h1 at the top), labelled with its hue-angle range (22.5° each, bin 1
    starting at 0°, TM-30-18) and hue name; three columns of horizontal bars with the value
    printed beside each: local fidelity Rf,h (from 0), local chroma shift Rcs,h in % (from 0,
    left = less chroma), local hue shift Rhs,h (dimensionless, from 0). Several rows of input
    (a lot) draw the median bar with a min–max whisker. ``limits`` keys ``Rf_h<j>``,
    ``Rcs_h<j>``, ``Rhs_h<j>`` draw black ticks across the bin's bar; a bar outside its limit
    is hatched.

    Parameters
    ----------
    Rcs_h, Rhs_h, Rf_h : array_like, shape (16,) or (N, 16)

    Artists: bars carry ``gid`` ``<key>-values-h<j>`` (key ``Rf_h``, ``Rcs_h``, ``Rhs_h``),
    whiskers ``<key>-whiskers``, limit ticks ``limit-<key><j>-min|max``.
    """
    cols = [
        ("Rf_h", np.atleast_2d(np.asarray(Rf_h, dtype=float)), "local fidelity Rf,h", PALETTE["green"], "{:.0f}"),
        ("Rcs_h", np.atleast_2d(np.asarray(Rcs_h, dtype=float)), "chroma shift Rcs,h (%)", PALETTE["blue"], "{:+.0f} %"),
        ("Rhs_h", np.atleast_2d(np.asarray(Rhs_h, dtype=float)), "hue shift Rhs,h", PALETTE["purple"], "{:+.2f}"),
    ]
    title = _lit(title) if title else title
    y = np.arange(16, dtype=float)  # row j-1 for bin j; inverted axis puts h1 at the top
    fig = _new_figure(4.9)
    with _ctx():
        gs = fig.add_gridspec(1, 4, width_ratios=[1.05, 1.0, 1.0, 1.0], wspace=0.04)
        lab_ax = fig.add_subplot(gs[0, 0])
        axes = [fig.add_subplot(gs[0, k + 1], sharey=lab_ax) for k in range(3)]
        lab_ax.set_ylim(15.6, -0.6)
        lab_ax.set_xlim(0, 1)
        lab_ax.axis("off")
        for j in range(16):
            lab_ax.text(0.0, y[j], f"h{j + 1}", fontsize=7.5, fontweight="bold", va="center", ha="left")
            lab_ax.text(0.2, y[j], f"{22.5 * j:.1f}–{22.5 * (j + 1):.1f}°  {BIN_HUES[j]}", fontsize=6.5,
                        va="center", ha="left", color="#333333")
        lab_ax.text(0.0, -1.1, "hue bin (CAM02-UCS hue angle)", fontsize=7, va="bottom", ha="left", color="#444444")
        n = cols[0][1].shape[0]
        for ax, (key, arr, head, col, fmt) in zip(axes, cols):
            mid, rng = _summary(arr)
            fin = np.isfinite(mid)
            # shading every other row, as in a printed table
            for j in range(0, 16, 2):
                ax.axhspan(y[j] - 0.5, y[j] + 0.5, color="#f3f3f3", lw=0, zorder=0)
            lims = [_limit_of(limits, f"{key}{j + 1}") for j in range(16)]
            if key == "Rf_h":
                low = np.nanmin(rng[0] if rng is not None else mid) if np.any(fin) else 0.0
                x0, x1 = (0.0, 100.0) if not np.isfinite(low) or low < 40 else (40.0, 100.0)
                x1 += 14.0  # room for the printed value
            else:
                vals = [mid[fin], *(r[np.isfinite(r)] for r in (rng or ()))]
                m = float(np.nanmax(np.abs(np.concatenate(vals)))) if np.any(fin) else 0.0
                base = max(20.0 if key == "Rcs_h" else 0.2, 1.1 * m)
                near = [abs(v) for lo_hi in lims for v in lo_hi if v is not None and abs(v) <= 5 * base]
                half = max([base, *(1.1 * v for v in near)])
                x0, x1 = -1.45 * half, 1.45 * half  # outer 30 %: room for the printed value
            start = x0 if key == "Rf_h" else 0.0
            for j in range(16):
                lo, hi = lims[j]
                bad = fin[j] and ((lo is not None and mid[j] < lo) or (hi is not None and mid[j] > hi))
                if fin[j]:
                    w = mid[j] - start
                    ax.barh(y[j], w, left=start, height=0.62, color=col, ec="black", lw=0.4,
                            hatch="////" if bad else None, gid=f"{key}-values-h{j + 1}", zorder=2)
                    end = mid[j] if rng is None else (max(mid[j], rng[1][j]) if mid[j] >= start else min(mid[j], rng[0][j]))
                    right = mid[j] >= start
                    off = 0.015 * (x1 - x0)
                    ax.text(end + (off if right else -off), y[j], fmt.format(mid[j]).replace("-", "−"),
                            fontsize=6.5, va="center", ha="left" if right else "right", zorder=4)
                else:
                    ax.text(start + 0.02 * (x1 - x0), y[j], "n/a", fontsize=6.5, va="center", ha="left")
                for lim_v, sym in ((lo, "≥"), (hi, "≤")):
                    if lim_v is None:
                        continue
                    if not x0 <= lim_v <= x1:
                        _off_scale_label(ax, x1, y[j] + 0.45, y[j] - 0.45, lim_v, f"{sym}{lim_v:g}", fontsize=5.5)
                        continue
                    ax.plot([lim_v, lim_v], [y[j] - 0.42, y[j] + 0.42], color="black", lw=2.0, zorder=5,
                            solid_capstyle="butt", gid=f"limit-{key}{j + 1}-{'min' if sym == '≥' else 'max'}")
            if rng is not None:
                ok = fin & np.isfinite(rng[0])
                ax.errorbar(mid[ok], y[ok], xerr=[mid[ok] - rng[0][ok], rng[1][ok] - mid[ok]], fmt="none",
                            ecolor="black", elinewidth=0.8, capsize=1.5, gid=f"{key}-whiskers", zorder=3)
            if key != "Rf_h":
                ax.axvline(0.0, color="black", lw=0.7, zorder=1)
            ax.set_xlim(x0, x1)
            ax.set_title(head, fontsize=8, loc="left")
            ax.tick_params(axis="y", left=False, labelleft=False)
            ax.tick_params(axis="x", labelsize=6.5)
            ax.spines["left"].set_visible(False)
            ax.grid(axis="x", color="#dddddd", lw=0.5)
            ax.set_axisbelow(True)
        note = "one row per hue bin" if n == 1 else f"median of {n} per bin, whiskers: min–max"
        note += " · black tick: criteria limit · hatched: outside its limit"
        fig.supxlabel(note, fontsize=6.5, color="#444444", x=0.01, ha="left")
        if title:
            fig.suptitle(title, x=0.01, ha="left", fontsize=10)
    return fig


# --------------------------------------------------------------------------- colour vectors


def colour_vector_figure(ref_unit, test, *, Rcs_h=None, title: str | None = None):
    """How the test source moves each hue bin's average colour, against the reference.

    Parameters
    ----------
    ref_unit, test : array_like, shape (16, 2) or (N, 16, 2)
        Normalised positions of the bin averages (:func:`lumeval.metrics.tm30_views.colour_vectors`):
        the reference on the unit circle, the test source relative to it. Several rows (a lot)
        draw the median position per bin as the arrow and every sample as a small grey dot.
    Rcs_h : array_like, shape (16,) or (N, 16), optional
        Local chroma shifts (%), printed at the rim beside each bin's name (median for a lot).

    Artists: ``reference-points`` and ``test-points`` (Line2D, one point per bin, bins in
    order), arrows ``vector-h<j>``, guide rings ``ring-<percent>``, lot dots ``lot-points``.
    """
    from matplotlib.patches import Circle, FancyArrowPatch

    title = _lit(title) if title else title
    R = np.asarray(ref_unit, dtype=float)
    T = np.asarray(test, dtype=float)
    if R.ndim == 2:
        R, T = R[None], T[None]
    n = T.shape[0]
    with np.errstate(all="ignore"):
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            r_mid = np.nanmedian(R, axis=0)
            t_mid = np.nanmedian(T, axis=0)
    cs = None
    if Rcs_h is not None:
        cs, _ = _summary(np.atleast_2d(np.asarray(Rcs_h, dtype=float)))
    fig = _new_figure(5.6)
    with _ctx():
        ax = fig.add_subplot()
        ax.set_aspect("equal", adjustable="box")
        for pct, ls, lw in ((80, (0, (2, 2)), 0.6), (100, "-", 0.8), (120, (0, (2, 2)), 0.6)):
            ring = Circle((0, 0), pct / 100.0, fill=False, ec="#9a9a9a", lw=lw, ls=ls, gid=f"ring-{pct}", zorder=1)
            ax.add_patch(ring)
            # labelled on the spoke between h4 and h5 (90°), away from the bin averages
            ax.text(0.0, pct / 100.0, f"{pct} %", fontsize=6, color="#666666", ha="center", va="center",
                    bbox={"fc": "white", "ec": "none", "pad": 0.4}, zorder=1)
        for k in range(16):  # bin edges as light spokes
            a = np.radians(22.5 * k)
            ax.plot([0.25 * np.cos(a), 1.32 * np.cos(a)], [0.25 * np.sin(a), 1.32 * np.sin(a)], color="#e0e0e0",
                    lw=0.6, zorder=0)
        ax.plot([0], [0], marker="+", color="#9a9a9a", ms=6, zorder=1)
        if n > 1:
            dots = T.reshape(-1, 2)
            ok = np.all(np.isfinite(dots), axis=1)
            ax.plot(dots[ok, 0], dots[ok, 1], ls="none", marker="o", ms=1.8, color="#8c8c8c", gid="lot-points", zorder=2)
        fin = np.all(np.isfinite(r_mid), axis=1) & np.all(np.isfinite(t_mid), axis=1)
        for j in np.flatnonzero(fin):
            # gained or lost as the printed Rcs,h says (TM-30: the shift along the bin's bisector);
            # without Rcs,h, by the distance from the centre
            gain = (cs[j] >= 0) if cs is not None and np.isfinite(cs[j]) else \
                float(np.hypot(*t_mid[j])) >= float(np.hypot(*r_mid[j]))
            arr = FancyArrowPatch(tuple(r_mid[j]), tuple(t_mid[j]), arrowstyle="-|>", mutation_scale=9,
                                  color=PALETTE["blue"] if gain else PALETTE["vermillion"], lw=1.4,
                                  ls="-" if gain else (0, (3, 1.5)), shrinkA=2.5, shrinkB=0, zorder=4,
                                  gid=f"vector-h{j + 1}")
            ax.add_patch(arr)
        ax.plot(r_mid[fin, 0], r_mid[fin, 1], ls="none", marker="o", ms=4.5, mfc="white", mec="black", mew=0.8,
                gid="reference-points", zorder=5, label="bin average under the reference (100 % chroma)")
        ax.plot(t_mid[fin, 0], t_mid[fin, 1], ls="none", marker="o", ms=2.2, color="black",
                gid="test-points", zorder=6, label="bin average under the test source")
        ax.plot([], [], color=PALETTE["blue"], lw=1.4, label="chroma gained (more saturated)")
        ax.plot([], [], color=PALETTE["vermillion"], lw=1.4, ls=(0, (3, 1.5)), label="chroma lost (less saturated)")
        for j in range(16):
            a = np.radians(22.5 * (j + 0.5))
            rr = 1.47
            text = f"h{j + 1} {BIN_HUES[j]}"
            if cs is not None and np.isfinite(cs[j]):
                text += f"\n{cs[j]:+.0f} %".replace("-", "−")
            c = np.cos(a)
            ax.text(rr * c, rr * np.sin(a), text, fontsize=6.3, ha="center" if abs(c) < 0.3 else ("left" if c > 0 else "right"),
                    va="center", color="#222222", linespacing=1.0)
        ax.set_xlim(-1.95, 1.95)
        ax.set_ylim(-1.7, 1.7)
        ax.set_xticks([])
        ax.set_yticks([])
        for s in ax.spines.values():
            s.set_visible(False)
        ax.text(1.95, -1.7, "plane: CAM02-UCS a′ (right), b′ (up), each bin scaled by its reference chroma",
                fontsize=6, ha="right", va="bottom", color="#666666")
        note = "arrows: reference → test, per hue bin" if n == 1 else f"arrows: median of {n} samples; grey dots: each sample"
        if cs is not None:
            note += " · rim: bin, hue and chroma shift Rcs,h"
        ax.text(-1.95, 1.7, note, fontsize=6.5, ha="left", va="top", color="#444444")
        fig.legend(loc="outside lower center", ncols=2, frameon=False, fontsize=7)
        if title:
            ax.set_title(title, loc="left")
    return fig


# --------------------------------------------------------------------------- Rf against Rg


def fidelity_gamut_figure(
    Rf,
    Rg,
    *,
    labels: Sequence[str] | None = None,
    failed: Sequence[bool | None] | None = None,
    limits: Mapping | None = None,
    title: str | None = None,
):
    """Fidelity index Rf against gamut index Rg with the Annex E design-intent limits.

    Parameters
    ----------
    Rf, Rg : array_like, shape (N,)
    labels : sequence of str, optional
        With up to six spectra each point is numbered and named in the legend.
    failed : sequence of bool or None, optional
        Marker per spectrum as in the chromaticity diagram (✗ failed, filled passed, hollow
        not judged).
    limits : mapping, optional
        ``{"Rf": (lo, hi), "Rg": (lo, hi)}``: criteria limits, drawn as vermillion dashed lines.

    The Annex E limits come from :data:`lumeval.metrics.tm30_views.ANNEX_E` (Rf and Rg only;
    the hue-bin-1 conditions are not in this plane). Artists: ``samples-pass``,
    ``samples-fail``, ``samples-unjudged``, ``intent-<level>`` (one Line2D per level, its
    threshold corner or line), ``limit-Rf-min`` ...
    """
    from ..metrics.tm30_views import ANNEX_E

    Rf = np.atleast_1d(np.asarray(Rf, dtype=float))
    Rg = np.atleast_1d(np.asarray(Rg, dtype=float))
    n = Rf.size
    if labels is not None:  # spectrum names are text from files: drawn literally
        labels = [_lit(x) for x in labels]
    title = _lit(title) if title else title
    fin = np.isfinite(Rf) & np.isfinite(Rg)
    x0 = min(50.0, float(np.floor(np.nanmin(Rf[fin]) / 5) * 5) - 5) if fin.any() else 50.0
    y0 = min(60.0, float(np.floor(np.nanmin(Rg[fin]) / 5) * 5) - 5) if fin.any() else 60.0
    y1 = max(140.0, float(np.ceil(np.nanmax(Rg[fin]) / 5) * 5) + 5) if fin.any() else 140.0
    x1 = 100.0
    fig = _new_figure(4.6)
    with _ctx():
        ax = fig.add_subplot()
        ax.axhline(100.0, color="#9a9a9a", lw=0.8, zorder=1)
        ax.text(x0 + 0.5, 99.6, "Rg = 100: gamut area as under the reference", fontsize=6, color="#555555",
                va="top")
        pref_style = {"color": PALETTE["green"], "lw": 1.3}
        for lv in ("P1", "P2", "P3"):
            fx, gy = ANNEX_E[lv]["Rf"][0], ANNEX_E[lv]["Rg"][0]
            ax.plot([fx, fx, x1], [y1, gy, gy], gid=f"intent-{lv}", zorder=2, **pref_style,
                    ls="-" if lv == "P1" else ((0, (5, 2)) if lv == "P2" else (0, (2, 2))))
            ax.text(fx + 0.3, gy + 0.5, lv, fontsize=7, color=PALETTE["green"], fontweight="bold", va="bottom")
        for lv in ("V1", "V2", "V3"):
            gy = ANNEX_E[lv]["Rg"][0]
            ax.plot([x0, x1], [gy, gy], color=PALETTE["purple"], lw=1.1, ls=(0, (6, 2, 1, 2)), gid=f"intent-{lv}", zorder=2)
            ax.text(x1 - 0.3, gy + 0.5, f"{lv}: Rg ≥ {gy:g}", fontsize=6.5, color="#8a3f6e", va="bottom", ha="right")
        for lv in ("F1", "F2", "F3"):
            fx = ANNEX_E[lv]["Rf"][0]
            ax.plot([fx, fx], [y0, y1], color=PALETTE["sky"], lw=1.1, ls=(0, (1, 1.5)), gid=f"intent-{lv}", zorder=2)
            ax.text(fx - 0.3, y0 + 1.0, f"{lv}", fontsize=6.5, color="#2a7fb0", ha="right", va="bottom", rotation=90)
        ax.plot([], [], label="Preference P1–P3: Rf and Rg at least (corner)", **pref_style)
        ax.plot([], [], color=PALETTE["purple"], lw=1.1, ls=(0, (6, 2, 1, 2)), label="Vividness V1–V3: Rg at least")
        ax.plot([], [], color=PALETTE["sky"], lw=1.1, ls=(0, (1, 1.5)), label="Fidelity F1–F3: Rf at least")
        # criteria limits
        for key, horiz in (("Rf", False), ("Rg", True)):
            lo, hi = _limit_of(limits, key)
            for lim_v, lab in ((lo, "min"), (hi, "max")):
                if lim_v is None:
                    continue
                inside = (y0 <= lim_v <= y1) if horiz else (x0 <= lim_v <= x1)
                if not inside:
                    continue
                if horiz:
                    ax.axhline(lim_v, color=PALETTE["vermillion"], lw=1.4, ls=(0, (4, 2)), gid=f"limit-{key}-{lab}", zorder=3)
                    ax.text(x1 - 0.3, lim_v + 0.4, f"criterion: {key} {lab} {lim_v:g}", fontsize=6.5, ha="right",
                            va="bottom", color="#a33d00")
                else:
                    ax.axvline(lim_v, color=PALETTE["vermillion"], lw=1.4, ls=(0, (4, 2)), gid=f"limit-{key}-{lab}", zorder=3)
                    ax.text(lim_v - 0.3, y1 - 1.0, f"criterion: {key} {lab} {lim_v:g}", fontsize=6.5, ha="right",
                            va="top", rotation=90, color="#a33d00")
        f = np.array([None if x is None else bool(x) for x in (failed if failed is not None else [None] * n)], dtype=object)
        groups = (
            ("samples-pass", f == False, {"marker": "o", "mfc": PALETTE["sky"], "mec": "black"}, "passed"),  # noqa: E712
            ("samples-fail", f == True, {"marker": "X", "mfc": PALETTE["vermillion"], "mec": "black", "ms": 8}, "failed"),  # noqa: E712
            ("samples-unjudged", np.array([x is None for x in f]), {"marker": "o", "mfc": "white", "mec": "black"}, "not judged"),
        )
        for gid, mask, style, lab in groups:
            m = mask.astype(bool) & fin
            if m.any():
                ax.plot(Rf[m], Rg[m], ls="none", gid=gid, zorder=6, label=f"spectrum: {lab} ({int(m.sum())})",
                        **{"ms": 6.5 if n <= 20 else 4.0, "mew": 0.8, **style})
        if labels is not None and 1 <= n <= 6:
            for k in np.flatnonzero(fin):
                text = str(labels[k]) if n == 1 else str(k + 1)
                ax.annotate(text, (Rf[k], Rg[k]), xytext=(5, 4), textcoords="offset points", fontsize=7,
                            fontweight="bold", gid=f"label-{k + 1}", zorder=7)
            if n > 1:
                for k in np.flatnonzero(fin):
                    ax.plot([], [], ls="none", label=f"{k + 1}: {labels[k]}")
        ax.set_xlim(x0, x1 + 0.5)
        ax.set_ylim(y0, y1)
        ax.set_xlabel("fidelity index Rf (CIE 224:2017 / TM-30)")
        ax.set_ylabel("gamut index Rg (TM-30)")
        ax.grid(color="#eeeeee", lw=0.5)
        ax.set_axisbelow(True)
        fig.legend(loc="outside lower center", ncols=2, frameon=False, fontsize=7)
        if title:
            ax.set_title(title, loc="left")
    return fig
