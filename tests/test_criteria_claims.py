"""How datasheet claims are read and judged (decision logic on hand-made numbers).

The reading rules are common practice, no source (documented in docs/criteria.md); the ANSI
nominal-CCT bounds come from ANSI C78.377-2017 Table 1 (secondary, see regions.py).
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.criteria import parse_claims
from lumeval.criteria.claims import CONTRADICTED, NOT_CHECKABLE, SUPPORTED, _half_unit


class Ev:
    def __init__(self, **figs):
        n = len(next(iter(figs.values())))
        self.figs = {k: np.asarray(v, float) for k, v in figs.items()}
        self.x = np.zeros(n)
        self.names = tuple(f"s{i}" for i in range(n))
        self.cct_reason = tuple("" for _ in range(n))

    def figure(self, name):
        return self.figs[name]


def claims(body):
    return parse_claims(body, "claims.toml")


def test_half_unit_of_the_last_digit():
    assert _half_unit("90") == 0.5
    assert _half_unit("0.85") == pytest.approx(0.005)
    assert _half_unit("0.0030") == pytest.approx(0.00005)


def test_minimum_claim_read_at_its_precision():
    c = claims('[claims]\nRa = ">= 90"\n')
    r = c.check(Ev(Ra=[89.6, 89.4, 95.0, np.nan])).results[0]
    assert r.outcome == (SUPPORTED, CONTRADICTED, SUPPORTED, NOT_CHECKABLE)
    assert r.excess[1] == pytest.approx(-0.6)  # measured − stated 90
    assert c.claims[0].lower == pytest.approx(89.5)


def test_maximum_and_explicit_tolerance_claims():
    c = claims('[claims]\nduv = "<= 0.003"\nRg = "100 ± 3"\n')
    chk = c.check(Ev(duv=[0.00304, 0.0036], Rg=[103.0, 96.9]))
    duv, rg = chk.results
    assert duv.outcome == (SUPPORTED, CONTRADICTED)
    assert duv.excess[1] == pytest.approx(0.0006)
    assert rg.outcome == (SUPPORTED, CONTRADICTED)
    assert rg.excess[1] == pytest.approx(96.9 - 97.0)
    assert chk.exit_code == 1


def test_nominal_cct_uses_the_ansi_category():
    """"CCT 3000 K" is supported within ANSI C78.377-2017's 3045 ± 175 K (2870-3220 K)."""
    c = claims('[claims]\ncct_K = "3000 K"\n')
    assert (c.claims[0].lower, c.claims[0].upper) == (2870.0, 3220.0)
    r = c.check(Ev(cct_K=[2875.0, 3219.0, 2860.0, 3300.0])).results[0]
    assert r.outcome == (SUPPORTED, SUPPORTED, CONTRADICTED, CONTRADICTED)
    assert r.excess[2] == pytest.approx(-10.0) and r.excess[3] == pytest.approx(80.0)


def test_nominal_cct_between_categories_and_duv_defaults():
    c = claims('[claims]\ncct_K = 3800\nduv = 0.002\nRa = 92\n')
    cct, duv, ra = c.claims
    # flexible tolerance 1.19e-8 T³ − 1.5434e-4 T² + 0.7168 T − 902.55 at 3800 K ≈ 245.6 K (by hand)
    assert (cct.lower, cct.upper) == pytest.approx((3800 - 245.6, 3800 + 245.6), abs=0.5)
    assert (duv.lower, duv.upper) == pytest.approx((-0.004, 0.008))
    assert (ra.lower, ra.upper) == pytest.approx((91.5, 92.5))


def test_tolerances_table_overrides_defaults():
    c = claims('[tolerances]\nRa = 3\ncct_K = 100\n[claims]\nRa = ">= 90"\ncct_K = 3000\n')
    ra, cct = c.claims
    assert ra.lower == 87.0 and (cct.lower, cct.upper) == (2900.0, 3100.0)


def test_not_checkable_claims_never_fail():
    c = claims('[claims]\nluminous_flux_lm = 1200\nsdcm_steps = 3\nRa = ">= 80"\n')
    chk = c.check(Ev(Ra=[85.0]))
    assert [r.outcome[0] for r in chk.results] == [NOT_CHECKABLE, NOT_CHECKABLE, SUPPORTED]
    assert chk.exit_code == 0 and chk.verdict(0) == SUPPORTED
    assert "flux" in chk.results[0].reason[0]
