"""The HTML report: valid HTML, self-contained, verdict first, provenance and cautions present,
written atomically; --plots writes SVG and PNG.

Outside references: html5lib (a WHATWG-conformant parser, strict mode raises on any parse
error), the ``sha256sum`` tool of GNU coreutils for the file hashes, numpy's own
``__version__``.
"""

from __future__ import annotations

import glob
import hashlib
import os
import re
import shutil
import subprocess
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

from lumeval.errors import UsageError
from lumeval.render import html as H

ROOT = Path(__file__).resolve().parent.parent
DEMO = sorted(glob.glob(str(ROOT / "spectra_demo" / "downlights" / "*.csv")))

CRITERIA = """lumeval_criteria = 1
[identification]
project = "report test"
[[clause]]
figure = "Ra"
min = 80
[[clause]]
figure = "R9"
min = 50
[[clause]]
kind = "ansi_quadrangle"
nominal_cct = 3000
"""


@pytest.fixture(scope="module")
def demo_eval():
    if not DEMO:
        pytest.skip("spectra_demo/downlights has no CSV files")
    from lumeval.api import inspect as inspect_files

    return inspect_files(DEMO)


@pytest.fixture(scope="module")
def check_result(demo_eval):
    from lumeval.criteria import check, parse_criteria

    return check(demo_eval, parse_criteria(CRITERIA, file="crit.toml"))


@pytest.fixture(scope="module")
def report(demo_eval, check_result, tmp_path_factory):
    from lumeval.criteria.regions import ansi_quadrangle

    d = tmp_path_factory.mktemp("report")
    p = H.write_html_report(d / "report.html", demo_eval, verdicts=check_result, regions=[ansi_quadrangle(3000)],
                            command="lumeval check crit.toml spectra_demo/downlights/*.csv")
    return p, p.read_text(encoding="utf-8")


def test_report_parses_as_html5_without_errors(report):
    import html5lib  # a test dependency (pyproject [test]): fail, never skip, when it is missing
    parser = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False)
    doc = parser.parse(report[1])  # raises html5lib.html5parser.ParseError on any error
    assert doc.find("body") is not None
    assert len(doc.findall(".//figure")) >= 3


def test_every_inline_svg_is_well_formed_xml_and_ids_are_unique(report):
    text = report[1]
    svgs = re.findall(r"<svg\b.*?</svg>", text, flags=re.S)
    assert len(svgs) == text.count("<figure ")
    for s in svgs:
        ET.fromstring(s)
    ids = re.findall(r'\bid="([^"]+)"', text)
    dup = {i for i in ids if ids.count(i) > 1}
    assert not dup, sorted(dup)[:5]
    # every in-document reference resolves to an id of the document
    refs = set(re.findall(r'href="#([^"]+)"', text)) | set(re.findall(r"url\(#([^)]+)\)", text))
    assert refs <= set(ids)


def _assert_fetches_nothing(text):
    low = text.lower()
    for tag in ("<script", "<link", "<iframe", "<object", "<embed", "<img", "@import", "@font-face"):
        assert tag not in low, tag
    # every src/href/url() is an in-document fragment or inline data (a raster embedded in an
    # SVG figure); namespace declarations (xmlns) are not fetched
    external = re.findall(r'\b(?:src|href|xlink:href)\s*=\s*"(?!#|data:image/png;base64,)([^"]*)"', text)
    external += re.findall(r"url\(\s*['\"]?(?!#)([^)'\"]*)", text)
    assert external == []
    assert not re.search(r"(?<!xmlns=\")(?<!xmlns:xlink=\")https?://", text.replace('xmlns="http://www.w3.org/2000/svg"', "")
                         .replace('xmlns:xlink="http://www.w3.org/1999/xlink"', ""))


def test_report_fetches_nothing_at_view_time(report):
    _assert_fetches_nothing(report[1])


def test_order_verdict_then_figures_then_provenance_then_cautions(report):
    text = report[1]
    pos = [text.index(k) for k in ('id="verdict"', 'id="charts"', 'id="provenance"', 'id="cautions"')]
    assert pos == sorted(pos)


