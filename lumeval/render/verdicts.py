"""Renderings of verdicts (``lumeval check``) and claim checks (``lumeval claims``).

Terminal (rich renderables), JSON and CSV of the same results; nothing is computed here.

Terminal layout (our own): for each spectrum a verdict line, then one row per clause in the
order of the criteria file — requirement, measured value, limit, margin, result. A failure is
impossible to miss without colour: the result cell reads ``✘ FAIL`` in capitals, the row is
marked with ``>>`` in the first column, and the verdict line spells the number of failed
clauses and of every other outcome that is not a pass (not valid, indeterminate, not judged);
colour (red/green) only repeats what the words say. Clauses the check leaves to another command
(over a range of settings, or a whole lot) are named in the overall verdict, which then speaks
of the requirements judged here only. An undefined figure prints as
"n/a" with the reason below the table, never as a number. Margins are the distance of the
measured value to the nearer tolerance limit, positive inside the limits; under a guarded
decision rule the guard band is not subtracted from them (the footer says so).
"""

from __future__ import annotations

import json
import math
from collections import Counter
from typing import Any

import numpy as np

from .fit import min_width, set_key_columns
from .safe import clean
from .safe import text as _text
from .tables import CAUTIONS

JSON_SCHEMA_VERSION = 1

_WORD = {"pass": "✔ pass", "fail": "✘ FAIL", "indeterminate": "? INDETERMINATE", "not judged": "– NOT JUDGED",
         "not valid": "✘ NOT VALID"}
_STYLE = {"pass": "green", "fail": "bold red", "indeterminate": "bold yellow", "not judged": "bold yellow",
          "not valid": "bold red"}

def _spec(figure: str) -> str:
    """The human format of ``figure`` without a sign (the figure registry's decimals; margins add
    a sign and, where a margin would print as zero, more decimals)."""
    from .. import figures

    try:
        return figures.get(figure).spec(sign=False)
    except KeyError:
        return ".1f"


def _value_spec(figure: str) -> str:
    """The human format of a measured value of ``figure`` (with a sign for signed figures such as Duv)."""
    from .. import figures

    try:
        return figures.get(figure).spec()
    except KeyError:
        return ".1f"


def _f(v, spec: str, unit: str = "") -> str:
    f = float(v)
    if not math.isfinite(f):
        return "n/a"
    text = format(f, spec)
    if float(text) == 0.0:
        text = format(0.0, spec.replace("+", ""))
    sp = "" if unit in ("", "%") else " "
    return f"{text}{sp}{unit}" if unit else text


def _num(v):
    f = float(v)
    return f if math.isfinite(f) else None


def _extra_decimals(margin: float, spec: str) -> int:
    """Extra decimals needed so that a non-zero margin does not print at the decimals of the
    fixed-point ``spec`` (like "+.1f") as zero: the figure registry's rule
    (:func:`lumeval.figures.margin_extra_decimals`)."""
    from ..figures import margin_extra_decimals

    return margin_extra_decimals(margin, int(spec.partition(".")[2][:-1] or 0))


def _more(spec: str, k: int) -> str:
    """``spec`` (like "+.1f") with ``k`` more decimals."""
    head, _, tail = spec.partition(".")
    digits = int(tail[:-1] or 0)
    return f"{head}.{digits + k}{tail[-1]}"


def measured_text(r, i: int) -> str:
    """The measured value of result ``r`` for spectrum ``i`` as a person reads it."""
    if r.kind == "ansi_quadrangle":
        cct, duv = r.details["cct_K"][i], r.details["duv"][i]
        # an undefined CCT reads "CCT n/a", without the unit (a review found "CCT n/a K")
        return f"CCT {_f(cct, '.0f', 'K')}, Duv {_f(duv, '+.4f')}"
    if r.kind == "sdcm":
        return _f(r.measured[i], _more('.2f', _extra_decimals(r.margin[i], '.2f')), "steps")
    spec, vspec = _spec(r.figure), _value_spec(r.figure)
    k = _figure_decimals(r, i, spec)
    compared, n = (getattr(r, "details", None) or {}).get("compared"), getattr(r, "round_to", None)
    if compared is None or n is None:
        return _f(r.measured[i], _more(vspec, k), r.unit)
    # judged by the rounding method: the value in full (two decimals beyond the rounding, and at
    # least one: 2999.6 K rounded to hundreds is "2999.6 K → 3000 K", not "3000 K → 3000 K") → the
    # one compared
    k = max(k, max(n + 2, 1) - int(vspec.partition(".")[2][:-1] or 0))
    head = vspec.partition(".")[0]
    return f"{_f(r.measured[i], _more(vspec, k), r.unit)} → {_f(compared[i], f'{head}.{max(n, 0)}f', r.unit)}"


