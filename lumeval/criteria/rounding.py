"""The rounding method: a figure clause that compares its value rounded (``round_to = N``).

ASTM E29 names two ways of judging a value against a specification limit (quoted from memory):
the *absolute method*, in which any deviation beyond the limit fails, and the *rounding
method*, in which the value is first rounded to the digits in which the limit is written and
the rounded value is compared; the specification is to say which method applies (E29 §1.3,
quoted from memory). lumeval uses the absolute method unless a ``figure`` clause gives
``round_to = N``: the value compared with the limits is then the measured value rounded to N
decimal places (N from :data:`ROUND_TO_MIN` to :data:`ROUND_TO_MAX`; a negative N rounds to
tens, hundreds …: ``round_to = -1`` judges a CCT to the nearest 10 K).

**The tie rule** is round half to even (ISO 80000-1 Annex B, rule A, and the usual rule of
ASTM E29; both quoted from memory): a value exactly halfway between two rounded values goes to
the one whose last digit is even (79.5 → 80, 80.5 → 80, 0.125 → 0.12 at two decimals).

**What is rounded** is the exact decimal value of the binary float the computation produced
(``decimal.Decimal(float)``), not its shortest text: 2.675 is stored as
2.67499999999999982236431605997495353221893310546875, which is below the tie, so it rounds to
2.67 (as Python's own ``round`` does); 0.125 is stored exactly and is a true tie (→ 0.12). A
computed figure is a float, and its exact value is the one the limits are compared with
everywhere else, so rounding that value is the honest choice; rounding ``repr(x)`` instead
would move values that lie a hair below a tie up to it.

**Speed** (:func:`round_half_even`): every value is scaled by 10^N in binary arithmetic and
rounded to the nearest integer with numpy. The scaling errs by at most half a unit in the last
place, so the result is exact wherever the scaled value lies more than four units in the last
place away from a half-integer; the few values nearer a tie (and values too large for that
argument, beyond 2^50 after scaling) are rounded with :mod:`decimal`, once per distinct value.
Measured once for orientation (no test times it): 10^6 CCTs rounded to the nearest 10 K (or to
0, 2, 6 decimals) in about 0.02 s; the worst case, 10^6 distinct exact ties all handed to
:mod:`decimal`, about 2 s; 10^6 ties among 1000 distinct values, about 0.1 s.

The rounded value is a float again: the nearest float to the decimal result (which is what the
same decimal written as a limit in the criteria file becomes), so ``round_to = 2`` and
``max = 0.12`` compare 0.12 with 0.12 exactly.
"""

from __future__ import annotations

import decimal
from decimal import ROUND_CEILING, ROUND_FLOOR, ROUND_HALF_EVEN, Decimal

import numpy as np

from .. import figures
from ..errors import CriteriaError, quote, shown

ROUND_TO_MIN, ROUND_TO_MAX = -4, 6
#: The key's documentation (the figure kind's ``KEYS``; docs/criteria.md).
ALLOWED = f"integer {ROUND_TO_MIN} … {ROUND_TO_MAX}"
MEANING = ("compare the value rounded to this many decimal places, ties to even (the rounding method of ASTM E29); "
           "negative rounds to tens, hundreds …: -1 judges a CCT to the nearest 10 K. Without it the unrounded "
           "value is compared (the absolute method)")
#: The key of the value compared with the limits in a clause result's ``details``.
COMPARED = "compared"

_CONTEXT = decimal.Context(prec=1200, rounding=ROUND_HALF_EVEN, Emax=decimal.MAX_EMAX, Emin=decimal.MIN_EMIN)
_LARGE = 2.0 ** 50  # beyond this the fast path's argument is not made: decimal rounds those values


def parse(table: dict) -> int | None:
    """``round_to`` of a figure clause's table (None when absent); :class:`ParseError` when it is
    not an integer from :data:`ROUND_TO_MIN` to :data:`ROUND_TO_MAX` (true, 0.0, "1" refused)."""
    from .model import ParseError

    if "round_to" not in table:
        return None
    v = table["round_to"]
    fix = (f"write the number of decimal places as a whole number from {ROUND_TO_MIN} to {ROUND_TO_MAX} without "
           "quotes, e.g. round_to = 0 (whole numbers) or round_to = -1 (tens)")
    if type(v) is not int:  # bool is an int subclass: refused here too
        what = {bool: "true or false", float: "a number with a decimal point", str: "text in quotes", list: "an array",
                dict: "a table"}.get(type(v), "not a number")
        got = str(v).lower() if isinstance(v, bool) else shown(v)
        raise ParseError("round_to", f"must be an integer number of decimal places, got {got} ({what})", fix)
    if not ROUND_TO_MIN <= v <= ROUND_TO_MAX:
        raise ParseError("round_to", f"{shown(v)} decimal places is outside {ROUND_TO_MIN} … {ROUND_TO_MAX}", fix)
    return v


def _quantum(places: int) -> Decimal:
    return Decimal(1).scaleb(-places)


