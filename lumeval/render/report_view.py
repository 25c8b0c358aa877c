"""The HTML report as data: a typed view-model built from lumeval's own results.

:func:`build_report_view` turns an :class:`~lumeval.engine.Evaluation`, its verdicts (a
``CheckResult``, rows, or both; see :mod:`lumeval.render.report_inputs`), a lot's statistics
and the drawn figures into a :class:`ReportView`: every title, sentence, table cell and number
already in words, in report order. The Jinja2 template ``templates/report.html.j2`` only lays
it out (and escapes every text: names, labels and metadata come from files and are
untrusted). Labels, units and number formats come from the figure registry
(:mod:`lumeval.figures`) through :mod:`lumeval.render.view`, which the terminal reads too.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .report_inputs import (
    CRITERIA_WORDING,
    OUTCOME_ORDER,
    OUTCOME_TEXT,
    VerdictRow,
    Wording,
    _get,
    _is_check_result,
    _verdict_meta,
    worst,
)
from .view import (
    Cell,
    Row,
    Table,
    cells,
    check_line,
    classification_columns,
    figure_columns,
    plain_number,
)

#: Up to this many spectra, the checks are shown as a criterion x spectrum grid; more get a list
#: of the checks that did not pass (and each spectrum's section its own checks).
CHECK_GRID_MAX = 6

#: Per-sample tables list at most this many rows (failed samples first); the rest are counted.
#: Every figure of every sample is in the JSON and CSV outputs.
MAX_TABLE_ROWS = 100

#: The key-figure tables of the report: (title, figure groups). Columns are the registry's key
#: figures (``summary=True``) of those groups, with its labels, units and number formats.
KEY_FIGURE_TABLES: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("Chromaticity (CIE 1931 2°)", ("chromaticity",)),
    ("Colour rendering and fidelity", ("colour rendering", "fidelity")),
    ("Photometry", ("photometry",)),
)



@dataclass(frozen=True)
class FigureView:
    """A drawn figure: ``svg`` is an inline SVG element made by lumeval from its own drawing."""

    key: str
    title: str
    caption: str
    svg: str


@dataclass(frozen=True)
class TitledTable:
    title: str
    table: Table


@dataclass(frozen=True)
class ChecksView:
    """The checks: a criterion x sample grid (few samples) or the list of those not passed."""

    title: str
    notes: tuple[str, ...]
    table: Table | None
    empty: str = ""


@dataclass(frozen=True)
class VerdictView:
    judged: bool
    criteria_file: str | None = None
    identification: tuple[tuple[str, str], ...] = ()
    overall: str = "not judged"
    summary: str = ""
    counts: str = ""
    lot_criteria: Table | None = None
    #: A lot: each per-sample criterion over the lot (passed, failed, other, worst margin), so
    #: that a report whose samples all pass still names what they were judged on.
    sample_criteria: Table | None = None
    samples_intro: str | None = None
    samples: Table | None = None
    samples_footnote: str | None = None
    uncertainty: str | None = None
    checks: ChecksView | None = None
    #: Clauses this report does not judge (over a range of settings, or a whole lot in a check):
    #: the sentence of the headline, then the criteria's own note on each.
    not_judged_summary: str = ""
    not_judged: tuple[str, ...] = ()
    #: The check's other notes: the criteria file's WARNINGs (clauses no spectrum can meet together)
    #: and, under measurement uncertainty, the instrument model's notes.
    criteria_notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class KeyFiguresView:
    note: str | None
    tables: tuple[TitledTable, ...]
    descriptions: str


@dataclass(frozen=True)
class LotView:
    title: str
    table: Table | None
    notes: tuple[str, ...]


@dataclass(frozen=True)
class SampleView:
    """One spectrum's own section (without a lot): its figures, checks and tables."""

    number: str
    name: str
    source: str
    figures: tuple[FigureView, ...]
    checks: Table | None
    cri: Table
    hue_bins: Table
    design_intents: TitledTable | None
    design_note: str = ""


@dataclass(frozen=True)
class ProvenanceView:
    files: Table | None
    software: Table
    methods: Table
    generated: Table


@dataclass(frozen=True)
class ReportView:
    """Everything the HTML report shows, in words, in report order."""

    title: str
    subtitle: tuple[str, ...]
    verdict: VerdictView
    aggregate_note: str | None
    key_figures: KeyFiguresView
    lot: LotView | None
    charts: tuple[FigureView, ...]
    samples: tuple[SampleView, ...]
    #: A lot: verdict, lot figures and named outliers first, per-sample tables last.
    lot_first: bool
    notes: tuple[tuple[str, str], ...]
    notes_more: str | None
    provenance: ProvenanceView
    cautions: tuple[str, ...]
    #: A lot's inputs that could not be read: the sentence above their table, and the table.
    unread_summary: str | None = None
    unread: Table | None = None
    #: A lot's inputs left out on purpose (not spectrum files, already read, its own reports).
    skipped: Table | None = None