def _figure_decimals(r, i: int, spec: str) -> int:
    """Decimals beyond ``spec``'s for a figure clause's measured value, margin and U: enough that
    the margin does not print as zero and, judged under uncertainty, that U shows two
    significant digits (the measured value and margin then to U's decimal place: "79.5 ± 0.2,
    margin +0.2" read the same for a margin just above the guard band and one just below)."""
    k = _extra_decimals(r.margin[i], spec)
    big_u = (getattr(r, "details", None) or {}).get("U")
    if big_u is not None and i < len(big_u) and math.isfinite(float(big_u[i])) and float(big_u[i]) > 0:
        from .view import uncertainty_decimals

        k = max(k, uncertainty_decimals(float(big_u[i])) - int(spec.partition(".")[2][:-1] or 0))
    return k


def expanded_text(r, i: int) -> str:
    """U of a figure clause at the decimals of its measured value and margin ("" for other kinds
    or without a finite U)."""
    big_u = (getattr(r, "details", None) or {}).get("U")
    if r.kind in ("ansi_quadrangle", "sdcm") or big_u is None or not math.isfinite(float(big_u[i])):
        return ""
    spec = _spec(r.figure)
    return _f(float(big_u[i]), _more(spec, _figure_decimals(r, i, spec)), r.unit)


def margin_text(r, i: int) -> str:
    """The margin (to the nearer tolerance limit, positive inside), never printed as a misleading zero."""
    if r.kind == "ansi_quadrangle":
        return f"{_f(r.margin[i], _more('+.4f', _extra_decimals(r.margin[i], '.4f')))} Δu'v'"
    if r.kind == "sdcm":
        k = _extra_decimals(r.margin[i], ".2f")
        return f"{_f(r.margin[i], _more('+.2f', k))} steps ({_f(r.details['delta_upvp'][i], '+.4f')} Δu'v')"
    spec = _spec(r.figure)
    if getattr(r, "round_to", None) is not None:  # the rounding method: the margin exactly, as written
        return _f(r.margin[i], f"+.{_rounded_margin_decimals(r)}f", r.unit)
    return _f(r.margin[i], "+" + _more(spec, _figure_decimals(r, i, spec)), r.unit)


def _rounded_margin_decimals(r) -> int:
    """Decimals of a margin judged by the rounding method: the rounded value less a limit as
    the file writes it is exact at the larger of their decimals (77.5 against 80 is −2.5, which
    the figure's own format showed as −2; found by a review)."""
    from ..criteria.model import limit_number

    ds = [max(int(r.round_to), 0)]
    for v in (r.lower, r.upper):
        if v is not None:
            ds.append(len(limit_number(v).partition(".")[2]))
    return max(ds)


# --------------------------------------------------------------------------- words the terminal and the HTML share


def _skip_notes(result) -> tuple:
    """The clauses ``result`` (a ``CheckResult``) did not judge per spectrum
    (:class:`lumeval.criteria.verdicts.NotJudgedHere`, as the check recorded them)."""
    return tuple(getattr(result, "not_judged", ()) or ())


def not_judged_here(result, judged_scopes: tuple[str, ...] = ("sample",)) -> tuple:
    """The clauses of ``result`` (a ``CheckResult``) that were not judged because they apply to
    a scope the report does not judge (``check``: only ``"sample"``; a lot report also ``"lot"``)."""
    return tuple(c for c in _skip_notes(result) if c.scope not in judged_scopes)


def check_notes(result, leave_out=()) -> tuple[str, ...]:
    """The notes of ``result`` other than its not-judged clauses (listed on their own): the
    criteria file's WARNINGs and the run's notes, less those in ``leave_out``."""
    skip = {c.note for c in _skip_notes(result)} | set(leave_out)
    return tuple(str(n) for n in getattr(result, "notes", ()) or () if str(n) not in skip)


