"""The instrument file: defaults, parsing, and errors that name the line and key."""

from __future__ import annotations

import pytest

from lumeval.errors import CriteriaError, InputError, UsageError
from lumeval.uncertainty import (
    InstrumentModel,
    MonteCarloSettings,
    instrument_from_table,
    load_instrument,
)


def _write(tmp_path, text, name="inst.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_defaults_are_documented_values():
    # The defaults are common practice, no source; what must hold is that the code uses the
    # values docs/uncertainty.md states in its instrument table ("default" column), read here.
    import re
    from pathlib import Path

    doc = (Path(__file__).resolve().parents[1] / "docs" / "uncertainty.md").read_text(encoding="utf-8")
    documented = {}
    for key, default in re.findall(r"^\| `(\w+)` \|[^|]*\| ([0-9.e-]+)(?: nm)? \|", doc, flags=re.M):
        documented[key] = float(default)
    m = InstrumentModel()
    keys = ("wavelength_offset_nm", "noise_relative", "noise_absolute", "bandwidth_nm", "photometric_scale", "stray_light")
    assert set(keys) <= set(documented), documented
    assert tuple(getattr(m, k) for k in keys) == tuple(documented[k] for k in keys)
    assert not m.is_zero and InstrumentModel(0, 0, 0, 0, 0, 0).is_zero
    s = MonteCarloSettings()
    assert s.draws == 2000 and s.coverage == 0.95 and not s.adaptive


def test_full_file(tmp_path):
    p = _write(tmp_path, """# lab instrument
[instrument]
name = "sphere, lab 2"
wavelength_offset_nm = 0.1
noise_relative = 0.002
noise_absolute = 1e-4
bandwidth_nm = 4
photometric_scale = 0.03
stray_light = 0.0

[monte_carlo]
draws = "adaptive"
seed = 42
""")
    m, s = load_instrument(p)
    assert m.name == "sphere, lab 2" and m.bandwidth_nm == 4.0 and m.stray_light == 0.0
    assert s.adaptive and s.seed == 42
    assert str(p) in m.source and "defaults" not in m.source


def test_partial_file_keeps_defaults_and_says_so(tmp_path):
    m, s = load_instrument(_write(tmp_path, "[instrument]\nbandwidth_nm = 5\n"))
    assert m.bandwidth_nm == 5.0 and m.noise_relative == 0.005
    assert "defaults for" in m.source and s.draws == 2000


@pytest.mark.parametrize(
    "text, line, words",
    [
        ("[instrument]\nbandwith_nm = 2\n", 2, "unknown key 'bandwith_nm'"),
        ("[instrument]\nnoise_relative = 0.05\nbandwidth_nm = -1\n", 3, "≥ 0"),
        ("[instrument]\nnoise_relative = 2\n", 2, "not a percentage"),
        ('[instrument]\nwavelength_offset_nm = "0.2 nm"\n', 2, "must be a number"),
        ("[instrument]\nstray_light = true\n", 2, "must be a number"),
        ("[instrument]\n\n[monte_carlo]\ndraws = 10\n", 4, "draws"),
        ("[instrument]\n[monte_carlo]\nseed = -1\n", 3, "seed"),
        # above TOML's 64-bit integer range (TOML v1.0.0, "Integer"): no integer other readers keep
        ("[instrument]\n[monte_carlo]\nseed = 9223372036854775808\n", 3, "from 0 to 9223372036854775807"),
        ("[instrument]\n[monte_carlo]\nrepeats = 3\n", 3, "unknown key 'repeats'"),
        ("[instrument]\nnoise_relative = \n", 2, "not valid TOML"),
        ("[instrumnet]\nnoise_relative = 0.1\n", 1, "unknown table"),
        # quoted headers and a multi-line string whose text looks like a key line: the line of
        # the real key (the criteria loader's locator, shared since 2026-12-04)
        ("['instrument']\nstray_light = true\n", 2, "must be a number"),
        ('[ "instrument" ]\nname = """\nbandwidth_nm = 2\n"""\nbandwidth_nm = -1\n', 5, "≥ 0"),
    ],
)
def test_errors_name_file_line_and_key(tmp_path, text, line, words):
    p = _write(tmp_path, text)
    with pytest.raises(CriteriaError) as e:
        load_instrument(p)
    assert e.value.line == line, e.value.message
    assert words in e.value.message
    assert e.value.message.startswith(f"{p}:{line}")


def test_missing_table_and_missing_file(tmp_path):
    with pytest.raises(CriteriaError) as e:
        load_instrument(_write(tmp_path, "[monte_carlo]\ndraws = 500\n"))
    assert "no [instrument] table" in e.value.message
    with pytest.raises(InputError):
        load_instrument(tmp_path / "absent.toml")


def test_table_inside_a_criteria_file():
    text = '[identification]\nname = "x"\n\n[instrument]\nnoise_relative = 0.01\nfoo = 1\n'
    with pytest.raises(CriteriaError) as e:
        instrument_from_table({"noise_relative": 0.01, "foo": 1}, file="crit.toml", text=text)
    assert e.value.line == 6 and e.value.field == "instrument.foo"


def test_python_construction_is_validated_too():
    with pytest.raises(ValueError):
        InstrumentModel(noise_relative=-0.1)
    with pytest.raises(ValueError):
        InstrumentModel(bandwidth_nm=float("nan"))


def test_public_api_names():
    import lumeval

    assert lumeval.InstrumentModel is InstrumentModel
    assert callable(lumeval.propagate_uncertainty) and callable(lumeval.load_instrument)
    assert lumeval.DecisionRule().rule == "simple"


def test_the_largest_seed_is_accepted_and_one_more_refused_as_an_override(tmp_path):
    from lumeval.uncertainty.judge import resolve_setup

    inst = _write(tmp_path, "[instrument]\nnoise_relative = 0.01\n[monte_carlo]\nseed = 9223372036854775807\n")
    _, settings = load_instrument(inst)
    assert settings.seed == 2**63 - 1
    with pytest.raises(UsageError, match="too large"):
        resolve_setup(None, inst, seed=2**63)


def test_an_instrument_files_monte_carlo_table_wins_even_with_default_values(tmp_path):
    """docs/uncertainty.md: the command-line file wins and the report says so. An instrument
    file stating seed 1 and 2000 draws (the defaults) was ignored in favour of the criteria
    file's [monte_carlo] (found by a review); a file without the table leaves the criteria's."""
    from lumeval.criteria import parse_criteria
    from lumeval.uncertainty.judge import resolve_setup

    crit = parse_criteria('lumeval_criteria = 1\n[[clause]]\nfigure = "Ra"\nmin = 80\n'
                          "[instrument]\nnoise_relative = 0.01\n[monte_carlo]\ndraws = 500\nseed = 5\n", "c.toml")
    with_mc = _write(tmp_path, "[instrument]\nnoise_relative = 0.01\n[monte_carlo]\ndraws = 2000\nseed = 1\n")
    setup = resolve_setup(crit, with_mc)
    assert (setup.settings.draws, setup.settings.seed) == (2000, 1)
    assert any("[monte_carlo]" in n for n in setup.notes)
    without = tmp_path / "plain.toml"
    without.write_text("[instrument]\nnoise_relative = 0.01\n", encoding="utf-8")
    setup = resolve_setup(crit, without)
    assert (setup.settings.draws, setup.settings.seed) == (500, 5)
