"""Lots from Parquet archives: the same lot as from its CSV files, metadata carried into every
per-sample output (CSV, JSON, Parquet), and Evaluation.to_pandas()/to_arrow().

Outside references: the demo lot's planted outliers and its one failing module are facts of
the generator (spectra_demo/generate_lot.py), not outputs of lumeval; CIE illuminant A
(CIE 15:2004 Table T.1, via colour-science) has CCT 2856 K and CIE D65 about 6504 K (CIE 15:2004
§3.1; quoted from memory).
"""

from __future__ import annotations

import csv
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from lumeval.render.tables import read_csv_report

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

from lumeval.commands.lot import run_lot  # noqa: E402
from lumeval.spectra.archive import archive_table  # noqa: E402
from lumeval.spectra.model import SpectrumSet  # noqa: E402
from lumeval.spectra.prepare import prepare  # noqa: E402
from lumeval.spectra.read import read_spectra  # noqa: E402

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "spectra_demo" / "lot_2026w48"
DEMO_CRITERIA = REPO / "spectra_demo" / "lot_criteria.toml"
#: float tolerance between two runs over the same spectra batched differently (BLAS summation
#: order may differ in the last bits; Duv, a small difference, keeps that error in absolute
#: terms: common practice, no source)
RTOL, ATOL = 1e-12, 1e-10


def _criteria():
    import lumeval.criteria.lot_clauses  # noqa: F401
    from lumeval.criteria.loader import load_criteria

    return load_criteria(DEMO_CRITERIA)


def demo_archive(path: Path, row_group_rows: int = 16) -> Path:
    """The demo lot's 200 modules as one archive, with a text and an integer metadata column."""
    files = sorted(DEMO.glob("*.csv"))
    s = prepare([read_spectra(f) for f in files])
    t = archive_table(s)
    t = t.append_column("station", pa.array([f"ST-{i % 3}" for i in range(len(s))]))
    t = t.append_column("drive_mA", pa.array(np.arange(len(s), dtype=np.int64) * 5 + 350))
    pq.write_table(t, path, row_group_size=row_group_rows)
    return path


@pytest.fixture(scope="module")
def arch(tmp_path_factory):
    if not DEMO.is_dir():
        pytest.skip("demo lot not generated (python spectra_demo/generate_lot.py)")
    return demo_archive(tmp_path_factory.mktemp("arch") / "lot.parquet")


def test_archive_lot_equals_the_csv_lot(arch):
    a = run_lot([DEMO], _criteria())
    b = run_lot([arch], _criteria(), batch_spectra=64)
    assert a.names == b.names and len(b) == 200 and not b.unreadable
    for k in a.figures:
        np.testing.assert_allclose(b.figures[k], a.figures[k], rtol=RTOL, atol=ATOL, equal_nan=True, err_msg=k)
    assert a.sample_verdicts == b.sample_verdicts
    # the generator's planted outliers and its one failing module (outside facts)
    flagged = {b.names[i] for i in np.flatnonzero(b.stats.outlier)}
    assert {"AD30-w48-037", "AD30-w48-118", "AD30-w48-164"} <= flagged
    assert b.stats.yield_.passed == 199 and b.check.verdicts[163] == "fail"
    assert b.sources[163] == f"{arch}#row 164"
    # metadata kept, with its Parquet types, one row per sample
    assert b.metadata.column_names == ["lumeval.scale", "station", "drive_mA"] or \
        b.metadata.column_names[-2:] == ["station", "drive_mA"]
    assert b.metadata.column("drive_mA").to_pylist()[163] == 163 * 5 + 350
    assert b.metadata.schema.field("drive_mA").type == pa.int64()


def test_metadata_in_every_per_sample_output(arch, tmp_path):
    out_csv, out_json, out_pq = tmp_path / "s.csv", tmp_path / "l.json", tmp_path / "s.parquet"
    r = subprocess.run([sys.executable, "-m", "lumeval", "lot", str(arch), "-c", str(DEMO_CRITERIA), "--quiet",
                        "--samples-csv", str(out_csv), "--json", str(out_json), "--samples-parquet", str(out_pq)],
                       capture_output=True, text=True, cwd=REPO, timeout=300)
    assert r.returncode == 1, r.stderr  # the demo lot fails a lot clause (as from its CSV files)
    rows = read_csv_report(out_csv.read_text(encoding="utf-8"))
    header = next(csv.reader(out_csv.open(encoding="utf-8")))
    assert header[:2] == ["name", "source"] and header.index("station") < header.index("verdict")
    assert rows[163]["station"] == "ST-1" and rows[163]["drive_mA"] == str(163 * 5 + 350)
    doc = json.loads(out_json.read_text(encoding="utf-8"))
    assert doc["samples"][163]["metadata"]["drive_mA"] == 163 * 5 + 350
    t = pq.read_table(out_pq)
    assert t.num_rows == 200 and t.schema.field("drive_mA").type == pa.int64()
    assert t.column("station").to_pylist() == [row["station"] for row in rows]
    assert t.column("verdict").to_pylist()[163] == "fail" and t.column("outlier").to_pylist()[163] is True
    # the Parquet figures are the CSV's numbers exactly (both unrounded float64)
    assert t.column("cct_K").to_pylist() == [float(row["cct_K"]) for row in rows]
    assert [c for c in t.column_names if c.startswith("clause:")] == [h for h in header if h.startswith("clause:")]


