"""The report view-model and its template: rows built from a real Evaluation with the figure
registry's labels and units, hostile text shown literally (never as markup, never evaluated as a
template), the terminal and the HTML reading the same rows, templates shipped as package data.

Outside references: colour-science's per-spectrum functions (``colour.sd_to_XYZ``,
``colour.XYZ_to_xy``; CIE 15:2004 colorimetry) for the chromaticity the rows show; html5lib (a
WHATWG-conformant parser) for what a browser makes of the page.
"""

from __future__ import annotations

import glob
import io
import re
import tomllib
from dataclasses import replace
from fnmatch import fnmatch
from importlib import resources
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parent.parent
DEMO = sorted(glob.glob(str(ROOT / "spectra_demo" / "downlights" / "*.csv")))
HOSTILE = ('<script>alert(1)</script>', '"><img src=x onerror=alert(1)>', "{{ 7*7 }}", "{% raw %}x", "a & b'")


@pytest.fixture(scope="module")
def ev():
    if not DEMO:
        pytest.skip("spectra_demo/downlights has no CSV files")
    from lumeval.api import inspect as inspect_files

    return inspect_files(DEMO[:3])


def _renamed(ev, names):
    sp = ev.spectra  # the demo spectra share one computation grid: one group
    return replace(ev, spectra=replace(sp, groups=(replace(sp.groups[0], names=tuple(names)),)))


def test_figure_rows_come_from_the_registry_and_from_the_evaluation(ev, colour):
    from lumeval import figures
    from lumeval.render.view import figure_columns

    cols = figure_columns(ev)
    shown = [c.name for c in cols]
    expected = [f.name for f in figures.summary_figures()
                if not f.name.startswith(("Rf_h", "Rcs_h", "Rhs_h"))
                and not (f.when_defined and not np.isfinite(f.value(ev)).any())]
    assert shown == expected and "cct_K" in shown and "Ra" in shown
    for c in cols:
        f = figures.get(c.name)
        assert (c.label, c.unit, c.heading, c.row_label, c.group) == (f.label, f.unit, f.heading, f.row_label, f.group)
        assert len(c.values) == len(ev)
    # the chromaticity shown is colour-science's, to the registry's 4 decimals (half a unit of
    # the last decimal plus a little for the different integration: tolerance 6e-5)
    by = {c.name: c for c in cols}
    assert by["cct_K"].heading == "CCT (K)"
    for i in range(len(ev)):
        wl, v = ev.spectra.spectrum(i)
        sd = colour.SpectralDistribution(dict(zip(wl, v)))
        xy = colour.XYZ_to_xy(colour.sd_to_XYZ(sd))
        np.testing.assert_allclose([float(by["x"].values[i]), float(by["y"].values[i])], xy, atol=6e-5)


def test_report_view_is_built_from_a_real_check(ev):
    from lumeval.criteria import parse_criteria
    from lumeval.render.report_figures import report_figures
    from lumeval.render.report_view import ReportView, build_report_view

    crit = parse_criteria('[[clause]]\nfigure = "Ra"\nmin = 80\n[[clause]]\nfigure = "duv"\nmax = 0.006\n', "c.toml")
    res = crit.evaluate(ev)
    view = build_report_view(ev, report_figures(ev, verdicts=res), verdicts=res, inline=lambda s, p, t: "<svg/>")
    assert isinstance(view, ReportView)
    assert view.verdict.judged and view.verdict.overall == res.overall
    grid = view.verdict.checks.table  # 3 spectra: a criterion x spectrum grid
    assert grid.headings == ("Criterion", "Limit", *ev.spectra.names)
    duv_row = next(r for r in grid.rows if r.cells[0].text.startswith("Duv"))
    for i, cell in enumerate(duv_row.cells[2:]):
        assert cell.outcome == res.results[1].outcome[i]
        # the Duv registry format: signed, 4 decimals
        assert re.fullmatch(r"[+-]?\d\.\d{4,}", cell.lines[0]), cell.lines[0]
    assert len(view.samples) == len(ev) and [s.name for s in view.samples] == list(ev.spectra.names)
    from lumeval import figures

    for i, s in enumerate(view.samples):  # R1-R14 and the hue bins in the registry's formats
        assert s.cri.headings == tuple(f"R{j}" for j in range(1, 15))
        assert [c.text for c in s.cri.rows[0].cells] == [figures.get(f"R{j}").format(ev.figure(f"R{j}")[i])
                                                         for j in range(1, 15)]
        rcs = [c.text for c in s.hue_bins.rows[1].cells]
        assert rcs[0] == "Rcs,h (%)" and rcs[1:] == [figures.get(f"Rcs_h{j}").format(ev.figure(f"Rcs_h{j}")[i])
                                                     for j in range(1, 17)]
        assert "-0" not in rcs and "+0" not in rcs  # a zero has no direction
    assert any("IEC 62471" in c for c in view.cautions)


