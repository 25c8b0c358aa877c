"""Trends of one figure over recorded lots: reading the series, choosing the chart, finding signals.

The numbers come from :mod:`lumeval.store.charts` (pure); this module reads the store, picks
the baseline, and assembles a :class:`Trend` and its JSON document (``format`` =
``"lumeval.trend"``, ``schema_version`` 1, JSON Schema ``lumeval/schemas/trend.schema.json``; keys never change meaning, new keys may be added)::

    format, schema_version, lumeval_version, store, figure, label, unit, product, chart,
    centre_line, ucl, lcl, sigma, baseline {lots, count, rule}, s_chart {centre_line, ucl, lcl},
    moving_range {centre_line, ucl, lcl}, ewma {lambda, L, centre_line, ucl, lcl},
    points [{lot, label, recorded_at, n, mean, s, ucl, lcl, s_ucl, s_lcl, mr, mr_ucl, ewma,
             ewma_ucl, ewma_lcl, baseline}],
    signals [{lot, rule, chart, text}], notes, sources, cautions

A signal's ``rule`` is WE1-WE4 on the X̄ and individuals charts (Western Electric), ``limits``
on the s and moving-range charts (beyond their limits; earlier versions labelled them WE1)
and ``EWMA`` on the EWMA chart.

Lots are charted in the order they were recorded (store id). Chart kinds:

* ``xbar-s``: X̄ chart of the lot means and s chart of the within-lot standard deviations
  (lots of two samples or more), plus an EWMA of the lot means.
* ``individuals``: individuals and moving-range charts of one value per lot (one-sample lots,
  the chromaticity figures, or ``--chart individuals`` on lot means), plus an EWMA.

Chromaticity figures (one value per lot, from the lot centroid and the category recorded with
the lot; see :mod:`lumeval.criteria.regions`):

* ``centroid_duv_centre`` — Δu′v′ of the lot centroid from the category centre;
* ``centroid_edge_margin`` — signed Δu′v′ from the centroid to the nearest quadrangle edge
  (positive inside; :func:`lumeval.criteria.regions.polygon_signed_distance`).
"""

from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import quote
from . import charts
from .db import StoreError, StoreURL, connect, ensure_schema, parse_store_url

#: Per-lot chromaticity figures (name -> (label, unit)).
CHROMATICITY_FIGURES = {
    "centroid_duv_centre": ("lot centroid Δu′v′ from the category centre", "Δu′v′"),
    "centroid_edge_margin": ("lot centroid distance to the nearest quadrangle edge (inside +)", "Δu′v′"),
}
#: Default number of baseline lots (Montgomery §6.3.1 and §5.3.7 suggest 20-25 subgroups for
#: trial limits; memory).
DEFAULT_BASELINE_COUNT = 20
#: Alarms after recording (``lot --trend-figures``) start once this many earlier lots can form
#: the baseline: trial limits from two or three lots signal by chance too often (common
#: practice, no source).
MIN_ALARM_BASELINE = 5

SOURCES = (
    "Montgomery, D. C., Introduction to Statistical Quality Control, 6th ed., Wiley 2009: §6.3 X̄ and s charts, "
    "§6.4 individuals and moving range, §9.2 EWMA, §5.3.6 Western Electric rules, Appendix VI factors",
    "Western Electric Company, Statistical Quality Control Handbook, 1956 (the zone rules)",
    "ISO 7870-2:2013 Control charts — Shewhart control charts (the same limits and factors)",
)

CHART_CAUTIONS = (
    "Control limits describe what the process did in the baseline lots, not what the specification allows: a lot "
    "inside the limits can fail its criteria, and a signal is a reason to look, not a verdict.",
    "X̄ limits come from the spread within lots. When lot means vary more than that (phosphor batches, stations, "
    "calibration), the X̄ chart signals on every lot: chart the lot means as individuals (--chart individuals).",
    "Limits are only as good as the baseline: lots that drifted or were measured differently must not be in it.",
)


@dataclass(frozen=True)
class LotPoint:
    lot: int
    label: str | None
    product: str | None
    recorded_at: str
    n: int
    mean: float
    s: float
    #: the lot verdict recorded with the lot ("pass", "fail", "not judged"; None when not read)
    verdict: str | None = None


