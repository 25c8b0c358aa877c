"""The view-model shared by the human reports: what a person reads, as plain data.

The terminal (:mod:`lumeval.render.terminal`, :mod:`lumeval.render.verdicts`), the HTML report
(:mod:`lumeval.render.report_view` and its Jinja2 template) and the notebook view
(``Evaluation._repr_html_``) read the same rows from here: the per-spectrum figures with the
figure registry's labels, units and number formats (:class:`FigureColumn`), the verdict rows
with their measured values and margins in words (:class:`CheckLine`), the notes on the data
(:class:`Note`) and the cautions. Nothing here computes a figure, prints or knows about
markup: text stays text (the template escapes it, the terminal strips control characters).

Imports nothing heavy at module level (no Jinja2, rich or matplotlib): ``lumeval inspect``
reads it on its start-up path.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from ..figures import KEY_FIGURES

if TYPE_CHECKING:  # pragma: no cover
    from .report_inputs import VerdictRow

#: Per-bin hue figures have their own table; the key-figure lists leave them out.
_HUE_BIN_PREFIXES = ("Rf_h", "Rcs_h", "Rhs_h")


# --------------------------------------------------------------------------- generic table


@dataclass(frozen=True)
class Cell:
    """One table cell: ``text`` (optionally monospaced or bold), after a verdict badge when
    ``outcome`` is set, followed by further ``lines`` and small-print ``notes``."""

    text: str = ""
    outcome: str | None = None
    mono: bool = False
    strong: bool = False
    lines: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class Row:
    cells: tuple[Cell, ...]
    #: A row about something that failed (shown highlighted; the verdict is in a cell too).
    failed: bool = False
    #: Another highlight of the row by its class (e.g. "signal" in a control-chart table).
    css: str = ""


@dataclass(frozen=True)
class Table:
    """A table of text: ``numeric[k]`` right-aligns column k (numbers never wrap)."""

    headings: tuple[str, ...]
    rows: tuple[Row, ...]
    numeric: tuple[bool, ...] = ()
    css: str = ""

    def align(self) -> tuple[bool, ...]:
        """``numeric`` padded to the number of columns."""
        return tuple(self.numeric) + (False,) * (len(self.headings) - len(self.numeric))


def cells(*texts: str) -> tuple[Cell, ...]:
    return tuple(Cell(str(t)) for t in texts)


# --------------------------------------------------------------------------- figures


@dataclass(frozen=True)
class FigureColumn:
    """One figure of every spectrum shown, as people read it (from :mod:`lumeval.figures`)."""

    name: str
    label: str
    unit: str
    heading: str
    row_label: str
    group: str
    #: One value per spectrum shown, in the registry's format ("n/a" where undefined).
    values: tuple[str, ...]


def key_figures(groups: tuple[str, ...] | None = None, *, hue_bins: bool = False) -> list:
    """The registry's key figures (``summary=True``) of ``groups``, in report order; without
    the per-bin hue values unless ``hue_bins``."""
    from .. import figures

    return [f for f in figures.summary_figures(groups) if hue_bins or not f.name.startswith(_HUE_BIN_PREFIXES)]


def figure_columns(ev, idx: Sequence[int] | None = None, groups: tuple[str, ...] | None = None, *,
                   hue_bins: bool = False) -> list[FigureColumn]:
    """The key figures of the spectra ``idx`` (default all) of ``ev``: one column per figure.

    A figure marked ``when_defined`` (absolute quantities) is left out when no spectrum shown
    has it."""
    idx = list(range(len(ev.spectra.names))) if idx is None else list(idx)
    out = []
    for f in key_figures(groups, hue_bins=hue_bins):
        v = f.value(ev)
        if f.when_defined and not np.isfinite(v[idx]).any():
            continue
        out.append(FigureColumn(f.name, f.label, f.unit, f.heading, f.row_label, f.group,
                                tuple(f.format(v[i]) for i in idx)))
    return out


def figure_values(ev, names: Sequence[str], idx: Sequence[int] | None = None) -> list[FigureColumn]:
    """The figures ``names`` (registry names, in that order; unknown names left out) of the
    spectra ``idx`` (default all), in the registry's formats: the R1-R14 and hue-bin tables and
    the compact terminal layout read these."""
    from .. import figures

    idx = list(range(len(ev.spectra.names))) if idx is None else list(idx)
    out = []
    for name in names:
        f = figures.FIGURES.get(name)
        if f is None:
            continue
        v = f.value(ev)
        out.append(FigureColumn(f.name, f.label, f.unit, f.heading, f.row_label, f.group,
                                tuple(f.format(v[i]) for i in idx)))
    return out


def figure_descriptions(ev) -> str:
    """One line explaining the key figures outside the chromaticity group (label: what, source)."""
    shown = {c.name for c in figure_columns(ev)}
    return " ".join(f"{f.label}: {f.description} ({f.source})." for f in key_figures()
                    if f.group != "chromaticity" and f.name in shown)


def classification_columns(ev, idx: Sequence[int]) -> list[tuple[str, tuple[str, ...]]]:
    """(heading, one phrase per spectrum) for where each point sits among the standard
    categories: the ANSI C78.377 category and the SDCM steps from the nearest IEC centre."""
    cc = getattr(ev, "chromaticity_class", None)
    if cc is None:
        return []
    from ..criteria.regions import ansi_edition_name
    from .words import ansi_text, sdcm_text

    return [(f"{ansi_edition_name(cc.ansi_edition)} (Δu′v′ out)", tuple(ansi_text(cc, i) for i in idx)),
            ("SDCM steps (nearest IEC centre)", tuple(sdcm_text(cc, i) for i in idx))]


# --------------------------------------------------------------------------- verdicts


@dataclass(frozen=True)
class CheckLine:
    """One (spectrum, clause) verdict in words: ``sample`` is None for a verdict on a whole lot."""

    sample: str | None
    clause: str
    limit: str
    measured: str
    margin: str
    outcome: str
    reason: str = ""
    #: "± U, p_c …" when judged under measurement uncertainty (else "").
    uncertainty: str = ""
    #: U alone with its unit, to the decimal place of the measured value and margin (else "").
    expanded: str = ""

    @property
    def margin_with_uncertainty(self) -> str:
        return self.margin + self.uncertainty


#: Decimals of judged quantities that are not figures (chromaticity-region margins, SDCM steps).
_OTHER_DECIMALS = {"u'v'": 4, "SDCM steps": 2}


def _judged_decimals(figure: str) -> tuple[int, bool] | None:
    """(decimals, signed) of the quantity a clause judges: the figure registry's format, or
    the precision of a region margin / SDCM steps; None when unknown."""
    from .. import figures

    try:
        f = figures.get(figure)
    except KeyError:
        d = _OTHER_DECIMALS.get(figure)
        return None if d is None else (d, False)
    return f.decimals, f.signed


def plain_number(v: Any, spec: str = "g") -> str:
    """A number without a registry format: 4 significant digits ("+g": signed), "n/a" when
    undefined; text passes through."""
    if v is None:
        return "n/a"
    if isinstance(v, str):
        return v
    f = float(v)
    if not math.isfinite(f):
        return "n/a"
    if spec == "int":
        return f"{f:.0f}" if abs(f) >= 0.5 else "0"
    if spec == "g":
        return f"{f:.0f}" if abs(f) >= 1000 else f"{f:.4g}"
    if spec == "+g":
        s = plain_number(f, "g")
        return s if s.startswith("-") else "+" + s
    return format(f, spec).replace("-", "−") if spec.startswith("+") else format(f, spec)


def check_line(r: VerdictRow) -> CheckLine:
    """The measured value and the margin of a verdict row as people read them: the judged
    figure's registry format (margins signed, with more decimals where a non-zero margin would
    print as zero), ± the expanded uncertainty U and p_c when judged under uncertainty."""
    from ..figures import format_number, margin_extra_decimals

    unit = "" if not r.unit else (r.unit if r.unit == "%" else f" {r.unit}")
    finite = isinstance(r.measured, (int, float)) and math.isfinite(float(r.measured))
    fmt = _judged_decimals(r.figure)
    words = r.words()
    if words is not None:  # the clause kind's own words
        meas, marg = words
    elif fmt is None:
        meas = plain_number(r.measured) + (unit if finite else "")
        marg = "n/a" if r.margin is None or not math.isfinite(r.margin) else plain_number(r.margin, "+g") + unit
    else:
        meas = marg = ""  # from the registry's format below
    big_u = r.expanded_uncertainty
    has_u = big_u is not None and math.isfinite(big_u)
    # U to two significant digits (GUM practice, JCGM 100:2008 §7.2.6), where not already finer
    u_text = f"{plain_number(big_u, '.2g')}{unit}" if has_u else ""
    if words is None and fmt is not None:
        dec, signed = fmt
        d = dec + margin_extra_decimals(r.margin, dec)
        if big_u is not None and has_u:
            # measured value, margin and U to one decimal place: U's second significant digit
            # or finer, so that a margin within U of the guard band is not printed equal to it
            d = max(d, uncertainty_decimals(big_u))
            u_text = format_number(big_u, f".{d}f") + unit
        meas = (format_number(r.measured, f"{'+' if signed else ''}.{d}f") + unit) if finite else plain_number(r.measured)
        marg = "n/a" if r.margin is None or not math.isfinite(r.margin) else format_number(r.margin, f"+.{d}f") + unit
    if has_u and words is not None and r.origin is not None:
        from .verdicts import expanded_text

        u_text = expanded_text(*r.origin) or u_text  # at the decimals of the kind's own words
    expanded = u_text
    if has_u:
        # the clause's judged quantity (for a chromaticity region: its Δu'v' margin) ± U
        u_text = f" ± {u_text}"
        if r.p_conformance is not None and math.isfinite(r.p_conformance):
            p = r.p_conformance
            u_text += f", p_c {'< 0.001' if p < 0.001 else ('> 0.999' if p > 0.999 else format(p, '.3f'))}"
    return CheckLine(r.sample, r.clause, r.limit, meas, marg, r.outcome, r.reason, u_text, expanded)


def uncertainty_decimals(big_u: float, digits: int = 2) -> int:
    """Decimals that show ``big_u`` (> 0) to ``digits`` significant digits (0 for U ≥ 10^(digits−1);
    0 for U not finite or not positive)."""
    if not (math.isfinite(big_u) and big_u > 0):
        return 0
    return max(0, digits - 1 - math.floor(math.log10(float(format(big_u, f".{digits - 1}e")))))


def check_lines(verdicts, names: Sequence[str]) -> list[CheckLine]:
    """Every verdict of ``verdicts`` (a check result, rows, or both; see
    :func:`lumeval.render.report_inputs.verdict_rows`) in words, in input order."""
    from .report_inputs import verdict_rows

    return [check_line(r) for r in verdict_rows(verdicts, names)]


def check_grid(result) -> list[list[CheckLine]]:
    """The verdicts of a ``CheckResult`` in words: ``grid[k][i]`` is clause k for spectrum i
    (what the terminal lists per spectrum and the HTML report per clause)."""
    from .report_inputs import _expand_check

    return [[check_line(r) for r in _expand_check(_OneClause(result, res), result.names)] for res in result.results]


@dataclass(frozen=True)
class _OneClause:
    """One clause's results seen as a check result of their own (for :func:`check_grid`)."""

    check: Any
    result: Any

    @property
    def results(self) -> tuple[Any, ...]:
        return (self.result,)

    @property
    def names(self) -> Any:
        return self.check.names


