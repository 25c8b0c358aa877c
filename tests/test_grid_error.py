"""One exception class for the one grid check every metric makes (lumeval.errors.GridError):
a spectrum that is not on a prepared grid (here: 2 nm spacing, or a non-uniform grid) is
refused the same way by the tristimulus summation, CIE 13.3, CIE 224 / TM-30 and photometry.
The classes the check raised before (InputError, ComputationError, ValueError) still catch it."""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.errors import ComputationError, GridError, InputError, LumevalError
from lumeval.metrics.colorimetry import tristimulus
from lumeval.metrics.cri import cie133_cri
from lumeval.metrics.photometry import photometry
from lumeval.metrics.tm30 import tm30

WL2 = np.arange(380.0, 781.0, 2.0)  # uniform but neither 1 nm nor 5 nm
UNEVEN = np.concatenate([np.arange(380.0, 500.0, 1.0), np.arange(500.0, 781.0, 5.0)])

CALLS = {
    "tristimulus": lambda wl: tristimulus(wl, np.ones(wl.size)),
    "cie133_cri": lambda wl: cie133_cri(wl, np.ones(wl.size), 3000.0),
    "tm30": lambda wl: tm30(wl, np.ones(wl.size), 3000.0),
    "photometry": lambda wl: photometry(wl, np.ones(wl.size)),
}


@pytest.mark.parametrize("name", sorted(CALLS))
def test_every_metric_raises_the_one_grid_error(name):
    grids = [UNEVEN] if name in ("tristimulus", "photometry") else [WL2, UNEVEN]  # these two take any uniform grid
    for wl in grids:
        with pytest.raises(GridError) as e:
            CALLS[name](wl)
        assert "prepare" in (e.value.fix or ""), e.value.message


def test_the_former_classes_still_catch_it():
    err = GridError("x")
    for cls in (InputError, LumevalError, ComputationError, ValueError):
        assert isinstance(err, cls)
    with pytest.raises(ValueError):
        tristimulus(UNEVEN, np.ones(UNEVEN.size))
