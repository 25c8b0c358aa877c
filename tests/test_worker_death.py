"""A worker process that dies on its own part-way through sending its result (lumeval._workers).

Seen in review: a worker killed (by the system, when memory ran out) while it wrote a result
left the executor's thread reading the rest of that message from the result pipe. This process
and the other, idle workers hold the pipe's write end too, so no end of file ever came, the
result never came either, and ``lumeval`` waited for it for good. Reproduced here without a
kill: the task itself writes the start of a message (a length header announcing 1,000,000 bytes
and a few of them) to the executor's result pipe, then ends with exit code 1.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap
from concurrent.futures import Future

import pytest

from lumeval import _workers
from lumeval.errors import WorkerError

# The command's own shape (lumeval.cli.main): the pool stopped in a finally block, a
# LumevalError printed alone (one line) with exit code 2.
SCRIPT = textwrap.dedent(
    """
    import gc, os, struct, sys
    from multiprocessing.queues import SimpleQueue
    from lumeval import _workers
    from lumeval.errors import WorkerError


    def die_mid_send():
        # the executor's result queue is this worker's only SimpleQueue; its _writer is the pipe
        # the worker sends results through
        (queue,) = [q for q in gc.get_objects() if isinstance(q, SimpleQueue)]
        os.write(queue._writer.fileno(), struct.pack("!i", 1_000_000) + b"part")
        os._exit(1)


    pool = _workers.worker_pool(2)
    try:
        try:
            pool.result(pool.submit(die_mid_send))
            print("a result came", file=sys.stderr)
            code = 3
        finally:
            pool.terminate()
    except WorkerError as e:
        print(e.message, file=sys.stderr)
        code = 2
    sys.exit(code)
    """
)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="forked workers: Linux")
def test_a_worker_dying_mid_send_stops_the_run_with_worker_error_instead_of_hanging():
    try:
        proc = subprocess.run([sys.executable, "-c", SCRIPT], capture_output=True, text=True,
                              timeout=60)  # a hang guard only: it ends in about a second
    except subprocess.TimeoutExpired:
        pytest.fail("still waiting 60 s after its worker died mid-send (hung)")
    assert proc.returncode == 2, proc.stderr
    assert "a worker process ended before finishing its work" in proc.stderr
    assert "Traceback" not in proc.stderr


class _Worker:
    """Stands for a worker process in the executor's table: its exit code, read as the pool
    reads it, first runs ``on_read`` (which can deliver the awaited result meanwhile)."""

    def __init__(self, exitcode, on_read=lambda: None):
        self._exitcode, self._on_read, self.pid = exitcode, on_read, 1 << 30

    @property
    def exitcode(self):
        self._on_read()
        return self._exitcode


def _pool_with(monkeypatch, worker):
    pool = _workers.WorkerPool(1)
    monkeypatch.setattr(pool._ex, "_processes", {worker.pid: worker})
    monkeypatch.setattr(_workers, "POLL_S", 0.001)  # look at the workers at once
    stops = []
    monkeypatch.setattr(pool, "terminate", lambda: stops.append(True))
    return pool, stops


def test_a_worker_that_ended_normally_is_not_a_failure(monkeypatch):
    """Exit code 0 (a worker retired by the executor) while the result is awaited: it is still
    awaited, and returned when it comes."""
    future: Future = Future()
    pool, stops = _pool_with(monkeypatch, _Worker(0, on_read=lambda: future.done() or future.set_result(7)))
    assert pool.result(future) == 7
    assert stops == []


def test_a_result_already_delivered_is_returned_even_if_a_worker_died(monkeypatch):
    future: Future = Future()
    future.set_result("done")
    pool, stops = _pool_with(monkeypatch, _Worker(-9))
    assert pool.result(future) == "done"
    assert stops == []


@pytest.mark.parametrize("exitcode", [1, -9])
def test_a_failed_worker_stops_the_pool_and_raises_worker_error(monkeypatch, exitcode):
    pool, stops = _pool_with(monkeypatch, _Worker(exitcode))
    with pytest.raises(WorkerError, match="a worker process ended before finishing"):
        pool.result(Future())
    assert stops == [True]


def test_a_vanished_worker_stops_the_pool(monkeypatch):
    """A worker whose process is gone although no exit code was read (reaped by someone else:
    with SIGCHLD ignored, say): no result can come from it."""
    pool, stops = _pool_with(monkeypatch, _Worker(None))  # its pid, 2**30, is above any pid_max
    with pytest.raises(WorkerError):
        pool.result(Future())
    assert stops == [True]


def _exit_at_once():
    import os

    os._exit(1)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="forked workers: Linux")
def test_submitting_to_a_pool_a_dead_worker_broke_raises_worker_error():
    # Seen as a flaky test: a CSV worker killed while more blocks were still being handed out;
    # the executor had already marked its pool broken, and the next submit raised the
    # executor's own BrokenProcessPool (an internal error) instead of WorkerError
    pool = _workers.worker_pool(1)
    try:
        first = pool.submit(_exit_at_once)
        with pytest.raises(WorkerError):
            pool.result(first)
        with pytest.raises(WorkerError):
            pool.submit(_exit_at_once)
    finally:
        pool.terminate()