def _ids(ids: list[str], shown: int = 5) -> str:
    return ", ".join(ids[:shown]) + (f" and {len(ids) - shown} more" if len(ids) > shown else "")


def not_judged_text(skipped, command: str = "check") -> str:
    """``1 requirement not judged by `lumeval check` (Ra-over: judged by `lumeval mix` or
    `lumeval series`)``: the clauses ``command`` left to other commands, by command."""
    by: dict[str, list[str]] = {}
    for c in skipped:
        by.setdefault(c.judged_by, []).append(c.clause_id)
    return (f"{_count(len(skipped), 'requirement')} not judged by `lumeval {command}` ("
            + "; ".join(f"{_ids(ids)}: judged by {who}" for who, ids in by.items()) + ")")


#: Every outcome, worst first, as a count says it ("1 failed, 6 not valid, 2 not judged").
TALLY_WORDS = (("fail", "failed"), ("not valid", "not valid"), ("indeterminate", "indeterminate"),
               ("not judged", "not judged"), ("pass", "passed"))


def outcome_tally(outcomes, *, leave_out: tuple[str, ...] = ("pass",), word=None) -> str:
    """The counts of ``outcomes`` in words, worst first, without those in ``leave_out``
    ("" when nothing is left); ``word(outcome)`` gives a report's own word for an outcome
    (default :data:`TALLY_WORDS`)."""
    c = Counter(outcomes)
    return ", ".join(f"{c[o]} {word(o) if word else w}" for o, w in TALLY_WORDS if c[o] and o not in leave_out)


def verdict_tail(outcomes, verdict: str, skipped: bool = False) -> str:
    """What one spectrum's verdict line says after its name: how many of its requirements met,
    or every outcome that is not a pass ("1 of 10 requirements FAILED, 6 not valid, 2 not judged")."""
    n, c = len(outcomes), Counter(outcomes)
    of = _count(n, "requirement")
    if verdict == "pass":
        here = " judged here" if skipped else ""
        return f"the requirement{here} is met" if n == 1 else f"all {n} requirements{here} met"
    if verdict == "fail":
        more = outcome_tally(outcomes, leave_out=("pass", "fail"))
        return f"{c['fail']} of {of} FAILED" + (f", {more}" if more else "")
    if verdict == "not valid":
        more = outcome_tally(outcomes, leave_out=("pass", "not valid"))
        return (f"{c['not valid']} of {of} rest{'s' if c['not valid'] == 1 else ''} on figures outside the validity "
                "range (|Duv| > 0.05)" + (f", {more}" if more else "") + " — not a pass")
    return f"{c['indeterminate'] + c['not judged']} of {of} could not be decided — not a pass"


# --------------------------------------------------------------------------- terminal


def _header(title: str, file: str, ident: dict):
    from rich.text import Text

    t = Text()
    t.append(title + "\n", style="bold")
    t.append(f"file: {clean(file)}\n")
    for k, v in ident.items():
        t.append(f"{clean(k)}: {clean(v)}\n")
    return t


def check_renderables(result, *, width: int | None = None, evaluation=None, wide: bool = False) -> list:
    """Rich renderables for a :class:`~lumeval.criteria.verdicts.CheckResult`.

    Layout: one section per spectrum (verdict line and a table of its clauses, numbers never
    split), unless there are more than :data:`DETAIL_MAX` spectra or the sections do not fit
    ``width`` terminal columns: then one row per spectrum with its verdict and the key figures
    of ``evaluation`` (when given), the spectra that did not pass with their failed clauses, and
    where to see the rest (``--wide``, ``--format csv`` / ``json``). ``wide`` keeps the sections
    at any width; ``width`` None (a file) switches only for many spectra.
    """
    from rich.text import Text

    out = [_header("Acceptance check", result.criteria_file, result.identification)]
    for note in getattr(result, "notes", ()):
        out.append(Text(f"note: {clean(note)}", style="dim"))
    if getattr(result, "uncertainty", None):
        out.append(_uncertainty_text(result.uncertainty))
    many = len(result.names) > DETAIL_MAX
    skipped = not_judged_here(result)  # clauses left to `mix`, `series` or `lot`: said in the verdicts
    sections = _spectrum_sections(result, bool(skipped)) if wide or not many else []  # not built for a large run
    narrow = width is not None and max((min_width(t) for t in sections if not isinstance(t, Text)), default=0) > width
    if not wide and (many or narrow):
        *rows, how_to_see_more = _compact_check(result, evaluation, width, "many" if many else "narrow")
        out.extend(rows)
        out.append(_requirements_text(result))
        if many:
            out.extend(_summary_renderables(result))
        else:
            out.extend(_not_passed_text(result))
        out.append(how_to_see_more)
        out.append(_overall_text(result.overall, result.verdicts, skipped))
        out.append(_sources_text(result))
        out.append(_cautions_text())
        return out
    out.extend(sections)
    out.append(_overall_text(result.overall, result.verdicts, skipped))
    out.append(_sources_text(result))
    out.append(_cautions_text())
    return out


