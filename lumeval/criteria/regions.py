"""Chromaticity regions: ANSI C78.377 quadrangles and SDCM (MacAdam-type) ellipses.

Everything here is pure and vectorised: chromaticities come in as arrays of shape (N, 2)
and results go out as arrays of shape (N,).

Sources and how sure we are of them
-----------------------------------
ANSI C78.377, *Specifications for the Chromaticity of Solid-State Lighting Products*. Two
editions are encoded; a clause names one (``edition = 2008 | 2017``, default **2017**). We have
not read either standard's own text: every value below is **secondary** and says where it
comes from.

Edition 2017 (default)
    Table 1 (basic nominal CCT categories 2200 ... 6500 K: target CCT ± tolerance, target Duv
    ± 0.006): two independent copies agree (the project's reference notes, and the public
    colorimetry code base harbik/colorimetry, ``plot_ansi_step7`` in its chromaticity-plot module,
    labelled "ANSI C78.377-2017, Table 1"). The tabulated target Duv equals the flexible-CCT
    formula at the target CCT (checked in the tests).

    **Corners, published** (2700 ... 6500 K): the corner table transcribed in the public
    repository s006112/PER, file ``cie1931.py`` (``CIE_BINS``, labelled "ANSI C78.377-2015
    chromaticity bin data"; read through the project's code search). That copy is
    labelled 2015; we take it as the 2017 table because the category table it derives from is
    the same in the 2015 and 2017 copies, and because computing the corners from the 2017 Table 1
    and the flexible-CCT formula (below) reproduces every transcribed corner within 1.6e-4 in
    x and y (most within their 5e-5 rounding; checked in the tests). Confidence: one
    copy, secondary, with that independent numerical support.

    **Corners, computed** (2200 K and 2500 K): no copy of these corners was found;
    they are computed from Table 1 the way the standard defines its flexible categories: the
    four corners are the chromaticities at ``CCT = T_target ∓ ΔT`` and
    ``Duv = Duv_T(CCT) ± 0.006``, the target Duv evaluated **at each edge's own CCT**
    (0 below 2780 K, so these corners are simply the Planckian locus ± 0.006 at the two edges). Reports say
    "corners computed by formula" for them.

    Flexible-CCT target Duv (2015/2017 editions, as transcribed):
    ``Duv_T(T) = 57700/T² − 44.6/T + 0.00854`` for 2780 K ≤ T ≤ 7000 K and ``0`` below
    2780 K. (With 0.0085 the 5700 K and 6500 K targets of Table 1 — 0.0025 and 0.0031 — are not
    reproduced, with 0.00854 they are.) The centre line these targets follow is the "white
    curve" from the Planckian locus at low CCT to illuminant D65 at 6500 K (J. Jiao, "ANSI
    continues advancements on SSL chromaticity standard", LEDs Magazine 12(11), 2015 —
    secondary, describing the 2015 edition).

Edition 2008
    **Corners, published** (2700 ... 6500 K; the 2008 edition has no 2200 K or 2500 K
    category): the widely transcribed corner table, found in two independent public code
    copies that agree to every digit: repository Harold2017/myfirstflasky, file
    ``web/app/cri/views.py`` (plot titled "C78.377-2008, Tolerance Quadrangle", with the
    category centres), and a second, independent LGPL C++ LED-binning source file whose
    ANSI C78.377 bin table has the same digits. Confidence: secondary, two agreeing copies.

    Table 1 of 2008 (target CCT ± tolerance, target Duv ± 0.006): 2725 ± 145 K, 3045 ± 175,
    3465 ± 245, 3985 ± 275, 4503 ± 243, 5028 ± 283, 5665 ± 355, 6530 ± 510; target Duv 0.000,
    0.000, 0.000, 0.001, 0.001, 0.002, 0.002, 0.003 — **memory**, but confirmed: with the
    category's single target Duv at both isotemperature edges these values reproduce every
    published 2008 corner and centre to its 4-decimal rounding (checked in the tests). That is
    the 2008 construction: one target Duv per category, used at both edges, so the 3500 K and
    4000 K quadrangles meet along the 3710 K line with offset corners.

    Flexible CCT of 2008 (defined by formula, so computed): target Duv
    ``57700/T² − 44.6/T + 0.0085`` at the target CCT (the 2008 Table 1 targets are this formula
    rounded to 3 decimals; checked in the tests), used at both edges, and the tolerance formula
    below; flexible targets 2700 ... 6500 K. The formula constants are **memory**.

Flexible-CCT tolerance (both editions)
    ``ΔT(T) = 1.1900e-8 T³ − 1.5434e-4 T² + 0.7168 T − 902.55`` K — **memory** (recalled from
    the 2008 edition; it reproduces Table 1's ±145 K at 2725 K and ±510 K at 6532 K but not the
    tolerances in between, which the table sets directly). Used only for a flexible category
    without a user-given tolerance, and said so in reports.

Edges are straight lines between corners; a straight line is straight in (x, y), (u, v) and
(u', v') alike (the transforms are projective), so membership does not depend on the diagram.
Margins are Euclidean distances in CIE 1976 (u', v') (Δu'v'), positive inside. The published
corners are rounded to 4 decimals, so neighbouring published quadrangles of the 2017 table meet
with gaps or overlaps of up to about 2e-4 in (x, y) (e.g. 4000 K / 4500 K); a point in such a
sliver belongs to both or neither, exactly as the published table says.

A (CCT, Duv) pair is converted to a chromaticity as in Ohno (2014), LEUKOS 10(1):47-55,
Eqs. 13-14: the Planckian point (u0, v0) at T moved by Duv along the locus normal in CIE 1960
(u, v), ``u = u0 − Duv·sin θ``, ``v = v0 + Duv·cos θ`` with θ the direction of the locus'
tangent dv/du at T (positive Duv above the locus, ANSI C78.377 convention).

SDCM ellipses: n steps = ``sqrt(g11 Δx² + 2 g12 Δx Δy + g22 Δy²)`` in CIE 1931 (x, y)
(MacAdam 1942; the form IEC 60081 uses). Centres of the IEC 60081 fluorescent-lamp colours are
from the project's reference notes (secondary). The coefficients g11, g12, g22 are **secondary
/ memory**: recalled as IEC 60081 Annex D values; those of F6500, F5000 and F4000 are identical
in three independent public code copies found with the project's search tool (index
file ids 42270621401, 35090749065, 35805597679), those of F3500, F3000 and F2700 in one
(42270621401). We have not read IEC 60081 itself. MacAdam (1942)
ellipses (observer PGN) are taken from colour-science's copy of Wyszecki & Stiles (2000)
Table 2(5.4.1), which gives semi-axes a, b (in units of 1e-3) and the major-axis angle θ; one
MacAdam ellipse is one standard deviation of colour matching, i.e. 1 step.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

import numpy as np

from ..metrics.colorimetry import (  # noqa: F401 (re-exported)
    planckian_uv,
    upvp_from_uv,
    upvp_from_xy,
    uv_from_xy,
    xy_from_upvp,
    xy_from_uv,
)

# --------------------------------------------------------------------------- ANSI C78.377

#: Editions a clause may name (``edition = 2008 | 2017``) and the default.
ANSI_EDITIONS: tuple[str, ...] = ("2008", "2017")
ANSI_DEFAULT_EDITION = "2017"
#: Name of the default edition (kept for callers that name "the" edition).
ANSI_EDITION = "ANSI C78.377-2017"
#: Duv tolerance of every category (ANSI C78.377-2008 and -2017 Table 1).
ANSI_DUV_TOLERANCE = 0.006


def ansi_edition_name(edition: str = ANSI_DEFAULT_EDITION) -> str:
    """``"2017"`` -> ``"ANSI C78.377-2017"``."""
    return f"ANSI C78.377-{normalise_ansi_edition(edition)}"


def normalise_ansi_edition(edition) -> str:
    """``2017``, ``"2017"`` or ``"ANSI C78.377-2017"`` -> ``"2017"``; ValueError for an edition
    that is not encoded."""
    text = str(edition).strip()
    if text.upper().startswith("ANSI C78.377-"):
        text = text[len("ANSI C78.377-"):]
    if isinstance(edition, bool) or text not in ANSI_EDITIONS:
        raise ValueError(f"ANSI C78.377 edition {edition!r} is not encoded (encoded: {', '.join(ANSI_EDITIONS)})")
    return text


@dataclass(frozen=True)
class AnsiCategory:
    """One nominal CCT category of an ANSI C78.377 Table 1."""

    nominal_K: int
    target_cct_K: float
    tolerance_K: float
    target_duv: float


#: ANSI C78.377-2017 Table 1: nominal CCT, target CCT, CCT tolerance, target Duv
#: (Duv tolerance ± 0.006 for all). Secondary copy, see the module docstring.
ANSI_C78377_2017: dict[int, AnsiCategory] = {
    c.nominal_K: c
    for c in (
        AnsiCategory(2200, 2238.0, 102.0, 0.0000),
        AnsiCategory(2500, 2460.0, 120.0, 0.0000),
        AnsiCategory(2700, 2725.0, 145.0, 0.0000),
        AnsiCategory(3000, 3045.0, 175.0, 0.0001),
        AnsiCategory(3500, 3465.0, 245.0, 0.0005),
        AnsiCategory(4000, 3985.0, 275.0, 0.0010),
        AnsiCategory(4500, 4503.0, 243.0, 0.0015),
        AnsiCategory(5000, 5029.0, 283.0, 0.0020),
        AnsiCategory(5700, 5667.0, 355.0, 0.0025),
        AnsiCategory(6500, 6532.0, 510.0, 0.0031),
    )
}

#: ANSI C78.377-2008 Table 1 (memory, confirmed by the published 2008 corners: see the module
#: docstring). No 2200 K or 2500 K category in that edition.
ANSI_C78377_2008: dict[int, AnsiCategory] = {
    c.nominal_K: c
    for c in (
        AnsiCategory(2700, 2725.0, 145.0, 0.000),
        AnsiCategory(3000, 3045.0, 175.0, 0.000),
        AnsiCategory(3500, 3465.0, 245.0, 0.000),
        AnsiCategory(4000, 3985.0, 275.0, 0.001),
        AnsiCategory(4500, 4503.0, 243.0, 0.001),
        AnsiCategory(5000, 5028.0, 283.0, 0.002),
        AnsiCategory(5700, 5665.0, 355.0, 0.002),
        AnsiCategory(6500, 6530.0, 510.0, 0.003),
    )
}

#: Table 1 of each encoded edition.
ANSI_TABLES: dict[str, dict[int, AnsiCategory]] = {"2008": ANSI_C78377_2008, "2017": ANSI_C78377_2017}

#: Published corner coordinates (CIE 1931 x, y; 4 decimals) as transcribed, in the
#: copies' own order: (low CCT, high Duv), (high CCT, high Duv), (high CCT, low Duv),
#: (low CCT, low Duv). Sources and confidence: module docstring.
_PUBLISHED_CORNERS_XY: dict[str, dict[int, tuple[tuple[float, float], ...]]] = {
    # Harold2017/myfirstflasky web/app/cri/views.py and a second LGPL C++ copy (agree exactly)
    "2008": {
        2700: ((0.4813, 0.4319), (0.4562, 0.4260), (0.4373, 0.3893), (0.4593, 0.3944)),
        3000: ((0.4562, 0.4260), (0.4299, 0.4165), (0.4147, 0.3814), (0.4373, 0.3893)),
        3500: ((0.4299, 0.4165), (0.3996, 0.4015), (0.3889, 0.3690), (0.4147, 0.3814)),
        4000: ((0.4006, 0.4044), (0.3736, 0.3874), (0.3670, 0.3578), (0.3898, 0.3716)),
        4500: ((0.3736, 0.3874), (0.3548, 0.3736), (0.3512, 0.3465), (0.3670, 0.3578)),
        5000: ((0.3551, 0.3760), (0.3376, 0.3616), (0.3366, 0.3369), (0.3515, 0.3487)),
        5700: ((0.3376, 0.3616), (0.3207, 0.3462), (0.3222, 0.3243), (0.3366, 0.3369)),
        6500: ((0.3205, 0.3481), (0.3028, 0.3304), (0.3068, 0.3113), (0.3221, 0.3261)),
    },
    # s006112/PER cie1931.py CIE_BINS (labelled 2015; taken for 2017, see the module docstring)
    "2017": {
        2700: ((0.4813, 0.4319), (0.4562, 0.4260), (0.4373, 0.3893), (0.4593, 0.3944)),
        3000: ((0.4562, 0.4260), (0.4303, 0.4173), (0.4150, 0.3821), (0.4373, 0.3893)),
        3500: ((0.4303, 0.4173), (0.4003, 0.4035), (0.3895, 0.3709), (0.4150, 0.3821)),
        4000: ((0.4003, 0.4035), (0.3737, 0.3880), (0.3671, 0.3583), (0.3895, 0.3709)),
        4500: ((0.3737, 0.3882), (0.3550, 0.3754), (0.3514, 0.3482), (0.3672, 0.3585)),
        5000: ((0.3550, 0.3753), (0.3375, 0.3619), (0.3366, 0.3373), (0.3515, 0.3481)),
        5700: ((0.3375, 0.3619), (0.3205, 0.3476), (0.3221, 0.3256), (0.3366, 0.3374)),
        6500: ((0.3205, 0.3477), (0.3026, 0.3311), (0.3067, 0.3119), (0.3221, 0.3255)),
    },
}

#: Where each edition's published corners come from (named in every report's sources). The
#: copies behind them are named in the module docstring (2008: two agreeing public code
#: copies; 2017: a public copy labelled 2015); the user-facing line does not
#: name another program's file.
ANSI_CORNER_SOURCES: dict[str, str] = {
    "2008": "ANSI C78.377-2008 Table 1 published corner coordinates (secondary: two agreeing public copies)",
    "2017": (
        "ANSI C78.377-2017 Table 1 published corner coordinates (secondary copy, reproduced within 1.6e-4 "
        "by computing from the 2017 Table 1)"
    ),
}
_COMPUTED_SOURCES: dict[str, str] = {
    "2008": (
        "ANSI C78.377-2008 flexible CCT, corners computed by formula (target Duv 57700/T² − 44.6/T + 0.0085 at the "
        "target CCT, used at both edges; memory, consistent with the 2008 Table 1)"
    ),
    "2017": (
        "ANSI C78.377-2017 Table 1, corners computed by formula (target Duv by the flexible-CCT formula at each "
        "edge's CCT; secondary copy of the table; no published corner copy found)"
    ),
}

#: Range of target CCT over which the flexible-CCT rules apply, per edition (2017 as
#: transcribed; 2008: the span of its categories, memory).
ANSI_FLEXIBLE_RANGES_K: dict[str, tuple[float, float]] = {"2008": (2700.0, 6500.0), "2017": (2200.0, 7000.0)}
ANSI_FLEXIBLE_RANGE_K = ANSI_FLEXIBLE_RANGES_K["2017"]


def ansi_table(edition: str = ANSI_DEFAULT_EDITION) -> dict[int, AnsiCategory]:
    """Table 1 of ``edition`` (nominal CCT -> category)."""
    return ANSI_TABLES[normalise_ansi_edition(edition)]


def ansi_flexible_duv(cct_K, edition: str = ANSI_DEFAULT_EDITION) -> np.ndarray:
    """Target Duv of the flexible-CCT rule, vectorised.

    2017 (and 2015): ``Duv_T = 57700/T² − 44.6/T + 0.00854`` for T ≥ 2780 K, and 0 for
    T < 2780 K (secondary copy). 2008: ``57700/T² − 44.6/T + 0.0085`` (memory; its Table 1
    targets are this rounded to 3 decimals). See the module docstring.

    Parameters
    ----------
    cct_K : array_like, shape (...)

    Returns
    -------
    ndarray, shape (...)
    """
    T = np.asarray(cct_K, dtype=float)
    if normalise_ansi_edition(edition) == "2008":
        return 57700.0 / T**2 - 44.6 / T + 0.0085
    d = 57700.0 / T**2 - 44.6 / T + 0.00854
    return np.where(T < 2780.0, 0.0, d)


def ansi_flexible_tolerance_K(cct_K) -> np.ndarray:
    """CCT tolerance of a flexible-CCT category, ``1.19e-8 T³ − 1.5434e-4 T² + 0.7168 T − 902.55``.

    Quoted from memory (ANSI C78.377-2008 flexible CCT); reproduces Table 1's ± 145 K at
    2725 K and ± 510 K at 6532 K. Shape-preserving.
    """
    T = np.asarray(cct_K, dtype=float)
    return 1.1900e-8 * T**3 - 1.5434e-4 * T**2 + 0.7168 * T - 902.55


def uv_from_cct_duv(cct_K, duv) -> np.ndarray:
    """CIE 1960 (u, v) of the point at ``duv`` from the Planckian locus at ``cct_K``.

    Ohno (2014) LEUKOS 10(1):47-55, Eqs. 13-14: ``u = u0 − Duv sin θ``, ``v = v0 + Duv cos θ``,
    θ the angle of the locus tangent at T taken towards lower T (du = u(T) − u(T+ΔT), as in the
    paper; computed by a central difference of ± 0.01 % in T on lumeval's Planckian locus,
    c2 = 1.4388e-2 m K). Positive Duv lies above the locus.

    Parameters
    ----------
    cct_K, duv : array_like, broadcastable, shape (N,)

    Returns
    -------
    ndarray, shape (N, 2)
    """
    T, D = np.broadcast_arrays(np.atleast_1d(np.asarray(cct_K, dtype=float)), np.atleast_1d(np.asarray(duv, dtype=float)))
    p0 = planckian_uv(T)
    # Ohno (2014): du = u(T) − u(T + ΔT), dv = v(T) − v(T + ΔT), i.e. the tangent towards
    # lower T; sin θ = dv/|t|, cos θ = du/|t|.
    t = planckian_uv(T * 0.9999) - planckian_uv(T * 1.0001)
    theta = np.arctan2(t[:, 1], t[:, 0])
    u = p0[:, 0] - D * np.sin(theta)
    v = p0[:, 1] + D * np.cos(theta)
    return np.stack([u, v], axis=-1)


@dataclass(frozen=True)
class Quadrangle:
    """A chromaticity quadrangle with straight edges.

    Attributes
    ----------
    name : str
        e.g. ``"ANSI C78.377-2017 3000 K"``.
    cct_range_K : tuple of float
        (low, high) CCT of the two isotemperature edges.
    duv_edges : ndarray, shape (2, 2)
        [[Duv low, Duv high] at the low-CCT edge, [Duv low, Duv high] at the high-CCT edge]
        of the construction (for published corners: of the construction they derive from).
    corners_upvp : ndarray, shape (4, 2)
        Corners in CIE 1976 (u', v'), counter-clockwise order is not assumed; the order is
        (low CCT, low Duv), (low CCT, high Duv), (high CCT, high Duv), (high CCT, low Duv).
    centre_upvp : ndarray, shape (2,)
        The category's nominal centre (target CCT, target Duv).
    source : str
    edition : str
        ``"2008"``, ``"2017"``, or ``""`` for a quadrangle of no ANSI edition.
    corners_origin : str
        ``"published"`` (a published corner table) or ``"computed"`` (by formula).
    """

    name: str
    cct_range_K: tuple[float, float]
    duv_edges: np.ndarray
    corners_upvp: np.ndarray
    centre_upvp: np.ndarray
    source: str
    edition: str = ""
    corners_origin: str = "computed"

    @property
    def corners_xy(self) -> np.ndarray:
        """Corners in CIE 1931 (x, y), shape (4, 2)."""
        c = self.corners_upvp
        return xy_from_uv(np.stack([c[:, 0], c[:, 1] / 1.5], axis=-1))

    @property
    def corners_text(self) -> str:
        """How the corners were obtained, for reports: "published corners" / "corners computed by formula"."""
        return "published corners" if self.corners_origin == "published" else "corners computed by formula"

    def margin(self, upvp) -> np.ndarray:
        """Signed Δu'v' from each point to the boundary, positive inside, shape (N,)."""
        return polygon_signed_distance(self.corners_upvp, upvp)

    def contains(self, upvp) -> np.ndarray:
        """True where the point is inside or on the boundary, shape (N,)."""
        return self.margin(upvp) >= 0.0


def quadrangle_from_cct_duv(
    name: str, cct_lo_K: float, cct_hi_K: float, duv_lo, duv_hi, centre_cct_K: float, centre_duv: float, source: str,
    edition: str = "",
) -> Quadrangle:
    """Build a quadrangle from its two isotemperature edges.

    ``duv_lo`` and ``duv_hi`` are pairs (value at the low-CCT edge, value at the high-CCT edge).
    """
    T = np.array([cct_lo_K, cct_lo_K, cct_hi_K, cct_hi_K])
    D = np.array([duv_lo[0], duv_hi[0], duv_hi[1], duv_lo[1]])
    corners = upvp_from_uv(uv_from_cct_duv(T, D))
    centre = upvp_from_uv(uv_from_cct_duv([centre_cct_K], [centre_duv]))[0]
    duv_edges = np.array([[duv_lo[0], duv_hi[0]], [duv_lo[1], duv_hi[1]]])
    return Quadrangle(name, (float(cct_lo_K), float(cct_hi_K)), duv_edges, corners, centre, source, edition, "computed")


def _edge_duvs(cat: AnsiCategory, edition: str) -> tuple[float, float, float]:
    """(target Duv at the low-CCT edge, at the high-CCT edge, at the centre) of a category.

    2017: the flexible formula at each edge's CCT (centre: unrounded formula at the target —
    it reproduces the published 4-decimal centres, the table's rounded Duv is off by up to
    1.4e-4 in y). 2008: the category's single target Duv everywhere."""
    if edition == "2008":
        return cat.target_duv, cat.target_duv, cat.target_duv
    lo, hi = cat.target_cct_K - cat.tolerance_K, cat.target_cct_K + cat.tolerance_K
    return (float(ansi_flexible_duv(lo, edition)), float(ansi_flexible_duv(hi, edition)),
            float(ansi_flexible_duv(cat.target_cct_K, edition)))


