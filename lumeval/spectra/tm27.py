"""IES TM-27 spectral data XML: read (hardened) and write.

Format: IES TM-27-14, "IES Standard Format for the Electronic Transfer of Spectral Data"
(IES, 2014). Element names as used by colour-science's ``colour.io.tm2714`` reader/writer
(secondary source): root ``IESTM2714`` in namespace ``http://www.ies.org/iestm2714``,
``version="1.0"``; ``Header`` with ``Manufacturer``, ``CatalogNumber``, ``Description``,
``DocumentCreator``, ``UniqueIdentifier``, ``MeasurementEquipment``, ``Laboratory``,
``ReportNumber``, ``ReportDate``, ``DocumentCreationDate``, ``Comments``;
``SpectralDistribution`` with ``SpectralQuantity``, ``ReflectionGeometry``,
``TransmissionGeometry``, ``BandwidthFWHM``, ``BandwidthCorrected`` and one
``<SpectralData wavelength="380">value</SpectralData>`` per sample.

Reading is namespace-agnostic (elements are matched by local name), so documents of later
editions that keep these element names (e.g. TM-27-20 files) are read; their version is kept
in the metadata. This is not a validation against the 2020 schema. Several
``SpectralDistribution`` elements on one wavelength grid become several spectra.

Safety: the document is parsed with defusedxml. Any DTD (``<!DOCTYPE``) is refused, which
rules out entity-expansion bombs and external entities (local file or network reads); nesting
deeper than :data:`MAX_DEPTH`, more than :data:`MAX_ELEMENTS` elements and files larger than
:data:`MAX_XML_BYTES` are refused too.
"""

from __future__ import annotations

import io
import math
import re
from pathlib import Path

import numpy as np

from ..errors import InputError
from .model import DERIVED_KEYS as _DERIVED
from .model import SpectrumSet

NAMESPACE = "http://www.ies.org/iestm2714"
VERSION = "1.0"
MAX_XML_BYTES = 16 * 1024 * 1024
MAX_DEPTH = 32
MAX_ELEMENTS = 500_000

HEADER_FIELDS = (
    "Manufacturer",
    "CatalogNumber",
    "Description",
    "DocumentCreator",
    "UniqueIdentifier",
    "MeasurementEquipment",
    "Laboratory",
    "ReportNumber",
    "ReportDate",
    "DocumentCreationDate",
    "Comments",
)
SD_FIELDS = ("SpectralQuantity", "ReflectionGeometry", "TransmissionGeometry", "BandwidthFWHM", "BandwidthCorrected")
_ABSOLUTE_QUANTITIES = {"flux", "intensity", "irradiance", "radiance", "exitance"}
_FIELD_KEYS = frozenset(f.lower() for f in (*HEADER_FIELDS, *SD_FIELDS))
_KV_LINE = re.compile(r"^([^:\n]{1,80}?):\s?(.*)$")
#: Namespace of the attributes in which lumeval's own writer records its fields (the spectrum's
#: name, its scale and value unit) on a ``SpectralDistribution``. Only these attributes set
#: them: ``Comments`` lines and elements named ``lumeval.*`` are the file's text, never
#: lumeval's fields.
LUMEVAL_NS = "urn:lumeval:tm27"
_OWN_FIELDS = ("name", "scale", "value_unit")


def _field_key(key: str) -> bool:
    """True for a key that names a TM-27 field (a header or spectral-distribution element, any
    case, any spacing): a ``Comments`` line so keyed stays text of the comments, and never sets
    or joins the field itself (``Description: …`` renamed the spectrum, ``SpectralQuantity: …``
    set its scale; found by a review)."""
    return "".join(key.split()).lower() in _FIELD_KEYS


def _own_key(key: str) -> bool:
    """True for a key in lumeval's own ``lumeval.*`` namespace (any case, any spacing)."""
    return key.strip().lower().replace(" ", "").startswith("lumeval.")


def _local(tag: str) -> str:
    return tag.rsplit("}", 1)[-1] if isinstance(tag, str) else ""


class _Overflow(Exception):
    def __init__(self, what: str, line: int):
        self.what = what
        self.line = line


