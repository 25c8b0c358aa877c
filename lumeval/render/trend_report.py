"""Renderings of the production history: lot lists and trends (terminal, JSON, HTML with charts).

Nothing is computed here beyond formatting and drawing; the numbers come from
:mod:`lumeval.store.trend`. Text from the store (lot labels, products, file names) is untrusted:
control characters are removed for the terminal, everything is escaped in HTML.
"""

from __future__ import annotations

import contextlib
import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .report_view import FigureView
from .view import Cell, Row, Table, cells


def plain(s) -> str:
    """Text safe for a terminal line: control, bidi-override and escape characters shown as
    visible escapes (the one rule of :func:`lumeval.render.safe.clean`)."""
    from .safe import clean

    return clean("" if s is None else s)


def _fmt(v, spec: str = ".5g") -> str:
    """``v`` with the significant digits of ``spec`` (".5g": five) in positional notation, as the
    other numbers of its column: a lot mean of -9.5925e-05 among -0.00045617 read as another
    kind of number (now -0.000095925)."""
    if v is None:
        return "n/a"
    f = float(v)
    if not math.isfinite(f):
        return "n/a"
    if not spec.endswith("g"):
        return format(f, spec)
    from ..figures import format_significant

    return format_significant(f, int(spec[1:-1]))


# --------------------------------------------------------------------------- list


def list_document(lots, store: str) -> dict:
    """The ``lumeval history list --format json`` document (``lumeval/schemas/history_list.schema.json``)."""
    from ..schemas import header

    return {**header("history_list"), "store": store, "lots": [lot.as_dict() for lot in lots]}


def print_list(lots, store: str, console=None) -> None:
    from rich.console import JustifyMethod
    from rich.table import Table
    from rich.text import Text

    from .safe import console as safe_console

    console = console or safe_console(highlight=False, soft_wrap=False)  # a closed pipe: exit 2, not 1
    if not lots:
        console.print(Text(f"No lots recorded in {plain(store)} (with these filters)."))
        return
    products = {lot.product for lot in lots}
    one = len(products) == 1
    title = f"Lots recorded in {plain(store)}" + (f" — product: {plain(next(iter(products)))}" if one and lot_product(lots) else "")
    t = Table(title=Text(title), title_justify="left")
    cols: list[tuple[str, JustifyMethod]] = [("lot", "right"), ("label", "left"), ("product", "left"), ("recorded (UTC)", "left"),
            ("samples", "right"), ("yield %", "right"), ("verdict", "left")]
    if one:
        cols = [c for c in cols if c[0] != "product"]
    for col, just in cols:  # labels and products are the user's text: folded, never cut
        t.add_column(col, justify=just, no_wrap=col not in ("label", "product"),
                     overflow="fold" if col in ("label", "product") else "ellipsis")
    for lot in lots:
        verdict = {"pass": "✓ pass", "fail": "✗ FAIL"}.get(lot.verdict, lot.verdict)
        row = [str(lot.id), Text(plain(lot.label or "")), Text(plain(lot.product or "")), lot.recorded_at,
               str(lot.samples), _fmt(lot.yield_percent, ".1f"), verdict]
        if one:
            del row[2]
        t.add_row(*row)
    console.print(t)


def lot_product(lots):
    return lots[0].product if lots else None


# --------------------------------------------------------------------------- trend, terminal


def signal_lines(tr, lot_id: int | None = None) -> list[str]:
    """One plain line per signal (of one lot when ``lot_id`` is given)."""
    out = []
    for s in tr.signals:
        p = tr.points[s.index]
        if lot_id is not None and p.lot != lot_id:
            continue
        name = f"lot {p.lot}" + (f" ({plain(p.label)})" if p.label else "")
        out.append(f"{name}: {tr.figure} {_CHART_NAMES[s.chart]} {s.rule}: {s.text}")
    return out


_CHART_NAMES = {"xbar": "X̄ chart", "s": "s chart", "individuals": "individuals chart",
                "moving_range": "moving-range chart", "ewma": "EWMA chart"}


