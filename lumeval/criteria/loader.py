"""Read criteria files (TOML, read by :mod:`lumeval._toml`, the one TOML reader: no code runs).

Every problem becomes a :class:`lumeval.errors.CriteriaError` naming the file, the line and
the key, what is wrong and what is allowed (with the closest valid name for a typo). Unknown
keys are errors, contradictory limits are errors; nothing is silently ignored.
"""

from __future__ import annotations

import math
import re

from .. import figures
from .._toml import loads as toml_loads
from .._toml import read_text
from ..errors import CriteriaError, quote, shown
from . import plausible, rounding
from .model import CLAUSE_KINDS, COMMON_KEYS, Criteria, ParseError, suggest

#: Format marker: ``lumeval_criteria = 1`` (optional; other values are refused).
FORMAT_KEY = "lumeval_criteria"
FORMAT_VERSION = 1

#: Keys of the identification block.
IDENTIFICATION_KEYS: dict[str, str] = {
    "project": "the project or tender the criteria belong to",
    "lot": "the lot, batch or bid package",
    "product": "the product reference or luminaire type",
    "reference": "the specification clause or document reference",
    "issued_by": "who wrote the criteria",
    "date": "date of issue (TOML date or string)",
    "notes": "free text",
}

TOP_LEVEL_KEYS = (FORMAT_KEY, "identification", "clause", "instrument", "monte_carlo", "decision")

# Table headers; the caller strips the name. (No ``\s*`` around a lazy group: Python's
# backtracking re took time cubic in a run of spaces on a line with no closing bracket.)
_HEADER_AOT = re.compile(r"^\[\[([^\]]+)\]\]")
_HEADER = re.compile(r"^\[([^\]]+)\]")
_KEY = re.compile(r"""^("([^"]*)"|'([^']*)'|[A-Za-z0-9_\-]+)\s*=""")


def _table_name(header: str) -> str:
    """A header's table name as the parsed TOML names it: ``[ "a" ]``, ``['a']`` and ``[a]``
    are all ``a`` (quotes inside a dotted name are dropped too: ``[a."b"]`` is ``a.b``)."""
    return header.replace('"', "").replace("'", "").strip()


def locate_lines(text: str) -> dict[tuple, int]:
    """Map TOML paths to line numbers (1-based).

    Keys are ``(table,)`` for ``[table]``, ``(table, i)`` for the i-th ``[[table]]`` and the
    same with a key appended for ``key = value`` lines. Good enough for the flat files lumeval
    reads (tables, arrays of tables, keys); continuation lines of multi-line values are not
    mistaken for keys because a key line must start a statement at the line's beginning.
    """
    out: dict[tuple, int] = {}
    current: tuple = ()
    counters: dict[str, int] = {}
    in_multiline = False
    for lineno, raw in enumerate(text.splitlines(), 1):
        s = raw.strip()
        if in_multiline:
            if s.count('"""') % 2 == 1 or s.count("'''") % 2 == 1:
                in_multiline = False
            continue
        if not s or s.startswith("#"):
            continue
        m = _HEADER_AOT.match(s)
        if m:
            name = _table_name(m.group(1))
            i = counters.get(name, -1) + 1
            counters[name] = i
            current = (name, i)
            out.setdefault(current, lineno)
            continue
        m = _HEADER.match(s)
        if m:
            current = (_table_name(m.group(1)),)
            out.setdefault(current, lineno)
            continue
        m = _KEY.match(s)
        if m:
            key = m.group(2) if m.group(2) is not None else (m.group(3) if m.group(3) is not None else m.group(1))
            out.setdefault(current + (key,), lineno)
            rest = s[m.end():]
            if rest.count('"""') % 2 == 1 or rest.count("'''") % 2 == 1:
                in_multiline = True
    return out


class _Where:
    def __init__(self, file: str, lines: dict[tuple, int]) -> None:
        self.file, self.lines = file, lines

    def line(self, path: tuple, key: str | None = None) -> int | None:
        if key is not None and path + (key,) in self.lines:
            return self.lines[path + (key,)]
        return self.lines.get(path)

    def error(self, path: tuple, key: str | None, problem: str, fix: str | None = None) -> CriteriaError:
        return CriteriaError(problem, file=self.file, line=self.line(path, key), field=key, fix=fix)


