"""``lumeval check``: judge spectra against a criteria file, clause by clause."""

from __future__ import annotations

import sys
from enum import Enum
from pathlib import Path

import typer

from .._paths import command_line
from ..render.safe import clean


class OutputFormat(str, Enum):
    terminal = "terminal"
    json = "json"
    csv = "csv"


def __getattr__(name: str):
    # the former Python twins of this command (any other missing name: AttributeError, cheaply)
    if name not in ("check_files", "run_check"):
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    from .._deprecation import renamed

    if name == "check_files":
        from ..api import check

        return renamed(check, "lumeval.commands.check.check_files", "lumeval.check")
    if name == "run_check":
        from ..api import check_run

        def run_check(paths, criteria_path, instrument=None, *, seed=None, draws=None):
            r = check_run(paths, criteria_path, instrument, seed=seed, draws=draws)
            return r.criteria, r.evaluation, r.result

        return renamed(run_check, "lumeval.commands.check.run_check", "lumeval.api.check_run")
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def emit(text: str, output: str | Path | None, option: str = "--output", what: str = "report") -> None:
    """Print ``text`` (``output`` None or ``-``) or write it atomically to ``output`` (and say
    so on stderr unless --quiet)."""
    from .._io import is_stdout, write_text
    from ._announce import announce

    if output is None or is_stdout(output):
        typer.echo(text, nl=False)
    else:
        write_text(output, text, option=option)
        announce(what, output)


def plain_text(renderables) -> str:
    """Render rich renderables to plain text (no colour codes) for a file."""
    import io

    from ..render.safe import console as make_console

    console = make_console(file=io.StringIO(), record=True, width=140, color_system=None)
    for r in renderables:
        console.print(r)
    return console.export_text()


def register(app: typer.Typer) -> None:
    @app.command("check")
    def check_cmd(
        files: list[Path] = typer.Argument(..., help="Spectrum files (CSV, IES TM-27 XML, JSON).", show_default=False),
        criteria: Path = typer.Option(..., "--criteria", "-c", help="Acceptance criteria file (TOML; see docs/criteria.md).", show_default=False),
        output_format: OutputFormat = typer.Option(
            OutputFormat.terminal, "--format", "-f", help="terminal report, one JSON document, or CSV (one row per spectrum and clause)."
        ),
        output: Path = typer.Option(None, "--output", "-o", help="Write the JSON/CSV/terminal text to this file instead of the screen."),
        html: Path = typer.Option(None, "--html", help="Also write the HTML report (verdict first, then the evidence) to this file."),
        plots: Path = typer.Option(None, "--plots", help="Also write the report's figures as SVG and PNG into this directory."),
        instrument: Path = typer.Option(
            None, "--instrument", help="Instrument model (TOML, see docs/uncertainty.md): judge under measurement uncertainty "
            "(Monte Carlo, JCGM 101) with the criteria file's [decision] rule; replaces an [instrument] table in the criteria file.",
            show_default=False,
        ),
        seed: int = typer.Option(None, "--seed", help="Seed of the Monte Carlo draws (default: the instrument or criteria file's, else 1).", show_default=False),
        draws: int = typer.Option(None, "--draws", help="Monte Carlo draws per spectrum (default 2000).", show_default=False),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bars, and do not say which files were written."),
        wide: bool = typer.Option(False, "--wide", help="Each clause of each spectrum in its own section even when the "
                                  "terminal is too narrow for it (otherwise a narrow terminal, or more than 12 spectra, "
                                  "gets one row per spectrum with the key figures)."),
    ) -> None:
        """Judge each spectrum against acceptance criteria. Exit code 0: every spectrum meets
        every requirement check judges (clauses over a range of settings or of a whole lot are
        named in the verdict and judged by mix, series or lot); 1: a requirement failed or is
        indeterminate under the decision rule (never a pass); 2: bad input."""
        from ._announce import announce_outputs, set_quiet
        from ._targets import check_targets

        set_quiet(quiet)

        dir_files = None
        if plots is not None:
            from ..render.html import PLOT_FILE_PATTERNS

            dir_files = {"--plots": PLOT_FILE_PATTERNS}
        check_targets(files={"--output": output, "--html": html}, dirs={"--plots": plots}, dir_files=dir_files,
                      inputs=[*files, criteria, *([instrument] if instrument is not None else [])])
        from ..api import check_run
        from ..criteria import load_criteria

        loaded = load_criteria(criteria)  # first: a bad criteria file is reported before any computation
        for w in loaded.warnings:
            print(f"lumeval: warning: {clean(w)}", file=sys.stderr)
        from ._progress import progress_listener

        # progress on stderr (a terminal only, not with --quiet): reading, evaluating, Monte Carlo,
        # report figures; removed before the report prints
        with progress_listener() as progress:
            run = check_run(files, loaded, instrument, seed=seed, draws=draws, progress=progress)
            crit, ev, result = run.criteria, run.evaluation, run.result
            if html is not None or plots is not None:
                from ..render.html import regions_from_criteria, write_outputs

                written = write_outputs(ev, html=html, plots=plots, verdicts=result, regions=regions_from_criteria(crit),
                                        inputs=[*files, criteria], command=command_line(),
                                        progress=progress)
                announce_outputs(written, html, plots)
        if output_format is OutputFormat.json:
            from ..render.verdicts import check_to_json

            emit(check_to_json(result), output)
        elif output_format is OutputFormat.csv:
            from ..render.verdicts import check_to_csv

            emit(check_to_csv(result), output)
        else:
            from .._io import is_stdout
            from ..render.verdicts import check_renderables

            if output is None or is_stdout(output):
                from ..render.verdicts import print_check

                print_check(result, evaluation=ev, wide=wide)
            else:
                emit(plain_text(check_renderables(result, evaluation=ev)), output)
        # sys.exit (not typer.Exit): the entry point runs click with standalone_mode=False,
        # which would turn typer.Exit into a return value and lose the code.
        sys.exit(result.exit_code)
