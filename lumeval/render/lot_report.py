"""Renderings of a production lot (:class:`lumeval.commands.lot.LotRun`): terminal, JSON, CSV.

Nothing is computed here beyond formatting. Numbers in JSON and CSV are unrounded; an
undefined figure is ``null`` (JSON) or an empty cell (CSV). Per figure, the statistics give the
samples they leave out: ``undefined`` (NaN) and ``outside_validity`` (computed outside the
validity range, |Duv| > 0.05; :mod:`lumeval.lots.validity`); ``counts.outside_validity`` is the
number of such samples. The per-sample records keep every value as computed, with its warnings. The terminal summary rounds as the
inspect report does (x, y, u', v' to 4 decimals, Δu'v' to 5, CCT to 1 K, indices to 0.1 for
lot statistics so that spreads below one unit stay visible).

Lot JSON (``schema_version`` 1; names never change meaning, new names may be added)::

    lumeval_version, schema_version, kind = "lot",
    counts {samples, files, unreadable, passed, failed, not_judged, indeterminate, outliers,
            outside_validity},
    criteria {file, identification} | null,
    verdict {exit_code, failed, sample_clauses [{id, label, kind, figure, unit, limit, lower,
             upper, counts {outcome: n}, worst_margin, source, line, decision_rule}],
             lot_clauses [{id, label, kind, figure, unit, measured, limit,
             margin, outcome, reason, source, line}], yield {total, passed, failed,
             not_judged, indeterminate, percent} | null},
    statistics {ddof, percentile_method, figures {name: {count, undefined, mean, std, min,
                max, median, p05, p95, outside_validity}}},
    chromaticity {centroid_xy, centroid_upvp, nominal_xy, nominal_upvp, ellipse, ellipse_source,
                  max_pairwise_delta_upvp, max_pair [name, name], delta_upvp_centroid
                  {max, p95}, steps_centroid {max, p95}},
    outlier_rule, notes, unreadable [{source, message}], skipped [{path, reason}],
    samples [{name, source, metadata {column: value} (Parquet archives only), verdict, outlier,
              outlier_reasons, delta_upvp_centroid,
              steps_centroid, delta_upvp_nominal, steps_nominal, x, y, cct_K, duv, Ra, R9,
              Rf, Rg, clauses {id: {outcome, margin[, uncertainty, p_conformance]}} (with
              criteria), warnings}],
    cautions
"""

from __future__ import annotations

import csv
import io
import json
import math
from operator import methodcaller
from typing import Any

import numpy as np

from .safe import FORMULA_START, clean, csv_first_cell, csv_text
from .safe import text as _text
from .tables import CAUTIONS, csv_notes

JSON_SCHEMA_VERSION = 1

def summary_figures() -> list:
    """Figures of the terminal summary table: the registry's key figures (:mod:`lumeval.figures`)
    except the chromaticity coordinates (the chromaticity table shows the lot's centroid and
    spread) and the per-hue-bin values."""
    from .. import figures

    return [f for f in figures.summary_figures()
            if f.name not in ("x", "y", "u_prime", "v_prime") and figures.family(f.name) not in ("Rf_h", "Rcs_h", "Rhs_h")]

#: Figures per sample in the lot JSON (the full set is in the per-sample CSV).
JSON_SAMPLE_FIGURES = ("x", "y", "u_prime", "v_prime", "cct_K", "duv", "Ra", "R9", "Rf", "Rg")

_SHOW_MAX = 20


def _num(v):
    if v is None:
        return None
    f = float(v)
    return f if math.isfinite(f) else None


def _fmt(v, spec: str) -> str:
    if v is None:
        return "n/a"
    f = float(v)
    if not math.isfinite(f):
        return "n/a"
    s = format(f, spec)
    return "0" + s[2:] if s.startswith(("-0", "+0")) and float(s) == 0 and spec.startswith("+") else s


def _counts(run) -> dict:
    v = run.sample_verdicts
    return {
        "samples": len(run),
        "files": run.files,
        "unreadable": len(run.unreadable),
        "passed": None if v is None else sum(o == "pass" for o in v),
        "failed": None if v is None else sum(o == "fail" for o in v),
        "not_judged": None if v is None else sum(o == "not judged" for o in v),
        "indeterminate": None if v is None else sum(o == "indeterminate" for o in v),
        "outliers": int(np.sum(run.stats.outlier)),
        "outside_validity": _n_outside(run.stats),
    }


