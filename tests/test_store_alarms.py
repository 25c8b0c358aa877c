"""Drift alarms of ``lot --store --trend-figures`` and the store's refusals (review of the history store):

* the default alarm baseline leaves out lots whose verdict failed and lots beyond their trial
  limits (Phase I revision of trial limits, Montgomery §6.3), and says which;
* ``--chart auto`` stays on X̄/s when a few baseline lots have one sample;
* a lot is judged by its store number: an already-recorded lot is judged at its place, not
  inside its own baseline with the lots recorded after it;
* a database of another application is refused and left byte-identical;
* a read-only view of a WAL store that SQLite cannot open says why.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import sqlite3

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.special import gamma

from lumeval.store.db import StoreError
from lumeval.store.record import record_lot
from lumeval.store.trend import LotPoint, compute_trend

from .test_store_cli import CRITERIA, LOT_FILES, lumeval
from .test_store_record import make_record

#: R9 of the six demo modules the CLI tests judge (spectra_demo/lot_2026w48, AD30-w48-001..006),
#: as lumeval computes them; the tests check the recorded mean against their mean.
DEMO_R9 = np.array([91.84675295547324, 92.03990699077855, 92.03099919799095, 91.66584395072323, 92.01939599789631,
                    91.53955386024447])


def c4_textbook(n: int) -> float:
    """c4 = √(2/(n−1)) Γ(n/2)/Γ((n−1)/2) (Montgomery, Introduction to SQC, 6th ed., §6.3.1 and
    Appendix VI; quoted from memory), with scipy's gamma function."""
    return float(np.sqrt(2.0 / (n - 1)) * gamma(n / 2) / gamma((n - 1) / 2))


def sha(path) -> str:
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


def lot_cli(tmp_path, *extra):
    return lumeval("lot", *LOT_FILES, "--criteria", CRITERIA, "--quiet", "--json", tmp_path / "lot.json", *extra)


def demo_like(key: str, offset: float, verdict: str = "pass", product: str = "AD"):
    rec = make_record(DEMO_R9 + offset, key=key, product=product)
    return dataclasses.replace(rec, verdict=verdict)


def recorded_mean(store: str, lot: int) -> float:
    con = sqlite3.connect(store)
    try:
        return float(con.execute("SELECT mean FROM lot_figures WHERE lot_id = ? AND figure = 'R9'", (lot,)).fetchone()[0])
    finally:
        con.close()


@pytest.fixture
def demo():
    if len(LOT_FILES) < 6:
        pytest.skip("the demo lot is missing (run spectra_demo/generate_lot.py)")


# --------------------------------------------------------------------------- 1. failed lots out of the baseline


def test_cli_alarm_baseline_leaves_out_failed_lots(tmp_path, demo):
    """Lots 2 and 4 failed their criteria with R9 near 40 (invented); in the old default
    baseline (the first lots except the newest) they pulled the centre line down by 14 and the
    in-control demo lot signalled WE1 above. Now they are left out, and the note says so."""
    store = str(tmp_path / "h.db")
    for k, (off, verdict) in enumerate([(0.03, "pass"), (-52.0, "fail"), (-0.03, "pass"), (-47.0, "fail"),
                                        (0.02, "pass"), (-0.02, "pass"), (0.01, "pass")]):
        record_lot(store, demo_like(f"e{k}", off, verdict))
    r = lot_cli(tmp_path, "--store", store, "--product", "AD", "--trend-figures", "R9", "--fail-on-signal")
    assert r.returncode == 0, r.stderr
    assert "recorded as lot 8" in r.stderr
    assert_allclose(recorded_mean(store, 8), DEMO_R9.mean(), atol=0.05)  # the demo data are the ones described
    assert "signal:" not in r.stderr
    assert "no control-chart signal for lot 8 (R9)" in r.stderr
    assert "R9 alarm leaves out of its baseline and charts lot 2 (its verdict failed); lot 4 (its verdict failed)" in r.stderr


def _phase_one_store(tmp_path, lots: int):
    """A store of ``lots`` lots of 5 samples (R9 near 50, invented): lot 3 passed its criteria
    but lies 25 above the others (an assignable cause), lot 6 failed them 30 below."""
    store = str(tmp_path / "h.db")
    rng = np.random.default_rng(7)
    groups = [50.0 + rng.normal(0.0, 1.0, 5) for _ in range(lots)]
    groups[2] = groups[2] + 25.0
    groups[5] = groups[5] - 30.0
    for k, g in enumerate(groups):
        record_lot(store, dataclasses.replace(make_record(g, key=f"p{k}"), verdict="fail" if k == 5 else "pass"))
    return store, groups


