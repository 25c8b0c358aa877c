"""Where a chromaticity sits among the standard categories: ANSI C78.377 and SDCM centres.

Two questions a specifier asks of every white light source, answered for N chromaticities
at once:

- **ANSI C78.377 category.** Which nominal CCT quadrangle of the chosen edition (2017 by
  default, or 2008) contains the point — or, when none does, which quadrangle is nearest and
  how far outside it the point lies. The quadrangles are those of
  :func:`lumeval.criteria.regions.ansi_quadrangle` (published corners where a copy was
  found, otherwise computed from the edition's Table 1; its module docstring gives the sources
  and how sure we are of them). Distances are Euclidean in CIE 1976 (u', v') (Δu'v') from the
  point to the quadrangle's boundary, as lumeval's criteria measure margins.
- **SDCM steps.** The number of steps from the nearest IEC 60081 colour centre (F2700 ...
  F6500), n = sqrt(g11 Δx² + 2 g12 Δx Δy + g22 Δy²) in CIE 1931 (x, y) (MacAdam 1942; the
  ellipses of :func:`lumeval.criteria.regions.iec60081_ellipse`, secondary source). "Nearest"
  means fewest steps: each centre is measured with its own ellipse.

Where neighbouring published quadrangles overlap by their rounding (up to about 2e-4 in x, y),
a point in the sliver is reported in the category it lies deeper inside (larger margin).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import cast

import numpy as np
from numpy.typing import ArrayLike


@dataclass(frozen=True)
class ChromaticityClass:
    """ANSI C78.377 category and SDCM steps of N chromaticities.

    Attributes
    ----------
    ansi_edition : str
        ``"2008"`` or ``"2017"``.
    ansi_nominal_K : ndarray (N,)
        Nominal CCT (K) of the category containing the point, or of the nearest one; NaN for a
        non-finite chromaticity.
    ansi_inside : ndarray of bool (N,)
        True where the point lies inside (or on) that category's quadrangle.
    ansi_margin_upvp : ndarray (N,)
        Signed Δu'v' to that quadrangle's boundary: positive inside, negative outside. The
        distance outside is ``-ansi_margin_upvp``.
    sdcm_centre : tuple of str, length N
        The IEC 60081 colour centre with the fewest steps (``"F3000"``...); "" where undefined.
    sdcm_steps : ndarray (N,)
        Steps from that centre.
    """

    ansi_edition: str
    ansi_nominal_K: np.ndarray
    ansi_inside: np.ndarray
    ansi_margin_upvp: np.ndarray
    sdcm_centre: tuple[str, ...]
    sdcm_steps: np.ndarray


def ansi_category(upvp: ArrayLike, edition: str = "2017") -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The ANSI C78.377 category of each point (containing or nearest).

    Parameters
    ----------
    upvp : array_like, shape (N, 2)
        CIE 1976 (u', v').
    edition : str
        ``"2017"`` (basic categories 2200 ... 6500 K) or ``"2008"`` (2700 ... 6500 K).

    Returns
    -------
    nominal_K, inside, margin : ndarrays of shape (N,)
        Nominal CCT of the category with the largest signed margin (so the containing one
        when there is one, else the nearest), whether the point is inside it, and the signed
        Δu'v' margin (positive inside).
    """
    from ..criteria.regions import ansi_quadrangle, ansi_table, largest_signed_distance

    P = np.atleast_2d(np.asarray(upvp, dtype=float))
    cats = sorted(ansi_table(edition))
    # the largest Quadrangle.margin over the categories (each has 4 corners), computed only for
    # the categories that can have it (a point is near two or three of the ten)
    k, best = largest_signed_distance(np.stack([ansi_quadrangle(c, edition).corners_upvp for c in cats]), P)
    ok = np.all(np.isfinite(P), axis=1)
    nominal = np.where(ok, np.asarray(cats, dtype=float)[k], np.nan)
    margin = np.where(ok, best, np.nan)
    return nominal, ok & (margin >= 0.0), margin


def nearest_sdcm(xy: ArrayLike) -> tuple[tuple[str, ...], np.ndarray]:
    """The IEC 60081 colour centre with the fewest SDCM steps from each point, and the steps.

    Parameters
    ----------
    xy : array_like, shape (N, 2)
        CIE 1931 (x, y).

    Returns
    -------
    centres : tuple of str (N,)
        ``"F2700"`` ... ``"F6500"``; "" for a non-finite point.
    steps : ndarray (N,)
    """
    from ..criteria.regions import IEC60081_CENTRES, iec60081_ellipse

    P = np.atleast_2d(np.asarray(xy, dtype=float))
    steps = np.stack([iec60081_ellipse(c).steps(P) for c in IEC60081_CENTRES], axis=1)  # (N, 6)
    ok = np.all(np.isfinite(P), axis=1)
    k = np.argmin(np.where(ok[:, None], steps, np.inf), axis=1)
    best = np.where(ok, steps[np.arange(P.shape[0]), k], np.nan)
    # the names picked at C speed (one Python expression per point cost 0.1 s a million points)
    names = np.array((*IEC60081_CENTRES, ""), dtype=object)
    return tuple(names[np.where(ok, k, len(IEC60081_CENTRES))].tolist()), best


def classify(xy: ArrayLike, upvp: ArrayLike, edition: str = "2017") -> ChromaticityClass:
    """:func:`ansi_category` and :func:`nearest_sdcm` together (see the module docstring)."""
    from ..criteria.regions import normalise_ansi_edition

    ed = normalise_ansi_edition(edition)
    nominal, inside, margin = ansi_category(upvp, ed)
    centres, steps = nearest_sdcm(xy)
    return ChromaticityClass(ed, nominal, inside, margin, centres, steps)


def extended_rendering_index(R: ArrayLike) -> np.ndarray:
    """Re, the mean of the fourteen CIE 13.3 special indices R1 ... R14, shape (N,).

    CIE 13.3-1995 defines Ra as the mean of R1 ... R8 only; the mean over all fourteen samples
    (often written Re or "extended CRI") is common practice in tenders and datasheets, no
    standard source. NaN where any Ri is NaN.

    Parameters
    ----------
    R : array_like, shape (N, 14) or (14,)
    """
    R = np.atleast_2d(np.asarray(R, dtype=float))
    if R.shape[-1] != 14:
        raise ValueError(f"expected 14 special indices per spectrum, got {R.shape[-1]}")
    return cast("np.ndarray", R.mean(axis=1))
