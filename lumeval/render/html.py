"""The HTML report: one self-contained file to send to a client or a supplier.

Layout (our own design): verdict summary first; then the key figures per spectrum, the
figures (spectrum against its reference, chromaticity diagram, R1..R14, TM-30 hue bins, and
for a lot the distributions of the key figures) and the tables behind them; then the notes
on the data, the provenance (input files with SHA-256, software versions, methods and
standard editions, date and time) and the cautions.

The file needs nothing but itself: figures are inline SVG (text drawn as paths; above 500
points a scatter is an inline PNG data: image inside its SVG), the style sheet is inline,
there is no script, no font file and no URL fetched when it is viewed. A
print style sheet lays it out for A4 and US Letter alike (15 mm margins, 178 mm content
width). Verdicts are given in words and symbols (✓ PASS, ✗ FAIL, ? INDETERMINATE,
– NOT JUDGED); colour only repeats them.

How it is made: the inputs are normalised (:mod:`lumeval.render.report_inputs`), the figures
drawn (:mod:`lumeval.render.report_figures`), everything the page says is collected in a typed
view-model (:mod:`lumeval.render.report_view`, sharing its figure rows, verdict rows, notes and
cautions with the terminal through :mod:`lumeval.render.view`) and laid out by the Jinja2
template ``lumeval/render/templates/report.html.j2`` with autoescaping (package data, with its
style sheet ``report.css``; Jinja2 is imported only when an HTML output is asked for).

Entry points
------------
:func:`write_outputs` (both options in one call: targets checked first, figures drawn
once), :func:`write_html_report` (the ``--html FILE`` option), :func:`write_plots` (the
``--plots DIR`` option), :func:`validate_targets`, :func:`render_html_report` (the HTML as a
string) and :func:`report_figures` (the figures as matplotlib objects). All accept the same optional
inputs:

``verdicts``
    A ``lumeval.criteria.verdicts.CheckResult`` (anything with ``.results``: clause results
    with ``label, figure, unit, measured (N,), lower, upper, limit_text, margin (N,),
    outcome (N,), reason (N,)``); or a sequence of rows, each a mapping or object with the
    keys ``sample, clause, figure, measured, unit, limit, lower, upper, margin, outcome``
    (``"pass" | "fail" | "indeterminate" | "not judged"``; or ``passed``: True/False/None)
    and optionally ``reason``; or a sequence mixing both (a row without ``sample`` judges
    the whole lot, e.g. a lot-clause result).
``limits``
    ``{figure name: (lower or None, upper or None)}`` drawn on the charts; by default taken
    from the verdict rows' ``lower``/``upper`` (the tightest per figure).
``regions``
    Sequence of chromaticity regions to draw: mappings ``{"label", "vertices", "space"}``
    (space ``"uv"``, ``"u'v'"`` or ``"xy"``), or objects with ``name`` and
    ``corners_upvp`` (a quadrangle), or ``(ellipse, n_steps)`` pairs where the ellipse has
    ``name`` and ``boundary_xy(n_steps)``.
``lot``
    Lot statistics: a ``lumeval.lots.statistics.LotStatistics`` (its figure summaries become the table,
    centroid, largest pairwise Δu′v′, yield and outliers the notes), a sequence of rows
    (mappings or dataclasses, shown as a table with their keys as columns), or a mapping
    ``{"title": str, "rows": [...], "notes": [str, ...]}``. Giving a lot draws every chart in
    aggregate (medians with min–max whiskers, centroid and spread, distributions).
"""

from __future__ import annotations

import functools
import os
import re
from collections.abc import Mapping, Sequence
from html import escape
from importlib import resources
from pathlib import Path

from ..errors import UsageError
from .report_figures import (
    LOT_FIGURES,
    PER_SAMPLE_MAX,
    PLOT_FILE_PATTERNS,
    ReportFigure,
    report_figures,
)
from .report_inputs import (
    CRITERIA_WORDING,
    OUTCOME_TEXT,
    VerdictRow,
    Wording,
    _regions,
    regions_from_criteria,
    verdict_rows,
)
from .report_view import (
    CHECK_GRID_MAX,
    KEY_FIGURE_TABLES,
    MAX_TABLE_ROWS,
    ReportView,
    build_report_view,
)
from .safe import html_value

