"""Measured series: spectra of one product at several settings (pure computation).

A *setting* is a number per spectrum — a CCT setpoint of a tunable luminaire (K), a dimming
level (%), a drive current (mA) — taken from a number in the spectrum's name, from a metadata
field, or from a manifest (the parsing of names and metadata values is here; reading a
manifest file is in :mod:`lumeval.tunable.api`). The series is sorted by setting; its
chromaticity trajectory is the u′v′ of each setting, and each setting's shift is
Δu′v′ = √(Δu′² + Δv′²) (CIE 1976 UCS, CIE 15:2004 §8.1) from a reference: the highest setting
(full output), the lowest, a named setting, or each setting's own Planckian point when the
settings are nominal CCTs (Planck's law, c2 = 1.4388e-2 m K, CIE 15:2004).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import numpy as np

from .._paths import display_path, source_file
from ..errors import InputError, quote

#: Units recognised after a number in a name or a metadata value (case-sensitive for K/A so
#: that "3000k" still reads as kelvin: names are matched case-insensitively below).
UNIT_WORDS: dict[str, str] = {"k": "K", "%": "%", "pct": "%", "percent": "%", "ma": "mA", "a": "A"}

#: A number (the digits 0-9, a dot for decimals) and the unit written after it. A comma between
#: digits is kept in the number's text so that it can be refused, never read: "1,050" is 1050
#: with a thousands separator and 1.05 with a decimal comma (found by a review: drv_1,050mA.csv
#: was read as 1.05 mA, which moved the full-output reference to another spectrum).
_NUMBER = re.compile(r"(?<![0-9.])(?<![0-9],)([0-9]+(?:[.,][0-9]+)?)\s?(k|%|pct|percent|ma|a)?(?![a-z])", re.IGNORECASE)

#: A minus sign written before a metadata value's number ("-1 %"), at its start or after a space.
_SIGN = re.compile(r"(?:^|\s)[-\u2212]\s*$")


def _written_numbers(text: str) -> list[tuple[str, str, int]]:
    """Every number in ``text`` as written, with its unit ("" when none) and where it starts."""
    return [(m.group(1), UNIT_WORDS.get((m.group(2) or "").lower(), ""), m.start(1)) for m in _NUMBER.finditer(str(text))]


def numbers_in(text: str) -> list[tuple[float, str]]:
    """Every number in ``text`` with the unit written after it ("" when none): e.g.
    ``"dl_ch2_3000K"`` -> ``[(2.0, ""), (3000.0, "K")]``. A number written with a comma between
    its digits is left out (:func:`setting_from_text` refuses it as a setting)."""
    return [(float(w), u) for w, u, _ in _written_numbers(text) if "," not in w]


def setting_from_text(text: str, *, what: str, file: str | None, fix: str, signed: bool = False) -> tuple[float, str]:
    """The setting written in ``text``: the one number followed by a unit (K, %, pct, mA, A),
    else the only number. Anything else is an :class:`InputError` saying what was found, and so
    is a setting written with a comma between digits. With ``signed`` (a metadata value), a minus
    sign written before the number makes it negative (file names use "-" as a separator)."""
    nums = _written_numbers(text)
    with_unit = [n for n in nums if n[1]]
    if len(with_unit) == 1:
        hit = with_unit[0]
    elif not with_unit and len(nums) == 1:
        hit = nums[0]
    elif not nums:
        raise InputError(f"no number in the {what} {display_path(text)!r} to take the setting from", file=file, fix=fix)
    else:
        found = ", ".join(f"{w}{u}" for w, u, _ in (with_unit or nums))
        raise InputError(f"the {what} {display_path(text)!r} holds several numbers ({found}): which is the setting is "
                         "ambiguous",
                         file=file, fix=fix)
    written, unit, start = hit
    if "," in written:
        raise InputError(comma_problem(f"the {what} {quote(text)} writes the setting", written + unit), file=file,
                         fix=comma_fix(written, unit))
    value = float(written)
    if signed and _SIGN.search(str(text)[:start]):
        value = -value
    return value, unit


def comma_problem(where: str, written: str) -> str:
    """Why a setting written with a comma between digits is refused (``written`` as in the file)."""
    return (f"{where} as {quote(written)}, with a comma between digits: a comma is read neither as a thousands "
            "separator nor as a decimal mark, since 1,050 is 1050 in one convention and 1.05 in another")


def comma_fix(written: str, unit: str = "") -> str:
    whole, frac = written.split(",", 1)
    return (f"write the setting with the digits 0-9 and a dot for decimals: {int(whole + frac)}{unit} or "
            f"{float(whole + '.' + frac):g}{unit}, whichever is meant")


@dataclass(frozen=True)
class SeriesResult:
    """A measured series, sorted by setting.

    Attributes
    ----------
    evaluation : Evaluation
        Every figure of every spectrum, in setting order.
    settings : ndarray (N,)
    unit : str
        The settings' unit ("K", "%", "mA", "A" or "").
    setting_source : str
        Where the settings came from (for reports).
    reference : str
        What Δu′v′ is measured from.
    reference_upvp : ndarray (N, 2)
        The reference point for each setting (CIE 1976 u′, v′).
    delta_upvp : ndarray (N,)
        Δu′v′ of each setting from its reference (NaN where undefined).
    notes : tuple of str
    """

    evaluation: Any
    settings: np.ndarray
    unit: str
    setting_source: str
    reference: str
    reference_upvp: np.ndarray
    delta_upvp: np.ndarray
    notes: tuple[str, ...] = ()

    def __len__(self) -> int:
        return int(self.settings.size)

    @property
    def names(self) -> tuple[str, ...]:
        return self.evaluation.names

    @property
    def labels(self) -> tuple[str, ...]:
        """Settings as text, e.g. ``"3000 K"``, ``"10 %"``."""
        return tuple(setting_label(s, self.unit) for s in self.settings)

    def figure(self, name: str) -> np.ndarray:
        return np.asarray(self.evaluation.figure(name), dtype=float)


def setting_label(value: float, unit: str) -> str:
    return f"{value:g} {unit}".strip() if unit != "%" else f"{value:g} %"


def setting_order(settings, sources) -> np.ndarray:
    """Indices that sort spectra by setting; two spectra with one setting are an
    :class:`InputError` naming both."""
    s = np.asarray(settings, dtype=float)
    order = np.argsort(s, kind="stable")
    ss = s[order]
    dup = np.flatnonzero(np.diff(ss) == 0)
    if dup.size:
        a, b = order[dup[0]], order[dup[0] + 1]
        raise InputError(f"two spectra have the same setting {ss[dup[0]]:g}: {sources[a]} and {sources[b]}",
                         file=source_file(sources[a]) or None, fix="give each spectrum of a series its own setting")
    return order


def series(evaluation, settings, *, unit: str = "", setting_source: str = "", reference="max",
           notes: tuple[str, ...] = ()) -> SeriesResult:
    """Order an evaluated series by setting and compute its shifts from ``reference``.

    Parameters
    ----------
    evaluation : Evaluation
        The spectra of the series, in increasing order of setting (sort the spectra before
        evaluating them: :func:`setting_order`).
    settings : array_like (N,)
        One setting per spectrum, increasing; duplicates are refused.
    reference : "max", "min", "locus" or a number
        See :func:`lumeval.criteria.range_clauses.reference_points`.
    """
    from ..criteria.range_clauses import reference_points

    s = np.asarray(settings, dtype=float)
    if s.size != len(evaluation):
        raise ValueError("one setting per spectrum")
    if np.any(np.diff(s) <= 0):
        raise ValueError("settings must be strictly increasing: order the spectra with setting_order() first")
    ev = evaluation
    if isinstance(reference, str) and reference not in ("max", "min", "locus"):
        from ..errors import plain_number

        try:
            reference = plain_number(reference, ValueError)
        except ValueError:
            from ..errors import UsageError

            raise UsageError(f"--reference {reference!r} is not max, min, locus or a setting",
                             fix="write --reference max (full output), min, locus or a setting value in the digits 0-9") from None
    ref, desc, why = reference_points(ev, s, reference)
    if why:
        from ..errors import UsageError

        raise UsageError(f"--reference: {why}", fix="choose max, min, locus (settings in K) or one of the settings")
    upvp = np.stack([np.asarray(ev.u_prime, float), np.asarray(ev.v_prime, float)], axis=-1)
    d = np.hypot(*(upvp - ref).T)
    return SeriesResult(ev, s, unit, setting_source, desc, ref, d, tuple(notes))
