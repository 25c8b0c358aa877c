"""`run_lot` in-process: batching does not change any result, inputs expand as documented, the
nominal centre comes from the criteria, and the demo lot's planted outliers are found.

Outside references: the planted outliers are facts of the generator (spectra_demo/generate_lot.py
states which modules were made defective and how), not outputs of lumeval; ANSI C78.377-2017
gives the 3000 K category's centre (x, y = 0.4339, 0.4033, as transcribed in the project's
reference notes), which the nominal centre must reproduce to the table's rounding.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from lumeval.commands.lot import run_lot
from lumeval.lots.inputs import expand_inputs

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "spectra_demo" / "lot_2026w48"
DEMO_CRITERIA = REPO / "spectra_demo" / "lot_criteria.toml"


def _criteria(path=DEMO_CRITERIA):
    import lumeval.criteria.lot_clauses  # noqa: F401  (registers the lot kinds)
    from lumeval.criteria.loader import load_criteria

    return load_criteria(path)


@pytest.fixture(scope="module")
def demo_run():
    if not DEMO.is_dir():
        pytest.skip("demo lot not generated (python spectra_demo/generate_lot.py)")
    return run_lot([DEMO], _criteria())


def test_demo_lot_finds_the_planted_outliers(demo_run):
    run = demo_run
    assert len(run) == 200 and not run.unreadable
    flagged = {run.names[i] for i in np.flatnonzero(run.stats.outlier)}
    planted = {"AD30-w48-037", "AD30-w48-118", "AD30-w48-164"}
    assert planted <= flagged
    assert len(flagged - planted) <= 2  # |z| > 3.5 by chance is rare (≈ 5e-4 per figure for normal data)
    # the red-phosphor shortfall is the one module outside the 3000 K quadrangle; yield 199/200
    assert run.stats.yield_.passed == 199 and run.check.verdicts[163] == "fail"
    assert run.exit_code == 1
    # samples keep their names and sources (single files and wide-CSV columns)
    assert run.sources[0].endswith("AD30-w48-001.csv")
    assert run.sources[150].endswith("station_B_modules_151-200.csv#AD30-w48-151")


def test_nominal_centre_from_ansi_clause(demo_run):
    # ANSI C78.377 3000 K category centre x, y = 0.4339, 0.4033 (4 decimals; secondary
    # copy in shared/reference-values.md): the lot's nominal centre is that point
    np.testing.assert_allclose(demo_run.stats.nominal_xy, [0.4339, 0.4033], atol=5e-5)


def test_batching_does_not_change_results(demo_run):
    files = sorted(DEMO.glob("AD30-w48-0[0-3]*.csv")) + sorted(DEMO.glob("station_A*.csv"))
    crit = _criteria()
    a = run_lot(files, crit, batch_spectra=7)
    b = run_lot(files, crit, batch_spectra=10_000)
    assert a.names == b.names and a.sources == b.sources
    for k in ("cct_K", "Ra", "Rf", "x"):
        np.testing.assert_allclose(a.figures[k], b.figures[k], rtol=1e-12, atol=1e-10)
    for ra, rb in zip(a.check.results, b.check.results):
        assert ra.outcome == rb.outcome
        np.testing.assert_allclose(ra.margin, rb.margin, rtol=1e-12, atol=1e-12)
    assert [r.outcome for r in a.lot_results] == [r.outcome for r in b.lot_results]
    assert a.stats.max_pairwise_d_upvp == pytest.approx(b.stats.max_pairwise_d_upvp, rel=1e-12)


def test_a_lot_given_its_expanded_inputs_equals_the_lot_given_its_paths(demo_run, tmp_path):
    """run_lot on expand_inputs' result (what the command passes, having expanded the inputs
    once for its output checks) is the run on the paths themselves, missing inputs included."""
    paths = [DEMO, str(tmp_path / "missing.csv")]
    a = run_lot(paths, _criteria())
    b = run_lot(expand_inputs(paths), _criteria())
    assert len(a) == 200 and len(a.unreadable) == 1
    assert a.names == b.names and a.sources == b.sources and a.read_paths == b.read_paths
    assert a.unreadable == b.unreadable and a.exit_code == b.exit_code == 2
    for k in a.figures:  # the same files in the same batches through the same code: the same numbers
        np.testing.assert_array_equal(a.figures[k], b.figures[k])


def test_expand_inputs(tmp_path):
    (tmp_path / "a.csv").write_text("x")
    (tmp_path / "b.txt").write_text("x")
    (tmp_path / "notes.md").write_text("x")
    (tmp_path / ".hidden.csv").write_text("x")
    sub = tmp_path / "sub"
    sub.mkdir()
    (sub / "c.csv").write_text("x")
    found = expand_inputs([tmp_path, tmp_path / "a.csv", str(tmp_path / "**" / "*.csv"), tmp_path / "nope.csv", str(tmp_path / "*.xyz")])
    files, problems = found.files, found.unreadable
    names = [Path(f).name for f in files]
    assert names == ["a.csv", "b.txt", "c.csv"]  # folder first (not recursive), duplicates once
    assert len(problems) == 2
    assert "no such file" in problems[0].message and "matches no files" in problems[1].message


def test_a_lot_of_one_sample_is_zero_steps_from_its_centroid_and_has_no_pairwise_distance(tmp_path):
    """A lot of one: the centroid is the sample itself, so its steps from the centroid are 0
    (a point's distance to itself; with or without a named ellipse) rather than the rounding
    of the centroid's (x, y) taken back from (u', v') (4e-14 steps were printed); there is no
    pair, so the largest pairwise Δu'v' is not judged and shows no number (it showed 0)."""
    if not DEMO.is_dir():
        pytest.skip("demo lot not generated (python spectra_demo/generate_lot.py)")
    one = sorted(DEMO.glob("*.csv"))[0]
    crit = tmp_path / "c.toml"
    crit.write_text('[[clause]]\nid = "own"\nkind = "lot_centroid_steps"\nmax_steps = 3\n\n'
                    '[[clause]]\nid = "named"\nkind = "lot_centroid_steps"\nmax_steps = 3\nellipse = "F3000"\n\n'
                    '[[clause]]\nid = "pair"\nkind = "lot_max_pairwise"\nmax_delta_upvp = 0.004\n', encoding="utf-8")
    run = run_lot([one], _criteria(crit))
    assert len(run) == 1
    assert run.stats.steps_centroid.tolist() == [0.0]
    by_id = {r.clause_id: r for r in run.lot_results}
    for cid in ("own", "named"):
        assert by_id[cid].measured == 0.0 and by_id[cid].outcome == "pass"
    assert np.isnan(by_id["pair"].measured) and by_id["pair"].outcome == "not judged"
