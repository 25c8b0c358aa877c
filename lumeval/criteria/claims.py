"""Datasheet claims checked against the supplier's own SPD.

A claims file (TOML) lists what a supplier states, e.g. ``Ra = ">= 90"`` or ``cct_K = 3000``.
Each claim is judged for every spectrum given: **supported**, **contradicted** (with by how
much) or **not checkable** from spectral data (an undefined figure, or a property an SPD does
not determine such as luminous flux or lifetime).

How a claim is read (defaults are common practice, no source; the file's ``[tolerances]``
table overrides the tolerance per figure, in the figure's own units):

* ``">= v"`` / ``"> v"`` / ``"≥ v"`` / ``"v+"`` (minimum claims, e.g. "Ra ≥ 90", "CRI >90",
  "90+"): supported when measured ≥ v − t.
* ``"<= v"`` / ``"< v"``: supported when measured ≤ v + t. For Duv with v > 0 ("Duv < 0.003")
  the bound is on |Duv|: −v − t ≤ Duv ≤ v + t (either side of the locus).
  Default t for these: half a unit of the last digit written (a datasheet "90" stands for
  anything that rounds to 90; "0.85" for anything that rounds to 0.85), at most the figure's
  cap (:data:`_IMPLIED_MAX`: Duv 0.0005, S/P 0.05, indices 0.5, ...) — "Duv < 0" is not Duv ≤ 0.5.
* ``"v ± d"`` (explicit tolerance, also ``"3000K ± 100K"`` or ``"v +/- d"``): supported when
  |measured − v| ≤ d (no further tolerance).
* ``"lo-hi"`` / ``"lo to hi"`` / ``"lo … hi"`` (a range, e.g. "2700-3000 K", "2700 K – 6500 K",
  "90 to 95"): supported when lo − t ≤ measured ≤ hi + t, each t half a unit of the last digit
  written of its bound.
* Words before a value: "min. 90" / "minimum 90" / "at least 90" read as ">= 90"; "max. 0.003" /
  "maximum" / "at most" / "up to" as "<="; "~90" / "≈ 90" / "approx. 90" / "about 90" / "ca. 90"
  as the plain value 90. For Duv, "± 0.003" alone reads as "0 ± 0.003" (within 0.003 of the
  Planckian locus).
* a plain value ``v`` (a nominal claim, e.g. "CCT 3000 K"):
  - ``cct_K``: when v is a nominal category of ANSI C78.377-2017 Table 1, supported when the
    measured CCT lies within that category's target ± tolerance (e.g. 3000 → 2870-3220 K);
    for other values within 2200-7000 K, ± the flexible-CCT tolerance formula of
    :func:`lumeval.criteria.regions.ansi_flexible_tolerance_K` (memory, see there);
  - ``duv``: ± 0.006 (the ANSI C78.377 Duv tolerance);
  - every other figure: half a unit of the last digit written.

Each figure is claimed once (``Ra`` and ``"CRI Ra"`` together are refused); ``SDCM`` and
``"MacAdam steps"`` are spellings of ``sdcm_steps``, not checkable. A bare TOML float is read as
written on its line ("1.50", not 1.5).

A CCT claim outside 1000-25000 K (where lumeval reports CCT) is refused: "3.000 K" is a dot
written as a thousands separator, not 3 K.

By how much a claim is contradicted is ``measured − bound`` in the figure's units (negative
when the product falls short of a minimum claim).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from decimal import Decimal

import numpy as np

from .. import figures
from ..errors import FINITE_FIX, CriteriaError, finite_float, quote, shown
from . import regions
from .loader import locate_lines
from .model import figure_unit, fmt_number, is_number, suggest

SUPPORTED = "supported"
CONTRADICTED = "contradicted"
NOT_CHECKABLE = "not checkable"

FORMAT_KEY = "lumeval_claims"
FORMAT_VERSION = 1
TOP_LEVEL_KEYS = (FORMAT_KEY, "supplier", "claims", "tolerances")
SUPPLIER_KEYS = ("name", "product", "datasheet", "date", "notes")

#: Claims a supplier may state that an SPD cannot confirm or contradict, with the reason.
NOT_CHECKABLE_KEYS: dict[str, str] = {
    "luminous_flux_lm": "luminous flux needs an absolute photometric measurement, not a relative SPD",
    "efficacy_lm_per_W": "luminaire efficacy needs flux and electrical power, which an SPD does not give",
    "power_W": "electrical power is not in the spectrum",
    "lifetime_h": "lifetime (e.g. L70) needs a maintenance test, not a spectrum",
    "sdcm_steps": "colour consistency (SDCM) is a property of many samples of a product, not of one SPD",
    "flicker": "temporal light modulation is not in a time-averaged spectrum",
    "beam_angle_deg": "the beam angle is a photometric (intensity distribution) property",
    "ugr": "glare rating depends on the luminaire and the room, not on the spectrum",
}

#: A claim as written on a datasheet: an optional comparison, the value with an optional unit, an
#: optional ± tolerance with an optional unit, or a trailing "+" for a minimum ("90+"). Examples:
#: ">= 90", ">90", "≥ 90", "90+", "3000 K", "3000K ± 100K", "100 ± 3", "<= 0.003".
_CLAIM_RE = re.compile(
    r"""^\s*(?P<op>>=|≥|=>|>|<=|≤|=<|<|=)?\s*
        (?P<value>[-+]?[0-9]+(?:\.[0-9]*)?(?:[eE][-+]?[0-9]+)?)\s*
        (?P<unit1>K|%|lm/W|nm)?\s*
        (?:(?:±|\+/-|\+-)\s*(?P<tol>[0-9]+(?:\.[0-9]*)?(?:[eE][-+]?[0-9]+)?)\s*(?P<unit2>K|%|lm/W|nm)?)?\s*
        (?P<plus>\+)?\s*$""",
    re.VERBOSE,
)


_NUM = r"[-+]?[0-9]+(?:\.[0-9]*)?(?:[eE][-+]?[0-9]+)?"
_UNIT = r"K|%|lm/W|nm"
#: A range as datasheets write it: "2700-3000 K", "2700 K – 6500 K", "90 to 95", "0.80...0.90".
_RANGE_RE = re.compile(
    rf"""^\s*(?P<lo>{_NUM})\s*(?P<unit1>{_UNIT})?\s*
        (?:-|–|—|\bto\b|\.\.\.?|…)\s*
        (?P<hi>{_NUM})\s*(?P<unit2>{_UNIT})?\s*$""",
    re.VERBOSE,
)
#: The longest claim text read. Python's regular expressions backtrack: the patterns above, with
#: optional white space between optional parts, take polynomial time on long runs of white space,
#: so a claim is read with its white space runs made single spaces and only up to this length.
_CLAIM_MAX_CHARS = 200
#: Words datasheets put before a value, and the comparison each stands for ("" = a nominal value).
_WORDS = (
    (re.compile(r"^\s*(?:min\.?|minimum|at\s+least)\s*(?=[-+0-9])", re.IGNORECASE), ">= "),
    (re.compile(r"^\s*(?:max\.?|maximum|at\s+most|up\s+to)\s*(?=[-+0-9])", re.IGNORECASE), "<= "),
    (re.compile(r"^\s*(?:approx\.?|approximately|about|ca\.?|~|≈)\s*(?=[-+0-9])", re.IGNORECASE), ""),
)


def _with_words_read(text: str) -> str:
    """``text`` with a leading word replaced by the comparison it stands for: "min. 90" ->
    ">= 90", "max 0.003" -> "<= 0.003", "~90" / "approx. 90" -> "90" (a nominal value)."""
    for pattern, op in _WORDS:
        if pattern.match(text):
            return pattern.sub(op, text, count=1)
    return text


#: A comma between digits: "2,700" (a thousands separator) or "0,003" (a decimal comma).
_DIGIT_COMMA = re.compile(r"[0-9],[0-9]")


def _comma_hint(text: str) -> str:
    """Why a claim with a comma between digits was not read: its numbers take neither a
    thousands separator nor a decimal comma ("1,500" is 1500 in one datasheet, 1.5 in another)."""
    if len(text) <= _CLAIM_MAX_CHARS and _DIGIT_COMMA.search(text):
        return ": a comma between digits is read neither as a thousands separator nor as a decimal mark"
    return ""


#: A figure's name written before the value ("CRI 90+", "Rf ≥ 90", "CCT 3000 K").
_NAME_FIRST = re.compile(r"^\s*(?P<name>[A-Za-z][A-Za-z0-9 ,/'_-]*?)\s*(?P<rest>[<>≥≤=~≈±+-]*\s*[0-9].*)$")


def _unread_hint(text: str, key: str) -> tuple[str, str]:
    """(why, fix) for a claim not read, when the slip is a usual one: a Unicode minus sign, the
    SDCM steps written into a CCT claim, the figure's name repeated before the value; ("", "")
    otherwise. The claim's text reaches the message only through :func:`shown`."""
    if len(text) > _CLAIM_MAX_CHARS:
        return "", ""
    if "\u2212" in text:
        return (": it has a Unicode minus sign (U+2212)",
                f"write the minus as the ASCII hyphen-minus, e.g. {shown(text.replace(chr(0x2212), '-'))}")
    if re.search(r"sdcm|macadam|\bsteps?\b", text, re.IGNORECASE):
        return (": SDCM (MacAdam) steps are a claim of their own",
                f'write the CCT alone, e.g. {key} = "3000 K", and the steps as sdcm_steps = 3 '
                "(not checkable from one spectrum)")
    m = _NAME_FIRST.match(text)
    if m and figures.lookup(m.group("name").strip()) is not None:
        return (f": it repeats the figure's name {shown(m.group('name').strip())} before the value",
                f"write the value alone: {key} = {shown(m.group('rest').strip())}")
    return "", ""