def ansi_computed_quadrangle(nominal_K: int, edition: str = ANSI_DEFAULT_EDITION) -> Quadrangle:
    """The quadrangle of a nominal category **computed** from its edition's Table 1.

    Corners at CCT = target ∓ tolerance and Duv = target ± 0.006, the target taken as the
    edition constructs it (:func:`_edge_duvs`). Used where no published corners exist, and by
    the tests to check the published corners against the table they derive from.
    """
    ed = normalise_ansi_edition(edition)
    cat = ansi_table(ed)[int(nominal_K)]
    lo, hi = cat.target_cct_K - cat.tolerance_K, cat.target_cct_K + cat.tolerance_K
    d_lo, d_hi, d_c = _edge_duvs(cat, ed)
    tol = ANSI_DUV_TOLERANCE
    return quadrangle_from_cct_duv(
        f"{ansi_edition_name(ed)} {cat.nominal_K} K", lo, hi, (d_lo - tol, d_hi - tol), (d_lo + tol, d_hi + tol),
        cat.target_cct_K, d_c, _COMPUTED_SOURCES[ed], ed,
    )


def ansi_published_corners_xy(nominal_K: int, edition: str = ANSI_DEFAULT_EDITION) -> np.ndarray | None:
    """The published corners (x, y) of a category in lumeval's corner order (low CCT low Duv,
    low CCT high Duv, high CCT high Duv, high CCT low Duv), shape (4, 2); None if none found."""
    rows = _PUBLISHED_CORNERS_XY[normalise_ansi_edition(edition)].get(int(nominal_K))
    if rows is None:
        return None
    return np.asarray(rows, dtype=float)[[3, 0, 1, 2]]


