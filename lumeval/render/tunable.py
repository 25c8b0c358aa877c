"""Renderings of ``lumeval mix`` and ``lumeval series``: terminal tables, JSON and CSV.

Nothing is computed here except the labels of ANSI C78.377 categories each setting falls in
(a lookup in :mod:`lumeval.criteria.regions`). Text from files (channel and spectrum names,
file names) is untrusted: it goes through :mod:`lumeval.render.safe` (plain rich ``Text`` with
control characters escaped, never parsed as markup; CSV text cells that a spreadsheet would
run as a formula prefixed with an apostrophe).

Terminal layout (our own): a heading with the model and the notes; one row per setting with the
weights (mix) or the file and Δu′v′ (series), the headline figures (CCT, Duv, Ra, R9, Rf, Rg,
LER), the ANSI category the chromaticity falls in and the setting's verdict; then one row per
clause with its verdict over the range and the worst setting; then the cautions. "not
reachable" is spelled out in every figure cell of a setting the channels cannot reach. Every
figure of every setting is in the JSON and CSV outputs.
"""

from __future__ import annotations

import csv
import io
import json
import math
import re
from typing import Any

import numpy as np

from .fit import set_key_columns
from .tables import CAUTIONS, spectrum_records

#: The headline figures of the per-setting tables (issue 16: Ra, R9, Rf, Rg, Duv, LER, with CCT).
HEADLINE_NAMES = ("cct_K", "duv", "Ra", "R9", "Rf", "Rg", "ler_lm_per_W")


def headline() -> list[tuple[str, str, str]]:
    """(name, heading, format spec) of each headline figure, from the figure registry."""
    from .. import figures

    return [(n, figures.get(n).heading, figures.get(n).spec()) for n in HEADLINE_NAMES]


def csv_figures() -> list[str]:
    """Every figure with a CSV column, in the registry's order (:mod:`lumeval.figures`)."""
    from .. import figures

    return [n for n in figures.names() if figures.get(n).csv]

NOT_REACHABLE = "not reachable"

def clean(s) -> str:
    """Untrusted text with control characters escaped (:func:`lumeval.render.safe.clean`)."""
    from .safe import clean as _clean

    return _clean(s)


def _csv_cell(s) -> str:
    from .safe import csv_text

    return csv_text(s)


def _f(v, spec: str) -> str:
    v = float(v)
    if not math.isfinite(v):
        return "n/a"
    t = format(v, spec)
    return t if float(t) != 0 else format(0.0, spec.replace("+", ""))


def _num(v):
    v = float(v)
    return v if math.isfinite(v) else None


def ansi_category(upvp: np.ndarray) -> list[str]:
    """The ANSI C78.377-2017 nominal CCT category whose quadrangle holds each point ("" if none)."""
    from ..criteria import regions

    pts = np.atleast_2d(np.asarray(upvp, dtype=float))
    out = [""] * pts.shape[0]
    fin = np.all(np.isfinite(pts), axis=1)
    for nom in regions.ANSI_C78377_2017:
        inside = np.zeros(pts.shape[0], dtype=bool)
        inside[fin] = regions.ansi_quadrangle(nom).contains(pts[fin])
        for i in np.flatnonzero(inside):
            if not out[i]:
                out[i] = f"{nom} K"
    return out


def _upvp(result) -> np.ndarray:
    return np.stack([result.figure("u_prime"), result.figure("v_prime")], axis=-1)


def _per_setting(report):
    """(labels, available, reasons) of a mix or series report."""
    r = report.result
    if report.kind == "mix":
        return r.names, r.reachable, r.reason
    return r.labels, np.ones(len(r), dtype=bool), ("",) * len(r)


# --------------------------------------------------------------------------- terminal


def _text(s, style: str | None = None):
    from .safe import text

    return text(s, style)


_WORD = {"pass": "✔ pass", "fail": "✘ FAIL", "not valid": "✘ NOT VALID", "not judged": "– NOT JUDGED",
         "indeterminate": "? INDETERMINATE", "n/a": "·"}
