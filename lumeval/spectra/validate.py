"""Validation without computing: what the readers and the grid preparation did to each file.

:func:`validate_report` is the Python twin of a validation-only inspection
(``lumeval inspect --validate-only``): it reads and prepares each spectrum exactly as an
evaluation would, computes no figure, and lists per spectrum what happened (sorted,
converted, clipped, interpolated, cropped, extrapolated) or why the file was refused.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError


@dataclass(frozen=True)
class SpectrumCheck:
    """What reading and preparation did to one spectrum (or why its file failed).

    ``ok`` is False when the file (or this spectrum) cannot be used; ``error`` then holds the
    one-line message. Ranges are in nm; ``spacing_nm`` is None for irregular grids.
    """

    file: str
    ok: bool
    name: str | None = None
    source: str | None = None
    points: int | None = None
    range_nm: tuple[float, float] | None = None
    spacing_nm: float | None = None
    grid_nm: tuple[float, float, float] | None = None  # prepared (start, end, step)
    scale: str | None = None
    format: str | None = None
    notes: tuple[str, ...] = ()
    metadata: dict = field(default_factory=dict)
    error: str | None = None

    def as_dict(self) -> dict:
        return {
            "file": self.file,
            "ok": self.ok,
            "name": self.name,
            "source": self.source,
            "points": self.points,
            "range_nm": list(self.range_nm) if self.range_nm else None,
            "spacing_nm": self.spacing_nm,
            "grid_nm": list(self.grid_nm) if self.grid_nm else None,
            "scale": self.scale,
            "format": self.format,
            "notes": list(self.notes),
            "metadata": {k: v for k, v in self.metadata.items() if not k.startswith("lumeval.")},
            "error": self.error,
        }


def validate_report(path: str | Path, seen: dict[str, int] | None = None) -> list[SpectrumCheck]:
    """Read and prepare one file without computing; one :class:`SpectrumCheck` per spectrum.
    Repeated names get the suffixes ``inspect`` gives them (:func:`lumeval.spectra.read.unique_names`;
    ``seen``: the names of the run so far, shared by :func:`validate_files`).

    A file that cannot be read gives a single entry with ``ok=False``. A multi-spectrum file
    where one spectrum cannot be prepared gives ``ok=False`` for that spectrum and the others
    are still checked.
    """
    from .._paths import display_path
    from .prepare import prepare
    from .read import read_spectra, unique_names

    file = display_path(path)
    try:
        raw = unique_names(read_spectra(path), {} if seen is None else seen)
    except InputError as exc:
        return [SpectrumCheck(file=file, ok=False, error=exc.message)]
    out: list[SpectrumCheck] = []
    for i in range(len(raw)):
        one = raw.subset([i])
        meta = dict(raw.metadata[i])
        base = {
            "file": file,
            "name": raw.names[i],
            "source": raw.sources[i],
            "points": int(raw.wavelengths_nm.size),
            "range_nm": (float(raw.wavelengths_nm[0]), float(raw.wavelengths_nm[-1])),
            "spacing_nm": raw.spacing_nm,
            "scale": meta.get("lumeval.scale"),
            "format": meta.get("lumeval.format") or ("text, " + meta.get("lumeval.delimiter", "?")),
            "metadata": meta,
        }
        try:
            p = prepare(one)
        except InputError as exc:
            out.append(SpectrumCheck(ok=False, notes=raw.notes[i], error=exc.message, **base))
            continue
        wl = p.wavelengths_nm
        out.append(
            SpectrumCheck(
                ok=True,
                grid_nm=(float(wl[0]), float(wl[-1]), float(p.spacing_nm or 0.0)),
                notes=p.notes[0],
                **base,
            )
        )
    return out


def validate_files(paths: Iterable[str | Path]) -> list[SpectrumCheck]:
    """:func:`validate_report` over many files, concatenated; a bad file never stops the others."""
    out: list[SpectrumCheck] = []
    seen: dict[str, int] = {}  # one run: names unique across the files, as inspect makes them
    for p in paths:
        out.extend(validate_report(p, seen))
    return out


def format_report(checks: list[SpectrumCheck]) -> str:
    """Plain-text rendering of validation results (one block per spectrum)."""
    from ..render.safe import clean

    lines = []
    for c in checks:
        if c.name is None:
            lines.append(f"FAIL  {clean(c.file)}")
            lines.append(f"      {clean(c.error)}")
            continue
        status = "ok  " if c.ok else "FAIL"
        lines.append(f"{status}  {clean(c.source)}  ({clean(c.name)})")
        spacing = f"{c.spacing_nm:g} nm" if c.spacing_nm else "irregular"
        assert c.range_nm is not None  # set for every file that was read
        lines.append(
            f"      read: {c.points} points, {c.range_nm[0]:g}-{c.range_nm[1]:g} nm, spacing {spacing}, "
            f"scale {c.scale or 'unknown'}, {c.format}"
        )
        if c.grid_nm:
            lines.append(f"      computation grid: {c.grid_nm[0]:g}-{c.grid_nm[1]:g} nm at {c.grid_nm[2]:g} nm")
        for n in c.notes:
            lines.append(f"      note: {clean(n)}")
        if c.error:
            lines.append(f"      {clean(c.error)}")
    return "\n".join(lines) + ("\n" if lines else "")


def render_validation(checks: list[SpectrumCheck], fmt: str = "terminal") -> str:
    """Render validation results as ``terminal`` (plain text), ``json`` or ``csv`` text."""
    if fmt == "json":
        import json

        from ..schemas import header

        doc = {**header("validation"), "validation": [c.as_dict() for c in checks]}
        return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
    if fmt == "csv":
        import csv
        import io

        from ..render.safe import csv_text

        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(["file", "ok", "name", "source", "points", "start_nm", "end_nm", "spacing_nm", "grid", "scale",
                    "notes", "error"])
        for c in checks:
            grid = f"{c.grid_nm[0]:g}-{c.grid_nm[1]:g}/{c.grid_nm[2]:g}" if c.grid_nm else ""
            w.writerow([
                csv_text(c.file), c.ok, csv_text(c.name or ""), csv_text(c.source or ""), c.points or "",
                c.range_nm[0] if c.range_nm else "", c.range_nm[1] if c.range_nm else "",
                c.spacing_nm if c.spacing_nm else "", grid, csv_text(c.scale or ""), csv_text(" | ".join(c.notes)),
                csv_text(c.error or ""),
            ])
        return buf.getvalue()
    return format_report(checks)
