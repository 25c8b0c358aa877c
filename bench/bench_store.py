"""Benchmark of the history store (not a test): recording and trends on SQLite and PostgreSQL.

Measures, on each backend:

1. recording one lot of 10,000 samples (every engine figure per sample, as ``lumeval lot
   --store`` records them) — one transaction;
2. recording 500 lots of 20 samples each (the time per lot);
3. a trend over those 500 lots (``lumeval.store.trend``: read the series and compute the X̄/s,
   EWMA charts and signals), and the same through the CLI (``lumeval history trend --format
   json``, a new process: start-up included).

PostgreSQL: a throwaway server started like the tests do (tests/_postgres.py: initdb/pg_ctl in
a temporary folder, unix socket only, fsync off), or ``--pg-url URL`` for a real one.

Run: ``python bench/bench_store.py`` (about a minute on a 2-core machine).
"""

from __future__ import annotations

import argparse
import hashlib
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from lumeval.engine import FIGURE_NAMES  # noqa: E402
from lumeval.store.record import LotRecord, record_lot  # noqa: E402
from lumeval.store.trend import trend  # noqa: E402


def synthetic_record(n: int, key: str, rng, shift: float = 0.0) -> LotRecord:
    figs = {k: rng.normal(50.0, 2.0, n) for k in FIGURE_NAMES}
    figs["R9"] = rng.normal(60.0 + shift, 3.0, n)
    sha = hashlib.sha256(key.encode()).hexdigest()
    return LotRecord(
        label=key, product="BENCH", criteria_file=None, criteria_sha256=None, identification={"lot": key},
        inputs=((f"{key}.csv", sha, 0),), verdict="pass", exit_code=0,
        counts={"samples": n, "passed": n, "failed": 0, "not_judged": 0}, yield_percent=100.0,
        centroid_upvp=(0.25, 0.52), statistics={"bench": True}, region=None, figures=figs,
        names=tuple(f"{key}-{i:05d}" for i in range(n)), sources=tuple(f"{key}.csv#{i}" for i in range(n)),
        sample_verdicts=("pass",) * n, outliers=(False,) * n, warnings=((),) * n, lumeval_version="bench")


def run(url: str, label: str) -> dict:
    rng = np.random.default_rng(1)
    out = {}
    big = synthetic_record(10_000, "big", rng)
    t = time.perf_counter()
    r = record_lot(url, big)
    out["record 10,000-sample lot"] = time.perf_counter() - t
    assert r.created
    small = [synthetic_record(20, f"lot{k:03d}", rng, shift=0.0 if k < 480 else 3.0) for k in range(500)]
    t = time.perf_counter()
    for rec in small:
        record_lot(url, rec)
    out["record 500 lots of 20 (per lot)"] = (time.perf_counter() - t) / 500
    t = time.perf_counter()
    tr = trend(url, "R9", baseline="2..101")
    out["trend over 501 lots (API)"] = time.perf_counter() - t
    assert len(tr.points) == 501
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    t = time.perf_counter()
    subprocess.run([sys.executable, "-m", "lumeval", "history", "trend", "--store", url, "--figure", "R9",
                    "--baseline", "2..101", "--format", "json"], check=True, capture_output=True, env=env)
    out["trend over 501 lots (CLI, new process)"] = time.perf_counter() - t
    out["signals found"] = len(tr.signals)
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pg-url", help="a PostgreSQL database to use (its lots tables must not exist yet)")
    args = ap.parse_args()
    results = {}
    with tempfile.TemporaryDirectory() as d:
        results["SQLite"] = run(str(Path(d) / "bench.db"), "SQLite")
        sqlite_bytes = sum(p.stat().st_size for p in Path(d).iterdir())
    srv = None
    try:
        if args.pg_url:
            pg = args.pg_url
        else:
            sys.path.insert(0, str(ROOT))
            from tests._postgres import PostgresServer

            srv = PostgresServer().start()
            pg = srv.url(srv.create_database())
        results["PostgreSQL"] = run(pg, "PostgreSQL")
    finally:
        if srv is not None:
            srv.stop()
    keys = list(results["SQLite"])
    print(f"{'':42s}" + "".join(f"{b:>14s}" for b in results))
    for k in keys:
        cells = []
        for b in results:
            v = results[b][k]
            cells.append(f"{v:14d}" if isinstance(v, int) else f"{v:12.3f} s")
        print(f"{k:42s}" + "".join(cells))
    a, b = results["SQLite"], results["PostgreSQL"]
    print(f"{'ratio PostgreSQL / SQLite, 10,000-sample lot':42s}{b[keys[0]] / a[keys[0]]:14.2f}")
    print(f"SQLite file after the run: {sqlite_bytes / 1e6:.1f} MB (10,500 + 10,000 samples)")


if __name__ == "__main__":
    main()