_STYLE = {"pass": "green", "fail": "bold red", "not valid": "bold red", "not judged": "bold yellow",
          "indeterminate": "bold yellow", "n/a": "dim"}


def renderables(report) -> list:
    """Rich renderables of a :class:`lumeval.tunable.api.TunableReport`."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    r = report.result
    labels, avail, reasons = _per_setting(report)
    out: list[Any] = []
    head = Text()
    if report.kind == "mix":
        head.append(f"Channel mix — {len(r.channels)} channels, {len(r)} setpoints\n", style="bold")
        head.append("channels: ")
        head.append(clean(", ".join(r.channel_names)) + "\n")
        head.append(f"method: {r.method}\n")
    else:
        head.append(f"Measured series — {len(r)} spectra\n", style="bold")
        head.append(f"settings from: {clean(r.setting_source)}; unit: {clean(r.unit) if r.unit else '(none)'}\n")
        head.append(f"Δu′v′ measured from: {r.reference}\n")
    out.append(head)
    for note in _notes(report):
        out.append(_text(f"note: {note}", "dim"))

    check = report.check
    t = Table(box=box.SIMPLE_HEAVY, pad_edge=False, title_justify="left",
              title="Figures at each setting" + (" (weights: radiant-power fraction of full drive, largest 1)" if report.kind == "mix" else ""))
    t.add_column("setting", no_wrap=True, style="bold")
    if report.kind == "mix":
        for c in r.channel_names:
            t.add_column(_text(f"w {c}"), justify="right", no_wrap=True)
    else:
        t.add_column("spectrum", overflow="fold")  # names are data: folded, never cut
        t.add_column("u′", justify="right", no_wrap=True)
        t.add_column("v′", justify="right", no_wrap=True)
        t.add_column("Δu′v′", justify="right", no_wrap=True)
    for _, lab, _ in headline():
        t.add_column(lab, justify="right", no_wrap=True)
    t.add_column("ANSI", no_wrap=True)
    if check is not None:
        t.add_column("verdict")
    cats = ansi_category(_upvp(r))
    figs = {name: r.figure(name) for name, _, _ in headline()}
    for i in range(len(r)):
        row = [_text(labels[i])]
        if report.kind == "mix":
            row += [_f(w, ".4f") for w in r.weights[i]]
        else:
            row += [_text(_short(r.evaluation.spectra.sources[i])), _f(r.figure("u_prime")[i], ".4f"),
                    _f(r.figure("v_prime")[i], ".4f"), _f(r.delta_upvp[i], ".4f")]
        if not avail[i]:
            row += [Text(NOT_REACHABLE, style="bold yellow")] + [""] * (len(headline()) - 1) + [""]
        else:
            row += [_f(figs[name][i], spec) for name, _, spec in headline()] + [cats[i] or "—"]
        if check is not None:
            v = check.verdict(i)
            row.append(Text(_WORD[v], style=_STYLE[v]))
        t.add_row(*row)
    out.append(t)
    unreach = [i for i in range(len(r)) if not avail[i]]
    if unreach:
        which = ", ".join(labels[i] for i in unreach)
        why = reasons[unreach[0]].removeprefix("not reachable: ")
        out.append(_text(f"{len(unreach)} setpoint(s) not reachable ({which}): {why}", "yellow"))

    if check is not None:
        out.extend(_check_tables(check))
    out.append(Text("\n".join(CAUTIONS), style="dim"))
    return out


def _short(source: str) -> str:
    """A spectrum's source without its folders (``dir/a.csv#col`` -> ``a.csv#col``)."""
    import os

    from .._paths import source_file

    file = source_file(source)  # (a file or folder name may hold "#")
    return os.path.basename(file) + str(source)[len(file):]


