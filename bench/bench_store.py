"""Benchmark of the history store (not a test): recording and trends on SQLite and PostgreSQL.

Measures, on each backend:

1. recording one lot of 10,000 samples (every engine figure per sample, as ``lumeval lot
   --store`` records them) — one transaction;
2. recording 500 lots of 20 samples each (the time per lot);
3. a trend over those 500 lots (``lumeval.store.trend``: read the series and compute the X̄/s,
   EWMA charts and signals), and the same through the CLI (``lumeval history trend --format
   json``, a new process: start-up included);
4. recording a lot of 2,000 input files (5 samples) into a store that already holds 100 such
   lots of the same product (200,000 input rows), with the index on the files' SHA-256 and,
   in a copy of the store made as an earlier lumeval made it (the index dropped), without it:
   the lookup of earlier lots holding the same files, side by side (median of 3 recordings
   each, alternated), and their ratio; and the lookup query alone, the same way.

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


def many_file_lots(url: str, n_lots: int = 100, n_files: int = 2000) -> dict:
    """Item 4 of the module docstring: seconds to record a 2,000-file lot, with and without the
    index on lot_inputs.sha256 (the same store, the index dropped and re-created in turn)."""
    from dataclasses import replace

    from lumeval.store.db import add_missing_indexes, connect, parse_store_url

    rng = np.random.default_rng(2)

    def files_lot(key: str):
        ins = tuple((f"{key}/{i:05d}.csv", hashlib.sha256(f"{key}-{i}".encode()).hexdigest(), 1000)
                    for i in range(n_files))
        return replace(synthetic_record(5, key, rng), inputs=ins)

    for k in range(n_lots):
        record_lot(url, files_lot(f"filler{k:03d}"))
    su = parse_store_url(url)

    def use_index(label: str) -> bool:
        """The store with the file index (label "with ...") or without it; True with it."""
        with connect(su, write=True, action="bench") as conn:
            if label == "without it":
                conn.exec_driver_sql("DROP INDEX ix_lot_inputs_sha256")
            else:
                add_missing_indexes(conn)
        return label != "without it"

    times: dict[str, list[float]] = {"with the file index": [], "without it": []}
    for rep in range(3):
        for label in times:
            use_index(label)
            rec = files_lot(f"timed-{'indexed' if label.startswith('with ') else 'plain'}-{rep}")
            t = time.perf_counter()
            got = record_lot(url, rec)
            times[label].append(time.perf_counter() - t)
            assert got.created and got.n_inputs == n_files
    # the lookup alone (the query recording makes before it writes), on the store as it is now
    from lumeval.store.db import _tables
    from lumeval.store.record import _overlapping_lots

    probe = files_lot("filler000")  # shares all its files with one lot
    look: dict[str, list[float]] = {"with the file index": [], "without it": []}
    for _rep in range(3):
        for label in look:
            indexed = use_index(label)
            with connect(su, write=False, action="bench") as conn:
                t = time.perf_counter()
                got = _overlapping_lots(conn, _tables()[1], probe, indexed)
                look[label].append(time.perf_counter() - t)
            assert got[0][1] == n_files
    use_index("with the file index")
    rows = (n_lots + 6) * n_files
    out = {f"record {n_files:,}-file lot into ~{rows:,} input rows, {k}": float(np.median(v)) for k, v in times.items()}
    out.update({f"  of which the shared-file lookup, {k}": float(np.median(v)) for k, v in look.items()})
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pg-url", help="a PostgreSQL database to use (its lots tables must not exist yet)")
    args = ap.parse_args()
    results = {}
    with tempfile.TemporaryDirectory() as d:
        results["SQLite"] = run(str(Path(d) / "bench.db"), "SQLite")
        results["SQLite"].update(many_file_lots(str(Path(d) / "files.db")))
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
        if srv is not None:
            results["PostgreSQL"].update(many_file_lots(srv.url(srv.create_database())))
    finally:
        if srv is not None:
            srv.stop()
    keys = list(results["SQLite"])
    print(f"{'':78s}" + "".join(f"{b:>14s}" for b in results))
    for k in keys:
        cells = []
        for b in results:
            v = results[b].get(k)  # (item 4 is not run on a --pg-url database)
            cells.append(f"{'n/a':>14s}" if v is None else f"{v:14d}" if isinstance(v, int) else f"{v:12.3f} s")
        print(f"{k:78s}" + "".join(cells))
    a, b = results["SQLite"], results["PostgreSQL"]
    print(f"{'ratio PostgreSQL / SQLite, 10,000-sample lot':42s}{b[keys[0]] / a[keys[0]]:14.2f}")
    for name, res in results.items():
        for what, pick in (("recording a many-file lot", lambda k: k.startswith("record ") and "-file lot" in k),
                           ("its shared-file lookup", lambda k: k.startswith("  of which the shared-file lookup"))):
            pair = [v for k, v in res.items() if pick(k)]
            if len(pair) == 2:
                print(f"{name}: {what}, without / with the file index: {pair[1] / pair[0]:.1f}x")
    print(f"SQLite file after the run: {sqlite_bytes / 1e6:.1f} MB (10,500 + 10,000 samples)")


if __name__ == "__main__":
    main()
