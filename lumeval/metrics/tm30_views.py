"""Derived views of the TM-30 result: normalised colour vectors and Annex E design intents.

Pure and vectorised over N spectra; nothing here recomputes Rf, Rg or the hue bins (they come
from :mod:`lumeval.metrics.tm30`).

Colour vectors
--------------
ANSI/IES TM-30-18 and -20 describe how each hue bin's average colour moves when the reference
illuminant is replaced by the test source. In a normalised (a', b') plane each bin's reference
average is placed on the unit circle at its own hue direction, r_j = ā'b'_ref,j / |ā'b'_ref,j|,
and the test average at t_j = r_j + (ā'b'_test,j − ā'b'_ref,j) / |ā'b'_ref,j|: the arrow r_j → t_j
is the bin's shift relative to its reference chroma. Projected on the unit vector bisecting bin
j (hue angle (j − ½)·22.5°) its radial component is Rcs,hj / 100 and its tangential component
Rhs,hj (TM-30-18 definitions of the local chroma and hue shifts; the normalisation is the one
the TM-30 colour vector graphic uses, quoted from memory — the tests check the projections
against colour-science's Rcs,h and Rhs,h).

Annex E design intents
----------------------
ANSI/IES TM-30-20 Annex E (informative) recommends three design intents with three priority
levels each. A level is met when every listed condition holds (Rcs,h1 in percent):

=============  =======  =======  ==================  ===========
level          Rf       Rg       Rcs,h1              Rf,h1
=============  =======  =======  ==================  ===========
Preference P1  ≥ 78     ≥ 95     −1 % … +15 %
Preference P2  ≥ 75     ≥ 92     −7 % … +19 %
Preference P3  ≥ 70     ≥ 89     −12 % … +23 %
Vividness V1            ≥ 118    ≥ +15 %
Vividness V2            ≥ 110    ≥ +6 %
Vividness V3            ≥ 100    ≥ 0 %
Fidelity F1    ≥ 95
Fidelity F2    ≥ 90                                  ≥ 90
Fidelity F3    ≥ 85                                  ≥ 85
=============  =======  =======  ==================  ===========

Source: secondary. The table is recalled in the project's reference notes (memory) and the same
values are encoded in luxpy 1.12.5 (``_IES_TM30_ANNEX_E_TABLE``, GPL, used only as a test
oracle, nothing copied); the two agree on every number. Limits are inclusive. lumeval compares
the unrounded figures (luxpy rounds them to 2 decimals first); the Annex itself was not read.

Levels are ranked: a level counts as met only when the levels below it are met too (its own
conditions and theirs), as luxpy classifies. For Preference and Vividness the limits are nested
anyway; for Fidelity it means that F1 also needs F2's Rf,h1 ≥ 90 — the cautious reading of a
table that lists no Rf,h1 condition for F1 (which reading the Annex intends was not checked).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

#: Hue-bin width (TM-30-18) and the angle of bin j's bisector, (j − ½)·22.5°, j = 1..16.
BIN_WIDTH_DEG = 22.5
BIN_CENTRES_DEG = (np.arange(16) + 0.5) * BIN_WIDTH_DEG

INF = float("inf")

#: ANSI/IES TM-30-20 Annex E (secondary; see the module docstring): level -> limits as
#: (low, high) for Rf, Rg, Rcs_h1 (%) and Rf_h1; inclusive.
ANNEX_E: dict[str, dict[str, tuple[float, float]]] = {
    "P1": {"Rf": (78, INF), "Rg": (95, INF), "Rcs_h1": (-1, 15)},
    "P2": {"Rf": (75, INF), "Rg": (92, INF), "Rcs_h1": (-7, 19)},
    "P3": {"Rf": (70, INF), "Rg": (89, INF), "Rcs_h1": (-12, 23)},
    "V1": {"Rg": (118, INF), "Rcs_h1": (15, INF)},
    "V2": {"Rg": (110, INF), "Rcs_h1": (6, INF)},
    "V3": {"Rg": (100, INF), "Rcs_h1": (0, INF)},
    "F1": {"Rf": (95, INF)},
    "F2": {"Rf": (90, INF), "Rf_h1": (90, INF)},
    "F3": {"Rf": (85, INF), "Rf_h1": (85, INF)},
}
#: The design intents and their levels, best first.
DESIGN_INTENTS: dict[str, tuple[str, ...]] = {
    "preference": ("P1", "P2", "P3"),
    "vividness": ("V1", "V2", "V3"),
    "fidelity": ("F1", "F2", "F3"),
}
ANNEX_E_SOURCE = (
    "ANSI/IES TM-30-20 Annex E design intents (secondary: the project's reference notes and luxpy 1.12.5 "
    "agree on every limit; the Annex was not read)"
)


@dataclass(frozen=True)
class DesignIntents:
    """The best Annex E priority level met for each design intent, per spectrum.

    Attributes
    ----------
    preference, vividness, fidelity : tuple of str, length N
        ``"P1"``/``"P2"``/``"P3"`` (and V…, F…), or ``""`` when no level is met or a needed
        figure is undefined.
    met : dict level -> ndarray of bool (N,)
        Whether each of the nine levels is met (with the levels below it; module docstring).
    """

    preference: tuple[str, ...]
    vividness: tuple[str, ...]
    fidelity: tuple[str, ...]
    met: dict[str, Any]


def design_intents(Rf: ArrayLike, Rg: ArrayLike, Rcs_h1: ArrayLike, Rf_h1: ArrayLike) -> DesignIntents:
    """ANSI/IES TM-30-20 Annex E priority levels met, vectorised.

    Parameters
    ----------
    Rf, Rg, Rcs_h1, Rf_h1 : array_like, shape (N,)
        Rcs,h1 in percent (as lumeval reports it). NaN makes every condition on it false.
    """
    vals = {k: np.atleast_1d(np.asarray(v, dtype=float)) for k, v in
            (("Rf", Rf), ("Rg", Rg), ("Rcs_h1", Rcs_h1), ("Rf_h1", Rf_h1))}
    n = vals["Rf"].shape[0]
    met = {}
    for level, conds in ANNEX_E.items():
        ok = np.ones(n, dtype=bool)
        for fig, (lo, hi) in conds.items():
            v = vals[fig]
            ok &= np.isfinite(v) & (v >= lo) & (v <= hi)
        met[level] = ok
    best = {}
    for intent, levels in DESIGN_INTENTS.items():
        out = [""] * n
        below = np.ones(n, dtype=bool)
        for level in reversed(levels):  # lowest level first; a level needs the ones below it
            met[level] = met[level] & below
            below = met[level]
            for i in np.flatnonzero(met[level]):
                out[i] = level
        best[intent] = tuple(out)
    return DesignIntents(best["preference"], best["vividness"], best["fidelity"], met)


def colour_vectors(avg_ab_test: ArrayLike, avg_ab_ref: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Normalised reference and test positions of the 16 hue-bin averages.

    Parameters
    ----------
    avg_ab_test, avg_ab_ref : array_like, shape (N, 16, 2) or (16, 2)
        Bin-average CAM02-UCS (a', b') under the test source and the reference
        (:class:`lumeval.metrics.tm30.TM30Result` ``avg_ab_test`` / ``avg_ab_ref``).

    Returns
    -------
    ref_unit, test : ndarrays of the input shape
        ``ref_unit`` = ā'b'_ref / |ā'b'_ref| (on the unit circle); ``test`` = ref_unit +
        (ā'b'_test − ā'b'_ref) / |ā'b'_ref| (see the module docstring). NaN for an empty bin.
    """
    t = np.asarray(avg_ab_test, dtype=float)
    r = np.asarray(avg_ab_ref, dtype=float)
    norm = np.linalg.norm(r, axis=-1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        ref_unit = r / norm
        test = ref_unit + (t - r) / norm
    return ref_unit, test
