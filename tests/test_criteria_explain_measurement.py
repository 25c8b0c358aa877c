"""`lumeval criteria explain` states the measurement requirements a tender needs (issue 13, item 8):
spectral range and step with their basis, operating conditions, instrument calibration, number
of samples and the data the bidder supplies, with [SPECIFY: …] placeholders. Through the real
CLI (in-process); wording checks only (no numbers of the colour science are computed here).
"""

from __future__ import annotations

import re
from pathlib import Path

from tests.conftest import run_cli_in_process as run

ROOT = Path(__file__).resolve().parents[1]
TENDER = ROOT / "spectra_demo" / "tender_criteria.toml"
LOT = ROOT / "spectra_demo" / "lot_criteria.toml"


def explain(path, capsys) -> str:
    code, out, err = run(["criteria", "explain", path], capsys)
    assert code == 0, err
    return out


def section(md: str) -> str:
    start = md.index("## Measurement requirements")
    return md[start: md.index("\n## ", start + 1)]


def test_tender_gets_every_measurement_requirement_in_order(capsys):
    md = explain(TENDER, capsys)
    heads = [ln for ln in md.splitlines() if ln.startswith("## ")]
    assert heads.index("## Requirements") < heads.index("## Measurement requirements") < heads.index("## Cautions")
    m = section(md)
    for needle in ("380 nm to 780 nm", "5 nm or finer", "Operating conditions", "stabilisation", "ambient temperature",
                   "drive", "orientation", "calibration certificate traceable", "Number of samples",
                   "Data supplied by the bidder", "IES TM-27 XML"):
        assert needle in m, needle
    # the basis of the range and step, for each kind of figure the tender judges
    assert "CIE 13.3-1995 tabulates its test colour samples at 5 nm" in m  # Ra, R9 clauses
    assert "CIE 224:2017 and ANSI/IES TM-30" in m  # Rf, Rg, design-intent clauses
    assert "CIE 15:2004" in m  # the chromaticity quadrangle
    assert "quoted from memory" in m and "common practice, no source" in m
    # placeholders: clearly marked, bold, several of them
    marks = re.findall(r"\*\*\[SPECIFY: [^\]]+\]\*\*", m)
    assert len(marks) >= 8
    assert m.count("[SPECIFY:") == len(marks)  # none unmarked


def test_what_is_derived_follows_the_clauses(tmp_path, capsys):
    ra_only = tmp_path / "ra.toml"
    ra_only.write_text('lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 80\n', encoding="utf-8")
    m = section(explain(ra_only, capsys))
    assert "CIE 13.3-1995" in m and "TM-30" not in m and "W/(m²·nm)" not in m
    assert "samples per product offered" in m

    lux = tmp_path / "lux.toml"
    lux.write_text('lumeval_criteria = 1\n[[clause]]\nid = "E"\nfigure = "illuminance_lx"\nmin = 300\n',
                   encoding="utf-8")
    m = section(explain(lux, capsys))
    assert "spectral irradiance in W/(m²·nm)" in m and "absolute calibration" in m

    m = section(explain(LOT, capsys))
    assert "statistics of many samples" in m


def test_written_to_a_file_with_the_same_text(tmp_path, capsys):
    out = tmp_path / "tender.md"
    code, _, err = run(["--quiet", "criteria", "explain", TENDER, "-o", out], capsys)
    assert code == 0, err
    assert "## Measurement requirements" in out.read_text(encoding="utf-8")
