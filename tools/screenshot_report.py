"""Write the demo HTML report and take a screenshot of it in headless Chromium.

Usage::

    python tools/screenshot_report.py [--criteria FILE] [--html OUT.html] [--png docs/img/report-demo.png]
                                      [--height 3000] [SPECTRUM FILES...]

Defaults: the demo spectra (spectra_demo/downlights/*.csv) judged against the demo criteria
(spectra_demo/tender_criteria.toml when it exists, else the example criteria below: Ra ≥ 80, R9 ≥ 50 and
the ANSI C78.377-2017 3000 K quadrangle), screenshot of the top ``--height`` CSS pixels of the
page at 1100 px wide. Chromium is installed with apt-get when missing (see tools/chromium.py).
"""

from __future__ import annotations

import argparse
import glob
import os
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
_CWD = os.getcwd()
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tools"))

EXAMPLE_CRITERIA = """lumeval_criteria = 1
[identification]
project = "Harbour Street Library, reading-room downlights (invented demo)"
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


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("files", nargs="*")
    ap.add_argument("--criteria")
    ap.add_argument("--html")
    ap.add_argument("--png", default=str(ROOT / "docs" / "img" / "report-demo.png"))
    ap.add_argument("--height", type=int, default=3000)
    ap.add_argument("--width", type=int, default=1100)
    a = ap.parse_args(argv)

    from chromium import Browser, ensure_chromium

    from lumeval import check
    from lumeval.api import inspect as inspect_files
    from lumeval.criteria import load_criteria, parse_criteria
    from lumeval.render.html import regions_from_criteria, write_html_report

    # Paths in the report are shown as given: work from the repository root, with paths relative
    # to it where the files lie inside it.
    def rel(f):
        p = Path(f).resolve()
        return str(p.relative_to(ROOT)) if p.is_relative_to(ROOT) else str(p)

    png = (Path(_CWD) / a.png).resolve()
    html_out = (Path(_CWD) / a.html).resolve() if a.html else None
    files = [rel(f) for f in a.files]
    crit_path = rel(a.criteria) if a.criteria else None
    os.chdir(ROOT)
    files = files or sorted(glob.glob("spectra_demo/downlights/*.csv"))
    if not files:
        print("no spectrum files", file=sys.stderr)
        return 2
    if crit_path is None and Path("spectra_demo/tender_criteria.toml").exists():
        crit_path = "spectra_demo/tender_criteria.toml"
    criteria = load_criteria(crit_path) if crit_path else parse_criteria(EXAMPLE_CRITERIA, file="example criteria")
    ev = inspect_files(files)
    result = check(ev, criteria)
    command = ("lumeval check " + " ".join(files) + " --criteria " + (crit_path or "<example criteria>")
               + " --html report.html")

    path, how = ensure_chromium()
    if path is None:
        print(f"cannot take the screenshot: {how}", file=sys.stderr)
        return 1
    with tempfile.TemporaryDirectory() as tmp:
        html = html_out or Path(tmp) / "report.html"
        write_html_report(html, ev, verdicts=result, regions=regions_from_criteria(criteria), command=command,
                          inputs=files + ([crit_path] if crit_path else []))
        with Browser(path, window=(a.width, 900)) as b:
            s = b.open(html.resolve().as_uri(), width=a.width, height=900)
            errors = b.console_errors(s)
            png.parent.mkdir(parents=True, exist_ok=True)
            b.screenshot(s, png, max_height=a.height)
    if errors:
        print("console errors: " + "; ".join(errors), file=sys.stderr)
        return 1
    print(f"wrote {png}" + (f" and {html_out}" if html_out else ""))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
