"""Hostile and odd inputs through the real CLI: a clean exit 2 or the documented behaviour.

Every case builds its input in ``tmp_path`` from a few lines, then runs ``lumeval`` either
in-process through ``lumeval.cli.main`` (the same code as the console script) or, where the
point is that nothing blocks or that real standard streams are used, as a subprocess with a
timeout. These tests assert behaviour (exit codes, one-line messages, what is listed), not
numbers: no reference values are involved.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from .conftest import assert_clean_error as one_error_line
from .conftest import run_cli_in_process as run

ROOT = Path(__file__).resolve().parents[1]
CRITERIA = 'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 50\n'
needs_fifo = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes need a POSIX system")


def run_sub(argv, cwd, timeout=60):
    """(exit code, stdout, stderr) of the console entry point as a separate process."""
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    p = subprocess.run([sys.executable, "-m", "lumeval", *argv], cwd=cwd, capture_output=True, timeout=timeout, env=env)
    return p.returncode, p.stdout.decode("utf-8", "replace"), p.stderr.decode("utf-8", "replace")


def spectrum_text(shift=0.0, header="wavelength,value") -> str:
    """A smooth broadband test spectrum (invented: these tests judge behaviour, not numbers)."""
    wl = np.arange(380, 781, 5)
    v = np.exp(-(((wl - 560 - shift) / 120.0) ** 2)) + 0.1
    return header + "\n" + "".join(f"{a},{b:.6f}\n" for a, b in zip(wl, v))


def write_spd(path: Path, shift=0.0) -> Path:
    path.write_text(spectrum_text(shift), encoding="utf-8")
    return path


# --------------------------------------------------------------------------- special files


@needs_fifo
@pytest.mark.parametrize("command", ["inspect", "lot"])
def test_fifo_spectrum_is_refused_not_waited_on(tmp_path, command):
    os.mkfifo(tmp_path / "pipe.csv")
    code, _out, err = run_sub([command, "pipe.csv"], tmp_path, timeout=60)
    one_error_line(code, err, "pipe.csv", "FIFO")


@needs_fifo
@pytest.mark.parametrize("option", ["--criteria", "--instrument"])
def test_fifo_criteria_or_instrument_is_refused(tmp_path, option):
    write_spd(tmp_path / "a.csv")
    os.mkfifo(tmp_path / "c.toml")
    argv = ["check", "a.csv", option, "c.toml"]
    if option == "--instrument":
        (tmp_path / "k.toml").write_text(CRITERIA)
        argv += ["--criteria", "k.toml"]
    code, _out, err = run_sub(argv, tmp_path, timeout=60)
    one_error_line(code, err, "c.toml", "FIFO")


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() != 0, reason="creating device nodes (mknod) needs root")
def test_device_node_spectrum_is_refused(tmp_path, capsys):
    import stat

    dev = tmp_path / "zero.csv"
    os.mknod(dev, 0o600 | stat.S_IFCHR, os.makedev(1, 5))  # the same device as /dev/zero
    code, _out, err = run(["inspect", dev], capsys)
    one_error_line(code, err, "zero.csv", "character device")


def test_dev_zero_is_refused(capsys):
    if not os.path.exists("/dev/zero"):
        pytest.skip("no /dev/zero on this system")
    code, _out, err = run(["inspect", "/dev/zero"], capsys)
    one_error_line(code, err, "/dev/zero", "character device")


def test_special_file_kinds_have_one_home():
    """The names of the special file types lived twice: a table in lumeval._io (refused
    outputs) and a function in lumeval.spectra.text (refused inputs, lot entries, stores),
    which could drift apart (found by a review). One home, _io; the readers' name is the same
    function."""
    import stat

    from lumeval import _io
    from lumeval.spectra import text

    assert text.special_file_kind is _io.special_file_kind
    for mode, name in ((stat.S_IFIFO, "a FIFO (named pipe)"), (stat.S_IFSOCK, "a socket"),
                       (stat.S_IFCHR, "a character device"), (stat.S_IFBLK, "a block device")):
        assert _io.special_file_kind(mode | 0o644) == name


@needs_fifo
def test_a_fifo_is_named_alike_as_input_and_as_output(tmp_path, capsys):
    os.mkfifo(tmp_path / "pipe")
    spd = write_spd(tmp_path / "a.csv")
    code, _out, err = run(["inspect", spd, "-o", tmp_path / "pipe"], capsys)
    one_error_line(code, err, "it is a FIFO (named pipe), and lumeval writes regular files only")
    code, _out, err = run_sub(["inspect", "pipe"], tmp_path, timeout=60)
    one_error_line(code, err, "pipe: is a FIFO (named pipe), not a regular file")


# --------------------------------------------------------------------------- deep TOML


@pytest.mark.parametrize(
    "text",
    [
        "a = " + "[" * 5000 + "]" * 5000 + "\n",
        '[[clause]]\nfigure = "Ra"\nmin = ' + "{b = " * 3000 + "1" + "}" * 3000 + "\n",
    ],
    ids=["arrays", "inline-tables"],
)
@pytest.mark.parametrize("option", ["--criteria", "--claims", "--instrument"])
def test_deeply_nested_toml_is_refused(tmp_path, capsys, text, option):
    spd = write_spd(tmp_path / "a.csv")
    f = tmp_path / "deep.toml"
    f.write_text(text, encoding="utf-8")
    if option == "--claims":
        argv = ["claims", spd, "--claims", f]
    elif option == "--instrument":
        good = tmp_path / "ok.toml"
        good.write_text(CRITERIA)
        argv = ["check", spd, "--criteria", good, "--instrument", f]
    else:
        argv = ["check", spd, "--criteria", f]
    code, _out, err = run(argv, capsys)
    one_error_line(code, err, "deep.toml", "nested more than")


def test_toml_strings_with_brackets_are_not_nesting(tmp_path, capsys):
    spd = write_spd(tmp_path / "a.csv")
    f = tmp_path / "c.toml"
    f.write_text(CRITERIA + 'label = "' + "[" * 100 + '"\n# ' + "{" * 100 + "\n", encoding="utf-8")
    code, out, err = run(["check", spd, "--criteria", f], capsys)
    assert code in (0, 1), err


# --------------------------------------------------------------------------- lots and globs


def _lot_json(tmp_path, capsys, *args):
    out_json = tmp_path / "lot.json"
    code, out, err = run(["lot", *args, "--json", out_json, "--quiet"], capsys)
    assert "Traceback" not in err and "internal error" not in err, err
    return code, json.loads(out_json.read_text(encoding="utf-8")), out, err


def test_lot_symlink_loop_and_dangling_link_listed_others_judged(tmp_path, capsys):
    lot = tmp_path / "lot"
    lot.mkdir()
    write_spd(lot / "s1.csv")
    write_spd(lot / "s2.csv", 10)
    os.symlink("loop.csv", lot / "loop.csv")
    os.symlink("gone.csv", lot / "dangling.csv")
    code, doc, out, err = _lot_json(tmp_path, capsys, lot)
    assert code == 2  # a lot with unread inputs cannot pass
    assert sorted(s["name"] for s in doc["samples"]) == ["s1", "s2"]
    msgs = {Path(u["source"]).name: u["message"] for u in doc["unreadable"]}
    assert set(msgs) == {"loop.csv", "dangling.csv"}
    assert "loops" in msgs["loop.csv"] and "dangling" in msgs["dangling.csv"]
    assert "could not be read" in out
    assert len([ln for ln in err.splitlines() if ln.startswith("lumeval: error:")]) == 1


def test_lot_double_star_follows_links_once_and_never_loops(tmp_path, capsys):
    lot = tmp_path / "lot"
    (lot / "a" / "deep").mkdir(parents=True)
    write_spd(lot / "top.csv")
    write_spd(lot / "a" / "deep" / "x.csv", 5)
    os.symlink("..", lot / "a" / "up")  # a loop through ..
    os.symlink("a", lot / "a_again")  # the same folder under a second name
    os.symlink(os.path.join("a", "deep", "x.csv"), lot / "alias.csv")  # the same file twice
    code, doc, _out, err = _lot_json(tmp_path, capsys, str(lot / "**" / "*.csv"))
    assert code == 0, err
    assert sorted(s["name"] for s in doc["samples"]) == ["top", "x"]
    skipped = {Path(k["path"]).name: k["reason"] for k in doc["skipped"]}
    assert set(skipped) == {"alias.csv"} and "same file" in skipped["alias.csv"]


@needs_fifo
def test_lot_skipped_entries_are_listed_with_reason(tmp_path, capsys):
    lot = tmp_path / "lot"
    lot.mkdir()
    write_spd(lot / "s1.csv")
    os.mkfifo(lot / "pipe.csv")
    (lot / "folder.csv").mkdir()
    for args in ([lot], [str(lot / "*.csv")]):
        code, doc, out, err = _lot_json(tmp_path, capsys, *args)
        assert code == 0, err  # nothing unreadable: skipped entries do not fail the lot
        assert [s["name"] for s in doc["samples"]] == ["s1"]
        skipped = {Path(k["path"]).name: k["reason"] for k in doc["skipped"]}
        assert set(skipped) == {"pipe.csv", "folder.csv"}, doc["skipped"]
        assert "FIFO" in skipped["pipe.csv"] and "folder" in skipped["folder.csv"]
        assert "Skipped" in out and "FIFO" in out


@pytest.mark.skipif(sys.platform == "darwin" or os.name == "nt", reason="needs a file system that takes any bytes in names")
@pytest.mark.parametrize("fmt", ["terminal", "json", "csv"])
def test_lot_non_utf8_file_name_every_writer(tmp_path, fmt):
    lot = tmp_path / "lot"
    lot.mkdir()
    write_spd(lot / "ok.csv")
    bad = os.path.join(os.fsencode(lot), b"lamp\xff\xfe.csv")
    with open(bad, "w", encoding="utf-8") as fh:
        fh.write(spectrum_text(7))
    code, out, err = run_sub(
        ["lot", "lot", "--format", fmt, "--samples-csv", "s.csv", "--json", "l.json", "--html", "r.html", "--quiet"],
        tmp_path, timeout=180,
    )
    assert code == 0, err
    assert "Traceback" not in err
    assert "lamp\ufffd\ufffd" in out
    doc = json.loads((tmp_path / "l.json").read_text(encoding="utf-8"))
    assert sorted(s["name"] for s in doc["samples"]) == ["lamp\ufffd\ufffd", "ok"]
    assert "lamp\ufffd\ufffd" in (tmp_path / "s.csv").read_text(encoding="utf-8")
    assert "lamp\ufffd\ufffd" in (tmp_path / "r.html").read_text(encoding="utf-8")


@pytest.mark.skipif(sys.platform == "darwin" or os.name == "nt", reason="needs a file system that takes any bytes in names")
def test_inspect_non_utf8_file_name(tmp_path):
    with open(os.path.join(os.fsencode(tmp_path), b"x\xff.csv"), "w", encoding="utf-8") as fh:
        fh.write(spectrum_text())
    name = os.fsdecode(b"x\xff.csv")
    for fmt in ("terminal", "json", "csv"):
        code, out, err = run_sub(["inspect", name, "--format", fmt], tmp_path, timeout=120)
        assert code == 0, err
        assert "x\ufffd" in out
    # the HTML report's command line names the file too (it once failed to encode: exit 3)
    code, out, err = run_sub(["inspect", name, "--html", "r.html", "--quiet"], tmp_path, timeout=120)
    assert code == 0, err
    assert "lumeval inspect x\ufffd.csv --html r.html" in (tmp_path / "r.html").read_text(encoding="utf-8")


@pytest.mark.skipif(sys.platform == "darwin" or os.name == "nt", reason="needs a file system that takes any bytes in names")
def test_archive_with_a_non_utf8_file_name(tmp_path):
    """A Parquet archive whose name is not UTF-8 is read as a text file with such a name is
    (pyarrow takes only UTF-8 path text: lumeval opens it by its bytes; before, it was refused as
    "not a readable Parquet file"); an empty one is listed unreadable (its source once made the
    JSON writer fail with an internal error); every writer, the HTML's command line too, gets
    the printable name."""
    import pyarrow as pa  # a test dependency (pyproject [test]): fail, never skip, when it is missing
    import pyarrow.parquet as pq
    write_spd(tmp_path / "a.csv")
    code, _, err = run_sub(["convert", "a.csv", "a.parquet", "--quiet"], tmp_path, timeout=120)
    assert code == 0, err
    base = os.fsencode(tmp_path)
    os.rename(tmp_path / "a.parquet", os.path.join(base, b"arch\xff.parquet"))
    pq.write_table(pq.read_table(pa.OSFile(os.path.join(base, b"arch\xff.parquet"))).slice(0, 0), tmp_path / "none.parquet")
    os.rename(tmp_path / "none.parquet", os.path.join(base, b"none\xfe.parquet"))
    good, empty = os.fsdecode(b"arch\xff.parquet"), os.fsdecode(b"none\xfe.parquet")

    code, out, err = run_sub(["lot", good, "--json", "l.json", "--samples-csv", "s.csv", "--html", "r.html", "--quiet"],
                             tmp_path, timeout=180)
    assert code == 0, err
    doc = json.loads((tmp_path / "l.json").read_text(encoding="utf-8"))
    assert [s["source"] for s in doc["samples"]] == ["arch\ufffd.parquet#row 1"]
    assert "arch\ufffd.parquet#row 1" in (tmp_path / "s.csv").read_text(encoding="utf-8")
    assert "lumeval lot arch\ufffd.parquet" in (tmp_path / "r.html").read_text(encoding="utf-8")

    code, out, err = run_sub(["lot", empty, good, "--json", "l2.json", "--samples-csv", "s2.csv", "--html", "r2.html",
                              "--quiet"], tmp_path, timeout=180)
    assert code == 2 and "Traceback" not in err and "internal error" not in err, err
    doc = json.loads((tmp_path / "l2.json").read_text(encoding="utf-8"))
    assert doc["unreadable"] == [{"source": "none\ufffd.parquet", "message": "none\ufffd.parquet: the archive holds no "
                                  "rows \u2014 give an archive with at least one spectrum"}]
    assert len(doc["samples"]) == 1

    code, out, err = run_sub(["inspect", good, "--format", "json"], tmp_path, timeout=120)
    assert code == 0, err
    assert json.loads(out)["spectra"][0]["source"] == "arch\ufffd.parquet#row 1"


@pytest.mark.skipif(sys.platform == "darwin" or os.name == "nt", reason="needs a file system that takes any bytes in names")
def test_criteria_file_with_a_non_utf8_name(tmp_path):
    """The criteria file's name is shown in the verdicts, the JSON and the HTML report: printable
    (it once made the HTML writer fail: internal error, exit 3)."""
    write_spd(tmp_path / "lamp.csv")
    crit = os.path.join(os.fsencode(tmp_path), b"tender\xfe.toml")
    with open(crit, "w", encoding="utf-8") as fh:
        fh.write('lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 1\n')
    code, out, err = run_sub(["check", "lamp.csv", "--criteria", os.fsdecode(crit), "--format", "json", "--html", "r.html",
                              "--quiet"], tmp_path, timeout=120)
    assert code in (0, 1) and "Traceback" not in err and "internal error" not in err, err
    assert json.loads(out)["criteria_file"].endswith("/tender\ufffd.toml")
    assert "tender\ufffd.toml" in (tmp_path / "r.html").read_text(encoding="utf-8")


# --------------------------------------------------------------------------- silent acceptance


def _rows(n_cols=2):
    wl = np.arange(380, 781, 5)
    v = np.exp(-(((wl - 560) / 120.0) ** 2)) + 0.1
    return [f"{a},{b:.5f}" for a, b in zip(wl, v)]


@pytest.mark.parametrize("unit", ["km", "furlong", "cm", "mm", "m", "pixel", "inches"])
@pytest.mark.parametrize("where", ["header", "slash", "metadata"])
def test_unknown_wavelength_unit_is_refused_with_the_unit_named(tmp_path, capsys, unit, where):
    rows = "\n".join(_rows()) + "\n"
    if where == "header":
        text = f"wavelength ({unit}),value\n" + rows
    elif where == "slash":
        text = f"lambda/{unit},value\n" + rows
    else:
        text = f"# wavelength unit: {unit}\nwavelength,value\n" + rows
    f = tmp_path / "u.csv"
    f.write_text(text, encoding="utf-8")
    code, _out, err = run(["inspect", f], capsys)
    one_error_line(code, err, "u.csv", repr(unit), "unit")


@pytest.mark.parametrize("label", ["pixel", "Pixels", "px", "channel", "Channel no.", "ch", "index", "bin",
                                   "Pixel number", "data points", '"pixel"'])
def test_a_wavelength_column_labelled_as_another_axis_is_refused(tmp_path, capsys, label):
    """docs/input-files.md: axis labels that are not wavelengths (pixel, channel, index) are
    refused, never read as nm. A header 'pixel' alone (no bracket, slash or "in") was read as
    nanometres: a detector's pixel numbers 0-1023 became a 0-1023 nm spectrum (found by a
    review); with a bracketed unit it was already refused (test above)."""
    f = tmp_path / "p.csv"
    f.write_text(f"{label},counts\n" + "\n".join(_rows()) + "\n", encoding="utf-8")
    code, _out, err = run(["inspect", f], capsys)
    shown = " ".join(label.strip('"').split())
    one_error_line(code, err, "p.csv", repr(shown), "an axis that is not a wavelength")


@pytest.mark.parametrize("label", ["wavelength", "Wavelength (nm)", "lambda", "nm", "WL", "points of light (nm)"])
def test_wavelength_headers_are_not_taken_for_other_axes(tmp_path, label):
    from lumeval.spectra.read import read_spectra

    f = tmp_path / "p.csv"
    f.write_text(f"{label},counts\n" + "\n".join(_rows()) + "\n", encoding="utf-8")
    s = read_spectra(f)
    assert s.wavelengths_nm[0] == 380.0 and s.wavelengths_nm[-1] == 780.0


@pytest.mark.parametrize("header", ["wavelength (km) S0", "wavelength [km]   S0", "Wavelength (furlong) Irradiance (W/m2/nm)"])
def test_unknown_unit_in_a_white_space_header_is_refused(tmp_path, capsys, header):
    """White-space delimited files: a bracketed unit belongs to the header word before it, so the
    header is recognised (not taken as a preamble line) and its unit is judged."""
    f = tmp_path / "w.txt"
    f.write_text(header + "\n" + "\n".join(r.replace(",", " ") for r in _rows()) + "\n", encoding="utf-8")
    code, _out, err = run(["inspect", f], capsys)
    unit = "km" if "km" in header else "furlong"
    one_error_line(code, err, "w.txt", repr(unit), "unit")


def test_white_space_header_with_bracketed_units_is_read(tmp_path, capsys):
    f = tmp_path / "w.txt"
    f.write_text("Wavelength [nm] Irradiance [W/m2/nm]\n" + "\n".join(r.replace(",", " ") for r in _rows()) + "\n",
                 encoding="utf-8")
    from lumeval.spectra.read import read_spectra

    s = read_spectra(f)
    assert s.wavelengths_nm[0] == 380.0 and s.wavelengths_nm[-1] == 780.0  # nm, unscaled
    assert s.names == ("w",)  # a generic quantity header gives the file stem


@pytest.mark.parametrize("header", ["wavelength (nm),value", "Wavelength [nm] (measured),value", "wl (measured),value",
                                    "wavelength / nm,value", "lambda in nanometres,value"])
def test_known_or_no_unit_still_read(tmp_path, capsys, header):
    f = tmp_path / "u.csv"
    f.write_text(header + "\n" + "\n".join(_rows()) + "\n", encoding="utf-8")
    code, out, err = run(["inspect", f], capsys)
    assert code == 0, err
    from lumeval.spectra.read import read_spectra

    s = read_spectra(f)
    assert s.wavelengths_nm[0] == 380.0 and s.wavelengths_nm[-1] == 780.0  # read as nm, unscaled


@pytest.mark.parametrize(
    "digits, where",
    [("٠١٢٣٤٥٦٧٨٩", "all"), ("٠١٢٣٤٥٦٧٨٩", "one cell"), ("０１２３４５６７８９", "one row"), ("߀߁߂߃߄߅߆߇߈߉", "all")],
)
def test_non_ascii_digits_in_csv_are_refused(tmp_path, capsys, digits, where):
    tr = str.maketrans("0123456789", digits)
    rows = _rows()
    if where == "all":
        rows = [r.translate(tr) for r in rows]
    elif where == "one cell":
        a, b = rows[10].split(",")
        rows[10] = a + "," + b.translate(tr)
    else:
        rows[10] = rows[10].translate(tr)
    f = tmp_path / "d.csv"
    f.write_text("wavelength,value\n" + "\n".join(rows) + "\n", encoding="utf-8")
    code, _out, err = run(["inspect", f], capsys)
    one_error_line(code, err, "d.csv", "0-9")


def test_duplicate_json_keys_are_an_error(tmp_path, capsys):
    f = tmp_path / "s.json"
    wl = list(range(380, 781, 5))
    f.write_text(
        '{"format": "lumeval-spectra", "version": 1,\n'
        f' "wavelengths_nm": {json.dumps(wl)},\n'
        f' "spectra": [{{"name": "a", "values": {json.dumps([1.0] * len(wl))}, "name": "b"}}]}}\n',
        encoding="utf-8",
    )
    code, _out, err = run(["inspect", f], capsys)
    one_error_line(code, err, "s.json:3", "'name' appears twice")


def test_json_huge_integer_message_has_no_python_advice(tmp_path, capsys):
    f = tmp_path / "s.json"
    f.write_text('{"format": "lumeval-spectra", "version": 1, "x": ' + "9" * 5000 + "}", encoding="utf-8")
    code, _out, err = run(["inspect", f], capsys)
    one_error_line(code, err, "s.json")
    assert "sys." not in err and "int_max_str_digits" not in err
    assert len(err) < 300


def _tm27(comments: str, sd_attrs: str = "", extra_sd: str = "") -> str:
    data = "".join(f'<SpectralData wavelength="{w}">{v:.4f}</SpectralData>'
                   for w, v in zip(range(380, 781, 5), np.exp(-(((np.arange(380, 781, 5) - 560) / 120.0) ** 2)) + 0.1))
    return (
        '<?xml version="1.0"?>\n<IESTM2714 xmlns="http://www.ies.org/iestm2714" xmlns:lumeval="urn:lumeval:tm27" version="1.0">\n'
        f"<Header><Description>Lamp A</Description><Comments>{comments}</Comments></Header>\n"
        f"<SpectralDistribution {sd_attrs}><SpectralQuantity>relative</SpectralQuantity>{extra_sd}{data}"
        "</SpectralDistribution></IESTM2714>\n"
    )


def test_tm27_comment_lines_cannot_set_lumeval_fields(tmp_path, capsys):
    f = tmp_path / "a.xml"
    f.write_text(_tm27("lumeval.name: Forged\nLumeval.Scale: absolute\nlumeval.value_unit: W\noperator: Kim",
                       extra_sd="<lumeval.name>Forged too</lumeval.name>"), encoding="utf-8")
    code, out, err = run(["inspect", f, "--format", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    text = json.dumps(doc)
    assert "Lamp A" in text and '"Forged' not in text.replace("lumeval.name: Forged", "")
    from lumeval.spectra.read import read_spectra

    s = read_spectra(f)
    assert s.names == ("Lamp A",)
    assert s.metadata[0]["lumeval.scale"] == "relative"  # from SpectralQuantity, not from Comments
    assert s.metadata[0]["operator"] == "Kim"
    assert "lumeval.name: Forged" in s.metadata[0]["Comments"]  # kept as the file's text


def test_tm27_comment_lines_cannot_set_or_join_tm27_fields(tmp_path):
    """Comments lines keyed like a TM-27 field (any case or spacing) stay text of the comments:
    "Description: Forged" joined the name (the spectrum was named "Lamp A\nForged"), and
    "SpectralQuantity: irradiance" set the scale where the element was absent (found by a
    review); other keys are still read as metadata."""
    from lumeval.spectra.read import read_spectra

    lines = "Description: Forged\nmanufacturer: Other Co\nSpectral Quantity: irradiance\nComments: nested\noperator: Kim"
    f = tmp_path / "a.xml"
    f.write_text(_tm27(lines), encoding="utf-8")
    s = read_spectra(f)
    assert s.names == ("Lamp A",) and s.metadata[0]["Description"] == "Lamp A"
    assert "manufacturer" not in s.metadata[0] and "Manufacturer" not in s.metadata[0]
    assert s.metadata[0]["operator"] == "Kim"
    assert s.metadata[0]["Comments"] == "Description: Forged\nmanufacturer: Other Co\nSpectral Quantity: irradiance\nComments: nested"
    g = tmp_path / "b.xml"  # no SpectralQuantity element: a comment line does not give the scale
    g.write_text(_tm27("SpectralQuantity: irradiance").replace("<SpectralQuantity>relative</SpectralQuantity>", ""),
                 encoding="utf-8")
    assert read_spectra(g).metadata[0]["lumeval.scale"] == "unknown"


def test_tm27_lumeval_writer_fields_round_trip(tmp_path, capsys):
    from lumeval.spectra.model import SpectrumSet
    from lumeval.spectra.read import read_spectra
    from lumeval.spectra.write import write_spectra

    wl = np.arange(380.0, 781.0, 5.0)
    s = SpectrumSet(wl, np.ones((1, wl.size)), ("my lamp",), ("x",),
                    metadata=({"Description": "catalogue text", "lumeval.scale": "absolute", "lumeval.value_unit": "W/m2/nm"},))
    write_spectra(s, tmp_path / "r.xml")
    back = read_spectra(tmp_path / "r.xml")
    assert back.names == ("my lamp",)
    assert back.metadata[0]["lumeval.scale"] == "absolute" and back.metadata[0]["Description"] == "catalogue text"
    assert "lumeval." not in (back.metadata[0].get("Comments") or "")


# --------------------------------------------------------------------------- documented keys


def test_draws_block_documented_key_is_accepted(tmp_path):
    """docs/uncertainty.md names `draws_block` in [monte_carlo]: the loader accepts it."""
    from lumeval.uncertainty.instrument import settings_from_table

    st = settings_from_table({"draws": "adaptive", "draws_block": 500, "max_draws": 4000})
    assert st.adaptive and st.draws_block == 500 and st.max_draws == 4000


@pytest.mark.parametrize(
    "table, needle",
    [
        ("draws = 2000\ndraws_block = 500", "only to the adaptive"),
        ("draws_block = 500", "only to the adaptive"),
        ('draws = "adaptive"\ndraws_block = 50', "from 100 to"),
        ('draws = "adaptive"\ndraws_block = 1000000', "from 100 to"),
        ('draws = "adaptive"\nmax_draws = 1000\ndraws_block = 800', "from 100 to 500"),
    ],
)
def test_draws_block_bad_use_is_one_line(tmp_path, capsys, table, needle):
    spd = write_spd(tmp_path / "a.csv")
    inst = tmp_path / "inst.toml"
    inst.write_text(f"[instrument]\nnoise_relative = 0.01\n\n[monte_carlo]\n{table}\n", encoding="utf-8")
    crit = tmp_path / "c.toml"
    crit.write_text(CRITERIA, encoding="utf-8")
    code, _out, err = run(["check", spd, "--criteria", crit, "--instrument", inst], capsys)
    one_error_line(code, err, "inst.toml", "draws_block", needle)


# --------------------------------------------------------------------------- absurd or contradictory criteria


@pytest.mark.parametrize("tol", ["1e9", "1e300", "3000", "0.001", "1e-300"])
@pytest.mark.parametrize("command", ["check", "lot"])
def test_flexible_quadrangle_absurd_tolerance_is_refused(tmp_path, capsys, tol, command):
    spd = write_spd(tmp_path / "a.csv")
    crit = tmp_path / "c.toml"
    crit.write_text(f'[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = "flexible"\ntarget_cct_K = 3000\ntolerance_K = {tol}\n',
                    encoding="utf-8")
    code, _out, err = run([command, spd, "--criteria", crit, *(["--quiet"] if command == "lot" else [])], capsys)
    one_error_line(code, err, "c.toml:5", "tolerance_K", "1000-25000 K")  # the CCT range lumeval reports
    assert "Warning" not in err


@pytest.mark.parametrize("tol", ["1", "1999"])
def test_flexible_quadrangle_wide_but_valid_tolerance_judges_without_numpy_warnings(tmp_path, tol):
    write_spd(tmp_path / "a.csv")
    (tmp_path / "c.toml").write_text(
        f'[[clause]]\nkind = "ansi_quadrangle"\nnominal_cct = "flexible"\ntarget_cct_K = 3000\ntolerance_K = {tol}\n', encoding="utf-8")
    code, out, err = run_sub(["check", "a.csv", "--criteria", "c.toml"], tmp_path, timeout=120)
    assert code in (0, 1), err
    assert err.strip() == "", err  # no RuntimeWarning or anything else on stderr


@pytest.mark.parametrize(
    "clauses, needles",
    [
        ('[[clause]]\nid = "a"\nfigure = "Ra"\nmin = 95\n\n[[clause]]\nid = "b"\nfigure = "Ra"\nmax = 90\n', ["'a'", "'b'", "Ra"]),
        ('[[clause]]\nid = "a"\nfigure = "R9"\nrange = [0, 10]\n\n[[clause]]\nid = "b"\nfigure = "R9"\nmin = 50\n', ["'a'", "'b'"]),
    ],
    ids=["Ra-min-max", "R9-range-min"],
)
def test_contradictory_clauses_are_an_error(tmp_path, capsys, clauses, needles):
    spd = write_spd(tmp_path / "a.csv")
    crit = tmp_path / "c.toml"
    crit.write_text(clauses, encoding="utf-8")
    code, _out, err = run(["check", spd, "--criteria", crit], capsys)
    one_error_line(code, err, "c.toml:", "contradict", *needles)


def test_disjoint_quadrangles_give_a_loud_warning(tmp_path, capsys):
    spd = write_spd(tmp_path / "a.csv")
    crit = tmp_path / "c.toml"
    crit.write_text('[[clause]]\nid = "q1"\nkind = "ansi_quadrangle"\nnominal_cct = 3000\n\n'
                    '[[clause]]\nid = "q2"\nkind = "ansi_quadrangle"\nnominal_cct = 4000\n', encoding="utf-8")
    code, out, err = run(["check", spd, "--criteria", crit, "--format", "json"], capsys)
    assert code == 1, err  # every spectrum fails one of the two
    warn = [ln for ln in err.splitlines() if ln.startswith("lumeval: warning: ")]
    assert len(warn) == 1 and "'q1'" in warn[0] and "'q2'" in warn[0] and "no chromaticity in common" in warn[0]
    assert "c.toml:6" in warn[0]
    assert any("WARNING" in n and "no chromaticity in common" in n for n in json.loads(out)["notes"])
    code, out, err = run(["check", spd, "--criteria", crit], capsys)
    assert "WARNING" in out and "contradict" in " ".join(out.split())


@pytest.mark.parametrize(
    "clauses",
    [
        '[[clause]]\nid = "a"\nfigure = "Ra"\nrange = [80, 90]\n\n[[clause]]\nid = "b"\nfigure = "Ra"\nmin = 90\n',
        '[[clause]]\nid = "q1"\nkind = "ansi_quadrangle"\nnominal_cct = 3000\n\n'
        '[[clause]]\nid = "q2"\nkind = "ansi_quadrangle"\nnominal_cct = "flexible"\ntarget_cct_K = 3100\n',
    ],
    ids=["meeting-at-one-value", "overlapping-quadrangles"],
)
def test_overlapping_clauses_are_kept(tmp_path, capsys, clauses):
    spd = write_spd(tmp_path / "a.csv")
    crit = tmp_path / "c.toml"
    crit.write_text(clauses, encoding="utf-8")
    code, out, err = run(["check", spd, "--criteria", crit], capsys)
    assert code in (0, 1), err
    assert "contradict" not in err


def test_lot_yield_without_per_sample_clause_says_why(tmp_path, capsys):
    lot = tmp_path / "lot"
    lot.mkdir()
    write_spd(lot / "s1.csv")
    write_spd(lot / "s2.csv", 8)
    crit = tmp_path / "c.toml"
    crit.write_text('[[clause]]\nid = "Y"\nkind = "lot_yield"\nmin_percent = 90\n', encoding="utf-8")
    code, doc, out, err = _lot_json(tmp_path, capsys, lot, "--criteria", crit)
    assert code == 1, err  # not judged is not a pass
    (y,) = [c for c in doc["verdict"]["lot_clauses"] if c["id"] == "Y"]
    assert y["outcome"] == "not judged"
    assert "no per-sample clause" in y["reason"]
    assert "no per-sample clause" in " ".join(out.split())


# --------------------------------------------------------------------------- names (issue 13 item 4)


@pytest.mark.parametrize(
    "header",
    ["Spectral irradiance [W/(m²·nm)]", "irradiance", "W/(m²·nm)", "Intensity (a.u.)", "counts", "mW/m2/nm",
     "Radiance [W/(sr·m²·nm)]", "E(λ) [W/(m²nm)]", "relative spectral power"],
)
def test_generic_value_header_names_the_spectrum_by_file_stem(tmp_path, capsys, header):
    f = tmp_path / "bench_lamp_07.csv"
    f.write_text(spectrum_text(header=f"Wavelength [nm],{header}"), encoding="utf-8")
    code, out, err = run(["inspect", f, "--format", "json"], capsys)
    assert code == 0, err
    assert [s["name"] for s in json.loads(out)["spectra"]] == ["bench_lamp_07"]


@pytest.mark.parametrize("header", ["Lamp A", "LED 3000K", "Sample 1", "candidate_A"])
def test_a_real_name_in_the_header_is_kept(tmp_path, capsys, header):
    f = tmp_path / "x.csv"
    f.write_text(spectrum_text(header=f"wavelength,{header}"), encoding="utf-8")
    code, out, err = run(["inspect", f, "--format", "json"], capsys)
    assert code == 0, err
    assert [s["name"] for s in json.loads(out)["spectra"]] == [header]


def test_names_unique_within_a_run_with_a_note(tmp_path, capsys):
    for sub, shift in (("a", 0), ("b", 5), ("c", 10)):
        (tmp_path / sub).mkdir()
        write_spd(tmp_path / sub / "lamp.csv", shift)
    files = [tmp_path / s / "lamp.csv" for s in "abc"]
    code, out, err = run(["inspect", *files, "--format", "json"], capsys)
    assert code == 0, err
    spectra = json.loads(out)["spectra"]
    assert [s["name"] for s in spectra] == ["lamp", "lamp (2)", "lamp (3)"]
    assert not any("another spectrum" in w for w in spectra[0]["warnings"])
    assert any("'lamp (2)'" in w and "already named 'lamp'" in w for w in spectra[1]["warnings"])
    # the lot: same rule, sources untouched
    code, doc, _out, err = _lot_json(tmp_path, capsys, str(tmp_path / "**" / "lamp.csv"))
    assert code == 0, err
    assert [s["name"] for s in doc["samples"]] == ["lamp", "lamp (2)", "lamp (3)"]
    assert [Path(s["source"]).parent.name for s in doc["samples"]] == ["a", "b", "c"]


def test_lot_unreadable_and_skipped_names_are_never_markup(tmp_path, capsys):
    """File names and link targets in the lot's lists print literally: no rich markup (an
    unmatched closing tag would stop the report), no control characters."""
    lot = tmp_path / "lot"
    lot.mkdir()
    write_spd(lot / "ok.csv")
    os.symlink("gone[/]x", lot / "d.csv")  # a link target with a closing tag and nothing open
    os.symlink("gone2", lot / "[bold]e.csv")
    (lot / "f\x1b[2Jx.csv").mkdir()  # ESC in a name
    code, out, err = run(["lot", lot, "--quiet"], capsys)
    assert code == 2 and "Traceback" not in err and "internal error" not in err, err
    flat = "".join(out.split())
    assert "'gone[/]x'" in flat and "[bold]e.csv" in flat
    assert "\x1b" not in out and "\\x1b[2J" in flat


@pytest.mark.parametrize("argv", [
    ["criteria", "new", "c.toml", "--project", "Caf\udce9"],
    ["criteria", "new", "c.toml", "--force", "--project", "Caf\udce9"],
    ["series", "s_2700.csv", "s_3500.csv", "--unit", "K\udce9", "--html", "s.html"],
    ["series", "s_2700.csv", "s_3500.csv", "--setting-key", "k\udce9", "--setting-from", "metadata"],
])
def test_text_options_that_are_not_utf8_are_refused(tmp_path, argv):
    """A text option written into the outputs (a project name, a unit, a metadata field) that is
    not UTF-8 (undecodable bytes from the command line, here b'\\xe9' as Python receives it) is
    refused before any work: one line, exit 2, nothing written. It was an internal error, exit
    3: 'criteria new' could not encode the file, 'series --html' crashed in the plot's text
    layout (found by a review)."""
    write_spd(tmp_path / "s_2700.csv")
    write_spd(tmp_path / "s_3500.csv", shift=5.0)
    code, out, err = run_sub(argv, tmp_path, timeout=120)
    option = argv[argv.index(next(a for a in argv if "\udce9" in a)) - 1]
    one_error_line(code, err, "is not UTF-8 text", option)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s_2700.csv", "s_3500.csv"]


def test_a_very_long_spectrum_name_is_shortened_in_figures_only(tmp_path):
    """A 20,000-character column header (a spectrum name; text from a file) took 11 s of text
    layout per report and squeezed the plot axes to nothing, with matplotlib's warnings on
    standard error (200,000 characters: 84 s and 1 GB; found by a review). Figures now show at
    most PLOT_TEXT_MAX characters of it, its middle left out ("…"); the report's tables and the
    JSON keep it whole; nothing is printed on standard error but the written files."""
    from lumeval.render.plots import PLOT_TEXT_MAX

    name = "N" * 20000
    write_spd(tmp_path / "long.csv")
    text = (tmp_path / "long.csv").read_text(encoding="utf-8").splitlines()
    (tmp_path / "long.csv").write_text("\n".join([f"wavelength (nm),{name}", *text[1:]]) + "\n", encoding="utf-8")
    code, out, err = run_sub(["inspect", "long.csv", "--html", "r.html", "--plots", "p", "-f", "json", "--quiet"],
                             tmp_path, timeout=300)
    assert code == 0, err
    assert err == "", err
    assert json.loads(out)["spectra"][0]["name"] == name
    assert name in (tmp_path / "r.html").read_text(encoding="utf-8")  # the tables: whole
    svgs = list((tmp_path / "p").glob("*.svg"))
    assert svgs
    short = "N" * (PLOT_TEXT_MAX // 2) + "…" + "N" * ((PLOT_TEXT_MAX - 1) // 2)
    for svg in svgs:
        body = svg.read_text(encoding="utf-8")
        assert "N" * PLOT_TEXT_MAX not in body, svg.name
    assert any(short in s.read_text(encoding="utf-8") for s in svgs)


@pytest.mark.skipif(sys.platform == "darwin" or os.name == "nt", reason="needs a file system that takes any bytes in names")
def test_undecodable_name_bytes_show_as_the_replacement_character_everywhere(tmp_path):
    """Undecodable bytes of a file name (or of a text option) show as U+FFFD in every message,
    as docs/input-files.md says: the store's name in 'recorded as lot 1 in …', series' "no number
    in the file name" and convert's "no spectrum named" printed '\\udcff' (found by a review)."""
    write_spd(tmp_path / "a.csv")
    os.link(tmp_path / "a.csv", os.path.join(os.fsencode(tmp_path), b"s_\xff.csv"))
    odd = os.fsdecode(b"s_\xff.csv")
    code, _, err = run_sub(["series", odd, "a.csv"], tmp_path, timeout=120)
    line = one_error_line(code, err, "s_\ufffd.csv", "'s_\ufffd'")
    assert "\\udc" not in line
    code, _, err = run_sub(["convert", "a.csv", "out.csv", "--column", os.fsdecode(b"x\xff")], tmp_path, timeout=120)
    line = one_error_line(code, err, "no spectrum named 'x\ufffd'")
    assert "\\udc" not in line
    code, _, err = run_sub(["lot", "a.csv", "--store", os.fsdecode(b"u\xe9.db")], tmp_path, timeout=120)
    assert code == 0, err
    assert "recorded as lot 1 in u\ufffd.db" in err and "\\udc" not in err


