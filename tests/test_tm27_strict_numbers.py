"""Numbers in IES TM-27 XML and wavelength column names in Parquet archives: ASCII digits only.

docs/input-files.md: no script's digits other than ASCII 0-9 are read as numbers (the CSV reader
refuses them). Python's ``float()`` alone reads ``'١'`` (Arabic-Indic one) as 1, ``'1_000'`` as
1000 and ``'４００'`` (full-width) as 400, which silently shifted the chromaticity of a TM-27 file;
the TM-27 reader now uses the CSV reader's number rule, and an archive column named ``'٣٨٠'`` is
metadata, not the wavelength 380 nm. The spectra are invented test data.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.errors import InputError
from lumeval.spectra.tm27 import parse_tm27

from .conftest import assert_clean_error
from .conftest import run_cli_in_process as run

WL = np.arange(380, 781, 5)
VALUES = np.exp(-0.5 * ((WL - 560.0) / 60.0) ** 2) + 0.4 * np.exp(-0.5 * ((WL - 450.0) / 12.0) ** 2)
#: The line of the first <SpectralData> element in :func:`xml_text` (line 1 is the declaration).
FIRST_DATA_LINE = 6


def xml_text(wavelength=None, value=None, at: int = 400) -> str:
    """A TM-27 document with one SpectralData element per line; the one at ``at`` nm gets the
    given wavelength attribute text and/or value text."""
    rows = []
    for w, v in zip(WL, VALUES):
        wt = wavelength if (w == at and wavelength is not None) else f"{w:.1f}"
        vt = value if (w == at and value is not None) else f"{v:.6f}"
        rows.append(f'    <SpectralData wavelength="{wt}">{vt}</SpectralData>')
    return ('<?xml version="1.0" encoding="UTF-8"?>\n'
            '<IESTM2714 xmlns="http://www.ies.org/iestm2714" version="1.0">\n'
            "  <Header><Description>test lamp</Description></Header>\n"
            "  <SpectralDistribution>\n"
            "    <SpectralQuantity>relative</SpectralQuantity>\n"
            + "\n".join(rows) + "\n  </SpectralDistribution>\n</IESTM2714>\n")


def line_of(nm: int) -> int:
    return FIRST_DATA_LINE + WL.tolist().index(nm)


BAD_VALUES = {
    "arabic_indic_one": "\u0661",  # '١': float() read it as 1
    "arabic_indic_mixed": "0.\u0665",  # '0.٥'
    "full_width": "\uff11.\uff15",  # '１.５'
    "devanagari": "\u0967",  # '१'
    "underscore": "1_000",  # float() read it as 1000
    "underscore_fraction": "0.000_5",
    "nan": "nan",
    "infinity": "Infinity",
    "overflow": "1e400",
    "text": "bright",
}

BAD_WAVELENGTHS = {
    "full_width": "\uff14\uff10\uff10",  # '４００'
    "arabic_indic": "\u0664\u0660\u0660",  # '٤٠٠'
    "underscore": "4_00",
    "mixed": "4\u0660\u0660",  # '4٠٠'
}


@pytest.mark.parametrize("where, case", [("value", c) for c in sorted(BAD_VALUES)]
                         + [("wavelength", c) for c in sorted(BAD_WAVELENGTHS)])
def test_bad_number_is_refused_naming_file_line_and_place(tmp_path, capsys, where, case):
    p = tmp_path / f"{where}_{case}.xml"
    if where == "value":
        p.write_text(xml_text(value=BAD_VALUES[case]), encoding="utf-8")
    else:
        p.write_text(xml_text(wavelength=BAD_WAVELENGTHS[case]), encoding="utf-8")
    code, out, err = run(["inspect", "-f", "csv", p], capsys)
    place = "value at wavelength 400" if where == "value" else "wavelength attribute"
    assert_clean_error(code, err, f"{where}_{case}.xml:{line_of(400)}:", place)
    assert out == ""
    with pytest.raises(InputError):
        parse_tm27(p.read_bytes(), str(p))


def test_foreign_digit_is_named(tmp_path, capsys):
    p = tmp_path / "arabic.xml"
    p.write_text(xml_text(value="\u0661"), encoding="utf-8")
    code, _, err = run(["inspect", p], capsys)
    assert_clean_error(code, err, "ARABIC-INDIC DIGIT ONE", "only the digits 0-9 are read")


@pytest.mark.parametrize("text,expected", [
    ("0.5", 0.5), ("+0.5", 0.5), (".5", 0.5), ("5.", 5.0), ("5e-1", 0.5), ("5E-1", 0.5),
    ("  0.5\n  ", 0.5), ("-0.0", 0.0), ("1000", 1000.0),
])
def test_ascii_values_are_read(text, expected):
    s = parse_tm27(xml_text(value=text).encode(), "ok.xml")
    i = int(np.flatnonzero(s.wavelengths_nm == 400)[0])
    assert s.values[0, i] == expected
    np.testing.assert_allclose(np.delete(s.values[0], i), np.round(np.delete(VALUES, i), 6))


@pytest.mark.parametrize("text", ["400", "400.0", "4.0e2", "4E2", " 400 ", "+400"])
def test_ascii_wavelengths_are_read(text):
    s = parse_tm27(xml_text(wavelength=text).encode(), "ok.xml")
    np.testing.assert_array_equal(s.wavelengths_nm, WL.astype(float))


def test_ascii_file_reads_through_the_cli(tmp_path, capsys):
    p = tmp_path / "ok.xml"
    p.write_text(xml_text(), encoding="utf-8")
    code, out, err = run(["inspect", "-f", "csv", p], capsys)
    assert code == 0, err
    assert "test lamp" in out


# --------------------------------------------------------------------------- Parquet archives


@pytest.mark.parametrize("column", ["\u0663\u0668\u0660", "\uff13\uff18\uff10", "38\u0660"])
def test_parquet_column_in_other_digits_is_metadata_not_a_wavelength(tmp_path, capsys, column):
    pa = pytest.importorskip("pyarrow")
    pq = pytest.importorskip("pyarrow.parquet")
    from lumeval.spectra.archive import wavelength_of
    from lumeval.spectra.read import read_spectra

    assert wavelength_of(column) is None
    assert wavelength_of("380") == 380.0 and wavelength_of("382.5") == 382.5
    # 385..780 nm named in ASCII, plus a column whose name is 380 in another script's digits
    cols = {str(w): [float(v)] for w, v in zip(WL[1:], VALUES[1:])}
    p = tmp_path / "lot.parquet"
    pq.write_table(pa.table({"name": ["lamp"], column: [1.0], **cols}), p)
    s = read_spectra(p)
    assert s.wavelengths_nm[0] == 385.0 and 380.0 not in s.wavelengths_nm
    assert len(s.wavelengths_nm) == len(WL) - 1
    assert column in s.metadata[0]
    code, out, err = run(["inspect", "-f", "csv", p], capsys)
    assert code == 0, err
