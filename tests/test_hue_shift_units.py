"""The local hue shift Rhs,h has one unit everywhere: dimensionless (ANSI/IES TM-30-18 defines it
as the tangential component of the bin-average shift divided by the reference average's chroma,
a length over a length; colour-science's ``R_hs`` computes the same quotient). Terminal, HTML,
JSON schema, CSV header, figure registry and documents must agree; nothing calls it radians.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from lumeval import figures
from lumeval.figures import HUE_SHIFT_UNIT
from tests.conftest import run_cli_in_process as run

ROOT = Path(__file__).resolve().parents[1]
SPD = ROOT / "spectra_demo" / "downlights" / "candidate_A_aurora_3000K.csv"
DOCS = sorted((ROOT / "docs").glob("*.md")) + [ROOT / "README.md"]


def test_registry_says_dimensionless_for_every_bin():
    assert HUE_SHIFT_UNIT == "dimensionless"
    for j in range(1, 17):
        f = figures.FIGURES[f"Rhs_h{j}"]
        assert f.unit == ""  # a plain number: no unit in any heading
        assert HUE_SHIFT_UNIT in f.description
        assert f.heading == f"Rhs,h{j}"


def test_no_document_or_module_gives_the_hue_shift_in_radians():
    pattern = re.compile(r"(Rhs|hue shift)[^\n|]{0,60}\|?[^\n|]{0,40}\b(rad|radians?)\b(?! of hue)", re.I)
    texts = [(p, p.read_text(encoding="utf-8")) for p in DOCS]
    texts += [(p, p.read_text(encoding="utf-8")) for p in (ROOT / "lumeval").rglob("*.py")]
    texts += [(p, p.read_text(encoding="utf-8")) for p in (ROOT / "lumeval" / "schemas").glob("*.json")]
    for p, text in texts:
        for line in text.splitlines():
            m = pattern.search(line)
            # "about the hue-angle change in radians" explains the size; a unit would read "… rad"
            if m and "≈" not in line and "about" not in line and "approx" not in line:
                pytest.fail(f"{p.relative_to(ROOT)}: {line.strip()}")


def test_criteria_docs_figure_table_units_match_the_registry():
    text = (ROOT / "docs" / "criteria.md").read_text(encoding="utf-8")
    rows = re.findall(r"^\| `([A-Za-z_0-9]+)`[^|]*\| [^|]*\| ([^|]*)\|$", text, re.M)
    seen = {}
    for name, unit in rows:
        if name in figures.FIGURES:
            seen[name] = unit.strip()
            assert unit.strip() == figures.FIGURES[name].unit, name
    assert seen.get("Rhs_h1") == "" and seen.get("Rcs_h1") == "%"


def test_schema_describes_the_hue_shift_as_dimensionless():
    from lumeval.schemas import schema

    text = json.dumps(schema("inspect"))
    m = re.search(r'"Rhs_h": \{"description": "([^"]*)"', text)
    assert m and HUE_SHIFT_UNIT in m.group(1)


def test_reports_agree(tmp_path, capsys):
    code, out, err = run(["inspect", SPD, "--wide"], capsys)
    assert code == 0, err
    assert f"hue shift Rhs,h, {HUE_SHIFT_UNIT}" in " ".join(out.split())
    code, out, err = run(["inspect", SPD, "-f", "csv"], capsys)
    header = out.splitlines()[0].split(",")
    assert [h for h in header if h.startswith("Rhs")] == [f"Rhs_h{j}" for j in range(1, 17)]
    html = tmp_path / "r.html"
    code, _, err = run(["inspect", SPD, "--html", html, "-q"], capsys)
    assert code == 0, err
    page = html.read_text(encoding="utf-8")
    assert f"hue shift Rhs,h ({HUE_SHIFT_UNIT})" in page
    assert not re.search(r"Rhs,h[^<]{0,20}\brad\b", page)