def _notes(report) -> list[str]:
    """The run's notes, then each setting's warnings (prefixed with the setting; a warning that
    every setting shares is given once, for all). A series groups only settings whose warning
    reads the same, so each count and value quoted is that of the settings named (found by a
    review: "51 values below zero" was quoted for five settings, as at the first); a mix, with
    hundreds of setpoints, groups warnings that differ only in their numbers and says whose
    numbers are quoted."""
    r = report.result
    notes = list(r.notes)
    ev = r.evaluation
    if ev is not None:
        labels = _per_setting(report)[0]
        rows = list(np.flatnonzero(r.index >= 0)) if report.kind == "mix" else list(range(len(r)))
        seen = set(notes)
        common = set.intersection(*(set(w) for w in ev.warnings)) if len(ev.warnings) else set()
        for w in sorted(common):
            if w not in seen:
                seen.add(w)
                notes.append(f"every setting: {w}")
        groups: dict[str, list[tuple[str, str]]] = {}
        for k, ws in enumerate(ev.warnings):
            for w in ws:
                if w not in common:
                    key = w if report.kind == "series" else re.sub(r"[-+]?\d+(\.\d+)?", "#", w)
                    groups.setdefault(key, []).append((labels[rows[k]], w))
        for members in groups.values():
            where = ", ".join(lab for lab, _ in members)
            same = len({w for _, w in members}) == 1
            extra = "" if same else f" (as at {members[0][0]}; each setting's own values are in the JSON output)"
            notes.append(f"{where}: {members[0][1]}{extra}")
        for w in ev.run_warnings:
            if w not in seen:
                seen.add(w)
                notes.append(w)
    if report.check is not None:
        notes += list(report.check.notes)
    return notes


def _check_tables(check) -> list:
    from rich import box
    from rich.table import Table
    from rich.text import Text

    # the path as text, not markup: a file named "crit[bold].toml" keeps its brackets
    t = Table(box=box.SIMPLE_HEAVY, pad_edge=False, title=Text("Criteria over the range: " + clean(check.criteria_file)),
              title_justify="left")
    t.add_column("", no_wrap=True)
    t.add_column("clause", overflow="fold")  # the criteria's ids: folded, never cut
    t.add_column("applies at")
    t.add_column("limit")
    t.add_column("verdict")
    t.add_column("worst setting")
    t.add_column("worst value", justify="right")
    t.add_column("margin", justify="right")
    t.add_column("failed at")
    set_key_columns(t, 2)  # split to fit: each part repeats the mark and the clause
    for rr in check.results:
        res = rr.result
        where = "every evaluated setting" if rr.over is None and res.kind not in ("series_shift", "track_locus") else (
            "every setting" if rr.over is None else f"{rr.over[0]:g}–{rr.over[1]:g} {check.unit}".strip())
        n_app = int(np.sum(rr.applies))
        w = rr.worst
        mark = ">>" if rr.range_outcome in ("fail", "not valid") else ""
        t.add_row(
            mark, _text(f"{res.clause_id}: {res.label}"), _text(f"{where} ({n_app})"), _text(res.limit_text),
            Text(_WORD[rr.range_outcome], style=_STYLE[rr.range_outcome]),
            _text(check.labels[w]) if w is not None else "—",
            _value(res, w) if w is not None else "—",
            _margin(res, w) if w is not None else "—",
            _text(_failed_at(check, rr)),
        )
    out: list[Any] = [t]
    for rr in check.results:
        if rr.range_reason:
            out.append(_text(range_reason_text(rr), "bold red" if rr.range_outcome == "fail" else "yellow"))
    n_fail = sum(rr.range_outcome in ("fail", "not valid") for rr in check.results)
    n_open = sum(rr.range_outcome not in ("pass", "fail", "not valid") for rr in check.results)
    if n_fail:
        line = Text(f"VERDICT: {n_fail} of {len(check.results)} requirements FAILED over the range", style="bold red")
    elif n_open:
        line = Text(f"VERDICT: {n_open} of {len(check.results)} requirements could not be judged over the range — not a pass",
                    style="bold yellow")
    else:
        line = Text(f"VERDICT: all {len(check.results)} requirements met over the range", style="bold green")
    out.append(line)
    return out


def _failed_at(check, rr, most: int = 4) -> str:
    """The settings where a clause failed, e.g. ``3500 K, 3750 K, 4000 K +3 more`` ("" if none)."""
    bad = [check.labels[i] for i, o in enumerate(rr.outcome) if o in ("fail", "not valid")]
    if not bad:
        return ""
    return ", ".join(bad[:most]) + (f" +{len(bad) - most} more" if len(bad) > most else "")