def _n_outside(st) -> int:
    """Samples whose reference-based figures were computed outside the validity range."""
    flag = getattr(st, "outside_validity", None)
    return 0 if flag is None else int(np.count_nonzero(flag))


def _pct(a, q):
    a = np.asarray(a, dtype=float)
    a = a[np.isfinite(a)]
    if a.size == 0:
        return None
    method: Any = run_percentile_method()  # one of numpy's method names (a str, not numpy's Literal)
    return float(np.percentile(a, q, method=method))


def run_percentile_method() -> str:
    from ..lots.statistics import PERCENTILE_METHOD

    return PERCENTILE_METHOD


def _max(a):
    a = np.asarray(a, dtype=float)
    return float(np.nanmax(a)) if a.size and np.isfinite(a).any() else None


def _arr(a, i):
    return None if a is None else _num(a[i])


def _sample_clause_summary(r) -> dict:
    """A per-sample clause over the lot, as the terminal's "Requirements" table gives it: how
    many samples had each outcome and the worst margin among those judged."""
    from collections import Counter

    from ..criteria.verdicts import OUTCOMES, worst_judged_margin

    n = Counter(r.outcome)
    return {
        "id": r.clause_id, "label": r.label, "kind": r.kind, "figure": r.figure, "unit": r.unit,
        "limit": r.limit_text, "lower": r.lower, "upper": r.upper,
        "counts": {o: n.get(o, 0) for o in OUTCOMES},
        "worst_margin": _num(worst_judged_margin(r.margin, r.outcome)),
        "source": r.source, "line": r.line, "decision_rule": r.decision_rule,
    }


def lot_document(run) -> dict:
    """The lot JSON document (see the module docstring)."""
    from ..schemas import header

    st = run.stats
    verdicts = run.sample_verdicts
    pair = st.max_pair
    samples = []
    meta = _metadata_values(run)
    from ..spectra.archive import json_safe

    figs = {k: run.figures[k] for k in JSON_SAMPLE_FIGURES}  # each column read once (a lot may keep them on disk)
    # each sample's outcome and margin of every per-sample clause (and, under measurement
    # uncertainty, u and p_c): why a sample failed, as the CSV's clause columns say it (the JSON
    # gave them only under uncertainty; found by a review)
    results = run.check.results if run.check is not None else ()
    under_u = run.check is not None and bool(getattr(run.check, "uncertainty", None))
    margins = [np.asarray(r.margin, dtype=float).tolist() for r in results]
    for i in range(len(run)):
        rec = {
            "name": run.names[i],
            "source": run.sources[i],
        }
        if meta:
            rec["metadata"] = {k: json_safe(v[i]) for k, v in meta}
        rec |= {
            "verdict": verdicts[i] if verdicts is not None else None,
            "outlier": bool(st.outlier[i]),
            "outlier_reasons": list(st.outlier_reasons[i]),
            "delta_upvp_centroid": _num(st.d_upvp_centroid[i]),
            "steps_centroid": _num(st.steps_centroid[i]),
            "delta_upvp_nominal": _arr(st.d_upvp_nominal, i),
            "steps_nominal": _arr(st.steps_nominal, i),
        }
        for k in JSON_SAMPLE_FIGURES:
            rec[k] = _num(figs[k][i])
        if results:
            rec["clauses"] = {
                r.clause_id: {"outcome": r.outcome[i], "margin": _num(mg[i])} | ({
                    "uncertainty": _num(r.uncertainty[i]) if r.uncertainty is not None else None,
                    "p_conformance": _num(r.p_conformance[i]) if r.p_conformance is not None else None,
                } if under_u else {})
                for r, mg in zip(results, margins)
            }
        rec["warnings"] = list(run.warnings[i])
        samples.append(rec)
    y = st.yield_
    return {
        **header("lot"),
        "kind": "lot",
        "counts": _counts(run),
        "criteria": None if run.criteria_file is None else {"file": run.criteria_file, "identification": dict(run.identification)},
        "verdict": {
            "exit_code": run.exit_code,
            "failed": run.failed,
            "sample_clauses": [_sample_clause_summary(r) for r in results],
            "lot_clauses": [
                {
                    "id": r.clause_id,
                    "label": r.label,
                    "kind": r.kind,
                    "figure": r.figure,
                    "unit": r.unit,
                    "measured": _num(r.measured),
                    "limit": r.limit_text,
                    "lower": r.lower,
                    "upper": r.upper,
                    "margin": _num(r.margin),
                    "outcome": r.outcome,
                    "reason": r.reason or None,
                    "source": r.source,
                    "line": r.line,
                    "decision_rule": r.decision_rule,
                }
                for r in run.lot_results
            ],
            "yield": None
            if y is None
            else {
                "total": y.total,
                "passed": y.passed,
                "failed": y.failed,
                "not_judged": y.not_judged,
                "indeterminate": y.indeterminate,
                "not_valid": y.not_valid,
                "percent": _num(y.percent),
            },
        },
        "statistics": {
            "ddof": st.ddof,
            "percentile_method": st.percentile_method,
            "figures": {
                f.name: {
                    "count": f.count,
                    "undefined": f.undefined,
                    "mean": _num(f.mean),
                    "std": _num(f.std),
                    "min": _num(f.min),
                    "max": _num(f.max),
                    "median": _num(f.median),
                    "p05": _num(f.p05),
                    "p95": _num(f.p95),
                    "outside_validity": f.outside_validity,
                }
                for f in st.figures
            },
        },
        "chromaticity": {
            "centroid_xy": [_num(v) for v in st.centroid_xy],
            "centroid_upvp": [_num(v) for v in st.centroid_upvp],
            "nominal_xy": None if st.nominal_xy is None else [_num(v) for v in st.nominal_xy],
            "nominal_upvp": None if st.nominal_upvp is None else [_num(v) for v in st.nominal_upvp],
            "ellipse": st.ellipse_name or None,
            "ellipse_source": st.ellipse_source or None,
            "max_pairwise_delta_upvp": _num(st.max_pairwise_d_upvp),
            "max_pair": [run.names[pair[0]], run.names[pair[1]]] if pair[0] >= 0 and len(run) >= 2 else None,
            "delta_upvp_centroid": {"max": _max(st.d_upvp_centroid), "p95": _pct(st.d_upvp_centroid, 95)},
            "steps_centroid": {"max": _max(st.steps_centroid), "p95": _pct(st.steps_centroid, 95)},
        },
        "outlier_rule": st.outlier_rule,
        "uncertainty": (getattr(run.check, "uncertainty", None) or None) if run.check is not None else None,
        "notes": [*st.notes, *(getattr(run.check, "notes", ()) or () if run.check is not None else ())],
        "run_warnings": list(getattr(run, "run_warnings", ())),
        "unreadable": [{"source": u.source, "message": u.message} for u in run.unreadable],
        "skipped": [{"path": k.path, "reason": k.reason} for k in getattr(run, "skipped", ())],
        "samples": samples,
        "cautions": list(CAUTIONS),
    }


