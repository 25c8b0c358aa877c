"""Lot statistics leave out the values computed outside the validity range, and count them.

A lot of eight spectra near the Planckian locus and one more than 0.05 in Duv from it: the far
one's CRI and TM-30 figures are computed against the reference at the nearest Planckian
temperature and flagged (CIE 15:2004 §9.5: CCT is not meaningful beyond |Duv| = 0.05; CIE 13.3 and
CIE 224 define their indices against a reference at the source's CCT). The lot statistics of
those figures must be the statistics of the eight alone, in every lot path (in memory, streamed in
tiny batches, in worker processes, on a Dask cluster) and in the history store; its chromaticity,
Duv and LER still count.

Outside references, named beside each check:
* the spectra come from physics: Planck's law with the CODATA constants of scipy.constants, plus
  a narrow Gaussian green band; that the far spectrum lies beyond |Duv| = 0.05 and the others
  within it is checked with colour-science's CIE 1931 CMFs and its Ohno (2013) CCT/Duv (an
  independent library), not with lumeval's own Duv alone;
* the expected statistics are numpy's mean, std (ddof = 1) and percentile ("linear": Hyndman &
  Fan 1996, definition 7), and scipy.stats' median_abs_deviation, over the per-sample values of
  the near spectra, selected in the test;
* the JSON document is checked with the jsonschema library against lumeval/schemas/lot.schema.json.

Tolerance: 1e-12 relative for the statistics, 1e-9 absolute for the robust z (values near 0):
the same eight numbers summed in another order differ by rounding only (a few 1e-16 relative).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants, stats

from lumeval.engine import VALIDITY_FIGURES, evaluate
from lumeval.lots import statistics as lot
from lumeval.spectra.model import SpectrumSet

WL = np.arange(380.0, 781.0, 5.0)
RTOL = 1e-12
#: (temperature K, amplitude of the green band relative to the radiator's peak): near the locus
NEAR = ((2900.0, 0.0), (2950.0, 0.1), (3000.0, 0.2), (3050.0, 0.3), (3100.0, 0.4), (3000.0, 0.05),
        (2980.0, 0.15), (3020.0, 0.25))
#: a green band three times the radiator's peak: about 0.08 above the locus
FAR = (3000.0, 3.0)
FAR_INDEX = 4  # in the middle of the lot: batches and partitions before and after it
#: Figures whose lot statistics are checked against numpy (every one in VALIDITY_FIGURES).
CHECKED = ("Ra", "R9", "Rf", "Rg", "Rf_h1", "dc")


def planck(T: float) -> np.ndarray:
    """Spectral radiance of a black body (Planck's law), W sr⁻¹ m⁻³, on ``WL`` (nm), with the
    CODATA 2018 constants of scipy.constants."""
    lam = WL * 1e-9
    h, c, k = constants.h, constants.c, constants.k
    return 2.0 * h * c**2 / lam**5 / np.expm1(h * c / (lam * k * T))


def source(T: float, green: float) -> np.ndarray:
    """A black body at ``T`` normalised to its peak, plus a Gaussian band at 530 nm (σ = 10 nm)
    of height ``green``: the band pulls the chromaticity above the Planckian locus."""
    p = planck(T)
    return p / p.max() + green * np.exp(-0.5 * ((WL - 530.0) / 10.0) ** 2)


def lot_spectra() -> tuple[np.ndarray, tuple[str, ...]]:
    rows = [source(*tn) for tn in NEAR]
    names = [f"near{k}" for k in range(len(NEAR))]
    rows.insert(FAR_INDEX, source(*FAR))
    names.insert(FAR_INDEX, "far")
    return np.vstack(rows), tuple(names)


@pytest.fixture(scope="module")
def ev():
    S, names = lot_spectra()
    return evaluate(SpectrumSet(WL, S, names, names))


@pytest.fixture(scope="module")
def lot_dir(tmp_path_factory):
    """The lot as one CSV file per spectrum (the far one in the middle of the input order)."""
    d = tmp_path_factory.mktemp("validity_lot")
    S, names = lot_spectra()
    for k, (row, name) in enumerate(zip(S, names)):
        with open(d / f"{k:02d}_{name}.csv", "w", encoding="utf-8") as f:
            f.write("wavelength_nm,value\n")
            f.writelines(f"{w:g},{float(v)!r}\n" for w, v in zip(WL, row))
    return d


def near_mask(n: int = len(NEAR) + 1) -> np.ndarray:
    m = np.ones(n, dtype=bool)
    m[FAR_INDEX] = False
    return m


def assert_statistics_of(summary, values, name=""):
    """``summary`` (a FigureSummary) against numpy over ``values`` (the values it must use)."""
    v = np.asarray(values, dtype=float)
    assert summary.count == v.size, name
    assert_allclose([summary.mean, summary.std, summary.min, summary.max],
                    [np.mean(v), np.std(v, ddof=1), np.min(v), np.max(v)], rtol=RTOL, err_msg=name)
    assert_allclose([summary.median, summary.p05, summary.p95],
                    np.percentile(v, [50.0, 5.0, 95.0], method="linear"), rtol=RTOL, err_msg=name)


def assert_far_left_out(st, figures):
    """The lot statistics ``st`` of the mixed lot: every reference-based figure summarised over
    the near spectra alone, the far one counted; the other figures over all nine."""
    near = near_mask()
    for name in CHECKED:
        vals = np.asarray(figures[name], dtype=float)
        assert math.isfinite(vals[FAR_INDEX]), name  # computed (and flagged), not undefined
        s = st.summary(name)
        assert (s.outside_validity, s.undefined) == (1, 0), name
        assert_statistics_of(s, vals[near], name)
    for name in ("duv", "x", "y", "u_prime", "v_prime", "ler_lm_per_W"):
        s = st.summary(name)
        assert (s.outside_validity, s.undefined) == (0, 0), name
        assert_statistics_of(s, np.asarray(figures[name], dtype=float), name)  # the far one included
    cct = st.summary("cct_K")
    assert (cct.count, cct.undefined, cct.outside_validity) == (8, 1, 0)  # undefined, as before
    for s in st.figures:
        assert s.count + s.undefined + s.outside_validity == 9, s.name
        far_defined = math.isfinite(float(np.asarray(figures[s.name], dtype=float)[FAR_INDEX]))
        assert s.outside_validity == (1 if s.name in VALIDITY_FIGURES and far_defined else 0), s.name
    assert any("1 sample lies more than 0.05 in Duv" in n for n in st.notes)


# --------------------------------------------------------------------------- the spectra


def test_the_far_spectrum_lies_beyond_duv_0_05_by_an_independent_library(colour, ev):
    """colour-science (CIE 1931 2° CMFs, Ohno 2013) puts the far spectrum beyond |Duv| = 0.05
    and the near ones within it; lumeval flags exactly the far one."""
    S, _ = lot_spectra()
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(colour.SpectralShape(380, 780, 5))
    XYZ = S @ np.asarray(cmfs.values)
    uv = colour.xy_to_UCS_uv(colour.XYZ_to_xy(XYZ))
    duv = np.array([colour.uv_to_CCT(p, method="Ohno 2013")[1] for p in uv])
    assert abs(duv[FAR_INDEX]) > 0.06 and np.all(np.abs(duv[near_mask()]) < 0.03)
    assert_allclose(ev.duv, duv, atol=5e-4)  # the same chromaticities (lumeval integrates otherwise)
    assert ev.outside_validity.tolist() == (~near_mask()).tolist()


# --------------------------------------------------------------------------- the pieces


def test_describe_leaves_flagged_values_out_and_counts_them():
    rng = np.random.default_rng(7)
    a = rng.normal(90.0, 2.0, size=(41, 3))
    flag = np.zeros(41, dtype=bool)
    flag[[0, 17, 40]] = True
    a[[5, 17], 1] = np.nan  # one flagged sample undefined in column 1: undefined, not outside
    d = lot.describe(a, outside_validity=flag)
    for j in range(3):
        keep = np.isfinite(a[:, j]) & ~flag
        v = a[keep, j]
        assert d["count"][j] == v.size
        assert d["outside_validity"][j] == int((np.isfinite(a[:, j]) & flag).sum())
        assert d["undefined"][j] == int((~np.isfinite(a[:, j])).sum())
        assert_allclose([d["mean"][j], d["std"][j], d["median"][j], d["p05"][j], d["p95"][j]],
                        [np.mean(v), np.std(v, ddof=1), *np.percentile(v, [50.0, 5.0, 95.0], method="linear")],
                        rtol=RTOL)
    assert d["outside_validity"].tolist() == [3, 2, 3] and d["undefined"].tolist() == [0, 2, 0]
    # nothing flagged: the same numbers as without a flag
    plain = lot.describe(a)
    same = lot.describe(a, outside_validity=np.zeros(41, dtype=bool))
    for k in plain:
        assert_allclose(same[k], plain[k], rtol=0, equal_nan=True)


def test_outlier_screen_leaves_the_far_sample_out_of_ra_but_screens_its_chromaticity(ev):
    """Iglewicz & Hoaglin's modified z over the near values only (median and MAD by scipy.stats);
    the far sample has no z for Ra, R9, Rf, Rg and is flagged on Duv and v′."""
    st = lot.lot_from_evaluation(ev)
    near = near_mask()
    for name in ("Ra", "R9", "Rf", "Rg"):
        z = st.robust_z[name]
        assert np.isnan(z[FAR_INDEX]), name
        v = ev.figure(name)[near]
        mad = stats.median_abs_deviation(v, scale=1.0)
        assert_allclose(z[near], 0.6745 * (v - np.median(v)) / mad, rtol=1e-9, atol=1e-9, err_msg=name)
    assert st.outlier[FAR_INDEX]
    why = " ".join(st.outlier_reasons[FAR_INDEX])
    assert "Duv" in why and "v′" in why
    assert not any(f"{k} =" in why for k in ("Ra", "R9", "Rf", "Rg"))


# --------------------------------------------------------------------------- the lot paths


def test_in_memory_lot_statistics_are_those_of_the_near_spectra(ev):
    st = lot.lot_from_evaluation(ev)
    assert_far_left_out(st, {k: ev.figure(k) for k in lot.default_figure_names()})
    assert st.outside_validity.tolist() == (~near_mask()).tolist()


def test_without_the_flag_nothing_is_left_out(ev):
    """lot_statistics of the bare figures (no flag given) summarises every value, as documented."""
    st = lot.lot_statistics({"Ra": ev.figure("Ra")}, np.column_stack([ev.x, ev.y]))
    assert (st.summary("Ra").count, st.summary("Ra").outside_validity) == (9, 0)


@pytest.mark.parametrize("processes", [1, 2])
def test_streamed_lot_in_tiny_batches(lot_dir, processes):
    """run_lot streams batches of two spectra through LotAccumulator (in this process, or in two
    forked worker processes whose results are pickled back)."""
    from lumeval.commands.lot import run_lot
    from lumeval.lots.reading import fork_available

    if processes > 1 and not fork_available():
        pytest.skip("worker processes are forked on Linux only")
    run = run_lot([lot_dir], batch_spectra=2, read_processes=1, evaluate_processes=processes)
    assert run.names[FAR_INDEX].endswith("far") and len(run) == 9
    assert_far_left_out(run.stats, run.figures)
    # the per-sample outputs keep the far sample's values and warnings
    assert math.isfinite(run.figures["Ra"][FAR_INDEX])
    assert any("OUTSIDE THE VALIDITY RANGE" in w for w in run.warnings[FAR_INDEX])


def test_accumulator_fed_one_sample_at_a_time(ev):
    """LotAccumulator joining nine one-sample batches (evaluate_batch on each)."""
    from lumeval.lots.streaming import LotAccumulator, evaluate_batch

    S, names = lot_spectra()
    acc = LotAccumulator(2)  # a capacity hint smaller than the lot: the buffers grow
    for i in range(len(names)):
        acc.add(evaluate_batch(SpectrumSet(WL, S[i: i + 1], names[i: i + 1], names[i: i + 1]), offset=i))
    run = acc.finish()
    assert_far_left_out(run.stats, run.figures)


def test_dask_partitions(tmp_path, monkeypatch):
    """A Parquet archive in partitions of two rows on a local Dask cluster (127.0.0.1): the flag
    travels with each partition's samples."""
    pytest.importorskip("distributed")
    pq = pytest.importorskip("pyarrow.parquet")
    from lumeval.commands.lot import run_lot
    from lumeval.spectra import archive

    S, names = lot_spectra()
    p = tmp_path / "lot.parquet"
    pq.write_table(archive.archive_table(SpectrumSet(WL, S, names, names)), p, row_group_size=1)
    monkeypatch.setattr(archive, "PARTITION_ROWS", 2)
    run = run_lot([p], batch_spectra=2, workers=2)
    assert list(run.names) == list(names)
    assert_far_left_out(run.stats, run.figures)


# --------------------------------------------------------------------------- outputs


def test_json_carries_the_counts_and_validates(lot_dir):
    import jsonschema

    from lumeval import schemas
    from lumeval.commands.lot import run_lot
    from lumeval.render.lot_report import lot_document

    run = run_lot([lot_dir])
    doc = json.loads(json.dumps(lot_document(run), allow_nan=False))
    errors = list(jsonschema.Draft202012Validator(schemas.schema("lot")).iter_errors(doc))
    assert not errors, [e.message for e in errors]
    assert doc["counts"]["outside_validity"] == 1
    figs = doc["statistics"]["figures"]
    assert (figs["Ra"]["count"], figs["Ra"]["undefined"], figs["Ra"]["outside_validity"]) == (8, 0, 1)
    assert (figs["duv"]["count"], figs["duv"]["outside_validity"]) == (9, 0)
    near = near_mask()
    assert_allclose(figs["Ra"]["mean"], np.mean(np.asarray(run.figures["Ra"])[near]), rtol=RTOL)
    # the per-sample records keep the far sample's computed value and its warning
    far = doc["samples"][FAR_INDEX]
    assert far["name"].endswith("far") and far["Ra"] == pytest.approx(float(run.figures["Ra"][FAR_INDEX]), rel=0)
    assert any("OUTSIDE THE VALIDITY RANGE" in w for w in far["warnings"])
    # a schema without the new count refuses the document: the count is required
    bad = json.loads(json.dumps(doc))
    del bad["statistics"]["figures"]["Ra"]["outside_validity"]
    assert list(jsonschema.Draft202012Validator(schemas.schema("lot")).iter_errors(bad))


def test_terminal_summary_shows_the_count_and_says_why(lot_dir, capsys, monkeypatch):
    from .conftest import run_cli_in_process

    monkeypatch.setenv("COLUMNS", "160")  # one table, not split to the width
    code, out, err = run_cli_in_process(["lot", str(lot_dir), "--quiet"], capsys)
    assert code == 0, err
    lines = out.splitlines()
    at = next(i for i, line in enumerate(lines) if line.split()[:2] == ["figure", "mean"])
    assert lines[at].split()[-2:] == ["not", "valid"] and "n/a" in lines[at].split()
    table = lines[at + 2: next(i for i in range(at + 2, len(lines)) if not lines[i].strip())]
    row = {line.split()[0]: line.split() for line in table}
    assert row["Ra"][-2:] == ["0", "1"] and row["Rf"][-2:] == ["0", "1"] and row["Duv"][-2:] == ["0", "0"]
    text = " ".join(out.split())
    assert "1 sample lies more than 0.05 in Duv from the Planckian locus" in text
    assert "left out of those figures' statistics" in text and "CIE 15:2004 §9.5" in text


def test_terminal_summary_without_far_samples_has_no_column(tmp_path, capsys, monkeypatch):
    from .conftest import run_cli_in_process

    for k, tn in enumerate(NEAR[:3]):
        (tmp_path / f"n{k}.csv").write_text("wavelength_nm,value\n" + "".join(
            f"{w:g},{float(v)!r}\n" for w, v in zip(WL, source(*tn))), encoding="utf-8")
    monkeypatch.setenv("COLUMNS", "160")
    code, out, err = run_cli_in_process(["lot", str(tmp_path), "--quiet"], capsys)
    assert code == 0, err
    assert "not valid" not in out and "more than 0.05 in Duv" not in out


# --------------------------------------------------------------------------- the history store


def test_store_summaries_leave_the_far_values_out(lot_dir, store_url):
    """The lot recorded (SQLite and PostgreSQL): lot_figures, what trends read, holds the near
    spectra's n, mean, std, min, max for Ra and Rf, all nine for Duv; the recorded statistics
    carry the count; the sample keeps its value."""
    from lumeval.commands.lot import run_lot
    from lumeval.store.db import connect, parse_store_url
    from lumeval.store.record import lot_record, record_lot

    run = run_lot([lot_dir])
    assert record_lot(store_url, lot_record(run)).created
    su = parse_store_url(store_url)
    with connect(su, write=False, action="read") as conn:
        rows = {r[0]: r[1:] for r in conn.exec_driver_sql(
            "SELECT figure, n, mean, std, min, max FROM lot_figures WHERE figure IN ('Ra', 'Rf', 'duv')")}
        doc = json.loads(conn.exec_driver_sql("SELECT statistics FROM lots").scalar())
        far = json.loads(conn.exec_driver_sql(f"SELECT figures FROM samples WHERE idx = {FAR_INDEX}").scalar())
    near = near_mask()
    for name, sel in (("Ra", near), ("Rf", near), ("duv", np.ones(9, dtype=bool))):
        v = np.asarray(run.figures[name], dtype=float)[sel]
        n, mean, std, mn, mx = rows[name]
        assert n == v.size, name
        assert_allclose([mean, std, mn, mx], [np.mean(v), np.std(v, ddof=1), v.min(), v.max()], rtol=RTOL, err_msg=name)
    assert doc["statistics"]["figures"]["Ra"]["outside_validity"] == 1 and doc["counts"]["outside_validity"] == 1
    assert far["Ra"] == pytest.approx(float(run.figures["Ra"][FAR_INDEX]), rel=1e-15)


def test_figure_summaries_of_a_record_built_from_numbers():
    """figure_summaries alone: the flag leaves a reference-based figure's value out (and only
    that figure's); numpy over the values kept."""
    from lumeval.store.record import figure_summaries

    ra = np.array([91.0, 92.5, 55.0, 90.0])
    duv = np.array([0.001, -0.002, 0.08, 0.0])
    flag = np.array([False, False, True, False])
    out = {d["figure"]: d for d in figure_summaries({"Ra": ra, "duv": duv}, flag)}
    keep = ra[~flag]
    assert out["Ra"]["n"] == 3 and out["duv"]["n"] == 4
    assert_allclose([out["Ra"]["mean"], out["Ra"]["std"], out["Ra"]["min"]], [keep.mean(), keep.std(ddof=1), 90.0],
                    rtol=RTOL)
    assert_allclose(out["duv"]["mean"], duv.mean(), rtol=RTOL)


def test_html_statistics_table_has_the_count_column(lot_dir, tmp_path, capsys):
    """The HTML lot report's statistics table carries the count beside 'undefined' (as the
    terminal summary does), only when some value was left out."""
    from lumeval.render.report_view import lot_view

    from .conftest import run_cli_in_process

    S, names = lot_spectra()
    view = lot_view(lot.lot_from_evaluation(evaluate(SpectrumSet(WL, S, names, names))))
    heads = list(view.table.headings)
    assert heads[heads.index("undefined") + 1] == "not valid"
    cells = {r.cells[0].text: r.cells[heads.index("not valid")].text for r in view.table.rows}
    assert cells["Ra"] == "1" and cells["Rf"] == "1" and cells["Duv"] == "0"
    near = evaluate(SpectrumSet(WL, S[near_mask()], names[:FAR_INDEX] + names[FAR_INDEX + 1:], names[:8]))
    assert "not valid" not in lot_view(lot.lot_from_evaluation(near)).table.headings
    html = tmp_path / "lot.html"
    code, _, err = run_cli_in_process(["lot", str(lot_dir), "--quiet", "--html", str(html)], capsys)
    assert code == 0, err
    assert "<th" in (text := html.read_text(encoding="utf-8")) and ">not valid<" in text


def test_yield_says_how_many_failing_samples_are_not_valid(lot_dir, tmp_path, capsys, monkeypatch):
    """A per-sample Ra clause: the far sample (|Duv| > 0.05, shown beyond 0.05 by an independent
    library above) is judged not valid, which the yield counts as failing (docs/criteria.md); the
    terminal yield line, the JSON yield and the HTML report say how many of the failing samples
    are not valid."""
    import jsonschema

    from lumeval import schemas

    from .conftest import run_cli_in_process

    crit = tmp_path / "c.toml"
    crit.write_text('lumeval_criteria = 1\n[[clause]]\nfigure = "Ra"\nmin = 1\n', encoding="utf-8")
    out, html = tmp_path / "lot.json", tmp_path / "lot.html"
    monkeypatch.setenv("COLUMNS", "200")
    code, text, err = run_cli_in_process(["lot", str(lot_dir), "--criteria", str(crit), "--json", str(out),
                                          "--html", str(html), "--quiet"], capsys)
    assert code == 1, text + err
    assert ("Yield: 8 of 9 samples pass every per-sample requirement (88.9 %); 1 fail (of which 1 not valid: a judged "
            "figure computed outside its validity range), 0 not judged, 0 indeterminate.") in " ".join(text.split())
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert not list(jsonschema.Draft202012Validator(schemas.schema("lot")).iter_errors(doc))
    y = doc["verdict"]["yield"]
    assert (y["total"], y["passed"], y["failed"], y["not_valid"]) == (9, 8, 1, 1)
    assert "1 failed (of which 1 not valid" in html.read_text(encoding="utf-8")
