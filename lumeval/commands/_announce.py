"""Say on stderr what a command wrote ("lumeval: report written to r.html"), unless --quiet.

Every file a command writes is announced, so that a run with ``--html`` or ``-o`` does not
write silently; ``--quiet`` (on the command, or ``lumeval --quiet`` before it) keeps stderr for
warnings and errors only. Paths are untrusted text (a file name may hold a terminal control):
they go through :func:`lumeval.render.safe.clean`.
"""

from __future__ import annotations

import sys
from pathlib import Path

_state = {"quiet": False}


def set_quiet(quiet: bool) -> None:
    """Set by the root ``--quiet`` option or a command's own ``--quiet``."""
    if quiet:
        _state["quiet"] = True


def reset_quiet(quiet: bool) -> None:
    """Start a run: quiet only when ``lumeval --quiet`` was given."""
    _state["quiet"] = bool(quiet)


def is_quiet() -> bool:
    return _state["quiet"]


def announce(what: str, path) -> None:
    """One line ``lumeval: <what> written to <path>`` on stderr (nothing when quiet)."""
    if _state["quiet"] or path is None:
        return
    from ..render.safe import clean

    try:
        print(f"lumeval: {what} written to {clean(str(path))}", file=sys.stderr, flush=True)
    except (OSError, ValueError):
        pass


def announce_outputs(paths, html=None, plots=None) -> None:
    """Announce what :func:`lumeval.render.html.write_outputs` wrote: the HTML report and the
    number of figure files in the ``--plots`` folder."""
    paths = [Path(p) for p in paths or ()]
    if plots is not None:
        k = sum(1 for p in paths if html is None or p != Path(html))
        announce(f"{k} figure file{'s' if k != 1 else ''}", plots)
    if html is not None:
        announce("HTML report", html)
