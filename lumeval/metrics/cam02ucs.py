"""CIECAM02 forward model and CAM02-UCS for the fixed viewing conditions of CIE 224:2017 and
ANSI/IES TM-30, vectorised over sources and samples.

Sources: CIE 159:2004 *A colour appearance model for colour management systems: CIECAM02*;
Moroney et al. (2002) "The CIECAM02 color appearance model", Proc. IS&T/SID 10th Color
Imaging Conference, 23-27; Luo, Cui & Li (2006) "Uniform colour spaces based on CIECAM02
colour appearance model", Color Res. Appl. 31(4):320-330. Tested against colour-science's
``XYZ_to_CIECAM02`` + ``JMh_CIECAM02_to_CAM02UCS`` (tests/test_metrics_tm30_cam02.py).
Used by :mod:`lumeval.metrics.tm30` (which re-exports :func:`cam02ucs_cie224`).
"""

from __future__ import annotations

from typing import cast

import numpy as np
from numpy.typing import ArrayLike

from ._rowwise import mm

#: CIECAM02 viewing conditions of CIE 224:2017 / TM-30-18: adapting luminance (cd/m²),
#: relative background luminance, surround; complete adaptation (D = 1).
L_A = 100.0
Y_B = 20.0

#: CAT02 matrix (CIE 159:2004; Moroney et al. 2002), XYZ -> sharpened RGB.
_M_CAT02 = np.array([[0.7328, 0.4296, -0.1624], [-0.7036, 1.6975, 0.0061], [0.0030, 0.0136, 0.9834]])
#: Hunt-Pointer-Estévez matrix (CIE 159:2004), XYZ -> cone-like RGB.
_M_HPE = np.array([[0.38971, 0.68898, -0.07868], [-0.22981, 1.18340, 0.04641], [0.0, 0.0, 1.0]])
#: HPE · CAT02⁻¹: adapted sharpened RGB_c -> R′G′B′ (CIE 159:2004).
_M_CAT02_TO_HPE = _M_HPE @ np.linalg.inv(_M_CAT02)
#: Average surround (CIE 159:2004 Table 1): F, c, N_c.
_SURROUND_F, _SURROUND_C, _SURROUND_NC = 1.0, 0.69, 1.0


def _spow(x: np.ndarray, p: float | np.ndarray) -> np.ndarray:
    """Signed power sign(x)·|x|^p (as colour-science's ``spow``; equal to x^p for x ≥ 0)."""
    return cast("np.ndarray", np.sign(x) * np.abs(x) ** p)


def cam02ucs_cie224(
    XYZ: ArrayLike, XYZ_w: ArrayLike, L_A: float = L_A, Y_b: float = Y_B
) -> tuple[np.ndarray, np.ndarray]:
    """CIECAM02 forward model and CAM02-UCS for the CIE 224:2017 viewing conditions, vectorised.

    Average surround (F = 1, c = 0.69, N_c = 1) and complete adaptation (D = 1, illuminant
    discounted), as CIE 224:2017 prescribes with L_A = 100 cd/m² and Y_b = 20. Equations of
    CIE 159:2004 *A colour appearance model for colour management systems: CIECAM02*
    (Moroney, Fairchild, Hunt, Li, Luo & Newman (2002) "The CIECAM02 color appearance model",
    Proc. IS&T/SID 10th Color Imaging Conference, 23-27; bibliographic details and the
    equations below written from memory, verified numerically against colour-science, see
    Notes). Powers of possibly negative quantities are signed, ``sign(x)·|x|^p``, as in
    colour-science's implementation:

    - k = 1 / (5 L_A + 1);  F_L = 0.2 k⁴ (5 L_A) + 0.1 (1 − k⁴)² (5 L_A)^(1/3)
    - n = Y_b / Y_w;  N_bb = N_cb = 0.725 (1/n)^0.2;  z = 1.48 + √n
    - RGB = M_CAT02 · XYZ;  R_c = (Y_w D / R_w + 1 − D) R with D = 1 (and likewise G, B)
    - R′G′B′ = M_HPE · M_CAT02⁻¹ · RGB_c
    - R′_a = 400 sign(R′) (F_L |R′| / 100)^0.42 / (27.13 + (F_L |R′| / 100)^0.42) + 0.1
    - a = R′_a − 12 G′_a / 11 + B′_a / 11;  b = (R′_a + G′_a − 2 B′_a) / 9;  h = atan2(b, a)
    - e_t = ¼ (cos(h + 2) + 3.8)  (h in radians)
    - A = (2 R′_a + G′_a + B′_a / 20 − 0.305) N_bb;  J = 100 (A / A_w)^(c z)
    - t = (50000/13) N_c N_cb e_t √(a² + b²) / (R′_a + G′_a + 21 B′_a / 20)
    - C = t^0.9 √(J / 100) (1.64 − 0.29ⁿ)^0.73;  M = C F_L^0.25

    then CAM02-UCS (Luo, Cui & Li (2006) "Uniform colour spaces based on CIECAM02 colour
    appearance model", Color Res. Appl. 31(4):320-330, with c1 = 0.007, c2 = 0.0228, K_L = 1):
    J′ = 1.7 J / (1 + 0.007 J);  M′ = ln(1 + 0.0228 M) / 0.0228;  a′ = M′ cos h;  b′ = M′ sin h.

    Parameters
    ----------
    XYZ : ndarray (M, K, 3)
        Sample tristimulus values (domain 0-100, the white at Y_w ≈ 100).
    XYZ_w : ndarray (M, 3)
        White point of each of the M sources.
    L_A, Y_b : float
        Adapting luminance (cd/m²) and relative background luminance.

    Returns
    -------
    Jab : ndarray (M, K, 3)
        CAM02-UCS (J′, a′, b′).
    h : ndarray (M, K)
        CIECAM02 hue angle in degrees, in [0, 360).

    Notes
    -----
    Same arithmetic as colour-science 0.4.7's ``XYZ_to_CIECAM02`` +
    ``JMh_CIECAM02_to_CAM02UCS`` (the tested reference) up to the order of floating-point
    operations; measured agreement is in tests/test_metrics_tm30_cam02.py.
    """
    return _cam02ucs(np.asarray(XYZ, dtype=float), np.asarray(XYZ_w, dtype=float), None, L_A, Y_b, True)