def test_a_lot_mixing_an_archive_and_a_csv_file(arch):
    one = DEMO / "AD30-w48-001.csv"
    run = run_lot([one, arch])
    assert len(run) == 201 and run.names[0] == "AD30-w48-001"
    st = run.metadata.column("station").to_pylist()
    assert st[0] is None and st[1] == "ST-0"


def empty_archive(arch: Path, path: Path) -> Path:
    """An archive with ``arch``'s columns and not a single row."""
    pq.write_table(pq.read_table(arch).slice(0, 0), path)
    return path


def test_an_archive_without_rows_is_listed_unreadable(arch, tmp_path):
    # inspect and check refuse an archive without rows; a lot must not count it as read (an
    # export that wrote no spectrum would otherwise pass unnoticed)
    empty = empty_archive(arch, tmp_path / "empty.parquet")
    run = run_lot([empty, arch])
    assert len(run) == 200 and run.exit_code == 2
    assert [(u.source, u.message) for u in run.unreadable] == [
        (str(empty), f"{empty}: the archive holds no rows — give an archive with at least one spectrum")]
    r = subprocess.run([sys.executable, "-m", "lumeval", "lot", str(empty), "--quiet"],
                       capture_output=True, text=True, cwd=REPO, timeout=300)
    assert r.returncode == 2 and "the archive holds no rows" in r.stderr and "Traceback" not in r.stderr


def test_evaluation_to_pandas_and_arrow(colour):
    from lumeval.engine import FIGURE_NAMES, evaluate

    sets = []
    for name, lamp in (("A", "tungsten"), ("D65", "daylight")):
        sd = colour.SDS_ILLUMINANTS[name]
        wl = np.asarray(sd.wavelengths, dtype=float)
        keep = (wl >= 380) & (wl <= 780) & (wl % 5 == 0)
        sets.append(SpectrumSet(wl[keep], np.asarray(sd.values, dtype=float)[keep][None, :], (name,), ("cie",),
                                (), ({"lamp": lamp, "lumeval.delimiter": "comma"},)))
    ev = evaluate(sets)
    df = ev.to_pandas()
    t = ev.to_arrow()
    assert list(df.columns) == t.column_names
    assert list(df.columns)[:3] == ["name", "source", "lamp"] and df.columns[-1] == "warnings"
    assert "lumeval.delimiter" not in df.columns  # how a file was read is not sample data
    assert set(FIGURE_NAMES) <= set(df.columns) and len(df) == 2
    assert list(df["lamp"]) == ["tungsten", "daylight"]
    for k in FIGURE_NAMES:
        assert np.array_equal(df[k].to_numpy(), ev.figure(k), equal_nan=True), k
        assert np.array_equal(t.column(k).to_numpy(zero_copy_only=False), ev.figure(k), equal_nan=True), k
    # CIE 15:2004: illuminant A 2856 K, D65 about 6504 K (quoted from memory)
    np.testing.assert_allclose(df["cct_K"], [2856, 6504], atol=3)


def test_frames_do_not_load_at_start_up():
    code = ("import sys, lumeval, lumeval.engine; "
            "print(any(m in sys.modules for m in ('pandas', 'pyarrow', 'dask', 'distributed')))")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO, timeout=120)
    assert r.stdout.strip() == "False", r.stderr


def test_archive_lot_does_not_import_pandas(tmp_path):
    """A Parquet lot with per-sample verdicts and clause outcomes written to Parquet runs without
    pandas (pyarrow's ``pa.array``, ``pa.scalar``, ``to_numpy`` import it when it is installed:
    0.4 s per process). Checked in a fresh interpreter, with pandas installed."""
    pytest.importorskip("pandas")
    arch = demo_archive(tmp_path / "demo.parquet")
    table = pq.read_table(arch)
    # a float32 wavelength column (a missing value would be refused: the null branch of the
    # buffer reader is checked in the next test)
    j = table.column_names.index("400")
    table = table.set_column(j, "400", table.column(j).cast(pa.float32()))
    arch = tmp_path / "lot.parquet"
    pq.write_table(table, arch, row_group_size=64)
    out = tmp_path / "samples.parquet"
    argv = ["lumeval", "lot", str(arch), "--criteria", str(DEMO_CRITERIA), "--samples-parquet", str(out), "--quiet"]
    code = ("import sys, runpy\n"
            f"sys.argv = {argv!r}\n"
            "try:\n    runpy.run_module('lumeval', run_name='__main__')\n"
            "except SystemExit as e:\n    print('exit', e.code)\n"
            "print('pandas' in sys.modules)\n")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO, timeout=300)
    lines = r.stdout.strip().splitlines()
    assert lines[-2] in ("exit 0", "exit 1") and lines[-1] == "False", r.stdout[-2000:] + r.stderr
    t = pq.read_table(out)
    assert t.num_rows == table.num_rows and t.column("verdict").null_count == 0
    assert any(c.startswith("clause:") for c in t.column_names)
    assert t.column("outlier").type == pa.bool_()


