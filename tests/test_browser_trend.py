"""The HTML trend report (``lumeval history trend --html``) opened from disk in headless Chromium.

Checked in the browser itself, as for the other reports (tests/test_browser_report.py): no
console errors or uncaught exceptions; no request other than the report's own file:// URL;
every chart rendered with a non-zero size; the signals, the lots table, provenance and cautions
present as text; an untrusted lot label shown as text (never run as markup); printing to A4
and US Letter works and every chart fits the printable width.
"""

from __future__ import annotations

import numpy as np
import pytest

from ._browser import assert_clean_and_printable, visit
from .test_store_record import make_record

pytestmark = pytest.mark.browser

EVIL = '<img src=x onerror="console.error(\'pwned\')">w9'


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    """Twelve invented lots of one product (the last three drifting) with an ANSI region, so the
    report holds the X̄/s, EWMA and both chromaticity charts."""
    from lumeval.criteria.regions import ansi_quadrangle
    from lumeval.render.trend_report import write_trend_html
    from lumeval.store.record import Region, record_lot
    from lumeval.store.trend import CHROMATICITY_FIGURES, trend

    d = tmp_path_factory.mktemp("trend")
    url = str(d / "h.db")
    q = ansi_quadrangle(3000)
    reg = Region(q.name, tuple(q.centre_upvp), tuple(map(tuple, q.corners_upvp)))
    rng = np.random.default_rng(5)
    for k in range(12):
        shift = 0.0 if k < 9 else 1.5 * (k - 8)
        c = tuple(q.centre_upvp + rng.normal(0, 0.0003, 2) + [0.001 * shift, 0])
        label = EVIL if k == 10 else f"w{k}"
        record_lot(url, make_record(rng.normal(50 + shift, 1.0, 20), key=f"k{k}", label=label, centroid=c,
                                    region=reg))
    tr = trend(url, "R9", baseline_count=8)
    extra = [trend(url, f, baseline_count=8) for f in CHROMATICITY_FIGURES]
    return tr, write_trend_html(d / "trend.html", tr, chromaticity=extra, command="lumeval history trend ...")


def test_trend_report_renders_in_chromium(chromium, report, tmp_path):
    tr, path = report
    n_figures = path.read_text(encoding="utf-8").count("<figure ")
    v = visit(chromium, path, tmp_path / "trend.png", imgs="document.querySelectorAll('img').length")
    figs, text, imgs = v.figures, v.text, v.extra["imgs"]

    assert_clean_and_printable(v)
    assert imgs == 0  # the label's <img> is text, not an element
    assert EVIL in text
    assert len(figs) == n_figures == 6  # (X̄+s, EWMA) for R9 and for each chromaticity figure
    for f in figs:
        assert f["width"] > 100 and f["height"] > 50 and f["drawn"] > 20, f
    assert tr.signals, "the drifting lots must signal"
    assert "⚠ SIGNAL" in text
    for s_ in tr.signals:
        assert f"lot {tr.points[s_.index].lot}" in text
    for word in ("Western Electric", "Montgomery", "Lots", "Provenance", "IEC 62471", "baseline"):
        assert word in text, word
