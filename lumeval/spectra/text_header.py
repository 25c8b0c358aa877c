"""Stages 3, 4, 6 and 7 of the text reader: the header row and its units, the metadata lines,
the wavelength axis (unit, order) and the spectra's names and scales.

The rules are those of :mod:`lumeval.spectra.text` (module docstring) and
``docs/input-files.md``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..errors import InputError, quote
from .model import SpectrumSet
from .text_dialect import (
    _DELIM_NAMES,
    Dialect,
    _describe_cell,
    _is_number,
    _split,
    split_key_value,
)

# unit hints ---------------------------------------------------------------------------------
_WL_UNITS = [
    (re.compile(r"(?<![a-z])nm\b|nanomet", re.I), "nm", 1.0),
    (re.compile(r"[µμ]m\b|(?<![a-z])um\b|micron|micromet", re.I), "µm", 1000.0),
    (re.compile(r"Å|angstr", re.I), "Å", 0.1),
]
_WAVELENGTH_LABEL = re.compile(
    r"wave|wl|lambda|λ|nm\b|[µμu]m\b|wellenl|longueur|lunghezza|longitud|golflengte|våglängd|^x\b|^\s*$", re.I
)
#: A cell of a units row. Match it against the cell with white space runs made single spaces:
#: the optional ``\s*`` between optional parts backtrack badly on long runs.
_UNIT_CELL = re.compile(
    r"^\s*[\[(]?\s*(nm|[µμu]m|Å|a\.?\s*u\.?|%|counts|rel\.?|relative|arb\.?( units)?|"
    r"[mµμun]?w(\s*(/|·|\*|per\b|\s+m\b).*)?|cm-1|thz|ev|)\s*[\])]?\s*$",
    re.I,
)
_WL_BAD_UNITS = re.compile(r"cm\s*[-−⁻]\s*1|cm\^-1|wavenumber|thz|\bhz\b|\bev\b|electron.?volt", re.I)
#: A stated absolute unit: watts (W/m², mW/nm, µW/(cm² nm) ...), or lumens, candelas and lux
#: (lm, mcd, klx, lux) as words of their own: not the letters inside a name ("Film", "Realm",
#: "Deluxe", "Flux" read as stating lm or lux until 2026-12-05).
_ABSOLUTE = re.compile(
    r"(?<![a-z])[mµμun]?w\s*(/|·|\*|\s|per|m)|watt|(?<![a-z])[mµμu]?w\b|(?<![a-z])[mkµμu]?(?:lm|cd|lx)\b"
    r"|(?<![a-z])[mk]?lux\b", re.I
)
_RELATIVE = re.compile(r"relative|\brel\b|a\.\s*u\.|\bau\b|arb|normali[sz]ed|%|percent|counts", re.I)

def _key_value(s: str, delim: str | None) -> tuple[str, str] | None:
    s = s.lstrip("#%/ \t")
    kv = split_key_value(s)
    if kv is not None and re.search(r"[^\W\d_]", kv[0]):
        return kv
    if delim is not None:
        cells = _split(s, delim)
        if len(cells) == 2 and cells[0] and re.search(r"[^\W\d_]", cells[0]) and len(cells[0]) <= 80:
            return cells[0], cells[1]
    return None

#: A unit written after a wavelength label: in brackets, after a slash or after "in".
_UNIT_SPOT = re.compile(r"[\[(]\s*([^\[\]()]{1,24}?)\s*[\])]|/\s*([^\s/]{1,24})\s*$|\bin\s+([^\s()\[\]]{1,24})\s*$", re.I)
#: Words that are not units (notes in brackets such as "(measured)" are not refused).
_LENGTH_OR_AXIS = re.compile(
    r"^(?:[kcmdfpa]?m|mil|mils|in|inch(?:es)?|ft|foot|feet|yd|yards?|miles?|mi|furlongs?|chains?|leagues?|"
    r"fathoms?|rods?|nmi|ly|light.?years?|au|pc|parsecs?|(?:kilo|centi|milli|deci|pico|femto)?met(?:er|re)s?|"
    r"pixels?|px|channels?|ch|index|bins?|points?|samples?|arb\.?|a\.?\s*u\.?)$",
    re.I,
)


#: A wavelength column header that is itself an axis label of another kind (a detector's pixel
#: or channel number, a row index), with or without a "number" word: refused, never read as nm.
_AXIS_LABEL = re.compile(
    r"^(?:pixels?|px|channels?|ch|index|indices|bins?|points?|samples?|data\s+points?)"
    r"(?:\s*(?:no\.?|nr\.?|number|num|#|idx|index))?$",
    re.I,
)


def _unit_words(text: str, whole: bool) -> list[str]:
    """Candidate unit words in a header cell (``whole=False``) or a unit-only value (``True``)."""
    if whole:
        return [text.strip()]
    out = []
    # white space runs made single spaces: _UNIT_SPOT backtracks badly on long runs
    for m in _UNIT_SPOT.finditer(" ".join(text.split())):
        w = next(g for g in m.groups() if g is not None)
        out.append(w.strip())
    return out


def _wavelength_unit(header_cell: str | None, meta: dict, file: str, line: int | None):
    texts = []
    whole: list[bool] = []
    if header_cell:
        texts.append(header_cell)
        whole.append(False)
    for k, v in meta.items():
        kl = k.lower()
        if "wavelength" in kl and ("unit" in kl or kl.strip() in {"wavelength", "wavelengths"}):
            texts.append(v)
            whole.append("unit" in kl)
        elif kl in {"x unit", "x-unit", "xunit", "x units", "x axis unit"}:
            texts.append(v)
            whole.append(True)
    for t in texts:
        if _WL_BAD_UNITS.search(t):
            raise InputError(
                f"the wavelength column is given in {t!r}, which lumeval does not read",
                file=file,
                line=line,
                fix="export the spectrum against wavelength in nm (or µm)",
            )
        for rx, name, factor in _WL_UNITS:
            if rx.search(t):
                return name, factor
    # no unit lumeval reads: a stated unit of any other kind is refused, never taken as nm, and so
    # is a header that names another axis ("pixel", "channel no."; found by a review)
    label = " ".join(header_cell.strip().strip('"').split()) if header_cell else ""
    if _AXIS_LABEL.match(label):
        raise InputError(
            f"the wavelength column is labelled {label[:30]!r}, an axis that is not a wavelength",
            file=file,
            line=line,
            fix="export the spectrum against wavelength in nm (or µm, Å), stated in the column header, e.g. "
                "'wavelength (nm)'",
        )
    for t, w in zip(texts, whole):
        for word in _unit_words(t, w):
            if word and (w or _LENGTH_OR_AXIS.match(word)):
                raise InputError(
                    f"the wavelength column is given in {word[:30]!r}, a unit lumeval does not read",
                    file=file,
                    line=line,
                    fix="export the wavelengths in nm (or µm, Å), stated in the column header, e.g. 'wavelength (nm)'",
                )
    return None, 1.0


#: Lower-case pieces of which every match of :data:`_ABSOLUTE` or :data:`_RELATIVE` holds one.
_UNIT_PIECES = ("w", "lm", "cd", "lux", "lx", "rel", "a.", "au", "arb", "normal", "%", "percent", "count")


def _states_no_unit(text: str) -> bool:
    """True when neither :data:`_RELATIVE` nor :data:`_ABSOLUTE` matches ``text``: at once for
    ASCII text holding none of :data:`_UNIT_PIECES` (an ASCII text matches a pattern of
    ``re.I`` only through ASCII case variants, which ``lower`` folds), else by the patterns
    (slow on long text: about 0.15 µs a character)."""
    if text.isascii():
        low = text.lower()
        if not any(p in low for p in _UNIT_PIECES):
            return True
    return not (_RELATIVE.search(text) or _ABSOLUTE.search(text))


def _stated_scale(texts: list[str]) -> tuple[str, str | None]:
    """(scale, the text stating it) of the first of ``texts`` that states a relative or an
    absolute scale, or ("unknown", None)."""
    for t in texts:
        if _RELATIVE.search(t):
            return "relative", t
        if _ABSOLUTE.search(t):
            return "absolute", t
    return "unknown", None


def _scale(header_cell: str | None, meta: dict, file: str = "") -> tuple[str, str | None]:
    """(scale, unit text) of a value column: from its header and the file's unit lines, or the
    scale lumeval's own writer declared (``# lumeval.scale: ...``, kept through a conversion).

    A declared scale that contradicts a unit the file states explicitly (a unit line, or a header
    that is only a quantity label) is refused: it would make a column headed
    "relative intensity (a.u.)" absolute (illuminance, irradiance...) because of a comment line
    (found by a review; the TM-27 reader refuses such comments)."""
    lines = [v for k, v in meta.items() if k.lower() in {
        "unit", "units", "y unit", "y-unit", "yunit", "y units", "scale", "spectral quantity", "spectralquantity",
        "quantity", "value unit", "values"}]
    texts = ([header_cell] if header_cell else []) + lines
    declared = meta.get("lumeval.scale")
    if declared in {"absolute", "relative", "unknown"}:
        # against what the file states explicitly: a unit line, or a header that is a quantity
        # label and no name ("relative intensity (a.u.)", "counts"); never words or brackets of
        # a spectrum's name ("lamp (50% dimming)", "Harbour lamp", "LED module (1 W)"), which
        # lumeval's own writer puts in the header (found by reviews)
        head = [header_cell] if header_cell and _generic_value_name(header_cell) else []
        explicit = _stated_scale([*head, *lines])
        if declared != "unknown" and explicit[0] not in ("unknown", declared):
            from ..errors import InputError

            raise InputError(
                f"a 'lumeval.scale: {declared}' line contradicts the {explicit[0]} scale its data are stated in "
                f"({str(explicit[1])[:40]!r})", file=file,
                fix="remove the lumeval.scale line (the header and unit lines state the scale)")
        # a declared scale with its unit on an ordinary line ("unit: mW/(m2 nm)"): that unit
        # (it was dropped, and with it every absolute figure; found by a review)
        unit = meta.get("lumeval.value_unit")
        if unit is None and declared == "absolute":
            unit = next((t for t in texts if _ABSOLUTE.search(t)), None)
        return declared, unit
    return _stated_scale(texts)

_GENERIC_WORDS = {
    "value", "values", "intensity", "irradiance", "radiance", "power", "flux", "spd", "spectrum", "spectral",
    "data", "relative", "absolute", "counts", "count", "energy", "signal", "y", "s", "distribution", "density",
    "normalised", "normalized", "rel", "abs", "measured", "measurement", "radiant", "exitance", "a.u.",
    "emission", "irradiation", "intensities", "raw", "corrected", "calibrated", "photon", "output",
    "e", "l", "i", "φ", "phi", "λ",  # quantity symbols: E(λ) irradiance, L(λ) radiance, I, Φ
}
#: A bracketed group with no bracket inside (removed repeatedly: nested units such as
#: "[W/(m²·nm)]" go from the inside out).
_INNER_BRACKETS = re.compile(r"\([^()\[\]]*\)|\[[^()\[\]]*\]")
#: Words of a unit (W/(m²·nm), mW/m2/nm, µW/cm²/nm, W/(sr·m²·nm), a.u., %, counts/s...).
_UNIT_WORD = re.compile(r"^(?:[mµμunk]?w|watts?|[mµμunkc]?m[2²3³]?|sr|lm|lx|lux|cd|nits?|j|s|sec|per|sq|au|a\.u\.?|%)$")


def _generic_value_name(col: str) -> bool:
    """True when a single value column's header is a generic quantity label ("irradiance",
    "Spectral irradiance [W/(m²·nm)]", "counts", "W/(m²·nm)", "Intensity (a.u.)"), not a
    spectrum's name: the spectrum is then named by its file stem."""
    t = col
    for _ in range(8):
        u = _INNER_BRACKETS.sub(" ", t)
        if u == t:
            break
        t = u
    words = [w for w in re.split(r"[^\w%.µμ²³]+", t.lower().replace("_", " ")) if w and w != "."]
    return all(w in _GENERIC_WORDS or _UNIT_WORD.match(w) or w.isdigit() for w in words)


