"""The CSV reader's fast paths give the same cells and the same number verdicts as its rules.

- Splitting: Python's ``csv`` module (the reader's rule for delimited lines, quote ``"``,
  ``skipinitialspace``) is the reference for :func:`lumeval.spectra.text._split`'s plain
  ``str.split`` fast path on lines without a quote.
- Numbers: the number regex ``_NUMBER`` (per cell, the documented rule: sign, digits, one
  decimal mark, exponent) is the reference for the row check by character set + numpy
  conversion in ``_RowMemo``; values must equal Python's ``float`` of the cell.
"""

from __future__ import annotations

import csv
import random

import numpy as np
import pytest

from lumeval.spectra import text as T

_PIECES = ["1", "0", "42", ".5", "1.", "1e5", "1E-3", "+2", "-7.25", "e", ".", "-", "+", ",", "1,5", "nan",
           "inf", "1_0", "٣", " ", "\t", "\xa0", "x", "1.2.3", "1e", "\x1f", "", "0x1", "\u2003", ";"]


def _random_cell(rng: random.Random) -> str:
    return "".join(rng.choice(_PIECES) for _ in range(rng.randint(1, 3)))


@pytest.mark.parametrize("delim", ["\t", ";", ","])
def test_split_fast_path_matches_csv_module(delim):
    rng = random.Random(17)
    for _ in range(3000):
        line = delim.join(_random_cell(rng) for _ in range(rng.randint(1, 6))).strip()
        if '"' in line or not line:
            continue
        ref = [c.strip() for c in next(csv.reader([line], delimiter=delim, quotechar='"', skipinitialspace=True))]
        while ref and ref[-1] == "":
            ref.pop()
        assert T._split(line, delim) == ref, repr(line)


@pytest.mark.parametrize("decimal_comma", [False, True])
def test_row_check_matches_number_rule(decimal_comma):
    rng = random.Random(3 + decimal_comma)
    n_numeric = 0
    for _ in range(6000):
        cells = [_random_cell(rng).strip() for _ in range(rng.randint(1, 5))]
        if rng.random() < 0.5:  # many rows of plain numbers too
            cells = [f"{rng.uniform(-1e3, 1e3):.{rng.randint(0, 9)}{rng.choice('fe')}}" for _ in cells]
            if decimal_comma:
                cells = [c.replace(".", ",") for c in cells]
        memo = T._RowMemo()
        expected = all(T._is_number(c, decimal_comma) for c in cells) and bool(cells)
        assert memo.all_numbers(cells, decimal_comma) == expected, cells
        if expected:
            n_numeric += 1
            got = memo.values(cells, decimal_comma)
            want = [float(c.replace(",", ".") if decimal_comma else c) for c in cells]
            np.testing.assert_array_equal(got, np.array(want))
    assert n_numeric > 1000
