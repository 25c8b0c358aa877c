"""The terminal report of ``lumeval inspect`` (rich renderables; nothing is computed here).

Layout (our own): one table per group of up to four spectra, side by side, with the figures in
the order a user decides with them: chromaticity -> colour rendering -> fidelity and gamut ->
photometry; then the notes about each spectrum; then the cautions. Rows, labels, units and
number formats come from the figure registry (:mod:`lumeval.figures`: x, y, u', v' to 4
decimals; CCT to 1 K; Duv to 4 decimals; Ra, Ri, Rf, Rg and hue-bin Rf,h to integers; Rcs,h to
whole percent). Undefined figures print as "n/a" with the reason in the notes, never as a number.
"""

from __future__ import annotations

import math

import numpy as np

from ..figures import KEY_FIGURES
from . import safe
from .fit import natural_width

_PER_TABLE = 4
_PER_HUE_TABLE = 2


def _hue_table(ev, idx):
    """TM-30 hue-bin values: one row per bin, three columns per spectrum."""
    from rich import box
    from rich.table import Table

    from ..figures import HUE_SHIFT_UNIT

    t = Table(
        title=f"TM-30 hue bins (local fidelity Rf,h; chroma shift Rcs,h in %; hue shift Rhs,h, {HUE_SHIFT_UNIT})",
        title_justify="left",
        box=box.SIMPLE_HEAVY,
        pad_edge=False,
    )
    t.add_column("bin (hue angle)", no_wrap=True, style="bold")
    for i in idx:
        t.add_column(safe.text(ev.spectra.names[i]).append("\nRf,h"), justify="right")
        t.add_column("Rcs,h", justify="right")
        t.add_column("Rhs,h", justify="right")
    from .view import figure_values

    for j in range(16):
        cols = figure_values(ev, [f"{p}{j + 1}" for p in ("Rf_h", "Rcs_h", "Rhs_h")], idx)
        cells = [c.values[k] for k in range(len(idx)) for c in cols]
        t.add_row(f"h{j + 1:<2} {22.5 * j:5.1f}-{22.5 * (j + 1):5.1f}°", *cells)
    return t


#: Key figures printed on one row together (when both are key figures of the same group).
_JOINED: tuple[tuple[str, str], ...] = (("x", "y"), ("u_prime", "v_prime"))


def _rows(ev, idx):
    """(section, label, [cell per spectrum]) rows for the spectra ``idx``.

    Generated from the figure registry (:mod:`lumeval.figures`): one section per group, one
    row per key figure with the registry's label, unit and number format; x, y and u′, v′ share
    a row; the colour-rendering section adds the other special indices and the reference."""
    from .. import figures

    rows = []
    ref_T = ev.cct_K if getattr(ev, "reference_cct_K", None) is None else ev.reference_cct_K
    outside = ev.outside_validity_of("Ra") if hasattr(ev, "outside_validity_of") else np.zeros(len(ev), dtype=bool)

    def validity(i):
        # CRI and TM-30 computed against the nearest Planckian reference where |Duv| > 0.05
        if outside[i]:
            return f"OUTSIDE validity range (ref. {ref_T[i]:.0f} K)"
        return "within" if math.isfinite(float(ref_T[i])) else "n/a"

    from .view import figure_columns

    columns = figure_columns(ev, idx, hue_bins=True)  # the key figures, as every report shows them
    for group, _figs in figures.by_group():
        title = figures.GROUPS[group]
        if group in ("colour rendering", "fidelity") and any(outside[i] for i in idx):
            # shown only when a spectrum of this table lies outside (|Duv| > 0.05)
            rows.append((title, "validity", [validity(i) for i in idx]))
        shown = {c.name: c for c in columns if c.group == group}
        done: set[str] = set()
        for name, c in shown.items():
            if name in done:
                continue
            pair = next((p for p in _JOINED if name == p[0] and p[1] in shown), None)
            if pair is not None:
                a, b = shown[pair[0]], shown[pair[1]]
                rows.append((title, f"{a.label}, {b.label}", [f"{x}, {y}" for x, y in zip(a.values, b.values)]))
                done.update(pair)
                continue
            rows.append((title, c.row_label, list(c.values)))
            done.add(name)
        if group == "chromaticity":
            from .view import classification_columns

            rows += [(title, heading, list(values)) for heading, values in classification_columns(ev, idx)]
        if group == "colour rendering":
            for lo, hi in ((1, 8), (10, 14)):
                fs = [figures.FIGURES[f"R{k}"] for k in range(lo, hi + 1) if f"R{k}" in figures.FIGURES]
                vals = [f.value(ev) for f in fs]
                rows.append((title, f"R{lo}-R{hi}", [" ".join(f.format(v[i]) for f, v in zip(fs, vals)) for i in idx]))
            dc = figures.FIGURES.get("dc")
            if dc is not None and not dc.summary:
                v = dc.value(ev)
                rows.append((title, dc.row_label, [dc.format(v[i]) for i in idx]))
            rows.append((title, "reference", [ev.cri.reference[i] if math.isfinite(float(ref_T[i])) else "n/a" for i in idx]))
    return rows


