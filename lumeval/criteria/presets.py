"""ANSI/IES TM-30-20 Annex E design-intent presets (Preference, Vividness, Fidelity).

Each level is a set of conditions on TM-30 figures (Rf, Rg, Rcs,h1 in percent, Rf,h1).

Source and how sure we are
--------------------------
ANSI/IES TM-30-20, *IES Method for Evaluating Light Source Color Rendition*, Annex E
(recommended specification criteria by design intent and priority level). **Secondary**: the
thresholds below were not read in the Annex itself; they agree exactly between the project's
reference notes and the independent table in luxpy 1.12.5 (``_IES_TM30_ANNEX_E_TABLE``,
documented there as "Annex E table (default as published)"); the test suite checks our
presets against luxpy's classifier. P1 also matches the TM-30-20 option of a green-building
rating system's quality-lighting credit as quoted in a public document ("Rf ≥ 78, Rg ≥ 95,
Rcs,h1: −1 % to 15 %"). Values are compared unrounded (lumeval does not round
Rf, Rg or Rcs,h1 before comparing; a reported Rf of 77.96 does not meet Rf ≥ 78).

Levels are nested: priority level 1 is the most demanding, and a source meets level k only
when it also meets every lower level of the same intent (:func:`effective_conditions`). For the
Preference and Vividness levels the tables are nested already; for Fidelity this adds
Rf,h1 ≥ 90 (from F2) to F1's Rf ≥ 95. luxpy's classifier treats the levels the same way.
"""

from __future__ import annotations

from dataclasses import dataclass

#: (the thresholds are quoted from a secondary source and agree with luxpy 1.12.5's table; the
#: user-facing line does not name another program's table)
TM30_ANNEX_E_SOURCE = "ANSI/IES TM-30-20 Annex E (thresholds from a secondary source, cross-checked independently)"

DESIGN_INTENTS = {"P": "Preference", "V": "Vividness", "F": "Fidelity"}


@dataclass(frozen=True)
class Condition:
    """One condition of a design-intent level: ``lower ≤ figure ≤ upper`` (None = unbounded)."""

    figure: str
    lower: float | None
    upper: float | None


#: level -> conditions. Rcs_h1 in percent.
TM30_ANNEX_E: dict[str, tuple[Condition, ...]] = {
    "P1": (Condition("Rf", 78, None), Condition("Rg", 95, None), Condition("Rcs_h1", -1, 15)),
    "P2": (Condition("Rf", 75, None), Condition("Rg", 92, None), Condition("Rcs_h1", -7, 19)),
    "P3": (Condition("Rf", 70, None), Condition("Rg", 89, None), Condition("Rcs_h1", -12, 23)),
    "V1": (Condition("Rg", 118, None), Condition("Rcs_h1", 15, None)),
    "V2": (Condition("Rg", 110, None), Condition("Rcs_h1", 6, None)),
    "V3": (Condition("Rg", 100, None), Condition("Rcs_h1", 0, None)),
    "F1": (Condition("Rf", 95, None),),
    "F2": (Condition("Rf", 90, None), Condition("Rf_h1", 90, None)),
    "F3": (Condition("Rf", 85, None), Condition("Rf_h1", 85, None)),
}

LEVELS: tuple[str, ...] = tuple(TM30_ANNEX_E)


def effective_conditions(level: str) -> tuple[Condition, ...]:
    """The conditions a source must meet for ``level``: the intersection, figure by figure, of
    the conditions of ``level`` and of every lower priority level of the same intent."""
    intent, k = level[0], int(level[1])
    bounds: dict[str, list] = {}
    for j in range(k, 4):
        for c in TM30_ANNEX_E[f"{intent}{j}"]:
            lo, hi = bounds.get(c.figure, [None, None])
            if c.lower is not None:
                lo = c.lower if lo is None else max(lo, c.lower)
            if c.upper is not None:
                hi = c.upper if hi is None else min(hi, c.upper)
            bounds[c.figure] = [lo, hi]
    return tuple(Condition(f, lo, hi) for f, (lo, hi) in bounds.items())