def _cct_claimed(v: float, written: str, value, key: str, err) -> None:
    """Refuse a CCT claim outside the range where lumeval reports CCT (1000-25000 K): no product
    is meant by it. The likely slip is a dot written as a thousands separator ("3.000 K" for
    3000 K, read as 3 K and then contradicted): the message suggests that reading."""
    from ..metrics.colorimetry import CCT_MAX_K, CCT_MIN_K

    if CCT_MIN_K <= v <= CCT_MAX_K:
        return
    t = re.fullmatch(r"\+?([0-9]{1,3})\.([0-9]{3})", written)
    meant = float(t.group(1) + t.group(2)) if t else None
    fix = 'write the CCT in kelvin, e.g. "3000 K ± 150 K"'
    if meant is not None and CCT_MIN_K <= meant <= CCT_MAX_K:
        fix = f"did you mean {meant:.0f} K (the dot a thousands separator)? Write it without the dot: {meant:.0f}"
    raise err(("claims",), key, f"the claim {shown(value)} reads as a CCT of {fmt_number(v)} K, outside the "
              f"{CCT_MIN_K:.0f}-{CCT_MAX_K:.0f} K where lumeval reports CCT, so it cannot be meant", fix)


def _half_unit(text: str) -> float:
    """Half a unit of the last digit written: "90" -> 0.5, "0.85" -> 0.005, "3000" -> 0.5."""
    d = Decimal(text.lstrip("+-"))
    exp = d.as_tuple().exponent
    return 0.5 * 10.0 ** (exp if isinstance(exp, int) else 0)


