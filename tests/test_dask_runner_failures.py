"""Lots on Dask when names repeat, files break part-way and the cluster itself fails
(lumeval.lots.dask_runner): the same samples, names and unreadable entries as a local run, and a
failure of the cluster stops the lot without output (exit 2, one line). 127.0.0.1 only; every
cluster started here is closed.

Outside references: none needed; the reference is lumeval's own local run (tests/test_lot_run.py
ties it to outside values) and the documented rules of docs/lots.md.
"""

from __future__ import annotations

import json
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest

pytest.importorskip("distributed")
pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

from lumeval.errors import UsageError, WorkerError  # noqa: E402
from lumeval.lots import dask_runner  # noqa: E402
from lumeval.lots.dask_runner import run_lot_dask  # noqa: E402
from lumeval.lots.run import run_lot  # noqa: E402

from .test_lot_archive import DEMO, demo_archive  # noqa: E402

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def arch(tmp_path_factory):
    if not DEMO.is_dir():
        pytest.skip("demo lot not generated")
    return demo_archive(tmp_path_factory.mktemp("daskf") / "lot.parquet", row_group_rows=8)


@pytest.fixture(scope="module")
def cluster():
    from distributed import Client, LocalCluster

    c = LocalCluster(n_workers=1, threads_per_worker=1, processes=True, host="127.0.0.1", dashboard_address=None,
                     silence_logs=40)
    client = Client(c, set_as_default=False)
    try:
        yield c, client
    finally:
        client.close()
        c.close()


@pytest.fixture()
def small_partitions(monkeypatch):
    from lumeval.spectra import archive

    monkeypatch.setattr(archive, "PARTITION_ROWS", 16)  # 40 rows in groups of 8 → 3 partitions


def _sub(arch: Path, path: Path, rows: int, *, names=None, null_at=None) -> Path:
    t = pq.read_table(arch).slice(0, rows)
    if names is not None or null_at is not None:
        col = list(names) if names is not None else t.column("name").to_pylist()
        if null_at is not None:
            col[null_at] = None
        t = t.set_column(t.schema.get_field_index("name"), "name", pa.array(col, pa.string()))
    pq.write_table(t, path, row_group_size=8)
    return path


def _same(local, dist):
    assert tuple(dist.names) == tuple(local.names)
    assert tuple(dist.sources) == tuple(local.sources)
    assert tuple(dist.warnings) == tuple(local.warnings)
    assert dist.unreadable == local.unreadable
    assert dist.read_paths == local.read_paths
    assert dist.exit_code == local.exit_code


def test_repeated_names_are_made_unique_as_locally(arch, tmp_path, cluster, small_partitions):
    a = _sub(arch, tmp_path / "a.parquet", 40, names=[f"d-{i % 7:05d}" for i in range(40)])
    b = _sub(arch, tmp_path / "b.parquet", 10, names=[f"d-{i:05d}" for i in range(10)])
    local = run_lot([a, b], batch_spectra=8)
    dist = run_lot_dask([a, b], batch_spectra=8, client=cluster[1])
    _same(local, dist)
    assert len(set(dist.names)) == 50 and "d-00000 (2)" in dist.names
    i = list(dist.names).index("d-00000 (2)")
    assert "named 'd-00000 (2)': another spectrum of this run is already named 'd-00000'" in dist.warnings[i]


def test_repeated_names_cli_outputs_equal_local(arch, tmp_path):
    a = _sub(arch, tmp_path / "a.parquet", 12, names=["d-00000"] * 12)
    outs = {}
    for mode, extra in (("local", []), ("dask", ["--workers", "1"])):
        r = subprocess.run([sys.executable, "-m", "lumeval", "lot", str(a), "--quiet", "--json",
                            str(tmp_path / f"{mode}.json"), "--samples-csv", str(tmp_path / f"{mode}.csv"), *extra],
                           capture_output=True, text=True, cwd=REPO, timeout=300)
        assert r.returncode == 0, r.stderr
        outs[mode] = (json.loads((tmp_path / f"{mode}.json").read_text(encoding="utf-8"))["samples"],
                      (tmp_path / f"{mode}.csv").read_text(encoding="utf-8"))
    assert outs["dask"][0] == outs["local"][0]
    assert outs["dask"][1] == outs["local"][1]
    assert "d-00000 (12)" in outs["dask"][1]


def test_an_error_part_way_keeps_what_was_read_before_as_locally(arch, tmp_path, cluster, small_partitions):
    # 40 rows, row groups of 8, partitions of 16 rows: the null name at row 21 is in the second
    # partition; batches of 4 rows: rows 1-20 kept, 21-40 dropped (the third partition too)
    bad = _sub(arch, tmp_path / "bad.parquet", 40, null_at=20)
    good = _sub(arch, tmp_path / "good.parquet", 8, names=[f"g{i}" for i in range(8)])
    local = run_lot([bad, good], batch_spectra=4)
    dist = run_lot_dask([bad, good], batch_spectra=4, client=cluster[1])
    _same(local, dist)
    assert len(dist) == 28 and len(dist.unreadable) == 1
    assert "row 21 has no name" in dist.unreadable[0].message