# --------------------------------------------------------------------------- verdicts


def _clause_id(r: VerdictRow) -> str:
    """The id of the clause a row was read from ("" when the row does not say)."""
    return "" if r.origin is None else str(getattr(r.origin[0], "clause_id", "") or "")


def _clause_cell(r: VerdictRow) -> Cell:
    """The requirement as the criteria word it, with the clause's id: two clauses may read the same."""
    cid = _clause_id(r)
    return Cell(r.clause, notes=(f"id: {cid}",) if cid and cid != r.clause else ())


def _clause_keys(rows: list[VerdictRow]) -> list[tuple]:
    """One key per row naming its clause, never by its words alone (two clauses may read the
    same: one label on R9 and R12, two ellipses with one centre): the clause result it was read
    from; a row given as a mapping, its words and how many rows of its sample read so before it."""
    seen: dict[tuple, int] = {}
    keys: list[tuple] = []
    for r in rows:
        if r.origin is not None:
            keys.append(("clause", id(r.origin[0])))
        else:
            k = (r.sample, r.clause, r.limit)
            seen[k] = seen.get(k, -1) + 1
            keys.append(("row", r.clause, r.limit, seen[k]))
    return keys


def _check_cell(r: VerdictRow, margin_word: str = "margin") -> Cell:
    c = check_line(r)
    margin = (f"{margin_word} {c.margin_with_uncertainty}",) if c.margin_with_uncertainty else ()
    return Cell("", outcome=r.outcome, lines=(c.measured,), notes=margin + ((r.reason,) if r.reason else ()))


def _verdict_cell(r: VerdictRow) -> Cell:
    return Cell("", outcome=r.outcome, notes=(r.reason,) if r.reason else ())


def sample_checks_table(rows: list[VerdictRow], wording: Wording = CRITERIA_WORDING) -> Table | None:
    """One spectrum's checks (its section in a report with too many spectra for the grid)."""
    if not rows:
        return None
    body = []
    for r in rows:
        c = check_line(r)
        body.append(Row((_clause_cell(r),) + cells(c.measured, r.limit, c.margin_with_uncertainty) + (_verdict_cell(r),),
                        r.outcome == "fail"))
    return Table((wording.noun, "Measured", wording.limit_heading, wording.margin_heading, "Verdict"), tuple(body),
                 (False, True, False, True, False))


def checks_view(rows: list[VerdictRow], grid_max: int = CHECK_GRID_MAX, wording: Wording = CRITERIA_WORDING) -> ChecksView:
    """A criterion × sample grid for a few samples, else a list of the checks that did not pass
    (the passes are counted, not listed)."""
    samples = list(dict.fromkeys(r.sample or "lot" for r in rows))
    keys = _clause_keys(rows)
    first: dict[tuple, VerdictRow] = {}  # each clause's first row (its words), in the criteria's order
    for k, r in zip(keys, rows):
        first.setdefault(k, r)
    if len(samples) <= grid_max:
        grid = {(k, r.sample or "lot"): r for k, r in zip(keys, rows)}
        body = []
        for key, head in first.items():
            found = [grid.get((key, s)) for s in samples]
            body.append(Row((_clause_cell(head), Cell(head.limit))
                            + tuple(Cell() if r is None else _check_cell(r, wording.margin_word) for r in found)))
        return ChecksView("Checks", (wording.grid_note,),
                          Table((wording.noun, wording.limit_heading, *samples), tuple(body), css="grid"))
    not_passed = [r for r in rows if r.outcome != "pass"]
    shown = sorted(not_passed, key=lambda r: r.outcome != "fail")[:MAX_TABLE_ROWS]
    title = f"Checks that did not pass ({len(not_passed)} of {len(rows)})"
    notes = ((f"The first {len(shown)} are listed (failures first); all are in the JSON and CSV outputs.",)
             if len(shown) < len(not_passed) else ())
    if not shown:
        return ChecksView(title, notes, None, "None: every check passed.")
    body = []
    for r in shown:
        c = check_line(r)
        body.append(Row((Cell(r.sample or "lot"), _clause_cell(r)) + cells(c.measured, r.limit, c.margin_with_uncertainty)
                        + (_verdict_cell(r),),
                        r.outcome == "fail"))
    return ChecksView(title, notes, Table(("Sample", wording.noun, "Measured", wording.limit_heading, wording.margin_heading,
                                           "Verdict"),
                                          tuple(body), (False, False, True, False, True, False)))