#: The most a claim's written precision may imply, per figure (its own scale): a number written
#: more coarsely says nothing about the finer digits, it does not widen the claim. Without a cap
#: "Duv < 0" read as Duv ≤ 0.5 and "S/P >= 1" as S/P ≥ 0.5 (found by a review). The caps are
#: the coarsest resolution at which each figure is stated on datasheets (common practice, no
#: source): Duv and distances in u'v' / uv (ANSI distance, CIE 13.3 DC) to three decimals
#: ("Duv < 0.003"; ANSI C78.377's Duv tolerance 0.006 is twelve such half-units); chromaticity
#: coordinates and TM-30 Rhs,h to two decimals; S/P and melanopic DER to one decimal ("S/P 1.5"
#: is a usual claim and stands for 1.45-1.55; a cap of 0.005 would narrow it tenfold); every
#: other figure (indices, %, K, nm, lm/W, lx, cd/m²) to whole units. A claim finer than its cap
#: keeps its own precision ("Duv <= 0.0030": ± 0.00005).
_IMPLIED_MAX: dict[str, float] = {
    **dict.fromkeys(("duv", "ansi_distance_upvp", "dc"), 0.0005),
    **dict.fromkeys(("x", "y", "u", "v", "u_prime", "v_prime"), 0.005),
    **dict.fromkeys(("sp_ratio", "melanopic_der"), 0.05),
}
_IMPLIED_MAX_FAMILY = {"Rhs_h": 0.005}
_IMPLIED_MAX_DEFAULT = 0.5


