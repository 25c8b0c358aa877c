"""The command line: a thin layer over the Python API.

Each command lives in its own module under :mod:`lumeval.commands` and exposes
``register(app)``. This module only builds the typer app, maps lumeval's errors to exit code 2
with one clean line, and keeps start-up light (no colour-science import before a command runs).
"""

from __future__ import annotations

import importlib
import signal
import sys

import typer

#: Command modules, in the order their commands appear in ``--help``.
_COMMAND_MODULES = [
    "lumeval.commands.inspect",
    "lumeval.commands.convert",
    "lumeval.commands.check",
    "lumeval.commands.criteria_cmd",
    "lumeval.commands.lot",
    "lumeval.commands.history",
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
    rich_markup_mode=None,
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
    """Console entry point.

    Exit codes: 0 everything passed (or nothing was judged), 1 a criterion failed or is
    indeterminate, 2 bad input or usage (one clean line on stderr, never a traceback), 3 an
    internal error (a bug: one line asking for a report; ``--debug`` shows the traceback).
    """
    from .errors import LumevalError

    args = list(argv if argv is not None else sys.argv[1:])
    debug = "--debug" in args
    if argv is None and hasattr(signal, "SIGPIPE"):
        # `lumeval lot ... | head`: end quietly on a closed pipe, as Unix tools do (shell status
        # 141), rather than through the parser's handler, whose exit 1 would read "a criterion failed"
        signal.signal(signal.SIGPIPE, signal.SIG_DFL)
    try:
        # standalone mode: the argument parser reports usage errors itself (exit 2) and
        # typer.Exit(code) ends with that code
        app(args=args, prog_name="lumeval", standalone_mode=True)
    except LumevalError as exc:
        if debug:
            raise
        print(f"lumeval: error: {exc.message}", file=sys.stderr)
        sys.exit(2)
    except KeyboardInterrupt:
        print("lumeval: interrupted", file=sys.stderr)
        sys.exit(130)
    except SystemExit:
        raise
    except OSError as exc:
        # the file system refused a named path (name too long, no space, read-only, ...): the
        # user's environment, not a bug; commands check their targets first, this is the net
        if debug or exc.filename is None:
            if debug:
                raise
            print(f"lumeval: internal error: {type(exc).__name__}: {exc} "
                  "(please report it with the output of the same command run as `lumeval --debug COMMAND ...`)", file=sys.stderr)
            sys.exit(3)
        print(f"lumeval: error: {exc.filename}: {exc.strerror or exc} — check the path, the free space and the "
              "permissions", file=sys.stderr)
        sys.exit(2)
    except Exception as exc:  # a bug, not bad input: still no traceback unless asked for
        if debug:
            raise
        print(
            f"lumeval: internal error: {type(exc).__name__}: {exc} "
            "(please report it with the output of the same command run as `lumeval --debug COMMAND ...`)",
            file=sys.stderr,
        )
        sys.exit(3)
