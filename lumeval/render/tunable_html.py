"""The HTML report of ``lumeval mix`` and ``lumeval series``, and its two figures.

Figures (lumeval's visual language: :mod:`lumeval.render.plots` — Okabe-Ito palette, meaning
carried by marker shape and line style as well as colour, CIE 1960 (u, v) diagrams):

* :func:`trajectory_figure` — the settings' chromaticities joined in setting order on the
  chromaticity diagram (drawn by :func:`lumeval.render.plots.chromaticity_figure`: Planckian
  locus, isotemperature lines, lines of constant Duv), with the ANSI C78.377-2017 quadrangles
  the trajectory crosses, each setting marked by the verdict of its chromaticity requirements
  (:func:`trajectory_markers`) and the ends labelled;
* :func:`figures_versus_setting` — Ra, R9, Rf, Rg, Duv and LER against the setting, with the
  criteria limits over their ranges (dashed) and the settings not reachable shaded.

The report: verdict over the range first (one row per clause, worst setting named), then the
figures at each setting, the pictures, the notes, provenance and the cautions. Text from files
is escaped (the page is a view-model, :class:`TunableView`, laid out by the Jinja2 template
``templates/tunable.html.j2`` with autoescaping). Nothing is computed here but the drawing.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .report_view import FigureView, ProvenanceView
from .tunable import (
    NOT_REACHABLE,
    _margin,
    _notes,
    _per_setting,
    _short,
    _value,
    ansi_category,
    headline,
    range_reason_text,
)
from .view import Cell, Row, Table, cells, plain_number

#: The panels of the figures-versus-setting chart: (figure, axis label).
PANELS = (("Ra", "Ra (CIE 13.3)"), ("R9", "R9 (CIE 13.3)"), ("Rf", "Rf (TM-30 / CIE 224)"), ("Rg", "Rg (TM-30)"),
          ("duv", "Duv (ANSI C78.377 sign)"), ("ler_lm_per_W", "LER (lm/W)"))


def _setting_axis_label(report) -> str:
    if report.kind == "mix":
        return "target CCT (K)"
    from .plots import _lit

    u = report.result.unit  # from a manifest or the command line: escaped like any file text
    return _lit(f"setting ({u})") if u else "setting"


def _settings(report) -> np.ndarray:
    r = report.result
    return np.asarray(r.target_cct_K if report.kind == "mix" else r.settings, dtype=float)


def trajectory_markers(report) -> list[bool | None] | None:
    """The marker of each setting on the trajectory (True ✗, False passed, None hollow): the
    verdict of its chromaticity requirements only (quadrangle, SDCM ellipse, CCT and Duv bands,
    track_locus ...: :func:`lumeval.criteria.verdicts.judges_chromaticity`); a setting that
    failed only, say, Ra keeps a pass marker. None (no criteria) when nothing was judged."""
    from ..criteria.range_clauses import NOT_APPLICABLE
    from ..criteria.verdicts import combine_outcomes, judges_chromaticity

    check = report.check
    if check is None:
        return None
    mine = [rr.outcome for rr in check.results if judges_chromaticity(rr.result.kind, rr.result.figure)]
    out: list[bool | None] = []
    for i in range(len(report.result)):
        outs = [o[i] for o in mine if o[i] != NOT_APPLICABLE]
        out.append({"fail": True, "pass": False}.get(combine_outcomes(outs)) if outs else None)
    return out


def trajectory_figure(report, *, title: str | None = None):
    """The chromaticity trajectory on the CIE 1960 (u, v) diagram with the ANSI categories it
    crosses (see the module docstring). Artists: the base diagram's, plus ``trajectory``."""
    from ..criteria import regions
    from .plots import PALETTE, _ctx, _lit, chromaticity_figure

    r = report.result
    upvp = np.stack([r.figure("u_prime"), r.figure("v_prime")], axis=-1)
    u, v = upvp[:, 0], upvp[:, 1] / 1.5  # CIE 1960 v = v'/1.5 (CIE 15:2004 §8.1)
    cats = sorted({int(c.split()[0]) for c in ansi_category(upvp) if c})
    regs = [{"label": f"ANSI C78.377-2017 {c} K", "vertices": regions.ansi_quadrangle(c).corners_upvp, "space": "u'v'"}
            for c in cats]
    from .report_figures import CHROMATICITY_MARKER_BASIS

    failed = trajectory_markers(report)
    fig = chromaticity_figure(u, v, failed=failed, regions=regs, show_centroid=False,
                              title=title or "Chromaticity trajectory over the settings",
                              marker_basis=CHROMATICITY_MARKER_BASIS)
    ax = fig.axes[0]
    fin = np.isfinite(u) & np.isfinite(v)
    labels = _per_setting(report)[0]
    with _ctx():
        ax.plot(u[fin], v[fin], color=PALETTE["vermillion"] if failed and any(failed) else PALETTE["blue"], lw=1.2,
                ls="-", gid="trajectory", zorder=4, label="trajectory (in setting order)")
        idx = np.flatnonzero(fin)
        for k, ha in ((idx[:1], "right"), (idx[-1:], "left")):
            for i in k:
                ax.annotate(_lit(labels[i]), (u[i], v[i]), xytext=(-6 if ha == "right" else 6, 6), textcoords="offset points",
                            fontsize=7, ha=ha, va="bottom", color="#222222")
    for line in ax.get_lines():
        gid = line.get_gid() or ""
        if gid.startswith("samples-"):
            line.set_label(line.get_label().replace("sample", "setting", 1))
    for leg in fig.legends:
        leg.remove()
    fig.legend(loc="outside lower center", ncols=3, frameon=False, fontsize=7)
    return fig


