"""Limits of `lumeval mix` found by a review: the channel count, memory over many setpoints,
channels that are one spectrum up to a factor, duplicate names across files, and a search that
stops at its iteration limit. Invented spectra; behaviour only (the figures themselves are
checked in test_tunable_mix.py)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

import lumeval.engine
from lumeval.errors import InputError
from lumeval.spectra.model import SpectrumSet
from lumeval.tunable import mix as mixmod
from lumeval.tunable.mix import check_channels, mix

from .conftest import assert_clean_error
from .conftest import run_cli_in_process as run

WL = np.arange(380.0, 781.0, 1.0)


def g(peak, width):
    return np.exp(-0.5 * ((WL - peak) / width) ** 2)


WARM = 0.35 * g(450, 10) + g(600, 45) + 0.3 * g(650, 25)
COOL = 1.6 * g(452, 10) + g(560, 50)
COLD = 2.6 * g(452, 10) + g(560, 50)
GREEN = g(525, 18)
RED = g(630, 12)


def channels(*cols, names=None, files=None):
    names = names or tuple(f"ch{i + 1}" for i in range(len(cols)))
    files = files or ("test.csv",) * len(cols)
    return SpectrumSet(WL, np.vstack(cols), tuple(names), tuple(f"{f}#{n}" for f, n in zip(files, names)))


def write_wide(path: Path, cols: dict) -> Path:
    lines = ["wavelength_nm," + ",".join(cols)]
    for i, w in enumerate(WL):
        lines.append(f"{w:g}," + ",".join(f"{c[i]:.9g}" for c in cols.values()))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def narrow(k):
    """k distinct channels: narrow bands across the visible, plus a warm and a cool white."""
    return [WARM, COOL] + [g(420 + 300 * i / max(1, k - 3), 15) for i in range(k - 2)]


def _must_not_solve(*a, **k):
    raise AssertionError("the channels should have been refused before any solving")


# ----------------------------------------------------------------------------- item 1


def test_more_channels_than_the_maximum_are_refused():
    k = mixmod.MAX_CHANNELS + 1
    with pytest.raises(InputError, match=rf"{k} channels, more than the {mixmod.MAX_CHANNELS}") as e:
        check_channels(channels(*narrow(k)))
    assert "test.csv" in str(e.value)
    check_channels(channels(*narrow(mixmod.MAX_CHANNELS)))  # the maximum itself is accepted


def test_too_many_channels_cli_exit_2_names_the_files_and_writes_nothing(tmp_path, capsys, monkeypatch):
    # on the old code the 13 channels would be solved: fail fast instead of solving them
    monkeypatch.setattr(mixmod, "solve_multi_channels", _must_not_solve)
    cols = narrow(13)
    a = write_wide(tmp_path / "a.csv", {f"n{i}": c for i, c in enumerate(cols[:7])})
    b = write_wide(tmp_path / "b.csv", {f"m{i}": c for i, c in enumerate(cols[7:])})
    html = tmp_path / "out.html"
    code, out, err = run(["mix", a, b, "--cct", "4000", "--html", html], capsys)
    assert_clean_error(code, err, "a.csv", "b.csv", "13 channels")
    assert out == "" and not html.exists()


# ----------------------------------------------------------------------------- item 2


def test_candidates_are_evaluated_in_bounded_chunks_with_identical_results(monkeypatch):
    """Many setpoints with four channels: no engine call sees more than CANDIDATE_BATCH spectra,
    and the weights and figures equal the one-batch run's (rtol 1e-12: the same code computes
    them, only the batch boundaries differ)."""
    cols = (WARM, COLD, GREEN, RED)
    targets = np.array([3000.0, 3300.0, 3600.0, 4000.0, 4500.0, 5000.0])
    real = lumeval.engine.evaluate
    sizes: list[int] = []

    def recording(spectra, *a, **k):
        sizes.append(len(spectra))
        return real(spectra, *a, **k)

    monkeypatch.setattr(lumeval.engine, "evaluate", recording)
    monkeypatch.setattr(mixmod, "CANDIDATE_BATCH", 10**9, raising=False)
    whole = mix(channels(*cols), targets, maximise="Rf")
    assert max(sizes) > 120  # one batch of every candidate
    sizes.clear()
    monkeypatch.setattr(mixmod, "CANDIDATE_BATCH", 120, raising=False)  # two setpoints (53 candidates each) per call
    parts = mix(channels(*cols), targets, maximise="Rf")
    assert sizes and max(sizes) <= 120, sizes
    assert whole.reachable.all() and np.array_equal(parts.reachable, whole.reachable)
    assert_allclose(parts.weights, whole.weights, rtol=1e-12, atol=0)
    for name in ("Rf", "Ra", "cct_K", "duv"):
        assert_allclose(parts.figure(name), whole.figure(name), rtol=1e-12, atol=1e-15)


def test_chunk_size_bounds_setpoints_per_call_for_every_channel_count():
    for k in range(4, mixmod.MAX_CHANNELS + 1):
        from math import comb

        per = comb(k, 3) + 1 + mixmod.CANDIDATES
        step = max(1, mixmod.CANDIDATE_BATCH // per)
        assert step * per <= mixmod.CANDIDATE_BATCH and step >= 50  # tens to hundreds of setpoints a call


# ----------------------------------------------------------------------------- item 3


@pytest.mark.parametrize("factor", [1.0, 2.0, 0.37])
def test_proportional_channels_are_refused_naming_both(factor):
    with pytest.raises(InputError, match=r"'ch2' and 'ch3'.*up to a factor"):
        check_channels(channels(WARM, COOL, factor * COOL))


def test_close_but_different_channels_are_accepted():
    check_channels(channels(WARM, COOL, COOL * (1 + 1e-3 * g(500, 30))))  # differs by 1e-3 of the peak
    check_channels(channels(WARM, COOL, COLD))


def test_proportional_channels_cli_across_files(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(mixmod, "solve_multi_channels", _must_not_solve)
    a = write_wide(tmp_path / "a.csv", {"warm": WARM, "cool": COOL})
    b = write_wide(tmp_path / "b.csv", {"cool_x2": 2.0 * COOL})
    code, out, err = run(["mix", a, b, "--cct", "4000", "-f", "json"], capsys)
    assert_clean_error(code, err, "a.csv and ", "b.csv", "'cool'", "'cool_x2'")
    assert out == ""


def test_duplicate_name_in_another_file_names_both_files(tmp_path, capsys):
    fa = write_wide(tmp_path / "fa.csv", {"warm": WARM, "cool": COOL})
    fb = write_wide(tmp_path / "fb.csv", {"red": RED, "lime": GREEN})
    fc = write_wide(tmp_path / "fc.csv", {"blue": g(460, 12), "cool": COLD})
    code, out, err = run(["mix", fa, fb, fc, "--cct", "4000"], capsys)
    line = assert_clean_error(code, err, "fa.csv and ", "fc.csv", "'cool'")
    assert "fb.csv" not in line and out == ""


# ----------------------------------------------------------------------------- item 4


def test_search_stopped_at_its_iteration_limit_is_said_per_setpoint(monkeypatch):
    monkeypatch.setattr(mixmod, "SLSQP_MAXITER", 1, raising=False)
    res = mix(channels(WARM, COLD, GREEN, RED), np.array([4000.0]), maximise="Rf")
    assert res.reachable[0]
    assert any("iteration limit" in w for w in res.evaluation.warnings[0]), res.evaluation.warnings[0]


def test_converged_search_has_no_limit_note():
    res = mix(channels(WARM, COLD, GREEN, RED), np.array([4000.0]), maximise="Rf")
    assert not any("iteration limit" in w for w in res.evaluation.warnings[0])


def test_limit_note_reaches_the_json_report(tmp_path, monkeypatch):
    from lumeval.render.tunable import to_json
    from lumeval.tunable.api import mix_files

    monkeypatch.setattr(mixmod, "SLSQP_MAXITER", 1, raising=False)
    f = write_wide(tmp_path / "four.csv", {"warm": WARM, "cold": COLD, "green": GREEN, "red": RED})
    text = to_json(mix_files([f], "4000", maximise="Rf"))
    assert "iteration limit" in text