def range_reason_text(rr) -> str:
    """Why a clause was not judged over the range, or why it failed where no margin says it
    (light in no ANSI category), for the terminal and the HTML report."""
    how = "failed over the range" if rr.range_outcome == "fail" else "not judged over the range"
    return f"{rr.result.clause_id}: {how}: {rr.range_reason}"


def _spec_of(res) -> str:
    if res.figure in ("Δu'v'", "|Duv|", "duv", "u_prime", "v_prime", "x", "y", "u", "v"):
        return ".4f"
    if res.kind in ("ansi_quadrangle",):
        return ".4f"
    if res.figure == "cct_K":
        return ".0f"
    return ".1f"


def _rounded(res) -> bool:
    """A figure clause judged by the rounding method (``round_to``): shown as a check shows it."""
    return getattr(res, "round_to", None) is not None and "compared" in (getattr(res, "details", None) or {})


def _value(res, i: int) -> str:
    if _rounded(res):  # measured → compared (a review found only the unrounded value shown)
        from .verdicts import measured_text

        return measured_text(res, i)
    return _f(res.measured[i], _spec_at(res, i)) + (f" {res.unit}" if res.unit and res.unit not in ("%",) and math.isfinite(float(res.measured[i])) else "")


def _spec_at(res, i: int) -> str:
    """The format of clause result ``res`` at setting ``i``: more decimals where its non-zero
    margin would print as zero, for the value and the margin alike (R9 91.812 against "R9 ≤
    91.8" printed "worst value 91.8, margin 0.0"; found by a review), as the check reports do
    (:func:`lumeval.figures.margin_extra_decimals`)."""
    from .verdicts import _extra_decimals, _more

    spec = _spec_of(res)
    return _more(spec, _extra_decimals(res.margin[i], spec))


def _margin(res, i: int) -> str:
    if _rounded(res):  # the rounded value's margin, exactly
        from .verdicts import margin_text

        return margin_text(res, i)
    return _f(res.margin[i], "+" + _spec_at(res, i))


def _rounding_fields(res, i: int | None) -> dict:
    """``round_to`` and the value compared at setting ``i`` of a clause judged by the rounding
    method, for the JSON ({} otherwise)."""
    if not _rounded(res):
        return {}
    return {"round_to": int(res.round_to), "compared": None if i is None else _num(res.details["compared"][i])}


# --------------------------------------------------------------------------- JSON


