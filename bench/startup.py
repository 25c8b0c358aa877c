"""Start-up benchmark (not a test): wall time of `lumeval --help` and of a single-file
`lumeval inspect`, both including Python start-up, measured side by side with a bare
`python -c pass` in the same run. Prints medians of repeated runs and the ratios.

Run: ``.venv/bin/python bench/startup.py`` (``make bench`` runs it with the others).
Targets (issue 2): --help under 0.3 s, single-file inspect under 1.5 s on the project machine.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
DEMO = sorted((REPO / "spectra_demo" / "downlights").glob("*.csv"))


def wall(cmd: list[str], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True, cwd=REPO)
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def main() -> None:
    repeat = int(sys.argv[1]) if len(sys.argv) > 1 else 7
    py = sys.executable
    base = wall([py, "-c", "pass"], repeat)
    helpt = wall([py, "-m", "lumeval", "--help"], repeat)
    insp = wall([py, "-m", "lumeval", "inspect", str(DEMO[0])], repeat)
    insp_json = wall([py, "-m", "lumeval", "inspect", "--format", "json", str(DEMO[0])], repeat)
    print(f"python -c pass          {base:6.3f} s")
    print(f"lumeval --help          {helpt:6.3f} s   ({helpt / base:5.1f} x bare python)   target < 0.3 s")
    print(f"lumeval inspect (1 file){insp:6.3f} s   ({insp / base:5.1f} x bare python)   target < 1.5 s")
    print(f"  ... --format json     {insp_json:6.3f} s")


if __name__ == "__main__":
    main()