def test_arrays_from_buffers_equal_pyarrows_own_conversion():
    """lumeval.frames' float, boolean and string arrays (built from buffers) against
    ``pa.array`` of the same values (pyarrow's own conversion, the reference); the archive
    reader's float values against pyarrow's ``fill_null`` + ``to_numpy``."""
    from lumeval.frames import bool_array, float_array, string_array
    from lumeval.spectra.archive import float_values

    rng = np.random.default_rng(5)
    x = rng.normal(size=41)
    x[[3, 5]] = np.nan
    x[7], x[8] = -0.0, np.inf
    for v in (x, x[::3], x[:0]):
        a, ref = float_array(pa, v), pa.array(v, type=pa.float64())
        assert a.type == ref.type and a.null_count == ref.null_count == 0
        got, want = np.asarray(a.to_numpy()), np.asarray(ref.to_numpy())
        assert got.tobytes() == want.tobytes()  # the same bits, signed zero and NaN included
    b = rng.random(77) > 0.5
    for v in (b, b[1::2], b[:0]):
        assert bool_array(pa, v).equals(pa.array(v, type=pa.bool_()))
    for vals in (["pass", None, "fail", "", "na\u00efve \u2713", None, "x" * 1000], [None, None], [], ["only"]):
        arr = string_array(pa, vals)
        arr.validate(full=True)
        assert arr.equals(pa.array(vals, type=pa.string())), vals
    with pytest.raises(UnicodeEncodeError):  # as pa.array: a lone surrogate is not UTF-8
        string_array(pa, ["bad\udcff"])
    # tuples of texts joined with " | " (outlier reasons: mostly empty, only the others joined;
    # warnings: mostly full) against str.join and pa.array of the joined texts
    from lumeval.frames import _joined_array

    reasons = tuple(("Rf low", "v\u2032 low") if k % 9 == 0 else (("R9 \u2713",) if k % 13 == 0 else ())
                    for k in range(300))
    for rows in (reasons, tuple(r or ("note",) for r in reasons), ((),) * 5, ()):
        for start, stop in ((0, len(rows)), (7, 123), (50, 50)):
            want = pa.array([" | ".join(r) for r in rows[start:stop]], type=pa.string())
            got = _joined_array(pa, rows, start, stop)
            got.validate(full=True)
            assert got.equals(want), (start, stop)
    with pytest.raises(UnicodeEncodeError):
        _joined_array(pa, ((),) * 10 + (("bad\udcff",),), 0, 11)
    for typ in (pa.float64(), pa.float32()):
        arr = pa.array([1.5, None, 3.25, np.nan, -0.0, None, 7.0, 2.5e-3], type=typ)
        for part in (arr, arr.slice(1), arr.slice(2, 4), arr.slice(8), arr.slice(5, 3), pa.array([1.0, 2.0], type=typ)):
            want = part.cast(pa.float64()).fill_null(float("nan")).to_numpy(zero_copy_only=False)
            got = float_values(pa, part)
            assert got.dtype == np.float64 and got.tobytes() == np.asarray(want, dtype=np.float64).tobytes()
    assert float_values(pa, pa.array([1, 2])) is None  # integers: the reader's general path


def test_metadata_text_is_untrusted_in_the_csv(tmp_path):
    """A metadata cell that a spreadsheet would run as a formula is neutralised (OWASP CSV
    injection guidance: a leading quote); control characters are escaped."""
    from lumeval.render.lot_report import samples_csv

    wl = np.arange(380.0, 781.0, 5.0)
    band = np.exp(-0.5 * ((wl - 560) / 80) ** 2) + 0.2
    s = SpectrumSet(wl, np.vstack([band, band * 1.1]), ("a", "b"), ("g", "g"))
    t = archive_table(s).append_column("station", pa.array(["=HYPERLINK(\"http://x\")", "ok\x1b[2J"]))
    p = tmp_path / "m.parquet"
    pq.write_table(t, p)
    rows = list(csv.DictReader(samples_csv(run_lot([p])).splitlines()))
    assert rows[0]["station"] == "'=HYPERLINK(\"http://x\")"
    assert rows[1]["station"] == "ok\\x1b[2J"
