"""Generate the invented tunable-white demo (deterministic; re-running rewrites the same files).

Scenario (invented): for the *Harbour Street Library* renovation's study rooms, an invented
supplier offers the "Tidewell TW-2", a two-channel tunable-white downlight (a warm and a cool
LED channel) with a dim-to-warm mode. None of this is a real product. Files written to
``spectra_demo/tunable/``:

* ``tw2_channels.csv`` — the two channels, each at full drive, one column per channel
  (relative W/nm, the cool channel brighter), 1 nm, 380-780 nm;
* ``tw2_setpoint_<T>K.csv`` — the luminaire "measured" at five CCT setpoints. They are the
  linear mix lumeval computes for the setpoint plus what the linear model leaves out: the
  hotter the board (the more both channels are driven), the more the phosphors shift red and
  the blue pumps droop (invented: up to 1.5 nm and 4 %), the cool channel gains green at the
  6500 K setpoint, and the driver is calibrated on CCT; plus spectrometer noise;
* ``tw2_dim2warm_<L>pct.csv`` — the dim-to-warm mode at 100, 50, 25, 10 and 5 % output:
  the CCT falls from about 3000 K towards 2200 K as a third, amber-rich phosphor mix takes
  over (modelled as separate warm-dim spectra with a setting metadata line as well);
* ``tw2_setpoints_manifest.toml`` — the same setpoints listed in a manifest.

Run: ``python spectra_demo/generate_tunable.py`` (``make demo`` does it).
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
sys.path.insert(0, str(HERE))

from generate import WL, LedModel

from lumeval.spectra.model import SpectrumSet
from lumeval.tunable.mix import mix

OUT = HERE / "tunable"

WARM = LedModel(450, 19, [(540, 105, 0.2), (628, 86, 0.25)], 2640, -0.0012)
COOL = LedModel(451, 20, [(536, 108, 0.2), (625, 84, 0.25)], 6650, 0.0020)
SETPOINTS_K = (2700, 3500, 4000, 5000, 6500)
DIM_LEVELS = {100: (3000, 0.0002), 50: (2750, -0.0004), 25: (2500, -0.0010), 10: (2300, -0.0008), 5: (2200, 0.0065)}


def write_csv(path: Path, header: list[str], columns: list[np.ndarray], meta: dict | None = None) -> None:
    tmp = path.with_suffix(path.suffix + ".tmp")
    with open(tmp, "w", encoding="utf-8", newline="\n") as f:
        f.writelines(f"# {k}: {v}\n" for k, v in (meta or {}).items())
        f.write(",".join(header) + "\n")
        f.writelines(f"{w:.0f}," + ",".join(f"{c[i]:.6f}" for c in columns) + "\n" for i, w in enumerate(WL))
    os.replace(tmp, path)


def shifted(model: LedModel, shift_nm: float, pump_loss: float) -> np.ndarray:
    """The channel's spectrum with its phosphor bands shifted red and its pump reduced
    (what heat does; not part of lumeval's linear model)."""
    hot = LedModel(model.pump_nm, model.pump_fwhm, [(p + shift_nm, f, s) for p, f, s in model.bands], model.cct_K,
                   model.duv)
    base = model.spd()
    s = hot.spd()
    from generate import band

    pump = band(WL, model.pump_nm, model.pump_fwhm, red_skew=0.35)
    pump = pump / pump.max() * base.max()
    return np.clip(s - pump_loss * 0.5 * pump, 0.0, None)


def main() -> None:
    rng = np.random.default_rng(20261216)
    OUT.mkdir(exist_ok=True)
    warm, cool = WARM.spd(), 1.7 * COOL.spd()
    write_csv(OUT / "tw2_channels.csv", ["wavelength_nm", "warm", "cool"], [warm, cool],
              {"product": "Tidewell TW-2 tunable downlight (invented)", "drive": "each channel at full drive"})

    chans = SpectrumSet(WL, np.vstack([warm, cool]), ("warm", "cool"), ("warm", "cool"))
    res = mix(chans, np.array(SETPOINTS_K, dtype=float))
    manifest = ['# Setpoints of the measured TW-2 series (invented)', 'unit = "K"', "", "[settings]"]
    from generate import band

    for k, T in enumerate(SETPOINTS_K):
        w = res.weights[k]
        heat = float(w.sum() - 1.0)  # 0 with one channel on, 1 with both at full drive
        hot_warm = shifted(WARM, 1.5 * heat, 0.04 * heat)
        hot_cool = 1.7 * shifted(COOL, 1.5 * heat, 0.04 * heat)
        if T == 6500:  # the cool channel's green phosphor gains as its pump runs hot: the point drifts green
            hot_cool = hot_cool + 0.5 * band(WL, 536, 108, 0.2) * hot_cool.max()
        # the driver is calibrated on CCT: it finds the drive that reaches the setpoint CCT with the
        # channels as they really are when hot (solved here with lumeval's own mix)
        hot = SpectrumSet(WL, np.vstack([hot_warm, hot_cool]), ("warm", "cool"), ("warm", "cool"))
        wh = mix(hot, np.array([float(T)])).weights[0]
        s = wh[0] * hot_warm + wh[1] * hot_cool
        s = s / s.max()
        s = np.clip(s + rng.normal(0.0, 0.0015, s.size), 0.0, None)
        name = f"tw2_setpoint_{T}K"
        write_csv(OUT / f"{name}.csv", ["wavelength_nm", name], [s],
                  {"setpoint": f"{T} K", "instrument": "integrating sphere, 1 nm (invented)"})
        manifest.append(f'"{name}.csv" = {T}')
    tmp = OUT / "tw2_setpoints_manifest.toml.tmp"
    tmp.write_text("\n".join(manifest) + "\n", encoding="utf-8")
    os.replace(tmp, OUT / "tw2_setpoints_manifest.toml")

    for level, (T, duv) in DIM_LEVELS.items():
        m = LedModel(449, 19, [(548, 100, 0.2), (622, 82, 0.25)], T, duv)
        s = m.spd()
        s = np.clip(s + rng.normal(0.0, 0.0015, s.size), 0.0, None)
        name = f"tw2_dim2warm_{level:03d}pct"
        write_csv(OUT / f"{name}.csv", ["wavelength_nm", name], [s], {"dim level": f"{level} %"})
    print(f"wrote the TW-2 channels, {len(SETPOINTS_K)} setpoint and {len(DIM_LEVELS)} dim-to-warm spectra to "
          f"{OUT.relative_to(HERE.parent)}/")


if __name__ == "__main__":
    main()
