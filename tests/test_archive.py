"""Parquet archives (lumeval.spectra.archive): the layout, exact round trips, bounded-memory
streaming, and one-line refusals of bad archives through the real CLI.

Outside references: the values read must equal what pyarrow itself reads from the file
(an independent reader of the Parquet format); CIE illuminant A (CIE 15:2004 Table T.1, as
colour-science ships it) is the spectrum whose CCT the inspect run must reproduce (2856 K,
CIE 15:2004 §3.1, quoted from memory: A is defined at 2856 K).
"""

from __future__ import annotations

import subprocess
import sys
import tracemalloc
from pathlib import Path

import numpy as np
import pytest

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

from lumeval.errors import InputError  # noqa: E402
from lumeval.spectra.archive import (  # noqa: E402
    archive_table,
    iter_batches,
    read_archive,
    wavelength_column_name,
    write_archive,
)
from lumeval.spectra.model import SpectrumSet  # noqa: E402
from lumeval.spectra.read import read_spectra  # noqa: E402

REPO = Path(__file__).resolve().parents[1]


def run_cli(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "lumeval", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd or REPO, timeout=300)


def _random_set(n=30, step=5.0, seed=0):
    rng = np.random.default_rng(seed)
    wl = np.arange(380.0, 780.0 + step / 2, step)
    vals = rng.uniform(0.05, 1.0, (n, wl.size)) * rng.uniform(1e-3, 1e3, (n, 1))
    meta = tuple({"station": f"S{i % 3}", "lumeval.scale": "relative"} for i in range(n))
    return SpectrumSet(wl, vals, tuple(f"unit-{i:03d}" for i in range(n)), tuple("gen" for _ in range(n)), (), meta)


def test_round_trip_is_exact(tmp_path):
    s = _random_set(step=2.5)
    p = tmp_path / "a.parquet"
    write_archive(s, p, row_group_rows=7)
    back = read_spectra(p)
    assert np.array_equal(back.wavelengths_nm, s.wavelengths_nm)  # exact by construction (float64 stored)
    assert np.array_equal(back.values, s.values)
    assert back.names == s.names
    assert back.sources[4] == f"{p}#row 5"
    assert back.metadata[2]["station"] == "S2" and back.metadata[2]["lumeval.scale"] == "relative"
    # an independent reader (pyarrow itself) sees the documented layout
    t = pq.read_table(p)
    assert t.column_names[0] == "name" and "382.5" in t.column_names and "380" in t.column_names
    assert np.array_equal(t.column("382.5").to_numpy(), s.values[:, 1])
    assert pq.ParquetFile(p).metadata.num_row_groups == 5  # 30 rows in groups of 7


def test_float_columns_are_byte_stream_split_and_read_back_bit_for_bit(tmp_path):
    """Every Parquet file lumeval writes takes its options from one place
    (archive.write_options): floating-point columns BYTE_STREAM_SPLIT (the Parquet format's
    encoding for floats, version 2.8), other columns dictionary-encoded. An encoding must not
    change a single bit: signed zeros, subnormals, the extremes of float64 and values one ulp
    apart come back as written, as pyarrow (an independent reader) decodes them."""
    from lumeval.frames import write_samples_parquet
    from lumeval.lots.run import run_lot

    s = _random_set(n=8)
    special = np.array([0.0, -0.0, 5e-324, 2.2250738585072014e-308, 1.7976931348623157e308, 1.0,
                        np.nextafter(1.0, 2.0), 1 / 3])
    vals = s.values.copy()
    vals[:, 3] = special  # one wavelength column holds them all
    s = SpectrumSet(s.wavelengths_nm, vals, s.names, s.sources, (), s.metadata)
    p = tmp_path / "a.parquet"
    write_archive(s, p)
    back = pq.read_table(p).column(wavelength_column_name(s.wavelengths_nm[3])).to_numpy()
    assert np.array_equal(back.view(np.uint64), special.view(np.uint64))  # bit for bit
    out = tmp_path / "samples.parquet"
    write_samples_parquet(run_lot([str(_write_wide(tmp_path))], batch_spectra=64), out)
    for f in (p, out):
        meta = pq.ParquetFile(f).metadata
        schema = pq.ParquetFile(f).schema_arrow
        col = {meta.row_group(0).column(i).path_in_schema: meta.row_group(0).column(i) for i in range(meta.num_columns)}
        for field in schema:
            enc = col[field.name].encodings
            if pa.types.is_floating(field.type):
                assert "BYTE_STREAM_SPLIT" in enc and "RLE_DICTIONARY" not in enc, (f.name, field.name, enc)
            elif not pa.types.is_boolean(field.type):  # (Parquet keeps booleans as bits)
                assert "RLE_DICTIONARY" in enc, (f.name, field.name, enc)
            assert col[field.name].compression == "ZSTD"


