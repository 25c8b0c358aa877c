"""Renderings of datasheet-claim checks (``lumeval claims``): terminal (rich renderables), JSON
and CSV of the same results; nothing is computed here. The layout and number rules are those of
:mod:`lumeval.render.verdicts` (a contradicted claim is marked ``>>`` and spelt in capitals;
numbers that would read as inside the claim get more decimals)."""

from __future__ import annotations

import csv
import io
import json
import math
import re

from .fit import set_key_columns
from .safe import clean
from .safe import text as _text
from .tables import CAUTIONS
from .verdicts import (
    JSON_SCHEMA_VERSION,
    _cautions_text,
    _extra_decimals,
    _f,
    _header,
    _more,
    _num,
    _spec,
    append_notes,
)

_CLAIM_WORD = {"supported": "✔ supported", "contradicted": "✘ CONTRADICTED", "not checkable": "– not checkable"}
_CLAIM_STYLE = {"supported": "green", "contradicted": "bold red", "not checkable": "yellow"}


def claims_renderables(check) -> list:
    from rich import box
    from rich.table import Table
    from rich.text import Text

    out = [_header("Datasheet claims against the supplier's spectrum", check.claims_file, check.supplier)]
    for i, name in enumerate(check.names):
        v = check.verdict(i)
        ncon = sum(1 for r in check.results if r.outcome[i] == "contradicted")
        line = Text(f"\n{clean(name)}  —  ", style="bold")
        if v == "contradicted":
            line.append(f"✘ {ncon} CLAIM(S) CONTRADICTED by the spectrum", style="bold red")
        elif v == "supported":
            line.append("✔ every checkable claim is supported", style="bold green")
        else:
            line.append("– no claim could be checked from the spectrum", style="bold yellow")
        out.append(line)
        t = Table(box=box.SIMPLE_HEAVY, pad_edge=False, show_edge=False)
        for col, kw in (("", {"no_wrap": True}), ("claim", {"no_wrap": True}), ("as stated", {}), ("measured", {"justify": "right"}),
                        ("accepted as", {}), ("by how much", {"justify": "right"}), ("result", {"no_wrap": True})):
            t.add_column(col, **kw)
        set_key_columns(t, 2)  # split to fit: each part repeats the mark and the claim
        notes = []
        for r in check.results:
            o = r.outcome[i]
            c = r.claim
            measured, accepted, by = claim_texts(r, i)
            t.add_row(">>" if o == "contradicted" else "", _text(c.key), _text(c.text), _text(measured), _text(accepted),
                      _text(by), Text(_CLAIM_WORD[o], style=_CLAIM_STYLE[o]), style="bold red" if o == "contradicted" else None)
            if r.reason[i]:
                notes.append(f"{c.key}: {r.reason[i]}")
        out.append(t)
        append_notes(out, notes, check.warnings[i] if i < len(check.warnings) else ())
    tol = Text("\nHow each claim was read:\n", style="dim")
    for r in check.results:
        if r.claim.tolerance_note:
            tol.append(clean(f"  - {r.claim.key} {r.claim.text}: {r.claim.tolerance_note}") + "\n", style="dim")
    out.append(tol)
    overall = Text("\n")
    if check.exit_code:
        overall.append("OVERALL: ✘ the datasheet over-claims: at least one claim is contradicted by the supplier's own spectrum", style="bold red")
    elif not any(o == "supported" for r in check.results for o in r.outcome):
        overall.append("OVERALL: – nothing could be checked: no claim is contradicted, but none is supported either",
                       style="bold yellow")
    else:
        overall.append("OVERALL: ✔ no claim is contradicted by the spectrum", style="bold green")
    out.append(overall)
    out.append(_cautions_text())
    return out


def claim_texts(r, i: int) -> tuple[str, str, str]:
    """(measured, accepted as, by how much) of claim result ``r`` for spectrum ``i`` as every
    report prints them (terminal and HTML): the measured value as precise as the accepted
    bounds, with more decimals where a contradicted claim would read as inside; "by how much"
    (measured − stated bound, signed) only for a contradicted claim; "—" where not checkable."""
    c, o = r.claim, r.outcome[i]
    spec = _spec(c.figure) if c.figure else ".3g"
    accepted = "—" if c.not_checkable else _accepted(c, r.unit, spec)
    spec = _bounds_spec(c, spec)  # the measured value as precise as the accepted bounds
    mspec = _more(spec, _claim_decimals(c, r.measured[i], r.excess[i], spec)) if o == "contradicted" else spec
    by = _f(r.excess[i], "+" + mspec, r.unit) if o == "contradicted" else ""
    return (_f(r.measured[i], mspec, r.unit) if not c.not_checkable else "—"), accepted, by


