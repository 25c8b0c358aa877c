"""Worker processes on this machine: one place for how they are started.

Lots read files, evaluate batches and format their per-sample CSV in worker processes
(:mod:`lumeval.lots.reading`, :mod:`lumeval.lots.evaluating`,
:func:`lumeval.render.lot_report.samples_csv`). On Linux the workers are forked from this
process: they start at once with everything imported and with this process's data (a lot's
figures, for instance) already in memory, and the caller's script is not run again in them (the
``spawn`` and ``forkserver`` methods re-import the main module, which breaks scripts without an
``if __name__ == "__main__":`` guard). Elsewhere work is done in this process unless parallel
work is asked for.
"""

from __future__ import annotations

import functools
import os
import sys
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

_FORK = sys.platform.startswith("linux")


def fork_available() -> bool:
    """True where worker processes are forked (Linux): lots then use them unless told otherwise."""
    return _FORK


def default_processes() -> int:
    """Worker processes: one per core the process may use, but at least 1."""
    try:
        n = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        n = os.cpu_count() or 1
    return max(1, n)


def in_worker() -> bool:
    """True inside a worker process of a pool (which may not start workers of its own)."""
    import multiprocessing as mp

    return bool(mp.current_process().daemon)


def worker_pool(processes: int, warm_up=None) -> WorkerPool:
    """A pool of ``processes`` workers (forked on Linux, see the module docstring), each with
    :func:`worker_init` run first, then ``warm_up()`` when given (:class:`WorkerPool`)."""
    return WorkerPool(processes, warm_up)


class WorkerPool:
    """Worker processes that run submitted calls (``concurrent.futures.ProcessPoolExecutor``:
    unlike ``multiprocessing.Pool``, whose results wait forever for a worker that was killed,
    a worker that dies makes every waiting result fail, and :meth:`result` then raises
    :class:`lumeval.errors.WorkerError`). The workers are started at the first :meth:`submit`
    (forked then: they see this process's data as it is at that moment)."""

    def __init__(self, processes: int, warm_up=None) -> None:
        import multiprocessing as mp
        from concurrent.futures import ProcessPoolExecutor

        init = worker_init if warm_up is None else functools.partial(_init_and_warm_up, warm_up)
        self._ex = ProcessPoolExecutor(max(1, int(processes)), mp_context=mp.get_context("fork" if _FORK else "spawn"),
                                       initializer=init)

    def start(self) -> None:
        """Start the workers now rather than at the first :meth:`submit` (each runs its
        initializer, and its warm-up, at once; nothing is awaited)."""
        self.submit(_nothing)

    def submit(self, fn, *args):
        """Run ``fn(*args)`` in a worker; returns a future for :meth:`result`. A pool already
        broken by a worker that died (noticed by the executor before this call) gives
        :class:`WorkerError`, as :meth:`result` does, and so does a first call whose workers
        cannot be forked (the system out of processes or memory: those already forked are
        stopped)."""
        from concurrent.futures.process import BrokenProcessPool

        try:
            return self._ex.submit(fn, *args)
        except BrokenProcessPool:
            self.terminate()
            raise _worker_error() from None
        except OSError as exc:  # the first submit forks the workers: out of processes or memory
            self.terminate()  # the workers already forked, if any, are stopped
            raise _start_error(exc) from None

    def result(self, future):
        """The call's return value (its exception is raised here); :class:`WorkerError` when
        its worker ended without finishing.

        The executor notices a dead worker itself, but not one that died part-way through
        sending a result (killed by the system when memory ran out, say): its thread then reads
        the rest of the message from a pipe whose write end this process and the other workers
        hold too (see :meth:`terminate`), so neither the rest nor an end of file comes and the
        result would be awaited for good. So the result is awaited in steps of :data:`POLL_S`,
        and a worker found ended with a failure before it came stops the pool
        (:meth:`terminate`). A result that came is returned, and a worker that ended normally
        (exit code 0: retired by the executor) is no failure."""
        from concurrent.futures import wait
        from concurrent.futures.process import BrokenProcessPool

        try:
            while not wait((future,), timeout=POLL_S).done:
                if self._a_worker_failed() and not future.done():
                    self.terminate()
                    raise _worker_error()
            return future.result()
        except BrokenProcessPool:
            raise _worker_error() from None

    def _a_worker_failed(self) -> bool:
        """True when a worker process ended with a non-zero exit code (a signal's is negative),
        or is gone although no exit code was read (reaped elsewhere: with SIGCHLD ignored, say)."""
        for p in tuple((self._ex._processes or {}).values()):  # the executor's thread edits it
            if p.exitcode is None and _exists(p.pid):
                continue  # running, or ended a moment ago (its exit code is read at the next look)
            if p.exitcode != 0:  # read again: the executor's thread may have reaped it meanwhile
                return True
        return False

    def terminate(self) -> None:
        """Stop the workers at once (results not yet taken are dropped), and the executor's
        thread with them.

        The workers are killed (SIGKILL: a worker held by SIGSTOP ends too, where SIGTERM would
        wait for it to be resumed). A worker killed part-way through sending a result leaves the
        executor's thread reading the rest of it from the result pipe, and this process holds
        that pipe's write end too (the workers were forked with it): the read would never end,
        and the interpreter, which waits for that thread at exit, would never exit (seen after
        Ctrl-C, deaf to further signals). So this process's copy of the write end is closed
        once the workers are gone: the read ends (end of file), the executor counts its pool
        as broken and its thread ends."""
        ex = self._ex
        procs = list((getattr(ex, "_processes", None) or {}).values())
        results = getattr(ex, "_result_queue", None)
        thread = getattr(ex, "_executor_manager_thread", None)
        ex.shutdown(wait=False, cancel_futures=True)
        for p in procs:
            if p.is_alive():
                p.kill()
        for p in procs:
            p.join()
        writer = getattr(results, "_writer", None)
        if writer is not None:
            writer.close()
        if thread is not None:
            thread.join(THREAD_GRACE)


