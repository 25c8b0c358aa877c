"""lumeval._paths.source_file: the file a spectrum's source names when a file or folder name
holds "#" (sources are FILE or FILE#LOCATOR). The expected paths are the files this test
creates; no outside reference is needed: this is lumeval's own naming of sources."""

from __future__ import annotations

import numpy as np

from lumeval._paths import source_file
from lumeval.render.provenance import input_paths_from_sources
from lumeval.spectra.read import read_spectra


def test_the_file_part_of_a_source_whose_names_hold_hashes(tmp_path):
    folder = tmp_path / "batch#2"
    folder.mkdir()
    lot = folder / "lot#3.csv"
    lot.write_text("wavelength (nm),a,b\n" + "".join(f"{w},0.5,0.6\n" for w in range(380, 781, 5)), encoding="utf-8")
    f = str(lot)
    assert source_file(f) == f  # one spectrum: the source is the file
    assert source_file(f + "#2") == f and source_file(f + "#row 5") == f
    assert source_file(f + "#a#b") == f  # a column named "a#b"
    assert source_file(str(tmp_path / "gone#x")) == str(tmp_path / "gone")  # no such file: up to the first "#"
    assert source_file("plain.csv") == "plain.csv"
    # the sources the reader gives, and the provenance's input files from them
    s = read_spectra(lot)
    assert [source_file(x) for x in s.sources] == [f, f]
    assert input_paths_from_sources(s.sources) == [f]
    assert np.all(np.isfinite(s.values))


def test_a_tunable_source_is_shown_without_its_folders(tmp_path):
    from lumeval.render.tunable import _short

    folder = tmp_path / "d#1"
    folder.mkdir()
    f = folder / "warm#1.csv"
    f.write_text("x", encoding="utf-8")
    assert _short(f"{f}#ch 1") == "warm#1.csv#ch 1"  # (the folder "d#1" was shown as part of the name)
    assert _short(str(f)) == "warm#1.csv"
