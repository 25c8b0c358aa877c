"""Write spectra as CSV, IES TM-27 XML or lumeval JSON, atomically.

The output kind follows the file extension: ``.csv``/``.txt`` → CSV, ``.tsv`` → the same
with tabs between the cells (kind ``"tsv"``), ``.xml``/``.spdx`` →
IES TM-27-14 XML (one spectrum per file), ``.json`` → lumeval JSON, ``.parquet`` → a Parquet
archive (:mod:`lumeval.spectra.archive`). Files are written by the one atomic writer,
:func:`lumeval._io.atomic_output`: a reader never sees half a file and a failure leaves the old
file as it was.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from pathlib import Path

import numpy as np

from ..errors import UsageError
from .model import DERIVED_KEYS as _DERIVED
from .model import SpectrumSet

CSV_SUFFIXES = {".csv", ".txt"}
TSV_SUFFIXES = {".tsv"}
XML_SUFFIXES = {".xml", ".spdx"}
JSON_SUFFIXES = {".json"}
PARQUET_SUFFIXES = {".parquet", ".parq", ".pq"}

#: The cell separator of each delimited text kind (a ``.tsv`` file was written with commas).
SEPARATORS = {"csv": ",", "tsv": "\t"}



def to_csv_bytes(spectra: SpectrumSet, sep: str = ",") -> bytes:
    """Serialise as CSV: ``# key: value`` metadata lines, a header row, one row per wavelength.
    ``sep``: the cell separator (``"\t"`` for a ``.tsv`` file).

    Numbers use Python's shortest round-trip repr, so reading the file back is exact.
    Metadata shared by every spectrum is written once; per-spectrum keys are written as
    ``# [name] key: value``... only shared keys are kept (CSV has one header block).
    """
    lines: list[str] = []
    shared, _ = _csv_metadata(spectra)
    for k, v in shared.items():
        for vl in str(v).split("\n"):
            lines.append(f"# {_formula_guard(_clean(k), sep)}: {_formula_guard(_clean(vl), sep)}")
    header = ["wavelength (nm)"] + [_quote(n, sep) for n in spectra.names]
    lines.append(sep.join(header))
    vals = np.asarray(spectra.values, dtype=float)
    wls = np.asarray(spectra.wavelengths_nm, dtype=float)
    if vals.size and np.isfinite(vals).all() and np.isfinite(wls).all():
        # the same cells, a block at a time (Arrow's text where it is repr's: 20,000 spectra at
        # 1 nm, 8 million numbers, 3.6 -> 1.0 s)
        from ..render.number_text import number_rows

        rows = number_rows(np.column_stack([wls, vals.T]))  # (numbers hold no comma or tab)
        lines += rows if sep == "," else [r.replace(",", sep) for r in rows]
    else:  # (a value that is not finite is written as repr writes it, e.g. "nan")
        for j, wl in enumerate(wls.tolist()):
            lines.append(sep.join([repr(wl)] + [repr(float(v)) for v in vals[:, j]]))
    return ("\n".join(lines) + "\n").encode("utf-8", errors="replace")


def _csv_metadata(spectra: SpectrumSet) -> tuple[dict, list[str]]:
    """The metadata CSV's one header block holds (what every spectrum shares, keys describing
    how a file was read left out) and the keys it cannot hold (they differ between spectra)."""
    metas = [{k: v for k, v in m.items() if k not in _DERIVED} for m in spectra.metadata]
    shared = dict(metas[0]) if metas else {}
    for m in metas[1:]:
        for k in list(shared):
            if m.get(k) != shared[k]:
                del shared[k]
    return shared, sorted({k for m in metas for k in m} - set(shared))


def _csv_value(s: str) -> str:
    """A metadata value as CSV's header lines hold it and a reader joins it back: each line of
    it cleaned (:func:`_clean`), the lines kept (one ``# key: line`` each); before a
    spreadsheet's formula, :func:`_formula_guard` adds its ``'`` to each line."""
    return "\n".join(_clean(line) for line in str(s).split("\n"))


#: A line break as the text readers take one (CR LF, CR or LF).
_LINE_BREAK = re.compile(r"\r\n|\r|\n")

#: A piece of a line between commas that is a plain number (``-5``, ``+1.5e3``): no formula.
_PLAIN_NUMBER = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")


def _formula_guard(line: str, sep: str = ",") -> str:
    """A cleaned metadata key or value line (:func:`_clean`) as a ``# key: value`` header line
    holds it: a ``'`` before each piece after a separator (``sep``: a comma, a tab in a TSV
    file) that a spreadsheet, which splits the line into cells there, would run as a formula
    (OWASP CSV injection: a cell starting with = + - @, also after spaces or an opening quote),
    or that starts with a quote (a CSV reader takes it for a quoted cell and reads on to the
    next quote, the rest of the file: found by a review); a plain number such as ``-5`` is left
    as it is. The piece before the first separator is not at a cell's start (the line starts
    with ``#``)."""
    from ..render.safe import FORMULA_START

    parts = line.split(sep)
    for k in range(1, len(parts)):
        bare = parts[k].lstrip(' "')
        quoted = parts[k].lstrip(" ").startswith('"')
        if quoted or (bare.startswith(FORMULA_START) and not _PLAIN_NUMBER.fullmatch(parts[k].strip())):
            parts[k] = "'" + parts[k]
    return sep.join(parts)


