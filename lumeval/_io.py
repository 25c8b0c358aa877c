"""Writing output files: the one atomic writer and the one output-target validator.

Every file lumeval writes (reports, JSON, CSV, HTML, plots, converted spectra, criteria
templates, Parquet archives) goes through :func:`atomic_output` (or its shorthands
:func:`write_bytes` / :func:`write_text`), and every command checks its targets with
:func:`check_targets` before any work. The rules (docs/output-formats.md, "Output files"):

- **Regular files only.** An existing target that is a character or block device, a FIFO or a
  socket (or a symbolic link to one) is refused, and so is a target inside ``/dev``, ``/proc``
  or ``/sys``: lumeval never writes to devices, never blocks on a FIFO. Standard output is
  spelled ``-`` where a command supports it.
- **Atomic.** The data go to a temporary file in the target's folder, which is flushed,
  synced and renamed over the target only when complete: a reader never sees half a file and a
  failure keeps the old file. A symbolic link given as the target is replaced by the new file
  (the file it pointed to is not touched).
- **Overwrite policy.** An existing regular file is replaced and keeps its permission bits (and,
  where the process may, its owner and group); a new file gets the usual ``0666 & ~umask``.
  Files that are themselves inputs of other runs and usually edited by hand, a converted
  spectrum (``convert``) and a criteria template (``criteria new``), are replaced only with
  ``--force``. No output may be one of the run's inputs, and no two outputs of one run may
  name the same file.
- **Failures.** Any operating-system error while writing becomes an :class:`OutputError`
  (exit code 2, one line naming the target); the temporary file is removed. Temporary files
  are named ``.<target name>.lumeval-<host>-<pid>-<random>.tmp``: one left behind by a killed
  process (SIGKILL, power loss) is recognisable and is removed by the next write of the same
  target once that process no longer runs.

Imports nothing heavy: usable from the CLI, the Python API and the renderers alike.
"""

from __future__ import annotations

import contextlib
import glob
import os
import re
import secrets
import stat
from collections.abc import Iterable, Iterator, Mapping, Sequence
from itertools import chain
from pathlib import Path
from typing import IO

from .errors import OutputError, UsageError

#: Marker in the name of every temporary file lumeval writes (see :func:`temporary_name`).
TMP_MARKER = ".lumeval-"
TMP_SUFFIX = ".tmp"
#: Folders whose entries are devices or kernel interfaces: never written into.
_SYSTEM_DIRS = ("/dev", "/proc", "/sys")
#: Folders under /dev that hold ordinary files (RAM-backed scratch space).
_DEV_SCRATCH = ("/dev/shm", "/dev/mqueue")
#: The longest target name (in bytes) quoted in a temporary name; file systems allow 255.
_NAME_BYTES = 120

#: Plain-language names of the file types that are neither regular files nor folders: output
#: targets of these types are refused (:func:`check_output_file`), and the readers, the lot input
#: expansion and the store name a refused input with them (:func:`special_file_kind`).
_KIND = {
    stat.S_IFCHR: "a character device",
    stat.S_IFBLK: "a block device",
    stat.S_IFIFO: "a FIFO (named pipe)",
    stat.S_IFSOCK: "a socket",
}


def special_file_kind(mode: int) -> str:
    """A plain-language name of a file type (``st_mode``) that is neither a regular file nor a
    folder: a FIFO, a socket, a character or block device, else "a special file"."""
    return _KIND.get(stat.S_IFMT(mode), "a special file")


# --------------------------------------------------------------------------- target checks


def _node() -> str:
    """This machine's name, reduced to characters safe in a file name."""
    try:
        name = os.uname().nodename
    except (AttributeError, OSError):  # pragma: no cover - not POSIX
        name = "host"
    return re.sub(r"[^A-Za-z0-9_.]", "_", name)[:32] or "host"


def _short_name(name: str) -> str:
    raw = os.fsencode(name)[:_NAME_BYTES]
    return os.fsdecode(raw)


def temporary_name(target: str | os.PathLike, pid: int | None = None) -> str:
    """A fresh temporary file name (no folder) for writing ``target``:
    ``.<name>.lumeval-<host>-<pid>-<random>.tmp``."""
    name = _short_name(Path(target).name)
    return f".{name}{TMP_MARKER}{_node()}-{os.getpid() if pid is None else pid}-{secrets.token_hex(3)}{TMP_SUFFIX}"


def _pid_alive(pid: int) -> bool:
    if pid <= 0:
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # EPERM: it runs, as another user
        return True
    return True


