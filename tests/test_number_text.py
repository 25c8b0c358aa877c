"""CSV number text (lumeval.render.number_text) against Python's own ``repr`` and ``float``.

The per-sample CSV promises every finite value in Python's shortest repr (read back bit for
bit) and an empty cell for a missing one; large blocks are formatted by Arrow where its text is
the same. The check is the standard library's ``repr`` of each value, text for text, and
``float`` of each cell, value for value (a picked representation, not arithmetic: exact).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from lumeval.render import number_text
from lumeval.render.number_text import number_rows

pytest.importorskip("pyarrow")


def _expected(block: np.ndarray) -> list[str]:
    return [",".join(repr(v) if math.isfinite(v) else "" for v in row) for row in block.tolist()]


def _block(rng, rows: int) -> np.ndarray:
    """Columns like a lot's figures, and columns of every awkward kind: whole numbers, tiny and
    huge magnitudes around Arrow's and repr's thresholds, signed zero, NaN and infinities, random
    bit patterns."""
    cols = [rng.normal(75.0, 5.0, rows), rng.normal(0.0, 0.003, rows), np.round(rng.normal(600.0, 5.0, rows)),
            10.0 ** rng.uniform(-8.0, 22.0, rows) * np.where(rng.random(rows) < 0.5, -1.0, 1.0),
            rng.uniform(0.99e-4, 1.01e-4, rows), rng.uniform(0.99e10, 1.01e10, rows),
            rng.integers(-(2**62), 2**62, rows, dtype=np.int64).view(np.float64),
            np.full(rows, np.nan)]
    b = np.column_stack(cols * 4)
    b[::7, 0] = np.nan
    b[1, 1], b[2, 1], b[3, 1], b[4, 1] = -0.0, 0.0, np.inf, -np.inf
    b[5, 0], b[6, 0] = 1e16, 123456789012.5
    return b


@pytest.mark.parametrize("rows", [7, 50, 1250, 4096])
def test_rows_are_python_repr_and_read_back_exactly(rows):
    rng = np.random.default_rng(rows)
    block = _block(rng, rows)
    got = number_rows(block)
    assert got == _expected(block)
    for line, row in zip(got, block.tolist()):
        cells = line.split(",")
        assert len(cells) == block.shape[1]
        for cell, v in zip(cells, row):
            if math.isfinite(v):
                assert float(cell) == v and math.copysign(1.0, float(cell)) == math.copysign(1.0, v)
            else:
                assert cell == ""


def test_large_blocks_take_the_arrow_path(monkeypatch):
    # the Arrow path is the one under test above for 1250 and 4096 rows: make sure it ran
    calls = []
    real = number_text._arrow_texts
    monkeypatch.setattr(number_text, "_arrow_texts", lambda *a: calls.append(1) or real(*a))
    block = _block(np.random.default_rng(5), 4096)
    assert number_rows(block) == _expected(block)
    assert calls


def test_without_arrow_or_when_its_text_differs_repr_is_used(monkeypatch):
    block = _block(np.random.default_rng(9), 2048)
    monkeypatch.setattr(number_text, "_arrow_ok", False)
    monkeypatch.setattr(number_text, "_arrow_texts", lambda *a: pytest.fail("Arrow used"))
    assert number_rows(block) == _expected(block)
    # a pyarrow whose text differs from repr on the probe (here: a trailing 0) is not used
    monkeypatch.setattr(number_text, "_arrow_ok", None)
    monkeypatch.setattr(number_text, "_arrow_texts",
                        lambda pa, v: pa.array([repr(float(x)) + "0" for x in v], pa.string()))
    assert number_text._arrow_usable() is False
    assert number_rows(block) == _expected(block)


def test_formatting_does_not_import_pyarrow_compute():
    # Arrow's functions are called through the extension module: importing pyarrow.compute
    # (a Python wrapper written for every function) cost each forked CSV worker ~0.1 s
    import subprocess
    import sys

    code = ("import sys, numpy as np; from lumeval.render.number_text import number_rows; "
            "b = np.random.default_rng(3).normal(75.0, 5.0, (2000, 40)); b[0, 0] = np.nan; b[1, 1] = 600.0; "
            "rows = number_rows(b); "
            "assert rows[2] == ','.join(map(repr, b[2].tolist())), rows[2]; "
            "assert rows[0].startswith(','); "
            "print('pyarrow.compute' in sys.modules, 'pyarrow' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert out == ["False", "True"]
