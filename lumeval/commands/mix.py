"""``lumeval mix``: weights of a tunable luminaire's channels for target CCTs, and every figure
of the mixes, judged over the range (Python twin: :func:`lumeval.tunable.api.mix_files`)."""

from __future__ import annotations

import contextlib
import sys
from enum import Enum
from pathlib import Path

import typer

from .._paths import command_line


class OutputFormat(str, Enum):
    terminal = "terminal"
    json = "json"
    csv = "csv"


class Maximise(str, Enum):
    Rf = "Rf"
    Ra = "Ra"
    ler = "ler"


def emit_report(report, output_format: OutputFormat, html: Path | None, command: str) -> None:
    """Write the HTML report (if asked), print the report, exit with the range verdict."""
    if html is not None:
        from ..render.tunable_html import write_tunable_html

        write_tunable_html(html, report, command=command)
    if output_format.value == "json":
        from ..render.tunable import to_json

        typer.echo(to_json(report), nl=False)
    elif output_format.value == "csv":
        from ..render.tunable import to_csv

        typer.echo(to_csv(report), nl=False)
    else:
        from ..render.safe import console as make_console
        from ..render.tunable import renderables

        console = make_console()
        for r in renderables(report):
            console.print(r)
    sys.exit(report.exit_code)


def register(app: typer.Typer) -> None:
    @app.command("mix")
    def mix_cmd(
        channels: list[Path] = typer.Argument(..., help="Channel spectra at full drive: one wide file with a column per "
                                              "channel (CSV, IES TM-27 XML, JSON), or several files.", show_default=False),
        cct: str = typer.Option(..., "--cct", help="Target CCTs in K: LOW:HIGH:STEP (e.g. 2700:6500:100), a list "
                                "2700,3000,4000, or one value.", show_default=False),
        duv: str = typer.Option("0", "--duv", help="Target Duv with three or more channels: a number, or 'ansi' for the "
                                "ANSI C78.377 flexible-CCT target. Two channels give the Duv of the line between them."),
        maximise: Maximise = typer.Option(Maximise.Rf, "--maximise", help="With four or more channels, the figure to maximise "
                                          "among the mixes that reach a target."),
        criteria: Path = typer.Option(None, "--criteria", "-c", help="Criteria file (TOML): clauses judged at every setpoint; "
                                      "`over`, series_shift and track_locus clauses over the range (docs/tunable.md).",
                                      show_default=False),
        output_format: OutputFormat = typer.Option(OutputFormat.terminal, "--format", "-f",
                                                   help="terminal tables, one JSON document, or CSV (one row per setpoint)."),
        html: Path = typer.Option(None, "--html", help="Also write an HTML report (trajectory, figures versus setting).",
                                  show_default=False),
    ) -> None:
        """Mix a tunable luminaire's channels to target CCTs: weights, every figure, and the
        verdict over the range. Model: linear in radiant power (no thermal droop or
        current-dependent spectra). Exit 0: every clause met over its range; 1: a clause failed
        or could not be judged (e.g. a setpoint in its range is not reachable); 2: bad input."""
        from ._targets import check_targets

        check_targets(files={"--html": html}, inputs=[*channels, *([criteria] if criteria else [])])
        from ..errors import plain_number
        from ..tunable.api import mix_files

        duv_value: object = duv
        with contextlib.suppress(ValueError):
            duv_value = plain_number(duv, ValueError)
        from ._progress import progress_listener

        with progress_listener() as progress:  # on stderr, a terminal only; removed before the report prints
            report = mix_files(channels, cct, duv=duv_value, maximise=maximise.value, criteria=criteria,
                               progress=progress)
        emit_report(report, output_format, html, command_line())
