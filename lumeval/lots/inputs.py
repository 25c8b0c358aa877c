"""Lot inputs: files, folders and glob patterns expanded into the list of files to read.

:func:`expand_inputs` is what ``lumeval lot`` (and :func:`lumeval.commands.lot.run_lot`) does
with its arguments. The rules (documented for users in ``docs/lots.md``):

* A **file** is taken as given. It must be a regular file (or a link to one): a FIFO, a socket
  or a device is refused without being opened (reading a FIFO would wait for a writer forever),
  a dangling link or a symlink loop is listed as unreadable.
* A **folder** contributes every entry directly inside it whose name ends in one of
  :data:`SPECTRUM_SUFFIXES` (sorted by name; hidden names skipped; sub-folders not entered).
* A **pattern** (``*``, ``?``, ``[...]``; ``**`` for any depth of folders) is expanded here, the
  same on every shell; ``*`` and ``**`` do not match hidden names (as the shell does).
  ``**`` follows links to folders but enters every real folder at most once, so a link to
  ``..`` or to a sibling folder can neither loop nor make a file count twice.
* Every real file is read once, however many names reach it: a second name for the same file
  (a hard or symbolic link, an overlapping pattern) is listed as skipped with the name kept.
* What expansion finds but cannot use is **listed, never silently dropped**:
  ``unreadable`` (a dangling link, a symlink loop, an entry whose type cannot be read, a name
  that matches nothing — the lot cannot pass with these) and ``skipped`` (a FIFO, socket or
  device, a folder whose name looks like a spectrum file, a second name of a file already
  taken — listed with the reason, the lot is judged without them).
* File names need not be valid UTF-8: the paths returned open the right files, and
  :func:`display_path` gives the text to show (undecodable bytes as U+FFFD), which is what
  every message here uses.
"""

from __future__ import annotations

import errno
import fnmatch
import os
import re
import stat
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

from .._paths import display_path

#: File extensions taken from folders.
SPECTRUM_SUFFIXES = (".csv", ".txt", ".tsv", ".dat", ".xml", ".spdx", ".tm27", ".json",
                     ".parquet", ".parq", ".pq")  # Parquet archives: lumeval.spectra.archive

_GLOB_CHARS = set("*?[")


@dataclass(frozen=True)
class Unreadable:
    """An input that gave no sample: the path (or ``path#column``) and the reason, both in
    printable form (:func:`display_path`: a file name's undecodable bytes as U+FFFD, whoever
    built the entry), since every output writes them."""

    source: str
    message: str

    def __post_init__(self) -> None:
        object.__setattr__(self, "source", display_path(self.source))
        object.__setattr__(self, "message", display_path(self.message))


@dataclass(frozen=True)
class Skipped:
    """An entry found by expanding a folder or pattern and deliberately not read: its path (as
    shown) and why."""

    path: str
    reason: str


@dataclass(frozen=True)
class LotInputs:
    """The result of :func:`expand_inputs`.

    Attributes
    ----------
    files : tuple of str
        Regular files to read, in the order given, each real file once (paths open the file;
        show them with :func:`display_path`).
    unreadable : tuple of Unreadable
        Inputs that name nothing readable (the lot cannot be declared to pass).
    skipped : tuple of Skipped
        Entries left out on purpose, with the reason.
    given : tuple of str
        The files of ``files`` named as such (not found in a folder or by a pattern).
    """

    files: tuple[str, ...]
    unreadable: tuple[Unreadable, ...]
    skipped: tuple[Skipped, ...]
    given: tuple[str, ...] = ()


def _kind_of(mode: int) -> str | None:
    """A plain-language name of a non-regular, non-folder file type (None for a regular file)."""
    if stat.S_ISREG(mode):
        return None
    if stat.S_ISDIR(mode):
        return "a folder"
    from ..spectra.text import special_file_kind

    return special_file_kind(mode)


