"""read.unique_names: names are unique within a run; the repeated ones get a suffix and a note.

The expected names are written out by hand from the rule in the function's docstring
(``name (2)``, ``name (3)``..., skipping names already taken); no outside reference is needed:
this is lumeval's own naming rule, not a computed figure."""

from __future__ import annotations

import numpy as np

from lumeval.spectra.model import SpectrumSet
from lumeval.spectra.read import unique_names


def _set(names):
    n = len(names)
    return SpectrumSet(np.arange(380.0, 781.0, 5.0), np.ones((n, 81)), tuple(names), ("src",) * n)


def test_new_names_pass_unchanged_and_are_remembered():
    seen: dict[str, int] = {}
    s = _set(["a", "b", "c"])
    assert unique_names(s, seen) is s  # nothing to rename: the same set
    assert seen == {"a": 1, "b": 1, "c": 1}


def test_repeated_names_get_suffixes_and_notes_in_input_order():
    seen: dict[str, int] = {"a": 1, "b (2)": 1}
    out = unique_names(_set(["x", "a", "b", "b", "x", "a"]), seen)
    assert out.names == ("x", "a (2)", "b", "b (3)", "x (2)", "a (3)")
    assert out.notes[0] == () and out.notes[2] == ()
    assert out.notes[1] == ("named 'a (2)': another spectrum of this run is already named 'a'",)
    assert out.notes[3] == ("named 'b (3)': another spectrum of this run is already named 'b'",)
    # the next set of the same run continues the count
    again = unique_names(_set(["a", "new"]), seen)
    assert again.names == ("a (4)", "new")
