"""Decisions under uncertainty after a review: undefined draws, reproducible streams, resolution
of a decision, percent-for-fraction, few or unstable draws, the words and digits of the reports.

Outside references: JCGM 106:2012 §7.1 (the probability of conformance is the probability of the
tolerance interval, so it cannot exceed the probability that the quantity exists at all);
scipy.stats.chi for the standard deviation of a sample standard deviation (the Monte Carlo
resolution of a guard band); Python's own ``format(U, ".2g")`` for two significant digits.
Clause numbers quoted from memory. The spectra are made here: a Planckian radiator from Planck's
law (scipy.constants) and sums of Gaussians.
"""

from __future__ import annotations

import json
import re
from types import SimpleNamespace

import numpy as np
import pytest
from scipy import constants
from scipy.optimize import brentq
from scipy.stats import chi

from .conftest import assert_clean_error
from .conftest import run_cli_in_process as run

WL = np.arange(380, 781, 1.0)

INST = """[instrument]
name = "test rig"
wavelength_offset_nm = 0.3
noise_relative = 0.005
noise_absolute = 0.0005
bandwidth_nm = 4
photometric_scale = 0.02
stray_light = 0.0005
"""

GUARDED = 'lumeval_criteria = 1\n[decision]\nrule = "guarded-acceptance"\n[[clause]]\nid = "{id}"\nfigure = "{fig}"\nmin = {lo}\n'


def _g(mu, s):
    return np.exp(-0.5 * ((WL - mu) / s) ** 2)


def _write(path, values):
    v = values / np.max(values)
    path.write_text(f"wavelength_nm,{path.stem}\n" + "".join(f"{a:g},{b:.8f}\n" for a, b in zip(WL, v)),
                    encoding="utf-8")
    return path


def _led(tmp_path, name="led_a"):
    return _write(tmp_path / f"{name}.csv", 1.0 * _g(450, 10) + 1.3 * _g(560, 45) + 1.0 * _g(625, 28))


def _planck(tmp_path, T=3000.0):
    lam = WL * 1e-9
    c2 = constants.h * constants.c / constants.k
    return _write(tmp_path / "bb3000.csv", 1.0 / lam**5 / np.expm1(c2 / (lam * T)))


def _duv(values) -> float:
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    ev = evaluate(SpectrumSet(WL, np.atleast_2d(values / values.max()), ("g",), ("g",)))
    return float(ev.figure("duv")[0])


@pytest.fixture(scope="module")
def green(tmp_path_factory):
    """A greenish source with Duv = 0.0497: its CCT exists, but many draws cross |Duv| = 0.05."""
    tmp = tmp_path_factory.mktemp("green")

    def mix(a):
        return 0.6 * _g(450, 10) + a * _g(545, 25) + 0.5 * _g(620, 15)

    a = brentq(lambda a: _duv(mix(a)) - 0.0497, 1.0, 2.0, xtol=1e-6)
    return _write(tmp / "green.csv", mix(a))


def _files(tmp_path, crit_text, inst_text=INST):
    c = tmp_path / "c.toml"
    c.write_text(crit_text, encoding="utf-8")
    i = tmp_path / "i.toml"
    i.write_text(inst_text, encoding="utf-8")
    return c, i


# ------------------------------------------------------------------ 1. undefined draws