def _write_wide(tmp_path):
    """A small wide CSV of the random set (a lot input)."""
    s = _random_set(n=12)
    p = tmp_path / "wide.csv"
    rows = ["wavelength," + ",".join(s.names)]
    rows += [f"{w:g}," + ",".join(repr(float(v)) for v in s.values[:, j]) for j, w in enumerate(s.wavelengths_nm)]
    p.write_text("\n".join(rows) + "\n")
    return p


def test_convert_round_trips_through_parquet(tmp_path):
    src = REPO / "spectra_demo" / "lot_2026w48" / "station_B_modules_151-200.csv"
    if not src.exists():
        pytest.skip("demo lot not generated")
    arch, back = tmp_path / "b.parquet", tmp_path / "back.csv"
    r1 = run_cli("convert", src, arch)
    assert r1.returncode == 0, r1.stderr
    r2 = run_cli("convert", arch, back)
    assert r2.returncode == 0, r2.stderr
    a, b = read_spectra(src), read_spectra(back)
    assert np.array_equal(a.values, b.values) and np.array_equal(a.wavelengths_nm, b.wavelengths_nm)
    assert a.names == b.names
    # TM-27 XML of one spectrum from the archive (column chosen by name)
    r3 = run_cli("convert", arch, tmp_path / "one.xml", "--column", a.names[3])
    assert r3.returncode == 0, r3.stderr
    assert np.array_equal(read_spectra(tmp_path / "one.xml").values[0], a.values[3])


def test_folder_is_one_archive_and_columns_may_come_in_any_order(tmp_path):
    s = _random_set(n=10)
    t = archive_table(s)
    # the second file stores the wavelengths in reverse column order, with float names
    rev = pa.table({"name": t.column("name"),
                    **{f"{float(c):.1f}": t.column(c) for c in reversed(t.column_names) if c[0].isdigit()}})
    (tmp_path / "arch").mkdir()
    pq.write_table(t.slice(0, 6), tmp_path / "arch" / "part-0.parquet")
    pq.write_table(rev.slice(6), tmp_path / "arch" / "part-1.parquet")
    (tmp_path / "arch" / ".hidden.parquet").write_bytes(b"junk")
    back = read_spectra(tmp_path / "arch")
    assert np.array_equal(back.values, s.values) and back.names == s.names
    assert back.sources[6].endswith("part-1.parquet#row 1")


def test_integer_and_null_values_and_default_names(tmp_path):
    wl = [str(w) for w in range(380, 781, 5)]
    t = pa.table({w: pa.array([1, None, 3], type=pa.int32()) for w in wl})
    p = tmp_path / "ints.parquet"
    pq.write_table(t, p)
    s = read_spectra(p)
    assert s.names == ("row 1", "row 2", "row 3")
    assert np.all(s.values[0] == 1.0) and np.all(np.isnan(s.values[1]))


def test_streaming_memory_is_bounded_by_the_batch(tmp_path):
    """Memory probe: reading a 20,000-spectrum archive (12.96 MB of values) in batches of 256
    rows from row groups of 100 rows keeps the traced peak (numpy's and Python's allocations)
    below a tenth of the archive's values; reading it whole needs at least all of them."""
    n, wl = 20_000, np.arange(380.0, 781.0, 5.0)
    rng = np.random.default_rng(3)
    vals = rng.uniform(0, 1, (n, wl.size))
    s = SpectrumSet(wl, vals, tuple(f"s{i}" for i in range(n)), tuple("g" for _ in range(n)))
    p = tmp_path / "big.parquet"
    write_archive(s, p, row_group_rows=100)
    del s
    size = vals.nbytes
    total = 0.0
    tracemalloc.start()
    try:
        rows = 0
        for b in iter_batches(str(p), batch_rows=256):
            assert len(b.spectra) <= 256
            rows += len(b.spectra)
            total += float(b.spectra.values.sum())
        streamed_peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.reset_peak()
        whole = read_archive(p)
        whole_peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert rows == n
    np.testing.assert_allclose(total, vals.sum(), rtol=1e-12)  # the same numbers were streamed
    assert streamed_peak < size / 10, (streamed_peak, size)
    assert whole_peak > size
    assert np.array_equal(whole.values, vals)


