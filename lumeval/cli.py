"""The command line: a thin layer over the Python API.

Each command lives in its own module under :mod:`lumeval.commands` and exposes
``register(app)``. This module only builds the typer app, maps lumeval's errors to exit code 2
with one clean line, and keeps start-up light (no colour-science import before a command runs).
"""

from __future__ import annotations

import contextlib
import errno
import importlib
import os
import signal
import sys

import typer

from . import _stop

#: Command modules, in the order their commands appear in ``--help``.
_COMMAND_MODULES = [
    "lumeval.commands.inspect",
    "lumeval.commands.convert",
    "lumeval.commands.check",
    "lumeval.commands.criteria_cmd",
    "lumeval.commands.lot",
    "lumeval.commands.history",
    "lumeval.commands.mix",
    "lumeval.commands.series",
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
    add_completion=True,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
    context_settings={"help_option_names": ["-h", "--help"]},
)

_state = {"debug": False}


def _version(value: bool) -> None:
    if value:
        from . import __version__

        typer.echo(f"lumeval {__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    debug: bool = typer.Option(False, "--debug", help="Show a traceback for errors (for bug reports)."),
    quiet: bool = typer.Option(False, "--quiet", "-q", help="Do not say which files were written (any command)."),
    version: bool = typer.Option(False, "--version", help="Print lumeval's version and stop.", callback=_version,
                                 is_eager=True),
) -> None:
    _state["debug"] = debug
    from .commands._announce import reset_quiet

    reset_quiet(quiet)  # each run starts from its own options (the API may run several in one process)


#: Words for the value an option takes in ``--help`` (the parser would print Python type names
#: such as ``<list[Path]>``, ``<int>``); None: nothing (the argument's name says it).
_HELP_WORDS = {"path": "PATH", "int": "N", "float": "NUMBER", "text": "TEXT", "str": "TEXT", "int range": "N",
               "float range": "NUMBER"}


def _plain_help_types() -> None:
    """Help text without Python type names: values as PATH, N, NUMBER, TEXT or the choices;
    arguments in the usage line as FILES... / [OUTPUT] (upper case, no braces)."""
    import re

    core = getattr(typer, "core", None)
    for cls_name in ("TyperArgument", "TyperOption"):
        cls = getattr(core, cls_name, None)
        if cls is None or not hasattr(cls, "display_type") or getattr(cls, "_lumeval_plain", False):
            continue
        original = cls.display_type

        def display_type(self, ctx, _original=original, _argument=cls_name == "TyperArgument"):
            label = _original(self, ctx) or ""
            inner = label[1:-1] if label.startswith("<") and label.endswith(">") else label
            if inner.startswith("list[") or (_argument and inner in _HELP_WORDS):
                return ""
            if inner in _HELP_WORDS:
                return _HELP_WORDS[inner]
            if "|" in inner or re.fullmatch(r"[a-z0-9_-]+", inner) is None:
                return inner
            return inner.upper()

        cls.display_type = display_type
        if hasattr(cls, "display_type_rich"):
            cls.display_type_rich = lambda self, ctx: self.display_type(ctx)
        if cls_name == "TyperArgument" and hasattr(cls, "_usage_display_name"):
            def usage_name(self):
                name = self.display_name_raw.upper()
                name = name if self.required else f"[{name}]"
                return name + ("..." if self.nargs != 1 else "")

            cls._usage_display_name = usage_name
        cls._lumeval_plain = True


_plain_help_types()


def _is_number_option(param) -> bool:
    """True for an option or argument the parser turns into an int or a float."""
    desc = getattr(param, "type_descriptor", None)  # typer that converts through its own adapters
    if desc is not None:
        return desc.annotation in (int, float)
    return any(k.__name__ in ("IntParamType", "FloatParamType") for k in type(getattr(param, "type", None)).__mro__)


def _plain_number_options() -> None:
    """Every int or float option reads its value by the file readers' rule (digits 0-9:
    :func:`lumeval.errors.plain_number`) before the parser converts it. Python's int() and
    float(), on which the parser relies, also take other scripts' digits ('١٢٣', full-width
    '１２３') and underscores ('3_000'): a usage error instead, exit 2."""
    core = getattr(typer, "core", None)
    for cls_name in ("TyperArgument", "TyperOption"):
        cls = getattr(core, cls_name, None)
        if cls is None or not hasattr(cls, "process_value") or getattr(cls, "_lumeval_numbers", False):
            continue

        def process_value(self, ctx, value, _original=cls.process_value):
            if isinstance(value, str) and _is_number_option(self):
                from .errors import plain_number

                plain_number(value, lambda text: typer.BadParameter(
                    f"{text} is not a number written with the digits 0-9", ctx=ctx, param=self))
            return _original(self, ctx, value)

        cls.process_value = process_value
        cls._lumeval_numbers = True


_plain_number_options()


