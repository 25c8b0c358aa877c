"""Generate lumeval's invented demo scenario (deterministic; re-running rewrites the same files).

Scenario (invented): the *Harbour Street Library* renovation replaces its reading-room
downlights. Five candidate downlights from invented suppliers were measured in an integrating
sphere; each file is one relative SPD at 1 nm from 380 to 780 nm. None of these are real products.

Each SPD is a physically plausible white-LED model: a blue InGaN pump (a Gaussian in photon
energy with a slightly longer red tail) plus broad phosphor bands (Gaussians in photon energy,
the usual shape of Ce- and Eu-doped phosphor emission), with the band amounts solved so that
the mix lands on a chosen CCT and Duv. A small amount of measurement noise is added.

Run: ``python spectra_demo/generate.py`` (``make demo`` does it).
"""

from __future__ import annotations

import os
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy.optimize import least_squares

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from lumeval.metrics.colorimetry import (
    planckian_uv,
    tristimulus,
    uv_from_XYZ,
)

WL = np.arange(380.0, 781.0, 1.0)
HC_EV_NM = 1239.841984  # h c in eV nm (CODATA 2018)


def band(wl, peak_nm, fwhm_nm, red_skew=0.0):
    """A Gaussian in photon energy (eV) centred on ``peak_nm`` with FWHM given at the peak in nm.

    ``red_skew`` > 0 widens the long-wavelength side, as LED and phosphor bands usually are.
    """
    e = HC_EV_NM / wl
    e0 = HC_EV_NM / peak_nm
    fwhm_e = HC_EV_NM / (peak_nm - fwhm_nm / 2) - HC_EV_NM / (peak_nm + fwhm_nm / 2)
    sigma = fwhm_e / 2.3548
    sig = np.where(e < e0, sigma * (1.0 + red_skew), sigma)
    g = np.exp(-0.5 * ((e - e0) / sig) ** 2)
    return g * (HC_EV_NM / wl**2)  # per nm, not per eV


def target_uv(cct_K, duv):
    """The CIE 1960 (u, v) point at ``duv`` from the Planckian locus at ``cct_K`` (normal offset)."""
    p = planckian_uv(cct_K)
    t = planckian_uv(cct_K * 1.001) - planckian_uv(cct_K * 0.999)
    n = np.array([-t[1], t[0]]) / np.hypot(*t)
    if n[1] < 0:
        n = -n
    return p + duv * n


@dataclass
class LedModel:
    pump_nm: float
    pump_fwhm: float
    bands: list  # (peak_nm, fwhm_nm, skew) of each phosphor band
    cct_K: float
    duv: float
    fixed_ratio: tuple | None = None  # relative weights within the phosphor blend, first two solved

    def spd(self):
        pump = band(WL, self.pump_nm, self.pump_fwhm, red_skew=0.35)
        comps = [band(WL, p, f, s) for (p, f, s) in self.bands]
        goal = target_uv(self.cct_K, self.duv)

        def mix(a):
            s = pump.copy()
            for k, c in enumerate(comps):
                s = s + np.exp(a[min(k, len(a) - 1)]) * c * (self.fixed_ratio[k] if self.fixed_ratio else 1.0)
            return s

        nfree = 2 if len(comps) >= 2 else 1

        def resid(a):
            uv = uv_from_XYZ(tristimulus(WL, mix(a)[None, :]))[0]
            return (uv - goal) * 1e3

        a0 = np.zeros(nfree)
        sol = least_squares(resid, a0)
        s = mix(sol.x)
        return s / s.max()


CANDIDATES = {
    # name: LED model (pump nm, pump FWHM nm, phosphor bands, target CCT K, target Duv)
    "candidate_A_aurora_3000K": LedModel(451, 19, [(530, 105, 0.2), (632, 88, 0.25)], 3000, -0.0005),
    "candidate_B_basicline_3000K": LedModel(450, 20, [(543, 112, 0.2), (620, 76, 0.2)], 3000, 0.001),
    "candidate_C_claritas_3000K": LedModel(452, 20, [(545, 112, 0.2), (615, 80, 0.2)], 3000, 0.001),
    "candidate_D_northlight_4000K": LedModel(450, 19, [(528, 100, 0.2), (630, 90, 0.25)], 4000, 0.0005),
    "candidate_E_verdant_2700K": LedModel(453, 21, [(555, 112, 0.25), (612, 78, 0.2)], 2700, 0.0085),
}


def write_csv_atomic(path: Path, header: str, wl, values) -> None:
    tmp = path.with_suffix(path.suffix + ".tmp")
    with open(tmp, "w", encoding="utf-8", newline="\n") as f:
        f.write(header + "\n")
        for w, v in zip(wl, values):
            f.write(f"{w:.0f},{v:.6f}\n")
    os.replace(tmp, path)


def main() -> None:
    rng = np.random.default_rng(20261202)
    out = HERE / "downlights"
    out.mkdir(exist_ok=True)
    for name, model in CANDIDATES.items():
        s = model.spd()
        s = s + rng.normal(0.0, 0.0015, s.size)  # spectrometer noise, 0.15 % of peak
        s = np.clip(s, 0.0, None)
        write_csv_atomic(out / f"{name}.csv", f"wavelength_nm,{name}", WL, s)
    print(f"wrote {len(CANDIDATES)} candidate SPDs to {out.relative_to(HERE.parent)}/")


if __name__ == "__main__":
    main()
