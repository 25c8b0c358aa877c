"""Renamed public functions keep working for a while under their old names, with a warning."""

from __future__ import annotations

import functools
import warnings
from collections.abc import Callable
from typing import Any, TypeVar

F = TypeVar("F", bound=Callable[..., Any])


def renamed(func: F, old: str, new: str) -> F:
    """``func`` under its former name ``old``: calling it warns (DeprecationWarning) that ``new``
    is the name to use, then does exactly what ``func`` does."""

    @functools.wraps(func)
    def alias(*args: Any, **kwargs: Any) -> Any:
        warnings.warn(f"{old} is deprecated; use {new} (same arguments)", DeprecationWarning, stacklevel=2)
        return func(*args, **kwargs)

    alias.__doc__ = f"Deprecated: use :func:`{new}` (same arguments).\n\n" + (func.__doc__ or "")
    alias.__name__ = old.rsplit(".", 1)[-1]
    return alias  # type: ignore[return-value]
