"""The history store on both backends (SQLite file, throwaway PostgreSQL server): recording,
idempotent re-recording, concurrent recording from two processes, kill -9 mid-recording,
schema versions and migration, trends through the store against a published example.

Every test here runs twice through the ``store_url`` fixture (tests/_postgres.py).
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from dataclasses import asdict
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
from numpy.testing import assert_allclose

from lumeval.store.db import (
    SCHEMA_VERSION,
    StoreError,
    connect,
    create_schema_v1,
    migrate,
    missing_indexes,
    parse_store_url,
)
from lumeval.store.record import LotRecord, Region, record_lot
from lumeval.store.trend import trend, trend_document

from .test_store_charts import PISTON

ROOT = Path(__file__).resolve().parent.parent
ENV = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}


def make_record(values, *, key: str, label: str | None = None, product: str | None = "P-1",
                figure: str = "R9", centroid=(0.25, 0.52), region: Region | None = None) -> LotRecord:
    """A lot record built from numbers (no spectra): ``values`` are the samples' ``figure``."""
    v = np.asarray(values, dtype=float)
    n = v.size
    sha = hashlib.sha256(key.encode()).hexdigest()
    return LotRecord(
        label=label or key, product=product, criteria_file=None, criteria_sha256=None, identification={"lot": key},
        inputs=((f"{key}.csv", sha, 100),), verdict="not judged", exit_code=0,
        counts={"samples": n, "passed": None, "failed": None, "not_judged": None}, yield_percent=None,
        centroid_upvp=centroid, statistics={"note": "synthetic"}, region=region, figures={figure: v},
        names=tuple(f"{key}-{i}" for i in range(n)), sources=tuple(f"{key}.csv#{i}" for i in range(n)),
        sample_verdicts=None, outliers=(False,) * n, warnings=((),) * n, lumeval_version="test")


def count_rows(url: str) -> dict:
    su = parse_store_url(url)
    with connect(su, write=False, action="read") as conn:
        return {t: conn.exec_driver_sql(f"SELECT COUNT(*) FROM {t}").scalar() for t in
                ("lots", "lot_inputs", "lot_figures", "samples")}


def test_record_and_idempotent_rerecord(store_url):
    rec = make_record([1.0, 2.0, 3.0], key="a")
    r1 = record_lot(store_url, rec)
    assert r1.created and r1.lot_id == 1
    r2 = record_lot(store_url, rec)
    assert not r2.created and r2.lot_id == 1
    assert "already recorded as lot 1" in r2.message
    # a different label for the same content is still the same lot
    r3 = record_lot(store_url, make_record([1.0, 2.0, 3.0], key="a", label="other label"))
    assert not r3.created and r3.lot_id == 1
    assert count_rows(store_url) == {"lots": 1, "lot_inputs": 1, "lot_figures": 1, "samples": 3}
    r4 = record_lot(store_url, make_record([4.0, 5.0], key="b"))
    assert r4.created and r4.lot_id == 2


def drop_file_index(url: str) -> None:
    """Make the store one created before ``ix_lot_inputs_sha256`` existed (schema 2 without it)."""
    with connect(parse_store_url(url), write=True, action="drop") as conn:
        conn.exec_driver_sql("DROP INDEX ix_lot_inputs_sha256")