def _spectrum_sections(result, skipped: bool = False) -> list:
    """Per spectrum: the verdict line (every outcome that is not a pass counted; with
    ``skipped``, a pass is of the requirements judged here), the table of its clauses (id,
    measured, margin and result never wrap; the requirement column wraps, at least
    :data:`_REQUIREMENT_MIN` wide), notes."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    out: list[Any] = []
    from .view import check_grid

    words = check_grid(result)  # measured values and margins as the HTML report words them
    for i, name in enumerate(result.names):
        v = result.verdict(i)
        line = Text("\n")
        if v == "pass":
            line.append("✔ PASS  ", style="bold green")
        elif v in ("fail", "not valid"):
            line.append(f"{_WORD[v].upper()}  ", style="bold red")
        else:
            line.append(f"? {v.upper()}  ", style="bold yellow")
        line.append(clean(name), style="bold")
        line.append(f" — {verdict_tail([r.outcome[i] for r in result.results], v, skipped)}")
        if result.sources[i]:
            line.append(f"\n  file: {clean(result.sources[i])}", style="dim")
        out.append(line)
        t = Table(box=box.SIMPLE_HEAVY, pad_edge=False, show_edge=False)
        t.add_column("", no_wrap=True)
        t.add_column("id", overflow="fold")  # the criteria's ids: folded, never cut
        t.add_column("requirement", min_width=_REQUIREMENT_MIN)
        t.add_column("measured", justify="right", no_wrap=True)
        t.add_column("margin", justify="right", no_wrap=True)
        t.add_column("result", no_wrap=True)
        set_key_columns(t, 2)  # split to fit: each part repeats the mark and the clause id
        notes = []
        for k, r in enumerate(result.results):
            o = r.outcome[i]
            mark = ">>" if o != "pass" else ""
            style = "bold red" if o == "fail" else ("yellow" if o != "pass" else None)
            req = _text(r.label)
            if r.limit_text not in r.label:
                req.append(f"\n{clean(r.limit_text)}", style="dim")
            if getattr(r, "note", ""):
                req.append(f"\nnote: {clean(r.note)}", style="italic")
            said = words[k][i]
            meas, res_cell = said.measured, Text(_WORD[o], style=_STYLE[o])
            if r.uncertainty is not None:
                meas, res_cell = _with_uncertainty(r, i, meas, res_cell, said.expanded)
            t.add_row(mark, _text(r.clause_id), req, Text(meas), Text(said.margin), res_cell, style=style)
            if r.reason and r.reason[i]:
                notes.append(f"{r.clause_id}: {r.reason[i]}")
        out.append(t)
        append_notes(out, notes, result.warnings[i] if i < len(result.warnings) else ())
    return out


def append_notes(out: list, notes: list, warnings) -> None:
    """Append a table's notes and its spectrum's warnings to ``out`` as one block of
    "note:" lines (nothing when there are none)."""
    from rich.text import Text

    lines = [*notes, *warnings]
    if lines:
        nt = Text()
        for s in lines:
            nt.append(f"  note: {clean(s)}\n")
        out.append(nt)


#: The requirement column of a spectrum's clause table is at least this wide (characters).
_REQUIREMENT_MIN = 22
#: The compact layout lists at most this many spectra row by row (every row: --format csv/json).
_ROWS_MAX = 100


def _failed_extra(result, fig, i: int) -> int:
    """Extra decimals for figure ``fig`` of spectrum ``i`` in the one-row-per-spectrum table: as
    many as a clause on that figure that the spectrum did not pass needs for its margin not to
    read zero, so that a failed value never prints as its limit (candidate C's Rg 94.67 against
    Rg 95 … 110 printed "95"; it prints "94.7")."""
    from ..figures import margin_extra_decimals

    return max((margin_extra_decimals(r.margin[i], fig.decimals) for r in result.results
                if r.figure == fig.name and r.outcome[i] != "pass"), default=0)


def _compact_check(result, evaluation, width: int | None, why: str) -> list:
    """One row per spectrum: verdict, name (or its number, with the names listed under the
    table when they do not fit), the key figures of ``evaluation`` (registry formats, never
    split) and how many requirements it failed; then where the rest is."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    from .. import figures
    from .terminal import COMPACT_FIGURES

    n = len(result.names)
    shown = list(range(min(n, _ROWS_MAX)))
    figs = [figures.FIGURES[k] for k in COMPACT_FIGURES if k in figures.FIGURES] if evaluation is not None else []
    heads = [f.heading for f in figs]
    cells = [[f.format(v[i], _failed_extra(result, f, i)) for i in shown]
             for f, v in ((f, f.value(evaluation)) for f in figs)]
    verdict = [_WORD[result.verdict(i)] for i in shown]
    n_clauses = len(result.results)
    counts = []
    for i in shown:
        bad = sum(1 for r in result.results if r.outcome[i] != "pass")
        counts.append(f"{n_clauses - bad}/{n_clauses}")
    names = [clean(result.names[i]) for i in shown]

    def table(in_table: bool):
        t = Table(box=box.SIMPLE_HEAVY, pad_edge=False, show_edge=False)
        t.add_column("", no_wrap=True)  # ">>" marks a spectrum that did not pass, as in the sections
        t.add_column("result", no_wrap=True)
        t.add_column("spectrum" if in_table else "#", no_wrap=True, style="bold")
        for h in heads:
            t.add_column(h, justify="right", no_wrap=True)
        t.add_column("met", justify="right", no_wrap=True)
        for row, i in enumerate(shown):
            v = result.verdict(i)
            t.add_row(">>" if v != "pass" else "", Text(verdict[row], style=_STYLE[v]),
                      _text(names[row]) if in_table else str(i + 1), *[col[row] for col in cells], counts[row])
        set_key_columns(t, 3)  # split to fit the terminal: each part repeats mark, result and row
        return t

    t = table(True)
    in_table = width is None or min_width(t) <= width
    if not in_table:  # names too long for one row: numbers in the table, the names listed under it
        t = table(False)
    out: list[Any] = [Text(f"\n{_count(n, 'spectrum', 'spectra')}, one row each (met: requirements met, of "
                           f"{n_clauses})", style="bold"), t]
    if not in_table:
        out += [Text(f"  {i + 1:>{len(str(n))}}  {names[row]}") for row, i in enumerate(shown)]
    if n > len(shown):
        out.append(Text(f"  … and {n - len(shown)} more spectra: every row is in --format csv or json"))
    reason = (f"more than {DETAIL_MAX} spectra" if why == "many" else
              f"the terminal is {width} columns wide")
    out.append(Text(f"One row per spectrum ({reason}): each clause of each spectrum with `lumeval check --wide`"
                    f"{' in a wider terminal' if why == 'narrow' else ''}, or `--format csv` / `--format json`.",
                    style="italic"))
    return out


