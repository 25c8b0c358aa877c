"""prepare(): the computation-grid rule, interpolation against colour-science, refusals.

Outside truths used here:
- colour-science 0.4.7's ``SpragueInterpolator`` (CIE 167:2005 Sprague method) and
  ``CubicSplineInterpolator`` are the oracles for our vectorised interpolation operators.
- CIE 15:2004 Table T.8.1 (via colour-science's shipped F-series SPDs at 5 nm): the data must
  reach the metrics exactly as measured (no interpolation) — checked value by value.
- The limits (400/700 nm, 10 nm, 5 % negative) are our documented rules; the tests check them
  on both sides of each limit.
"""

from __future__ import annotations

import re

import numpy as np
import pytest

from lumeval._colour import load
from lumeval.errors import InputError
from lumeval.spectra.model import SpectrumSet
from lumeval.spectra.prepare import cubic_spline, prepare, prepare_groups, sprague, sprague_matrix


def _set(wl, values, name="s"):
    values = np.atleast_2d(values)
    n = values.shape[0]
    names = tuple(f"{name}{i}" for i in range(n))
    return SpectrumSet(np.asarray(wl, float), values, names, tuple(f"{name}.csv#{i}" for i in range(n)))


def _led(wl):
    wl = np.asarray(wl, float)
    return 0.9 * np.exp(-0.5 * ((wl - 450) / 10) ** 2) + 0.75 * np.exp(-0.5 * ((wl - 590) / 55) ** 2)


@pytest.mark.parametrize("step", [2.0, 2.5, 4.0, 10.0, 0.5])
def test_sprague_matches_colour_science(step):
    colour = load()
    rng = np.random.default_rng(int(step * 10))
    wl = np.arange(380, 780 + step / 2, step)
    y = rng.random((4, wl.size))
    out = np.arange(380, 781, 1.0)
    ours = sprague(wl, y, out)
    ref = np.vstack([colour.SpragueInterpolator(wl, row)(out) for row in y])
    np.testing.assert_allclose(ours, ref, rtol=0, atol=1e-12)


def test_sprague_documented_example():
    """colour-science's SpragueInterpolator documentation example (an independent implementation
    of the CIE 167:2005 Sprague method): y = [5.92, 9.37, 10.8135, 4.51, 69.59, 27.8007, 86.05]
    on x = 0..6 gives f(0.5) = 7.2185025..., f(0.25) = 6.7295161..., f(0.75) = 7.8140625..."""
    y = np.array([[5.9200, 9.3700, 10.8135, 4.5100, 69.5900, 27.8007, 86.0500]])
    out = sprague(np.arange(7.0), y, np.array([0.5, 0.25, 0.75]))[0]
    np.testing.assert_allclose(out, [7.2185025, 6.7295161, 7.8140625], atol=5e-7)


def test_sprague_passes_through_the_data():
    m = sprague_matrix(9, np.arange(9.0))
    np.testing.assert_allclose(m, np.eye(9), atol=1e-12)


def test_finely_spaced_data_take_the_banded_path_with_bounded_memory():
    """0.02 nm data (20,001 samples; a dense 1 nm operator would have 8 million elements, so the
    banded path runs) against colour-science's SpragueInterpolator at the 1 nm points; and a
    0.01 nm file over 350-850 nm (50,001 samples) prepares within 64 MB of Python allocations
    (a dense operator alone would be 188 MB; before the banded method, several GB)."""
    import tracemalloc

    colour = load()
    wl = np.round(np.arange(380.0, 780.0001, 0.02), 2)
    y = np.vstack([_led(wl), _led(wl + 7)])
    out = np.arange(381.0, 780.0)
    ref = np.vstack([colour.SpragueInterpolator(wl, row)(out) for row in y])
    np.testing.assert_allclose(sprague(wl, y, out), ref, rtol=0, atol=1e-10)
    wl = np.round(np.arange(350.0, 850.0001, 0.01), 2)
    s = _set(wl, _led(wl))
    tracemalloc.start()
    try:
        p = prepare(s)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert p.spacing_nm == 1.0 and p.wavelengths_nm[0] == 360 and p.wavelengths_nm[-1] == 830
    assert peak < 64e6, peak


def test_cubic_spline_matches_colour_science():
    colour = load()
    rng = np.random.default_rng(7)
    wl = np.sort(rng.uniform(375, 785, 90))
    y = rng.random((3, wl.size))
    out = np.arange(np.ceil(wl[0]), np.floor(wl[-1]) + 1)
    ref = np.vstack([colour.CubicSplineInterpolator(wl, row)(out) for row in y])
    np.testing.assert_allclose(cubic_spline(wl, y, out), ref, rtol=0, atol=1e-10)


