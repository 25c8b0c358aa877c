"""Where a one-process Parquet lot's CPU time goes, stage by stage, measured inside one run (a
script, never a test).

Runs ``lumeval lot ARCHIVE --samples-parquet OUT --processes 1 --quiet`` in a child Python
exactly as ``python -m lumeval`` does, through bench/run_all.py's ``STAGE_TIMER`` (the driver
its Parquet share uses), which adds up the CPU time (``time.process_time``) spent in:

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
import sys
import tempfile
from pathlib import Path

BENCH = Path(__file__).resolve().parent


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--n", type=int, default=200_000, help="spectra of the generated archive (default 200,000)")
    ap.add_argument("--archive", type=Path, help="an existing archive instead of a generated one")
    ap.add_argument("--no-samples", action="store_true", help="the lot alone, without --samples-parquet")
    a = ap.parse_args(argv)
    sys.path.insert(0, str(BENCH))
    from run_all import compile_bytecode, run_child  # the driver: run_all.STAGE_TIMER

    note = compile_bytecode()
    if note:
        print(f"({note})")
    with tempfile.TemporaryDirectory(prefix="lumeval_stages_") as tmp_name:
        tmp = Path(tmp_name)
        arch = a.archive
        if arch is None:
            from bench_archive import write_archive

            arch = tmp / "archive.parquet"
            write_archive(arch, a.n, 5.0)
        import pyarrow.parquet as pq

        n = pq.ParquetFile(arch).metadata.num_rows
        out = [] if a.no_samples else ["--samples-parquet", str(tmp / "s.parquet")]
        _, total, _, code = run_child(["lot", str(arch), *out, "--processes", "1", "--quiet"], tmp / "stages.json")
        cpu = json.loads((tmp / "stages.json").read_text())
    cpu["batch"] -= cpu["engine"]
    stages = {"engine": cpu.pop("engine"), "the rest of each batch's evaluation": cpu.pop("batch"), **cpu}
    stages["the rest (start-up, imports, CLI, summary)"] = total - sum(stages.values())
    what = "without a per-sample file" if a.no_samples else "with --samples-parquet"
    print(f"one-process Parquet lot of {n:,} spectra at 5 nm ({what}): {total:.2f} CPU-s (exit {code}), "
          f"{n / total:,.0f} spectra/CPU-s")
    for k, v in stages.items():
        print(f"  {k:<45} {v:7.2f} s  {v / total:5.1%}  {v / n * 1e6:6.2f} us/spectrum")
    print(f"  the engine ran at {n / stages['engine']:,.0f} spectra/CPU-s inside the run; outside it "
          f"{(total - stages['engine']) / n * 1e6:.1f} us/spectrum")


if __name__ == "__main__":
    main()