def implied_max(fig: str) -> float:
    """The largest tolerance the written precision of a claim on ``fig`` may imply."""
    fam = figures.family(fig)
    return _IMPLIED_MAX.get(fig, _IMPLIED_MAX_FAMILY.get(fam or "", _IMPLIED_MAX_DEFAULT))


def _implied(fig: str, written: str) -> tuple[float, str]:
    """(tolerance, how it was found) implied by the written precision of ``written`` for ``fig``:
    half a unit of the last digit written, at most :func:`implied_max`. An exponent form is read
    at the resolution of its last digit ("1e2" has one significant digit: a resolution of 100,
    which the cap then replaces; "1.00e2" has a resolution of 1)."""
    half, cap = _half_unit(written), implied_max(fig)
    if half <= cap:
        return half, fmt_number(half)
    return cap, f"{fmt_number(cap)} (the most a written precision implies for {fig}; {written} alone would give {fmt_number(half)})"


#: A TOML float as written at the end of a ``key = value`` line (a comment may follow).
_FLOAT_LINE = re.compile(r"=\s*(?P<lit>[-+]?[0-9_]+(?:\.[0-9_]+)?(?:[eE][-+]?[0-9_]+)?)\s*(?:#.*)?$")


def _toml_literal(lines: list[str], line: int | None, value: float) -> str | None:
    """A TOML float claim as written on its line ("1.50", which TOML gives as the number 1.5,
    its trailing zero lost), or None when the line does not show it plainly (e.g. an inline
    table): the claim is then read from the number."""
    if line is None or not 1 <= line <= len(lines):
        return None
    m = _FLOAT_LINE.search(lines[line - 1])
    if m is None:
        return None
    lit = m.group("lit").replace("_", "")
    try:
        return lit if float(lit) == value else None
    except ValueError:
        return None


@dataclass(frozen=True)
class Claim:
    """One parsed claim: ``lower ≤ figure ≤ upper`` after tolerance (None = unbounded)."""

    key: str
    figure: str
    text: str
    stated_lower: float | None
    stated_upper: float | None
    lower: float | None
    upper: float | None
    tolerance_note: str
    line: int | None
    not_checkable: str = ""


@dataclass(frozen=True)
class ClaimResult:
    """A claim judged for N spectra."""

    claim: Claim
    measured: np.ndarray
    excess: np.ndarray  # measured − violated bound where contradicted, 0 where supported, NaN otherwise
    outcome: tuple[str, ...]
    reason: tuple[str, ...]
    unit: str


