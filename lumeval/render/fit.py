"""Terminal tables that never cut a number.

rich fits a table that is wider than the terminal by narrowing its columns, and a column that
may not wrap (a number, a figure's name) is then cut with an ellipsis: "-0.00…" for a Duv of
-0.0012, which nobody can read and a reader may misread. (Output sent to a pipe or a file is 80
columns wide unless COLUMNS says otherwise, so saved reports were cut too.)

:func:`split_to_width` instead first narrows only what may wrap (text between words, folding
columns such as paths), with widths it fixes itself, and when that is not enough splits the
table into consecutive tables of whole columns, each repeating the columns that name a row
(:func:`set_key_columns`; the first by default), so that every cell is shown in full at any
width where those and one other column fit. The reports' console
(:func:`lumeval.render.safe.console`) applies it to every table it prints. It reads rich's
``Table`` and ``Column`` attributes (``columns``, ``cells``, ``no_wrap``, ``overflow``,
``padding``...) and sets ``Column.width`` and ``_index`` on copies; tests/test_render_fit.py
checks the result on the installed rich.
"""

from __future__ import annotations

import copy

#: The narrowest a column that folds its text (``overflow="fold"``) is made.
FOLD_MIN = 12
#: Attribute of a table naming how many leading columns each part of a split repeats.
_KEYS = "lumeval_key_columns"


def set_key_columns(table, n: int) -> None:
    """When ``table`` is split to fit, each part repeats its first ``n`` columns (those that
    name a row; 1 by default)."""
    setattr(table, _KEYS, n)


def _ranges(table) -> list[tuple[int, int]]:
    """Per column, the narrowest and the widest content width (padding excluded) that shows
    every cell whole: a no-wrap column needs its widest cell; a wrapping column its longest word
    (or its ``min_width``), a folding one :data:`FOLD_MIN`; a fixed-width column its width."""
    from rich.console import Console

    con = Console(width=10_000, color_system=None)
    opts = con.options
    out = []
    for col in table.columns:
        if col.width is not None:
            out.append((col.width, col.width))
            continue
        sizes = [_measure(con, opts, c) for c in (col.header, *col.cells)]
        hi = max(m[1] for m in sizes)
        if col.no_wrap:
            lo = hi
        elif col.overflow == "fold":  # made to be broken anywhere (long paths): any width will do
            lo = min(hi, max(col.min_width or 0, FOLD_MIN))
        else:
            lo = min(hi, max(col.min_width or 0, *(m[0] for m in sizes)))
        out.append((lo, hi))
    return out


def _measure(con, opts, cell) -> tuple[int, int]:
    """(longest word, longest line) of a cell, as rich measures it; text measured directly (a
    table of thousands of rows is measured in a fraction of the time rich's generic path takes)."""
    from rich.text import Text

    if isinstance(cell, str):  # rich reads a str cell as markup; plain text needs no parsing
        cell = con.render_str(cell) if ("[" in cell or ":" in cell) else Text(cell)
    m = cell.__rich_measure__(con, opts) if isinstance(cell, Text) else con.measure(cell)
    return m.minimum, m.maximum


def _overhead(table, n: int | None = None) -> int:
    """The padding and the separators of ``table`` with ``n`` of its columns (all by default;
    a simple box draws the separators as spaces)."""
    n = len(table.columns) if n is None else n
    left, right = table.padding[3], table.padding[1]
    pad = n * (left + right) - (0 if table.pad_edge else left + right)
    return pad + (n - 1 if table.box is not None else 0) + (2 if table.show_edge and table.box is not None else 0)


def natural_width(table) -> int:
    """The width ``table`` takes with no cell wrapped; padding and separators added."""
    return sum(hi for _, hi in _ranges(table)) + _overhead(table)


def min_width(table) -> int:
    """The narrowest width ``table`` can be drawn at without cutting a no-wrap column (its
    widest cell) or narrowing a column below its longest word or its ``min_width``; padding and
    separators added."""
    return sum(lo for lo, _ in _ranges(table)) + _overhead(table)


