"""Generate the invented demo's eight weekly lots of one product (deterministic; re-running rewrites them).

Scenario (invented): before the big week-48 lot, the *Aurora AD-30* module (3000 K) was sampled
every week: 30 modules per production week 2026-w40 ... 2026-w47, measured in the same sphere
(relative SPD, 1 nm, 380-780 nm). From week 45 the factory draws its red phosphor from a new
batch that is slightly weaker: the red/green phosphor ratio falls by 2.5 % per week (−2.5 %,
−5 %, −7.5 % in weeks 45, 46, 47). That is the planted drift: every module still passes its
criteria, but CCT creeps up (about +40 K a week), Duv rises towards the green and the lot
centroid heads for the edge of the ANSI 3000 K quadrangle; the control charts of
``lumeval history trend`` flag it from week 45 on. No real product, supplier or measurement is represented.

Module-to-module variation is the one of ``generate_lot.py`` (pump peak σ = 1 nm, pump FWHM
± 0.5 nm, phosphor dose σ = 1.5 %, red/green ratio σ = 1 %, spectrometer noise 0.1 % of peak),
with no drift inside a week and the same process from week to week until the red batch changes.

Files (``spectra_demo/weekly/``): one wide CSV per week, ``AD30-2026wNN.csv`` (a wavelength
column and one column per module).

Run: ``python spectra_demo/generate_weekly.py``; ``make demo`` then records the weeks into a
history store and draws the R9 trend.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from generate import WL
from generate_lot import PUMP_FWHM, PUMP_NM, module_spd, nominal_amounts

OUT = HERE / "weekly"
WEEKS = tuple(range(40, 48))
MODULES_PER_WEEK = 30
#: Red/green phosphor ratio of each week's batch (1 = nominal): the planted drift from week 45.
RED_RATIO = {w: 1.0 - 0.025 * max(0, w - 44) for w in WEEKS}


def main() -> None:
    rng = np.random.default_rng(2026_40)
    amounts = nominal_amounts()
    OUT.mkdir(exist_ok=True)
    for old in OUT.glob("*.csv"):
        old.unlink()
    for w in WEEKS:
        names, spds = [], []
        for k in range(1, MODULES_PER_WEEK + 1):
            pump = rng.normal(PUMP_NM, 1.0)
            fwhm = PUMP_FWHM + rng.uniform(-0.5, 0.5)
            dose = rng.normal(1.0, 0.015)
            ratio = RED_RATIO[w] * (1.0 + rng.normal(0.0, 0.01))
            s = module_spd(pump, fwhm, dose, ratio, amounts)
            spds.append(np.clip(s + rng.normal(0.0, 0.001, s.size), 0.0, None))
            names.append(f"AD30-w{w}-{k:02d}")
        path = OUT / f"AD30-2026w{w}.csv"
        tmp = path.with_suffix(".csv.tmp")
        with open(tmp, "w", encoding="utf-8", newline="\n") as f:
            f.write("wavelength_nm," + ",".join(names) + "\n")
            block = np.array(spds).T
            for wl, row in zip(WL, block):
                f.write(f"{wl:.0f}," + ",".join(f"{v:.6f}" for v in row) + "\n")
        os.replace(tmp, path)
    drift = ", ".join(f"w{w} {100 * (RED_RATIO[w] - 1):+.1f} %" for w in WEEKS if RED_RATIO[w] != 1.0)
    print(f"wrote {len(WEEKS)} weekly lots of {MODULES_PER_WEEK} modules to {OUT.relative_to(HERE.parent)}/; "
          f"planted drift of the red phosphor: {drift}")


if __name__ == "__main__":
    main()