@dataclass(frozen=True)
class Trend:
    """A figure's control charts over lots (see the module docstring)."""

    figure: str
    label: str
    unit: str
    product: str | None
    chart: str  # "xbar-s" | "individuals"
    points: tuple[LotPoint, ...]
    baseline: np.ndarray
    baseline_rule: str
    main: Any  # charts.XbarSChart | charts.IndividualsChart
    ewma: charts.EwmaChart
    signals: tuple  # (charts.Signal, ...) with index into points
    notes: tuple[str, ...] = ()
    store: str = ""
    extra: dict = field(default_factory=dict)

    @property
    def lot_ids(self) -> list[int]:
        return [p.lot for p in self.points]

    def signals_for(self, lot_id: int) -> list:
        return [s for s in self.signals if self.points[s.index].lot == lot_id]


# --------------------------------------------------------------------------- figures


def resolve_figure(name: str) -> tuple[str, str, str]:
    """(figure name, label, unit) for a user's figure name: a name or alias of the figure
    registry (:mod:`lumeval.figures`, case-insensitive), or one of
    :data:`CHROMATICITY_FIGURES`."""
    from .. import figures as registry

    raw = str(name).strip()
    if raw.lower() in CHROMATICITY_FIGURES:
        k = raw.lower()
        return k, *CHROMATICITY_FIGURES[k]
    found = registry.lookup(raw)
    if found is None:
        from .._paths import display_path

        raise StoreError(f"unknown figure {display_path(raw)!r}", field="--figure",
                         fix="use a lumeval figure name (duv, CCT, Ra, R9, Rf, Rg, ...; `lumeval criteria explain` "
                             "lists them) or " + ", ".join(CHROMATICITY_FIGURES))
    return found, registry.label(found), registry.unit(found)


# --------------------------------------------------------------------------- reading


def _products(conn) -> list:
    from sqlalchemy import select

    from .db import _tables

    lots = _tables()[1]["lots"]
    return [r[0] for r in conn.execute(select(lots.c.product).distinct().order_by(lots.c.product))]


def read_series(conn, su: StoreURL, figure: str, product: str | None, *, exact_product: bool = False
                ) -> tuple[list[LotPoint], str | None]:
    """The figure's per-lot (n, mean, s) for every lot of the product, in recording order.

    ``product`` None means "the store's only product" (several: refused), unless
    ``exact_product``, where it means lots recorded without a product.
    """
    from sqlalchemy import select

    from .db import _tables

    t = _tables()[1]
    lots, figs = t["lots"], t["figures"]
    if product is None and not exact_product:
        prods = _products(conn)
        if len(prods) > 1:
            shown = ", ".join(repr(p) if p is not None else "(none)" for p in prods[:6])
            raise StoreError(f"{su.shown}: the store holds lots of {len(prods)} products ({shown})",
                             field="--product", fix="choose one with --product")
        product = prods[0] if prods else None
    cond = lots.c.product.is_(None) if product is None else lots.c.product == product
    if figure in CHROMATICITY_FIGURES:
        rows = conn.execute(select(lots.c.id, lots.c.label, lots.c.product, lots.c.recorded_at, lots.c.centroid_u,
                                   lots.c.centroid_v, lots.c.region_centre_u, lots.c.region_centre_v,
                                   lots.c.region_corners, lots.c.verdict).where(cond).order_by(lots.c.id)).all()
        pts = []
        for r in rows:
            value = _chromaticity_value(figure, r)
            pts.append(LotPoint(int(r.id), r.label, r.product, r.recorded_at, 1 if math.isfinite(value) else 0, value,
                                float("nan"), r.verdict))
        return pts, product
    rows = conn.execute(select(lots.c.id, lots.c.label, lots.c.product, lots.c.recorded_at, figs.c.n, figs.c.mean,
                               figs.c.std, lots.c.verdict).select_from(lots.outerjoin(figs, (figs.c.lot_id == lots.c.id)
                                                                                    & (figs.c.figure == figure)))
                        .where(cond).order_by(lots.c.id)).all()
    pts = [LotPoint(int(r.id), r.label, r.product, r.recorded_at, int(r.n or 0),
                    float(r.mean) if r.mean is not None else float("nan"),
                    float(r.std) if r.std is not None else float("nan"), r.verdict) for r in rows]
    return pts, product