__all__ = [
    "CHECK_GRID_MAX", "KEY_FIGURE_TABLES", "LOT_FIGURES", "MAX_TABLE_ROWS", "PER_SAMPLE_MAX", "PLOT_FILE_PATTERNS",
    "ReportFigure", "ReportView", "VerdictRow", "check_html", "evaluation_html", "inline_svg", "regions_from_criteria", "render_html_report",
    "render_template", "report_figures", "template_text", "validate_targets", "verdict_rows", "write_html_report",
    "write_outputs", "write_plots",
]
_ = _regions  # re-exported for the figure tests


# --------------------------------------------------------------------------- templates


def template_text(name: str) -> str:
    """The text of the package-data file ``lumeval/render/templates/<name>`` (a template or a
    style sheet), read through :mod:`importlib.resources` (works from a wheel or a zip too)."""
    return resources.files("lumeval.render").joinpath("templates", name).read_text(encoding="utf-8")


@functools.cache
def _environment():
    """The Jinja2 environment of lumeval's pages: templates from the package data, every
    ``{{ }}`` cleaned of control characters (:func:`lumeval.render.safe.html_value`) and
    autoescaped, an undefined name an error (never an empty string)."""
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.FunctionLoader(lambda name: (template_text(name), None, lambda: True)),
        autoescape=True,
        finalize=html_value,  # control characters from files shown as escapes, then HTML-escaped
        undefined=jinja2.StrictUndefined,
        keep_trailing_newline=True,
    )
    env.globals["OUTCOMES"] = OUTCOME_TEXT
    return env


def render_template(name: str, **context) -> str:
    """Render the package template ``name`` with ``context`` (the style sheet is ``css``)."""
    from markupsafe import Markup

    context.setdefault("css", Markup(template_text("report.css")))
    return _environment().get_template(name).render(**context)


# --------------------------------------------------------------------------- writing



def validate_targets(html=None, plots=None) -> None:
    """Check the ``--html FILE`` and ``--plots DIR`` targets before any work or any write.

    Raises :class:`lumeval.errors.UsageError` (exit code 2) when a target cannot be used (see
    :func:`lumeval._io.check_targets`: a missing or unwritable folder, FILE a folder or a
    device, DIR a file, the report one of the files the plots are written to...). Commands call
    this first so that a bad target writes nothing at all.
    """
    from .._io import check_targets

    check_targets(files={"--html": html}, dirs={"--plots": plots}, dir_files={"--plots": PLOT_FILE_PATTERNS})


def write_plots(
    directory,
    evaluation,
    *,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    formats: Sequence[str] = ("svg", "png"),
    per_sample_max: int | None = PER_SAMPLE_MAX,
    figures: Sequence[ReportFigure] | None = None,
    progress=None,
) -> list[Path]:
    """Write every report figure as ``DIR/<key>.svg`` and ``DIR/<key>.png`` (each atomically).

    The directory is created when its parent exists. Returns the paths written, in report
    order. Raises :class:`lumeval.errors.UsageError` when the directory cannot be used; in
    that case nothing is written.
    """
    from .._io import check_output_dir, check_output_file, write_bytes
    from ..progress import WRITING, counting
    from .plots import figure_png, figure_svg

    figure_png, figure_svg = counting(progress, WRITING, figure_png, figure_svg)  # progress: one per file

    d = Path(directory)
    check_output_dir(d, "--plots", PLOT_FILE_PATTERNS)
    bad = [f for f in formats if f not in ("svg", "png")]
    if bad:
        raise UsageError(f"unknown plot format(s) {bad}", field="--plots", fix="use svg and/or png")
    figs = figures if figures is not None else report_figures(
        evaluation, verdicts=verdicts, limits=limits, regions=regions, lot=lot, per_sample_max=per_sample_max)
    targets = [(f, fmt, d / f"{f.key}.{fmt}") for f in figs for fmt in formats]
    if d.is_dir():
        for _f, _fmt, p in targets:  # every target before the first write: a FIFO among them writes nothing
            if os.path.lexists(p):
                check_output_file(p, "--plots")
    try:
        d.mkdir(exist_ok=True)
    except OSError as exc:
        from ..errors import OutputError

        raise OutputError(f"cannot create the folder: {exc.strerror or exc}", file=str(d), field="--plots",
                          fix="check the free space and the permissions") from None
    out = []
    for f, fmt, p in targets:
        write_bytes(p, figure_svg(f.figure).encode("utf-8") if fmt == "svg" else figure_png(f.figure), option="--plots")
        out.append(p)
    return out


