"""Drift alarms: the control charts that judge one recorded lot against the lots before it.

``lumeval lot ... --store URL --trend-figures F`` calls :func:`alarm_trend` after recording.
The lot being judged is named by its store number, so the charts are the same whether the
lot was just recorded, was already in the store ("already recorded as lot N"), or another
station recorded a lot a moment later:

* the series ends at the judged lot (lots recorded after it are not read);
* the judged lot is never in its own baseline.

An already-recorded lot therefore gets the signals it would get as a new lot at its place
(the lots before it never change: lots are only added).

Default alarm baseline (Phase I; Montgomery, Introduction to Statistical Quality Control, 6th
ed., §6.2.1 and §6.3 "trial control limits": points with an assignable cause are removed and
the limits computed again; memory):

1. the lots recorded before the judged lot whose recorded verdict did not fail (a lot that
   failed its criteria has an assignable cause on record), the first
   :data:`~lumeval.store.trend.DEFAULT_BASELINE_COUNT` of those with the figure defined;
2. then, repeatedly, the lots of that baseline beyond the trial limits of their own X̄ (or
   individuals) chart or s chart are left out and the limits computed again, until none is.

Lots left out this way are taken off the alarm's charts altogether, as Phase I removes such
points (every failed lot before the judged one, too): a lot far off would otherwise hold the
EWMA, and the run rules, of the lots after it beyond their limits for many lots. Lots after
the baseline that signalled but passed stay on the charts (Phase II monitoring).

The store does not record which signals a lot raised when it was recorded (the figures
charted then, and the baseline options used, vary from run to run), so step 2 is the
textbook revision of trial limits rather than a replay of old alarms. Only the rules that
concern one lot's own value are used for it (WE1, and the s chart's limits): run rules
(WE2-WE4), the moving range and the EWMA concern several lots together.

``--baseline A..B`` / ``--baseline-count K`` (as ``history trend``) replace the default: those
lots as given, except the judged lot and any recorded after it.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .db import StoreError, StoreURL, connect, ensure_schema, parse_store_url
from .trend import (
    DEFAULT_BASELINE_COUNT,
    MIN_ALARM_BASELINE,
    Trend,
    baseline_mask,
    compute_trend,
    read_series,
    resolve_figure,
)

_CHART_WORDS = {"xbar": "X̄ chart", "individuals": "individuals chart", "s": "s chart"}


def _usable(points) -> np.ndarray:
    return np.array([p.n >= 1 and np.isfinite(p.mean) for p in points], dtype=bool)


def _worst_beyond(tr: Trend, mask: np.ndarray) -> tuple[int, set[str]] | None:
    """The baseline lot furthest beyond the trial limits of its own X̄/individuals (WE1) or s
    chart, in half-widths of those limits (index, charts), or None. One lot at a time: a lot
    far off moves the centre line, so that, removed together, every lot beyond those first
    limits could go (masking)."""
    flagged: dict[int, set[str]] = {}
    for s in tr.signals:
        if mask[s.index] and (s.chart == "s" or (s.chart in ("xbar", "individuals") and s.rule == "WE1")):
            flagged.setdefault(s.index, set()).add(_CHART_WORDS[s.chart])
    if not flagged:
        return None
    main = tr.main
    with np.errstate(invalid="ignore", divide="ignore"):
        if tr.chart == "xbar-s":
            far = np.abs(main.mean - main.grand_mean) / (main.xbar_ucl - main.grand_mean)
            s_far = np.where(main.s >= main.s_centre, (main.s - main.s_centre) / (main.s_ucl - main.s_centre),
                             (main.s_centre - main.s) / (main.s_centre - main.s_lcl))
            far = np.fmax(far, s_far)
        else:
            far = np.abs(main.x - main.centre) / (main.ucl - main.centre)
    i = max(flagged, key=lambda k: (float(np.nan_to_num(far[k], nan=0.0, posinf=np.inf)), -k))
    return i, flagged[i]


def default_alarm_baseline(points, figure: str, *, chart: str = "auto"):
    """(points kept, mask, rule text, left out) of the default alarm of the last of ``points``
    (see the module docstring). Lots left out are taken off the charts, not only out of the
    baseline: a failed lot far off would otherwise hold the EWMA and the run rules of the lots
    after it beyond their limits. ``left out``: (lot number, reason) in lot order."""
    pts = list(points)
    m = len(pts)
    keep = np.ones(m, dtype=bool)
    mask = np.zeros(m, dtype=bool)
    left: dict[int, str] = {}
    usable = _usable(pts)
    taken = 0
    for i in range(m - 1):  # never the judged (last) lot
        if pts[i].verdict == "fail":  # an assignable cause on record: off the charts of later lots
            left[i] = "its verdict failed"
            keep[i] = False
        elif usable[i] and taken < DEFAULT_BASELINE_COUNT:
            mask[i] = True
            taken += 1
    while int(mask.sum()) >= 2:
        idx = np.flatnonzero(keep)
        try:
            tr = compute_trend([pts[i] for i in idx], mask[idx], figure=figure, chart=chart)
        except StoreError:
            break
        worst = _worst_beyond(tr, mask[idx])
        if worst is None:
            break
        i = int(idx[worst[0]])
        mask[i] = keep[i] = False
        left[i] = "beyond its trial limits on the " + " and the ".join(sorted(worst[1]))
    judged = pts[-1].lot if pts else 0
    rule = (f"{int(mask.sum())} lots before lot {judged} (default: the first {DEFAULT_BASELINE_COUNT} or fewer "
            "whose verdict did not fail, less those beyond their trial limits)")
    idx = np.flatnonzero(keep)
    return [pts[i] for i in idx], mask[idx], rule, [(pts[i].lot, left[i]) for i in sorted(left)]


def alarm_trend(store: str | StoreURL, figure: str, lot_id: int, *, baseline: str | None = None,
                baseline_count: int | None = None, chart: str = "auto") -> Trend:
    """The charts of ``figure`` that judge recorded lot ``lot_id`` (see the module docstring).

    The lot's product is read from the store (the product it was recorded with). The result's
    ``extra["left_out"]`` lists the lots the default baseline left out, with the reason.
    Raises :class:`StoreError` when there is no chart yet (too few earlier lots).
    """
    from sqlalchemy import select

    from .db import _tables

    su = store if isinstance(store, StoreURL) else parse_store_url(store)
    fig, label, unit = resolve_figure(figure)
    lots = _tables()[1]["lots"]
    with connect(su, write=False, action="read the store") as conn:
        ensure_schema(conn, su, create=False)
        row = conn.execute(select(lots.c.product).where(lots.c.id == int(lot_id))).first()
        if row is None:
            raise StoreError(f"{su.shown}: lot {int(lot_id)} is not in the store")
        pts, product = read_series(conn, su, fig, row[0], exact_product=True)
    pts = [p for p in pts if p.lot <= int(lot_id)]  # lots recorded after the judged lot do not judge it
    ids = np.array([p.lot for p in pts], dtype=int)
    before = ids < int(lot_id)
    left: list[tuple[int, str]] = []
    given = "--baseline" if baseline is not None else "--baseline-count" if baseline_count is not None else None
    if given is None:
        pts, mask, rule, left = default_alarm_baseline(pts, fig, chart=chart)
        n_base = int((mask & _usable(pts)).sum())
        if n_base < MIN_ALARM_BASELINE:
            raise StoreError(f"{n_base} earlier lots of this product in the baseline; alarms start with "
                             f"{MIN_ALARM_BASELINE}" + (f" ({len(left)} left out)" if left else ""))
    else:
        mask, rule = baseline_mask(ids, baseline, baseline_count)
        if (mask & ~before).any():
            mask = mask & before
            rule += f", without lot {int(lot_id)} and any recorded after it"
        if not mask.any():
            raise StoreError(f"{given} {baseline if baseline is not None else baseline_count}: no lot of this "
                             f"product recorded before lot {int(lot_id)} is in it", field=given,
                             fix="see `lumeval history list` for the lot numbers")
    tr = compute_trend(pts, mask, figure=fig, label=label, unit=unit, product=product, chart=chart,
                       baseline_rule=rule, store=su.shown, baseline_field=given)
    return dataclasses.replace(tr, extra={**tr.extra, "left_out": left})