def lot_json(run, out=None) -> str | None:
    """The lot JSON as a string, or written to the text stream ``out`` (then None)."""
    if out is None:
        return json.dumps(lot_document(run), indent=1, ensure_ascii=False, allow_nan=False) + "\n"
    json.dump(lot_document(run), out, indent=1, ensure_ascii=False, allow_nan=False)
    out.write("\n")
    return None


def _metadata_values(run, start: int = 0, length: int | None = None) -> list[tuple[str, list]]:
    """(column, Python values) of the archive metadata carried by ``run`` (empty without), for
    ``length`` samples from ``start`` (default: all)."""
    from ..spectra.archive import metadata_values

    return metadata_values(getattr(run, "metadata", None), start, length)


def metadata_headers(run) -> list[str]:
    """CSV headers of the archive metadata columns: the column name, prefixed ``meta:`` when it
    would clash with one of lumeval's own columns."""
    tbl = getattr(run, "metadata", None)
    if tbl is None:
        return []
    own = set(_own_columns(run))
    return [f"meta:{c}" if c in own or c.startswith(("meta:", "clause:")) else c for c in tbl.column_names]


def _csv_value(v) -> str:
    """A metadata cell: numbers as numbers (a decimal as written, ``-2.50``), dates in ISO 8601,
    anything else as the JSON shows it (:func:`lumeval.spectra.archive.json_safe`: not Python's
    reprs such as ``b'ok'``), as text neutralised for spreadsheets (metadata are untrusted)."""
    from decimal import Decimal

    from ..spectra.archive import json_safe
    from .safe import csv_text

    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v) if math.isfinite(v) else ""
    if isinstance(v, Decimal):
        return str(v) if v.is_finite() else ""
    if hasattr(v, "isoformat"):
        return v.isoformat()
    return csv_text(json_safe(v))