def test_alarm_baseline_phase_one_revision_against_textbook(tmp_path):
    """Lot 3 passed its criteria but lies far beyond the trial limits: it is left out and the
    limits computed again (Phase I). Centre line and X̄ limits of the alarm checked against
    x̿ ± 3 s̄/(c4 √n) computed here with numpy/scipy from the lots kept (Montgomery §6.3.1,
    eqs. 6.27-6.29, memory); rtol 1e-12 (the same arithmetic in another order)."""
    from lumeval.store.alarm import alarm_trend

    store, groups = _phase_one_store(tmp_path, 8)
    tr = alarm_trend(store, "R9", 8)
    assert tr.extra["left_out"] == [(3, "beyond its trial limits on the X̄ chart"), (6, "its verdict failed")]
    kept = [g for k, g in enumerate(groups[:7]) if k not in (2, 5)]
    assert [p for p, b in zip(tr.lot_ids, tr.baseline) if b] == [1, 2, 4, 5, 7]
    xbarbar = np.mean([g.mean() for g in kept])
    sbar = np.mean([g.std(ddof=1) for g in kept])
    assert_allclose(tr.main.grand_mean, xbarbar, rtol=1e-12)
    assert_allclose(tr.main.xbar_ucl[-1], xbarbar + 3 * sbar / (c4_textbook(5) * np.sqrt(5)), rtol=1e-12)
    assert tr.signals_for(8) == []


def test_cli_baseline_options_validated_before_any_work(tmp_path, demo):
    store = str(tmp_path / "h.db")
    for opts, field in ((["--baseline", "1-3", "--trend-figures", "R9"], "--baseline"),
                        (["--baseline-count", "1", "--trend-figures", "R9"], "--baseline-count"),
                        (["--baseline", "1..3", "--baseline-count", "3", "--trend-figures", "R9"], "--baseline"),
                        (["--baseline", "1..3"], "--baseline")):
        r = lot_cli(tmp_path, "--store", store, *opts)
        assert r.returncode == 2, (opts, r.stderr)
        assert "Traceback" not in r.stderr and f"field '{field}'" in r.stderr, r.stderr
        assert not (tmp_path / "lot.json").exists() and not os.path.exists(store)


def test_cli_explicit_alarm_baseline(tmp_path, demo):
    """--baseline A..B from lot chooses the alarm baseline as history trend does: two earlier
    lots are too few for the default alarm (it starts with five), enough when chosen; a range
    holding no lot before the judged one is an error (exit 2, the lot stays recorded)."""
    from lumeval.store.alarm import alarm_trend

    store = str(tmp_path / "h.db")
    for k in range(2):
        record_lot(store, demo_like(f"a{k}", 0.01 * (2 * k - 1)))
    r = lot_cli(tmp_path, "--store", store, "--product", "AD", "--trend-figures", "R9")
    assert r.returncode == 0 and "no control chart of R9 yet" in r.stderr, r.stderr
    (tmp_path / "lot.json").unlink()
    r = lot_cli(tmp_path, "--store", store, "--product", "AD", "--trend-figures", "R9", "--baseline", "1..9",
                "--fail-on-signal")
    assert r.returncode == 0, r.stderr
    assert "already recorded as lot 3" in r.stderr and "no control-chart signal for lot 3 (R9)" in r.stderr
    tr = alarm_trend(store, "R9", 3, baseline="1..9")
    assert [p for p, b in zip(tr.lot_ids, tr.baseline) if b] == [1, 2]  # never the judged lot
    assert tr.baseline_rule.startswith("lots 1..9")
    (tmp_path / "lot.json").unlink()
    r = lot_cli(tmp_path, "--store", store, "--product", "AD", "--trend-figures", "R9", "--baseline", "3..9")
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert "field '--baseline'" in r.stderr and "no lot of this product recorded before lot 3" in r.stderr


# --------------------------------------------------------------------------- 2. auto chart


def _points(ns, means, s=1.0):
    return [LotPoint(k + 1, None, "P", "2026-12-01", n, m, s if n >= 2 else float("nan"))
            for k, (n, m) in enumerate(zip(ns, means))]