@pytest.mark.parametrize("name", [f"FL{i}" for i in range(1, 13)])
def test_cie_f_series_reach_the_metrics_as_measured(name):
    """CIE F1-F12 (5 nm, 380-780 nm, CIE 15:2004 Table T.8.1 inputs) are used exactly as measured."""
    sd = load().SDS_ILLUMINANTS[name]
    p = prepare(_set(sd.wavelengths, sd.values))
    np.testing.assert_array_equal(p.wavelengths_nm, sd.wavelengths)
    np.testing.assert_array_equal(p.values[0], sd.values)
    assert p.notes == ((),)


def test_prepare_is_idempotent():
    wl = np.arange(372.0, 801.0, 2.0)
    s = _set(wl, np.vstack([_led(wl), _led(wl + 5) - 0.005]))
    once = prepare(s)
    twice = prepare(once)
    np.testing.assert_array_equal(once.values, twice.values)
    np.testing.assert_array_equal(once.wavelengths_nm, twice.wavelengths_nm)
    assert once.notes == twice.notes


def test_one_nm_grid_uniform_data_off_integers_is_resampled():
    wl = np.arange(380.5, 781.0, 1.0)
    p = prepare(_set(wl, _led(wl)))
    # interpolated onto 381..780 nm (inside the data), then 380 nm added by repeating 381 nm
    assert p.spacing_nm == 1.0 and p.wavelengths_nm[0] == 380 and p.wavelengths_nm[-1] == 780
    assert p.values[0][0] == p.values[0][1]
    assert any("Sprague" in n for n in p.notes[0])
    assert any("EXTRAPOLATED" in n and "data start at 381 nm" in n for n in p.notes[0])
    # a smooth function is reproduced closely (Sprague is exact for quartics inside the range)
    np.testing.assert_allclose(p.values[0][1:], _led(p.wavelengths_nm[1:]), atol=2e-4)


@pytest.mark.parametrize("start", [378.0, 382.0, 361.0])
def test_five_nm_data_off_the_five_nm_tabulation_are_resampled(start):
    """5 nm data on 378, 383 ... nm are not on the 5 nm grid of the CIE tables (380 ... 780 nm,
    CIE 15:2004 §7.1; CIE 224:2017 evaluates 380-780 nm): they are interpolated to 1 nm like
    any other spacing. They were once used as measured and then refused by the TM-30 step."""
    from lumeval.spectra.prepare import used_as_measured

    wl = np.arange(start, 786.0, 5.0)
    assert not used_as_measured(wl)
    assert used_as_measured(np.arange(380.0, 781.0, 5.0)) and used_as_measured(np.arange(361.0, 790.0, 1.0))
    p = prepare(_set(wl, _led(wl)))
    assert p.spacing_nm == 1.0 and p.wavelengths_nm[0] <= 380 and p.wavelengths_nm[-1] >= 780
    assert any("uniform 5 nm data interpolated to 1 nm (Sprague" in n for n in p.notes[0])
    inside = (p.wavelengths_nm >= wl[0]) & (p.wavelengths_nm <= wl[-1])
    # the smooth source function reproduced closely (Sprague is exact for quartics)
    np.testing.assert_allclose(p.values[0][inside], _led(p.wavelengths_nm[inside]), atol=2e-3)


def test_a_planckian_at_5_nm_off_the_tabulation_is_its_own_reference():
    """A Planckian radiator is its own CIE 13.3 and CIE 224 / TM-30 reference below 4000 K:
    Ra = 100 and Rf = 100 (CIE 13.3-1995; CIE 224:2017), and its CCT is its temperature (CIE 15).
    Planck's law here from scipy.constants (CODATA h, c, k), independent of lumeval's own; the
    5 nm sampling and Sprague interpolation cost < 0.05 in the indices and < 1 K (tolerances
    ours)."""
    from scipy import constants as k

    from lumeval.engine import evaluate

    wl = np.arange(382.0, 783.0, 5.0)
    lam = wl * 1e-9
    spd = 1.0 / (lam**5 * np.expm1(k.h * k.c / (lam * k.k * 3000.0)))
    ev = evaluate(_set(wl, spd / spd.max()))
    np.testing.assert_allclose(ev.figure("cct_K"), [3000.0], atol=1.0)
    np.testing.assert_allclose(ev.figure("Ra"), [100.0], atol=0.05)
    np.testing.assert_allclose(ev.figure("Rf"), [100.0], atol=0.05)


