"""Per-setpoint notes of `lumeval mix`: the CSV's `notes` column, and the note near the CIE 13.3
reference switch at 5000 K.

The terminal, JSON and HTML reports carried each setpoint's notes (the optimiser's iteration
limit, say); the CSV had no place for them. It now ends with a `notes` column: the setpoint's
notes joined with "; ", through the CSV text helper (control characters escaped, a leading
formula character quoted), empty when there are none. A setpoint whose target CCT lies within
±10 K of 5000 K, where CIE 13.3 changes Ra's reference from the Planckian radiator to CIE
daylight, carries a note that Ra may jump there. Invented spectra; behaviour only.
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest

from lumeval.render.tables import data_rows
from lumeval.render.tunable import to_csv, to_json
from lumeval.tunable import mix as mixmod
from lumeval.tunable.api import mix_files

from .test_tunable_mix_limits import write_wide

WL = np.arange(380.0, 781.0, 1.0)


def g(peak, width):
    return np.exp(-0.5 * ((WL - peak) / width) ** 2)


WARM = 0.35 * g(450, 10) + g(600, 45) + 0.3 * g(650, 25)
COLD = 2.6 * g(452, 10) + g(560, 50)
GREEN = g(525, 18)
RED = g(630, 12)

RA_CRIT = """
[[clause]]
id = "Ra"
figure = "Ra"
min = 50
"""


def _rows(report) -> list[dict]:
    text = to_csv(report)
    head, *body = data_rows(text)
    return [dict(zip(head, r)) for r in body], head


@pytest.fixture
def three(tmp_path):
    """Three channels that reach the locus at 4000 K and 5000 K with no other note there."""
    return write_wide(tmp_path / "three.csv", {"warm": WARM, "cold": COLD, "green": GREEN})


def test_the_iteration_limit_note_is_in_the_last_csv_column(tmp_path, monkeypatch):
    monkeypatch.setattr(mixmod, "SLSQP_MAXITER", 1, raising=False)
    f = write_wide(tmp_path / "four.csv", {"warm": WARM, "cold": COLD, "green": GREEN, "red": RED})
    rows, head = _rows(mix_files([f], "4000", maximise="Rf"))
    assert head[-1] == "notes"
    assert rows[0]["notes"] == mixmod.LIMIT_NOTE


def test_notes_follow_the_verdict_and_are_empty_when_none_or_not_reachable(three, tmp_path):
    crit = tmp_path / "c.toml"
    crit.write_text(RA_CRIT, encoding="utf-8")
    rep = mix_files([three], "4000,1500", criteria=crit)  # 1500 K: outside the channels' triangle
    rows, head = _rows(rep)
    assert head[-2:] == ["verdict", "notes"]
    assert [r["reachable"] for r in rows] == ["yes", "not reachable"]
    assert [r["notes"] for r in rows] == ["", ""]


def test_several_notes_are_joined_and_escaped_with_the_csv_text_helper(tmp_path, monkeypatch):
    from lumeval.render.safe import csv_text

    hostile = "=HYPERLINK(\"x\")\x1b[2J"  # a formula start and a control character
    monkeypatch.setattr(mixmod, "SLSQP_MAXITER", 1, raising=False)
    monkeypatch.setattr(mixmod, "LIMIT_NOTE", hostile)
    f = write_wide(tmp_path / "four.csv", {"warm": WARM, "cold": COLD, "green": GREEN, "red": RED})
    rep = mix_files([f], "5000", maximise="Rf")
    rows, _ = _rows(rep)
    cell = rows[0]["notes"]
    assert cell == csv_text(f"{hostile}; {mixmod.REFERENCE_SWITCH_NOTE}")
    assert cell.startswith("'=") and "\x1b" not in cell and "; reference switch:" in cell
    # the raw CSV parses to the same cell (the writer quotes what needs quoting)
    raw = list(csv.reader(io.StringIO(to_csv(rep))))
    assert raw[1][-1] == cell


def test_a_setpoint_at_5000_K_carries_the_reference_switch_note_and_one_at_4000_K_does_not(three):
    rep = mix_files([three], "4000,5000")
    res = rep.result
    assert res.reachable.all()
    w4000, w5000 = (res.evaluation.warnings[int(k)] for k in res.index)
    assert mixmod.REFERENCE_SWITCH_NOTE in w5000
    assert not any("reference switch" in w for w in w4000)
    rows, _ = _rows(rep)
    assert [r["notes"] for r in rows] == ["", mixmod.REFERENCE_SWITCH_NOTE]
    assert "5000 K" in mixmod.REFERENCE_SWITCH_NOTE and "Ra" in mixmod.REFERENCE_SWITCH_NOTE
    assert "reference switch" in to_json(rep)  # and in the other outputs, as every setpoint note


def test_the_band_around_5000_K_is_plus_minus_10_K_inclusive():
    t = np.array([4000.0, 4950.0, 4989.9, 4990.0, 4999.999, 5000.0, 5000.001, 5010.0, 5010.1, 5050.0, 6500.0])
    assert mixmod.reference_switch_near(t).tolist() == [False, False, False, True, True, True, True, True, False,
                                                        False, False]