def sweep_stale_temporaries(target: str | os.PathLike) -> list[Path]:
    """Remove temporary files of ``target`` left by lumeval processes of this machine that no
    longer run (killed with SIGKILL, power loss). Returns the paths removed; never raises."""
    p = Path(target)
    folder = p.parent
    head = f".{_short_name(p.name)}{TMP_MARKER}{_node()}-"
    pattern = re.compile(r"(\d+)-[0-9a-f]{6}" + re.escape(TMP_SUFFIX))
    removed: list[Path] = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for e in entries:
        if not e.name.startswith(head):
            continue
        m = pattern.fullmatch(e.name[len(head):])
        if m is None:
            continue
        pid = int(m.group(1))
        if pid == os.getpid() or _pid_alive(pid):
            continue
        try:
            if e.is_file(follow_symlinks=False):
                os.unlink(e.path)
                removed.append(Path(e.path))
        except OSError:
            pass
    return removed


def _in_system_dir(folder: Path) -> bool:
    try:
        real = os.path.realpath(folder)
    except (OSError, ValueError):
        return False
    for scratch in _DEV_SCRATCH:
        if real == scratch or real.startswith(scratch + "/"):
            return False
    return any(real == d or real.startswith(d + "/") for d in _SYSTEM_DIRS)


def names_folder(text: str) -> bool:
    """True for a path written to end in a separator, ``/.`` or ``/..``: it names a folder, and
    pathlib and abspath drop that ending (a file of the name before it would be written)."""
    return text.endswith((os.sep, os.altsep) if os.altsep else os.sep) or os.path.basename(text) in (".", "..")


def check_output_file(path: str | os.PathLike, option: str | None = None) -> None:
    """Refuse a file target that lumeval must not write (before any work).

    Refused: an empty path; an existing folder; a device, FIFO or socket (or a link to one);
    a target inside /dev, /proc or /sys; a missing or unwritable folder.
    """
    text = os.fspath(path)
    if not str(text).strip():
        raise UsageError("the path is empty", field=option, fix="give a file name")
    p = Path(text)
    shown = _shown(p)
    if isinstance(text, str) and names_folder(text):
        # a path ending in a separator (or in "/." or "/..") names a folder; Path() drops the
        # separator (and a final "."), so the run would have written a file of that name
        raise UsageError(f"cannot write {_shown(text)}: a path ending in {os.sep!r}, '{os.sep}.' or '{os.sep}..' names a "
                         "folder",
                         field=option, fix="give a file name (without the trailing separator)")
    try:
        st = os.lstat(p)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise UsageError(f"cannot use {shown}: {exc.strerror or exc}", field=option,
                         fix="choose a shorter or valid path") from None
    if st is not None:
        mode = st.st_mode
        if stat.S_ISLNK(mode):
            try:
                mode = os.stat(p).st_mode
            except OSError:  # a dangling link: replaced like any other link
                mode = stat.S_IFREG
            via = " (through a symbolic link)"
        else:
            via = ""
        if stat.S_ISDIR(mode):
            raise UsageError(f"cannot write {shown}: it is a folder{via}", field=option,
                             fix="give a file name in that folder")
        kind = _KIND.get(stat.S_IFMT(mode))
        if kind is not None:
            raise UsageError(f"cannot write {shown}: it is {kind}{via}, and lumeval writes regular files only",
                             field=option, fix="give a file name" + _stdout_hint(option))
    parent = p.parent
    if _in_system_dir(parent):
        raise UsageError(f"cannot write {shown}: {_shown(parent)} is a system folder of devices", field=option,
                         fix="give a file in an ordinary folder" + _stdout_hint(option))
    if not parent.is_dir():
        what = "is a file, not a folder" if parent.exists() else "does not exist"
        raise UsageError(f"cannot write {shown}: folder {_shown(parent)} {what}", field=option,
                         fix="create the folder first or choose another path")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise UsageError(f"cannot write {shown}: folder {_shown(parent)} is not writable", field=option,
                         fix="choose a folder you may write to")