def level_title(level: str) -> str:
    """E.g. ``"Preference priority level 1 (P1)"``."""
    return f"{DESIGN_INTENTS[level[0]]} priority level {level[1]} ({level})"


# --------------------------------------------------------------------------- `criteria new` defaults


@dataclass(frozen=True)
class SdcmSuggestion:
    """An SDCM clause centred on an ANSI C78.377 category's centre (for ``criteria new``).

    Attributes
    ----------
    centre_xy : tuple of float
        The category centre (CIE 1931 x, y): target CCT and target Duv (ANSI C78.377-2017).
    g11, g12, g22 : float
        1-step ellipse coefficients, those of ``shape_from``.
    shape_from : str
        The IEC 60081 colour whose ellipse shape is used (nearest centre in u'v').
    planckian_steps : float
        Steps from the centre to the Planckian point at the target CCT (Duv 0).
    shape_steps : tuple of float
        Steps, by the ``shape_from`` ellipse round its own IEC 60081 centre, of the category
        centre and of the Planckian point at the target CCT: how far a clause fixed on that
        centre (``centre = "F4000"``) sits from the category.
    """

    centre_xy: tuple[float, float]
    g11: float
    g12: float
    g22: float
    shape_from: str
    planckian_steps: float
    shape_steps: tuple[float, float] = (0.0, 0.0)


def ansi_duv_band(nominal_cct: int) -> tuple[float, float]:
    """The Duv range an ANSI C78.377-2017 category's quadrangle spans: the flexible-CCT target
    Duv at both CCT edges ± 0.006, rounded outward to 1e-4 (so that the band contains the
    quadrangle's corners). A Duv clause with this band agrees with the quadrangle clause."""
    import math

    from . import regions

    cat = regions.ANSI_C78377_2017[int(nominal_cct)]
    d = regions.ansi_flexible_duv([cat.target_cct_K - cat.tolerance_K, cat.target_cct_K + cat.tolerance_K])
    tol = regions.ANSI_DUV_TOLERANCE
    lo = math.floor(round((float(min(d)) - tol) * 1e4, 6)) / 1e4
    hi = math.ceil(round((float(max(d)) + tol) * 1e4, 6)) / 1e4
    return lo, hi


def sdcm_suggestion(nominal_cct: int) -> SdcmSuggestion:
    """An SDCM clause for ``criteria new`` centred on the ANSI C78.377-2017 category centre.

    The centre is the category's (target CCT, flexible-formula target Duv), which reproduces the
    published centres within their rounding (tests/test_criteria_regions.py). No standard gives
    an ellipse for every ANSI centre; the shape is that of the IEC 60081 ellipse whose centre is
    nearest in (u', v') (common practice, no source), moved to the ANSI centre.
    """
    import numpy as np

    from ..metrics.colorimetry import planckian_uv, upvp_from_xy, xy_from_uv
    from . import regions

    cat = regions.ANSI_C78377_2017[int(nominal_cct)]
    q = regions.ansi_quadrangle(int(nominal_cct))
    c = q.centre_upvp
    centre = xy_from_uv(np.array([[c[0], c[1] / 1.5]]))[0]
    centre = (round(float(centre[0]), 4), round(float(centre[1]), 4))
    dist = {n: float(np.hypot(*(upvp_from_xy(regions.iec60081_ellipse(n).centre_xy[None, :])[0] - c)))
            for n in regions.IEC60081_CENTRES}
    near = min(dist, key=dist.__getitem__)
    e = regions.iec60081_ellipse(near)
    ell = regions.SdcmEllipse("suggestion", np.array(centre), e.g11, e.g12, e.g22, "")
    pl = xy_from_uv(planckian_uv(np.array([cat.target_cct_K])))
    own = e.steps(np.array([centre, pl[0]]))
    return SdcmSuggestion(centre, e.g11, e.g12, e.g22, near, float(ell.steps(pl)[0]), (float(own[0]), float(own[1])))
