"""Formats: exact round trips, IES TM-27 XML interoperability and hardening, JSON schema.

Outside truths: colour-science 0.4.7's independent IES TM-27-14 implementation
(``colour.SpectralDistribution_IESTM2714``) must read what we write, and we must read what it
writes; the XML attack samples are the classic published ones (external entity, "billion
laughs" entity expansion, deep nesting).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from lumeval._colour import load
from lumeval.errors import InputError
from lumeval.spectra import tm27
from lumeval.spectra.model import SpectrumSet
from lumeval.spectra.read import read_spectra
from lumeval.spectra.write import write_spectra

CORPUS = Path(__file__).parent / "data" / "input_corpus"


def _file_meta(meta: dict) -> dict:
    return {k: v for k, v in meta.items() if not k.startswith("lumeval.")}


@pytest.mark.parametrize(
    "name",
    ["metadata_block.csv", "semicolon_decimal_comma_bom_crlf.csv", "irregular.csv", "wide_range_300_900.csv",
     "micrometres.csv", "small_negative.csv"],
)
def test_csv_to_tm27_to_csv_is_exact(tmp_path, name):
    src = read_spectra(CORPUS / name)
    write_spectra(src, tmp_path / "a.xml")
    write_spectra(read_spectra(tmp_path / "a.xml"), tmp_path / "b.csv")
    back = read_spectra(tmp_path / "b.csv")
    np.testing.assert_array_equal(back.wavelengths_nm, src.wavelengths_nm)
    np.testing.assert_array_equal(back.values, src.values)
    assert back.names == (src.names[0],) or back.names == src.names
    # every metadata entry of the source file survives (TM-27 may add its own required fields)
    for k, v in _file_meta(src.metadata[0]).items():
        assert back.metadata[0].get(k) == v, (k, back.metadata[0])
    assert back.metadata[0]["lumeval.scale"] == src.metadata[0]["lumeval.scale"]


def test_random_values_round_trip_bit_exact(tmp_path):
    rng = np.random.default_rng(11)
    wl = np.sort(rng.uniform(350, 850, 200))
    vals = rng.lognormal(size=(1, 200)) * 10.0 ** rng.integers(-12, 12, size=(1, 200))
    s = SpectrumSet(wl, vals, ("random",), ("x",), metadata=({"Operator": "A: B", "Multi": "line 1\nline 2"},))
    for ext in ("xml", "csv", "json"):
        write_spectra(s, tmp_path / f"r.{ext}")
        back = read_spectra(tmp_path / f"r.{ext}")
        np.testing.assert_array_equal(back.wavelengths_nm, wl, err_msg=ext)
        np.testing.assert_array_equal(back.values, vals, err_msg=ext)
        assert back.names == ("random",), ext
        assert back.metadata[0]["Operator"] == "A: B", ext
        assert back.metadata[0]["Multi"] == "line 1\nline 2", ext


def test_json_round_trip_keeps_several_spectra(tmp_path):
    src = read_spectra(CORPUS / "wide_named.csv")
    write_spectra(src, tmp_path / "w.json")
    back = read_spectra(tmp_path / "w.json")
    assert back.names == src.names
    np.testing.assert_array_equal(back.values, src.values)
    doc = json.loads((tmp_path / "w.json").read_text())
    assert doc["format"] == "lumeval.spectra" and doc["schema_version"] == 1


def test_colour_science_reads_our_tm27(tmp_path):
    colour = load()
    src = read_spectra(CORPUS / "tm27_valid.xml")
    write_spectra(src, tmp_path / "ours.xml")
    theirs = colour.SpectralDistribution_IESTM2714(str(tmp_path / "ours.xml")).read()
    np.testing.assert_array_equal(theirs.wavelengths, src.wavelengths_nm)
    np.testing.assert_array_equal(theirs.values, src.values[0])
    assert theirs.header.manufacturer == "Example Lighting"
    assert theirs.header.description == "Downlight 3000 K"
    assert theirs.spectral_quantity == "relative"


def test_we_read_colour_science_tm27(tmp_path):
    colour = load()
    sd = colour.SDS_ILLUMINANTS["FL2"]
    header = colour.io.tm2714.Header_IESTM2714(
        manufacturer="CIE", description="FL2", document_creator="test", comments="written by colour-science"
    )
    out = colour.SpectralDistribution_IESTM2714(
        str(tmp_path / "fl2.spdx"), header=header, spectral_quantity="relative", data=sd.values, domain=sd.wavelengths
    )
    out.write()
    s = read_spectra(tmp_path / "fl2.spdx")
    np.testing.assert_allclose(s.values[0], sd.values, rtol=1e-12)
    np.testing.assert_array_equal(s.wavelengths_nm, sd.wavelengths)
    assert s.names == ("FL2",)
    assert s.metadata[0]["Manufacturer"] == "CIE"
    assert "CatalogNumber" not in s.metadata[0]  # colour writes the text 'None' for unset fields


def test_multi_spectrum_tm27_refused_for_writing(tmp_path):
    from lumeval.errors import UsageError

    src = read_spectra(CORPUS / "wide_named.csv")
    with pytest.raises(UsageError, match="one spectrum per file"):
        write_spectra(src, tmp_path / "w.xml")
    assert not (tmp_path / "w.xml").exists()


# ------------------------------------------------------------------ XML attacks
XXE_INLINE = b"""<?xml version="1.0"?>
<!DOCTYPE r [<!ENTITY x SYSTEM "file:///etc/hostname">]>
<IESTM2714><Header><Description>&x;</Description></Header></IESTM2714>"""

LAUGHS = b"""<?xml version="1.0"?>
<!DOCTYPE l [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">
<!ENTITY c "&b;&b;&b;&b;&b;&b;&b;&b;&b;&b;"><!ENTITY d "&c;&c;&c;&c;&c;&c;&c;&c;&c;&c;">]>
<IESTM2714><Header><Comments>&d;</Comments></Header></IESTM2714>"""

PARAMETER_ENTITY = b"""<?xml version="1.0"?>
<!DOCTYPE r [<!ENTITY % p SYSTEM "http://example.invalid/x.dtd"> %p;]>
<IESTM2714/>"""

QUADRATIC_BLOWUP_NO_DTD = b"<?xml version='1.0'?><IESTM2714>" + b"<x>" * 40 + b"</x>" * 40 + b"</IESTM2714>"


@pytest.mark.parametrize(
    "doc,match",
    [
        (XXE_INLINE, "refuses for safety"),
        (LAUGHS, "refuses for safety"),
        (PARAMETER_ENTITY, "refuses for safety"),
        (QUADRATIC_BLOWUP_NO_DTD, "nested more than"),
    ],
)
def test_xml_attacks_refused(tmp_path, doc, match):
    p = tmp_path / "attack.xml"
    p.write_bytes(doc)
    with pytest.raises(InputError, match=match) as info:
        read_spectra(p)
    assert info.value.file == str(p)


def test_oversized_xml_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(tm27, "MAX_XML_BYTES", 10_000)
    src = (CORPUS / "tm27_valid.xml").read_bytes()
    big = src.replace(b"<Comments>lot 7</Comments>", b"<Comments>" + b"x" * 20_000 + b"</Comments>")
    (tmp_path / "big.xml").write_bytes(big)
    with pytest.raises(InputError, match="more than"):
        read_spectra(tmp_path / "big.xml")


def test_too_many_elements_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(tm27, "MAX_ELEMENTS", 50)
    with pytest.raises(InputError, match="more than 50 elements"):
        read_spectra(CORPUS / "tm27_valid.xml")


def test_oversized_text_refused(tmp_path, monkeypatch):
    from lumeval.spectra import read as read_mod

    monkeypatch.setattr(read_mod, "MAX_TEXT_BYTES", 100)
    with pytest.raises(InputError, match="MB"):
        read_spectra(CORPUS / "two_col_header.csv")


def test_a_file_is_read_to_its_size_and_at_most_one_byte_past_the_limit(tmp_path, monkeypatch):
    """read_at_most sizes its read by the file's size; a file that grows after that size was
    taken (simulated: fstat reports fewer bytes than there are) is read on, never beyond
    limit + 1 bytes, so the caller's "too large" check still sees every oversized file."""
    import os
    from types import SimpleNamespace

    from lumeval.spectra.text import read_at_most

    p = tmp_path / "f.csv"
    p.write_bytes(b"x" * 100)
    with open(p, "rb") as fh:
        assert read_at_most(fh, 1000) == b"x" * 100
    with open(p, "rb") as fh:
        assert read_at_most(fh, 60) == b"x" * 61  # too large: limit + 1 bytes
    real_fstat = os.fstat
    monkeypatch.setattr(os, "fstat", lambda fd: SimpleNamespace(st_size=10, st_mode=real_fstat(fd).st_mode))
    with open(p, "rb") as fh:
        assert read_at_most(fh, 1000) == b"x" * 100  # grew from 10 to 100 bytes: read on
    with open(p, "rb") as fh:
        assert read_at_most(fh, 60) == b"x" * 61  # and still bounded


def test_missing_file_and_directory(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        read_spectra(tmp_path / "nope.csv")
    with pytest.raises(InputError, match="is a folder, not a spectrum file"):
        read_spectra(tmp_path)