for _name in _COMMAND_MODULES:
    importlib.import_module(_name).register(app)


def _say(line: str, *, raw: bool = False) -> None:
    """One line on stderr; a closed or full stderr is not worth a second error.

    Unless ``raw`` (the help text), control characters are escaped (file names and cells are
    data: an escape sequence must not reach the terminal) and an over-long quoted value is cut
    (:func:`_shorten`)."""
    if not raw:
        from .render.safe import clean

        line = _shorten(clean(line))
    with contextlib.suppress(OSError, ValueError):
        print(line, file=sys.stderr, flush=True)


#: Above this length an error line has its quoted values cut to QUOTE_MAX characters.
_LONG_LINE = 300


def _shorten(line: str) -> str:
    """Cut each quoted value ('...' or "...") longer than QUOTE_MAX characters in an over-long
    line: a message quotes at most about 80 characters of a cell, a name or a value."""
    if len(line) <= _LONG_LINE:
        return line
    import re

    from .errors import QUOTE_MAX

    def cut(m):
        q, body = m.group(1), m.group(2)
        return f"{q}{body[:QUOTE_MAX]}…{q}"

    # a run between two quotes that holds " — " is the text between two quoted values (the
    # problem and its fix), not a value: kept, so the fix is never cut away
    line = re.sub(rf"(['\"])([^'\"\u2014]{{{QUOTE_MAX + 1},}})\1", cut, line)
    if len(line) > 4 * _LONG_LINE:  # an unquoted run of data: keep the start and the fix
        head, sep, fix = line.rpartition(" \u2014 ")
        line = (head[:2 * _LONG_LINE] + "…" + sep + fix[:_LONG_LINE]) if sep else line[:4 * _LONG_LINE] + "…"
    return line


def _stdout_failed() -> OSError | None:
    """The error standard output gives when its buffer is flushed (None when it is fine)."""
    try:
        sys.stdout.flush()
    except OSError as exc:
        return exc
    except ValueError:  # closed
        return None
    return None


def _drop_stdout() -> None:
    """Point standard output at /dev/null, so that the interpreter's last flush of a closed pipe
    or a full device does not print a second error (Python docs, "Note on SIGPIPE")."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass


#: Errors of a write to a stream: closed pipe, full disk, quota, file too large, I/O error.
_STREAM_ERRNOS = frozenset({errno.EPIPE, errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EIO})


def _stdout_error(exc: OSError) -> int:
    why = "the reading end of the pipe was closed" if isinstance(exc, BrokenPipeError) else (exc.strerror or str(exc))
    _drop_stdout()
    _say(f"lumeval: error: standard output: cannot write ({why}) — the printed output is incomplete; "
         "files written before this point are complete")
    return 2


def main(argv: list[str] | None = None) -> None:
    """Console entry point.

    Exit codes: 0 everything passed (or nothing was judged), 1 a criterion failed or is
    indeterminate, 2 bad input or usage, or an output that could not be written (standard
    output included: a full disk, a closed pipe); one clean line on stderr, never a traceback;
    3 an internal error (a bug: one line asking for a report; ``--debug`` shows the traceback);
    130 / 143 / 129 stopped by SIGINT / SIGTERM / SIGHUP (temporary files removed, every output
    either complete or unchanged).
    """
    args = list(argv if argv is not None else sys.argv[1:])
    if argv is None:
        _stop.install()
    code = _run(args)
    if argv is None:
        stop = _stop.received()
        if stop is not None and code != 128 + stop:
            # the stop was swallowed on its way (a bare except: in a library) and the run went
            # on; the outputs were not committed after it (_stop.check): it still ends as stopped
            code = _stopped(stop)
        _stop.settle()
    failed = _stdout_failed()
    if failed is not None:
        if code in (0, 1, None):
            code = _stdout_error(failed)
        else:  # the run already failed and said why: one line is enough
            _drop_stdout()
    sys.exit(code)


def _click_class(name: str) -> type:
    """The argument parser's exception class ``name`` (typer ships click, or its own copy)."""
    return next(k for k in typer.BadParameter.__mro__ if k.__name__ == name)


def _usage_line(exc) -> str:
    """A usage error of the argument parser as one line with the fix (not a boxed paragraph)."""
    import re

    from .errors import QUOTE_MAX

    ctx = getattr(exc, "ctx", None)
    path = ctx.command_path if ctx is not None else "lumeval"
    where = path.partition(" ")[2]
    text = " ".join(str(exc.format_message()).split())
    # undecodable bytes of an argument (lone surrogates) as U+FFFD, as every other message shows
    # them: the parser quotes values with repr, which spells them '\udcff' (found by a review);
    # before the quotes are shortened, and not after an escaped backslash (typed text)
    text = re.sub(r"(?<!\\)\\udc[89a-f][0-9a-f]", "\ufffd", text)
    text = text.replace("Value error, ", "")
    # quote at most QUOTE_MAX characters of a value the user typed
    text = re.sub(rf"'([^']{{{QUOTE_MAX + 1},}})'", lambda m: f"'{m.group(1)[:QUOTE_MAX]}…'", text)
    text = text.rstrip(".")
    return f"lumeval: error: {where + ': ' if where else ''}{text} — see '{path} --help'"


