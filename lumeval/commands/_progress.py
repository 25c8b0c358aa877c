"""Progress bars on stderr for the long stages of a command (reading, evaluating, Monte Carlo,
writing the report): one row per stage with its count, the elapsed time and the time left.

The API reports progress through a plain listener (:mod:`lumeval.progress`); this module is
the command line's listener, drawn with rich. It shows nothing when stderr is not a terminal,
with ``--quiet`` (the command's or ``lumeval --quiet``), or with ``LUMEVAL_PROGRESS=never``; the
rows appear only for work still under way after :data:`DELAY_S` (a quick inspect draws nothing).
``LUMEVAL_PROGRESS=always`` draws the bars even when stderr is not a terminal and from the first
unit on (for logs and tests). The bars are removed when the command ends, so the report that
follows starts on a clean screen.
"""

from __future__ import annotations

import contextlib
import os
import sys
import time
from collections.abc import Iterator
from typing import Any

from ..progress import STAGES, Listener

#: A stage's row appears once the command has run this long (seconds).
DELAY_S = 0.4
#: Redraw at most this often between stage changes (seconds); each stage's last count is drawn.
_REFRESH_S = 0.1


def _mode() -> str:
    v = os.environ.get("LUMEVAL_PROGRESS", "auto").strip().lower()
    if v in ("always", "1", "yes", "on"):
        return "always"
    if v in ("never", "0", "no", "off"):
        return "never"
    return "auto"


def wanted(quiet: bool = False) -> bool:
    """Whether to draw progress: not quiet, and stderr a terminal (or ``LUMEVAL_PROGRESS=always``)."""
    from ._announce import is_quiet

    mode = _mode()
    if quiet or is_quiet() or mode == "never":
        return False
    if mode == "always":
        return True
    try:
        return sys.stderr.isatty()
    except (AttributeError, ValueError):
        return False


class TerminalProgress:
    """A :mod:`lumeval.progress` listener drawing one rich progress row per stage on stderr."""

    def __init__(self, *, force: bool = False) -> None:
        self._force = force
        self._start = time.monotonic()
        self._bars: Any = None
        self._tasks: dict[str, Any] = {}
        self._seen: dict[str, tuple[int, int | None]] = {}
        self._last_draw = 0.0

    def _open(self) -> None:
        from rich.console import Console
        from rich.progress import (
            BarColumn,
            MofNCompleteColumn,
            Progress,
            TextColumn,
            TimeElapsedColumn,
            TimeRemainingColumn,
        )

        console = Console(stderr=True, force_terminal=True if self._force else None)
        self._bars = Progress(
            TextColumn("{task.description:<15}"),
            BarColumn(bar_width=28),
            MofNCompleteColumn(),
            TextColumn("{task.fields[unit]:<8}"),
            TimeElapsedColumn(),
            TextColumn("elapsed,"),
            TimeRemainingColumn(),
            TextColumn("left"),
            console=console,
            transient=True,
            auto_refresh=False,
        )
        self._bars.start()

    def __call__(self, stage: str, done: int, total: int | None) -> None:
        self._seen[stage] = (done, total)
        if self._bars is None:
            # opened only for work still under way after DELAY_S: a quick run (one file inspected)
            # draws nothing, not even a finished row
            finished = total is not None and done >= total
            if not self._force and (finished or time.monotonic() - self._start < DELAY_S):
                return
            self._open()
        new = stage not in self._tasks
        for name, (k, n) in self._seen.items():  # stages already under way before the bars opened
            if name not in self._tasks:
                self._tasks[name] = self._bars.add_task(name, total=n, completed=k, unit=STAGES.get(name, ""))
        self._bars.update(self._tasks[stage], completed=done, total=total)
        now = time.monotonic()
        if new or (total is not None and done >= total) or now - self._last_draw >= _REFRESH_S:
            self._bars.refresh()
            self._last_draw = now

    def close(self) -> None:
        if self._bars is not None:
            with contextlib.suppress(OSError, ValueError):
                self._bars.stop()
            self._bars = None


@contextlib.contextmanager
def progress_listener(quiet: bool = False) -> Iterator[Listener | None]:
    """The listener to pass to the API (None when nothing is to be drawn); the bars are removed
    on leaving, also when the command fails."""
    if not wanted(quiet):
        yield None
        return
    bars = TerminalProgress(force=_mode() == "always")
    try:
        yield bars
    finally:
        bars.close()