def _limits_by_figure(report) -> dict[str, list[tuple[float | None, float | None, tuple | None, str]]]:
    """{figure: [(lower, upper, over, clause id)]} of the figure clauses in the check."""
    out: dict[str, list] = {}
    if report.check is None:
        return out
    for rr in report.check.results:
        res = rr.result
        fig = {"|Duv|": "duv"}.get(res.figure, res.figure)
        if fig == "duv" and res.kind == "track_locus":
            out.setdefault("duv", []).append((-res.upper, res.upper, rr.over, res.clause_id))
        elif res.kind in ("figure", "tm30_design_intent"):
            out.setdefault(fig, []).append((res.lower, res.upper, rr.over, res.clause_id))
    return out


def figures_versus_setting(report, *, title: str | None = None):
    """Ra, R9, Rf, Rg, Duv and LER against the setting (six small panels sharing the x axis).

    Points: circles (passed or no criteria), ✗ (the setting failed a clause); settings not
    reachable are shaded grey with a note. Dashed lines: a figure clause's limits over the
    settings it applies to. Artists carry ``gid`` ``panel-<figure>``, ``limit-<clause>``,
    ``unreachable``.
    """
    from .plots import PALETTE, _ctx, _lit, _new_figure

    r = report.result
    s = _settings(report)
    _labels, avail, _ = _per_setting(report)
    limits = _limits_by_figure(report)
    failed = np.zeros(len(r), dtype=bool)
    if report.check is not None:
        failed = np.array([report.check.verdict(i) == "fail" for i in range(len(r))])
    fig = _new_figure(5.6)
    with _ctx():
        axes = fig.subplots(3, 2, sharex=True)
        for ax, (name, lab) in zip(axes.ravel(), PANELS):
            y = r.figure(name)
            fin = np.isfinite(y)
            ax.plot(s[fin], y[fin], color=PALETTE["blue"], lw=1.1, gid=f"panel-{name}")
            ok = fin & ~failed
            bad = fin & failed
            ms = 3.5 if len(r) > 40 else 5
            ax.plot(s[ok], y[ok], ls="none", marker="o", ms=ms, mfc=PALETTE["sky"], mec=PALETTE["black"], mew=0.6)
            if bad.any():
                ax.plot(s[bad], y[bad], ls="none", marker="X", ms=ms + 2, mfc=PALETTE["vermillion"], mec=PALETTE["black"],
                        mew=0.6, gid=f"failed-{name}")
            for lo, hi, over, cid in limits.get(name, []):
                a, b = (over if over is not None else (np.nanmin(s), np.nanmax(s)))
                for lim in (lo, hi):
                    if lim is not None:
                        ax.plot([a, b], [lim, lim], color=PALETTE["black"], lw=1.0, ls=(0, (5, 3)), gid=f"limit-{cid}")
                        ax.annotate(_lit(f"{cid}: {lim:g}"), (b, lim), fontsize=6, ha="right", va="bottom", color="#333333",
                                    xytext=(0, 1), textcoords="offset points")
            if name == "duv":
                ax.axhline(0.0, color=PALETTE["grey"], lw=0.6)
            for i in np.flatnonzero(~np.asarray(avail, dtype=bool)):
                step = np.min(np.diff(s)) if s.size > 1 else 1.0
                ax.axvspan(s[i] - step / 2, s[i] + step / 2, color="#dddddd", lw=0, gid="unreachable")
            ax.set_ylabel(lab, fontsize=7.5)
            ax.tick_params(labelsize=7)
        for ax in axes[-1]:
            ax.set_xlabel(_setting_axis_label(report), fontsize=8)
        note = "○ setting · ✗ setting failed a clause · dashed: a clause's limit over its range"
        if not np.all(avail):
            note += " · grey: not reachable"
        fig.suptitle((title or "Figures versus setting") + "\n" + note, x=0.01, ha="left", fontsize=8.5)
    return fig


