"""Check a command's output targets before any work, so that a bad target writes nothing.

Every command that writes files (``-o``, ``--json``, ``--samples-csv``, ``--html``,
``--plots``) calls :func:`check_targets` first. It refuses, with a
:class:`lumeval.errors.UsageError` (exit code 2, one line):

- a file target that is a directory, or whose folder does not exist or is not a folder;
- a folder target (``--plots``) that is an existing file, or whose parent does not exist;
- a target that is one of the command's input files (inputs are never modified);
- two options naming the same file.

Pure path checks: nothing is created or written here.
"""

from __future__ import annotations

import glob
import os
from pathlib import Path
from typing import Iterable, Mapping

from ..errors import UsageError


def _same_file(a: Path, b: Path) -> bool:
    try:
        if a.exists() and b.exists():
            return os.path.samefile(a, b)
    except OSError:
        pass
    return os.path.abspath(a) == os.path.abspath(b)


def _input_files(inputs: Iterable) -> list[Path]:
    """The input files named by ``inputs`` (files, the files directly in folders, glob matches)."""
    out: list[Path] = []
    for item in inputs:
        text = str(item)
        p = Path(text)
        if p.is_dir():
            out.extend(q for q in p.iterdir() if q.is_file())
        elif p.exists():
            out.append(p)
        elif glob.has_magic(text):
            out.extend(Path(m) for m in glob.glob(text, recursive=True) if Path(m).is_file())
    return out


def check_targets(
    *,
    files: Mapping[str, object | None] | None = None,
    dirs: Mapping[str, object | None] | None = None,
    inputs: Iterable = (),
) -> None:
    """Refuse unusable output targets before any work.

    Parameters
    ----------
    files : mapping option name -> path or None
        File targets, e.g. ``{"--output": out, "--html": html}`` (None = not given).
    dirs : mapping option name -> path or None
        Folder targets, e.g. ``{"--plots": plots}``.
    inputs : iterable of paths or glob patterns
        The command's inputs; no target may be one of them.

    Raises
    ------
    lumeval.errors.UsageError
        Naming the option, the path and what would fix it.
    """
    for opt, v in [*(files or {}).items(), *(dirs or {}).items()]:
        if v is not None and not str(v).strip():
            raise UsageError("the path is empty", field=opt, fix="give a file or folder name")
    given = {k: Path(str(v)) for k, v in (files or {}).items() if v is not None}
    given_dirs = {k: Path(str(v)) for k, v in (dirs or {}).items() if v is not None}
    try:
        _check(given, given_dirs, inputs)
    except OSError as exc:  # e.g. a name too long for the file system
        opt = next((k for k, p in [*given.items(), *given_dirs.items()] if exc.filename and str(p) in str(exc.filename)),
                   None)
        raise UsageError(f"cannot use {str(exc.filename or '')!r}: {exc.strerror or exc}", field=opt,
                         fix="choose a shorter or valid path") from None


def _check(given: dict, given_dirs: dict, inputs: Iterable) -> None:
    for opt, p in given.items():
        if p.is_dir():
            raise UsageError(f"cannot write {str(p)!r}: it is a folder", field=opt, fix="give a file name in that folder")
        parent = p.parent if str(p.parent) else Path(".")
        if not parent.is_dir():
            what = "is a file, not a folder" if parent.exists() else "does not exist"
            raise UsageError(f"cannot write {str(p)!r}: folder {str(parent)!r} {what}", field=opt,
                             fix="create the folder first or choose another path")
        if not os.access(parent, os.W_OK | os.X_OK):
            raise UsageError(f"cannot write {str(p)!r}: folder {str(parent)!r} is not writable", field=opt,
                             fix="choose a folder you may write to")
    for opt, d in given_dirs.items():
        if d.exists() and not d.is_dir():
            raise UsageError(f"cannot write plots into {str(d)!r}: it is a file", field=opt, fix="give a folder")
        parent = d if d.exists() else (d.parent if str(d.parent) else Path("."))
        if not parent.is_dir():
            raise UsageError(f"cannot write into {str(d)!r}: folder {str(parent)!r} does not exist", field=opt,
                             fix="create the folder first or choose another path")
    for opt, p in given.items():
        for opt2, d in given_dirs.items():
            if _same_file(p, d):
                raise UsageError(f"{opt} and {opt2} both name {str(p)!r}", field=opt,
                                 fix="give the file and the folder different names")
    names = list(given.items())
    for i, (opt, p) in enumerate(names):
        for opt2, q in names[i + 1:]:
            if _same_file(p, q):
                raise UsageError(f"{opt} and {opt2} both name {str(p)!r}", field=opt2,
                                 fix="give each output its own file")
    if given:
        for src in _input_files(inputs):
            for opt, p in given.items():
                if _same_file(p, src):
                    raise UsageError(f"{str(p)!r} is one of the input files: writing it would destroy the input",
                                     field=opt, fix="choose another output file name")
