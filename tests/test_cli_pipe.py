"""A reader that stops early (`lumeval lot ... | head`) ends lumeval as a closed pipe ends any
Unix tool (SIGPIPE, shell status 141), not with exit 1, which would mean "a criterion failed"
(exit codes: README; the convention is common practice, no source)."""

from __future__ import annotations

import signal
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]


@pytest.mark.skipif(not hasattr(signal, "SIGPIPE"), reason="no SIGPIPE on this platform")
def test_closed_pipe_is_not_a_failed_criterion():
    # the per-sample CSV of the 200-module demo lot is far larger than a pipe buffer
    p = subprocess.Popen(
        [sys.executable, "-m", "lumeval", "lot", str(REPO / "spectra_demo" / "lot_2026w48"), "--quiet", "--format", "csv"],
        stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, cwd=REPO,
    )
    first = p.stdout.readline()
    assert first.startswith(b"name,")
    p.stdout.close()
    assert p.wait(timeout=300) == -signal.SIGPIPE
