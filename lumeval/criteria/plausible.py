"""Limits that only a slip of units explains: refused when a criteria file is read.

A limit can be a valid number and still say nothing a spectrum could meet: a CCT band written
in kilokelvin (``range = [3.8, 4.3]``), a Duv written in thousandths (``max = 3``), a minimum
Ra of 800. Each would be judged and fail (or pass) every spectrum without anyone noticing why.
The loader refuses them with the value probably meant. Only *published* bounds are used, so a
limit that is unusual but possible (Ra ≥ 100, Rf ≥ 100, R9 ≥ −250, Rg ≥ 150) is kept:

* **CCT** (``cct_K``, and the nominal CCT ``ansi_category_K``): every limit within
  1000-25000 K, the range in which lumeval reports a CCT
  (:data:`lumeval.metrics.colorimetry.CCT_MIN_K`, ``CCT_MAX_K``: Ohno (2014) LEUKOS
  10(1):47-55 below, CIE daylight up to 25 000 K, CIE 15:2004 §3.1). Outside it no spectrum has
  a CCT, so a minimum or maximum there is either never met or always met.
* **Duv**: every limit within ±0.05 (:data:`lumeval.metrics.colorimetry.DUV_LIMIT`): beyond it
  the concept of CCT is not meaningful (CIE 15:2004 §9.5) and lumeval reports no CCT.
* **A minimum above the largest value the figure can take**:

  - CIE 13.3-1995: Ri = 100 − 4.6 ΔEi with ΔEi ≥ 0 (as :mod:`lumeval.metrics.cri` computes
    it), so R1 … R14, Ra (their mean over R1 … R8) and Re (over R1 … R14) are at most 100;
  - CIE 224:2017 and ANSI/IES TM-30-20: Rf = 10 ln(exp((100 − 6.73 ΔE′)/10) + 1) with ΔE′ ≥ 0
    (:func:`lumeval.metrics.tm30._Rf_scale`), at most 10 ln(e¹⁰ + 1) ≈ 100.000454 — slightly
    above 100, so "Rf ≥ 100" stays possible; the same scaling gives Rf,hj;
  - luminous efficacy of radiation: LER = Km ∫V(λ)S(λ)dλ / ∫S(λ)dλ with V(λ) ≤ 1, so at most
    Km = 683 lm/W (CIE 15:2004; :data:`lumeval.metrics.photometry.KM_LM_PER_W`; quoted from
    memory).

A maximum above such a bound is always met but not wrong (a clause may state the obvious), and
Rg, the chroma and hue shifts and the other figures have no published bound: they are not
checked (limits on a chroma shift Rcs,hj that look like fractions of a figure lumeval states in
percent get a warning, :func:`percent_as_fraction`). The same rule applies wherever a figure
clause sits, including a clause judged over a range of settings (``over``) and
``track_locus``'s ``max_abs_duv``; ``over`` itself is in the settings' own unit (K, %, mA) and
is not checked here.

A nominal CCT category written in quotes (``nominal_cct = "4000"``) is refused with the plain fix
"write it without quotes" (:func:`quoted_category`) rather than "not a category".
"""

from __future__ import annotations

import math
import re

from .. import figures
from ..errors import shown

#: Largest CIE 224:2017 / TM-30 Rf: the scaling at ΔE′ = 0, 10 ln(e¹⁰ + 1) (≈ 100.000454).
RF_MAX = 10.0 * math.log1p(math.exp(100.0 / 10.0))
#: Largest CIE 13.3 Ri, Ra and Re (ΔE = 0).
CRI_MAX = 100.0


def _upper_bounds() -> dict[str, tuple[float, str]]:
    """Figure name -> (largest value it can take, why), for the figures with a published bound."""
    from ..metrics.photometry import KM_LM_PER_W

    cri = "CIE 13.3-1995: Ri = 100 − 4.6 ΔE, so at most 100"
    rf = f"CIE 224:2017 / TM-30: Rf = 10 ln(exp((100 − 6.73 ΔE′)/10) + 1), so at most {RF_MAX:.6f}, at ΔE′ = 0"
    out = {"Ra": (CRI_MAX, cri), "Re": (CRI_MAX, cri), "Rf": (RF_MAX, rf), "cie2017_Rf": (RF_MAX, rf),
           "ler_lm_per_W": (KM_LM_PER_W, f"LER = Km ∫V S / ∫S with V(λ) ≤ 1, so at most Km = {KM_LM_PER_W:g} lm/W")}
    for name in figures.names():
        fam = figures.family(name)
        if fam == "R":
            out[name] = (CRI_MAX, cri)
        elif fam == "Rf_h":
            out[name] = (RF_MAX, rf)
    return out