@pytest.mark.parametrize("file_index", [True, False], ids=["indexed", "store-without-file-index"])
def test_the_same_input_files_under_other_criteria_are_said(store_url, file_index):
    """Recording byte-identical input files again under other criteria makes a new lot (its
    identity is the inputs and the criteria), and a trend of the product then counts those
    samples twice: the record says so, naming the earlier lots of the same product and how
    many of its files they hold (found by a history review; files counted as files, two
    identical files as two, and lots of another product not named). The same whether the
    lots are found by the index on the files' SHA-256 or, in a store created before it, by
    the product's lots; such a store's records say how to add the index."""
    from dataclasses import replace

    a = make_record([1.0, 2.0, 3.0], key="a")
    assert record_lot(store_url, a).overlaps == ()
    if not file_index:
        drop_file_index(store_url)
    record = record_lot if file_index else _without_index_note
    other = replace(a, criteria_file="c2.toml", criteria_sha256=hashlib.sha256(b"other criteria").hexdigest())
    r = record(store_url, other)
    assert r.created and r.lot_id == 2 and r.overlaps == ((1, 1),)
    assert "recorded as lot 2" in r.message and "; note: its only input file is already in lot 1 (" in r.message
    assert "a trend of the product counts those samples in each of these lots" in r.message
    again = record(store_url, other)  # the same lot again: the known message, no note
    assert not again.created and "note" not in again.message
    sha = {k: hashlib.sha256(k.encode()).hexdigest() for k in "abc"}
    part = replace(make_record([4.0, 5.0, 6.0, 7.0], key="p"),
                   inputs=(("a.csv", sha["a"], 100), ("a-copy.csv", sha["a"], 100), ("b.csv", sha["b"], 100),
                           ("c.csv", sha["c"], 100)))
    r = record(store_url, part)
    assert r.created and r.overlaps == ((1, 2), (2, 2)) and r.n_inputs == 4
    assert "; note: 2 of its 4 input files are already in lots 1 and 2 (" in r.message
    elsewhere = replace(make_record([8.0], key="a", product="P-2"), criteria_sha256="0" * 64)
    r = record(store_url, elsewhere)  # the same file as lot 1, recorded for another product
    assert r.created and r.overlaps == () and "note" not in r.message
    fresh = record(store_url, make_record([6.0], key="z"))
    assert fresh.overlaps == () and "note" not in fresh.message


def _without_index_note(url, rec):
    """:func:`record_lot` into a store that lacks ``ix_lot_inputs_sha256``: a new record says
    so at the end of its message (checked here), which is then taken out of the message."""
    r = record_lot(url, rec)
    if r.created:
        assert r.missing_indexes == ("ix_lot_inputs_sha256",)
        assert r.message.endswith("; note: the store lacks the index ix_lot_inputs_sha256 (created by an earlier "
                                  "lumeval): recording slows down as the store grows; `lumeval history migrate` with "
                                  "this --store adds it")  # (its shown form hides a password: not a command to paste)
    return SimpleNamespace(**asdict(r), message=r.message.replace(r.index_note, ""))


def test_figure_summary_stored(store_url):
    vals = [3.0, 4.0, np.nan, 8.0]
    record_lot(store_url, make_record(vals, key="a"))
    su = parse_store_url(store_url)
    with connect(su, write=False, action="read") as conn:
        n, mean, std, mn, mx = conn.exec_driver_sql("SELECT n, mean, std, min, max FROM lot_figures").one()
        figs = json.loads(conn.exec_driver_sql("SELECT figures FROM samples WHERE idx = 2").scalar())
    fin = np.array([3.0, 4.0, 8.0])
    assert n == 3
    assert_allclose([mean, std, mn, mx], [fin.mean(), fin.std(ddof=1), 3.0, 8.0], rtol=1e-12)
    assert figs == {"R9": None}  # NaN is stored as null


def _piston_store(url, extra=()):
    for k, row in enumerate(list(PISTON) + list(extra)):
        record_lot(url, make_record(row, key=f"piston-{k + 1:02d}", figure="R9"))


def test_trend_through_the_store_reproduces_montgomery_example_6_3(store_url):
    """Montgomery 6th ed. Table 6.3 recorded as 25 lots of 5 samples: the trend read back from
    the store gives Example 6.3's limits (see tests/test_store_charts.py for the source)."""
    _piston_store(store_url)
    tr = trend(store_url, "R9", baseline_count=25)
    doc = trend_document(tr)
    assert doc["chart"] == "xbar-s" and doc["figure"] == "R9"
    tol = 0.0005 + 0.0005 + 1.427 * 0.00005  # printed rounding, see test_store_charts
    assert_allclose(doc["centre_line"], 74.001, atol=0.0005)
    assert_allclose([doc["ucl"], doc["lcl"]], [74.014, 73.988], atol=tol)
    assert_allclose(doc["s_chart"]["centre_line"], 0.0094, atol=0.00005)
    assert_allclose(doc["s_chart"]["ucl"], 0.0196, atol=0.00005 + 2.089 * 0.00005)
    assert [s for s in doc["signals"] if s["chart"] in ("xbar", "s")] == []  # "in control"


