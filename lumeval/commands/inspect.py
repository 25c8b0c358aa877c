"""``lumeval inspect``: every figure for one or more spectrum files."""

from __future__ import annotations

from enum import Enum
from pathlib import Path

import typer


class OutputFormat(str, Enum):
    terminal = "terminal"
    json = "json"
    csv = "csv"


def inspect_files(paths) -> "object":
    """Python twin of ``lumeval inspect``: read, prepare and evaluate the spectra in ``paths``.

    Returns an :class:`lumeval.engine.Evaluation`. Raises :class:`lumeval.errors.InputError`
    naming the file and the problem when a file cannot be used.
    """
    from ..engine import evaluate
    from ..spectra.read import read_spectra
    from ..spectra.model import SpectrumSet

    sets = [read_spectra(p) for p in paths]
    from ..spectra.prepare import prepare

    prepared = prepare_all(sets, prepare)
    return evaluate(prepared)


def prepare_all(sets, prepare):
    """Prepare several sets and join them on one grid (1 nm when their grids differ)."""
    from ..spectra.model import SpectrumSet

    prepared = [prepare(s) for s in sets]
    grids = {(p.wavelengths_nm[0], p.wavelengths_nm[-1], p.spacing_nm, p.wavelengths_nm.size) for p in prepared}
    if len(grids) > 1:
        joined = SpectrumSet.concatenate_resampled(prepared) if hasattr(SpectrumSet, "concatenate_resampled") else None
        if joined is None:
            from ..spectra.prepare import prepare as _p

            joined = _p(prepared)
        return joined
    return SpectrumSet.concatenate(prepared)


def register(app: typer.Typer) -> None:
    @app.command("inspect")
    def inspect_cmd(
        files: list[Path] = typer.Argument(..., help="Spectrum files (CSV, IES TM-27 XML, JSON).", show_default=False),
        output_format: OutputFormat = typer.Option(
            OutputFormat.terminal, "--format", "-f", help="terminal report, one JSON document, or CSV (one row per spectrum)."
        ),
    ) -> None:
        """Compute every colour-quality figure for each spectrum and print them."""
        ev = inspect_files(files)
        if output_format is OutputFormat.json:
            from ..render.tables import to_json

            typer.echo(to_json(ev), nl=False)
        elif output_format is OutputFormat.csv:
            from ..render.tables import to_csv

            typer.echo(to_csv(ev), nl=False)
        else:
            from ..render.terminal import print_inspect

            print_inspect(ev)
