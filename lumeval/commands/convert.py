"""``lumeval convert IN OUT``: convert spectra between CSV, IES TM-27 XML, lumeval JSON and
Parquet archives."""

from __future__ import annotations

from pathlib import Path

import typer


def convert_file(src: str | Path, dst: str | Path, *, column: str | None = None, force: bool = False) -> int:
    """Python twin of ``lumeval convert``: read ``src`` and write it to ``dst``.

    The output format follows ``dst``'s extension (.csv, .xml/.spdx, .json, .parquet). Data are written
    unchanged (no interpolation or clipping: conversion is not preparation) with Python's
    shortest round-trip number formatting, so CSV → TM-27 XML → CSV reproduces the numbers
    exactly; header metadata travel along. The output is written atomically; the input is
    never overwritten; an existing output is replaced only with ``force``.

    Returns the number of spectra written. Raises :class:`lumeval.errors.InputError` /
    :class:`lumeval.errors.UsageError` (nothing written).
    """
    from ..errors import UsageError
    from ..spectra.read import read_spectra
    from .._io import write_bytes
    from ..spectra.write import kind_for, serialise

    src_p, dst_p = Path(src), Path(dst)
    kind = kind_for(dst_p)
    import os

    try:
        same = src_p.resolve() == dst_p.resolve() or (
            dst_p.exists() and src_p.exists() and os.path.samefile(src_p, dst_p)
        )
    except OSError:
        same = False
    if same:
        raise UsageError(
            "the output would overwrite the input", file=str(dst), fix="give a different output file name"
        )
    from .._io import check_targets, refuse_existing

    check_targets(files={"OUT": dst_p})  # a folder, a device, a missing folder: before reading
    refuse_existing(dst_p, "OUT", force=force)
    spectra = read_spectra(src_p)
    if column is not None:
        matches = [i for i, n in enumerate(spectra.names) if n == column]
        if not matches:
            raise UsageError(
                f"no spectrum named {column!r} (there are: {', '.join(spectra.names)[:200]})",
                file=str(src),
                fix="give one of these names to --column",
            )
        spectra = spectra.subset(matches[:1])
    data = serialise(spectra, kind)
    write_bytes(dst_p, data, option="OUT")
    return len(spectra)


def register(app: typer.Typer) -> None:
    @app.command("convert")
    def convert_cmd(
        src: Path = typer.Argument(..., metavar="IN", show_default=False,
                                   help="Input spectrum file (CSV/text, IES TM-27 XML, lumeval JSON) or Parquet archive (file or folder)."),
        dst: Path = typer.Argument(..., metavar="OUT", show_default=False,
                                   help="Output file: .csv, .xml (IES TM-27-14), .json (lumeval JSON) or .parquet (archive)."),
        column: str = typer.Option(None, "--column", help="Convert only the spectrum with this name."),
        force: bool = typer.Option(False, "--force", help="Replace the output file if it exists."),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="Do not say which file was written."),
    ) -> None:
        """Convert spectra between CSV, IES TM-27 XML, lumeval JSON and Parquet archives, keeping metadata."""
        n = convert_file(src, dst, column=column, force=force)
        from ..render.safe import clean

        from ._announce import is_quiet, set_quiet

        set_quiet(quiet)
        if not is_quiet():
            typer.echo(f"lumeval: {n} {'spectrum' if n == 1 else 'spectra'} written to {clean(dst)}", err=True)
