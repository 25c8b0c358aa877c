"""The command line: a thin layer over the Python API.

Each command lives in its own module under :mod:`lumeval.commands` and exposes
``register(app)``. This module only builds the typer app, maps lumeval's errors to exit code 2
with one clean line, and keeps start-up light (no colour-science import before a command runs).
"""

from __future__ import annotations

import importlib
import sys

import typer

#: Command modules, in the order their commands appear in ``--help``.
_COMMAND_MODULES = [
    "lumeval.commands.inspect",
    "lumeval.commands.convert",
    "lumeval.commands.check",
    "lumeval.commands.criteria_cmd",
    "lumeval.commands.lot",
]

app = typer.Typer(
    name="lumeval",
    help=(
        "Judge a light source's colour quality from its measured spectrum: chromaticity, "
        "CCT, Duv, CIE 13.3 colour rendering, CIE 224 / TM-30 fidelity and gamut, photometric "
        "ratios, checked against acceptance criteria you write. Colour metrics only: no "
        "photobiological, flicker or electrical safety judgement."
    ),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)

_state = {"debug": False}


@app.callback()
def _root(
    debug: bool = typer.Option(False, "--debug", help="Show a traceback for errors (for bug reports)."),
) -> None:
    _state["debug"] = debug


for _name in _COMMAND_MODULES:
    importlib.import_module(_name).register(app)


def main(argv: list[str] | None = None) -> None:
    """Console entry point: run the app, turning lumeval errors into exit code 2."""
    from .errors import LumevalError

    debug = "--debug" in (argv if argv is not None else sys.argv[1:])
    try:
        app(args=argv, standalone_mode=False)
    except LumevalError as exc:
        if debug:
            raise
        print(f"lumeval: error: {exc.message}", file=sys.stderr)
        sys.exit(2)
    except SystemExit:
        raise
    except KeyboardInterrupt:
        print("lumeval: interrupted", file=sys.stderr)
        sys.exit(130)
    except Exception as exc:  # click usage errors and the like
        import click

        if isinstance(exc, click.exceptions.Exit):
            sys.exit(exc.exit_code)
        if isinstance(exc, click.ClickException):
            exc.show()
            sys.exit(2)
        if isinstance(exc, click.exceptions.Abort):
            sys.exit(130)
        raise