def _unknown_key(where: _Where, path: tuple, key: str, allowed, what: str, owners=()) -> CriteriaError:
    """An unknown key; one that another clause kind takes (``owners``) is said to belong there,
    with no spelling suggestion (a review found `min` in a quadrangle clause answered with "did
    you mean 'kind'?")."""
    if owners:
        kinds = " and ".join(f"{o} clauses" for o in owners)
        return where.error(path, key, f"{quote(key)} belongs to {kinds}; {what} takes {', '.join(allowed)}",
                           f"remove {quote(key)}, or give it in a clause of its own kind")
    s = suggest(key, allowed)
    hint = f"did you mean {s!r}? " if s else ""
    return where.error(path, key, f"unknown key {quote(key)} in {what}", f"{hint}allowed: {', '.join(allowed)}")


def _article(word: str) -> str:
    return "an" if word[:1].lower() in "aeio" else "a"


def parse_criteria(text: str, file: str = "<criteria>") -> Criteria:
    """Parse the text of a criteria file.

    Parameters
    ----------
    text : str
        TOML text.
    file : str
        The name used in error messages.

    Returns
    -------
    Criteria

    Raises
    ------
    CriteriaError
        For any problem, with the line, the key, what is wrong and what would fix it.
    """
    data = toml_loads(text, file)
    where = _Where(file, locate_lines(text))

    for key in data:
        if key not in TOP_LEVEL_KEYS:
            raise _unknown_key(where, (), key, TOP_LEVEL_KEYS, "the top level")
    # exactly the integer 1: true and 1.0 compare equal to 1 in Python but are not a version number
    if FORMAT_KEY in data and (type(data[FORMAT_KEY]) is not int or data[FORMAT_KEY] != FORMAT_VERSION):
        raise where.error((), FORMAT_KEY, f"unsupported format version {shown(data[FORMAT_KEY])}", f"this lumeval reads {FORMAT_KEY} = {FORMAT_VERSION}")

    ident_raw = data.get("identification", {})
    if not isinstance(ident_raw, dict):
        raise where.error((), "identification", "`identification` must be a table", "write it as [identification] with key = value lines")
    ident: dict[str, str] = {}
    for key, value in ident_raw.items():
        if key not in IDENTIFICATION_KEYS:
            raise _unknown_key(where, ("identification",), key, list(IDENTIFICATION_KEYS), "[identification]")
        if isinstance(value, (dict, list)):
            raise where.error(("identification",), key, "must be a single value (text or date)", f'write {key} = "..."')
        ident[key] = str(value)

    clauses_raw = data.get("clause")
    if clauses_raw is None:
        raise CriteriaError("the file has no clauses", file=file, fix="add at least one [[clause]] table (see `lumeval criteria new`)")
    if not isinstance(clauses_raw, list) or not all(isinstance(c, dict) for c in clauses_raw):
        raise where.error((), "clause", "`clause` must be an array of tables", "write each clause as a [[clause]] table")
    if not clauses_raw:
        raise CriteriaError("the file has no clauses", file=file, fix="add at least one [[clause]] table")

    clauses = []
    seen_ids: dict[str, int] = {}
    kinds = list(CLAUSE_KINDS)
    for i, table in enumerate(clauses_raw):
        path = ("clause", i)
        line = where.line(path)
        kind = table.get("kind")
        if kind is None:
            if "figure" in table:
                kind = "figure"
            else:
                raise where.error(path, None, f"clause {i + 1} has no `kind`", f"add kind = one of {', '.join(kinds)} (or give `figure` for a figure clause)")
        if not isinstance(kind, str) or kind not in CLAUSE_KINDS:
            s = suggest(str(kind), kinds)
            hint = f"did you mean {s!r}? " if s else ""
            raise where.error(path, "kind", f"unknown clause kind {shown(kind)}", f"{hint}allowed: {', '.join(kinds)}")
        cls = CLAUSE_KINDS[kind]
        allowed = list(COMMON_KEYS) + list(cls.KEYS)
        for key in table:
            if key not in allowed:
                owners = [k for k, c in CLAUSE_KINDS.items() if key in c.KEYS]
                # (a lot clause is never judged over settings: `over` is not listed as a key it takes)
                listed = [k for k in allowed if not (k == "over" and getattr(cls, "SCOPE", "") == "lot")]
                raise _unknown_key(where, path, key, listed, f"{_article(kind)} {kind!r} clause", owners)
        cid = table.get("id", f"C{i + 1}")
        if not isinstance(cid, str) or not cid.strip():
            raise where.error(path, "id", f"must be a non-empty string, got {shown(cid)}", 'write e.g. id = "R9"')
        if cid in seen_ids:
            raise where.error(path, "id", f"duplicate clause id {cid!r} (also clause {seen_ids[cid] + 1})", "give each clause its own id")
        seen_ids[cid] = i
        common = {"id": cid, "line": line}
        for key in ("label", "note"):
            v = table.get(key, "")
            if not isinstance(v, str):
                raise where.error(path, key, f"must be a string, got {shown(v)}", f'write {key} = "..."')
            common[key] = v
        try:
            clause = cls.parse(table, common)
            if "over" in table:  # a clause judged over a range of settings (tunable products)
                from .range_clauses import apply_over

                clause = apply_over(clause, table["over"])
            clauses.append(clause)
        except ParseError as exc:
            raise where.error(path, exc.key, exc.problem, exc.fix) from None
    rounding.refuse_empty(clauses, file)
    warnings = _contradictions(clauses, file) + _unlikely_limits(clauses, file) + rounding.limit_warnings(clauses, file)
    labelled = frozenset(c.clause_id for c, t in zip(clauses, clauses_raw) if t.get("label"))
    out = Criteria(tuple(clauses), ident, file, _uncertainty_tables(data, text, file), warnings=warnings,
                   labelled=labelled)
    if out.uncertainty_tables:
        rounding.refuse_under_uncertainty(out, "its [instrument] table or guarded [decision] rule",
                                          {c.clause_id: where.line(("clause", i), "round_to") for i, c in enumerate(clauses)})
    return out


