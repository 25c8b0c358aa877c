"""``lumeval lot``: many samples of one product — figures, lot statistics, yield, outliers.

The command parses options, calls :func:`lumeval.lots.run.run_lot` (reading, batching, judging
and the lot statistics live in :mod:`lumeval.lots`), renders the result and sets the exit code.
A file that cannot be read (or a column of a wide CSV that cannot be used) is recorded with its
reason and never stops the others; the HTML report draws the samples the run judged, as the
run evaluated them.

Inputs: files, folders (every file directly inside with a spectrum-file extension, sorted by
name; sub-folders are not entered) and glob patterns (``*``, ``?``, ``[...]``; ``**`` matches
folders recursively), expanded by lumeval so they work the same on every shell. Wide CSVs (a
wavelength column and one column per sample) give one sample per column, named by its header.

Exit codes: 0 when every judged requirement passes (or nothing was judged); 1 when a lot
clause fails, or when a sample fails a per-sample clause and the criteria have no
``lot_yield`` clause (with a yield clause the lot may contain failing samples up to the
allowed share); 2 for bad usage, unreadable criteria, or when any input could not be read
(reported after every readable sample has been judged and the outputs written: a lot with
unread samples cannot be declared to pass).
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from enum import Enum
from pathlib import Path

import typer

from .._paths import command_line

# The lot run lives in lumeval.lots (re-exported here for code written against this module).
from ..lots.inputs import (  # noqa: F401
    SPECTRUM_SUFFIXES,
    LotInputs,
    Skipped,
    Unreadable,
    display_path,
    expand_inputs,
)
from ..lots.run import BATCH_SPECTRA, ENGINE_CHUNK, LotRun, run_lot  # noqa: F401
from ..render.safe import clean


class OutputFormat(str, Enum):
    terminal = "terminal"
    json = "json"
    csv = "csv"


# --------------------------------------------------------------------------- CLI


def _write_atomic(path: Path, write: Callable, option: str | None = None) -> None:
    """Call ``write(stream)`` on a text stream whose data replace ``path`` atomically when
    complete (:func:`lumeval._io.atomic_output`)."""
    from .._io import atomic_output

    with atomic_output(path, text=True, newline="", option=option) as f:
        write(f)


def _evaluate_for_report(run: LotRun):
    """The judged samples evaluated from their files, for a run that kept no evaluation (a run on
    a Dask cluster: its workers hold the spectra). Files are read as the run read them (the
    salvage reader keeps a wide file's usable columns)."""
    import numpy as np

    from ..engine import evaluate
    from ..lots.run import read_one
    from ..spectra.prepare import prepare_groups
    from ..spectra.read import unique_names

    seen: dict[str, int] = {}
    sets = [unique_names(s, seen) for s, _ in (read_one(p) for p in run.read_paths) if s is not None]
    if not sets:
        return None
    spectra = prepare_groups(sets)  # each file on its own grid
    judged = set(run.sources)
    keep = np.array([i for i, src in enumerate(spectra.sources) if src in judged], dtype=int)
    return evaluate(spectra.subset(keep), keep_details=False)


def _write_lot_report(run: LotRun, criteria, html, plots, progress=None) -> None:
    """Draw the lot: the judged samples as the run evaluated them (``run.evaluation``), with the
    lot statistics and verdicts, in the HTML report and plots. Nothing is read or evaluated
    again, so the report shows exactly the samples and numbers of the run."""
    from ..render.html import regions_from_criteria, write_outputs

    ev = run.evaluation
    if ev is None and run.names:
        ev = _evaluate_for_report(run)
    if ev is None or len(ev) == 0:  # said even with --quiet: an output asked for is not there
        asked = " and ".join(o for o, v in (("--html", html), ("--plots", plots)) if v is not None)
        print(f"lumeval: note: no sample could be read, so nothing was drawn: {asked} not written", file=sys.stderr)
        return
    verdicts = ([run.check] if run.check is not None else []) + list(run.lot_results)
    from ._announce import announce_outputs

    written = write_outputs(
        ev, html=html, plots=plots, verdicts=verdicts or None, lot=run.stats,
        # a lot with inputs that were not read is not fully judged: never a pass
        overall=("fail" if run.failed else "not judged" if run.unreadable else "pass") if verdicts else None,
        regions=regions_from_criteria(criteria) if criteria is not None else None,
        inputs=list(run.read_paths), command=command_line(), progress=progress,
        unreadable=[(u.source, u.message) for u in run.unreadable], skipped=[(k.path, k.reason) for k in run.skipped],
    )
    announce_outputs(written, html, plots)


def _inputs_to_keep(found, outputs) -> list[str]:
    """The input files an output may not overwrite: all, except an output target that an earlier
    run wrote into a folder being judged (a lumeval report found there, not named as an input:
    the run skips it, and this run's output replaces it; lumeval.lots.own_reports)."""
    import os

    from ..lots.own_reports import report_kind

    targets = {os.path.abspath(t) for t in outputs.values() if t is not None}
    given = set(found.given)
    return [f for f in found.files
            if f in given or os.path.abspath(f) not in targets or report_kind(f) is None]


def register(app: typer.Typer) -> None:
    @app.command("lot")
    def lot_cmd(
        paths: list[str] = typer.Argument(
            ..., help="Spectrum files, folders and glob patterns (quote patterns); wide CSVs give one sample per column.", show_default=False
        ),
        criteria_file: Path = typer.Option(None, "--criteria", "-c", help="Criteria file (TOML) with per-sample and lot clauses."),
        output_format: OutputFormat = typer.Option(
            OutputFormat.terminal, "--format", "-f", help="What to print: terminal summary, lot JSON, or per-sample CSV."
        ),
        samples_csv: Path = typer.Option(None, "--samples-csv", help="Also write the per-sample CSV to this file."),
        json_file: Path = typer.Option(None, "--json", help="Also write the lot JSON to this file."),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bars, and do not say which files were written."),
        html: Path = typer.Option(
            None, "--html", help="Also write a self-contained HTML lot report to this file (keeps the judged samples' "
            "spectra in memory to draw them: about 4 kB per sample)."
        ),
        plots: Path = typer.Option(None, "--plots", help="Also write the report's figures as SVG and PNG into this directory."),
        instrument: Path = typer.Option(
            None, "--instrument", help="Instrument model (TOML, docs/uncertainty.md): decide each sample's clauses under "
            "measurement uncertainty with the criteria file's [decision] rule (Monte Carlo per sample: use --draws 200 for "
            "large lots).", show_default=False,
        ),
        seed: int = typer.Option(None, "--seed", help="Seed of the Monte Carlo draws.", show_default=False),
        draws: int = typer.Option(None, "--draws", help="Monte Carlo draws per sample (default 2000).", show_default=False),
        store: str = typer.Option(None, "--store", help="Record the judged lot in this history store (a path, "
                                  "sqlite:///path.db or postgresql://...; docs/history.md).", show_default=False),
        lot_id: str = typer.Option(None, "--lot-id", help="The lot's label in the store (default: the criteria's "
                                   "identification lot).", show_default=False),
        product: str = typer.Option(None, "--product", help="The lot's product in the store (default: the "
                                    "criteria's identification product).", show_default=False),
        trend_figures: str = typer.Option(None, "--trend-figures", help="After recording, report new control-chart "
                                          "signals of these figures (e.g. duv,R9).", show_default=False),
        fail_on_signal: bool = typer.Option(False, "--fail-on-signal", help="Exit 1 when the recorded lot gives a "
                                            "control-chart signal."),
        baseline: str = typer.Option(None, "--baseline", help="Alarm baseline: lots A..B (store numbers, inclusive; "
                                     "as `history trend`; default: the first 20 earlier lots whose verdict did not "
                                     "fail, less those beyond their trial limits).", show_default=False),
        baseline_count: int = typer.Option(None, "--baseline-count", help="Alarm baseline: the first K lots (as "
                                           "`history trend`).", show_default=False),
        samples_parquet: Path = typer.Option(
            None, "--samples-parquet", help="Also write the per-sample table (figures, verdicts, outliers and the "
            "archive's metadata columns) as Parquet to this file.", show_default=False),
        scheduler: str = typer.Option(
            None, "--scheduler", help="Evaluate Parquet archives on this running Dask cluster (tcp://HOST:PORT; "
            "docs/lots.md).", show_default=False),
        workers: int = typer.Option(
            None, "--workers", help="Evaluate Parquet archives on a local Dask cluster of N worker processes "
            "(loopback only).", show_default=False),
        processes: int = typer.Option(
            None, "--processes", min=1, max=256, help="Worker processes on this machine that read, convert, evaluate "
            "and write the lot's per-sample CSV, 1 to 256 (default: one per core; 1: this process only).",
            show_default=False),
    ) -> None:
        """Judge a production lot: every sample's figures, lot statistics, yield and outliers."""
        from ._targets import check_targets
        from .history import check_store_options, record_after_lot

        check_store_options(store, lot_id, product, trend_figures, fail_on_signal or None, baseline, baseline_count)

        outputs = {"--samples-csv": samples_csv, "--json": json_file, "--html": html,
                   "--samples-parquet": samples_parquet}
        dir_files = None
        if plots is not None:
            from ..render.html import PLOT_FILE_PATTERNS

            dir_files = {"--plots": PLOT_FILE_PATTERNS}
        # the criteria first: a bad criteria file is refused before a large folder is listed
        criteria = None
        if criteria_file is not None:
            from ..criteria import lot_clauses  # noqa: F401  (registers the lot clause kinds)
            from ..criteria.loader import load_criteria

            criteria = load_criteria(criteria_file)
            criteria.require_clauses_for("lot", ("sample", "lot"))  # before a large folder is listed
            for w in criteria.warnings:
                print(f"lumeval: warning: {clean(w)}", file=sys.stderr)
        # the inputs expanded once: for the outputs-vs-inputs check and for the run (not for a
        # Dask run, which expands its own archives)
        expanded = expand_inputs(paths) if scheduler is None and workers is None else None
        # the history store is an input too: an output naming it would replace every recorded lot
        # (its URL's form was checked above, with the other store options)
        store_file = None
        if store is not None:
            from ..store.db import parse_store_url

            store_file = parse_store_url(store).sqlite_path
        found = None
        if any(v is not None for v in (*outputs.values(), plots)):
            found = expanded if expanded is not None else expand_inputs(paths)
        input_files: list[str] = []
        if found is not None:  # --plots alone: the inputs as found (compared only if a figure's name exists there)
            input_files = (_inputs_to_keep(found, outputs) if any(v is not None for v in outputs.values())
                           else list(found.files))
        check_targets(files=outputs, dirs={"--plots": plots}, dir_files=dir_files,
                      inputs=[p for p in (criteria_file, instrument, store_file) if p is not None],
                      input_files=input_files)
        from ..api import lot

        report = html is not None or plots is not None
        from ..render import lot_report
        from ._announce import announce, set_quiet
        from ._progress import progress_listener

        set_quiet(quiet)
        # progress on stderr (a terminal only, not with --quiet) while reading, evaluating, the
        # Monte Carlo of --instrument and the report figures; removed before the summary prints
        with progress_listener() as progress:
            run = lot(paths if expanded is None else expanded, criteria, instrument=instrument, seed=seed, draws=draws,
                      progress=progress,
                      keep_evaluation=report, scheduler=scheduler, workers=workers,
                      **({} if processes is None else {"read_processes": processes, "evaluate_processes": processes}))
            if samples_csv is not None:
                _write_atomic(samples_csv, lambda f: lot_report.samples_csv(run, f, processes), "--samples-csv")
                announce("per-sample CSV", samples_csv)
            if json_file is not None:
                _write_atomic(json_file, lambda f: lot_report.lot_json(run, f), "--json")
                announce("lot JSON", json_file)
            if samples_parquet is not None:
                from ..frames import write_samples_parquet

                write_samples_parquet(run, samples_parquet)
                announce("per-sample Parquet table", samples_parquet)
            # the report last: the data files are the record, the report draws them
            if html is not None or plots is not None:
                _write_lot_report(run, criteria, html, plots, progress)
        if output_format is OutputFormat.json:
            lot_report.lot_json(run, sys.stdout)
        elif output_format is OutputFormat.csv:
            lot_report.samples_csv(run, sys.stdout)
        else:
            lot_report.print_lot(run)
        if run.unreadable:
            # the report lists each one; stderr gets one clean line for scripts and logs
            n = len(run.unreadable)
            if n == 1:
                print(f"lumeval: error: {clean(run.unreadable[0].message)} (the lot is not fully judged)", file=sys.stderr)
            else:
                print(f"lumeval: error: {n} inputs could not be read, so the lot is not fully judged — see the list in the "
                      f"report; first: {clean(run.unreadable[0].message)}", file=sys.stderr)
        # sys.exit, not typer.Exit: the entry point runs click with standalone_mode=False, which
        # would turn typer.Exit into a return value and lose the code.
        sys.exit(record_after_lot(run, criteria, store=store, lot_id=lot_id, product=product, trend_figures=trend_figures,
                                  fail_on_signal=fail_on_signal, exit_code=run.exit_code, criteria_path=criteria_file,
                                  baseline=baseline, baseline_count=baseline_count))
