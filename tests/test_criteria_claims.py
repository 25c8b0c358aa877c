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


# --------------------------------------------------------------------------- datasheet wordings
# Ranges and the words datasheets put before values (reading rules: common practice, no source).


@pytest.mark.parametrize("text", ["2700-3000 K", "2700 - 3000 K", "2700 K – 3000 K", "2700—3000", "2700 to 3000 K",
                                  "2700...3000 K", "2700…3000"])
def test_a_range_is_read_with_half_a_unit_beyond_each_bound(text):
    c = claims(f'[claims]\ncct_K = "{text}"\n')
    cl = c.claims[0]
    assert (cl.stated_lower, cl.stated_upper) == (2700.0, 3000.0)
    assert (cl.lower, cl.upper) == (2699.5, 3000.5)
    r = c.check(Ev(cct_K=[2699.6, 2699.4, 3000.4, 3000.6, 2850.0])).results[0]
    assert r.outcome == (SUPPORTED, CONTRADICTED, SUPPORTED, CONTRADICTED, SUPPORTED)
    np.testing.assert_allclose(r.excess[[1, 3]], [2699.4 - 2700.0, 3000.6 - 3000.0], rtol=0, atol=1e-9)


def test_a_range_keeps_each_bounds_precision_and_signs():
    c = claims('[claims]\nRf = "90 to 95.5"\nduv = "-0.003-0.0030"\n')
    rf, duv = c.claims
    assert (rf.lower, rf.upper) == pytest.approx((89.5, 95.55))
    assert (duv.stated_lower, duv.stated_upper) == (-0.003, 0.003)
    assert (duv.lower, duv.upper) == pytest.approx((-0.0035, 0.00305))
    assert "0.5 below, 0.05 above" in rf.tolerance_note


def test_a_range_uses_the_tolerances_table():
    c = claims('[claims]\nRa = "80-90"\n[tolerances]\nRa = 2\n')
    assert (c.claims[0].lower, c.claims[0].upper) == (78.0, 92.0)


@pytest.mark.parametrize(("text", "lower", "upper"), [
    ("min. 90", 89.5, None), ("Min 90", 89.5, None), ("minimum 90", 89.5, None), ("at least 90", 89.5, None),
    ("max. 95", None, 95.5), ("maximum 95", None, 95.5), ("at most 95", None, 95.5), ("up to 95", None, 95.5),
    ("~90", 89.5, 90.5), ("≈ 90", 89.5, 90.5), ("approx. 90", 89.5, 90.5), ("about 90", 89.5, 90.5),
    ("ca. 90", 89.5, 90.5),
])
def test_words_before_a_value_stand_for_a_comparison(text, lower, upper):
    cl = claims(f'[claims]\nRa = "{text}"\n').claims[0]
    assert (cl.lower, cl.upper) == (pytest.approx(lower) if lower else None, pytest.approx(upper) if upper else None)


def test_a_comma_not_between_digits_gets_no_hint():
    from lumeval.errors import CriteriaError

    with pytest.raises(CriteriaError) as e:
        claims('[claims]\ncct_K = "90, 95"\n')
    assert "cannot read the claim" in str(e.value) and "thousands" not in str(e.value)


def test_duv_tolerance_alone_is_read_around_the_locus():
    cl = claims('[claims]\nduv = "±0.003"\n').claims[0]
    assert (cl.lower, cl.upper) == (-0.003, 0.003)
    chk = claims('[claims]\nduv = "± 0.003"\n').check(Ev(duv=[0.0029, -0.0031]))
    assert chk.results[0].outcome == (SUPPORTED, CONTRADICTED)