@dataclass(frozen=True)
class Claims:
    """A parsed claims file."""

    claims: tuple[Claim, ...]
    supplier: dict
    file: str

    def check(self, ev) -> ClaimsCheck:
        """Judge every claim for every spectrum of ``ev`` (an Evaluation)."""
        n = len(np.asarray(ev.x))
        out = []
        from .figure_notes import judges_category, no_category_note
        from .undefined import undefined_reasons

        for c in self.claims:
            unit = figure_unit(c.figure) if c.figure else ""
            if c.not_checkable:
                out.append(ClaimResult(c, np.full(n, np.nan), np.full(n, np.nan), (NOT_CHECKABLE,) * n, (c.not_checkable,) * n, unit))
                continue
            m = np.asarray(ev.figure(c.figure), dtype=float)
            excess = np.zeros(n)
            outcome, reason = [], []
            # a figure computed outside its validity range (CIE 13.3 / CIE 224 far from the
            # locus) confirms and contradicts nothing: `check` calls it "not valid"
            flag = getattr(ev, "outside_validity_of", None)
            outside = np.asarray(flag(c.figure), dtype=bool) if flag is not None else np.zeros(n, dtype=bool)
            # why a figure is undefined, in the words `check` gives (an absolute figure: the
            # spectrum's scale and unit; others: the CCT's reason)
            undefined_why = undefined_reasons(ev, c.figure, m) if not np.isfinite(m).all() else None
            # a claimed ANSI category is contradicted by light in no category, whatever the
            # nearest one is (as a criteria clause on it fails; found by a review)
            no_category = (np.asarray(ev.figure("ansi_distance_upvp"), dtype=float)
                           if judges_category(c.figure) else np.zeros(n))
            for i in range(n):
                if not np.isfinite(m[i]):
                    outcome.append(NOT_CHECKABLE)
                    r = undefined_why[i] if undefined_why is not None and undefined_why[i] else ""
                    reason.append(f"{c.figure} is undefined for this spectrum" + (f" ({r})" if r else ""))
                    excess[i] = np.nan
                elif outside[i]:
                    outcome.append(NOT_CHECKABLE)
                    why = ev.validity_reason(i) if hasattr(ev, "validity_reason") else "outside the validity range"
                    reason.append(f"{c.figure} was computed {why}")
                    excess[i] = np.nan
                elif no_category[i] > 0:
                    outcome.append(CONTRADICTED)
                    reason.append(no_category_note(float(no_category[i]), float(m[i])))
                    excess[i] = np.nan
                elif c.lower is not None and m[i] < c.lower:
                    outcome.append(CONTRADICTED)
                    reason.append("")
                    excess[i] = m[i] - (c.stated_lower if c.stated_lower is not None else c.lower)
                elif c.upper is not None and m[i] > c.upper:
                    outcome.append(CONTRADICTED)
                    reason.append("")
                    excess[i] = m[i] - (c.stated_upper if c.stated_upper is not None else c.upper)
                else:
                    outcome.append(SUPPORTED)
                    reason.append("")
            out.append(ClaimResult(c, m, excess, tuple(outcome), tuple(reason), unit))
        names = tuple(getattr(ev, "names", None) or (f"spectrum {i + 1}" for i in range(n)))
        warnings = tuple(getattr(ev, "warnings", None) or ((),) * n)
        return ClaimsCheck(names, warnings, tuple(out), dict(self.supplier), self.file)


@dataclass(frozen=True)
class ClaimsCheck:
    names: tuple[str, ...]
    warnings: tuple[tuple[str, ...], ...]
    results: tuple[ClaimResult, ...]
    supplier: dict
    claims_file: str

    def verdict(self, i: int) -> str:
        oc = [r.outcome[i] for r in self.results]
        if CONTRADICTED in oc:
            return CONTRADICTED
        if SUPPORTED in oc:
            return SUPPORTED
        return NOT_CHECKABLE

    @property
    def exit_code(self) -> int:
        """1 when any claim is contradicted for any spectrum, else 0."""
        return 1 if any(CONTRADICTED in r.outcome for r in self.results) else 0


def _nominal_cct_bounds(v: float) -> tuple[float, float, str] | None:
    if v in regions.ANSI_C78377_2017:
        c = regions.ANSI_C78377_2017[int(v)]
        return c.target_cct_K - c.tolerance_K, c.target_cct_K + c.tolerance_K, (
            f"ANSI C78.377-2017 {int(v)} K category: {c.target_cct_K:.0f} ± {c.tolerance_K:.0f} K"
        )
    lo, hi = regions.ANSI_FLEXIBLE_RANGE_K
    if lo <= v <= hi:
        t = float(regions.ansi_flexible_tolerance_K(v))
        return v - t, v + t, f"± {t:.0f} K (ANSI C78.377 flexible-CCT tolerance formula, quoted from memory)"
    return None