def _stopped(signum: int) -> int:
    """Say that the run was stopped by ``signum``; its exit code (130 for Ctrl-C, 128 + N)."""
    if signum == signal.SIGINT:
        _say("lumeval: interrupted; unfinished outputs were not written")
    else:
        _say(f"lumeval: stopped by {signal.Signals(signum).name}; unfinished outputs were not written")
    return 128 + signum


def _traceback() -> None:
    """``--debug``: the traceback of the exception being handled on stderr, before the usual
    one-line message; the exit code stays the same (2 bad input, 3 a bug), so that a test
    station running with ``--debug`` never logs bad input as a failed requirement. Each line's
    control characters are escaped as in every other line lumeval prints (messages quote file
    content)."""
    import traceback

    from .render.safe import clean

    for line in traceback.format_exc().splitlines():
        _say(clean(line), raw=True)


#: The options that name one output file (a path ending in a separator names a folder).
_FILE_OUTPUT_OPTIONS = frozenset({"-o", "--output", "--html", "--json", "--samples-csv", "--samples-parquet"})


def _refuse_folder_like_outputs(args: list[str]) -> None:
    """Refuse a file-output option whose raw value ends in a path separator, by the output
    policy's own check (:func:`lumeval._io.check_output_file`). The argument parser turns the
    value into a ``pathlib.Path``, which drops the separator, so ``-o out.txt/`` wrote a file
    ``out.txt`` (found by exploratory testing); only the raw arguments still show it."""
    from ._io import check_output_file, names_folder

    for i, a in enumerate(args):
        if a == "--":
            break
        opt, eq, value = a.partition("=")
        if eq and opt in _FILE_OUTPUT_OPTIONS:
            v = value
        elif a in _FILE_OUTPUT_OPTIONS and i + 1 < len(args):
            opt, v = a, args[i + 1]
        else:
            continue
        if v != "-" and names_folder(v):
            check_output_file(v, opt)


def _run(args: list[str]):
    """Run the app; the exit code (or SystemExit's argument).

    The command is dispatched here rather than by the parser's own main loop, which would end a
    closed pipe with exit 1 ("a criterion failed"), swallow SIGTERM as an interrupt and print
    usage errors as a paragraph.
    """
    from .errors import LumevalError

    debug = "--debug" in args
    click_exception = _click_class("ClickException")
    try:
        _refuse_folder_like_outputs(args)
        command = typer.main.get_command(app)
        with command.make_context("lumeval", list(args)) as ctx:
            command.invoke(ctx)
    except SystemExit as exc:
        return exc.code if exc.code is not None else 0
    except typer.Exit as exc:
        return exc.exit_code
    except typer.Abort:
        _say("lumeval: aborted")
        return 1
    except click_exception as exc:  # type: ignore[misc]  # click.ClickException, looked up lazily
        if type(exc).__name__ == "NoArgsIsHelpError":  # `lumeval`, `lumeval criteria`: the help
            _say(exc.format_message(), raw=True)
        elif isinstance(exc, _click_class("UsageError")):
            _say(_usage_line(exc))
        else:
            _say(f"lumeval: error: {' '.join(str(exc.format_message()).split())}")
        return exc.exit_code if exc.exit_code else 2
    except LumevalError as exc:
        if debug:
            _traceback()
        _say(f"lumeval: error: {exc.message}")
        return 2
    except _stop.Stopped as exc:
        return _stopped(exc.signum)
    except KeyboardInterrupt:
        return _stopped(signal.SIGINT)
    except OSError as exc:
        if debug:
            _traceback()
        if exc.filename is None and exc.errno in _STREAM_ERRNOS:
            # every named file goes through lumeval._io (OutputError naming it): an unnamed write
            # failure is the stream the results are printed to
            return _stdout_error(exc)
        if exc.filename is None:
            _say(f"lumeval: internal error: {type(exc).__name__}: {exc} "
                 "(please report it with the output of the same command run as `lumeval --debug COMMAND ...`)")
            return 3
        # the file system refused a named path (name too long, no space, read-only, ...): the
        # user's environment, not a bug; commands check their targets first, this is the net
        _say(f"lumeval: error: {exc.filename}: {exc.strerror or exc} — check the path, the free space and the "
             "permissions")
        return 2
    except Exception as exc:  # a bug, not bad input: still no traceback unless asked for
        if debug:
            _traceback()
        _say(f"lumeval: internal error: {type(exc).__name__}: {exc} "
             "(please report it with the output of the same command run as `lumeval --debug COMMAND ...`)")
        return 3
    return 0