def _parse_xml(raw: bytes, file: str):
    """Parse with defusedxml; return (root, {id(elem): line})."""
    import xml.etree.ElementTree as ET

    from defusedxml import (
        DefusedXmlException,
        DTDForbidden,
        EntitiesForbidden,
        ExternalReferenceForbidden,
    )
    from defusedxml.ElementTree import DefusedXMLParser

    lines: dict[int, int] = {}
    state = {"depth": 0, "count": 0}
    holder: dict = {}

    class Builder(ET.TreeBuilder):
        def start(self, tag, attrs):
            state["depth"] += 1
            state["count"] += 1
            line = holder["p"].parser.CurrentLineNumber
            if state["depth"] > MAX_DEPTH:
                raise _Overflow(f"elements nested more than {MAX_DEPTH} deep", line)
            if state["count"] > MAX_ELEMENTS:
                raise _Overflow(f"more than {MAX_ELEMENTS} elements", line)
            elem = super().start(tag, attrs)
            lines[id(elem)] = line
            return elem

        def end(self, tag):
            state["depth"] -= 1
            return super().end(tag)

    parser = DefusedXMLParser(target=Builder(), forbid_dtd=True, forbid_entities=True, forbid_external=True)
    holder["p"] = parser
    fix_unsafe = "remove the <!DOCTYPE ...> block: TM-27 documents need no DTD or entities"
    try:
        parser.feed(raw)
        root = parser.close()
    except _Overflow as exc:
        raise InputError(
            f"XML document has {exc.what}; refused (a TM-27 document is shallow)",
            file=file,
            line=exc.line,
            fix="check that this is an IES TM-27 spectral data file",
        ) from None
    except DTDForbidden:
        raise InputError(
            "XML document declares a DTD (<!DOCTYPE>), which lumeval refuses for safety "
            "(entity expansion bombs, external file or network reads)",
            file=file,
            line=_line(holder),
            fix=fix_unsafe,
        ) from None
    except (EntitiesForbidden, ExternalReferenceForbidden, DefusedXmlException):
        raise InputError(
            "XML document defines or references entities, which lumeval refuses for safety",
            file=file,
            line=_line(holder),
            fix=fix_unsafe,
        ) from None
    except ET.ParseError as exc:
        line = getattr(exc, "position", (None, None))[0]
        msg = str(exc).split(":", 1)[0]
        raise InputError(
            f"not well-formed XML ({msg})", file=file, line=line, fix="repair or re-export the XML file"
        ) from None
    except RecursionError:
        raise InputError(
            "XML document is nested too deeply", file=file, fix="check that this is an IES TM-27 spectral data file"
        ) from None
    except (ValueError, LookupError, UnicodeError) as exc:
        # e.g. an unknown encoding declaration
        raise InputError(
            f"cannot decode the XML document ({type(exc).__name__})",
            file=file,
            line=_line(holder),
            fix="save it as UTF-8 with a correct encoding declaration",
        ) from None
    return root, lines


def _line(holder) -> int | None:
    try:
        return holder["p"].parser.CurrentLineNumber
    except Exception:  # pragma: no cover - defensive
        return None


def _float(text: str | None, what: str, file: str, line: int | None) -> float:
    """``text`` as a finite number, by the CSV reader's rule (``_is_number``): ASCII digits
    0-9, an optional sign, decimal point and exponent; no other script's digits, no
    underscores, no ``inf``/``nan`` (``float()`` alone would read ``'١'`` and ``'1_000'``)."""
    from .text_dialect import _describe_cell, _foreign_digit, _is_number

    t = (text or "").strip()
    if not t:
        raise InputError(f"{what} is empty", file=file, line=line, fix="give a decimal number such as 0.1234")
    if not _is_number(t, decimal_comma=False):
        if t.lower() in {"inf", "+inf", "-inf", "infinity", "+infinity", "-infinity", "nan", "+nan", "-nan"}:
            raise InputError(f"{what} {t[:30]!r} is not a finite number", file=file, line=line,
                             fix="give a finite value")
        problem = _describe_cell(t) if _foreign_digit(t) else f"{t[:30]!r}, which is not a number"
        raise InputError(f"{what} is {problem}", file=file, line=line,
                         fix="give a decimal number with the digits 0-9, such as 0.1234")
    v = float(t)
    if not math.isfinite(v):
        raise InputError(f"{what} {t[:30]!r} is not a finite number", file=file, line=line, fix="give a finite value")
    return v


