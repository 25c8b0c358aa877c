"""The HTML report opened from disk in a real headless Chromium (Debian's ``chromium``).

What is checked, in the browser itself (DevTools protocol, see tools/chromium.py):
no console errors, uncaught exceptions or error log entries; no request other than the
report's own file:// URL; every figure rendered with a non-zero size; the verdicts present as
text (words and symbols); printing to A4 and US Letter works and every figure fits the
printable width; a screenshot saved under the test's tmp dir.

Chromium is installed by this test's setup when missing (``apt-get update`` and
``apt-get install -y chromium``, as root, as on the project's machines and in CI; ``make
browser-deps`` does the same). The test is skipped only when that is impossible, with a loud
message saying why.
"""

from __future__ import annotations

import glob

import pytest

from ._browser import ROOT, assert_clean_and_printable, visit

pytestmark = pytest.mark.browser

DEMO = sorted(glob.glob(str(ROOT / "spectra_demo" / "downlights" / "*.csv")))

CRITERIA = """lumeval_criteria = 1
[identification]
project = "browser test"
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
def reports(tmp_path_factory):
    """Two reports: the demo candidates judged against criteria, and the same spectra as a lot."""
    if not DEMO:
        pytest.skip("spectra_demo/downlights has no CSV files")
    from lumeval.api import inspect as inspect_files
    from lumeval.criteria import check, parse_criteria
    from lumeval.criteria.regions import ansi_quadrangle
    from lumeval.render.html import write_html_report

    ev = inspect_files(DEMO)
    result = check(ev, parse_criteria(CRITERIA, file="crit.toml"))
    d = tmp_path_factory.mktemp("browser")
    one = write_html_report(d / "check.html", ev, verdicts=result, regions=[ansi_quadrangle(3000)])
    lot = write_html_report(d / "lot.html", ev, verdicts=result, regions=[ansi_quadrangle(3000)],
                            lot=[{"figure": "Ra", "n": len(ev), "verdict": "pass"}])
    return result, one, lot


@pytest.mark.parametrize("which", ["check", "lot"])
def test_report_renders_in_chromium(chromium, reports, which, tmp_path):
    result, one, lot = reports
    path = one if which == "check" else lot
    n_figures = path.read_text(encoding="utf-8").count("<figure ")
    shot = tmp_path / f"{which}.png"
    v = visit(chromium, path, shot)
    figs, text = v.figures, v.text

    assert_clean_and_printable(v)
    assert len(figs) == n_figures >= 4
    for f in figs:
        assert f["width"] > 100 and f["height"] > 50, f
        assert f["drawn"] > 20, f
    # the CIE 1931 diagram, the Rf-Rg chart, the colour vectors and the hue-bin rows are there and
    # drawn at a readable size (at least half the 60 rem column)
    keys = {f["key"]: f for f in figs}
    wanted = ["chromaticity", "chromaticity-xy", "fidelity-gamut"]
    if which == "check":
        wanted += [k for k in keys if k.startswith(("colour-vectors-0", "hue-bins-0"))]
        assert sum(k.startswith("colour-vectors-0") for k in keys) == len(result.names)
        assert "Design intents (ANSI/IES TM-30-20 Annex E)" in text
    else:
        wanted += ["colour-vectors-lot", "hue-bins-lot"]
    for k in wanted:
        assert k in keys, (k, sorted(keys))
        assert keys[k]["width"] > 400 and keys[k]["height"] > 250, keys[k]
    # verdicts as text, in words and symbols
    assert "✗ FAIL" in text and "✓ PASS" in text
    assert ("FAIL" in text) == (result.overall == "fail")
    for r in result.results:
        assert r.label in text
    assert "IEC 62471" in text
    # the screenshot exists and is a PNG of the whole page
    data = shot.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 50_000