@pytest.mark.parametrize("stray", [[1000.0], [0.0], [-5.0], [831.5], [900.0, 1000.0], [350.5, 831.0]])
def test_a_stray_row_outside_360_830_nm_leaves_a_clean_grid_as_measured(stray):
    """Rows outside 360-830 nm are dropped (CIE 15 range); a clean 1 nm grid inside stays as
    measured. A stray row (an instrument's 0 nm or 1000 nm line) once made the whole grid
    "irregular": the data went through the cubic spline with a note saying so (found by
    exploratory testing; the values were unchanged, the note was false)."""
    from lumeval.spectra.prepare import used_as_measured

    inner = np.arange(360.0, 831.0, 1.0)
    wl = np.sort(np.concatenate([inner, stray]))
    vals = _led(wl)
    assert used_as_measured(wl)
    p = prepare(_set(wl, vals))
    np.testing.assert_array_equal(p.wavelengths_nm, inner)
    np.testing.assert_array_equal(p.values[0], vals[(wl >= 360) & (wl <= 830)])  # the measured values themselves
    assert not any("interpolated" in n for n in p.notes[0])
    assert any("dropped (CIE 15 range 360-830 nm)" in n for n in p.notes[0])


def test_irregular_data_interpolated_close_to_truth():
    rng = np.random.default_rng(3)
    wl = np.unique(np.concatenate([[378.0, 782.0], rng.uniform(378, 782, 300)]))
    p = prepare(_set(wl, _led(wl)))
    assert p.spacing_nm == 1.0
    np.testing.assert_allclose(p.values[0], _led(p.wavelengths_nm), atol=5e-4)


@pytest.mark.parametrize(
    "start,end,ok",
    [(400, 700, True), (401, 780, False), (380, 699, False), (399, 701, True)],
)
def test_coverage_limits(start, end, ok):
    wl = np.arange(start, end + 1, 1.0)
    s = _set(wl, _led(wl))
    if ok:
        p = prepare(s)
        assert p.wavelengths_nm[0] == 380 and p.wavelengths_nm[-1] == 780
        # extension repeats the end values (CIE 15:2004 §7.2.2.1 practice)
        assert np.all(p.values[0][p.wavelengths_nm <= start] == _led(start))
        assert np.all(p.values[0][p.wavelengths_nm >= end] == _led(end))
        assert any(n.startswith("EXTRAPOLATED") for n in p.notes[0])
    else:
        with pytest.raises(InputError, match="too short"):
            prepare(s)


@pytest.mark.parametrize("step,outcome", [(5, "clean"), (8, "warn"), (10, "warn"), (12, "refuse"), (20, "refuse")])
def test_spacing_limits(step, outcome):
    wl = np.arange(380, 781, step, dtype=float)
    s = _set(wl, _led(wl))
    if outcome == "refuse":
        with pytest.raises(InputError, match="coarser than 10 nm"):
            prepare(s)
        return
    p = prepare(s)
    warned = any("coarser than the 5 nm" in n for n in p.notes[0])
    assert warned == (outcome == "warn")


@pytest.mark.parametrize("low, words", [(-0.2, "20.0 % of the peak below zero"), (-1e308, "1e+308 times the peak below zero"),
                                        (-30.0, "30 times the peak below zero")])
def test_a_deep_negative_value_is_measured_against_the_peak(low, words):
    """The refusal says how far below zero, without overflowing to "inf %" (found by
    exploratory testing with -1e308 in an archive)."""
    wl = np.arange(380, 781, 5.0)
    v = _led(wl) / _led(wl).max()
    v[3] = low
    with pytest.raises(InputError, match=re.escape(words)):
        prepare(_set(wl, v))


@pytest.mark.parametrize("offset,ok", [(-0.04, True), (-0.2, False)])
def test_negative_values(offset, ok):
    wl = np.arange(380, 781, 5.0)
    v = _led(wl)
    v = v + offset * v.max() * (v < 0.05)  # negative only where the signal is low
    s = _set(wl, v)
    if ok:
        p = prepare(s)
        assert p.values.min() == 0.0
        assert any("set to zero" in n for n in p.notes[0])
        # positive values untouched
        np.testing.assert_array_equal(p.values[0][v > 0], v[v > 0])
    else:
        with pytest.raises(InputError, match="below zero"):
            prepare(s)


def test_bad_spectrum_is_named_in_a_wide_set():
    wl = np.arange(380, 781, 5.0)
    s = SpectrumSet(wl, np.vstack([_led(wl), np.zeros_like(wl)]), ("good", "dead"), ("f.csv#good", "f.csv#dead"))
    with pytest.raises(InputError) as info:
        prepare(s)
    assert info.value.file == "f.csv" and info.value.field == "dead"