def _clean(s: str) -> str:
    """One line of text: line breaks become spaces, NUL and other C0 controls are dropped."""
    s = str(s).replace("\r\n", " ").replace("\r", " ").replace("\n", " ")
    return "".join(c for c in s if c >= " " or c == "\t")


def _csv_name(name: str) -> str:
    """A spectrum name as the CSV header holds it (and a reader reads it back): one line without
    control characters, a leading ``'`` before a character that would start a spreadsheet
    formula (OWASP CSV injection)."""
    from ..render.safe import FORMULA_START

    name = _clean(name)
    return "'" + name if name.startswith(FORMULA_START) else name


def _quote(name: str, sep: str = ",") -> str:
    name = _csv_name(name)
    if any(c in name for c in sep + '"') or name != name.strip():
        return '"' + name.replace('"', '""') + '"'
    return name


def kind_for(path: str | Path) -> str:
    """The output kind ('csv', 'tsv', 'xml', 'json', 'parquet') for ``path``'s extension."""
    suffix = Path(path).suffix.lower()
    if suffix in CSV_SUFFIXES:
        return "csv"
    if suffix in TSV_SUFFIXES:
        return "tsv"
    if suffix in XML_SUFFIXES:
        return "xml"
    if suffix in JSON_SUFFIXES:
        return "json"
    if suffix in PARQUET_SUFFIXES:
        return "parquet"
    raise UsageError(
        f"cannot tell the output format from the extension {suffix or '(none)'!r}",
        file=str(path),
        fix="name the output .csv (.tsv: tab-separated), .xml (IES TM-27), .json (lumeval JSON) or .parquet (archive)",
    )