def _requirements_text(result):
    """The requirements every spectrum was judged against, once (the compact layout has no
    per-spectrum sections to show them): id, requirement, its limit and source wording, note."""
    from rich.text import Text

    t = Text("Requirements, for every spectrum:\n", style="bold")
    for r in result.results:
        t.append(f"  {clean(r.clause_id)}: ", style="bold")
        t.append(clean(r.label))
        if r.limit_text and r.limit_text not in r.label:
            t.append(f" — {clean(r.limit_text)}", style="dim")
        if getattr(r, "note", ""):
            t.append(f" (note: {clean(r.note)})", style="italic")
        t.append("\n")
    return t


def _not_passed_text(result) -> list:
    """The spectra that did not pass, each with its failed (and undecided) clauses and margins."""
    from rich.text import Text

    bad = [i for i, v in enumerate(result.verdicts) if v != "pass"]
    if not bad:
        return []
    txt = Text(f"Spectra that did not pass ({len(bad)} of {len(result.names)}):\n", style="bold")
    for i in bad[:_LIST_MAX]:
        failed = [f"{r.clause_id} ({margin_text(r, i)})" for r in result.results if r.outcome[i] == "fail"]
        failed += [f"{r.clause_id} (not valid: outside the validity range)" for r in result.results
                   if r.outcome[i] == "not valid"]
        open_ = [r.clause_id for r in result.results if r.outcome[i] in ("indeterminate", "not judged")]
        v = result.verdict(i)
        txt.append(f"  {_WORD[v]}  {clean(result.names[i])}: ", style=_STYLE[v])
        txt.append(clean(", ".join(failed + [f"{c} (undecided)" for c in open_])) + "\n")
    if len(bad) > _LIST_MAX:
        txt.append(f"  … and {len(bad) - _LIST_MAX} more: every row is in --format csv or json\n")
    return [txt]