#: Columns of the linear forms of (R′_a, G′_a, B′_a) that CIECAM02 uses (CIE 159:2004):
#: a = R′_a − 12 G′_a / 11 + B′_a / 11, b = (R′_a + G′_a − 2 B′_a) / 9,
#: A / N_bb + 0.305 = 2 R′_a + G′_a + B′_a / 20, and the t denominator R′_a + G′_a + 21 B′_a / 20.
_L_FORMS = np.array([[1.0, 1.0 / 9.0, 2.0, 1.0], [-12.0 / 11.0, 1.0 / 9.0, 1.0, 1.0], [1.0 / 11.0, -2.0 / 9.0, 1.0 / 20.0, 21.0 / 20.0]])


#: The forms above times 400 (R′_a = 400 c + 0.1), with a fifth column a cos 2 − b sin 2.
_L_FORMS_400 = 400.0 * np.column_stack([_L_FORMS, _L_FORMS[:, 0] * np.cos(2.0) - _L_FORMS[:, 1] * np.sin(2.0)])


def _pow_into(y: np.ndarray, p: float | np.ndarray) -> np.ndarray:
    """y^p in place for y ≥ 0 (0 stays 0, ∞ stays ∞, NaN stays NaN), as exp(p·ln y).

    numpy's logarithm and exponential are vectorised and its general ``power`` is not: on
    this machine 10.3 against 16.8 ns a value (2·10⁶ values, 2026-12-05). The relative error
    is about (1 + |p·ln y|) units in the last place, against half a unit for ``np.power``: a
    few units for the values here (tests/test_metrics_tm30_cam02.py compares the result with
    colour-science). The exponent p is positive everywhere it is used."""
    with np.errstate(divide="ignore"):  # ln 0 = −∞, and exp(−∞) = 0 = 0^p
        np.log(y, out=y)
    y *= p
    return cast("np.ndarray", np.exp(y, out=y))


def _spow_into(x: np.ndarray, p: float | np.ndarray) -> np.ndarray:
    """sign(x)·|x|^p in fewer passes (copysign; :func:`_spow`'s values within a few units in
    the last place, :func:`_pow_into`)."""
    y = _pow_into(np.abs(x), p)
    return cast("np.ndarray", np.copysign(y, x, out=y))