def test_auto_chart_stays_xbar_s_with_one_single_sample_lot():
    """19 lots of 25 and one of 1 in the baseline: still X̄/s, and a lot 4σ/√25 above the
    centre signals WE1 (the old rule switched to individuals, whose limits from the lot-to-lot
    spread hid it)."""
    rng = np.random.default_rng(3)
    ns = [25] * 9 + [1] + [25] * 10 + [25]
    means = list(rng.normal(0.0, 1.0 / 5.0, 20)) + [0.8]
    means[9] = 0.3
    tr = compute_trend(_points(ns, means), np.arange(21) < 20, figure="R9")
    assert tr.chart == "xbar-s"
    assert [(s.chart, s.rule) for s in tr.signals_for(21) if s.chart == "xbar"][:1] == [("xbar", "WE1")]
    # the one-sample lot has the limits x̿ ± 3σ̂ (μ ± 3σ/√n with n = 1, Montgomery §6.3)
    assert_allclose(tr.main.xbar_ucl[9] - tr.main.grand_mean, 3 * tr.main.sigma, rtol=1e-12)


def test_auto_chart_individuals_when_most_lots_are_single_samples():
    ns = [1] * 12 + [5] * 8
    tr = compute_trend(_points(ns, np.linspace(0, 1, 20)), np.ones(20, dtype=bool), figure="R9")
    assert tr.chart == "individuals"
    ns = [1] * 10 + [5] * 10  # half: X̄/s (σ̂ rests on half of the baseline)
    assert compute_trend(_points(ns, np.linspace(0, 1, 20)), np.ones(20, dtype=bool), figure="R9").chart == "xbar-s"


# --------------------------------------------------------------------------- 3. the judged lot by its number


def test_cli_already_recorded_lot_judged_at_its_place(tmp_path, demo):
    """Lot 6 (the demo lot) was in control when recorded; two lots recorded after it moved by
    -30. Recording lot 6 again ("already recorded") must not judge it inside a baseline holding
    itself and those later lots (the old alarm left out only the store's newest lot, and exited
    1 here under --fail-on-signal)."""
    store = str(tmp_path / "h.db")
    for k in range(5):
        record_lot(store, demo_like(f"c{k}", 0.02 * (k - 2)))
    r = lot_cli(tmp_path, "--store", store, "--product", "AD", "--trend-figures", "R9", "--fail-on-signal")
    assert r.returncode == 0 and "recorded as lot 6" in r.stderr and "signal:" not in r.stderr, r.stderr
    for k in range(2):
        record_lot(store, demo_like(f"d{k}", -30.0 + 0.01 * k))
    (tmp_path / "lot.json").unlink()
    r = lot_cli(tmp_path, "--store", store, "--product", "AD", "--trend-figures", "R9", "--fail-on-signal")
    assert r.returncode == 0, r.stderr
    assert "already recorded as lot 6" in r.stderr and "no control-chart signal for lot 6 (R9)" in r.stderr


def test_alarm_of_a_lot_ignores_lots_recorded_after_it(tmp_path):
    """Two stations: lot 7 is recorded a moment after lot 6 and before lot 6's alarm is
    computed. Lot 6's alarm is the same with and without lot 7 in the store."""
    from lumeval.store.alarm import alarm_trend

    store = str(tmp_path / "h.db")
    rng = np.random.default_rng(11)
    for k in range(6):
        record_lot(store, make_record(80.0 + rng.normal(0, 1, 5) + (4.0 if k == 5 else 0.0), key=f"s{k}"))
    alone = alarm_trend(store, "R9", 6)
    record_lot(store, make_record(40.0 + rng.normal(0, 1, 5), key="late"))
    later = alarm_trend(store, "R9", 6)
    assert later.lot_ids == alone.lot_ids == [1, 2, 3, 4, 5, 6]
    assert [(s.chart, s.rule) for s in later.signals_for(6)] == [(s.chart, s.rule) for s in alone.signals_for(6)]
    assert [s.rule for s in alone.signals_for(6) if s.chart == "xbar"][:1] == ["WE1"]
    assert_allclose(later.main.xbar_ucl, alone.main.xbar_ucl, rtol=0)


# --------------------------------------------------------------------------- 4. foreign databases


def _foreign(path, sql: str) -> None:
    con = sqlite3.connect(path)
    con.executescript(sql)
    con.commit()
    con.close()


@pytest.mark.parametrize("sql", ["CREATE TABLE t (a); INSERT INTO t VALUES (1);",
                                 "CREATE TABLE lots (a); INSERT INTO lots VALUES (1);"])
def test_foreign_sqlite_database_refused_byte_identical(tmp_path, sql):
    db = tmp_path / "other.db"
    _foreign(db, sql)
    before = sha(db)
    with pytest.raises(StoreError) as e:
        record_lot(str(db), make_record([1.0, 2.0], key="a"))
    assert "another application" in e.value.message and "not a lumeval store" in e.value.message
    assert sha(db) == before
    assert sorted(os.listdir(tmp_path)) == ["other.db"]  # no -wal / -shm: the journal mode was not touched
    con = sqlite3.connect(db)
    assert con.execute("PRAGMA journal_mode").fetchone()[0] == "delete"
    con.close()


