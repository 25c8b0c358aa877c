"""A claims file whose claims no spectrum can check (luminous flux needs absolute photometry)
must not read as a clean bill: the summary says nothing could be checked (exit 0: nothing was
judged, per the exit-code convention in README)."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def test_nothing_checkable_is_said_plainly(tmp_path):
    claims = tmp_path / "claims.toml"
    claims.write_text("lumeval_claims = 1\n[claims]\nluminous_flux_lm = 1850\n")
    r = subprocess.run(
        [sys.executable, "-m", "lumeval", "claims", str(REPO / "spectra_demo/downlights/candidate_A_aurora_3000K.csv"),
         "--claims", str(claims)],
        capture_output=True, text=True, cwd=REPO, timeout=300, env=dict(os.environ, COLUMNS="200"),
    )
    assert r.returncode == 0, r.stderr
    assert "nothing could be checked" in r.stdout
    assert "✔ no claim is contradicted" not in r.stdout
