"""The per-sample CSV of a lot, written block by block (lumeval.render.lot_report.samples_csv).

The oracle is Python's own :mod:`csv` module (an independent general-purpose library): the
file the fast writer produces must be byte for byte what ``csv.writer`` (QUOTE_MINIMAL, ``\\n``)
writes for the same cells, and read back by ``csv.reader`` it must give every figure bit for
bit (``repr`` of a float is the shortest string that reads back as the same float: Python's
documented round trip, so an exact comparison is the right one here). The cells are built
from the per-cell rules of docs/output-formats.md: a missing value is an empty cell, text is
neutralised for spreadsheets (lumeval.render.safe).
"""

from __future__ import annotations

import csv
import io
import math

import numpy as np
import pytest

from lumeval.commands.lot import run_lot
from lumeval.render import lot_report
from lumeval.render.lot_report import _csv_value, csv_columns, samples_csv
from lumeval.render.safe import csv_first_cell, csv_text
from lumeval.render.tables import csv_notes
from lumeval.spectra.model import SpectrumSet

pa = pytest.importorskip("pyarrow")
pq = pytest.importorskip("pyarrow.parquet")

from lumeval.spectra.archive import archive_table  # noqa: E402

HOSTILE = ["plain", "comma, inside", 'a "quoted" word', "=SUM(A1:A9)", "#not a note", "tab\tand\nnewline",
           "-0.5", "dark"]


def _number(v) -> str:
    if v is None:
        return ""
    f = float(v)
    return repr(f) if math.isfinite(f) else ""