def test_cli_foreign_sqlite_database_exit_2(tmp_path, demo):
    db = tmp_path / "other.db"
    _foreign(db, "CREATE TABLE t (a); INSERT INTO t VALUES (1);")
    before = sha(db)
    r = lot_cli(tmp_path, "--store", db)
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert "not a lumeval store" in r.stderr
    assert sha(db) == before
    json.loads((tmp_path / "lot.json").read_text())  # the other outputs are written, as for every store error


def test_empty_sqlite_database_becomes_a_store(tmp_path):
    db = tmp_path / "empty.db"
    sqlite3.connect(db).close()  # a database file with no schema (0 bytes)
    assert record_lot(str(db), make_record([1.0, 2.0], key="a")).created


# --------------------------------------------------------------------------- 5. read-only view of a WAL store


def test_read_only_view_of_wal_store_hints_at_shm(tmp_path):
    """A viewer who may not create the -shm/-wal files next to a WAL-mode store cannot open it
    through ?mode=ro; the error says so instead of pointing at free space or permissions to
    write the store. Run as root, the viewer is user 65534 in a forked process."""
    import tempfile
    from pathlib import Path

    from lumeval.store.query import list_lots

    top = Path(tempfile.mkdtemp(prefix="lumeval-ro-"))  # pytest's tmp_path is not reachable by another user
    os.chmod(top, 0o755)
    folder = top / "d"
    folder.mkdir()
    db = folder / "h.db"
    record_lot(str(db), make_record([1.0, 2.0], key="a"))  # WAL mode; -wal/-shm removed on close
    assert not (folder / "h.db-shm").exists()
    list_lots(str(db))  # every import done before the fork
    url = f"sqlite:///{db}?mode=ro"
    os.chmod(db, 0o444)
    os.chmod(folder, 0o555)
    try:
        rfd, wfd = os.pipe()
        pid = os.fork()
        if pid == 0:  # pragma: no cover - the child
            try:
                if os.geteuid() == 0:
                    os.setgid(65534)
                    os.setuid(65534)
                try:
                    list_lots(url)
                    msg = "opened"
                except StoreError as exc:
                    msg = exc.message
                os.write(wfd, msg.encode("utf-8"))
            finally:
                os._exit(0)
        os.close(wfd)
        with os.fdopen(rfd, "rb") as fh:
            msg = fh.read().decode("utf-8")
        os.waitpid(pid, 0)
    finally:
        os.chmod(folder, 0o755)
        os.chmod(db, 0o644)
        import shutil

        shutil.rmtree(top)
    if msg == "opened":
        pytest.skip("this SQLite opened the WAL store read-only without its -shm file")
    assert "-shm" in msg and "?mode=ro" in msg and "free space" not in msg, msg


# --------------------------------------------------------------------------- 6. cosmetics


def test_default_baseline_error_names_no_option():
    """The default baseline was not given as --baseline: the error does not name that field."""
    pts = _points([5] * 4, [1.0, 1.0, 1.0, 1.0], s=0.0)
    with pytest.raises(StoreError) as e:
        compute_trend(pts, np.ones(4, dtype=bool), figure="R9")
    assert "no spread within lots" in e.value.message and "field" not in e.value.message
    with pytest.raises(StoreError) as e:
        compute_trend(pts, np.ones(4, dtype=bool), figure="R9", baseline_field="--baseline")
    assert "field '--baseline'" in e.value.message


