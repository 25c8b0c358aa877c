"""``lumeval inspect``: every figure for one or more spectrum files."""

from __future__ import annotations

from enum import Enum
from pathlib import Path

import typer

from .._paths import command_line


class OutputFormat(str, Enum):
    terminal = "terminal"
    json = "json"
    csv = "csv"


def __getattr__(name: str):
    if name == "inspect_files":  # the former Python twin of this command
        from .._deprecation import renamed
        from ..api import inspect

        return renamed(inspect, "lumeval.commands.inspect.inspect_files", "lumeval.inspect")
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def register(app: typer.Typer) -> None:
    @app.command("inspect")
    def inspect_cmd(
        files: list[Path] = typer.Argument(..., help="Spectrum files (CSV, IES TM-27 XML, JSON).", show_default=False),
        output_format: OutputFormat = typer.Option(
            OutputFormat.terminal, "--format", "-f", help="terminal report, one JSON document, or CSV (one row per spectrum)."
        ),
        validate_only: bool = typer.Option(
            False, "--validate-only", help="Only read and check the files: list what reading did (sorted, clipped, "
            "interpolated, extrapolated) or why a file is refused; compute nothing. Exit 2 if any file is refused."
        ),
        html: Path = typer.Option(None, "--html", help="Also write a self-contained HTML report to this file."),
        plots: Path = typer.Option(None, "--plots", help="Also write the report's figures as SVG and PNG into this directory."),
        output: Path = typer.Option(None, "--output", "-o", help="Write the JSON/CSV/terminal text to this file instead of the screen."),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bars, and do not say which files were written."),
        wide: bool = typer.Option(False, "--wide", help="Every figure side by side even when the terminal is too "
                                  "narrow for it (otherwise a narrow terminal gets one row per spectrum with the key figures)."),
    ) -> None:
        """Compute every colour-quality figure for each spectrum and print them."""
        from ._announce import announce_outputs, set_quiet
        from .check import emit, plain_text

        set_quiet(quiet)
        if validate_only and (html is not None or plots is not None):
            from ..errors import UsageError

            raise UsageError("--validate-only computes nothing, so there is no report for --html or --plots",
                             fix="drop --validate-only to write the report, or drop --html/--plots")
        from ._targets import check_targets

        dir_files = None
        if plots is not None:
            from ..render.html import PLOT_FILE_PATTERNS

            dir_files = {"--plots": PLOT_FILE_PATTERNS}
        check_targets(files={"--html": html, "--output": output}, dirs={"--plots": plots}, dir_files=dir_files, inputs=files)
        if validate_only:
            from ..spectra.validate import render_validation, validate_files

            checks = validate_files(files)
            text = render_validation(checks, output_format.value)
            emit(text if text.endswith("\n") else text + "\n", output)
            failed = sum(not c.ok for c in checks)
            if failed:
                from ..errors import InputError

                raise InputError(f"{failed} of {len(checks)} entries refused by the readers", fix="see the report above")
            return
        from ..api import inspect
        from ._progress import progress_listener

        with progress_listener() as progress:  # on stderr, a terminal only; removed before the report prints
            ev = inspect(files, progress=progress)
            if html is not None or plots is not None:
                from ..render.html import write_outputs

                written = write_outputs(ev, html=html, plots=plots, inputs=list(files),
                                        command=command_line(), progress=progress)
                announce_outputs(written, html, plots)
        if output_format is OutputFormat.json:
            from ..render.tables import to_json

            emit(to_json(ev), output)
        elif output_format is OutputFormat.csv:
            from ..render.tables import to_csv

            emit(to_csv(ev), output)
        else:
            from .._io import is_stdout
            from ..render.terminal import inspect_renderables, print_inspect

            if output is None or is_stdout(output):
                print_inspect(ev, wide=wide)
            else:
                emit(plain_text(inspect_renderables(ev)), output)