def test_lot_evaluates_no_more_than_one_batch_ahead_of_the_reader(tmp_path, monkeypatch):
    """Batches in flight: every time the lot evaluates a batch, the reader has produced at most
    that batch beyond what was already evaluated (nothing is read ahead and kept)."""
    from lumeval.commands.lot import run_lot
    from lumeval.lots import streaming
    from lumeval.spectra import archive

    s = _random_set(n=50, step=5.0, seed=4)
    # lamp-like positive spectra: a smooth broad band so that every figure is defined
    wl = s.wavelengths_nm
    band = np.exp(-0.5 * ((wl - 560) / 80) ** 2) + 0.2
    s = SpectrumSet(wl, band * (1 + 0.01 * np.arange(50)[:, None]), s.names, s.sources)
    p = tmp_path / "lot.parquet"
    write_archive(s, p, row_group_rows=3)
    read_rows, evaluated, worst = [0], [0], [0]
    real_batch, real_eval = archive._batch_from_record, streaming.evaluate_batch

    def counting_batch(batch, *a, **k):
        read_rows[0] += batch.num_rows
        return real_batch(batch, *a, **k)

    def counting_eval(spectra, *a, **k):
        worst[0] = max(worst[0], read_rows[0] - evaluated[0])
        evaluated[0] += len(spectra)
        return real_eval(spectra, *a, **k)

    monkeypatch.setattr(archive, "_batch_from_record", counting_batch)
    monkeypatch.setattr(streaming, "evaluate_batch", counting_eval)
    run = run_lot([p], batch_spectra=8, evaluate_processes=1)
    assert len(run) == 50 and evaluated[0] == 50
    assert worst[0] <= 8


def test_lot_with_evaluating_workers_keeps_a_bounded_number_of_batches_in_flight(tmp_path, monkeypatch):
    """With evaluating worker processes, the spectra read but not yet taken back as results
    stay within the bound of lumeval.lots.evaluating (batches waiting per worker, plus the one
    being sent and the one held before the pool starts)."""
    from lumeval.commands.lot import run_lot
    from lumeval.lots import evaluating, streaming
    from lumeval.spectra import archive

    wl = np.arange(380.0, 781.0, 5.0)
    band = np.exp(-0.5 * ((wl - 560) / 80) ** 2) + 0.2
    n = 120
    s = SpectrumSet(wl, band * (1 + 0.01 * np.arange(n)[:, None]), tuple(f"m{i}" for i in range(n)), ("g",) * n)
    p = tmp_path / "lot.parquet"
    write_archive(s, p, row_group_rows=3)
    read_rows, taken, worst = [0], [0], [0]
    real_batch, real_add = archive._batch_from_record, streaming.LotAccumulator.add

    def counting_batch(batch, *a, **k):
        read_rows[0] += batch.num_rows
        worst[0] = max(worst[0], read_rows[0] - taken[0])
        return real_batch(batch, *a, **k)

    def counting_add(self, r):
        taken[0] += len(r)
        return real_add(self, r)

    monkeypatch.setattr(archive, "_batch_from_record", counting_batch)
    monkeypatch.setattr(streaming.LotAccumulator, "add", counting_add)
    run = run_lot([p], batch_spectra=8, evaluate_processes=2)
    assert len(run) == n and taken[0] == n
    assert worst[0] <= (evaluating.IN_FLIGHT_PER_PROCESS * 2 + 2) * 8 + 3  # + one row group being read
    assert worst[0] > 8  # the workers did run ahead of the results