def test_terminal_and_html_show_the_same_key_figure_values(ev):
    from rich.console import Console

    from lumeval.render import html as H
    from lumeval.render.terminal import inspect_renderables
    from lumeval.render.view import figure_columns

    con = Console(file=io.StringIO(), width=220, color_system=None)
    for r in inspect_renderables(ev):
        con.print(r)
    term = con.file.getvalue()
    page = H.render_html_report(ev)
    for c in figure_columns(ev):
        line = next((ln for ln in term.splitlines() if ln.strip().startswith(c.row_label)), None)
        if line is None:  # x, y and u', v' share a row in the terminal
            line = next(ln for ln in term.splitlines()
                        if ln.strip().startswith(c.label + ",") or re.match(rf"\s*\S+, {re.escape(c.label)}\s", ln))
        for value in c.values:
            assert value in line, (c.name, value, line)
            assert f'<td class="n">{value}</td>' in page, (c.name, value)


def test_template_shows_hostile_text_literally(ev, tmp_path):
    import html5lib

    from lumeval.criteria import parse_criteria
    from lumeval.render import html as H

    hostile = _renamed(ev, HOSTILE[:3])
    crit = parse_criteria('[identification]\nproject = "{{ 7*7 }} <b>bold</b>"\n[[clause]]\nfigure = "Ra"\nmin = 80\n'
                          'label = "\\"><img src=y onerror=alert(2)>"\n', "c.toml")
    page = H.render_html_report(hostile, verdicts=crit.evaluate(hostile),
                                command='lumeval check "{{ 7*7 }}" <script>x</script>')
    doc = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(page)
    # no markup from the data: no script, no img element, no element from the label
    assert doc.findall(".//script") == [] and doc.findall(".//img") == [] and doc.findall(".//body//b[.='bold']") == []
    text = "".join(doc.find("body").itertext())
    for name in HOSTILE[:3]:
        assert name in text, name  # shown as written
        if "<" in name:
            assert f"<h2>{name}</h2>" not in page
    assert "{{ 7*7 }} <b>bold</b>" in text and "49" not in re.findall(r"project: (\S+)", text)
    assert '"><img src=y onerror=alert(2)>' in text
    assert 'lumeval check "{{ 7*7 }}" <script>x</script>' in text
    # the sample sections are headed by the names, escaped
    heads = [h.text for h in doc.findall(".//section[@class='sample']/h2")]
    assert heads == list(HOSTILE[:3])


def test_templates_and_style_sheet_ship_as_package_data():
    from lumeval.render import html as H

    folder = resources.files("lumeval.render").joinpath("templates")
    found = sorted(p.name for p in folder.iterdir() if p.is_file())
    assert {"report.html.j2", "_macros.html.j2", "report.css", "evaluation.html.j2"} <= set(found)
    for name in found:
        assert H.template_text(name) == folder.joinpath(name).read_text(encoding="utf-8")
        if name.endswith(".j2"):
            H._environment().get_template(name)  # compiles
    # pyproject ships every file of the folder in the wheel and the sdist
    pats = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["package-data"]["lumeval"]
    for name in found:
        assert any(fnmatch(f"render/templates/{name}", p) for p in pats), name
    # every page (report, mix/series, trend) is made from these templates: no page is built as a string
    for page in ("report.html.j2", "tunable.html.j2", "trend.html.j2"):
        assert "<!DOCTYPE html>" in H.template_text(page) and 'import' in H.template_text(page)


