"""Criteria judged under uncertainty on the demo scenario.

Checks: with a zero-uncertainty instrument every rule reproduces the plain verdicts of the
criteria module; near a limit the rules separate exactly as ISO 14253-1:2017 / JCGM 106:2012
§8.2-8.3 say (zones computed here from the reported u with w = 2u); the probability of
conformance equals Φ((y − T_L)/u) from scipy for the reported y and u; the clause's u equals
the Monte Carlo u of the same figure with the same seed (same draws).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.stats import norm

from lumeval.criteria import parse_criteria
from lumeval.uncertainty import DecisionRule, InstrumentModel, MonteCarloSettings, propagate
from lumeval.uncertainty.judge import UncertaintySetup, judge_with_uncertainty

DEMO = Path(__file__).resolve().parents[1] / "spectra_demo" / "downlights"


@pytest.fixture(scope="module")
def evaluation():
    from lumeval.api import inspect as inspect_files

    return inspect_files([DEMO / "candidate_A_aurora_3000K.csv", DEMO / "candidate_B_basicline_3000K.csv"])


def _criteria(r9_min: float):
    text = f"""
[[clause]]
id = "Ra"
figure = "Ra"
min = 80

[[clause]]
id = "R9"
figure = "R9"
min = {r9_min}

[[clause]]
id = "quad"
kind = "ansi_quadrangle"
nominal_cct = 3000

[[clause]]
id = "cct"
figure = "cct_K"
range = [2870, 3220]
"""
    return parse_criteria(text, "test.toml")


ZERO = InstrumentModel(0, 0, 0, 0, 0, 0)


@pytest.mark.parametrize("rule", ["simple", "guarded-acceptance", "guarded-rejection"])
def test_zero_uncertainty_reproduces_plain_verdicts(evaluation, rule):
    crit = _criteria(r9_min=50)
    plain = crit.evaluate(evaluation)
    check, unc = judge_with_uncertainty(evaluation, crit, UncertaintySetup(ZERO, MonteCarloSettings(draws=100), DecisionRule(rule)))
    assert unc is not None
    # strings (outcomes, verdicts) exactly; floats within a tolerance: the draws are evaluated in
    # batches whose BLAS path differs from the single evaluation (seen: 1e-16 .. 8e-14 apart)
    for a, b in zip(plain.results, check.results):
        assert a.outcome == b.outcome
        fin = np.isfinite(b.measured)
        np.testing.assert_allclose(b.measured, a.measured, rtol=1e-12, atol=1e-12)
        scale = np.maximum(np.abs(b.measured[fin]), 1.0)
        np.testing.assert_allclose(b.uncertainty[fin] / scale, 0.0, atol=1e-10)
    assert check.verdicts == plain.verdicts and check.exit_code == plain.exit_code


def test_rules_separate_near_a_limit(evaluation):
    plain = _criteria(r9_min=50).evaluate(evaluation)
    r9 = plain.results[1].measured[0]
    st = MonteCarloSettings(draws=600, seed=3)
    model = InstrumentModel()
    # a limit just below candidate A's R9 (inside the guard band) and one just above it
    for offset, expect in ((-0.25, {"simple": "pass", "guarded-acceptance": "indeterminate", "guarded-rejection": "pass"}),
                           (+0.25, {"simple": "fail", "guarded-acceptance": "fail", "guarded-rejection": "indeterminate"})):
        crit = _criteria(r9_min=round(r9 + offset, 3))
        for rule, outcome in expect.items():
            check, _ = judge_with_uncertainty(evaluation, crit, UncertaintySetup(model, st, DecisionRule(rule)))
            res = check.results[1]
            u = res.uncertainty[0]
            assert 0.125 < u < 2.0  # the test needs the limit inside the guard band w = 2u
            assert res.outcome[0] == outcome, (offset, rule, u)
            y = res.measured[0]
            assert res.p_conformance[0] == pytest.approx(norm.cdf((y - crit.clauses[1].lower) / u), rel=1e-9)
            if rule != "simple":
                assert check.exit_code == 1  # indeterminate or fail: never exit 0
            assert res.details["ci95_low"][0] < y < res.details["ci95_high"][0]
            # the fraction of draws that conform agrees with the normal-PDF p_c within Monte
            # Carlo noise (binomial sd ≤ 0.5/√600 = 0.02) plus the non-normality of R9's draws
            assert abs(res.details["p_conformance_mc"][0] - res.p_conformance[0]) < 0.1


def test_clause_u_equals_figure_u_with_same_seed(evaluation):
    crit = _criteria(r9_min=50)
    st = MonteCarloSettings(draws=300, seed=9)
    check, unc = judge_with_uncertainty(evaluation, crit, UncertaintySetup(InstrumentModel(), st, DecisionRule("simple")))
    u_fig = propagate(evaluation.spectra, InstrumentModel(), st, figures=("Ra", "cct_K"), evaluation=evaluation)
    np.testing.assert_allclose(check.results[0].uncertainty, u_fig.u_of("Ra"), rtol=1e-12)
    np.testing.assert_allclose(check.results[3].uncertainty, u_fig.u_of("cct_K"), rtol=1e-12)
    # the quadrangle clause carries the uncertainty of its signed Δu'v' margin
    q = check.results[2]
    assert q.unit == "Δu'v'" and np.all(q.uncertainty > 0) and np.all(q.uncertainty < 0.002)
    assert "simple acceptance" in q.decision_rule


def test_inactive_setup_leaves_the_plain_check(evaluation):
    crit = _criteria(r9_min=50)
    check, unc = judge_with_uncertainty(evaluation, crit, UncertaintySetup())
    assert unc is None and all(r.uncertainty is None for r in check.results)