@dataclass
class Header:
    """The header row (cells, or None), the units row under it (as (name, unit) pairs, or
    None), the header's line and the metadata lines before it (``before``)."""

    cells: list[str] | None
    units: list[tuple[str, str]] | None
    line: int | None
    before: list


def find_header(before: list, delim: str | None, decimal_comma: bool, ncols: int, file: str) -> Header:
    """The header row among the lines ``before`` the data: the last one, when it has as many
    cells as the data and does not start with a number; a row of units directly under a row of
    names gives both.

    Raises
    ------
    InputError
        The line before the data has the data's cell count and starts with a number but holds
        a cell that is not one (a data row with a bad cell).
    """
    header: list[str] | None = None
    header_units: list[tuple[str, str]] | None = None
    header_ln: int | None = None
    if not before:
        return Header(None, None, None, before)
    hln, hs = before[-1]
    hcells = _split(hs, delim)
    if delim is None and len(hcells) != ncols:
        alt = [c.strip() for c in re.split(r"\t|\s{2,}", hs) if c.strip()]
        if len(alt) != ncols:
            # "wavelength (km) S0": a bracketed unit belongs to the word before it
            # (white space runs made single spaces first: the split backtracks on long runs)
            alt = [c.strip() for c in re.split(r"\s+(?=[^\s(\[])", " ".join(hs.split())) if c.strip()]
        if len(alt) == ncols:
            hcells = alt
    if len(hcells) == ncols:
        if _is_number(hcells[0], decimal_comma):
            bad = next((c for c in hcells if not _is_number(c, decimal_comma)), hcells[-1])
            raise InputError(
                f"this looks like a data row but holds {_describe_cell(bad)}",
                file=file,
                line=hln,
                fix="every cell must be a number: fill in or correct it, or delete the row",
            )
        # A "key;value" metadata line just before the data also has ncols cells: take the
        # line as the header only if its first cell names a wavelength axis, it is the
        # only line before the data, or it names three or more columns.
        if _WAVELENGTH_LABEL.search(hcells[0]) or len(before) == 1 or ncols >= 3:
            header = [c.strip().strip('"') if delim is None else c.strip() for c in hcells]
            header_ln = hln
            before = before[:-1]
            # a row of units under a row of names ("Wavelength,Irradiance" / "nm,W/m2/nm")
            if all(_UNIT_CELL.match(" ".join(c.split())) for c in header) and before:
                pln, ps = before[-1]
                pcells = _split(ps, delim)
                if len(pcells) == ncols and not _is_number(pcells[0], decimal_comma):
                    units = header
                    header = [f"{n.strip()} ({u})" if u else n.strip() for n, u in zip(pcells, units)]
                    header_units = [(n.strip(), u) for n, u in zip(pcells, units)]
                    header_ln = pln
                    before = before[:-1]
    elif (delim is not None and len(hcells) > ncols and hcells[0].strip() and _WAVELENGTH_LABEL.search(hcells[0])
          and any(c.strip() for c in hcells[ncols:])):
        # a header (with a delimiter that cannot be part of a name) naming more spectra than the
        # rows hold values for: the last named column is empty in every row (its delimiters
        # read as trailing ones). Taken silently, that spectrum was lost and the others lost
        # their names (found by a review).
        missing = next(c.strip() for c in hcells[ncols:] if c.strip())
        raise InputError(
            f"the header names {len(hcells) - 1} spectra but the rows hold {ncols - 1} value(s): the column "
            f"{quote(missing)} has no values",
            file=file, line=hln, fix="fill in the column, or remove its name from the header")
    return Header(header, header_units, header_ln, before)


