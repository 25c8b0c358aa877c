"""The numbers of ``lumeval convert``'s CSV (lumeval.spectra.write.to_csv_bytes) against
Python's own ``repr`` and ``float``.

The CSV promises every value in Python's shortest repr, so that reading it back is exact. A
large set is formatted a block at a time by Arrow where its text is repr's
(lumeval.render.number_text); the check is the standard library's ``repr`` of each value, text
for text, and ``float`` of each cell read back, value for value (a picked representation, not
arithmetic: exact).
"""

from __future__ import annotations

import numpy as np
import pytest

from lumeval.render import number_text
from lumeval.spectra.model import SpectrumSet
from lumeval.spectra.write import to_csv_bytes

pytest.importorskip("pyarrow")


def _set(values: np.ndarray, wl: np.ndarray) -> SpectrumSet:
    n = values.shape[0]
    return SpectrumSet(wl, values, tuple(f"S{k}" for k in range(n)), ("t",) * n)


def _awkward(rng, n: int, w: int) -> np.ndarray:
    """Values of every kind the text forms differ on: ordinary, whole numbers, tiny and huge
    magnitudes around Arrow's and repr's thresholds, signed zero, random bit patterns."""
    v = rng.uniform(0.0, 2.0, (n, w))
    v[0] = np.round(v[0] * 1000)
    v[1] = 10.0 ** rng.uniform(-9.0, 22.0, w)
    v[2] = rng.uniform(0.99e-4, 1.01e-4, w)
    v[3] = rng.uniform(0.99e10, 1.01e10, w)
    bits = rng.integers(-(2**62), 2**62, w, dtype=np.int64).view(np.float64)
    v[4] = np.where(np.isfinite(bits), bits, 1.5)
    v[5, :3] = [-0.0, 0.0, 5e-324]
    return v


def _rows(data: bytes) -> list[str]:
    return [r for r in data.decode().split("\n") if r and not r.startswith("#")][1:]


@pytest.mark.parametrize(("n", "w"), [(6, 81), (700, 81), (150, 401)])
def test_csv_numbers_are_python_repr_and_read_back_exactly(n, w):
    rng = np.random.default_rng(n + w)
    wl = np.arange(380.0, 380.0 + w)
    v = _awkward(rng, n, w)
    rows = _rows(to_csv_bytes(_set(v, wl)))
    assert len(rows) == w
    for j, row in enumerate(rows):
        cells = row.split(",")
        assert cells == [repr(float(wl[j]))] + [repr(float(x)) for x in v[:, j]]
        back = np.array([float(c) for c in cells[1:]])
        np.testing.assert_array_equal(back, v[:, j])  # exact: repr reads back bit for bit
        assert np.array_equal(np.signbit(back), np.signbit(v[:, j]))


def test_a_large_set_takes_the_block_path_and_a_set_with_nan_keeps_repr(monkeypatch):
    calls = []
    real = number_text.number_rows
    monkeypatch.setattr(number_text, "number_rows", lambda b: calls.append(b.shape) or real(b))
    v = _awkward(np.random.default_rng(1), 700, 81)
    wl = np.arange(380.0, 461.0)
    to_csv_bytes(_set(v, wl))
    assert calls == [(81, 701)]
    v[3, 7] = np.nan  # a value that is not finite: every cell by repr, as before ("nan")
    rows = _rows(to_csv_bytes(_set(v, wl)))
    assert calls == [(81, 701)] and rows[7].split(",")[4] == "nan"
