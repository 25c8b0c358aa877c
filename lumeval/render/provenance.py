"""Where a report's numbers came from: input files with SHA-256, software versions, methods, time.

This is edge code (it reads the input files to hash them); the computation never calls it.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import platform
from dataclasses import dataclass
from pathlib import Path

#: Methods and standard editions named in every report when the evaluation carries none.
#: The engine's ``Evaluation.methods`` (a dict) takes precedence.
DEFAULT_METHODS: dict[str, str] = {
    "colorimetry": "CIE 15:2004, CIE 1931 2° observer, CIE 15 summation (§7.1) at the data's own 1 nm or 5 nm "
    "spacing, every sample with full weight (not the trapezoidal rule)",
    "cct": "Ohno (2014) LEUKOS 10(1):47-55; Planckian locus with c2 = 1.4388e-2 m K (CIE 15:2004)",
    "duv_sign": "positive above the Planckian locus (ANSI C78.377)",
    "cri": "CIE 13.3-1995 (Ra, R1-R14)",
    "fidelity": "CIE 224:2017 / ANSI/IES TM-30 (Rf, Rg, 16 hue bins)",
    "melanopic": "CIE S 026/E:2018 melanopic DER",
}

#: Distributions whose versions every report lists.
PACKAGES = ("lumeval", "colour-science", "numpy", "scipy", "matplotlib")


@dataclass(frozen=True)
class InputFile:
    """One input file: the path as given, its SHA-256 (hex) and size in bytes (None if unreadable)."""

    path: str
    sha256: str | None
    size_bytes: int | None


@dataclass(frozen=True)
class Provenance:
    """Everything a reader needs to reproduce a report.

    Attributes
    ----------
    files : tuple of InputFile
    versions : tuple of (name, version) pairs (Python first)
    methods : tuple of (topic, method and edition) pairs
    generated_at : str
        ISO 8601 date and time with UTC offset.
    """

    files: tuple[InputFile, ...]
    versions: tuple[tuple[str, str], ...]
    methods: tuple[tuple[str, str], ...]
    generated_at: str


def sha256_of(path: str | Path) -> str:
    """SHA-256 of a file's bytes (FIPS 180-4), read in 1 MiB blocks."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def package_versions() -> tuple[tuple[str, str], ...]:
    """(name, version) of Python and of :data:`PACKAGES` ("not installed" when absent)."""
    from importlib.metadata import PackageNotFoundError, version

    out = [("Python", platform.python_version())]
    for name in PACKAGES:
        try:
            out.append((name, version(name)))
        except PackageNotFoundError:
            out.append((name, "not installed"))
    return tuple(out)


def input_paths_from_sources(sources) -> list[str]:
    """Unique file paths from SpectrumSet ``sources`` (``file`` or ``file#column``; a file name
    may hold ``#``: :func:`lumeval._paths.source_file`), in order."""
    from .._paths import source_file

    seen: dict[str, None] = {}
    known: dict[str, bool] = {}
    for s in sources:
        p = source_file(s, known)
        if p and p not in seen:
            seen[p] = None
    return list(seen)


def collect_provenance(
    paths,
    *,
    methods: dict | None = None,
    generated_at: _dt.datetime | None = None,
) -> Provenance:
    """Hash ``paths`` and gather versions, methods and the time.

    Parameters
    ----------
    paths : iterable of str or Path
        Input files (spectra, criteria). Unreadable ones are listed with no hash.
    methods : dict, optional
        topic -> method; default :data:`DEFAULT_METHODS`.
    generated_at : datetime, optional
        Default: now, local time with its UTC offset.
    """
    from .._paths import display_path

    files = []
    for p in paths:
        try:
            files.append(InputFile(display_path(p), sha256_of(p), Path(p).stat().st_size))
        except OSError:
            files.append(InputFile(display_path(p), None, None))
    when = generated_at or _dt.datetime.now().astimezone()
    if when.tzinfo is None:
        when = when.astimezone()
    meth = methods if methods else DEFAULT_METHODS
    return Provenance(
        files=tuple(files),
        versions=package_versions(),
        methods=tuple((str(k), str(v)) for k, v in meth.items()),
        generated_at=when.isoformat(timespec="seconds"),
    )
