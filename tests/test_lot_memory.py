"""Bounded memory of lots and of preparation: compact per-sample columns, figures spilled to a
temporary file, and the same results whichever way a lot is kept or batched.

What is compared: a lot streamed in tiny batches with every figure spilled to disk against the
same lot evaluated whole in memory (``evaluate`` on all spectra at once, then
``lot_from_evaluation``). Both are lumeval; the figures themselves are checked against
colour-science and luxpy elsewhere (tests/test_engine*.py). Outside references for the lot:
the demo lot's planted outliers are facts of its generator (spectra_demo/generate_lot.py).

Memory is probed with ``tracemalloc`` (numpy reports its array allocations to it): bounds
per sample, not timings, so the probe holds on any machine.
"""

from __future__ import annotations

import csv
import io
import sys
import tracemalloc

import numpy as np
import pytest

pytest.importorskip("pyarrow")

from lumeval.lots import columns
from lumeval.lots.columns import FigureColumns, TextColumn, TextTuples, figure_rows

from .test_lot_archive import ATOL, DEMO, RTOL, _criteria, demo_archive

# --------------------------------------------------------------------------- the columns


def test_figure_columns_give_back_exactly_what_was_stored(tmp_path):
    rng = np.random.default_rng(7)
    names = [f"f{j}" for j in range(5)]
    data = rng.normal(size=(103, 5))
    data[3, 1], data[50, 4], data[77, 0] = np.nan, np.inf, -0.0
    cols = FigureColumns(names, spill_bytes=200, block_rows=7)  # a few blocks in memory, the rest on disk
    for a, b in [(0, 1), (1, 20), (20, 20), (20, 64), (64, 103)]:
        cols.add(data[a:b])
    assert cols.spilled and cols.n_rows == 103 and list(cols) == names and "f3" in cols and "x" not in cols
    for j, k in enumerate(names):  # exact by construction: the float64 bytes go out and come back
        np.testing.assert_array_equal(cols[k], data[:, j])
    for a, b in [(0, 103), (5, 9), (6, 8), (95, 103), (100, 200)]:
        np.testing.assert_array_equal(cols.rows(a, b), data[a:b])
        np.testing.assert_array_equal(figure_rows(cols, a, b), figure_rows(dict(zip(names, data.T)), a, b))
    assert np.signbit(cols["f0"][77])
    assert cols.rows(5, 60)[:, 2].flags.c_contiguous  # one figure's rows contiguous (the writers read so)
    more = rng.normal(size=(3, 5))
    cols.add(more)  # fewer than a block: rows not yet sealed
    assert cols.n_rows == 106
    data = np.vstack([data, more])
    for a, b in [(0, 106), (95, 106), (103, 106), (104, 105), (101, 104)]:
        np.testing.assert_array_equal(cols.rows(a, b), data[a:b])
        np.testing.assert_array_equal(cols.column("f1", a, b), data[a:b, 1])


def test_packed_text_equals_the_tuples_it_packs(monkeypatch):
    names = ["a", "", "Lamp 3000 K", "über-\u00e9", "bad\udcff", "x" * 300]
    monkeypatch.setattr(columns, "TEXT_BLOCK", 4)  # several compressed blocks and an open one
    t = TextColumn(names)
    assert t == tuple(names) and t == names and len(t) == 6 and t[-1] == "x" * 300 and t[4] == "bad\udcff"
    assert t[1:3] == names[1:3] and list(t) == names and t != names[:-1]
    warns = [(), ("one",), ("two", "three \u2264"), (), ("",)]
    w = TextTuples(warns)
    assert w == tuple(warns) and w[2] == ("two", "three \u2264") and w[-1] == ("",) and sum(1 for x in w if x) == 3
    assert w.count_nonempty() == 3 and TextTuples().count_nonempty() == 0
    # added in batches of any size, across block ends: the same as the whole at once
    t2, w2 = TextColumn(), TextTuples()
    for a, b in [(0, 1), (1, 4), (4, 4), (4, 6)]:
        t2.extend(names[a:b])
        w2.extend(iter(warns[a:b]))
    assert t2 == names and w2 == warns[:6] and w2.count_nonempty() == 3
    with pytest.raises(IndexError):
        t[6]
    # slices (taken a range at a time: one decoding per block) equal the lists' own slices
    for packed, plain in ((t, names), (w, warns)):
        for a in range(-7, 8):
            for b in [*range(-7, 8), None]:
                for step in (None, 1, 2, -1):
                    assert packed[a:b:step] == plain[a:b:step], (a, b, step)
    ascii_names = TextColumn(["L1", "L22", "", "L333", "L4", "L55"])
    assert ascii_names[1:6] == ["L22", "", "L333", "L4", "L55"]  # the ASCII decoding of a range