def test_verdicts_in_words_and_symbols(report, check_result):
    text = report[1]
    verdict = text[text.index('id="verdict"'): text.index('id="figures-table"')]
    # the demo fails R9 >= 50 for some candidates (see spectra_demo/generate.py): overall FAIL
    assert check_result.overall == "fail"
    assert "✗</span> FAIL" in verdict and "✓</span> PASS" in verdict
    assert "At least one criterion is not met." in verdict
    n_rows = sum(len(r.outcome) for r in check_result.results)
    n_fail = sum(o == "fail" for r in check_result.results for o in r.outcome)
    assert f"{n_rows} checks" in verdict and f"{n_fail} fail" in verdict
    import html as _html

    for r in check_result.results:
        assert _html.escape(r.label) in verdict


def test_provenance_hashes_versions_methods_time(report, demo_eval):
    text = report[1]
    prov = text[text.index('id="provenance"'): text.index('id="cautions"')]
    tool = shutil.which("sha256sum")
    for f in DEMO:
        if tool:
            expected = subprocess.run([tool, f], capture_output=True, text=True, check=True).stdout.split()[0]
        else:  # pragma: no cover - coreutils is on every Debian machine
            expected = hashlib.sha256(Path(f).read_bytes()).hexdigest()
        assert expected in prov, f
    assert f">{np.__version__}<" in prov
    import colour

    assert f">{colour.__version__}<" in prov
    assert "CIE 13.3-1995" in prov and "Ohno (2014)" in prov
    assert re.search(r"20\d\d-\d\d-\d\dT\d\d:\d\d:\d\d[+-]\d\d:\d\d", prov)
    assert "lumeval check crit.toml" in prov


def test_cautions_present(report):
    c = report[1][report[1].index('id="cautions"'):]
    for needle in ("IEC 62471", "flicker", "electrical", "measured spectrum", "contract", "local codes"):
        assert needle in c, needle


def test_key_figures_shown_with_standard_rounding(report, demo_eval):
    text = report[1]
    for i, name in enumerate(demo_eval.spectra.names):
        assert f"<td>{name}</td>" in text
        assert f'<td class="n">{demo_eval.x[i]:.4f}</td>' in text
        assert f'<td class="n">{demo_eval.cct_K[i]:.0f}</td>' in text


def test_warnings_travel_into_the_report(demo_eval, tmp_path):
    from dataclasses import replace

    w = list(demo_eval.warnings)
    w[0] = w[0] + ("interpolated from 2 nm to 1 nm (test note)",)
    ev = replace(demo_eval, warnings=tuple(w))
    text = H.render_html_report(ev, per_sample_max=0)
    assert "interpolated from 2 nm to 1 nm (test note)" in text


def test_generic_rows_lot_table_and_lot_figures(demo_eval):
    names = demo_eval.spectra.names
    ra = demo_eval.figure("Ra")
    rows = [{"sample": n, "clause": "Ra ≥ 85", "figure": "Ra", "measured": float(ra[i]), "limit": "≥ 85", "lower": 85,
             "margin": float(ra[i] - 85), "passed": bool(ra[i] >= 85)} for i, n in enumerate(names)]
    lot = {"title": "Lot statistics (test)", "rows": [{"figure": "Ra", "mean": float(np.mean(ra)), "min": float(ra.min()),
                                                       "verdict": "pass"}], "notes": ["n = 5"]}
    text = H.render_html_report(demo_eval, verdicts=rows, lot=lot)
    assert "Lot statistics (test)" in text and "n = 5" in text
    assert 'data-figure="distributions"' in text
    # lot mode: no per-sample sections, centroid drawn
    assert 'id="sample-01"' not in text and "centroid" in text
    failing = sum(not r["passed"] for r in rows)
    assert text.count('<tr class="fail">') >= failing


def test_no_criteria_means_not_judged(demo_eval):
    text = H.render_html_report(demo_eval, per_sample_max=1)
    assert "NOT JUDGED" in text and "No acceptance criteria were given" in text