def conversion_notes(spectra: SpectrumSet, kind: str) -> list[str]:
    """What writing ``spectra`` as ``kind`` cannot keep as it is, in words (empty when the format
    keeps everything): names and metadata text that CSV holds on one line without control
    characters (a formula-like name quoted) or that XML 1.0 cannot hold, and, in CSV, metadata
    that differs between spectra (one header block holds only what they share), in Parquet a
    metadata key that would be read back as the names or a wavelength (written as ``meta:KEY``).
    JSON keeps every name and metadata value."""
    from ..render.safe import clean
    from .tm27 import _xml_key, _xml_text, _xml_value

    if kind == "parquet":
        from .archive import NAME_COLUMN, metadata_column_name

        keys = list(dict.fromkeys(k for m in spectra.metadata for k in m if k not in _DERIVED))
        taken: set[str] = {NAME_COLUMN}
        renamed = []
        for k in keys:
            col = metadata_column_name(k, taken)
            taken.add(col)
            if col != k:
                renamed.append((k, col))
        if not renamed:
            return []
        return [f"{len(renamed)} metadata key(s) written under another column name, since a column so named would "
                f'be read back as the names or as a wavelength: "{clean(renamed[0][0])}" as "{clean(renamed[0][1])}"'
                + (" and others" if len(renamed) > 1 else "")]
    if kind not in ("csv", "tsv", "xml"):
        return []
    sep = SEPARATORS.get(kind, ",")
    dropped: list[str] = []
    name_as: Callable[[str], str] = _xml_text
    key_as: Callable[[str], str] = _xml_key
    text_as: Callable[[str], str] = _xml_value
    written = [{k: v for k, v in m.items() if k not in _DERIVED} for m in spectra.metadata]
    if kind in SEPARATORS:
        name_as, key_as, text_as = _csv_name, _clean, _csv_value
        shared, dropped = _csv_metadata(spectra)
        written = [shared]  # the one header block
    notes = []
    changed = [(n, name_as(n)) for n in spectra.names if name_as(n) != n]
    if changed:
        old, new = changed[0]
        notes.append(f'{len(changed)} spectrum name(s) written as the format can hold them: "{clean(old)}" as '
                     f'"{clean(new)}"' + (" and others" if len(changed) > 1 else ""))
    # the readers strip a name's cell or element (found by a review): such a name is written
    # whole but reads back without the white space at its ends
    spaced = [n for n in spectra.names if name_as(n) != name_as(n).strip()]
    if spaced:
        notes.append(f'{len(spaced)} spectrum name(s) read back without the spaces at their ends: "{clean(spaced[0])}"'
                     + (" and others" if len(spaced) > 1 else "") + " — convert to .json or .parquet to keep them")
    altered = sum(1 for m in written for k, v in m.items() if key_as(str(k)) != str(k) or text_as(str(v)) != str(v))
    guarded = 0
    if kind in SEPARATORS:  # the formula guard on the cleaned lines (to_csv_bytes)
        def guard(x: str) -> str:
            return "\n".join(_formula_guard(line, sep) for line in x.split("\n"))

        guarded = sum(1 for m in written for k, v in m.items()
                      if guard(key_as(str(k))) != key_as(str(k)) or guard(text_as(str(v))) != text_as(str(v)))
    if altered:
        notes.append(f"{altered} metadata value(s) written " + ("without the characters XML cannot hold (control "
                     "characters; a line break in a key as a space, a carriage return as a line break)"
                     if kind == "xml" else "without control characters"))
    if guarded:
        mark = "comma" if sep == "," else "tab"
        notes.append(f"{guarded} metadata value(s) written with a ' before a piece after a {mark} that a spreadsheet "
                     f"would run as a formula or a CSV reader take for a quoted cell (they split the header lines into "
                     f"cells at the {mark}s)")
    if dropped:
        shown = ", ".join(f'"{clean(k)}"' for k in dropped[:5]) + (" …" if len(dropped) > 5 else "")
        notes.append(f"metadata that differs between the spectra is not kept in {kind.upper()} (one header block): {shown} "
                     "— convert to .json or .parquet to keep it")
    # what the text formats' "key: value" lines read back otherwise (found by a review; the
    # values themselves stay exact): a key holding ": " or " = " splits there, and the spaces
    # around a key or a value are not kept
    marks = (": ", " = ") if kind in SEPARATORS else (": ",)  # TM-27's comment lines split at ": " only
    resplit = sorted({str(k) for m in written for k, v in m.items()
                      if any(x in str(k) for x in marks) or str(k) != str(k).strip()
                      or any(line != line.strip() for line in _LINE_BREAK.split(str(v)))})  # each line's ends
    if resplit:
        notes.append(f"{len(resplit)} metadata key(s) read back otherwise (a key holding "
                     f"{' or '.join(repr(x) for x in marks)} splits there; spaces around keys and around each line of a "
                     "value are not kept): "
                     f'"{clean(resplit[0])}"'
                     + (" and others" if len(resplit) > 1 else "") + " — convert to .json or .parquet to keep them")
    if kind in SEPARATORS and len(spectra) == 1:
        from .text_header import _generic_value_name

        if _generic_value_name(name_as(spectra.names[0])):  # a heading such as "380" or "value" names no spectrum
            notes.append(f'the spectrum name "{clean(spectra.names[0])}" reads back as the file\'s name: a lone '
                         "column so headed is read as a plain value column — convert to .json or .parquet to keep it")
    return notes


def serialise(spectra: SpectrumSet, kind: str) -> bytes:
    """Serialise ``spectra`` as ``kind`` ('csv', 'tsv', 'xml', 'json' or 'parquet')."""
    if kind in SEPARATORS:
        return to_csv_bytes(spectra, SEPARATORS[kind])
    if kind == "json":
        from .jsonio import to_json_bytes

        return to_json_bytes(spectra)
    if kind == "parquet":
        from .archive import to_parquet_bytes

        return to_parquet_bytes(spectra)
    if kind == "xml":
        if len(spectra) != 1:
            raise UsageError(
                f"IES TM-27 XML holds one spectrum per file, and there are {len(spectra)}",
                fix="choose one with --column NAME, or convert to .csv or .json",
            )
        from .tm27 import to_tm27_bytes

        return to_tm27_bytes(spectra, 0)
    raise ValueError(kind)


def write_atomic(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically (:func:`lumeval._io.write_bytes`)."""
    from .._io import write_bytes

    write_bytes(path, data)


def write_spectra(spectra: SpectrumSet, path: str | Path) -> None:
    """Write ``spectra`` to ``path`` (format from the extension), atomically."""
    write_atomic(path, serialise(spectra, kind_for(path)))