@pytest.mark.parametrize(("text", "words"), [
    ("3000-2700 K", ["runs from 3000 down to 2700", "lower bound first"]),
    ("2700 K - 3000 nm", ["unit"]),
    ("2700-3000 %", ["unit '%' does not fit"]),
    ("±100", ["cannot read the claim"]),          # a tolerance alone is read for Duv only
    ("min. about 90", ["cannot read the claim"]),
    ("90-95-100", ["cannot read the claim"]),
    # a comma between digits: a thousands separator in one datasheet, a decimal comma in another
    ("2,700 K", ["cannot read the claim", "neither as a thousands separator nor as a decimal mark", "2700, not 2,700"]),
    ("0,003", ["neither as a thousands separator nor as a decimal mark", "0.003, not 0,003"]),
    ("2,700-3,000 K", ["neither as a thousands separator nor as a decimal mark"]),
])
def test_unreadable_wordings_are_refused_with_the_line(text, words):
    from lumeval.errors import CriteriaError

    with pytest.raises(CriteriaError) as e:
        claims(f'[claims]\ncct_K = "{text}"\n')
    msg = str(e.value)
    assert msg.startswith("claims.toml:2 "), msg
    for w in words:
        assert w in msg, msg


@pytest.mark.parametrize(("text", "meant"), [
    ('"3.000 K ± 150 K"', "3000"),   # a dot as thousands separator: read as 3 K, then contradicted
    ('"6.500 K"', "6500"),
    ("2.700", "2700"),               # a TOML float: 2.7
    ('">= 2.700 K"', "2700"),
    ('"2.700-3.000 K"', "2700"),     # the first bound out of range is named
    ('"2700 K - 6.500 K"', "6500"),
    ('"500 K"', None),               # outside the range, no thousands-separator reading
    ('"<= 30000 K"', None),
    ('"-3.000"', None),
])
def test_a_cct_claim_outside_the_cct_range_is_refused(text, meant):
    """A CCT claim outside 1000-25000 K, where lumeval reports CCT, cannot be meant: refused with
    its line, suggesting the thousands-separator reading where there is one (found by a review:
    "3.000 K ± 150 K" was judged as 3 K ± 150 K and contradicted)."""
    from lumeval.errors import CriteriaError

    with pytest.raises(CriteriaError) as e:
        claims(f'[claims]\nRa = ">= 80"\ncct_K = {text}\n')
    msg = str(e.value)
    assert msg.startswith("claims.toml:3 field 'cct_K': "), msg
    assert "outside the 1000-25000 K where lumeval reports CCT" in msg, msg
    assert (f"did you mean {meant} K" in msg) if meant else ("did you mean" not in msg), msg


@pytest.mark.parametrize("text", ["1000 K ± 10 K", "25000 ± 100", "2700-3000 K", ">= 2700", "3000 K ± 150 K"])
def test_cct_claims_inside_the_cct_range_are_read(text):
    assert len(claims(f'[claims]\ncct_K = "{text}"\n').claims) == 1


@pytest.mark.parametrize(("key", "text"), [
    ("Ra", ">= " + "9" * 150 + "+"),                  # a minimum written twice
    ("Ra", "1" + "0" * 100 + " - 1e999"),             # a bound too large to represent
    ("Ra", "9" * 100 + " to 1"),                      # a range running downwards
])
def test_refused_claims_are_quoted_as_the_main_message_quotes_them(key, text):
    """Every refused claim is quoted through errors.shown (at most about 80 characters), as the
    main "cannot read the claim" message does; some messages quoted it whole with repr."""
    from lumeval.errors import CriteriaError, shown

    with pytest.raises(CriteriaError) as e:
        claims(f'[claims]\n{key} = "{text}"\n')
    msg = str(e.value)
    assert shown(text) in msg and repr(text) not in msg, msg


@pytest.mark.parametrize("text", ["\u2265 \u0669\u0660", "\uff19\uff10+", "90 \u00b1 \u0661", "\u0662\u0667\u0660\u0660-3000 K"])
def test_claims_take_the_digits_0_9_only(text):
    """As every reader of lumeval: Arabic-Indic or full-width digits were read as 90, 1, 2700 by
    the claims' patterns (Python's \\d matches any script's digits)."""
    from lumeval.errors import CriteriaError

    key = "cct_K" if "3000" in text else "Ra"
    with pytest.raises(CriteriaError, match="cannot read the claim"):
        claims(f'[claims]\n{key} = "{text}"\n')