def test_write_is_atomic_and_keeps_the_old_file_on_failure(demo_eval, tmp_path, monkeypatch):
    target = tmp_path / "r.html"
    target.write_text("old")

    def boom(*a, **k):
        raise RuntimeError("render failed")

    monkeypatch.setattr(H, "render_html_report", boom)
    with pytest.raises(RuntimeError):
        H.write_html_report(target, demo_eval)
    assert target.read_text() == "old"
    assert os.listdir(tmp_path) == ["r.html"]


def test_write_refuses_missing_directory_cleanly(demo_eval, tmp_path):
    with pytest.raises(UsageError) as e:
        H.write_html_report(tmp_path / "nope" / "r.html", demo_eval)
    assert "does not exist" in e.value.message and "--html" in e.value.message
    assert not (tmp_path / "nope").exists()
    with pytest.raises(UsageError):
        H.write_plots(tmp_path / "a" / "b", demo_eval)
    assert not (tmp_path / "a").exists()


def test_write_plots_writes_svg_and_png_per_figure(demo_eval, tmp_path):
    sub = demo_eval  # five spectra: per-sample figures
    paths = H.write_plots(tmp_path / "plots", sub, per_sample_max=1)  # lot mode: 8 figures
    stems = sorted({p.stem for p in paths})
    assert stems == sorted(["chromaticity", "chromaticity-xy", "fidelity-gamut", "spd-lot", "cri-lot", "hue-bins-lot",
                            "colour-vectors-lot", "distributions"])
    for p in paths:
        data = p.read_bytes()
        if p.suffix == ".png":
            assert data[:8] == b"\x89PNG\r\n\x1a\n"
        else:
            ET.fromstring(data)
    assert not [f for f in os.listdir(tmp_path / "plots") if f.endswith(".tmp")]


def test_many_samples_list_only_the_checks_that_did_not_pass(demo_eval, check_result):
    text = H.render_html_report(demo_eval, verdicts=check_result, per_sample_max=2)
    outcomes = [o for r in check_result.results for o in r.outcome]
    not_passed = sum(o != "pass" for o in outcomes)
    assert f"Checks that did not pass ({not_passed} of {len(outcomes)})" in text
    assert text.count('<tr class="fail">') >= sum(o == "fail" for o in outcomes)


def test_undefined_figures_render_as_na(colour, tmp_path):
    """A narrow blue LED lies nearest the Planckian locus beyond its table: CCT, CRI and TM-30 are
    undefined and the report must say n/a, draw no reference, and still be valid. A narrow green
    LED is far from the locus (|Duv| > 0.05): CCT is undefined (CIE 15:2004), CRI and TM-30 are
    given against the nearest Planckian reference and flagged outside the validity range."""
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    wl = np.arange(380.0, 781.0, 1.0)
    green = np.exp(-0.5 * ((wl - 530.0) / 12.0) ** 2)
    blue = np.exp(-0.5 * ((wl - 450.0) / 10.0) ** 2)
    sd_a = colour.SDS_ILLUMINANTS["A"].copy().align(colour.SpectralShape(380, 780, 1))
    ev = evaluate(SpectrumSet(wl, np.stack([blue, np.asarray(sd_a.values), green]), ("blue", "A", "green"), ("b", "a", "g")))
    assert not np.isfinite(ev.cct_K[0]) and np.isfinite(ev.cct_K[1]) and not np.isfinite(ev.cct_K[2])
    p = H.write_html_report(tmp_path / "r.html", ev)
    text = p.read_text(encoding="utf-8")
    import html5lib  # a test dependency (pyproject [test]): fail, never skip, when it is missing
    html5lib.HTMLParser(strict=True).parse(text)
    chrom_row, render_row, phot_row = re.findall(r"<tr><td>blue</td>(.*?)</tr>", text)
    assert chrom_row.count("n/a") == 2  # CCT and Duv: nearest the locus beyond its table (the nearest
    # ANSI category and the SDCM steps are still defined)
    assert render_row.count("n/a") == 5  # Ra, Re, R9, Rf, Rg need a reference
    assert phot_row.count("n/a") == 0
    assert "CCT undefined" in text  # the engine's reason travels into the notes
    chrom_row, render_row, phot_row = re.findall(r"<tr><td>green</td>(.*?)</tr>", text)
    assert chrom_row.count("n/a") == 1 and render_row.count("n/a") == 0 and phot_row.count("n/a") == 0
    assert "OUTSIDE THE VALIDITY RANGE" in text
    figs = H.report_figures(ev)
    spd_blue = next(f for f in figs if f.key.startswith("spd-01")).figure
    assert not [ln for ln in spd_blue.axes[0].get_lines() if ln.get_gid() == "reference-spd"]