@cache
def ansi_quadrangle(nominal_K: int, edition: str = ANSI_DEFAULT_EDITION) -> Quadrangle:
    """The ANSI C78.377 quadrangle of a nominal CCT category of ``edition`` (default 2017).

    The edition's published corners where a copy was found (2008: 2700 ... 6500 K;
    2017: 2700 ... 6500 K), otherwise corners computed from the edition's Table 1 (2017: 2200 K
    and 2500 K); the quadrangle's ``corners_origin`` and ``source`` say which. The centre is the
    category's (target CCT, target Duv) as the edition constructs it. KeyError for a category
    the edition does not have.
    """
    ed = normalise_ansi_edition(edition)
    computed = ansi_computed_quadrangle(nominal_K, ed)
    pub = ansi_published_corners_xy(nominal_K, ed)
    if pub is None:
        return computed
    return Quadrangle(computed.name, computed.cct_range_K, computed.duv_edges, upvp_from_xy(pub), computed.centre_upvp,
                      ANSI_CORNER_SOURCES[ed], ed, "published")


def ansi_flexible_quadrangle(target_cct_K: float, tolerance_K: float | None = None,
                             edition: str = ANSI_DEFAULT_EDITION) -> Quadrangle:
    """A flexible-CCT quadrangle of ANSI C78.377 ``edition`` around ``target_cct_K`` (computed:
    both editions define flexible categories by formula).

    2017: target Duv by the flexible formula at each edge's CCT; 2008: the formula at the target
    CCT, used at both edges. The tolerance defaults to :func:`ansi_flexible_tolerance_K`
    (memory; see the module docstring).
    """
    ed = normalise_ansi_edition(edition)
    T = float(target_cct_K)
    tol_K = float(ansi_flexible_tolerance_K(T)) if tolerance_K is None else float(tolerance_K)
    lo, hi = T - tol_K, T + tol_K
    if ed == "2008":
        d_lo = d_hi = d_c = float(ansi_flexible_duv(T, ed))
    else:
        d_lo, d_hi, d_c = float(ansi_flexible_duv(lo, ed)), float(ansi_flexible_duv(hi, ed)), float(ansi_flexible_duv(T, ed))
    tol = ANSI_DUV_TOLERANCE
    how = "user-given tolerance" if tolerance_K is not None else "tolerance from the flexible-CCT formula (memory)"
    return quadrangle_from_cct_duv(
        f"{ansi_edition_name(ed)} flexible {T:.0f} K ± {tol_K:.0f} K",
        lo,
        hi,
        (d_lo - tol, d_hi - tol),
        (d_lo + tol, d_hi + tol),
        T,
        d_c,
        f"{_COMPUTED_SOURCES[ed]}; {how}",
        ed,
    )