def exact(value: float, places: int) -> float:
    """``value``'s exact decimal value rounded to ``places`` decimals, ties to even, as the
    nearest float (non-finite values unchanged)."""
    if not np.isfinite(value):
        return float(value)
    # (+ 0.0: a value rounded to zero from below is 0, not -0, in every output)
    return float(Decimal(float(value)).quantize(_quantum(places), rounding=ROUND_HALF_EVEN, context=_CONTEXT)) + 0.0


def round_half_even(values, places: int) -> np.ndarray:
    """Every value of ``values`` rounded to ``places`` decimals (negative: tens, hundreds …),
    ties to even, as :func:`exact` rounds one value (see the module docstring for the fast path
    and when it hands over to :mod:`decimal`). NaN and infinities are kept."""
    x = np.asarray(values, dtype=float)
    scale = 10.0 ** abs(places)  # exact for |places| <= 22
    with np.errstate(invalid="ignore", over="ignore"):
        y = x * scale if places >= 0 else x / scale
        k = np.rint(y)
        to_half = np.abs(y - np.floor(y) - 0.5)  # exact: y and floor(y) share their last place
        finite = np.isfinite(y)
        near = finite & ((to_half <= 4.0 * np.spacing(np.abs(y))) | (np.abs(y) >= _LARGE))
        out = np.where(finite, k / scale if places >= 0 else k * scale, x)
    idx = np.flatnonzero(near | (np.isfinite(x) & ~finite))
    if idx.size:
        distinct, back = np.unique(x[idx], return_inverse=True)
        out[idx] = np.array([exact(v, places) for v in distinct.tolist()], dtype=float)[back.ravel()]
    out += 0.0  # -0.0 (a small negative value rounded to zero) as 0.0, as a person writes it
    return out


def places_words(places: int, unit: str = "") -> str:
    """``0 decimal places``, ``1 decimal place``, ``the nearest 10 K``."""
    if places >= 0:
        return f"{places} decimal place{'' if places == 1 else 's'}"
    sp = "" if unit in ("", "%") else " "
    return f"the nearest {10 ** -places}{sp}{unit}"


def marked(text: str, places: int | None, unit: str = "") -> str:
    """A limit text or label with the marker of the rounding method (``text`` itself without)."""
    return text if places is None else f"{text} (value rounded to {places_words(places, unit)})"


def tender_words(places: int | None, unit: str = "") -> str:
    """What a tender adds to a requirement judged by the rounding method ("" without)."""
    if places is None:
        return ""
    return f", the value being rounded to {places_words(places, unit)} (ties to even) before comparison"


def _figure_clauses(clauses, scopes=("sample", "range"), rounded: bool = True):
    """(clause, its figure clause) for every figure clause (one judged over settings wraps its
    figure clause in ``inner``) whose scope is among ``scopes``; only those with ``round_to``
    when ``rounded``."""
    for c in clauses:
        inner = getattr(c, "inner", c)
        if (getattr(inner, "KIND", "") == "figure" and (not rounded or getattr(inner, "round_to", None) is not None)
                and getattr(c, "SCOPE", "sample") in scopes):
            yield c, inner


def _acts_as(limit: float, places: int, towards: str) -> Decimal:
    """The limit as the file writes it (its shortest decimal), rounded ``towards`` (ROUND_CEILING
    for a lower limit, ROUND_FLOOR for an upper one) to ``places``: the limit a rounded value
    actually meets."""
    return Decimal(repr(float(limit))).quantize(_quantum(places), rounding=towards, context=_CONTEXT)


def _written(limit: float) -> str:
    """A limit as the criteria file writes it (:func:`lumeval.criteria.model.limit_number`)."""
    from .model import limit_number  # (model imports this module)

    return limit_number(limit)


def limit_warnings(clauses, file: str) -> tuple[str, ...]:
    """A warning per limit written with more decimals than its clause's ``round_to`` keeps: a
    rounded value never equals it (``min = 79.5`` with ``round_to = 0`` acts as ``min = 80``)."""
    out = []
    for _c, f in _figure_clauses(clauses):
        for side, v, towards in (("lower", f.lower, ROUND_CEILING), ("upper", f.upper, ROUND_FLOOR)):
            if v is None:
                continue
            acts = _acts_as(v, f.round_to, towards)
            if acts == Decimal(repr(float(v))):  # written at the rounding's resolution
                continue
            where = f"{file}:{f.line}: " if f.line else f"{file}: "
            out.append(f"{where}clause {quote(f.clause_id)}: the {side} limit {_written(v)} is written more finely than "
                       f"round_to = {f.round_to} rounds (to {places_words(f.round_to, figures.unit(f.figure))}): a "
                       f"rounded value never equals it, so the limit acts as {format(acts, 'f')} — write the limit at the "
                       "rounding's resolution, or change round_to")
    return tuple(out)