def _with_uncertainty(r, i: int, meas: str, res_cell, expanded: str = ""):
    """Measured value with its expanded uncertainty U (and the 95 % interval), result with p_c
    (lumeval.uncertainty; the unit of U is the unit of the judged quantity). ``expanded``: U
    as the HTML report words it (:func:`lumeval.render.view.check_line`: two significant
    digits, to the decimal place of the measured value and margin)."""
    u = float(r.uncertainty[i])
    if not math.isfinite(u):
        return meas + "\n± n/a", res_cell
    big_u = float(r.details["U"][i]) if "U" in r.details else 2.0 * u
    if r.kind == "ansi_quadrangle":
        meas += f"\nΔu'v' ± {big_u:.2g}"
    elif r.kind == "sdcm":
        meas += f"\n± {big_u:.2g} steps"
    elif expanded:
        meas += f"\n± {expanded}"
    else:
        spec = _more(_spec(r.figure), 1)
        meas += f"\n± {_f(big_u, spec, r.unit)}"
    p = r.p_conformance[i] if r.p_conformance is not None else float("nan")
    if math.isfinite(float(p)):
        p = float(p)
        ptxt = "< 0.001" if p < 0.001 else ("> 0.999" if p > 0.999 else f"{p:.3f}")
        res_cell.append(f"\np_c {ptxt}", style="dim")
    return meas, res_cell


def _uncertainty_text(info: dict):
    """The decision rule in words, the instrument model and the Monte Carlo settings."""
    from rich.text import Text

    t = Text("\n")
    t.append(clean(info.get("rule_text", "")) + "\n")
    mc = info.get("monte_carlo", {})
    inst = info.get("instrument", {})
    t.append(
        f"Measured values are shown ± U (expanded uncertainty, U = {info.get('coverage_factor', 2):g} × u) from "
        f"{mc.get('draws', '?')} Monte Carlo draws per spectrum (JCGM 101:2008, seed {mc.get('seed', '?')}); "
        "p_c is the probability that the true value conforms (normal distribution, JCGM 106:2012 §7; where some "
        "draws left the quantity's domain, the fraction of all draws inside the limits).\n",
        style="dim",
    )
    t.append(
        "Instrument model"
        + (f" '{clean(inst['name'])}'" if inst.get("name") else "")
        + f" ({clean(inst.get('source', ''))}): wavelength offset u = {inst.get('wavelength_offset_nm', 0):g} nm, "
        f"noise {inst.get('noise_relative', 0):g} of signal + {inst.get('noise_absolute', 0):g} of peak, "
        f"bandwidth {inst.get('bandwidth_nm', 0):g} nm FWHM, stray light ±{inst.get('stray_light', 0):g} of peak, "
        f"photometric scale u = {inst.get('photometric_scale', 0):g} (no effect on ratio figures).\n",
        style="dim",
    )
    for n in info.get("notes", []):
        t.append(f"  note: {clean(n)}\n", style="dim")
    return t


#: Above this many spectra the terminal report summarises per clause and lists the spectra
#: that did not pass (every row is in --format csv / json).
DETAIL_MAX = 12
_LIST_MAX = 60