def _unlikely_limits(clauses, file: str) -> tuple[str, ...]:
    """A warning per figure clause whose limits are possible but probably not meant: a maximum
    on Rf or Rf,hj that a source identical to its reference fails
    (:func:`lumeval.criteria.plausible.fidelity_ceiling`), limits on a chroma shift Rcs,hj that
    look like fractions of a figure lumeval states in percent
    (:func:`lumeval.criteria.plausible.percent_as_fraction`)."""
    out = []
    for c in clauses:
        inner = getattr(c, "inner", c)
        if getattr(inner, "KIND", "") != "figure":
            continue
        for check in (plausible.fidelity_ceiling, plausible.percent_as_fraction):
            why = check(inner.figure, inner.lower, inner.upper)
            if why:
                where = f"{file}:{inner.line}: " if inner.line else f"{file}: "
                out.append(f"{where}clause {quote(inner.clause_id)}: {why}")
    return tuple(out)


def _contradictions(clauses, file: str) -> tuple[str, ...]:
    """Clauses that no spectrum could meet together.

    Limits on one figure whose ranges do not overlap (Ra ≥ 95 in one clause, Ra ≤ 90 in
    another) are an error (docs/criteria.md: "contradictory limits are errors"). Chromaticity
    quadrangles with no common interior (two different nominal CCT categories) are returned as
    warnings, which every report and a ``lumeval: warning:`` line carry: each spectrum then fails
    one of them, which a comparison of categories in one file may intend. Overlapping clauses (a
    range inside another, two quadrangles that share an area) are legitimate and kept."""
    out: list[str] = []
    by_figure: dict[str, list] = {}
    for c in clauses:
        # a clause with `over = [low, high]` (tunable products) applies at the settings in that
        # range only, one without at every setting: two limits contradict where their ranges meet
        inner, over = getattr(c, "inner", c), getattr(c, "over", None)
        if getattr(inner, "KIND", "") == "figure" and getattr(c, "SCOPE", "sample") in ("sample", "range"):
            by_figure.setdefault(inner.figure, []).append((inner, over or (-math.inf, math.inf)))
    for fig, cs in by_figure.items():
        for lo_c, lo_over in (x for x in cs if x[0].lower is not None):
            for hi_c, hi_over in (x for x in cs if x[0].upper is not None):
                a, b = max(lo_over[0], hi_over[0]), min(lo_over[1], hi_over[1])  # the settings both apply at
                # a rounded clause admits values half a rounding step beyond its limit (79.6 meets
                # min = 80 with round_to = 0): compared as the unrounded values each admits
                if a <= b and rounding.disjoint(lo_c, hi_c):
                    first, second = sorted((lo_c, hi_c), key=lambda c: c.line or 0)
                    lo_r, hi_r = (f", rounded to {rounding.places_words(c.round_to, figures.unit(fig))}"
                                  if getattr(c, "round_to", None) is not None else "" for c in (lo_c, hi_c))
                    raise CriteriaError(
                        f"clauses {lo_c.clause_id!r} ({fig} ≥ {lo_c.lower:g}{lo_r}) and {hi_c.clause_id!r} ({fig} ≤ "
                        f"{hi_c.upper:g}{hi_r}) contradict each other: no value meets both"
                        + ("" if math.isinf(a) and math.isinf(b) else f" at the settings {a:g}-{b:g}")
                        + (f" (lines {first.line} and {second.line})" if first.line and second.line else ""),
                        file=file, line=second.line, fix="correct or remove one of them")
    quads = [c for c in clauses if getattr(c, "KIND", "") == "ansi_quadrangle" and getattr(c, "SCOPE", "sample") == "sample"]
    for i, a in enumerate(quads):
        for b in quads[i + 1:]:
            qa, qb = a.quadrangle, b.quadrangle
            if _common_area(qa.corners_upvp, qb.corners_upvp) <= 0.0:
                where = f"{file}:{b.line}: " if b.line else f"{file}: "
                out.append(
                    f"{where}clauses {a.clause_id!r} ({qa.name}) and {b.clause_id!r} ({qb.name}) contradict each other: "
                    "the two quadrangles have no chromaticity in common, so every spectrum fails one of them — keep the "
                    "quadrangle of the product's nominal CCT and remove the other")
    out += _region_contradictions(clauses, quads, file)
    return tuple(out)


