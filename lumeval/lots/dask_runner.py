"""Run a lot on a Dask distributed cluster: partitions evaluated where the data are.

``lumeval lot ARCHIVE --scheduler tcp://HOST:PORT`` uses a running cluster (scheduler and
workers started with Dask's own ``dask scheduler`` / ``dask worker`` commands);
``--workers N`` starts a local cluster of N single-threaded worker processes listening on
127.0.0.1 only, and stops it afterwards.

How the work is split
---------------------
The client reads only the Parquet footers: each archive file is cut into partitions of whole
row groups (:func:`lumeval.spectra.archive.plan_partitions`, at least 16,384 rows each). One
task per partition is sent to the cluster: the worker opens the file itself (so the archive
must be at a path or URL every worker can read: shared storage, or object storage through
pyarrow/fsspec), streams the partition in batches, prepares, evaluates and judges each batch
(:func:`lumeval.lots.streaming.evaluate_batch`) and sends back only the per-sample results
(every figure, x y, the clause outcomes, warnings, metadata, the flag of the samples computed
outside the validity range: about 0.7 kB per sample,
compared with 3.2 kB for a 1 nm spectrum). Spectra never travel through the client.

How the results are merged
--------------------------
The client joins the partitions' per-sample results in input order (as they complete, so at
most the finished partitions wait in memory) and computes the lot statistics, outliers and lot
verdicts once, with the same function as a local run (:class:`LotAccumulator.finish
<lumeval.lots.streaming.LotAccumulator>`). So every lot statistic is exact: counts, sums and
means, standard deviations, minima and maxima, the convex-hull diameter (largest pairwise
Δu'v'), the yield, and the percentiles and medians too (numpy's linear method over all
values, as locally; no sketch or merged histogram is needed because the per-sample values are
at hand). Values computed outside the validity range (|Duv| > 0.05) are left out of the
statistics and counted exactly as locally: each partition's flag travels with its samples. The per-sample outputs equal a local run's: the batches are the same (they never
span a partition, locally either), and each sample is computed by the same code; floating-
point results agree to the last bit on workers with the same CPU and libraries, and within
rounding (about 1e-15 relative) across machines whose BLAS differs.

Cost of exactness: the client holds every sample's figures (about 0.7 kB per sample, as a
local run does). Monte Carlo decisions under uncertainty (``--instrument``) are not sent to a
cluster (refused with a usage error).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence

#: Seconds to wait for a scheduler to answer.
CONNECT_TIMEOUT_S = 10


#: glibc malloc settings for worker processes (see :func:`_tune_malloc`).
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
_TRIM_BYTES, _MMAP_BYTES = 256 * 1024 * 1024, 32 * 1024 * 1024
_tuned = False


def _tune_malloc() -> None:
    """Let the worker's heap keep the engine's large temporaries between chunks.

    Dask's nanny starts workers with ``MALLOC_TRIM_THRESHOLD_=65536``, which (besides trimming
    the heap at every free) switches off glibc's adaptive mmap threshold, so every temporary
    array above 128 kB is mapped and unmapped afresh: measured on the project machine, a
    16,384-spectrum partition took 2.9 s CPU on a worker (1.2 s of it in the kernel) against
    1.6 s in a plain process. Setting a fixed mmap threshold of 32 MiB (glibc's upper limit)
    and a trim threshold of 256 MiB with ``mallopt`` restores the plain process's speed (1.5 s).
    Only on glibc; elsewhere nothing is done.
    """
    global _tuned
    if _tuned:
        return
    _tuned = True
    try:
        import ctypes
        import ctypes.util

        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        libc.mallopt(_M_TRIM_THRESHOLD, _TRIM_BYTES)
        libc.mallopt(_M_MMAP_THRESHOLD, _MMAP_BYTES)
    except (OSError, AttributeError):  # not glibc
        pass


def _evaluate_partition(file: str, first_row: int, groups: list[int], sample_criteria, batch_rows: int):
    """Worker side: stream one partition of an archive file and evaluate it.

    Returns ``(list of BatchResult, list of Unreadable)``; an error of the whole file is
    returned (not raised) as one Unreadable so that the client reports it like a local run.
    """
    _tune_malloc()
    from ..errors import LumevalError
    from .inputs import Unreadable
    from .streaming import archive_batches, evaluate_batch

    results, bad_all = [], []
    try:
        for s, meta, bad in archive_batches(file, batch_rows, partitions=[(first_row, groups)]):
            bad_all.extend(bad)
            if s is not None:
                results.append(evaluate_batch(s, sample_criteria, None, metadata=meta))
    except LumevalError as exc:
        return [], [Unreadable(file, exc.message)]
    return results, bad_all


def _client(scheduler: str | None, workers: int | None):
    """(client, cluster-or-None) for the options given."""
    from ..errors import UsageError

    try:
        from distributed import Client, LocalCluster
    except ImportError:  # pragma: no cover - the extra is part of the test install
        raise UsageError("--scheduler/--workers need Dask distributed", fix="pip install 'lumeval[archive]'") from None
    if scheduler is not None and workers is not None:
        raise UsageError("--scheduler and --workers both given", field="--workers",
                         fix="use a running cluster (--scheduler) or start a local one (--workers), not both")
    if scheduler is not None:
        if not scheduler.strip():
            raise UsageError("the scheduler address is empty", field="--scheduler", fix="give tcp://HOST:PORT")
        try:
            return Client(scheduler, timeout=CONNECT_TIMEOUT_S, set_as_default=False), None
        except (OSError, TimeoutError, ValueError) as exc:
            raise UsageError(f"cannot reach the Dask scheduler {scheduler!r} ({' '.join(str(exc).split())[:160]})",
                             field="--scheduler", fix="start it with `dask scheduler` and check the address") from None
    if workers is None or workers < 1 or workers > 256:
        raise UsageError(f"--workers must be 1 to 256, not {workers}", field="--workers", fix="give the number of processes")
    cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                           dashboard_address=None, silence_logs=40)
    return Client(cluster, set_as_default=False), cluster


def run_lot_dask(
    paths: Sequence[str | os.PathLike],
    criteria=None,
    *,
    scheduler: str | None = None,
    workers: int | None = None,
    ellipse=None,
    nominal_xy=None,
    batch_spectra: int | None = None,
    progress: Callable[[str, int, int | None], None] | None = None,
    uncertainty=None,
    client=None,
):
    """:func:`lumeval.lots.run.run_lot` on a Dask cluster (see the module docstring).

    Parameters
    ----------
    paths
        Parquet archives (files, folders of them, patterns). Other spectrum files are refused:
        convert them first (``lumeval convert FILE OUT.parquet``).
    scheduler : str, optional
        Address of a running scheduler (``tcp://HOST:PORT``).
    workers : int, optional
        Start a local cluster of this many processes (127.0.0.1 only) for this run.
    client : distributed.Client, optional
        An existing client (then ``scheduler``/``workers`` are not used).

    Returns
    -------
    LotRun
        Equal to the local run's (same samples, order, figures, verdicts and statistics).
    """
    from ..errors import LumevalError, UsageError
    from ..spectra.archive import is_archive, no_rows_error, open_file, plan_partitions
    from .inputs import Unreadable, expand_inputs
    from .run import BATCH_SPECTRA
    from .streaming import LotAccumulator

    if uncertainty is not None and getattr(uncertainty, "active", False):
        raise UsageError("decisions under measurement uncertainty are not run on a Dask cluster",
                         field="--instrument", fix="run the lot without --scheduler/--workers, or without --instrument")
    batch = batch_spectra or BATCH_SPECTRA
    found = expand_inputs(paths)
    files, unreadable = list(found.files), list(found.unreadable)
    others = [f for f in files if not is_archive(f, sniff=False)]
    if others:
        raise UsageError(f"{others[0]!r} is not a Parquet archive: a Dask run reads Parquet archives only",
                         field="--scheduler" if scheduler is not None else "--workers",
                         fix="convert the files first (lumeval convert FILE OUT.parquet), or run without Dask")

    sample_criteria = None
    if criteria is not None:
        from ..criteria.lot_clauses import has_sample_clauses

        if has_sample_clauses(criteria):
            sample_criteria = criteria

    # plan on the client: footers only
    tasks: list[tuple[int, str, int, int, list[int]]] = []
    expected = 0
    bad_by_file: list[list] = [[] for _ in files]  # unreadable inputs in file order, as a local run lists them
    for k, f in enumerate(files):
        try:
            opened = open_file(f)
        except LumevalError as exc:
            bad_by_file[k].append(Unreadable(f, exc.message))
            continue
        if not opened[0].metadata.num_rows:
            bad_by_file[k].append(Unreadable(f, no_rows_error(f).message))
            continue
        parts = plan_partitions(opened[0])
        expected += opened[0].metadata.num_rows
        for j, (first_row, groups) in enumerate(parts):
            tasks.append((k, f, j, first_row, groups))

    own = None
    if client is None:
        client, own = _client(scheduler, workers)
    try:
        futures = {}
        for k, f, j, first_row, groups in tasks:
            fut = client.submit(_evaluate_partition, f, first_row, groups, sample_criteria, batch, pure=False)
            futures[fut] = (k, j)
        acc = LotAccumulator(expected)
        # join in input order as partitions complete (finished ones wait, the rest stream on)
        from distributed import as_completed

        order = [(k, j) for k, _, j, _, _ in tasks]
        next_i = 0
        done_samples = 0
        done: dict[tuple[int, int], tuple] = {}
        used: set[int] = set()
        for fut in as_completed(list(futures), loop=client.loop):
            try:
                done[futures[fut]] = fut.result()
            except Exception as exc:  # a worker died or a task failed: name the partition
                k, j = futures[fut]
                done[futures[fut]] = ([], [Unreadable(files[k], f"{files[k]}: partition {j + 1} was not evaluated "
                                                                f"on the cluster ({type(exc).__name__}: "
                                                                f"{' '.join(str(exc).split())[:120]})")])
            fut.release()
            while next_i < len(order) and order[next_i] in done:
                results, bad = done.pop(order[next_i])
                if results:
                    used.add(order[next_i][0])
                for r in results:
                    acc.add(r)
                    done_samples += len(r)
                bad_by_file[order[next_i][0]].extend(bad)
                next_i += 1
                if progress is not None:
                    progress("evaluating", done_samples, max(expected, done_samples))
    finally:
        if own is not None:
            client.close()
            own.close()
    for bad in bad_by_file:
        unreadable.extend(bad)
    read_paths = tuple(files[k] for k in sorted(used))
    return acc.finish(criteria, sample_criteria=sample_criteria, unreadable=unreadable, inputs=found,
                      ellipse=ellipse, nominal_xy=nominal_xy, uncertainty=None, read_paths=read_paths)