def _summary_renderables(result) -> list:
    from rich import box
    from rich.table import Table
    from rich.text import Text

    from ..criteria.verdicts import worst_judged

    n = len(result.names)
    t = Table(title=f"{n} spectra, clause by clause", title_justify="left", box=box.SIMPLE_HEAVY, pad_edge=False, show_edge=False)
    for col, kw in (("", {"no_wrap": True}), ("id", {"no_wrap": True}), ("requirement", {}), ("passed", {"justify": "right"}),
                    ("FAILED", {"justify": "right"}), ("undecided", {"justify": "right"}), ("worst margin", {"justify": "right"}),
                    ("worst spectrum", {})):
        t.add_column(col, **kw)
    for r in result.results:
        oc = list(r.outcome)
        npass, nfail = oc.count("pass"), oc.count("fail")
        nopen = n - npass - nfail
        # the worst judged spectrum (a failed one without a margin first: margin n/a; a passing
        # spectrum's margin was shown as the worst; found by a review)
        k = worst_judged(r.margin, oc)
        if k is None:
            worst, who = "n/a", ""
        else:
            worst = margin_text(r, k) if np.isfinite(float(r.margin[k])) else "n/a"
            who = result.names[k]
        style = "bold red" if nfail else ("yellow" if nopen else None)
        t.add_row(">>" if nfail or nopen else "", _text(r.clause_id), _text(r.label), str(npass), f"✘ {nfail}" if nfail else "0",
                  str(nopen), _text(worst), _text(who), style=style)
    out: list[Any] = [t, *_not_passed_text(result)]
    nwarn = sum(1 for w in result.warnings if w)
    if nwarn:
        out.append(Text(f"{_count(nwarn, 'spectrum', 'spectra')} carr{'ies' if nwarn == 1 else 'y'} notes (interpolation, validity limits...): see --format json.", style="dim"))
    return out


def _count(n: int, one: str, many: str | None = None) -> str:
    """"1 requirement", "3 requirements", "1 spectrum", "2 spectra"."""
    return f"{n} {one if n == 1 else (many or one + 's')}"


def _overall_text(overall: str, verdicts, skipped=()):
    """The overall verdict from the spectra's ``verdicts`` (a failure counts the other spectra
    that did not pass too); with ``skipped`` (clauses left to other commands) a pass is of the
    requirements judged here, and every verdict says which were not judged and by what they are."""
    from rich.text import Text

    n, nfail = len(verdicts), sum(1 for v in verdicts if v == "fail")
    t = Text("\n")
    if overall == "pass":
        t.append("OVERALL: ✔ PASS — " + ("the spectrum meets" if n == 1 else f"all {n} spectra meet")
                 + " every requirement" + (" judged here" if skipped else ""), style="bold green")
    elif overall == "fail":
        more = outcome_tally(verdicts, leave_out=("pass", "fail"))
        t.append(f"OVERALL: ✘ FAIL — {nfail} of {_count(n, 'spectrum', 'spectra')} failed at least one requirement"
                 + (f", {more}" if more else ""), style="bold red")
    elif overall == "not valid":
        t.append("OVERALL: ✘ NOT VALID — some requirements rest on figures outside their validity range; "
                 "this is not a pass", style="bold red")
    else:
        t.append(f"OVERALL: ? {overall.upper()} — some requirements could not be decided; this is not a pass", style="bold yellow")
    if skipped:
        t.append(f"; {clean(not_judged_text(skipped))}", style="bold")
    return t


def _sources_text(result):
    from rich.text import Text

    seen = []
    for r in result.results:
        if r.source and r.source not in seen:
            seen.append(r.source)
    # a bare name ("ANSI C78.377") is dropped when a fuller entry of the same source is listed
    seen = [a for a in seen if not any(b != a and b.startswith(a) and b[len(a)] in " -(" for b in seen)]
    t = Text("\nSources of the limits and regions:\n", style="dim")
    for s in seen:
        t.append(f"  - {clean(s)}\n", style="dim")
    # the rule of the clauses judged on their unrounded value (those with round_to say their own below)
    plain = [r for r in result.results if getattr(r, "round_to", None) is None]
    rule = (clean(plain[0].decision_rule) if plain else
            "simple acceptance of the rounded values (each requirement's measured value rounded as it states, ties to "
            "even, decides; no guard band)" if result.results else "n/a")
    t.append(f"  Decision rule: {rule}; "
             f"{margin_meaning((getattr(result, 'uncertainty', None) or {}).get('decision_rule'))}\n", style="dim")
    if any(getattr(r, "round_to", None) is not None for r in result.results):
        t.append(f"  {ROUNDING_NOTE}\n", style="dim")
    return t