_RANGE_WORDS = {
    "pass": "Every requirement is met over its range.",
    "fail": "At least one requirement is not met over its range.",
    "not judged": "No requirement fails, but at least one could not be judged over its range (a setting in it "
                  "is not reachable or there is none).",
    "indeterminate": "No requirement fails, but at least one cannot be decided.",
    "not valid": "At least one requirement is judged on a figure outside its validity range (not a pass).",
}

_MIX_CAUTION = ("A channel mix is a model (linear in radiant power): thermal droop and current-dependent spectra are "
                "not modelled; confirm setpoints by measurement.")


@dataclass(frozen=True)
class TunableView:
    """Everything the mix/series page shows, in words (laid out by ``templates/tunable.html.j2``)."""

    title: str
    subtitle: tuple[str, ...]
    judged: bool
    criteria_file: str
    identification: tuple[tuple[str, str], ...]
    overall: str
    summary: str
    clauses: Table | None
    range_notes: tuple[str, ...]
    settings: Table
    settings_note: str
    unreachable: tuple[str, str] | None
    pictures: tuple[FigureView, ...]
    method: str
    notes: tuple[str, ...]
    provenance: ProvenanceView
    cautions: tuple[str, ...]


def _clauses_table(check) -> Table:
    """One row per clause: where it applies, its limit, the verdict over the range, the worst setting."""
    rows = []
    for rr in check.results:
        res = rr.result
        where = ("every evaluated setting" if rr.over is None and res.kind not in ("series_shift", "track_locus")
                 else ("every setting" if rr.over is None else f"{rr.over[0]:g}–{rr.over[1]:g} {check.unit}".strip()))
        w = rr.worst
        worst = (check.labels[w], _value(res, w), _margin(res, w)) if w is not None else ("—", "—", "—")
        rows.append(Row(cells(f"{res.clause_id}: {res.label}", where, res.limit_text) + (Cell("", outcome=rr.range_outcome),)
                        + cells(*worst), rr.range_outcome == "fail"))
    return Table(("Requirement", "Applies at", "Limit", "Verdict over the range", "Worst setting", "Worst value", "Margin"),
                 tuple(rows), (False, False, False, False, False, True, True))


def _settings_table(report, labels, avail) -> Table:
    """The figures at each setting (a mix: the channel weights too), with each clause's verdict."""
    r, check = report.result, report.check
    mix = report.kind == "mix"
    head = ["Setting"] + ([f"w {c}" for c in r.channel_names] if mix else ["Spectrum", "Δu′v′"])
    head += [lab for _, lab, _ in headline()] + ["ANSI category"]
    if check is not None:
        head += [rr.result.clause_id for rr in check.results] + ["Verdict"]
    cats = ansi_category(np.stack([r.figure("u_prime"), r.figure("v_prime")], axis=-1))
    figs = {name: r.figure(name) for name, _, _ in headline()}
    rows = []
    for i in range(len(r)):
        row = [Cell(labels[i])]
        if mix:
            row += [Cell(plain_number(w, ".4f")) for w in r.weights[i]]
        else:
            row += [Cell(_short(r.evaluation.spectra.sources[i]), mono=True), Cell(plain_number(r.delta_upvp[i], ".4f"))]
        if avail[i]:
            row += [Cell(plain_number(figs[name][i], spec)) for name, _, spec in headline()] + [Cell(cats[i] or "—")]
        else:
            row += [Cell(NOT_REACHABLE, strong=True)] + [Cell()] * len(headline())
        if check is not None:
            row += [Cell("", outcome=rr.outcome[i]) if rr.outcome[i] != "n/a" else Cell("·") for rr in check.results]
            v = check.verdict(i)
            row.append(Cell("", outcome=v) if v != "n/a" else Cell("·"))
        rows.append(Row(tuple(row), check is not None and check.verdict(i) == "fail"))
    numeric = (False,) + ((True,) * len(r.channel_names) if mix else (False, True)) + (True,) * len(headline())
    return Table(tuple(head), tuple(rows), numeric, css="dense")


