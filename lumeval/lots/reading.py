"""The reading side of a lot run: files read in input order, in parallel worker processes when
there are many, and wide text files streamed in column blocks.

* :func:`ordered_reads` gives :func:`lumeval.lots.run.read_one`'s result for each file, in the
  order of the files, whether the files are read here or by a pool of worker processes
  (``multiprocessing``; on Linux the workers are forked, elsewhere parallel reading is used
  only when asked for). Each worker reads whole
  files and returns the prepared spectra or the reasons a file (or a column) was refused, as
  values: the results, their order and every message are those of reading the files one by
  one here, whatever the number of processes and whatever finishes first.
* :func:`stream_blocks` reads a text file larger than the single-file limit
  (:data:`STREAM_BYTES`, 64 MB) in blocks of columns (:mod:`lumeval.spectra.text_columns`):
  a wide CSV of any size is judged with bounded memory. A file that cannot be read that way
  is read whole when it is within the limit, and otherwise refused naming the line at fault.
* Parallel reading pays off for many small files (a folder of single-spectrum files): the
  workers read while this process evaluates. It is used from :data:`PARALLEL_MIN_FILES`
  files on, with :func:`default_read_processes` workers, unless the caller asks otherwise.
"""

from __future__ import annotations

import os
from collections.abc import Generator, Iterator, Sequence

# where workers are forked (Linux): one definition, in lumeval._workers
from .._workers import _FORK, fork_available  # noqa: F401  (fork_available: re-exported for run_lot)

#: Fewest files for which reading in worker processes is started (the pool costs ~0.2 s).
PARALLEL_MIN_FILES = 200
#: Files a worker reads per task (fewer round trips; the order of the results is kept).
FILES_PER_TASK = 32
#: Tasks read ahead of the caller per worker (bounds the read spectra waiting in memory).
TASKS_AHEAD_PER_PROCESS = 4


def default_read_processes() -> int:
    """Worker processes for reading: one per core the process may use, but at least 1."""
    from .._workers import default_processes

    return default_processes()


def _read_one(path: str):
    from .run import read_one

    return read_one(path)


def _read_raw(path: str):
    from .run import read_raw

    return read_raw(path)


def _pool(processes: int):
    """A pool of ``processes`` workers (:func:`lumeval._workers.worker_pool`: forked on Linux)."""
    from .._workers import worker_pool

    return worker_pool(processes)


def ordered_reads(paths: Sequence[str], processes: int | None = None) -> Generator[tuple, None, None]:
    """``read_one(path)`` for each of ``paths``, in order.

    Parameters
    ----------
    paths : sequence of str
        Files to read whole (not Parquet archives, which stream in batches).
    processes : int, optional
        Worker processes: None chooses (:func:`default_read_processes` from
        :data:`PARALLEL_MIN_FILES` files on, else none; a large file read here has its data
        block converted by forked processes, :func:`lumeval.spectra.text_fast.parse_processes`);
        0 or 1 reads here, one file after the other, in this process only.
    """
    asked = processes
    processes = read_processes_for(len(paths), processes)
    if processes <= 1:
        from ..spectra.text_fast import parse_processes

        # read here: a large file's data block may be converted by forked processes, unless one
        # process was asked for (the context is set around each read only, not across a yield)
        for p in paths:
            with parse_processes(1 if asked is not None and asked <= 1 else None):
                got = _read_one(p)
            yield got
        return
    from collections import deque

    pool = _pool(processes)
    try:
        # tasks of FILES_PER_TASK files, taken in the order of paths; results are values
        # (prepared sets and Unreadable entries), so a bad file is reported exactly as a serial
        # read reports it. At most TASKS_AHEAD_PER_PROCESS tasks per worker are read ahead of
        # the caller (a lot of a million files never waits in memory as read spectra).
        waiting: deque = deque()
        for i in range(0, len(paths), FILES_PER_TASK):
            waiting.append(pool.submit(_read_many, paths[i: i + FILES_PER_TASK]))
            while len(waiting) > TASKS_AHEAD_PER_PROCESS * processes:
                yield from _per_file(pool.result(waiting.popleft()))
        while waiting:
            yield from _per_file(pool.result(waiting.popleft()))
    finally:
        pool.terminate()


def read_processes_for(n_files: int, processes: int | None) -> int:
    """The reading worker processes :func:`ordered_reads` uses for ``n_files`` files (1: read
    here): ``processes`` when given (at least 1), else :func:`default_read_processes` from
    :data:`PARALLEL_MIN_FILES` files on where workers are forked, else 1."""
    if processes is None:
        processes = default_read_processes() if _FORK and n_files >= PARALLEL_MIN_FILES else 1
    return 1 if n_files < 2 else max(1, processes)


