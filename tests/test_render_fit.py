"""Terminal tables are never cut: a table wider than the terminal is narrowed where its text may
wrap, or split into consecutive tables of whole columns that repeat the row names
(lumeval.render.fit, applied by the reports' console). Layout checks only: every cell's text
must come out whole, on its row, within the width; the numbers themselves are tested against
published values elsewhere.

Before: at 80 columns (the width of any output sent to a pipe or a file) the demo lot's figures
table printed Duv as "-0.00…", the tunable mix table its settings as "2750…" and the claims table
its header as "measur…".
"""

from __future__ import annotations

import io
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from rich import box
from rich.table import Table
from rich.text import Text

from lumeval.render.safe import console

REPO = Path(__file__).resolve().parents[1]
LABELS = ["CCT (K)", "Duv", "melanopic EDL (cd/m²)", "peak wavelength (nm)", "R9"]
HEADS = ["mean", "std", "min", "p5", "p95", "max", "n/a"]


def _cells(r: int) -> list[str]:
    return [f"{(-1) ** (r + c) * (r + 1) * 0.00123 * (c + 1):.5f}" for c in range(len(HEADS))]


def _figures_table(title="Figures") -> Table:
    t = Table(title=title, title_justify="left", box=box.SIMPLE_HEAVY, pad_edge=False)
    t.add_column("figure", no_wrap=True)
    for h in HEADS:
        t.add_column(h, justify="right", no_wrap=True)
    for r, label in enumerate(LABELS):
        t.add_row(label, *_cells(r))
    return t


def _print(renderable, width: int) -> str:
    buf = io.StringIO()
    con = console(file=buf, width=width, color_system=None, highlight=False)
    con.print(renderable)
    return buf.getvalue()


@pytest.mark.parametrize("width", [40, 50, 60, 80, 100, 200])
def test_every_number_is_printed_whole_on_its_row_at_any_width(width):
    out = _print(_figures_table(), width)
    lines = out.splitlines()
    assert max(len(x) for x in lines) <= width
    assert "…" not in out
    for h in HEADS:
        assert h in out.split(), h
    for r, label in enumerate(LABELS):
        # the row's label opens each line that carries its numbers (every part repeats it)
        tokens = [tok for ln in lines if ln.strip().startswith(label) for tok in ln[len(ln) - len(ln.lstrip()) + len(label):].split()]
        assert sorted(tokens) == sorted(_cells(r)), (label, width, out)
    if width >= 100:
        assert "(continued)" not in out  # fits: one table
    else:
        assert "Figures (continued)" in out


def test_a_wrapping_column_gives_way_before_any_word_is_cut():
    t = Table(box=box.SIMPLE_HEAVY, pad_edge=False)
    t.add_column("claim", no_wrap=True)
    t.add_column("as stated")
    t.add_column("measured", justify="right")
    t.add_column("accepted as")
    t.add_column("result", no_wrap=True)
    words = ["luminous_flux_lm", "100 ± 5 per cent of the stated value", "2998 K", "2870 … 3220 K", "CONTRADICTED"]
    t.add_row(*words)
    for width in (60, 70, 80):
        out = _print(t, width)
        assert max(len(x) for x in out.splitlines()) <= width
        printed = out.split()
        for w in " ".join(words).split():
            assert w in printed, (w, width, out)
        assert "measured" in printed and "measur…" not in out


def test_a_table_that_fits_is_printed_as_it_is():
    t = _figures_table(title=Text("Figures"))
    wide = _print(t, 200)
    from rich.console import Console

    buf = io.StringIO()
    Console(file=buf, width=200, color_system=None, highlight=False).print(t)
    assert wide == buf.getvalue()


def _cli(*args, columns=80):
    env = dict(os.environ, COLUMNS=str(columns))
    return subprocess.run([sys.executable, "-m", "lumeval", *args], capture_output=True, text=True, env=env,
                          timeout=300, cwd=REPO)


def test_the_lot_figures_table_shows_duv_whole_at_80_columns():
    r = _cli("lot", "spectra_demo/lot_2026w48", "-q")
    assert r.returncode == 0, r.stderr
    assert max(len(x) for x in r.stdout.splitlines()) <= 80
    duv_lines = [ln for ln in r.stdout.splitlines() if ln.split()[:1] == ["Duv"]]
    values = [tok for ln in duv_lines for tok in ln.split()[1:]]
    assert len(values) == 7, r.stdout  # mean, std, min, p5, p95, max and the undefined count
    for v in values:
        float(v)  # a number printed whole, not "-0.00…"