# --------------------------------------------------------------------------- notes, cautions


@dataclass(frozen=True)
class Note:
    """A note on the data or the results: ``who`` is a spectrum's name or "all spectra"."""

    who: str
    message: str


def notes(ev) -> list[Note]:
    """Every note of ``ev``: each spectrum's warnings, then the run's (not tied to one spectrum)."""
    names = ev.spectra.names
    out = [Note(names[i], w) for i, ws in enumerate(getattr(ev, "warnings", ()) or ()) for w in ws]
    return out + [Note("all spectra", w) for w in getattr(ev, "run_warnings", ()) or ()]


def notes_by_message(ev, limit: int) -> tuple[list[tuple[str, str]], int]:
    """The notes for one list: the run's first ("all spectra"), then each message once with the
    spectra it concerns ("a, b, c, d, e and 3 more"); at most ``limit`` messages of spectra.
    Returns ((who, message) pairs, number of messages left out)."""
    run = [(n.who, n.message) for n in notes(ev) if n.who == "all spectra"]
    by_msg: dict[str, list[str]] = {}
    for i, ws in enumerate(getattr(ev, "warnings", ()) or ()):
        for msg in ws:
            by_msg.setdefault(msg, []).append(ev.spectra.names[i])
    items = list(by_msg.items())
    shown = [(", ".join(who[:5]) + (f" and {len(who) - 5} more" if len(who) > 5 else ""), msg)
             for msg, who in items[:limit]]
    return run + shown, max(0, len(items) - limit)


