"""The HTML report of ``lumeval mix`` and ``lumeval series``, and its two figures.

Figures (lumeval's visual language: :mod:`lumeval.render.plots` — Okabe-Ito palette, meaning
carried by marker shape and line style as well as colour, CIE 1960 (u, v) diagrams):

* :func:`trajectory_figure` — the settings' chromaticities joined in setting order on the
  chromaticity diagram (drawn by :func:`lumeval.render.plots.chromaticity_figure`: Planckian
  locus, isotemperature lines, lines of constant Duv), with the ANSI C78.377-2017 quadrangles
  the trajectory crosses, each setting marked by its verdict and the ends labelled;
* :func:`figures_versus_setting` — Ra, R9, Rf, Rg, Duv and LER against the setting, with the
  criteria limits over their ranges (dashed) and the settings not reachable shaded.

The report: verdict over the range first (one row per clause, worst setting named), then the
figures at each setting, the pictures, the notes, provenance and the cautions. Text from files
is escaped. Nothing is computed here but the drawing.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .tunable import (
    NOT_REACHABLE,
    _margin,
    _notes,
    _per_setting,
    _short,
    _value,
    ansi_category,
    headline,
)

#: The panels of the figures-versus-setting chart: (figure, axis label).
PANELS = (("Ra", "Ra (CIE 13.3)"), ("R9", "R9 (CIE 13.3)"), ("Rf", "Rf (TM-30 / CIE 224)"), ("Rg", "Rg (TM-30)"),
          ("duv", "Duv (ANSI C78.377 sign)"), ("ler_lm_per_W", "LER (lm/W)"))


def _setting_axis_label(report) -> str:
    if report.kind == "mix":
        return "target CCT (K)"
    u = report.result.unit
    return f"setting ({u})" if u else "setting"


def _settings(report) -> np.ndarray:
    r = report.result
    return np.asarray(r.target_cct_K if report.kind == "mix" else r.settings, dtype=float)


def trajectory_figure(report, *, title: str | None = None):
    """The chromaticity trajectory on the CIE 1960 (u, v) diagram with the ANSI categories it
    crosses (see the module docstring). Artists: the base diagram's, plus ``trajectory``."""
    from ..criteria import regions
    from .plots import PALETTE, _ctx, chromaticity_figure

    r = report.result
    upvp = np.stack([r.figure("u_prime"), r.figure("v_prime")], axis=-1)
    u, v = upvp[:, 0], upvp[:, 1] / 1.5  # CIE 1960 v = v'/1.5 (CIE 15:2004 §8.1)
    cats = sorted({int(c.split()[0]) for c in ansi_category(upvp) if c})
    regs = [{"label": f"ANSI C78.377-2017 {c} K", "vertices": regions.ansi_quadrangle(c).corners_upvp, "space": "u'v'"}
            for c in cats]
    failed = None
    if report.check is not None:
        failed = [{"fail": True, "pass": False}.get(report.check.verdict(i)) for i in range(len(r))]
    fig = chromaticity_figure(u, v, failed=failed, regions=regs, show_centroid=False,
                              title=title or "Chromaticity trajectory over the settings")
    ax = fig.axes[0]
    fin = np.isfinite(u) & np.isfinite(v)
    labels = _per_setting(report)[0]
    with _ctx():
        ax.plot(u[fin], v[fin], color=PALETTE["vermillion"] if failed and any(failed) else PALETTE["blue"], lw=1.2,
                ls="-", gid="trajectory", zorder=4, label="trajectory (in setting order)")
        idx = np.flatnonzero(fin)
        for k, ha in ((idx[:1], "right"), (idx[-1:], "left")):
            for i in k:
                ax.annotate(labels[i], (u[i], v[i]), xytext=(-6 if ha == "right" else 6, 6), textcoords="offset points",
                            fontsize=7, ha=ha, va="bottom", color="#222222")
    for line in ax.get_lines():
        gid = line.get_gid() or ""
        if gid.startswith("samples-"):
            line.set_label(line.get_label().replace("sample:", "setting:"))
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
    from .plots import PALETTE, _ctx, _new_figure

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
                        ax.annotate(f"{cid}: {lim:g}", (b, lim), fontsize=6, ha="right", va="bottom", color="#333333",
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


def render_tunable_html(report, *, command: str | None = None, generated_at=None) -> str:
    """The report as one self-contained HTML document."""
    from .html import _CSS, _badge, _e, _num, _table, inline_svg
    from .plots import figure_svg
    from .provenance import collect_provenance
    from .tables import CAUTIONS

    r = report.result
    labels, avail, reasons = _per_setting(report)
    check = report.check
    n = len(r)
    if report.kind == "mix":
        title = f"Channel mix: {len(r.channels)} channels, {n} setpoints"
        sub = "channels " + ", ".join(r.channel_names)
    else:
        title = f"Measured series: {n} settings"
        sub = f"settings from {r.setting_source}; Δu′v′ from {r.reference}"
    ev = r.evaluation
    prov = collect_provenance(list(report.inputs), methods=getattr(ev, "methods", None) or None, generated_at=generated_at)
    body = [f"<header><h1>{_e(title)}</h1><p class=\"sub\">{_e(sub)} · generated {_e(prov.generated_at)} · lumeval "
            f"{_e(dict(prov.versions).get('lumeval', '?'))}</p></header>"]

    body.append('<section id="verdict"><h2>Verdict over the range</h2>')
    if check is None:
        body.append('<div class="summary not-judged"><p class="big">' + _badge("not judged")
                    + " No acceptance criteria were given: figures only.</p></div>")
    else:
        overall = check.overall
        words = {"pass": "Every requirement is met over its range.", "fail": "At least one requirement is not met over its range.",
                 "not judged": "No requirement fails, but at least one could not be judged over its range (a setting in it "
                 "is not reachable or there is none).",
                 "indeterminate": "No requirement fails, but at least one cannot be decided.",
                 "not valid": "At least one requirement is judged on a figure outside its validity range (not a pass)."
                 }.get(overall, overall)
        bits = [f'criteria file <span class="mono">{_e(check.criteria_file)}</span>']
        bits += [f"{_e(k)}: {_e(v)}" for k, v in check.identification.items()]
        body.append('<p class="sub">' + " · ".join(bits) + "</p>")
        body.append(f'<div class="summary {overall.replace(" ", "-")}"><p class="big">{_badge(overall)} {_e(words)}</p></div>')
        rows, classes = [], []
        for rr in check.results:
            res = rr.result
            where = ("every evaluated setting" if rr.over is None and res.kind not in ("series_shift", "track_locus")
                     else ("every setting" if rr.over is None else f"{rr.over[0]:g}–{rr.over[1]:g} {check.unit}".strip()))
            w = rr.worst
            rows.append([_e(f"{res.clause_id}: {res.label}"), _e(where), _e(res.limit_text), _badge(rr.range_outcome),
                         _e(check.labels[w]) if w is not None else "—",
                         _e(_value(res, w)) if w is not None else "—",
                         _e(_margin(res, w)) if w is not None else "—"])
            classes.append("fail" if rr.range_outcome == "fail" else "")
        body.append(_table(["Requirement", "Applies at", "Limit", "Verdict over the range", "Worst setting", "Worst value",
                            "Margin"], rows, numeric=[False, False, False, False, False, True, True], row_classes=classes))
        for rr in check.results:
            if rr.range_reason:
                body.append(f'<p class="sub">{_e(rr.result.clause_id)}: not judged over the range: {_e(rr.range_reason)}</p>')
        for note in check.notes:
            body.append(f'<p class="sub">{_e(note)}</p>')
    body.append("</section>")

    # ---- per setting
    body.append('<section id="settings"><h2>Figures at each setting</h2>')
    head = ["Setting"]
    if report.kind == "mix":
        head += [f"w {c}" for c in r.channel_names]
    else:
        head += ["Spectrum", "Δu′v′"]
    head += [lab for _, lab, _ in headline()] + ["ANSI category"]
    if check is not None:
        head += [rr.result.clause_id for rr in check.results] + ["Verdict"]
    cats = ansi_category(np.stack([r.figure("u_prime"), r.figure("v_prime")], axis=-1))
    figs = {name: r.figure(name) for name, _, _ in headline()}
    rows, classes = [], []
    for i in range(n):
        row = [_e(labels[i])]
        if report.kind == "mix":
            row += [_num(w, ".4f") for w in r.weights[i]]
        else:
            row += [f'<span class="mono">{_e(_short(ev.spectra.sources[i]))}</span>', _num(r.delta_upvp[i], ".4f")]
        if avail[i]:
            row += [_num(figs[name][i], spec) for name, _, spec in headline()] + [_e(cats[i] or "—")]
        else:
            row += [f"<b>{_e(NOT_REACHABLE)}</b>"] + [""] * len(headline())
        if check is not None:
            row += [_badge(rr.outcome[i]) if rr.outcome[i] != "n/a" else "·" for rr in check.results]
            v = check.verdict(i)
            row.append(_badge(v) if v != "n/a" else "·")
        rows.append(row)
        classes.append("fail" if check is not None and check.verdict(i) == "fail" else "")
    k0 = 1 + (len(r.channel_names) if report.kind == "mix" else 2)
    numeric = [False] + ([True] * len(r.channel_names) if report.kind == "mix" else [False, True]) + [True] * len(headline())
    numeric += [False] * (len(head) - len(numeric))
    del k0
    body.append(_table(head, rows, numeric=numeric, row_classes=classes, cls="dense"))
    body.append('<p class="sub">Ra, R9: CIE 13.3-1995. Rf, Rg: CIE 224:2017 / ANSI/IES TM-30. Duv: ANSI C78.377 sign, '
                "computed by Ohno (2014). ANSI category: the ANSI C78.377-2017 quadrangle the chromaticity lies in. "
                + ("Weights: radiant-power fraction of each channel's full-drive output, the largest 1. " if report.kind == "mix" else "")
                + "Every figure of every setting is in the JSON and CSV outputs.</p>")
    unreach = [i for i in range(n) if not avail[i]]
    if unreach:
        body.append(f'<p class="sub"><b>{len(unreach)} setpoint(s) not reachable</b> '
                    f"({_e(', '.join(labels[i] for i in unreach))}): {_e(reasons[unreach[0]].removeprefix('not reachable: '))}</p>")
    body.append("</section>")

    # ---- pictures
    body.append('<section id="pictures"><h2>Pictures</h2>')
    for k, (key, fig, cap) in enumerate((
        ("trajectory", trajectory_figure(report),
         "The chromaticity at each setting, joined in setting order, on the CIE 1960 (u, v) diagram with the Planckian "
         "locus, isotemperature lines and lines of constant Duv; hatched outlines: the ANSI C78.377-2017 quadrangles the "
         "trajectory falls in. ✗: a setting that failed a clause."),
        ("versus-setting", figures_versus_setting(report),
         "Ra, R9, Rf, Rg, Duv and LER against the setting; dashed lines: a clause's limits over its range."),
    )):
        svg = inline_svg(figure_svg(fig), f"t{k}", key)
        body.append(f'<figure id="fig-{key}" data-figure="{key}">{svg}<figcaption>{_e(cap)}</figcaption></figure>')
    body.append("</section>")

    # ---- notes, method, provenance, cautions
    body.append('<section id="notes"><h2>Notes</h2><ul class="notes">')
    if report.kind == "mix":
        body.append(f"<li><b>Method</b>: {_e(r.method)}</li>")
    for note in _notes(report):
        body.append(f"<li>{_e(note)}</li>")
    body.append("</ul></section>")
    body.append('<section id="provenance"><h2>Provenance</h2>')
    body.append(_table(["File", "SHA-256", "Bytes"], [
        [f'<span class="mono">{_e(f.path)}</span>', f'<span class="mono">{_e(f.sha256 or "unreadable")}</span>',
         _e(f.size_bytes if f.size_bytes is not None else "n/a")] for f in prov.files], numeric=[False, False, True]))
    body.append(_table(["Package", "Version"], [[_e(a), _e(b)] for a, b in prov.versions]))
    body.append(_table(["Topic", "Method"], [[_e(a), _e(b)] for a, b in prov.methods]))
    if command:
        body.append(_table(["", ""], [["Command", f'<span class="mono">{_e(command)}</span>']]))
    body.append("</section>")
    body.append('<section id="cautions"><h2>Cautions</h2><div class="cautions"><ul>'
                + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS)
                + ("<li>" + _e("A channel mix is a model (linear in radiant power): thermal droop and current-dependent "
                               "spectra are not modelled; confirm setpoints by measurement.") + "</li>" if report.kind == "mix" else "")
                + "</ul></div></section>")
    body.append("<footer>Made with lumeval. This file is self-contained: it loads nothing from the network.</footer>")
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>{_e(title)}</title>\n<style>{_CSS}</style>\n</head>\n<body>\n" + "\n".join(body) + "\n</body>\n</html>\n")


def write_tunable_html(path, report, *, command: str | None = None) -> Path:
    """Write the report atomically to ``path`` (a regular file; checked by the command first)."""
    from .._io import write_text

    p = Path(path)
    write_text(p, render_tunable_html(report, command=command), option="--html")
    return p
