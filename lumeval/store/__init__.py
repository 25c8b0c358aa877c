"""The production history: a store of judged lots, control charts over them, drift alarms.

* :mod:`lumeval.store.db` — store URLs (SQLite by default, PostgreSQL for shared stores), the
  schema, its versions and migrations (SQLAlchemy Core);
* :mod:`lumeval.store.record` — what a lot's record holds and the one transaction that writes it;
* :mod:`lumeval.store.query` — listing recorded lots;
* :mod:`lumeval.store.charts` — control charts as pure functions over arrays (X̄/s, individuals
  and moving range, EWMA, Western Electric rules), with their published sources;
* :mod:`lumeval.store.trend` — a figure's charts over recorded lots and their JSON document.

SQLAlchemy (and psycopg for PostgreSQL) are imported only when a store is used. See
docs/history.md.
"""

from __future__ import annotations

_API = {
    "StoreError": "lumeval.store.db",
    "parse_store_url": "lumeval.store.db",
    "migrate": "lumeval.store.db",
    "SCHEMA_VERSION": "lumeval.store.db",
    "lot_record": "lumeval.store.record",
    "record_lot": "lumeval.store.record",
    "list_lots": "lumeval.store.query",
    "trend": "lumeval.store.trend",
    "trend_document": "lumeval.store.trend",
}

__all__ = ["SCHEMA_VERSION", "StoreError", "list_lots", "lot_record", "migrate", "parse_store_url",
           "record_lot", "trend", "trend_document"]


def __getattr__(name: str):
    mod = _API.get(name)
    if mod is None:
        raise AttributeError(f"module 'lumeval.store' has no attribute {name!r}")
    import importlib

    return getattr(importlib.import_module(mod), name)
