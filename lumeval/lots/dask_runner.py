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

Names are made unique on the client in input order, as locally; an error part-way through a
file keeps what was read before it and drops the rest of the file (its later partitions too),
as locally. A failure of the cluster itself (a lost scheduler or worker, a cancelled task, a
worker without lumeval or pyarrow) is not a property of the input: it stops the lot with a
:class:`~lumeval.errors.WorkerError` (exit code 2, no output written).

Cost of exactness: the client holds every sample's figures (about 0.7 kB per sample, as a
local run does). Monte Carlo decisions under uncertainty (``--instrument``) are not sent to a
cluster (refused with a usage error).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence

from ..errors import quote

#: Seconds to wait for a scheduler to answer (connection and Dask's handshake).
CONNECT_TIMEOUT_S = 10
#: Seconds to wait for a running scheduler to have at least one worker.
WORKERS_TIMEOUT_S = 30


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


def _evaluate_partition(file: str, first_row: int, groups: list[int], sample_criteria, batch_rows: int,
                        shown: str | None = None):
    """Worker side: stream one partition of an archive file and evaluate it.

    Returns ``(results, unreadable, stopped)``: ``results`` a list of ``(BatchResult, note
    counts)`` (the number of reading notes of each sample, so that the client can insert the
    note of a renamed sample where a local run has it, :func:`_unique_names`); ``unreadable``
    the rows that could not be used; ``stopped`` True when an error of the file itself (a row
    without a name, a page that cannot be decoded) ended the partition part-way: the batches
    read before it are kept and the error is returned (not raised) as one Unreadable, as a
    local run keeps them (the client then drops the file's later partitions, as a local run
    stops reading the file). ``file`` is the path the worker opens (absolute), ``shown`` the
    path as the user gave it (in sources and messages, as locally).

    Anything else (a missing library on the worker, a failing worker) is a failure of the
    cluster, not of the input: it is raised, naming the worker and the partition's rows.
    """
    _tune_malloc()
    from ..errors import LumevalError, UsageError
    from .inputs import Unreadable
    from .streaming import archive_batches, evaluate_batch

    shown = shown or file
    results: list = []
    bad_all: list = []
    try:
        for s, meta, bad in archive_batches(file, batch_rows, partitions=[(first_row, groups)]):
            bad_all.extend(_shown(b, file, shown) for b in bad)
            if s is not None:
                counts = [len(n) for n in s.notes]
                results.append((evaluate_batch(s, sample_criteria, None, metadata=meta), counts))
    except LumevalError as exc:
        if not isinstance(exc, UsageError):  # UsageError: pyarrow missing on this worker
            bad_all.append(Unreadable(shown, _replace_path(exc.message, file, shown)))
            return _shown_results(results, file, shown), bad_all, True
        failure: Exception = exc
    except Exception as exc:  # the worker's environment: a cluster failure, reported by the client
        failure = exc
    else:
        return _shown_results(results, file, shown), bad_all, False
    raise RuntimeError(f"on worker {_worker_address()}, {shown} rows {first_row + 1}-: "
                       f"{type(failure).__name__}: {_short(failure)}")


def _replace_path(text: str, file: str, shown: str) -> str:
    from .._paths import display_path

    return text if file == shown else text.replace(display_path(file), display_path(shown))


def _shown(bad, file: str, shown: str):
    """An Unreadable of a row with the path as the user gave it."""
    from dataclasses import replace

    if file == shown:
        return bad
    return replace(bad, source=_replace_path(bad.source, file, shown), message=_replace_path(bad.message, file, shown))


def _shown_results(results: list, file: str, shown: str) -> list:
    """The samples' sources with the path as the user gave it (a local run's sources)."""
    if file == shown:
        return results
    for r, _ in results:
        r.sources = [_replace_path(x, file, shown) for x in r.sources]
    return results


def _worker_address() -> str:
    try:
        from distributed import get_worker

        return get_worker().address
    except Exception:  # not on a worker
        return "?"


def _short(exc: BaseException) -> str:
    return " ".join(str(exc).split())[:160] or type(exc).__name__


