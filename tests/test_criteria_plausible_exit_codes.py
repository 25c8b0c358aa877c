"""The README's exit-code sentence says exactly when 0 is returned with nothing judged.

It used to say "0 everything passed (or nothing was judged)", while `check` (and `lot`) refuse a
criteria file none of whose clauses they judge, with exit code 2: a run that judged nothing is
never a pass. Exit 0 with nothing judged is left to the commands that judge nothing by design:
`lot`, `mix` and `series` without `--criteria` (figures and statistics only), `claims` whose
claims no spectrum can check (the report says so), and the commands that never judge.
No outside numeric source: behaviour only.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from .conftest import run_cli_in_process as run

ROOT = Path(__file__).resolve().parents[1]


def exit_code_sentence() -> str:
    text = " ".join((ROOT / "README.md").read_text(encoding="utf-8").split())
    m = re.search(r"Exit codes: \*\*0\*\*.*?\*\*3\*\*", text)
    assert m, "README has no exit-code sentence"
    return m.group(0)


def test_zero_is_not_promised_for_a_run_that_judged_nothing():
    s = exit_code_sentence()
    assert "(or nothing was judged)" not in s
    zero, _, rest = s.partition("**1**")
    for needle in ("`lot`", "without `--criteria`", "`claims`"):
        assert needle in zero, needle
    two = rest.partition("**2**")[2]
    assert "`check`" in two and "no clause" in two, two


@pytest.fixture()
def spd(tmp_path):
    import numpy as np

    wl = np.arange(380, 781, 5)
    v = np.exp(-(((wl - 560) / 120.0) ** 2)) + 0.1
    p = tmp_path / "a.csv"
    p.write_text("wavelength,value\n" + "".join(f"{a},{b:.6f}\n" for a, b in zip(wl, v)), encoding="utf-8")
    return p


def test_the_sentence_matches_what_the_commands_do(tmp_path, capsys, spd):
    lot_only = tmp_path / "lot_only.toml"
    lot_only.write_text('[[clause]]\nkind = "lot_yield"\nmin_percent = 90\n', encoding="utf-8")
    over_only = tmp_path / "over_only.toml"
    over_only.write_text('[[clause]]\nfigure = "Ra"\nmin = 80\nover = [2700, 5000]\n', encoding="utf-8")
    claims = tmp_path / "claims.toml"
    claims.write_text("lumeval_claims = 1\n[claims]\nluminous_flux_lm = 1850\n", encoding="utf-8")
    assert run(["lot", spd, "--quiet"], capsys)[0] == 0                          # statistics only
    assert run(["claims", spd, "--claims", claims], capsys)[0] == 0              # nothing checkable
    assert run(["check", spd, "--criteria", lot_only], capsys)[0] == 2           # judges none of its clauses
    assert run(["check", spd, "--criteria", over_only], capsys)[0] == 2
    assert run(["lot", spd, "--criteria", over_only, "--quiet"], capsys)[0] == 2