def check_output_dir(path: str | os.PathLike, option: str | None = None,
                     names: Iterable[str] | None = None) -> None:
    """Refuse a folder target (``--plots DIR``) that cannot be used (before any work).

    The folder may exist or be created in an existing folder. When ``names`` (file-name
    patterns, e.g. ``*.svg``) are given, an existing entry of the folder matching one of them
    that is not a regular file (a FIFO, a device, a folder, a link to one) is refused too.
    """
    text = os.fspath(path)
    if not str(text).strip():
        raise UsageError("the path is empty", field=option, fix="give a folder name")
    d = Path(text)
    if d.exists() and not d.is_dir():
        raise UsageError(f"cannot write into {_shown(d)}: it is a file", field=option, fix="give a folder")
    parent = d if d.exists() else d.parent
    if _in_system_dir(d if d.exists() else parent):
        raise UsageError(f"cannot write into {_shown(d)}: it is a system folder of devices", field=option,
                         fix="give an ordinary folder")
    if not parent.is_dir():
        raise UsageError(f"cannot write into {_shown(d)}: folder {_shown(parent)} does not exist", field=option,
                         fix="create the folder first or choose another path")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise UsageError(f"cannot write into {_shown(d)}: folder {_shown(parent)} is not writable", field=option,
                         fix="choose a folder you may write to")
    if names and d.is_dir():
        import fnmatch

        try:
            entries = list(os.scandir(d))
        except OSError as exc:
            raise UsageError(f"cannot list {_shown(d)}: {exc.strerror or exc}", field=option,
                             fix="check the folder's permissions") from None
        for e in entries:
            if any(fnmatch.fnmatchcase(e.name, pat) for pat in names):
                check_output_file(e.path, option)


def _stdout_hint(option: str | None) -> str:
    return ", or - to print to standard output" if option in STDOUT_OPTIONS else ""


def _shown(p: Path | str) -> str:
    """A path for a message: quoted, at most about 80 characters, control characters escaped."""
    from .errors import quote

    return quote(os.fspath(p))


#: Options that accept ``-`` for standard output.
STDOUT_OPTIONS = frozenset({"--output", "OUTPUT"})


def is_stdout(path) -> bool:
    """True for the ``-`` that names standard output."""
    return path is not None and os.fspath(path) == "-"


def _same_file(a: Path, b: Path) -> bool:
    """The same file when both exist (links followed), else the same absolute path."""
    return _same_ref(_file_ref(a), _file_ref(b))


def _file_ref(p) -> tuple[tuple[int, int] | None, str]:
    """What :func:`_same_file` compares of ``p``: its (device, inode), None when it cannot be
    found, and its absolute path."""
    return _file_id(p), os.path.abspath(p)


def _same_ref(r1: tuple, r2: tuple) -> bool:
    (i1, a1), (i2, a2) = r1, r2
    return i1 == i2 if (i1 is not None and i2 is not None) else a1 == a2


def _is_file(entry: os.DirEntry) -> bool:
    """``Path.is_file`` of a folder entry (False when it cannot be examined)."""
    try:
        return entry.is_file()
    except OSError:
        return False


def _input_files(inputs: Iterable) -> list[str | Path]:
    """The input files named by ``inputs`` (files, the files directly in folders, glob matches).
    A folder's files are listed with their types from the listing (``os.scandir``: a stat only
    for symbolic links, which are followed), as paths (str)."""
    out: list[str | Path] = []
    for item in inputs:
        text = os.fspath(item)
        p = Path(text)
        try:
            if p.is_dir():
                with os.scandir(text) as it:
                    out.extend(e.path for e in it if _is_file(e))
            elif p.exists():
                out.append(p)
            elif glob.has_magic(text):
                out.extend(Path(m) for m in glob.glob(text, recursive=True) if Path(m).is_file())
        except OSError:
            continue
    return out


def check_targets(
    *,
    files: Mapping[str, str | os.PathLike[str] | None] | None = None,
    dirs: Mapping[str, str | os.PathLike[str] | None] | None = None,
    inputs: Iterable = (),
    dir_files: Mapping[str, Iterable[str]] | None = None,
    input_files: Sequence[str] = (),
) -> None:
    """Refuse unusable output targets before any work (one :class:`UsageError`, exit code 2).

    Parameters
    ----------
    files : mapping option name -> path or None
        File targets, e.g. ``{"--output": out, "--html": html}`` (None = not given). ``-``
        is standard output for the options in :data:`STDOUT_OPTIONS` and refused elsewhere.
    dirs : mapping option name -> path or None
        Folder targets, e.g. ``{"--plots": plots}``.
    inputs : iterable of paths or glob patterns
        The command's inputs; no target may be one of them.
    dir_files : mapping option name -> file-name patterns
        The files a folder option writes (e.g. ``{"--plots": ("chromaticity.svg", "spd-*.png", ...)}``):
        no file target may be one of them, and an existing one must be a regular file.
    input_files : sequence of str
        Inputs already known to be regular files (a lot's expanded inputs,
        :func:`lumeval.lots.inputs.expand_inputs`): compared like ``inputs`` without being
        examined again (no stat each when no target exists yet).

    Refused: see :func:`check_output_file` and :func:`check_output_dir`; a target that is one
    of the inputs; two options naming the same file; a file target that a folder option would
    write too.
    """
    given: dict[str, Path] = {}
    for opt, v in (files or {}).items():
        if v is None:
            continue
        if is_stdout(v):
            if opt in STDOUT_OPTIONS:
                continue
            raise UsageError(f"{opt} writes a file and cannot write to standard output ('-')", field=opt,
                             fix="give a file name (./- for a file named '-')")
        check_output_file(v, opt)
        given[opt] = Path(os.fspath(v))
    given_dirs: dict[str, Path] = {}
    for opt, v in (dirs or {}).items():
        if v is None:
            continue
        if is_stdout(v):
            raise UsageError(f"{opt} writes files into a folder and cannot write to standard output ('-')",
                             field=opt, fix="give a folder name")
        check_output_dir(v, opt, (dir_files or {}).get(opt))
        given_dirs[opt] = Path(os.fspath(v))
    try:
        _check_collisions(given, given_dirs, inputs, dir_files or {}, input_files)
    except OSError as exc:  # e.g. a name too long for the file system
        raise UsageError(f"cannot use {_shown(str(exc.filename or ''))}: {exc.strerror or exc}",
                         fix="choose a shorter or valid path") from None


