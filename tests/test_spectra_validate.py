"""Validation-only mode: what the readers did, without computing any figure."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from lumeval.cli import main
from lumeval.spectra.read import read_many
from lumeval.spectra.validate import validate_files, validate_report

CORPUS = Path(__file__).parent / "data" / "input_corpus"


def test_validate_report_lists_what_was_done():
    (c,) = validate_report(CORPUS / "short_400_700.csv")
    assert c.ok and c.range_nm == (400.0, 700.0) and c.grid_nm == (380.0, 780.0, 5.0)
    assert any(n.startswith("EXTRAPOLATED") for n in c.notes)
    (c,) = validate_report(CORPUS / "nan_cell.csv")
    assert not c.ok and c.error.startswith(str(CORPUS / "nan_cell.csv") + ":14:")
    (c,) = validate_report(CORPUS / "too_short_red.csv")
    assert not c.ok and "end at 650 nm" in c.error and c.points == 55


def test_one_bad_file_never_stops_the_others():
    files = [CORPUS / "nan_cell.csv", CORPUS / "wide_named.csv", CORPUS / "tm27_xxe.xml", CORPUS / "irregular.csv"]
    checks = validate_files(files)
    assert [c.ok for c in checks] == [False, True, True, True, False, True]
    sets, errors = read_many(files)
    assert [s is None for s in sets] == [True, False, True, False]
    assert [e[0] for e in errors] == [str(files[0]), str(files[2])]
    sets, errors = read_many([CORPUS / "all_zero.csv", CORPUS / "two_col_header.csv"], prepared=True)
    assert sets[0] is None and sets[1] is not None and len(errors) == 1


def _run(argv, capsys):
    with pytest.raises(SystemExit) as info:
        main(argv)
        raise SystemExit(0)
    out = capsys.readouterr()
    return info.value.code or 0, out.out, out.err


def test_inspect_validate_only_cli(capsys):
    code, out, err = _run(["inspect", "--validate-only", "-f", "json", str(CORPUS / "spacing_2nm.csv")], capsys)
    assert code == 0, err
    doc = json.loads(out)
    (entry,) = doc["validation"]
    assert entry["ok"] and entry["grid_nm"] == [380.0, 780.0, 1.0]
    assert any("Sprague" in n for n in entry["notes"])
    code, out, err = _run(
        ["inspect", "--validate-only", str(CORPUS / "gap_irregular.csv"), str(CORPUS / "wide_noheader.csv")], capsys
    )
    assert code == 2
    assert "gap of 40 nm" in out and "wide_noheader#2" in out
    assert err.strip().count("\n") == 0 and "1 of 3 entries refused" in err


def test_validate_only_does_not_import_colour_science():
    code = (
        "import sys; from lumeval.cli import main\n"
        "try:\n    main(['inspect', '--validate-only', sys.argv[1]])\nexcept SystemExit:\n    pass\n"
        "assert 'colour' not in sys.modules, 'colour imported'\n"
    )
    r = subprocess.run([sys.executable, "-c", code, str(CORPUS / "irregular.csv")], capture_output=True, text=True,
                       timeout=60)
    assert r.returncode == 0, r.stderr


def test_validate_only_names_repeated_spectra_as_inspect_does(tmp_path, capsys):
    """Columns `a, a (2), a` in one file and a second copy of the file: `inspect` names them
    a, a (2), a (3), a (4)...; `--validate-only` showed `a` twice (found by exploratory
    testing). Both now give the same names, in the same order."""
    rows = "".join(f"{w},{1 + w / 1000},{2 + w / 900},{3 + w / 800}\n" for w in range(380, 781, 5))
    p = tmp_path / "dup.csv"
    p.write_text("wl,a,a (2),a\n" + rows)
    code, out, err = _run(["inspect", "--validate-only", "-f", "json", str(p), str(p)], capsys)
    assert code == 0, err
    validated = [e["name"] for e in json.loads(out)["validation"]]
    code, out, err = _run(["inspect", "-f", "json", str(p), str(p)], capsys)
    assert code == 0, err
    inspected = [s["name"] for s in json.loads(out)["spectra"]]
    assert validated == inspected and len(set(validated)) == 6
