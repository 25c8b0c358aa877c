"""Clause evaluation and verdicts, vectorised over N spectra, with a small fake evaluation.

Outside sources: TM-30-20 Annex E thresholds are checked against luxpy 1.12.5's independent
Annex E classifier (test-only oracle); everything else here is decision logic on hand-made
numbers (margins are plain arithmetic).
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.criteria import parse_criteria, presets
from lumeval.criteria import regions as R
from lumeval.criteria.verdicts import FAIL, NOT_JUDGED, PASS, combine_outcomes, margin_to_limits
from lumeval.metrics.colorimetry import xy_from_uv


class FakeEvaluation:
    """Provides what clauses read: figure(name) -> (N,), x, y, u_prime, v_prime, cct_K, duv.
    Chromaticity is built from (CCT, Duv) by Ohno (2014) Eqs. 13-14."""

    def __init__(self, cct, duv, **figs):
        self.cct_K = np.asarray(cct, float)
        self.duv = np.asarray(duv, float)
        uv = R.uv_from_cct_duv(self.cct_K, self.duv)
        up = R.upvp_from_uv(uv)
        xy = xy_from_uv(uv)
        self.x, self.y = xy[:, 0], xy[:, 1]
        self.u, self.v = uv[:, 0], uv[:, 1]
        self.u_prime, self.v_prime = up[:, 0], up[:, 1]
        self.figs = {k: np.broadcast_to(np.asarray(v, float), self.cct_K.shape) for k, v in figs.items()}
        self.names = tuple(f"s{i}" for i in range(self.cct_K.size))
        self.cct_reason = tuple("" for _ in range(self.cct_K.size))
        self.warnings = tuple(() for _ in range(self.cct_K.size))

    def figure(self, name):
        if name in ("x", "y", "u", "v", "u_prime", "v_prime", "cct_K", "duv"):
            return getattr(self, name)
        return self.figs[name]


def _criteria(body: str):
    return parse_criteria(body, "t.toml")


def test_margin_to_limits_arithmetic():
    m = np.array([40.0, 50.0, 60.0, np.nan])
    assert margin_to_limits(m, 50, None)[:3] == pytest.approx([-10, 0, 10])
    assert margin_to_limits(m, None, 55)[:3] == pytest.approx([15, 5, -5])
    # range: distance to the nearer limit inside, minus the distance to the violated one outside
    assert margin_to_limits(m, 45, 58)[:3] == pytest.approx([-5, 5, -2])


def test_figure_clause_vectorised_with_undefined_values():
    ev = FakeEvaluation([3000] * 4, [0] * 4, R9=[60.0, 50.0, 49.99, np.nan])
    res = _criteria('[[clause]]\nfigure = "R9"\nmin = 50\n').evaluate(ev)
    (r,) = res.results
    assert r.outcome == (PASS, PASS, FAIL, NOT_JUDGED)
    assert r.margin[:3] == pytest.approx([10.0, 0.0, -0.01])
    assert r.reason[3]
    assert res.verdicts == (PASS, PASS, FAIL, NOT_JUDGED)
    assert res.exit_code == 1


def test_exit_code_zero_only_when_everything_passes():
    ev = FakeEvaluation([3000, 3010], [0, 0], Ra=[91.0, 95.0])
    res = _criteria('[[clause]]\nfigure = "Ra"\nrange = [90, 100]\n').evaluate(ev)
    assert res.verdicts == (PASS, PASS) and res.exit_code == 0 and res.overall == PASS
    ev2 = FakeEvaluation([3000], [0], Ra=[np.nan])
    assert _criteria('[[clause]]\nfigure = "Ra"\nmin = 80\n').evaluate(ev2).exit_code == 1  # not judged is not a pass


def test_combine_outcomes_order():
    assert combine_outcomes([]) == PASS
    assert combine_outcomes([PASS, NOT_JUDGED]) == NOT_JUDGED
    assert combine_outcomes([NOT_JUDGED, "indeterminate"]) == "indeterminate"
    assert combine_outcomes([PASS, "indeterminate", FAIL]) == FAIL


def test_results_follow_file_order_and_groups():
    ev = FakeEvaluation([3000], [0], Ra=[92], R9=[55], Rf=[80], Rg=[100], Rcs_h1=[3])
    body = (
        '[[clause]]\nid = "b"\nfigure = "R9"\nmin = 50\n'
        '[[clause]]\nid = "intent"\nkind = "tm30_design_intent"\nlevel = "P1"\n'
        '[[clause]]\nid = "a"\nfigure = "Ra"\nmin = 90\n'
    )
    res = _criteria(body).evaluate(ev)
    assert [r.clause_id for r in res.results] == ["b", "intent:Rf", "intent:Rg", "intent:Rcs_h1", "a"]
    assert {r.group for r in res.results[1:4]} == {"intent"}
    assert res.results[2].line == 5


def test_quadrangle_clause_uses_upvp_and_reports_margin():
    ev = FakeEvaluation([3045, 3045, 3300], [0.0001, 0.0070, 0.0])
    res = _criteria('[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = 3000\n').evaluate(ev)
    (r,) = res.results
    assert r.outcome == (PASS, FAIL, FAIL)
    q = R.ansi_quadrangle(3000)
    expect = q.margin(np.stack([ev.u_prime, ev.v_prime], axis=-1))
    assert r.margin == pytest.approx(expect)
    assert r.details["cct_K"][0] == 3045


def test_flexible_quadrangle_clause():
    ev = FakeEvaluation([3800, 3800], [float(R.ansi_flexible_duv(3800)), 0.01])
    res = _criteria('[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = "flexible"\ntarget_cct_K = 3800\n').evaluate(ev)
    assert res.results[0].outcome == (PASS, FAIL)


def test_sdcm_clause_steps_and_outcomes():
    e = R.iec60081_ellipse("F4000")
    w, V = np.linalg.eigh(np.array([[e.g11, e.g12], [e.g12, e.g22]]))
    pts = np.array([e.centre_xy, e.centre_xy + 2.9 * V[:, 0] / np.sqrt(w[0]), e.centre_xy + 3.1 * V[:, 1] / np.sqrt(w[1])])

    class XY(FakeEvaluation):
        def __init__(self, xy):
            super().__init__([4000] * len(xy), [0] * len(xy))
            self.x, self.y = xy[:, 0], xy[:, 1]

    res = _criteria('[[clause]]\nkind = "sdcm"\ncentre = "F4000"\nmax_steps = 3\n').evaluate(XY(pts))
    (r,) = res.results
    assert r.measured == pytest.approx([0.0, 2.9, 3.1])
    assert r.outcome == (PASS, PASS, FAIL)
    assert r.details["delta_upvp"][1] > 0 > r.details["delta_upvp"][2]


def test_user_ellipse_clause():
    body = '[[clause]]\nkind = "sdcm"\ncentre_xy = [0.44, 0.40]\ng11 = 1e6\ng12 = 0\ng22 = 1e6\nmax_steps = 2\n'

    class XY(FakeEvaluation):
        def __init__(self):
            super().__init__([3000, 3000], [0, 0])
            self.x, self.y = np.array([0.4415, 0.4425]), np.array([0.40, 0.40])

    r = _criteria(body).evaluate(XY()).results[0]
    assert r.measured == pytest.approx([1.5, 2.5])  # 1e6·(0.0015)² = 2.25 -> 1.5 steps
    assert r.outcome == (PASS, FAIL)


def test_annex_e_presets_agree_with_luxpy(luxpy):
    """Our TM-30-20 Annex E presets classify 3000 random (Rf, Rg, Rcs,h1, Rf,h1) exactly as luxpy's
    independent Annex E table does (unrounded comparisons: index_rounding = 10)."""
    from luxpy.color.cri.iestm30.metrics import tm30_metrics_to_annexE_recommendations

    rng = np.random.default_rng(7)
    n = 3000
    Rf = rng.uniform(60, 100, n)
    Rg = rng.uniform(80, 125, n)
    Rcs = rng.uniform(-20, 30, n)  # percent
    Rfh1 = rng.uniform(70, 100, n)
    # keep away from exact thresholds so that float rounding cannot matter
    ev = FakeEvaluation(np.full(n, 3000.0), np.zeros(n), Rf=Rf, Rg=Rg, Rcs_h1=Rcs, Rf_h1=Rfh1)
    ours = {}
    for lv in presets.LEVELS:
        res = _criteria(f'[[clause]]\nkind = "tm30_design_intent"\nlevel = "{lv}"\n').evaluate(ev)
        ours[lv] = np.array([v == PASS for v in res.verdicts])
    lx = tm30_metrics_to_annexE_recommendations(Rf=Rf[None, :], Rg=Rg[None, :], Rcsh1=Rcs / 100.0, Rfh1=Rfh1, index_rounding=10)
    for row, intent in zip(lx, "PVF"):
        best = np.full(n, f"{intent}-", dtype=object)
        for k in (3, 2, 1):
            best[ours[f"{intent}{k}"]] = f"{intent}{k}"
        assert list(best) == list(row), intent
    assert all(ours[lv].any() and not ours[lv].all() for lv in presets.LEVELS)


def test_annex_e_thresholds_exactly():
    """The Annex's thresholds, boundary included: Rf = 78, Rg = 95, Rcs,h1 = −1 % and 15 % meet P1."""
    ev = FakeEvaluation([3000] * 3, [0] * 3, Rf=[78, 78, 77.99], Rg=[95, 95, 95], Rcs_h1=[-1, 15.01, 0])
    res = _criteria('[[clause]]\nkind = "tm30_design_intent"\nlevel = "P1"\n').evaluate(ev)
    assert res.verdicts == (PASS, FAIL, FAIL)


