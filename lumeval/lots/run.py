"""One lot run: read many files (salvaging the usable columns of a wide file), evaluate them in
batches, judge them and summarise the lot (:func:`run_lot`, :class:`LotRun`).

It streams: files are read one at a time, spectra are evaluated in batches of
:data:`BATCH_SPECTRA` and only the per-sample figures are kept, so memory stays bounded (about
1 kB per sample) however many samples come; the judged samples' spectra are kept too only when
a report that draws them is asked for (``keep_evaluation=True``), so the report shows exactly
what was judged, without a second reading or evaluation. A file that cannot be read (or a
column of a wide CSV that cannot be used) is recorded with its reason and never stops the
others. Nothing here prints or imports a command-line library.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING

from .inputs import LotInputs, Skipped, Unreadable, display_path, expand_inputs

if TYPE_CHECKING:  # numpy is imported where it is used: `lumeval --help` stays light
    import numpy as np

    from ..engine import Evaluation

#: Spectra evaluated together (bounded memory; the engine chunks further inside).
BATCH_SPECTRA = 2048
#: Engine chunk size for lots: the engine's default (lumeval.engine.DEFAULT_CHUNK, 1024: the
#: measured optimum); peak memory stays bounded by the batch (docs/lots.md, "Memory").
ENGINE_CHUNK = 1024


@dataclass(frozen=True)
class LotRun:
    """Everything ``lumeval lot`` found for a lot.

    Attributes
    ----------
    names, sources : sequence of str (N,)
        Packed (:class:`lumeval.lots.columns.TextColumn`); equal to the tuple of the strings.
    warnings : sequence of tuple of str (N,)
    figures : mapping of str -> ndarray (N,)
        Every figure of the registry (:func:`lumeval.figures.names`); in a lot run a
        :class:`lumeval.lots.columns.FigureColumns` (a large lot keeps them in a temporary
        file: ``figures[name]`` reads one figure, :func:`lumeval.lots.columns.figure_rows` a
        range of rows of all).
    xy : ndarray (N, 2)
    stats : lumeval.lots.statistics.LotStatistics
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

    names: Sequence[str]
    sources: Sequence[str]
    warnings: Sequence[tuple[str, ...]]
    figures: Mapping[str, np.ndarray]
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
    #: The judged samples' evaluation (spectra on one grid, every figure), kept only when
    #: :func:`run_lot` is asked for it (``keep_evaluation=True``, for the HTML report and plots):
    #: the report draws exactly the samples and numbers of this run, without reading or
    #: evaluating anything again.
    evaluation: Evaluation | None = None
    #: Warnings raised by the computation libraries during the run (see Evaluation.run_warnings).
    run_warnings: tuple[str, ...] = ()

    def __len__(self) -> int:
        return len(self.names)

    def __repr__(self) -> str:
        """One short line (the dataclass default would print every sample's figures)."""
        parts = [f"{len(self)} sample{'' if len(self) == 1 else 's'} from {self.files} file{'' if self.files == 1 else 's'}"]
        v = self.sample_verdicts
        if v is not None:
            counts: dict[str, int] = {}
            for o in v:
                counts[o] = counts.get(o, 0) + 1
            parts.append(", ".join(f"{n} {o}" for o, n in sorted(counts.items())))
        if self.lot_results:
            bad = sum(r.outcome != "pass" for r in self.lot_results)
            parts.append(f"{len(self.lot_results)} lot clause{'' if len(self.lot_results) == 1 else 's'}, {bad} not passed")
        if self.unreadable:
            parts.append(f"{len(self.unreadable)} unreadable")
        outcome = "unreadable input" if self.unreadable else ("fail" if self.failed else "pass")
        return f"<LotRun {outcome}: {'; '.join(parts)}>"

    @cached_property
    def sample_verdicts(self) -> tuple[str, ...] | None:
        """Each sample's overall verdict (combined once: a lot may have 10^6 samples)."""
        return self.check.verdicts if self.check is not None else None  # type: ignore[attr-defined]

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


def read_one(path: str):
    """(prepared SpectrumSet or None, [Unreadable]) for one file; salvages the usable columns
    of a wide file when some columns cannot be prepared."""
    raw, bad = read_raw(path)
    return (None, bad) if raw is None else prepare_salvaging(raw, display_path(path))