def collect_metadata(comments: list, before: list, footer: list, delim: str | None) -> dict[str, str]:
    """The file's metadata: ``key: value`` (``key = value``, ``key;value``) lines among the
    ``comments`` (the file's comment lines), the lines before the header and the trailing
    text; other text lines are joined under ``comment``. A key given twice keeps both values,
    one per line."""
    meta: dict[str, str] = {}
    text_lines: list[str] = []

    def add_meta(s: str) -> None:
        kv = _key_value(s, delim)
        if kv is None:
            t = s.lstrip("#%/ \t").strip()
            if t:
                text_lines.append(t)
            return
        k, v = kv
        if k in meta:
            meta[k] = meta[k] + "\n" + v
        else:
            meta[k] = v

    for _ln, s in comments:
        add_meta(s)
    for _, s in before:
        add_meta(s)
    for _, s in footer:
        add_meta(s)
    if text_lines:
        meta["comment"] = "\n".join(text_lines)
    return meta


def wavelength_axis(data: np.ndarray, row_ln: np.ndarray, h: Header, meta: dict, file: str):
    """(wavelengths in nm ascending, data and row lines in that order, unit read, notes).

    Raises
    ------
    InputError
        A unit lumeval does not read, wavelengths that look like µm with no unit stated, a
        single row, a repeated wavelength or wavelengths that do not run in one direction.
    """
    wl_unit, factor = _wavelength_unit(h.cells[0] if h.cells else None, meta, file, h.line)
    wl = data[:, 0] * factor
    if factor != 1.0:
        wl = np.round(wl, 6)
    notes: list[str] = []
    if wl_unit == "µm":
        notes.append("wavelengths were given in µm and converted to nm")
    elif wl_unit == "Å":
        notes.append("wavelengths were given in Å and converted to nm")
    if wl_unit is None and wl.size and np.nanmax(wl) <= 3.0 and np.nanmin(wl) > 0:
        raise InputError(
            f"wavelengths run from {wl.min():g} to {wl.max():g} with no unit stated: "
            "they look like micrometres, not nanometres",
            file=file,
            line=h.line or int(row_ln[0]),
            fix="state the unit in the wavelength column header, e.g. 'wavelength (µm)', or convert to nm",
        )
    if data.shape[0] < 2:
        raise InputError(
            "only one data row: a spectrum needs values at many wavelengths",
            file=file,
            line=int(row_ln[0]),
            fix="export the full spectrum",
        )
    d = np.diff(wl)
    if np.all(d < 0):
        order = np.argsort(wl)
        wl = wl[order]
        data = data[order]
        row_ln = row_ln[order]
        notes.append("wavelengths were in descending order; sorted ascending")
        d = np.diff(wl)
    if not np.all(d > 0):
        k = int(np.argmax(d <= 0))
        ln_prev, ln_here = int(row_ln[k]), int(row_ln[k + 1])
        if d[k] == 0:
            problem = f"wavelength {data[k + 1, 0]:g} repeats the one on line {ln_prev}"
            fix = "delete or correct the duplicate row"
        else:
            problem = (
                f"wavelength {data[k + 1, 0]:g} comes after {data[k, 0]:g} (line {ln_prev}): "
                "wavelengths must run in one direction"
            )
            fix = "sort the rows by wavelength and check for pasted blocks"
        raise InputError(problem, file=file, line=ln_here, fix=fix)
    return wl, data, wl_unit, notes