#: The figures whose limits are CCTs in kelvin.
CCT_FIGURES = ("cct_K", "ansi_category_K")
#: Powers of ten tried to read a CCT slip as kelvin: kilokelvin (10³) first.
_KELVIN_POWERS = (3, 1, 2, -1, -2)


def _number(v: float) -> str:
    """A suggested value as a person writes it: 3800, 0.003, 88 (no float noise from scaling)."""
    return f"{float(f'{v:.10g}'):g}"


def _power(v: float, ok, powers) -> int | None:
    """The first ``k`` of ``powers`` for which ``ok(v · 10^k)``, or None."""
    for k in powers:
        if ok(_times(v, k)):
            return k
    return None


def _times(v: float, k: int) -> float:
    """``v · 10^k`` without float noise (3.8 · 10³ is 3800, not 3799.9999999999995)."""
    return float(f"{v * 10.0 ** k:.10g}")


def _setting(key: str, values: list[float]) -> str:
    return f"range = [{_number(values[0])}, {_number(values[1])}]" if key == "range" else f"{key} = {_number(values[0])}"


def _first_outside(values, ok) -> int | None:
    """Index of the first value for which ``ok`` is false (None: all are fine)."""
    return next((i for i, v in enumerate(values) if not ok(v)), None)


def check_limits(figure: str, key: str, raw: list, values: list[float]) -> tuple[str, str] | None:
    """The problem and the fix when a limit on ``figure`` is implausible, else None.

    Parameters
    ----------
    figure : str
        Canonical figure name (:func:`lumeval.figures.lookup`).
    key : str
        ``"min"``, ``"max"`` or ``"range"``: where the limit(s) stand in the file.
    raw : list
        The values as the file gives them (quoted in the message by :func:`lumeval.errors.shown`).
    values : list of float
        The same values as finite floats: one for min/max, [low, high] for range.
    """
    from ..metrics.colorimetry import CCT_MAX_K, CCT_MIN_K, DUV_LIMIT

    label = figures.label(figure)
    if figure in CCT_FIGURES:
        def in_range(w: float) -> bool:
            return CCT_MIN_K <= w <= CCT_MAX_K

        i = _first_outside(values, in_range)
        if i is None:
            return None
        problem = (f"{label} limit {shown(raw[i])} K is outside {CCT_MIN_K:.0f}-{CCT_MAX_K:.0f} K, where lumeval "
                   "reports CCT: no spectrum has a CCT there, so the limit cannot mean what it says")
        powers = [0 if in_range(v) else _power(v, in_range, _KELVIN_POWERS) for v in values]
        if all(k is not None for k in powers):
            ends = [_times(v, k) for v, k in zip(values, powers) if k is not None]
            meant = f" ({_number(ends[0])}-{_number(ends[1])} K)" if key == "range" else ""
            return problem, f"CCT limits are in kelvin: did you mean {_setting(key, ends)}{meant}?"
        return problem, f"write CCT limits in kelvin from {CCT_MIN_K:.0f} to {CCT_MAX_K:.0f}"
    if figure == "duv":
        def small(w: float) -> bool:
            return abs(w) <= DUV_LIMIT

        i = _first_outside(values, small)
        if i is None:
            return None
        problem = (f"Duv limit {shown(raw[i])} exceeds {DUV_LIMIT:g} in magnitude: so far from the Planckian locus "
                   "CCT is not meaningful (CIE 15:2004 §9.5) and lumeval reports none")
        fixed = [v if small(v) else (v / 1000.0 if abs(v) >= 1 and small(v / 1000.0) else None) for v in values]
        if all(v is not None for v in fixed):
            ends = [float(v) for v in fixed if v is not None]
            return problem, f"Duv is a plain number, not in thousandths: did you mean {_setting(key, ends)}?"
        return problem, f"write Duv as a plain number within ±{DUV_LIMIT:g}, e.g. 0.006"
    bound = _upper_bounds().get(figure)
    if bound is None or key == "max":
        return None
    top, why = bound
    if values[0] <= top:
        return None
    problem = f"no source can meet {label} ≥ {shown(raw[0])} ({why})"
    k = _power(values[0], lambda w: w <= top, (-1, -2, -3)) if values[0] >= 2 * top else None
    if k is not None:  # a slip of the decimal point: both ends of a range carry it
        return problem, f"did you mean {_setting(key, [_times(v, k) for v in values])}?"
    return problem, f"write a minimum of at most {math.floor(top):d}"