def csv_columns(run) -> list[str]:
    """Columns of the per-sample CSV (archive metadata columns right after ``source``)."""
    from .safe import csv_text

    cols = _own_columns(run)
    return cols[:2] + [csv_text(h) for h in metadata_headers(run)] + cols[2:]


def _own_columns(run) -> list[str]:
    cols = ["name", "source", "verdict", "outlier", "outlier_reasons", "delta_upvp_centroid", "steps_centroid",
            "delta_upvp_nominal", "steps_nominal"]
    cols += list(run.figures)
    if run.check is not None:
        cols += [f"clause:{r.clause_id}" for r in run.check.results]
    cols += ["warnings"]
    return cols


def _quoted(s: str) -> str:
    """A CSV cell as :mod:`csv`'s writer (QUOTE_MINIMAL, ``,`` and ``"``) writes it: quoted when it
    holds the delimiter, a quote or a line break (text cells are cleaned of line breaks first)."""
    if "," in s or '"' in s or "\n" in s or "\r" in s:
        return '"' + s.replace('"', '""') + '"'
    return s


def _number_cells(block: np.ndarray) -> list[str]:
    """Each row of a float block as its cells joined by commas: the shortest repr of every
    finite value (the value read back bit for bit), an empty cell for a missing one
    (:func:`lumeval.render.number_text.number_rows`: Arrow's text for large blocks where it is
    ``repr``'s, ``repr`` elsewhere)."""
    from .number_text import number_rows

    return number_rows(block)


#: Rows of figures read at a time while writing the per-sample CSV.
_CSV_ROWS = 4096


def samples_csv(run, out=None, processes: int | None = None) -> str | None:
    """One row per sample: verdict, outlier flag and reasons, Δu'v' and steps, every figure,
    each per-sample clause's outcome, and the warnings (joined with " | ").

    Returns the CSV text, or streams it block by block to the text stream ``out`` (then None),
    so that a large lot is never held in memory as one string. The numbers of a block of rows
    are formatted together (:func:`_number_cells`); the cells are those :mod:`csv`'s writer
    gives (tests/test_lot_report.py reads the file back with it).

    ``processes``: worker processes formatting blocks of rows (:func:`_block_texts`; None
    chooses: one per core on Linux for a lot of two blocks or more, else none; 1: this process
    only). The text is the same whatever the number."""
    t = csv_text
    buf = io.StringIO() if out is None else out
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([t(c) for c in csv_columns(run)])
    for text in _block_texts(run, len(run), processes):
        buf.write(text)
    buf.write(csv_notes(lot_check_notes(run)))  # notes, then the cautions as the last rows (docs/output-formats.md)
    return buf.getvalue() if out is None else None


def lot_check_notes(run) -> tuple[str, ...]:
    """The notes of a lot's judgement for every output: the criteria file's warnings and, under
    measurement uncertainty, the Monte Carlo's notes (draws, stabilisation)."""
    check = run.check
    if check is None:
        return ()
    unc = getattr(check, "uncertainty", None) or {}
    return tuple(dict.fromkeys([*map(str, getattr(check, "notes", ()) or ()), *map(str, unc.get("notes") or ())]))


def _text_cells(values, first: bool = False) -> list[str]:
    """``_quoted(csv_text(v))`` of each text (``csv_first_cell`` when ``first``), with the
    texts returned as they are when none needs anything: all printable, none starting a
    formula (or ``#`` for a first cell), no comma or quote anywhere (checked on all of them at
    once: sample names and sources are usually plain)."""
    values = [v if isinstance(v, str) else ("" if v is None else str(v)) for v in values]
    joined = "".join(values)
    starts = FORMULA_START + ("#",) if first else FORMULA_START
    if joined.isprintable() and "," not in joined and '"' not in joined and not any(
            map(methodcaller("startswith", starts), values)):
        return values
    cell = csv_first_cell if first else csv_text
    return [_quoted(cell(v)) for v in values]