def test_lot_of_another_size_gets_limits_from_sigma_hat_with_its_own_n():
    """Ten baseline lots of 20, then a lot of 2. σ̂ = s̄/c4(20); the lot of 2 gets
    x̿ ± 3σ̂/√2 (not A3(2) s̄, 24 % wider) and s limits (c4(2) ± 3√(1 − c4(2)²)) σ̂ (Montgomery
    §6.3.1, μ ± 3σ/√n and B5/B6 with σ given; memory), matching its EWMA point σ̂/√2. The lots
    of 20 keep x̿ ± A3(20) s̄ and B3/B4 s̄. Factors from scipy's gamma function; rtol 1e-12."""
    rng = np.random.default_rng(5)
    groups = [rng.normal(0.0, 1.0, 20) for _ in range(10)] + [rng.normal(0.0, 1.0, 2)]
    pts = [LotPoint(k + 1, None, "P", "2026-12-01", g.size, float(g.mean()), float(g.std(ddof=1)))
           for k, g in enumerate(groups)]
    tr = compute_trend(pts, np.arange(11) < 10, figure="R9", chart="xbar-s")
    sbar = np.mean([g.std(ddof=1) for g in groups[:10]])
    xbb = np.mean([g.mean() for g in groups[:10]])
    sig = sbar / c4_textbook(20)
    assert_allclose(tr.main.sigma, sig, rtol=1e-12)
    assert_allclose(tr.main.xbar_ucl[10], xbb + 3 * sig / np.sqrt(2), rtol=1e-12)
    assert_allclose(tr.main.xbar_lcl[10], xbb - 3 * sig / np.sqrt(2), rtol=1e-12)
    c2 = c4_textbook(2)
    assert_allclose(tr.main.s_ucl[10], (c2 + 3 * np.sqrt(1 - c2**2)) * sig, rtol=1e-12)
    assert_allclose(tr.main.s_lcl[10], 0.0, atol=0)  # B5(2) = 0
    assert_allclose(tr.ewma.sigma_point[10], (tr.main.xbar_ucl[10] - tr.main.grand_mean) / 3, rtol=1e-12)
    c20 = c4_textbook(20)
    assert_allclose(tr.main.xbar_ucl[:10], xbb + 3 * sbar / (c20 * np.sqrt(20)), rtol=1e-12)
    assert_allclose(tr.main.s_ucl[:10], (1 + 3 * np.sqrt(1 - c20**2) / c20) * sbar, rtol=1e-12)
    assert_allclose(tr.main.s_lcl[:10], (1 - 3 * np.sqrt(1 - c20**2) / c20) * sbar, rtol=1e-12)


def test_s_and_moving_range_signals_are_not_named_after_a_zone_rule():
    """Beyond the s or moving-range chart's limits is not a Western Electric zone rule."""
    ns = [5] * 10
    tr = compute_trend(_points(ns, [0.0] * 9 + [0.1], s=1.0)[:9]
                       + [LotPoint(10, None, "P", "2026-12-01", 5, 0.1, 9.0)], np.arange(10) < 9, figure="R9")
    assert [(s.chart, s.rule) for s in tr.signals_for(10)] == [("s", "limits")]
    x = [0.0, 0.1, -0.1, 0.05, -0.05, 0.1, 0.0, -0.1, 0.05, 2.5]
    tr = compute_trend(_points([1] * 10, x), np.arange(10) < 9, figure="R9")
    assert tr.chart == "individuals"
    assert ("moving_range", "limits") in [(s.chart, s.rule) for s in tr.signals_for(10)]
    assert all(s.rule != "WE1" for s in tr.signals if s.chart in ("s", "moving_range"))


def test_cli_trend_as_judged_draws_the_alarms_charts(tmp_path):
    """`history trend --as-judged N` draws the charts the alarm judged lot N with: the lots up
    to N, less those the default Phase I baseline left out (lot 3 beyond its trial limits, lot
    6 failed), with the alarm's centre line (x̿ of the kept lots, computed here with numpy);
    without it, `history trend` keeps its own default (the first 20 lots as recorded). With
    --product it is refused (the lot's own product is charted), and a lot not in the store is
    a clean error."""
    store, groups = _phase_one_store(tmp_path, 9)
    r = lumeval("history", "trend", "--store", store, "--figure", "R9", "--as-judged", "8", "--format", "json")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    assert [p["lot"] for p in doc["points"]] == [1, 2, 4, 5, 7, 8]  # lot 9 was recorded after lot 8
    assert doc["baseline"]["lots"] == [1, 2, 4, 5, 7]
    kept = [groups[k] for k in (0, 1, 3, 4, 6)]
    assert_allclose(doc["centre_line"], np.mean([g.mean() for g in kept]), rtol=1e-12)
    plain = json.loads(lumeval("history", "trend", "--store", store, "--figure", "R9", "--format", "json").stdout)
    assert [p["lot"] for p in plain["points"]] == list(range(1, 10)) and plain["baseline"]["lots"] == list(range(1, 10))
    for lot, extra, needle in (("8", ["--product", "AD"], "without --product"), ("8", ["--chart", "individuals"],
                               "without --chart"), ("99", [], "lot 99 is not in the store"),
                               ("99999999999999999999", [], "--as-judged")):
        r = lumeval("history", "trend", "--store", store, "--figure", "R9", "--as-judged", lot, *extra)
        assert r.returncode == 2 and "Traceback" not in r.stderr and "internal error" not in r.stderr, r.stderr
        assert needle in r.stderr, r.stderr