def cautions() -> tuple[str, ...]:
    """The cautions every human report carries (see :data:`lumeval.render.tables.CAUTIONS`)."""
    from .tables import CAUTIONS

    return tuple(CAUTIONS)


# --------------------------------------------------------------------------- short summary


#: The figures of the one-line summary (``repr``), in reading order.
SUMMARY_FIGURES = KEY_FIGURES


def _short(name: str, width: int = 24) -> str:
    name = " ".join(str(name).split())  # no line breaks or tabs in a one-line summary
    return name if len(name) <= width else name[: width - 1] + "…"


def _span(f, v: np.ndarray) -> str:
    ok = v[np.isfinite(v)]
    if ok.size == 0:
        return "n/a"
    lo, hi = f.format(ok.min()), f.format(ok.max())
    text = lo if lo == hi else f"{lo}…{hi}"
    return text + ("" if not f.unit else (f.unit if f.unit == "%" else f" {f.unit}"))


def evaluation_summary(ev, *, names_shown: int = 3) -> str:
    """``Evaluation(5 spectra: 'a', 'b', 'c', … +2; CCT 2702…3010 K, Duv …)``: a few hundred
    characters at most, whatever the number of spectra (figures as min…max over the spectra)."""
    from .. import figures

    names = list(ev.spectra.names)
    n = len(names)
    shown = ", ".join(repr(_short(x)) for x in names[:names_shown]) + (f", … +{n - names_shown}" if n > names_shown else "")
    bits = []
    for key in SUMMARY_FIGURES:
        try:
            f = figures.get(key)
            v = f.value(ev)
        except (KeyError, AttributeError, ValueError):
            continue
        bits.append(f"{f.label} {_span(f, np.asarray(v, dtype=float))}")
    flags = sum(1 for ws in (getattr(ev, "warnings", ()) or ()) if ws) if n else 0
    tail = f"; notes on {flags}" if flags else ""
    return f"Evaluation({n} spectr{'um' if n == 1 else 'a'}: {shown}; " + ", ".join(bits) + tail + ")"