#: The key figures of the compact layout (one row per spectrum), in reading order.
COMPACT_FIGURES = KEY_FIGURES


def _compact_renderables(ev, width: int) -> list:
    """One row per spectrum with the key figures, for a terminal too narrow for the full
    layout: numbers never split (no-wrap columns); names printed whole, in the table when they
    fit, otherwise as a numbered list under it."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    from .view import figure_values

    figs = figure_values(ev, COMPACT_FIGURES)  # the registry's labels, units and formats
    n = len(ev)
    heads = [f.heading for f in figs]
    cells = [list(f.values) for f in figs]
    names = [safe.clean(ev.spectra.names[i]) for i in range(n)]
    numbers_w = sum(max(len(h), *(len(c) for c in col)) + 2 for h, col in zip(heads, cells))
    in_table = max(len(x) for x in names) + 2 + numbers_w <= width
    t = Table(box=box.SIMPLE_HEAVY, pad_edge=False)
    t.add_column("spectrum" if in_table else "#", no_wrap=True, style="bold")
    for h in heads:
        t.add_column(h, justify="right", no_wrap=True)
    for i in range(n):
        t.add_row(safe.text(names[i]) if in_table else str(i + 1), *[col[i] for col in cells])
    out: list = [t]
    if not in_table:
        out += [Text(f"  {i + 1:>{len(str(n))}}  {names[i]}") for i in range(n)]
    out.append(Text(f"Key figures only (the terminal is {width} columns wide): every figure with "
                    "`lumeval inspect --wide` in a wider terminal, or `--format csv` / `--format json`.",
                    style="italic"))
    return out


def inspect_renderables(ev, width: int | None = None):
    """The rich renderables of the inspect report, in order.

    ``width`` (terminal columns): when the side-by-side layout would not fit, the report switches
    to one row per spectrum with the key figures (:data:`COMPACT_FIGURES`); None always gives
    the full layout (files, ``--wide``)."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    out: list = []
    n = len(ev)
    compact = False
    for start in range(0, n, _PER_TABLE):
        idx = list(range(start, min(n, start + _PER_TABLE)))
        t = Table(box=box.SIMPLE_HEAVY, show_lines=False, title_justify="left", pad_edge=False)
        t.add_column("figure", style="bold", no_wrap=True)
        for i in idx:
            t.add_column(safe.text(ev.spectra.names[i]), overflow="fold")
        section = None
        for sec, label, cells in _rows(ev, idx):
            if sec != section:
                if section is not None:
                    t.add_section()
                t.add_row(Text(sec, style="bold cyan"), *[""] * len(idx))
                section = sec
            t.add_row("  " + label, *cells)  # our labels and numbers: no data text
        if width is not None and natural_width(t) > width:
            compact = True
            break
        out.append(t)
    if compact:
        out = _compact_renderables(ev, int(width or 80))
    for start in range(0, 0 if compact else n, _PER_HUE_TABLE):
        idx = list(range(start, min(n, start + _PER_HUE_TABLE)))
        out.append(_hue_table(ev, idx))
    from .view import cautions, notes

    note_list = notes(ev)  # the same notes and cautions as the HTML report
    if note_list:
        out.append(Text("Notes on the data and results", style="bold"))
        for note in note_list:
            out.append(Text(f"  ! {safe.clean(note.who)}: {safe.clean(note.message)}"))
    out.append(Text("Cautions", style="bold"))
    for c in cautions():
        out.append(Text(f"  - {c}"))
    return out


def print_inspect(ev, console=None, *, wide: bool = False) -> None:
    """Print the inspect report; on a terminal too narrow for the side-by-side layout, the
    compact one (unless ``wide``)."""
    from .safe import console as safe_console

    console = console or safe_console()
    for r in inspect_renderables(ev, width=None if wide else console.width):
        console.print(r)
