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


# ----------------------------------------------------------------- CLI conventions

COMMANDS = ["inspect", "convert", "check", "claims", "lot", "criteria new", "criteria explain", "mix", "series",
            "history list", "history trend"]


def test_version_prints_the_package_version():
    import lumeval

    r = run_cli("--version")
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == f"lumeval {lumeval.__version__}"  # exact by construction


def test_help_has_no_python_type_names_and_offers_completion():
    top = run_cli("--help")
    assert "--install-completion" in top.stdout and "--version" in top.stdout
    for cmd in COMMANDS:
        r = run_cli(*cmd.split(), "--help")
        assert r.returncode == 0, (cmd, r.stderr)
        for bad in ("<list[", "<path>", "<int>", "<float>", "<text>", "<str>", "list[Path]", "{files}", "int range",
                    "float range"):
            assert bad not in r.stdout, (cmd, bad)


def test_one_meaning_per_short_option_across_commands():
    import typer.main

    from lumeval.cli import app

    meaning: dict[str, set[str]] = {}

    def walk(cmd):
        for p in getattr(cmd, "params", ()):
            longs = [o for o in p.opts if o.startswith("--")]
            for s in (o for o in p.opts if len(o) == 2 and o.startswith("-")):
                meaning.setdefault(s, set()).update(longs)
        for sub in getattr(cmd, "commands", {}).values():
            walk(sub)

    walk(typer.main.get_command(app))
    assert meaning["-c"] == {"--criteria"}
    clash = {s: m for s, m in meaning.items() if len(m) > 1}
    assert not clash, clash


def test_written_files_are_announced_unless_quiet(tmp_path):
    spd = DEMO / "downlights" / "candidate_A_aurora_3000K.csv"
    crit = DEMO / "tender_criteria.toml"
    r = run_cli("check", spd, "-c", crit, "--html", tmp_path / "a.html", "-o", tmp_path / "a.txt")
    assert r.returncode in (0, 1), r.stderr
    assert f"HTML report written to {tmp_path / 'a.html'}" in r.stderr
    assert f"report written to {tmp_path / 'a.txt'}" in r.stderr
    assert r.stdout == ""
    q = run_cli("check", spd, "-c", crit, "--html", tmp_path / "b.html", "--quiet")
    assert (tmp_path / "b.html").is_file() and "written to" not in q.stderr
    q2 = run_cli("--quiet", "check", spd, "-c", crit, "--html", tmp_path / "c.html")
    assert (tmp_path / "c.html").is_file() and "written to" not in q2.stderr
    c = run_cli("convert", spd, tmp_path / "a.json")
    assert c.returncode == 0 and f"1 spectrum written to {tmp_path / 'a.json'}" in c.stderr


def test_inspect_output_option_writes_what_it_would_print(tmp_path):
    spd = DEMO / "downlights" / "candidate_A_aurora_3000K.csv"
    shown = run_cli("inspect", spd, "-f", "csv")
    r = run_cli("inspect", spd, "-f", "csv", "-o", tmp_path / "i.csv")
    assert r.returncode == 0, r.stderr
    assert r.stdout == "" and "report written to" in r.stderr
    assert (tmp_path / "i.csv").read_text(encoding="utf-8") == shown.stdout
    t = run_cli("inspect", spd, "--output", tmp_path / "i.txt")
    assert t.returncode == 0 and "Cautions" in (tmp_path / "i.txt").read_text(encoding="utf-8")


def test_claims_as_written_on_datasheets_and_claims_html(tmp_path, colour):
    """CIE 15:2004 Table T.8.1 (secondary, shared/reference-values.md): FL8 has Ra 95 and CCT 5000 K,
    FL4 Ra 51. Datasheet spellings are read; '>90' is supported for FL8 and contradicted for FL4."""
    from .conftest import cie_illuminant

    files = []
    for name in ("FL8", "FL4"):
        wl, s = cie_illuminant(colour, name)
        p = tmp_path / f"{name}.csv"
        p.write_text("wavelength_nm,value\n" + "".join(f"{w:g},{v!r}\n" for w, v in zip(wl, s)), encoding="utf-8")
        files.append(p)
    claims = tmp_path / "claims.toml"
    claims.write_text('lumeval_claims = 1\n[claims]\nCRI = ">90"\nCCT = "5000K ± 200K"\nR9 = "≥ 0"\n', encoding="utf-8")
    r = run_cli("claims", *files, "--claims", claims, "-f", "csv", "--html", tmp_path / "c.html")
    assert r.returncode == 1, r.stderr  # FL4 contradicts the CRI claim
    import csv
    import io

    got = {(row["spectrum"], row["claim"]): row["outcome"] for row in csv.DictReader(io.StringIO(r.stdout))}
    assert got[("FL8", "CRI")] == "supported" and got[("FL4", "CRI")] == "contradicted"
    assert got[("FL8", "CCT")] == "supported"
    assert got[("FL8", "R9")] == "supported"
    html = (tmp_path / "c.html").read_text(encoding="utf-8")
    assert "FL8" in html and "FL4" in html and "CRI = &gt;90" in html
    assert "HTML report written to" in r.stderr


