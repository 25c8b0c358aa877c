"""The input corpus: every hand-made file gives its documented outcome.

Each file's expected behaviour lives in tests/data/input_corpus/expected.toml (with a line
saying what the file exercises). The expectations are the documented reading rules
(docs/input-files.md), not values computed by lumeval.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np
import pytest

from lumeval.errors import InputError
from lumeval.spectra.prepare import prepare
from lumeval.spectra.read import read_spectra

CORPUS = Path(__file__).parent / "data" / "input_corpus"
EXPECTED = tomllib.loads((CORPUS / "expected.toml").read_text(encoding="utf-8"))


def test_every_corpus_file_is_documented():
    files = {p.name for p in CORPUS.iterdir() if p.name not in {"expected.toml", "README.md"}}
    assert files == set(EXPECTED), (files - set(EXPECTED), set(EXPECTED) - files)
    assert all(e.get("what") for e in EXPECTED.values())


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_corpus_file(name):
    exp = EXPECTED[name]
    path = CORPUS / name
    outcome = exp["outcome"]
    if outcome == "read_error":
        with pytest.raises(InputError) as info:
            read_spectra(path)
        err = info.value
        assert err.file == str(path)
        assert exp["message"] in err.message, err.message
        if "line" in exp:
            assert err.line == exp["line"], err.message
        assert err.message.startswith(str(path))
        assert "\u2014" in err.message  # every message says what would fix it
        return
    raw = read_spectra(path)
    if outcome == "prepare_error":
        with pytest.raises(InputError) as info:
            prepare(raw)
        assert exp["message"] in info.value.message, info.value.message
        assert info.value.message.startswith(str(path))
        return
    assert outcome == "ok"
    p = prepare(raw)
    if "n" in exp:
        assert len(raw) == exp["n"]
    if "names" in exp:
        assert list(raw.names) == exp["names"]
    if "scale" in exp:
        assert raw.metadata[0]["lumeval.scale"] == exp["scale"]
    for k, v in exp.get("meta", {}).items():
        assert raw.metadata[0].get(k) == v, (k, raw.metadata[0])
    if "grid" in exp:
        start, end, step = exp["grid"]
        assert p.wavelengths_nm[0] == start and p.wavelengths_nm[-1] == end and p.spacing_nm == step
    notes = " | ".join(p.notes[0])
    for sub in exp.get("notes", []):
        assert sub in notes, notes
    if not exp.get("notes"):
        assert p.notes[0] == (), notes
    # whatever was accepted meets the computation-grid contract
    assert p.spacing_nm in (1.0, 5.0)
    assert np.all(p.wavelengths_nm == np.round(p.wavelengths_nm))
    assert p.wavelengths_nm[0] >= 360 and p.wavelengths_nm[-1] <= 830
    assert p.wavelengths_nm[0] <= 380 and p.wavelengths_nm[-1] >= 780
    assert np.all(np.isfinite(p.values))
    # measured negatives are noise set to zero; interpolation overshoot below zero is kept (and
    # noted), never more than a few percent of the peak
    for k in range(len(p)):
        if any("overshoot" in n for n in p.notes[k]):
            assert p.values[k].min() > -0.05 * p.values[k].max()
        else:
            assert np.all(p.values[k] >= 0)
    if len(raw) > 1:
        assert len(set(raw.sources)) == len(raw)
        assert all("#" in s for s in raw.sources)
    else:
        assert raw.sources == (str(path),)


def test_same_spectrum_reads_identically_in_every_dialect():
    """The corpus holds the same 5 nm LED shape written in many dialects: all must agree."""
    ref = read_spectra(CORPUS / "two_col_header.csv")
    for name in [
        "two_col_noheader.csv",
        "semicolon_decimal_comma_bom_crlf.csv",
        "tab_separated.txt",
        "whitespace.txt",
        "descending.csv",
        "micrometres.csv",
        "micrometres_cp1252.csv",
        "utf16_bom.txt",
        "metadata_block.csv",
        "relative_header.csv",
        "trailing_delimiters.csv",
        "excel_quoted_numbers.csv",
        "units_row_under_names.csv",
        "tm27_valid.xml",
        "tm27_no_namespace_v2.xml",
    ]:
        s = read_spectra(CORPUS / name)
        np.testing.assert_array_equal(s.wavelengths_nm, ref.wavelengths_nm, err_msg=name)
        np.testing.assert_array_equal(s.values[0], ref.values[0], err_msg=name)
    js = read_spectra(CORPUS / "spectra_valid.json")
    np.testing.assert_array_equal(js.values[0], ref.values[0])