def _sample_criteria_table(rows: list[VerdictRow], wording: Wording) -> Table | None:
    """A lot's per-sample criteria, one row each in the criteria's order: the requirement, its
    limit, how many samples passed and failed, the other outcomes counted, and the worst margin
    (the terminal summary's "Requirements" table, in the report)."""
    if not rows:
        return None
    # (a not-valid or not-judged sample's margin is not a judged one: left out of the worst)
    from ..criteria.verdicts import worst_judged_margin

    groups: dict[tuple, list[VerdictRow]] = {}
    for k, r in zip(_clause_keys(rows), rows):
        groups.setdefault(k if k[0] == "clause" else ("row", r.clause, r.limit), []).append(r)
    body = []
    for rs in groups.values():
        head = rs[0]
        outcomes = [r.outcome for r in rs]
        worst = worst_judged_margin([r.margin if isinstance(r.margin, (int, float)) else np.nan for r in rs], outcomes)
        unit = f" {head.unit}" if head.unit and head.unit != "%" else head.unit
        worst_margin = plain_number(worst) + unit if np.isfinite(worst) else "n/a"
        failed = outcomes.count("fail")
        body.append(Row((_clause_cell(head), Cell(head.limit), Cell(str(outcomes.count("pass"))), Cell(str(failed)),
                         Cell(_tally(outcomes, wording, leave_out=("pass", "fail")) or "none"), Cell(worst_margin)),
                        failed > 0))
    return Table(("Per-sample criterion", "Limit", "Passed", "Failed", "Other", "Worst margin"), tuple(body),
                 (False, False, True, True, False, True))


def _tally(outcomes, wording: Wording, leave_out: tuple[str, ...] = ("pass",)) -> str:
    """"1 failed, 2 not valid, 1 not judged" (worst first), as the terminal counts them; a claims
    report in its own words ("1 contradicted")."""
    from .verdicts import outcome_tally

    if dict(wording.outcome_text) == OUTCOME_TEXT:
        return outcome_tally(outcomes, leave_out=leave_out)
    return outcome_tally(outcomes, leave_out=leave_out, word=lambda o: wording.outcome_text[o][1].lower())


def _not_passed_text(outcomes, wording: Wording = CRITERIA_WORDING) -> str:
    """"2 failed, 1 indeterminate" (or "none") for one sample's check outcomes."""
    return _tally(outcomes, wording) or "none"


def _samples_table(per_sample: dict[str, list[str]], lot, n: int,
                   wording: Wording = CRITERIA_WORDING) -> tuple[str | None, Table | None, str | None]:
    items = list(per_sample.items())  # input order: the numbering of every table and figure
    intro = None
    if lot is not None:  # a lot: list the samples that did not pass; the rest are counted
        passed = sum(worst(o) == "pass" for s_, o in items if s_ != "(lot)")
        items = [kv for kv in items if kv[0] != "(lot)" and worst(kv[1]) != "pass"]
        intro = f"{passed} of {n} samples met every per-sample criterion" + ("; the others:" if items else ".")
    shown = items
    if len(items) > MAX_TABLE_ROWS:  # keep the failed ones, listed in input order
        keep = sorted(range(len(items)), key=lambda j: "fail" not in items[j][1])[:MAX_TABLE_ROWS]
        shown = [items[j] for j in sorted(keep)]
    table = Table(("Sample", "Verdict", "Checks not passed"),
                  tuple(Row((Cell(s), Cell("", outcome=worst(o)), Cell(_not_passed_text(o, wording))), "fail" in o)
                        for s, o in shown))
    foot = (f"{len(shown)} of {len(items)} samples listed (failed first, in input order); every sample's verdict "
            "is in the JSON and CSV outputs.") if len(items) > len(shown) else None
    return intro, (table if shown else None), foot  # (no empty table when every sample passed)


def _uncertainty_text(verdicts) -> str | None:
    unc = _get(verdicts, "uncertainty") if _is_check_result(verdicts) else None
    if not unc:
        return None
    from .verdicts import margin_meaning

    inst = unc.get("instrument", {})
    meaning = margin_meaning(unc.get("decision_rule"))
    return (f'{unc.get("rule_text", "")} Margins are shown ± U (expanded uncertainty from the Monte Carlo '
            f'propagation of the instrument model {inst.get("name") or inst.get("source", "")}, JCGM 101:2008). '
            f"{meaning[0].upper()}{meaning[1:]} "
            "p_c is the probability of conformance (JCGM 106:2012). See docs/uncertainty.md.")


def _check_results(verdicts) -> list:
    """The check results among ``verdicts`` (one, or those of a list mixing results and rows)."""
    return [verdicts] if _is_check_result(verdicts) else [v for v in (verdicts or ()) if _is_check_result(v)]


