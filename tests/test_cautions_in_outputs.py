"""The cautions (docs/cautions.md) travel inside every report, never on standard error.

- CSV (``--format csv``, ``-o FILE``, ``lot --samples-csv``): the last rows, one cell each,
  starting with ``# caution:``; the header stays the first row; a data row never starts with
  ``#`` (a name that does gets a leading quote).
- JSON: the ``cautions`` list; nothing on stderr.
- Parquet (``lot --samples-parquet``): the schema metadata key ``lumeval.cautions``.
- terminal: printed once at the end of the report.
Behaviour through the real CLI (in-process); no numeric check here.
"""

from __future__ import annotations

import csv
import io
import json
import shutil
from pathlib import Path

import pytest

from lumeval.render.tables import CAUTIONS, data_rows
from tests.conftest import run_cli_in_process as run

ROOT = Path(__file__).resolve().parents[1]
SPD = ROOT / "spectra_demo" / "downlights" / "candidate_A_aurora_3000K.csv"
CRITERIA = 'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 90\n'
CLAIMS = 'lumeval_claims = 1\n[claims]\nRa = ">= 90"\n'

COMMANDS = {
    "inspect": ["inspect", "{spd}"],
    "check": ["check", "{spd}", "-c", "{crit}"],
    "claims": ["claims", "{spd}", "--claims", "{claims}"],
    "lot": ["lot", "{spd}", "-q"],
}


@pytest.fixture
def work(tmp_path):
    spd = tmp_path / "lamp.csv"
    shutil.copyfile(SPD, spd)
    (tmp_path / "criteria.toml").write_text(CRITERIA, encoding="utf-8")
    (tmp_path / "claims.toml").write_text(CLAIMS, encoding="utf-8")
    return tmp_path, spd


def argv(tmp, spd, command, *extra):
    fill = {"spd": spd, "crit": tmp / "criteria.toml", "claims": tmp / "claims.toml"}
    return [a.format(**fill) for a in COMMANDS[command]] + list(extra)


def assert_csv_with_cautions(text: str, first_column: str) -> list[list[str]]:
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[0][0] == first_column  # the header is the first row
    notes = [r for r in rows if r and r[0].startswith("#")]
    assert notes == [[f"# caution: {c}"] for c in CAUTIONS]
    assert rows[-len(CAUTIONS):] == notes  # at the end, after every data row
    data = data_rows(text)
    assert data == rows[: len(rows) - len(CAUTIONS)]
    assert len(data) >= 2 and all(len(r) == len(rows[0]) for r in data)
    return data


@pytest.mark.parametrize("command,first", [("inspect", "name"), ("check", "spectrum"), ("claims", "spectrum"),
                                           ("lot", "name")])
def test_csv_carries_the_cautions_and_stderr_stays_empty(work, capsys, command, first):
    tmp, spd = work
    code, out, err = run(argv(tmp, spd, command, "-f", "csv"), capsys)
    assert code in (0, 1), err
    assert err == ""
    assert_csv_with_cautions(out, first)


@pytest.mark.parametrize("command", ["inspect", "check", "claims", "lot"])
def test_json_carries_the_cautions_and_stderr_stays_empty(work, capsys, command):
    tmp, spd = work
    code, out, err = run(argv(tmp, spd, command, "-f", "json"), capsys)
    assert code in (0, 1), err
    assert err == ""
    assert json.loads(out)["cautions"] == list(CAUTIONS)


@pytest.mark.parametrize("command", ["inspect", "check"])
def test_csv_written_to_a_file_carries_the_cautions(work, capsys, command):
    tmp, spd = work
    target = tmp / "out.csv"
    code, out, err = run(argv(tmp, spd, command, "-f", "csv", "-o", target, "-q"), capsys)
    assert code in (0, 1), err
    assert out == "" and err == ""
    assert_csv_with_cautions(target.read_text(encoding="utf-8"), "name" if command == "inspect" else "spectrum")


def test_lot_samples_csv_file_carries_the_cautions(work, capsys):
    tmp, spd = work
    target = tmp / "samples.csv"
    code, _, err = run(["lot", spd, "--samples-csv", target, "-q"], capsys)
    assert code == 0, err
    assert_csv_with_cautions(target.read_text(encoding="utf-8"), "name")


def test_lot_samples_parquet_carries_the_cautions(work, capsys):
    """A --samples-parquet table of verdicts carries the cautions in its schema metadata
    (``lumeval.cautions``, a JSON list), as every CSV form of the same table carries them as its
    last rows (it carried none; found by a review)."""
    import pyarrow.parquet as pq  # a test dependency (pyproject [test]): fail, never skip

    tmp, spd = work
    target = tmp / "samples.parquet"
    code, _, err = run(["lot", spd, "--samples-parquet", target, "-q"], capsys)
    assert code == 0, err
    meta = pq.read_schema(target).metadata
    assert json.loads(meta[b"lumeval.cautions"].decode("utf-8")) == list(CAUTIONS)
    assert meta[b"lumeval.report"] == b"lumeval.lot-samples"


def test_a_name_starting_with_hash_is_not_a_note_row(work, capsys):
    tmp, _ = work
    spd = tmp / "hash.csv"
    lines = SPD.read_text(encoding="utf-8").splitlines()
    spd.write_text("\n".join(["wavelength_nm,#5 lamp", *lines[1:]]) + "\n", encoding="utf-8")
    code, out, err = run(["inspect", spd, "-f", "csv"], capsys)
    assert code == 0, err
    data = assert_csv_with_cautions(out, "name")
    assert data[1][0] == "'#5 lamp"


def test_pandas_reads_the_table_and_the_note_rows_are_easy_to_drop(work, capsys):
    pd = pytest.importorskip("pandas")
    tmp, spd = work
    code, out, _ = run(argv(tmp, spd, "inspect", "-f", "csv"), capsys)
    df = pd.read_csv(io.StringIO(out))
    assert list(df.columns[:2]) == ["name", "source"]
    data = df[~df.iloc[:, 0].astype(str).str.startswith("#")]
    assert list(data["name"]) == ["candidate_A_aurora_3000K"]
    assert len(df) == 1 + len(CAUTIONS)


@pytest.mark.parametrize("command", ["inspect", "check", "claims", "lot"])
def test_terminal_report_prints_the_cautions_once(work, capsys, command):
    tmp, spd = work
    second = tmp / "lamp2.csv"
    shutil.copyfile(SPD, second)
    code, out, err = run(argv(tmp, spd, command) + [str(second)], capsys)
    assert code in (0, 1), err
    for c in CAUTIONS:
        # a wrapped terminal line may split a caution: compare without line breaks
        flat = " ".join(out.split())
        assert flat.count(" ".join(c.split()[:6])) == 1, c
    assert "IEC 62471" not in err