def test_lot_evaluated_by_workers_equals_the_serial_lot(tmp_path):
    """Batches evaluated by two worker processes: the same samples, order, verdicts and
    warnings as in this process; figures within floating-point noise (the BLAS summation order
    may follow the arrays' alignment: differences of ~1e-15 relative were measured; the bound
    here is 1e-12 relative plus 1e-12 absolute)."""
    from lumeval.commands.lot import run_lot
    from lumeval.criteria.loader import load_criteria

    wl = np.arange(380.0, 781.0, 5.0)
    n = 120
    k = np.arange(n)[:, None]
    vals = np.exp(-0.5 * ((wl - 450 - 0.2 * k) / 12) ** 2) + np.exp(-0.5 * ((wl - 560 - k) / 70) ** 2) * (1 + 0.01 * k)
    s = SpectrumSet(wl, vals, tuple(f"m{i}" for i in range(n)), ("g",) * n)
    p = tmp_path / "lot.parquet"
    write_archive(s, p, row_group_rows=16)
    crit = tmp_path / "c.toml"
    crit.write_text('lumeval_criteria = 1\n\n[[clause]]\nid = "ra"\nfigure = "Ra"\nmin = 85\n', encoding="utf-8")
    c = load_criteria(crit)
    one = run_lot([p], c, batch_spectra=8, evaluate_processes=1)
    two = run_lot([p], c, batch_spectra=8, evaluate_processes=2)
    assert len(one) == len(two) == n
    assert one.names == two.names and one.warnings == two.warnings
    assert one.sample_verdicts == two.sample_verdicts and one.exit_code == two.exit_code
    assert 0 < one.sample_verdicts.count("pass") < n  # the clause splits the lot: verdicts compared for real
    for f in one.figures:
        np.testing.assert_allclose(np.asarray(two.figures[f], dtype=float), np.asarray(one.figures[f], dtype=float),
                                   rtol=1e-12, atol=1e-12, equal_nan=True)


def test_workers_give_the_same_bits_as_one_process(tmp_path):
    """Spectra from 2,000 K to 20,000 K (Planckian, blend and daylight references, many table
    entries shared between batches) in batches of 16: evaluated in one process, and by two
    forked workers that each fill the reference tables in the order their batches come. The
    figures are the same bits (the claim, so compared exactly): every table entry is computed
    with row-independent products (lumeval.metrics.reference_table), and every batch with one
    BLAS thread
    (lumeval._workers.one_blas_thread; without it this test failed here: the parent's
    two-thread BLAS gave TM-30 figures up to 8e-13 from the workers' one-thread ones). The fill
    history itself is tested in tests/test_metrics_reference_table.py."""
    from lumeval.commands.lot import run_lot

    wl = np.arange(380.0, 781.0, 1.0)
    n = 480
    from lumeval.metrics.reference import planckian_spd

    rng = np.random.default_rng(3)
    # near-Planckian, rippled test spectra: clusters (batches share table entries, which the
    # processes fill in different orders) and a spread from 2,000 K to 20,000 K
    T = np.concatenate([rng.normal(c, 0.01 * c, 100) for c in (2700.0, 4500.0, 6500.0, 9000.0)]
                       + [np.geomspace(2000.0, 20000.0, 80)])[rng.permutation(n)]
    vals = planckian_spd(wl, T) * (1.0 + 0.04 * np.sin(wl / rng.uniform(20.0, 40.0, (n, 1)) + rng.uniform(0, 6, (n, 1))))
    s = SpectrumSet(wl, vals, tuple(f"m{i}" for i in range(n)), ("g",) * n)
    p = tmp_path / "spread.parquet"
    write_archive(s, p, row_group_rows=16)
    one = run_lot([p], batch_spectra=16, evaluate_processes=1)
    two = run_lot([p], batch_spectra=16, evaluate_processes=2)
    cct = np.asarray(one.figures["cct_K"], dtype=float)
    assert np.nanmin(cct) < 2500 and np.nanmax(cct) > 15000 and np.isfinite(cct).sum() > 400
    assert one.names == two.names and one.warnings == two.warnings
    for f in one.figures:  # exact: the claim is bit identity
        np.testing.assert_array_equal(np.asarray(two.figures[f], dtype=float), np.asarray(one.figures[f], dtype=float),
                                      err_msg=f)


# --------------------------------------------------------------------------- bad archives


def _wl_cols(values=1.0):
    return {str(w): [values] for w in range(380, 781, 5)}


BAD = {
    "no_wavelengths.parquet": (lambda: pa.table({"name": ["a"], "station": ["x"]}), "no column is named by a wavelength"),
    "text_values.parquet": (lambda: pa.table({**_wl_cols(), "555": ["bright"]}), "holds string, not numbers"),
    "duplicate.parquet": (lambda: pa.table({**_wl_cols(), "380.0": [1.0]}), "both name 380 nm"),
    "name_not_text.parquet": (lambda: pa.table({"name": [7], **_wl_cols()}), "'name' column holds int64, not text"),
    "null_name.parquet": (lambda: pa.table({"name": pa.array([None], type=pa.string()), **_wl_cols()}),
                          "row 1 has no name"),
    # an empty or blank name, as a null (found by exploratory testing: it reached every output empty)
    "empty_name.parquet": (lambda: pa.table({"name": ["a", " \t"], **{k: v * 2 for k, v in _wl_cols().items()}}),
                           "row 2 has an empty name"),
    "zero_nm.parquet": (lambda: pa.table({"0": [1.0], **_wl_cols()}), "names the wavelength 0 nm"),
    # two columns of one name: which holds the names (or the metadata) would be a guess; the
    # first was taken and the second dropped silently
    "two_names.parquet": (lambda: _same_names("name", ["a"], ["b"]), "two columns are named 'name'"),
    "two_stations.parquet": (lambda: _same_names("station", ["x"], ["y"]), "two columns are named 'station'"),
}


