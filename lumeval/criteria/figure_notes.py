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


#: The figure naming the ANSI C78.377 category (containing or nearest): a clause or claim on it
#: requires a category, so light in none fails it (:func:`nearest_category_notes`).
CATEGORY_FIGURE = "ansi_category_K"


def judges_category(figure: str | None) -> bool:
    """True when ``figure`` (a name or alias) is :data:`CATEGORY_FIGURE`."""
    return figure is not None and figures.lookup(figure) == CATEGORY_FIGURE


def nearest_category_notes(ev, r):
    """The ANSI category figure names the quadrangle containing the chromaticity *or the nearest
    one*. A clause on it requires a category, so a point outside every quadrangle fails it
    whatever the nearest category is (a green line 0.16 off the locus was "5000 K, pass", a
    1500 K Planckian "2200 K, pass": found by reviews), with no margin in kelvin (NaN: the
    distance is the reason's Δu′v′). Such a clause is refused under a decision rule with
    measurement uncertainty (:func:`lumeval.criteria.rounding.refuse_under_uncertainty`).
    Spectra not judged (no chromaticity) stay so. Membership of one quadrangle is what an
    `ansi_quadrangle` clause judges."""
    from .verdicts import FAIL, NOT_JUDGED

    d = np.asarray(ev.figure("ansi_distance_upvp"), dtype=float)
    out = [i for i in np.flatnonzero(np.isfinite(d) & (d > 0)).tolist() if r.outcome[i] != NOT_JUDGED]
    if not out:
        return r
    reasons = list(r.reason) if r.reason else [""] * d.size
    outcome, margin = list(r.outcome), np.array(r.margin, dtype=float)
    for i in out:
        reasons[i] = f"{reasons[i]}; {no_category_note(d[i], r.measured[i])}" if reasons[i] else \
            no_category_note(d[i], r.measured[i])
        outcome[i], margin[i] = FAIL, np.nan
    return replace(r, reason=tuple(reasons), outcome=tuple(outcome), margin=margin)


def no_category_note(distance_upvp: float, nearest_K: float) -> str:
    """The reason a chromaticity ``distance_upvp`` outside every ANSI quadrangle meets no
    requirement on the ANSI category (criteria clauses and datasheet claims)."""
    nearest = figures.get(CATEGORY_FIGURE).format(nearest_K) if np.isfinite(nearest_K) else "n/a"
    # 4 decimals, or two significant digits for a distance that would print as 0.0000
    dist = f"{distance_upvp:.4f}" if distance_upvp >= 5e-5 else figures.format_significant(distance_upvp, 2)
    return (f"in no ANSI C78.377 category: the chromaticity lies outside every quadrangle (Δu′v′ = "
            f"{dist} outside the nearest, {nearest} K); to require one quadrangle, use kind = \"ansi_quadrangle\"")