def test_descending_and_duplicates_in_api_input():
    wl = np.arange(780, 379, -5.0)
    p = prepare(_set(wl, _led(wl)))
    assert p.wavelengths_nm[0] == 380 and any("descending" in n for n in p.notes[0])
    wl2 = np.array([380.0, 385, 385, 390] + list(range(395, 781, 5)))
    with pytest.raises(InputError, match="not strictly increasing"):
        prepare(_set(wl2, _led(wl2)))


def test_sets_on_different_grids_keep_their_own_grids_in_input_order():
    """A spectrum's figures depend on its own data only (issue 10): no set is resampled to
    another set's grid. Values on their own 1 nm / 5 nm grid are used as measured (CIE 15:2004
    §7.1), i.e. unchanged copies (exact by construction)."""
    wl5 = np.arange(380, 781, 5.0)
    wl1 = np.arange(360, 831, 1.0)
    a = _set(wl5, _led(wl5), "a")
    b = _set(wl1, _led(wl1), "b")
    c = _set(wl5, _led(wl5 + 3), "c")
    g = prepare_groups([a, b, c])
    assert len(g) == 3 and g.names == ("a0", "b0", "c0") and len(g.groups) == 2
    for i, (wl, v) in enumerate([(wl5, _led(wl5)), (wl1, _led(wl1)), (wl5, _led(wl5 + 3))]):
        gw, gv = g.spectrum(i)
        np.testing.assert_array_equal(gw, wl)
        np.testing.assert_array_equal(gv, v)
        assert g.notes[i] == ()
    with pytest.raises(ValueError, match="different computation grids"):
        _ = g.wavelengths_nm
    with pytest.raises(ValueError, match="prepare_groups"):
        prepare([a, b])
    sub = g.subset([2, 1])
    assert sub.names == ("c0", "b0")
    np.testing.assert_array_equal(sub.spectrum(0)[1], _led(wl5 + 3))
    # groups are in first-appearance order; order maps group rows back to input positions
    assert g.order.tolist() == [0, 2, 1]


def test_same_grid_sets_are_concatenated_unchanged():
    wl5 = np.arange(380, 781, 5.0)
    p = prepare([_set(wl5, _led(wl5), "a"), _set(wl5, _led(wl5 + 3), "b")])
    assert p.spacing_nm == 5.0 and p.notes == ((), ())


def test_many_spectra_are_prepared_like_one():
    """2000 spectra at 2 nm in one call give each row what preparing it alone gives (speed is
    measured by bench/benchmark.py, never by a timed test)."""
    wl = np.arange(380, 781, 2.0)
    vals = np.tile(_led(wl), (2000, 1)) * np.linspace(0.5, 1.5, 2000)[:, None]
    s = SpectrumSet(wl, vals, tuple(map(str, range(2000))), tuple(f"lot.csv#{i}" for i in range(2000)))
    p = prepare(s)
    assert p.values.shape == (2000, 401)
    for i in (0, 999, 1999):
        one = prepare(s.subset(np.array([i])))
        np.testing.assert_allclose(p.values[i], one.values[0], rtol=1e-12, atol=0)


@pytest.mark.parametrize("scale,ok", [(1e-25, True), (1e25, True), (1e-35, False), (1e35, False)])
def test_implausible_magnitudes_refused(scale, ok):
    wl = np.arange(380, 781, 5.0)
    s = _set(wl, _led(wl) * scale)
    if ok:
        np.testing.assert_array_equal(prepare(s).values[0], _led(wl) * scale)
    else:
        with pytest.raises(InputError, match="implausibly"):
            prepare(s)


def test_inspect_reads_5_nm_files_on_and_off_the_tabulation_together(tmp_path, capsys):
    """Through the CLI: a 5 nm file on 382 ... 782 nm next to one on 380 ... 780 nm; both are
    evaluated (exit 0), the first with the interpolation note (it once stopped the whole run with
    exit 2 and a message naming no file)."""
    from .conftest import run_cli_in_process

    paths = []
    for start in (380.0, 382.0):
        wl = np.arange(start, start + 401.0, 5.0)
        p = tmp_path / f"led_{int(start)}.csv"
        p.write_text("wavelength_nm,value\n" + "".join(f"{w:g},{v:.6f}\n" for w, v in zip(wl, _led(wl))))
        paths.append(p)
    code, out, err = run_cli_in_process(["inspect", *paths, "--format", "csv"], capsys)
    assert code == 0, err
    rows = out.strip().splitlines()
    assert rows[1].startswith("led_380,") and rows[2].startswith("led_382,")
    assert "interpolated to 1 nm" in out and "led_382" in out
