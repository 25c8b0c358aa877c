"""An integer beyond float's range in any number field of a TOML input is bad input, not a crash.

TOML integers have no size limit in Python's reader (up to its 4300-digit limit on parsing
integers), and ``float(n)`` raises OverflowError above about 1.8e308 (IEEE 754 binary64). Every
number field of a criteria, claims, instrument or series-manifest file must refuse such a value
with lumeval's one clean line (exit code 2, the file, the line and the field), never a
traceback or an "internal error", and must never quote the 310-digit number whole.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from lumeval.errors import FINITE_FIX, QUOTE_MAX, CriteriaError, finite_float, shown
from lumeval.uncertainty.instrument import InstrumentModel

from .conftest import assert_clean_error, run_cli_in_process

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "spectra_demo"
A = DEMO / "downlights" / "candidate_A_aurora_3000K.csv"
C = DEMO / "downlights" / "candidate_C_claritas_3000K.csv"
DIM = [DEMO / "tunable" / f"tw2_dim2warm_{p:03d}pct.csv" for p in (50, 100)]

#: 1 followed by 309 zeros: above float's range, below Python's 4300-digit parsing limit
BIG = 10 ** 309
HEAD = "lumeval_criteria = 1\n[[clause]]\n"
RA = HEAD + 'figure = "Ra"\nmin = 80\n'

#: case -> (command, file text with N for the number, the field named, the line of N)
CASES = {
    "figure min": ("check", HEAD + 'figure = "Ra"\nmin = N\n', "min", 4),
    "figure max": ("check", HEAD + 'figure = "R9"\nmax = N\n', "max", 4),
    "figure range": ("check", HEAD + 'figure = "Ra"\nrange = [0, N]\n', "range", 4),
    "over": ("check", HEAD + 'figure = "Ra"\nmin = 80\nover = [0, N]\n', "over", 5),
    "sdcm max_steps": ("check", HEAD + 'kind = "sdcm"\ncentre = "F3000"\nmax_steps = N\n', "max_steps", 5),
    "sdcm g11": ("check", HEAD + 'kind = "sdcm"\nmax_steps = 3\ncentre_xy = [0.44, 0.40]\ng11 = N\ng12 = 0\ng22 = 1\n',
                 "g11", 6),
    "sdcm centre_xy": ("check", HEAD + 'kind = "sdcm"\nmax_steps = 3\ncentre_xy = [N, 0.40]\ng11 = 1\ng12 = 0\ng22 = 1\n',
                       "centre_xy", 5),
    "ansi nominal_cct": ("check", HEAD + 'kind = "ansi_quadrangle"\nnominal_cct = N\n', "nominal_cct", 4),
    "ansi target_cct_K": ("check", HEAD + 'kind = "ansi_quadrangle"\nnominal_cct = "flexible"\ntarget_cct_K = N\n',
                          "target_cct_K", 5),
    "ansi tolerance_K": ("check", HEAD + 'kind = "ansi_quadrangle"\nnominal_cct = "flexible"\ntarget_cct_K = 3800\n'
                         "tolerance_K = N\n", "tolerance_K", 6),
    "lot_centroid_steps max_steps": ("check", HEAD + 'kind = "lot_centroid_steps"\nmax_steps = N\n', "max_steps", 4),
    "lot_max_pairwise max_delta_upvp": ("check", HEAD + 'kind = "lot_max_pairwise"\nmax_delta_upvp = N\n',
                                        "max_delta_upvp", 4),
    "lot_yield min_percent": ("check", HEAD + 'kind = "lot_yield"\nmin_percent = N\n', "min_percent", 4),
    "series_shift max_delta_upvp": ("check", HEAD + 'kind = "series_shift"\nmax_delta_upvp = N\n', "max_delta_upvp", 4),
    "series_shift reference": ("check", HEAD + 'kind = "series_shift"\nmax_delta_upvp = 0.004\nreference = N\n',
                               "reference", 5),
    "track_locus max_abs_duv": ("check", HEAD + 'kind = "track_locus"\nmax_abs_duv = N\n', "max_abs_duv", 4),
    "decision guard_band_factor": ("check", RA + "[decision]\nguard_band_factor = N\n", "decision.guard_band_factor", 6),
    "decision coverage_factor": ("check", RA + "[decision]\ncoverage_factor = N\n", "decision.coverage_factor", 6),
    **{f"criteria instrument {k}": ("check", RA + f"[instrument]\n{k} = N\n", f"instrument.{k}", 6)
       for k in ("wavelength_offset_nm", "noise_relative", "noise_absolute", "bandwidth_nm", "photometric_scale",
                 "stray_light")},
    "instrument file bandwidth_nm": ("instrument", "[instrument]\nname = \"x\"\nbandwidth_nm = N\n",
                                     "instrument.bandwidth_nm", 3),
    "instrument file noise_relative": ("instrument", "[instrument]\nnoise_relative = N\n", "instrument.noise_relative", 2),
    "monte_carlo draws": ("check", RA + "[monte_carlo]\ndraws = N\n", "monte_carlo.draws", 6),
    "claims tolerances": ("claims", '[claims]\nRa = ">= 80"\n[tolerances]\nRa = N\n', "Ra", 4),
    "claims value": ("claims", "[claims]\nRa = N\n", "Ra", 2),
    "manifest setting": ("manifest", f'unit = "%"\n[settings]\n"{DIM[0].name}" = 50\n"{DIM[1].name}" = N\n',
                         DIM[1].name, 4),
}


def _argv(command: str, path: Path) -> list:
    if command == "check":
        return ["check", A, "-c", path]
    if command == "instrument":
        return ["check", A, "-c", DEMO / "tender_criteria.toml", "--instrument", path]
    if command == "claims":
        return ["claims", C, "--claims", path]
    return ["series", *DIM, "--manifest", path]


@pytest.mark.parametrize("sign", ["", "-"])
@pytest.mark.parametrize("case", sorted(CASES))
def test_a_huge_integer_is_one_clean_error(case, sign, tmp_path, capsys):
    command, template, field, line = CASES[case]
    p = tmp_path / "big.toml"
    p.write_text(template.replace("N", f"{sign}{BIG}"), encoding="utf-8")
    code, _out, err = run_cli_in_process(_argv(command, p), capsys)
    msg = assert_clean_error(code, err, f"{p}:{line} ", f"field {field!r}")
    assert "0" * QUOTE_MAX not in msg, msg  # the number is cut, never quoted whole
    assert "(310 digits)" in msg, msg


def test_the_message_of_a_figure_limit(tmp_path, capsys):
    p = tmp_path / "h.toml"
    p.write_text(HEAD + f'figure = "Ra"\nmin = {BIG}\n', encoding="utf-8")
    msg = assert_clean_error(*run_cli_in_process(["check", A, "-c", p], capsys)[::2])
    assert msg == (f"lumeval: error: {p}:4 field 'min': must be a finite number, got 10000000000000000000… (310 digits)"
                   f" — {FINITE_FIX}")


def test_a_huge_integer_that_is_no_number_field_is_quoted_short(tmp_path, capsys):
    """Fields that are not numbers (format version, clause kind, id) refuse it without quoting it whole."""
    for text, field in ((f"lumeval_criteria = {BIG}\n[[clause]]\nfigure = 'Ra'\nmin = 80\n", "lumeval_criteria"),
                        (HEAD + f"kind = {BIG}\n", "kind"), (HEAD + f"id = {BIG}\nfigure = 'Ra'\nmin = 80\n", "id")):
        p = tmp_path / "h.toml"
        p.write_text(text, encoding="utf-8")
        msg = assert_clean_error(*run_cli_in_process(["check", A, "-c", p], capsys)[::2], f"field {field!r}")
        assert "0" * QUOTE_MAX not in msg, msg


def test_finite_float():
    def fail(text):
        return CriteriaError(f"got {text}", field="x")

    assert finite_float(3, fail) == 3.0 and type(finite_float(3, fail)) is float
    assert finite_float(-2.5, fail) == -2.5
    assert finite_float(10 ** 308, fail) == 1e308
    for bad in (BIG, -BIG, math.inf, -math.inf, math.nan):
        with pytest.raises(CriteriaError, match="got "):
            finite_float(bad, fail)


def test_shown():
    assert shown(90) == "90" and shown(0.5) == "0.5" and shown("abc") == "'abc'" and shown(True) == "True"
    assert shown(BIG) == "10000000000000000000… (310 digits)"
    assert shown(-BIG) == "-1000000000000000000… (310 digits)"
    assert shown([BIG, 0.4]) == "[10000000000000000000… (310 digits), 0.4]"
    assert len(shown("x" * 10_000)) <= QUOTE_MAX + 3
    assert len(shown(list(range(10_000)))) <= QUOTE_MAX + 1


def test_the_instrument_model_refuses_a_huge_integer_with_a_value_error():
    with pytest.raises(ValueError, match=r"bandwidth_nm must be a finite number ≥ 0, got 1000.*\(310 digits\)"):
        InstrumentModel(bandwidth_nm=BIG)
    assert InstrumentModel(bandwidth_nm=3).bandwidth_nm == 3.0
