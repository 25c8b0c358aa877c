"""Terminal tables that never cut a number.

rich fits a table that is wider than the terminal by narrowing its columns, and a column that
may not wrap (a number, a figure's name) is then cut with an ellipsis: "-0.00…" for a Duv of
-0.0012, which nobody can read and a reader may misread. (Output sent to a pipe or a file is 80
columns wide unless COLUMNS says otherwise, so saved reports were cut too.)

:func:`split_to_width` instead splits such a table into consecutive tables of whole columns,
each repeating the first column (the row's name), so that every cell is shown in full at any
width where the first column and one other fit. The reports' console (:func:`lumeval.render.
safe.console`) applies it to every table it prints.
"""

from __future__ import annotations

import copy

#: The narrowest a column that folds its text (``overflow="fold"``) is made.
FOLD_MIN = 12


def _ranges(table) -> list[tuple[int, int]]:
    """Per column, the narrowest and the widest content width (padding excluded) that shows
    every cell whole: a no-wrap column needs its widest cell; a wrapping column its longest word
    (or its ``min_width``), a folding one :data:`FOLD_MIN`; a fixed-width column its width."""
    from rich.console import Console

    con = Console(width=10_000, color_system=None)
    out = []
    for col in table.columns:
        if col.width is not None:
            out.append((col.width, col.width))
            continue
        sizes = [con.measure(c) for c in (col.header, *col.cells)]
        hi = max(m.maximum for m in sizes)
        if col.no_wrap:
            lo = hi
        elif col.overflow == "fold":  # made to be broken anywhere (long paths): any width will do
            lo = min(hi, max(col.min_width or 0, FOLD_MIN))
        else:
            lo = min(hi, max(col.min_width or 0, *(m.minimum for m in sizes)))
        out.append((lo, hi))
    return out


def _overhead(table) -> int:
    """The columns' padding and the separators (a simple box draws them as spaces)."""
    n = len(table.columns)
    left, right = table.padding[3], table.padding[1]
    pad = n * (left + right) - (0 if table.pad_edge else left + right)
    return pad + (n - 1 if table.box is not None else 0) + (2 if table.show_edge and table.box is not None else 0)


def min_width(table) -> int:
    """The narrowest width ``table`` can be drawn at without cutting a no-wrap column (its
    widest cell) or narrowing a column below its longest word or its ``min_width``; padding and
    separators added."""
    return sum(lo for lo, _ in _ranges(table)) + _overhead(table)


def _full_width(table) -> int:
    return sum(hi for _, hi in _ranges(table)) + _overhead(table)


def _part(table, columns, title, width: int | None):
    """A copy of ``table`` with ``columns`` (copies), and, when ``width`` is given, each
    column's width fixed (:func:`_capped`) so that every cell shows whole within ``width``:
    no-wrap columns and longest words get what they need (rich's own narrowing would cut words
    and numbers)."""
    part = copy.copy(table)
    part.columns = []
    for i, col in enumerate(columns):
        c = copy.copy(col)
        c._index = i  # rich pads the first and last column by their position
        part.columns.append(c)
    part.title = title
    if width is not None:
        for c, w in zip(part.columns, _capped(_ranges(part), width - _overhead(part))):
            c.width = w
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
    fit, in order, each so narrowed. The title is kept on the first and marked "(continued)" on
    the others, the caption kept on the last."""
    if width is None or not table.columns or _full_width(table) <= width:
        return [table]
    if min_width(table) <= width or len(table.columns) < 3:
        return [_part(table, table.columns, table.title, width)]
    key, rest = table.columns[0], table.columns[1:]

    def fits(group) -> bool:
        return min_width(_part(table, [key, *group], None, None)) <= width

    groups: list[list] = [[]]
    for col in rest:
        if groups[-1] and not fits([*groups[-1], col]):
            groups.append([])
        groups[-1].append(col)
    # as many parts as needed, but of even sizes when they fit so (4 + 3 columns, not 6 + 1)
    n, g = len(rest), len(groups)
    even = [rest[-(-n * k // g): -(-n * (k + 1) // g)] for k in range(g)]  # the larger parts first
    if all(even) and all(fits(e) for e in even):
        groups = even
    title = table.title
    more = None
    if title:
        more = title.copy() if hasattr(title, "copy") else f"{title}"
        more = more + " (continued)"
    parts = [_part(table, [key, *g], title if k == 0 else more, width) for k, g in enumerate(groups)]
    for p in parts[:-1]:
        p.caption = None
    return parts
