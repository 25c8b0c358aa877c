"""Decision rules (ISO 14253-1:2017, JCGM 106:2012) and probabilities of conformance.

Oracles:
- the normal distribution function of scipy.stats (an independent library) for JCGM 106:2012's
  relations for a normal PDF: single upper limit p_c = Φ((T_U − y)/u), single lower limit
  p_c = Φ((y − T_L)/u) (§7.3), two limits p_c = Φ((T_U − y)/u) − Φ((T_L − y)/u) (§7.4)
  (clause numbers quoted from memory);
- the standard normal quantiles JCGM 106:2012 Table 1 lists for one-sided limits (p_c 0.80,
  0.90, 0.95, 0.99, 0.999 ↔ z = (T_U − y)/u = 0.84, 1.28, 1.64, 2.33, 3.09; quoted from
  memory, and identical to textbook normal quantiles to the two decimals shown);
- a direct count of normal random draws inside the tolerance interval (two limits);
- the criteria module's plain verdicts (``simple_outcomes``), for the zero-uncertainty case.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm

from lumeval.errors import CriteriaError
from lumeval.uncertainty.decision import (
    FAIL,
    GUARDED_ACCEPTANCE,
    GUARDED_REJECTION,
    INDETERMINATE,
    NOT_JUDGED,
    PASS,
    SIMPLE,
    DecisionRule,
    decide,
    decide_margin,
    probability_of_conformance,
    rule_from_table,
)


@pytest.mark.parametrize("pc, z", [(0.80, 0.84), (0.90, 1.28), (0.95, 1.64), (0.99, 2.33), (0.999, 3.09)])
def test_single_upper_limit_matches_jcgm106_table1(pc, z):
    # y lies z standard uncertainties below T_U
    u = 0.7
    y = 10.0 - z * u
    p = probability_of_conformance([y], [u], upper=10.0)[0]
    assert p == pytest.approx(pc, abs=0.0015)  # table z values are rounded to 2 decimals
    assert p == pytest.approx(norm.cdf(z), rel=1e-12)


def test_single_lower_limit_is_the_mirror_image():
    y = np.array([88.0, 89.5, 90.0, 90.4, 93.0])
    u = np.array([0.3, 0.3, 0.3, 0.3, 0.3])
    p = probability_of_conformance(y, u, lower=90.0)
    np.testing.assert_allclose(p, norm.sf((90.0 - y) / u), rtol=1e-12)
    assert p[2] == pytest.approx(0.5)  # on the limit: even odds (JCGM 106 §7.3)


def test_two_limits_against_scipy_and_direct_count():
    y = np.array([0.0, 0.8, -1.3, 2.5])
    u = np.array([0.5, 0.5, 1.0, 0.4])
    lo, hi = -1.0, 1.0
    p = probability_of_conformance(y, u, lower=lo, upper=hi)
    np.testing.assert_allclose(p, norm.cdf((hi - y) / u) - norm.cdf((lo - y) / u), rtol=1e-12)
    rng = np.random.default_rng(0)
    z = rng.standard_normal((400_000, 1)) * u + y
    frac = np.mean((z >= lo) & (z <= hi), axis=0)
    np.testing.assert_allclose(p, frac, atol=0.003)


def test_zero_uncertainty_gives_certain_probabilities():
    p = probability_of_conformance([89.9, 90.0, 90.1, np.nan], [0, 0, 0, 0], lower=90.0)
    assert p[:3].tolist() == [0.0, 1.0, 1.0] and np.isnan(p[3])


def test_guard_band_zones():
    rule_a = DecisionRule(GUARDED_ACCEPTANCE)  # r = 1, k = 2 → w = 2u
    rule_r = DecisionRule(GUARDED_REJECTION)
    u = 0.25  # w = 0.5
    # upper limit 10: values in the acceptance zone, guard band inside, guard band outside, beyond
    y = np.array([9.0, 9.5, 9.7, 10.0, 10.3, 10.5, 11.0])
    a = decide(y, u, None, 10.0, rule_a).outcome
    r = decide(y, u, None, 10.0, rule_r).outcome
    s = decide(y, u, None, 10.0, DecisionRule(SIMPLE)).outcome
    assert a == (PASS, PASS, INDETERMINATE, INDETERMINATE, FAIL, FAIL, FAIL)
    assert r == (PASS, PASS, PASS, PASS, INDETERMINATE, INDETERMINATE, FAIL)
    assert s == (PASS, PASS, PASS, PASS, FAIL, FAIL, FAIL)


def test_probability_at_the_acceptance_limit():
    """With w = U = 2u (r = 1, k = 2) a value exactly at the guarded acceptance limit of a single
    upper limit has p_c = Φ(2) ≈ 0.977; at the guarded rejection limit p_c = Φ(−2) ≈ 0.023
    (JCGM 106:2012 §8.3 with the normal relations of §7.3)."""
    u = 0.125  # exactly representable, so that y sits exactly on the acceptance limit
    at_acc = decide([10.0 - 2 * u], u, None, 10.0, DecisionRule(GUARDED_ACCEPTANCE))
    at_rej = decide([10.0 + 2 * u], u, None, 10.0, DecisionRule(GUARDED_REJECTION))
    assert at_acc.outcome == (PASS,)
    assert at_acc.p_conformance[0] == pytest.approx(norm.cdf(2.0), rel=1e-9)
    assert at_rej.outcome == (INDETERMINATE,)
    assert at_rej.p_conformance[0] == pytest.approx(norm.cdf(-2.0), rel=1e-9)
    np.testing.assert_allclose(at_acc.guard_band, [0.25])


def test_two_sided_guard_band_shrinks_both_ends():
    rule = DecisionRule(GUARDED_ACCEPTANCE, guard_band_factor=0.5, coverage_factor=2.0)  # w = u
    y = np.array([2700.0, 2600.0, 2590.0, 2870.0, 2890.0])
    d = decide(y, 20.0, 2580.0, 2870.0, rule)  # w = 20 K
    assert d.outcome == (PASS, PASS, INDETERMINATE, INDETERMINATE, FAIL)


def test_zero_uncertainty_rules_coincide_with_plain_verdicts():
    from lumeval.criteria.verdicts import simple_outcomes

    rng = np.random.default_rng(4)
    y = np.concatenate([rng.uniform(85, 95, 200), [90.0, np.nan]])
    plain, _ = simple_outcomes(y - 90.0)
    for rule in (SIMPLE, GUARDED_ACCEPTANCE, GUARDED_REJECTION):
        d = decide(y, 0.0, 90.0, None, DecisionRule(rule))
        assert d.outcome == plain, rule
        dm = decide_margin(y - 90.0, 0.0, DecisionRule(rule))
        assert dm.outcome == plain, rule


def test_outcome_words_match_the_verdicts_module():
    from lumeval.criteria import verdicts

    assert (PASS, FAIL, INDETERMINATE, NOT_JUDGED) == (verdicts.PASS, verdicts.FAIL, verdicts.INDETERMINATE,
                                                       verdicts.NOT_JUDGED)


def test_margin_form_probability():
    # a chromaticity margin of +0.001 with u = 0.0005 → p_c = Φ(2)
    d = decide_margin([0.001, -0.0005], [0.0005, 0.0005], DecisionRule(GUARDED_ACCEPTANCE))
    np.testing.assert_allclose(d.p_conformance, [norm.cdf(2.0), norm.cdf(-1.0)], rtol=1e-12)
    assert d.outcome == (PASS, FAIL)


def test_rule_table_parsing_and_errors():
    text = '[decision]\nrule = "guarded-acceptance"\nguard_band_factor = 0.5\n'
    r = rule_from_table({"rule": "guarded-acceptance", "guard_band_factor": 0.5}, file="c.toml", text=text)
    assert r.rule == GUARDED_ACCEPTANCE and r.guard_band_factor == 0.5 and r.coverage_factor == 2.0
    assert "guarded acceptance" in r.describe()
    with pytest.raises(CriteriaError) as e:
        rule_from_table({"rule": "guarded"}, file="c.toml", text='[decision]\nrule = "guarded"\n')
    assert e.value.line == 2 and "guarded-acceptance" in e.value.message
    with pytest.raises(CriteriaError) as e:
        rule_from_table({"rul": "simple"}, file="c.toml", text='[decision]\nrul = "simple"\n')
    assert e.value.line == 2 and "unknown key" in e.value.message
    with pytest.raises(CriteriaError):
        rule_from_table({"coverage_factor": 5}, file="c.toml", text="[decision]\ncoverage_factor = 5\n")
    with pytest.raises(CriteriaError):
        rule_from_table({"guard_band_factor": 0}, file="c.toml", text="[decision]\nguard_band_factor = 0\n")