def _header_metadata(root, meta: dict[str, str]) -> None:
    """Add the <Header> fields (and ``key: value`` lines of its Comments) to ``meta``."""
    header = [c for c in root if _local(c.tag) == "Header"]
    if header:
        for child in header[0]:
            name = _local(child.tag)
            text = (child.text or "").strip()
            if not text or text == "None":
                continue
            if name == "Comments":
                rest = []
                # lines at "\n" only (the XML parser makes every line end one): splitlines also
                # cut at U+2028, U+0085..., characters a value may hold (a review's find)
                for ln in text.split("\n"):
                    kv = _KV_LINE.match(ln)
                    if (kv and kv.group(1).strip() and not kv.group(1).strip().startswith(("http", "//"))
                            and not _own_key(kv.group(1)) and not _field_key(kv.group(1))):
                        _add(meta, kv.group(1).strip(), kv.group(2).strip())
                    else:
                        rest.append(ln)
                if any(x.strip() for x in rest):
                    _add(meta, "Comments", "\n".join(rest).strip())
            elif not _own_key(name):
                _add(meta, name, text)


def _distribution(
    sd, meta: dict[str, str], file: str, lines: dict
) -> tuple[np.ndarray, np.ndarray, dict, tuple[str, ...]]:
    """One <SpectralDistribution>: its wavelengths (ascending), values, metadata (``meta`` plus
    its own fields) and the note about reordering."""
    m = dict(meta)
    wls, vals, row_lines = [], [], []
    for child in sd:
        name = _local(child.tag)
        line = lines.get(id(child))
        if name == "SpectralData":
            wl_attr = child.get("wavelength")
            if wl_attr is None:
                raise InputError(
                    "<SpectralData> without a wavelength attribute",
                    file=file,
                    line=line,
                    fix='write it as <SpectralData wavelength="380">value</SpectralData>',
                )
            wls.append(_float(wl_attr, "<SpectralData> wavelength attribute", file, line))
            vals.append(_float(child.text, f"<SpectralData> value at wavelength {wl_attr.strip()[:20]}", file, line))
            row_lines.append(line)
        elif name in SD_FIELDS or (name and not _own_key(name)):
            text = (child.text or "").strip()
            if text and text != "None":
                m[name] = text
    for field in _OWN_FIELDS:
        v = sd.get(f"{{{LUMEVAL_NS}}}{field}")
        if v is not None and v.strip():
            if field == "scale" and v not in {"absolute", "relative", "unknown"}:
                raise InputError(f"lumeval scale attribute {v[:30]!r} is not absolute, relative or unknown",
                                 file=file, line=lines.get(id(sd)), fix="remove the attribute or correct it")
            # the name whole, as the Description element gives it (cut at 200 characters, a
            # long name written here came back cut, without a word: found by a review)
            m[f"lumeval.{field}"] = v.strip() if field == "name" else v.strip()[:200]
    if len(wls) < 2:
        raise InputError(
            f"the SpectralDistribution holds {len(wls)} SpectralData element(s)",
            file=file,
            line=lines.get(id(sd)),
            fix="export the full spectrum, one SpectralData element per wavelength",
        )
    wl = np.array(wls)
    v = np.array(vals)
    d = np.diff(wl)
    note: tuple[str, ...] = ()
    if np.all(d < 0):
        order = np.argsort(wl)
        wl, v = wl[order], v[order]
        row_lines = [row_lines[i] for i in order]
        note = ("wavelengths were in descending order; sorted ascending",)
        d = np.diff(wl)
    if not np.all(d > 0):
        k = int(np.argmax(d <= 0))
        problem = (
            f"wavelength {wl[k + 1]:g} repeats the one on line {row_lines[k]}"
            if d[k] == 0
            else f"wavelength {wl[k + 1]:g} comes after {wl[k]:g}: wavelengths must run in one direction"
        )
        raise InputError(problem, file=file, line=row_lines[k + 1], fix="remove duplicates and sort by wavelength")
    q = m.get("SpectralQuantity", "").strip().lower()
    if m.get("lumeval.scale") not in {"absolute", "relative", "unknown"}:
        m["lumeval.scale"] = (
            "relative" if q == "relative" else "absolute" if q in _ABSOLUTE_QUANTITIES else "unknown"
        )
        if q and q != "other":
            m["lumeval.value_unit"] = m["SpectralQuantity"]
    m["lumeval.wavelength_unit"] = "nm"
    m["lumeval.format"] = "IES TM-27 XML"
    return wl, v, m, note


