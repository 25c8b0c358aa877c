"""The engine against an earlier build of itself, side by side in one run (a script, never a
test): the ratio of the two rates does not move with this shared machine's phase, which moves
the engine's absolute rate by ±10 % between runs of the same code.

The earlier build is checked out from this repository's history into a temporary git worktree
(default: 85cbdb5, the last commit before the engine work of issue 14 "Archives at speed", whose
target of 25,000 spectra per CPU-second at 1 nm was "about 3× today"); its bytecode is compiled
first. Each build's rate is measured in a child process of its own (``python -c`` with that
build first on ``sys.path``), the children alternating ``--pairs`` times: the same generated
white-LED spectra (bench/benchmark.py), ``evaluate(..., keep_details=False)`` as a lot runs it,
one BLAS thread, CPU time of the timed calls (median of three after one warm-up run over other
spectra, so that no table or cache of either build is filled by the spectra timed).

Run: ``OPENBLAS_NUM_THREADS=1 .venv/bin/python bench/bench_engine_baseline.py [--baseline REV]
[--n 8192] [--pairs 4] [--step 1]``.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
BASELINE = "85cbdb5"

#: The child: time the engine of the build first on sys.path (argv: root, n, step).
CHILD = r"""
import os, statistics, sys, time
root, n, step = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
sys.path.insert(0, os.path.join(os.environ["LUMEVAL_BENCH_REPO"], "bench"))
import numpy as np
from benchmark import WL, generate_spectra
sys.path[:] = [p for p in sys.path if os.path.abspath(p or ".") != os.environ["LUMEVAL_BENCH_REPO"]]
sys.path.insert(0, root)
import lumeval.engine
assert os.path.dirname(os.path.dirname(os.path.abspath(lumeval.engine.__file__))) == os.path.abspath(root)
from lumeval.engine import evaluate
from lumeval.spectra.model import SpectrumSet

def spectra(seed):
    v, wl = generate_spectra(n, seed), WL
    if step == 5:
        wl, v = WL[::5], np.ascontiguousarray(v[:, ::5])
    return SpectrumSet(wl, v, names=tuple(f"s{i}" for i in range(n)), sources=("x",) * n)

evaluate(spectra(1), keep_details=False)  # warm-up: imports, tables
runs = []
for k in range(3):
    s = spectra(10 + k)
    c = time.process_time()
    evaluate(s, keep_details=False)
    runs.append(time.process_time() - c)
print(n / statistics.median(runs))
"""


def rate(root: Path, n: int, step: int) -> float:
    env = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "LUMEVAL_BENCH_REPO": str(REPO)}
    env.pop("PYTHONPATH", None)
    out = subprocess.run([sys.executable, "-c", CHILD, str(root), str(n), str(step)], env=env, cwd=str(root),
                         capture_output=True, text=True, check=True)
    return float(out.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--baseline", default=BASELINE, help=f"the earlier build (a git revision; default {BASELINE})")
    ap.add_argument("--n", type=int, default=8192, help="spectra per timed run (default 8,192)")
    ap.add_argument("--pairs", type=int, default=4, help="alternated pairs of runs (default 4)")
    ap.add_argument("--step", type=int, choices=(1, 5), default=1, help="wavelength step in nm (default 1)")
    a = ap.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="lumeval_baseline_") as tmp:
        old = Path(tmp) / "baseline"
        subprocess.run(["git", "-C", str(REPO), "worktree", "add", "--detach", "-q", str(old), a.baseline], check=True)
        try:
            subprocess.run([sys.executable, "-m", "compileall", "-q", str(old / "lumeval")], check=True)
            rates: dict[str, list[float]] = {"baseline": [], "this build": []}
            print(f"engine at {a.step} nm, {a.n:,} spectra a run, {a.pairs} alternated pairs; load average "
                  f"{os.getloadavg()[0]:.1f}")
            for k in range(a.pairs):
                for label, root in (("baseline", old), ("this build", REPO)):
                    r = rate(root, a.n, a.step)
                    rates[label].append(r)
                    print(f"  pair {k + 1}: {label:<10} {r:9,.0f} spectra/CPU-s")
            b, t = statistics.median(rates["baseline"]), statistics.median(rates["this build"])
            ratios = [y / x for x, y in zip(rates["baseline"], rates["this build"])]
            print(f"baseline {a.baseline}: {b:,.0f}; this build: {t:,.0f} spectra/CPU-s (medians); ratio "
                  f"{t / b:.2f}x (pairs {min(ratios):.2f}-{max(ratios):.2f}x); load average {os.getloadavg()[0]:.1f}")
        finally:
            subprocess.run(["git", "-C", str(REPO), "worktree", "remove", "--force", str(old)], check=False)


if __name__ == "__main__":
    main()