def _counts_text(rows: list[VerdictRow], wording: Wording) -> str:
    """"5 checks: 1 failed, 2 not valid, 1 not judged, 1 passed." (worst first, every outcome
    counted; a claims report in its own words: "1 contradicted, 2 supported")."""
    n = len(rows)
    return f"{n} check{'s' if n != 1 else ''}: {_tally((r.outcome for r in rows), wording, leave_out=())}."


def verdict_view(rows: list[VerdictRow], verdicts, *, lot, n: int, overall: str | None, grid_max: int,
                 unread: bool = False, wording: Wording = CRITERIA_WORDING, leave_out_notes=()) -> VerdictView:
    """``unread``: some of a lot's inputs could not be read (the command then decides "not
    judged"); when every check of what was read passed, the summary says so instead of the
    generic "a criterion could not be judged". ``wording``: the words of criteria or of claims.
    Clauses the report does not judge (a check: those over a range of settings or of a whole
    lot; a lot: those over a range) are said in the headline and listed; the check's other notes
    (the criteria file's WARNINGs), less ``leave_out_notes`` (shown elsewhere), are listed too."""
    if not rows:
        return VerdictView(judged=False)
    from .verdicts import check_notes, not_judged_here, not_judged_text

    ident, crit_file = _verdict_meta(verdicts)
    overall = overall if overall in OUTCOME_TEXT else worst(r.outcome for r in rows)
    summary = wording.summary[overall]
    if unread and overall == "not judged" and all(r.outcome == "pass" for r in rows):
        summary = ("No criterion fails for the inputs that were read, but the lot is not fully judged: some "
                   "inputs could not be read (listed above).")
    checks = _check_results(verdicts)
    scopes, command = (("sample", "lot"), "lot") if lot is not None else (("sample",), "check")
    skipped = [c for res in checks for c in not_judged_here(res, scopes)]
    if skipped and overall == "pass":
        summary = "Every criterion judged here is met."
    if lot is not None and overall == "pass" and wording is CRITERIA_WORDING:
        # a lot passed by its yield clause although samples fail: "every criterion is met" read as
        # if no sample failed (found by a review)
        bad = sorted({r.sample for r in rows if r.sample is not None and r.outcome != "pass"})
        if bad:
            summary = (f"Every lot criterion is met{' judged here' if skipped else ''}; {len(bad)} of {n} samples "
                       f"{'does' if len(bad) == 1 else 'do'} not pass every per-sample criterion, within the lot's yield allowance (listed below).")
    notes = tuple(dict.fromkeys([x for res in checks for x in check_notes(res, leave_out_notes)]
                                # the instrument model's notes under uncertainty, as the terminal prints them
                                + [str(x) for res in checks for x in ((_get(res, "uncertainty") or {}).get("notes") or ())]))
    if any(getattr(c, "round_to", None) is not None for res in checks for c in (_get(res, "results") or ())):
        from .verdicts import ROUNDING_NOTE

        notes += (ROUNDING_NOTE,)
    per_sample: dict[str, list[str]] = {}
    for r in rows:
        per_sample.setdefault(r.sample or "(lot)", []).append(r.outcome)
    lot_rows = [r for r in rows if r.sample is None]
    lot_table = None
    if lot is not None and lot_rows:
        lot_table = Table(("Criterion", "Measured", "Limit", "Margin", "Verdict"), tuple(
            Row(cells(r.clause, plain_number(r.measured) + (f" {r.unit}" if r.unit else ""), r.limit,
                      plain_number(r.margin) + (f" {r.unit}" if r.unit and r.margin is not None else ""))
                + (Cell("", outcome=r.outcome),), r.outcome == "fail")
            for r in lot_rows), (False, True, False, True, False))
    intro = table = foot = None
    if len(per_sample) > 1:
        intro, table, foot = _samples_table(per_sample, lot, n, wording)
    sample_table = _sample_criteria_table([r for r in rows if r.sample is not None], wording) if lot is not None else None
    return VerdictView(
        judged=True, criteria_file=None if not crit_file else str(crit_file),
        identification=tuple((str(k), str(v)) for k, v in dict(ident or {}).items()),
        overall=overall, summary=summary, counts=_counts_text(rows, wording),
        lot_criteria=lot_table, sample_criteria=sample_table, samples_intro=intro, samples=table, samples_footnote=foot,
        uncertainty=_uncertainty_text(verdicts), checks=checks_view(rows, grid_max, wording),
        not_judged_summary=not_judged_text(skipped, command) + ":" if skipped else "",
        not_judged=tuple(c.note for c in skipped), criteria_notes=notes)


# --------------------------------------------------------------------------- key figures


