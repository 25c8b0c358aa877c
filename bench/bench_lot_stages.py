"""Where a one-process Parquet lot's CPU time goes, stage by stage, measured inside one run (a
script, never a test).

Runs ``lumeval lot ARCHIVE --samples-parquet OUT --processes 1 --quiet`` in a child Python
exactly as ``python -m lumeval`` does, with a few functions wrapped to add up the CPU time
(``time.process_time``) spent in them:

* reading and preparing: the Parquet batches (``lumeval.lots.streaming.archive_batches``: decoding,
  the spectra matrix, ``prepare``), timed inside each step of the generator;
* the engine (``lumeval.engine.evaluate``);
* the rest of each batch's evaluation (``lumeval.lots.streaming.evaluate_batch`` less the engine:
  figures taken out of the evaluation, ANSI category and SDCM steps, per-sample clauses);
* adding each batch to the lot record (``LotAccumulator.add``);
* the lot statistics and verdicts (``LotAccumulator.finish``);
* writing the per-sample Parquet (``lumeval.frames.write_samples_parquet``);
* the rest: interpreter start-up, imports, the CLI, the terminal summary.

The stages' sum is the child's CPU time; each stage's share and µs per spectrum are printed. The
archive is generated (bench/bench_archive.py) unless one is given.

Run: ``OPENBLAS_NUM_THREADS=1 .venv/bin/python bench/bench_lot_stages.py [--n 200000] [--archive FILE]``
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

BENCH = Path(__file__).resolve().parent
REPO = BENCH.parent

DRIVER = r"""
import atexit, json, os, sys, time
cpu = {}

def timed(owner, name, key):
    f = getattr(owner, name)
    def wrapper(*a, **k):
        c = time.process_time()
        try:
            return f(*a, **k)
        finally:
            cpu[key] = cpu.get(key, 0.0) + time.process_time() - c
    setattr(owner, name, wrapper)

def timed_generator(owner, name, key):
    f = getattr(owner, name)
    def wrapper(*a, **k):
        it = f(*a, **k)
        while True:
            c = time.process_time()
            try:
                item = next(it)
            except StopIteration:
                return
            finally:
                cpu[key] = cpu.get(key, 0.0) + time.process_time() - c
            yield item
    setattr(owner, name, wrapper)

import lumeval.engine, lumeval.frames, lumeval.lots.streaming as streaming
timed(lumeval.engine, "evaluate", "engine")
timed(streaming, "evaluate_batch", "batch")
timed_generator(streaming, "archive_batches", "reading and preparing")
timed(streaming.LotAccumulator, "add", "adding to the lot record")
timed(streaming.LotAccumulator, "finish", "lot statistics and verdicts")
timed(lumeval.frames, "write_samples_parquet", "writing the per-sample Parquet")
atexit.register(lambda: open(os.environ["LUMEVAL_BENCH_STAGES"], "w").write(json.dumps(cpu)))
sys.argv = ["lumeval", *sys.argv[1:]]
import runpy
runpy.run_module("lumeval", run_name="__main__", alter_sys=True)
"""


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--n", type=int, default=200_000, help="spectra of the generated archive (default 200,000)")
    ap.add_argument("--archive", type=Path, help="an existing archive instead of a generated one")
    a = ap.parse_args(argv)
    sys.path.insert(0, str(BENCH))
    from run_all import compile_bytecode

    note = compile_bytecode()
    if note:
        print(f"({note})")
    env = {**os.environ, "PYTHONPATH": str(REPO), "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"}
    with tempfile.TemporaryDirectory(prefix="lumeval_stages_") as tmp_name:
        tmp = Path(tmp_name)
        arch = a.archive
        if arch is None:
            from bench_archive import write_archive

            arch = tmp / "archive.parquet"
            write_archive(arch, a.n, 5.0)
        import pyarrow.parquet as pq

        n = pq.ParquetFile(arch).metadata.num_rows
        env["LUMEVAL_BENCH_STAGES"] = str(tmp / "stages.json")
        p = subprocess.Popen([sys.executable, "-c", DRIVER, "lot", str(arch), "--samples-parquet", str(tmp / "s.parquet"),
                              "--processes", "1", "--quiet"], cwd=REPO, env=env, stdout=subprocess.DEVNULL)
        _, status, ru = os.wait4(p.pid, 0)
        total = ru.ru_utime + ru.ru_stime
        cpu = json.loads((tmp / "stages.json").read_text())
    cpu["batch"] -= cpu["engine"]
    stages = {"engine": cpu.pop("engine"), "the rest of each batch's evaluation": cpu.pop("batch"), **cpu}
    stages["the rest (start-up, imports, CLI, summary)"] = total - sum(stages.values())
    print(f"one-process Parquet lot of {n:,} spectra at 5 nm: {total:.2f} CPU-s (exit "
          f"{os.waitstatus_to_exitcode(status)}), {n / total:,.0f} spectra/CPU-s")
    for k, v in stages.items():
        print(f"  {k:<45} {v:7.2f} s  {v / total:5.1%}  {v / n * 1e6:6.2f} us/spectrum")
    print(f"  the engine ran at {n / stages['engine']:,.0f} spectra/CPU-s inside the run; outside it "
          f"{(total - stages['engine']) / n * 1e6:.1f} us/spectrum")


if __name__ == "__main__":
    main()