class _Collector:
    def __init__(self) -> None:
        self.files: list[str] = []
        self.unreadable: list[Unreadable] = []
        self.skipped: list[Skipped] = []
        # real file -> (path taken, its index in files, whether that path is a symbolic link)
        self._by_id: dict[tuple[int, int], tuple[str, int, bool]] = {}
        self._abs: set[str] = set()
        self.given: set[str] = set()  # absolute names of the files named as such
        self._streams = _stream_files()

    def bad(self, path: str, problem: str, fix: str) -> None:
        shown = display_path(path)
        self.unreadable.append(Unreadable(shown, f"{shown}: {problem} \u2014 {fix}"))

    def skip(self, path: str, reason: str) -> None:
        self.skipped.append(Skipped(display_path(path), reason))

    def take(self, path: str, *, explicit: bool, found_in: str | None = None) -> None:
        """Classify one candidate (a name given by the user, or found by expansion)."""
        key = os.path.abspath(path)
        if key in self._abs:
            return  # the same name twice (a file given and also inside a folder given): once, silently
        try:
            lst = os.lstat(path)
        except FileNotFoundError:
            self._abs.add(key)
            self.bad(path, "no such file or folder", "check the path")
            return
        except OSError as exc:
            self._abs.add(key)
            self.bad(path, f"cannot be examined ({exc.strerror or exc})", "check the path and its permissions")
            return
        self._abs.add(key)
        st = lst
        if stat.S_ISLNK(lst.st_mode):
            try:
                st = os.stat(path)
            except OSError as exc:
                if exc.errno == errno.ELOOP:
                    self.bad(path, "is a symbolic link that loops (it leads back to itself)", "fix or remove the link")
                elif exc.errno in (errno.ENOENT, errno.ENOTDIR):
                    try:
                        target = display_path(os.readlink(path))
                    except OSError:
                        target = "?"
                    self.bad(path, f"is a dangling symbolic link (its target {target!r} does not exist)",
                             "fix or remove the link")
                else:
                    self.bad(path, f"cannot be followed ({exc.strerror or exc})", "check the link and its permissions")
                return
        kind = _kind_of(st.st_mode)
        if kind is not None:
            if explicit:
                self.bad(path, f"is {kind}, not a regular file: lumeval reads regular files only "
                         "(it does not wait on pipes or devices)", "give a regular file")
            else:
                self.skip(path, f"{kind}, not a regular file")
            return
        ident = (st.st_dev, st.st_ino)
        stream = self._streams.get(ident)
        if stream is not None:  # `lumeval lot week48 -f csv > week48/samples.csv`
            if explicit:
                self.bad(path, f"is this run's {stream}: the shell created or emptied it before lumeval started",
                         f"write the {stream} to a file that is not an input")
            else:
                self.skip(path, f"this run's {stream} (lumeval is writing into it)")
            return
        is_link = stat.S_ISLNK(lst.st_mode)
        first = self._by_id.get(ident)
        if first is not None:
            first_path, idx, first_is_link = first
            if first_is_link and not is_link:
                # keep the file's own name, list the link
                self.files[idx] = path
                self._by_id[ident] = (path, idx, False)
                self.skip(first_path, f"the same file as {display_path(path)} (read once)")
            else:
                self.skip(path, f"the same file as {display_path(first_path)} (read once)")
            return
        self._by_id[ident] = (path, len(self.files), is_link)
        self.files.append(path)


def _stream_files() -> dict[tuple[int, int], str]:
    """The regular files this process's standard output and error are redirected to, by
    (device, inode): a lot's report redirected into the folder it judges is not an input."""
    out: dict[tuple[int, int], str] = {}
    for fd, name in ((1, "standard output"), (2, "standard error")):
        try:
            st = os.fstat(fd)
        except OSError:
            continue
        if stat.S_ISREG(st.st_mode):
            out.setdefault((st.st_dev, st.st_ino), name)
    return out


def _folder_entries(folder: str) -> tuple[list[str], str | None]:
    """Sorted paths of the spectrum-named, non-hidden entries directly inside ``folder``."""
    try:
        with os.scandir(folder) as it:
            names = [e.name for e in it]
    except OSError as exc:
        return [], f"cannot be listed ({exc.strerror or exc})"
    keep = sorted(n for n in names if not n.startswith(".") and n.lower().endswith(SPECTRUM_SUFFIXES))
    return [os.path.join(folder, n) for n in keep], None


_MAGIC = re.compile(r"[*?[]")


def _dir_id(path: str) -> tuple[int, int] | None:
    try:
        st = os.stat(path)
    except OSError:
        return None
    if not stat.S_ISDIR(st.st_mode):
        return None
    return (st.st_dev, st.st_ino)


def _listdir(path: str) -> list[str]:
    try:
        with os.scandir(path or os.curdir) as it:
            return sorted(e.name for e in it)
    except OSError:
        return []