@pytest.mark.skipif(sys.platform == "darwin" or os.name == "nt", reason="needs a file system that takes any bytes in names")
def test_more_messages_and_store_urls_with_undecodable_bytes(tmp_path):
    """The messages a review found still printing '\\udcff' (series' "holds several numbers",
    `history trend --figure`, `history list --since`), and a store URL with undecodable bytes,
    which was an internal error (exit 3) in the URL parser: one clean line each, U+FFFD, no
    password shown."""
    write_spd(tmp_path / "a.csv")
    os.link(tmp_path / "a.csv", os.path.join(os.fsencode(tmp_path), b"lamp\xff_3000K_50pct.csv"))
    odd = os.fsdecode(b"lamp\xff_3000K_50pct.csv")
    code, _, err = run_sub(["series", odd, "a.csv"], tmp_path, timeout=120)
    line = one_error_line(code, err, "'lamp\ufffd_3000K_50pct' holds several numbers")
    assert "\\udc" not in line
    record = run_sub(["lot", "a.csv", "--store", "h.db", "-q"], tmp_path, timeout=120)
    assert record[0] == 0, record[2]
    for argv, needle in ((["history", "trend", "--store", "h.db", "--figure", os.fsdecode(b"R\xff9")], "'R\ufffd9'"),
                         (["history", "list", "--store", "h.db", "--since", os.fsdecode(b"2020\xff")], "'2020\ufffd'"),
                         (["lot", "a.csv", "--store", os.fsdecode(b"sqlite:///u\xff.db")], "the store URL is not UTF-8"),
                         (["history", "list", "--store", os.fsdecode(b"postgresql://u:secret\xff@h/db")], "u:***@h/db")):
        code, _, err = run_sub(argv, tmp_path, timeout=120)
        line = one_error_line(code, err, needle)
        assert "\\udc" not in line and "secret" not in line
    assert not any(p.name.startswith("u") for p in tmp_path.iterdir())  # the refused store was not created