def test_undefined_draws_count_against_conformance_and_block_a_guarded_pass(tmp_path, green, capsys):
    # measured CCT ≈ 5472 K: a limit 30 K below lies just outside the guard band U ≈ 29 K, so the
    # defined draws alone would pass it (the review's case: pass with p_c 0.981)
    crit, inst = _files(tmp_path, GUARDED.format(id="cct", fig="cct_K", lo=5442))
    code, out, err = run(["check", green, "-c", crit, "--instrument", inst, "--format", "json"], capsys)
    assert err == ""
    c = json.loads(out)["spectra"][0]["clauses"][0]
    assert np.isfinite(c["measured"]) and c["margin"] > c["details"]["guard_band"]  # would pass on the guard band
    assert c["outcome"] == "indeterminate" and code == 1
    frac = c["details"]["undefined_fraction"]
    assert frac > 0.05
    # JCGM 106:2012 §7.1: p_c is the probability of the tolerance interval; the draws where CCT
    # does not exist lie outside it, so p_c ≤ 1 − (undefined fraction) (exact: counts of draws)
    assert c["details"]["p_conformance_mc"] <= 1.0 - frac + 1e-12
    np.testing.assert_allclose(c["p_conformance"], c["details"]["p_conformance_mc"], rtol=0, atol=1e-15)
    assert f"{frac * 100:.1f} %" in c["reason"] and "defined draws only" in c["reason"]
    assert "does not decide" in c["reason"]


def test_undefined_draws_under_simple_acceptance_keep_the_verdict_but_say_so(tmp_path, green, capsys):
    crit, inst = _files(tmp_path, GUARDED.format(id="cct", fig="cct_K", lo=5442).replace("guarded-acceptance", "simple"))
    code, out, err = run(["check", green, "-c", crit, "--instrument", inst, "--format", "json"], capsys)
    c = json.loads(out)["spectra"][0]["clauses"][0]
    assert c["outcome"] == "pass" and code == 0  # the measured value decides
    assert c["p_conformance"] <= 1.0 - c["details"]["undefined_fraction"] + 1e-12
    assert "not conforming" in c["reason"]


# ------------------------------------------------------------------ 2. streams and resolution


def test_identical_spectra_get_identical_draws_wherever_they_stand(tmp_path, capsys):
    led = _led(tmp_path)
    copy = tmp_path / "led_copy.csv"
    copy.write_bytes(led.read_bytes())
    bb = _planck(tmp_path)
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79.315))

    def u_of(files):
        _, out, _ = run(["check", *files, "-c", crit, "--instrument", inst, "--format", "json"], capsys)
        return {s["source"].replace("\\", "/").rsplit("/", 1)[-1]: (s["clauses"][0]["uncertainty"], s["clauses"][0]["outcome"])
                for s in json.loads(out)["spectra"]}

    one = u_of([bb, led, copy])
    two = u_of([copy, led])
    # bit-for-bit the same draws (tolerance 0 relative, 1e-15 absolute: only summation order)
    np.testing.assert_allclose(one["led_a.csv"][0], one["led_copy.csv"][0], rtol=0, atol=1e-15)
    np.testing.assert_allclose(two["led_a.csv"][0], one["led_a.csv"][0], rtol=0, atol=1e-15)
    assert one["led_a.csv"][1] == one["led_copy.csv"][1] == two["led_copy.csv"][1]


def test_guard_band_resolution_is_the_spread_of_a_sample_standard_deviation():
    from lumeval.uncertainty import DecisionRule
    from lumeval.uncertainty.judge import guard_band_resolution

    rule = DecisionRule("guarded-acceptance", guard_band_factor=1.0, coverage_factor=2.0)
    for m in (200, 2000, 20000):
        # s·√(M−1)/σ follows a chi distribution with M − 1 degrees of freedom (normal draws)
        sd_of_s = chi(m - 1).std() / np.sqrt(m - 1)
        got = guard_band_resolution(np.array([1.0]), np.array([m]), rule)[0]
        np.testing.assert_allclose(got, 2 * 2.0 * sd_of_s, rtol=2e-3)  # first order in 1/M
    assert np.isnan(guard_band_resolution(np.array([1.0]), np.array([2000]), DecisionRule())[0])


def test_a_margin_within_the_resolution_of_the_guard_band_is_flagged(tmp_path, capsys):
    led = _led(tmp_path)
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79.315))
    code, out, err = run(["check", led, "-c", crit, "--instrument", inst, "--format", "json"], capsys)
    c = json.loads(out)["spectra"][0]["clauses"][0]
    m, w, u = c["margin"], c["details"]["guard_band"], c["uncertainty"]
    res = 2 * 2.0 * u / np.sqrt(2 * (2000 - 1))
    assert abs(m - w) < res  # the review's case: margin +0.214 against w ≈ 0.21
    assert "Monte Carlo resolution" in c["reason"] and "more draws" in c["reason"]