def _block_text(run, i: int, j: int) -> str:
    """The CSV rows of samples ``i:j`` (each ending with a line break)."""
    t = csv_text
    st = run.stats
    verdicts = run.sample_verdicts
    from ..lots.columns import figure_rows

    def stat_block(a) -> np.ndarray:
        if a is None:
            return np.full((j - i, 1), np.nan)
        return np.asarray(a[i:j], dtype=float).reshape(-1, 1)

    # figures and metadata a block of rows at a time (a lot may keep them on disk)
    stats_txt = _number_cells(np.hstack([stat_block(st.d_upvp_centroid), stat_block(st.steps_centroid),
                                         stat_block(st.d_upvp_nominal), stat_block(st.steps_nominal)]))
    figs_txt = _number_cells(figure_rows(run.figures, i, j)[: j - i])
    meta = [[_quoted(_csv_value(v)) for v in vals] for _, vals in _metadata_values(run, i, j - i)]
    outlier = np.asarray(st.outlier[i:j], dtype=bool).tolist()
    outcomes = [r.outcome[i:j] for r in run.check.results] if run.check is not None else []
    # the block's texts taken at once (a lot keeps them packed: one decoding per block), and
    # each distinct tuple of reasons or warnings made a cell once (samples share them)
    names, sources = run.names[i:j], run.sources[i:j]
    cells: dict[tuple, str] = {}

    def joined(texts) -> str:
        key = texts if isinstance(texts, tuple) else tuple(texts)
        cell = cells.get(key)
        if cell is None:
            cell = cells[key] = _quoted(t(" | ".join(key)))
        return cell

    name_cells, source_cells = _text_cells(names, first=True), _text_cells(sources)
    reasons = [joined(r) for r in st.outlier_reasons[i:j]]
    warns = [joined(w) for w in run.warnings[i:j]]
    lines = []
    for k in range(j - i):
        s = i + k
        row = [name_cells[k], source_cells[k]]
        row += [m[k] for m in meta]
        row += [verdicts[s] if verdicts is not None else "", "yes" if outlier[k] else "no",
                reasons[k], stats_txt[k], figs_txt[k]]
        row += [o[k] for o in outcomes]
        row.append(warns[k])
        lines.append(",".join(row))
    return "\n".join(lines) + "\n" if lines else ""


#: The lot whose CSV blocks forked workers format (set only while they work).
_FORKED_RUN: Any = None


def _forked_block(span: tuple[int, int]) -> str:
    return _block_text(_FORKED_RUN, *span)