def _same_names(column, first, second):
    t = pa.table(_wl_cols())
    return pa.Table.from_arrays([pa.array(first), *t.columns, pa.array(second)], names=[column, *t.column_names, column])


@pytest.mark.parametrize("fname", sorted(BAD))
def test_bad_archive_is_refused_in_one_line(tmp_path, fname):
    make, expected = BAD[fname]
    p = tmp_path / fname
    pq.write_table(make(), p)
    with pytest.raises(InputError, match=expected):
        read_spectra(p)
    r = run_cli("inspect", p)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("lumeval: error: ") and expected in lines[0], r.stderr
    assert "Traceback" not in r.stderr


def test_a_long_column_name_is_quoted_short_by_lot_too(tmp_path):
    """A 5,000-character column name was quoted whole by `lot` (about 24 kB on stderr and in
    the unreadable table; `inspect` cut it): messages quote at most ~80 characters of a name
    (lumeval.errors.quote), wherever they are printed (found by exploratory testing)."""
    p = tmp_path / "long.parquet"
    pq.write_table(pa.table({**_wl_cols(), "9" * 5000: [1.0]}), p)
    r = run_cli("lot", p)
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert len(r.stderr) < 600 and len(r.stdout) < 8000, (len(r.stderr), len(r.stdout))
    assert "9" * 79 + "…" in r.stderr and "9" * 200 not in r.stdout


def test_not_parquet_and_truncated_files_are_refused(tmp_path):
    garbage = tmp_path / "garbage.parquet"
    garbage.write_bytes(b"name,380\nx,1\n")
    s = _random_set(n=5)
    good = tmp_path / "good.parquet"
    write_archive(s, good)
    cut = tmp_path / "cut.parquet"
    cut.write_bytes(good.read_bytes()[:-40])
    for p in (garbage, cut):
        with pytest.raises(InputError, match="not a readable Parquet file"):
            read_spectra(p)
    r = run_cli("lot", cut, "--quiet")
    assert r.returncode == 2
    err = r.stderr.strip().splitlines()
    assert len(err) == 1 and "not a readable Parquet file" in err[0], r.stderr


def test_inspect_reads_an_archive(tmp_path, colour):
    # CIE illuminant A (CIE 15:2004 Table T.1 via colour-science): CCT 2856 K (defined)
    sd = colour.SDS_ILLUMINANTS["A"]
    wl = np.asarray(sd.wavelengths, dtype=float)
    keep = (wl >= 380) & (wl <= 780)
    s = SpectrumSet(wl[keep], np.asarray(sd.values, dtype=float)[keep][None, :], ("A",), ("cie",),
                    (), ({"lamp": "tungsten"},))
    p = tmp_path / "a.parquet"
    write_archive(s, p)
    r = run_cli("inspect", p, "--format", "json")
    assert r.returncode == 0, r.stderr
    import json

    doc = json.loads(r.stdout)
    spec = doc["spectra"][0] if "spectra" in doc else doc
    assert spec["name"] == "A" and spec["source"].endswith("a.parquet#row 1")
    np.testing.assert_allclose(spec["cct_K"], 2856, atol=1.0)


def test_wavelength_column_names():
    assert wavelength_column_name(380.0) == "380"
    assert wavelength_column_name(382.5) == "382.5"


def test_validate_only_says_scale_unknown_for_an_archive(tmp_path):
    """An archive states no scale: `inspect --validate-only` said "scale None" (Python's
    spelling), the text readers "scale unknown" (found by exploratory testing)."""
    p = tmp_path / "a.parquet"
    pq.write_table(pa.table({"name": ["a"], **{str(w): [1.0 + w / 1000] for w in range(380, 781, 5)}}), p)
    r = run_cli("inspect", "--validate-only", p)
    assert r.returncode == 0, r.stderr
    assert "scale unknown, Parquet archive" in r.stdout and "None" not in r.stdout
