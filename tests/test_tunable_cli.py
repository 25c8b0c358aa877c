"""`lumeval mix` and `lumeval series` through the real CLI: outputs, exit codes, bad input.

Spectra are invented test data; numbers are not checked here (see test_tunable_mix.py and
test_tunable_series.py for the checks against independent references), only behaviour.
"""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from lumeval.render.tables import data_rows

from .conftest import assert_clean_error
from .conftest import run_cli_in_process as run

WL = np.arange(380.0, 781.0, 1.0)


def g(p, w):
    return np.exp(-0.5 * ((WL - p) / w) ** 2)


WARM = 0.35 * g(450, 10) + g(600, 45) + 0.3 * g(650, 25)
COOL = 2.0 * g(452, 10) + g(560, 50)


def write_wide(path: Path, cols: dict, wl=WL) -> Path:
    lines = ["wavelength_nm," + ",".join(cols)]
    for i, w in enumerate(wl):
        lines.append(f"{w:g}," + ",".join(f"{c[i]:.6f}" for c in cols.values()))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture
def chans(tmp_path):
    return write_wide(tmp_path / "channels.csv", {"warm": WARM, "cool": COOL})


RANGE_CRIT = """lumeval_criteria = 1
[[clause]]
id = "Ra"
figure = "Ra"
min = 50
over = [2000, 6000]
"""


