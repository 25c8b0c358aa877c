"""Archive benchmark (not a test): Parquet lots end to end against the engine alone, peak memory
of a large archive, and a local Dask cluster of 2 workers against one process.

Everything is measured in one run and printed side by side with its ratio:

1. **engine alone**: ``evaluate()`` on spectra already in memory (prepared, CPU time of this
   process, one BLAS thread), in spectra per CPU-second;
2. **lot from Parquet, end to end**: ``python -m lumeval lot ARCHIVE --quiet
   --samples-parquet OUT`` as a child process (reading, preparing, evaluating, judging, lot
   statistics, writing the per-sample Parquet), wall time, CPU time and peak resident memory
   (``ru_maxrss`` of that child, from ``os.wait4``); the ratio to the engine alone (target
   ≥ 70 %) and the peak memory (target < 1 GB for 1,000,000 spectra at 5 nm);
3. **Dask**: the same lot with ``--workers 2`` (a local cluster of 2 single-threaded worker
   processes) against the plain run (one process), wall time.

The archive is generated here (invented white-LED spectra: a blue pump and a broad phosphor
band with random spread), written row group by row group so that generating it does not need
the memory the benchmark measures.

Run: ``OPENBLAS_NUM_THREADS=1 .venv/bin/python bench/bench_archive.py [N] [SPACING_NM]
[DASK_N]`` (defaults: 200,000 spectra at 5 nm; the Dask comparison on the first 100,000).
Generating and judging 1,000,000 spectra takes about half an hour on the 2-core project
machine: pass 1000000 to run it.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

ROW_GROUP = 16384


def led_spectra(n: int, wl: np.ndarray, rng) -> np.ndarray:
    """n invented white-LED spectra (pump near 450 nm, phosphor near 600 nm, random spread)."""
    pump = rng.normal(450, 2, (n, 1))
    phos = rng.normal(600, 6, (n, 1))
    dose = rng.normal(1.6, 0.08, (n, 1))
    s = np.exp(-0.5 * ((wl - pump) / 10) ** 2) + dose * np.exp(-0.5 * ((wl - phos) / 55) ** 2)
    return s * rng.uniform(0.5, 2.0, (n, 1))


def write_archive(path: Path, n: int, step: float, seed: int = 1) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    from lumeval.spectra.archive import wavelength_column_name

    wl = np.arange(380.0, 780.0 + step / 2, step)
    rng = np.random.default_rng(seed)
    schema = pa.schema([("name", pa.string()), ("station", pa.string()), ("drive_mA", pa.int64())]
                       + [(wavelength_column_name(w), pa.float64()) for w in wl])
    with pq.ParquetWriter(path, schema, compression="zstd") as w:
        for start in range(0, n, ROW_GROUP):
            m = min(ROW_GROUP, n - start)
            v = led_spectra(m, wl, rng)
            cols = [pa.array([f"unit-{i:07d}" for i in range(start, start + m)]),
                    pa.array([f"ST-{i % 4}" for i in range(start, start + m)]),
                    pa.array(np.full(m, 350, dtype=np.int64))]
            cols += [pa.array(v[:, j]) for j in range(wl.size)]
            w.write_table(pa.Table.from_arrays(cols, schema=schema), row_group_size=ROW_GROUP)


def engine_rate(step: float, n: int = 20000) -> float:
    """Spectra per CPU-second of evaluate() on n spectra in memory (median of 3), in the chunks
    a lot uses (the engine's default)."""
    from lumeval.engine import DEFAULT_CHUNK, evaluate
    from lumeval.spectra.model import SpectrumSet
    from lumeval.spectra.prepare import prepare

    wl = np.arange(380.0, 780.0 + step / 2, step)
    v = led_spectra(n, wl, np.random.default_rng(2))
    s = prepare(SpectrumSet(wl, v, tuple(f"s{i}" for i in range(n)), tuple("g" for _ in range(n))))
    evaluate(s.subset(slice(0, 512)), keep_details=False)  # warm-up (tables, imports)
    times = []
    for _ in range(3):
        t = time.process_time()
        evaluate(s, chunk_size=DEFAULT_CHUNK, keep_details=False)
        times.append(time.process_time() - t)
    return n / sorted(times)[1]


def run_child(args: list[str]) -> tuple[float, float, float, int]:
    """(wall s, CPU s, peak RSS MB of the child, exit code): bench/run_all.py's measurement, which
    polls the child's own high-water mark (the ``ru_maxrss`` of a child started by vfork, as
    subprocess does, also reports this parent's peak: it inflated earlier figures)."""
    from run_all import run_child as measured  # here, not at the top: run_all imports this module

    return measured(args)


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 200_000
    step = float(sys.argv[2]) if len(sys.argv) > 2 else 5.0
    n_dask = int(sys.argv[3]) if len(sys.argv) > 3 else min(n, 100_000)
    print(f"load average at start: {os.getloadavg()[0]:.1f}; OPENBLAS_NUM_THREADS="
          f"{os.environ.get('OPENBLAS_NUM_THREADS', '(unset)')}")
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        arch = tmp / "lot.parquet"
        t = time.perf_counter()
        write_archive(arch, n, step)
        print(f"generated {n:,} spectra at {step:g} nm: {arch.stat().st_size / 1e6:.0f} MB Parquet "
              f"({time.perf_counter() - t:.0f} s)")
        rate = engine_rate(step)
        print(f"engine alone (20,000 spectra in memory, CPU): {rate:,.0f} spectra/CPU-s")
        wall, cpu, rss, code = run_child(["lot", str(arch), "--quiet", "--samples-parquet", str(tmp / "s.parquet")])
        e2e_wall, e2e_cpu = n / wall, n / cpu
        print(f"lot from Parquet, end to end ({n:,} spectra): {wall:.1f} s wall, {cpu:.1f} s CPU, "
              f"{e2e_wall:,.0f} spectra/s wall, {e2e_cpu:,.0f} spectra/CPU-s; peak RSS {rss:.0f} MB; exit {code}")
        print(f"  ratio end-to-end / engine: {e2e_cpu / rate:.0%} (CPU)   {e2e_wall / rate:.0%} (wall)   "
              f"target >= 70 %")
        print(f"  peak RSS: {rss:.0f} MB for {n:,} spectra ({rss * 1e6 / n / 1e3:.2f} kB per spectrum incl. the "
              f"~150 MB interpreter and libraries)   target < 1 GB for 1,000,000")
        if n_dask:
            small = tmp / "dask.parquet"
            write_archive(small, n_dask, step, seed=3)
            w1, _c1, r1, _ = run_child(["lot", str(small), "--quiet"])
            w2, _c2, r2, _ = run_child(["lot", str(small), "--quiet", "--workers", "2"])
            print(f"Dask ({n_dask:,} spectra): one process {w1:.1f} s wall; local cluster of 2 workers "
                  f"{w2:.1f} s wall (incl. ~3 s cluster start); speed-up {w1 / w2:.2f}x; client peak RSS "
                  f"{r1:.0f} MB vs {r2:.0f} MB")


if __name__ == "__main__":
    main()