def test_the_tunable_mix_table_shows_every_setting_whole_at_80_columns():
    r = _cli("mix", "spectra_demo/tunable/tw2_channels.csv", "--cct", "2750:6500:250")
    assert r.returncode in (0, 1), r.stderr
    assert max(len(x) for x in r.stdout.splitlines()) <= 80
    for cct in range(2750, 6501, 250):  # the 16 settings, each opening its row in every part
        assert re.search(rf"^\s*{cct} K\s", r.stdout, re.M), (cct, r.stdout)
    assert not re.search(r"\d…", r.stdout), r.stdout


def test_the_claims_table_keeps_its_headers_whole_at_80_columns():
    r = _cli("claims", "spectra_demo/downlights/candidate_C_claritas_3000K.csv", "--claims",
             "spectra_demo/supplier_claims.toml")
    assert r.returncode == 1, r.stderr
    assert max(len(x) for x in r.stdout.splitlines()) <= 80
    assert "measured" in r.stdout.split() and "measur…" not in r.stdout


def test_a_folding_column_gives_way_and_short_columns_stay_whole():
    """A column made to fold (long paths, overflow="fold") is narrowed before a short column of
    words is broken, and a short label column keeps its line (the lot's Skipped and Requirements
    tables at 80 columns)."""
    path = "/tmp/" + "very_long_folder_name_" * 4 + "/pipe.csv"
    reason = "a FIFO (named pipe), not a regular file"
    t = Table(box=box.SIMPLE_HEAVY, pad_edge=False)
    t.add_column("entry", overflow="fold")
    t.add_column("why")
    t.add_row(path, reason)
    out = _print(t, 80)
    assert max(len(x) for x in out.splitlines()) <= 80
    rows = out.splitlines()
    rows = rows[next(i for i, ln in enumerate(rows) if "━" in ln) + 1:]
    # the path folded over the first column's lines, each line opening (after the table's edge
    # space) with its next piece
    assert "".join(ln.split()[0] for ln in rows if ln[1:2].strip()) == path, out
    assert all(w in out.split() for w in reason.split()), out

    r = Table(box=box.SIMPLE_HEAVY, pad_edge=False)
    r.add_column("requirement", ratio=1)
    r.add_column("result", ratio=2)
    r.add_row("yield ≥ 90 %", "not judged: " + "no per-sample clause in the criteria, so no sample can pass or fail " * 2)
    out = _print(r, 80)
    assert max(len(x) for x in out.splitlines()) <= 80
    assert any(ln.lstrip().startswith("yield ≥ 90 %") for ln in out.splitlines()), out


def test_the_parts_are_of_even_sizes_when_they_fit_so():
    from lumeval.render.fit import min_width, split_to_width

    t = _figures_table()
    width = min_width(t) - 2  # one part too many: two parts
    parts = split_to_width(t, width)
    assert [len(p.columns) - 1 for p in parts] == [4, 3]  # the seven number columns, 4 + 3, not 6 + 1
    assert all(p.columns[0].header == "figure" for p in parts)
    assert all(min_width(p) <= width for p in parts)


def test_a_long_lot_label_is_folded_whole_in_the_history_list(tmp_path):
    """A lot's label is the user's text: at 80 columns a 240-character label was cut ('LOT-LOT…')
    and the lot number shrunk to '…'; now the label folds over lines, whole."""
    label = "LOT-" * 60
    store = tmp_path / "h.db"
    r = _cli("lot", *map(str, sorted((REPO / "spectra_demo" / "downlights").glob("*.csv"))[:2]), "-q",
             "--store", str(store), "--lot-id", label)
    assert r.returncode == 0, r.stderr
    r = _cli("history", "list", "--store", str(store))
    assert r.returncode == 0, r.stderr
    lines = r.stdout.splitlines()
    assert max(len(x) for x in lines) <= 80 and "…" not in r.stdout, r.stdout
    cells = [ln.split("│") for ln in lines if ln.startswith("│")]
    assert cells[0][1].strip() == "1"  # the lot number, whole
    assert "".join(c[2].strip() for c in cells) == label, r.stdout


def test_a_table_can_repeat_several_key_columns_in_each_part():
    """check's one-row-per-spectrum table names a row by its mark, result and number: each part
    of a split repeats the three (before, the second part kept only the mark)."""
    from lumeval.render.fit import min_width, set_key_columns, split_to_width

    t = Table(box=box.SIMPLE_HEAVY, pad_edge=False, show_edge=False)
    for h in ("", "result", "#", *HEADS):
        t.add_column(h, no_wrap=True, justify="right")
    for r in range(3):
        t.add_row(">>", "FAIL", str(r + 1), *_cells(r))
    set_key_columns(t, 3)
    parts = split_to_width(t, min_width(t) - 10)
    assert len(parts) >= 2
    for p in parts:
        assert [c.header for c in p.columns[:3]] == ["", "result", "#"]
    assert [c.header for p in parts for c in p.columns[3:]] == HEADS  # every other column once, in order