def _region_contradictions(clauses, quads, file: str) -> list[str]:
    """Warnings, like those for two quadrangles, for chromaticity regions of one file that share
    no chromaticity (per-sample clauses only): an SDCM ellipse apart from a quadrangle, another
    ellipse or a CCT band (a ``cct_K`` figure clause), and a quadrangle outside a CCT band.
    Every spectrum then fails one of the two; typically an IEC 60081 centre of another CCT
    (F3000 in a 4000 K file is about 30 steps from the 4000 K quadrangle). Each ellipse is
    replaced by a polygon that contains it (:func:`_ellipse_polygon`), so a warning is given
    only where the regions are certainly apart."""
    ells = [c for c in clauses if getattr(c, "KIND", "") == "sdcm" and getattr(c, "SCOPE", "sample") == "sample"]
    bands = [c for c in clauses if getattr(c, "KIND", "") == "figure" and getattr(c, "SCOPE", "sample") == "sample"
             and c.figure == "cct_K"]
    out: list[str] = []
    centre_it = ("centre the ellipse near the product's nominal chromaticity (the SDCM clause `lumeval criteria new` "
                 "offers is centred on the ANSI category) or remove one of the two")

    def say(a, b, why: str, fix: str) -> None:
        (first, what_1), (second, what_2) = sorted((a, b), key=lambda p: p[0].line or 0)
        where = f"{file}:{second.line}: " if second.line else f"{file}: "
        out.append(f"{where}clauses {first.clause_id!r} ({what_1}) and {second.clause_id!r} ({what_2}) contradict each "
                   f"other: they have no chromaticity in common{why}, so every spectrum fails one of them — {fix}")

    def apart(span: tuple[float, float], band) -> bool:
        return span[0] > (math.inf if band.upper is None else band.upper) or \
            span[1] < (-math.inf if band.lower is None else band.lower)

    for q in quads if bands else ():
        span = _cct_span(q.quadrangle.corners_upvp)
        for b in (b for b in bands if apart(span, b)):
            say((q, q.quadrangle.name), (b, b.label), f" (the quadrangle spans CCT {span[0]:.0f}-{span[1]:.0f} K)",
                "correct the CCT band or the quadrangle's nominal CCT")
    polygons = {id(e): _ellipse_polygon(e.ellipse, e.max_steps) for e in ells}
    for i, e in enumerate(ells):
        this = (e, f"within {e.max_steps:g} steps of {e.ellipse.name}")
        for q in quads:
            if _common_area(q.quadrangle.corners_upvp, polygons[id(e)]) <= 0.0:
                say((q, q.quadrangle.name), this, "", centre_it)
        for f in ells[i + 1:]:
            if _common_area(polygons[id(e)], polygons[id(f)]) <= 0.0:
                say(this, (f, f"within {f.max_steps:g} steps of {f.ellipse.name}"), "", centre_it)
        span = _cct_span(polygons[id(e)]) if bands else (-math.inf, math.inf)
        for b in (b for b in bands if apart(span, b)):
            say((b, b.label), this, f" (the ellipse spans CCT {span[0]:.0f}-{span[1]:.0f} K)", centre_it)
    return out


