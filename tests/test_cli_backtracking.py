"""Hostile inputs that made the readers' regular expressions backtrack for minutes.

Python's ``re`` is a backtracking engine: a pattern with several optional white-space parts in a
row (``\\s*(a)?\\s*(b)?\\s*$``) tries every way of sharing a long run of spaces between them
before it fails. Before the fix, each input below kept ``lumeval`` busy for more than a minute
(checked on the previous code: every one killed by ``timeout 60``); now each one takes well
under a second. The subprocess timeout is a hang check with a wide margin, not a speed test.
These tests assert behaviour (exit codes, what was read), not colour figures.
"""

from __future__ import annotations

import re

from hypothesis import given, settings
from hypothesis import strategies as st

from lumeval.criteria.claims import parse_claims
from lumeval.spectra.read import read_spectra
from lumeval.spectra.text_dialect import split_key_value

from .conftest import assert_clean_error
from .test_cli_hostile_inputs import run_sub, spectrum_text

HANG_SECONDS = 60  # the fixed code needs well under a second for each input


def test_metadata_line_with_a_long_run_of_spaces_is_read_promptly(tmp_path):
    f = tmp_path / "note.csv"
    f.write_text("# Note: a" + " " * 200_000 + "b\n" + spectrum_text(), encoding="utf-8")
    code, out, err = run_sub(["inspect", "note.csv", "--format", "json"], tmp_path, timeout=HANG_SECONDS)
    assert code == 0, err
    assert '"name": "note"' in out
    meta = read_spectra(f).metadata[0]
    assert meta["Note"] == "a" + " " * 200_000 + "b"


def test_units_row_cell_with_a_long_run_of_spaces_is_read_promptly(tmp_path):
    f = tmp_path / "units.csv"
    f.write_text(spectrum_text(header="Wavelength,Power\n(" + " " * 30_000 + "x nm,W"), encoding="utf-8")
    code, _out, err = run_sub(["inspect", "units.csv", "--format", "json"], tmp_path, timeout=HANG_SECONDS)
    assert code == 0, err


def test_wavelength_header_with_brackets_and_a_long_run_of_spaces_is_read_promptly(tmp_path):
    f = tmp_path / "spot.csv"
    f.write_text(spectrum_text(header="wavelength (" + " " * 30_000 + "(,value"), encoding="utf-8")
    code, _out, err = run_sub(["inspect", "spot.csv", "--format", "json"], tmp_path, timeout=HANG_SECONDS)
    assert code == 0, err


def test_criteria_line_opening_a_bracket_then_spaces_is_located_promptly(tmp_path):
    """A nested array written over lines is valid TOML; the line finder used to backtrack on a
    line that opens "[" and never closes it."""
    (tmp_path / "lamp.csv").write_text(spectrum_text(), encoding="utf-8")
    (tmp_path / "c.toml").write_text(
        'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 50\nlimits = [\n[' + " " * 20_000 + "1,\n2]]\n",
        encoding="utf-8",
    )
    code, _out, err = run_sub(["check", "lamp.csv", "--criteria", "c.toml"], tmp_path, timeout=HANG_SECONDS)
    assert_clean_error(code, err, "c.toml:6", "unknown key 'limits'")


def test_white_space_header_with_a_long_run_before_a_bracket_is_read_promptly(tmp_path):
    """A header split on white space whose cell count does not fit is re-split keeping "(nm)"
    with the word before it; that split backtracked on a long run before a bracket."""
    rows = spectrum_text().split("\n", 1)[1].replace(",", " ")  # the same rows, white-space separated
    (tmp_path / "ws.txt").write_text("wavelength" + " " * 200_000 + "(nm)  value  x\n" + rows, encoding="utf-8")
    code, _out, err = run_sub(["inspect", "ws.txt", "--format", "json"], tmp_path, timeout=HANG_SECONDS)
    assert code == 0, err


