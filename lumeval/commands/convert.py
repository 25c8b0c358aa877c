"""``lumeval convert IN OUT``: convert spectra between CSV, IES TM-27 XML, lumeval JSON and
Parquet archives."""

from __future__ import annotations

from pathlib import Path

import typer


def __getattr__(name: str):
    if name == "convert_file":  # the former Python twin of this command
        from .._deprecation import renamed
        from ..api import convert

        return renamed(convert, "lumeval.commands.convert.convert_file", "lumeval.convert")
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def register(app: typer.Typer) -> None:
    @app.command("convert")
    def convert_cmd(
        src: Path = typer.Argument(..., metavar="IN", show_default=False,
                                   help="Input spectrum file (CSV/text, IES TM-27 XML, lumeval JSON) or Parquet archive (file or folder)."),
        # OUT as typed (not a Path, which drops a trailing separator: "out.csv/" names a folder
        # and is refused by the output policy, as every file-output option is)
        dst: str = typer.Argument(..., metavar="OUT", show_default=False,
                                  help="Output file: .csv, .xml (IES TM-27-14), .json (lumeval JSON) or .parquet (archive)."),
        column: str = typer.Option(None, "--column", help="Convert only the spectrum with this name."),
        force: bool = typer.Option(False, "--force", help="Replace the output file if it exists."),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="Do not say which file was written."),
    ) -> None:
        """Convert spectra between CSV, IES TM-27 XML, lumeval JSON and Parquet archives, keeping metadata."""
        from ..api import convert
        from ..render.safe import clean

        notes: list[str] = []
        n = convert(src, dst, column=column, force=force, notes=notes)
        for note in notes:  # what the format could not keep as it was (even with --quiet)
            typer.echo(f"lumeval: note: {clean(dst)}: {clean(note)}", err=True)
        from ._announce import is_quiet, set_quiet

        set_quiet(quiet)
        if not is_quiet():
            typer.echo(f"lumeval: {n} {'spectrum' if n == 1 else 'spectra'} written to {clean(dst)}", err=True)