def name_spectra(wl: np.ndarray, data: np.ndarray, h: Header, meta: dict, d: Dialect, wl_unit: str | None,
                 notes: list[str], file: str, stem: str, first_column: int = 0,
                 n_total: int | None = None) -> SpectrumSet:
    """The SpectrumSet of the value columns of ``data`` (columns 1..): names from the header
    (a single column with a generic header, or none, is named by ``stem``), sources, notes,
    and each spectrum's metadata with the ``lumeval.*`` keys saying how it was read.

    ``first_column``, ``n_total``: index among all the file's ``n_total`` value columns of
    ``data``'s first value column (a block of a wide file read in column blocks: names and
    sources are those of reading the whole file).
    """
    header, header_units = h.cells, h.units
    values = data[:, 1:].T
    n = values.shape[0]
    n_all = n_total if n_total is not None else n
    names: list[str] = []
    sources: list[str] = []
    metas: list[dict] = []
    delimiter = _DELIM_NAMES[d.delim] + (" with decimal comma" if d.decimal_comma else "")
    # The scale of a column whose header states no unit is the file's (its metadata): found
    # once when no header of these columns matches a unit pattern. A pattern matching in a
    # header matches in the headers joined by line breaks (a line break is neither a letter
    # nor a word character, like the ends of a string), so no match there means none in any.
    common = None
    if not header or _states_no_unit("\n".join(header[first_column + 1 : first_column + n + 1])):
        common = _scale(None, meta, file)
    for j in range(first_column, first_column + n):
        col_name = header[j + 1] if header else ""
        col_label = col_name  # with its unit, for the scale
        if header_units:
            col_name = header_units[j + 1][0]
        if n_all == 1:
            name = col_name if header and col_name and not _generic_value_name(col_name) else stem
            src = file
        else:
            name = col_name or f"{stem}#{j + 1}"
            src = f"{file}#{col_name}" if col_name else f"{file}#{j + 1}"
        m = dict(meta)
        scale, unit = common if common is not None else _scale(col_label or None, meta, file)
        m["lumeval.scale"] = scale
        if unit:
            m["lumeval.value_unit"] = unit
        m["lumeval.wavelength_unit"] = wl_unit or "nm (assumed: no unit stated)"
        m["lumeval.delimiter"] = delimiter
        if header:
            m["lumeval.column"] = col_name
        names.append(name)
        sources.append(src)
        metas.append(m)
    return SpectrumSet(
        wl, values, tuple(names), tuple(sources), tuple(tuple(notes) for _ in range(n)), tuple(metas)
    )