def test_validate_targets_before_any_write(tmp_path):
    H.validate_targets(html=tmp_path / "r.html", plots=tmp_path / "plots")  # fine: parents exist
    (tmp_path / "afile").write_text("x")
    for kwargs in ({"html": tmp_path / "no" / "r.html"}, {"html": tmp_path}, {"plots": tmp_path / "afile"},
                   {"plots": tmp_path / "no" / "deeper"}):
        with pytest.raises(UsageError):
            H.validate_targets(**kwargs)
    assert sorted(os.listdir(tmp_path)) == ["afile"]


def test_lot_statistics_object_is_shown(demo_eval):
    from lumeval.lots.statistics import lot_from_evaluation

    stats = lot_from_evaluation(demo_eval, figure_names=("cct_K", "Ra", "R9"))
    text = H.render_html_report(demo_eval, lot=stats)
    lot = text[text.index('id="lot"'): text.index('id="charts"')]
    ra = demo_eval.figure("Ra")
    # the row for Ra shows the lot's mean and max in Ra's format of the figure registry (integers)
    row = re.search(r"<tr><td>Ra</td>(.*?)</tr>", lot).group(1)
    assert f">{float(np.mean(ra)):.0f}<" in row and f">{float(np.max(ra)):.0f}<" in row
    assert re.search(r"<tr><td>CCT \(K\)</td>", lot) and "cct_K" not in lot
    assert "5 samples." in lot and "Largest Δu′v′" in lot


def test_check_result_mixed_with_lot_level_rows(demo_eval, check_result):
    lot_row = {"clause": "largest pairwise Δu′v′ ≤ 0.004", "figure": "max_pairwise", "measured": 0.005,
               "limit": "≤ 0.004", "upper": 0.004, "margin": -0.001, "outcome": "fail"}
    rows = H.verdict_rows([check_result, lot_row], demo_eval.spectra.names)
    assert len(rows) == sum(len(r.outcome) for r in check_result.results) + 1
    assert rows[-1].sample is None and rows[-1].outcome == "fail"
    text = H.render_html_report(demo_eval, verdicts=[check_result, lot_row], per_sample_max=2)
    assert "largest pairwise Δu′v′ ≤ 0.004" in text and "<td>lot</td>" in text
    assert "report test" in text  # the criteria identification is still shown


def test_large_lot_stays_small_and_valid(demo_eval, check_result):
    """600 samples: tables are capped, the spectra drawn as a band, scatter points rasterised
    inside the SVG (a data: URI), and the file still parses and fetches nothing."""
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    rng = np.random.default_rng(5)
    base = demo_eval.spectra.values[0]
    vals = base[None, :] * (1 + 0.02 * rng.standard_normal((600, 1)) * np.sin(demo_eval.spectra.wavelengths_nm / 40)[None, :])
    names = tuple(f"s{i:03d}" for i in range(600))
    ev = evaluate(SpectrumSet(demo_eval.spectra.wavelengths_nm, vals, names, names))
    rows = [{"sample": n, "clause": "Ra ≥ 92", "figure": "Ra", "measured": float(v), "lower": 92,
             "margin": float(v - 92), "passed": bool(v >= 92)} for n, v in zip(names, ev.figure("Ra"))]
    text = H.render_html_report(ev, verdicts=rows, lot={"rows": []})
    assert len(text) < 3_000_000
    import html5lib  # a test dependency (pyproject [test]): fail, never skip, when it is missing
    html5lib.HTMLParser(strict=True).parse(text)
    _assert_fetches_nothing(text)
    assert "data:image/png;base64," in text  # the rasterised scatter
    assert f"{H.MAX_TABLE_ROWS} of 600 spectra listed" in text
    assert 'data-figure="spd-lot"' in text and "band" in text


