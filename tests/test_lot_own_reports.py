"""A lot's outputs written into the folder being judged do not break the next run over it.

Before: the second run of ``lumeval lot FOLDER --json FOLDER/lot.json`` refused to start
("'lot.json' is one of the input files"), and any run over a folder holding an earlier lot's
JSON or per-sample CSV listed them as unreadable inputs (exit 2: the lot could not pass).
Now lumeval's own reports found in a folder are listed as skipped (lumeval.lots.own_reports);
one named explicitly as an input is still an error, saying what it is; a JSON or CSV file that
is not lumeval's stays unreadable. Behaviour checks only (exit codes, lists, the samples read):
the figures are the same code path as any lot.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pyarrow.parquet as pq
import pytest

from lumeval.lots.own_reports import report_kind

from .conftest import run_cli_in_process

REPO = Path(__file__).resolve().parents[1]
DOWNLIGHTS = sorted((REPO / "spectra_demo" / "downlights").glob("*.csv"))


@pytest.fixture
def run(capsys):
    return lambda *argv: run_cli_in_process(list(argv), capsys)


def _folder(tmp_path: Path) -> Path:
    d = tmp_path / "week48"
    d.mkdir()
    for f in DOWNLIGHTS:
        shutil.copy(f, d / f.name)
    return d


def _doc(path: Path) -> dict:
    return json.loads(path.read_text(encoding="utf-8"))


def test_rerun_with_outputs_inside_the_folder(tmp_path, run):
    d = _folder(tmp_path)
    args = ["lot", d, "-q", "--json", d / "lot.json", "--samples-csv", d / "samples.csv"]
    code, _, err = run(*args)
    assert code == 0, err
    first = _doc(d / "lot.json")
    code, _, err = run(*args)  # the same outputs, now inside the folder read
    assert code == 0, err
    second = _doc(d / "lot.json")
    assert len(second["samples"]) == len(first["samples"]) == len(DOWNLIGHTS)
    assert second["unreadable"] == [] and second["counts"]["files"] == len(DOWNLIGHTS)  # the reports not counted
    skipped = {s["path"]: s["reason"] for s in second["skipped"]}
    assert skipped == {str(d / "lot.json"): "a lumeval JSON document (lumeval.lot), not a spectrum file",
                       str(d / "samples.csv"): "a lumeval CSV report, not a spectrum file"}


def test_an_earlier_lots_reports_in_the_folder_are_skipped(tmp_path, run):
    d = _folder(tmp_path)
    code, _, err = run("lot", *DOWNLIGHTS, "-q", "--json", d / "w47.json", "--samples-csv", d / "w47.csv",
                       "--samples-parquet", d / "w47.parquet")
    assert code == 0, err
    code, _, err = run("lot", d, "-q", "--json", tmp_path / "w48.json")
    assert code == 0, err
    doc = _doc(tmp_path / "w48.json")
    assert len(doc["samples"]) == len(DOWNLIGHTS) and doc["unreadable"] == []
    assert sorted(Path(s["path"]).name for s in doc["skipped"]) == ["w47.csv", "w47.json", "w47.parquet"]
    assert report_kind(d / "w47.parquet") == "Parquet table (lumeval.lot-samples)"
    assert pq.read_schema(d / "w47.parquet").metadata[b"lumeval.report"] == b"lumeval.lot-samples"


def test_a_report_named_as_an_input_is_an_error_that_says_what_it_is(tmp_path, run):
    d = _folder(tmp_path)
    code, _, err = run("lot", d, "-q", "--json", tmp_path / "lot.json")
    assert code == 0, err
    code, _, err = run("lot", tmp_path / "lot.json", *DOWNLIGHTS, "-q")
    assert code == 2
    assert "lot.json: a lumeval JSON document (lumeval.lot), not a spectrum file" in err
    assert "Traceback" not in err


def test_other_json_and_csv_files_stay_unreadable(tmp_path, run):
    d = _folder(tmp_path)
    (d / "notes.json").write_text('{"format": "other", "a": 1}', encoding="utf-8")
    (d / "log.csv").write_text("when,what\n2026-12-01,calibrated\n", encoding="utf-8")
    # a lumeval-looking name is not enough: the cautions must close the file exactly
    (d / "edited.csv").write_text("name,verdict\na,pass\n# caution: edited by hand\n", encoding="utf-8")
    code, _, err = run("lot", d, "-q", "--json", tmp_path / "lot.json")
    assert code == 2, err
    doc = _doc(tmp_path / "lot.json")
    assert sorted(Path(u["source"]).name for u in doc["unreadable"]) == ["edited.csv", "log.csv", "notes.json"]
    assert doc["skipped"] == []


def test_a_spectra_document_is_not_taken_for_a_report(tmp_path, run):
    out = tmp_path / "s.json"
    code, _, err = run("convert", DOWNLIGHTS[0], out)
    assert code == 0, err
    assert _doc(out)["format"] == "lumeval.spectra" and report_kind(out) is None
    assert report_kind(DOWNLIGHTS[0]) is None


def _lot_into(stdout_path: Path, *args) -> subprocess.CompletedProcess:
    """``lumeval lot ARGS > stdout_path``, as a shell runs it (the file created before the run)."""
    env = {**os.environ, "PYTHONPATH": str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", "")}
    with open(stdout_path, "w", encoding="utf-8") as out:
        return subprocess.run([sys.executable, "-m", "lumeval", "lot", *map(str, args)], stdout=out,
                              stderr=subprocess.PIPE, text=True, env=env, timeout=300)


def test_a_report_redirected_into_the_judged_folder_is_not_read(tmp_path):
    """`lumeval lot week48 -f json > week48/lot.json`: the shell creates the (empty) file before
    lumeval starts; it was read as an input ('not valid JSON', exit 2) and the report recorded
    that failure. Now it is skipped as this run's standard output; named as an input, it is an
    error that says why."""
    d = _folder(tmp_path)
    r = _lot_into(d / "lot.json", d, "-q", "-f", "json")
    assert r.returncode == 0, r.stderr
    doc = _doc(d / "lot.json")
    assert doc["unreadable"] == [] and len(doc["samples"]) == len(DOWNLIGHTS)
    assert doc["skipped"] == [{"path": str(d / "lot.json"), "reason": "this run's standard output (lumeval is writing into it)"}]
    r = _lot_into(tmp_path / "x.csv", tmp_path / "x.csv", "-q")
    assert r.returncode == 2
    assert "x.csv: is this run's standard output: the shell created or emptied it before lumeval started" in r.stderr
    assert "Traceback" not in r.stderr


def test_a_lot_with_an_unread_input_is_never_reported_as_a_pass(tmp_path, run):
    """Found while checking the skipped list in the HTML report: with an input that could not be
    read and every sample read passing, the exit code was 2 ("not fully judged") but the HTML
    report's verdict said "✓ PASS — Every criterion is met" and listed neither the unread nor
    the skipped inputs, and the terminal said "Lot verdict: PASS." first. Now the HTML opens
    its verdict with the unread inputs (a "not judged" verdict), lists the skipped entries with
    the provenance, and the terminal verdict is NOT PASSED."""
    import re

    import html5lib  # a test dependency: fail, never skip

    d = _folder(tmp_path)
    (d / "notes.json").write_text('{"a": 1}', encoding="utf-8")
    crit = tmp_path / "c.toml"
    crit.write_text('lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 70\n', encoding="utf-8")
    code, _, err = run("lot", d, "-q", "--criteria", crit, "--json", d / "lot.json")  # every sample passes Ra >= 70
    assert code == 2, err
    code, out, err = run("lot", d, "-q", "--criteria", crit, "--html", tmp_path / "r.html")
    assert code == 2, err
    assert "Lot verdict: NOT PASSED: 1 input(s) could not be read" in " ".join(out.split())
    assert "Lot verdict: PASS" not in out
    html = (tmp_path / "r.html").read_text(encoding="utf-8")
    html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(html)
    verdict = re.search(r'<section id="verdict">(.*?)</section>', html, re.S).group(1)
    text = " ".join(re.sub(r"<[^>]+>", " ", verdict).split())
    assert "1 input(s) could not be read, so the lot is not fully judged and cannot pass" in text
    assert "notes.json" in text
    # both summary boxes (the unread inputs, the verdict) say "not judged"; none says pass
    assert re.findall(r'<div class="summary ([^"]+)"', verdict) == ["not-judged", "not-judged"]
    assert "No criterion fails for the inputs that were read" in text
    provenance = re.search(r'<section id="provenance">(.*?)</section>', html, re.S).group(1)
    assert "Entries left out" in provenance and "lot.json" in provenance
    assert "a lumeval JSON document (lumeval.lot), not a spectrum file" in provenance


def test_no_sample_read_says_the_report_was_not_drawn(tmp_path, run):
    """Every input unreadable: `--html` and `--plots` were silently not written (with --quiet
    nothing at all said so). Now one note says so; the JSON is still written."""
    d = tmp_path / "lot"
    d.mkdir()
    (d / "a.json").write_text('{"a": 1}', encoding="utf-8")
    (d / "b.csv").write_text("x\n", encoding="utf-8")
    code, _, err = run("lot", d, "-q", "--html", tmp_path / "r.html", "--plots", tmp_path / "P", "--json",
                       tmp_path / "lot.json")
    assert code == 2 and "Traceback" not in err
    assert "lumeval: note: no sample could be read, so nothing was drawn: --html and --plots not written" in err
    assert not (tmp_path / "r.html").exists() and not (tmp_path / "P").exists()
    assert len(_doc(tmp_path / "lot.json")["unreadable"]) == 2


def test_an_archive_folder_holding_a_lots_per_sample_table_is_read_without_it(tmp_path, run):
    """``lumeval lot ARCHIVE --samples-parquet ARCHIVE/samples.parquet`` writes the per-sample
    table (figures, marked as lumeval's report in its schema) into the archive's folder. The lot
    sets it aside on the next run; ``inspect``, ``check`` and ``convert`` of the folder failed on
    it ("no column is named by a wavelength", exit 2). Now they read the archive's spectra
    without it and say so once (a note on the first spectrum); a folder holding nothing but such
    tables is refused with a message saying what they are."""
    from lumeval.spectra.archive import read_archive

    arch = tmp_path / "archive"
    arch.mkdir()
    code, _, err = run("convert", DOWNLIGHTS[0], arch / "a.parquet")
    assert code == 0, err
    code, _, err = run("convert", DOWNLIGHTS[1], arch / "b.parquet")
    assert code == 0, err
    before = read_archive(arch)
    code, _, err = run("lot", arch, "-q", "--samples-parquet", arch / "samples.parquet")
    assert code == 0, err
    assert report_kind(arch / "samples.parquet") == "Parquet table (lumeval.lot-samples)"

    after = read_archive(arch)
    assert after.names == before.names and (after.values == before.values).all()
    note = (f"left out of the archive folder: {arch / 'samples.parquet'} is a lumeval Parquet table "
            "(lumeval.lot-samples) of figures, not spectra")
    assert after.notes[0] == (*before.notes[0], note) and after.notes[1:] == before.notes[1:]
    code, out, err = run("inspect", arch)
    assert code == 0, err
    assert "left out of the archive folder" in " ".join(out.split())
    crit = tmp_path / "c.toml"
    crit.write_text('lumeval_criteria = 1\n\n[[clause]]\nid = "ra"\nfigure = "Ra"\nmin = 0\n', encoding="utf-8")
    code, _, err = run("check", arch, "-c", crit)
    assert code == 0, err
    code, _, err = run("convert", arch, tmp_path / "out.parquet")
    assert code == 0, err
    assert pq.read_table(tmp_path / "out.parquet").num_rows == len(before)

    only = tmp_path / "only"
    only.mkdir()
    shutil.copy(arch / "samples.parquet", only / "samples.parquet")
    code, _, err = run("inspect", only)
    assert code == 2 and "Traceback" not in err
    assert "holds no spectra" in err and "samples.parquet is a lumeval Parquet table (lumeval.lot-samples)" in err
    # named as the archive itself, the table is read as given, and refused as before
    code, _, err = run("inspect", only / "samples.parquet")
    assert code == 2 and "no column is named by a wavelength" in err


def test_a_grid_mismatch_names_the_archive_file_read_first_not_a_left_out_table(tmp_path, run):
    """The files of an archive folder must share one wavelength grid; the message names the
    file whose grid was taken, never a lot's per-sample table that was left out (it named the
    folder's first file by name, whatever it was)."""
    import pyarrow as pa

    arch = tmp_path / "archive"
    arch.mkdir()
    code, _, err = run("convert", DOWNLIGHTS[0], arch / "b.parquet")
    assert code == 0, err
    code, _, err = run("lot", arch / "b.parquet", "-q", "--samples-parquet", arch / "a_lot.parquet")
    assert code == 0, err
    wl = range(380, 781, 10)  # another grid
    pq.write_table(pa.table({"name": ["c1"], **{str(w): [1.0] for w in wl}}), arch / "c.parquet")
    code, _, err = run("inspect", arch)
    assert code == 2 and "Traceback" not in err
    assert f"{arch / 'c.parquet'}: its wavelength columns differ from those of {arch / 'b.parquet'}" in err
    assert "a_lot.parquet" not in err
