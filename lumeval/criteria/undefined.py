"""Why a figure a clause judges is undefined for a spectrum (the reason of a ``not judged`` verdict).

Two causes are told apart:

- an **absolute** figure (illuminance, luminance, melanopic EDI or EDL;
  :mod:`lumeval.metrics.absolute`) needs spectral irradiance or radiance data in a unit lumeval
  recognises (:mod:`lumeval.spectra.units`); a spectrum without an absolute scale, or of the other
  quantity, has none, whatever its CCT (a review found such clauses explained by "CCT
  undefined …" or "the figure is undefined for this spectrum");
- every other figure that is undefined is so because the CCT is (no reference illuminant: CIE
  15:2004 §9.5), and the reason is the CCT's own.
"""

from __future__ import annotations

import numpy as np

from ..errors import quote

#: Absolute figures -> (the spectral quantity they need, its unit as a person writes it).
ABSOLUTE_NEEDS = {
    "illuminance_lx": ("irradiance", "W/(m²·nm)"),
    "melanopic_edi_lx": ("irradiance", "W/(m²·nm)"),
    "luminance_cd_m2": ("radiance", "W/(sr·m²·nm)"),
    "melanopic_edl_cd_m2": ("radiance", "W/(sr·m²·nm)"),
}


def _scale_of(ev, i: int) -> tuple[str, str, str]:
    """Spectrum ``i``'s (absolute quantity, ``lumeval.scale``, ``lumeval.value_unit``) as read."""
    ab = getattr(ev, "absolute", None)
    quantity = ab.quantity[i] if ab is not None and i < len(ab.quantity) else ""
    metas = getattr(getattr(ev, "spectra", None), "metadata", None)
    meta = (metas[i] if metas is not None and i < len(metas) else None) or {}
    return quantity, meta.get("lumeval.scale") or "", meta.get("lumeval.value_unit") or ""


def _absolute_reason(scale_of: tuple[str, str, str], figure: str) -> str:
    """Why the absolute ``figure`` is missing for a spectrum read so (:func:`_scale_of`; plain
    words, data quoted)."""
    from .. import figures

    quantity, scale, value_unit = scale_of
    need, unit = ABSOLUTE_NEEDS[figure]
    what = f"its {figures.label(figure)} cannot be computed"
    if quantity and quantity != need:
        return (f"the spectrum is a spectral {quantity}, not a spectral {need}, so {what} "
                f"(it needs spectral {need} data in {unit})")
    if scale == "absolute" and value_unit:
        return (f"the spectrum's unit {quote(value_unit)} is not a spectral irradiance or radiance lumeval can use, "
                f"so its values are taken as relative (no absolute scale) and {what} (it needs spectral {need} in {unit})")
    if scale == "relative":
        return f"the spectrum is in relative units (no absolute scale), so {what} (it needs spectral {need} in {unit})"
    return (f"the spectrum is taken as relative (no absolute scale: its file states no unit such as {unit}), "
            f"so {what}")


def undefined_reasons(ev, figure: str, measured) -> tuple[str, ...] | None:
    """Per spectrum, why ``figure`` is undefined ("" where it is defined or no reason is known),
    or None; ``measured`` is the figure's array (N,).

    For an absolute figure: the spectrum's scale or quantity (:data:`ABSOLUTE_NEEDS`), worded
    only for the spectra where it is undefined; for every other figure: the CCT's own reason
    (``ev.cct_reason``), used by :func:`lumeval.criteria.verdicts.simple_outcomes` where the
    figure is undefined."""
    m = np.asarray(measured, dtype=float)
    n = m.size
    from .. import figures

    name = figures.lookup(figure) or figure
    if name in ABSOLUTE_NEEDS:  # one wording per way of reading (a lot: many spectra read alike)
        words: dict[tuple[str, str, str], str] = {}
        out = []
        for i, ok in enumerate(np.isfinite(m)):
            if ok:
                out.append("")
                continue
            key = _scale_of(ev, i)
            if key not in words:
                words[key] = _absolute_reason(key, name)
            out.append(words[key])
        return tuple(out)
    reasons = getattr(ev, "cct_reason", None)
    if reasons is None or len(reasons) != n:
        return None
    return tuple(f"CCT undefined: {r}" if r else "" for r in reasons)