def _cam02ucs(
    XYZ: np.ndarray, XYZ_w: np.ndarray, k: np.ndarray | None, L_A: float, Y_b: float, with_hue: bool
) -> tuple[np.ndarray, np.ndarray]:
    """The computation of :func:`cam02ucs_cie224`, arranged for speed (same equations).

    ``k`` (M,), if given, scales each source's XYZ and XYZ_w (relative colorimetry: Y_w = 100);
    it is folded into the per-source matrix instead of a pass over the samples. The linear
    forms a, b, A and the t denominator come from one matrix product; e_t·√(a² + b²) is
    ¼ (a cos 2 − b sin 2 + 3.8 √(a² + b²)) (cos(h + 2) expanded, h = atan2(b, a)); the hue
    angle itself is computed only when ``with_hue`` (TM-30 needs only the reference hue).
    Returns (Jab (M, K, 3), h (M, K) in degrees, or an empty array without ``with_hue``).
    """
    if k is not None:
        XYZ_w = XYZ_w * k[:, None]
    Y_w = XYZ_w[:, 1]
    kk = 1.0 / (5.0 * L_A + 1.0)
    k4 = kk**4
    F_L = 0.2 * k4 * (5.0 * L_A) + 0.1 * (1.0 - k4) ** 2 * np.cbrt(5.0 * L_A)
    n = Y_b / Y_w  # (M,)
    N_bb = 0.725 * (1.0 / n) ** 0.2
    z = 1.48 + np.sqrt(n)

    def compress(v: np.ndarray) -> np.ndarray:
        # v = F_L R′ / 100: R′_a = 400 sign(v) |v|^0.42 / (27.13 + |v|^0.42) + 0.1 (CIE 159:2004);
        # returns c = (R′_a − 0.1) / 400 (the linear forms below take the 400 and the 0.1)
        y = _pow_into(np.abs(v), 0.42)
        den = y + 27.13
        np.copysign(y, v, out=y)
        y /= den
        return y

    RGB_w = mm(XYZ_w, _M_CAT02.T)  # (M, 3)
    D_scale = Y_w[:, None] / RGB_w  # D = 1: R_c = (Y_w / R_w) R
    # Per-source matrix  F_L/100 · k · M_HPE · M_CAT02⁻¹ · diag(Y_w / RGB_w) · M_CAT02.
    M_src = _M_CAT02_TO_HPE[None, :, :] @ (D_scale[:, :, None] * _M_CAT02[None, :, :])  # (M, 3, 3)
    RGB_aw = 400.0 * compress(mm(RGB_w * D_scale, _M_CAT02_TO_HPE.T) * (F_L / 100.0)) + 0.1  # (M, 3)
    scale = np.full(Y_w.shape, F_L / 100.0) if k is None else k * (F_L / 100.0)
    m, K = XYZ.shape[0], XYZ.shape[1]
    c = compress(XYZ @ np.swapaxes(M_src * scale[:, None, None], 1, 2))  # (M, K, 3)
    # a, b, A/N_bb + 0.305, the t denominator and a cos 2 − b sin 2 in one product. With
    # R′_a = 400 c + 0.1 the constant 0.1 cancels exactly in a, b and A (the coefficients sum
    # to 0, 0 and 3.05) and adds 0.305 to the denominator.
    q = mm(c.reshape(-1, 3), _L_FORMS_400).reshape(m, K, 5)
    a, b = q[..., 0], q[..., 1]
    A_w = (mm(RGB_aw, _L_FORMS[:, 2]) - 0.305) * N_bb
    # √(a² + b²): a and b are O(1-100), far from overflow; numpy's hypot is not vectorised
    # (about 4x the time of the square root of the sum here)
    r = a * a
    r += b * b
    np.sqrt(r, out=r)
    with np.errstate(divide="ignore", invalid="ignore"):
        Jn = q[..., 2] * (N_bb / A_w)[:, None]  # A / A_w
        Jn = _spow_into(Jn, _SURROUND_C * z[:, None])  # J / 100
        num = 3.8 * r
        num += q[..., 4]  # e_t·√(a² + b²) · 4
        num *= ((50000.0 / 13.0) * _SURROUND_NC * 0.25 * N_bb)[:, None]
        dn = q[..., 3] + 0.305
        num /= dn  # t
        Mc = _spow_into(num, 0.9)
        sq = np.sqrt(np.abs(Jn))
        Mc *= np.copysign(sq, Jn, out=sq)
        Mc *= (_spow(1.64 - 0.29**n, 0.73) * _spow(np.asarray(F_L), 0.25))[:, None]  # M
        out = np.empty((m, K, 3))
        J = out[..., 0]
        np.multiply(Jn, 100.0, out=J)
        np.multiply(J, 1.7, out=Jn)
        J *= 0.007
        J += 1.0
        np.divide(Jn, J, out=J)  # J′ = 1.7 J / (1 + 0.007 J)
        Mc *= 0.0228
        Mc += 1.0  # ln(1 + x) by np.log: vectorised, unlike np.log1p (5.4 against 13 ns a value);
        np.log(Mc, out=Mc)  # log1p is only more exact for x ≪ 1, and M′ is used absolutely
        Mc /= 0.0228  # M′
        pos = r > 0
        np.divide(Mc, r, out=Mc, where=pos)
        Mc[~pos] = 0.0  # a = b = 0: M′ = 0 (t = 0)
        np.multiply(Mc, a, out=out[..., 1])
        np.multiply(Mc, b, out=out[..., 2])
    h = np.degrees(np.arctan2(b, a)) % 360.0 if with_hue else np.empty((m, 0))
    return out, h