def read_raw(path: str):
    """(SpectrumSet as read or None, [Unreadable]) for one file, before preparation."""
    from ..errors import LumevalError
    from ..spectra.read import read_spectra

    try:
        return read_spectra(path), []
    except LumevalError as exc:
        return None, [Unreadable(display_path(path), exc.message)]
    except OSError as exc:
        return None, [Unreadable(display_path(path), f"{display_path(path)}: cannot be read ({exc.strerror or exc}) — check the file and its permissions")]


def prepare_salvaging(raw, shown: str):
    """(prepared SpectrumSet or None, [Unreadable]) of the spectra of one file (``shown``):
    the usable columns of a wide file are kept when some cannot be prepared."""
    from ..errors import LumevalError
    from ..spectra.prepare import prepare

    try:
        return prepare(raw), []
    except LumevalError as exc:
        if len(raw) == 1:
            return None, [Unreadable(shown, exc.message)]
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
    from dataclasses import replace

    import numpy as np

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
    paths: Sequence[str | os.PathLike] | LotInputs,
    criteria=None,
    *,
    ellipse=None,
    nominal_xy=None,
    batch_spectra: int = BATCH_SPECTRA,
    progress: Callable[[str, int, int | None], None] | None = None,
    uncertainty=None,
    scheduler: str | None = None,
    workers: int | None = None,
    keep_evaluation: bool = False,
    read_processes: int | None = None,
    evaluate_processes: int | None = None,
) -> LotRun:
    """Python twin of ``lumeval lot``: read, evaluate, judge and summarise a lot.

    Parameters
    ----------
    paths : sequence of str or Path, or LotInputs
        Files, folders and glob patterns (see the module docstring), or their expansion by
        :func:`lumeval.lots.inputs.expand_inputs` already made (the command expands once for
        its output checks and the run).
    criteria : lumeval.criteria.model.Criteria, optional
        Per-sample clauses give each sample's verdict and the yield; lot clauses (see
        :mod:`lumeval.criteria.lot_clauses`) are judged on the lot statistics.
    ellipse, nominal_xy
        Passed to :func:`lumeval.lots.statistics.lot_statistics`. Without them, an ``sdcm`` clause of the
        criteria supplies the nominal ellipse, else an ``ansi_quadrangle`` clause the nominal
        centre.
    batch_spectra : int
        Spectra evaluated together.
    progress : callable(stage, done, total), optional
        A progress listener (:mod:`lumeval.progress`): ``reading`` after each file,
        ``evaluating`` after each batch (samples), ``Monte Carlo`` after each sample's draws.
    uncertainty : lumeval.uncertainty.judge.UncertaintySetup, optional
        When active, every sample's per-sample clauses are re-decided under measurement
        uncertainty (Monte Carlo per sample; docs/uncertainty.md). Lot clauses (centroid,
        pairwise Δu'v', yield) are judged on the measured values as before.
    scheduler, workers
        Evaluate on a Dask cluster: the address of a running scheduler, or a local cluster of
        ``workers`` processes (:func:`lumeval.lots.dask_runner.run_lot_dask`; Parquet
        archives only). The result equals the local run's.
    keep_evaluation : bool
        Keep the judged samples' spectra and figures in ``LotRun.evaluation`` (for the HTML
        report and plots; memory grows with the lot: about 4 kB per sample). Local runs only.
    read_processes : int, optional
        Processes reading the files other than archives (:func:`lumeval.lots.reading.ordered_reads`):
        None chooses (parallel from 200 files on), 1 reads here. Results do not depend on it.

    Returns
    -------
    LotRun
    """
    if scheduler is not None or workers is not None:
        from .dask_runner import run_lot_dask

        # the Dask runner expands its inputs itself (from the files, when given expanded)
        return run_lot_dask(list(paths.files) if isinstance(paths, LotInputs) else paths, criteria,
                            scheduler=scheduler, workers=workers, ellipse=ellipse,
                            nominal_xy=nominal_xy, batch_spectra=batch_spectra, progress=progress,
                            uncertainty=uncertainty)
    from ..spectra.archive import has_archive_suffix, no_rows_error
    from ..spectra.read import SeenNames, unique_names
    from .streaming import LotAccumulator, archive_batches

    found = paths if isinstance(paths, LotInputs) else expand_inputs(paths)
    files, unreadable = list(found.files), list(found.unreadable)
    read_paths: list[str] = []
    # by name: the files are regular files (expand_inputs), so no stat or open per file
    archives = [has_archive_suffix(f) for f in files]
    from ..progress import EVALUATING, READING, offset, report

    expected = _expected_samples(files, archives)
    acc = LotAccumulator(expected, keep_evaluation=keep_evaluation)
    seen_names = SeenNames()
    pending: list = []
    pending_n = 0
    done = 0

    sample_criteria = _sample_criteria(criteria)
    from .evaluating import BatchEvaluator
    from .reading import is_streamed, ordered_reads, stream_blocks

    # a text file over the single-file limit is read in column blocks (lumeval.spectra.text_columns)
    streamed = [not a and is_streamed(f) for f, a in zip(files, archives)]
    whole = [f for f, a, w in zip(files, archives, streamed) if not (a or w)]
    evaluate_processes = _evaluating_processes(evaluate_processes, read_processes, len(whole))

    def on_result(r) -> None:
        acc.add(r)
        report(progress, EVALUATING, len(acc), max(expected, done))

    evaluator = BatchEvaluator(evaluate_processes, sample_criteria, uncertainty, keep_evaluation, on_result,
                               lambda start: offset(progress, start, max(expected, done)))

    consume = evaluator.submit
    def flush() -> None:
        nonlocal pending, pending_n
        for part in _batches(pending, batch_spectra):
            consume(part)
        pending = []
        pending_n = 0

    # files other than archives are read in input order, in worker processes when there are many
    reads = ordered_reads(whole, read_processes)
    try:
        if _several_batches(files, archives, streamed, expected, batch_spectra):
            evaluator.start()  # the workers warm up while this process reads
        for k, path in enumerate(files):
            if archives[k]:  # a Parquet archive streams in batches (lumeval.spectra.archive)
                from ..errors import LumevalError

                flush()  # samples stay in input order
                try:
                    rows = False
                    for s, meta, bad in archive_batches(path, batch_spectra):
                        rows = True
                        unreadable.extend(bad)
                        if s is not None:
                            s = unique_names(s, seen_names)
                            if not read_paths or read_paths[-1] != path:
                                read_paths.append(path)
                            done += len(s)
                            consume(s, meta)
                    if not rows:
                        raise no_rows_error(path)
                except LumevalError as exc:
                    unreadable.append(Unreadable(path, exc.message))
            else:  # read whole (in input order, maybe by workers), or a big text file in column blocks
                for s, bad in (stream_blocks(path, batch_spectra) if streamed[k] else (next(reads),)):
                    unreadable.extend(bad)
                    if s is not None:
                        s = unique_names(s, seen_names)
                        if not read_paths or read_paths[-1] != path:
                            read_paths.append(path)
                        pending.append(s)
                        pending_n += len(s)
                        done += len(s)
                    if pending_n >= batch_spectra:
                        flush()
            report(progress, READING, k + 1, len(files))
        reads.close()  # stops the reading workers, if any
        flush()
        evaluator.close()  # the last results, in order; stops the evaluating workers
    finally:
        reads.close()
        evaluator.terminate()
    return acc.finish(criteria, sample_criteria=sample_criteria, unreadable=unreadable, inputs=found,
                      ellipse=ellipse, nominal_xy=nominal_xy, uncertainty=uncertainty, read_paths=tuple(read_paths))


