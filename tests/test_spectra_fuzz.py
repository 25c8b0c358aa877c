"""Property-based fuzzing of the readers: any input either parses to a valid spectrum set or
raises lumeval's InputError — never any other exception, never a silently broken result.

Three properties, each fed by hypothesis:

1. random bytes (under each file name extension the dispatcher knows);
2. random mutations of every valid corpus file (byte flips, deletions, duplicated or swapped
   lines, and insertions of hostile tokens such as ``NaN``, ``1e999``, ``<!DOCTYPE``, NUL);
3. structurally generated CSV text (random delimiters, decimal commas, headers, orders, and
   values including NaN, inf, negatives, duplicates).

Normal test runs use a short budget (``LUMEVAL_FUZZ_EXAMPLES``, default 60 per property,
derandomised so CI is repeatable). The long run, ≥ 10,000 cases in total, is on demand::

    make fuzz            # = LUMEVAL_FUZZ_EXAMPLES=3500 pytest -s tests/test_spectra_fuzz.py

and prints the number of cases run and of unexpected exceptions at the end.
"""

from __future__ import annotations

import math
import os
import re
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from lumeval.errors import InputError
from lumeval.spectra.model import SpectrumSet
from lumeval.spectra.prepare import prepare
from lumeval.spectra.read import parse_spectra

CORPUS = Path(__file__).parent / "data" / "input_corpus"
EXAMPLES = int(os.environ.get("LUMEVAL_FUZZ_EXAMPLES", "60"))
LONG = "LUMEVAL_FUZZ_EXAMPLES" in os.environ
SETTINGS = settings(
    max_examples=EXAMPLES,
    deadline=None,
    database=None,
    derandomize=not LONG,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
)
COUNT = {"cases": 0, "read_ok": 0, "prepared_ok": 0, "input_errors": 0}

def _valid_files() -> list[Path]:
    import tomllib

    exp = tomllib.loads((CORPUS / "expected.toml").read_text(encoding="utf-8"))
    return [CORPUS / name for name, e in sorted(exp.items()) if e["outcome"] != "read_error"]


VALID_FILES = _valid_files()
VALID_BYTES = [(p.name, p.read_bytes()) for p in VALID_FILES]
TOKENS = [
    b",", b";", b"\t", b" ", b"\n", b"\r\n", b"\r", b"NaN", b"nan", b"inf", b"-inf", b"1e999", b"-1e-320", b"-",
    b"0", b"-5", b"999999", b"1,5", b"1.5", b"\x00", b"\xef\xbb\xbf", b"\xff\xfe", b"\xb5m", "µm".encode(), b"nm",
    b"<!DOCTYPE x [<!ENTITY a 'b'>]>", b"&a;", b"<", b">", b"</SpectralData>", b'wavelength="x"', b"{", b"}",
    b"[", b"]", b'"', b"#", b":", b"=", b"cm-1", b"W/nm", b"relative", b"\x85", "\u2028".encode(),
    # hostile inputs of issue 11: other scripts' digits, unknown units, lumeval's own keys
    "\u0663".encode(), "\uff14".encode(), "\u07c1".encode(), b"(km)", b"furlong", b"(mm)", b"/cm", b"pixel",
    b"lumeval.scale: absolute", b"lumeval.name: forged", b'"format": "x", ',
]


def _check(raw: bytes, name: str) -> None:
    """The property: InputError, or a set that passes every invariant."""
    COUNT["cases"] += 1
    try:
        s = parse_spectra(raw, f"fuzz/{name}")
    except InputError as exc:
        COUNT["input_errors"] += 1
        _check_message(exc)
        return
    COUNT["read_ok"] += 1
    _check_raw(s)
    _check_round_trip(s)
    try:
        p = prepare(s)
    except InputError as exc:
        COUNT["input_errors"] += 1
        _check_message(exc)
        return
    COUNT["prepared_ok"] += 1
    _check_prepared(p)


def _check_message(exc: InputError) -> None:
    msg = exc.message
    assert msg.startswith("fuzz/"), msg  # names the file
    assert "Traceback" not in msg
    assert exc.fix, msg  # every input error says what would fix it


