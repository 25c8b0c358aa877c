"""A reader that stops early (`lumeval lot ... | head`) ends lumeval with exit code 2 and one
line naming standard output: the printed output is incomplete, which a script must be able to
tell from "a criterion failed" (exit 1) and from success (exit codes: README and
docs/output-formats.md; lumeval's own rule)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def test_closed_pipe_is_not_a_failed_criterion():
    # the per-sample CSV of the 200-module demo lot is far larger than a pipe buffer
    p = subprocess.Popen(
        [sys.executable, "-m", "lumeval", "lot", str(REPO / "spectra_demo" / "lot_2026w48"), "--quiet", "--format", "csv"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=REPO,
    )
    first = p.stdout.readline()
    assert first.startswith(b"name,")
    p.stdout.close()
    err = p.stderr.read().decode()
    assert p.wait(timeout=300) == 2, err
    lines = [ln for ln in err.splitlines() if ln.strip() and not ln.startswith("lumeval: note:")]
    assert len(lines) == 1 and lines[0].startswith("lumeval: error: standard output:"), err
