"""The terminal report of ``lumeval inspect`` (rich renderables; nothing is computed here).

Layout (our own): one table per group of up to four spectra, side by side, with the figures in
the order a user decides with them: chromaticity -> colour rendering -> fidelity and gamut ->
photometry; then the notes about each spectrum; then the cautions. Figures are rounded as the
standards report them (x, y, u', v' to 4 decimals; CCT to 1 K; Duv to 4 decimals; Ra, Ri, Rf,
Rg and hue-bin Rf,h to integers; Rcs,h to whole percent). Undefined figures print as "n/a"
with the reason in the notes, never as a number.
"""

from __future__ import annotations

import math

import numpy as np

from .tables import CAUTIONS

_PER_TABLE = 4
_PER_HUE_TABLE = 2


def _hue_table(ev, idx):
    """TM-30 hue-bin values: one row per bin, three columns per spectrum."""
    from rich import box
    from rich.table import Table

    tm = ev.tm30
    t = Table(
        title="TM-30 hue bins (local fidelity Rf,h; chroma shift Rcs,h in %; hue shift Rhs,h)",
        title_justify="left",
        box=box.SIMPLE_HEAVY,
        pad_edge=False,
    )
    t.add_column("bin (hue angle)", no_wrap=True, style="bold")
    for i in idx:
        name = ev.spectra.names[i]
        t.add_column(f"{name}\nRf,h", justify="right")
        t.add_column("Rcs,h", justify="right")
        t.add_column("Rhs,h", justify="right")
    for j in range(16):
        cells = []
        for i in idx:
            cells += [_fmt(tm.Rf_h[i, j], "int"), _fmt(tm.Rcs_h[i, j], "+.0f"), _fmt(tm.Rhs_h[i, j], "+.2f")]
        t.add_row(f"h{j + 1:<2} {22.5 * j:5.1f}-{22.5 * (j + 1):5.1f}°", *cells)
    return t


def _fmt(v, spec: str) -> str:
    f = float(v)
    if not math.isfinite(f):
        return "n/a"
    if spec == "int":
        spec = ".0f"
    text = format(f, spec)
    # a value that rounds to zero prints without a sign ("-0" or "+0.00" would suggest a direction)
    if float(text) == 0.0:
        text = format(0.0, spec.replace("+", ""))
    return text


def _rows(ev, idx):
    """(section, label, [cell per spectrum]) rows for the spectra ``idx``."""
    cri, tm, ph = ev.cri, ev.tm30, ev.photometry
    rows = []

    def add(section, label, fn):
        rows.append((section, label, [fn(i) for i in idx]))

    S1 = "Chromaticity (CIE 1931 2°)"
    add(S1, "x, y", lambda i: f"{_fmt(ev.x[i], '.4f')}, {_fmt(ev.y[i], '.4f')}")
    add(S1, "u', v' (CIE 1976)", lambda i: f"{_fmt(ev.u_prime[i], '.4f')}, {_fmt(ev.v_prime[i], '.4f')}")
    add(S1, "CCT (K)", lambda i: _fmt(ev.cct_K[i], ".0f"))
    add(S1, "Duv", lambda i: _fmt(ev.duv[i], "+.4f"))
    S2 = "Colour rendering (CIE 13.3)"
    add(S2, "Ra", lambda i: _fmt(cri.Ra[i], "int"))
    add(S2, "R9 (strong red)", lambda i: _fmt(cri.R[i, 8], "int"))
    add(S2, "R1-R8", lambda i: " ".join(_fmt(v, "int") for v in cri.R[i, :8]))
    add(S2, "R10-R14", lambda i: " ".join(_fmt(v, "int") for v in cri.R[i, 9:14]))
    add(S2, "DC (validity < 0.0054)", lambda i: _fmt(cri.dc[i], ".4f"))
    add(S2, "reference", lambda i: cri.reference[i] if math.isfinite(float(ev.cct_K[i])) else "n/a")
    S3 = "Fidelity and gamut (CIE 224:2017 / TM-30)"
    add(S3, "Rf", lambda i: _fmt(tm.Rf[i], "int"))
    add(S3, "Rg", lambda i: _fmt(tm.Rg[i], "int"))
    add(S3, "Rf,h1 (red)", lambda i: _fmt(tm.Rf_h[i, 0], "int"))
    add(S3, "Rcs,h1 (red chroma, %)", lambda i: _fmt(tm.Rcs_h[i, 0], "+.0f"))
    S4 = "Photometry"
    add(S4, "LER (lm/W)", lambda i: _fmt(ph.ler_lm_per_W[i], ".0f"))
    add(S4, "S/P ratio", lambda i: _fmt(ph.sp_ratio[i], ".2f"))
    add(S4, "melanopic DER", lambda i: _fmt(ph.melanopic_der[i], ".3f"))
    add(S4, "peak (nm)", lambda i: _fmt(ph.peak_nm[i], ".0f"))
    return rows


def inspect_renderables(ev):
    """The rich renderables of the inspect report, in order."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    out = []
    n = len(ev)
    for start in range(0, n, _PER_TABLE):
        idx = list(range(start, min(n, start + _PER_TABLE)))
        t = Table(box=box.SIMPLE_HEAVY, show_lines=False, title_justify="left", pad_edge=False)
        t.add_column("figure", style="bold", no_wrap=True)
        for i in idx:
            t.add_column(ev.spectra.names[i], overflow="fold")
        section = None
        for sec, label, cells in _rows(ev, idx):
            if sec != section:
                if section is not None:
                    t.add_section()
                t.add_row(Text(sec, style="bold cyan"), *[""] * len(idx))
                section = sec
            t.add_row("  " + label, *cells)
        out.append(t)
    for start in range(0, n, _PER_HUE_TABLE):
        idx = list(range(start, min(n, start + _PER_HUE_TABLE)))
        out.append(_hue_table(ev, idx))
    notes = [(ev.spectra.names[i], w) for i in range(n) for w in ev.warnings[i]]
    if notes:
        out.append(Text("Notes on the data and results", style="bold"))
        for name, w in notes:
            out.append(Text(f"  ! {name}: {w}"))
    out.append(Text("Cautions", style="bold"))
    for c in CAUTIONS:
        out.append(Text(f"  - {c}"))
    return out


def print_inspect(ev, console=None) -> None:
    from .safe import console as safe_console

    console = console or safe_console()
    for r in inspect_renderables(ev):
        console.print(r)