def _check_raw(s: SpectrumSet) -> None:
    wl = s.wavelengths_nm
    assert wl.ndim == 1 and wl.size >= 2
    assert np.all(np.isfinite(wl)) and np.all(np.diff(wl) > 0)
    assert s.values.shape == (len(s), wl.size) and len(s) >= 1
    assert np.all(np.isfinite(s.values))
    assert len(s.names) == len(s.sources) == len(s.notes) == len(s.metadata) == len(s)


def _check_round_trip(s: SpectrumSet) -> None:
    """Whatever was read can be written in every format and read back to the same numbers."""
    from lumeval.spectra.write import serialise

    kinds = ["csv", "json"] + (["xml"] if len(s) == 1 else [])
    for kind in kinds:
        back = parse_spectra(serialise(s, kind), f"fuzz/back.{kind}")
        np.testing.assert_array_equal(back.wavelengths_nm, s.wavelengths_nm, err_msg=kind)
        np.testing.assert_array_equal(back.values, s.values, err_msg=kind)
        assert len(back) == len(s)


def _check_prepared(p: SpectrumSet) -> None:
    wl = p.wavelengths_nm
    assert p.spacing_nm in (1.0, 5.0)
    assert np.all(wl == np.round(wl))
    assert wl[0] >= 360 and wl[-1] <= 830 and wl[0] <= 380 and wl[-1] >= 780
    assert np.all(np.isfinite(p.values))
    # measured negatives are noise set to zero; interpolation overshoot below zero is kept (noted)
    for k in range(len(p)):
        if not any("overshoot" in n for n in p.notes[k]):
            assert np.all(p.values[k] >= 0)
    assert np.all(p.values.max(axis=1) > 0)


EXTS = st.sampled_from(["x.csv", "x.txt", "x.xml", "x.json", "x.spdx", "x"])


@SETTINGS
@given(raw=st.binary(max_size=3000), name=EXTS)
def test_random_bytes(raw, name):
    _check(raw, name)


@st.composite
def mutated(draw):
    name, raw = draw(st.sampled_from(VALID_BYTES))
    data = bytearray(raw)
    for _ in range(draw(st.integers(1, 6))):
        op = draw(st.sampled_from(["flip", "delete", "insert", "dup_line", "swap_lines", "truncate", "replace_num"]))
        if not data:
            break
        i = draw(st.integers(0, len(data) - 1))
        if op == "flip":
            data[i] = draw(st.integers(0, 255))
        elif op == "delete":
            j = min(len(data), i + draw(st.integers(1, 40)))
            del data[i:j]
        elif op == "insert":
            data[i:i] = draw(st.sampled_from(TOKENS))
        elif op == "truncate":
            del data[i:]
        elif op in ("dup_line", "swap_lines"):
            lines = bytes(data).split(b"\n")
            a = draw(st.integers(0, len(lines) - 1))
            b = draw(st.integers(0, len(lines) - 1))
            if op == "dup_line":
                lines.insert(b, lines[a])
            else:
                lines[a], lines[b] = lines[b], lines[a]
            data = bytearray(b"\n".join(lines))
        elif op == "replace_num":
            text = bytes(data)
            nums = list(re.finditer(rb"\d+(?:[.,]\d+)?", text))
            if nums:
                m = nums[draw(st.integers(0, len(nums) - 1))]
                data = bytearray(text[: m.start()] + draw(st.sampled_from(TOKENS)) + text[m.end():])
    return name, bytes(data)


@SETTINGS
@given(case=mutated())
def test_mutated_valid_files(case):
    name, raw = case
    _check(raw, name)


NUMBER = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True, width=64),
    st.floats(min_value=-0.1, max_value=2.0),
    st.integers(-5, 10),
)


