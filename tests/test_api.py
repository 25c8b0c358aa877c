"""The Python API (lumeval.api) outside the command line: no CLI library imported, the commands
are thin layers over it, a lot report draws the run it belongs to, and the computation's own
warnings reach every report."""

from __future__ import annotations

import dataclasses
import io
import json
import subprocess
import sys
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
DEMO = sorted((REPO / "spectra_demo" / "downlights").glob("*.csv"))
TENDER = REPO / "spectra_demo" / "tender_criteria.toml"


def test_api_imports_no_cli_library():
    code = f"""
import sys
import lumeval, lumeval.api
ev = lumeval.inspect([{str(DEMO[0])!r}])
res = lumeval.check(ev, {str(TENDER)!r})
res2 = lumeval.check([{str(DEMO[1])!r}], {str(TENDER)!r})
run = lumeval.lot([{str(DEMO[0])!r}, {str(DEMO[1])!r}], {str(TENDER)!r}, keep_evaluation=True)
import lumeval.render.tables, lumeval.render.lot_report
lumeval.render.tables.to_json(ev); lumeval.render.lot_report.lot_json(run)
bad = sorted(m for m in sys.modules if m.split(".")[0] in ("typer", "click", "rich"))
print(len(ev), len(res.verdicts), len(res2.verdicts), len(run), bad)
"""
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO, check=True)
    assert r.stdout.split() == ["1", "1", "1", "2", "[]"], r.stdout + r.stderr


def test_one_judgement_and_deprecated_names():
    import warnings

    import lumeval
    from lumeval.criteria import load_criteria

    crit = load_criteria(TENDER)
    ev = lumeval.inspect(DEMO[:2])
    a = lumeval.check(ev, crit)
    b = lumeval.check(DEMO[:2], TENDER)
    assert a.verdicts == b.verdicts
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        c = lumeval.check_files(DEMO[:2], TENDER)
        from lumeval.criteria import check as old_check

        d = old_check(ev, crit)
    assert c.verdicts == a.verdicts == d.verdicts
    assert sum(issubclass(w.category, DeprecationWarning) for w in caught) == 2


def _wide_csv(path: Path) -> None:
    """A wide CSV: two Planckian columns (Planck's law with c2 = 1.4388e-2 m K, CIE 15:2004) and
    one column of zeros, which cannot be a spectrum."""
    wl = np.arange(380.0, 781.0, 5.0)

    def planck(T):
        lam = wl * 1e-9
        v = 1.0 / (lam**5 * np.expm1(1.4388e-2 / (lam * T)))
        return v / v.max()

    a, b = planck(3000.0), planck(4000.0)
    rows = ["wavelength_nm,warm,cool,dead"] + [f"{w:g},{x:.8g},{y:.8g},0" for w, x, y in zip(wl, a, b)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")


def test_lot_html_on_a_wide_csv_with_a_bad_column_behaves_like_the_run_without_it(tmp_path):
    wide = tmp_path / "wide.csv"
    _wide_csv(wide)
    cmd = [sys.executable, "-m", "lumeval", "lot", str(wide), "--format", "json", "--quiet"]
    plain = subprocess.run(cmd, capture_output=True, text=True, cwd=REPO)
    html = tmp_path / "r.html"
    with_html = subprocess.run(cmd + ["--html", str(html)], capture_output=True, text=True, cwd=REPO)
    assert plain.returncode == with_html.returncode == 2  # one input could not be read
    assert plain.stderr == with_html.stderr
    doc, doc_h = json.loads(plain.stdout), json.loads(with_html.stdout)
    assert [s["name"] for s in doc["samples"]] == [s["name"] for s in doc_h["samples"]] == ["warm", "cool"]
    assert doc["unreadable"] == doc_h["unreadable"] and "dead" in doc["unreadable"][0]["source"]
    page = html.read_text(encoding="utf-8")
    assert "warm" in page and "cool" in page


def test_lot_report_draws_the_run_it_belongs_to(tmp_path):
    """The evaluation a lot run keeps holds the judged samples with the very numbers of the lot
    JSON (no second evaluation)."""
    import lumeval

    wide = tmp_path / "wide.csv"
    _wide_csv(wide)
    run = lumeval.lot([wide, DEMO[0]], keep_evaluation=True, batch_spectra=1)
    ev = run.evaluation
    assert ev is not None and ev.names == run.names == ("warm", "cool", ev.names[2])
    for k in ("cct_K", "duv", "Ra", "Rf"):
        np.testing.assert_array_equal(ev.figure(k), run.figures[k])  # the same numbers, not recomputed
    assert lumeval.lot([wide]).evaluation is None  # kept only when asked


def test_run_warnings_reach_every_report():
    from rich.console import Console

    import lumeval
    from lumeval.criteria import load_criteria
    from lumeval.render import html as H
    from lumeval.render import verdicts as rv
    from lumeval.render.tables import to_csv, to_json
    from lumeval.render.terminal import inspect_renderables

    msg = "computation warning: a test warning of the vectorised run"
    ev = dataclasses.replace(lumeval.inspect(DEMO[:1]), run_warnings=(msg,))
    assert json.loads(to_json(ev))["run_warnings"] == [msg]
    assert msg in to_csv(ev)
    con = Console(file=io.StringIO(), width=200, color_system=None)
    for r in inspect_renderables(ev):
        con.print(r)
    assert msg in con.file.getvalue()
    assert msg in H.render_html_report(ev)
    res = lumeval.check(ev, load_criteria(TENDER))
    assert msg in json.loads(rv.check_to_json(res))["notes"]


def test_public_names_are_pinned():
    import lumeval

    assert lumeval.__all__ == sorted([
        "CheckRun", "ComputationError", "CriteriaError", "DecisionRule", "Evaluation", "GridError", "InputError", "InstrumentModel",
        "LotRun", "LumevalError", "PhotometryResult", "SpectrumSet", "TM30Result", "cct_duv_ohno", "check", "cie2017_rf",
        "claims", "convert", "evaluate", "inspect", "load_claims", "load_criteria", "load_instrument", "lot",
        "list_lots", "lot_from_evaluation", "lot_record", "lot_statistics", "mix_files", "PreparedSpectra", "photometry", "planck_exitance", "planckian_uv", "prepare", "prepare_groups",
        "propagate_uncertainty", "read_many", "read_spectra", "record_lot", "run_lot", "series_files", "tm30", "trend", "tristimulus", "validate_report",
        "write_html_report", "write_outputs", "write_plots", "write_spectra",
    ]) + ["__version__"]
    for name in lumeval.__all__:
        assert getattr(lumeval, name) is not None, name