def _chromaticity_value(figure: str, r) -> float:
    from ..criteria.regions import polygon_signed_distance

    if r.centroid_u is None or r.centroid_v is None:
        return float("nan")
    c = np.array([r.centroid_u, r.centroid_v], dtype=float)
    if figure == "centroid_duv_centre":
        if r.region_centre_u is None:
            return float("nan")
        return float(np.hypot(*(c - np.array([r.region_centre_u, r.region_centre_v]))))
    if not r.region_corners:
        return float("nan")
    corners = np.asarray(json.loads(r.region_corners), dtype=float)
    return float(polygon_signed_distance(corners, c[None, :])[0])


# --------------------------------------------------------------------------- baseline

_RANGE_RE = re.compile(r"^\s*([0-9]+)\s*\.\.\s*([0-9]+)\s*$")


def baseline_mask(lot_ids, baseline: str | None = None, count: int | None = None, *, exclude_last: bool = False):
    """(mask, rule text). ``baseline`` "A..B": the lots with store ids A to B (inclusive);
    ``count`` K: the first K lots. Default: the first :data:`DEFAULT_BASELINE_COUNT` lots, but
    never the last lot when ``exclude_last`` (an alarm judges the newest lot against the ones
    before it)."""
    ids = np.asarray(lot_ids, dtype=int)
    m = ids.size
    if baseline is not None and count is not None:
        raise StoreError("give either --baseline or --baseline-count, not both", field="--baseline")
    if baseline is not None:
        mt = _RANGE_RE.match(baseline)
        if not mt:
            raise StoreError(f"--baseline {quote(baseline)}: expected two lot numbers as A..B (digits 0-9)", field="--baseline",
                             fix="e.g. --baseline 1..20 (see `lumeval history list` for the lot numbers)")
        a, b = int(mt.group(1)), int(mt.group(2))
        if a > b:
            a, b = b, a
        mask = (ids >= a) & (ids <= b)
        return mask, f"lots {a}..{b} ({int(mask.sum())} lots)"
    if count is not None:
        if count < 2:
            raise StoreError("--baseline-count must be at least 2", field="--baseline-count")
        k = min(count, m)
        mask = np.arange(m) < k
        return mask, f"the first {k} lots"
    k = min(DEFAULT_BASELINE_COUNT, m - 1 if exclude_last else m)
    k = max(k, 0)
    return np.arange(m) < k, f"the first {k} lots (default: up to {DEFAULT_BASELINE_COUNT})"


# --------------------------------------------------------------------------- assembling


def auto_chart(n_baseline, figure: str) -> str:
    """The chart ``--chart auto`` picks from the sample counts of the usable baseline lots.

    X̄/s unless more than half of those lots have one sample, or fewer than two have two
    samples or more. X̄/s handles lots of one sample (their value gets x̿ ± 3σ̂ with σ̂ from
    the lots of several samples; Montgomery §6.3), so one such lot must not switch a store of
    lots of 30 to individuals, whose limits come from the lot-to-lot spread and can hide the
    X̄ chart's signals. When most lots are single samples, σ̂ would rest on a minority of lots
    and the process is the one-measurement-per-period case the individuals chart is for
    (Montgomery §6.4). The chromaticity figures are always individuals.
    """
    nb = np.asarray(n_baseline, dtype=float)
    if figure in CHROMATICITY_FIGURES:
        return "individuals"
    several = int(np.sum(nb >= 2))
    return "xbar-s" if several >= 2 and 2 * several >= nb.size else "individuals"