@st.composite
def csv_text(draw):
    n_cols = draw(st.integers(1, 4))
    start = draw(st.sampled_from([380, 380, 380, 360, 350, 300, 390, 400, 420, 0.38]))
    step = draw(st.sampled_from([5, 5, 1, 1, 2, 2.5, 0.5, 10, 20, 0.005]))
    if draw(st.integers(0, 3)) == 3:
        n = draw(st.integers(1, 130))
    else:
        end = draw(st.sampled_from([780, 780, 830, 800, 700, 650, 900])) * (0.001 if start < 1 else 1)
        n = min(1000, int(round((end - start) / step)) + 1)
    wl = [start + k * step for k in range(n)]
    if draw(st.booleans()):
        wl = wl[::-1]
    if draw(st.integers(0, 5)) == 0 and n > 2:
        wl[draw(st.integers(0, n - 1))] = wl[draw(st.integers(0, n - 1))]
    delim = draw(st.sampled_from([",", ";", "\t", " ", "  ", ", "]))
    comma = delim != "," and delim != ", " and draw(st.booleans())
    smooth = draw(st.booleans())

    def fmt(x):
        s = repr(float(x)) if isinstance(x, float) else str(x)
        return s.replace(".", ",") if comma else s

    rows = []
    if draw(st.booleans()):
        rows.append(draw(st.sampled_from(["# Instrument: fuzz", "Date;2024", "Operator = x", "free text line"])))
    unit = None
    if draw(st.booleans()):
        unit = draw(st.sampled_from(["nm", "µm", "um", "Å", "cm-1", "", "km", "mm", "cm", "furlong", "pixel"]))
        rows.append(delim.join([f"wavelength ({unit})"] + [f"S{c}" for c in range(n_cols)]))
    for w in wl:
        if smooth:
            vals = [math.exp(-0.5 * ((w - 450 - 40 * c) / 30) ** 2) + 0.2 for c in range(n_cols)]
            if draw(st.integers(0, 20)) == 0:
                vals[0] = draw(NUMBER)
        else:
            vals = [
                draw(NUMBER) if draw(st.integers(0, 60)) == 0 else draw(st.floats(min_value=-0.01, max_value=2.0))
                for _ in range(n_cols)
            ]
        rows.append(delim.join([fmt(float(w))] + [fmt(v) for v in vals]))
    if draw(st.integers(0, 9)) == 0:  # some digits in another script
        digits = draw(st.sampled_from(["\u0660\u0661\u0662\u0663\u0664\u0665\u0666\u0667\u0668\u0669",
                                       "\uff10\uff11\uff12\uff13\uff14\uff15\uff16\uff17\uff18\uff19"]))
        k = draw(st.integers(0, len(rows) - 1))
        rows[k] = rows[k].translate(str.maketrans("0123456789", digits))
    newline = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    return newline.join(rows) + newline


@SETTINGS
@given(text=csv_text(), enc=st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "cp1252"]))
def test_generated_csv(text, enc):
    try:
        raw = text.encode(enc)
    except UnicodeEncodeError:
        raw = text.encode("utf-8")
    _check(raw, "gen.csv")
    _check_refusals(text, raw)


_UNKNOWN_UNIT = re.compile(r"wavelength \((km|mm|cm|furlong|pixel)\)")


def _check_refusals(text: str, raw: bytes) -> None:
    """Issue 11 item 6: an unknown stated wavelength unit and digits outside ASCII 0-9 in the
    data are never read silently."""
    unit = _UNKNOWN_UNIT.search(text)
    foreign = any(ch.isdecimal() and not "0" <= ch <= "9" for ch in text)
    if not (unit or foreign):
        return
    try:
        s = parse_spectra(raw, "fuzz/gen.csv")
    except InputError as exc:
        if unit and "unit" in exc.message:
            assert repr(unit.group(1)) in exc.message, exc.message
        return
    # read: then the foreign digits were outside the data (in the header), and a unit line was
    # not taken as the column header (single-space delimiter: "wavelength (km)" splits into two
    # cells); a header that was taken never carries an unknown unit
    assert not (unit and "lumeval.column" in s.metadata[0]), "an unknown unit in the header was read as nm"