def _ellipse_polygon(ellipse, n_steps: float, vertices: int = 64):
    """A convex polygon in CIE 1976 (u′, v′) that contains the ``n_steps`` ellipse: the regular
    polygon circumscribing a circle, with its vertices at radius 1/cos(π/m), is mapped by the
    ellipse's affine map (plain geometry) and then to (u′, v′), a projective map that keeps
    straight lines straight and the region convex (CIE 15:2004 §8.1)."""
    from ..metrics.colorimetry import upvp_from_xy

    return upvp_from_xy(ellipse.boundary_xy(n_steps / math.cos(math.pi / vertices), vertices))


def _cct_span(polygon_upvp) -> tuple[float, float]:
    """The CCT range (K) of a convex region of (u′, v′) within the CCT domain, from its vertices
    (isotemperature lines are straight in CIE 1960 (u, v), so the extremes lie on the boundary of
    a convex region; Ohno (2014) LEUKOS 10(1):47-55 for CCT). (-inf, inf) where some vertex has
    no CCT, so that no warning is given."""
    import numpy as np

    from ..metrics.colorimetry import cct_duv_ohno

    p = np.asarray(polygon_upvp, dtype=float)
    t = cct_duv_ohno(np.stack([p[:, 0], p[:, 1] / 1.5], axis=-1)).cct_K
    if not np.all(np.isfinite(t)):
        return -math.inf, math.inf
    return float(t.min()), float(t.max())


def _common_area(p, q) -> float:
    """Area of the intersection of two convex polygons (vertices in order, either orientation),
    by Sutherland-Hodgman clipping (Sutherland & Hodgman 1974) and the shoelace formula. A shared
    edge or corner has zero area. Tolerant of tiny float overlaps: areas below 1e-12 (u'v')² are
    zero (an ANSI quadrangle has about 1e-4)."""
    import numpy as np

    def area(poly):
        if len(poly) < 3:
            return 0.0
        a = np.asarray(poly, dtype=float)
        x, y = a[:, 0], a[:, 1]
        return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))

    p = [tuple(map(float, v)) for v in p]
    q = [tuple(map(float, v)) for v in q]
    if area(p) < 0:
        p = p[::-1]
    if area(q) < 0:
        q = q[::-1]
    out = p
    for k in range(len(q)):
        a, b = q[k], q[(k + 1) % len(q)]

        def side(v, a=a, b=b):
            return (b[0] - a[0]) * (v[1] - a[1]) - (b[1] - a[1]) * (v[0] - a[0])

        inp, out = out, []
        if not inp:
            break
        for j in range(len(inp)):
            cur, prev = inp[j], inp[j - 1]
            sc, sp = side(cur), side(prev)
            if sc >= 0:
                if sp < 0:
                    t = sp / (sp - sc)
                    out.append((prev[0] + t * (cur[0] - prev[0]), prev[1] + t * (cur[1] - prev[1])))
                out.append(cur)
            elif sp >= 0:
                t = sp / (sp - sc)
                out.append((prev[0] + t * (cur[0] - prev[0]), prev[1] + t * (cur[1] - prev[1])))
    a_int = abs(area(out))
    return a_int if a_int > 1e-12 else 0.0


def _uncertainty_tables(data: dict, text: str, file: str) -> dict:
    """Parse the optional [instrument], [monte_carlo] and [decision] tables (lumeval.uncertainty)."""
    if not any(k in data for k in ("instrument", "monte_carlo", "decision")):
        return {}
    from ..uncertainty.decision import rule_from_table
    from ..uncertainty.instrument import instrument_from_table, settings_from_table

    out: dict = {}
    if "instrument" in data:
        out["instrument"] = instrument_from_table(data["instrument"], file=file, text=text)
    if "monte_carlo" in data:
        out["monte_carlo"] = settings_from_table(data["monte_carlo"], file=file, text=text)
    if "decision" in data:
        out["decision"] = rule_from_table(data["decision"], file=file, text=text)
    return out


def load_criteria(path) -> Criteria:
    """Read and parse a criteria file (see :func:`parse_criteria`)."""
    from .._paths import display_path

    return parse_criteria(read_text(path, what="criteria", option="--criteria"), display_path(path))
