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


def test_an_absolute_claim_on_a_relative_spectrum_says_why_as_check_does(tmp_path):
    """A claim on an absolute figure (illuminance) of a spectrum read as relative is not
    checkable, and its reason is the one `check` gives a clause on that figure: the spectrum's
    scale and the unit it would need (claims said only "undefined for this spectrum"; found by
    a review). Both come from lumeval.criteria.undefined.undefined_reasons."""
    import lumeval

    spd = REPO / "spectra_demo/downlights/candidate_A_aurora_3000K.csv"
    claims = tmp_path / "claims.toml"
    claims.write_text('lumeval_claims = 1\n[claims]\nilluminance_lx = "500"\n')
    crit = tmp_path / "c.toml"
    crit.write_text('lumeval_criteria = 1\n[[clause]]\nfigure = "illuminance_lx"\nmin = 500\n')
    (cl,) = lumeval.claims([spd], claims).results
    (ck,) = lumeval.check([spd], crit).results
    assert cl.outcome == ("not checkable",) and ck.outcome == ("not judged",)
    assert "taken as relative" in ck.reason[0]
    assert cl.reason[0] == f"illuminance_lx is undefined for this spectrum ({ck.reason[0]})"
