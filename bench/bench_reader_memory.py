"""Measurement: peak memory and time of the text reader on large irregular CSV files.

Run: ``.venv/bin/python bench/bench_reader_memory.py [--rows 1000000 100000]``

For each row count, writes a CSV of that many rows on an irregular wavelength grid (about
21 bytes per row: 21 MB for 10^6 rows) into a temporary folder, then reads it with
:func:`lumeval.spectra.read.read_spectra` in a fresh Python process and prints the wall time,
the process's peak resident memory (``ru_maxrss``), the baseline of a process that only imported
the reader, and the ratio (peak − baseline) / file size side by side. Reading only: preparing
the spectrum for computation (resampling) is measured separately. This is a measurement script,
not a test: machine load changes the numbers.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

CHILD = """
import resource, sys, time
from lumeval.spectra.read import read_spectra
if sys.argv[1] != "-":
    t = time.perf_counter()
    s = read_spectra(sys.argv[1])
    dt = time.perf_counter() - t
else:
    dt = 0.0
print(dt, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)
"""


GEN = """
import sys
import numpy as np
n, path = int(sys.argv[1]), sys.argv[2]
rng = np.random.default_rng(1)
with open(path, "w", encoding="utf-8") as fh:
    fh.write("wavelength (nm),irradiance\\n")
    for k in range(0, n, 100_000):
        m = min(100_000, n - k)
        wl = 380 + 400 * (np.arange(k, k + m) + rng.uniform(0, 0.5, m)) / n
        v = rng.uniform(0.1, 1, m)
        fh.write("".join(f"{a:.7f},{b:.6f}\\n" for a, b in zip(wl, v)))
"""


def child(arg: str) -> tuple[float, float]:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = subprocess.run([sys.executable, "-c", CHILD, arg], capture_output=True, text=True, env=env, check=True)
    dt, rss = out.stdout.split()
    return float(dt), float(rss)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--rows", type=int, nargs="+", default=[1_000_000, 100_000])
    args = ap.parse_args()
    _, base = child("-")
    print(f"baseline (python + numpy + reader imported): {base:.0f} MB")
    print(f"{'rows':>10} {'file MB':>8} {'time s':>7} {'peak MB':>8} {'(peak-base)/file':>17}")
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.rows:
            f = Path(tmp) / f"irregular_{n}.csv"
            # written by another process: a child's peak RSS on Linux starts from its parent's
            # at fork, so this process must stay small
            subprocess.run([sys.executable, "-c", GEN, str(n), str(f)], check=True)
            size = f.stat().st_size / 1e6
            dt, rss = child(str(f))
            print(f"{n:>10} {size:>8.1f} {dt:>7.2f} {rss:>8.0f} {(rss - base) / size:>17.1f}")


if __name__ == "__main__":
    main()
