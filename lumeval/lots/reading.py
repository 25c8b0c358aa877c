"""The reading side of a lot run: files read in input order, in parallel worker processes when
there are many, and wide text files streamed in column blocks.

* :func:`ordered_reads` gives :func:`lumeval.lots.run.read_one`'s result for each file, in the
  order of the files, whether the files are read here or by a pool of worker processes
  (``multiprocessing``; on Linux the workers are forked, elsewhere parallel reading is used
  only when asked for). Each worker reads whole
  files and returns the prepared spectra or the reasons a file (or a column) was refused, as
  values: the results, their order and every message are those of reading the files one by
  one here, whatever the number of processes and whatever finishes first.
* Parallel reading pays off for many small files (a folder of single-spectrum files): the
  workers read while this process evaluates. It is used from :data:`PARALLEL_MIN_FILES`
  files on, with :func:`default_read_processes` workers, unless the caller asks otherwise.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Iterator, Sequence

#: Fewest files for which reading in worker processes is started (the pool costs ~0.2 s).
PARALLEL_MIN_FILES = 200
#: Files a worker reads per task (fewer round trips; the order of the results is kept).
FILES_PER_TASK = 32


def default_read_processes() -> int:
    """Worker processes for reading: one per core the process may use, but at least 1."""
    try:
        n = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        n = os.cpu_count() or 1
    return max(1, n)


def _read_one(path: str):
    from .run import read_one

    return read_one(path)


def _pool(processes: int):
    """A pool of ``processes`` workers. On Linux they are forked from this process: they start
    at once with everything imported, and the caller's script is not run again in them (the
    ``spawn`` and ``forkserver`` methods re-import the main module, which breaks scripts
    without an ``if __name__ == "__main__":`` guard)."""
    import multiprocessing as mp

    return mp.get_context("fork" if _FORK else "spawn").Pool(processes)


_FORK = sys.platform.startswith("linux")


def ordered_reads(paths: Sequence[str], processes: int | None = None) -> Iterator[tuple]:
    """``read_one(path)`` for each of ``paths``, in order.

    Parameters
    ----------
    paths : sequence of str
        Files to read whole (not Parquet archives, which stream in batches).
    processes : int, optional
        Worker processes: None chooses (:func:`default_read_processes` from
        :data:`PARALLEL_MIN_FILES` files on, else none); 0 or 1 reads here, one file after
        the other.
    """
    if processes is None:
        processes = default_read_processes() if _FORK and len(paths) >= PARALLEL_MIN_FILES else 1
    if processes <= 1 or len(paths) < 2:
        for p in paths:
            yield _read_one(p)
        return
    pool = _pool(processes)
    try:
        # imap keeps the order of paths; results are values (prepared sets and Unreadable
        # entries), so a bad file is reported exactly as a serial read reports it
        yield from pool.imap(_read_one, paths, chunksize=FILES_PER_TASK)
    finally:
        pool.terminate()
        pool.join()