def test_trend_json_recomputed_from_its_points(store_url):
    """The JSON's limits follow from its own points with the published factors for n = 5
    (Montgomery Appendix VI, memory: A3 = 1.427, B3 = 0, B4 = 2.089) and the EWMA recursion;
    a planted shift of +0.02 mm after the baseline gives signals on the shifted lots only."""
    shifted = PISTON[:5] + 0.02
    _piston_store(store_url, extra=shifted)
    doc = json.loads(subprocess.run(
        [sys.executable, "-m", "lumeval", "history", "trend", "--store", store_url, "--figure", "R9",
         "--baseline", "1..25", "--format", "json"], capture_output=True, text=True, env=ENV, check=True).stdout)
    pts = doc["points"]
    base = [p for p in pts if p["baseline"]]
    assert len(pts) == 30 and len(base) == 25 and doc["baseline"]["lots"] == list(range(1, 26))
    xbb = np.mean([p["mean"] for p in base])
    sbar = np.mean([p["s"] for p in base])
    assert_allclose(doc["centre_line"], xbb, rtol=1e-12)
    assert_allclose(doc["ucl"], xbb + 1.427 * sbar, atol=0.0005 * sbar)
    assert_allclose(doc["lcl"], xbb - 1.427 * sbar, atol=0.0005 * sbar)
    assert_allclose(doc["s_chart"]["ucl"], 2.089 * sbar, atol=0.0005 * sbar)
    z = doc["centre_line"]
    for p in pts:  # EWMA by hand, λ from the document
        z = doc["ewma"]["lambda"] * p["mean"] + (1 - doc["ewma"]["lambda"]) * z
        assert_allclose(p["ewma"], z, rtol=1e-12)
    flagged = {s["lot"] for s in doc["signals"] if s["chart"] == "xbar"}
    assert flagged and flagged <= set(range(26, 31))
    assert all(s["rule"] in ("WE1", "WE2", "WE3", "WE4", "EWMA", "limits") for s in doc["signals"])
    assert {"lot", "rule", "chart", "text"} <= set(doc["signals"][0])
    for p in pts:  # a point beyond its limits must be listed as WE1
        if p["mean"] > p["ucl"] or p["mean"] < p["lcl"]:
            assert {"lot": p["lot"], "rule": "WE1", "chart": "xbar"} in [
                {k: s[k] for k in ("lot", "rule", "chart")} for s in doc["signals"]]


def test_chromaticity_trends(store_url):
    """Centroid Δu′v′ from the category centre and distance to the nearest quadrangle edge,
    computed from the recorded centroid and region (individuals charts)."""
    from lumeval.criteria.regions import ansi_quadrangle, polygon_signed_distance

    q = ansi_quadrangle(3000)
    reg = Region(q.name, tuple(q.centre_upvp), tuple(map(tuple, q.corners_upvp)))
    rng = np.random.default_rng(1)
    cents = q.centre_upvp + rng.normal(0, 0.0003, (10, 2))
    cents[-1] += [0.004, 0.0]  # a lot drifting towards an edge
    for k, c in enumerate(cents):
        record_lot(store_url, make_record([90.0, 91.0], key=f"c{k}", centroid=tuple(c), region=reg))
    d = trend_document(trend(store_url, "centroid_duv_centre", baseline_count=9))
    e = trend_document(trend(store_url, "centroid_edge_margin", baseline_count=9))
    assert d["chart"] == e["chart"] == "individuals"
    assert_allclose([p["mean"] for p in d["points"]], np.hypot(*(cents - q.centre_upvp).T), rtol=1e-9)
    assert_allclose([p["mean"] for p in e["points"]], polygon_signed_distance(q.corners_upvp, cents), rtol=1e-9)
    assert any(s["lot"] == 10 and s["chart"] == "individuals" for s in d["signals"])


def test_products_must_be_chosen(store_url):
    record_lot(store_url, make_record([1, 2], key="a", product="A"))
    record_lot(store_url, make_record([1, 2], key="b", product="B"))
    with pytest.raises(StoreError, match=r"several|2 products"):
        trend(store_url, "R9")


# --------------------------------------------------------------------------- processes