def to_json(report) -> str:
    """One JSON document (``"format": "lumeval.mix"`` or ``"lumeval.series"``, see docs/tunable.md;
    JSON Schemas ``lumeval/schemas/mix.schema.json`` and ``series.schema.json``)."""
    from ..schemas import header

    r = report.result
    labels, avail, reasons = _per_setting(report)
    ev = r.evaluation
    cats = ansi_category(_upvp(r))
    records = spectrum_records(ev) if ev is not None else []  # every spectrum's figures, read once
    settings = []
    for i in range(len(r)):
        rec: dict = {"setting": _num(r.target_cct_K[i] if report.kind == "mix" else r.settings[i]), "label": labels[i]}
        if report.kind == "mix":
            rec["target_cct_K"] = _num(r.target_cct_K[i])
            rec["target_duv"] = _num(r.target_duv[i])
            rec["reachable"] = bool(avail[i])
            rec["not_reachable_reason"] = reasons[i] or None
            rec["weights"] = {c: _num(w) for c, w in zip(r.channel_names, r.weights[i])}
            k = int(r.index[i])
        else:
            rec["delta_upvp"] = _num(r.delta_upvp[i])
            rec["reference_u_prime"] = _num(r.reference_upvp[i, 0])
            rec["reference_v_prime"] = _num(r.reference_upvp[i, 1])
            k = i
        rec["ansi_category"] = cats[i] or None
        rec["figures"] = records[k] if (ev is not None and k >= 0) else None
        if report.check is not None:
            rec["verdict"] = report.check.verdict(i)
            rec["clauses"] = {
                rr.result.clause_id: {"outcome": rr.outcome[i], "measured": _num(rr.result.measured[i]),
                                      "margin": _num(rr.result.margin[i]), "reason": rr.reason[i] or None,
                                      **_rounding_fields(rr.result, i)}
                for rr in report.check.results
            }
        settings.append(rec)
    doc: dict = {
        **header(report.kind),
        "inputs": list(report.inputs),
        "notes": _notes(report),
        "settings": settings,
    }
    if report.kind == "mix":
        doc["channels"] = list(r.channel_names)
        doc["method"] = r.method
        doc["maximise"] = r.maximise
    else:
        doc["unit"] = r.unit
        doc["setting_source"] = r.setting_source
        doc["reference"] = r.reference
    if report.check is not None:
        c = report.check
        doc["criteria"] = {
            "file": c.criteria_file,
            "identification": c.identification,
            "exit_code": c.exit_code,
            "overall": c.overall,
            "clauses": [
                {"id": rr.result.clause_id, "label": rr.result.label, "kind": rr.result.kind, "figure": rr.result.figure,
                 "limit": rr.result.limit_text, "over": list(rr.over) if rr.over else None,
                 "range_outcome": rr.range_outcome, "range_reason": rr.range_reason or None,
                 "worst_setting": c.labels[rr.worst] if rr.worst is not None else None,
                 "worst_measured": _num(rr.result.measured[rr.worst]) if rr.worst is not None else None,
                 "worst_margin": _num(rr.result.margin[rr.worst]) if rr.worst is not None else None,
                 "source": rr.result.source,
                 **({f"worst_{k}" if k == "compared" else k: v for k, v in _rounding_fields(rr.result, rr.worst).items()})}
                for rr in c.results
            ],
        }
    doc["cautions"] = list(CAUTIONS)
    return json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


# --------------------------------------------------------------------------- CSV


def to_csv(report) -> str:
    """One row per setting: setting, weights (mix) or Δu′v′ (series), every figure, each
    clause's outcome (``clause:<id>``) and the setting's verdict; a mix ends with ``notes``: the
    setpoint's own notes (e.g. the optimiser's iteration limit, the CIE 13.3 reference switch)
    joined with "; ", empty when none or not reachable."""
    FIGURE_NAMES = csv_figures()
    r = report.result
    labels, avail, _reasons = _per_setting(report)
    head = ["setting", "label"]
    if report.kind == "mix":
        head += ["reachable", "target_duv"] + [_csv_cell(f"w:{c}") for c in r.channel_names]  # the whole cell
    else:
        head += ["source", "delta_upvp"]
    head += list(FIGURE_NAMES) + ["ansi_category"]
    check = report.check
    if check is not None:
        head += [f"clause:{_csv_cell(rr.result.clause_id)}" for rr in check.results] + ["verdict"]
    if report.kind == "mix":
        head.append("notes")
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(head)
    figs = {n: r.figure(n) for n in FIGURE_NAMES}
    cats = ansi_category(_upvp(r))

    def cell(v):
        v = float(v)
        return repr(v) if math.isfinite(v) else ""

    for i in range(len(r)):
        row = [cell(r.target_cct_K[i] if report.kind == "mix" else r.settings[i]), _csv_cell(labels[i])]
        if report.kind == "mix":
            row += ["yes" if avail[i] else NOT_REACHABLE, cell(r.target_duv[i])] + [cell(x) for x in r.weights[i]]
        else:
            row += [_csv_cell(r.evaluation.spectra.sources[i]), cell(r.delta_upvp[i])]
        row += [cell(figs[n][i]) for n in FIGURE_NAMES] + [cats[i]]
        if check is not None:
            row += [rr.outcome[i] for rr in check.results] + [check.verdict(i)]
        if report.kind == "mix":
            k = int(r.index[i])  # the setpoint's row in the evaluation, −1 where not reachable
            row.append(_csv_cell("; ".join(r.evaluation.warnings[k])) if k >= 0 else "")
        w.writerow(row)
    from .tables import csv_notes

    return buf.getvalue() + csv_notes()  # the cautions as the last rows (docs/output-formats.md)