def _sample_criteria(criteria):
    """The criteria when they hold per-sample clauses (every sample is then judged), else None."""
    if criteria is None:
        return None
    from ..criteria.lot_clauses import has_sample_clauses

    return criteria if has_sample_clauses(criteria) else None


def _evaluating_processes(asked: int | None, read_processes: int | None, n_whole: int) -> int:
    """The evaluating worker processes of a lot: ``asked`` when given; else none (this process
    evaluates) when the files are read by worker processes, one per core, since evaluating
    workers on top of them would share the same cores (measured on 2 cores, 10,000 single
    files: 6.1 s wall with the main process evaluating, 7.3 s with two evaluating workers
    besides the two readers); else one per core where workers are forked."""
    from .reading import default_read_processes, fork_available, read_processes_for

    if asked is not None:
        return asked
    if not fork_available() or read_processes_for(n_whole, read_processes) > 1:
        return 1
    return default_read_processes()


def _batches(pending: list, batch_spectra: int):
    """Lists of sets of at most ``batch_spectra`` samples, in order: one evaluation per batch
    (the engine groups the files by computation grid, each spectrum on its own grid, and returns
    the samples in file order); a wide file read whole is cut into batches (for the workers)."""
    part: list = []
    n = 0
    for s in pending:
        for a in range(0, len(s), batch_spectra) if len(s) > batch_spectra else (0,):
            piece = s if len(s) <= batch_spectra else s.subset(slice(a, min(len(s), a + batch_spectra)))
            if part and n + len(piece) > batch_spectra:
                yield part
                part, n = [], 0
            part.append(piece)
            n += len(piece)
    if part:
        yield part