#: What a check says when a clause is judged by the rounding method (terminal footer, HTML notes).
ROUNDING_NOTE = ("A requirement marked \"value rounded\" compares the measured value rounded as it says (ties to "
                 "even; shown as measured → compared; the rounding method of ASTM E29): its margin and result are "
                 "those of the rounded value.")


def not_valid_part(y) -> str:
    """How many of a lot yield's failed samples are not valid (counted as failing), for the
    yield line of the terminal and HTML reports, or nothing."""
    nv = getattr(y, "not_valid", 0)
    return f" (of which {nv} not valid: a judged figure computed outside its validity range)" if nv else ""


def margin_meaning(rule: str | None = None) -> str:
    """What a printed margin is measured to, under decision rule ``rule`` (None or "simple": no
    guard band): the clause footer of the terminal report and the rule text of the HTML one."""
    base = "margins are the distance of the measured value to the nearer tolerance limit, positive inside the limits"
    if rule == "guarded-acceptance":
        return base + "; the guard band w is not subtracted: a pass needs a margin of at least w = r × U."
    if rule == "guarded-rejection":
        return base + "; the guard band w is not subtracted: a fail needs a margin below −w, w = r × U."
    return base + "."


def _cautions_text():
    from rich.text import Text

    t = Text("Cautions:\n", style="dim")
    for c in CAUTIONS:
        t.append(f"  - {c}\n", style="dim")
    return t


def print_check(result, console=None, *, evaluation=None, wide: bool = False) -> None:
    """Print the check report at the console's width (see :func:`check_renderables`)."""
    from .safe import console as safe_console

    console = console or safe_console()
    for r in check_renderables(result, width=console.width, evaluation=evaluation, wide=wide):
        console.print(r)


# --------------------------------------------------------------------------- JSON / CSV


def check_record(result) -> dict:
    """The check result as a JSON-ready dict (schema documented in docs/criteria.md)."""
    spectra = []
    for i, name in enumerate(result.names):
        clauses = []
        for r in result.results:
            rec = {
                "id": r.clause_id,
                "group": r.group,
                "kind": r.kind,
                "label": r.label,
                "figure": r.figure,
                "unit": r.unit,
                "measured": _num(r.measured[i]),
                "lower": r.lower,
                "upper": r.upper,
                "limit": r.limit_text,
                "margin": _num(r.margin[i]),
                "outcome": r.outcome[i],
                "reason": (r.reason[i] if r.reason else "") or None,
                "details": {k: _num(v[i]) for k, v in r.details.items()},
                "uncertainty": None if r.uncertainty is None else _num(r.uncertainty[i]),
                "p_conformance": None if r.p_conformance is None else _num(r.p_conformance[i]),
                "decision_rule": r.decision_rule,
                "source": r.source,
                "line": r.line,
                # decimals the value was rounded to before comparison (details.compared); null: unrounded
                "round_to": getattr(r, "round_to", None),
            }
            clauses.append(rec)
        spectra.append(
            {
                "name": name,
                "source": result.sources[i],
                "verdict": result.verdict(i),
                "warnings": list(result.warnings[i]) if i < len(result.warnings) else [],
                "clauses": clauses,
            }
        )
    from ..schemas import header

    return {
        **header("check"),
        "lumeval_check": JSON_SCHEMA_VERSION,
        "criteria_file": result.criteria_file,
        "identification": result.identification,
        "overall": result.overall,
        "exit_code": result.exit_code,
        "uncertainty": getattr(result, "uncertainty", None) or None,
        "notes": list(getattr(result, "notes", ())),
        "spectra": spectra,
        "cautions": list(CAUTIONS),
    }


def check_to_json(result) -> str:
    return json.dumps(check_record(result), indent=2, ensure_ascii=False) + "\n"


# the check CSV is written with the other CSV reports (its per-spectrum warnings column and its
# "# note:" rows: docs/output-formats.md); kept importable from here
from .tables import CHECK_CSV_COLUMNS, check_to_csv  # noqa: E402, F401
