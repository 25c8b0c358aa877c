"""Shared test helpers. Reference data come from colour-science's copies of CIE tables."""

from __future__ import annotations

import warnings

import numpy as np
import pytest


@pytest.fixture(scope="session")
def colour():
    from lumeval._colour import load

    return load()


def cie_illuminant(colour, name: str):
    """(wavelengths, values) of a CIE illuminant as colour-science ships it (CIE 15:2004 tables)."""
    sd = colour.SDS_ILLUMINANTS[name]
    return np.asarray(sd.wavelengths, dtype=float), np.asarray(sd.values, dtype=float)


@pytest.fixture(scope="session")
def luxpy():
    """The independent colour library used as a test oracle (GPLv3: used, never copied)."""
    # importing luxpy changes numpy's global floating-point error settings (divide/invalid ->
    # raise); restore them so that later tests see numpy's defaults
    saved = np.geterr()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import luxpy as lx
    np.seterr(**saved)
    return lx


# The browser tests' headless Chromium (tests/_browser.py; installed or loudly skipped), and the
# history store's tests on SQLite and on a throwaway PostgreSQL server (tests/_postgres.py).
from ._browser import chromium  # noqa: E402,F401
from ._postgres import postgres_server, store_url  # noqa: E402,F401


def run_cli_in_process(argv, capsys):
    """Run ``lumeval ARGV`` in this process through the console entry point; (exit code, stdout,
    stderr). A SystemExit without an integer code counts as 0 (None) or 2 (a message)."""
    import os

    from lumeval.cli import main

    try:  # paths stay paths (bytes for names that are not UTF-8); numbers become text
        main([os.fspath(a) if isinstance(a, str | bytes | os.PathLike) else str(a) for a in argv])
        code = 0
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 2)
    out, err = capsys.readouterr()
    return code, out, err


def assert_clean_error(code, err, *needles) -> str:
    """Bad input's one clean line: exit code 2, no traceback, a single ``lumeval: error: ...``
    line on stderr containing every needle. Returns the line."""
    assert code == 2, err
    assert "Traceback" not in err and "internal error" not in err, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("lumeval: error: "), err
    for n in needles:
        assert n in lines[0], err
    return lines[0]


@pytest.fixture(scope="module")
def planckians(tmp_path_factory):
    """One Planckian spectrum (1 nm, 360-830 nm, normalised to its peak) at each ANSI C78.377-2017
    category's target CCT, as CSV files by category (criteria tests of `criteria new`)."""
    import numpy as np

    from lumeval.criteria import regions
    from lumeval.metrics.planck import planck_exitance

    d = tmp_path_factory.mktemp("planck")
    wl = np.arange(360.0, 831.0, 1.0)
    out = {}
    for n in sorted(regions.ANSI_C78377_2017):
        s = planck_exitance(wl, regions.ANSI_C78377_2017[n].target_cct_K)
        s = s / s.max()
        p = d / f"planck_{n}.csv"
        p.write_text(f"wavelength_nm,planck_{n}\n" + "".join(f"{w:.0f},{v:.10f}\n" for w, v in zip(wl, s)))
        out[n] = p
    return out