def test_jinja2_is_imported_only_for_html():
    import subprocess
    import sys

    code = ("import sys, glob; from lumeval.api import inspect; from lumeval.render.terminal import inspect_renderables;"
            f"ev = inspect({DEMO[:1]!r}); inspect_renderables(ev); repr(ev);"
            "print('jinja2' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT)
    assert out.stdout.strip() == "False", out.stderr


def test_repr_is_short_for_many_spectra(ev):
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    wl, v = ev.spectra.spectrum(0)
    names = tuple(f"luminaire with a rather long catalogue name number {i:03d}" for i in range(50))
    many = evaluate(SpectrumSet(wl, np.repeat(v[None, :], 50, axis=0) * np.linspace(1, 2, 50)[:, None], names, names))
    text = repr(many)
    assert len(text) < 400, len(text)
    assert "\n" not in text and text.startswith("Evaluation(50 spectra") and "+47" in text
    cct = many.figure("cct_K")
    assert f"CCT {cct.min():.0f} K" in text or f"CCT {cct.min():.0f}…" in text
    one = repr(ev)
    assert len(one) < 400 and all(repr(n[:23])[1:-1][:10] in one for n in ev.spectra.names)
    assert len(repr(_renamed(ev, ("x\n" * 200,) + ev.spectra.names[1:]))) < 400  # names truncated, one line


def test_repr_html_is_a_fragment_with_the_key_figures(ev):
    import html5lib

    frag = ev._repr_html_()
    assert "<html" not in frag and "<body" not in frag and "<style" not in frag
    assert frag.lstrip().startswith('<div class="lumeval-evaluation">')
    html5lib.HTMLParser(strict=True).parseFragment(frag)
    from lumeval.render.view import figure_columns

    for c in figure_columns(ev):
        assert f'<th scope="col" class="n">{c.heading}</th>' in frag
        for value in c.values:
            assert f'<td class="n">{value}</td>' in frag
    assert "IEC 62471" in frag
    hostile = _renamed(ev, HOSTILE[:3])._repr_html_()
    assert "<script>" not in hostile and "<img" not in hostile and "{{ 7*7 }}" in hostile


def test_mix_page_is_a_template_and_shows_hostile_channel_names_literally(tmp_path, capsys):
    """lumeval mix --html: channel names come from a file's column headers (untrusted)."""
    import html5lib

    from lumeval.cli import main

    wl = np.arange(380.0, 781.0, 1.0)

    def g(p, w):
        return np.exp(-0.5 * ((wl - p) / w) ** 2)

    warm, cool = 0.35 * g(450, 10) + g(600, 45) + 0.3 * g(650, 25), 2.0 * g(452, 10) + g(560, 50)
    names = ("<script>alert(1)</script>", "{{ 7*7 }}")
    lines = ["wavelength_nm," + ",".join(names)] + [f"{w:g},{a:.6f},{b:.6f}" for w, a, b in zip(wl, warm, cool)]
    chans = tmp_path / "channels.csv"
    chans.write_text("\n".join(lines) + "\n", encoding="utf-8")
    out = tmp_path / "mix.html"
    with pytest.raises(SystemExit) as exc:
        main(["mix", str(chans), "--cct", "2800:4000:400", "--html", str(out)])
    capsys.readouterr()
    assert exc.value.code == 0
    page = out.read_text(encoding="utf-8")
    doc = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(page)
    assert doc.findall(".//script") == []
    text = "".join(doc.find("body").itertext())
    assert "channels <script>alert(1)</script>, {{ 7*7 }}" in text
    assert "w {{ 7*7 }}" in [th.text for th in doc.findall(".//section[@id='settings']//th")]
    assert 'data-figure="trajectory"' in page and "IEC 62471" in text


def test_check_result_repr_is_short_and_its_html_fragment_shows_the_verdicts(ev):
    import html5lib

    from lumeval.criteria import parse_criteria

    crit = parse_criteria('[[clause]]\nfigure = "Ra"\nmin = 90\nlabel = "<b>Ra</b> {{ 7*7 }}"\n', "c.toml")
    res = crit.evaluate(_renamed(ev, HOSTILE[:3]))
    text = repr(res)
    assert len(text) < 200 and "\n" not in text and f"{res.overall};" in text
    assert f"{sum(o == 'fail' for o in res.results[0].outcome)} fail" in text or "fail" not in res.results[0].outcome
    frag = res._repr_html_()
    assert "<html" not in frag and frag.lstrip().startswith('<div class="lumeval-check">')
    doc = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parseFragment(frag)
    body = "".join(doc.itertext())
    assert "<b>Ra</b> {{ 7*7 }}" in body and "<script>alert(1)</script>" in body and "IEC 62471" in body
    assert doc.findall(".//script") == [] and doc.findall(".//img") == []
    # the checks grid (the last table: 3 spectra, one clause): one badge per spectrum saying the
    # clause's outcome for it, in input order
    grid = doc.findall(".//table")[-1]
    words = ["".join(b.itertext()) for b in grid.findall(".//span") if "badge" in (b.get("class") or "").split()]
    expected = [{"pass": "✓ PASS", "fail": "✗ FAIL"}.get(o, o) for o in res.results[0].outcome]
    assert words == expected


def test_lot_run_repr_is_one_short_line():
    """A lot's repr says what it found in one line (the dataclass default printed every figure
    of every sample)."""
    import lumeval

    files = sorted(glob.glob(str(ROOT / "spectra_demo" / "lot_2026w48" / "*.csv")))
    run = lumeval.lot(files, ROOT / "spectra_demo" / "lot_criteria.toml")
    text = repr(run)
    assert "\n" not in text and len(text) < 300, text
    assert text.startswith("<LotRun ") and f"{len(run)} samples from {len(files)} files" in text
    assert run.sample_verdicts is not None
    assert f"{sum(v == 'pass' for v in run.sample_verdicts)} pass" in text