def _oracle(run) -> str:
    """The per-sample CSV cell by cell through csv.writer."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([csv_text(c) for c in csv_columns(run)])
    st = run.stats
    meta = [] if run.metadata is None else [run.metadata.column(c).to_pylist() for c in run.metadata.column_names]
    verdicts = run.sample_verdicts
    for i in range(len(run)):
        row = [csv_first_cell(run.names[i]), csv_text(run.sources[i]), *(_csv_value(m[i]) for m in meta),
               verdicts[i] if verdicts is not None else "", "yes" if st.outlier[i] else "no",
               csv_text(" | ".join(st.outlier_reasons[i])), _number(st.d_upvp_centroid[i]), _number(st.steps_centroid[i]),
               _number(None if st.d_upvp_nominal is None else st.d_upvp_nominal[i]),
               _number(None if st.steps_nominal is None else st.steps_nominal[i])]
        row += [_number(run.figures[f][i]) for f in run.figures]
        if run.check is not None:
            row += [r.outcome[i] for r in run.check.results]
        row.append(csv_text(" | ".join(run.warnings[i])))
        w.writerow(row)
    buf.write(csv_notes())
    return buf.getvalue()


def _archive(tmp_path, n=len(HOSTILE)):
    """Spectra with hostile names and metadata; one is far off the locus (CRI and TM-30 flagged),
    and all are relative (no illuminance: empty cells)."""
    wl = np.arange(380.0, 781.0, 5.0)
    rows = []
    for k in range(n):
        rows.append(np.exp(-0.5 * ((wl - 520 - 10 * k) / (60 + 5 * k)) ** 2) + 0.05 * k)
    rows[-2] = np.exp(-0.5 * ((wl - 530) / 15) ** 2)  # a narrow green band: |Duv| > 0.05
    s = SpectrumSet(wl, np.vstack(rows), tuple(HOSTILE[:n]), ("g",) * n)
    t = archive_table(s)
    t = t.append_column("station", pa.array(["ST,1", 'say "x"', "=1+1", None, "ok", "a\rb", "-3", "z"][:n]))
    t = t.append_column("current_mA", pa.array([350.0, float("nan"), 700.5, None, 1e-7, -0.0, 2.0, 3.0][:n]))
    t = t.append_column("lot_ok", pa.array([True, False, None, True, True, False, True, True][:n]))
    p = tmp_path / "hostile.parquet"
    pq.write_table(t, p)
    return p


def _criteria(tmp_path):
    from lumeval.criteria.loader import load_criteria

    c = tmp_path / "c.toml"
    c.write_text('lumeval_criteria = 1\n\n[[clause]]\nid = "ra"\nfigure = "Ra"\nmin = 80\n\n'
                 '[[clause]]\nid = "duv"\nfigure = "duv"\nmin = -0.006\nmax = 0.006\n', encoding="utf-8")
    return load_criteria(c)


@pytest.mark.parametrize("with_criteria", [False, True])
def test_samples_csv_equals_the_csv_module(tmp_path, with_criteria):
    run = run_lot([_archive(tmp_path)], _criteria(tmp_path) if with_criteria else None)
    assert run.check is not None if with_criteria else run.check is None
    assert samples_csv(run) == _oracle(run)


def test_samples_csv_blocks_join_seamlessly(tmp_path, monkeypatch):
    """Rows formatted in blocks: a block size of 3 over 8 samples gives the same file."""
    run = run_lot([_archive(tmp_path)], _criteria(tmp_path))
    whole = samples_csv(run)
    monkeypatch.setattr(lot_report, "_CSV_ROWS", 3)
    assert samples_csv(run) == whole == _oracle(run)
    out = io.StringIO()
    assert samples_csv(run, out) is None and out.getvalue() == whole


@pytest.mark.skipif(not __import__("lumeval._workers", fromlist=["x"]).fork_available(),
                    reason="blocks are formatted by forked workers on Linux only")
def test_samples_csv_blocks_formatted_by_workers(tmp_path, monkeypatch):
    """Blocks formatted by two forked worker processes (three rows each, in order) give the
    same file as this process alone and as csv.writer; one process asks for no pool."""
    import lumeval._workers as workers

    run = run_lot([_archive(tmp_path)], _criteria(tmp_path))
    monkeypatch.setattr(lot_report, "_CSV_ROWS", 3)
    started = []
    real = workers.worker_pool
    monkeypatch.setattr(workers, "worker_pool", lambda n: started.append(n) or real(n))
    assert samples_csv(run, processes=1) == _oracle(run) and started == []
    out = io.StringIO()
    assert samples_csv(run, out, processes=2) is None
    assert started == [2] and out.getvalue() == _oracle(run)
    assert lot_report._FORKED_RUN is None  # not kept after the workers were forked


def test_samples_csv_reads_back_every_figure_exactly(tmp_path):
    run = run_lot([_archive(tmp_path)], _criteria(tmp_path))
    rows = [r for r in csv.reader(io.StringIO(samples_csv(run))) if r and not r[0].startswith("#")]
    head, body = rows[0], rows[1:]
    assert len(body) == len(run)
    assert [r[0] for r in body] == [csv_first_cell(n) for n in run.names]
    assert body[4][0] == "'#not a note" and body[3][0] == "'=SUM(A1:A9)" and body[6][0] == "'-0.5"
    for f in run.figures:
        col = head.index(f)
        got = np.array([float(r[col]) if r[col] else np.nan for r in body])
        np.testing.assert_array_equal(got, np.asarray(run.figures[f], dtype=float))  # repr round trip: exact
    assert all(r[head.index("illuminance_lx")] == "" for r in body)  # relative spectra: no illuminance, an empty cell
    assert body[0][head.index("station")] == "ST,1" and body[1][head.index("station")] == 'say "x"'


def _killed_block(run, i, j):
    import os
    import signal

    if os.getpid() != _PARENT[0]:
        os.kill(os.getpid(), signal.SIGKILL)
    return ""


_PARENT = [0]


@pytest.mark.skipif(not __import__("lumeval._workers", fromlist=["x"]).fork_available(),
                    reason="blocks are formatted by forked workers on Linux only")
def test_a_killed_csv_worker_stops_the_writing_with_a_clear_error(tmp_path, monkeypatch):
    import os

    from lumeval.errors import WorkerError

    run = run_lot([_archive(tmp_path)])
    _PARENT[0] = os.getpid()
    monkeypatch.setattr(lot_report, "_CSV_ROWS", 3)
    monkeypatch.setattr(lot_report, "_block_text", _killed_block)
    with pytest.raises(WorkerError):
        samples_csv(run, io.StringIO(), processes=2)
    assert lot_report._FORKED_RUN is None


@pytest.mark.parametrize("first", [False, True])
def test_text_cells_of_a_block_equal_each_cell_made_alone(first):
    """The per-sample CSV's name and source cells made a block at a time
    (lumeval.render.lot_report._text_cells) equal each cell made alone by the CSV-injection
    guard (safe.csv_first_cell / csv_text, then quoted as the csv module quotes): for plain
    blocks (returned as they are) and blocks with one text that needs escaping or quoting."""
    import csv
    import io

    from lumeval.render.lot_report import _quoted, _text_cells
    from lumeval.render.safe import csv_first_cell, csv_text

    cell = csv_first_cell if first else csv_text
    plain = ["L000001", "lamp 2 (warm)", "a.csv#L3", "x'y", "µ-LED 4"]
    odd = ["=1+1", "+x", "-0.5", "@a", "#note", "a,b", 'say "hi"', "tab\there", "line\nbreak", "nul\x00", "\u202eevil", ""]
    for extra in [None, *odd]:
        values = plain if extra is None else [*plain[:2], extra, *plain[2:]]
        got = _text_cells(values, first=first)
        assert got == [_quoted(cell(v)) for v in values], extra
        # and read back by the csv module as the guarded texts
        row = next(csv.reader(io.StringIO(",".join(got))))
        assert row == [cell(v) for v in values]