def write_html_report(
    path,
    evaluation,
    *,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    inputs: Sequence | None = None,
    title: str | None = None,
    command: str | None = None,
    generated_at=None,
    per_sample_max: int | None = PER_SAMPLE_MAX,
    figures: Sequence[ReportFigure] | None = None,
    overall: str | None = None,
    unreadable: Sequence[tuple[str, str]] = (),
    skipped: Sequence[tuple[str, str]] = (),
    progress=None,
    wording: Wording = CRITERIA_WORDING,
) -> Path:
    """Write the self-contained HTML report to ``path`` atomically; returns the path.

    Raises :class:`lumeval.errors.UsageError` (nothing written) when the target directory
    does not exist or is not writable. See :func:`render_html_report` for the parameters.
    """
    from .._io import check_output_file, write_bytes

    p = Path(path)
    check_output_file(p, "--html")
    text = render_html_report(evaluation, verdicts=verdicts, limits=limits, regions=regions, lot=lot, inputs=inputs,
                              title=title, command=command, generated_at=generated_at, per_sample_max=per_sample_max,
                              figures=figures, overall=overall, unreadable=unreadable, skipped=skipped,
                              progress=progress, wording=wording)
    write_bytes(p, text.encode("utf-8"), option="--html")
    return p


def write_outputs(
    evaluation,
    *,
    html=None,
    plots=None,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    inputs: Sequence | None = None,
    title: str | None = None,
    command: str | None = None,
    per_sample_max: int | None = PER_SAMPLE_MAX,
    overall: str | None = None,
    unreadable: Sequence[tuple[str, str]] = (),
    skipped: Sequence[tuple[str, str]] = (),
    progress=None,
) -> list[Path]:
    """The ``--html FILE`` and ``--plots DIR`` options in one call: check both targets, draw
    the figures once, write the plots, then the report. Returns the paths written.

    Raises :class:`lumeval.errors.UsageError` before drawing or writing anything when a target
    cannot be used. Does nothing when both are None. ``progress``: a listener
    (:mod:`lumeval.progress`) told of each figure written (``writing report``).
    """
    if html is None and plots is None:
        return []
    validate_targets(html=html, plots=plots)
    figs = report_figures(evaluation, verdicts=verdicts, limits=limits, regions=regions, lot=lot,
                          per_sample_max=per_sample_max)
    out: list[Path] = []
    from ..progress import offset

    n_plots = 2 * len(figs) if plots is not None else 0  # SVG and PNG of each figure
    total = n_plots + (len(figs) if html is not None else 0)
    if plots is not None:
        out += write_plots(plots, evaluation, per_sample_max=per_sample_max, figures=figs,
                           progress=offset(progress, 0, total))
    if html is not None:
        out.append(write_html_report(html, evaluation, verdicts=verdicts, limits=limits, regions=regions, lot=lot,
                                     inputs=inputs, title=title, command=command, per_sample_max=per_sample_max,
                                     figures=figs, overall=overall, unreadable=unreadable, skipped=skipped,
                                     progress=offset(progress, n_plots, total)))
    return out




# --------------------------------------------------------------------------- HTML


