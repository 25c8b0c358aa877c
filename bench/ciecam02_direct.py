"""Measurement (not a test, not used by lumeval): a direct numpy CIECAM02 + CAM02-UCS forward pass
for the CIE 224:2017 / TM-30 viewing conditions, against colour-science 0.4.7's
``XYZ_to_CIECAM02`` + ``JMh_CIECAM02_to_CAM02UCS`` on arrays shaped as the engine uses them
((chunk, 99, 3) sample XYZ, (chunk, 3) white points). Prints the largest difference in J′a′b′
and the CPU time of both, to inform a change in lumeval/metrics/tm30.py (whose owner decides).

Equations: CIE 159:2004 (CIECAM02 forward model: CAT02, D = 1 when the illuminant is discounted,
Hunt-Pointer-Estévez, post-adaptation compression, a, b, h, e_t, A, J, t, C, M) with L_A = 100
cd/m², Y_b = 20, average surround (F = 1, c = 0.69, N_c = 1), as CIE 224:2017 specifies; CAM02-UCS
from Luo, Cui & Li (2006) Color Res. Appl. 31(4):320-330 (J′ = 1.7 J / (1 + 0.007 J),
M′ = ln(1 + 0.0228 M) / 0.0228, a′ = M′ cos h, b′ = M′ sin h).

Run: ``.venv/bin/python bench/ciecam02_direct.py``.
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

M_CAT02 = np.array([[0.7328, 0.4296, -0.1624], [-0.7036, 1.6975, 0.0061], [0.0030, 0.0136, 0.9834]])
M_HPE = np.array([[0.38971, 0.68898, -0.07868], [-0.22981, 1.18340, 0.04641], [0.0, 0.0, 1.0]])


def direct(XYZ, XYZ_w, L_A=100.0, Y_b=20.0):
    """CAM02-UCS (J′, a′, b′) of XYZ (N, K, 3) under whites XYZ_w (N, 3); D = 1, average surround."""
    Y_w = XYZ_w[:, 1:2]
    RGB_w = XYZ_w @ M_CAT02.T
    M = M_HPE @ np.linalg.inv(M_CAT02)
    k = 1.0 / (5.0 * L_A + 1.0)
    F_L = 0.2 * k**4 * (5.0 * L_A) + 0.1 * (1.0 - k**4) ** 2 * (5.0 * L_A) ** (1.0 / 3.0)
    n = Y_b / Y_w[:, 0]
    z = 1.48 + np.sqrt(n)
    N_bb = 0.725 * (1.0 / n) ** 0.2

    def compress(R):
        x = (F_L * np.abs(R) / 100.0) ** 0.42
        return np.sign(R) * 400.0 * x / (27.13 + x) + 0.1

    D = Y_w / RGB_w
    Rw = compress((RGB_w * D) @ M.T)
    Rp = compress(((XYZ @ M_CAT02.T) * D[:, None, :]) @ M.T)
    R, G, B = Rp[..., 0], Rp[..., 1], Rp[..., 2]
    a = R - 12.0 * G / 11.0 + B / 11.0
    b = (R + G - 2.0 * B) / 9.0
    h = np.arctan2(b, a) % (2 * np.pi)
    e_t = 0.25 * (np.cos(h + 2.0) + 3.8)
    A = (2.0 * R + G + B / 20.0 - 0.305) * N_bb[:, None]
    A_w = (2.0 * Rw[:, 0] + Rw[:, 1] + Rw[:, 2] / 20.0 - 0.305) * N_bb
    J = 100.0 * (A / A_w[:, None]) ** (0.69 * z[:, None])
    t = (50000.0 / 13.0 * N_bb[:, None] * e_t * np.hypot(a, b)) / (R + G + 21.0 / 20.0 * B)
    C = t**0.9 * np.sqrt(J / 100.0) * (1.64 - 0.29 ** n[:, None]) ** 0.73
    Mc = C * F_L**0.25
    Jp = 1.7 * J / (1.0 + 0.007 * J)
    Mp = np.log1p(0.0228 * Mc) / 0.0228
    return np.stack([Jp, Mp * np.cos(h), Mp * np.sin(h)], axis=-1)


def via_colour(colour, XYZ, XYZ_w):
    from colour.appearance import VIEWING_CONDITIONS_CIECAM02, XYZ_to_CIECAM02
    from colour.models import JMh_CIECAM02_to_CAM02UCS

    with colour.utilities.domain_range_scale("reference"):
        s = XYZ_to_CIECAM02(XYZ, XYZ_w[:, None, :], 100.0, 20.0, VIEWING_CONDITIONS_CIECAM02["Average"],
                            discount_illuminant=True, compute_H=False)
        return np.asarray(JMh_CIECAM02_to_CAM02UCS(np.stack([s.J, s.M, s.h], axis=-1)), dtype=float)


def main() -> None:
    from lumeval._colour import load

    colour = load()
    rng = np.random.default_rng(0)
    n = 256
    XYZ_w = np.column_stack([rng.uniform(90, 110, n), np.full(n, 100.0), rng.uniform(30, 110, n)])
    XYZ = rng.uniform(5, 60, (n, 99, 3))
    print(f"largest |ΔJ′a′b′| direct vs colour-science: {np.abs(direct(XYZ, XYZ_w) - via_colour(colour, XYZ, XYZ_w)).max():.2g}")
    for name, f in (("colour-science", lambda: via_colour(colour, XYZ, XYZ_w)), ("direct numpy", lambda: direct(XYZ, XYZ_w))):
        f()
        c = time.process_time()
        for _ in range(10):
            f()
        print(f"{name:15s} {(time.process_time() - c) / 10 * 1e3:6.2f} ms CPU per chunk of {n} spectra × 99 samples")


if __name__ == "__main__":
    main()