def key_figures_view(ev, names: Sequence[str], failed: Sequence[bool | None]) -> KeyFiguresView:
    """The key-figure tables (spectra in input order, the numbering of the figures); above
    :data:`MAX_TABLE_ROWS` spectra, those that failed a criterion are kept first."""
    n = len(names)
    note = None
    if n > MAX_TABLE_ROWS:
        order = sorted(sorted(range(n), key=lambda i: failed[i] is not True)[:MAX_TABLE_ROWS])
        note = (f"{len(order)} of {n} spectra listed (those that failed a criterion first, in input order); every "
                "spectrum's figures are in the JSON and CSV outputs.")
    else:
        order = list(range(n))
    tables = []
    for title, groups in KEY_FIGURE_TABLES:
        cols = figure_columns(ev, order, groups)
        if not cols:
            continue
        extra = classification_columns(ev, order) if "chromaticity" in groups else []
        heads = ("Spectrum", *(c.heading for c in cols), *(h for h, _ in extra))
        rows = tuple(Row(cells(names[i], *(c.values[k] for c in cols), *(v[k] for _, v in extra)))
                     for k, i in enumerate(order))
        # the two phrases may wrap (numbers never do)
        tables.append(TitledTable(title, Table(heads, rows, (False,) + (True,) * len(cols) + (False,) * len(extra))))
    from .view import figure_descriptions

    return KeyFiguresView(note, tuple(tables),
                          figure_descriptions(ev) + " n/a: undefined for that spectrum (see the notes). "
                          + ROUNDED_NOTE)


#: Why a key figure can read as meeting a limit its check failed (a specifier's review: Ra 79.6
#: shown as 80 beside "Ra ≥ 80: FAIL").
ROUNDED_NOTE = ("Figures here are rounded as the standards report them; criteria compare the unrounded values "
                "(Ra 79.6 shows as 80 and does not meet Ra ≥ 80) unless a clause says it rounds them first "
                "(round_to): the checks give each measured value in full.")


# --------------------------------------------------------------------------- lot statistics


_SUMMARY_COLUMNS = ("figure", "n", "undefined", "mean", "std", "min", "p5", "median", "p95", "max")
#: The column of values left out as computed outside the validity range (shown when a lot has any).
_NOT_VALID_COLUMN = "not valid"  # as the terminal summary heads it


def _summary_row(f, not_valid: bool = False) -> dict:
    """One figure's lot statistics with the registry's label, unit and precision (the standard
    deviation with one more decimal); with ``not_valid``, the count of values left out as
    computed outside the validity range after ``undefined``."""
    from .. import figures

    try:
        fig = figures.get(f.name)
    except KeyError:
        fig = None

    def v(x, extra=0):
        return fig.format(x, extra, sign=False) if fig is not None else plain_number(x)

    row = {"figure": fig.heading if fig is not None else f.name, "n": str(f.count), "undefined": str(f.undefined)}
    if not_valid:
        row[_NOT_VALID_COLUMN] = str(getattr(f, "outside_validity", 0))
    return row | {"mean": v(f.mean), "std": v(f.std, 1), "min": v(f.min), "p5": v(f.p05), "median": v(f.median),
                  "p95": v(f.p95), "max": v(f.max)}


def _statistics_notes(lot, names) -> list[str]:
    notes = [f"{lot.n_samples} samples."]
    c = getattr(lot, "centroid_xy", None)
    if c is not None and np.all(np.isfinite(c)):
        notes.append(f"Chromaticity centroid x, y = {c[0]:.4f}, {c[1]:.4f}.")
    mp = getattr(lot, "max_pairwise_d_upvp", None)
    if mp is not None and math.isfinite(mp):
        notes.append(f"Largest Δu′v′ between two samples: {mp:.4f}.")
    y = getattr(lot, "yield_", None)
    if y is not None:
        from .verdicts import not_valid_part

        notes.append(f"Yield: {y.passed} of {y.total} passed ({y.percent:.1f} %); {y.failed} failed{not_valid_part(y)}, "
                     f"{y.indeterminate} indeterminate, {y.not_judged} not judged.")
    out = getattr(lot, "outlier", None)
    if out is not None and np.any(out):
        k = int(np.sum(out))
        notes.append(f"{k} sample{'s' if k != 1 else ''} flagged as outlier{'s' if k != 1 else ''} "
                     f"({getattr(lot, 'outlier_rule', '')}).")
        reasons = getattr(lot, "outlier_reasons", ())
        if names is not None and len(names) == len(out):
            idx = [int(i) for i in np.flatnonzero(out)]
            for i in idx[:MAX_TABLE_ROWS]:
                why = "; ".join(reasons[i]) if i < len(reasons) and reasons[i] else ""
                notes.append(f"Outlier: {names[i]}" + (f" ({why})." if why else "."))
            if len(idx) > MAX_TABLE_ROWS:
                notes.append(f"… and {len(idx) - MAX_TABLE_ROWS} further outliers (see the JSON output).")
    return notes + [str(n) for n in getattr(lot, "notes", ())]


