"""The table snapshot (lumeval/data/colour_tables.npz) against colour-science's live tables.

colour-science is the independent source of every CIE table lumeval uses; the snapshot only
saves its import time. These checks hold it to the live tables within rtol 1e-12 (a snapshot
from another table or another colour-science version differs by far more; colour-science builds
some tables by computation at import, whose last bit may differ between CPUs and BLAS kernels),
and show that a version mismatch falls back to the live tables.
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval import _tables


@pytest.mark.parametrize("name", sorted(_tables.TABLES))
def test_snapshot_equals_live_colour_science(name):
    snap = _tables._snapshot()
    assert snap is not None, "snapshot missing or built from another colour-science version: run tools/build_colour_tables.py"
    wl_live, vals_live = _tables.TABLES[name][0]()
    # wavelengths are table keys (exact by construction); values within rtol 1e-12 of the live
    # table, with an absolute floor of 1e-12 of the table's largest value for entries near zero
    np.testing.assert_array_equal(snap[f"{name}__wl"], wl_live)
    vals_live = np.asarray(vals_live, dtype=float)
    np.testing.assert_allclose(snap[f"{name}__values"], vals_live, rtol=1e-12, atol=1e-12 * np.abs(vals_live).max())


def test_tables_spot_values_from_the_cie_tables():
    """Spot values (CIE 15:2004 Table T.4, CIE 1931 2°; CIE 15:2004 Table T.1 D65; quoted from
    memory, consistent with colour-science): ȳ(555 nm) = 1.0; x̄(600 nm) = 1.0622;
    D65(560 nm) = 100.0."""
    wl, cmf = _tables.table("cmf_2")
    assert cmf[wl == 555.0, 1][0] == pytest.approx(1.0, abs=1e-4)
    assert cmf[wl == 600.0, 0][0] == pytest.approx(1.0622, abs=1e-4)
    wl, d65 = _tables.table("d65")
    assert d65[wl == 560.0][0] == pytest.approx(100.0, abs=1e-6)


def test_version_mismatch_uses_live_tables(monkeypatch):
    monkeypatch.setattr(_tables, "colour_science_version", lambda: "0.0.0-not-installed")
    _tables._snapshot.cache_clear()
    _tables.table.cache_clear()
    try:
        assert _tables._snapshot() is None
        wl, vals = _tables.table("cmf_10")
        live = _tables.TABLES["cmf_10"][0]()
        np.testing.assert_allclose(vals, live[1], rtol=1e-12, atol=1e-12 * np.abs(live[1]).max())
    finally:
        _tables._snapshot.cache_clear()
        _tables.table.cache_clear()


def test_tables_are_read_only():
    wl, vals = _tables.table("tcs")
    with pytest.raises(ValueError):
        vals[0, 0] = 1.0
