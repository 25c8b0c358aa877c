"""Benchmark: 1,000 Monte Carlo draws for one spectrum, every figure (target < 2 s).

Run: ``.venv/bin/python bench/bench_uncertainty.py [--draws 1000] [--repeat 3]``

Times :func:`lumeval.uncertainty.propagate` on demo candidate A with the default instrument
model: drawing the (1000, W) perturbed spectra, evaluating all of them with the vectorised
engine (chromaticity, CCT/Duv, CIE 13.3 R1..R14, CIE 224 / TM-30 with hue bins, photometric
ratios) and summarising every figure (mean, u, 95 % interval). One warm-up run first (imports,
table caches); the figure reported is the best and the median of the timed runs. This is a
measurement script, not a test: machine load changes the numbers.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from lumeval.spectra.model import SpectrumSet  # noqa: E402
from lumeval.uncertainty import InstrumentModel, MonteCarloSettings, propagate  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--draws", type=int, default=1000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    f = ROOT / "spectra_demo" / "downlights" / "candidate_A_aurora_3000K.csv"
    d = np.loadtxt(f, delimiter=",", skiprows=1)
    ss = SpectrumSet(d[:, 0], d[:, 1][None], ("candidate A",), (str(f),))
    settings = MonteCarloSettings(draws=args.draws, seed=1)
    t0 = time.perf_counter()
    res = propagate(ss, InstrumentModel(), settings)
    cold = time.perf_counter() - t0
    times, cpu = [], []
    for _ in range(args.repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        res = propagate(ss, InstrumentModel(), settings)
        times.append(time.perf_counter() - t0)
        cpu.append(time.process_time() - c0)
    print(f"Monte Carlo: {args.draws} draws x 1 spectrum, {len(res.quantities)} figures")
    print(f"  first run (imports, caches): {cold:.3f} s")
    print(f"  timed runs: best {min(times):.3f} s, median {statistics.median(times):.3f} s wall (target < 2 s); "
          f"CPU time of the process: median {statistics.median(cpu):.3f} s")
    if hasattr(os, "getloadavg"):
        print(f"  machine load average (1 min): {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    for name in ("x", "y", "cct_K", "duv", "Ra", "R9", "Rf", "Rg"):
        o = res.of(name)
        print(f"  {name:6s} {o['measured'][0]:12.5g}  u = {o['u'][0]:.3g}  95 % [{o['low'][0]:.6g}, {o['high'][0]:.6g}]")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
