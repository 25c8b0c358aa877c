"""TM-30 hue-bin assignment at bin edges ("knife edges").

A colour evaluation sample (CES) belongs to hue bin j = floor(h_ref / 22.5°) (ANSI/IES TM-30-18);
where its reference hue lies within 0.01° of an edge (lumeval's band, documented), equally valid
implementations can put it in either bin. lumeval lists such (bin, CES) pairs per spectrum,
warns in the evaluation, and attaches a warning to the verdict of a judged hue-bin figure.

Outside sources:
- the bin rule itself (ANSI/IES TM-30-18: 16 bins of 22.5° on the reference hue; bin 1 starts
  at 0°), for the constructed hue angles;
- colour-science 0.4.7 ``colour_fidelity_index(..., method="ANSI/IES TM-30-18",
  additional_data=True)``: its reference CAM02-UCS (J′, a′, b′) of each CES gives an independent
  reference hue, run on the CIE F and LED illuminants as colour-science ships them (CIE 15:2018
  tables, 5 nm). Our reference hues agree with it within 0.002° on these spectra (checked), far
  inside the 0.01° band, and no spectrum here lies within 0.002° of the band's boundary.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from lumeval.metrics import tm30 as T

# --------------------------------------------------------------------------- constructed hues


def _hues_away_from_edges():
    """99 reference hues at bin centres (11.25° + 22.5° k), none near an edge."""
    return (11.25 + 22.5 * (np.arange(99) % 16)).astype(float)


def test_constructed_hues_give_the_knife_edge_pairs():
    h = np.tile(_hues_away_from_edges(), (3, 1))
    h[0, 4] = 45.004  # CES 5: just above the bin 2 / bin 3 edge at 45°
    h[0, 6] = 359.995  # CES 7: just below 360°, the bin 16 / bin 1 edge
    h[0, 8] = 0.008  # CES 9: just above 0°, the same edge
    h[0, 10] = 67.4905  # CES 11: 0.0095° below the bin 3 / bin 4 edge -> on the knife edge
    h[0, 12] = 67.5105  # CES 13: 0.0105° above it -> not
    h[1, 20] = 157.5 - 0.002 + 360.0  # CES 21, hue given above 360° (taken modulo 360°): bins 7/8
    h[2, :] = np.nan  # a spectrum without TM-30 figures
    pairs = T.hue_edge_pairs(h)
    assert pairs[0] == ((2, 5), (3, 5), (1, 7), (16, 7), (1, 9), (16, 9), (3, 11), (4, 11))
    assert pairs[1] == ((7, 21), (8, 21))
    assert pairs[2] == ()
    assert T.hue_edge_pairs(_hues_away_from_edges()[None, :]) == ((),)


def test_tolerance_is_a_parameter_and_vectorised_over_spectra():
    h = np.tile(_hues_away_from_edges(), (1000, 1))
    h[::7, 0] = 22.5 + 0.03  # CES 1 of every 7th spectrum: 0.03° above the bin 1 / bin 2 edge
    assert sum(1 for p in T.hue_edge_pairs(h) if p) == 0
    wide = T.hue_edge_pairs(h, tolerance_deg=0.05)
    assert [i for i, p in enumerate(wide) if p] == list(range(0, 1000, 7))
    assert wide[0] == ((1, 1), (2, 1))


def test_warning_text_names_bins_and_sample():
    (w,) = T.hue_edge_warnings((((4, 36), (5, 36)),), 0)
    assert "CES 36" in w and "hue bins 4 and 5" in w and "0.01°" in w
    assert T.hue_edge_warnings(((),), 0) == []


# --------------------------------------------------------------------------- real spectra

CIE_NAMES = [f"FL{i}" for i in range(1, 13)] + [
    "LED-B1", "LED-B2", "LED-B3", "LED-B4", "LED-B5", "LED-BH1", "LED-RGB1", "LED-V1", "LED-V2",
]


@pytest.fixture(scope="module")
def cie_eval(colour):
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    wl = np.arange(380.0, 781.0, 5.0)
    vals = np.array([np.asarray(colour.SDS_ILLUMINANTS[n].values, float) for n in CIE_NAMES])
    return evaluate(SpectrumSet(wl, vals, tuple(CIE_NAMES), tuple(CIE_NAMES)))


def _colour_reference_hues(colour, name):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        spec = colour.colour_fidelity_index(colour.SDS_ILLUMINANTS[name], additional_data=True,
                                            method="ANSI/IES TM-30-18")
    jab = np.asarray(spec.colorimetry_data[1].Jpapbp, float)
    return np.degrees(np.arctan2(jab[:, 2], jab[:, 1])) % 360.0


def test_knife_edges_agree_with_colour_science(colour, cie_eval):
    """For each CIE F / LED illuminant: lumeval flags exactly the CES whose colour-science
    reference hue lies within 0.01° of a bin edge (FL12: CES 36 at 89.99°, bins 4/5; LED-V2:
    CES 80, bins 12/13); the other 19 spectra — ordinary sources — raise no knife-edge warning."""
    flagged = []
    for i, name in enumerate(CIE_NAMES):
        h = _colour_reference_hues(colour, name)
        expected = T.hue_edge_pairs(h[None, :])[0]
        assert cie_eval.tm30.hue_edge_pairs[i] == expected, name
        knife = [w for w in cie_eval.warnings[i] if "knife edge" in w]
        assert len(knife) == len({c for _, c in expected}), name
        if expected:
            flagged.append(name)
    assert flagged == ["FL12", "LED-V2"]
    assert cie_eval.tm30.hue_edge_pairs[CIE_NAMES.index("FL12")] == ((4, 36), (5, 36))
    (w,) = [w for w in cie_eval.warnings[CIE_NAMES.index("FL12")] if "knife edge" in w]
    assert "CES 36" in w and "hue bins 4 and 5" in w


def test_knife_edges_stay_with_their_spectrum_beside_spectra_without_figures(colour, cie_eval):
    """Spectra without TM-30 figures (narrow blue and red bands, whose chromaticity lies beyond
    the Planckian table: no reference) before, between and after FL12 and LED-V2: each spectrum keeps its own knife-edge pairs (colour-science's reference hues, as
    above), the spectra without figures have none."""
    from lumeval.engine import evaluate
    from lumeval.spectra.model import SpectrumSet

    wl = np.arange(380.0, 781.0, 5.0)
    names = ["blue-450", "FL12", "red-620", "LED-V2", "blue-455"]
    rows = []
    for n in names:
        if n in CIE_NAMES:
            rows.append(np.asarray(colour.SDS_ILLUMINANTS[n].values, float))
        else:
            rows.append(np.exp(-0.5 * ((wl - float(n[-3:])) / 10.0) ** 2) + 1e-6)
    with np.errstate(all="ignore"):
        ev = evaluate(SpectrumSet(wl, np.array(rows), tuple(names), tuple(names)))
    pairs = ev.tm30.hue_edge_pairs
    assert len(pairs) == len(names)
    assert pairs[1] == T.hue_edge_pairs(_colour_reference_hues(colour, "FL12")[None, :])[0] == ((4, 36), (5, 36))
    assert pairs[3] == T.hue_edge_pairs(_colour_reference_hues(colour, "LED-V2")[None, :])[0]
    assert pairs[3] and pairs[0] == pairs[2] == pairs[4] == ()
    assert np.isnan(ev.reference_cct_K[[0, 2, 4]]).all() and np.isnan(ev.tm30.Rf[[0, 2, 4]]).all()


def test_verdict_on_an_affected_bin_carries_the_warning(cie_eval):
    """A criteria clause on Rf,h4 (affected for FL12 by CES 36) carries a knife-edge warning
    naming bin and sample; a clause on Rf,h7 does not; outcomes are unchanged."""
    from lumeval.criteria import parse_criteria

    crit = parse_criteria(
        'lumeval_criteria = 1\n[[clause]]\nid = "h4"\nfigure = "Rf_h4"\nmin = 0\n'
        '[[clause]]\nid = "h5"\nfigure = "Rcs_h5"\nmin = -100\n'
        '[[clause]]\nid = "h7"\nfigure = "Rf_h7"\nmin = 0\n', "t")
    res = {r.clause_id: r for r in crit.evaluate(cie_eval).results}
    i = CIE_NAMES.index("FL12")
    assert res["h4"].outcome[i] == "pass" and res["h7"].outcome[i] == "pass"
    assert "knife edge" in res["h4"].reason[i] and "CES 36" in res["h4"].reason[i] and "hue bin 4" in res["h4"].reason[i]
    assert "CES 36" in res["h5"].reason[i] and "hue bin 5" in res["h5"].reason[i]
    assert res["h7"].reason[i] == ""
    j = CIE_NAMES.index("FL1")
    assert res["h4"].reason[j] == "" and res["h5"].reason[j] == ""


def test_knife_edge_through_the_cli(tmp_path, capsys, colour):
    """FL12 (CIE 15:2018 table) through `lumeval check --format json`: the spectrum's warnings and
    the Rf,h4 verdict both name CES 36; the Rf verdict (not a hue-bin figure) carries none."""
    from lumeval.cli import main

    sd = colour.SDS_ILLUMINANTS["FL12"]
    f = tmp_path / "f12.csv"
    f.write_text("wavelength_nm,F12\n" + "".join(f"{w:.0f},{v:.6f}\n" for w, v in zip(sd.wavelengths, sd.values)))
    c = tmp_path / "c.toml"
    c.write_text('lumeval_criteria = 1\n[[clause]]\nid = "h4"\nfigure = "Rf_h4"\nmin = 0\n'
                 '[[clause]]\nid = "Rf"\nfigure = "Rf"\nmin = 0\n', encoding="utf-8")
    try:
        main(["check", str(f), "--criteria", str(c), "--format", "json"])
        code = 0
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    assert code == 0, err
    (s,) = json.loads(out)["spectra"]
    assert any("knife edge" in w and "CES 36" in w for w in s["warnings"])
    by = {r["id"]: r for r in s["clauses"]}
    assert by["h4"]["outcome"] == "pass" and "CES 36" in by["h4"]["reason"]
    assert by["Rf"]["reason"] is None


def test_reference_hue_is_atan2_in_degrees_modulo_360():
    """reference_hue equals numpy's own atan2 → degrees → remainder 360° bit for bit (its
    shortcut for the remainder is exact for |h| ≤ 180°), signed zeros and non-finite a′, b′
    included."""
    rng = np.random.default_rng(7)
    jab = rng.normal(size=(300, 99, 3)) * 30.0
    jab[0, :6, 1:] = [[0.0, 0.0], [-0.0, 0.0], [0.0, -0.0], [-1e-300, -0.0], [-5.0, -1e-300], [-5.0, 1e-300]]
    jab[1, :4, 1:] = [[np.nan, 1.0], [1.0, np.inf], [-np.inf, -np.inf], [-np.inf, 0.0]]
    got = T.reference_hue(jab)
    want = np.degrees(np.arctan2(jab[..., 2], jab[..., 1])) % 360.0
    assert np.array_equal(got, want, equal_nan=True)
    assert np.array_equal(np.signbit(got), np.signbit(want))
    assert ((got[np.isfinite(got)] >= 0.0) & (got[np.isfinite(got)] < 360.0)).all()


def test_bin_positions_equal_those_of_the_reference_hue():
    """The engine's bins and knife-edge positions (tm30._bin_positions: arctan of b′/a′, and
    arctan2 near the edges) equal those computed from tm30.reference_hue (numpy's arctan2, the
    form colour-science uses: h = atan2(b′, a′) in degrees, modulo 360°) on generated J′a′b′
    with a third of the hues on, just inside or just outside the edges and the knife-edge band
    (±1e-12°, ±1e-7°, ±0.01°, 0.0100001°), chroma from 1e-8 to 100, and a′ or b′ zero or −0."""
    rng = np.random.default_rng(5)
    m = 200
    for _ in range(20):
        r = 10 ** rng.uniform(-8, 2, (m, 99))
        ang = rng.uniform(0, 2 * np.pi, (m, 99))
        k, sel = rng.integers(0, 16, (m, 99)), rng.random((m, 99)) < 0.3
        offs = rng.choice([0.0, 1e-12, -1e-12, 0.01, -0.01, 0.0100001, -0.0100001, 1e-7, -1e-7], sel.sum())
        ang[sel] = np.deg2rad(k[sel] * 22.5 + offs)
        jr = np.stack([rng.uniform(0, 100, (m, 99)), r * np.cos(ang), r * np.sin(ang)], -1)
        jr[..., 1][rng.random((m, 99)) < 0.02] = 0.0
        jr[..., 2][rng.random((m, 99)) < 0.02] = 0.0
        neg = rng.random((m, 99)) < 0.02
        jr[..., 2][neg] = -0.0
        jr[..., 1][neg & (rng.random((m, 99)) < 0.5)] = -0.0
        hq = T.reference_hue(jr) / T.BIN_WIDTH_DEG
        fl = np.floor(hq)
        pos = (hq - fl) * T.BIN_WIDTH_DEG
        got_fl, got_pos, near_edge = T._bin_positions(jr)
        np.testing.assert_array_equal(got_fl, fl)
        want = T.hue_edge_pairs(T.reference_hue(jr))  # the public function's own computation
        assert T._edge_pairs(got_pos, got_fl, m, np.nonzero(near_edge)) == want
        assert T._edge_pairs(pos, fl, m, np.nonzero(np.ones(pos.shape, dtype=bool))) == want  # every CES a candidate
        tol = T.HUE_EDGE_TOLERANCE_DEG
        near = (pos <= tol) | (pos >= T.BIN_WIDTH_DEG - tol)  # positions that make knife edges: the same bits
        np.testing.assert_array_equal(got_pos[near], pos[near])