def print_trend(tr, console=None) -> None:
    from rich.table import Table
    from rich.text import Text

    from ..store.trend import trend_document
    from .safe import console as safe_console

    doc = trend_document(tr)
    console = console or safe_console(highlight=False, soft_wrap=False)  # a closed pipe: exit 2, not 1
    unit = f" {tr.unit}" if tr.unit else ""
    head = (f"Trend of {tr.label}{unit} over {len(tr.points)} lots"
            + (f" of {plain(tr.product)}" if tr.product else "") + f" — {tr.chart} chart, baseline {tr.baseline_rule}")
    console.print(Text(head, style="bold"))
    if tr.chart == "xbar-s":
        lim = (f"X̄: centre {_fmt(doc['centre_line'])}, limits {_fmt(doc['lcl'])} … {_fmt(doc['ucl'])}"
               if doc["ucl"] is not None else f"X̄: centre {_fmt(doc['centre_line'])}, limits per lot (lot sizes differ)")
        lim += f"; s: centre {_fmt(doc['s_chart']['centre_line'])}; σ̂ within lots {_fmt(doc['sigma'])}"
    else:
        lim = (f"individuals: centre {_fmt(doc['centre_line'])}, limits {_fmt(doc['lcl'])} … {_fmt(doc['ucl'])}; "
               f"moving range: centre {_fmt(doc['moving_range']['centre_line'])}, UCL {_fmt(doc['moving_range']['ucl'])}")
    lim += f"; EWMA λ = {tr.ewma.lam:g}, L = {tr.ewma.L:g}"
    console.print(Text(lim))
    flagged: dict[int, list[str]] = {}
    for s in tr.signals:
        flagged.setdefault(s.index, []).append(f"{s.chart}:{s.rule}")
    t = Table()
    cols = ["lot", "label", "n", "mean" if tr.chart == "xbar-s" else "value", "s" if tr.chart == "xbar-s" else "MR",
            "EWMA", "signals"]
    for c in cols:
        t.add_column(c, justify="left" if c in ("label", "signals") else "right",
                     overflow="fold" if c == "label" else "ellipsis")  # the user's label: folded, never cut
    for i, p in enumerate(tr.points):
        second = p.s if tr.chart == "xbar-s" else tr.main.moving_range[i]
        t.add_row(str(p.lot) + ("ᴮ" if tr.baseline[i] else ""), Text(plain(p.label or "")), str(p.n), _fmt(p.mean),
                  _fmt(second, ".4g"), _fmt(tr.ewma.z[i]), Text(", ".join(flagged.get(i, [])) or "—"))
    console.print(t)
    console.print(Text("ᴮ baseline lot (estimates the limits)", style="dim"))
    lines = signal_lines(tr)
    if lines:
        console.print(Text(f"{len(lines)} signal{'s' if len(lines) != 1 else ''}:", style="bold"))
        for line in lines:
            console.print(Text("  ⚠ " + line))
    else:
        console.print(Text("No signal: every lot is inside the limits and no Western Electric rule is broken."))
    for n in tr.notes:
        console.print(Text("note: " + n, style="dim"))
    # the chart cautions and the report cautions, once at the end, as the JSON and HTML carry them
    for c in doc["cautions"]:
        console.print(Text("Caution: " + c, style="dim"))


# --------------------------------------------------------------------------- trend, HTML figures