def test_relative_paths_are_opened_from_the_clients_folder(arch, tmp_path, cluster, monkeypatch):
    """A worker whose working folder differs reads the file the client named (sent absolute),
    and sources and messages show the path as given, as locally."""
    d = tmp_path / "rel"
    d.mkdir()
    _sub(arch, d / "x.parquet", 12, null_at=9)
    monkeypatch.chdir(d)
    local = run_lot(["x.parquet"], batch_spectra=4)
    dist = run_lot_dask(["x.parquet"], batch_spectra=4, client=cluster[1])
    _same(local, dist)
    assert dist.sources[0] == "x.parquet#row 1" and len(dist) == 8


def _poisoned_cluster():
    """A LocalCluster whose only worker cannot import pyarrow (as on a machine without it)."""
    from distributed import Client, LocalCluster

    c = LocalCluster(n_workers=1, threads_per_worker=1, processes=True, host="127.0.0.1", dashboard_address=None,
                     silence_logs=50)
    client = Client(c, set_as_default=False)

    def no_pyarrow():
        for k in [k for k in sys.modules if k == "pyarrow" or k.startswith("pyarrow.")]:
            del sys.modules[k]
        sys.modules["pyarrow"] = None  # type: ignore[assignment]
        sys.modules["pyarrow.parquet"] = None  # type: ignore[assignment]

    client.run(no_pyarrow)
    return c, client


def test_a_worker_without_pyarrow_stops_the_lot_and_writes_nothing(arch, tmp_path):
    a = _sub(arch, tmp_path / "a.parquet", 8)
    c, client = _poisoned_cluster()
    try:
        with pytest.raises(WorkerError) as e:
            run_lot_dask([a], client=client)
        msg = e.value.message
        assert "the Dask cluster failed" in msg and "pyarrow" in msg and "on worker tcp://127.0.0.1:" in msg
        assert "unfinished outputs were not written" in msg
        out = tmp_path / "out"
        out.mkdir()
        for ext in ("json", "csv"):
            (out / f"o.{ext}").write_text("SENTINEL", encoding="utf-8")
        r = subprocess.run([sys.executable, "-m", "lumeval", "lot", str(a), "--quiet", "--json", str(out / "o.json"),
                            "--samples-csv", str(out / "o.csv"), "--scheduler", c.scheduler_address],
                           capture_output=True, text=True, cwd=REPO, timeout=300)
    finally:
        client.close()
        c.close()
    lines = r.stderr.strip().splitlines()
    assert r.returncode == 2 and len(lines) == 1 and "the Dask cluster failed" in lines[0], r.stderr
    assert sorted(p.name for p in out.iterdir()) == ["o.csv", "o.json"]
    assert all((out / f"o.{x}").read_text(encoding="utf-8") == "SENTINEL" for x in ("json", "csv"))


def test_a_cancelled_task_stops_the_lot(arch, tmp_path, cluster, monkeypatch):
    a = _sub(arch, tmp_path / "a.parquet", 8)

    def cancelled(*args, **kwargs):
        from distributed.client import FutureCancelledError

        raise FutureCancelledError("x", reason="scheduler-connection-lost", msg="lost")

    monkeypatch.setattr(dask_runner, "_run_tasks", cancelled)
    with pytest.raises(WorkerError, match=r"the Dask cluster failed .*FutureCancelledError"):
        run_lot_dask([a], client=cluster[1])


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.mark.parametrize("address, expected", [
    ("foo", "has no scheme"),
    ("tcp://127.0.0.1", "has no port"),
    ("http://127.0.0.1:8786", "uses http://"),
    ("inproc://127.0.0.1/1/2", "uses inproc://"),
    ("ucx://127.0.0.1:8786", "uses ucx://"),
    ("tls://127.0.0.1:8786", "no TLS settings"),
])
def test_bad_scheduler_addresses_are_one_line_and_end_at_once(arch, address, expected):
    t = time.monotonic()
    r = subprocess.run([sys.executable, "-m", "lumeval", "lot", str(arch), "--quiet", "--scheduler", address],
                       capture_output=True, text=True, cwd=REPO, timeout=120)
    lines = r.stderr.strip().splitlines()
    assert r.returncode == 2 and len(lines) == 1 and expected in lines[0], r.stderr
    assert time.monotonic() - t < 15


def test_a_service_that_is_not_dask_is_refused_within_the_deadline(arch, monkeypatch):
    monkeypatch.setattr(dask_runner, "CONNECT_TIMEOUT_S", 1)
    with socket.socket() as srv:  # accepts and never answers
        srv.bind(("127.0.0.1", 0))
        srv.listen()
        t = time.monotonic()
        with pytest.raises(UsageError, match="cannot reach the Dask scheduler"):
            run_lot_dask([arch], scheduler=f"tcp://127.0.0.1:{srv.getsockname()[1]}")
    assert time.monotonic() - t < 10


def test_a_scheduler_without_workers_is_refused_within_the_deadline(arch, monkeypatch):
    from distributed import LocalCluster

    monkeypatch.setattr(dask_runner, "WORKERS_TIMEOUT_S", 1)
    c = LocalCluster(n_workers=0, processes=True, host="127.0.0.1", dashboard_address=None, silence_logs=50)
    try:
        t = time.monotonic()
        with pytest.raises(UsageError, match="has no worker"):
            run_lot_dask([arch], scheduler=c.scheduler_address)
        assert time.monotonic() - t < 15
    finally:
        c.close()