_WRITER = textwrap.dedent("""
    import sys
    sys.path.insert(0, {root!r})
    from tests.test_store_record import make_record
    from lumeval.store.record import record_lot
    url, who, count = sys.argv[1], sys.argv[2], int(sys.argv[3])
    for k in range(count):
        r = record_lot(url, make_record([float(k)] * 400, key=f"{{who}}-{{k}}", product="P-1"))
        assert r.created, r
    print("done", who)
""")


def test_concurrent_recording_two_processes(store_url, tmp_path):
    """Two processes record different lots into the same (new) store at the same time: every
    lot arrives whole, with distinct numbers."""
    script = tmp_path / "writer.py"
    script.write_text(_WRITER.format(root=str(ROOT)))
    procs = [subprocess.Popen([sys.executable, str(script), store_url, who, "6"], stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, text=True, env=ENV) for who in ("A", "B")]
    outs = [p.communicate(timeout=300) for p in procs]
    for p, (_out, err) in zip(procs, outs):
        assert p.returncode == 0, err
    assert count_rows(store_url) == {"lots": 12, "lot_inputs": 12, "lot_figures": 12, "samples": 12 * 400}
    su = parse_store_url(store_url)
    with connect(su, write=False, action="read") as conn:
        per_lot = conn.exec_driver_sql("SELECT lot_id, COUNT(*) FROM samples GROUP BY lot_id").all()
    assert sorted(c for _l, c in per_lot) == [400] * 12


def test_concurrent_same_lot_is_recorded_once(store_url, tmp_path):
    script = tmp_path / "writer.py"
    script.write_text(_WRITER.replace("assert r.created, r", "print(r.lot_id, r.created)").format(root=str(ROOT)))
    procs = [subprocess.Popen([sys.executable, str(script), store_url, "same", "3"], stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, text=True, env=ENV) for _ in range(2)]
    for p in procs:
        _out, err = p.communicate(timeout=300)
        assert p.returncode == 0, err
    assert count_rows(store_url)["lots"] == 3


_KILLED = textwrap.dedent("""
    import sys, time
    sys.path.insert(0, {root!r})
    from tests.test_store_record import make_record
    from lumeval.store.record import record_lot
    def pause(k):
        if k == 2:
            print("MID-RECORDING", flush=True)
            time.sleep(600)
    record_lot(sys.argv[1], make_record([1.0] * 5000, key="killed"), _after_batch=pause)
""")


def test_kill9_mid_recording_leaves_no_partial_lot(store_url, tmp_path):
    record_lot(store_url, make_record([1.0, 2.0], key="before"))
    script = tmp_path / "killed.py"
    script.write_text(_KILLED.format(root=str(ROOT)))
    p = subprocess.Popen([sys.executable, str(script), store_url], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                         text=True, env=ENV)
    line = p.stdout.readline()
    assert line.strip() == "MID-RECORDING", p.stderr.read() if p.poll() is not None else line
    os.kill(p.pid, signal.SIGKILL)  # 2,000 of 5,000 samples written inside the open transaction
    p.wait(timeout=30)
    p.stdout.close()
    p.stderr.close()
    time.sleep(0.2)  # PostgreSQL notices the closed connection and rolls back
    deadline = time.time() + 30
    while True:
        rows = count_rows(store_url)
        if rows["lots"] == 1 or time.time() > deadline:
            break
        time.sleep(0.5)
    assert rows == {"lots": 1, "lot_inputs": 1, "lot_figures": 1, "samples": 2}
    # the store stays usable: the same lot can now be recorded whole
    r = record_lot(store_url, make_record([1.0] * 5000, key="killed"))
    assert r.created and count_rows(store_url)["samples"] == 5002


# --------------------------------------------------------------------------- schema versions


