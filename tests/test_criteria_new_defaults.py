"""`lumeval criteria new` writes files that agree with themselves (issue: defaults that agree).

Outside sources:
- a Planckian radiator is its own CIE 13.3 and TM-30 reference below 4000 K (and close to it
  above), so Ra = R9 = 100 and Rf ≈ 100, Rg ≈ 100, Rcs,h1 ≈ 0 (CIE 13.3-1995; CIE 224:2017), and
  its Duv is 0 by definition (CIE 15 / ANSI C78.377);
- ANSI C78.377-2017 Table 1 (target CCT ± tolerance, target Duv; secondary copy named in
  lumeval/criteria/regions.py) and its published category centres (project reference notes,
  agreeing with the s006112/PER copy);
- IEC 60081 F3000 centre (0.440, 0.403) and ellipse (secondary, see regions.py).
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest

from lumeval.criteria import load_criteria, parse_criteria, presets, regions

from .conftest import run_cli_in_process as run

CATEGORIES = sorted(regions.ANSI_C78377_2017)
LEVELS = ("basic", "good", "high")
# ANSI C78.377-2017 published centres (x, y), 4 decimals — secondary (reference notes).
PUBLISHED_CENTRES = {
    2200: (0.5018, 0.4153), 2500: (0.4806, 0.4141), 2700: (0.4578, 0.4101), 3000: (0.4339, 0.4033),
    3500: (0.4078, 0.3930), 4000: (0.3818, 0.3797), 4500: (0.3613, 0.3670), 5000: (0.3446, 0.3551),
    5700: (0.3287, 0.3425), 6500: (0.3123, 0.3283),
}


@pytest.mark.parametrize("nominal", CATEGORIES)
def test_every_level_passes_a_planckian_source_at_the_category_centre(tmp_path, capsys, planckians, nominal):
    """Every level `criteria new` offers, for every category, passes a Planckian source at the
    category's target CCT, through the real CLI (exit 0, every clause 'pass')."""
    for level in LEVELS:
        crit = tmp_path / f"{nominal}_{level}.toml"
        code, _, err = run(["criteria", "new", crit, "--nominal-cct", nominal, "--level", level], capsys)
        assert code == 0, err
        code, out, err = run(["check", planckians[nominal], "--criteria", crit, "--format", "json"], capsys)
        doc = json.loads(out)
        failing = [(c["id"], c["outcome"], c["measured"], c["limit"]) for c in doc["spectra"][0]["clauses"] if c["outcome"] != "pass"]
        assert code == 0 and doc["overall"] == "pass", (nominal, level, failing, err)


def test_no_clause_is_centred_on_another_standards_point(tmp_path, capsys):
    """The 3000 K file used to carry a 3-step SDCM clause around IEC 60081 F3000 (x 0.440), which a
    source at the ANSI 3000 K centre fails (3.9 steps by that ellipse). Now every active
    chromaticity clause derives from the ANSI category, and the offered SDCM clause is centred on
    the category's published centre."""
    f3000 = regions.iec60081_ellipse("F3000")
    steps = float(f3000.steps(np.array([PUBLISHED_CENTRES[3000]]))[0])
    assert steps > 3.0  # why the old default failed (F3000 centre and ellipse, secondary)
    for n in CATEGORIES:
        code, out, err = run(["criteria", "new", "--nominal-cct", n, "--level", "good"], capsys)
        assert code == 0, err
        c = parse_criteria(out, "new")
        assert [k.KIND for k in c.clauses].count("sdcm") == 0
        assert 'centre = "F' not in out.split("# More clause kinds")[0]
        # the offered SDCM clause, uncommented, is centred on the published centre
        block = re.search(r"# \[\[clause\]\]\n# id = \"SDCM\"\n(?:# .*\n)+", out).group(0)
        sd = parse_criteria("[[clause]]\n" + "".join(ln[2:] + "\n" for ln in block.splitlines()[1:]), "sdcm").clauses[0]
        np.testing.assert_allclose(sd.ellipse.centre_xy, PUBLISHED_CENTRES[n], atol=1e-4, err_msg=str(n))
        assert sd.max_steps == 3


@pytest.mark.parametrize("nominal", CATEGORIES)
def test_duv_band_contains_the_quadrangle_and_the_centre(nominal):
    """The template's Duv band spans the ANSI quadrangle: every corner's Duv (computed 2017
    construction: target Duv at the edge ± 0.006) lies inside it, and so does the target Duv."""
    lo, hi = presets.ansi_duv_band(nominal)
    q = regions.ansi_computed_quadrangle(nominal)
    assert lo <= q.duv_edges.min() and q.duv_edges.max() <= hi
    assert hi - q.duv_edges.max() < 1e-4 and q.duv_edges.min() - lo < 1e-4  # rounded outward by < 1e-4 only
    assert lo <= regions.ANSI_C78377_2017[nominal].target_duv <= hi


def test_generated_file_loads_from_disk(tmp_path, capsys):
    p = tmp_path / "c.toml"
    code, _, err = run(["criteria", "new", p, "--nominal-cct", 6500, "--level", "high"], capsys)
    assert code == 0, err
    c = load_criteria(p)
    quad = c.clauses[0]
    assert quad.KIND == "ansi_quadrangle" and quad.edition == "2017" and quad.nominal == 6500
