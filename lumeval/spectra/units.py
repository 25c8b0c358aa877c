"""What the values of a spectrum file are: the spectral quantity and unit named in its header.

The readers record the text that states the value unit (column header or a unit/quantity
metadata line) as ``metadata["lumeval.value_unit"]`` and their judgement of it as
``metadata["lumeval.scale"]`` (``absolute``, ``relative`` or ``unknown``). This module reads
that text once more, strictly, to decide whether absolute photometric quantities can be
computed: only **spectral irradiance** (W per m² per nm, e.g. ``W/(m²·nm)``, ``W m-2 nm-1``,
``mW/m2/nm``, ``µW/(cm²·nm)``) and **spectral radiance** (W per sr per m² per nm, e.g.
``W/(sr·m²·nm)``) are recognised. Anything else (relative data, counts, W/nm spectral flux,
W/(sr·nm) intensity, per-µm densities, text that could be read two ways) gives no absolute
figure; lumeval never guesses a scale.

Unit names and prefixes are the SI's (BIPM, *The International System of Units*, 9th ed.,
2019: W, sr, m, nm; prefixes n = 1e-9, µ = 1e-6, m = 1e-3, c = 1e-2).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

#: Spectral quantities for which absolute photometric figures are computed.
IRRADIANCE = "irradiance"
RADIANCE = "radiance"

_POWER_PREFIX = {"": 1.0, "m": 1e-3, "µ": 1e-6, "n": 1e-9}
#: factor from "per <prefix>m²" to "per m²"
_AREA_PER = {"": 1.0, "c": 1e4, "m": 1e6}


@dataclass(frozen=True)
class SpectralQuantity:
    """An absolute spectral quantity read from a unit text.

    Attributes
    ----------
    kind : str
        :data:`IRRADIANCE` (W/(m²·nm)) or :data:`RADIANCE` (W/(sr·m²·nm)).
    factor : float
        Multiply the file's values by this to get W/(m²·nm) or W/(sr·m²·nm).
    text : str
        The unit text as found in the file.
    """

    kind: str
    factor: float
    text: str

    @property
    def si_unit(self) -> str:
        return "W/(m²·nm)" if self.kind == IRRADIANCE else "W/(sr·m²·nm)"


def _normalise(text: str) -> str:
    t = text.replace("μ", "µ").replace("²", "2").replace("⁻", "-").replace("¹", "1").replace("−", "-")
    t = re.sub(r"\^\s*", "", t)
    return t.lower()


# a power unit: watt with an SI prefix, as a word of its own ("mw", "µw", "uw", "w", "watt(s)")
_POWER = re.compile(r"(?<![a-zµ])([nµum]?)(?:w|watts?)(?![a-z])")
# an area: (c|m)?m2 or (c|m)?m-2, not part of "nm"
_AREA = re.compile(r"(?<![a-zµ])([cm]?)m\s*-?2(?![0-9])")
_STERADIAN = re.compile(r"(?<![a-z])sr(?![a-z])")
_PER_NM = re.compile(r"(?<![a-zµ])nm(?![a-z])")
_OTHER_LENGTH = re.compile(r"(?<![a-zµ])(?:[µu]m|cm|mm)\s*-?1?(?![0-9a-z])|(?<![a-z])micron")
# a scale written with the unit ("x 1e-3", "×1000", "*10", "1e-3 W/...") or a wavelength
# interval other than one nm ("W/(m2 5nm)"): the values would need a factor lumeval would have
# to guess, so no absolute figure (found by a review: "x 1e-3" was read as plain W/(m² nm))
_SCALED = re.compile(r"(?<![a-z])[x×*]\s*[-+]?\d|\d\s*e\s*[-+]?\d|(?<![a-z0-9\-.])\d+(?:\.\d+)?\s*nm(?![a-z])")


def spectral_quantity(unit_text: str | None) -> SpectralQuantity | None:
    """The absolute spectral quantity named by ``unit_text``, or None.

    Recognised: one power unit (W, mW, µW/uW, nW), one area (m², cm², mm²), per nm, and
    optionally per sr: irradiance without sr, radiance with it. Returns None for anything else,
    including text that names two power units, no per-nm wavelength interval, another interval
    ("per 5 nm") or a scale written beside the unit ("x 1e-3", "× 10^3").

    Examples
    --------
    ``"Spectral irradiance [W/(m²·nm)]"`` -> irradiance, factor 1;
    ``"mW/(m2 nm)"`` -> irradiance, 1e-3; ``"µW/cm²/nm"`` -> irradiance, 1e-2;
    ``"W/(sr·m²·nm)"`` -> radiance, 1; ``"W/nm"`` -> None; ``"counts"`` -> None.
    """
    if not unit_text:
        return None
    if re.search(r"10\s*\^", str(unit_text)):
        return None  # "× 10^-3": a scale (see _SCALED)
    t = _normalise(str(unit_text))
    if _SCALED.search(t):
        return None
    powers = _POWER.findall(t)
    areas = _AREA.findall(t)
    if len(powers) != 1 or len(areas) != 1 or not _PER_NM.search(t):
        return None
    rest = _PER_NM.sub(" ", _AREA.sub(" ", t))
    if _OTHER_LENGTH.search(rest):
        return None  # a second length unit (per µm, per cm...): ambiguous
    p = powers[0].replace("u", "µ")
    factor = _POWER_PREFIX[p] * _AREA_PER[areas[0]]
    n_sr = len(_STERADIAN.findall(t))
    if n_sr > 1:
        return None
    return SpectralQuantity(RADIANCE if n_sr == 1 else IRRADIANCE, factor, str(unit_text))


def quantity_of(metadata: dict) -> SpectralQuantity | None:
    """The absolute spectral quantity of a spectrum from its reader metadata, or None.

    Only spectra the reader marked ``lumeval.scale = absolute`` are considered, and only when
    their ``lumeval.value_unit`` text is one :func:`spectral_quantity` recognises.
    """
    if (metadata or {}).get("lumeval.scale") != "absolute":
        return None
    return spectral_quantity(metadata.get("lumeval.value_unit"))