def test_toml_error_quoting_a_key_with_a_long_run_of_spaces_is_prompt(tmp_path):
    """tomllib's message quotes the key declared twice; finding "(at line L, column C)" in it
    backtracked on the spaces."""
    (tmp_path / "lamp.csv").write_text(spectrum_text(), encoding="utf-8")
    table = '["a' + " " * 200_000 + 'b"]\n'
    (tmp_path / "c.toml").write_text("lumeval_criteria = 1\n" + table + "x = 1\n" + table, encoding="utf-8")
    code, _out, err = run_sub(["check", "lamp.csv", "--criteria", "c.toml"], tmp_path, timeout=HANG_SECONDS)
    assert_clean_error(code, err, "c.toml:4:", "not valid TOML: Cannot declare")


def test_instrument_file_with_a_bracket_line_in_a_string_is_located_promptly(tmp_path):
    """The instrument file's line finder met a line "[" + spaces inside a multi-line string."""
    (tmp_path / "lamp.csv").write_text(spectrum_text(), encoding="utf-8")
    (tmp_path / "c.toml").write_text('lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 50\n',
                                     encoding="utf-8")
    (tmp_path / "i.toml").write_text('[instrument]\nstray_light = """\n[' + " " * 30_000 + '\n"""\nbandwidth_nm = -1\n',
                                     encoding="utf-8")
    code, _out, err = run_sub(["check", "lamp.csv", "--criteria", "c.toml", "--instrument", "i.toml"], tmp_path,
                              timeout=HANG_SECONDS)
    assert_clean_error(code, err, "i.toml:5", "bandwidth_nm = -1")


def test_claim_with_a_long_run_of_spaces_is_refused_promptly(tmp_path):
    (tmp_path / "lamp.csv").write_text(spectrum_text(), encoding="utf-8")
    (tmp_path / "claims.toml").write_text('[claims]\nRa = "1' + " " * 1000 + 'x"\n', encoding="utf-8")
    code, _out, err = run_sub(["claims", "lamp.csv", "--claims", "claims.toml"], tmp_path, timeout=HANG_SECONDS)
    assert_clean_error(code, err, "claims.toml:2", "'Ra'", "1,002 characters long")


def test_claims_read_with_white_space_runs_made_single_spaces():
    """Runs of spaces or tabs inside a claim read as one space (the claims patterns are matched
    on that form), so wider spacing changes nothing."""
    wide = parse_claims('[claims]\nRa = "min. \t   80"\ncct_K = "2700   K  -\t3000 K"\nR9 = "  ≥   50  "\n')
    tight = parse_claims('[claims]\nRa = "min. 80"\ncct_K = "2700 K - 3000 K"\nR9 = "≥ 50"\n')
    assert [(c.figure, c.lower, c.upper) for c in wide.claims] == [(c.figure, c.lower, c.upper) for c in tight.claims]
    assert wide.claims[0].text == "min. \t   80"  # shown as written


# The pattern split_key_value replaced, kept here as the statement of the rule it follows.
_OLD_KEY_VALUE = re.compile(r"^\s*([^:=]{1,80}?)\s*[:=]\s*(.*?)\s*$")


def _old_split(s: str):
    m = _OLD_KEY_VALUE.match(s)
    if m is None or not m.group(1).strip():
        return None
    return m.group(1).strip(), m.group(2).strip()


@settings(max_examples=400, deadline=None)
@given(st.text(alphabet=st.sampled_from(list("ab1 :=\t\u3000\u00a0.#-")), max_size=120))
def test_split_key_value_follows_the_rule_of_the_pattern_it_replaced(s):
    assert split_key_value(s) == _old_split(s)


def test_split_key_value_examples():
    assert split_key_value("Instrument: spectro 7") == ("Instrument", "spectro 7")
    assert split_key_value("  integration time =  20 ms ") == ("integration time", "20 ms")
    assert split_key_value("a: b: c") == ("a", "b: c")
    assert split_key_value("k" * 81 + ": v") is None
    assert split_key_value("no separator here") is None