def _unique_names(r, note_counts, seen):
    """``r`` (a BatchResult) with the names made unique across the run, as a local run makes
    them (:func:`lumeval.spectra.read.unique_names` in input order): the renamed sample's note
    goes after its reading notes and before the computation's warnings, where a local run has
    it (the local run renames before evaluating). ``seen``: the run's
    :class:`lumeval.spectra.read.SeenNames`."""
    from ..spectra.read import renamed_names

    renamed = renamed_names(r.names, seen)
    if not renamed:
        return r
    names, warnings = list(r.names), list(r.warnings)
    for i, (new, note) in renamed.items():
        w, c = tuple(warnings[i]), note_counts[i]
        names[i], warnings[i] = new, w[:c] + (note,) + w[c:]
    r.names, r.warnings = names, warnings
    return r


def _check_address(scheduler: str) -> None:
    """Refuse an address Dask cannot use from here, before any connection is tried."""
    from ..errors import UsageError

    def bad(problem: str, fix: str = "give tcp://HOST:PORT, e.g. tcp://127.0.0.1:8786"):
        return UsageError(f"the scheduler address {quote(scheduler)} {problem}", field="--scheduler", fix=fix)

    if not scheduler.strip():
        raise UsageError("the scheduler address is empty", field="--scheduler", fix="give tcp://HOST:PORT")
    from distributed.comm import parse_address
    from distributed.comm.addressing import parse_host_port

    try:
        scheme, loc = parse_address(scheduler)
    except (ValueError, TypeError) as exc:
        raise bad(f"cannot be read ({_short(exc)})") from None
    if scheme not in ("tcp", "tls"):
        raise bad(f"uses {scheme}://, which lumeval does not use (tcp:// or tls:// only)")
    if "://" not in scheduler:
        raise bad("has no scheme")
    try:
        host, port = parse_host_port(loc)
    except (ValueError, TypeError):
        raise bad("has no port number (or an invalid one)") from None
    if not host or not port:
        raise bad("has no host or port")
    if scheme == "tls":
        from distributed.security import Security

        if not Security().get_connection_args("client").get("ssl_context"):
            raise bad("uses tls:// but Dask's configuration holds no TLS settings for the client",
                      fix="set distributed.comm.tls.ca-file, .client.cert and .client.key in Dask's "
                          "configuration, or use tcp://")


def _probe(scheduler: str, timeout: float) -> str | None:
    """None when a Dask scheduler answers the handshake at ``scheduler`` within ``timeout``
    seconds, else why not (a service that is not Dask's would keep the connection open)."""
    import asyncio
    from concurrent.futures import ThreadPoolExecutor

    from distributed.comm import connect
    from distributed.security import Security

    async def hello() -> None:
        comm = await asyncio.wait_for(connect(scheduler, timeout=timeout,
                                              **Security().get_connection_args("client")), timeout)
        await comm.close()

    why = _tcp_reachable(scheduler, timeout)
    if why is not None:
        return why
    pool = ThreadPoolExecutor(1)
    try:
        pool.submit(asyncio.run, hello()).result(timeout + 5)
    except TimeoutError:
        return f"no Dask handshake within {timeout:g} s"
    except Exception as exc:
        return _short(exc)
    finally:
        pool.shutdown(wait=False)
    return None


def _tcp_reachable(scheduler: str, timeout: float) -> str | None:
    """None when something accepts a TCP connection at the address (checked by
    :func:`_check_address`), else why not. Dask's own connect retries a refused connection
    until its timeout: a scheduler address with nothing listening took 10 s to refuse, where
    the system says so at once."""
    import socket

    from distributed.comm import parse_address
    from distributed.comm.addressing import parse_host_port

    host, port = parse_host_port(parse_address(scheduler)[1])
    try:
        socket.create_connection((host, port), timeout=timeout).close()
    except ConnectionRefusedError:
        return "connection refused: nothing listens at that address"
    except socket.gaierror as exc:
        return f"host name {quote(host)} cannot be resolved: {exc.strerror or exc}"
    except TimeoutError:
        return f"no answer within {timeout:g} s"
    except OSError as exc:
        return _short(exc)
    return None