def test_older_store_is_refused_then_migrated(store_url):
    su = parse_store_url(store_url)
    with connect(su, write=True, action="create") as conn:
        create_schema_v1(conn)
        conn.exec_driver_sql(
            "INSERT INTO lots (lot_key, label, product, recorded_at, lumeval_version, identification, n_samples, "
            "verdict, exit_code, centroid_u, centroid_v, statistics) VALUES ('k1', 'old lot', 'P-1', "
            "'2026-01-01T00:00:00Z', '0.0.9', '{}', 2, 'pass', 0, 0.25, 0.52, '{}')")
        conn.exec_driver_sql("INSERT INTO lot_figures (lot_id, figure, n, mean, std, min, max) VALUES "
                             "(1, 'R9', 2, 50.0, 1.0, 49.0, 51.0)")
    for call in (lambda: record_lot(store_url, make_record([1.0], key="x")), lambda: trend(store_url, "R9")):
        with pytest.raises(StoreError, match=r"schema version 1, written by an older lumeval.*history migrate"):
            call()
    assert migrate(su) == (1, SCHEMA_VERSION)
    assert migrate(su) == (SCHEMA_VERSION, SCHEMA_VERSION)
    r = record_lot(store_url, make_record([1.0], key="x"))
    assert r.created and r.lot_id == 2
    with connect(su, write=False, action="read") as conn:
        assert conn.exec_driver_sql("SELECT label, region_name FROM lots WHERE id = 1").one() == ("old lot", None)
        assert missing_indexes(conn) == ()  # the file index, as a new store has it
    assert not r.missing_indexes


def test_new_store_has_the_file_index_and_migrate_adds_it_to_one_without(store_url):
    """A new store is created with ix_lot_inputs_sha256; a store of the same schema version
    created before it (the index dropped here) keeps working, and `history migrate` adds the
    index (saying so) without changing the version or any row; a second run has nothing to do."""
    from typer.testing import CliRunner

    from lumeval.cli import app
    from lumeval.store.db import migrate_report

    record_lot(store_url, make_record([1.0, 2.0], key="a"))
    su = parse_store_url(store_url)
    with connect(su, write=False, action="read") as conn:
        assert missing_indexes(conn) == ()
    drop_file_index(store_url)
    before = count_rows(store_url)
    with connect(su, write=False, action="read") as conn:
        assert missing_indexes(conn) == ("ix_lot_inputs_sha256",)
    res = CliRunner().invoke(app, ["history", "migrate", "--store", store_url])
    assert res.exit_code == 0, res.output
    assert res.output.strip() == f"{su.shown}: at schema version {SCHEMA_VERSION}; added the index ix_lot_inputs_sha256"
    with connect(su, write=False, action="read") as conn:
        assert missing_indexes(conn) == ()
        # the table analysed with it, so that the planner uses the index at once (PostgreSQL's
        # reltuples is -1 for a table never analysed; SQLite keeps its figures in sqlite_stat1)
        if su.backend == "postgresql":
            assert conn.exec_driver_sql("SELECT reltuples FROM pg_class WHERE relname = 'lot_inputs'").scalar() >= 0
        else:
            assert conn.exec_driver_sql("SELECT count(*) FROM sqlite_stat1 WHERE tbl = 'lot_inputs'").scalar() > 0
    assert count_rows(store_url) == before
    assert migrate_report(su) == (SCHEMA_VERSION, SCHEMA_VERSION, ())
    res = CliRunner().invoke(app, ["history", "migrate", "--store", store_url])
    assert res.output.strip() == f"{su.shown}: already at schema version {SCHEMA_VERSION}; nothing to do"
    r = record_lot(store_url, make_record([3.0], key="b"))
    assert r.created and r.missing_indexes == () and "lacks the index" not in r.message


def test_shared_files_are_looked_up_by_the_file_index(tmp_path):
    """SQLite's plan for the query that finds earlier lots holding a recorded lot's files uses
    the index on the files' SHA-256, not a read of every input row of the product's lots
    (which the single joined query got: 0.4 s a query in a store of 400,000 input rows)."""
    from lumeval.store.db import _tables
    from lumeval.store.record import _files_query

    url = str(tmp_path / "h.db")
    record_lot(url, make_record([1.0], key="a"))
    q = _files_query(_tables()[1], ["0" * 64, "1" * 64])  # the query _overlapping_lots makes with the index
    with connect(parse_store_url(url), write=False, action="read") as conn:
        sql = str(q.compile(conn, compile_kwargs={"literal_binds": True}))
        plan = " ".join(str(r[-1]) for r in conn.exec_driver_sql("EXPLAIN QUERY PLAN " + sql))
    assert "USING INDEX ix_lot_inputs_sha256" in plan or "USING COVERING INDEX ix_lot_inputs_sha256" in plan, plan