def fidelity_ceiling(figure: str, lower: float | None, upper: float | None) -> str | None:
    """A warning when a maximum on a fidelity figure (Rf, Rf,hj) lies from 100 up to just below
    :data:`RF_MAX`, else None: the CIE 224:2017 scaling gives a source identical to its reference
    Rf = 10 ln(e¹⁰ + 1) ≈ 100.00045, so ``max = 100`` fails it (found by a review). A warning, not a
    refusal: the limit is possible, only probably not meant. The text names the fix (the key as the
    clause has it, ``max`` or ``range``)."""
    bound = _upper_bounds().get(figure)
    if upper is None or bound is None or bound[0] != RF_MAX or not 100.0 <= upper < RF_MAX:
        return None
    label = figures.label(figure)
    fix = "max = 100.0005" if lower is None else f"range = [{_number(lower)}, 100.0005]"
    return (f"the maximum {label} ≤ {_number(upper)} fails a source identical to its reference, whose {label} is "
            f"10 ln(e¹⁰ + 1) ≈ {RF_MAX:.5f} by the CIE 224:2017 scaling — write {fix}, or no maximum")


def percent_as_fraction(figure: str, lower: float | None, upper: float | None) -> str | None:
    """A warning when the limits on a chroma shift Rcs,hj, which lumeval states in percent, look
    like fractions: every limit given is under 1 in magnitude and one is not zero (``range =
    [-0.01, 0.15]`` reads as −0.01 % … 0.15 %, a window no real source stays in, where −1 % …
    15 % was probably meant: the chroma shift is ΔC/C, which tables may print as a fraction).
    A warning, not a refusal: such limits are possible, only probably not meant; ``min = 0``
    alone is a plain limit and is not questioned."""
    if figures.family(figure) != "Rcs_h":
        return None
    given = [v for v in (lower, upper) if v is not None]
    if not given or not all(abs(v) < 1.0 for v in given) or not any(given):
        return None
    label = figures.label(figure)
    now = " … ".join(f"{_number(v)} %" for v in given)
    meant = [_times(v, 2) for v in given]
    fix = (f"range = [{_number(meant[0])}, {_number(meant[1])}]" if len(given) == 2
           else f"{'min' if lower is not None else 'max'} = {_number(meant[0])}")
    return (f"{label} is in percent in lumeval, so these limits read as {now}; if they are fractions "
            f"(-0.01 = -1 %), write {fix}")


def kelvin_fix(key: str, value, ok) -> str:
    """``"CCTs are in kelvin: did you mean KEY = V? "`` when ``value`` times a power of ten (10³
    first: a CCT written in kilokelvin) is a value ``ok`` accepts, else ``""``."""
    try:
        v = float(value)
    except OverflowError:  # a TOML integer beyond float's range
        return ""
    if not math.isfinite(v):
        return ""
    k = _power(v, ok, _KELVIN_POWERS)
    return "" if k is None else f"CCTs are in kelvin: did you mean {key} = {_number(_times(v, k))}? "


def quoted_category(text: str, table_1: dict, allowed: str) -> tuple[str, str]:
    """(problem, fix) for a ``nominal_cct`` given as text: ``"4000"`` or ``"4000 K"`` names a
    category but is a string in TOML, and a category is a number (written without quotes)."""
    m = re.fullmatch(r"([0-9]{1,6})(?:\.0*)?(?: ?K)?", text.strip(), flags=re.IGNORECASE)  # no nested repeats
    if m and int(m.group(1)) in table_1:
        return (f"{shown(text)} is text in quotes; a nominal CCT category is a number",
                f"write nominal_cct = {int(m.group(1))} without quotes")
    return (f"{shown(text)} is not a nominal CCT category (a number written without quotes) or \"flexible\"",
            f"allowed: {allowed}")