def render_html_report(
    evaluation,
    *,
    verdicts=None,
    limits: Mapping | None = None,
    regions=None,
    lot=None,
    inputs: Sequence | None = None,
    title: str | None = None,
    command: str | None = None,
    generated_at=None,
    per_sample_max: int | None = PER_SAMPLE_MAX,
    figures: Sequence[ReportFigure] | None = None,
    overall: str | None = None,
    unreadable: Sequence[tuple[str, str]] = (),
    skipped: Sequence[tuple[str, str]] = (),
    progress=None,
    wording: Wording = CRITERIA_WORDING,
) -> str:
    """The report as one HTML document (a string).

    ``overall`` (``"pass"``, ``"fail"``, ``"indeterminate"`` or ``"not judged"``), when given,
    is the verdict the command decided (a lot with a yield clause passes although some samples
    fail); otherwise the worst outcome of the rows decides.

    Parameters
    ----------
    evaluation : lumeval.engine.Evaluation
        Or any object with ``spectra`` (a SpectrumSet), ``figure(name) -> (N,)``,
        ``reference_spd(i) -> (W,)``, ``warnings`` (N tuples of str) and optionally
        ``methods`` (dict) and ``cct_reason``.
    verdicts, limits, regions, lot
        See the module docstring.
    inputs : sequence of paths, optional
        Files hashed in the provenance; default the spectra's source files (plus the
        criteria file when ``verdicts`` names one).
    title : str, optional
    command : str, optional
        The command line that made the report, shown in the provenance.
    generated_at : datetime, optional
        Default: now.
    per_sample_max : int
        Up to this many spectra get their own charts.
    figures : sequence of ReportFigure, optional
        Figures already made by :func:`report_figures` with the same inputs (to draw them once
        for both the report and ``--plots``).
    unreadable, skipped : sequences of (input, why)
        A lot's inputs that could not be read (listed first, under the verdict: such a lot is
        not fully judged and cannot pass) and those left out on purpose (listed with the
        provenance).
    wording : Wording
        The verdict's words: :data:`CRITERIA_WORDING` (met / not met) or
        :data:`lumeval.render.report_inputs.CLAIMS_WORDING` (claims supported / contradicted).
    """
    ev = evaluation
    figs = list(figures) if figures is not None else report_figures(
        ev, verdicts=verdicts, limits=limits, regions=regions, lot=lot, per_sample_max=per_sample_max)
    from ..progress import WRITING, counting

    (inline,) = counting(progress, WRITING, inline_svg)  # progress: one per figure drawn into the page
    view = build_report_view(ev, figs, verdicts=verdicts, lot=lot, inputs=inputs, title=title, command=command,
                             generated_at=generated_at, per_sample_max=per_sample_max, overall=overall,
                             unreadable=unreadable, skipped=skipped, inline=inline, wording=wording)
    return render_template("report.html.j2", v=view, OUTCOMES=wording.outcome_text)


def evaluation_html(evaluation) -> str:
    """An Evaluation as an HTML fragment (``Evaluation._repr_html_`` in a notebook): the key
    figures of every spectrum, the notes and the cautions, from the report's view-model."""
    from .report_view import evaluation_view

    return render_template("evaluation.html.j2", v=evaluation_view(evaluation))


def check_html(result) -> str:
    """A check result as an HTML fragment (``CheckResult._repr_html_`` in a notebook): the
    verdict, the per-sample summary and the checks, from the report's view-model."""
    from .report_view import check_view

    return render_template("check.html.j2", v=check_view(result))


_ID_RE = re.compile(r'\bid="([^"]+)"')
_HREF_RE = re.compile(r'((?:xlink:)?href)="#([^"]+)"')
_URL_RE = re.compile(r"url\(#([^)]+)\)")


def inline_svg(svg: str, prefix: str, label: str) -> str:
    """Prepare a standalone SVG document for inlining into HTML.

    Drops the XML declaration, DOCTYPE and metadata, prefixes every id (and every reference
    to one) with ``prefix`` so that several figures can share one document, makes the figure
    scale with the page (width 100 %, height from the viewBox) and labels it for screen readers.
    """
    s = re.sub(r"<\?xml[^>]*\?>", "", svg)
    s = re.sub(r"<!DOCTYPE[^>]*>", "", s, flags=re.S)
    s = re.sub(r"<metadata>.*?</metadata>", "", s, flags=re.S)
    s = _ID_RE.sub(lambda m: f'id="{prefix}-{m.group(1)}"', s)
    s = _HREF_RE.sub(lambda m: f'{m.group(1)}="#{prefix}-{m.group(2)}"', s)
    s = _URL_RE.sub(lambda m: f"url(#{prefix}-{m.group(1)})", s)
    s = re.sub(r'<svg\b([^>]*?)\swidth="[^"]*"', r"<svg\1", s, count=1)
    s = re.sub(r'<svg\b([^>]*?)\sheight="[^"]*"', r"<svg\1", s, count=1)
    s = s.replace("<svg ", f'<svg class="chart" role="img" aria-label="{escape(html_value(label))}" ', 1)
    return s.strip()