def polygon_signed_distance(vertices, points) -> np.ndarray:
    """Signed Euclidean distance from points to the boundary of a convex polygon.

    Parameters
    ----------
    vertices : array_like, shape (K, 2)
        Corners of a convex polygon, in order (either orientation).
    points : array_like, shape (N, 2) or (2,)

    Returns
    -------
    ndarray, shape (N,)
        Positive inside, negative outside, zero on the boundary; NaN for non-finite points.
        For an interior point of a convex polygon the nearest boundary point lies on the
        edge line nearest to it, so the distance is the smallest distance to the edge lines;
        outside, it is the distance to the nearest edge segment (plain geometry).
    """
    V = np.asarray(vertices, dtype=float)
    return polygons_signed_distance(V[None], points)[:, 0]


def polygons_signed_distance(vertices, points) -> np.ndarray:
    """:func:`polygon_signed_distance` of every point to each of Q convex polygons of K corners
    (``vertices`` (Q, K, 2)), shape (N, Q): one vectorised pass for all polygons (the ANSI
    categories of a lot: ten quadrangles per sample), the same arithmetic per polygon."""
    V = np.asarray(vertices, dtype=float)
    P = np.atleast_2d(np.asarray(points, dtype=float))
    out = np.empty((P.shape[0], V.shape[0]))
    terms = _polygon_terms(V)
    # chunks keep the (n, Q, K) intermediates bounded: n·Q·K ≤ 1e6 (8 MB per array)
    step = max(1, 1_000_000 // max(1, V.shape[0] * V.shape[1]))
    for s in range(0, P.shape[0], step):
        c = P[s : s + step]
        d = _distances(*terms, c[:, 0, None, None], c[:, 1, None, None])
        out[s : s + step] = np.where(np.all(np.isfinite(c), axis=1)[:, None], d, np.nan)
    return out


def largest_signed_distance(vertices, points) -> tuple[np.ndarray, np.ndarray]:
    """For each point, the polygon of ``vertices`` (Q, K, 2) with the largest signed distance
    (:func:`polygons_signed_distance`; the first on a tie) and that distance: ``(k, best)`` of
    shape (N,), k = 0 and best = NaN for a point with a non-finite coordinate. The same as the
    argmax over :func:`polygons_signed_distance`'s matrix, with the same arithmetic for every
    distance it computes, but without computing the distances that cannot be the largest.

    Bound (plain geometry): a convex polygon lies in the disc of radius r about its corners'
    mean c, so its signed distance at p is at most r − |p − c| (inside, a disc of that distance
    about p fits in the polygon, hence in the disc about c; outside it is negative and at least
    |p − c| − r away). Each point's distance to the polygon of the highest bound is computed
    first; then only the polygons whose bound reaches it (less a margin of rounding). The
    (point, polygon) pairs of each step are computed together, each pair with its polygon's
    corners, edges and orientation (:func:`_distances`: elementwise, so a pair's value does not
    depend on the pairs computed with it)."""
    V = np.asarray(vertices, dtype=float)
    P = np.atleast_2d(np.asarray(points, dtype=float))
    n, Q = P.shape[0], V.shape[0]
    c = V.mean(axis=1)  # (Q, 2)
    r = np.sqrt(((V - c[:, None, :]) ** 2).sum(axis=2)).max(axis=1)  # (Q,)
    ok = np.all(np.isfinite(P), axis=1)
    # (n, Q); sqrt of the squares, not hypot (several times slower here): the bound only
    # chooses the first polygon and prunes, with a margin far above its rounding
    dx, dy = P[:, 0, None] - c[:, 0], P[:, 1, None] - c[:, 1]
    bound = r - np.sqrt(dx * dx + dy * dy)
    bound[~ok] = -np.inf
    m = np.full((n, Q), -np.inf)
    terms = _polygon_terms(V)
    step = max(1, 1_000_000 // max(1, V.shape[1]))  # pairs at a time: (pairs, K) ≤ 1e6 elements

    # the six terms of the polygons stacked (6, Q, K): one gather a step, not six, and each
    # term of the gathered pairs contiguous (strided views took twice the time)
    packed = np.ascontiguousarray(np.stack(np.broadcast_arrays(*terms)))

    def fill(pi: np.ndarray, qi: np.ndarray) -> None:  # the distances of the pairs (pi[j], qi[j])
        for s in range(0, pi.size, step):
            p, q = pi[s: s + step], qi[s: s + step]
            ax, ay, ex, ey, L, sign = np.take(packed, q, axis=1)
            m[p, q] = _distances(ax, ay, ex, ey, L, sign, P[p, 0, None], P[p, 1, None])

    first = np.flatnonzero(ok)
    fill(first, np.argmax(bound, axis=1)[first])
    reach = m.max(axis=1) - 1e-12 * (1.0 + r.max())
    fill(*np.nonzero(ok[:, None] & (bound >= reach[:, None]) & (m == -np.inf)))
    k = np.argmax(m, axis=1)
    best = np.where(ok, m[np.arange(n), k], np.nan)
    return np.where(ok, k, 0), best


def _polygon_terms(V: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """What :func:`_distances` needs of the polygons V (Q, K, 2): corners ``ax, ay``, edges
    ``ex, ey`` (to the next corner) and their lengths ``L``, each (Q, K), and the orientation
    ``sign`` (Q, 1): +1 counter-clockwise (positive area), -1 clockwise."""
    ax, ay = V[..., 0], V[..., 1]
    bx, by = np.roll(ax, -1, axis=1), np.roll(ay, -1, axis=1)
    ex, ey = bx - ax, by - ay
    sign = np.where(np.sum(ax * by - bx * ay, axis=1) > 0, 1.0, -1.0)[:, None]
    return ax, ay, ex, ey, np.hypot(ex, ey), sign


def _distances(ax, ay, ex, ey, L, sign, px, py) -> np.ndarray:
    """Signed distances of points (px, py) to convex polygons given by :func:`_polygon_terms`'
    arrays, broadcast together with the corners on the last axis (reduced): positive inside
    (the smallest distance to an edge line), negative outside (minus the distance to the
    nearest edge segment), zero on the boundary. Only elementwise operations and a min/all
    over the corners: a (point, polygon) pair gives the same bits whatever is computed with it.
    The reductions over the few corners are running minimums and conjunctions (numpy's
    reductions along a short last axis cost ~30 ns a row: 2.3 of 2.9 ms for the ANSI category
    of 2,048 samples, 2026-12-05); the distance to a segment is the square root of the sum of
    squares (np.hypot, not vectorised, took 20 ns a value; the two differ by at most a unit in
    the last place), by np.hypot where the squares overflow (coordinates beyond ~1e154)."""
    rx, ry = px - ax, py - ay
    cross = ex * ry - ey * rx
    line_d = sign * cross / L  # positive on the inner side of each edge
    inside = _running(np.logical_and, line_d >= 0.0)
    t = np.clip((rx * ex + ry * ey) / (L**2), 0.0, 1.0)
    dx, dy = px - (ax + t * ex), py - (ay + t * ey)
    with np.errstate(over="ignore"):
        seg = np.sqrt(dx * dx + dy * dy)
    big = np.isinf(seg)
    if big.any():  # squares beyond the largest float: hypot scales them (a NaN stays NaN)
        seg[big] = np.hypot(dx[big], dy[big])
    seg_d = _running(np.minimum, seg)
    return np.where(inside, _running(np.minimum, line_d), -seg_d)


def _running(op: np.ufunc, a: np.ndarray) -> np.ndarray:
    """``op`` folded over the last axis of ``a`` (``np.minimum``: the same values as
    ``a.min(axis=-1)``, NaN kept; ``np.logical_and``: ``np.all``), one vectorised pass a corner."""
    out = np.array(a[..., 0])
    for j in range(1, a.shape[-1]):
        op(out, a[..., j], out=out)
    return out


# --------------------------------------------------------------------------- SDCM ellipses

IEC60081_SOURCE = (
    "IEC 60081 colour centres and tolerance-ellipse coefficients g11, g12, g22 (secondary: recalled as "
    "IEC 60081 Annex D; F6500, F5000 and F4000 identical in three independent public code copies, "
    "F3500, F3000 and F2700 in one; the standard itself was not read)"
)
MACADAM_SOURCE = (
    "MacAdam (1942) JOSA 32(5):247, ellipses of observer PGN as tabulated in Wyszecki & Stiles (2000) "
    "Table 2(5.4.1), via colour-science's DATA_MACADAM_1942_ELLIPSES (observed a, b, θ)"
)


@dataclass(frozen=True)
class SdcmEllipse:
    """A colour-matching ellipse: steps = sqrt(g11 Δx² + 2 g12 Δx Δy + g22 Δy²) in CIE 1931 (x, y).

    Attributes
    ----------
    name : str
    centre_xy : ndarray, shape (2,)
    g11, g12, g22 : float
        Coefficients of the 1-step ellipse (per unit Δx, Δy).
    source : str
    """

    name: str
    centre_xy: np.ndarray
    g11: float
    g12: float
    g22: float
    source: str

    def __post_init__(self) -> None:
        object.__setattr__(self, "centre_xy", np.asarray(self.centre_xy, dtype=float))

    @property
    def is_positive_definite(self) -> bool:
        return self.g11 > 0 and self.g22 > 0 and self.g11 * self.g22 - self.g12**2 > 0

    def steps(self, xy) -> np.ndarray:
        """Steps from the centre, shape (N,) (MacAdam 1942 quadratic form)."""
        xy = np.atleast_2d(np.asarray(xy, dtype=float))
        dx = xy[:, 0] - self.centre_xy[0]
        dy = xy[:, 1] - self.centre_xy[1]
        q = self.g11 * dx * dx + 2.0 * self.g12 * dx * dy + self.g22 * dy * dy
        return np.sqrt(np.clip(q, 0.0, None))

    def axes(self) -> tuple[float, float, float]:
        """(semi-major a, semi-minor b, angle θ of the major axis from +x in degrees) of 1 step."""
        g = np.array([[self.g11, self.g12], [self.g12, self.g22]])
        w, vecs = np.linalg.eigh(g)  # ascending: smallest eigenvalue = major axis
        a, b = 1.0 / np.sqrt(w[0]), 1.0 / np.sqrt(w[1])
        theta = np.degrees(np.arctan2(vecs[1, 0], vecs[0, 0])) % 180.0
        return float(a), float(b), float(theta)

    def boundary_xy(self, n_steps: float, n_points: int = 720) -> np.ndarray:
        """Points on the n-step boundary in (x, y), shape (n_points, 2)."""
        return self._boundary_at(n_steps, np.linspace(0.0, 2.0 * np.pi, n_points, endpoint=False))

    def _boundary_at(self, n_steps: float, phi) -> np.ndarray:
        """(x, y) of the n-step boundary at parametric angles ``phi`` (any shape) -> shape + (2,)."""
        a, b, th = self.axes()
        c, s = np.cos(np.radians(th)), np.sin(np.radians(th))
        ex, ey = n_steps * a * np.cos(phi), n_steps * b * np.sin(phi)
        return np.stack([self.centre_xy[0] + c * ex - s * ey, self.centre_xy[1] + s * ex + c * ey], axis=-1)

    def margin_upvp(self, xy, n_steps: float, *, coarse: int = 64, fine: int = 64, chunk: int = 20000) -> np.ndarray:
        """Signed Δu'v' from each point to the n-step boundary, positive inside, shape (N,).

        The sign is exact: the map (x, y) -> (u', v') is one-to-one, so a point is inside the
        boundary in (u', v') exactly when it is within n steps. The distance is the distance
        to the boundary's image in (u', v'), found by a coarse search over ``coarse``
        parametric samples and a refinement over ± 2 coarse steps traced by ``fine`` straight
        segments (chord error about r·δφ²/8: below 2e-7 in u'v' for a 10-step ellipse, checked
        against a 20 000-vertex trace in the tests). Vectorised, in
        chunks of ``chunk`` points.
        """
        P_xy = np.atleast_2d(np.asarray(xy, dtype=float))
        out = np.full(P_xy.shape[0], np.nan)
        phi_c = np.linspace(0.0, 2.0 * np.pi, coarse, endpoint=False)
        Cc = upvp_from_xy(self._boundary_at(n_steps, phi_c))  # (coarse, 2)
        half = 2.0 * (2.0 * np.pi / coarse)
        offs = np.linspace(-half, half, fine + 1)
        ok = np.all(np.isfinite(P_xy), axis=1)
        idx = np.flatnonzero(ok)
        for s in range(0, idx.size, chunk):
            sel = idx[s : s + chunk]
            P = upvp_from_xy(P_xy[sel])
            k = np.argmin(((P[:, None, :] - Cc[None, :, :]) ** 2).sum(-1), axis=1)
            phi = phi_c[k][:, None] + offs[None, :]  # (n, fine+1)
            C = upvp_from_xy(self._boundary_at(n_steps, phi))  # (n, fine+1, 2)
            A, B = C[:, :-1, :], C[:, 1:, :]
            E = B - A
            rel = P[:, None, :] - A
            t = np.clip((rel * E).sum(-1) / np.maximum((E * E).sum(-1), 1e-300), 0.0, 1.0)
            d = np.hypot(rel[..., 0] - t * E[..., 0], rel[..., 1] - t * E[..., 1]).min(axis=1)
            inside = self.steps(P_xy[sel]) <= n_steps
            out[sel] = np.where(inside, d, -d)
        return out


def ellipse_from_axes(name: str, centre_xy, a: float, b: float, theta_deg: float, source: str) -> SdcmEllipse:
    """An ellipse from its 1-step semi-axes a ≥ b and major-axis angle θ (degrees from +x).

    g11 = cos²θ/a² + sin²θ/b², g12 = sinθ cosθ (1/a² − 1/b²), g22 = sin²θ/a² + cos²θ/b²
    (the quadratic form of a rotated ellipse; Wyszecki & Stiles (2000) §5.4.1).
    """
    t = np.radians(theta_deg)
    c, s = np.cos(t), np.sin(t)
    g11 = c * c / a**2 + s * s / b**2
    g12 = s * c * (1.0 / a**2 - 1.0 / b**2)
    g22 = s * s / a**2 + c * c / b**2
    return SdcmEllipse(name, np.asarray(centre_xy, dtype=float), float(g11), float(g12), float(g22), source)


#: IEC 60081 colour centres (x, y) and 1-step ellipse coefficients (g11, g12, g22).
#: Secondary / memory — see IEC60081_SOURCE.
_IEC60081 = {
    "F6500": ((0.313, 0.337), 86.0e4, -40.0e4, 45.0e4),
    "F5000": ((0.346, 0.359), 56.0e4, -25.0e4, 28.0e4),
    "F4000": ((0.380, 0.380), 39.5e4, -21.5e4, 26.0e4),
    "F3500": ((0.409, 0.394), 38.0e4, -20.0e4, 25.0e4),
    "F3000": ((0.440, 0.403), 39.0e4, -19.5e4, 27.5e4),
    "F2700": ((0.463, 0.420), 44.0e4, -18.6e4, 27.0e4),
}

#: Names accepted for standard centres: IEC 60081 colours.
IEC60081_CENTRES: tuple[str, ...] = tuple(_IEC60081)


def iec60081_ellipse(name: str) -> SdcmEllipse:
    """The IEC 60081 ellipse of colour ``name`` (``"F6500"`` ... ``"F2700"``)."""
    (x, y), g11, g12, g22 = _IEC60081[name]
    return SdcmEllipse(f"IEC 60081 {name}", np.array([x, y]), g11, g12, g22, IEC60081_SOURCE)


def macadam1942_count() -> int:
    """Number of MacAdam (1942) ellipses colour-science ships (25)."""
    from .._colour import load

    return int(load().models.DATA_MACADAM_1942_ELLIPSES.shape[0])


def macadam1942_ellipse(number: int) -> SdcmEllipse:
    """MacAdam (1942) ellipse ``number`` (1-based, in Wyszecki & Stiles' Table 2(5.4.1) order).

    Uses the *observed* a, b (× 1e-3) and θ columns of colour-science's copy of the table.
    """
    from .._colour import load

    data = np.asarray(load().models.DATA_MACADAM_1942_ELLIPSES, dtype=float)
    row = data[int(number) - 1]
    return ellipse_from_axes(
        f"MacAdam (1942) ellipse {int(number)}", row[0:2], row[2] * 1e-3, row[3] * 1e-3, row[4], MACADAM_SOURCE
    )