def _check_collisions(given: dict, given_dirs: dict, inputs: Iterable, dir_files: Mapping,
                      input_files: Sequence[str] = ()) -> None:
    import fnmatch

    for opt, p in given.items():
        for opt2, d in given_dirs.items():
            if _same_file(p, d):
                raise UsageError(f"{opt} and {opt2} both name {_shown(p)}", field=opt,
                                 fix="give the file and the folder different names")
            pats = tuple(dir_files.get(opt2, ()))
            if pats and _same_file(p.parent, d) and any(fnmatch.fnmatchcase(p.name, pat) for pat in pats):
                raise UsageError(f"{opt} {_shown(p)} is a file that {opt2} writes too", field=opt,
                                 fix=f"give {opt} a file outside {_shown(d)} or another name")
    inputs = list(inputs)
    _refuse_into_archive_folder(given, inputs)
    names = list(given.items())
    for i, (opt, p) in enumerate(names):
        for opt2, q in names[i + 1:]:
            if _same_file(p, q):
                raise UsageError(f"{opt} and {opt2} both name {_shown(p)}", field=opt2,
                                 fix="give each output its own file")
    # the files a folder option would replace: those of its names that exist already
    outs = [(opt, p, _file_ref(p)) for opt, p in given.items()] + _dir_files_present(given_dirs, dir_files)
    if outs:
        # _same_file(p, src) for every output and input, each output's reference taken once and
        # each input stat-ed once (a lot may have a million input files; none when no output exists)
        any_exists = any(ref[0] is not None for _, _, ref in outs)
        for src in chain(_input_files(inputs), input_files):
            src_ref = _file_ref(src) if any_exists else (None, os.path.abspath(src))
            for opt, p, ref in outs:
                if _same_ref(ref, src_ref):
                    raise UsageError(f"{_shown(p)} is one of the input files: writing it would destroy the input",
                                     field=opt, fix="choose another output file name")


def _refuse_into_archive_folder(given: dict, inputs: list) -> None:
    """Refuse a file target with a Parquet name inside an input folder: it would replace one of
    an archive's files or join the archive read next time (a folder holding Parquet files is
    read as an archive; ``inspect ARCHIVE -o ARCHIVE/report.parquet`` wrote its text there, and
    every later read of the archive failed; found by a review)."""
    from .spectra.archive import PARQUET_SUFFIXES

    parquet = [(opt, p) for opt, p in given.items() if p.suffix.lower() in PARQUET_SUFFIXES]
    if not parquet:
        return
    for src in inputs:
        if not isinstance(src, str | os.PathLike) or not os.path.isdir(src):
            continue
        for opt, p in parquet:
            if _same_file(p.parent, Path(os.fspath(src))):
                raise UsageError("the output would be a file of the input archive folder: it would replace one of "
                                 "its files or join the archive read next time", file=str(p), field=opt,
                                 fix="write the output outside the input folder")


def _dir_files_present(given_dirs: dict, dir_files: Mapping) -> list[tuple[str, Path, tuple]]:
    """(option, path, reference) of each existing file in a target folder whose name the
    folder option writes (``dir_files`` patterns): an input there under such a name (a spectrum
    saved as ``chromaticity.svg``) would be replaced. Only the folder is listed, not the inputs."""
    import fnmatch
    import re

    out = []
    for opt, d in given_dirs.items():
        pats = tuple(dir_files.get(opt, ()))
        if not pats:
            continue
        # one compiled pattern (fnmatchcase's rules): the folder may be a lot's input folder of a
        # million files, each name matched once rather than once per pattern
        match = re.compile("|".join(f"(?:{fnmatch.translate(pat)})" for pat in pats)).match
        try:
            with os.scandir(d) as it:
                names = [e.name for e in it if match(e.name)]
        except (OSError, ValueError):  # not there yet (created by the run), or not a folder: checked elsewhere
            continue
        out += [(opt, d / name, _file_ref(d / name)) for name in names]
    return out