def test_packed_text_blocks_by_zlib_or_zstd_read_back_alike(monkeypatch):
    """Full blocks are compressed by zstd through pyarrow when a run has imported it, else by
    zlib (columns._pack); a column whose first blocks were packed before pyarrow was imported
    and the others after reads back the strings it was given, either way."""
    import pyarrow  # what an archive lot has imported

    names = [f"unit-{i:05d} é" if i % 3 else f"warning {i}" for i in range(40)]
    monkeypatch.setattr(columns, "TEXT_BLOCK", 8)
    with monkeypatch.context() as m:
        m.delitem(sys.modules, "pyarrow")
        t = TextColumn(names[:20])  # two full blocks by zlib
    t.extend(names[20:])  # the others by zstd
    kinds = [size < 0 for size, _ in t._blocks]
    assert kinds == [True, True, False, False, False]
    assert t == names and t[3:37] == names[3:37] and t[-1] == names[-1]
    assert all(len(b) < 8 * 12 for _, b in t._blocks)  # compressed: smaller than the strings
    w = TextTuples([(n,) for n in names])
    assert w == [(n,) for n in names] and all(size >= 0 for size, _ in w._texts._blocks)
    # a pyarrow built without zstd: zlib
    class NoZstd:
        @staticmethod
        def is_available(name):
            return False

    monkeypatch.setattr(pyarrow, "Codec", NoZstd)
    z = TextColumn(names)
    assert z == names and all(size < 0 for size, _ in z._blocks)


def test_packed_text_goes_to_arrow_as_the_strings_it_packs(monkeypatch):
    """The per-sample Parquet's text columns built from the packed bytes (no Python string per
    row) equal pyarrow's own conversion of the strings, for every slice across block ends; a
    lone surrogate (not valid UTF-8) takes the string-by-string path."""
    import pyarrow as pa

    from lumeval.frames import _joined_array, _text_array

    names = ["a", "", "Lamp 3000 K", "über-\u00e9", "x" * 300, "\u2264 5", "", "z"]
    warns = [(), ("one",), ("two", "three \u2264"), (), ("",), ("a", "b", "c"), (), ("last",)]
    monkeypatch.setattr(columns, "TEXT_BLOCK", 3)  # several compressed blocks and an open one
    t, w = TextColumn(names), TextTuples(warns)
    for start in range(len(names) + 1):
        for stop in range(start, len(names) + 2):
            got = _text_array(pa, t, start, stop)
            assert got.equals(pa.array(names[start:stop], type=pa.string())), (start, stop)
            joined = _joined_array(pa, w, start, stop)
            assert joined.equals(pa.array([" | ".join(x) for x in warns[start:stop]], type=pa.string())), (start, stop)
    bad = TextColumn(["ok", "bad\udcff"])
    with pytest.raises(UnicodeEncodeError):  # as pyarrow refuses the string itself
        _text_array(pa, bad, 0, 2)
    assert _text_array(pa, bad, 0, 1).to_pylist() == ["ok"]


# --------------------------------------------------------------------------- same results


@pytest.fixture(scope="module")
def arch(tmp_path_factory):
    if not DEMO.is_dir():
        pytest.skip("demo lot not generated (python spectra_demo/generate_lot.py)")
    return demo_archive(tmp_path_factory.mktemp("mem") / "lot.parquet", row_group_rows=8)


def _csv_rows(run):
    from lumeval.render.lot_report import samples_csv

    return list(csv.reader(io.StringIO(samples_csv(run))))