def refuse_under_uncertainty(criteria, why: str, lines: dict | None = None) -> None:
    """Refuse (:class:`CriteriaError`, exit code 2) the clauses a check decided under measurement
    uncertainty (``why`` says what asks for it) cannot judge:

    - a per-sample figure clause with ``round_to``: guard bands and probabilities of conformance
      are about the unrounded value, and lumeval does not define how a rounded comparison and a
      guard band combine. ``lines``: clause id -> line of its ``round_to`` key (the loader knows
      it; otherwise the clause's line is named);
    - a clause on the ANSI category (``ansi_category_K``): the category is a label, whose
      uncertainty is not a spread in kelvin; whether a chromaticity is in a quadrangle, and how
      sure, is the ``ansi_quadrangle`` clause's margin in Δu′v′ (a guard band on the nearest
      category passed light in no category, and failed light a hair outside one that half the
      draws put inside; found by reviews)."""
    from .figure_notes import judges_category

    for _c, inner in _figure_clauses(getattr(criteria, "clauses", ()), rounded=False):
        if judges_category(getattr(inner, "figure", None)):
            raise CriteriaError(
                f"clause {quote(inner.clause_id)} judges the ANSI category, a label, and {why} decides under "
                "measurement uncertainty, which needs a quantity with a spread",
                file=getattr(criteria, "file", "<criteria>"), line=inner.line,
                fix='judge the quadrangle instead (kind = "ansi_quadrangle", nominal_cct = ...: its margin in '
                    "Δu′v′ takes the guard band), or judge without an instrument model and a guarded decision rule")
    for _c, f in _figure_clauses(getattr(criteria, "clauses", ()), scopes=("sample",)):
        raise CriteriaError(
            f"clause {quote(f.clause_id)} compares its value rounded (round_to = {f.round_to}), and {why} decides "
            "under measurement uncertainty, whose guard band and probability of conformance are about the unrounded "
            "value: lumeval does not combine the two",
            file=getattr(criteria, "file", "<criteria>"), line=(lines or {}).get(f.clause_id) or f.line, field="round_to",
            fix="remove round_to (the absolute method), or judge without an instrument model and a guarded decision rule")


def decision_rule(places: int | None, unit: str = "") -> str | None:
    """The decision rule a clause judged by the rounding method states in every output (its
    ``decision_rule``; None without ``round_to``: the default simple acceptance)."""
    if places is None:
        return None
    return (f"simple acceptance of the rounded value (the measured value rounded to {places_words(places, unit)}, "
            "ties to even, decides: the rounding method of ASTM E29; no guard band)")


def refuse_empty(clauses, file: str) -> None:
    """Refuse (:class:`CriteriaError`, exit code 2) a figure clause whose limits no rounded value
    can meet: both limits at once, once each acts at the rounding's resolution (``range =
    [3011, 3015]`` with ``round_to = -1`` admits 3020 and up and 3010 and down: nothing). A
    review found it only warned about, as each limit separately."""
    for _c, f in _figure_clauses(clauses):
        if f.lower is None or f.upper is None:
            continue
        if _acts_as(f.lower, f.round_to, ROUND_CEILING) > _acts_as(f.upper, f.round_to, ROUND_FLOOR):
            unit = figures.unit(f.figure)
            raise CriteriaError(
                f"clause {quote(f.clause_id)}: no value rounded to {places_words(f.round_to, unit)} lies between "
                f"{_written(f.lower)} and {_written(f.upper)}, so the "
                "clause can never pass", file=file, line=f.line, field="round_to",
                fix="widen the range to include a rounded value, or round to more decimal places")


def admitted(f, side: str) -> float:
    """The farthest unrounded value that figure clause ``f`` admits on ``side`` ("lower" or
    "upper"): its limit, or with ``round_to`` the limit as it acts (:func:`_acts_as`) widened by
    half a rounding step (79.5 is the lowest value ``min = 80, round_to = 0`` admits; the tie
    itself rounds to even)."""
    limit = f.lower if side == "lower" else f.upper
    if getattr(f, "round_to", None) is None:
        return float(limit)
    acts = _acts_as(limit, f.round_to, ROUND_CEILING if side == "lower" else ROUND_FLOOR)
    half = _quantum(f.round_to) / 2
    return float(acts - half if side == "lower" else acts + half)


def meets(f, side: str, x: float) -> bool:
    """Whether the value ``x`` meets figure clause ``f``'s limit on ``side`` ("lower" or
    "upper"), rounded first when the clause gives ``round_to`` (ties to even)."""
    v = exact(x, f.round_to) if getattr(f, "round_to", None) is not None else x
    return bool(v >= f.lower) if side == "lower" else bool(v <= f.upper)


def disjoint(lo_clause, hi_clause) -> bool:
    """Whether no value meets both ``lo_clause``'s lower limit and ``hi_clause``'s upper limit,
    each as the clause compares (:func:`admitted`; where the two admitted values coincide, the
    value there and its float neighbours decide)."""
    lo, hi = admitted(lo_clause, "lower"), admitted(hi_clause, "upper")
    if lo != hi:
        return lo > hi
    return not any(meets(lo_clause, "lower", x) and meets(hi_clause, "upper", x)
                   for x in (np.nextafter(lo, -np.inf), lo, np.nextafter(lo, np.inf)))


def any_rounded(clauses) -> bool:
    """Whether any figure clause of ``clauses`` (one judged over settings included) gives ``round_to``."""
    return next(_figure_clauses(clauses, scopes=("sample", "range", "lot")), None) is not None