def _file_id(p) -> tuple[int, int] | None:
    """(device, inode) of the file ``p`` names (links followed), None when it cannot be found."""
    try:
        st = os.stat(p)
    except (OSError, ValueError):
        return None
    return st.st_dev, st.st_ino


def refuse_existing(path, option: str | None = None, *, force: bool = False) -> None:
    """The ``--force`` rule of the overwrite policy, for outputs that are themselves inputs of
    other runs (a converted spectrum, a criteria template): an existing target (a file or a
    link) is refused unless ``force``."""
    if path is None or is_stdout(path) or force:
        return
    if os.path.lexists(os.fspath(path)):
        raise UsageError("the output file exists", file=os.fspath(path),
                         fix="choose a new name, or add --force to replace it")


# --------------------------------------------------------------------------- the writer


def _keep_attributes(fd: int, target: Path) -> None:
    """Give the new file the permission bits (and, where allowed, owner and group) of the
    regular file it replaces; a new file keeps the mode it was created with (0666 & ~umask)."""
    try:
        st = os.lstat(target)
    except OSError:
        return
    if not stat.S_ISREG(st.st_mode):
        return  # a link (or nothing usable) is replaced by a file with the default mode
    if not hasattr(os, "fchmod"):  # pragma: no cover - not POSIX: the platform's defaults
        return
    try:
        os.fchown(fd, st.st_uid if os.geteuid() == 0 else -1, st.st_gid)
    except (OSError, AttributeError):
        pass  # not allowed (another user's group): the file keeps the writer's
    os.fchmod(fd, stat.S_IMODE(st.st_mode) & 0o777)


@contextlib.contextmanager
def atomic_output(
    path: str | os.PathLike,
    *,
    text: bool = False,
    encoding: str = "utf-8",
    newline: str | None = "",
    option: str | None = None,
) -> Iterator[IO]:
    """Open a temporary file next to ``path`` for writing; on success rename it over ``path``.

    Use as ``with atomic_output(p) as f: f.write(data)``. The file object is binary, or text
    (``text=True``, UTF-8, newlines written as given). On leaving the block normally the data
    are flushed, synced to disk, given the old file's permissions and moved into place with one
    rename; on any exception (including KeyboardInterrupt and the SIGTERM the CLI turns into
    one) the temporary file is removed and the target is left as it was. Operating-system
    errors become :class:`lumeval.errors.OutputError` naming ``path`` (and ``option``).
    Temporary files of earlier runs on the same target whose process is gone are removed first.
    """
    target = Path(os.fspath(path))
    folder = target.parent
    sweep_stale_temporaries(target)
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0) | getattr(os, "O_NOFOLLOW", 0)
    tmp = None
    try:
        for _ in range(5):
            tmp = folder / temporary_name(target)
            try:
                fd = os.open(tmp, flags, 0o666)
                break
            except FileExistsError:
                continue
        else:  # pragma: no cover - five random collisions
            raise FileExistsError(f"cannot create a temporary file next to {target}")
        try:
            fh = os.fdopen(fd, "w", encoding=encoding, newline=newline) if text else os.fdopen(fd, "wb")
        except BaseException:
            os.close(fd)
            raise
        with fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
            _keep_attributes(fh.fileno(), target)
        from . import _stop

        _stop.check()  # a stop received on the way, even if something swallowed it: not committed
        os.replace(tmp, target)
        tmp = None
    except OSError as exc:
        raise OutputError(f"cannot write the file: {exc.strerror or exc}", file=os.fspath(target), field=option,
                          fix="check the free space and the permissions; the previous file, if any, is unchanged") from None
    finally:
        if tmp is not None:
            with contextlib.suppress(OSError):
                os.unlink(tmp)


def write_bytes(path: str | os.PathLike, data: bytes, *, option: str | None = None) -> None:
    """Write ``data`` to ``path`` atomically (see :func:`atomic_output`)."""
    with atomic_output(path, option=option) as fh:
        fh.write(data)


def write_text(path: str | os.PathLike, text: str, *, option: str | None = None) -> None:
    """Write ``text`` (UTF-8, newlines as given) to ``path`` atomically."""
    write_bytes(path, text.encode("utf-8"), option=option)