def tunable_view(report, *, command: str | None = None, generated_at=None) -> TunableView:
    """The mix or series report as a :class:`TunableView` (the figures drawn and inlined here)."""
    from .html import inline_svg
    from .plots import figure_svg
    from .provenance import collect_provenance
    from .report_view import provenance_view
    from .view import cautions

    r, check = report.result, report.check
    labels, avail, reasons = _per_setting(report)
    n = len(r)
    mix = report.kind == "mix"
    if mix:
        title, sub = f"Channel mix: {len(r.channels)} channels, {n} setpoints", "channels " + ", ".join(r.channel_names)
    else:
        title, sub = f"Measured series: {n} settings", f"settings from {r.setting_source}; Δu′v′ from {r.reference}"
    ev = r.evaluation
    prov = collect_provenance(list(report.inputs), methods=getattr(ev, "methods", None) or None, generated_at=generated_at)
    pictures = []
    for k, (key, fig, cap) in enumerate((
        ("trajectory", trajectory_figure(report),
         "The chromaticity at each setting, joined in setting order, on the CIE 1960 (u, v) diagram with the Planckian "
         "locus, isotemperature lines and lines of constant Duv; hatched outlines: the ANSI C78.377-2017 quadrangles the "
         "trajectory falls in. Markers show the chromaticity requirements only (quadrangle, SDCM ellipse, CCT and Duv "
         "bands, distance from the locus): ✗ failed one, filled circle met all; a setting that failed another "
         "requirement (e.g. Ra) is marked by its chromaticity alone — its verdict is in the table."),
        ("versus-setting", figures_versus_setting(report),
         "Ra, R9, Rf, Rg, Duv and LER against the setting; dashed lines: a clause's limits over its range."),
    )):
        pictures.append(FigureView(key, "", cap, inline_svg(figure_svg(fig), f"t{k}", key)))
    unreach = [i for i in range(n) if not avail[i]]
    return TunableView(
        title=title, subtitle=(sub, f"generated {prov.generated_at}", f"lumeval {dict(prov.versions).get('lumeval', '?')}"),
        judged=check is not None,
        criteria_file="" if check is None else str(check.criteria_file),
        identification=() if check is None else tuple((str(k), str(v)) for k, v in check.identification.items()),
        overall="not judged" if check is None else check.overall,
        summary="" if check is None else _RANGE_WORDS.get(check.overall, check.overall),
        clauses=None if check is None else _clauses_table(check),
        range_notes=() if check is None else tuple(
            [range_reason_text(rr) for rr in check.results if rr.range_reason]
            + [str(x) for x in check.notes]),
        settings=_settings_table(report, labels, avail),
        settings_note="Ra, R9: CIE 13.3-1995. Rf, Rg: CIE 224:2017 / ANSI/IES TM-30. Duv: ANSI C78.377 sign, computed by "
                      "Ohno (2014). ANSI category: the ANSI C78.377-2017 quadrangle the chromaticity lies in. "
                      + ("Weights: radiant-power fraction of each channel's full-drive output, the largest 1. " if mix else "")
                      + "Every figure of every setting is in the JSON and CSV outputs.",
        unreachable=(f"{len(unreach)} setpoint(s) not reachable",
                     f"({', '.join(labels[i] for i in unreach)}): {reasons[unreach[0]].removeprefix('not reachable: ')}")
        if unreach else None,
        pictures=tuple(pictures),
        method=str(r.method) if mix else "",
        notes=tuple(str(x) for x in _notes(report)),
        provenance=provenance_view(prov, command),
        cautions=cautions() + ((_MIX_CAUTION,) if mix else ()),
    )


def render_tunable_html(report, *, command: str | None = None, generated_at=None) -> str:
    """The report as one self-contained HTML document (``templates/tunable.html.j2``)."""
    from .html import render_template

    return render_template("tunable.html.j2", v=tunable_view(report, command=command, generated_at=generated_at))


def write_tunable_html(path, report, *, command: str | None = None) -> Path:
    """Write the report atomically to ``path`` (a regular file; checked by the command first)."""
    from .._io import write_text

    p = Path(path)
    write_text(p, render_tunable_html(report, command=command), option="--html")
    return p