def compute_trend(points, baseline, *, figure: str, label: str = "", unit: str = "", product=None,
                  chart: str = "auto", baseline_rule: str = "", lam: float = charts.EWMA_LAMBDA,
                  L: float = charts.EWMA_L, store: str = "", baseline_field: str | None = None) -> Trend:
    """Control charts and signals of ``points`` (LotPoint, in order) with the boolean
    ``baseline`` mask (pure: no I/O). ``baseline_field``: the option that chose the baseline
    (``--baseline``, ``--baseline-count``), named in errors about it; None for a default
    baseline."""
    pts = tuple(points)
    m = len(pts)
    b = np.asarray(baseline, dtype=bool)
    n = np.array([p.n for p in pts], dtype=float)
    mean = np.array([p.mean for p in pts], dtype=float)
    s = np.array([p.s for p in pts], dtype=float)
    notes = []
    usable_b = b & np.isfinite(mean) & (n >= 1)
    if int(usable_b.sum()) < 2:
        raise StoreError(f"a control chart needs at least 2 baseline lots with the figure defined; "
                         f"{int(usable_b.sum())} of {m} lots qualify", field=baseline_field,
                         fix="record more lots, or choose the baseline with --baseline A..B / --baseline-count K")
    main: Any
    if chart == "auto":
        chart = auto_chart(n[usable_b], figure)
    if chart == "xbar-s":
        if figure in CHROMATICITY_FIGURES:
            raise StoreError(f"{figure} is one value per lot: it has no within-lot spread for an s chart",
                             field="--chart", fix="use --chart individuals (the default for it)")
        main = charts.xbar_s_chart(mean, s, n, usable_b & (n >= 2))
        if not math.isfinite(main.sigma):
            raise StoreError("no baseline lot has two samples or more: an X̄/s chart needs them", field="--chart",
                             fix="use --chart individuals")
        if main.sigma == 0.0:  # limits of zero width: every other mean would be "beyond" them
            raise StoreError("the baseline lots have no spread within lots (every s is 0): X̄/s limits would have "
                             "no width", field=baseline_field, fix="choose other baseline lots, or use --chart individuals")
        with np.errstate(invalid="ignore", divide="ignore"):
            sig_pt = (main.xbar_ucl - main.grand_mean) / charts.L_SHEWHART
        sig = charts.western_electric(mean, main.grand_mean, sig_pt, chart="xbar")
        sig += charts.beyond_limits(s, main.s_ucl, main.s_lcl, chart="s", rule="limits")  # not a zone rule
        with np.errstate(invalid="ignore", divide="ignore"):
            ew = charts.ewma_chart(mean, main.grand_mean, main.sigma / np.sqrt(np.where(n >= 1, n, np.nan)), lam, L)
        if np.any((n < 2) & np.isfinite(mean)):
            notes.append("Lots with one sample have no s (they are not on the s chart); on the X̄ chart their value "
                         "has the limits x̿ ± 3σ̂.")
    elif chart == "individuals":
        main = charts.individuals_chart(mean, usable_b)
        if not math.isfinite(main.sigma) or main.sigma == 0.0:
            raise StoreError("the baseline lots give no moving range (need two consecutive baseline lots that differ)",
                             field=baseline_field)
        sig = charts.western_electric(mean, main.centre, main.sigma, chart="individuals")
        sig += charts.beyond_limits(main.moving_range, main.mr_ucl, 0.0, chart="moving_range", rule="limits")
        ew = charts.ewma_chart(mean, main.centre, main.sigma, lam, L)
    else:
        raise StoreError(f"unknown chart {chart!r}", field="--chart", fix="use auto, xbar-s or individuals")
    sig += charts.beyond_limits(ew.z, ew.ucl, ew.lcl, chart="ewma", rule="EWMA")
    sig.sort(key=lambda x: (x.index, ["xbar", "individuals", "s", "moving_range", "ewma"].index(x.chart), x.rule))
    if int(usable_b.sum()) < DEFAULT_BASELINE_COUNT:
        notes.append(f"The limits rest on {int(usable_b.sum())} baseline lots (fewer than {DEFAULT_BASELINE_COUNT}): "
                     "treat them as trial limits and revise them as lots accumulate.")
    undefined = [p.lot for p in pts if not math.isfinite(p.mean)]
    if undefined:
        notes.append(f"{len(undefined)} lots have the figure undefined and are skipped: lots "
                     + ", ".join(map(str, undefined[:10])) + ("…" if len(undefined) > 10 else "") + ".")
    return Trend(figure, label or figure, unit, product, chart, pts, b, baseline_rule, main, ew, tuple(sig),
                 tuple(notes), store)


def trend(store: str | StoreURL, figure: str, *, product: str | None = None, baseline: str | None = None,
          baseline_count: int | None = None, chart: str = "auto", exclude_last: bool = False,
          exact_product: bool = False) -> Trend:
    """Python twin of ``lumeval history trend``: read the store and compute the charts."""
    su = store if isinstance(store, StoreURL) else parse_store_url(store)
    fig, label, unit = resolve_figure(figure)
    with connect(su, write=False, action="read the store") as conn:
        ensure_schema(conn, su, create=False)
        pts, product = read_series(conn, su, fig, product, exact_product=exact_product)
    if not pts:
        raise StoreError(f"{su.shown}: no lots recorded" + (f" for product {product!r}" if product else ""),
                         fix="check --product (see `lumeval history list`)")
    mask, rule = baseline_mask([p.lot for p in pts], baseline, baseline_count, exclude_last=exclude_last)
    if baseline is not None and not mask.any():
        raise StoreError(f"--baseline {baseline}: no recorded lot of this product has a number in that range",
                         field="--baseline", fix="see `lumeval history list` for the lot numbers")
    given = "--baseline" if baseline is not None else "--baseline-count" if baseline_count is not None else None
    return compute_trend(pts, mask, figure=fig, label=label, unit=unit, product=product, chart=chart,
                         baseline_rule=rule, store=su.shown, baseline_field=given)