def _connect(scheduler: str):
    """A client of the running scheduler at ``scheduler`` (one-line UsageError otherwise)."""
    from distributed import Client

    from ..errors import UsageError

    def unreachable(why: str) -> UsageError:
        return UsageError(f"cannot reach the Dask scheduler {quote(scheduler)} ({why})", field="--scheduler",
                          fix="start it with `dask scheduler` and check the address")

    _check_address(scheduler)
    why = _probe(scheduler, CONNECT_TIMEOUT_S)
    if why is not None:
        raise unreachable(why)
    half: list = []

    class _Client(Client):  # keeps the client being built, to close it if the connection fails
        def start(self, **kwargs):
            half.append(self)
            return super().start(**kwargs)

    try:
        client = _Client(scheduler, timeout=CONNECT_TIMEOUT_S, set_as_default=False)
    except Exception as exc:  # OSError, TimeoutError, ValueError, TypeError (comm without its settings)
        for c in half:  # not left to the garbage collector (its __del__ would fail ~20 s later)
            try:
                c.close(timeout=2)
            except Exception:
                pass
        half.clear()
        raise unreachable(_short(exc)) from None
    try:
        client.wait_for_workers(1, timeout=WORKERS_TIMEOUT_S)
    except Exception:
        client.close(timeout=5)
        raise UsageError(f"the Dask scheduler {quote(scheduler)} has no worker (none joined within "
                         f"{WORKERS_TIMEOUT_S} s)", field="--scheduler",
                         fix="start workers with `dask worker ADDRESS`") from None
    return client


def _client(scheduler: str | None, workers: int | None):
    """(client, cluster-or-None) for the options given."""
    from ..errors import UsageError

    try:
        import distributed  # noqa: F401
    except ImportError:  # pragma: no cover - the extra is part of the test install
        raise UsageError("--scheduler/--workers need Dask distributed", fix="pip install 'lumeval[archive]'") from None
    if scheduler is not None and workers is not None:
        raise UsageError("--scheduler and --workers both given", field="--workers",
                         fix="use a running cluster (--scheduler) or start a local one (--workers), not both")
    if scheduler is not None:
        return _connect(scheduler), None
    if workers is None or workers < 1 or workers > 256:
        raise UsageError(f"--workers must be 1 to 256, not {workers}", field="--workers", fix="give the number of processes")
    import tempfile

    import dask
    from distributed import Client, LocalCluster

    # the scheduler's and workers' scratch space in a folder of this run's own, removed by
    # _close: by default Dask keeps $TMPDIR/dask-scratch-space and its lock files after a run
    scratch = tempfile.mkdtemp(prefix="lumeval-dask-")
    try:
        with dask.config.set({"temporary-directory": scratch}):
            cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                                   dashboard_address=None, silence_logs=40, local_directory=scratch,
                                   # without a dashboard the scheduler still serves HTTP (health,
                                   # metrics) on 8787, warning on stderr when that port is taken:
                                   # any free port of the loopback instead
                                   scheduler_kwargs={"dashboard_address": "127.0.0.1:0"})
    except BaseException:
        _remove_scratch(scratch)
        raise
    cluster.lumeval_scratch = scratch  # type: ignore[attr-defined]  # read back by _close
    return Client(cluster, set_as_default=False), cluster


def _remove_scratch(folder: str | None) -> None:
    if folder:
        import shutil

        shutil.rmtree(folder, ignore_errors=True)


def _cluster_failure(exc: BaseException, where: str, client=None, fut=None):
    """The WorkerError that stops a lot when the cluster fails (not the input): one line naming
    the cause, and the worker and partition when known."""
    from ..errors import WorkerError

    worker = ""
    if fut is not None and client is not None and "on worker " not in str(exc):
        try:
            key = fut.key
            on = client.run_on_scheduler(lambda dask_scheduler: sorted(dask_scheduler.tasks[key].erred_on or ()))
            worker = f" on worker {', '.join(on)}" if on else ""
        except Exception:
            pass
    return WorkerError(f"the Dask cluster failed{worker} ({where}: {type(exc).__name__}: {_short(exc)}); "
                       "the lot was stopped and unfinished outputs were not written",
                       fix="check that every worker has lumeval and pyarrow installed and reaches the "
                           "scheduler, then run again")


def _plan(files: list[str]):
    """(tasks, expected rows, unreadable per file) from the footers, on the client."""
    from ..errors import LumevalError
    from ..spectra.archive import no_rows_error, open_file, plan_partitions
    from .inputs import Unreadable

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
    return tasks, expected, bad_by_file


