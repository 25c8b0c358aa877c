"""Write spectra as CSV, IES TM-27 XML or lumeval JSON, atomically.

The output kind follows the file extension: ``.csv``/``.txt`` → CSV, ``.xml``/``.spdx`` →
IES TM-27-14 XML (one spectrum per file), ``.json`` → lumeval JSON, ``.parquet`` → a Parquet
archive (:mod:`lumeval.spectra.archive`). Files are written by the one atomic writer,
:func:`lumeval._io.atomic_output`: a reader never sees half a file and a failure leaves the old
file as it was.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import UsageError
from .model import SpectrumSet

CSV_SUFFIXES = {".csv", ".txt", ".tsv"}
XML_SUFFIXES = {".xml", ".spdx"}
JSON_SUFFIXES = {".json"}
PARQUET_SUFFIXES = {".parquet", ".parq", ".pq"}

#: metadata keys describing how a file was read; not written back as file metadata
_DERIVED = ("lumeval.wavelength_unit", "lumeval.delimiter", "lumeval.column", "lumeval.format", "lumeval.tm27_version", "lumeval.tm27_namespace")


def to_csv_bytes(spectra: SpectrumSet) -> bytes:
    """Serialise as CSV: ``# key: value`` metadata lines, a header row, one row per wavelength.

    Numbers use Python's shortest round-trip repr, so reading the file back is exact.
    Metadata shared by every spectrum is written once; per-spectrum keys are written as
    ``# [name] key: value``... only shared keys are kept (CSV has one header block).
    """
    lines: list[str] = []
    metas = [{k: v for k, v in m.items() if k not in _DERIVED} for m in spectra.metadata]
    shared = dict(metas[0]) if metas else {}
    for m in metas[1:]:
        for k in list(shared):
            if m.get(k) != shared[k]:
                del shared[k]
    for k, v in shared.items():
        for vl in str(v).split("\n"):
            lines.append(f"# {_clean(k)}: {_clean(vl)}")
    header = ["wavelength (nm)"] + [_quote(n) for n in spectra.names]
    lines.append(",".join(header))
    vals = spectra.values
    for j, wl in enumerate(spectra.wavelengths_nm):
        lines.append(",".join([repr(float(wl))] + [repr(float(v)) for v in vals[:, j]]))
    return ("\n".join(lines) + "\n").encode("utf-8", errors="replace")


def _clean(s: str) -> str:
    """One line of text: line breaks become spaces, NUL and other C0 controls are dropped."""
    s = str(s).replace("\r\n", " ").replace("\r", " ").replace("\n", " ")
    return "".join(c for c in s if c >= " " or c == "\t")


def _quote(name: str) -> str:
    from ..render.safe import FORMULA_START

    name = _clean(name)
    if name.startswith(FORMULA_START):  # a spreadsheet would run it as a formula (OWASP CSV injection)
        name = "'" + name
    if any(c in name for c in ',"') or name != name.strip():
        return '"' + name.replace('"', '""') + '"'
    return name


def kind_for(path: str | Path) -> str:
    """The output kind ('csv', 'xml', 'json', 'parquet') for ``path``'s extension."""
    suffix = Path(path).suffix.lower()
    if suffix in CSV_SUFFIXES:
        return "csv"
    if suffix in XML_SUFFIXES:
        return "xml"
    if suffix in JSON_SUFFIXES:
        return "json"
    if suffix in PARQUET_SUFFIXES:
        return "parquet"
    raise UsageError(
        f"cannot tell the output format from the extension {suffix or '(none)'!r}",
        file=str(path),
        fix="name the output .csv, .xml (IES TM-27), .json (lumeval JSON) or .parquet (archive)",
    )


def serialise(spectra: SpectrumSet, kind: str) -> bytes:
    """Serialise ``spectra`` as ``kind`` ('csv', 'xml' or 'json')."""
    if kind == "csv":
        return to_csv_bytes(spectra)
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