# --------------------------------------------------------------------------- JSON


def _num(v):
    if v is None:
        return None
    f = float(v)
    return f if math.isfinite(f) else None


def trend_document(tr: Trend) -> dict:
    """The trend JSON document (see the module docstring)."""
    from ..render.tables import CAUTIONS
    from ..schemas import header

    m = len(tr.points)
    main = tr.main
    ew = tr.ewma
    pts = []
    if tr.chart == "xbar-s":
        cl = main.grand_mean
        ucl_pt, lcl_pt = main.xbar_ucl, main.xbar_lcl
        equal = bool(np.all(np.isclose(ucl_pt[np.isfinite(ucl_pt)], ucl_pt[np.isfinite(ucl_pt)][0]))) if np.isfinite(ucl_pt).any() else False
        top_ucl = _num(ucl_pt[np.isfinite(ucl_pt)][0]) if equal else None
        top_lcl = _num(lcl_pt[np.isfinite(lcl_pt)][0]) if equal else None
        sigma = main.sigma
        s_chart = {"centre_line": _num(main.s_bar),
                   "ucl": _num(main.s_ucl[np.isfinite(main.s_ucl)][0]) if equal else None,
                   "lcl": _num(main.s_lcl[np.isfinite(main.s_lcl)][0]) if equal else None}
        mr_chart = None
    else:
        cl = main.centre
        ucl_pt, lcl_pt = np.full(m, main.ucl), np.full(m, main.lcl)
        top_ucl, top_lcl, sigma = _num(main.ucl), _num(main.lcl), main.sigma
        s_chart = None
        mr_chart = {"centre_line": _num(main.mr_bar), "ucl": _num(main.mr_ucl), "lcl": 0.0}
    for i, p in enumerate(tr.points):
        d = {"lot": p.lot, "label": p.label, "recorded_at": p.recorded_at, "n": p.n, "mean": _num(p.mean),
             "s": _num(p.s), "ucl": _num(ucl_pt[i]), "lcl": _num(lcl_pt[i])}
        if tr.chart == "xbar-s":
            d.update(s_ucl=_num(main.s_ucl[i]), s_lcl=_num(main.s_lcl[i]))
        else:
            d.update(mr=_num(main.moving_range[i]), mr_ucl=_num(main.mr_ucl))
        d.update(ewma=_num(ew.z[i]), ewma_ucl=_num(ew.ucl[i]), ewma_lcl=_num(ew.lcl[i]), baseline=bool(tr.baseline[i]))
        pts.append(d)
    steady = ew.L * np.sqrt(ew.lam / (2.0 - ew.lam))
    sp = ew.sigma_point[np.isfinite(ew.sigma_point)]
    return {
        **header("trend"),
        "store": tr.store,
        "figure": tr.figure,
        "label": tr.label,
        "unit": tr.unit,
        "product": tr.product,
        "chart": tr.chart,
        "centre_line": _num(cl),
        "ucl": top_ucl,
        "lcl": top_lcl,
        "sigma": _num(sigma),
        "baseline": {"lots": [p.lot for p, b in zip(tr.points, tr.baseline) if b], "count": int(tr.baseline.sum()),
                     "rule": tr.baseline_rule},
        "s_chart": s_chart,
        "moving_range": mr_chart,
        "ewma": {"lambda": ew.lam, "L": ew.L, "centre_line": _num(ew.centre),
                 "ucl": _num(ew.centre + steady * sp[0]) if sp.size and np.allclose(sp, sp[0]) else None,
                 "lcl": _num(ew.centre - steady * sp[0]) if sp.size and np.allclose(sp, sp[0]) else None},
        "points": pts,
        "signals": [{"lot": tr.points[s.index].lot, "rule": s.rule, "chart": s.chart, "text": s.text}
                    for s in tr.signals],
        "notes": list(tr.notes),
        "sources": list(SOURCES),
        "cautions": list(CHART_CAUTIONS) + list(CAUTIONS),
    }
