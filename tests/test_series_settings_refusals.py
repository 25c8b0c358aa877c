"""`lumeval series`: settings that cannot be read honestly are refused, and the per-setting
notes quote each setting's own numbers (all found by a review of the series command).

* A comma between digits in a setting ("drv_1,050mA.csv", "# setting: 1,5 %", a manifest's
  1,050) was read as a decimal mark: 1050 mA became 1.05 mA and the full-output reference moved
  to another spectrum. It is refused, as claims refuse "1,500".
* ``--unit mA`` relabelled settings written in % in the file names.
* A manifest entry for a file not given was ignored (a missing measurement went unnoticed).
* A negative dimming level or drive current was accepted.
* A series_shift clause whose reference names no setting was "not judged" (exit 1), where
  ``--reference`` with the same value is refused (exit 2).
* The "values below zero" note grouped settings and quoted the first one's count for all.

Spectra are invented test data (Gaussian LED models); only behaviour is checked here.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from lumeval.errors import InputError
from lumeval.tunable.series import setting_from_text

from .conftest import assert_clean_error
from .conftest import run_cli_in_process as run

WL = np.arange(380.0, 781.0, 1.0)


def spd(shift: float = 0.0) -> np.ndarray:
    def g(p, w):
        return np.exp(-0.5 * ((WL - p) / w) ** 2)

    return 0.5 * g(450, 10) + g(580 + shift, 50) + 0.2 * g(640, 20)


def write(path: Path, values=None, meta: dict | None = None) -> Path:
    values = spd() if values is None else values
    lines = [f"# {k}: {v}" for k, v in (meta or {}).items()]
    lines.append("wavelength_nm,value")
    lines += [f"{w:.0f},{v:.6f}" for w, v in zip(WL, values)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture
def dim(tmp_path):
    """Three spectra of a dimmed product, the setting in each file name (%)."""
    return [write(tmp_path / f"dim_{lv}pct.csv", spd(s)) for lv, s in ((100, 0.0), (50, 3.0), (10, 8.0))]


def refused(argv, capsys, tmp_path, *needles) -> str:
    """Run ``lumeval series ARGV --html OUT``: one clean error line holding every needle, exit
    code 2, nothing on stdout and no report written."""
    html = tmp_path / "report.html"
    code, out, err = run(["series", *argv, "--html", html], capsys)
    line = assert_clean_error(code, err, *needles)
    assert out == "" and not html.exists()
    return line


# --------------------------------------------------------------------------- 1. a comma in a setting


def test_a_comma_in_a_file_name_setting_is_refused_naming_the_file(tmp_path, capsys):
    files = [write(tmp_path / f"drv_{s}mA.csv", spd(k)) for k, s in enumerate(("1,050", "700", "350"))]
    line = refused(files, capsys, tmp_path, "drv_1,050mA.csv", "comma", "1050 in one convention and 1.05 in another")
    assert "1050mA or 1.05mA" in line


@pytest.mark.parametrize("text", ["cct 2700,5k", "drv_1,050mA", "level_1,5"])
def test_setting_from_text_refuses_a_comma_in_the_setting(text):
    with pytest.raises(InputError, match="comma between digits"):
        setting_from_text(text, what="file name", file="x.csv", fix="rename")


def test_a_comma_in_a_metadata_setting_is_refused(tmp_path, capsys):
    files = [write(tmp_path / "a.csv", spd(0.0), {"setting": "100 %"}),
             write(tmp_path / "b.csv", spd(5.0), {"setting": "1,5 %"})]
    refused([*files, "--setting-from", "metadata"], capsys, tmp_path, "b.csv", "'1,5%'", "comma")


@pytest.mark.parametrize("name, text, line", [
    ("quoted.csv", 'file,setting\ndim_100pct.csv,100\ndim_50pct.csv,50\ndim_10pct.csv,"1,5"\n', 4),
    # unquoted, the comma splits the row: the digits after it landed in the unit column
    ("unquoted.csv", "file,setting\ndim_100pct.csv,1,050\ndim_50pct.csv,500\ndim_10pct.csv,100\n", 2),
    ("string.toml", '[settings]\n"dim_100pct.csv" = "1,050"\n"dim_50pct.csv" = 500\n"dim_10pct.csv" = 100\n', 2),
], ids=["csv-quoted", "csv-unquoted", "toml-string"])
def test_a_comma_in_a_manifest_setting_is_refused_naming_the_line(tmp_path, capsys, dim, name, text, line):
    m = tmp_path / name
    m.write_text(text, encoding="utf-8")
    refused([*dim, "--manifest", m], capsys, tmp_path, f"{m}:{line}", "comma between digits")


# --------------------------------------------------------------------------- 2. --unit against a written unit


def test_unit_option_against_the_unit_in_the_names_is_refused(tmp_path, capsys, dim):
    refused([*dim, "--unit", "mA"], capsys, tmp_path, "dim_", "'%'", "--unit gives 'mA'")
    code, out, err = run(["series", *dim, "--unit", "%", "--format", "json"], capsys)  # the same unit: fine
    assert code == 0, err
    assert json.loads(out)["unit"] == "%"


def test_unit_option_against_the_unit_in_metadata_is_refused(tmp_path, capsys):
    files = [write(tmp_path / f"m{k}.csv", spd(k), {"drive": f"{v} mA"}) for k, v in enumerate((350, 700))]
    refused([*files, "--setting-from", "metadata", "--setting-key", "drive", "--unit", "%"], capsys, tmp_path,
            "m0.csv", "'drive'", "'mA'", "--unit gives '%'")


# --------------------------------------------------------------------------- 3. manifest entries and negatives


@pytest.mark.parametrize("name, text, line", [
    ("m.toml", 'unit = "%"\n[settings]\n"dim_100pct.csv" = 100\n"dim_50pct.csv" = 50\n"dim_10pct.csv" = 10\n'
               '"dim_1pct.csv" = 1\n', 6),
    ("m.csv", "file,setting\ndim_100pct.csv,100\ndim_1pct.csv,1\ndim_50pct.csv,50\ndim_10pct.csv,10\n", 3),
], ids=["toml", "csv"])
def test_a_manifest_entry_for_a_file_not_given_is_refused(tmp_path, capsys, dim, name, text, line):
    m = tmp_path / name
    m.write_text(text, encoding="utf-8")
    refused([*dim, "--manifest", m], capsys, tmp_path, f"{m}:{line}", "'dim_1pct.csv'", "no spectrum given")


@pytest.mark.parametrize("name, text, line, needle", [
    ("m.toml", 'unit = "%"\n[settings]\n"dim_100pct.csv" = 100\n"dim_50pct.csv" = 50\n"dim_10pct.csv" = -1\n', 5,
     "-1 %, but a dimming level cannot be negative"),
    ("m.csv", "file,setting,unit\ndim_100pct.csv,700,mA\ndim_50pct.csv,-350,mA\ndim_10pct.csv,70,mA\n", 3,
     "-350 mA, but a drive current cannot be negative"),
], ids=["toml-percent", "csv-mA"])
def test_a_negative_manifest_setting_is_refused_naming_the_line(tmp_path, capsys, dim, name, text, line, needle):
    m = tmp_path / name
    m.write_text(text, encoding="utf-8")
    refused([*dim, "--manifest", m], capsys, tmp_path, f"{m}:{line}", needle)


def test_a_negative_metadata_setting_is_refused_not_read_without_its_sign(tmp_path, capsys):
    """ "-1 %" in a metadata field was read as 1 % (the sign dropped)."""
    files = [write(tmp_path / "a.csv", spd(0.0), {"level": "100 %"}), write(tmp_path / "b.csv", spd(5.0), {"level": "-1 %"})]
    refused([*files, "--setting-from", "metadata", "--setting-key", "level"], capsys, tmp_path,
            "b.csv", "a dimming level cannot be negative")


def test_negative_settings_without_a_unit_or_in_another_unit_are_kept(tmp_path, dim):
    """A setting without a unit, or in a unit other than K, %, mA and A (an ambient temperature in
    °C), may be negative (docs/tunable.md)."""
    from lumeval.tunable.api import series_files

    m = tmp_path / "t.toml"
    m.write_text('unit = "°C"\n[settings]\n"dim_100pct.csv" = 25\n"dim_50pct.csv" = -10\n"dim_10pct.csv" = 0\n',
                 encoding="utf-8")
    r = series_files(dim, manifest=m).result
    assert r.settings.tolist() == [-10.0, 0.0, 25.0] and r.unit == "°C"


# --------------------------------------------------------------------------- 4. a criteria reference naming no setting

SHIFT = 'lumeval_criteria = 1\n[[clause]]\nid = "shift"\nkind = "series_shift"\nmax_delta_upvp = 0.05\nreference = {}\n'


@pytest.mark.parametrize("ref, needles", [
    ("75", ("no setting 75", "10 %, 50 %, 100 %")),
    ('"locus"', ("not CCTs", "10 %, 50 %, 100 %")),
], ids=["number", "locus"])
def test_a_criteria_reference_naming_no_setting_is_refused_like_the_option(tmp_path, capsys, dim, ref, needles):
    crit = tmp_path / "c.toml"
    crit.write_text(SHIFT.format(ref), encoding="utf-8")
    refused([*dim, "--criteria", crit], capsys, tmp_path, f"{crit}:2", "clause 'shift'", *needles)


def test_a_criteria_reference_naming_a_setting_is_judged(tmp_path, capsys, dim):
    crit = tmp_path / "c.toml"
    crit.write_text(SHIFT.format("50"), encoding="utf-8")
    code, out, err = run(["series", *dim, "--criteria", crit, "--format", "json"], capsys)
    assert code in (0, 1), err
    (clause,) = json.loads(out)["criteria"]["clauses"]
    assert clause["range_outcome"] in ("pass", "fail")


# --------------------------------------------------------------------------- 5. per-setting notes


def test_each_setting_note_quotes_its_own_count_of_values_below_zero(tmp_path, capsys):
    """Settings with 3 and 7 values below zero: each note gives its own count (the grouped note
    gave "3 value(s)" for both settings, "as at" the first)."""
    files = []
    for lv, n in ((10, 3), (100, 7)):
        v = spd(0.0)
        v[:n] = -1e-4  # 380 nm onwards, where the model is below 1e-3 of its peak
        files.append(write(tmp_path / f"dim_{lv}pct.csv", v))
    code, out, err = run(["series", *files, "--format", "json"], capsys)
    assert code == 0, err
    notes = [n for n in json.loads(out)["notes"] if "below zero" in n]
    assert len(notes) == 2, notes
    assert notes[0].startswith("10 %: 3 value(s)") and notes[1].startswith("100 %: 7 value(s)"), notes
    assert not any("as at" in n for n in notes), notes
