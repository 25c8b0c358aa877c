"""Lots on Dask (lumeval.lots.dask_runner): the same results as a local run, on a LocalCluster
of worker processes and on a scheduler and worker started here with Dask's own commands
(127.0.0.1 only, always torn down).

Outside references: the demo lot's planted outliers and failing module are facts of the
generator (spectra_demo/generate_lot.py); the equality is against lumeval's own local run,
which tests/test_lot_run.py and tests/test_engine_equivalence.py tie to outside values.
Tolerances: none. Names, sources, verdicts, outlier flags, metadata and every float are
compared exactly: a Dask worker evaluates the same batches as a local run, with one BLAS thread
as a local run does (lumeval._workers.one_blas_thread), and every reference-table entry is
computed with row-independent products, whatever the process evaluated before
(lumeval.metrics.reference_table), so the claim is the same bits. (Until those two changes the
floats differed in the last bits, and this file allowed rtol 1e-12 plus 1e-10 absolute; it fails
on that code with no tolerance.)
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("distributed")
pytest.importorskip("pyarrow")

from lumeval.commands.lot import run_lot

from .test_lot_archive import DEMO, DEMO_CRITERIA, _criteria, demo_archive, empty_archive

REPO = Path(__file__).resolve().parents[1]
RTOL = 0.0  # exact (see the module docstring)
ATOL = 0.0


@pytest.fixture(scope="module")
def arch(tmp_path_factory):
    if not DEMO.is_dir():
        pytest.skip("demo lot not generated")
    return demo_archive(tmp_path_factory.mktemp("dask") / "lot.parquet", row_group_rows=16)


@pytest.fixture()
def small_partitions(monkeypatch):
    # 200 rows in row groups of 16 → partitions of 48 rows: five tasks spread over the workers
    from lumeval.spectra import archive

    monkeypatch.setattr(archive, "PARTITION_ROWS", 48)


def assert_same_run(a, b):
    assert a.names == b.names and a.sources == b.sources and a.warnings == b.warnings
    for k in a.figures:
        np.testing.assert_allclose(b.figures[k], a.figures[k], rtol=RTOL, atol=ATOL, equal_nan=True, err_msg=k)
    assert a.sample_verdicts == b.sample_verdicts
    assert np.array_equal(a.stats.outlier, b.stats.outlier)
    assert np.array_equal(a.stats.outside_validity, b.stats.outside_validity)
    assert a.stats.outlier_reasons == b.stats.outlier_reasons
    np.testing.assert_allclose(b.stats.d_upvp_centroid, a.stats.d_upvp_centroid, rtol=RTOL, atol=1e-15)
    for fa, fb in zip(a.stats.figures, b.stats.figures):
        assert (fa.name, fa.count, fa.undefined, fa.outside_validity) == (fb.name, fb.count, fb.undefined,
                                                                          fb.outside_validity)
        np.testing.assert_allclose([fb.mean, fb.std, fb.min, fb.max, fb.median, fb.p05, fb.p95],
                                   [fa.mean, fa.std, fa.min, fa.max, fa.median, fa.p05, fa.p95],
                                   rtol=RTOL, atol=ATOL, equal_nan=True, err_msg=fa.name)
    np.testing.assert_allclose(b.stats.max_pairwise_d_upvp, a.stats.max_pairwise_d_upvp, rtol=RTOL)
    assert a.stats.yield_ == b.stats.yield_
    assert [r.outcome for r in a.lot_results] == [r.outcome for r in b.lot_results]
    assert a.metadata.equals(b.metadata)
    assert a.exit_code == b.exit_code


def test_local_cluster_equals_local_run(arch, small_partitions):
    crit = _criteria()
    local = run_lot([arch], crit, batch_spectra=32)
    dist = run_lot([arch], crit, batch_spectra=32, workers=2)
    assert_same_run(local, dist)
    flagged = {dist.names[i] for i in np.flatnonzero(dist.stats.outlier)}
    assert {"AD30-w48-037", "AD30-w48-118", "AD30-w48-164"} <= flagged


def test_an_archive_without_rows_is_listed_as_locally(arch, tmp_path):
    empty = empty_archive(arch, tmp_path / "empty.parquet")
    local = run_lot([empty, arch], batch_spectra=64)
    dist = run_lot([empty, arch], batch_spectra=64, workers=1)
    assert dist.unreadable == local.unreadable and len(local.unreadable) == 1
    assert "the archive holds no rows" in dist.unreadable[0].message
    assert dist.names == local.names and dist.exit_code == local.exit_code == 2


def test_a_lots_own_parquet_table_in_the_folder_is_skipped_as_locally(arch, tmp_path):
    """An earlier lot's --samples-parquet table written into the folder of archives: skipped,
    on the cluster as locally (it has no wavelength columns: it was listed unreadable)."""
    from lumeval.frames import write_samples_parquet

    d = tmp_path / "lots"
    d.mkdir()
    shutil.copy(arch, d / "lot.parquet")
    write_samples_parquet(run_lot([arch], batch_spectra=64), d / "w47.parquet")
    local = run_lot([d], batch_spectra=64)
    dist = run_lot([d], batch_spectra=64, workers=1)
    assert len(local.unreadable) == len(dist.unreadable) == 0
    assert dist.skipped == local.skipped
    assert [s.reason for s in dist.skipped] == ["a lumeval Parquet table (lumeval.lot-samples), not a spectrum file"]
    assert dist.names == local.names and len(dist.names) == 200


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _dask_cli() -> list[str]:
    exe = Path(sys.executable).with_name("dask")
    if exe.exists():
        return [str(exe)]
    found = shutil.which("dask")
    if not found:
        pytest.skip("the dask command is not installed")
    return [found]


def _stop(proc: subprocess.Popen) -> None:
    if proc.poll() is None:
        os.killpg(proc.pid, signal.SIGTERM)
        try:
            proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(timeout=20)


def test_scheduler_and_worker_started_with_dasks_commands(arch, tmp_path):
    port = _free_port()
    addr = f"tcp://127.0.0.1:{port}"
    env = {**os.environ, "PYTHONPATH": str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    dask = _dask_cli()
    procs = []
    try:
        procs.append(subprocess.Popen([*dask, "scheduler", "--host", "127.0.0.1", "--port", str(port),
                                       "--no-dashboard"], env=env, cwd=tmp_path, stdout=subprocess.DEVNULL,
                                      stderr=subprocess.DEVNULL, start_new_session=True))
        procs.append(subprocess.Popen([*dask, "worker", addr, "--host", "127.0.0.1", "--nworkers", "1",
                                       "--nthreads", "1", "--no-dashboard"], env=env, cwd=tmp_path,
                                      stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True))
        from distributed import Client

        deadline = time.monotonic() + 90
        while True:  # wait until the worker has joined
            try:
                with Client(addr, timeout=5, set_as_default=False) as c:
                    if c.scheduler_info(n_workers=-1)["workers"]:
                        break
            except OSError:
                pass
            if time.monotonic() > deadline:
                pytest.fail("the Dask scheduler/worker did not start")
            time.sleep(0.5)
        out_local, out_dask = tmp_path / "local.json", tmp_path / "dask.json"
        base = [sys.executable, "-m", "lumeval", "lot", str(arch), "-c", str(DEMO_CRITERIA), "--quiet"]
        r1 = subprocess.run([*base, "--json", str(out_local)], capture_output=True, text=True, cwd=REPO, env=env,
                            timeout=300)
        r2 = subprocess.run([*base, "--json", str(out_dask), "--scheduler", addr], capture_output=True, text=True,
                            cwd=REPO, env=env, timeout=300)
        assert r1.returncode == r2.returncode == 1, (r1.stderr, r2.stderr)
    finally:
        for p in reversed(procs):
            _stop(p)
    a = json.loads(out_local.read_text(encoding="utf-8"))
    b = json.loads(out_dask.read_text(encoding="utf-8"))
    assert [s["name"] for s in a["samples"]] == [s["name"] for s in b["samples"]]
    assert [s["verdict"] for s in a["samples"]] == [s["verdict"] for s in b["samples"]]
    assert [s["metadata"] for s in a["samples"]] == [s["metadata"] for s in b["samples"]]
    assert [s["outlier"] for s in a["samples"]] == [s["outlier"] for s in b["samples"]]
    for k in ("cct_K", "duv", "Ra", "Rf"):
        np.testing.assert_allclose([s[k] for s in b["samples"]], [s[k] for s in a["samples"]], rtol=RTOL, atol=ATOL,
                                   err_msg=k)
    assert a["counts"] == b["counts"] and a["verdict"]["yield"] == b["verdict"]["yield"]


def test_refusals_are_one_line(arch, tmp_path):
    one = DEMO / "AD30-w48-001.csv"
    cases = [
        (["lot", str(one), "--workers", "1"], "is not a Parquet archive"),
        (["lot", str(arch), "--workers", "1", "--scheduler", "tcp://127.0.0.1:1"], "--scheduler and --workers both"),
        (["lot", str(arch), "--workers", "0"], "--workers must be 1 to 256"),
        (["lot", str(arch), "--scheduler", f"tcp://127.0.0.1:{_free_port()}"],
         "cannot reach the Dask scheduler"),
        # said at once (Dask's connect retried a refused connection for 10 s and said it timed out)
        (["lot", str(arch), "--scheduler", f"tcp://127.0.0.1:{_free_port()}"], "connection refused"),
        (["lot", str(arch), "--scheduler", "tcp://no-such-host.invalid:8786"], "cannot be resolved"),
    ]
    for args, expected in cases:
        r = subprocess.run([sys.executable, "-m", "lumeval", *args, "--quiet"], capture_output=True, text=True,
                           cwd=REPO, timeout=120)
        lines = r.stderr.strip().splitlines()
        assert r.returncode == 2 and len(lines) == 1 and expected in lines[0], (args, r.stderr)


def test_a_local_cluster_leaves_nothing_behind_and_keeps_quiet(arch, tmp_path):
    """`--workers N` starts a local cluster whose workers keep a scratch folder; Dask puts it in
    $TMPDIR/dask-scratch-space by default and leaves that folder and its lock files behind.
    lumeval gives the cluster a folder of the run's own and removes it (the command through
    the real CLI, with TMPDIR pointing at an empty folder). The scheduler's HTTP server took
    port 8787 (on the loopback) and, that port being taken, printed Dask's warning on stderr:
    here the port is held while the lot runs, and stderr stays empty."""
    tmp = tmp_path / "tmp"
    tmp.mkdir()
    env = {**os.environ, "TMPDIR": str(tmp)}
    holder = socket.socket()
    try:
        try:
            holder.bind(("127.0.0.1", 8787))
            holder.listen()
        except OSError:  # taken already: the condition this test sets up
            pass
        r = subprocess.run([sys.executable, "-m", "lumeval", "lot", str(arch), "--workers", "1", "--quiet",
                            "--json", str(tmp_path / "lot.json")], capture_output=True, text=True, cwd=REPO,
                           timeout=300, env=env)
    finally:
        holder.close()
    assert r.returncode in (0, 1), r.stderr
    assert (tmp_path / "lot.json").is_file()
    assert r.stderr == ""
    assert sorted(p.name for p in tmp.iterdir()) == []