def _part(table, columns, ranges, title, width: int):
    """A copy of ``table`` with ``columns`` (copies; ``ranges`` theirs, from :func:`_ranges`),
    each column's width fixed (:func:`_capped`) so that every cell shows whole within ``width``:
    no-wrap columns and longest words get what they need (rich's own narrowing would cut words
    and numbers)."""
    part = copy.copy(table)
    part.columns = []
    for i, (col, w) in enumerate(zip(columns, _capped(ranges, width - _overhead(table, len(columns))))):
        c = copy.copy(col)
        c._index = i  # rich pads the first and last column by their position
        c.width = w
        part.columns.append(c)
    part.title = title
    return part


def _capped(ranges: list[tuple[int, int]], budget: int) -> list[int]:
    """Content widths within ``budget``: every column at its natural width capped by one common
    cap (never below its minimum), the cap the largest that fits, what remains given to the
    capped columns one by one: the widest columns give way first and short ones stay whole (as
    rich narrows a table, but never below a column's minimum)."""
    def at(cap: int) -> list[int]:
        return [max(lo, min(hi, cap)) for lo, hi in ranges]

    lo_cap, hi_cap = 0, max(hi for _, hi in ranges)
    while lo_cap < hi_cap:  # the largest cap whose widths fit the budget
        mid = (lo_cap + hi_cap + 1) // 2
        if sum(at(mid)) <= budget:
            lo_cap = mid
        else:
            hi_cap = mid - 1
    widths = at(lo_cap)
    left = budget - sum(widths)
    for i, (_, hi) in enumerate(ranges):
        if left <= 0:
            break
        if widths[i] < hi:
            widths[i] += 1
            left -= 1
    return widths


def split_to_width(table, width: int | None) -> list:
    """``table`` itself when it fits ``width`` columns at its natural width (or ``width`` is
    None); else the same table with its wrapping columns narrowed so that no word and no number
    is cut, when that fits; else tables of the first column and as many of the next columns as
    fit, in order, each so narrowed (:func:`set_key_columns` makes them repeat more than their
    first column). The title is kept on the first and marked "(continued)" on the others,
    the caption kept on the last. Each column is measured once."""
    if width is None or not table.columns:
        return [table]
    ranges = _ranges(table)
    n = len(ranges)
    if sum(hi for _, hi in ranges) + _overhead(table) <= width:
        return [table]

    def need(idx: list[int]) -> int:
        return sum(ranges[i][0] for i in idx) + _overhead(table, len(idx))

    # the columns that name a row open every part: the first, or as many as the table says
    keys = list(range(min(max(1, getattr(table, _KEYS, 1)), n)))
    if need(list(range(n))) <= width or n < len(keys) + 2:
        return [_part(table, table.columns, ranges, table.title, width)]
    groups: list[list[int]] = [[]]
    for i in range(len(keys), n):
        if groups[-1] and need([*keys, *groups[-1], i]) > width:
            groups.append([])
        groups[-1].append(i)
    # as many parts as needed, but of even sizes when they fit so (4 + 3 columns, not 6 + 1)
    rest, g = list(range(len(keys), n)), len(groups)
    m = len(rest)
    even = [rest[-(-m * k // g): -(-m * (k + 1) // g)] for k in range(g)]  # the larger first
    if all(even) and all(need([*keys, *e]) <= width for e in even):
        groups = even
    title = table.title
    more = None
    if title:
        more = title.copy() if hasattr(title, "copy") else f"{title}"
        more = more + " (continued)"
    parts = [_part(table, [table.columns[i] for i in (*keys, *grp)], [ranges[i] for i in (*keys, *grp)],
                   title if k == 0 else more, width) for k, grp in enumerate(groups)]
    for p in parts[:-1]:
        p.caption = None
    return parts