def trend_figures(tr) -> list[tuple[str, str, str, object]]:
    """(key, title, caption, matplotlib Figure) for the trend's charts, in lumeval's report style
    (Okabe-Ito palette, meanings also carried by line style and marker shape)."""
    from .plots import PALETTE, _ctx, _new_figure

    m = len(tr.points)
    x = np.arange(1, m + 1)
    labels = [str(p.lot) for p in tr.points]
    sig_by_chart: dict[str, set] = {}
    for s in tr.signals:
        sig_by_chart.setdefault(s.chart, set()).add(s.index)
    base = np.flatnonzero(tr.baseline)

    def panel(ax, y, cl, ucl, lcl, chart, ylabel):
        y = np.asarray(y, dtype=float)
        if base.size:
            ax.axvspan(base[0] + 0.5, base[-1] + 1.5, color="#f2f2f2", zorder=0, lw=0)
        ax.plot(x, np.broadcast_to(cl, (m,)), color=PALETTE["black"], lw=1.0, ls="-", label="centre line")
        ax.plot(x, np.broadcast_to(ucl, (m,)), color=PALETTE["blue"], lw=1.0, ls="--", drawstyle="steps-mid",
                label="control limits")
        if lcl is not None:
            ax.plot(x, np.broadcast_to(lcl, (m,)), color=PALETTE["blue"], lw=1.0, ls="--", drawstyle="steps-mid")
        ax.plot(x, y, color=PALETTE["grey"], lw=0.8, marker="o", ms=4, mfc="white", mec=PALETTE["black"],
                label="lot")
        hit = sorted(sig_by_chart.get(chart, ()))
        if hit:
            ax.plot(x[hit], y[hit], ls="none", marker="D", ms=7, mfc=PALETTE["vermillion"], mec=PALETTE["black"],
                    label="signal")
        ax.set_ylabel(ylabel)
        ax.set_xlim(0.5, m + 0.5)
        step = max(1, int(math.ceil(m / 25)))
        ax.set_xticks(x[::step])
        ax.set_xticklabels(labels[::step], rotation=0 if m <= 25 else 45)
        ax.grid(axis="y", color="#dddddd", lw=0.6)

    out = []
    unit = f" ({tr.unit})" if tr.unit else ""
    main = tr.main
    with _ctx():
        fig = _new_figure(4.6)
        ax1, ax2 = fig.subplots(2, 1, sharex=True, height_ratios=[3, 2])
        if tr.chart == "xbar-s":
            panel(ax1, [p.mean for p in tr.points], main.grand_mean, main.xbar_ucl, main.xbar_lcl, "xbar",
                  f"lot mean{unit}")
            panel(ax2, [p.s for p in tr.points], main.s_bar, main.s_ucl, main.s_lcl, "s", f"within-lot s{unit}")
            title, key = "X̄ and s charts", "xbar-s"
            cap = ("Top: each lot's mean with the limits x̿ ± A3 s̄; bottom: each lot's standard deviation with B3 s̄ and "
                   "B4 s̄ (Montgomery §6.3). Shaded: the baseline lots. Diamonds: signals.")
        else:
            panel(ax1, [p.mean for p in tr.points], main.centre, main.ucl, main.lcl, "individuals", f"value{unit}")
            panel(ax2, main.moving_range, main.mr_bar, main.mr_ucl, None, "moving_range", f"moving range{unit}")
            title, key = "Individuals and moving-range charts", "i-mr"
            cap = ("Top: one value per lot with the limits x̄ ± 3 MR̄/d2; bottom: the moving range with D4 MR̄ "
                   "(Montgomery §6.4). Shaded: the baseline lots. Diamonds: signals.")
        ax2.set_xlabel("lot (store number, in recording order)")
        h, lab = ax1.get_legend_handles_labels()
        ax1.legend(h, lab, loc="upper left", ncols=4, frameon=False, fontsize=7.5)
        out.append((key, f"{tr.label}: {title}", cap, fig))

        fig = _new_figure(2.8)
        ax = fig.subplots()
        panel(ax, tr.ewma.z, tr.ewma.centre, tr.ewma.ucl, tr.ewma.lcl, "ewma", f"EWMA{unit}")
        ax.set_xlabel("lot (store number, in recording order)")
        out.append(("ewma", f"{tr.label}: EWMA chart",
                    f"z_i = λ x_i + (1 − λ) z_(i−1) with λ = {tr.ewma.lam:g}, limits at L = {tr.ewma.L:g} "
                    "(Montgomery §9.2); it accumulates small persistent shifts that single lots do not show.", fig))
    return out


@dataclass(frozen=True)
class TrendView:
    """Everything the trend page shows, in words (laid out by ``templates/trend.html.j2``)."""

    title: str
    subtitle: tuple[str, ...]
    signalled: bool
    summary: str
    chart_line: str
    charts: tuple[tuple[str | None, tuple[FigureView, ...]], ...]
    signals: tuple[tuple[str | None, tuple[str, ...]], ...]
    lots: Table
    limits: Table
    notes: tuple[str, ...]
    meta: Table
    sources: tuple[str, ...]
    software: Table
    cautions: tuple[str, ...]


def _lots_table(tr) -> Table:
    sig_idx = {s.index for s in tr.signals}
    rows = []
    for i, p in enumerate(tr.points):
        second = p.s if tr.chart == "xbar-s" else tr.main.moving_range[i]
        rows.append(Row(cells(p.lot, p.label or "", p.recorded_at, p.n, _fmt(p.mean), _fmt(second, ".4g"),
                              _fmt(tr.ewma.z[i]), "baseline" if tr.baseline[i] else "",
                              ", ".join(f"{s.chart} {s.rule}" for s in tr.signals if s.index == i)),
                        css="signal" if i in sig_idx else ""))
    return Table(("Lot", "Label", "Recorded (UTC)", "n", "Mean", "s" if tr.chart == "xbar-s" else "MR", "EWMA", "Role",
                  "Signals"), tuple(rows), (True, False, False, True, True, True, True, False, False))


