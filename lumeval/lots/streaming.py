"""The streaming core of a lot run: evaluate a batch, keep only its per-sample figures, join.

One lot run, on one machine (:func:`lumeval.lots.run.run_lot`) or on a Dask cluster
(:mod:`lumeval.lots.dask_runner`), is the same three steps:

1. read a batch of spectra (a file, or at most ``batch_spectra`` rows of a Parquet archive:
   :func:`archive_batches`);
2. :func:`evaluate_batch`: prepare and evaluate it and judge its per-sample clauses, keeping
   only what the lot needs per sample (:class:`BatchResult`: every figure, x y, the clause
   outcomes, the warnings, the archive's metadata columns, the flag of the samples computed
   outside the validity range; about 0.7 kB per sample);
3. :class:`LotAccumulator`: join the batch results in input order and compute the lot
   statistics and lot verdicts once over all samples (:meth:`LotAccumulator.finish`).

Because step 2 is pure and its batches are fixed by the input alone (archives: batches never
span a partition, :func:`lumeval.spectra.archive.plan_partitions`), the per-sample results of a
distributed run are those of a local run, and the lot statistics, computed by the same
function over the same per-sample values, are the same too.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

import numpy as np


@dataclass
class BatchResult:
    """What a lot keeps of one evaluated batch (n samples).

    Attributes
    ----------
    names, sources : list of str (n,)
    warnings : list of tuple of str (n,)
    figures : ndarray (n, F)
        Every figure of the registry (:func:`lumeval.figures.names`), in that order.
    xy : ndarray (n, 2)
    clauses : list of ClauseResult or None
        Per-sample clause results of the batch (None without per-sample clauses).
    metadata : pyarrow.Table or None
        The archive's metadata columns for these n samples (None for other inputs).
    evaluation : Evaluation or None
        The batch's evaluation itself, kept only for a report that draws the samples.
    run_warnings : tuple of str
        Warnings of the computation libraries during the batch (Evaluation.run_warnings).
    outside_validity : ndarray of bool (n,) or None
        The samples whose reference-based figures were computed outside their validity range
        (Evaluation.outside_validity; None: none). The lot statistics leave those values out.
    mc_draws, mc_stabilised : ndarray (n,) or None
        Under measurement uncertainty: the Monte Carlo draws each sample used and whether its
        adaptive procedure stabilised (:class:`lumeval.uncertainty.montecarlo.UncertaintyResult`);
        the lot's notes name the samples that did not (None: no Monte Carlo).
    """

    names: list
    sources: list
    warnings: list
    figures: np.ndarray
    xy: np.ndarray
    clauses: list | None
    metadata: Any = None
    evaluation: object = None
    run_warnings: tuple = ()
    outside_validity: np.ndarray | None = None
    mc_draws: np.ndarray | None = None
    mc_stabilised: np.ndarray | None = None

    def __len__(self) -> int:
        return len(self.names)


def evaluate_batch(spectra, sample_criteria=None, uncertainty=None, *, offset: int = 0, metadata=None,
                   engine_chunk: int | None = None, keep_evaluation: bool = False, progress=None) -> BatchResult:
    """Evaluate one prepared batch and keep what the lot needs (see :class:`BatchResult`).

    ``offset`` is the index of the batch's first sample in the lot (the Monte Carlo of a run
    under uncertainty draws per sample index, so a sample's decision does not depend on the
    batching). ``progress``: a listener (:mod:`lumeval.progress`) told of each chunk evaluated
    and each sample's Monte Carlo draws (counted within the batch).
    """
    from ..engine import evaluate
    from ..figures import names as figure_names
    from .run import ENGINE_CHUNK

    ev = evaluate(spectra, chunk_size=engine_chunk or ENGINE_CHUNK, keep_details=False, progress=progress)
    # (n, F) stored figure by figure (Fortran order): the lot record keeps blocks that way
    figs = np.array([ev.figure(k) for k in figure_names()], dtype=float).T
    xy = np.column_stack([ev.x, ev.y])
    clauses = None
    mc_draws = mc_stable = None
    if sample_criteria is not None and uncertainty is not None and uncertainty.active:
        from ..uncertainty.judge import judge_with_uncertainty

        judged, unc = judge_with_uncertainty(ev, sample_criteria, uncertainty, index_offset=offset, progress=progress)
        clauses = list(judged.results)
        if unc is not None:
            mc_draws, mc_stable = np.asarray(unc.draws, dtype=np.int64), np.asarray(unc.stabilised, dtype=bool)
    elif sample_criteria is not None:
        clauses = list(sample_criteria.evaluate(ev).results)
    flag = ev.outside_validity
    return BatchResult(list(ev.spectra.names), list(ev.spectra.sources), list(ev.warnings), figs, xy, clauses,
                       metadata, ev if keep_evaluation else None, tuple(ev.run_warnings),
                       None if flag is None else np.asarray(flag, dtype=bool), mc_draws, mc_stable)


def archive_batches(file: str, batch_rows: int, *, partitions=None, opened=None) -> Iterator[tuple]:
    """Stream one Parquet archive file as prepared batches for a lot.

    Yields ``(prepared SpectrumSet or None, metadata Table or None, [Unreadable])`` per batch
    of at most ``batch_rows`` rows. A row whose spectrum cannot be prepared (e.g. negative or
    missing values) is listed as unreadable with its reason (source ``FILE#row K``) and the
    other rows of the batch are kept, as the columns of a wide CSV are.

    Raises
    ------
    lumeval.errors.InputError
        When the file itself cannot be used (bad layout, not Parquet, a row without a name).
    """
    from ..errors import LumevalError
    from ..spectra.archive import iter_batches
    from ..spectra.prepare import prepare
    from .inputs import Unreadable

    for b in iter_batches(file, batch_rows=batch_rows, partitions=partitions, opened=opened):
        raw = b.spectra
        try:
            yield prepare(raw), b.metadata, []
            continue
        except LumevalError:
            pass
        good, bad = [], []
        for i in range(len(raw)):
            try:
                prepare(raw.subset([i]))
            except LumevalError as exc:
                bad.append(Unreadable(raw.sources[i], exc.message))
            else:
                good.append(i)
        if not good:
            yield None, None, bad
            continue
        meta = b.metadata.take(good) if b.metadata is not None else None
        yield prepare(raw.subset(good)), meta, bad


class _Columns:
    """A growing column-major buffer (F, capacity) of a few per-sample numbers (float64 unless
    ``dtype`` says otherwise)."""

    def __init__(self, width: int, capacity: int, dtype=float) -> None:
        self.buf = np.empty((width, max(int(capacity), 1024)), dtype=dtype)
        self.n = 0

    def add(self, rows: np.ndarray) -> None:
        m = rows.shape[0]
        if self.n + m > self.buf.shape[1]:
            grown = np.empty((self.buf.shape[0], max(2 * self.buf.shape[1], self.n + m)), dtype=self.buf.dtype)
            grown[:, : self.n] = self.buf[:, : self.n]
            self.buf = grown
        self.buf[:, self.n : self.n + m] = rows.T
        self.n += m

    def columns(self) -> np.ndarray:
        return self.buf[:, : self.n]


class LotAccumulator:
    """Joins :class:`BatchResult` s in input order and makes the :class:`LotRun` of them.

    Parameters
    ----------
    expected : int
        Expected number of samples (a capacity hint; more are accepted).
    spill_bytes : int, optional
        Figures kept in memory up to this many bytes, the rest in a temporary file
        (:class:`lumeval.lots.columns.FigureColumns`; default
        :data:`lumeval.lots.columns.SPILL_BYTES`).

    Memory: names, sources and warnings are packed (:mod:`lumeval.lots.columns`), the figures
    of a large lot wait in a temporary file, so what grows in memory with the lot is about
    0.3 kB per sample (x, y, the per-sample statistics, packed text) instead of 1.25 kB. The
    flag of the samples computed outside the validity range takes one byte per sample.
    """

    def __init__(self, expected: int = 0, *, keep_evaluation: bool = False, spill_bytes: int | None = None) -> None:
        from ..figures import names as figure_names
        from .columns import FigureColumns, TextColumn, TextTuples

        self.keep_evaluation = keep_evaluation
        self._evaluations: list = []
        self.run_warnings: list[str] = []
        self.figure_names = figure_names()
        self.names = TextColumn()
        self.sources = TextColumn()
        self.warnings = TextTuples()
        self._figs = FigureColumns(self.figure_names, spill_bytes=spill_bytes)
        self._xy = _Columns(2, expected)
        self._outside = _Columns(1, expected, dtype=bool)  # Evaluation.outside_validity, one byte a sample
        self._clauses: list[list] = []
        self._mc: list[tuple[np.ndarray, np.ndarray]] = []  # (draws, stabilised) of each batch under uncertainty
        self._meta: list[tuple[int, Any]] = []  # (samples, Arrow table or None): pyarrow is imported lazily

    def __len__(self) -> int:
        return len(self.names)

    def add(self, r: BatchResult) -> None:
        self.names.extend(r.names)
        self.sources.extend(r.sources)
        self.warnings.extend(r.warnings)
        self._figs.add(r.figures)
        self._xy.add(np.asarray(r.xy, dtype=float).reshape(-1, 2))
        flag = r.outside_validity
        self._outside.add(np.zeros((len(r), 1), dtype=bool) if flag is None else np.asarray(flag, dtype=bool)[:, None])
        if r.clauses is not None:
            self._clauses.append(r.clauses)
        if r.mc_draws is not None and r.mc_stabilised is not None:
            self._mc.append((r.mc_draws, r.mc_stabilised))
        self._meta.append((len(r), r.metadata))
        if self.keep_evaluation and r.evaluation is not None:
            self._evaluations.append(r.evaluation)
        self.run_warnings += [w for w in r.run_warnings if w not in self.run_warnings]

    def metadata_table(self):
        """The archive metadata of every sample as one Arrow table (None when no input had
        metadata columns); samples from other inputs, or from files without a column, get
        nulls. A column whose types differ between the files and cannot be unified is carried
        as text (:func:`_join_metadata`; its note is added to the lot by :meth:`finish`)."""
        return self._joined_metadata()[0]

    def _joined_metadata(self) -> tuple[Any, tuple[str, ...]]:
        """(metadata table or None, notes on the columns carried as text)."""
        if not any(m is not None for _, m in self._meta):
            return None, ()
        import pyarrow as pa

        first = next(m for _, m in self._meta if m is not None)
        filler = first.column_names[0] if first.num_columns else None
        parts = []
        for n, m in self._meta:
            if m is None:  # samples from other inputs: null in every column
                m = pa.table({filler: pa.nulls(n)}) if filler is not None else pa.table({})
            parts.append(m)
        return _join_metadata(parts)

    def finish(self, criteria=None, *, sample_criteria=None, unreadable=(), inputs=None, ellipse=None,
               nominal_xy=None, uncertainty=None, **extra):
        """The :class:`lumeval.lots.run.LotRun` of everything added (``extra``: further
        LotRun fields, e.g. ``read_paths``). ``inputs``: the run's
        :class:`lumeval.lots.inputs.LotInputs`; lumeval's own reports among the unreadable
        entries are set aside as skipped (:func:`lumeval.lots.own_reports.set_aside`), the
        other files counted."""
        from .own_reports import set_aside
        from .run import LotRun, _concat_clause, _nominal_from_criteria, join_evaluations
        from .statistics import lot_statistics

        files = 0
        if inputs is not None:
            unreadable, reports = set_aside(unreadable, inputs)
            files = len(inputs.files) - len(reports)
            extra["skipped"] = inputs.skipped + reports

        names = self.names
        figures = self._figs
        xy = np.ascontiguousarray(self._xy.columns().T)

        check = None
        if sample_criteria is not None and self._clauses:
            from ..criteria.verdicts import CheckResult

            results = tuple(_concat_clause([p[j] for p in self._clauses]) for j in range(len(self._clauses[0])))
            # the criteria file's warnings ("limit acts as 80", contradictions), as a check carries them: a
            # lot said them on standard error only (found by a review)
            check = CheckResult(names, self.sources, self.warnings, results,
                                dict(criteria.identification), criteria.file,
                                notes=tuple(getattr(criteria, "warning_notes", ())))
            if uncertainty is not None and uncertainty.active:
                from dataclasses import replace as _replace

                from ..uncertainty.judge import lot_draws_notes, lot_draws_summary, uncertainty_info

                info = uncertainty_info(uncertainty, None)
                info["notes"] += lot_draws_notes(uncertainty.settings, self._mc, names)
                info["monte_carlo"].update(lot_draws_summary(self._mc, names))
                check = _replace(check, uncertainty=info)

        if criteria is not None and ellipse is None and nominal_xy is None:
            ellipse, nominal_xy = _nominal_from_criteria(criteria)

        stats = lot_statistics(figures, xy, ellipse=ellipse, nominal_xy=nominal_xy,
                               verdicts=check.verdicts if check is not None else None,
                               outside_validity=self._outside.columns()[0].copy())
        metadata, meta_notes = self._joined_metadata()
        if meta_notes:  # metadata columns carried as text: said with the lot's other notes
            from dataclasses import replace

            stats = replace(stats, notes=tuple(stats.notes) + meta_notes)
        lot_results: tuple = ()
        has_yield = False
        if criteria is not None:
            from ..criteria.lot_clauses import LotYieldClause, evaluate_lot_clauses, lot_clauses

            lot_results = evaluate_lot_clauses(criteria, stats, xy, check.verdicts if check is not None else None)
            has_yield = any(isinstance(c, LotYieldClause) for c in lot_clauses(criteria))
        return LotRun(
            names=names,
            sources=self.sources,
            warnings=self.warnings,
            figures=figures,
            xy=xy,
            stats=stats,
            check=check,
            lot_results=lot_results,
            unreadable=tuple(unreadable),
            files=files,
            criteria_file=getattr(criteria, "file", None) if criteria is not None else None,
            identification=dict(getattr(criteria, "identification", {}) or {}) if criteria is not None else {},
            has_yield_clause=has_yield,
            metadata=metadata,
            evaluation=join_evaluations(self._evaluations) if self._evaluations else None,
            run_warnings=tuple(self.run_warnings),
            **extra,
        )


# --- joining the metadata of the files of an archive ------------------------------------------

def _join_metadata(parts: list) -> tuple[Any, tuple[str, ...]]:
    """Concatenate the metadata tables of the batches (one file each) into one table.

    Columns missing from a part become nulls; types widen as Arrow's permissive promotion does
    (int32 and int64, int64 and double...); a dictionary-encoded column and a plain one of
    the same value type are joined as plain values. A column whose types cannot be unified
    (text in one file, int64 in another; a list in one, a number in another) is carried as
    text in every part (:func:`_as_text`), with a note naming it and its types.
    """
    import pyarrow as pa

    types: dict[str, list] = {}
    for p in parts:
        for field in p.schema:
            seen = types.setdefault(field.name, [])
            if field.type not in seen:
                seen.append(field.type)
    clashing = {c: ts for c, ts in types.items() if len(ts) > 1}
    # text in one file and binary in another: Arrow's promotion makes the text binary (b'…' in
    # the outputs, found by a review); such a column is carried as text instead
    text = {c for c, ts in clashing.items() if _text_and_binary(ts) or _unified(ts) is None}
    if not text:
        try:
            return pa.concat_tables(parts, promote_options="permissive"), ()
        except (pa.ArrowException, TypeError):
            pass
    # types that unify but values that do not fit the unified type (uint64 2**64 − 1 beside
    # int64), found column by column, so that the note names only those (it named every
    # clashing column, float32 beside float64 too)
    unfit = {c for c in clashing if c not in text and not _joins(pa, [p.select([c]) for p in parts if c in p.column_names])}
    try:
        joined = pa.concat_tables([_with_types(p, clashing, text | unfit) for p in parts], promote_options="permissive")
    except (pa.ArrowException, TypeError):  # pragma: no cover - every column in question is text now
        raise RuntimeError("metadata columns could not be joined") from None
    return joined, tuple(_text_note(c, clashing[c], c in unfit) for c in types if c in text | unfit)


def _joins(pa, parts) -> bool:
    try:
        pa.concat_tables([_with_types(p, {p.column_names[0]: ()}, set()) for p in parts], promote_options="permissive")
    except (pa.ArrowException, TypeError):
        return False
    return True


def _text_and_binary(types: list) -> bool:
    from ..spectra.archive_values import is_binary_type, is_text_type

    plain = [_plain(t) for t in types]
    return any(map(is_text_type, plain)) and any(map(is_binary_type, plain))


def _text_note(column: str, types: list, unfit: bool = False) -> str:
    from ..errors import quote

    shown = ", ".join(str(t) for t in types if not _is_null(t))
    why = ("give it types whose values do not fit one type" if unfit else "give it types that cannot be unified")
    return f"metadata column {quote(column)} is carried as text in every output: the files of the archive {why} ({shown})"


def _is_null(t) -> bool:
    import pyarrow as pa

    return bool(pa.types.is_null(t))


def _plain(t):
    """A dictionary type's value type (the encoding is not the type a reader sees)."""
    import pyarrow as pa

    return t.value_type if pa.types.is_dictionary(t) else t


def _unified(types: list):
    """The type Arrow's permissive promotion gives ``types`` (dictionaries as their values),
    or None when they cannot be unified."""
    import pyarrow as pa

    try:
        schema = pa.unify_schemas([pa.schema([("c", _plain(t))]) for t in types], promote_options="permissive")
    except (pa.ArrowException, TypeError):
        return None
    return schema.field("c").type


def _with_types(part, clashing: dict, text: set):
    """``part`` with its columns in ``text`` as text and its other clashing dictionary columns
    decoded (so that Arrow joins them with the plain columns of other parts)."""
    import pyarrow as pa

    for j, name in enumerate(part.column_names):
        if name not in clashing:
            continue
        col = part.column(j)
        if name in text:
            col = _as_text(col)
        elif pa.types.is_dictionary(col.type):
            col = col.cast(col.type.value_type)
        else:
            continue
        part = part.set_column(j, name, col)
    return part


def _as_text(col):
    """A metadata column (pyarrow ChunkedArray) as text, value by value as a reader expects;
    nulls stay null.

    Text stays text; numbers, booleans, decimals and dates as Arrow writes them (``1.5``,
    ``true``; a NaN or infinite float is null, as in the JSON); timestamps in ISO 8601 form
    (``2024-01-02T03:04:05.000000``); binary as its text when it is valid UTF-8, else as ``0x``
    and its hexadecimal digits; lists, structs and maps as their JSON-like text
    (``["a", "b"]``). Vectorised with Arrow compute; binary is converted once per distinct
    value, nested values one by one (both are rare in metadata).
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    from ..spectra.archive import bytes_text as _bytes_text
    from ..spectra.archive import nested_text as _json_text
    from ..spectra.archive_values import is_binary_type, is_text_type

    t = col.type
    if pa.types.is_dictionary(t):
        return _as_text(col.cast(t.value_type))
    if pa.types.is_null(t):
        return pa.chunked_array([pa.nulls(len(col), pa.string())])
    if is_text_type(t):
        return col.cast(pa.string())
    if is_binary_type(t):
        enc = pc.dictionary_encode(col.cast(pa.binary()) if not pa.types.is_binary(t) else col).combine_chunks()
        words = pa.array([_bytes_text(b) for b in enc.dictionary.to_pylist()], pa.string())
        return pa.chunked_array([pc.take(words, enc.indices)])
    if pa.types.is_nested(t):
        return pa.chunked_array([pa.array([None if v is None else _json_text(v) for v in col.to_pylist()],
                                          pa.string())])
    try:
        text = col.cast(pa.string())
    except (pa.ArrowException, TypeError):  # an exotic type Arrow does not write as text
        return pa.chunked_array([pa.array([None if v is None else str(v) for v in col.to_pylist()], pa.string())])
    if pa.types.is_floating(t):
        text = pc.if_else(pc.is_finite(col), text, pa.scalar(None, pa.string()))
    elif pa.types.is_timestamp(t):
        text = pc.replace_substring(text, " ", "T", max_replacements=1)
    return text
