"""Check a command's output targets before any work, so that a bad target writes nothing.

The validator lives in :mod:`lumeval._io` (with the one atomic writer), so that the Python API
and the renderers use the same rules; this module keeps the name the commands import.
"""

from __future__ import annotations

from .._io import check_targets, is_stdout

__all__ = ["check_targets", "is_stdout"]
