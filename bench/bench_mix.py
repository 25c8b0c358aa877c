"""Benchmark of channel mixes (not a test): `lumeval mix` over 2700-6500 K in 10 K steps.

381 setpoints of the demo's two-channel downlight (spectra_demo/tunable/tw2_channels.csv),
measured side by side:

1. the Python API (:func:`lumeval.tunable.api.mix_files`), median of repeated runs: solving the
   weights (bracket + bisection of CCT along the line) and evaluating every figure of the 381
   mixes in one engine call;
2. the same through the CLI in a new process (``lumeval mix ... --format json``; Python and
   lumeval start-up included);
3. for scale: evaluating the same 381 mixed spectra alone (``lumeval.engine.evaluate``), and
   three- and four-channel mixes over the same setpoints (a third, green channel and a fourth,
   red one, invented here), where the weights reach a target Duv and, with four, maximise Rf.

Run: ``python bench/bench_mix.py`` (``make bench`` runs it with the others).
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

CHANNELS = ROOT / "spectra_demo" / "tunable" / "tw2_channels.csv"
CCT = "2700:6500:10"


def timed(fn, repeat: int) -> tuple[float, object]:
    times, out = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times), out


def main() -> None:
    if not CHANNELS.exists():
        subprocess.run([sys.executable, str(ROOT / "spectra_demo" / "generate_tunable.py")], check=True)
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet
    from lumeval.tunable.api import mix_files, read_channels
    from lumeval.tunable.mix import mix, parse_setpoints

    mix_files([CHANNELS], "3000")  # warm-up: imports, tables
    t_api, rep = timed(lambda: mix_files([CHANNELS], CCT), 5)
    res = rep.result
    n = len(res)
    ok = int(res.reachable.sum())
    spectra = res.weights[res.reachable] @ res.channels.values
    ss = SpectrumSet(res.channels.wavelengths_nm, spectra, tuple(str(i) for i in range(ok)), ("",) * ok)
    t_eval, _ = timed(lambda: evaluate(ss), 5)

    cli = [sys.executable, "-m", "lumeval", "mix", str(CHANNELS), "--cct", CCT, "--format", "json"]
    times = []
    for _ in range(3):
        t = time.perf_counter()
        subprocess.run(cli, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=ROOT, check=False)
        times.append(time.perf_counter() - t)
    t_cli = statistics.median(times)

    chans, _ = read_channels([CHANNELS])
    wl = chans.wavelengths_nm
    green = np.exp(-0.5 * ((wl - 525.0) / 18.0) ** 2) * chans.values.max()
    red = np.exp(-0.5 * ((wl - 630.0) / 12.0) ** 2) * chans.values.max()
    three = SpectrumSet(wl, np.vstack([chans.values, green]), (*chans.names, "green"), (*chans.sources, "green"))
    four = SpectrumSet(wl, np.vstack([three.values, red]), (*three.names, "red"), (*three.sources, "red"))
    targets = parse_setpoints(CCT)
    t3, r3 = timed(lambda: mix(three, targets, duv=0.0), 1)
    t4, r4 = timed(lambda: mix(four, targets, duv=0.0, maximise="Rf"), 1)

    print(f"lumeval mix over {CCT.replace(':', '-', 1).replace(':', ' K in ')} K steps: {n} setpoints, {ok} reachable "
          "(two channels)")
    print(f"  Python API (mix_files)            {t_api:7.3f} s   {1e3 * t_api / n:6.2f} ms/setpoint")
    print(f"  CLI, new process (--format json)  {t_cli:7.3f} s   ({t_cli / t_api:.1f}x the API: start-up and JSON)")
    print(f"  engine.evaluate of the {ok} mixes  {t_eval:7.3f} s   ({t_api / t_eval:.2f}x: the solve costs the rest)")
    print(f"  three channels, target Duv 0      {t3:7.3f} s   {int(r3.reachable.sum())} reachable")
    print(f"  four channels, maximise Rf        {t4:7.3f} s   {int(r4.reachable.sum())} reachable "
          f"({t4 / max(t_api, 1e-9):.0f}x two channels)")


if __name__ == "__main__":
    main()