def _row_dict(row) -> dict:
    if isinstance(row, Mapping):
        return dict(row)
    if hasattr(row, "__dataclass_fields__"):
        return {k: getattr(row, k) for k in row.__dataclass_fields__}
    return dict(vars(row))


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float, np.floating, np.integer)) and not isinstance(v, (bool, np.bool_))


def _lot_cell(v: Any) -> Cell:
    if isinstance(v, (bool, np.bool_)):
        return Cell("", outcome="pass" if v else "fail")
    if isinstance(v, str) and v.strip().lower() in OUTCOME_TEXT:
        return Cell("", outcome=v.strip().lower())
    if _is_number(v):
        return Cell(plain_number(float(v)))
    return Cell("" if v is None else str(v))


def lot_view(lot, names=None) -> LotView | None:
    """The lot block: a ``LotStatistics`` (its figure summaries as the table, centroid, spread,
    yield and named outliers as notes), a sequence of rows, or ``{"title", "rows", "notes"}``."""
    if lot is None:
        return None
    numeric = None
    if hasattr(lot, "figures") and hasattr(lot, "n_samples"):  # lumeval.lots.statistics.LotStatistics
        not_valid = any(getattr(f, "outside_validity", 0) for f in lot.figures)
        title, notes = "Lot statistics", _statistics_notes(lot, names)
        rows = [_summary_row(f, not_valid) for f in lot.figures]
        numeric = tuple(c != "figure" for c in rows[0]) if rows else None
    elif isinstance(lot, Mapping):
        title, rows, notes = str(lot.get("title", "Lot statistics")), list(lot.get("rows", ())), [str(x) for x in lot.get("notes", ())]
    elif _get(lot, "rows") is not None and not isinstance(lot, (list, tuple)):
        title, rows = str(_get(lot, "title", default="Lot statistics")), list(_get(lot, "rows"))
        notes = [str(x) for x in (_get(lot, "notes", default=()) or ())]
    else:
        title, rows, notes = "Lot statistics", list(lot), []
    dicts = [_row_dict(r) for r in rows]
    cols: list[str] = []
    for d in dicts:
        cols += [k for k in d if k not in cols]
    table = None
    if dicts:
        numeric = numeric or tuple(all(_is_number(d.get(c)) for d in dicts) for c in cols)
        table = Table(tuple(cols), tuple(Row(tuple(_lot_cell(d.get(c)) for c in cols)) for d in dicts), numeric)
    return LotView(title, table, tuple(notes))


# --------------------------------------------------------------------------- one spectrum


def _design_intents(ev, i: int) -> tuple[TitledTable | None, str]:
    """Spectrum i against the ANSI/IES TM-30-20 Annex E design intents: a small table."""
    from ..metrics.tm30_views import ANNEX_E, ANNEX_E_SOURCE, DESIGN_INTENTS, design_intents
    from .report_figures import _fig

    vals = {k: float(_fig(ev, k)[i]) for k in ("Rf", "Rg", "Rcs_h1", "Rf_h1")}
    if not all(math.isfinite(v) for v in vals.values()):
        return None, ""
    di = design_intents(*([vals[k]] for k in ("Rf", "Rg", "Rcs_h1", "Rf_h1")))
    label = {"Rf": "Rf", "Rg": "Rg", "Rcs_h1": "Rcs,h1", "Rf_h1": "Rf,h1"}

    def needs(level: str) -> str:
        parts = []
        for k, (lo, hi) in ANNEX_E[level].items():
            u = " %" if k == "Rcs_h1" else ""
            parts.append(f"{label[k]} ≥ {lo:g}{u}" if hi == math.inf else f"{label[k]} {lo:+g}{u} … {hi:+g}{u}")
        return ", ".join(parts).replace("-", "−")

    rows = []
    for intent, levels in DESIGN_INTENTS.items():
        best = getattr(di, intent)[0]
        row = [Cell(intent.capitalize()), Cell(best, strong=True) if best else Cell("none")]
        row += [Cell(f'{"✓" if di.met[lv][0] else "✗"} {lv}', notes=(needs(lv),)) for lv in levels]
        rows.append(Row(tuple(row)))
    from .. import figures

    # each value in its registry format (no sign on a value that rounds to zero: "Rcs,h1 −0 %"
    # was printed for −0.3 %; found by a review)
    shown = {k: figures.get(k).format(v).replace("-", "−") for k, v in vals.items()}
    note = (f'With Rf {shown["Rf"]}, Rg {shown["Rg"]}, Rcs,h1 {shown["Rcs_h1"]} %, '
            f'Rf,h1 {shown["Rf_h1"]} (unrounded values compared). A level counts only when the levels below it '
            f"are met too. {ANNEX_E_SOURCE}. Informative guidance, not a verdict: to judge it, write clauses on Rf, "
            "Rg, Rcs_h1 and Rf_h1 in the criteria file.")
    return TitledTable("Design intents (ANSI/IES TM-30-20 Annex E)",
                       Table(("Design intent", "Best level met", "Level 1", "Level 2", "Level 3"), tuple(rows),
                             css="grid")), note


