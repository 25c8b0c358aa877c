"""Bad input through the real CLI: exit code 2, one clean line, no traceback, nothing written.

Every case here was found by driving the installed commands with bad input (an audit of the
error paths); each was an internal error, a silently ignored option or a destroyed input
before it was fixed. The cases run ``lumeval.cli.main([...])`` in-process (fast) and one
runs the console script through a subprocess to cover the real entry point. No numeric
check here: these tests assert behaviour (exit code, message shape, files untouched).
"""

from __future__ import annotations

import hashlib
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from .conftest import assert_clean_error
from .conftest import run_cli_in_process as run

ROOT = Path(__file__).resolve().parents[1]
SPD = ROOT / "spectra_demo" / "downlights" / "candidate_A_aurora_3000K.csv"

CRITERIA = 'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 90\n'
CLAIMS = 'lumeval_claims = 1\n[claims]\nRa = ">= 90"\n'


def digest(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.fixture
def work(tmp_path):
    spd = tmp_path / "lamp.csv"
    shutil.copyfile(SPD, spd)
    crit = tmp_path / "criteria.toml"
    crit.write_text(CRITERIA, encoding="utf-8")
    claims = tmp_path / "claims.toml"
    claims.write_text(CLAIMS, encoding="utf-8")
    return tmp_path, spd, crit, claims


# ----------------------------------------------------------------- outputs onto inputs

@pytest.mark.parametrize("which", ["spectrum", "criteria"])
@pytest.mark.parametrize("option", ["-o", "--html"])
def test_check_never_overwrites_an_input(work, capsys, which, option):
    tmp, spd, crit, _ = work
    target = spd if which == "spectrum" else crit
    before = digest(target)
    code, _, err = run(["check", spd, "-c", crit, option, target], capsys)
    assert_clean_error(code, err, "one of the input files")
    assert digest(target) == before


@pytest.mark.parametrize("which", ["spectrum", "claims"])
def test_claims_never_overwrites_an_input(work, capsys, which):
    tmp, spd, _, claims = work
    target = spd if which == "spectrum" else claims
    before = digest(target)
    code, _, err = run(["claims", spd, "--claims", claims, "-o", target], capsys)
    assert_clean_error(code, err, "one of the input files")
    assert digest(target) == before


def test_explain_never_overwrites_its_criteria(work, capsys):
    tmp, _, crit, _ = work
    before = digest(crit)
    code, _, err = run(["criteria", "explain", crit, "-o", crit], capsys)
    assert_clean_error(code, err, "one of the input files")
    assert digest(crit) == before


def test_inspect_html_never_overwrites_an_input(work, capsys):
    tmp, spd, _, _ = work
    before = digest(spd)
    code, _, err = run(["inspect", spd, "--html", spd], capsys)
    assert_clean_error(code, err, "one of the input files")
    assert digest(spd) == before


@pytest.mark.parametrize("option", ["--json", "--samples-csv", "--html"])
@pytest.mark.parametrize("how", ["file", "folder", "pattern"])
def test_lot_never_overwrites_an_input(work, capsys, option, how):
    tmp, spd, _, _ = work
    before = digest(spd)
    arg = {"file": spd, "folder": tmp, "pattern": str(tmp / "*.csv")}[how]
    code, _, err = run(["lot", arg, "-q", option, spd], capsys)
    assert_clean_error(code, err, "one of the input files")
    assert digest(spd) == before


@pytest.mark.parametrize("alias", ["symlink", "hardlink", "relative"])
def test_lot_never_overwrites_an_input_under_another_name(work, capsys, alias, monkeypatch):
    """The output names an input of the folder by a link or a relative path: still refused."""
    import os

    tmp, spd, _, _ = work
    before = digest(spd)
    if alias == "symlink":
        out = tmp.parent / "alias_out.csv"
        out.unlink(missing_ok=True)
        out.symlink_to(spd)
    elif alias == "hardlink":
        out = tmp.parent / "alias_hard.csv"
        out.unlink(missing_ok=True)
        os.link(spd, out)
    else:
        monkeypatch.chdir(spd.parent)
        out = spd.name
    code, _, err = run(["lot", str(tmp), "-q", "--samples-csv", str(out)], capsys)
    assert_clean_error(code, err, "one of the input files")
    assert digest(spd) == before


def test_two_options_naming_one_file(work, capsys):
    tmp, spd, crit, _ = work
    code, _, err = run(["lot", spd, "-q", "--json", tmp / "o.json", "--samples-csv", tmp / "o.json"], capsys)
    assert_clean_error(code, err, "both name")
    code, _, err = run(["check", spd, "-c", crit, "-o", tmp / "r.html", "--html", tmp / "r.html"], capsys)
    assert_clean_error(code, err, "both name")
    code, _, err = run(["check", spd, "-c", crit, "-o", tmp / "figs", "--plots", tmp / "figs"], capsys)
    assert_clean_error(code, err, "both name")
    assert not (tmp / "o.json").exists() and not (tmp / "r.html").exists() and not (tmp / "figs").exists()


# ----------------------------------------------------------------- unusable targets

def test_lot_output_under_a_file_is_a_clean_error(work, capsys):
    # was: internal error NotADirectoryError (exit 3)
    tmp, spd, _, _ = work
    for option in ("--samples-csv", "--json"):
        code, _, err = run(["lot", spd, "-q", option, spd / "x.csv"], capsys)
        assert_clean_error(code, err, option)


@pytest.mark.parametrize("argv", [
    ["check", "{spd}", "-c", "{crit}", "-o", "{spd}/x.json"],
    ["check", "{spd}", "-c", "{crit}", "-o", "{tmp}"],
    ["claims", "{spd}", "--claims", "{claims}", "-o", "{tmp}/missing/x.txt"],
    ["criteria", "explain", "{crit}", "-o", "{tmp}"],
    ["criteria", "new", "{tmp}", "--force"],
    ["inspect", "{spd}", "--plots", "{spd}"],
])
def test_unusable_targets(work, capsys, argv):
    tmp, spd, crit, claims = work
    before = sorted(p.name for p in tmp.iterdir())
    code, _, err = run([a.format(tmp=tmp, spd=spd, crit=crit, claims=claims) for a in argv], capsys)
    assert_clean_error(code, err)
    assert sorted(p.name for p in tmp.iterdir()) == before


# ----------------------------------------------------------------- conflicting options

def test_validate_only_with_html_is_refused(work, capsys):
    tmp, spd, _, _ = work
    code, _, err = run(["inspect", spd, "--validate-only", "--html", tmp / "r.html"], capsys)
    assert_clean_error(code, err, "--validate-only")
    assert not (tmp / "r.html").exists()


@pytest.mark.parametrize("extra", [["--seed", "3"], ["--draws", "500"]])
def test_seed_or_draws_without_uncertainty_is_refused(work, capsys, extra):
    # was: silently ignored (the user believed a Monte Carlo ran)
    tmp, spd, crit, _ = work
    code, _, err = run(["check", spd, "-c", crit, *extra], capsys)
    assert_clean_error(code, err, "--instrument")
    code, _, err = run(["lot", spd, "-q", *extra], capsys)
    assert_clean_error(code, err, "--instrument")


TUNABLE = ROOT / "spectra_demo" / "tunable"


@pytest.mark.parametrize("argv, option", [
    (["criteria", "new", "{out}", "--nominal-cct", "\u0663\u0660\u0660\u0660"], "--nominal-cct"),  # Arabic-Indic
    (["criteria", "new", "{out}", "--nominal-cct", "\uff13\uff10\uff10\uff10"], "--nominal-cct"),  # full-width
    (["criteria", "new", "{out}", "--nominal-cct", "3_000"], "--nominal-cct"),
    (["check", "{spd}", "-c", "{crit}", "-o", "{out}", "--draws", "5_00"], "--draws"),
    (["lot", "{spd}", "--samples-csv", "{out}", "--processes", "\u0661"], "--processes"),
    (["mix", str(TUNABLE / "tw2_channels.csv"), "--cct", "\u0663\u0660\u0660\u0660", "--html", "{out}"], "--cct"),
    (["mix", str(TUNABLE / "tw2_channels.csv"), "--cct", "3000:\uff14000:500", "--html", "{out}"], "--cct"),
    (["mix", str(TUNABLE / "tw2_channels.csv"), "--cct", "3000", "--duv", "\u0660", "--html", "{out}"], "--duv"),
    (["series", str(TUNABLE / "tw2_dim2warm_010pct.csv"), str(TUNABLE / "tw2_dim2warm_050pct.csv"),
      "--reference", "\u0665\u0660", "--html", "{out}"], "--reference"),
])
def test_numbers_on_the_command_line_take_the_digits_0_9_only(work, capsys, argv, option):
    """Python's int() and float() read other scripts' digits ('١٢٣', full-width '１２３') and
    underscores ('3_000'), so options took them (--cct ٣٠٠٠ mixed to 3000 K, --reference ٥٠ was
    setting 50) where every file reader refuses them (found by a review). Now a usage error naming
    the option, exit 2, nothing written."""
    tmp, spd, crit, _ = work
    out = tmp / "out.txt"
    code, stdout, err = run([a.format(spd=spd, crit=crit, out=out) for a in argv], capsys)
    assert_clean_error(code, err, option, "digits 0-9")
    assert stdout == "" and not out.exists()


def test_plain_number_follows_the_file_readers_rule():
    from numpy.testing import assert_allclose

    from lumeval.errors import UsageError, plain_number

    def fail(text):
        return UsageError(f"{text} is not a number")

    for text, want in ((" 3000 ", 3000.0), ("-0.002", -0.002), ("+1e3", 1000.0), (".5", 0.5)):
        assert_allclose(plain_number(text, fail), want, rtol=0, atol=0)  # exact: decimal text read by float()
    for text in ("\u0661\u0662\u0663", "\uff11\uff12\uff13", "1_000", "inf", "nan", "0x10", "", "3\u00a0000"):
        with pytest.raises(UsageError, match="is not a number"):
            plain_number(text, fail)


# ----------------------------------------------------------------- bad file contents

@pytest.mark.parametrize("claim", ['">= 1e999"', '"3 ± 1e999"', '"1e999"'])
def test_claim_too_large_to_represent(work, capsys, claim):
    # was: internal error OverflowError (exit 3)
    tmp, spd, _, claims = work
    claims.write_text(f"lumeval_claims = 1\n[claims]\nRa = {claim}\n", encoding="utf-8")
    code, _, err = run(["claims", spd, "--claims", claims], capsys)
    assert_clean_error(code, err, f"{claims.name}:3", "Ra")


def test_cct_claim_with_a_dot_as_thousands_separator_is_refused_at_load_time(work, capsys):
    # was: read as 3 K ± 150 K and contradicted (exit 1, a wrong verdict on the supplier)
    tmp, spd, _, claims = work
    claims.write_text('lumeval_claims = 1\n[claims]\nRa = ">= 80"\ncct_K = "3.000 K ± 150 K"\n', encoding="utf-8")
    out = tmp / "claims.html"
    code, stdout, err = run(["claims", spd, "--claims", claims, "--html", out], capsys)
    assert_clean_error(code, err, f"{claims.name}:4", "cct_K", "'3.000 K ± 150 K'", "did you mean 3000 K")
    assert stdout == "" and not out.exists()


def test_criteria_new_escapes_the_project_name(work, capsys):
    # was: a name with a quote, backslash or newline gave a criteria file that is not TOML
    tmp, spd, _, _ = work
    out = tmp / "new.toml"
    name = 'Hall "B" \\ annex\nphase 2'
    code, _, err = run(["criteria", "new", out, "--project", name], capsys)
    assert code == 0, err
    import tomllib

    assert tomllib.loads(out.read_text(encoding="utf-8"))["identification"]["project"] == name
    code, _, err = run(["check", spd, "-c", out], capsys)
    assert code in (0, 1), err


@pytest.mark.parametrize("body,needle", [
    ("lumeval_criteria = 1\n[[clause]\n", ":2:"),
    ("lumeval_criteria = 1\n[[clause]]\nid='x'\nfigure='Ra'\nmin=90\nbogus=1\n", "bogus"),
    ("lumeval_criteria = 1\n[[clause]]\nid='x'\nfigure='Ra'\nmin='ninety'\n", "min"),
    ("lumeval_criteria = 1\n[[clause]]\nid='x'\nfigure='Ra'\nmin=95\nmax=90\n", "min"),
    ("lumeval_criteria = 1\n[[clause]]\nid='x'\nfigure='Ra'\nmin=1e400\n", "finite"),
    ("", "no clauses"),
])
def test_bad_criteria_files(work, capsys, body, needle):
    tmp, spd, crit, _ = work
    crit.write_text(body, encoding="utf-8")
    for argv in (["check", spd, "-c", crit], ["criteria", "explain", crit], ["lot", spd, "-q", "-c", crit]):
        code, _, err = run(argv, capsys)
        assert_clean_error(code, err, needle)


@pytest.mark.parametrize("content", [b"", b"\x00\x01\x02binary\xff" * 50, b"wavelength,value\n550,1\n"])
def test_bad_spectrum_files_every_command(work, capsys, content):
    tmp, _, crit, claims = work
    bad = tmp / "bad.csv"
    bad.write_bytes(content)
    for argv in (["inspect", bad], ["check", bad, "-c", crit], ["claims", bad, "--claims", claims],
                 ["convert", bad, tmp / "o.xml"], ["lot", bad, "-q"]):
        code, _, err = run(argv, capsys)
        assert_clean_error(code, err, "bad.csv")
    assert not (tmp / "o.xml").exists()


def test_lot_with_only_unreadable_inputs_says_so_on_stderr(work, capsys):
    tmp, _, _, _ = work
    code, out, err = run(["lot", tmp / "nothing-here.csv", "-q"], capsys)
    assert_clean_error(code, err, "nothing-here.csv")


def test_real_console_script(work):
    """The installed entry point, not only main(): exit 2, one line, no traceback."""
    tmp, spd, crit, _ = work
    exe = Path(sys.executable).with_name("lumeval")
    cmd = [str(exe)] if exe.exists() else [sys.executable, "-m", "lumeval"]
    before = digest(spd)
    proc = subprocess.run([*cmd, "check", str(spd), "-c", str(crit), "-o", str(spd)],
                          capture_output=True, text=True, timeout=120)
    assert_clean_error(proc.returncode, proc.stderr, "one of the input files")
    assert digest(spd) == before


@pytest.mark.parametrize("limit", ["min = -1e300\nmax = 1e300", "min = -1e6", "max = 1e6", "max = -200"])  # (min = 200 on Ra is refused at load: above its largest value)
def test_far_off_limits_do_not_break_the_report_figures(work, capsys, limit):
    # was: internal error (matplotlib text transform overflow) or layout warnings on stderr
    tmp, spd, crit, _ = work
    crit.write_text("lumeval_criteria = 1\n" + "".join(
        f'[[clause]]\nid = "{f}"\nfigure = "{f}"\n{limit}\n' for f in ("Ra", "R9", "Rcs_h1", "Rf_h3")), encoding="utf-8")
    code, _, err = run(["check", spd, "-c", crit, "--html", tmp / "r.html", "--plots", tmp / "p", "--quiet"], capsys)
    assert code in (0, 1) and err == "", err
    assert (tmp / "r.html").stat().st_size > 0
    code, _, err = run(["lot", spd, spd.parent, "-q", "-c", crit, "--html", tmp / "lot.html"], capsys)
    assert code in (0, 1) and err == "", err


@pytest.mark.parametrize("argv", [
    ["inspect", "{spd}", "--html", "{long}.html"],
    ["inspect", "{spd}", "--plots", "{long}"],
    ["check", "{spd}", "-c", "{crit}", "-o", "{long}.json"],
    ["lot", "{spd}", "-q", "--json", "{long}.json"],
    ["convert", "{spd}", "{long}.csv"],
    ["criteria", "new", "{long}.toml"],
    ["criteria", "explain", "{crit}", "-o", "{long}.md"],
])
def test_output_name_too_long_for_the_file_system(work, capsys, argv):
    # was: internal error OSError ENAMETOOLONG (exit 3); 300 bytes exceed the 255-byte name
    # limit of common Linux/macOS/Windows file systems
    tmp, spd, crit, _ = work
    long = str(tmp / ("a" * 300))
    before = sorted(p.name for p in tmp.iterdir())
    code, _, err = run([a.format(spd=spd, crit=crit, long=long) for a in argv], capsys)
    assert_clean_error(code, err, "too long")
    assert sorted(p.name for p in tmp.iterdir()) == before


def test_names_outside_the_plot_font_keep_stderr_clean(work, capsys):
    # was: one matplotlib "Glyph ... missing from font" warning per character on stderr
    tmp, spd, _, _ = work
    lines = spd.read_text(encoding="utf-8").splitlines()
    named = tmp / "named.csv"
    named.write_text("\n".join(["wavelength_nm,照明 名前 «été»"] + lines[1:]) + "\n", encoding="utf-8")
    # a subprocess: inside pytest, warnings are recorded by pytest instead of printed
    exe = Path(sys.executable).with_name("lumeval")
    cmd = [str(exe)] if exe.exists() else [sys.executable, "-m", "lumeval"]
    proc = subprocess.run([*cmd, "inspect", str(named), "--html", str(tmp / "r.html"), "--plots", str(tmp / "p"), "--quiet"],
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0 and proc.stderr == "", proc.stderr
    assert "照明 名前 «été»" in (tmp / "r.html").read_text(encoding="utf-8")


@pytest.mark.parametrize("command", [["inspect"], ["check", "-c", "{crit}"], ["claims", "--claims", "{claims}"],
                                     ["convert", "{out}"]])
def test_a_folder_given_to_a_single_file_command_says_which_command_reads_folders(work, capsys, command):
    """`lumeval inspect FOLDER` (the lot's folder, as `lot` takes it) said "is a directory, not a
    file — name the spectrum file"; it now says how to name the files, and that `lot` reads
    folders. A folder of Parquet files is still read as one archive (tests/test_archive.py)."""
    tmp, spd, crit, claims = work
    folder = tmp / "lot"
    folder.mkdir()
    shutil.copyfile(spd, folder / "lamp.csv")
    out = tmp / "out.csv"
    rest = [a.format(crit=crit, claims=claims, out=out) for a in command[1:]]
    code, _, err = run([command[0], str(folder), *rest], capsys)
    assert_clean_error(code, err, "is a folder, not a spectrum file", "FOLDER/*.csv", "`lumeval lot` is the command")
    assert not out.exists()


def test_debug_adds_the_traceback_but_keeps_the_exit_code(work, capsys):
    """`--debug` only adds the traceback (README, docs/output-formats.md): bad input still exits
    2 and a bug still 3, never Python's 1 ("a requirement failed"), each with its usual line;
    the traceback's lines have their control characters escaped like every other line."""
    tmp, spd, crit, _ = work
    crit.write_text(CRITERIA.replace("min =", "mni ="), encoding="utf-8")
    for argv, line in ((["--debug", "inspect", "/nonexistent/lamp.csv"],
                        "lumeval: error: /nonexistent/lamp.csv: no such file — check the path"),
                       (["--debug", "check", spd, "-c", crit], "unknown key 'mni'")):
        code, out, err = run(argv, capsys)
        assert code == 2, err
        assert "Traceback (most recent call last)" in err and "Error" in err
        assert line in err.rstrip().splitlines()[-1]


def test_debug_shows_a_bug_with_exit_3(capsys, monkeypatch, tmp_path):
    import lumeval.api

    def broken(*a, **k):
        raise RuntimeError("boom \x1b[2J in a message")

    monkeypatch.setattr(lumeval.api, "inspect", broken)  # the command imports it when it runs
    spd = tmp_path / "lamp.csv"
    shutil.copyfile(SPD, spd)
    for argv, traced in ((["--debug", "inspect", spd], True), (["inspect", spd], False)):
        code, out, err = run(argv, capsys)
        assert code == 3, err
        assert ("Traceback (most recent call last)" in err) is traced
        assert "\x1b" not in err
        assert "lumeval: internal error: RuntimeError: boom" in err.splitlines()[-1]