def parse_tm27(raw: bytes, file: str) -> SpectrumSet:
    """Parse IES TM-27 XML bytes into a raw :class:`SpectrumSet` (see the module docstring).

    Raises
    ------
    InputError
        For unsafe, malformed or incomplete documents, naming the file and line.
    """
    if len(raw) > MAX_XML_BYTES:
        raise InputError(
            f"XML document is {len(raw) / 1e6:.1f} MB, more than the {MAX_XML_BYTES / 1e6:.0f} MB lumeval reads",
            file=file,
            fix="check that this is a spectral data file",
        )
    root, lines = _parse_xml(raw, file)
    if _local(root.tag) not in {"IESTM2714", "IESTM2720", "IESTM27"}:
        raise InputError(
            f"XML root element is <{_local(root.tag)}>, not <IESTM2714>: not an IES TM-27 spectral data file",
            file=file,
            line=lines.get(id(root)),
            fix="export the spectrum as IES TM-27 XML, CSV or lumeval JSON",
        )
    meta: dict[str, str] = {}
    version = root.get("version")
    if version:
        meta["lumeval.tm27_version"] = version
    ns = root.tag[1:].split("}", 1)[0] if root.tag.startswith("{") else ""
    if ns and ns != NAMESPACE:
        meta["lumeval.tm27_namespace"] = ns

    _header_metadata(root, meta)

    sds = [c for c in root if _local(c.tag) == "SpectralDistribution"]
    if not sds:
        raise InputError(
            "no <SpectralDistribution> element",
            file=file,
            line=lines.get(id(root)),
            fix="the file must hold a SpectralDistribution with SpectralData elements",
        )
    grids, value_rows, metas, sd_lines = [], [], [], []
    for sd in sds:
        wl, v, m, note = _distribution(sd, meta, file, lines)
        grids.append(wl)
        value_rows.append(v)
        metas.append(m)
        sd_lines.append((lines.get(id(sd)), note))
    for k in range(1, len(grids)):
        if grids[k].shape != grids[0].shape or not np.array_equal(grids[k], grids[0]):
            raise InputError(
                f"SpectralDistribution {k + 1} uses a different wavelength grid from the first",
                file=file,
                line=sd_lines[k][0],
                fix="put spectra on different grids into separate files",
            )
    stem = Path(file).stem
    n = len(grids)
    names, sources = [], []
    for k, m in enumerate(metas):
        base = m.pop("lumeval.name", None) or m.get("Description") or m.get("CatalogNumber") or ""
        if n == 1:
            names.append(base or stem)
            sources.append(file)
        else:
            names.append(base or f"{stem}#{k + 1}")
            sources.append(f"{file}#{k + 1}")
    return SpectrumSet(
        grids[0],
        np.vstack(value_rows),
        tuple(names),
        tuple(sources),
        tuple(sd[1] for sd in sd_lines),
        tuple(metas),
    )


def _add(meta: dict, key: str, value: str) -> None:
    meta[key] = meta[key] + "\n" + value if key in meta else value


def read_tm27(path: str | Path) -> SpectrumSet:
    """Read an IES TM-27 XML file (see the module docstring for what is accepted)."""
    from .text import _read_bytes

    return parse_tm27(_read_bytes(path, MAX_XML_BYTES), str(path))


_KEY_ALIASES = {
    "manufacturer": "Manufacturer",
    "catalog number": "CatalogNumber",
    "catalognumber": "CatalogNumber",
    "description": "Description",
    "document creator": "DocumentCreator",
    "documentcreator": "DocumentCreator",
    "unique identifier": "UniqueIdentifier",
    "uniqueidentifier": "UniqueIdentifier",
    "measurement equipment": "MeasurementEquipment",
    "measurementequipment": "MeasurementEquipment",
    "laboratory": "Laboratory",
    "report number": "ReportNumber",
    "reportnumber": "ReportNumber",
    "report date": "ReportDate",
    "reportdate": "ReportDate",
    "document creation date": "DocumentCreationDate",
    "documentcreationdate": "DocumentCreationDate",
    "comments": "Comments",
    "spectral quantity": "SpectralQuantity",
    "spectralquantity": "SpectralQuantity",
    "reflection geometry": "ReflectionGeometry",
    "reflectiongeometry": "ReflectionGeometry",
    "transmission geometry": "TransmissionGeometry",
    "transmissiongeometry": "TransmissionGeometry",
    "bandwidth fwhm": "BandwidthFWHM",
    "bandwidthfwhm": "BandwidthFWHM",
    "bandwidth corrected": "BandwidthCorrected",
    "bandwidthcorrected": "BandwidthCorrected",
}



