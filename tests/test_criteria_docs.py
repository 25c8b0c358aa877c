"""docs/criteria.md is checked against the code: every key, kind, figure, table value and
example the code knows appears in the reference, and nothing the reference lists is unknown."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from lumeval.criteria import CLAUSE_KINDS, parse_claims, parse_criteria, presets, regions
from lumeval.criteria.claims import NOT_CHECKABLE_KEYS, SUPPLIER_KEYS
from lumeval.criteria.loader import IDENTIFICATION_KEYS
from lumeval.criteria.model import COMMON_KEYS
from lumeval.engine import FIGURE_NAMES

DOC = (Path(__file__).resolve().parents[1] / "docs" / "criteria.md").read_text(encoding="utf-8")


def section(heading: str) -> str:
    """Text from a heading line (exact) to the next heading of the same or higher level."""
    lines = DOC.splitlines()
    idx = lines.index(heading)
    level = len(heading) - len(heading.lstrip("#"))
    out = []
    for ln in lines[idx + 1:]:
        m = re.match(r"^(#+) ", ln)
        if m and len(m.group(1)) <= level:
            break
        out.append(ln)
    return "\n".join(out)


def first_column_keys(text: str) -> set[str]:
    """`key` names in the first column of the first Markdown table in ``text``."""
    keys = set()
    for ln in text.splitlines():
        m = re.match(r"^\|\s*`([^`]+)`\s*\|", ln)
        if m:
            keys.add(m.group(1))
    return keys


@pytest.mark.parametrize("kind", sorted(CLAUSE_KINDS))
def test_every_kind_documented_with_exactly_its_keys(kind):
    assert first_column_keys(section(f"### Kind `{kind}`")) == set(CLAUSE_KINDS[kind].KEYS)


def test_common_identification_claims_and_supplier_keys():
    assert first_column_keys(section("### Keys of every clause")) == set(COMMON_KEYS)
    assert first_column_keys(section("### `[identification]`")) == set(IDENTIFICATION_KEYS)
    assert first_column_keys(section("### `[claims]` keys")) == set(NOT_CHECKABLE_KEYS)
    assert first_column_keys(section("### `[supplier]` keys")) == set(SUPPLIER_KEYS)
    kinds_cell = next(ln for ln in section("### Keys of every clause").splitlines() if ln.startswith("| `kind`"))
    assert set(re.findall(r"`(\w+)`", kinds_cell)) - {"kind"} == set(CLAUSE_KINDS)


def test_every_figure_documented_and_no_unknown_figure():
    text = section("### Figures")
    named: set[str] = set()
    for ln in text.splitlines():
        if not ln.startswith("| `"):
            continue
        cell = ln.split("|")[1]
        rng = re.findall(r"`([A-Za-z_]+?)(\d+)` … `([A-Za-z_]+?)(\d+)`", cell)
        for p1, lo, p2, hi in rng:
            assert p1 == p2
            named |= {f"{p1}{k}" for k in range(int(lo), int(hi) + 1)}
        if not rng:
            named |= set(re.findall(r"`([^`]+)`", cell))
    assert named == set(FIGURE_NAMES)


def test_ansi_table_in_doc_matches_code():
    rows = re.findall(r"^\| (\d{4}) \| (\d{4}) \| (\d+) \| (\d\.\d{4}) \|$", DOC, flags=re.M)
    got = {int(n): (float(t), float(tol), float(d)) for n, t, tol, d in rows}
    want = {n: (c.target_cct_K, c.tolerance_K, c.target_duv) for n, c in regions.ANSI_C78377_2017.items()}
    assert got == want
    assert "57700/T² − 44.6/T + 0.00854" in DOC and "ANSI C78.377-2017" in DOC


def test_sdcm_table_in_doc_matches_code():
    rows = re.findall(r"^\| (F\d{4}) \| ([\d.]+) \| ([\d.]+) \| ([−\d.]+)·10⁴ \| ([−\d.]+)·10⁴ \| ([−\d.]+)·10⁴ \|$", DOC, flags=re.M)
    assert {r[0] for r in rows} == set(regions.IEC60081_CENTRES)
    for name, x, y, g11, g12, g22 in rows:
        e = regions.iec60081_ellipse(name)
        num = lambda s: float(s.replace("−", "-"))  # noqa: E731
        assert (float(x), float(y)) == tuple(e.centre_xy)
        assert (num(g11) * 1e4, num(g12) * 1e4, num(g22) * 1e4) == pytest.approx((e.g11, e.g12, e.g22))


def test_annex_e_table_in_doc_matches_presets():
    for level, conds in presets.TM30_ANNEX_E.items():
        row = re.search(rf"^\| {level} \|(.*)\|$", DOC, flags=re.M)
        assert row, level
        cells = [c.strip() for c in row.group(1).split("|")]
        cols = {"Rf": cells[0], "Rg": cells[1], "Rcs_h1": cells[2], "Rf_h1": cells[3]}
        documented = {k: v for k, v in cols.items() if v}
        assert set(documented) == {c.figure for c in conds}, level
        for c in conds:
            nums = [float(n.replace("−", "-")) for n in re.findall(r"[−-]?\d+", documented[c.figure])]
            assert nums == [b for b in (c.lower, c.upper) if b is not None], (level, c.figure)


def test_doc_examples_parse():
    blocks = re.findall(r"```toml\n(.*?)```", DOC, flags=re.S)
    crit = [b for b in blocks if b.startswith("# criteria example")]
    claims = [b for b in blocks if b.startswith("# claims example")]
    assert crit and claims
    for b in crit:
        parse_criteria(b, "doc")
    for b in claims:
        parse_claims(b, "doc")


def test_csv_columns_documented_in_order():
    from lumeval.render.claims_report import CLAIMS_CSV_COLUMNS
    from lumeval.render.verdicts import CHECK_CSV_COLUMNS

    flat = " ".join(DOC.split())
    assert ", ".join(CHECK_CSV_COLUMNS) in flat
    assert ", ".join(CLAIMS_CSV_COLUMNS) in flat


def test_top_level_keys_documented():
    from lumeval.criteria.loader import TOP_LEVEL_KEYS

    top = " ".join(section("## Criteria file reference").split("### ")[0].split())
    for k in TOP_LEVEL_KEYS:
        assert (f"`{k} = 1`" in top) or (f"`[{k}]`" in top) or (f"`[[{k}]]`" in top), k