def _claim_decimals(c, measured: float, excess: float, spec: str) -> int:
    """Extra decimals for a contradicted claim's measured value and "by how much", so that
    neither reads as inside the claim: Rg 94.67 against "100 ± 5" (accepted 95 … 105) printed
    at Rg's precision read "95" and "by how much 0"; it prints "94.7" and "-0.3"."""
    m = float(measured)
    outside = (m - c.lower if c.lower is not None and m < c.lower
               else (m - c.upper if c.upper is not None and m > c.upper else 0.0))
    if "f" not in spec:
        return 0
    return max(_extra_decimals(outside, spec), _extra_decimals(excess, spec))


def _accepted(c, unit: str, spec: str) -> str:
    if c.lower is not None and c.upper is not None:
        return f"{_f(c.lower, _bound_spec(c.lower, spec))} … {_f(c.upper, _bound_spec(c.upper, spec), unit)}"
    if c.lower is not None:
        return f"≥ {_f(c.lower, _bound_spec(c.lower, spec), unit)}"
    return f"≤ {_f(c.upper, _bound_spec(c.upper, spec), unit)}"


def _bounds_spec(c, spec: str) -> str:
    """``spec`` with the most decimals either accepted bound of claim ``c`` prints with, for its
    measured value: Rg 99.30 printed "99" beside "99.297 … 99.303" could not be compared."""
    best = spec
    for b in (c.lower, c.upper):
        if b is not None:
            s = _bound_spec(b, spec)
            if int(s.rpartition(".")[2][:-1] or 0) > int(best.rpartition(".")[2][:-1] or 0):
                best = s
    return best


def _bound_spec(v: float, spec: str) -> str:
    """``spec`` with as many more decimals (up to three) as the accepted bound ``v`` needs to
    print as it is: a claim "90 to 95" is accepted from 89.5 to 95.5, which the figure's own
    precision would print as "90 … 96"."""
    m = re.fullmatch(r"(\+?)\.(\d+)f", spec)
    if m is None or not math.isfinite(v):
        return spec
    d = int(m.group(2))
    for extra in range(4):
        if abs(float(format(v, f".{d + extra}f")) - v) <= 1e-9 * max(1.0, abs(v)):
            return f"{m.group(1)}.{d + extra}f"
    return f"{m.group(1)}.{d + 3}f"


def print_claims(check, console=None) -> None:
    from .safe import console as safe_console

    console = console or safe_console()
    for r in claims_renderables(check):
        console.print(r)


def claims_record(check) -> dict:
    spectra = []
    for i, name in enumerate(check.names):
        spectra.append(
            {
                "name": name,
                "verdict": check.verdict(i),
                "warnings": list(check.warnings[i]) if i < len(check.warnings) else [],
                "claims": [
                    {
                        "key": r.claim.key,
                        "figure": r.claim.figure or None,
                        "as_stated": r.claim.text,
                        "unit": r.unit,
                        "measured": _num(r.measured[i]),
                        "accepted_lower": r.claim.lower,
                        "accepted_upper": r.claim.upper,
                        "how_read": r.claim.tolerance_note or None,
                        "excess": _num(r.excess[i]),
                        "outcome": r.outcome[i],
                        "reason": r.reason[i] or None,
                        "line": r.claim.line,
                    }
                    for r in check.results
                ],
            }
        )
    from ..schemas import header

    return {
        **header("claims"),
        "lumeval_claims_check": JSON_SCHEMA_VERSION,
        "claims_file": check.claims_file,
        "supplier": check.supplier,
        "exit_code": check.exit_code,
        "spectra": spectra,
        "cautions": list(CAUTIONS),
    }


def claims_to_json(check) -> str:
    return json.dumps(claims_record(check), indent=2, ensure_ascii=False) + "\n"


CLAIMS_CSV_COLUMNS = ("spectrum", "claim", "as_stated", "unit", "measured", "accepted_lower", "accepted_upper", "excess", "outcome", "reason")


def claims_to_csv(check) -> str:
    """One row per (spectrum, claim); text cells neutralised for spreadsheets; the cautions as
    note rows at the end (:func:`lumeval.render.tables.csv_notes`)."""
    from .safe import csv_first_cell
    from .safe import csv_text as t
    from .tables import csv_notes

    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=CLAIMS_CSV_COLUMNS, lineterminator="\n")
    w.writeheader()

    def cell(v):
        if v is None:
            return ""
        f = float(v)
        return repr(f) if math.isfinite(f) else ""

    for i, name in enumerate(check.names):
        for r in check.results:
            w.writerow(
                {
                    "spectrum": csv_first_cell(name),
                    "claim": t(r.claim.key),
                    "as_stated": t(r.claim.text),
                    "unit": t(r.unit),
                    "measured": cell(r.measured[i]),
                    "accepted_lower": cell(r.claim.lower),
                    "accepted_upper": cell(r.claim.upper),
                    "excess": cell(r.excess[i]),
                    "outcome": r.outcome[i],
                    "reason": t(r.reason[i]),
                }
            )
    return buf.getvalue() + csv_notes()
