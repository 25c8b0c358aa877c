"""Regenerate luxpy_reference.csv: luxpy 1.12.5 Rf, Rg for the CIE F and LED illuminants.

luxpy (GPLv3) is an independent general-purpose lighting library used only as a test oracle;
this file stores numbers it computed, not its code or data. Inputs are built exactly as in
tests/test_metrics_tm30.py: colour-science 0.4.7's CIE illuminant tables (5 nm, 380-780 nm)
and their linear interpolation to 1 nm.

Run: .venv/bin/python tests/data/tm30/make_luxpy_reference.py
"""

from __future__ import annotations

import os
import warnings

import numpy as np

NAMES = [f"FL{i}" for i in range(1, 13)] + [
    "LED-B1", "LED-B2", "LED-B3", "LED-B4", "LED-B5", "LED-BH1", "LED-RGB1", "LED-V1", "LED-V2",
]


def main() -> None:
    warnings.simplefilter("ignore")
    import colour
    import luxpy as lx

    wl5 = np.arange(380.0, 781.0, 5.0)
    v5 = np.array([np.asarray(colour.SDS_ILLUMINANTS[n].values, dtype=float) for n in NAMES])
    wl1 = np.arange(380.0, 781.0, 1.0)
    v1 = np.array([np.interp(wl1, wl5, r) for r in v5])
    lines = [f"# luxpy {lx.__version__} spd_to_cri: name,step_nm,Rf(iesrf-tm30-18),Rg(iesrf-tm30-18),"
             "Rf(cierf-224-2017)"]
    for step, wl, v in ((5, wl5, v5), (1, wl1, v1)):
        S = np.vstack([wl, v])
        Rf, Rg = lx.cri.spd_to_cri(S, cri_type="iesrf-tm30-18", out="Rf,Rg")
        Rf17 = lx.cri.spd_to_cri(S, cri_type="cierf-224-2017", out="Rf")
        for name, a, b, c in zip(NAMES, np.ravel(Rf), np.ravel(Rg), np.ravel(Rf17)):
            lines.append(f"{name},{step},{a:.6f},{b:.6f},{c:.6f}")
    out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "luxpy_reference.csv")
    tmp = out + ".tmp"
    with open(tmp, "w", encoding="utf-8") as fh:
        fh.write("\n".join(lines) + "\n")
    os.replace(tmp, out)


if __name__ == "__main__":
    main()
