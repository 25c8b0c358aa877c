"""Listing recorded lots (``lumeval history list``)."""

from __future__ import annotations

import datetime as _dt
from dataclasses import asdict, dataclass

from .db import StoreError, StoreURL, connect, ensure_schema, parse_store_url


@dataclass(frozen=True)
class LotSummary:
    """One recorded lot as ``history list`` shows it."""

    id: int
    label: str | None
    product: str | None
    recorded_at: str
    samples: int
    passed: int | None
    yield_percent: float | None
    verdict: str
    criteria_file: str | None
    lumeval_version: str

    def as_dict(self) -> dict:
        return asdict(self)


def parse_since(text: str) -> str:
    """An ISO date (YYYY-MM-DD) or date-time as the UTC text the store compares against."""
    t = str(text).strip()
    try:
        d = _dt.datetime.fromisoformat(t.replace("Z", "+00:00"))
    except ValueError:
        from .._paths import display_path

        raise StoreError(f"--since {display_path(t)!r}: not a date", field="--since",
                         fix="give an ISO date such as 2026-11-30 or 2026-11-30T08:00") from None
    if d.tzinfo is not None:
        d = d.astimezone(_dt.UTC).replace(tzinfo=None)
    return d.replace(microsecond=0).isoformat() + "Z" if "T" in t or " " in t else d.date().isoformat()


def list_lots(store: str | StoreURL, *, product: str | None = None, since: str | None = None) -> list[LotSummary]:
    """Python twin of ``lumeval history list``: recorded lots in recording order."""
    from sqlalchemy import select

    from .db import _tables

    su = store if isinstance(store, StoreURL) else parse_store_url(store)
    lots = _tables()[1]["lots"]
    q = select(lots.c.id, lots.c.label, lots.c.product, lots.c.recorded_at, lots.c.n_samples, lots.c.n_passed,
               lots.c.yield_percent, lots.c.verdict, lots.c.criteria_file, lots.c.lumeval_version).order_by(lots.c.id)
    if product is not None:
        q = q.where(lots.c.product == product)
    if since is not None:
        q = q.where(lots.c.recorded_at >= parse_since(since))
    with connect(su, write=False, action="read the store") as conn:
        ensure_schema(conn, su, create=False)
        rows = conn.execute(q).all()
    return [LotSummary(int(r.id), r.label, r.product, r.recorded_at, int(r.n_samples), r.n_passed, r.yield_percent,
                       r.verdict, r.criteria_file, r.lumeval_version) for r in rows]