def test_spilled_streamed_lot_equals_the_whole_lot_in_memory(arch, monkeypatch):
    from lumeval.commands.lot import run_lot
    from lumeval.engine import evaluate
    from lumeval.lots.statistics import lot_from_evaluation
    from lumeval.spectra.archive import read_archive

    whole_run = run_lot([arch], _criteria())  # one batch, figures in memory
    assert not whole_run.figures.spilled
    monkeypatch.setattr(columns, "SPILL_BYTES", 0)
    monkeypatch.setattr(columns, "BLOCK_ROWS", 5)
    run = run_lot([arch], _criteria(), batch_spectra=16)  # 13 batches, every figure on disk
    assert run.figures.spilled and len(run) == 200 and not run.unreadable
    ev = evaluate(read_archive(str(arch)))  # every spectrum at once, no lot machinery
    st = lot_from_evaluation(ev, ellipse=None)

    assert run.names == ev.spectra.names == whole_run.names and run.sources == whole_run.sources
    assert run.warnings == tuple(ev.warnings) == whole_run.warnings
    for k in run.figures:
        np.testing.assert_allclose(run.figures[k], ev.figure(k), rtol=RTOL, atol=ATOL, equal_nan=True, err_msg=k)
        np.testing.assert_allclose(run.figures[k], whole_run.figures[k], rtol=RTOL, atol=ATOL, equal_nan=True)
    assert run.sample_verdicts == whole_run.sample_verdicts
    np.testing.assert_array_equal(run.stats.outlier, whole_run.stats.outlier)
    assert run.stats.outlier_reasons == whole_run.stats.outlier_reasons
    for a, b in zip(run.stats.figures, st.figures):
        assert a.name == b.name and a.count == b.count
        np.testing.assert_allclose([a.mean, a.std, a.min, a.max, a.median, a.p05, a.p95],
                                   [b.mean, b.std, b.min, b.max, b.median, b.p05, b.p95],
                                   rtol=RTOL, atol=ATOL, equal_nan=True, err_msg=a.name)
    # ellipse=None above: the centroid steps use the nearest standard ellipse in both
    np.testing.assert_allclose(run.stats.centroid_upvp, st.centroid_upvp, rtol=RTOL)
    np.testing.assert_allclose(run.stats.max_pairwise_d_upvp, st.max_pairwise_d_upvp, rtol=RTOL)
    assert set(run.stats.max_pair) == set(st.max_pair)
    # the demo's three planted outliers are among the flagged samples (generator fact)
    assert len(np.flatnonzero(run.stats.outlier)) >= 3

    # the per-sample CSV written from the spilled columns: same cells (numbers within rounding)
    a_rows, b_rows = _csv_rows(run), _csv_rows(whole_run)
    assert a_rows[0] == b_rows[0] and len(a_rows) == len(b_rows) >= 201  # + the caution rows at the end
    for ra, rb in zip(a_rows[1:], b_rows[1:]):
        for ca, cb in zip(ra, rb):
            if ca == cb:
                continue
            np.testing.assert_allclose(float(ca), float(cb), rtol=RTOL, atol=ATOL)


def test_parquet_samples_from_spilled_columns_equal_the_in_memory_ones(arch, monkeypatch, tmp_path):
    import pyarrow.parquet as pq

    from lumeval.commands.lot import run_lot
    from lumeval.frames import write_samples_parquet

    a = run_lot([arch], _criteria(), batch_spectra=16)
    monkeypatch.setattr(columns, "SPILL_BYTES", 0)
    monkeypatch.setattr(columns, "BLOCK_ROWS", 3)
    b = run_lot([arch], _criteria(), batch_spectra=16)  # the same batches: identical numbers
    assert b.figures.spilled and not a.figures.spilled
    write_samples_parquet(a, tmp_path / "a.parquet")
    write_samples_parquet(b, tmp_path / "b.parquet")
    ta, tb = pq.read_table(tmp_path / "a.parquet"), pq.read_table(tmp_path / "b.parquet")
    assert ta.schema == tb.schema and ta.num_rows == tb.num_rows == 200
    for name in ta.column_names:  # exact: the same float64 values, NaN where undefined
        x, y = ta.column(name).to_pylist(), tb.column(name).to_pylist()
        assert [v if v == v else "nan" for v in x] == [v if v == v else "nan" for v in y], name