def glob_paths(pattern: str) -> Iterator[str]:
    """The paths matching ``pattern`` (``*``, ``?``, ``[...]`` within a name; ``**`` as a whole
    part for zero or more folders), in sorted order per folder.

    Unlike :func:`glob.glob` with ``recursive=True``, every real folder is entered at most once
    per position in the pattern (identified by device and inode), so links to ``..`` or to a
    sibling folder neither loop nor give the same file twice; the walk uses an explicit stack,
    so a very deep tree cannot exhaust the interpreter's recursion limit.
    """
    head, tail = os.path.split(pattern)
    parts: list[str] = []
    while tail:
        parts.append(tail)
        head, tail = os.path.split(head)
    parts.reverse()
    base = head  # "" (relative) or the root / drive
    # the literal prefix of the pattern becomes the base folder
    i = 0
    while i < len(parts) - 1 and not _MAGIC.search(parts[i]):
        base = os.path.join(base, parts[i]) if base else parts[i]
        i += 1
    parts = parts[i:]
    if not parts:
        return
    visited: set[tuple[tuple[int, int], int]] = set()
    # stack of (folder, index of the pattern part to match inside it); popped in LIFO order, so
    # children are pushed in reverse to come out sorted.
    stack: list[tuple[str, int]] = [(base, 0)]
    while stack:
        folder, k = stack.pop()
        part = parts[k]
        last = k == len(parts) - 1
        if part == "**":
            ident = _dir_id(folder or os.curdir)
            if ident is None or (ident, k) in visited:
                continue
            visited.add((ident, k))
            if last:
                # a trailing ** matches every file below the folder
                found = []
                for name in _listdir(folder):
                    if name.startswith("."):
                        continue
                    p = os.path.join(folder, name)
                    if _dir_id(p) is not None:
                        found.append((p, k))
                    else:
                        yield p
                stack.extend(reversed(found))
                continue
            subs = [os.path.join(folder, n) for n in _listdir(folder) if not n.startswith(".")]
            subs = [p for p in subs if _dir_id(p) is not None]
            # zero folders (match the next part here) first, then each sub-folder
            stack.extend(reversed([(folder, k + 1)] + [(p, k) for p in subs]))
            continue
        if _MAGIC.search(part):
            names = [n for n in _listdir(folder) if fnmatch.fnmatchcase(n, part) and (part.startswith(".") or not n.startswith("."))]
        else:
            names = [part] if os.path.lexists(os.path.join(folder, part)) else []
        if last:
            for n in names:
                yield os.path.join(folder, n)
        else:
            nxt = [os.path.join(folder, n) for n in names]
            stack.extend(reversed([(p, k + 1) for p in nxt if _dir_id(p) is not None]))


def expand_inputs(paths: Sequence[str | os.PathLike]) -> LotInputs:
    """Expand files, folders and glob patterns (see the module docstring).

    Parameters
    ----------
    paths : sequence of str or PathLike
        As given on the command line.

    Returns
    -------
    LotInputs
    """
    c = _Collector()
    for raw in paths:
        p = os.fspath(raw)
        if isinstance(p, bytes):
            p = os.fsdecode(p)
        if os.path.isdir(p):
            entries, problem = _folder_entries(p)
            if problem is not None:
                c.bad(p, problem, "check the folder's permissions")
                continue
            n_before = len(c.files) + len(c.unreadable) + len(c.skipped)
            for e in entries:
                c.take(e, explicit=False)
            if not entries:
                c.bad(p, f"the folder holds no spectrum files ({', '.join(SPECTRUM_SUFFIXES)})",
                      "give the files or a pattern")
            elif len(c.files) + len(c.unreadable) + len(c.skipped) == n_before:
                pass  # every entry was already taken by an earlier input
        elif os.path.lexists(p) or not (_GLOB_CHARS & set(p)):
            c.take(p, explicit=True)
            c.given.add(os.path.abspath(p))
        else:
            hits = sorted(glob_paths(p))
            if not hits:
                c.bad(p, "the pattern matches no files", "check the pattern and the folder")
            for h in hits:
                try:
                    is_dir = stat.S_ISDIR(os.stat(h).st_mode)
                except OSError:
                    is_dir = False
                if is_dir:
                    key = os.path.abspath(h)
                    if key in c._abs:
                        continue
                    c._abs.add(key)
                    # a folder matched by the pattern is not a sample; one named like a spectrum
                    # file is listed so that nobody wonders where it went
                    if os.path.basename(h).lower().endswith(SPECTRUM_SUFFIXES):
                        c.skip(h, "a folder, not a file (patterns do not enter the folders they match)")
                    continue
                c.take(h, explicit=False)
    return LotInputs(tuple(c.files), tuple(c.unreadable), tuple(c.skipped),
                     tuple(f for f in c.files if os.path.abspath(f) in c.given))