def _read_many(paths: Sequence[str]) -> tuple[list, list]:
    """The files of one worker task: ``(joined, entries)``, one entry per path, in order: either
    ``read_one(path)``'s result or ``(k, a, b)``, rows ``a:b`` of the prepared set ``joined[k]``
    (:func:`_per_file` gives back the per-file results).

    Files whose spectra lie on one wavelength grid that preparation uses as measured (uniform
    1 nm on integers or 5 nm on multiples of 5: :func:`lumeval.spectra.prepare.used_as_measured`, no arithmetic that
    could depend on how many spectra are prepared together) are prepared together, as one set:
    one preparation instead of one per file (about 0.1 ms of the ~0.6 ms a small file costs), and
    one set to send back instead of one per file. Preparation is row by row, so each file's
    spectra and notes are those of preparing the file alone; if any file of the set cannot be
    prepared, each is prepared alone, so every message is the one a file read alone gives."""
    from ..errors import LumevalError
    from ..spectra.model import SpectrumSet
    from ..spectra.prepare import prepare, used_as_measured
    from .run import display_path, prepare_salvaging

    entries: list = [None] * len(paths)
    by_grid: dict[bytes, list] = {}
    for i, p in enumerate(paths):
        raw, bad = _read_raw(p)
        if raw is None:
            entries[i] = (None, bad)
        else:
            by_grid.setdefault(raw.wavelengths_nm.tobytes(), []).append((i, raw))
    joined: list = []
    for members in by_grid.values():
        prepared = None
        if len(members) > 1 and used_as_measured(members[0][1].wavelengths_nm):
            try:
                prepared = prepare(SpectrumSet.concatenate([raw for _, raw in members]))
            except LumevalError:
                prepared = None
        if prepared is None:
            for i, raw in members:
                entries[i] = prepare_salvaging(raw, display_path(paths[i]))
            continue
        a = 0
        for i, raw in members:
            entries[i] = (len(joined), a, a + len(raw))
            a += len(raw)
        joined.append(prepared)
    return joined, entries


def _per_file(task: tuple[list, list]) -> Iterator[tuple]:
    """``read_one(path)``'s result for each file of a :func:`_read_many` task, in order."""
    joined, entries = task
    for e in entries:
        if len(e) == 3:
            k, a, b = e
            yield joined[k].subset(slice(a, b)), []
        else:
            yield e


def _stream_bytes() -> int:
    from ..spectra.text import MAX_TEXT_BYTES

    return MAX_TEXT_BYTES


#: Text files larger than this many bytes are read in column blocks (None: the single-file limit).
STREAM_BYTES: int | None = None
_NOT_TEXT = (".xml", ".spdx", ".tm27", ".json")


def is_streamed(path: str) -> bool:
    """True for a text file that a lot reads in column blocks (larger than :data:`STREAM_BYTES`)."""
    if path.lower().endswith(_NOT_TEXT):
        return False
    try:
        size = os.stat(path).st_size
    except OSError:
        return False  # read_one gives the message
    return size > (STREAM_BYTES if STREAM_BYTES is not None else _stream_bytes())


def stream_blocks(path: str, block_cols: int) -> Iterator[tuple]:
    """``(prepared SpectrumSet or None, [Unreadable])`` per block of at most ``block_cols``
    columns of a wide text file, in order; the usable columns of each block are kept as
    :func:`lumeval.lots.run.read_one` keeps those of a whole file. Every error of the file is
    found before the first block is given (:func:`lumeval.spectra.text_columns.plan_columns`)."""
    from .._paths import display_path
    from ..errors import InputError, LumevalError
    from ..spectra.text import MAX_TEXT_BYTES
    from ..spectra.text_columns import NotStreamable, column_blocks, plan_columns
    from .inputs import Unreadable
    from .run import prepare_salvaging, read_one

    shown = display_path(path)
    try:
        plan = plan_columns(path, file=shown, block_cols=block_cols)
    except LumevalError as exc:
        yield None, [Unreadable(shown, exc.message)]
        return
    except NotStreamable as ns:
        size = os.stat(path).st_size
        if size <= MAX_TEXT_BYTES:
            yield read_one(path)
            return
        err = InputError(f"is {size / 1e6:.1f} MB, more than the {MAX_TEXT_BYTES / 1e6:.0f} MB read at once, and "
                         f"cannot be read in column blocks: {ns.reason}", file=shown, line=ns.line,
                         fix="export plain rows of numbers (wavelength, then one value per spectrum), "
                         "split the file, or convert it to a Parquet archive")
        yield None, [Unreadable(shown, err.message)]
        return
    try:
        for raw in column_blocks(path, plan, block_cols):
            yield prepare_salvaging(raw, shown)
    except LumevalError as exc:  # the file changed between the pass and a block
        yield None, [Unreadable(shown, exc.message)]