def sample_view(ev, i: int, number: str, figures: Sequence[FigureView], checks: Table | None) -> SampleView:
    from .view import figure_values

    R = figure_values(ev, [f"R{j}" for j in range(1, 15)], [i])
    cri = Table(tuple(c.label for c in R), (Row(cells(*(c.values[0] for c in R))),), (True,) * len(R), css="dense")

    def bins(prefix: str) -> tuple[str, ...]:
        return tuple(c.values[0] for c in figure_values(ev, [f"{prefix}{j}" for j in range(1, 17)], [i]))

    hue = Table(("bin", *(f"h{j}" for j in range(1, 17))), (
        Row(cells("Rf,h", *bins("Rf_h"))), Row(cells("Rcs,h (%)", *bins("Rcs_h"))), Row(cells("Rhs,h", *bins("Rhs_h"))),
    ), (False,) + (True,) * 16, css="dense")
    design, note = _design_intents(ev, i)
    return SampleView(number, ev.spectra.names[i], str(ev.spectra.sources[i]), tuple(figures), checks, cri, hue,
                      design, note)


# --------------------------------------------------------------------------- provenance


def provenance_view(prov, command: str | None) -> ProvenanceView:
    files = Table(("File", "SHA-256", "Bytes"), tuple(
        Row((Cell(str(f.path), mono=True), Cell(str(f.sha256 or "unreadable"), mono=True),
             Cell(str(f.size_bytes if f.size_bytes is not None else "n/a")))) for f in prov.files),
        (False, False, True)) if prov.files else None
    meta = [Row(cells("Generated", prov.generated_at))]
    if command:
        meta.append(Row((Cell("Command"), Cell(command, mono=True))))
    return ProvenanceView(files, Table(("Package", "Version"), tuple(Row(cells(a, b)) for a, b in prov.versions)),
                          Table(("Topic", "Method"), tuple(Row(cells(a, b)) for a, b in prov.methods)),
                          Table(("", ""), tuple(meta)))


# --------------------------------------------------------------------------- the whole report


def _figure_views(figs, inline) -> tuple[list[FigureView], dict[str, list[FigureView]]]:
    """(figures of the Figures section, per-sample figures by sample number "01", "02"...)."""
    import re

    from .plots import figure_svg

    charts: list[FigureView] = []
    per_sample: dict[str, list[FigureView]] = {}
    for k, f in enumerate(figs):
        fv = FigureView(f.key, f.title, f.caption, inline(figure_svg(f.figure), f"f{k}", f.title))
        m = re.match(r"(spd|cri|hue-bins|colour-vectors)-(\d\d)-", f.key)
        if m:
            per_sample.setdefault(m.group(2), []).append(fv)
        else:
            charts.append(fv)
    return charts, per_sample