_XML_INVALID = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")


def _xml_text(s: str) -> str:
    """Drop characters XML 1.0 cannot hold (control characters, lone surrogates)."""
    return _XML_INVALID.sub("", str(s))


def _xml_key(s: str) -> str:
    """A metadata key as a ``Comments`` line holds it: :func:`_xml_text`, a line break as a
    space (a key "x\ny" was written across two lines, read back as a comment and a key "y")."""
    return re.sub(r"\r\n|\r|\n", " ", _xml_text(s))


def _xml_value(s: str) -> str:
    """A metadata value as ``Comments`` lines hold it: :func:`_xml_text`, a carriage return
    (alone or before a line feed) as a line feed; the XML parser ends a line there anyway, and
    a lone CR written as it was let the text after it be read as a key of its own."""
    return re.sub(r"\r\n|\r", "\n", _xml_text(s))


def to_tm27_bytes(spectra: SpectrumSet, index: int = 0) -> bytes:
    """Serialise spectrum ``index`` of ``spectra`` as an IES TM-27-14 XML document.

    Values and wavelengths are written with Python's shortest round-trip float repr, so a
    read-back reproduces them exactly. Metadata keys that map to TM-27 elements fill them;
    other keys go into ``Comments`` as ``key: value`` lines (read back as metadata).
    Required elements with no known value are written empty, never as ``None``.
    """
    import xml.etree.ElementTree as ET

    meta = {_xml_key(k): _xml_value(v) for k, v in spectra.metadata[index].items()}
    mapped: dict[str, str] = {}
    extra: list[tuple[str, str]] = []
    for k, v in meta.items():
        if k in _DERIVED:
            continue
        if k == "lumeval.scale" and v == "unknown":
            continue
        target = _KEY_ALIASES.get(k.strip().lower())
        if target and target not in mapped:
            mapped[target] = str(v)
        else:
            extra.append((k, str(v)))
    name = _xml_text(spectra.names[index])
    if "Description" not in mapped:
        mapped["Description"] = name
    own: dict[str, str] = {}
    if mapped["Description"] != name:
        own["name"] = name
    if "SpectralQuantity" not in mapped:
        scale = meta.get("lumeval.scale")
        mapped["SpectralQuantity"] = "relative" if scale == "relative" else "other"
    # the scale is implied by SpectralQuantity when they agree: then keep it out of Comments
    q = mapped["SpectralQuantity"].strip().lower()
    implied = "relative" if q == "relative" else "absolute" if q in _ABSOLUTE_QUANTITIES else "unknown"
    # lumeval's own fields travel as namespaced attributes, never as Comments lines (which a
    # reader must not trust to set them)
    extra = [(k, v) for k, v in extra if not _own_key(k)]
    if meta.get("lumeval.scale", "unknown") != implied:
        own["scale"] = meta.get("lumeval.scale", "unknown")  # (an archive says nothing of it)
        if meta.get("lumeval.value_unit"):
            own["value_unit"] = meta["lumeval.value_unit"]
    elif meta.get("lumeval.value_unit", mapped["SpectralQuantity"]) != mapped["SpectralQuantity"]:
        own["value_unit"] = meta["lumeval.value_unit"]
    comments = mapped.get("Comments", "")
    lines = [comments] if comments else []
    for k, v in extra:
        for vl in str(v).split("\n"):
            lines.append(f"{k}: {vl}")
    mapped["Comments"] = "\n".join(lines)

    ET.register_namespace("lumeval", LUMEVAL_NS)
    root = ET.Element("IESTM2714", {"xmlns": NAMESPACE, "version": VERSION})
    header = ET.SubElement(root, "Header")
    for name in HEADER_FIELDS:
        el = ET.SubElement(header, name)
        el.text = mapped.get(name, "")
    sd = ET.SubElement(root, "SpectralDistribution",
                       {f"{{{LUMEVAL_NS}}}{k}": v for k, v in own.items()})
    for name in SD_FIELDS:
        if name in mapped:
            ET.SubElement(sd, name).text = mapped[name]
    for wl, v in zip(spectra.wavelengths_nm, spectra.values[index]):
        ET.SubElement(sd, "SpectralData", {"wavelength": repr(float(wl))}).text = repr(float(v))
    ET.indent(root)
    buf = io.BytesIO()
    ET.ElementTree(root).write(buf, encoding="utf-8", xml_declaration=True)
    return buf.getvalue() + b"\n"