def _limits_table(tr, doc) -> Table:
    limits = [("Centre line", _fmt(doc["centre_line"])), ("UCL", _fmt(doc["ucl"])), ("LCL", _fmt(doc["lcl"])),
              ("σ̂", _fmt(doc["sigma"]))]
    if doc["s_chart"]:
        limits.append(("s chart centre / UCL / LCL", " / ".join(_fmt(doc["s_chart"][k]) for k in ("centre_line", "ucl", "lcl"))))
    if doc["moving_range"]:
        limits.append(("MR chart centre / UCL", " / ".join(_fmt(doc["moving_range"][k]) for k in ("centre_line", "ucl"))))
    limits.append(("EWMA λ, L", f"{tr.ewma.lam:g}, {tr.ewma.L:g}"))
    return Table(("", ""), tuple(Row(cells(a, b)) for a, b in limits))


def trend_view(tr, *, chromaticity: list | None = None, command: str | None = None, generated_at=None) -> TrendView:
    """The trend report as a :class:`TrendView` (the charts drawn and inlined here)."""
    import datetime as _dt
    from importlib.metadata import PackageNotFoundError, version

    from .. import __version__
    from ..store.trend import trend_document
    from .html import inline_svg
    from .plots import figure_svg
    from .provenance import package_versions

    trends = [tr] + list(chromaticity or [])
    when = (generated_at or _dt.datetime.now(_dt.UTC).replace(microsecond=0)).isoformat()
    doc = trend_document(tr)
    n_sig = len(tr.signals)
    charts, k = [], 0
    for t_ in trends:
        figs = []
        for key, ftitle, cap, fig in trend_figures(t_):
            figs.append(FigureView(f"{t_.figure}-{key}", ftitle, cap, inline_svg(figure_svg(fig), f"t{k}", ftitle)))
            k += 1
        charts.append((None if t_ is tr else t_.label, tuple(figs)))
    versions = list(package_versions())
    for pkg in ("SQLAlchemy",) + (("psycopg",) if tr.store.startswith("postgres") else ()):
        with contextlib.suppress(PackageNotFoundError):
            versions.append((pkg, version(pkg)))
    meta = [Row((Cell("Store"), Cell(tr.store, mono=True))), Row(cells("Generated", when))]
    if command:
        meta.append(Row((Cell("Command"), Cell(command, mono=True))))
    return TrendView(
        title=f"Production trend: {tr.label}" + (f" — {tr.product}" if tr.product else ""),
        subtitle=(f"{len(tr.points)} lots", f"store {tr.store}", f"generated {when}", f"lumeval {__version__}"),
        signalled=bool(n_sig),
        summary=(f"{n_sig} control-chart signal{'s' if n_sig != 1 else ''} on {tr.label}: the process may have changed; "
                 "look at the lots listed below." if n_sig else
                 f"No control-chart signal on {tr.label}: the lots behave like the baseline."),
        chart_line=f"Figure {tr.label}{(' (' + tr.unit + ')') if tr.unit else ''}; {tr.chart} chart; baseline {tr.baseline_rule}.",
        charts=tuple(charts),
        signals=tuple((t_.label if len(trends) > 1 else None, tuple(signal_lines(t_))) for t_ in trends),
        lots=_lots_table(tr), limits=_limits_table(tr, doc), notes=tuple(str(n) for n in tr.notes),
        meta=Table(("", ""), tuple(meta)), sources=tuple(str(x) for x in doc["sources"]),
        software=Table(("Package", "Version"), tuple(Row(cells(a, b)) for a, b in versions)),
        cautions=tuple(str(c) for c in doc["cautions"]),
    )


def render_trend_html(tr, *, chromaticity: list | None = None, command: str | None = None, generated_at=None) -> str:
    """The trend report as one self-contained HTML document: charts, signals, lots, provenance,
    cautions. ``chromaticity``: further trends (the centroid charts) drawn after the main one.
    A view-model (:class:`TrendView`) laid out by the Jinja2 template ``templates/trend.html.j2``."""
    from .html import render_template, template_text

    view = trend_view(tr, chromaticity=chromaticity, command=command, generated_at=generated_at)
    return render_template("trend.html.j2", v=view, trend_css=template_text("trend.css"))


def write_trend_html(path, tr, **kwargs) -> Path:
    """Write the report atomically (:func:`lumeval._io.write_bytes`: regular files only)."""
    from .._io import write_bytes

    path = Path(path)
    write_bytes(path, render_trend_html(tr, **kwargs).encode("utf-8"), option="--html")
    return path


def trend_json(tr) -> str:
    from ..store.trend import trend_document

    return json.dumps(trend_document(tr), indent=1, ensure_ascii=False, allow_nan=False) + "\n"

