"""The measurement requirements a tender states beside its criteria (``lumeval criteria explain``).

A limit on Ra or Rf means little unless every bidder measures the same way: over the same
spectral range and step, at the same operating point, with a calibrated instrument, on a stated
number of samples, and hands over the data in a form the buyer can check. This module derives
what it can from the criteria (which figures are judged, whether absolute quantities or
measurement uncertainty enter) and leaves clearly marked placeholders, ``[SPECIFY: …]``, for
what only the specifier can decide. It returns Markdown lines; nothing is printed or read here.

Where a value comes from is said beside it. Standards are quoted from memory where marked; a
rule of thumb without a published source is marked "common practice, no source".
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .verdicts import CHROMATICITY_KINDS

#: How a placeholder reads in the text; the specifier replaces each before issuing the tender.
PLACEHOLDER = "**[SPECIFY: {}]**"


# Pointers into lumeval's own code and documentation, which a tender has no use for (a review
# found "lumeval.criteria.regions; secondary" and "docs/uncertainty.md" in tender text): a module
# named as where a secondary value lives reads "secondary source"; other pointers are dropped.
_TENDER_POINTERS = (
    (re.compile(r"\(lumeval(?:\.\w+)+;\s*secondary\)"), "(secondary source)"),
    (re.compile(r"\s*\(lumeval(?:\.\w+)+\)"), ""),
    (re.compile(r"[;,]\s*see docs/[\w./-]+"), ""),
    (re.compile(r"\s*\((?:see )?docs/[\w./-]+\)"), ""),
)


def tender_words(text: str) -> str:
    """``text`` (a source, a method, a requirement) as a tender states it: without lumeval's
    module names and documentation paths (:data:`_TENDER_POINTERS`)."""
    for pattern, by in _TENDER_POINTERS:
        text = pattern.sub(by, text)
    return text


def specify(what: str) -> str:
    """A placeholder the specifier fills in."""
    return PLACEHOLDER.format(what)


@dataclass(frozen=True)
class _Needs:
    """What the clauses of a criteria file need from the measurement."""

    chromaticity: bool
    cri: bool
    tm30: bool
    melanopic: bool
    irradiance: bool
    radiance: bool
    lot: bool
    uncertainty: bool
    settings: bool


_CHROMATICITY_KINDS = CHROMATICITY_KINDS  # one list of them (criteria.verdicts)
_IRRADIANCE = {"illuminance_lx", "melanopic_edi_lx"}
_RADIANCE = {"luminance_cd_m2", "melanopic_edl_cd_m2"}
_MELANOPIC = {"melanopic_der", "melanopic_edi_lx", "melanopic_edl_cd_m2"}


def _figures_judged(criteria) -> set[str]:
    out: set[str] = set()
    for c in criteria.clauses:
        fig = getattr(c, "figure", None)
        if isinstance(fig, str) and fig:
            out.add(fig)
        inner = getattr(c, "clause", None)  # an `over` clause wraps a figure clause
        fig = getattr(inner, "figure", None)
        if isinstance(fig, str) and fig:
            out.add(fig)
    return out


def needs(criteria) -> _Needs:
    """What the measurement must deliver for ``criteria`` (from the clause kinds and figures)."""
    from .. import figures

    kinds = {getattr(c, "KIND", "") for c in criteria.clauses}
    figs = _figures_judged(criteria)
    groups = {figures.FIGURES[f].group for f in figs if f in figures.FIGURES}
    return _Needs(
        chromaticity=bool(kinds & _CHROMATICITY_KINDS) or "chromaticity" in groups,
        cri="colour rendering" in groups,
        tm30="fidelity" in groups or "tm30_design_intent" in kinds,
        melanopic=bool(figs & _MELANOPIC),
        irradiance=bool(figs & _IRRADIANCE),
        radiance=bool(figs & _RADIANCE),
        lot=any(getattr(c, "SCOPE", "sample") == "lot" or getattr(c, "KIND", "").startswith("lot_")
                for c in criteria.clauses),
        uncertainty=bool(getattr(criteria, "uncertainty_tables", ())),
        settings=bool(kinds & {"series_shift", "track_locus"}) or any(getattr(c, "over", None) for c in criteria.clauses),
    )


def _range_and_step(n: _Needs) -> list[str]:
    L = ["- **Spectral range and step.** The spectral power distribution from 380 nm to 780 nm or wider, "
         "at a uniform step of 5 nm or finer (1 nm preferred), the same for every sample. Basis:"]
    if n.chromaticity or not (n.cri or n.tm30):
        L.append("  - chromaticity, CCT and Duv: the CIE 1931 colour-matching functions over 380–780 nm, "
                 "summed at 5 nm or 1 nm (CIE 15:2004 §7.1, quoted from memory);")
    if n.cri:
        L.append("  - Ra and Ri: CIE 13.3-1995 tabulates its test colour samples at 5 nm intervals "
                 "(quoted from memory); a step of 5 nm or finer meets those tables without interpolating "
                 "the source's data;")
    if n.tm30:
        L.append("  - Rf, Rg and the hue-bin values: CIE 224:2017 and ANSI/IES TM-30 compute over 380–780 nm "
                 "from tables at 1 nm and 5 nm (quoted from memory);")
    if n.melanopic:
        L.append("  - melanopic quantities: the CIE S 026/E:2018 action spectrum over 380–780 nm at 1 nm "
                 "(the table lumeval uses);")
    L.append("  - lumeval reads any uniform or irregular step and interpolates it to 1 nm (Sprague, CIE "
             "167:2005; cubic spline for irregular steps); data coarser than 5 nm lose narrow emission lines, "
             "which is why a step of 5 nm or finer is asked for (common practice, no source for a limit). "
             "Data that stop short of 380–780 nm are extended by their end values and flagged in every "
             "report.")
    L.append(f"  - Instrument bandwidth (FWHM): not more than {specify('e.g. 5 nm')}; a bandwidth about "
             "equal to the step is usual (common practice, no source).")
    return L


def _conditions(n: _Needs) -> list[str]:
    L = ["- **Operating conditions** of every sample during the measurement, stated in the bidder's report:",
         f"  - stabilisation before the reading: {specify('e.g. at least 30 min, until the light output drifts by less than 0.5 % in 15 min')} "
         "(common practice, no source: solid-state sources shift colour while they warm up);",
         f"  - ambient temperature: {specify('e.g. 25 °C ± 1 °C')}; for a luminaire measured in a sphere, "
         "the temperature at its reference point if the maker gives one;",
         f"  - drive: {specify('rated current in mA, or supply voltage and frequency, and the driver used')}; "
         f"dimming level {specify('e.g. 100 %')};",
         f"  - orientation: {specify('e.g. as installed, light emitting downwards')};",
         f"  - geometry: {specify('integrating sphere (total flux) or a stated direction and distance')}."]
    if n.settings:
        L.append(f"  - the settings of a tunable product to be measured: {specify('CCT or dimming settings, e.g. 2700 K to 6500 K in 100 K steps')} "
                 "(the criteria judge the product over its range of settings).")
    return L


def _instrument(n: _Needs) -> list[str]:
    L = ["- **Instrument and calibration.** A spectroradiometer with a calibration certificate traceable to a "
         f"national metrology institute, issued within {specify('e.g. the last 12 months')}; the bidder states its "
         f"make, wavelength accuracy ({specify('e.g. ± 0.3 nm or better')}), bandwidth, stray-light correction "
         "(yes/no) and whether the data were corrected for the bandwidth."]
    if n.irradiance or n.radiance:
        what = " and ".join(x for x, on in (("spectral irradiance in W/(m²·nm) at the stated position", n.irradiance),
                                            ("spectral radiance in W/(sr·m²·nm)", n.radiance)) if on)
        L.append(f"  - Absolute quantities are judged: the data must be {what} (absolute calibration), "
                 "with the unit in the file's header, as lumeval reads it; relative data "
                 "give no illuminance, luminance or melanopic EDI/EDL.")
    if n.uncertainty:
        L.append("  - The criteria decide under measurement uncertainty: the bidder states "
                 "the instrument's uncertainties as the instrument model needs them (wavelength offset, noise, "
                 "bandwidth, stray light, photometric scale), or the buyer's model in the criteria file applies.")
    return L


def _samples(n: _Needs) -> list[str]:
    if n.lot:
        return ["- **Number of samples.** The lot requirements judge statistics of many samples: "
                f"{specify('number of samples, e.g. at least 20')} taken {specify('how: e.g. at random from the delivered lot')}, "
                "each measured once and identified by a serial number in its file name or column header."]
    return ["- **Number of samples.** " + specify("samples per product offered, e.g. 3") +
            ", taken " + specify("how: e.g. at random from production") + "; each requirement applies to every "
            "sample (lumeval judges each spectrum on its own)."]


def _format(n: _Needs) -> list[str]:
    unit = ("absolute, with the unit in the header" if n.irradiance or n.radiance
            else "relative or absolute (the figures judged are ratios)")
    return ["- **Data supplied by the bidder.** One file per sample, or one table with one column per sample: "
            "CSV or text with a wavelength column in nm and a column of spectral values per sample, its header "
            f"naming the sample; or IES TM-27 XML; values {unit}; as the instrument measured them (no "
            "smoothing, no resampling beyond the instrument's own, no normalisation that hides clipping). "
            f"Delivered {specify('how and when: e.g. with the bid, by e-mail, within 10 working days of sampling')}, "
            "together with the measurement report stating the conditions above. lumeval checks such files with "
            "`lumeval inspect --validate-only`."]


def measurement_requirements(criteria) -> list[str]:
    """Markdown lines of the section "Measurement requirements" for ``criteria``: spectral range
    and step (with where they come from), operating conditions, instrument and calibration,
    number of samples and the data the bidder supplies; ``[SPECIFY: …]`` marks what the
    specifier fills in."""
    n = needs(criteria)
    L = ["## Measurement requirements", "",
         "The requirements above are judged from measured spectra. So that every bid is measured the same way, "
         "the bidder measures and reports as follows. Items marked " + specify("…") + " are completed by the "
         "specifier before the tender is issued.", ""]
    for part in (_range_and_step, _conditions, _instrument, _samples, _format):
        L += part(n)
    L.append("")
    return L