def build_report_view(
    ev,
    figs: Sequence,
    *,
    verdicts=None,
    lot=None,
    inputs: Sequence | None = None,
    title: str | None = None,
    command: str | None = None,
    generated_at=None,
    per_sample_max: int | None = None,
    overall: str | None = None,
    unreadable: Sequence[tuple[str, str]] = (),
    skipped: Sequence[tuple[str, str]] = (),
    inline=None,
    wording: Wording = CRITERIA_WORDING,
) -> ReportView:
    """The report of ``ev`` as a :class:`ReportView` (the parameters are those of
    :func:`lumeval.render.html.render_html_report`; ``figs`` the figures already drawn by
    :func:`lumeval.render.report_figures.report_figures`, ``inline`` the SVG inliner)."""
    from .provenance import collect_provenance, input_paths_from_sources
    from .report_figures import _sample_failed
    from .report_inputs import as_lot, verdict_rows
    from .view import cautions, notes_by_message

    names = list(ev.spectra.names)
    n = len(names)
    rows = verdict_rows(verdicts, names)
    grid_max = CHECK_GRID_MAX if per_sample_max is None else min(per_sample_max, CHECK_GRID_MAX)
    if inputs is None:
        inputs = input_paths_from_sources(ev.spectra.sources)
        crit = _verdict_meta(verdicts)[1]
        if crit:
            inputs.append(str(crit))
    prov = collect_provenance(inputs, methods=getattr(ev, "methods", None) or None, generated_at=generated_at)
    aggregate = as_lot(lot, n, per_sample_max)
    charts, per_sample_figs = _figure_views(figs, inline)
    grid_too_wide = len({r.sample for r in rows if r.sample is not None}) > grid_max
    samples = []
    for num, fl in sorted(per_sample_figs.items()):
        i = int(num) - 1
        checks = sample_checks_table([r for r in rows if r.sample == names[i]], wording) if grid_too_wide else None
        samples.append(sample_view(ev, i, num, fl, checks))
    note_rows, more = notes_by_message(ev, MAX_TABLE_ROWS)
    return ReportView(
        title=title or ("Colour quality report: " + (names[0] if n == 1 else f"{n} spectra")),
        subtitle=(f"{n} spectr{'a' if n != 1 else 'um'}", f"generated {prov.generated_at}",
                  f"lumeval {dict(prov.versions).get('lumeval', '?')}"),
        verdict=verdict_view(rows, verdicts, lot=lot, n=n, overall=overall, grid_max=grid_max,
                             unread=bool(unreadable), wording=wording,
                             # the run's own notes are in "Notes on the data" ("all spectra")
                             leave_out_notes=tuple(str(w) for w in getattr(ev, "run_warnings", ()) or ())),
        aggregate_note=(f"The {n} spectra are drawn together (medians, ranges and distributions), as asked (more "
                        f"than {per_sample_max} spectra); every spectrum's figures are in the tables below and in "
                        "the JSON and CSV outputs.") if aggregate and lot is None else None,
        key_figures=key_figures_view(ev, names, _sample_failed(rows, names)),
        lot=lot_view(lot, names),
        charts=tuple(charts),
        samples=tuple(samples),
        lot_first=lot is not None,
        notes=tuple(note_rows),
        notes_more=f"… and {more} further notes (see the JSON output)." if more else None,
        provenance=provenance_view(prov, command),
        cautions=cautions(),
        unread_summary=(f"{len(unreadable)} input(s) could not be read, so the lot is not fully judged and cannot "
                        "pass (lumeval exits with code 2). Every other result here covers the inputs that were "
                        "read.") if unreadable else None,
        unread=Table(("Input", "Why it could not be read"),
                     tuple(Row(cells(a, b), True) for a, b in unreadable)) if unreadable else None,
        skipped=Table(("Entry", "Why it was left out"), tuple(Row(cells(a, b)) for a, b in skipped)) if skipped else None,
    )


@dataclass(frozen=True)
class EvaluationView:
    """An Evaluation on its own (a notebook's view): key figures, notes and cautions."""

    subtitle: str
    key_figures: KeyFiguresView
    notes: tuple[tuple[str, str], ...]
    notes_more: str | None
    cautions: tuple[str, ...]


def evaluation_view(ev) -> EvaluationView:
    from .view import cautions, notes_by_message

    n = len(ev.spectra.names)
    note_rows, more = notes_by_message(ev, MAX_TABLE_ROWS)
    return EvaluationView(f"{n} spectr{'a' if n != 1 else 'um'}",
                          key_figures_view(ev, list(ev.spectra.names), [None] * n), tuple(note_rows),
                          f"… and {more} further notes (see the JSON output)." if more else None, cautions())


@dataclass(frozen=True)
class CheckView:
    """A check result on its own (a notebook's view): verdict, per-sample summary, checks."""

    subtitle: str
    verdict: VerdictView
    cautions: tuple[str, ...]


def check_view(result) -> CheckView:
    from .report_inputs import verdict_rows
    from .view import cautions

    names = list(result.names)
    rows = verdict_rows(result, names)
    n = len(names)
    return CheckView(f"{n} spectr{'a' if n != 1 else 'um'}, {len(result.results)} clause{'s' if len(result.results) != 1 else ''}",
                     verdict_view(rows, result, lot=None, n=n, overall=None, grid_max=CHECK_GRID_MAX)
                     if rows else VerdictView(judged=False), cautions())


def check_summary(result) -> str:
    """``CheckResult(5 spectra, 3 clauses, crit.toml: fail; 12 pass, 3 fail)``: one short line."""
    n, k = len(result.names), len(result.results)
    counts = {o: sum(o2 == o for r in result.results for o2 in r.outcome) for o in OUTCOME_ORDER}
    file = str(result.criteria_file)
    file = file if len(file) <= 40 else "…" + file[-39:]
    return (f"CheckResult({n} spectr{'a' if n != 1 else 'um'}, {k} clause{'s' if k != 1 else ''}, {file!r}: "
            f"{result.overall}; " + ", ".join(f"{c} {o}" for o, c in counts.items() if c) + ")")
