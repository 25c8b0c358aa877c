"""Short phrases for figures that are words as much as numbers (shared by the terminal and HTML
reports): where a chromaticity sits among the ANSI C78.377 categories and the SDCM centres."""

from __future__ import annotations

import math


def ansi_text(cc, i: int) -> str:
    """``"3000 K"`` inside the category, ``"3000 K, 0.0021 out"`` outside (the nearest category and
    the Δu′v′ to its quadrangle),
    "n/a" when undefined (``cc`` a :class:`lumeval.metrics.classify.ChromaticityClass`)."""
    k = float(cc.ansi_nominal_K[i])
    if not math.isfinite(k):
        return "n/a"
    if bool(cc.ansi_inside[i]):
        return f"{k:.0f} K"
    return f"{k:.0f} K, {-float(cc.ansi_margin_upvp[i]):.4f} out"


def sdcm_text(cc, i: int) -> str:
    """``"2.1 F3000"`` (steps, centre), or "n/a"."""
    s = float(cc.sdcm_steps[i])
    if not math.isfinite(s) or not cc.sdcm_centre[i]:
        return "n/a"
    return f"{s:.1f} {cc.sdcm_centre[i]}"
