"""Generate lumeval's invented demo production lot (deterministic; re-running rewrites the same files).

Scenario (invented): the winning downlight of the *Harbour Street Library* tender is built as
the invented "Aurora AD-30" module, 3000 K. Production week 2026-w48 delivered a lot of 200
modules; QA measured every one in an integrating sphere (relative SPD, 1 nm, 380-780 nm). No
real product, supplier or measurement is represented.

The LED model is the one of ``spectra_demo/generate.py`` (blue InGaN pump plus two phosphor
bands, Gaussians in photon energy), imported from there. The nominal module is solved once for
3000 K, Duv −0.0005; each produced module then varies the way LED production does (common
practice, no source; the spreads are invented but of plausible size):

* pump peak wavelength: normal, σ = 1.0 nm around the nominal 451 nm (die binning spread), and
  pump FWHM ± 0.5 nm;
* phosphor dose (total phosphor relative to pump): normal, σ = 1.5 %;
* phosphor ratio drift: the red/green ratio drifts linearly by +4 % from the first to the last
  module of the week (a slowly changing phosphor slurry), plus σ = 1 % module to module;
* spectrometer noise: 0.1 % of peak.

Three modules are planted outliers: #037 has a pump die from a wrong bin (443 nm), #118 a
low phosphor dose (−12 %: bluish, high CCT), #164 a red-phosphor shortfall (−25 % red: low R9).

Files (``spectra_demo/lot_2026w48/``): modules 1-100 as one CSV each (``AD30-w48-001.csv`` ...),
modules 101-200 as two wide CSVs of 50 modules each (one per test station), so the demo
shows both layouts ``lumeval lot`` reads.

Run: ``python spectra_demo/generate_lot.py``; then
``lumeval lot spectra_demo/lot_2026w48 --criteria spectra_demo/lot_criteria.toml``.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

import numpy as np
from scipy.optimize import least_squares

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from generate import WL, band, target_uv, write_csv_atomic

from lumeval.metrics.colorimetry import tristimulus, uv_from_XYZ

OUT = HERE / "lot_2026w48"
N_MODULES = 200
PUMP_NM, PUMP_FWHM = 451.0, 19.0
GREEN = (530.0, 105.0, 0.2)
RED = (632.0, 88.0, 0.25)
TARGET_CCT, TARGET_DUV = 3000.0, -0.0005
OUTLIERS = {37: "wrong pump bin", 118: "low phosphor dose", 164: "red phosphor shortfall"}


def nominal_amounts() -> np.ndarray:
    """(green, red) band amounts that put the nominal module on 3000 K, Duv −0.0005."""
    pump = band(WL, PUMP_NM, PUMP_FWHM, red_skew=0.35)
    g, r = band(WL, *GREEN), band(WL, *RED)
    goal = target_uv(TARGET_CCT, TARGET_DUV)

    def resid(a):
        s = pump + np.exp(a[0]) * g + np.exp(a[1]) * r
        return (uv_from_XYZ(tristimulus(WL, s[None, :]))[0] - goal) * 1e3

    return np.exp(least_squares(resid, np.zeros(2)).x)


def module_spd(pump_nm, pump_fwhm, dose, red_over_green, amounts) -> np.ndarray:
    """Relative SPD (peak 1) of one module; ``dose`` scales both phosphors, ``red_over_green``
    scales red against green (1 = nominal)."""
    s = band(WL, pump_nm, pump_fwhm, red_skew=0.35)
    s = s + dose * amounts[0] * band(WL, *GREEN) + dose * red_over_green * amounts[1] * band(WL, *RED)
    return s / s.max()


def main() -> None:
    rng = np.random.default_rng(2026_48)
    amounts = nominal_amounts()
    OUT.mkdir(exist_ok=True)
    for old in OUT.glob("*.csv"):
        old.unlink()
    spds, names = [], []
    for k in range(1, N_MODULES + 1):
        pump = rng.normal(PUMP_NM, 1.0)
        fwhm = PUMP_FWHM + rng.uniform(-0.5, 0.5)
        dose = rng.normal(1.0, 0.015)
        ratio = 1.0 + 0.04 * (k - 1) / (N_MODULES - 1) + rng.normal(0.0, 0.01)
        if k == 37:
            pump = 443.0
        elif k == 118:
            dose *= 0.88
        elif k == 164:
            ratio *= 0.75
        s = module_spd(pump, fwhm, dose, ratio, amounts)
        s = np.clip(s + rng.normal(0.0, 0.001, s.size), 0.0, None)
        spds.append(s)
        names.append(f"AD30-w48-{k:03d}")

    for k in range(100):
        write_csv_atomic(OUT / f"{names[k]}.csv", f"wavelength_nm,{names[k]}", WL, spds[k])
    for station, start in (("A", 100), ("B", 150)):
        path = OUT / f"station_{station}_modules_{start + 1:03d}-{start + 50:03d}.csv"
        tmp = path.with_suffix(".csv.tmp")
        with open(tmp, "w", encoding="utf-8", newline="\n") as f:
            f.write("wavelength_nm," + ",".join(names[start : start + 50]) + "\n")
            block = np.array(spds[start : start + 50]).T
            for w, row in zip(WL, block):
                f.write(f"{w:.0f}," + ",".join(f"{v:.6f}" for v in row) + "\n")
        os.replace(tmp, path)
    print(
        f"wrote {N_MODULES} modules to {OUT.relative_to(HERE.parent)}/ (100 single files, 2 wide CSVs); "
        f"planted outliers: " + ", ".join(f"#{k:03d} {why}" for k, why in OUTLIERS.items())
    )


if __name__ == "__main__":
    main()
