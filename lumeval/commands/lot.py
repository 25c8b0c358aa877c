"""``lumeval lot``: many samples of one product — figures, lot statistics, yield, outliers.

The Python twin is :func:`run_lot`. It streams: files are read one at a time, spectra are
evaluated in batches of :data:`BATCH_SPECTRA` and only the per-sample figures are kept, so
memory stays bounded (about 1 kB per sample) however many samples come. A file that cannot be
read (or a column of a wide CSV that cannot be used) is recorded with its reason and never
stops the others.

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

import os
import sys
from dataclasses import dataclass, field
from enum import Enum
from pathlib import Path
from typing import Callable, Sequence

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # numpy is imported where it is used: `lumeval --help` stays light
    import numpy as np
import typer

from ..render.safe import clean

# Expansion of files, folders and patterns lives in lumeval.lots.inputs (re-exported here).
from ..lots.inputs import SPECTRUM_SUFFIXES, LotInputs, Skipped, Unreadable, display_path, expand_inputs  # noqa: F401

#: Spectra evaluated together (bounded memory; the engine chunks further inside).
BATCH_SPECTRA = 2048
#: Engine chunk size for lots. Measured CPU per 1,000 spectra after the TM-30 speed-up: 0.089 s
#: at 512, 0.097 s at 256, 0.105 s at 1024 (bench/benchmark.py); peak memory of a
#: 100,000-spectrum lot stays near 600 MB (docs/lots.md).
ENGINE_CHUNK = 512


class OutputFormat(str, Enum):
    terminal = "terminal"
    json = "json"
    csv = "csv"


@dataclass(frozen=True)
class LotRun:
    """Everything ``lumeval lot`` found for a lot.

    Attributes
    ----------
    names, sources : tuple of str (N,)
    warnings : tuple of tuple of str (N,)
    figures : dict of str -> ndarray (N,)
        Every figure of the registry (:func:`lumeval.figures.names`).
    xy : ndarray (N, 2)
    stats : lumeval.lot.LotStatistics
    check : lumeval.criteria.verdicts.CheckResult or None
        Per-sample clause results (None without criteria or without per-sample clauses).
    lot_results : tuple of LotClauseResult
    unreadable : tuple of Unreadable
    skipped : tuple of Skipped
    files : int
        Input files found (after expanding folders and patterns).
    criteria_file : str or None
    identification : dict
    """

    names: tuple[str, ...]
    sources: tuple[str, ...]
    warnings: tuple[tuple[str, ...], ...]
    figures: dict
    xy: np.ndarray
    stats: object
    check: object | None
    lot_results: tuple
    unreadable: tuple[Unreadable, ...]
    files: int
    criteria_file: str | None = None
    identification: dict = field(default_factory=dict)
    has_yield_clause: bool = False
    #: Entries found by expanding folders and patterns and left out on purpose, with the reason.
    skipped: tuple[Skipped, ...] = ()
    #: The files that gave judged samples (paths that open them; for the HTML report).
    read_paths: tuple[str, ...] = ()
    #: pyarrow.Table: the Parquet archives' metadata columns, one row per sample (None without)
    metadata: object = None

    def __len__(self) -> int:
        return len(self.names)

    @property
    def sample_verdicts(self) -> tuple[str, ...] | None:
        return self.check.verdicts if self.check is not None else None

    @property
    def failed(self) -> bool:
        """A lot clause failed, or (without a yield clause) a sample failed its clauses."""
        if any(r.outcome != "pass" for r in self.lot_results):
            return True
        v = self.sample_verdicts
        if v is not None and not self.has_yield_clause:
            return any(o != "pass" for o in v)
        return False

    @property
    def exit_code(self) -> int:
        if self.unreadable:
            return 2
        return 1 if self.failed else 0


# --------------------------------------------------------------------------- inputs


def _read_one(path: str):
    """(prepared SpectrumSet or None, [Unreadable]) for one file; salvages the usable columns
    of a wide file when some columns cannot be prepared."""
    from ..errors import LumevalError
    from ..spectra.prepare import prepare
    from ..spectra.read import read_spectra

    try:
        raw = read_spectra(path)
    except LumevalError as exc:
        return None, [Unreadable(display_path(path), exc.message)]
    except OSError as exc:
        return None, [Unreadable(display_path(path), f"{display_path(path)}: cannot be read ({exc.strerror or exc}) — check the file and its permissions")]
    try:
        return prepare(raw), []
    except LumevalError as exc:
        if len(raw) == 1:
            return None, [Unreadable(display_path(path), exc.message)]
    good, bad = [], []
    for i in range(len(raw)):
        one = raw.subset([i])
        try:
            prepare(one)
        except LumevalError as exc:
            bad.append(Unreadable(raw.sources[i], exc.message))
        else:
            good.append(i)
    if not good:
        return None, bad
    return prepare(raw.subset(good)), bad


def _concat_clause(parts: list):
    """Join per-batch ClauseResults of one clause into one."""
    import numpy as np

    from dataclasses import replace

    first = parts[0]
    if len(parts) == 1:
        return first
    cat = lambda name: np.concatenate([np.asarray(getattr(p, name), dtype=float) for p in parts])  # noqa: E731
    details = {k: np.concatenate([np.asarray(p.details[k]) for p in parts]) for k in first.details}
    opt = {}
    for name in ("uncertainty", "p_conformance"):
        opt[name] = cat(name) if getattr(first, name) is not None else None
    return replace(
        first,
        measured=cat("measured"),
        margin=cat("margin"),
        outcome=sum((p.outcome for p in parts), ()),
        reason=sum((tuple(p.reason) for p in parts), ()),
        details=details,
        **opt,
    )


def run_lot(
    paths: Sequence[str | os.PathLike],
    criteria=None,
    *,
    ellipse=None,
    nominal_xy=None,
    batch_spectra: int = BATCH_SPECTRA,
    progress: Callable[[int, int, int], None] | None = None,
    uncertainty=None,
    scheduler: str | None = None,
    workers: int | None = None,
) -> LotRun:
    """Python twin of ``lumeval lot``: read, evaluate, judge and summarise a lot.

    Parameters
    ----------
    paths : sequence of str or Path
        Files, folders and glob patterns (see the module docstring).
    criteria : lumeval.criteria.model.Criteria, optional
        Per-sample clauses give each sample's verdict and the yield; lot clauses (see
        :mod:`lumeval.criteria.lot_clauses`) are judged on the lot statistics.
    ellipse, nominal_xy
        Passed to :func:`lumeval.lot.lot_statistics`. Without them, an ``sdcm`` clause of the
        criteria supplies the nominal ellipse, else an ``ansi_quadrangle`` clause the nominal
        centre.
    batch_spectra : int
        Spectra evaluated together.
    progress : callable(files_done, files_total, samples_done), optional
        Called after each file (for a progress bar).
    uncertainty : lumeval.uncertainty.judge.UncertaintySetup, optional
        When active, every sample's per-sample clauses are re-decided under measurement
        uncertainty (Monte Carlo per sample; docs/uncertainty.md). Lot clauses (centroid,
        pairwise Δu'v', yield) are judged on the measured values as before.
    scheduler, workers
        Evaluate on a Dask cluster: the address of a running scheduler, or a local cluster of
        ``workers`` processes (:func:`lumeval.lots.dask_runner.run_lot_dask`; Parquet
        archives only). The result equals the local run's.

    Returns
    -------
    LotRun
    """
    if scheduler is not None or workers is not None:
        from ..lots.dask_runner import run_lot_dask

        return run_lot_dask(paths, criteria, scheduler=scheduler, workers=workers, ellipse=ellipse,
                            nominal_xy=nominal_xy, batch_spectra=batch_spectra, progress=progress,
                            uncertainty=uncertainty)
    from ..lots.streaming import LotAccumulator, archive_batches, evaluate_batch
    from ..spectra.archive import is_archive
    from ..spectra.read import unique_names

    found = expand_inputs(paths)
    files, unreadable = list(found.files), list(found.unreadable)
    read_paths: list[str] = []
    archives = [is_archive(f, sniff=False) for f in files]  # by name: no extra open per file
    acc = LotAccumulator(_expected_samples(files, archives))
    seen_names: dict[str, int] = {}
    pending: list = []
    pending_n = 0
    done = 0

    sample_criteria = None
    if criteria is not None:
        from ..criteria.lot_clauses import has_sample_clauses

        if has_sample_clauses(criteria):
            sample_criteria = criteria

    def consume(s, meta=None) -> None:
        acc.add(evaluate_batch(s, sample_criteria, uncertainty, offset=len(acc), metadata=meta))

    def flush() -> None:
        nonlocal pending, pending_n
        if pending:
            # one evaluation per batch: the engine groups the files by computation grid (each
            # spectrum on its own grid, never resampled) and returns the samples in file order
            consume(pending)
        pending = []
        pending_n = 0

    for k, path in enumerate(files):
        if archives[k]:  # a Parquet archive streams in batches (lumeval.spectra.archive)
            from ..errors import LumevalError

            flush()  # samples stay in input order
            try:
                for s, meta, bad in archive_batches(path, batch_spectra):
                    unreadable.extend(bad)
                    if s is not None:
                        s = unique_names(s, seen_names)
                        if not read_paths or read_paths[-1] != path:
                            read_paths.append(path)
                        consume(s, meta)
                        done += len(s)
                        if progress is not None:
                            progress(k, len(files), done)
            except LumevalError as exc:
                unreadable.append(Unreadable(path, exc.message))
        else:
            s, bad = _read_one(path)
            unreadable.extend(bad)
            if s is not None:
                s = unique_names(s, seen_names)
                read_paths.append(path)
                pending.append(s)
                pending_n += len(s)
                done += len(s)
            if pending_n >= batch_spectra:
                flush()
        if progress is not None:
            progress(k + 1, len(files), done)
    flush()
    return acc.finish(criteria, sample_criteria=sample_criteria, unreadable=unreadable, files=len(files),
                      ellipse=ellipse, nominal_xy=nominal_xy, uncertainty=uncertainty, skipped=found.skipped,
                      read_paths=tuple(read_paths))


def _expected_samples(files: list[str], archives: list[bool]) -> int:
    """Samples a lot expects (archives: their rows, from the Parquet footers; other files: one
    each), to size the per-sample buffers once."""
    n = 0
    for f, is_arch in zip(files, archives):
        if is_arch:
            try:
                from ..spectra.archive import count_rows

                n += count_rows(f)
            except Exception:  # noqa: BLE001 - an unreadable archive is reported when it is read
                pass
        else:
            n += 1
    return n


def _nominal_from_criteria(criteria):
    """(ellipse, nominal_xy) implied by the criteria: an ``sdcm`` clause's ellipse, else an
    ``ansi_quadrangle`` clause's centre (with the nearest standard ellipse's coefficients)."""
    import numpy as np

    for c in criteria.clauses:
        e = getattr(c, "ellipse", None)
        if getattr(c, "KIND", "") == "sdcm" and e is not None:
            return e, None
    for c in criteria.clauses:
        if getattr(c, "KIND", "") == "ansi_quadrangle":
            q = getattr(c, "quadrangle", None)
            q = q() if callable(q) else q
            centre = getattr(q, "centre_upvp", None)
            if centre is not None:
                from ..lot import nearest_standard_ellipse, xy_from_upvp

                return nearest_standard_ellipse(np.asarray(centre)), xy_from_upvp(np.asarray(centre))
    return None, None


# --------------------------------------------------------------------------- CLI


def _write_atomic(path: Path, write: Callable, option: str | None = None) -> None:
    """Call ``write(stream)`` on a text stream whose data replace ``path`` atomically when
    complete (:func:`lumeval._io.atomic_output`)."""
    from .._io import atomic_output

    with atomic_output(path, text=True, newline="", option=option) as f:
        write(f)


def _write_lot_report(run: LotRun, criteria, html, plots) -> None:
    """Draw the lot: evaluate the judged samples once more (the lot run keeps only their
    figures, not their spectra) and hand them with the lot statistics and verdicts to the HTML
    report and plots."""
    import numpy as np

    from ..engine import evaluate
    from ..render.html import regions_from_criteria, write_outputs
    from ..spectra.prepare import prepare_groups
    from ..spectra.read import read_many, unique_names

    files = list(run.read_paths)
    sets, _errors = read_many(files)
    seen: dict[str, int] = {}
    sets = [unique_names(s, seen) for s in sets if s is not None]  # the names of the lot run
    if not sets:
        return
    spectra = prepare_groups(sets)  # each file on its own grid
    judged = set(run.sources)
    keep = np.array([i for i, src in enumerate(spectra.sources) if src in judged], dtype=int)
    ev = evaluate(spectra.subset(keep), keep_details=False)
    verdicts = ([run.check] if run.check is not None else []) + list(run.lot_results)
    from ._announce import announce_outputs

    written = write_outputs(
        ev, html=html, plots=plots, verdicts=verdicts or None, lot=run.stats,
        overall=("fail" if run.failed else "pass") if verdicts else None,
        regions=regions_from_criteria(criteria) if criteria is not None else None,
        inputs=files, command="lumeval " + " ".join(sys.argv[1:]),
    )
    announce_outputs(written, html, plots)


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
        quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bar, and do not say which files were written."),
        html: Path = typer.Option(
            None, "--html", help="Also write a self-contained HTML lot report to this file (the readable samples are "
            "evaluated once more to draw them)."
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
        samples_parquet: Path = typer.Option(
            None, "--samples-parquet", help="Also write the per-sample table (figures, verdicts, outliers and the "
            "archive's metadata columns) as Parquet to this file.", show_default=False),
        scheduler: str = typer.Option(
            None, "--scheduler", help="Evaluate Parquet archives on this running Dask cluster (tcp://HOST:PORT; "
            "docs/lots.md).", show_default=False),
        workers: int = typer.Option(
            None, "--workers", help="Evaluate Parquet archives on a local Dask cluster of N worker processes "
            "(loopback only).", show_default=False),
    ) -> None:
        """Judge a production lot: every sample's figures, lot statistics, yield and outliers."""
        from ._targets import check_targets
        from .history import check_store_options, record_after_lot

        check_store_options(store, lot_id, product, trend_figures, fail_on_signal or None)

        outputs = {"--samples-csv": samples_csv, "--json": json_file, "--html": html,
                   "--samples-parquet": samples_parquet}
        dir_files = None
        if plots is not None:
            from ..render.html import PLOT_FILE_PATTERNS

            dir_files = {"--plots": PLOT_FILE_PATTERNS}
        check_targets(files=outputs, dirs={"--plots": plots}, dir_files=dir_files,
                      inputs=[*(expand_inputs(paths).files if any(v is not None for v in outputs.values()) else ()),
                              *[p for p in (criteria_file, instrument) if p is not None]])
        criteria = None
        if criteria_file is not None:
            from ..criteria import lot_clauses  # noqa: F401  (registers the lot clause kinds)
            from ..criteria.loader import load_criteria

            criteria = load_criteria(criteria_file)
            for w in criteria.warnings:
                print(f"lumeval: warning: {clean(w)}", file=sys.stderr)
        setup = None
        if criteria is not None or instrument is not None or seed is not None or draws is not None:
            from ..uncertainty.judge import resolve_setup

            setup = resolve_setup(criteria, instrument, seed=seed, draws=draws)

        show = not quiet and sys.stderr.isatty()
        if show:
            from rich.console import Console
            from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

            with Progress(
                TextColumn("reading and evaluating"),
                BarColumn(),
                MofNCompleteColumn(),
                TextColumn("files · {task.fields[samples]} samples"),
                TimeElapsedColumn(),
                console=Console(stderr=True),
                transient=True,
            ) as bar:
                task = bar.add_task("lot", total=None, samples=0)

                def tick(k, total, samples):
                    bar.update(task, completed=k, total=total, samples=samples)

                run = run_lot(paths, criteria, progress=tick, uncertainty=setup, scheduler=scheduler, workers=workers)
        else:
            run = run_lot(paths, criteria, uncertainty=setup, scheduler=scheduler, workers=workers)

        from ..render import lot_report
        from ._announce import announce, set_quiet

        set_quiet(quiet)
        if samples_csv is not None:
            _write_atomic(samples_csv, lambda f: lot_report.samples_csv(run, f), "--samples-csv")
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
            _write_lot_report(run, criteria, html, plots)
        if output_format is OutputFormat.json:
            lot_report.lot_json(run, sys.stdout)
        elif output_format is OutputFormat.csv:
            lot_report.samples_csv(run, sys.stdout)
            from .check import note_csv_cautions

            note_csv_cautions()
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
                                  fail_on_signal=fail_on_signal, exit_code=run.exit_code))