#: A text file of at least this many bytes is taken to hold more than one batch of spectra
#: (2,048 spectra of 401 values at 1 nm, of ~8 characters each, are ~6.6 MB).
SEVERAL_BATCHES_BYTES = 8 * 2**20


def _several_batches(files: list[str], archives: list[bool], streamed: list[bool], expected: int,
                     batch_spectra: int) -> bool:
    """Whether the lot is expected, before it is read, to need more than one batch: its
    archives hold more rows than a batch (from their footers), or, where pyarrow converts large
    text blocks (on threads, without forking: :mod:`lumeval.spectra.text_fast`), it has a text
    file read in column blocks or of :data:`SEVERAL_BATCHES_BYTES` or more. The evaluating
    workers are then started before the reading (:meth:`BatchEvaluator.start`). The size rule
    can be wrong (a file of one very finely sampled spectrum, say): the one batch then goes to
    a worker, and the workers' warm-up (~0.2 s of CPU each, beside the reading) was spent for
    nothing; the results are the same."""
    if expected > batch_spectra:
        return True
    from importlib.util import find_spec

    if find_spec("pyarrow") is None:  # large blocks are converted by forked processes instead
        return False
    if any(streamed):
        return True
    for f, is_arch in zip(files, archives):
        if not is_arch:
            try:
                if os.stat(f).st_size >= SEVERAL_BATCHES_BYTES:
                    return True
            except OSError:
                pass
    return False


def _expected_samples(files: list[str], archives: list[bool]) -> int:
    """Samples a lot expects (archives: their rows, from the Parquet footers; other files: one
    each), to size the per-sample buffers once."""
    n = 0
    for f, is_arch in zip(files, archives):
        if is_arch:
            try:
                from ..spectra.archive import count_rows

                n += count_rows(f)
            except Exception:
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
                from .statistics import nearest_standard_ellipse, xy_from_upvp

                return nearest_standard_ellipse(np.asarray(centre)), xy_from_upvp(np.asarray(centre))
    return None, None


def join_evaluations(parts: Sequence[Evaluation]) -> Evaluation:
    """One :class:`~lumeval.engine.Evaluation` of the samples of several batch evaluations, in
    order: each spectrum stays on its own computation grid (the batches' groups are joined
    grid by grid), every figure and warning as each batch computed it (the numbers of the lot
    JSON and CSV, not a new computation)."""
    from dataclasses import fields

    import numpy as np

    from ..engine import _concat
    from ..spectra.model import SpectrumSet
    from ..spectra.prepare import PreparedSpectra, _grid_key

    if len(parts) == 1:
        return parts[0]
    by_key: dict[tuple, list] = {}
    offset = 0
    for p in parts:
        for g, m in zip(p.spectra.groups, p.spectra.members):
            by_key.setdefault(_grid_key(g.wavelengths_nm), []).append((g, np.asarray(m) + offset))
        offset += len(p)
    groups = tuple(v[0][0] if len(v) == 1 else SpectrumSet.concatenate([g for g, _ in v]) for v in by_key.values())
    members = tuple(np.concatenate([m for _, m in v]) for v in by_key.values())
    joined = {f.name: _concat([getattr(p, f.name) for p in parts]) for f in fields(parts[0])
              if f.name not in ("spectra", "run_warnings", "methods")}
    run_warnings: list[str] = []
    for p in parts:
        run_warnings += [w for w in p.run_warnings if w not in run_warnings]
    return type(parts[0])(spectra=PreparedSpectra(groups, members), run_warnings=tuple(run_warnings),
                          methods=dict(parts[0].methods), **joined)
