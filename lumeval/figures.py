"""The figure registry: one row per figure lumeval reports, and everything people see of it.

Every list of figures in lumeval is generated from :data:`FIGURES`: the names criteria and
claims files may use (:func:`names`, :func:`lookup`), :meth:`lumeval.engine.Evaluation.figure`,
the JSON record and the CSV columns (:mod:`lumeval.render.tables`), the rows of the terminal
and HTML reports, the wording of criteria messages and of ``lumeval criteria explain``, the
labels of lot statistics and the figures the uncertainty propagation summarises.

A row (:class:`Figure`) says

* ``name``: the stable machine name (JSON/CSV key, criteria ``figure = "..."``); never changes
  meaning;
* ``aliases``: other spellings a person may write (the trade's, e.g. ``CCT``, ``CRI``); names
  and aliases are matched case-insensitively and must not collide;
* ``label``, ``unit``, ``note``: how a person reads it (``CCT``, ``K``; a short hint such as
  "strong red");
* ``decimals``, ``signed``: the number format of human reports (JSON and CSV always carry the
  full precision); margins use the same format with a sign;
* ``group``: the section it belongs to (:data:`GROUPS`);
* ``description``, ``source``: what it is and the standard that defines it (criteria messages,
  tender wording);
* ``read``: how to read it from an :class:`~lumeval.engine.Evaluation` (an (N,) array);
* ``json_path``: where it sits in the per-spectrum JSON object;
* ``summary``: whether reports list it among the key figures; ``csv``: whether the
  per-spectrum CSV has a column for it; ``when_defined``: a key figure that human reports
  list only when some spectrum has it (absolute quantities, which relative data lack);

Adding a metric is one function in ``lumeval/metrics/`` plus one :func:`register` call here
(see DEVELOPERS.md, "How to add a metric"). The module imports nothing heavy: ``lumeval
--help`` may import it.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover
    import numpy as np
    from numpy.typing import ArrayLike

    from .engine import Evaluation

#: Report sections, in report order: key -> title for people.
GROUPS: dict[str, str] = {
    "chromaticity": "Chromaticity (CIE 1931 2°)",
    "colour rendering": "Colour rendering (CIE 13.3)",
    "fidelity": "Fidelity and gamut (CIE 224:2017 / TM-30)",
    "photometry": "Photometry",
}


@dataclass(frozen=True)
class Figure:
    """One figure lumeval reports (see the module docstring for the meaning of each field)."""

    name: str
    label: str
    group: str
    description: str
    source: str
    read: Callable[[Evaluation], Any] = field(repr=False, compare=False)
    unit: str = ""
    decimals: int = 1
    signed: bool = False
    aliases: tuple[str, ...] = ()
    note: str = ""
    json_path: tuple[str | int, ...] = ()
    summary: bool = False
    csv: bool = True
    when_defined: bool = False

    def __post_init__(self) -> None:
        if self.group not in GROUPS:
            raise ValueError(f"figure {self.name!r}: unknown group {self.group!r} (one of {', '.join(GROUPS)})")
        if not self.json_path:
            object.__setattr__(self, "json_path", (self.name,))

    # ---- wording

    @property
    def heading(self) -> str:
        """Label with the unit, for table headings: ``CCT (K)``, ``Ra``, ``Rcs,h1 (%)``."""
        return f"{self.label} ({self.unit})" if self.unit else self.label

    @property
    def row_label(self) -> str:
        """Label with the hint and the unit, for report rows: ``R9 (strong red)``, ``Rcs,h1 (red, %)``."""
        extra = ", ".join(p for p in (self.note, self.unit) if p)
        return f"{self.label} ({extra})" if extra else self.label

    # ---- numbers for people

    def spec(self, extra: int = 0, *, sign: bool | None = None) -> str:
        """The format spec of this figure with ``extra`` more decimals (``sign`` forces a + sign on or off)."""
        plus = self.signed if sign is None else sign
        return f"{'+' if plus else ''}.{max(0, self.decimals + extra)}f"

    def format(self, value: Any, extra: int = 0, *, unit: bool = False, sign: bool | None = None,
               missing: str = "n/a") -> str:
        """``value`` as a person reads it: the figure's own decimals (plus ``extra``), "n/a" when
        undefined, no sign on a value that rounds to zero, optionally followed by the unit."""
        text = format_number(value, self.spec(extra, sign=sign), missing=missing)
        if unit and self.unit and text != missing:
            text += ("" if self.unit == "%" else " ") + self.unit
        return text

    def format_margin(self, margin: Any, *, unit: bool = False) -> str:
        """A margin (positive inside the acceptance zone) with this figure's precision and a sign;
        extra decimals so that a non-zero margin never prints as zero (:func:`margin_extra_decimals`)."""
        return self.format(margin, margin_extra_decimals(margin, self.decimals), unit=unit, sign=True)

    def value(self, ev: Evaluation) -> np.ndarray:
        """This figure for every spectrum of ``ev``: a float array of shape (N,)."""
        import numpy as np

        return np.asarray(self.read(ev), dtype=float)


def format_significant(value: float, digits: int) -> str:
    """``value`` with ``digits`` significant digits in positional notation, never an exponent
    (trailing zeros dropped): numbers of very different sizes in one column or one sentence
    then read as one kind of number (-0.000095925 beside -0.00045617)."""
    import numpy as np

    return np.format_float_positional(float(value), precision=digits, unique=False, fractional=False, trim="-")


def format_number(value: Any, spec: str, *, missing: str = "n/a") -> str:
    """``value`` formatted with ``spec``; ``missing`` for None/NaN/inf; a value that rounds to zero
    prints without a sign ("-0" or "+0.00" would suggest a direction)."""
    if value is None:
        return missing
    f = float(value)
    if not math.isfinite(f):
        return missing
    text = format(f, spec)
    if float(text) == 0.0:
        text = format(0.0, spec.replace("+", ""))
    return text


#: Most extra decimals a margin gets: enough for the last bit of any figure lumeval reports
#: (a margin of one unit in the last place of a value near 100 is 1.4e-14; of a Duv, 4e-19).
MARGIN_EXTRA_MAX = 20


def margin_extra_decimals(margin: Any, decimals: int, *, limit: int = MARGIN_EXTRA_MAX) -> int:
    """Decimals beyond ``decimals`` needed so that a non-zero ``margin`` does not print as zero
    (at most ``limit``): -7.03 % against a limit of -7 % must not read "margin 0", and a value
    3.4e-13 above a limit written to 14 digits must not read "0.000000 ✘ FAIL" (found by a
    review)."""
    if margin is None:
        return 0
    f = float(margin)
    if not math.isfinite(f) or f == 0.0:
        return 0
    for k in range(limit + 1):
        if float(format(abs(f), f".{max(0, decimals + k)}f")) != 0.0:
            return k
    return limit


# --------------------------------------------------------------------------- the registry

#: name -> Figure, in report order. Change it only through :func:`register` / :func:`unregister`.
FIGURES: dict[str, Figure] = {}
_KEYS: dict[str, str] = {}  # casefolded name or alias -> name


def _key(s: str) -> str:
    return " ".join(str(s).replace("′", "'").split()).casefold()


def register(fig: Figure, *, after: str | None = None) -> Figure:
    """Add ``fig`` to the registry (at the end, or after the figure ``after``).

    Raises ValueError when its name or an alias collides (case-insensitively) with a
    registered figure's name or alias.
    """
    keys = [_key(fig.name), *(_key(a) for a in fig.aliases)]
    if len(set(keys)) != len(keys):
        raise ValueError(f"figure {fig.name!r}: an alias repeats the name or another alias")
    for k in keys:
        if k in _KEYS:
            raise ValueError(f"figure {fig.name!r}: {k!r} already names figure {_KEYS[k]!r}")
    if after is None:
        FIGURES[fig.name] = fig
    else:
        if after not in FIGURES:
            raise KeyError(after)
        items = list(FIGURES.items())
        pos = [n for n, _ in items].index(after) + 1
        items.insert(pos, (fig.name, fig))
        FIGURES.clear()
        FIGURES.update(items)
    for k in keys:
        _KEYS[k] = fig.name
    return fig


def unregister(name: str) -> None:
    """Remove a figure (for tests that register one of their own)."""
    FIGURES.pop(name)
    for k in [k for k, v in _KEYS.items() if v == name]:
        del _KEYS[k]


def names() -> tuple[str, ...]:
    """Every figure name, in report order."""
    return tuple(FIGURES)


def get(name: str) -> Figure:
    """The figure ``name`` (its name exactly, or an alias, case-insensitively); KeyError when unknown."""
    fig = FIGURES.get(name)
    if fig is not None:
        return fig
    canonical = _KEYS.get(_key(name))
    if canonical is None:
        raise KeyError(f"unknown figure {name!r}")
    return FIGURES[canonical]


def lookup(name: str) -> str | None:
    """The canonical name of the figure ``name`` denotes (name or alias, case-insensitive), or None."""
    if name in FIGURES:
        return name
    return _KEYS.get(_key(name))


def spellings() -> tuple[str, ...]:
    """Every accepted spelling (names and aliases), for "did you mean" suggestions."""
    out = list(FIGURES)
    for f in FIGURES.values():
        out += [a for a in f.aliases if a not in out]
    return tuple(out)


def by_group() -> Iterator[tuple[str, list[Figure]]]:
    """(group, figures of that group in registry order) for every group that has figures."""
    for g in GROUPS:
        figs = [f for f in FIGURES.values() if f.group == g]
        if figs:
            yield g, figs


def summary_figures(groups: tuple[str, ...] | None = None) -> list[Figure]:
    """The key figures (``summary=True``) of ``groups`` (default: all), in registry order."""
    return [f for f in FIGURES.values() if f.summary and (groups is None or f.group in groups)]


def label(name: str) -> str:
    """The label people use for ``name`` (the name itself when it is not a figure)."""
    try:
        return get(name).label
    except KeyError:
        return name


def unit(name: str) -> str:
    try:
        return get(name).unit
    except KeyError:
        return ""


def heading(name: str) -> str:
    try:
        return get(name).heading
    except KeyError:
        return name


def fmt(name: str, value: Any, extra: int = 0, *, unit: bool = False) -> str:
    """``value`` of the figure ``name`` in its human format (``.4g`` for a name that is not a figure)."""
    try:
        return get(name).format(value, extra, unit=unit)
    except KeyError:
        return format_number(value, ".4g")


def summary_text() -> list[str]:
    """The figure names as a short list for messages: families collapsed (``R1..R14``)."""
    out: list[str] = []
    seen_families: set[str] = set()
    for n in FIGURES:
        fam = _family(n)
        if fam is None:
            out.append(n)
            continue
        prefix, _ = fam
        if prefix in seen_families:
            continue
        seen_families.add(prefix)
        members = sorted(int(m[len(prefix):]) for m in FIGURES if (_family(m) or ("", 0))[0] == prefix)
        out.append(f"{prefix}{members[0]}..{prefix}{members[-1]}" if len(members) > 1 else f"{prefix}{members[0]}")
    return out


_FAMILIES = ("Rf_h", "Rcs_h", "Rhs_h", "R")


def family(name: str) -> str | None:
    """The family a numbered figure belongs to (``R9`` -> ``R``, ``Rcs_h1`` -> ``Rcs_h``), or None."""
    fam = _family(name)
    return fam[0] if fam else None


def _family(name: str) -> tuple[str, int] | None:
    for p in _FAMILIES:
        if name.startswith(p) and name[len(p):].isdigit():
            return p, int(name[len(p):])
    return None


# --------------------------------------------------------------------------- readers

def _attr(name: str) -> Callable[[Evaluation], Any]:
    return lambda ev: getattr(ev, name)


def _sub(part: str, name: str, col: int | None = None) -> Callable[[Evaluation], Any]:
    if col is None:
        return lambda ev: getattr(getattr(ev, part), name)
    return lambda ev: getattr(getattr(ev, part), name)[:, col]


# --------------------------------------------------------------------------- the rows

_CIE15 = "CIE 15:2004, CIE 1931 2° observer"
_CRI = "CIE 13.3-1995"
_TM30 = "ANSI/IES TM-30-20"
_BIN_HUE = ("red", "red-orange", "orange", "yellow-orange", "yellow", "yellow-green", "green", "green",
            "green-cyan", "cyan", "blue", "blue", "blue-violet", "violet", "purple", "red-purple")

register(Figure("x", "x", "chromaticity", "chromaticity coordinate x", _CIE15, _attr("x"), decimals=4, summary=True))
register(Figure("y", "y", "chromaticity", "chromaticity coordinate y", _CIE15, _attr("y"), decimals=4, summary=True))
register(Figure("u", "u", "chromaticity", "CIE 1960 UCS coordinate u", "CIE 15:2004", _attr("u"), decimals=4, csv=False))
register(Figure("v", "v", "chromaticity", "CIE 1960 UCS coordinate v", "CIE 15:2004", _attr("v"), decimals=4, csv=False))
register(Figure("u_prime", "u′", "chromaticity", "CIE 1976 UCS coordinate u′", "CIE 15:2004", _attr("u_prime"),
                decimals=4, aliases=("u'",), summary=True))
register(Figure("v_prime", "v′", "chromaticity", "CIE 1976 UCS coordinate v′", "CIE 15:2004", _attr("v_prime"),
                decimals=4, aliases=("v'",), summary=True))
register(Figure("cct_K", "CCT", "chromaticity", "correlated colour temperature (CCT)",
                "CIE 15:2004; computed by Ohno (2014)", _attr("cct_K"), unit="K", decimals=0, aliases=("CCT",),
                summary=True))
register(Figure("duv", "Duv", "chromaticity", "Duv, the signed distance from the Planckian locus in CIE 1960 (u, v)",
                "ANSI C78.377", _attr("duv"), decimals=4, signed=True, aliases=("Δuv",), summary=True))
register(Figure("Ra", "Ra", "colour rendering", "general colour rendering index Ra", _CRI, _sub("cri", "Ra"),
                decimals=0, aliases=("CRI", "CRI Ra"), json_path=("cri", "Ra"), summary=True))
for _i in range(1, 15):
    register(Figure(f"R{_i}", f"R{_i}", "colour rendering", f"special colour rendering index R{_i}", _CRI,
                    _sub("cri", "R", _i - 1), decimals=0, note="strong red" if _i == 9 else "",
                    json_path=("cri", "R", f"R{_i}"), summary=_i == 9))
register(Figure("dc", "DC", "colour rendering", "CIE 13.3 chromaticity distance DC from the Planckian locus", _CRI,
                _sub("cri", "dc"), decimals=4, note="validity < 0.0054", json_path=("cri", "dc")))
register(Figure("cie2017_Rf", "Rf (CIE 224)", "fidelity", "colour fidelity index Rf", "CIE 224:2017",
                _attr("cie2017_Rf"), decimals=0, json_path=("cie2017", "Rf")))
register(Figure("Rf", "Rf", "fidelity", "fidelity index Rf", "ANSI/IES TM-30-20 (identical to CIE 224:2017 Rf)",
                _sub("tm30", "Rf"), decimals=0, aliases=("TM-30 Rf",), json_path=("tm30", "Rf"), summary=True))
register(Figure("Rg", "Rg", "fidelity", "gamut index Rg", "ANSI/IES TM-30-20", _sub("tm30", "Rg"), decimals=0,
                aliases=("TM-30 Rg",), json_path=("tm30", "Rg"), summary=True))
for _j in range(1, 17):
    register(Figure(f"Rf_h{_j}", f"Rf,h{_j}", "fidelity", f"local fidelity index Rf,h{_j} (hue bin {_j})", _TM30,
                    _sub("tm30", "Rf_h", _j - 1), decimals=0, note=_BIN_HUE[_j - 1], aliases=(f"Rf,h{_j}",),
                    json_path=("tm30", "Rf_h", _j - 1), summary=_j == 1))
for _j in range(1, 17):
    register(Figure(f"Rcs_h{_j}", f"Rcs,h{_j}", "fidelity", f"local chroma shift Rcs,h{_j} (hue bin {_j})", _TM30,
                    _sub("tm30", "Rcs_h", _j - 1), unit="%", decimals=0, signed=True, note=_BIN_HUE[_j - 1],
                    aliases=(f"Rcs,h{_j}",), json_path=("tm30", "Rcs_h", _j - 1), summary=_j == 1))
#: How every report and document states the unit of the local hue shift Rhs,h. ANSI/IES TM-30-18
#: defines Rhs,hj as the tangential component of the shift of bin j's average (a′, b′) from
#: reference to test, divided by the reference average's chroma: a length over a length, so a
#: plain number (for small shifts about the hue-angle change in radians, but not an angle). It is
#: the sideways part of the arrow in the colour-vector picture, where every reference average
#: sits on the unit circle. colour-science's R_hs is the same quantity (tests/test_metrics_tm30.py).
HUE_SHIFT_UNIT = "dimensionless"

#: The key figures, in reading order: the one row per spectrum of the compact terminal layouts,
#: the one-line ``repr`` summary and the distributions drawn for a lot all show these (the
#: trade's usual short list: CCT, Duv, Ra, R9, Rf, Rg; common practice, no source).
KEY_FIGURES = ("cct_K", "duv", "Ra", "R9", "Rf", "Rg")

for _j in range(1, 17):
    register(Figure(f"Rhs_h{_j}", f"Rhs,h{_j}", "fidelity",
                    f"local hue shift Rhs,h{_j} (hue bin {_j}; {HUE_SHIFT_UNIT})",
                    _TM30, _sub("tm30", "Rhs_h", _j - 1), decimals=2, signed=True, note=_BIN_HUE[_j - 1],
                    aliases=(f"Rhs,h{_j}",), json_path=("tm30", "Rhs_h", _j - 1)))
register(Figure("ler_lm_per_W", "LER", "photometry", "luminous efficacy of radiation (LER)",
                "CIE 15:2004 / ISO 23539, Km = 683 lm/W", _sub("photometry", "ler_lm_per_W"), unit="lm/W", decimals=0,
                aliases=("LER",), summary=True))
register(Figure("sp_ratio", "S/P", "photometry", "scotopic-to-photopic (S/P) ratio",
                "CIE scotopic and photopic luminous efficiency functions", _sub("photometry", "sp_ratio"), decimals=2,
                aliases=("S/P", "S/P ratio"), summary=True))
register(Figure("melanopic_der", "melanopic DER", "photometry",
                "melanopic daylight (D65) efficacy ratio (melanopic DER)", "CIE S 026/E:2018",
                _sub("photometry", "melanopic_der"), decimals=3, aliases=("melanopic DER", "mel-DER", "mDER"),
                summary=True))
register(Figure("peak_nm", "peak wavelength", "photometry", "peak wavelength of the spectrum",
                "common practice", _sub("photometry", "peak_nm"), unit="nm", decimals=0,
                aliases=("peak wavelength", "peak"), summary=True))

# Figures practitioners look for beside the standard ones (lumeval.metrics.classify and
# lumeval.metrics.absolute; read lazily from the Evaluation).
_ANSI = "ANSI C78.377-2017 basic categories (lumeval.criteria.regions); Δu′v′ in CIE 1976 (u′, v′)"
register(Figure("ansi_category_K", "ANSI category", "chromaticity",
                "nominal CCT of the ANSI C78.377-2017 category whose quadrangle contains the chromaticity (or the "
                "nearest one)", _ANSI, lambda ev: ev.chromaticity_class.ansi_nominal_K, unit="K", decimals=0,
                aliases=("ANSI category", "ANSI C78.377 category"), json_path=("ansi_c78377", "category_K")),
         after="duv")
register(Figure("ansi_distance_upvp", "distance outside the ANSI category", "chromaticity",
                "Δu′v′ from the chromaticity to the nearest ANSI C78.377-2017 quadrangle (0 inside)", _ANSI,
                lambda ev: _outside(ev.chromaticity_class.ansi_margin_upvp), decimals=4,
                aliases=("ANSI distance",), json_path=("ansi_c78377", "distance_upvp")), after="ansi_category_K")
register(Figure("sdcm_steps", "SDCM steps", "chromaticity",
                "SDCM (MacAdam) steps from the nearest IEC 60081 colour centre (F2700 ... F6500)",
                "MacAdam (1942) quadratic form with IEC 60081 ellipses (lumeval.criteria.regions; secondary)",
                lambda ev: ev.chromaticity_class.sdcm_steps, decimals=1, aliases=("SDCM", "MacAdam steps"),
                json_path=("sdcm", "steps")), after="ansi_distance_upvp")
register(Figure("Re", "Re", "colour rendering", "mean of the special colour rendering indices R1..R14 (Re)",
                "mean of CIE 13.3-1995 R1..R14: common practice, no standard source", lambda ev: ev.Re, decimals=0,
                aliases=("CRI Re",), json_path=("cri", "Re"), summary=True), after="Ra")
_S026 = "CIE S 026/E:2018; Km = 683 lm/W (CIE 15:2004)"
register(Figure("illuminance_lx", "illuminance", "photometry",
                "illuminance E_v of spectral irradiance data (W/(m²·nm) and its multiples)", _S026,
                lambda ev: ev.absolute.illuminance_lx, unit="lx", decimals=1, aliases=("illuminance", "Ev", "lux"),
                summary=True, when_defined=True))
register(Figure("luminance_cd_m2", "luminance", "photometry",
                "luminance L_v of spectral radiance data (W/(sr·m²·nm) and its multiples)", _S026,
                lambda ev: ev.absolute.luminance_cd_m2, unit="cd/m²", decimals=1, aliases=("luminance", "Lv"),
                summary=True, when_defined=True))
register(Figure("melanopic_edi_lx", "melanopic EDI", "photometry",
                "melanopic equivalent daylight (D65) illuminance (melanopic EDI) of spectral irradiance data", _S026,
                lambda ev: ev.absolute.melanopic_edi_lx, unit="lx", decimals=1,
                aliases=("melanopic EDI", "mEDI", "m-EDI"), summary=True, when_defined=True))
register(Figure("melanopic_edl_cd_m2", "melanopic EDL", "photometry",
                "melanopic equivalent daylight (D65) luminance (melanopic EDL) of spectral radiance data", _S026,
                lambda ev: ev.absolute.melanopic_edl_cd_m2, unit="cd/m²", decimals=1,
                aliases=("melanopic EDL", "mEDL"), summary=True, when_defined=True))
del _i, _j


def _outside(margin: ArrayLike) -> Any:
    """Distance outside a region from a signed margin (positive inside): 0 inside, NaN kept."""
    import numpy as np

    m = np.asarray(margin, dtype=float)
    return np.where(m >= 0, 0.0, -m)