def test_clean_shows_lone_surrogates_as_the_replacement_character():
    from lumeval.render.safe import clean, csv_text, html_value

    assert clean("bad\udcff name\x1b") == "bad\ufffd name\\x1b"
    assert csv_text("=x\ud800") == "'=x\ufffd"
    assert "\ufffd" in str(html_value("a\udcffb"))


def test_figure_text_keeps_the_ends_that_tell_names_apart():
    """Long names cut in figures keep their beginning and end: names of a lot's samples usually
    differ at the end ("..._lamp_0001", "..._lamp_0002"), which a cut at the end made identical
    (found by a review)."""
    from lumeval.render.plots import PLOT_TEXT_MAX, _lit

    a, b = (_lit(f"production_line_7_station_B_sample_lamp_{k:04d}") for k in (1, 2))
    assert a != b and len(a) == len(b) == PLOT_TEXT_MAX and a.endswith("0001") and a.startswith("production_")
    assert _lit("short name") == "short name"


@pytest.mark.skipif(sys.platform == "darwin" or os.name == "nt", reason="needs a file system that takes any bytes in names")
def test_parser_messages_show_undecodable_bytes_as_the_replacement_character(tmp_path):
    """The argument parser's own messages (an unknown command, a value not among the choices)
    quoted undecodable bytes as '\\udcff' (found by a review); `lot --trend-figures` with an
    unknown figure named '--figure' as the field."""
    write_spd(tmp_path / "a.csv")
    for argv, needle in (([os.fsdecode(b"hist\xff")], "No such command 'hist\ufffd'"),
                         (["inspect", "a.csv", "-f", os.fsdecode(b"js\xff")], "'js\ufffd' is not one of"),
                         (["lot", "a.csv", "--store", "h.db", "--trend-figures", os.fsdecode(b"R\xff9")],
                          "field '--trend-figures': unknown figure 'R\ufffd9'")):
        code, _, err = run_sub(argv, tmp_path, timeout=120)
        line = one_error_line(code, err, needle)
        assert "\\udc" not in line
    assert not (tmp_path / "h.db").exists()
    # the byte at the cut of a long value: replaced before the quote is shortened (it left '\\u…')
    code, _, err = run_sub(["inspect", "a.csv", "-f", "a" * 78 + os.fsdecode(b"\xff")], tmp_path, timeout=120)
    line = one_error_line(code, err, "a" * 78 + "\ufffd")
    assert "\\u" not in line
    # text typed as a backslash and "udcff" is shown as typed (repr doubles the backslash)
    code, _, err = run_sub(["inspect", "a.csv", "-f", "x\\udcff"], tmp_path, timeout=120)
    one_error_line(code, err, "'x\\\\udcff' is not one of")