def parse_claims(text: str, file: str = "<claims>") -> Claims:
    """Parse a claims file. Raises CriteriaError with line and key on any problem."""
    from .._toml import loads as toml_loads

    data = toml_loads(text, file)
    lines = locate_lines(text)

    def err(path, key, problem, fix=None):
        ln = lines.get(path + ((key,) if key else ()), lines.get(path))
        return CriteriaError(problem, file=file, line=ln, field=key, fix=fix)

    for k in data:
        if k not in TOP_LEVEL_KEYS:
            s = suggest(k, TOP_LEVEL_KEYS)
            raise err((), k, f"unknown key {quote(k)} at the top level", (f"did you mean {s!r}? " if s else "") + f"allowed: {', '.join(TOP_LEVEL_KEYS)}")
    if FORMAT_KEY in data and (type(data[FORMAT_KEY]) is not int or data[FORMAT_KEY] != FORMAT_VERSION):  # not true, not 1.0
        raise err((), FORMAT_KEY, f"unsupported format version {shown(data[FORMAT_KEY])}", f"this lumeval reads {FORMAT_KEY} = {FORMAT_VERSION}")
    supplier = {}
    for k, v in (data.get("supplier") or {}).items():
        if k not in SUPPLIER_KEYS:
            s = suggest(k, SUPPLIER_KEYS)
            raise err(("supplier",), k, f"unknown key {quote(k)} in [supplier]", (f"did you mean {s!r}? " if s else "") + f"allowed: {', '.join(SUPPLIER_KEYS)}")
        supplier[k] = str(v)
    raw = data.get("claims")
    if not isinstance(raw, dict) or not raw:
        raise CriteriaError("the file has no claims", file=file, line=lines.get(("claims",)), fix='add a [claims] table, e.g. Ra = ">= 90"')
    allowed_keys = list(figures.spellings()) + list(NOT_CHECKABLE_KEYS)
    tol_raw = data.get("tolerances") or {}
    if not isinstance(tol_raw, dict):
        raise err((), "tolerances", "`tolerances` must be a table", "write [tolerances] with figure = number lines")
    tolerances: dict[str, float] = {}
    for k, v in tol_raw.items():
        fk = figures.lookup(k)
        if fk is None:
            s = suggest(k, figures.spellings())
            raise err(("tolerances",), k, f"unknown figure {quote(k)}", (f"did you mean {s!r}? " if s else "") + "use a figure name, as in [claims]")
        if not is_number(v):
            raise err(("tolerances",), k, f"must be a non-negative number, got {shown(v)}", "write the tolerance in the figure's own units, e.g. Ra = 1")

        def not_finite(text: str, k: str = k) -> CriteriaError:
            return err(("tolerances",), k, f"must be a finite non-negative number, got {text}", FINITE_FIX)

        t = finite_float(v, not_finite)
        if t < 0:
            raise err(("tolerances",), k, f"must be a non-negative number, got {shown(v)}", "write the tolerance in the figure's own units, e.g. Ra = 1")
        tolerances[fk] = t

    claims = []
    seen: dict[str, str] = {}  # figure (or not-checkable key) -> the key that claimed it
    src_lines = text.splitlines()
    for key, value in raw.items():
        line = lines.get(("claims", key))
        fig = figures.lookup(key) if key not in NOT_CHECKABLE_KEYS else None
        if fig is None and key not in NOT_CHECKABLE_KEYS:
            s = suggest(key, allowed_keys)
            raise err(("claims",), key, f"unknown claim {quote(key)}", (f"did you mean {s!r}? " if s else "") + "use a lumeval figure name (cct_K, duv, Ra, R9, Rf, Rg, ...) or one of " + ", ".join(NOT_CHECKABLE_KEYS))
        # every spelling of a figure is one claim: "Ra" and "CRI Ra" (or "CCT" and "cct_K") both
        # claimed would judge one figure against two statements
        same = fig or key
        if same in seen:
            raise err(("claims",), key, f"{quote(key)} and {quote(seen[same])} are two claims on the same figure ({same})",
                      "keep one of them (a datasheet states each figure once)")
        seen[same] = key
        # "SDCM", "MacAdam steps": spellings of sdcm_steps, as not checkable as it
        key_nc = fig if fig in NOT_CHECKABLE_KEYS else (key if key in NOT_CHECKABLE_KEYS else "")
        if key_nc:
            claims.append(Claim(key, "", str(value), None, None, None, None, "", line, NOT_CHECKABLE_KEYS[key_nc]))
            continue
        text = str(value)
        assert fig is not None  # an unknown key was refused above
        m = None
        if is_number(value):
            text = repr(value) if isinstance(value, float) else str(value)
            if isinstance(value, float):  # 1.50 as written, not 1.5: the written precision is the claim's
                text = _toml_literal(src_lines, line, value) or text
            m = _CLAIM_RE.match(text)
        elif isinstance(value, str):
            if len(value) > _CLAIM_MAX_CHARS:
                raise err(("claims",), key, f"the claim is {len(value):,} characters long; a claim is one short value",
                          'write e.g. ">= 90", "3000 K ± 100 K" or "2700-3000 K"; put remarks in a TOML comment')
            read = _with_words_read(" ".join(value.split()))
            if fig == "duv" and re.fullmatch(r"\s*(?:±|\+/-|\+-)\s*[0-9].*", read):
                read = "0 " + read.strip()  # "Duv ±0.003": within 0.003 of the Planckian locus
            m = _CLAIM_RE.match(read)
            r = _RANGE_RE.match(read) if m is None else None
            if r is not None:
                claims.append(_range_claim(key, fig, text, r, tolerances.get(fig), line, err))
                continue
        if m is None:
            hint = _comma_hint(str(value))
            why, fix = _unread_hint(str(value), key) if not hint else ("", "")
            raise err(("claims",), key, f"cannot read the claim {shown(value)}" + (hint or why),
                      fix or 'write e.g. ">= 90", "min. 90", "<= 0.003", "3000 K", "100 ± 3", "2700-3000 K" or a plain number'
                      + (" (2700, not 2,700; 0.003, not 0,003)" if hint else ""))
        units = {u for u in (m.group("unit1"), m.group("unit2")) if u}
        if m.group("plus") and (m.group("op") or m.group("tol") is not None):
            raise err(("claims",), key, f"cannot read the claim {shown(value)}", 'write a minimum as "90+" or ">= 90", not both')
        unit = units.pop() if len(units) == 1 else (None if not units else "|".join(sorted(units)))
        if unit and unit != figure_unit(fig):
            raise err(("claims",), key, f"unit {unit!r} does not fit {key} (unit {figure_unit(fig) or 'none'!r})", f"write {key} in {figure_unit(fig) or 'plain numbers'}")
        v = float(m.group("value"))
        if not np.isfinite(v) or (m.group("tol") is not None and not np.isfinite(float(m.group("tol")))):
            raise err(("claims",), key, f"the claim {shown(value)} holds a number too large to represent",
                      "write the value as the datasheet states it, e.g. \">= 90\" (plain numbers within ±1e308)")
        if fig == "cct_K":
            _cct_claimed(v, f"{v:.3f}" if isinstance(value, float) and float(f"{v:.3f}") == v else m.group("value"),
                         value, key, err)
        op = m.group("op") or (">=" if m.group("plus") else "")
        t_override = tolerances.get(fig)
        if m.group("tol") is not None:
            if op not in ("", "="):
                raise err(("claims",), key, "a ± tolerance cannot be combined with a comparison", 'write either ">= v" or "v ± d"')
            d = float(m.group("tol"))
            claims.append(Claim(key, fig, text, v - d, v + d, v - d, v + d, f"stated ± {fmt_number(d)}", line))
            continue
        if op in (">=", "≥", "=>", ">", "<=", "≤", "=<", "<"):
            if t_override is not None:
                t, note = t_override, f"tolerance from [tolerances]: {fmt_number(t_override)}"
            else:
                t, how = _implied(fig, m.group("value"))
                note = f"read at the precision written (half a unit of the last digit): {how}"
            if op in (">=", "≥", "=>", ">"):
                claims.append(Claim(key, fig, text, v, None, v - t, None, note, line))
            elif fig == "duv" and v > 0:
                # "Duv < 0.003" on a datasheet bounds the distance from the Planckian locus on either
                # side, |Duv| (common practice, no source): a pink source at Duv −0.008 does not
                # meet it. A bound at or below zero ("< 0": below the locus) stays signed.
                claims.append(Claim(key, fig, text, -v, v, -v - t, v + t,
                                    f"a maximum Duv, read as |Duv| ≤ {fmt_number(v)} (either side of the Planckian locus); "
                                    + note, line))
            else:
                claims.append(Claim(key, fig, text, None, v, None, v + t, note, line))
        else:
            if t_override is not None:
                lo, hi, note = v - t_override, v + t_override, f"± {fmt_number(t_override)} from [tolerances]"
            elif fig == "cct_K":
                b = _nominal_cct_bounds(v)
                if b is None:
                    raise err(("claims",), key, f"no default tolerance for a nominal CCT of {v:g} K", f"give one: cct_K = \"{v:g} ± 100\" or a [tolerances] entry")
                lo, hi, note = b
            elif fig == "duv":
                lo, hi, note = v - regions.ANSI_DUV_TOLERANCE, v + regions.ANSI_DUV_TOLERANCE, "± 0.006 (ANSI C78.377 Duv tolerance)"
            else:
                t, how = _implied(fig, m.group("value"))
                lo, hi, note = v - t, v + t, f"read at the precision written: ± {how}"
            claims.append(Claim(key, fig, text, lo, hi, lo, hi, note, line))
    return Claims(tuple(claims), supplier, file)