def test_mix_json_csv_terminal(chans, capsys, tmp_path):
    code, out, err = run(["mix", chans, "--cct", "2800:5000:200", "--format", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["format"] == "lumeval.mix" and doc["channels"] == ["warm", "cool"]
    assert len(doc["settings"]) == 12
    s0 = doc["settings"][0]
    assert max(s0["weights"].values()) == 1.0
    assert set(s0["figures"]) >= {"cct_K", "duv", "cri", "tm30"}
    assert any("linear in radiant power" in n for n in doc["notes"])
    assert doc["cautions"]
    code, out, err = run(["mix", chans, "--cct", "3000,4000", "--format", "csv"], capsys)
    rows = data_rows(out)
    assert rows[0][:4] == ["setting", "label", "reachable", "target_duv"] and "w:warm" in rows[0] and "R9" in rows[0]
    assert len(rows) == 3
    code, out, err = run(["mix", chans, "--cct", "3000,4000"], capsys)
    assert code == 0 and "Channel mix" in out and "linear in radiant power" in out


def test_mix_unreachable_with_range_clause_exits_1(chans, capsys, tmp_path):
    crit = tmp_path / "c.toml"
    crit.write_text(RANGE_CRIT, encoding="utf-8")
    code, out, err = run(["mix", chans, "--cct", "2000:3000:500", "--criteria", crit, "--format", "json"], capsys)
    doc = json.loads(out)
    assert code == 1, err
    assert doc["settings"][0]["reachable"] is False and "not reachable" in doc["settings"][0]["not_reachable_reason"]
    cl = doc["criteria"]["clauses"][0]
    assert cl["range_outcome"] == "not judged" and cl["worst_setting"] == "2000 K"
    # the same targets without the unreachable one in range: exit 0
    crit.write_text(RANGE_CRIT.replace("[2000, 6000]", "[2500, 6000]"), encoding="utf-8")
    code, out, err = run(["mix", chans, "--cct", "2000:3000:500", "--criteria", crit], capsys)
    assert code == 0, out + err
    assert "not reachable" in out


def test_mix_html(chans, capsys, tmp_path):
    crit = tmp_path / "c.toml"
    crit.write_text(RANGE_CRIT, encoding="utf-8")
    html = tmp_path / "r.html"
    code, out, err = run(["mix", chans, "--cct", "2800:4000:400", "--criteria", crit, "--html", html], capsys)
    assert code == 0, err
    text = html.read_text(encoding="utf-8")
    assert 'data-figure="trajectory"' in text and 'data-figure="versus-setting"' in text
    import html5lib  # WHATWG parser, strict mode: the report parses without errors

    html5lib.HTMLParser(strict=True).parse(text)
    assert "Verdict over the range" in text and "http" not in text.split("<body>")[1].replace("http://www.w3.org", "")


def test_series_cli(tmp_path, capsys):
    d = tmp_path / "s"
    d.mkdir()
    files = []
    for level, w in ((100, 1.0), (50, 0.8), (10, 0.5)):
        files.append(write_wide(d / f"dim_{level:03d}pct.csv", {f"dim_{level:03d}pct": w * WARM + (1 - w) * COOL}))
    crit = tmp_path / "c.toml"
    crit.write_text('lumeval_criteria = 1\n[[clause]]\nid = "shift"\nkind = "series_shift"\nmax_delta_upvp = 0.004\n'
                    'over = [10, 100]\n', encoding="utf-8")
    code, out, err = run(["series", *files, "--criteria", crit, "--format", "json"], capsys)
    doc = json.loads(out)
    assert [s["setting"] for s in doc["settings"]] == [10.0, 50.0, 100.0] and doc["unit"] == "%"
    assert code == 1  # the 10 % and 50 % mixes move far from full output
    assert doc["criteria"]["clauses"][0]["worst_setting"] == "10 %"


@pytest.mark.parametrize("name, text, line", [
    ("m.csv", "file,setting,unit\n# dimming levels\ndim_100pct.csv,100,%\ndim_010pct.csv,10,%\n", 3),
    ("m.toml", '# dimming levels\nunit = "%"\n[settings]\n"dim_100pct.csv" = 100\n"dim_010pct.csv" = 10\n', 2),
], ids=["csv", "toml"])
def test_series_manifest_unit_and_a_different_unit_option_are_refused(tmp_path, capsys, name, text, line):
    """A manifest stating its settings' unit and ``--unit`` giving another: the option won
    silently (found by a review: 10 % and 100 % reported as 10 K and 100 K). Now refused, naming
    the manifest's line and the option, nothing written; the same unit on both is fine."""
    files = [write_wide(tmp_path / f"dim_{lv:03d}pct.csv", {"x": w * WARM + (1 - w) * COOL}) for lv, w in ((100, 1.0), (10, 0.5))]
    m = tmp_path / name
    m.write_text(text, encoding="utf-8")
    html = tmp_path / "out.html"
    code, out, err = run(["series", *files, "--manifest", m, "--unit", "K", "--html", html], capsys)
    assert_clean_error(code, err, f"{m}:{line}", "unit '%'", "--unit gives 'K'")
    assert out == "" and not html.exists()
    code, out, err = run(["series", *files, "--manifest", m, "--unit", "%", "--format", "json"], capsys)
    assert code == 0, err
    assert json.loads(out)["unit"] == "%"
    # a spelling of the same unit is the unit as the reports write it (was shown as "10 pct")
    code, out, err = run(["series", *files, "--manifest", m, "--unit", "pct", "--format", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["unit"] == "%" and doc["settings"][0]["label"] == "10 %", doc["settings"][0]


def test_cli_errors(tmp_path, capsys, chans):
    one = write_wide(tmp_path / "one.csv", {"warm": WARM})
    code, out, err = run(["mix", one, "--cct", "3000"], capsys)
    assert_clean_error(code, err, "at least two channels")
    zero = write_wide(tmp_path / "zero.csv", {"warm": WARM, "dead": 0 * WARM})
    code, out, err = run(["mix", zero, "--cct", "3000"], capsys)
    assert_clean_error(code, err, "zero.csv", "dead")
    code, out, err = run(["mix", chans, "--cct", "3000:2000:100"], capsys)
    assert_clean_error(code, err, "--cct")
    code, out, err = run(["mix", chans, "--cct", "3000", "--duv", "green"], capsys)
    assert_clean_error(code, err, "--duv")
    nameless = write_wide(tmp_path / "lamp.csv", {"lamp": WARM})
    other = write_wide(tmp_path / "lamp_50pct.csv", {"x": COOL})
    code, out, err = run(["series", nameless, other], capsys)
    assert_clean_error(code, err, "lamp.csv", "no number")
    code, out, err = run(["series", other, nameless, "--setting-from", "manifest"], capsys)
    assert_clean_error(code, err, "--manifest")


def test_channels_on_different_grids_are_joined_and_said_so(tmp_path, capsys):
    a = write_wide(tmp_path / "warm.csv", {"warm": WARM})
    wl5 = np.arange(380.0, 781.0, 5.0)
    b = write_wide(tmp_path / "cool.csv", {"cool": np.interp(wl5, WL, COOL)}, wl=wl5)
    code, out, err = run(["mix", a, b, "--cct", "3000", "--format", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert any("different wavelength grids" in n and "docs/input-files.md" in n for n in doc["notes"])


def test_help_lists_commands():
    proc = subprocess.run([sys.executable, "-m", "lumeval", "--help"], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0 and " mix " in proc.stdout and " series " in proc.stdout


def test_untrusted_channel_names(tmp_path, capsys, monkeypatch):
    """Names from files reach the terminal as inert text and CSV cells cannot start a formula."""
    p = write_wide(tmp_path / "c.csv", {"[bold red]warm\x1b[2J": WARM, "=cmd|x": COOL})
    code, out, err = run(["mix", p, "--cct", "3000"], capsys)
    assert code == 0, err
    assert "\x1b[2J" not in out and "[bold red]warm" in out
    a = write_wide(tmp_path / "=HYPERLINK_3000K.csv", {"x": WARM})
    b = write_wide(tmp_path / "plain_4000K.csv", {"y": COOL})
    monkeypatch.chdir(tmp_path)
    code, out, err = run(["series", a.name, b.name, "--format", "csv"], capsys)
    rows = list(csv.DictReader(io.StringIO(out)))
    assert rows[0]["source"] == "'=HYPERLINK_3000K.csv"  # OWASP CSV-injection guidance
    assert not rows[1]["source"].startswith("'")


def test_three_channels_ansi_duv_and_metadata_settings(tmp_path, capsys):
    cold = 2.6 * g(452, 10) + g(560, 50)
    green = g(525, 18)
    p = write_wide(tmp_path / "three.csv", {"warm": WARM, "cold": cold, "green": green})
    code, out, err = run(["mix", p, "--cct", "3000,4000", "--duv", "ansi", "--format", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    # ANSI C78.377-2017 flexible-CCT target Duv at 4000 K: 57700/T² − 44.6/T + 0.00854
    assert abs(doc["settings"][1]["target_duv"] - (57700 / 4000**2 - 44.6 / 4000 + 0.00854)) < 1e-12
    assert abs(doc["settings"][1]["figures"]["duv"] - doc["settings"][1]["target_duv"]) < 1e-4
    assert any("flexible-CCT target Duv" in n for n in doc["notes"])
    d = tmp_path / "m"
    d.mkdir()
    files = []
    for k, level in enumerate((30, 60, 90)):
        f = write_wide(d / f"run{k}.csv", {"x": WARM * (1 + k)})  # the number in the name is not the setting
        f.write_text(f"# dim level: {level} %\n" + f.read_text(), encoding="utf-8")
        files.append(f)
    code, out, err = run(["series", *files, "--setting-from", "metadata", "--setting-key", "dim level", "--format", "json"],
                         capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert [s["setting"] for s in doc["settings"]] == [30.0, 60.0, 90.0] and doc["unit"] == "%"


def test_mix_and_series_refuse_criteria_they_judge_no_clause_of(tmp_path, capsys, chans):
    """Criteria holding only lot clauses: mix and series judged nothing and exited 0 (a pass that
    judged nothing), where check and lot refuse such files; now exit 2 naming the command."""
    crit = tmp_path / "lot_only.toml"
    crit.write_text('lumeval_criteria = 1\n[[clause]]\nid = "spread"\nkind = "lot_max_pairwise"\n'
                    'max_delta_upvp = 0.004\n', encoding="utf-8")
    _refused_by_mix_and_series(tmp_path, capsys, chans, crit, "lot_only.toml", "`lumeval {command}`")


def _refused_by_mix_and_series(tmp_path, capsys, chans, crit, *needles) -> list:
    """Run mix and series (two dimming levels) with ``crit``: each exits 2 with one clean line
    holding every needle (``{command}`` filled in) and writes no HTML. Returns the series files."""
    d = tmp_path / "s"
    d.mkdir(exist_ok=True)
    files = [write_wide(d / f"dim_{lv:03d}pct.csv", {f"dim_{lv:03d}pct": w * WARM + (1 - w) * COOL})
             for lv, w in ((100, 1.0), (10, 0.5))]
    for argv, command in ((["mix", chans, "--cct", "3000"], "mix"), (["series", *files], "series")):
        out = tmp_path / f"{command}.html"
        code, stdout, err = run([*argv, "--criteria", crit, "--html", out], capsys)
        assert_clean_error(code, err, *(n.format(command=command) for n in needles))
        assert not out.exists()
    return files


def test_mix_csv_weight_heading_of_a_formula_like_name_is_the_name(tmp_path, capsys):
    """The weight column is headed 'w:' + the channel's name; the cell does not begin with a
    formula character, so the name stays as written (an apostrophe was put inside it:
    'w:'=HYPERLINK(...)'), while a control character is still made visible."""
    chans = write_wide(tmp_path / "c.csv", {"=HYPERLINK(1)": WARM, "cool\x1b[31m": COOL})
    code, out, err = run(["mix", chans, "--cct", "3000", "--format", "csv"], capsys)
    assert code == 0, err
    head = next(csv.reader(io.StringIO(out)))
    assert "w:=HYPERLINK(1)" in head
    assert not any("\x1b" in h for h in head)


@pytest.mark.parametrize("tables,line", [
    ('[instrument]\nnoise_relative = 0.01\n', 6),
    ('[monte_carlo]\ndraws = 500\n[instrument]\nnoise_relative = 0.01\n', 8),
    ('[decision]\nrule = "guarded-acceptance"\n', 6),
])
def test_mix_and_series_refuse_criteria_asking_for_uncertainty(tmp_path, capsys, chans, tables, line):
    """mix and series judge the computed values (simple acceptance): a criteria file whose
    [instrument] or [monte_carlo] table or guarded [decision] rule asks for a judgement under
    measurement uncertainty was judged without it, silently; now exit 2 naming the file and the
    table's line, and no output is written. A [decision] table with the simple rule, or a
    [monte_carlo] table alone (which asks for nothing: check is then the plain check), is
    accepted."""
    body = 'lumeval_criteria = 1\n[[clause]]\nid = "ra"\nfigure = "Ra"\nmin = 10\n'
    crit = tmp_path / "unc.toml"
    crit.write_text(body + tables, encoding="utf-8")
    files = _refused_by_mix_and_series(tmp_path, capsys, chans, crit, f"unc.toml:{line}", "`lumeval {command}` does not make")
    for plain in ('[decision]\nrule = "simple"\n', '[monte_carlo]\ndraws = 500\n'):
        simple = tmp_path / "simple.toml"
        simple.write_text(body + plain, encoding="utf-8")
        code, stdout, err = run(["series", *files, "--criteria", simple], capsys)
        assert code in (0, 1) and "Traceback" not in err and "error" not in err, err


def test_mix_refuses_a_series_shift_reference_that_is_no_target(tmp_path, capsys, chans):
    """A series_shift clause whose reference (3500 K) is none of mix's target CCTs was reported
    'not judged' (exit 1), where series refuses such a reference; now mix refuses it too, naming
    the clause's line and the targets, before any work (exit 2, no output). A reference among
    the targets is judged."""
    crit = tmp_path / "ref.toml"
    body = ('lumeval_criteria = 1\n[[clause]]\nid = "shift"\nkind = "series_shift"\nmax_delta_upvp = 0.05\n'
            "reference = {ref}\n")
    crit.write_text(body.format(ref=3500), encoding="utf-8")
    out = tmp_path / "mix.html"
    code, stdout, err = run(["mix", chans, "--cct", "3000,4000", "--criteria", crit, "--html", out], capsys)
    assert_clean_error(code, err, "ref.toml:2", "'shift'", "3500", "3000 K, 4000 K")
    assert not out.exists()
    crit.write_text(body.format(ref=3000), encoding="utf-8")
    code, stdout, err = run(["mix", chans, "--cct", "3000,4000", "--criteria", crit, "--format", "json"], capsys)
    assert code in (0, 1) and "error" not in err, err
    doc = json.loads(stdout)
    assert doc["criteria"]["clauses"][0]["range_outcome"] in ("pass", "fail")  # judged
