"""One exception family for everything lumeval reports to its user.

Every message follows one pattern, ``WHERE: what is wrong — what would fix it``, where
WHERE is ``FILE``, ``FILE:LINE`` (``FILE:LINE:COLUMN`` where the column is known) or
``FILE: field NAME``. The CLI maps every
:class:`LumevalError` to exit code 2 and prints the message alone (``--debug`` adds the
traceback).
"""

from __future__ import annotations

import math
from collections.abc import Callable


class LumevalError(Exception):
    """Base class of every error lumeval reports to its user."""

    def __init__(
        self,
        problem: str,
        *,
        file: str | None = None,
        line: int | None = None,
        field: str | None = None,
        fix: str | None = None,
        column: int | None = None,
    ) -> None:
        self.problem = problem
        self.file = file
        self.line = line
        self.column = column
        self.field = field
        self.fix = fix
        super().__init__(self.message)

    @property
    def where(self) -> str:
        parts = []
        if self.file is not None:
            at = f":{self.line}" if self.line is not None else ""
            if at and self.column is not None:
                at += f":{self.column}"
            parts.append(str(self.file) + at)
        elif self.line is not None:
            parts.append(f"line {self.line}")
        if self.field is not None:  # a column or key name from the file: quoted in ~80 characters
            parts.append(f"field {quote(self.field) if isinstance(self.field, str) else repr(self.field)}")
        return " ".join(parts)

    @property
    def message(self) -> str:
        text = self.problem
        if self.fix:
            text += f" \u2014 {self.fix}"
        return f"{self.where}: {text}" if self.where else text


class InputError(LumevalError):
    """A spectrum file (or other data input) that cannot be read or used."""


class CriteriaError(LumevalError):
    """A criteria, claims or instrument file that is malformed or contradictory."""


class ComputationError(LumevalError):
    """A figure that cannot be computed honestly from valid input."""


class GridError(InputError, ComputationError, ValueError):
    """Wavelengths that are not the grid a metric needs (shape, spacing, integer wavelengths,
    range): the one class every metric's grid check raises (CIE 13.3, CIE 224 / TM-30,
    photometry, tristimulus summation). The cure is always the same: prepare the spectra
    (:func:`lumeval.prepare_groups`) first.

    It is an :class:`InputError`. The extra bases :class:`ComputationError` (what photometry
    raised for this check) and :class:`ValueError` (what the tristimulus summation raised) are
    kept only so that code written against earlier versions keeps catching it; they are
    deprecated and will be dropped: catch ``GridError`` or ``InputError``.
    """


class UsageError(LumevalError):
    """Bad command-line usage that the argument parser itself does not catch."""


class OutputError(LumevalError):
    """An output that cannot be written (disk full, permissions, a closed pipe...)."""


class WorkerError(LumevalError):
    """A worker process on this machine ended before finishing its work (killed by a signal,
    by the system when memory ran out...), or could not be started: the run stops instead of
    waiting for it forever."""


#: Longest piece of a user's data quoted in a message (an offending cell, name or value).
QUOTE_MAX = 80


def quote(value, limit: int = QUOTE_MAX) -> str:
    """``value`` quoted for a one-line message: control characters escaped (as Python's repr
    does), at most about ``limit`` characters, an ellipsis when cut. Messages quote data through
    this so that a 10 MB cell or an escape sequence never reaches the user's terminal whole."""
    text = str(value)
    cut = len(text) > limit
    if cut:
        text = text[:limit]
    r = repr(text)
    return r[:-1] + "…" + r[-1] if cut else r


def shown(value, limit: int = QUOTE_MAX) -> str:
    """A value read from a user's file (a TOML number, string, array...) as a one-line message
    shows it: as ``repr`` writes it when that is at most ``limit`` characters; a longer integer as
    its first digits, an ellipsis and its digit count; a longer string through :func:`quote`; an
    array item by item by the same rule; anything else cut to ``limit`` characters with an
    ellipsis."""
    if isinstance(value, str):
        return quote(value, limit)
    if isinstance(value, list):  # each item shown by this rule: a huge integer in an array as well
        text = "[" + ", ".join(shown(v, limit) for v in value[:limit // 2]) + (", …]" if len(value) > limit // 2 else "]")
    else:
        text = repr(value)
    if len(text) <= limit:
        return text
    if isinstance(value, int) and not isinstance(value, bool):
        digits = len(text.lstrip("-"))
        return f"{text[:limit // 4]}… ({digits} digits)"
    return text[:limit] + "…"


#: The fix every message refusing a number outside float's range gives: lumeval's rule, with
#: 1e308 a round figure below the largest finite IEEE 754 binary64 value, about 1.7977e308.
FINITE_FIX = "write a plain number within ±1e308"


def finite_float(value: int | float, fail: Callable[[str], Exception]) -> float:
    """A number read from a TOML file (an int or a float; the caller has checked the type) as a
    finite float, or the caller's own error.

    TOML integers have no size limit in Python's reader (up to its 4300-digit limit on parsing
    integers), and ``float(n)`` raises OverflowError for ``|n|`` beyond float's range (about
    1.8e308); ``inf`` and ``nan`` are TOML floats. All of them are refused the same way:
    ``fail(text)`` builds the exception to raise, ``text`` being the value as a message shows it
    (:func:`shown`: a 310-digit integer is never quoted whole). Every reader of numbers from
    criteria, claims, instrument and manifest files goes through this one conversion."""
    try:
        v = float(value)
    except OverflowError:
        v = math.inf
    if not math.isfinite(v):
        raise fail(shown(value))
    return v


def plain_number(text: str, fail: Callable[[str], Exception]) -> float:
    """A number typed by the user (a command-line option's value) by the rule of lumeval's file
    readers, or the caller's own error: the digits 0-9 with an optional sign, decimal point and
    exponent, white space around it ignored (the number grammar of
    :mod:`lumeval.spectra.text_dialect`).

    Python's ``float()`` and ``int()`` also read digits of other scripts (Arabic-Indic ``'١٢٣'``,
    full-width ``'１２３'``) and underscores (``'1_000'``), which no file reader accepts; the
    command line follows the files' rule. ``fail(text)`` builds the exception to raise, ``text``
    being the value as a message quotes it (:func:`quote`). The result may be infinite
    (``1e999``): callers check the range they need."""
    from .spectra.text_dialect import _NUMBER

    t = str(text).strip()
    if not _NUMBER.match(t):
        raise fail(quote(text))
    return float(t)
