"""The one TOML reader: every TOML file lumeval reads goes through :func:`read_toml` (criteria
files, claims files, instrument files, series manifests) or, for text already in memory,
:func:`loads`.

One set of rules for all of them (docs/criteria.md, "TOML files"):

- **Encoding.** UTF-8. A UTF-8 byte-order mark at the start is accepted and removed (editors
  on some systems write one; it carries no meaning). Any other encoding is refused.
- **Size and depth.** Files larger than the caller's limit (:data:`MAX_TOML_BYTES` unless the
  kind of file has its own) and arrays or inline tables nested deeper than
  :data:`MAX_TOML_DEPTH` are refused before parsing (``tomllib`` parses nesting recursively:
  thousands of levels would exhaust the interpreter's recursion limit).
- **Errors.** One message shape, ``FILE:LINE:COLUMN: not valid TOML: problem — fix`` (line and
  column where the parser knows them), raised as the caller's error class (a criteria,
  claims or instrument file: :class:`~lumeval.errors.CriteriaError`; a manifest:
  :class:`~lumeval.errors.InputError`). Reading problems (missing file, folder, FIFO or device,
  too large, not UTF-8, permissions) name the option the path was given to.

``tomllib`` runs no code and reads no other file; the reader never writes anything.
"""

from __future__ import annotations

import re
import tomllib
from pathlib import Path
from typing import Any

from .errors import CriteriaError, InputError, LumevalError

#: Largest TOML file read (criteria, claims and instrument files are a few kilobytes).
MAX_TOML_BYTES = 1024 * 1024
#: Deepest nesting of arrays and inline tables accepted (lumeval's files nest 2-3 levels).
MAX_TOML_DEPTH = 32

_BOM = "\ufeff"
# no leading \s*: the message may quote a key, and a long run of spaces in it made re backtrack
_AT = re.compile(r"\(at line (\d+), column (\d+)\)")


def loads(text: str, file: str, *, error: type[LumevalError] = CriteriaError) -> dict[str, Any]:
    """Parse TOML ``text`` (from ``file``, the name used in messages); every problem is one
    ``error`` naming the file, line and column. A leading byte-order mark is removed."""
    if text.startswith(_BOM):
        text = text[1:]
    depth_line = _too_deep(text)
    if depth_line is not None:
        raise error(f"arrays or inline tables nested more than {MAX_TOML_DEPTH} levels deep", file=file,
                    line=depth_line, fix="lumeval's files need at most a few levels: check the file")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = _AT.search(msg)
        line: int | None
        column: int | None = None
        if m:
            line, column = int(m.group(1)), int(m.group(2))
        else:
            m2 = re.search(r"line (\d+)", msg)
            line = int(m2.group(1)) if m2 else (max(1, len(text.splitlines())) if "end of document" in msg else None)
        problem = _AT.sub("", msg).rstrip() or "invalid TOML"
        raise error(f"not valid TOML: {problem[:120]}", file=file, line=line, column=column,
                    fix="check quotes, brackets and `key = value` syntax") from None
    except ValueError:  # an integer too long for int() (Python's 4300-digit limit): no interpreter advice
        # the first run of 1000+ digits; runs found one by one (a search for "[0-9_]{1000,}" would
        # rescan each shorter run from every one of its positions)
        m3 = next((r for r in re.finditer(r"[0-9_]+", text) if r.end() - r.start() >= 1000), None)
        raise error("a number with thousands of digits", file=file,
                    line=text.count("\n", 0, m3.start()) + 1 if m3 else None,
                    fix="write the value as an ordinary number") from None
    except RecursionError:  # pragma: no cover - _too_deep refuses such files first
        raise error("nested too deeply to read", file=file, fix="check the file") from None


def read_text(path: str | Path, *, what: str, option: str, error: type[LumevalError] = CriteriaError,
              read_error: type[LumevalError] | None = None, max_bytes: int = MAX_TOML_BYTES) -> str:
    """The text of the ``what`` file ("criteria", "claims", ...) the user named with ``option``:
    a regular file of at most ``max_bytes``, UTF-8 (a byte-order mark removed). Problems raise
    ``read_error`` (default: ``error``)."""
    from ._paths import display_path
    from .spectra.text import _read_bytes

    cls = read_error or error
    file = display_path(path)
    try:
        raw = _read_bytes(path, max_bytes)
    except InputError as exc:  # not a regular file, too large, unreadable: same words, caller's class
        problem, fix = exc.problem, exc.fix
        if problem == "no such file":
            fix = f"check the path given to {option}"
        elif problem.startswith("is a directory"):
            problem, fix = f"is a directory, not a {what} file", f"give the path of a {what} file"
        elif " MB, more than the " in problem:
            fix = f"check that this is a {what} file"
        raise cls(problem, file=exc.file, fix=fix) from None
    try:
        return raw.decode("utf-8-sig")  # the one BOM rule: a UTF-8 byte-order mark is removed
    except UnicodeDecodeError:
        raise cls("is not UTF-8 text", file=file, fix=f"save the {what} file as UTF-8 TOML") from None


def read_toml(path: str | Path, *, what: str, option: str, error: type[LumevalError] = CriteriaError,
              read_error: type[LumevalError] | None = None,
              max_bytes: int = MAX_TOML_BYTES) -> tuple[dict[str, Any], str]:
    """Read and parse a TOML file: ``(data, text)``. See the module docstring for the rules;
    :func:`read_text` and :func:`loads` for the errors."""
    text = read_text(path, what=what, option=option, error=error, read_error=read_error, max_bytes=max_bytes)
    from ._paths import display_path

    return loads(text, display_path(path), error=error), text


def _too_deep(text: str) -> int | None:
    """The line where value nesting (``[`` / ``{`` after ``=`` or inside a value) first exceeds
    :data:`MAX_TOML_DEPTH`, or None. Strings and comments are skipped; table headers
    (``[a]``, ``[[a]]`` at the start of a statement) do not nest."""
    if text.count("[") + text.count("{") <= MAX_TOML_DEPTH:
        return None
    depth = 0
    line = 1
    i, n = 0, len(text)
    at_statement = True  # at the start of a line outside any value: a '[' opens a table header
    while i < n:
        ch = text[i]
        if ch == "\n":
            line += 1
            if depth == 0:
                at_statement = True
            i += 1
            continue
        if ch in " \t\r":
            i += 1
            continue
        if ch == "#":
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        if ch in "\"'":
            q3 = text[i:i + 3]
            if q3 in ('"""', "'''"):
                j = text.find(q3, i + 3)
                end = n if j < 0 else j + 3
            else:
                j = i + 1
                while j < n and text[j] != ch and text[j] != "\n":
                    j += 2 if (ch == '"' and text[j] == "\\") else 1
                end = j + 1
            line += text.count("\n", i, min(end, n))
            i = end
            at_statement = False
            continue
        if at_statement and depth == 0 and ch == "[":
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        at_statement = False
        if ch in "[{":
            depth += 1
            if depth > MAX_TOML_DEPTH:
                return line
        elif ch in "]}":
            depth = max(0, depth - 1)
        i += 1
    return None