# ----------------------------------------------------------------- human wording of check

def test_check_shows_clause_notes_plurals_and_sources_once(tmp_path):
    spd = DEMO / "downlights" / "candidate_A_aurora_3000K.csv"
    r = run_cli("check", spd, "-c", DEMO / "tender_criteria.toml")
    assert r.returncode in (0, 1), r.stderr
    flat = " ".join(r.stdout.split())
    # the clause note of the criteria file travels with its verdict
    assert "note: Book spines and timber finishes: saturated reds matter." in flat
    assert "all 1 spectra" not in flat and "the spectrum meets every requirement" in flat
    src = r.stdout[r.stdout.index("Sources of the limits"):]
    lines = [ln.strip() for ln in src.splitlines() if ln.strip().startswith("- ")]
    assert "- ANSI C78.377" not in lines and "- ANSI/IES TM-30-20" not in lines  # bare duplicates dropped
    assert "s006112" not in r.stdout and "luxpy" not in r.stdout  # no other program's table named
    one = tmp_path / "one.toml"
    one.write_text('lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 80\n', encoding="utf-8")
    r1 = run_cli("check", spd, "-c", one)
    assert "all 1 requirements" not in r1.stdout and "the requirement is met" in r1.stdout


def test_claims_html_speaks_of_claims_and_gives_the_terminals_numbers(tmp_path, colour):
    """The claims HTML report: verdicts as claims supported / contradicted (the terminal's and
    JSON's words), the bounds each claim was accepted as (with how it was read), and by how much
    a contradicted claim misses, signed as the terminal, JSON (``excess``) and CSV give it:
    measured − stated bound (the page gave its opposite under "margin", and the reading instead
    of the bounds; found by a review). FL4: Ra 51 (CIE 15:2004 Table T.8.1, secondary,
    shared/reference-values.md): "Ra <= 40" is exceeded by about 11 (+), "Ra >= 60" missed by
    about 9 (−); each is accepted half a unit beyond the number written (docs/criteria.md)."""
    import html as html_mod
    import json

    import pytest

    from .conftest import cie_illuminant

    wl, s = cie_illuminant(colour, "FL4")
    spd = tmp_path / "FL4.csv"
    spd.write_text("wavelength_nm,value\n" + "".join(f"{w:g},{v!r}\n" for w, v in zip(wl, s)), encoding="utf-8")
    for claim, bound, accepted in (('"<= 40"', 40.0, "≤ 40.5"), ('">= 60"', 60.0, "≥ 59.5")):
        claims = tmp_path / "claims.toml"
        claims.write_text(f"lumeval_claims = 1\n[claims]\nRa = {claim}\nlifetime_h = 50000\n", encoding="utf-8")
        out = tmp_path / "c.html"
        r = run_cli("claims", spd, "--claims", claims, "-f", "json", "--html", out)
        assert r.returncode == 1, r.stderr
        row = json.loads(r.stdout)["spectra"][0]["claims"][0]
        ra, excess = float(row["measured"]), float(row["excess"])
        assert excess == pytest.approx(ra - bound, rel=1e-12)
        text = re.sub(r"\s+", " ", html_mod.unescape(re.sub(r"<[^>]+>", " ", out.read_text(encoding="utf-8"))))
        assert "CONTRADICTED" in text and "NOT CHECKABLE" in text and "the datasheet over-claims" in text
        assert "FAIL" not in text and "criterion is not met" not in text
        assert f"Ra = {claim.strip(chr(34))} {accepted} (" in text, text[:3000]
        m = re.search(r"CONTRADICTED [0-9.]+ by how much ([-+−]?[0-9.]+)", text)
        assert m is not None, text[:3000]
        by = float(m.group(1).replace("−", "-"))
        assert by == pytest.approx(excess, abs=0.06)  # printed to the figure's precision (0.1)
        terminal = run_cli("claims", spd, "--claims", claims)
        assert f"{by:+.1f}" in terminal.stdout
