"""The evaluating side of a lot run: batches evaluated here or in worker processes, their
results taken in input order.

:class:`BatchEvaluator` receives the lot's batches as they are read (prepared spectra, and an
archive's metadata) and gives each :class:`~lumeval.lots.streaming.BatchResult` to the lot, in
the order the batches came, whether they are evaluated here or by a pool of worker processes
(forked on Linux, like the reading workers of :mod:`lumeval.lots.reading`). With workers, this
process goes on reading while the batches are evaluated, and the evaluation itself uses every
core. Each batch is evaluated by the same function (:func:`~lumeval.lots.streaming.evaluate_batch`)
on the same spectra, so the per-sample figures, verdicts and warnings are those of a serial run,
bit for bit (one BLAS thread per batch, C-ordered chunks and row-independent reference-table fills: see
docs/lots.md).

A lot known before it is read to need several batches (an archive of more rows than a batch,
a large text file: :func:`lumeval.lots.run.run_lot`) starts the pool at once
(:meth:`BatchEvaluator.start`): each worker imports the engine, builds the CCT search's table
and evaluates one spectrum (:func:`_warm_up`, ~0.2 s) while this process reads, and every batch
goes to the workers. Otherwise the pool is started only when a second batch comes (a lot of one
batch never pays for it; the first batch is then evaluated here before the workers fork, so
that they start with the reference tables it filled). At most :data:`IN_FLIGHT_PER_PROCESS` batches per worker wait
for their results, so memory stays bounded: a few batches of spectra, whatever the lot's size.
Runs that keep every evaluation for a report (``keep_evaluation``) or decide under measurement
uncertainty (whose Monte Carlo draws follow the sample index through the batches) are
evaluated here.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Callable
from typing import Any

#: Batches waiting per worker process (bounds the spectra in memory at once).
IN_FLIGHT_PER_PROCESS = 2


def _evaluate(args: tuple) -> Any:
    from .streaming import evaluate_batch

    spectra, sample_criteria, offset, metadata = args
    return evaluate_batch(spectra, sample_criteria, None, offset=offset, metadata=metadata)


def _warm_up(sample_criteria) -> None:
    """A worker's first-use costs, paid while the lot is still being read: the engine's and
    the criteria's modules imported, and one Planckian spectrum at 4000 K on 380-780 nm at 1 nm
    evaluated and judged (the CCT search's table, the colour-science data, the reference
    tables of that grid set up). Nothing of it reaches a result: table entries are the same
    bits whoever filled them first (:mod:`lumeval.metrics.reference_table`)."""
    import numpy as np

    from ..metrics.reference import planckian_spd
    from ..spectra.model import SpectrumSet
    from ..spectra.prepare import prepare
    from .streaming import evaluate_batch

    wl = np.arange(380.0, 781.0)
    one = prepare(SpectrumSet(wl, planckian_spd(wl, 4000.0)[None, :], names=("warm-up",), sources=("warm-up",)))
    evaluate_batch(one, sample_criteria, None)


class BatchEvaluator:
    """Evaluate a lot's batches in order (see the module docstring).

    Parameters
    ----------
    processes : int
        Worker processes (1 or less: every batch is evaluated here, as it comes).
    sample_criteria, uncertainty, keep_evaluation
        As :func:`lumeval.lots.streaming.evaluate_batch` takes them.
    on_result : callable(BatchResult)
        Called with each batch's result, in the order of :meth:`submit`.
    progress : callable(offset, total) -> listener or None
        The listener a batch evaluated here reports its chunks to (``offset``: samples before
        it); batches evaluated by workers are reported whole by ``on_result``'s caller.
    """

    def __init__(self, processes: int, sample_criteria, uncertainty, keep_evaluation: bool,
                 on_result: Callable[[Any], None], progress: Callable[[int], Any] | None = None) -> None:
        active = uncertainty is not None and getattr(uncertainty, "active", False)
        self.processes = 1 if (keep_evaluation or active) else max(1, int(processes))
        self.sample_criteria = sample_criteria
        self.uncertainty = uncertainty
        self.keep_evaluation = keep_evaluation
        self.on_result = on_result
        self.progress = progress
        self._held: tuple | None = None
        self._pool: Any = None
        self._waiting: deque = deque()
        self._submitted = 0  # samples submitted so far (the offset of the next batch)

    def start(self) -> None:
        """Start the workers now, before the lot is read, each warming up
        (:func:`_warm_up`) while this process reads; every batch then goes to them (none is
        held back for this process). For lots known to need several batches."""
        if self.processes <= 1 or self._pool is not None:
            return
        from functools import partial

        from .._workers import worker_pool

        self._pool = worker_pool(self.processes, partial(_warm_up, self.sample_criteria))
        self._pool.start()

    def submit(self, spectra, metadata=None) -> None:
        """Evaluate one batch (prepared spectra: a set or a list of sets)."""
        offset = self._submitted
        self._submitted += sum(len(s) for s in spectra) if isinstance(spectra, list) else len(spectra)
        job = (spectra, self.sample_criteria, offset, metadata)
        if self.processes <= 1:
            self._here(job)
            return
        if self._pool is None and self._held is None:
            self._held = job  # the pool is started only for a second batch
            return
        if self._pool is None:
            from .reading import _pool

            # the held first batch is evaluated here before the workers fork: they start with
            # the reference tables it filled (each worker filling them again cost ~0.2 s)
            held, self._held = self._held, None
            if held is not None:
                self._here(held)
            self._pool = _pool(self.processes)
        self._send(job)

    def _here(self, job: tuple) -> None:
        from .streaming import evaluate_batch

        spectra, crit, offset, metadata = job
        listener = self.progress(offset) if self.progress is not None else None
        self.on_result(evaluate_batch(spectra, crit, self.uncertainty, offset=offset, metadata=metadata,
                                      keep_evaluation=self.keep_evaluation, progress=listener))

    def _send(self, job: tuple) -> None:
        self._waiting.append(self._pool.submit(_evaluate, job))
        while len(self._waiting) > IN_FLIGHT_PER_PROCESS * self.processes:
            self.on_result(self._pool.result(self._waiting.popleft()))

    def close(self) -> None:
        """Evaluate what is held, wait for every result (in order) and stop the workers."""
        try:
            if self._held is not None:
                held, self._held = self._held, None
                self._here(held)
            while self._waiting:
                self.on_result(self._pool.result(self._waiting.popleft()))
        finally:
            self.terminate()

    def terminate(self) -> None:
        """Stop the workers at once (results not yet taken are dropped)."""
        self._waiting.clear()
        if self._pool is not None:
            self._pool.terminate()
            self._pool = None