# ------------------------------------------------------------------ 3. percent for fraction


@pytest.mark.parametrize("key, value, meant", [("noise_relative", "0.5", "0.005"), ("noise_absolute", "0.05", "0.0005"),
                                               ("stray_light", "0.05", "0.0005"), ("photometric_scale", "2", "0.02")])
def test_a_percentage_where_a_fraction_is_wanted_is_refused(tmp_path, capsys, key, value, meant):
    led = _led(tmp_path)
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79), f"[instrument]\n{key} = {value}\n")
    code, out, err = run(["check", led, "-c", crit, "--instrument", inst], capsys)
    assert_clean_error(code, err, "i.toml:2", key, f"did you mean {meant}?")


# ------------------------------------------------------------------ 4, 5. few draws, no stabilisation


def _texts(tmp_path, capsys, files, crit, inst, *extra):
    out = {}
    for fmt in ("terminal", "json", "csv"):
        _, o, _ = run(["check", *files, "-c", crit, "--instrument", inst, "--format", fmt, *extra], capsys)
        out[fmt] = re.sub(r"\s+", " ", o)
    html = tmp_path / "r.html"
    run(["check", *files, "-c", crit, "--instrument", inst, "--html", html, *extra], capsys)
    import html as _html

    out["html"] = re.sub(r"\s+", " ", _html.unescape(re.sub(r"<[^>]+>", " ", html.read_text(encoding="utf-8"))))
    return out


def test_fewer_than_2000_draws_is_said_in_every_format(tmp_path, capsys):
    led = _led(tmp_path)
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79))
    for fmt, text in _texts(tmp_path, capsys, [led], crit, inst, "--draws", "200").items():
        assert "only 200 Monte Carlo draws per spectrum, fewer than the 2000" in text, fmt


def test_an_adaptive_run_that_did_not_stabilise_is_said_in_every_format(tmp_path, capsys):
    led = _led(tmp_path)
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79),
                        INST + '[monte_carlo]\ndraws = "adaptive"\ndraws_block = 500\nmax_draws = 1000\n'
                        "significant_digits = 2\n")
    texts = _texts(tmp_path, capsys, [led], crit, inst)
    assert json.loads(run(["check", led, "-c", crit, "--instrument", inst, "--format", "json"], capsys)[1]
                      )["uncertainty"]["monte_carlo"]["stabilised"] == [False]
    for fmt, text in texts.items():
        assert "did not stabilise" in text and "led_a (1000 draws)" in text, fmt