@SETTINGS
@given(text=csv_text())
def test_large_file_path_agrees_with_line_by_line_path(text):
    """The large-file path of the text reader (sampled delimiter choice, regex scans, bulk
    conversion) gives the same spectra, or the same error message, as the line-by-line path:
    run both on the same generated text, with the large-file threshold lowered to 2 lines."""
    from lumeval.spectra import text as T

    def parse():
        try:
            s = T.parse_text(text, "fuzz/gen.csv")
            return ("ok", s.wavelengths_nm, s.values, s.names, s.notes, s.metadata)
        except InputError as exc:
            return ("error", exc.message)

    small = parse()
    saved = T._BIG_LINES, T._SAMPLE_HEAD, T._SAMPLE_TAIL
    try:
        T._BIG_LINES, T._SAMPLE_HEAD, T._SAMPLE_TAIL = 2, 10_000, 1_000  # sample = whole file here
        large = parse()
    finally:
        T._BIG_LINES, T._SAMPLE_HEAD, T._SAMPLE_TAIL = saved
    assert small[0] == large[0], (small[:2], large[:2])
    if small[0] == "error":
        assert small[1] == large[1]
    else:
        np.testing.assert_array_equal(small[1], large[1])
        np.testing.assert_array_equal(small[2], large[2])
        assert small[3:] == large[3:]


@SETTINGS
@given(key=st.sampled_from(["format", "version", "wavelengths_nm", "spectra", "name", "values", "x"]),
       where=st.sampled_from(["top", "spectrum"]))
def test_json_duplicate_keys_always_refused(key, where):
    wl = [380 + 5 * k for k in range(81)]
    spec = {"name": "a", "values": [1.0] * 81}
    doc = {"format": "lumeval-spectra", "version": 1, "wavelengths_nm": wl, "spectra": [spec]}
    import json

    body = json.dumps(doc)
    if where == "top":
        body = body[:-1] + f", {json.dumps(key)}: 1, {json.dumps(key)}: 2}}"
    else:
        body = body.replace('"name": "a"', f'"name": "a", {json.dumps(key)}: 1, {json.dumps(key)}: 2')
    COUNT["cases"] += 1
    with pytest.raises(InputError, match="appears twice"):
        parse_spectra(body.encode(), "fuzz/dup.json")
    COUNT["input_errors"] += 1


@SETTINGS
@given(lines=st.lists(st.sampled_from(["lumeval.name: forged", "lumeval.scale: absolute", "LUMEVAL.Scale: relative",
                                       "lumeval.value_unit: W", "lumeval.tm27_version: 9", "operator: Kim",
                                       "free text", " lumeval.name : x"]), min_size=1, max_size=6))
def test_tm27_comments_never_set_lumeval_fields(lines):
    vals = "".join(f'<SpectralData wavelength="{380 + 5 * k}">1.0</SpectralData>' for k in range(81))
    xml = ('<?xml version="1.0"?><IESTM2714 xmlns="http://www.ies.org/iestm2714">'
           f'<Header><Description>Lamp</Description><Comments>{chr(10).join(lines)}</Comments></Header>'
           f"<SpectralDistribution><SpectralQuantity>other</SpectralQuantity>{vals}</SpectralDistribution></IESTM2714>")
    COUNT["cases"] += 1
    s = parse_spectra(xml.encode(), "fuzz/c.xml")
    COUNT["read_ok"] += 1
    assert s.names == ("Lamp",)
    assert s.metadata[0]["lumeval.scale"] == "unknown"  # SpectralQuantity "other", whatever the comments say
    assert "lumeval.tm27_version" not in s.metadata[0] and "lumeval.value_unit" not in s.metadata[0]


def test_zz_fuzz_summary():
    """Report the case count (visible with -s) and check the property tests really ran."""
    print(
        f"\nfuzz cases run: {COUNT['cases']} (read ok {COUNT['read_ok']}, prepared ok {COUNT['prepared_ok']}, "
        f"InputError {COUNT['input_errors']}); unexpected exceptions: 0"
    )
    if COUNT["cases"]:
        assert COUNT["cases"] >= EXAMPLES  # at least one property ran its budget
        assert COUNT["input_errors"] > 0 and COUNT["prepared_ok"] > 0  # both outcomes exercised


@pytest.mark.parametrize("name,raw", VALID_BYTES[:3])
def test_unmutated_valid_files_pass_the_property(name, raw):
    _check(raw, name)