# --------------------------------------------------------------------------- memory probes


def _tiled_archive(path, copies: int):
    """The demo lot's spectra repeated ``copies`` times (unique names), row groups of 16."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    t = pq.read_table(demo_archive(path.with_suffix(".one.parquet")))
    parts = []
    for c in range(copies):
        names = pa.array([f"{n}-{c}" for n in t.column("name").to_pylist()])
        parts.append(t.set_column(t.column_names.index("name"), "name", names))
    pq.write_table(pa.concat_tables(parts), path, row_group_size=16)
    return path


def _traced_run(path, n_batch: int):
    """(run, bytes still held with the run, peak bytes above the start) of a lot run."""
    from lumeval.commands.lot import run_lot

    run_lot([path], batch_spectra=n_batch)  # warm-up: imports, tables, caches
    tracemalloc.start()
    try:
        base = tracemalloc.get_traced_memory()[0]
        run = run_lot([path], batch_spectra=n_batch)
        held, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    return run, held - base, peak - base


def test_a_spilled_lot_holds_a_fraction_of_its_figures_and_its_peak_does_not_grow_with_it(tmp_path, monkeypatch):
    if not DEMO.is_dir():
        pytest.skip("demo lot not generated (python spectra_demo/generate_lot.py)")
    monkeypatch.setattr(columns, "SPILL_BYTES", 0)
    monkeypatch.setattr(columns, "BLOCK_ROWS", 64)
    small = _tiled_archive(tmp_path / "small.parquet", 2)   # 400 samples
    large = _tiled_archive(tmp_path / "large.parquet", 10)  # 2,000 samples
    run_s, held_s, peak_s = _traced_run(small, 64)
    run_l, held_l, peak_l = _traced_run(large, 64)
    assert len(run_s) == 400 and len(run_l) == 2000 and run_l.figures.spilled
    figure_bytes = 8 * len(run_l.figures)  # what keeping every figure in memory costs per sample
    per_sample_held = (held_l - held_s) / 1600
    per_sample_peak = (peak_l - peak_s) / 1600
    # What grows with the lot: x y, the per-sample statistics, packed names/sources/warnings
    # (~0.3 kB); keeping the figures (~0.7 kB) and names as objects cost ~0.9 kB before.
    assert per_sample_held < 0.6 * figure_bytes, (per_sample_held, figure_bytes)
    assert per_sample_peak < 0.8 * figure_bytes, (per_sample_peak, figure_bytes)


def test_prepare_of_data_on_the_grid_makes_no_copy_and_leaves_the_input_alone():
    from lumeval.spectra.model import SpectrumSet
    from lumeval.spectra.prepare import prepare

    wl = np.arange(360.0, 831.0)
    rng = np.random.default_rng(3)
    given = 1.0 + rng.random((3000, wl.size))
    values = given.copy()
    values[5, 10] = -1e-4  # small negative noise: clipped in a copy, never in the input
    noisy = values.copy()
    s = SpectrumSet(wl, values, tuple(f"s{i}" for i in range(3000)), tuple("f" for _ in range(3000)))
    tracemalloc.start()
    try:
        base = tracemalloc.get_traced_memory()[0]
        p = prepare(s)
        peak = tracemalloc.get_traced_memory()[1] - base
    finally:
        tracemalloc.stop()
    np.testing.assert_array_equal(values, noisy)  # the input is never modified
    assert p.values[5, 10] == 0.0 and np.array_equal(p.values[6], given[6])
    # one copy (for the clipped row) plus row-sized temporaries: under 1.5x the input
    assert peak < 1.5 * values.nbytes, peak / values.nbytes

    clean = SpectrumSet(wl, given, s.names, s.sources)
    tracemalloc.start()
    try:
        base = tracemalloc.get_traced_memory()[0]
        q = prepare(clean)
        peak = tracemalloc.get_traced_memory()[1] - base
    finally:
        tracemalloc.stop()
    assert peak < 0.3 * given.nbytes, peak / given.nbytes  # nothing to change: no copy at all
    assert not q.values.flags.writeable  # the caller's data, shared read-only
    np.testing.assert_array_equal(q.values, given)