def test_newer_store_is_refused(store_url):
    record_lot(store_url, make_record([1.0], key="x"))
    su = parse_store_url(store_url)
    with connect(su, write=True, action="stamp") as conn:
        conn.exec_driver_sql(f"INSERT INTO lumeval_schema (version, applied_at, lumeval_version) VALUES "
                             f"({SCHEMA_VERSION + 1}, 'later', '9.9')")
    for call in (lambda: record_lot(store_url, make_record([2.0], key="y")), lambda: trend(store_url, "R9"),
                 lambda: migrate(su)):
        with pytest.raises(StoreError, match=r"written by a newer lumeval.*upgrade lumeval"):
            call()


# --------------------------------------------------------------------------- SQLite lock races


def test_wal_switch_waits_out_a_lock_refused_without_waiting():
    """SQLite answers "database is locked" at once (no busy handler) when two connections
    holding shared locks race to change the journal mode; the switch tries again."""
    import sqlite3

    from lumeval.store.db import _switch_to_wal

    class Raw:
        def __init__(self, refusals):
            self.refusals, self.calls = refusals, []

        def execute(self, sql):
            self.calls.append(sql)
            if sql.endswith("= WAL") and self.refusals:
                self.refusals -= 1
                raise sqlite3.OperationalError("database is locked")
            return type("Cursor", (), {"fetchone": lambda _s: ("delete",)})()

    raw = Raw(refusals=3)
    _switch_to_wal(raw, time.monotonic() + 30)
    assert raw.calls.count("PRAGMA journal_mode = WAL") == 4
    raw = Raw(refusals=10**6)
    with pytest.raises(sqlite3.OperationalError, match="locked"):
        _switch_to_wal(raw, time.monotonic() + 0.2)  # gives up at the deadline


def test_record_retries_a_transaction_refused_by_a_lock(tmp_path, monkeypatch):
    """A write transaction that SQLite refused with "database is locked" changed nothing and is
    run again; other store errors are not retried."""
    import lumeval.store.record as record_mod

    url = str(tmp_path / "h.db")
    real, calls = record_mod._record_once, []

    def flaky(*args, **kw):
        calls.append(1)
        if len(calls) < 3:
            err = StoreError(f"{url}: cannot record the lot (database is locked)")
            err.busy = True
            raise err
        return real(*args, **kw)

    monkeypatch.setattr(record_mod, "_record_once", flaky)
    r = record_lot(url, make_record([1.0, 2.0], key="retried"))
    assert r.created and len(calls) == 3
    assert count_rows(url)["lots"] == 1

    def broken(*args, **kw):
        calls.append(1)
        raise StoreError(f"{url}: cannot record the lot (disk I/O error)")

    calls.clear()
    monkeypatch.setattr(record_mod, "_record_once", broken)
    with pytest.raises(StoreError, match="disk I/O"):
        record_lot(url, make_record([1.0], key="other"))
    assert len(calls) == 1


def test_switch_to_wal_waits_for_a_reader_holding_the_old_journal(tmp_path):
    """A reader holds a shared lock on a rollback-journal store; the first writer's switch to
    WAL waits for it instead of failing."""
    import sqlite3
    import threading

    from sqlalchemy import create_engine

    from lumeval.store.db import _stamp, _tables

    path = tmp_path / "h.db"
    eng = create_engine(f"sqlite:///{path}")  # a lumeval store still in the rollback journal (a database of
    with eng.begin() as c:  # another application would be refused before the switch)
        _tables()[0].create_all(c)
        _stamp(c, SCHEMA_VERSION)
    eng.dispose()
    holder = sqlite3.connect(path, isolation_level=None, check_same_thread=False)
    assert holder.execute("PRAGMA journal_mode").fetchone()[0] == "delete"
    holder.execute("BEGIN")
    holder.execute("SELECT * FROM lots").fetchall()  # shared lock held
    timer = threading.Timer(0.5, lambda: holder.execute("COMMIT"))
    timer.start()
    try:
        r = record_lot(str(path), make_record([1.0, 2.0], key="after-reader"))
    finally:
        timer.join()
        holder.close()
    assert r.created
    with sqlite3.connect(path) as c:
        assert c.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
