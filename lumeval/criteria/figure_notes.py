"""Notes a figure clause adds to its verdicts (moved out of :mod:`lumeval.criteria.model`,
which keeps the names it had): the knife-edge warning of a hue-bin figure and the note of a
clause on the nearest ANSI category."""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .. import figures


def with_hue_edge_warnings(ev, figure: str, reason: tuple[str, ...]) -> tuple[str, ...]:
    """Add a knife-edge warning to the verdict of a hue-bin figure (Rf_hj, Rcs_hj, Rhs_hj) for
    every spectrum where a CES lies within 0.01° of an edge of bin j (the pairs computed by
    :func:`lumeval.metrics.tm30.hue_edge_pairs`); the outcome is unchanged, the warning names
    the bin and the sample."""
    for p in ("Rf_h", "Rcs_h", "Rhs_h"):
        if figure.startswith(p) and figure[len(p):].isdigit():
            j = int(figure[len(p):])
            break
    else:
        return reason
    pairs = getattr(getattr(ev, "tm30", None), "hue_edge_pairs", ()) or ()
    if len(pairs) != len(reason):
        return reason
    out = list(reason)
    for i, pp in enumerate(pairs):
        ces = [c for b, c in pp if b == j]
        if ces:
            names = ", ".join(f"CES {c}" for c in ces)
            w = (f"knife edge: {names} of hue bin {j} has a reference hue within 0.01° of a bin edge; "
                 f"{figures.label(figure)} can differ between equally valid implementations")
            out[i] = f"{out[i]}; {w}" if out[i] else w
    return tuple(out)


def nearest_category_notes(ev, r):
    """The ANSI category figure names the quadrangle containing the chromaticity *or the nearest
    one*: a clause on it passes a point outside every quadrangle (a green line 0.16 off the
    locus was "5000 K, pass"; found by a review). Each such spectrum's reason says so and how
    far out it lies; membership is what an `ansi_quadrangle` clause judges."""
    d = np.asarray(ev.figure("ansi_distance_upvp"), dtype=float)
    out = np.flatnonzero(np.isfinite(d) & (d > 0))
    if not out.size:
        return r
    reasons = list(r.reason) if r.reason else [""] * d.size
    for i in out:
        note = (f"the nearest category: the chromaticity lies outside every ANSI C78.377 quadrangle "
                f"(Δu′v′ = {d[i]:.4f} out); to require it inside, use kind = \"ansi_quadrangle\"")
        reasons[i] = f"{reasons[i]}; {note}" if reasons[i] else note
    return replace(r, reason=tuple(reasons))
