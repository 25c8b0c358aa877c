"""The reading side of a lot: reading in worker processes changes nothing.

The reference is the serial read of the same files in the same process: the parallel read must
give the same samples in the same order, the same refused files and columns with the same
messages, and the same figures. Figures are compared exactly: the engine runs in this process
on the same arrays in the same batches either way (the workers only read), so equality is by
construction.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest

from lumeval.lots import reading
from lumeval.lots.run import read_one, run_lot

DEMO = Path(__file__).resolve().parents[1] / "spectra_demo" / "lot_2026w48"


@pytest.fixture(scope="module")
def mixed_folder(tmp_path_factory):
    if not DEMO.is_dir():
        pytest.skip("demo lot not generated (python spectra_demo/generate_lot.py)")
    d = tmp_path_factory.mktemp("lot")
    for p in sorted(DEMO.iterdir())[:60]:
        shutil.copy(p, d / p.name)
    # refused files between good ones, and a wide file with a refused column
    (d / "AD30-w48-0105-nan.csv").write_text("wavelength,value\n380,1\n385,nan\n390,1\n", encoding="utf-8")
    (d / "AD30-w48-0205-empty.csv").write_text("", encoding="utf-8")
    (d / "AD30-w48-0305-text.csv").write_text("no numbers here\n", encoding="utf-8")
    wl = np.arange(380, 781, 5)
    rows = "".join(f"{w},{1 + 0.001 * w},{0.0},{2 - 0.001 * w}\n" for w in wl)
    (d / "AD30-w48-0405-wide.csv").write_text("wavelength,A,zero,B\n" + rows, encoding="utf-8")
    # among the 1 nm files (read and prepared together by a worker: lots/reading._read_many): one
    # with negative noise (clipped, with a note), one that cannot be prepared (all zero: the
    # others of its task are then prepared one by one), a wide 1 nm file with a column that
    # cannot be prepared (salvaged), a 2 nm file (interpolated: prepared alone) and one in
    # descending order (sorted: prepared alone)
    wl1 = np.arange(380, 781)
    base = 1.0 + np.sin(wl1 / 40.0) ** 2
    neg = base.copy()
    neg[3:6] = -0.002
    (d / "AD30-w48-010-neg.csv").write_text(
        "wavelength_nm,neg\n" + "".join(f"{w},{v:.6f}\n" for w, v in zip(wl1, neg)), encoding="utf-8")
    (d / "AD30-w48-020-zero.csv").write_text(
        "wavelength_nm,zero1\n" + "".join(f"{w},0\n" for w in wl1), encoding="utf-8")
    (d / "AD30-w48-030-wide1.csv").write_text(
        "wavelength_nm,W1,Wzero\n" + "".join(f"{w},{v:.6f},0\n" for w, v in zip(wl1, base)), encoding="utf-8")
    wl2 = np.arange(380, 781, 2)
    (d / "AD30-w48-040-2nm.csv").write_text(
        "wavelength_nm,two\n" + "".join(f"{w},{1 + 0.001 * w:.6f}\n" for w in wl2), encoding="utf-8")
    (d / "AD30-w48-045-desc.csv").write_text(
        "wavelength_nm,desc\n" + "".join(f"{w},{v:.6f}\n" for w, v in zip(wl1[::-1], base[::-1])), encoding="utf-8")
    return d


@pytest.mark.parametrize("files_per_task", [32, 7])
def test_ordered_reads_in_workers_equal_serial_reads(mixed_folder, monkeypatch, files_per_task):
    """Files read and prepared together by the workers give, file by file, exactly what reading
    each alone gives: spectra, notes, refused files and columns with their messages."""
    monkeypatch.setattr(reading, "FILES_PER_TASK", files_per_task)
    files = [str(p) for p in sorted(mixed_folder.iterdir())]
    serial = [read_one(f) for f in files]
    shown = {Path(f).name: r for f, r in zip(files, serial)}
    assert shown["AD30-w48-020-zero.csv"][0] is None and shown["AD30-w48-030-wide1.csv"][1]
    assert any("below zero" in n for n in shown["AD30-w48-010-neg.csv"][0].notes[0])
    assert any("interpolated" in n for n in shown["AD30-w48-040-2nm.csv"][0].notes[0])
    parallel = list(reading.ordered_reads(files, processes=2))
    assert len(parallel) == len(serial)
    for (s1, bad1), (s2, bad2) in zip(serial, parallel):
        assert bad1 == bad2
        assert (s1 is None) == (s2 is None)
        if s1 is not None:
            assert s1.names == s2.names and s1.sources == s2.sources and s1.notes == s2.notes
            np.testing.assert_array_equal(s1.wavelengths_nm, s2.wavelengths_nm)
            np.testing.assert_array_equal(s1.values, s2.values)


def test_lot_read_in_workers_equals_serial_lot(mixed_folder):
    one = run_lot([mixed_folder], read_processes=1)
    two = run_lot([mixed_folder], read_processes=2)
    assert len(one) >= 60 and len(one.unreadable) >= 4
    assert one.names == two.names and one.sources == two.sources and one.warnings == two.warnings
    assert one.unreadable == two.unreadable and one.read_paths == two.read_paths
    for k in one.figures:
        np.testing.assert_array_equal(one.figures[k], two.figures[k])
    assert one.exit_code == two.exit_code == 2


@pytest.mark.skipif(not reading._FORK, reason="automatic parallel reading forks (Linux)")
def test_parallel_reading_is_automatic_only_for_many_files(monkeypatch):
    started = []
    monkeypatch.setattr(reading, "_pool", lambda n: started.append(n) or (_ for _ in ()).throw(RuntimeError))
    assert list(reading.ordered_reads([], None)) == []
    with pytest.raises(RuntimeError):
        list(reading.ordered_reads(["x"] * reading.PARALLEL_MIN_FILES, None))
    assert started and started[0] >= 1


@pytest.mark.skipif(not reading._FORK, reason="large blocks are converted by forked processes on Linux only")
def test_a_large_file_read_here_is_converted_by_forked_processes_unless_one_is_asked(tmp_path, monkeypatch):
    """A wide file's data block: converted by forked children when the processes are left to
    choose, in this process only with processes=1 (lot --processes 1); same spectra either way."""
    from lumeval.spectra import text_fast

    wl = np.arange(380, 781, 5)
    rows = "".join(f"{w}," + ",".join(f"{1 + 0.001 * w * (k + 1):.6f}" for k in range(30)) + "\n" for w in wl)
    f = tmp_path / "wide.csv"
    f.write_text("wavelength," + ",".join(f"M{k}" for k in range(30)) + "\n" + rows, encoding="utf-8")
    monkeypatch.setattr(text_fast, "PARALLEL_BYTES", 1024)
    monkeypatch.setattr(text_fast, "_other_threads", lambda: False)  # (threads other tests left behind)
    calls = []
    real = text_fast._forked_loadtxt
    monkeypatch.setattr(text_fast, "_forked_loadtxt", lambda *a: calls.append(a[-1]) or real(*a))
    (one, bad1), = reading.ordered_reads([str(f)], processes=1)
    assert calls == []
    (auto, bad2), = reading.ordered_reads([str(f)], processes=None)
    k = reading.default_read_processes()
    assert calls == ([] if k == 1 else [min(k, wl.size)])  # one core: converted here
    assert bad1 == bad2 == [] and one.names == auto.names
    np.testing.assert_array_equal(one.values, auto.values)  # the same numpy call on the same cells


def _logged_read(path):
    """A stand-in read of a worker (forked into the workers): notes the path in a log file and
    returns it as the message of an unreadable file."""
    with open(path, "a", encoding="utf-8") as f:
        f.write("r\n")
    return None, [path]


@pytest.mark.skipif(not reading._FORK, reason="reading workers are forked on Linux")
def test_reading_workers_read_a_bounded_number_of_files_ahead(tmp_path, monkeypatch):
    """While the caller holds the first result, the workers read at most the tasks in flight
    ((TASKS_AHEAD_PER_PROCESS x processes + 1) tasks of FILES_PER_TASK files), not the folder."""
    import time

    log = tmp_path / "log.txt"
    log.write_text("", encoding="utf-8")
    monkeypatch.setattr(reading, "FILES_PER_TASK", 2)
    monkeypatch.setattr(reading, "_read_raw", _logged_read)
    reads = reading.ordered_reads([str(log)] * 400, processes=2)
    assert next(reads) == (None, [str(log)])
    time.sleep(1.0)  # the workers would go on reading here if nothing bounded them
    bound = (reading.TASKS_AHEAD_PER_PROCESS * 2 + 1) * 2
    assert len(log.read_text(encoding="utf-8").split()) <= bound
    assert sum(1 for _ in reads) == 399  # the rest, in order, when asked for
    assert len(log.read_text(encoding="utf-8").split()) == 400


def _killed_read(path):
    """A stand-in read that kills its own worker process (as the system does when memory runs out)."""
    import os
    import signal

    os.kill(os.getpid(), signal.SIGKILL)


@pytest.mark.skipif(not reading._FORK, reason="reading workers are forked on Linux")
def test_a_killed_reading_worker_stops_the_run_with_a_clear_error(monkeypatch):
    """A worker killed mid-run: WorkerError (a LumevalError: one line, exit 2 from the command),
    at once, instead of waiting forever for its results."""
    from lumeval.errors import LumevalError, WorkerError

    monkeypatch.setattr(reading, "_read_raw", _killed_read)
    with pytest.raises(WorkerError) as exc:
        list(reading.ordered_reads(["x.csv"] * 100, processes=2))
    assert isinstance(exc.value, LumevalError) and "--processes 1" in exc.value.message


@pytest.mark.skipif(not reading._FORK, reason="evaluating workers are forked on Linux")
def test_a_killed_evaluating_worker_stops_the_run_with_a_clear_error(monkeypatch):
    from lumeval.errors import WorkerError
    from lumeval.lots import evaluating

    monkeypatch.setattr(evaluating, "_evaluate", _killed_read)
    monkeypatch.setattr(evaluating.BatchEvaluator, "_here", lambda self, job: None)  # the first batch, evaluated here
    ev = evaluating.BatchEvaluator(2, None, None, False, on_result=lambda r: None)
    with pytest.raises(WorkerError):
        for _ in range(6):
            ev.submit([])
        ev.close()
    ev.terminate()


def test_a_bad_criteria_file_is_refused_before_the_inputs_are_listed(tmp_path, monkeypatch, capsys):
    """``lumeval lot`` loads its criteria file before it lists its inputs: a bad criteria file
    is refused at once (exit 2, one clean line naming it, no output written), not after a large
    folder has been listed."""
    from lumeval.commands import lot as lot_command

    from .conftest import assert_clean_error, run_cli_in_process

    listed = []
    monkeypatch.setattr(lot_command, "expand_inputs", lambda paths, **k: listed.append(paths) or 1 / 0)
    crit = tmp_path / "criteria.toml"
    crit.write_text("lumeval_criteria = 1\n[[clause]]\nid = \"Ra\"\nfigure = \"Ra\"\nmin = \"ninety\"\n")
    out = tmp_path / "samples.csv"
    code, _, err = run_cli_in_process(["lot", str(tmp_path), "-c", str(crit), "--samples-csv", str(out)], capsys)
    assert_clean_error(code, err, "criteria.toml")
    assert listed == [] and not out.exists()


def _wide_file(path: Path, n: int = 300) -> Path:
    """A wide CSV of ``n`` rippled Planckian spectra from about 2,000 K to 20,000 K at 1 nm."""
    from lumeval.metrics.reference import planckian_spd

    rng = np.random.default_rng(8)
    wl = np.arange(380, 781)
    T = np.geomspace(2000.0, 20000.0, n)[rng.permutation(n)]
    vals = planckian_spd(wl.astype(float), T) * (1.0 + 0.03 * np.sin(wl / rng.uniform(20, 40, (n, 1))))
    body = "".join(f"{w}," + ",".join(f"{v:.6g}" for v in vals[:, i]) + "\n" for i, w in enumerate(wl))
    path.write_text("wavelength," + ",".join(f"S{k}" for k in range(n)) + "\n" + body, encoding="utf-8")
    return path


def _samples_csv_text(run) -> str:
    import io

    from lumeval.render.lot_report import samples_csv

    buf = io.StringIO()
    samples_csv(run, buf, processes=1)
    return buf.getvalue()


@pytest.mark.skipif(not reading._FORK, reason="evaluating workers are forked on Linux")
def test_a_wide_file_gives_the_same_bytes_with_and_without_workers(tmp_path):
    """A wide CSV (a column per spectrum: each batch is a strided view of the file's block) of
    spectra from about 2,000 K to 20,000 K, evaluated in this process and by two workers: the
    per-sample CSV is the same bytes (the claim, so compared exactly). Before the engine took
    C-ordered chunks, one BLAS thread per batch everywhere and row-independent table fills, 17,937 of
    20,000 rows of the benchmark's wide CSV differed in their last digits."""
    f = _wide_file(tmp_path / "wide.csv")
    texts = []
    for p in (1, 2):
        run = run_lot([str(f)], batch_spectra=32, evaluate_processes=p)
        texts.append(_samples_csv_text(run))
    assert len(run) == 300 and texts[0] == texts[1]


@pytest.mark.skipif(not reading._FORK, reason="evaluating workers are forked on Linux")
@pytest.mark.parametrize("warm_up_fails", [False, True])
def test_workers_started_before_reading_warm_up_and_change_nothing(tmp_path, monkeypatch, warm_up_fails):
    """A lot known to need several batches (here: a text file over the size limit, lowered to
    one byte) starts its evaluating workers before it is read; each warms up (imports, one
    evaluation) while this process reads, and every batch goes to them (none is evaluated here).
    The per-sample CSV is the same bytes as the serial run's (compared exactly, the claim),
    also when the warm-up fails (it is an optimisation: the failure changes nothing)."""
    from lumeval.lots import evaluating
    from lumeval.lots import run as run_module

    f = _wide_file(tmp_path / "wide.csv")
    serial = _samples_csv_text(run_lot([str(f)], batch_spectra=32, evaluate_processes=1))

    marks = tmp_path / "warm"
    marks.mkdir()
    real_warm_up = evaluating._warm_up

    def warm_up(sample_criteria):  # runs in each worker (forked: it sees this replacement)
        import os

        (marks / str(os.getpid())).write_text("", encoding="utf-8")
        if warm_up_fails:
            raise RuntimeError("warm-up failed")
        real_warm_up(sample_criteria)

    started, here = [], []
    real_start, real_here = evaluating.BatchEvaluator.start, evaluating.BatchEvaluator._here
    monkeypatch.setattr(evaluating, "_warm_up", warm_up)
    monkeypatch.setattr(evaluating.BatchEvaluator, "start", lambda self: started.append(1) or real_start(self))
    monkeypatch.setattr(evaluating.BatchEvaluator, "_here", lambda self, job: here.append(1) or real_here(self, job))
    monkeypatch.setattr(run_module, "SEVERAL_BATCHES_BYTES", 1)
    run = run_lot([str(f)], batch_spectra=32, evaluate_processes=2)
    assert started == [1] and here == []
    assert len(list(marks.iterdir())) == 2  # each of the two workers warmed up
    assert len(run) == 300 and _samples_csv_text(run) == serial


@pytest.mark.skipif(not reading._FORK, reason="evaluating workers are forked on Linux")
def test_a_lot_of_one_batch_starts_no_workers_before_reading(tmp_path, monkeypatch):
    """A small text file whose spectra fit one batch: no workers are started before the
    reading (the pool costs ~0.2 s a lot of one batch never repays), and its one batch is
    evaluated here."""
    from lumeval.lots import evaluating

    f = _wide_file(tmp_path / "wide.csv", n=20)
    started = []
    real_start = evaluating.BatchEvaluator.start
    monkeypatch.setattr(evaluating.BatchEvaluator, "start", lambda self: started.append(1) or real_start(self))
    run = run_lot([str(f)], batch_spectra=32, evaluate_processes=2)
    assert len(run) == 20 and started == []


@pytest.mark.skipif(not reading._FORK, reason="large blocks are converted by forked processes on Linux only")
def test_a_large_block_is_converted_here_while_other_threads_run(monkeypatch):
    """Forking while another thread runs (a worker pool's threads, started before the reading)
    can leave a lock held in the child for good: the numpy path then converts a large block in
    this process (the same numbers: one numpy call either way)."""
    import threading

    from lumeval.spectra import text_fast

    if reading.default_read_processes() < 2:
        pytest.skip("one core: blocks are always converted here")
    big = text_fast.PARALLEL_BYTES + 1
    stop = threading.Event()
    t = threading.Thread(target=stop.wait)
    t.start()
    try:
        assert text_fast._other_threads()
        assert text_fast._parse_processes(big, 100) == 1
    finally:
        stop.set()
        t.join()
    monkeypatch.setattr(text_fast, "_other_threads", lambda: False)  # (threads other tests left behind)
    assert text_fast._parse_processes(big, 100) >= 2


def test_the_warm_up_evaluates_without_error():
    """The workers' warm-up, called here: a failure inside a worker is swallowed (it is an
    optimisation), so it is checked directly that it runs, with and without criteria, and sets
    up what it is for (the reference tables of the 1 nm grid)."""
    from lumeval.criteria.loader import parse_criteria
    from lumeval.lots import evaluating
    from lumeval.metrics import reference_table

    reference_table._tm30_tables.cache_clear()
    evaluating._warm_up(None)
    assert reference_table._tm30_tables.cache_info().currsize == 1
    crit = parse_criteria('lumeval_criteria = 1\n\n[[clause]]\nid = "ra"\nfigure = "Ra"\nmin = 80\n')
    evaluating._warm_up(crit)


@pytest.mark.skipif(not reading._FORK, reason="evaluating workers are forked on Linux")
def test_workers_that_cannot_be_forked_stop_the_run_with_a_clear_error(tmp_path, monkeypatch):
    """The system refuses to fork the second of three workers started before the reading
    (out of processes): WorkerError (a clean message, exit 2 from the command) and the worker
    already forked is stopped. Before, the OSError escaped as an internal error and the forked
    worker kept the interpreter from exiting."""
    import multiprocessing as mp
    import os

    from lumeval.errors import WorkerError
    from lumeval.lots import run as run_module

    f = _wide_file(tmp_path / "wide.csv", n=40)
    real_fork, forks = os.fork, []

    def fork():
        forks.append(1)
        if len(forks) == 2:
            raise BlockingIOError(11, "Resource temporarily unavailable")
        return real_fork()

    monkeypatch.setattr(run_module, "SEVERAL_BATCHES_BYTES", 1)
    monkeypatch.setattr(os, "fork", fork)
    with pytest.raises(WorkerError) as exc:
        run_lot([str(f)], batch_spectra=8, evaluate_processes=3)
    monkeypatch.setattr(os, "fork", real_fork)
    assert len(forks) == 2 and "could not be started (Resource temporarily unavailable)" in exc.value.message
    assert "--processes 1" in exc.value.message
    assert mp.active_children() == []  # the worker forked first was stopped and reaped


def test_without_pyarrow_text_files_start_no_workers_before_reading(tmp_path, monkeypatch):
    """Without pyarrow a large text block is converted by forked processes, which must not be
    forked beside a pool's threads: the workers are then started as before (at a second batch),
    not before the reading."""
    import importlib.util

    from lumeval.lots import run as run_module

    f = _wide_file(tmp_path / "wide.csv", n=20)
    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec", lambda name, *a: None if name == "pyarrow" else real(name, *a))
    assert not run_module._several_batches([str(f)], [False], [False], 1, 8)
    monkeypatch.setattr(run_module, "SEVERAL_BATCHES_BYTES", 1)
    assert not run_module._several_batches([str(f)], [False], [False], 1, 8)
    assert run_module._several_batches([str(f)], [False], [False], 9, 8)  # rows known (archives): yes
    monkeypatch.setattr(importlib.util, "find_spec", real)
    assert run_module._several_batches([str(f)], [False], [False], 1, 8)
