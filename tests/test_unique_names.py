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


def test_seen_names_gives_the_renaming_of_the_dict():
    """A lot keeps its names in a SeenNames (a set, and suffix numbers only of repeated names):
    batch after batch, the same names and notes as the dict, whether a batch is all new (the
    fast path), repeats a name within itself (nothing of it may be kept by the fast path), or
    meets names given before, including names that look like suffixed ones."""
    from lumeval.spectra.read import SeenNames

    rng = np.random.default_rng(3)
    pool = [f"n{i}" for i in range(40)] + ["n1 (2)", "n2 (3)", "x", "x (2)"]
    d: dict[str, int] = {}
    s = SeenNames()
    batches = [[f"fresh{i}" for i in range(30)], ["n1", "n1", "n2"], ["n1 (2)", "q"], ["x (2)", "x", "x"]]
    batches += [list(rng.choice(pool, size=int(rng.integers(1, 25)))) for _ in range(60)]
    for names in batches:
        a = unique_names(_set(names), d)
        b = unique_names(_set(names), s)
        assert a.names == b.names and a.notes == b.notes, names
        assert len(s) == len(d) and all(k in s and s[k] == v for k, v in d.items())
    assert "never given" not in s