def test_a_lot_says_which_samples_did_not_stabilise(tmp_path, capsys):
    """A lot decided under uncertainty runs the Monte Carlo batch by batch and said neither the
    samples that did not stabilise nor their draws (found by a review): now the terminal
    summary, the lot JSON and the HTML report carry the note a check carries, naming them."""
    leds = [_led(tmp_path, f"led_{k}") for k in "abc"]
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79),
                        INST + '[monte_carlo]\ndraws = "adaptive"\ndraws_block = 500\nmax_draws = 1000\n'
                        "significant_digits = 2\n")
    out_json, html, samples = tmp_path / "lot.json", tmp_path / "lot.html", tmp_path / "s.csv"
    code, out, err = run(["lot", *leds, "-c", crit, "--instrument", inst, "--json", out_json, "--html", html,
                          "--samples-csv", samples], capsys)
    assert code in (0, 1), err
    unc = json.loads(out_json.read_text(encoding="utf-8"))["uncertainty"]
    notes = unc["notes"]
    said = [n for n in notes if "did not stabilise" in n]
    assert len(said) == 1 and "for 3 spectra" in said[0], notes
    assert all(f"led_{k} (1000 draws)" in said[0] for k in "abc")
    # every such sample for a program reading the JSON, as a check gives its per-spectrum arrays
    mc = unc["monte_carlo"]
    assert mc["not_stabilised"] == [{"sample": f"led_{k}", "draws": 1000} for k in "abc"]
    assert mc["draws_used_min"] == mc["draws_used_max"] == 1000
    # the advice of an adaptive run is max_draws, not --draws (which would switch it off)
    few = [n for n in notes if "fewer than the 2000" in n]
    assert len(few) == 1 and "raise max_draws in [monte_carlo] to 2000 or more" in few[0] and "--draws" not in few[0]
    csv_text = samples.read_text(encoding="utf-8")
    assert "# note: the adaptive Monte Carlo did not stabilise" in csv_text and "fewer than the 2000" in csv_text
    assert "did not stabilise" in re.sub(r"\s+", " ", out) and "led_a (1000 draws)" in re.sub(r"\s+", " ", out)
    import html as _html

    page = re.sub(r"\s+", " ", _html.unescape(re.sub(r"<[^>]+>", " ", html.read_text(encoding="utf-8"))))
    assert "did not stabilise" in page and "led_c (1000 draws)" in page


# ------------------------------------------------------------------ 6. words


def test_lot_verdict_tells_indeterminate_from_not_judged():
    from lumeval.render.lot_report import _verdict_line

    def line(verdicts):
        return _verdict_line(SimpleNamespace(check=object(), lot_results=[], failed=True, sample_verdicts=verdicts,
                                             has_yield_clause=False, unreadable=[]))

    assert "indeterminate" in line(["pass", "indeterminate"]) and "could not be judged" not in line(["indeterminate"])
    assert "could not be judged" in line(["pass", "not judged"])
    assert line(["indeterminate", "fail"]) == "Lot verdict: FAIL."


def test_the_footer_says_what_the_margin_is_measured_to(tmp_path, capsys):
    led = _led(tmp_path)
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79))
    texts = _texts(tmp_path, capsys, [led], crit, inst)
    for fmt in ("terminal", "html"):
        assert "acceptance zone" not in texts[fmt]
        assert "to the nearer tolerance limit" in texts[fmt] and "guard band w is not subtracted" in texts[fmt], fmt


# ------------------------------------------------------------------ 7. digits, 9. the rule in the CSV


def test_u_has_two_significant_digits_and_the_margin_its_decimal_place(tmp_path, capsys):
    led = _led(tmp_path)
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79.315))
    _, out, _ = run(["check", led, "-c", crit, "--instrument", inst, "--format", "json"], capsys)
    c = json.loads(out)["spectra"][0]["clauses"][0]
    big_u = format(c["details"]["U"], ".2g")  # two significant digits, Python's own formatting
    d = len(big_u.partition(".")[2])
    assert d == 2  # U ≈ 0.21 here
    want = (f"{c['measured']:.{d}f}", f"{c['margin']:+.{d}f}", f"± {big_u}")
    texts = _texts(tmp_path, capsys, [led], crit, inst)
    for fmt in ("terminal", "html"):
        for w in want:
            assert w in texts[fmt], (fmt, w)


def test_the_check_csv_states_the_rule_k_r_draws_and_seed(tmp_path, capsys):
    led = _led(tmp_path)
    crit, inst = _files(tmp_path, GUARDED.format(id="Ra", fig="Ra", lo=79))
    _, out, _ = run(["check", led, "-c", crit, "--instrument", inst, "--format", "csv", "--seed", "7"], capsys)
    notes = [ln for ln in out.splitlines() if ln.lstrip('"').startswith("# note:")]
    text = " ".join(notes)
    assert "(decision_rule = guarded-acceptance)" in text
    assert "U = k × u with k = 2" in text and "w = r × U with r = 1" in text
    assert "2000 draws per spectrum" in text and "seed 7" in text