def _range_claim(key: str, fig: str, text: str, m: re.Match, t_override: float | None, line, err) -> Claim:
    """A range claim ("2700-3000 K", "90 to 95"): supported when lower − t ≤ measured ≤ upper + t,
    each t half a unit of the last digit written of its bound, or the [tolerances] entry."""
    units = {u for u in (m.group("unit1"), m.group("unit2")) if u}
    if len(units) > 1 or (units and units != {figure_unit(fig)}):
        unit = "|".join(sorted(units))
        raise err(("claims",), key, f"unit {unit!r} does not fit {key} (unit {figure_unit(fig) or 'none'!r})",
                  f"write {key} in {figure_unit(fig) or 'plain numbers'}")
    lo, hi = float(m.group("lo")), float(m.group("hi"))
    if not (np.isfinite(lo) and np.isfinite(hi)):
        raise err(("claims",), key, f"the claim {shown(text)} holds a number too large to represent",
                  'write the range as the datasheet states it, e.g. "2700-3000 K"')
    if fig == "cct_K":  # before the order of the bounds: "2700 - 6.500 K" is not a range running downwards
        _cct_claimed(lo, m.group("lo"), text, key, err)
        _cct_claimed(hi, m.group("hi"), text, key, err)
    if lo > hi:
        raise err(("claims",), key, f"the range {shown(text)} runs from {fmt_number(lo)} down to {fmt_number(hi)}",
                  f'write the lower bound first: "{m.group("hi")} to {m.group("lo")}"')
    if t_override is not None:
        t_lo = t_hi = t_override
        note = f"range, tolerance from [tolerances]: {fmt_number(t_override)}"
    else:
        (t_lo, how_lo), (t_hi, how_hi) = _implied(fig, m.group("lo")), _implied(fig, m.group("hi"))
        both = how_lo if t_lo == t_hi else f"{how_lo} below, {how_hi} above"
        note = f"range read at the precision written (half a unit of the last digit): {both}"
    return Claim(key, fig, text, lo, hi, lo - t_lo, hi + t_hi, note, line)


def load_claims(path) -> Claims:
    """Read and parse a claims file."""
    from .._paths import display_path
    from .._toml import read_text

    return parse_claims(read_text(path, what="claims", option="--claims"), display_path(path))