def _block_texts(run, n: int, processes: int | None):
    """The CSV text of each block of :data:`_CSV_ROWS` rows, in order, formatted here or by
    worker processes forked with the lot in memory (:mod:`lumeval._workers`; each is given only
    its rows' range and returns its text, at most two blocks per worker waiting): the
    formatting of the numbers is most of the time of a large lot's CSV."""
    from .._workers import default_processes, fork_available, in_worker, worker_pool

    spans = [(i, min(n, i + _CSV_ROWS)) for i in range(0, n, _CSV_ROWS)]
    if processes is None:
        processes = default_processes()
    if processes <= 1 or len(spans) < 2 or not fork_available() or in_worker():
        for i, j in spans:
            yield _block_text(run, i, j)
        return
    # smaller blocks for the workers: a few large ones would leave a worker idle at the end
    step = max(1, min(_CSV_ROWS, -(-n // (8 * processes))))
    spans = [(i, min(n, i + step)) for i in range(0, n, step)]
    from collections import deque

    global _FORKED_RUN
    pool = worker_pool(min(processes, len(spans)))
    _FORKED_RUN = run  # the workers are forked at the first submit: they see the lot
    try:
        waiting: deque = deque()
        for span in spans:
            waiting.append(pool.submit(_forked_block, span))
            while len(waiting) > 2 * processes:
                yield pool.result(waiting.popleft())
        while waiting:
            yield pool.result(waiting.popleft())
    finally:
        _FORKED_RUN = None
        pool.terminate()


# --------------------------------------------------------------------------- terminal


def lot_renderables(run) -> list:
    """The rich renderables of the terminal lot summary, in order."""
    out: list[Any] = []
    for part in (_lot_head, _lot_requirements, _lot_consistency, _lot_figures, _lot_outliers, _lot_inputs_left_out,
                 _lot_closing):
        out += part(run)
    return out


def _lot_head(run) -> list:
    """How many samples were judged from how many files, and the criteria file."""
    from rich.text import Text

    out: list[Any] = []
    c = _counts(run)
    head = Text()
    head.append(f"Lot: {c['samples']} samples judged", style="bold")
    head.append(f" from {c['files']} file(s)")
    if c["unreadable"]:
        head.append(f"; {c['unreadable']} input(s) could not be read (listed below)", style="bold red")
    else:
        head.append("; every input was read")
    out.append(head)
    if run.criteria_file:
        ident = ", ".join(f"{k}: {v}" for k, v in run.identification.items())
        out.append(_text(f"Criteria: {run.criteria_file}" + (f" ({ident})" if ident else "")))
    return out


def _lot_requirements(run) -> list:
    """Each requirement with its result over the lot, the yield and the decision rule."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    from ..criteria.verdicts import worst_judged_margin
    from .verdicts import not_valid_part

    st = run.stats
    out: list[Any] = []
    unc = getattr(run.check, "uncertainty", None) if run.check is not None else None
    # under a guarded rule a margin is to the limit: a sample may fail with a positive one
    guarded = str((unc or {}).get("decision_rule") or "").startswith("guarded")
    if run.check is not None or run.lot_results:
        t = Table(title="Requirements", title_justify="left", box=box.SIMPLE_HEAVY, pad_edge=False)
        t.add_column("requirement", ratio=1)
        t.add_column("result", ratio=2)
        if run.check is not None:
            for r in run.check.results:
                fails = sum(o == "fail" for o in r.outcome)
                nj = sum(o == "not judged" for o in r.outcome)
                ni = sum(o == "indeterminate" for o in r.outcome)
                nv = sum(o == "not valid" for o in r.outcome)
                worst = worst_judged_margin(r.margin, r.outcome)
                res = (f"{fails} of {len(r.outcome)} samples fail" if fails
                       else ("every sample passes" if not (ni or nv or nj) else "no sample fails"))
                if nv:  # (counted as failing in the yield, docs/criteria.md)
                    res += f", {nv} not valid (computed outside the validity range)"
                if ni:
                    res += f", {ni} indeterminate (not a pass)"
                if nj:
                    res += f", {nj} not judged"
                unit = f" {r.unit}" if r.unit and r.unit != "%" else r.unit
                res += (f" (worst margin {_fmt(worst, '.4g')}{unit if np.isfinite(worst) else ''}"
                        + (" to the limit" if guarded else "")
                        + (" of the samples judged)" if nv or nj else ")"))
                t.add_row(_text(r.label), _result_text(res, fails == 0 and nj == 0 and ni == 0 and nv == 0))
        for r in run.lot_results:
            unit = f" {r.unit}" if r.unit and r.unit != "%" else r.unit
            res = f"{r.outcome}: {_fmt(r.measured, '.4g')}{unit}, limit {r.limit_text}, margin {_fmt(r.margin, '.4g')}{unit}"
            if r.reason:
                res += f" ({r.reason})"
            if r.sample_outcome is not None:
                nf = sum(o == "fail" for o in r.sample_outcome)
                if nf:
                    res += f"; {nf} sample(s) beyond the limit"
            t.add_row(_text(r.label), _result_text(res, r.outcome == "pass"))
        out.append(t)
        y = st.yield_
        if y is not None:
            out.append(
                Text(
                    f"Yield: {y.passed} of {y.total} samples pass every per-sample requirement ({_fmt(y.percent, '.1f')} %); "
                    f"{y.failed} fail{not_valid_part(y)}, {y.not_judged} not judged, {y.indeterminate} indeterminate."
                )
            )
        if run.check is not None and not run.has_yield_clause:
            out.append(Text("No lot_yield clause: every sample must pass for the lot to pass.", style="dim"))
        if unc:
            from .verdicts import margin_meaning

            mc = unc.get("monte_carlo", {})
            meaning = margin_meaning(unc.get("decision_rule"))
            out.append(_text(
                f"{unc.get('rule_text', '')} Per-sample clauses judged with {mc.get('draws', '?')} Monte Carlo draws per "
                f"sample (JCGM 101:2008, seed {mc.get('seed', '?')}), instrument model: {unc.get('instrument', {}).get('source', '')}; "
                f"lot clauses use the measured values. {meaning[0].upper()}{meaning[1:]}", style="dim"))
            for n in unc.get("notes") or ():  # e.g. fewer than 2000 draws per sample
                out.append(_text(f"note: {n}", style="dim"))
    return out


def _lot_consistency(run) -> list:
    """The lot's chromaticity consistency: centroid, spreads, steps."""
    from rich import box
    from rich.table import Table

    st = run.stats
    out: list[Any] = []
    t = Table(title="Chromaticity consistency (CIE 1931 2°; Δu'v' in CIE 1976 UCS)", title_justify="left", box=box.SIMPLE_HEAVY, pad_edge=False)
    t.add_column("", style="bold", no_wrap=True)
    t.add_column("value")
    t.add_row("centroid x, y", f"{_fmt(st.centroid_xy[0], '.4f')}, {_fmt(st.centroid_xy[1], '.4f')}")
    t.add_row("centroid u', v'", f"{_fmt(st.centroid_upvp[0], '.4f')}, {_fmt(st.centroid_upvp[1], '.4f')}")
    pair = st.max_pair
    pair_txt = f" ({run.names[pair[0]]} – {run.names[pair[1]]})" if pair[0] >= 0 and len(run) >= 2 else ""
    t.add_row("largest pairwise Δu'v'", _text(_fmt(st.max_pairwise_d_upvp, ".5f") + pair_txt))
    t.add_row("Δu'v' from centroid: p95 / max", f"{_fmt(_pct(st.d_upvp_centroid, 95), '.5f')} / {_fmt(_max(st.d_upvp_centroid), '.5f')}")
    if st.ellipse_name:
        t.add_row("steps from centroid: p95 / max", f"{_fmt(_pct(st.steps_centroid, 95), '.2f')} / {_fmt(_max(st.steps_centroid), '.2f')}  ({st.ellipse_name} coefficients)")
    if st.nominal_xy is not None:
        t.add_row("nominal centre x, y", f"{_fmt(st.nominal_xy[0], '.4f')}, {_fmt(st.nominal_xy[1], '.4f')}")
        t.add_row("Δu'v' from nominal: p95 / max", f"{_fmt(_pct(st.d_upvp_nominal, 95), '.5f')} / {_fmt(_max(st.d_upvp_nominal), '.5f')}")
        t.add_row("steps from nominal: p95 / max", f"{_fmt(_pct(st.steps_nominal, 95), '.2f')} / {_fmt(_max(st.steps_nominal), '.2f')}")
    out.append(t)
    return out


def _lot_figures(run) -> list:
    """Each key figure's lot statistics in the registry's formats."""
    from rich import box
    from rich.table import Table

    st = run.stats
    out: list[Any] = []
    t = Table(
        title=f"Figures (std with ddof = {st.ddof}; percentiles: numpy '{st.percentile_method}')",
        title_justify="left",
        box=box.SIMPLE_HEAVY,
        pad_edge=False,
    )
    shown = []
    for fig in summary_figures():
        try:
            shown.append((st.summary(fig.name), fig))
        except KeyError:
            continue
    any_undef = any(f.undefined for f, _ in shown)
    any_out = any(f.outside_validity for f, _ in shown)
    cols = (("figure", "mean", "std", "min", "p5", "p95", "max") + (("n/a",) if any_undef else ())
            + ((_NOT_VALID,) if any_out else ()))
    for col in cols:
        t.add_column(col, justify="left" if col == "figure" else "right", no_wrap=True)
    for f, fig in shown:
        def v(x, extra=0, fig=fig):
            return fig.format(x, extra, sign=False)

        row = [fig.heading, v(f.mean), v(f.std, 1), v(f.min), v(f.p05), v(f.p95), v(f.max)]
        t.add_row(*(row + ([str(f.undefined)] if any_undef else []) + ([str(f.outside_validity)] if any_out else [])))
    out.append(t)
    if any_out:
        from rich.text import Text

        out.append(Text(f"{_NOT_VALID}: samples left out of that figure's statistics because its value was computed "
                        "outside the validity range, |Duv| > 0.05 (CIE 15:2004 §9.5; see the note below)", style="dim"))
    return out


#: Heading of the terminal column counting the values left out as outside the validity range.
_NOT_VALID = "not valid"


def _lot_outliers(run) -> list:
    """The outliers, named, with the rule that flagged them."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    st = run.stats
    out: list[Any] = []
    idx = np.flatnonzero(st.outlier)
    if idx.size:
        t = Table(title=f"Outliers: {idx.size} sample(s) flagged (not removed from any statistic)", title_justify="left", box=box.SIMPLE_HEAVY, pad_edge=False)
        t.add_column("sample", overflow="fold")  # names are data: folded, never cut
        t.add_column("why")
        for i in idx[:_SHOW_MAX]:
            t.add_row(_text(run.names[i]), _text("; ".join(st.outlier_reasons[i])))
        out.append(t)
        if idx.size > _SHOW_MAX:
            out.append(Text(f"… and {idx.size - _SHOW_MAX} more (see the per-sample CSV or JSON)."))
    else:
        out.append(Text("Outliers: none flagged."))
    out.append(Text(f"Outlier rule: {st.outlier_rule}.", style="dim"))
    return out


def _lot_inputs_left_out(run) -> list:
    """Inputs that could not be read, and entries skipped on purpose."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    from .safe import text as safe_text

    out: list[Any] = []
    if run.unreadable:
        t = Table(title=f"Could not be read: {len(run.unreadable)}", title_justify="left", box=box.SIMPLE_HEAVY, pad_edge=False)
        t.add_column("reason", overflow="fold")  # long paths are folded, never cut
        for u in run.unreadable[:_SHOW_MAX]:
            t.add_row(safe_text(u.message))  # file names and link targets are data, never markup
        out.append(t)
        if len(run.unreadable) > _SHOW_MAX:
            out.append(Text(f"… and {len(run.unreadable) - _SHOW_MAX} more (see the lot JSON)."))

    # entries found by expanding folders and patterns and left out on purpose
    skipped = getattr(run, "skipped", ())
    if skipped:
        t = Table(title=f"Skipped (not spectrum files, or already read): {len(skipped)}", title_justify="left",
                  box=box.SIMPLE_HEAVY, pad_edge=False)
        t.add_column("entry", overflow="fold")
        t.add_column("why")
        for k in skipped[:_SHOW_MAX]:
            t.add_row(safe_text(k.path), safe_text(k.reason))  # file names are data, never markup
        out.append(t)
        if len(skipped) > _SHOW_MAX:
            out.append(Text(f"… and {len(skipped) - _SHOW_MAX} more (see the lot JSON)."))
    return out


def _lot_closing(run) -> list:
    """Warnings, notes, cautions and the verdict line."""
    from rich.text import Text

    st = run.stats
    out: list[Any] = []
    w_all = run.warnings  # packed in a lot run: counted from its offsets, nothing decoded
    nw = w_all.count_nonempty() if hasattr(w_all, "count_nonempty") else sum(1 for w in w_all if w)
    if nw:
        out.append(Text(f"{nw} sample(s) carry warnings (interpolation, validity limits...): see the per-sample CSV or JSON.", style="yellow"))
    for note in st.notes:
        out.append(Text(f"Note: {clean(note)}.", style="dim"))
    for note in (getattr(run.check, "notes", ()) or ()) if run.check is not None else ():  # criteria warnings
        out.append(Text(f"Note: {clean(note)}", style="yellow"))
    for w in getattr(run, "run_warnings", ()):
        out.append(Text(f"Note: {clean(w)}", style="yellow"))
    from .view import cautions

    for cau in cautions():  # the same cautions as every report (lumeval.render.view)
        out.append(Text(f"Caution: {cau}", style="dim"))
    out.append(Text(_verdict_line(run), style="bold"))
    return out


def _result_text(text, ok):
    from rich.text import Text

    return Text(("✓ " if ok else "✗ ") + clean(text), style="green" if ok else "red")


def _verdict_line(run) -> str:
    if run.check is None and not run.lot_results:
        base = "No criteria given: statistics only, nothing judged."
    elif run.failed:
        outcomes = [r.outcome for r in run.lot_results]
        v = run.sample_verdicts
        if v is not None and not run.has_yield_clause:
            outcomes += list(v)
        if "fail" in outcomes:
            base = "Lot verdict: FAIL."
        elif "indeterminate" in outcomes:  # judged, but the decision rule could not decide: not "not judged"
            base = ("Lot verdict: NOT PASSED (a requirement is indeterminate under the decision rule: measured, but "
                    "neither conformity nor non-conformity is proven"
                    + ("; another could not be judged)." if "not judged" in outcomes else ")."))
        else:
            base = "Lot verdict: NOT PASSED (a requirement could not be judged)."
    elif run.unreadable:  # never "PASS" for a lot with inputs that were not read
        return (f"Lot verdict: NOT PASSED: {len(run.unreadable)} input(s) could not be read, so the lot is not fully "
                "judged (exit code 2); the samples that were read meet the criteria.")
    else:
        base = "Lot verdict: PASS."
    if run.unreadable:
        base += f" {len(run.unreadable)} input(s) could not be read, so the lot is not fully judged (exit code 2)."
    return base


def print_lot(run, console=None) -> None:
    """Print the terminal summary (plain text when not a terminal)."""
    from .safe import console as safe_console

    console = console or safe_console(highlight=False, soft_wrap=False)
    for r in lot_renderables(run):
        console.print(r)