# TM-30-20 Annex E as listed in the project's reference notes (secondary; "verify against the
# Annex"): level -> {figure: (lower, upper)}; Rcs,h1 in percent.
ANNEX_E_NOTES = {
    "P1": {"Rf": (78, None), "Rg": (95, None), "Rcs_h1": (-1, 15)},
    "P2": {"Rf": (75, None), "Rg": (92, None), "Rcs_h1": (-7, 19)},
    "P3": {"Rf": (70, None), "Rg": (89, None), "Rcs_h1": (-12, 23)},
    "V1": {"Rg": (118, None), "Rcs_h1": (15, None)},
    "V2": {"Rg": (110, None), "Rcs_h1": (6, None)},
    "V3": {"Rg": (100, None), "Rcs_h1": (0, None)},
    "F1": {"Rf": (95, None)},
    "F2": {"Rf": (90, None), "Rf_h1": (90, None)},
    "F3": {"Rf": (85, None), "Rf_h1": (85, None)},
}


@pytest.mark.parametrize("level", sorted(ANNEX_E_NOTES))
def test_each_level_threshold_is_inclusive_and_tight(level):
    """At every listed threshold the level is met; 0.01 beyond it, it is not (other figures set
    comfortably inside; F1 also needs Rf,h1 ≥ 90 because the levels are nested)."""
    table = ANNEX_E_NOTES[level]
    good = {"Rf": 97.0, "Rg": 120.0 if level[0] == "V" else 100.0, "Rcs_h1": 16.0 if level[0] == "V" else 5.0, "Rf_h1": 96.0}
    if level[0] == "P":
        good["Rg"] = 100.0
    crit = _criteria(f'[[clause]]\nkind = "tm30_design_intent"\nlevel = "{level}"\n')
    assert crit.evaluate(FakeEvaluation([3000], [0], **{k: [v] for k, v in good.items()})).verdicts == (PASS,)
    for fig, (lo, hi) in table.items():
        for bound, step in ((lo, -0.01), (hi, +0.01)):
            if bound is None:
                continue
            at = dict(good, **{fig: bound})
            beyond = dict(good, **{fig: bound + step})
            assert crit.evaluate(FakeEvaluation([3000], [0], **{k: [v] for k, v in at.items()})).verdicts == (PASS,), (fig, bound)
            assert crit.evaluate(FakeEvaluation([3000], [0], **{k: [v] for k, v in beyond.items()})).verdicts == (FAIL,), (fig, bound)
