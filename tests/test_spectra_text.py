"""Small inline cases for the text reader's rules (docs/input-files.md §1)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from lumeval.errors import InputError
from lumeval.spectra.read import parse_spectra

WL = np.arange(380, 781, 5)


def _rows(fmt="{w},{v}", unit=1.0, dec="."):
    out = []
    for w in WL:
        v = f"{0.5 + 0.4 * np.sin(w / 40):.4f}"
        ws = f"{w * unit:g}"
        if dec == ",":
            v, ws = v.replace(".", ","), ws.replace(".", ",")
        out.append(fmt.format(w=ws, v=v))
    return out


def _parse(lines, nl="\n", enc="utf-8", name="t.csv"):
    return parse_spectra((nl.join(lines) + nl).encode(enc), name)


@pytest.mark.parametrize(
    "header,unit,note",
    [
        ("wavelength [Å],v", 10.0, "Å"),
        ("Wavelength (um),v", 0.001, "µm"),
        ("lambda/nm,v", 1.0, None),
    ],
)
def test_wavelength_units_from_header(header, unit, note):
    s = _parse([header] + _rows(unit=unit))
    np.testing.assert_allclose(s.wavelengths_nm, WL, rtol=0, atol=1e-9)
    assert (note is None and s.notes[0] == ()) or any(note in n for n in s.notes[0])


def test_wavelength_unit_from_metadata_line():
    s = _parse(["Wavelength unit: micrometre", "Units: W/nm"] + _rows(unit=0.001))
    np.testing.assert_allclose(s.wavelengths_nm, WL)
    assert s.metadata[0]["lumeval.scale"] == "absolute"


@pytest.mark.parametrize("nl", ["\n", "\r\n", "\r"])
def test_line_endings_and_line_numbers(nl):
    lines = ["nm;value"] + _rows("{w};{v}", dec=",")
    lines[20] = lines[20].split(";")[0] + ";"
    with pytest.raises(InputError) as info:
        _parse(lines, nl=nl)
    assert info.value.line == 21


def test_whitespace_with_decimal_comma_and_latin1_metadata():
    lines = ["# Gerät: Spektro", "# Einheit: relativ"] + _rows("{w}   {v}", dec=",")
    s = _parse(lines, enc="latin-1")
    assert s.metadata[0]["Gerät"] == "Spektro"
    assert s.values.shape == (1, WL.size)


def test_scale_relative_from_metadata():
    s = _parse(["Spectral quantity: relative"] + _rows())
    assert s.metadata[0]["lumeval.scale"] == "relative"


def test_row_with_extra_cell_names_line():
    lines = ["nm,a"] + _rows()
    lines[5] += ",7"
    with pytest.raises(InputError, match="more than the 2") as info:
        _parse(lines)
    assert info.value.line == 6


def test_descending_wide_file_keeps_columns_together():
    lines = ["nm,a,b"] + [f"{w},{w / 1000:.3f},{2 * w / 1000:.3f}" for w in WL[::-1]]
    s = _parse(lines)
    np.testing.assert_array_equal(s.wavelengths_nm, WL)
    np.testing.assert_allclose(s.values[1], 2 * s.values[0])
    np.testing.assert_allclose(s.values[0], WL / 1000)


@pytest.mark.parametrize(
    "headers,meta,want",
    [
        # no column states a unit: every column takes the file's (its metadata line)
        (["A", "B", "C"], ["Units: mW/(m2 nm)"], [("absolute", "mW/(m2 nm)")] * 3),
        (["A", "B", "C"], [], [("unknown", None)] * 3),
        # one column states its own unit: that column only
        (["A", "B (relative)", "C"], ["Units: W/nm"], [("absolute", "W/nm"), ("relative", "B (relative)"), ("absolute", "W/nm")]),
        (["A", "B", "C mW/nm"], [], [("unknown", None), ("unknown", None), ("absolute", "C mW/nm")]),
        # letters of lm, cd, lux inside a name state no unit (they read as lm or lux until
        # 2026-12-05: a relative file's "Film lamp" column became "absolute")
        (["Film lamp", "Realm 2", "Deluxe flux"], ["Units: relative"], [("relative", "relative")] * 3),
        # the same units as words of their own still do, prefixed or not
        (["A (mcd/nm)", "B [klx]", "C lm/nm"], [], [("absolute", "A (mcd/nm)"), ("absolute", "B [klx]"),
                                                    ("absolute", "C lm/nm")]),
        # names that hold letters of units inside words without stating one
        (["raw 1", "sample B", "cdx"], ["Units: W/nm"], [("absolute", "W/nm")] * 3),
        (["raw 1", "sample B", "2 W"], [], [("unknown", None), ("unknown", None), ("absolute", "2 W")]),
    ],
)
def test_scale_of_each_column_of_a_wide_file(headers, meta, want):
    """Each column's scale and unit come from its own header when it states one, else from the
    file's metadata, whether or not another column states one (the columns' headers are looked
    at together first)."""
    rows = [f"{w},{v},{v},{v}" for w, v in (r.split(",") for r in _rows())]
    s = _parse(meta + ["nm," + ",".join(headers)] + rows)
    got = [(m["lumeval.scale"], m.get("lumeval.value_unit")) for m in s.metadata]
    assert got == want


@settings(max_examples=3000, deadline=None)
@given(st.text(alphabet="wWlLmMcCdDxXuUrReEaAtTiIvVbBnNoOzZsSpP%. /·*µ2\n\tſK", max_size=12))
def test_quick_no_unit_check_agrees_with_the_unit_patterns(text):
    """The quick look at column headers (lumeval.spectra.text_header._states_no_unit) says "no
    unit" exactly when neither unit pattern matches, including non-ASCII case variants."""
    from lumeval.spectra import text_header as th

    assert th._states_no_unit(text) == (not (th._RELATIVE.search(text) or th._ABSOLUTE.search(text)))
