"""What a practitioner reads: report structure and CLI conventions, through the real CLI."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "spectra_demo"


def run_cli(*args, cwd=None, env=None):
    e = dict(os.environ, COLUMNS="120")
    e.update(env or {})
    return subprocess.run([sys.executable, "-m", "lumeval", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd or REPO, env=e, timeout=300)


def eight_spectra():
    files = sorted((DEMO / "downlights").glob("*.csv")) + sorted((DEMO / "lot_2026w48").glob("*.csv"))[:3]
    assert len(files) == 8
    return files


def test_check_report_of_eight_spectra_has_eight_sections_in_input_order(tmp_path):
    """A bid comparison stays per product: 8 spectra give 8 per-spectrum sections (no silent lot view),
    and every table lists the spectra in input order, the numbering of the figures."""
    files = eight_spectra()
    out = tmp_path / "r.html"
    r = run_cli("check", *files, "--criteria", DEMO / "tender_criteria.toml", "--html", out)
    assert r.returncode in (0, 1), r.stderr
    text = out.read_text(encoding="utf-8")
    ids = re.findall(r'<section class="sample" id="sample-(\d\d)"><h2>([^<]*)</h2>', text)
    assert [i for i, _ in ids] == [f"{k:02d}" for k in range(1, 9)]
    stems = [f.stem for f in files]
    assert [name for _, name in ids] == stems
    assert "spd-lot" not in text and "distributions" not in text
    # the key-figures table lists the spectra in the same (input) order
    key = text[text.index('id="figures-table"'):]
    key = key[:key.index("</table>")]
    pos = [key.index(s) for s in stems]
    assert pos == sorted(pos)
    # with 8 spectra the checks grid would be too wide: each section carries its own checks
    for k in range(1, 9):
        sec = text[text.index(f'id="sample-{k:02d}"'):]
        sec = sec[:sec.index("</section>")]
        assert "<h3>Checks</h3>" in sec


def test_lot_report_puts_lot_figures_and_outliers_before_per_sample_tables(tmp_path):
    out = tmp_path / "lot.html"
    r = run_cli("lot", DEMO / "lot_2026w48", "--criteria", DEMO / "lot_criteria.toml", "--html", out)
    assert r.returncode in (0, 1), r.stderr
    text = out.read_text(encoding="utf-8")
    order = [text.index(f'id="{k}"') for k in ("verdict", "lot", "charts", "figures-table", "provenance")]
    assert order == sorted(order)
    # the demo lot's planted outliers are named in the lot section, before the charts
    lot_sec = text[text.index('id="lot"'):text.index('id="charts"')]
    assert re.search(r"Outlier: AD30-w48-\d{3} \(", lot_sec)