def _run_tasks(client, tasks, files, sample_criteria, batch, acc, bad_by_file, expected, progress) -> set[int]:
    """Submit the partitions, join their results in input order; the files that gave samples.

    Follows a local run exactly: names made unique in input order; an error of a file part-way
    keeps what was read before it and drops the file's later partitions. A failure of the
    cluster (a task that raised, a lost scheduler, a cancelled future) stops the lot
    (:func:`_cluster_failure`)."""
    import asyncio

    from distributed import as_completed

    from ..errors import LumevalError
    from ..spectra.read import SeenNames

    futures = {}
    for k, f, j, first_row, groups in tasks:
        fut = client.submit(_evaluate_partition, os.path.abspath(f), first_row, groups, sample_criteria, batch,
                            f, pure=False)
        futures[fut] = (k, j, first_row)
    order = [(k, j) for k, _, j, _, _ in tasks]
    by_file: dict[int, list] = {}
    for fut, (k, _, _) in futures.items():
        by_file.setdefault(k, []).append(fut)
    next_i = done_samples = 0
    done: dict[tuple[int, int], tuple] = {}
    used: set[int] = set()
    stopped: set[int] = set()
    seen = SeenNames()
    for fut in as_completed(list(futures), loop=client.loop):
        k, j, first_row = futures[fut]
        if k in stopped:  # a later partition of a file that ended part-way: dropped, as locally
            fut.release()
            continue
        try:
            done[(k, j)] = fut.result()
        except (LumevalError, KeyboardInterrupt):
            raise
        except (Exception, asyncio.CancelledError) as exc:
            raise _cluster_failure(exc, f"{files[k]}, partition {j + 1} (rows {first_row + 1}-)", client,
                                   fut) from None
        fut.release()
        while next_i < len(order) and (order[next_i] in done or order[next_i][0] in stopped):
            key = order[next_i]
            next_i += 1
            if key[0] in stopped:
                done.pop(key, None)
                continue
            results, bad, stop = done.pop(key)
            for r, counts in results:
                acc.add(_unique_names(r, counts, seen))
                done_samples += len(r)
                used.add(key[0])
            bad_by_file[key[0]].extend(bad)
            if stop:
                stopped.add(key[0])
                for later in by_file[key[0]]:
                    if futures[later][1] > key[1]:
                        later.cancel()
                        done.pop((key[0], futures[later][1]), None)
            if progress is not None:
                progress("evaluating", done_samples, max(expected, done_samples))
    return used


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
        convert them first (``lumeval convert FILE OUT.parquet``). Relative paths are made
        absolute here (a worker's working folder may differ from the client's).
    scheduler : str, optional
        Address of a running scheduler (``tcp://HOST:PORT``).
    workers : int, optional
        Start a local cluster of this many processes (127.0.0.1 only) for this run.
    client : distributed.Client, optional
        An existing client (then ``scheduler``/``workers`` are not used).

    Returns
    -------
    LotRun
        Equal to the local run's (same samples, order, names, figures, verdicts, unreadable
        entries and statistics).

    Raises
    ------
    lumeval.errors.WorkerError
        The cluster failed (lost scheduler, a worker without lumeval or pyarrow, a cancelled
        task): nothing is returned, the command writes no output.
    """
    from ..errors import LumevalError, UsageError
    from ..spectra.archive import is_archive
    from .inputs import expand_inputs
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

    tasks, expected, bad_by_file = _plan(files)  # on the client: footers only
    made = client is None
    own = None
    if made:
        client, own = _client(scheduler, workers)
    acc = LotAccumulator(expected)
    try:
        used = _run_tasks(client, tasks, files, sample_criteria, batch, acc, bad_by_file, expected, progress)
    except (LumevalError, KeyboardInterrupt):
        raise
    except (Exception, __import__("asyncio").CancelledError) as exc:  # the connection to the scheduler
        raise _cluster_failure(exc, "while waiting for the results") from None
    finally:
        if made:
            _close(client, own)
    for bad in bad_by_file:
        unreadable.extend(bad)
    read_paths = tuple(files[k] for k in sorted(used))
    return acc.finish(criteria, sample_criteria=sample_criteria, unreadable=unreadable, inputs=found,
                      ellipse=ellipse, nominal_xy=nominal_xy, uncertainty=None, read_paths=read_paths)


def _close(client, cluster) -> None:
    """Close the client (and the local cluster, removing its scratch folder) without letting a
    lost connection raise."""
    for c in (client, cluster):
        if c is None:
            continue
        try:
            c.close(timeout=10)
        except Exception:
            pass
    _remove_scratch(getattr(cluster, "lumeval_scratch", None))
