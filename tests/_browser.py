"""What the browser tests share: the ``chromium`` fixture (headless Chromium found or installed,
a loud skip when that is impossible; offered to every test module by conftest.py) and one visit of a report that collects what every report is checked for (console
errors, requests, figure sizes on screen and at A4 print width, PDFs on A4 and US Letter)."""

from __future__ import annotations

import sys
import warnings
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


def _tool():
    """tools/chromium.py (the DevTools-protocol driver), imported when a browser test runs."""
    if str(ROOT / "tools") not in sys.path:
        sys.path.insert(0, str(ROOT / "tools"))
    import chromium as tool

    return tool

#: Every <figure>'s SVG: its key, drawn size and number of drawn elements.
FIGURES_JS = """Array.from(document.querySelectorAll('figure')).map(f => {
  const s = f.querySelector('svg'); const r = s ? s.getBoundingClientRect() : {width: 0, height: 0};
  return {key: f.dataset.figure, width: r.width, height: r.height,
          drawn: s ? s.querySelectorAll('path, use').length : 0};
})"""

#: A4 printable width: 210 mm - 2 x 15 mm margins = 180 mm = 680 CSS px (96 px per inch).
PRINT_WIDTH_PX = 680


@pytest.fixture(scope="module")
def chromium():
    path, how = _tool().ensure_chromium()
    if path is None:
        msg = f"BROWSER TEST SKIPPED: headless Chromium is not available and could not be installed: {how}"
        warnings.warn(msg, stacklevel=2)
        sys.stderr.write("\n" + "!" * 78 + "\n" + msg + "\n" + "!" * 78 + "\n")
        pytest.skip(msg)
    return path


@dataclass
class Visit:
    url: str
    figures: list
    text: str
    errors: list
    requests: list
    pdfs: dict
    print_figures: list
    overflow: int
    extra: dict


def visit(chromium: str, path: Path, screenshot: Path, **expressions: str) -> Visit:
    """Open ``path`` from disk, take a screenshot, evaluate ``expressions`` (name -> JS) and print."""
    url = path.resolve().as_uri()
    with _tool().Browser(chromium) as b:
        s = b.open(url)
        figs = b.evaluate(s, FIGURES_JS)
        text = b.evaluate(s, "document.body.innerText")
        extra = {name: b.evaluate(s, js) for name, js in expressions.items()}
        b.screenshot(s, screenshot)
        b.evaluate(s, "1")
        errors = b.console_errors(s)
        requests = b.requested_urls(s)
        pdfs = {paper: b.print_pdf(s, paper=paper) for paper in ("A4", "Letter")}
        b.call("Emulation.setEmulatedMedia", {"media": "print"}, session=s)
        b.call("Emulation.setDeviceMetricsOverride", {"width": PRINT_WIDTH_PX, "height": 1000, "deviceScaleFactor": 1,
                                                      "mobile": False}, session=s)
        print_figs = b.evaluate(s, FIGURES_JS)
        overflow = b.evaluate(s, "document.documentElement.scrollWidth")
    return Visit(url, figs, text, errors, requests, pdfs, print_figs, overflow, extra)


def assert_clean_and_printable(v: Visit) -> None:
    """No console error, no request but the report itself, PDFs on both papers, every figure
    within the A4 printable width."""
    assert v.errors == [], v.errors
    assert [r for r in v.requests if not r.startswith("data:")] == [v.url], v.requests
    for paper, pdf in v.pdfs.items():
        assert pdf[:5] == b"%PDF-" and len(pdf) > 20_000, paper
    for f in v.print_figures:
        assert 0 < f["width"] <= PRINT_WIDTH_PX, f
    assert v.overflow <= PRINT_WIDTH_PX