def _exists(pid) -> bool:
    """True while process ``pid`` exists (running, or ended and not reaped yet) and is ours."""
    try:
        os.kill(pid, 0)
    except OSError:  # no such process, or another user's (the pid was reused)
        return False
    return True


def _start_error(exc: OSError):
    from .errors import WorkerError

    return WorkerError(f"worker processes could not be started ({exc.strerror or exc}); nothing was written",
                       fix="run again with --processes 1, or free some memory or processes")


def _worker_error():
    from .errors import WorkerError

    return WorkerError("a worker process ended before finishing its work (stopped by a signal, or by "
                       "the system when memory ran out); unfinished outputs were not written",
                       fix="run again; if it recurs, use --processes 1 or free some memory")


#: Seconds :meth:`WorkerPool.result` waits for a result between looks at the workers: a result
#: is taken as soon as it comes; this only bounds how long a worker that died mid-send goes
#: unnoticed (a look costs microseconds).
POLL_S = 0.5

#: Seconds :meth:`WorkerPool.terminate` waits for the executor's thread to end (it ends at once
#: unless a process forked later still holds the result pipe; :func:`lumeval._stop.settle` then
#: keeps the command's exit from waiting for it).
THREAD_GRACE = 2.0


def _nothing() -> None:
    """A call that does nothing (:meth:`WorkerPool.start`)."""


def _init_and_warm_up(warm_up) -> None:
    """:func:`worker_init`, then ``warm_up()``: a worker's first-use costs paid before its first
    call. A warm-up that fails changes nothing (the call that needs what it prepares then meets
    the failure itself, and reports it)."""
    worker_init()
    try:
        warm_up()
    except Exception:
        pass


def worker_init() -> None:
    """Workers leave Ctrl-C to the main process, which stops them (:meth:`WorkerPool.terminate`),
    and end quietly on SIGTERM (sent to the whole process group, say): they do not keep the
    command's own signal handlers."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    for name in ("SIGTERM", "SIGHUP"):
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), signal.SIG_DFL)
    # One BLAS thread per worker: the workers already use every core, and several multi-threaded
    # BLAS pools on the same cores spin against each other (measured: a 20,000-spectrum lot took
    # longer with two workers than with none until this was set)
    try:
        from threadpoolctl import threadpool_limits

        threadpool_limits(1)
    except Exception:  # pragma: no cover - threadpoolctl missing or no BLAS found: default threads
        pass


@functools.lru_cache(maxsize=1)
def _blas_controller_for(n_modules: int):
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


def _blas_controller():
    """threadpoolctl's view of the loaded BLAS libraries (finding them costs ~1 ms), made again
    when modules were imported since: a library loaded later (scipy's own OpenBLAS, loaded
    with scipy.linalg) was not limited by a view made before it."""
    return _blas_controller_for(len(sys.modules))


_blas_lock = threading.Lock()
_blas_depth = 0
_blas_limiter: Any = None


def _release_openblas_control() -> None:
    """Let any thread set OpenBLAS's thread count through threadpoolctl: with OpenBLAS's
    process-wide (pthreads) pool, threadpoolctl lets only the first thread that set it set it
    again and silently ignores the others, so a limit set or restored from another thread would
    do nothing."""
    try:
        from threadpoolctl import OpenBLASController

        OpenBLASController.clear_controlling_thread(force=True)
    except Exception:  # pragma: no cover - threadpoolctl without it (older than 3.6) or missing
        pass


@contextmanager
def one_blas_thread() -> Iterator[None]:
    """Within the block, BLAS uses one thread (threadpoolctl; nothing changes where it is missing).

    lumeval computes every figure and every cached table this way (:func:`lumeval.engine.evaluate`,
    the reference tables, the Planckian table of the CCT search...), as its worker processes do
    throughout (:func:`worker_init`): a multi-threaded BLAS product splits its rows between
    threads, and the rows' last bits then differ from a one-thread product's (measured: up to
    8e-13 in TM-30 Rf,h), so figures would depend on the thread count, and a lot's figures on
    which process evaluated a batch. OpenBLAS's pool is process-wide: nested blocks and blocks
    in several threads share one limit, the first one in sets it and the last one out, in
    whichever thread, restores the caller's setting (threadpoolctl's record of the thread
    allowed to set it is cleared around each change: it ignored a limit set from a thread other
    than the first one that ever set it, measured with OpenBLAS 0.3.30 and threadpoolctl 3.8)."""
    global _blas_depth, _blas_limiter
    with _blas_lock:
        if _blas_depth == 0:
            _release_openblas_control()
            try:
                _blas_limiter = _blas_controller().limit(limits=1, user_api="blas")
            except Exception:  # pragma: no cover - threadpoolctl missing or no BLAS found
                _blas_limiter = None
        _blas_depth += 1
    try:
        yield
    finally:
        with _blas_lock:
            _blas_depth -= 1
            if _blas_depth == 0 and _blas_limiter is not None:
                _release_openblas_control()
                _blas_limiter.restore_original_limits()
                _release_openblas_control()
                _blas_limiter = None
