"""The figures of the HTML report and of ``--plots`` (matplotlib objects, in report order).

Without a lot each spectrum gets its own spectrum, CRI, hue-bin and colour-vector figures (a
comparison of bids is per product); a lot (or more spectra than an explicit
``per_sample_max``) is drawn in aggregate: all spectra in one figure, medians with min-max
whiskers, centroid and spread, distributions. The drawing itself is :mod:`lumeval.render.plots`
and :mod:`lumeval.render.tm30_plots`; this module chooses what to draw and writes the captions.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..figures import KEY_FIGURES
from .report_inputs import VerdictRow, _limits_from_rows, _regions, verdict_rows
from .report_inputs import as_lot as _as_lot

#: comparison of bids is per product. The aggregate drawing (all spectra in one SPD chart, medians
#: with min-max whiskers, distributions) belongs to a lot (``lot=``) or to an explicit
#: ``per_sample_max=N``, which the report then announces. None: no limit.
PER_SAMPLE_MAX: int | None = None


#: Figures whose distributions are drawn for a lot (plus any figure a limit names).
LOT_FIGURES = KEY_FIGURES


def _lot_spectra_for_display(ev, k: int):
    """(wavelengths, values (N, W), reference) for the lot's spectrum figure: all spectra on the
    grid of sample ``k`` (the one whose reference is drawn). Spectra on other grids are linearly
    interpolated onto it for the drawing only (their end values repeated where they are shorter:
    every prepared spectrum covers 380-780 nm)."""
    wl = ev.spectra.wavelengths(k)
    if ev.spectra.one_grid:
        return wl, ev.spectra.values, ev.reference_spd(k)
    rows = []
    for i in range(len(ev.spectra)):
        w, v = ev.spectra.spectrum(i)
        rows.append(np.interp(wl, w, v))
    return wl, np.vstack(rows), ev.reference_spd(k)



@dataclass(frozen=True)
class ReportFigure:
    """A figure of the report: ``key`` (file stem), ``title``, ``caption``, matplotlib ``figure``."""

    key: str
    title: str
    caption: str
    figure: object


def _slug(s: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "-", s).strip("-").lower()
    return s[:40] or "spectrum"


def _fig(ev, name: str) -> np.ndarray:
    try:
        return np.asarray(ev.figure(name), dtype=float)
    except (KeyError, AttributeError):
        return np.full(len(ev.spectra.names), np.nan)


def _matrix(ev, prefix: str, k: int) -> np.ndarray:
    return np.stack([_fig(ev, f"{prefix}{j}") for j in range(1, k + 1)], axis=-1)


def _reference_label(cct: float) -> str:
    if not math.isfinite(cct):
        return "reference (undefined)"
    kind = "Planckian" if cct < 5000 else "CIE daylight"
    return f"CIE 13.3 reference: {kind} at {cct:.0f} K"


def _sample_failed(rows: list[VerdictRow], names: Sequence[str], keep=None) -> list[bool | None]:
    """Per sample: True when a clause (of those ``keep(row)`` accepts; default all) failed, False
    when all passed, None when none was judged or one could not be decided."""
    out: list[bool | None] = []
    for n in names:
        mine = [r.outcome for r in rows if r.sample == n and (keep is None or keep(r))]
        if not mine:
            out.append(None)
        elif "fail" in mine:
            out.append(True)
        elif all(o == "pass" for o in mine):
            out.append(False)
        else:
            out.append(None)
    return out


#: What the markers of the chromaticity diagrams show, in their legend.
CHROMATICITY_MARKER_BASIS = "chromaticity requirements"


def chromaticity_markers(rows: list[VerdictRow], names: Sequence[str]) -> list[bool | None]:
    """The marker of each sample on the chromaticity diagrams (True ✗, False passed, None
    hollow): the outcome of its *chromaticity* requirements only — ANSI quadrangle, SDCM
    ellipse, CCT and Duv bands (:func:`lumeval.criteria.verdicts.judges_chromaticity`). A sample
    that failed only, say, Ra is drawn as passed inside the region it meets; its overall verdict
    is in the verdict table. None where no chromaticity requirement was judged."""
    from ..criteria.verdicts import judges_chromaticity

    return _sample_failed(rows, names, lambda r: judges_chromaticity(r.kind, r.figure))


def report_figures(
    evaluation,
    *,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    per_sample_max: int | None = PER_SAMPLE_MAX,
) -> list[ReportFigure]:
    """All figures of the report, in report order (see the module docstring for the inputs)."""
    from . import plots

    ev = evaluation
    names = list(ev.spectra.names)
    n = len(names)
    rows = verdict_rows(verdicts, names)
    lim = dict(_limits_from_rows(rows))
    if limits:
        lim.update({k: tuple(v) for k, v in limits.items()})
    failed = _sample_failed(rows, names)
    chroma_failed = chromaticity_markers(rows, names)
    as_lot = _as_lot(lot, n, per_sample_max)
    cct = _fig(ev, "cct_K")
    figs: list[ReportFigure] = []

    figs.append(ReportFigure(
        "chromaticity", "Chromaticity near the Planckian locus",
        "CIE 1960 (u, v) diagram: Planckian locus (black), isotemperature lines (grey, labelled in K), "
        "lines of constant Duv (grey dashed)"
        + (", the criteria region(s) (blue dashed, hatched)" if regions else "")
        + (", every sample, their centroid (+) and spread (2σ ellipse)" if as_lot and n >= 2
           else (", the samples" if n > 1 else ", the sample"))
        + ". " + _CHROMATICITY_MARKERS,
        plots.chromaticity_figure(_fig(ev, "u"), _fig(ev, "v"), labels=names, failed=chroma_failed,
                                  regions=_regions(regions), show_centroid=as_lot and n >= 2,
                                  marker_basis=CHROMATICITY_MARKER_BASIS),
    ))
    figs += _xy_and_gamut_figures(ev, names, failed, regions, lim, as_lot, chroma_failed)

    if not as_lot:
        for i, name in enumerate(names):
            slug = f"{i + 1:02d}-{_slug(name)}"
            ref = ev.reference_spd(i)
            wl_i, values_i = ev.spectra.spectrum(i)
            figs.append(ReportFigure(
                f"spd-{slug}", f"Spectrum: {name}",
                "Test spectrum (solid) and its CIE 13.3 reference at the same CCT (dashed), both scaled to the "
                "same luminous content Y, then jointly to a highest value of 1. Grey: outside 380–780 nm.",
                plots.spd_figure(wl_i, values_i, ref, test_label=name, reference_label=_reference_label(cct[i])),
            ))
            figs.append(ReportFigure(
                f"cri-{slug}", f"Colour rendering indices: {name}",
                "Ra and R1–R14 (CIE 13.3-1995). Black ticks mark criteria limits; a hatched bar is outside its limit.",
                plots.cri_figure(_matrix(ev, "R", 14)[i], _fig(ev, "Ra")[i], limits=lim),
            ))
            figs.append(ReportFigure(
                f"hue-bins-{slug}", f"TM-30 hue bins: {name}",
                "One row per hue bin (CIE 224:2017 / ANSI/IES TM-30), each value beside its bar: local fidelity "
                "Rf,h, chroma shift Rcs,h (%) and hue shift Rhs,h (dimensionless). Black ticks: criteria limits; "
                "hatched: outside.",
                plots.hue_bin_figure(_matrix(ev, "Rcs_h", 16)[i], _matrix(ev, "Rhs_h", 16)[i], _matrix(ev, "Rf_h", 16)[i],
                                     limits=lim),
            ))
            figs += _colour_vector_figures(ev, [i], f"colour-vectors-{slug}", f"TM-30 colour vectors: {name}")
    else:
        with np.errstate(all="ignore"):
            k = int(np.nanargmin(np.abs(cct - np.nanmedian(cct)))) if np.any(np.isfinite(cct)) else 0
        figs.append(ReportFigure(
            "spd-lot", f"Spectra of all {n} samples",
            ("Every spectrum (thin lines)" if n <= plots.MAX_LINES else
             f"The range of all {n} spectra at each wavelength (band) and their median (line)")
            + ", each spectrum scaled to the same luminous content Y, with the CIE 13.3 reference of "
            f"the sample nearest the median CCT ({names[k]}, dashed); jointly scaled to a highest value of 1."
            + ("" if ev.spectra.one_grid else
               " The samples lie on different wavelength grids: for this drawing only, they are linearly "
               f"interpolated onto the grid of {names[k]} (every figure was computed on each spectrum's own grid)."),
            plots.spd_figure(*_lot_spectra_for_display(ev, k), test_label=f"{n} samples",
                             reference_label=_reference_label(cct[k])),
        ))
        figs.append(ReportFigure(
            "cri-lot", f"Colour rendering indices of {n} samples",
            "Median bar with min–max whisker per index (CIE 13.3-1995); black ticks: criteria limits.",
            plots.cri_figure(_matrix(ev, "R", 14), _fig(ev, "Ra"), limits=lim),
        ))
        figs.append(ReportFigure(
            "hue-bins-lot", f"TM-30 hue bins of {n} samples",
            "One row per hue bin: median bar with min–max whisker of local fidelity Rf,h, chroma shift Rcs,h (%) "
            "and hue shift Rhs,h (dimensionless). Black ticks: criteria limits.",
            plots.hue_bin_figure(_matrix(ev, "Rcs_h", 16), _matrix(ev, "Rhs_h", 16), _matrix(ev, "Rf_h", 16), limits=lim),
        ))
        figs += _colour_vector_figures(ev, list(range(n)), "colour-vectors-lot", f"TM-30 colour vectors of {n} samples")

    if as_lot and n >= 2:
        from .. import figures

        keys = list(LOT_FIGURES)
        for f in lim:
            if f not in keys and len(keys) < 10 and np.any(np.isfinite(_fig(ev, f))):
                keys.append(f)
        figs.append(ReportFigure(
            "distributions", f"Distributions over {n} samples",
            "Every sample (dot; ✗ failed a criterion), the interquartile box with the median (thick line), "
            "and the criteria limits (dashed, labelled min/max).",
            plots.distribution_figure({k: _fig(ev, k) for k in keys}, limits=lim, failed=failed,
                                      labels={k: figures.heading(k) for k in keys}),
        ))
    return figs


#: The captions' words for the markers of the chromaticity diagrams (our own wording).
_CHROMATICITY_MARKERS = ("Markers show the chromaticity requirements only (quadrangle, SDCM ellipse, CCT and Duv "
                         "bands): ✗ failed one, filled circle met all, hollow circle none judged; a sample that "
                         "failed another requirement (e.g. Ra) is marked here by its chromaticity alone — its "
                         "overall verdict is in the verdict table.")


def _xy_and_gamut_figures(ev, names, failed, regions, lim, as_lot, chroma_failed) -> list[ReportFigure]:
    """The CIE 1931 (x, y) diagram (markers: ``chroma_failed``) and the Rf-Rg chart (all
    spectra in one of each)."""
    from . import plots
    from .tm30_plots import fidelity_gamut_figure

    n = len(names)
    out = [ReportFigure(
        "chromaticity-xy", "Chromaticity in CIE 1931 (x, y)",
        "The same samples and criteria regions in the CIE 1931 (x, y) diagram, where ANSI C78.377 quadrangles and "
        "SDCM ellipses are usually read; Planckian locus, isotemperature lines and lines of constant Duv as in the "
        "(u, v) view. Inset: the whole diagram (spectrum locus, CIE 1931 2°) with the enlarged window. "
        + _CHROMATICITY_MARKERS,
        plots.chromaticity_xy_figure(_fig(ev, "x"), _fig(ev, "y"), labels=names, failed=chroma_failed,
                                     regions=_regions(regions), show_centroid=as_lot and n >= 2,
                                     marker_basis=CHROMATICITY_MARKER_BASIS),
    )]
    Rf, Rg = _fig(ev, "Rf"), _fig(ev, "Rg")
    if np.any(np.isfinite(Rf) & np.isfinite(Rg)):
        out.append(ReportFigure(
            "fidelity-gamut", "Fidelity against gamut (TM-30 Rf, Rg)",
            "Each spectrum's fidelity index Rf (across) and gamut index Rg (up). Green corners: the Rf and Rg a "
            "Preference level P1–P3 needs; purple lines: Vividness V1–V3 (Rg); blue dotted lines: Fidelity F1–F3 "
            "(Rf) — ANSI/IES TM-30-20 Annex E. Each level also has a hue-bin-1 condition, checked in the design-intent "
            "table. Vermillion dashed: criteria limits.",
            fidelity_gamut_figure(Rf, Rg, labels=names, failed=failed,
                                  limits={k: v for k, v in lim.items() if k in ("Rf", "Rg")}),
        ))
    return out


def _colour_vector_figures(ev, idx: list[int], key: str, title: str) -> list[ReportFigure]:
    """The TM-30 colour-vector picture of the spectra ``idx`` (none when the bin averages are
    unavailable or undefined)."""
    from ..metrics.tm30_views import colour_vectors
    from .tm30_plots import colour_vector_figure

    tm = getattr(ev, "tm30", None)
    ab_t, ab_r = getattr(tm, "avg_ab_test", None), getattr(tm, "avg_ab_ref", None)
    if ab_t is None or ab_r is None or np.asarray(ab_t).ndim != 3:
        return []
    ref_unit, test = colour_vectors(np.asarray(ab_t)[idx], np.asarray(ab_r)[idx])
    if not np.any(np.isfinite(test)):
        return []
    many = len(idx) > 1
    return [ReportFigure(
        key, title,
        ("Median per hue bin over the samples (arrows) and every sample (grey dots). " if many else "")
        + "Each arrow runs from a hue bin's average colour under the reference (hollow dot, on the 100 % chroma "
        "ring) to the same bin under the test source, in CAM02-UCS scaled by the bin's reference chroma "
        "(ANSI/IES TM-30). Solid blue: chroma gained; dashed vermillion: chroma lost. At the rim: the bin, its "
        "hue and its chroma shift Rcs,h.",
        colour_vector_figure(ref_unit, test, Rcs_h=_matrix(ev, "Rcs_h", 16)[idx]),
    )]

#: The file stems of :func:`report_figures`' keys (``*``: one per spectrum, or ``lot``). A test
#: draws every figure of a single spectrum, of several and of a lot and checks each key
#: against these.
PLOT_STEMS = ("chromaticity", "chromaticity-xy", "fidelity-gamut", "distributions", "spd-*", "cri-*", "hue-bins-*",
              "colour-vectors-*")
#: The files ``--plots DIR`` writes: ``DIR/<key>.svg`` and ``.png`` for the keys of
#: :func:`report_figures`. Another output of the same run may not be one of them.
PLOT_FILE_PATTERNS = tuple(f"{stem}.{ext}" for stem in PLOT_STEMS for ext in ("svg", "png"))

