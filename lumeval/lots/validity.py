"""Which lot statistics leave out the values computed outside their validity range, and the note
that says so.

A spectrum more than 0.05 in Duv from the Planckian locus has no meaningful CCT (CIE 15:2004
§9.5); its reference-based figures (:data:`lumeval.engine.VALIDITY_FIGURES`: CIE 13.3-1995 Ra,
R1-R14 and DC; CIE 224:2017 / ANSI/IES TM-30 Rf, Rg and the hue-bin values) are still computed,
against the reference at the nearest Planckian temperature, and flagged: CIE 13.3 and CIE 224
define them only for sources close to the locus. A single sample's report shows such a value with
its flag, and criteria judge it "not valid". A lot statistic has no place for the flag, so there
the value is left out, exactly as an undefined (NaN) value is, and counted beside the undefined
ones (``outside_validity``); the sample's other figures (chromaticity, Duv, LER...) are used as
usual. Pure: arrays in, arrays and text out.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

#: The plain words for the rule, shared by the note of the statistics and the documentation.
RULE = ("computed outside the validity range (|Duv| > 0.05: CIE 15:2004 §9.5; CIE 13.3-1995; CIE 224:2017)")

#: Validity figures named one by one in the note; more are summarised by family.
_NAMED_MAX = 6


def sample_flags(outside_validity, n: int) -> np.ndarray | None:
    """The per-sample flag as a boolean array (n,), or None when no sample is flagged (then
    nothing is left out and the statistics take their usual path).

    Raises
    ------
    ValueError
        When the flag does not have one value per sample.
    """
    if outside_validity is None:
        return None
    flag = np.asarray(outside_validity, dtype=bool)
    if flag.shape != (n,):
        raise ValueError(f"outside_validity has shape {flag.shape}, expected ({n},)")
    return flag if flag.any() else None


def left_out_note(flags: np.ndarray | None, summaries: Iterable) -> str:
    """The note of a lot's statistics naming how many samples were left out of which figures and
    why ("" when none). ``summaries``: the lot's :class:`~lumeval.lots.statistics.FigureSummary` s."""
    if flags is None:
        return ""
    k = int(np.count_nonzero(flags))
    hit = [f.name for f in summaries if getattr(f, "outside_validity", 0)]
    if not k or not hit:
        return ""
    from .. import figures

    if len(hit) <= _NAMED_MAX:
        which = ", ".join(figures.label(h) for h in hit)
    else:
        which = ("the CIE 13.3 and CIE 224 / TM-30 figures (Ra, the special indices, DC, Rf, Rg, the hue-bin values; "
                 f"{len(hit)} figures)")
    who = "1 sample lies" if k == 1 else f"{k} samples lie"
    its = "its" if k == 1 else "their"
    return (f"{who} more than 0.05 in Duv from the Planckian locus: {its} values of {which} were {RULE}, so they are "
            f"left out of those figures' statistics and outlier screening and counted as outside_validity; {its} "
            "other figures (chromaticity, Duv, LER...) are included")