def test_names_are_escaped(demo_eval):
    from dataclasses import replace

    evil = '<script>alert("x")</script> & "q"'
    names = (evil,) + demo_eval.spectra.names[1:]
    sp = demo_eval.spectra  # the demo spectra share one computation grid: one group
    ev = replace(demo_eval, spectra=replace(sp, groups=(replace(sp.groups[0], names=names),)))
    text = H.render_html_report(ev)
    assert "<script" not in text.lower()
    assert "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &quot;q&quot;" in text
    import html5lib  # a test dependency (pyproject [test]): fail, never skip, when it is missing
    html5lib.HTMLParser(strict=True).parse(text)


def test_control_characters_in_names_are_shown_not_written(demo_eval):
    """A name from a file may hold a NUL (which an HTML page cannot hold: a parse error), a
    bidirectional override (which would reorder what a table cell shows) or a terminal escape:
    the page shows each as a visible escape, as the terminal does, and holds none of them raw
    (they once went into the table cells as they were)."""
    from dataclasses import replace

    evil = "\u202e\x00lamp\x1b[31m\x07"
    names = (evil,) + demo_eval.spectra.names[1:]
    sp = demo_eval.spectra
    ev = replace(demo_eval, spectra=replace(sp, groups=(replace(sp.groups[0], names=names),)))
    text = H.render_html_report(ev)
    for ch in ("\x00", "\u202e", "\x1b", "\x07"):
        assert ch not in text, repr(ch)
    assert "\\u202e\\x00lamp\\x1b[31m\\x07" in text
    import html5lib  # a test dependency (pyproject [test]): fail, never skip, when it is missing
    html5lib.HTMLParser(strict=True).parse(text)


def test_write_outputs_draws_once_and_checks_targets_first(demo_eval, tmp_path, monkeypatch):
    calls = []
    real = H.report_figures

    def counting(*a, **k):
        calls.append(1)
        return real(*a, **k)

    monkeypatch.setattr(H, "report_figures", counting)
    out = H.write_outputs(demo_eval, html=tmp_path / "r.html", plots=tmp_path / "p", per_sample_max=1)
    assert len(calls) == 1
    assert (tmp_path / "r.html").exists() and len(list((tmp_path / "p").iterdir())) == 16
    assert len(out) == 17
    # a bad plots target: nothing drawn, nothing written (the HTML target is fine)
    calls.clear()
    with pytest.raises(UsageError):
        H.write_outputs(demo_eval, html=tmp_path / "s.html", plots=tmp_path / "no" / "p")
    assert calls == [] and not (tmp_path / "s.html").exists()
    assert H.write_outputs(demo_eval) == []


def test_report_has_the_xy_diagram_the_tm30_pictures_and_design_intents(demo_eval):
    from lumeval.metrics.tm30_views import design_intents

    text = H.render_html_report(demo_eval)
    n = len(demo_eval)
    assert 'data-figure="chromaticity-xy"' in text and 'data-figure="fidelity-gamut"' in text
    assert text.count('data-figure="colour-vectors-') == n  # one per spectrum, in its own section
    assert text.count("<h3>Design intents (ANSI/IES TM-30-20 Annex E)</h3>") == n
    # the best level printed is the one the metric function gives (itself checked against luxpy)
    di = design_intents(demo_eval.figure("Rf"), demo_eval.figure("Rg"), demo_eval.figure("Rcs_h1"),
                        demo_eval.figure("Rf_h1"))
    sections = text.split('<section class="sample"')[1:]
    for i, sec in enumerate(sections):
        row = sec.split("<td>Preference</td>", 1)[1].split("</td>", 1)[0]
        assert (f"<b>{di.preference[i]}</b>" if di.preference[i] else "none") in row
