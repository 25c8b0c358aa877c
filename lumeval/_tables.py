"""colour-science's CIE tables, loaded without importing colour-science when possible.

Every tabulated function lumeval computes with (colour-matching functions, V′(λ), the CIE D-series
basis, illuminant D65, the CIE 13.3 test colour samples and the CIE 224 colour evaluation
samples) comes from colour-science, which transcribes the CIE tables. Importing colour-science
costs about 0.7 s (it imports scipy.interpolate and much else), which would be most of a
single-spectrum ``lumeval inspect``. So the tables are also kept in a snapshot,
``lumeval/data/colour_tables.npz``, written by ``tools/build_colour_tables.py`` *from* the
installed colour-science and stamped with its version:

* when the installed colour-science has the snapshot's version, the snapshot is used (a few
  milliseconds); ``tests/test_colour_tables.py`` checks that it equals colour-science's live
  tables exactly;
* otherwise (another colour-science release), the tables are taken live from colour-science,
  so an upgrade can never leave lumeval computing with stale data.

Each table is ``(wavelengths_nm (W,), values (W,) or (W, k) or (k, W))`` as documented in
:data:`TABLES`.
"""

from __future__ import annotations

from functools import cache, lru_cache
from importlib import metadata
from pathlib import Path

import numpy as np

SNAPSHOT = Path(__file__).resolve().parent / "data" / "colour_tables.npz"

OBSERVER_2 = "CIE 1931 2 Degree Standard Observer"
OBSERVER_10 = "CIE 1964 10 Degree Standard Observer"
SCOTOPIC = "CIE 1951 Scotopic Standard Observer"
#: CIE 13.3 test colour samples in order TCS01..TCS14 (colour-science's 'CIE 1995' set).
TCS_NAMES = tuple(f"TCS{k:02d}" for k in range(1, 15))


def _colour():
    from ._colour import load

    return load()


def _cmfs(observer):
    c = _colour().MSDS_CMFS[observer]
    return np.asarray(c.wavelengths, dtype=float), np.asarray(c.values, dtype=float)


def _d_basis():
    _colour()
    from colour.colorimetry import SDS_BASIS_FUNCTIONS_CIE_ILLUMINANT_D_SERIES as B

    wl = np.asarray(B["S0"].wavelengths, dtype=float)
    return wl, np.stack([np.asarray(B[k].values, dtype=float) for k in ("S0", "S1", "S2")])


def _sd(collection: str, name: str):
    sd = getattr(_colour(), collection)[name]
    return np.asarray(sd.wavelengths, dtype=float), np.asarray(sd.values, dtype=float)


def _tcs_1nm():
    """TCS01-14 at every integer wavelength 360-830 nm: the 5 nm CIE 13.3 values at the nodes,
    colour-science's Sprague interpolator between them (CIE 167:2005)."""
    _colour()
    from colour.algebra import SpragueInterpolator
    from colour.quality.datasets.tcs import SDS_TCS

    table = SDS_TCS["CIE 1995"]
    wl = np.arange(360.0, 831.0)
    out = np.empty((len(TCS_NAMES), wl.size))
    for k, name in enumerate(TCS_NAMES):
        x = np.asarray(table[name].wavelengths, dtype=float)
        y = np.asarray(table[name].values, dtype=float)
        on = np.isin(wl, x)
        out[k, on] = y[np.searchsorted(x, wl[on])]
        out[k, ~on] = SpragueInterpolator(x, y)(wl[~on])
    return wl, out


def _ces_1nm():
    """The 99 CIE 224:2017 colour evaluation samples, 1 nm, 380-780 nm: (401,), (99, 401)."""
    import os

    _colour()
    from colour.quality import cfi2017

    path = os.path.join(cfi2017.ROOT_RESOURCES_CIE2017, "tcs_cfi2017_1_nm.csv.gz")
    data = np.genfromtxt(path, delimiter=",")
    return data[:, 0].astype(float), np.ascontiguousarray(data[:, 1:].T)


#: name -> (builder from live colour-science, description)
TABLES = {
    "cmf_2": (lambda: _cmfs(OBSERVER_2), "CIE 1931 2° CMFs, 1 nm 360-830 nm, values (W, 3)"),
    "cmf_10": (lambda: _cmfs(OBSERVER_10), "CIE 1964 10° CMFs, 1 nm 360-830 nm, values (W, 3)"),
    "d_basis": (_d_basis, "CIE daylight S0, S1, S2, 5 nm 300-830 nm, values (3, W)"),
    "v_scotopic": (lambda: _sd("SDS_LEFS", SCOTOPIC), "CIE 1951 scotopic V′(λ), values (W,)"),
    "d65": (lambda: _sd("SDS_ILLUMINANTS", "D65"), "CIE illuminant D65, 5 nm 300-780 nm, values (W,)"),
    "tcs": (_tcs_1nm, "CIE 13.3 TCS01-14 at 1 nm 360-830 nm (Sprague between 5 nm nodes), values (14, W)"),
    "ces": (_ces_1nm, "CIE 224:2017 CES 1-99, 1 nm 380-780 nm, values (99, W)"),
}


def colour_science_version() -> str | None:
    try:
        return metadata.version("colour-science")
    except metadata.PackageNotFoundError:  # pragma: no cover - a hard dependency
        return None


@lru_cache(maxsize=1)
def _snapshot() -> dict | None:
    """The snapshot's arrays when it matches the installed colour-science, else None."""
    if not SNAPSHOT.exists():
        return None
    with np.load(SNAPSHOT, allow_pickle=False) as z:
        if str(z["colour_science_version"]) != colour_science_version():
            return None
        return {k: z[k] for k in z.files}


@cache
def table(name: str) -> tuple[np.ndarray, np.ndarray]:
    """``(wavelengths_nm, values)`` of the table ``name`` (a key of :data:`TABLES`), read-only."""
    if name not in TABLES:
        raise KeyError(f"unknown table {name!r}")
    snap = _snapshot()
    if snap is not None and f"{name}__wl" in snap:
        wl, vals = snap[f"{name}__wl"], snap[f"{name}__values"]
    else:
        wl, vals = TABLES[name][0]()
    wl = np.array(wl, dtype=float)
    vals = np.array(vals, dtype=float)
    wl.setflags(write=False)
    vals.setflags(write=False)
    return wl, vals


def build_snapshot(path: Path = SNAPSHOT) -> Path:
    """Write the snapshot from the live colour-science tables (atomically); returns the path."""
    from ._io import atomic_output

    arrays = {"colour_science_version": np.array(colour_science_version())}
    for name, (build, _desc) in TABLES.items():
        wl, vals = build()
        arrays[f"{name}__wl"] = np.asarray(wl, dtype=float)
        arrays[f"{name}__values"] = np.asarray(vals, dtype=float)
    path = Path(path)
    with atomic_output(path) as fh:
        np.savez_compressed(fh, **arrays)  # type: ignore[arg-type]  # numpy stub: **kwds as allow_pickle
    return path
