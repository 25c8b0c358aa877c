"""Every TOML input goes through the one TOML reader (lumeval/_toml.py) and behaves the same
through the real command line: a UTF-8 byte-order mark is accepted and removed, a syntax error
names the file, line and column, and files too large or nested too deep are refused before
parsing (one line, exit code 2). Kinds: criteria, claims, instrument files and series manifests.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from lumeval._toml import MAX_TOML_BYTES, MAX_TOML_DEPTH
from lumeval.tunable.api import MAX_MANIFEST_BYTES

from .conftest import assert_clean_error as one_error_line
from .conftest import run_cli_in_process

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "spectra_demo"
A = DEMO / "downlights" / "candidate_A_aurora_3000K.csv"
C = DEMO / "downlights" / "candidate_C_claritas_3000K.csv"
DIM = [DEMO / "tunable" / f"tw2_dim2warm_{p:03d}pct.csv" for p in (50, 100)]
BOM = b"\xef\xbb\xbf"

MANIFEST = "".join(f'"{p.name}" = {int(p.stem[-6:-3])}\n' for p in DIM)

#: kind -> (argv with FILE for the TOML file, a valid file's text, the size limit)
KINDS = {
    "criteria": (["check", A, "-c", "FILE"], (DEMO / "tender_criteria.toml").read_text(encoding="utf-8"),
                 MAX_TOML_BYTES),
    "claims": (["claims", C, "--claims", "FILE"], (DEMO / "supplier_claims.toml").read_text(encoding="utf-8"),
               MAX_TOML_BYTES),
    # a valid instrument file would start a Monte Carlo run; a file whose only fault is a
    # misspelt key on line 2 shows as well that the reader got past the mark
    "instrument": (["check", A, "-c", DEMO / "tender_criteria.toml", "--instrument", "FILE"],
                   "[instrument]\nbandwith_nm = 2\n", MAX_TOML_BYTES),
    "manifest": (["series", *DIM, "--setting-from", "manifest", "--manifest", "FILE"],
                 'unit = "%"\n[settings]\n' + MANIFEST, MAX_MANIFEST_BYTES),
}


def run(kind, path, capsys):
    argv = [path if a == "FILE" else a for a in KINDS[kind][0]]
    return run_cli_in_process(argv, capsys)


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_a_byte_order_mark_is_accepted(kind, tmp_path, capsys):
    text = KINDS[kind][1]
    plain, marked = tmp_path / "plain.toml", tmp_path / "marks.toml"  # names of one length: same wrapping
    plain.write_bytes(text.encode("utf-8"))
    marked.write_bytes(BOM + text.encode("utf-8"))
    code_p, out_p, err_p = run(kind, plain, capsys)
    code_m, out_m, err_m = run(kind, marked, capsys)
    assert code_m == code_p
    assert out_m.replace("marks.toml", "plain.toml") == out_p
    assert err_m.replace("marks.toml", "plain.toml") == err_p
    if kind == "instrument":
        line = one_error_line(code_m, err_m)
        assert f"{marked}:2 " in line and "unknown key 'bandwith_nm'" in line, line
    else:
        assert code_m in (0, 1), err_m


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_a_syntax_error_names_file_line_and_column(kind, tmp_path, capsys):
    p = tmp_path / "bad.toml"
    p.write_bytes(BOM + b"# a comment\n\n[settings]\n\"x\" = \n")
    line = one_error_line(*run(kind, p, capsys)[::2])
    assert re.search(rf"{re.escape(str(p))}:4:\d+: not valid TOML: ", line), line
    assert "check quotes, brackets" in line


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_too_large_a_file_is_refused(kind, tmp_path, capsys):
    limit = KINDS[kind][2]
    p = tmp_path / "big.toml"
    p.write_bytes(b"# padding\n" * (limit // 10 + 1))
    line = one_error_line(*run(kind, p, capsys)[::2])
    assert f"{p}: is " in line and f"more than the {limit / 1e6:.0f} MB lumeval reads" in line, line
    assert f"check that this is a {kind} file" in line


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_too_deep_a_file_is_refused(kind, tmp_path, capsys):
    p = tmp_path / "deep.toml"
    deep = "[" * (MAX_TOML_DEPTH + 1) + "]" * (MAX_TOML_DEPTH + 1)
    p.write_text(f"# nesting\nx = 1\ny = {deep}\n", encoding="utf-8")
    line = one_error_line(*run(kind, p, capsys)[::2])
    assert f"{p}:3: arrays or inline tables nested more than {MAX_TOML_DEPTH} levels deep" in line, line
    # one level less is read (and then judged by the kind's own rules, not refused as too deep)
    ok = "[" * MAX_TOML_DEPTH + "]" * MAX_TOML_DEPTH
    p.write_text(f"# nesting\nx = 1\ny = {ok}\n", encoding="utf-8")
    code, _, err = run(kind, p, capsys)
    assert "nested more than" not in err and "Traceback" not in err


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_other_encodings_are_refused(kind, tmp_path, capsys):
    p = tmp_path / "latin1.toml"
    p.write_bytes('# caf\u00e9\nx = 1\n'.encode("latin-1"))
    line = one_error_line(*run(kind, p, capsys)[::2])
    assert f"{p}: is not UTF-8 text" in line and f"save the {kind} file as UTF-8" in line, line


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_a_number_with_thousands_of_digits_names_its_line(kind, tmp_path, capsys):
    """Python refuses to convert integers over 4,300 digits; the message names the line of the
    first such number (found after shorter digit runs earlier in the file) and gives no
    interpreter advice."""
    p = tmp_path / "digits.toml"
    p.write_text("# runs\na = 123456\nb = 7_000\n\nhuge = " + "9" * 5000 + "\n", encoding="utf-8")
    line = one_error_line(*run(kind, p, capsys)[::2])
    assert f"{p}:5: a number with thousands of digits" in line, line
    assert "sys.set_int_max_str_digits" not in line


def test_the_line_locator_reads_quoted_headers_and_skips_multiline_strings():
    """One locator names the lines of criteria, claims, instrument and decision tables
    (lumeval.criteria.loader.locate_lines). TOML (v1.0.0, "Table" and "String") allows quoted
    table names and multi-line strings; Python's tomllib parses the same text, so the expected
    keys are checked against it."""
    import tomllib

    from lumeval.criteria.loader import locate_lines

    text = ("top = 1\n['single']\na = 1\n[ \"double\" ]\nb = '''\nc = 2\n'''\nc = 3\n"
            "[[rows]]\nd = 4\n[[rows]]\nd = 5\n")
    parsed = tomllib.loads(text)
    assert parsed["double"]["c"] == 3 and "c = 2" in parsed["double"]["b"]
    lines = locate_lines(text)
    assert lines[("top",)] == 1
    assert lines[("single",)] == 2 and lines[("single", "a")] == 3
    assert lines[("double",)] == 4 and lines[("double", "b")] == 5
    assert lines[("double", "c")] == 8  # not the look-alike inside the string on line 6
    assert lines[("rows", 0, "d")] == 10 and lines[("rows", 1, "d")] == 12
