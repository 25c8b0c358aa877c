"""The store's database: URLs, engines, the schema, its versions and migrations (SQLAlchemy Core).

Backends
--------
* **SQLite** (the default; Python's standard library, no server): a path (``history.db``) or
  ``sqlite:///history.db``. Opened in WAL mode (readers never block the writer) with a busy
  timeout, and every write transaction starts with ``BEGIN IMMEDIATE`` so that two processes
  recording at once queue for the write lock instead of failing half-way.
* **PostgreSQL** (several test stations sharing one history): ``postgresql://user@host:port/db``
  (``postgres://`` too), through psycopg 3 (the ``postgres`` extra). Each recording is one
  transaction; creating the schema of a new store is serialised by an advisory lock.

Schema versions
---------------
The table ``lumeval_schema`` holds one row per schema version applied. This lumeval reads and
writes :data:`SCHEMA_VERSION`. A store of an older version is migrated by
``lumeval history migrate`` (one transaction per step, each step an explicit function below);
until then every command refuses it with a message saying so. A store of a newer version (from
a newer lumeval) is refused: it would be silently misread.

Indexes that change no row a reader sees (:data:`EXTRA_INDEXES`) are not a schema version: a
new store is created with them, and ``lumeval history migrate`` adds those that a store of the
current version lacks (a store created by an earlier lumeval), so that stations running either
lumeval keep sharing the store.

Why no Alembic: the schema has four tables and explicit, tested steps; Alembic's script
directory, environment file and revision graph would add a dependency and a second place
where the schema lives, without adding safety here (PostgreSQL and SQLite both run these
steps transactionally).
"""

from __future__ import annotations

import datetime as _dt
import os
from contextlib import contextmanager
from dataclasses import dataclass

from ..errors import LumevalError

#: The schema this lumeval reads and writes.
SCHEMA_VERSION = 2
#: The index on the input files' SHA-256: recording a lot looks up which earlier lots of its
#: product hold the same input files; without it every recording read every input row of the
#: product's lots (SQLite, a 2,000-file lot into a store of 212,000 input rows: lookup 0.31 s
#: without, 0.017 s with it, growing linearly without; bench/bench_store.py item 4).
FILE_INDEX = "ix_lot_inputs_sha256"
#: Indexes beyond those of the schema's version, as (name, table, columns): they change no row a
#: reader sees.
EXTRA_INDEXES: tuple[tuple[str, str, tuple[str, ...]], ...] = ((FILE_INDEX, "lot_inputs", ("sha256",)),)
#: Seconds a writer waits for another writer's lock (SQLite busy timeout).
SQLITE_BUSY_TIMEOUT_S = 60
#: Seconds to wait for a PostgreSQL server to answer a connection.
PG_CONNECT_TIMEOUT_S = 10
#: Advisory lock key that serialises the creation and migration of a PostgreSQL store's schema.
_PG_SCHEMA_LOCK = 0x6C756D65  # "lume"


class StoreError(LumevalError):
    """The store cannot be opened, read or written (bad URL, unreachable server, read-only
    store, a schema from another lumeval version).

    ``busy`` is true when SQLite refused a lock that another process held ("database is
    locked") without waiting for it; such a transaction changed nothing and may be retried.
    """

    busy: bool = False


def _is_sqlite_busy(text: str) -> bool:
    t = text.lower()
    return "database is locked" in t or "database table is locked" in t or "database is busy" in t


def _switch_to_wal(raw, deadline: float) -> None:
    """Put an SQLite store in WAL mode, retrying while another connection holds a lock.

    Changing the journal mode needs an exclusive lock. SQLite does not call its busy handler
    when two connections that both hold a shared lock race for it (its deadlock rule), so the
    loser gets "database is locked" at once; it waits here and tries again until ``deadline``.
    """
    import sqlite3
    import time

    pause = 0.005
    while True:
        try:
            if str(raw.execute("PRAGMA journal_mode").fetchone()[0]).lower() != "wal":
                raw.execute("PRAGMA journal_mode = WAL")
            return
        except sqlite3.OperationalError as exc:
            if not _is_sqlite_busy(str(exc)) or time.monotonic() >= deadline:
                raise
        time.sleep(pause)
        pause = min(pause * 2, 0.25)


# --------------------------------------------------------------------------- URLs


@dataclass(frozen=True)
class StoreURL:
    """A store location: the SQLAlchemy URL, the backend and a printable form without password."""

    url: str
    backend: str  # "sqlite" | "postgresql"
    shown: str
    sqlite_path: str | None = None


def parse_store_url(text: str) -> StoreURL:
    """Turn ``--store`` into a :class:`StoreURL`.

    A plain path (no ``scheme://``) and ``sqlite:///path`` mean SQLite; ``postgresql://`` and
    ``postgres://`` (any ``+driver`` is replaced) mean PostgreSQL through psycopg 3.
    """
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError

    from .._paths import display_path

    raw = str(text).strip()
    if not raw:
        raise StoreError("the store URL is empty", fix="give a path (history.db), sqlite:///history.db or postgresql://user@host/db")
    if "://" not in raw:
        _refuse_folder_path(raw, display_path(raw))
        path = os.path.abspath(raw)
        # shown with undecodable bytes of the file name as U+FFFD, as every path lumeval shows
        return StoreURL("sqlite:///" + path, "sqlite", display_path(raw), path)
    try:
        raw.encode("utf-8")
    except UnicodeEncodeError:  # undecodable bytes in a URL (a path is fine: it opens as given)
        raise StoreError(f"{_redact(display_path(raw))}: the store URL is not UTF-8 text",
                         fix="give the URL as UTF-8 text, or the SQLite file as a plain path") from None
    try:
        u = make_url(raw)
    except ArgumentError:
        raise StoreError(f"{_redact(raw)}: not a store URL",
                         fix="give a path, sqlite:///history.db or postgresql://user@host:port/db") from None
    backend = u.get_backend_name()
    shown = display_path(u.render_as_string(hide_password=True))
    if backend == "sqlite":
        db = u.database or ""
        if not db or db == ":memory:" or db.startswith("file:"):
            raise StoreError(f"{shown}: a store needs a database file",
                             fix="give sqlite:///path/to/history.db (three slashes, then the path)")
        _refuse_folder_path(db, shown)
        path = os.path.abspath(db)
        mode = u.query.get("mode")
        if mode == "ro":  # a read-only view of a store (viewers of a shared file)
            return StoreURL(f"sqlite:///file:{path}?mode=ro&uri=true", "sqlite", shown, path)
        if mode is not None or set(u.query) - {"mode"}:
            raise StoreError(f"{shown}: unsupported SQLite URL options", fix="use sqlite:///path.db or sqlite:///path.db?mode=ro")
        return StoreURL("sqlite:///" + path, "sqlite", shown, path)
    if backend in ("postgresql", "postgres"):
        u = u.set(drivername="postgresql+psycopg")
        return StoreURL(u.render_as_string(hide_password=False), "postgresql", shown)
    raise StoreError(f"{shown}: unsupported store type {backend!r}",
                     fix="use SQLite (a path or sqlite:///history.db) or PostgreSQL (postgresql://user@host:port/db)")


def _refuse_folder_path(path: str, shown: str) -> None:
    """Refuse a store path ending in a separator, '/.' or '/..' (a folder): abspath would drop
    the ending and a store file of that name be made (found by reviews)."""
    from .._io import names_folder

    if names_folder(path):
        raise StoreError(f"{shown}: a path ending in {os.sep!r}, '{os.sep}.' or '{os.sep}..' names a folder",
                         fix="give the store's file, e.g. history.db")


def _redact(raw: str) -> str:
    """A URL-ish string with anything between ``://`` and ``@`` after a colon hidden."""
    if "://" in raw and "@" in raw:
        head, rest = raw.split("://", 1)
        cred, host = rest.rsplit("@", 1)
        if ":" in cred:
            cred = cred.split(":", 1)[0] + ":***"
        return f"{head}://{cred}@{host}"
    return raw


# --------------------------------------------------------------------------- schema


def _tables():
    """(metadata, tables) of the current schema (built on first use: SQLAlchemy is imported lazily)."""
    global _SCHEMA
    if _SCHEMA is None:
        _SCHEMA = _build_schema(SCHEMA_VERSION)
    return _SCHEMA


def _build_schema(version: int):
    """(metadata, tables) of schema ``version`` (1 or 2): one definition, the version's
    additions marked where they are."""
    from sqlalchemy import (
        Boolean,
        Column,
        Double,
        ForeignKey,
        Index,
        Integer,
        MetaData,
        String,
        Table,
        Text,
        UniqueConstraint,
    )

    md = MetaData()
    schema = Table(
        "lumeval_schema", md,
        Column("version", Integer, primary_key=True, autoincrement=False),
        Column("applied_at", String(40), nullable=False),
        Column("lumeval_version", String(40), nullable=False),
    )
    lots = Table(
        "lots", md,
        Column("id", Integer, primary_key=True, autoincrement=True),
        Column("lot_key", String(64), nullable=False),
        Column("label", Text),
        Column("product", Text),
        Column("recorded_at", String(40), nullable=False),
        Column("lumeval_version", String(40), nullable=False),
        Column("criteria_file", Text),
        Column("criteria_sha256", String(64)),
        Column("identification", Text, nullable=False),
        Column("n_samples", Integer, nullable=False),
        Column("n_passed", Integer),
        Column("n_failed", Integer),
        Column("n_not_judged", Integer),
        Column("yield_percent", Double),
        Column("verdict", String(20), nullable=False),
        Column("exit_code", Integer, nullable=False),
        Column("centroid_u", Double),
        Column("centroid_v", Double),
        Column("statistics", Text, nullable=False),
        *([  # schema 2
            Column("region_name", Text),
            Column("region_centre_u", Double),
            Column("region_centre_v", Double),
            Column("region_corners", Text),
        ] if version >= 2 else []),
        UniqueConstraint("lot_key", name="uq_lots_lot_key"),
    )
    if version >= 2:
        Index("ix_lots_product_id", lots.c.product, lots.c.id)
    inputs = Table(
        "lot_inputs", md,
        Column("lot_id", Integer, ForeignKey("lots.id", ondelete="CASCADE"), primary_key=True),
        Column("position", Integer, primary_key=True, autoincrement=False),
        Column("path", Text, nullable=False),
        Column("sha256", String(64), nullable=False),
        Column("size_bytes", Integer),
    )
    figures = Table(
        "lot_figures", md,
        Column("lot_id", Integer, ForeignKey("lots.id", ondelete="CASCADE"), primary_key=True),
        Column("figure", String(40), primary_key=True),
        Column("n", Integer, nullable=False),
        Column("mean", Double),
        Column("std", Double),
        Column("min", Double),
        Column("max", Double),
    )
    if version >= 2:  # a new store has them (EXTRA_INDEXES; migrate adds them to a store that lacks them)
        tables = {"lot_inputs": inputs}
        for name, table, cols in EXTRA_INDEXES:
            Index(name, *(tables[table].c[c] for c in cols))
    samples = Table(
        "samples", md,
        Column("lot_id", Integer, ForeignKey("lots.id", ondelete="CASCADE"), primary_key=True),
        Column("idx", Integer, primary_key=True, autoincrement=False),
        Column("name", Text, nullable=False),
        Column("source", Text, nullable=False),
        Column("verdict", String(20)),
        Column("outlier", Boolean, nullable=False),
        Column("figures", Text, nullable=False),
        Column("warnings", Text, nullable=False),
    )
    return md, {"schema": schema, "lots": lots, "inputs": inputs, "figures": figures, "samples": samples}


_SCHEMA = None

#: Columns and indexes schema 2 added (see :func:`_migrate_1_to_2`).
_V2_LOT_COLUMNS = (("region_name", "TEXT"), ("region_centre_u", "DOUBLE PRECISION"),
                   ("region_centre_v", "DOUBLE PRECISION"), ("region_corners", "TEXT"))


def create_schema_v1(conn) -> None:
    """Create the schema of version 1 (lumeval stores written before the category region was
    recorded). Kept to test migrations and to document what version 1 was."""
    md1, _t = _build_schema(1)
    md1.create_all(conn)
    _stamp(conn, 1)


def _migrate_1_to_2(conn) -> None:
    """Schema 1 → 2: the lot's category region (name, centre, corners in u′v′) so that the
    chromaticity trend needs no criteria file, and an index on (product, id) for trends."""
    for col, typ in _V2_LOT_COLUMNS:
        conn.exec_driver_sql(f"ALTER TABLE lots ADD COLUMN {col} {typ}")
    conn.exec_driver_sql("CREATE INDEX ix_lots_product_id ON lots (product, id)")


#: version -> the step that migrates a store from that version to the next.
MIGRATIONS = {1: _migrate_1_to_2}


def _now() -> str:
    return _dt.datetime.now(_dt.UTC).replace(microsecond=0).isoformat().replace("+00:00", "Z")


def _lumeval_version() -> str:
    from .. import __version__

    return __version__


def _stamp(conn, version: int) -> None:
    from sqlalchemy import insert

    conn.execute(insert(_tables()[1]["schema"]).values(version=version, applied_at=_now(), lumeval_version=_lumeval_version()))


def missing_indexes(conn) -> tuple[str, ...]:
    """The names of :data:`EXTRA_INDEXES` the store lacks (only reads the catalogue)."""
    from sqlalchemy import inspect

    insp = inspect(conn)
    have = {t: {ix["name"] for ix in insp.get_indexes(t)} for t in {table for _n, table, _c in EXTRA_INDEXES}
            if insp.has_table(t)}
    return tuple(name for name, table, _c in EXTRA_INDEXES if table in have and name not in have[table])


def add_missing_indexes(conn) -> tuple[str, ...]:
    """Create the :data:`EXTRA_INDEXES` the store lacks; returns their names.

    Each indexed table is then analysed (``ANALYZE``, on SQLite and PostgreSQL alike), so that
    the query planner knows the table's size and uses the new index at once: PostgreSQL's
    planner otherwise may keep reading the whole table of a store filled before the index
    until its background analysis comes round."""
    missing = missing_indexes(conn)
    analysed: list[str] = []
    for name, table, cols in EXTRA_INDEXES:
        if name in missing:
            conn.exec_driver_sql(f"CREATE INDEX {name} ON {table} ({', '.join(cols)})")
            if table not in analysed:
                analysed.append(table)
    for table in analysed:
        conn.exec_driver_sql(f"ANALYZE {table}")
    return missing


def stored_version(conn) -> int | None:
    """The store's schema version (the highest applied), or None for an empty database."""
    from sqlalchemy import func, inspect, select

    if not inspect(conn).has_table("lumeval_schema"):
        return None
    return conn.execute(select(func.max(_tables()[1]["schema"].c.version))).scalar()


# --------------------------------------------------------------------------- engines


def _make_engine(su: StoreURL):
    from sqlalchemy import create_engine, event
    from sqlalchemy.pool import NullPool

    if su.backend == "sqlite":
        eng = create_engine(su.url, poolclass=NullPool, connect_args={"timeout": SQLITE_BUSY_TIMEOUT_S})

        @event.listens_for(eng, "connect")
        def _on_connect(dbapi_conn, _rec):  # pragma: no cover - exercised through every test
            dbapi_conn.isolation_level = None  # we issue BEGIN ourselves (below)
            cur = dbapi_conn.cursor()
            cur.execute(f"PRAGMA busy_timeout = {SQLITE_BUSY_TIMEOUT_S * 1000}")
            cur.execute("PRAGMA foreign_keys = ON")
            cur.close()

        @event.listens_for(eng, "begin")
        def _on_begin(conn):  # pragma: no cover
            conn.exec_driver_sql("BEGIN IMMEDIATE" if conn.info.get("lumeval_write") else "BEGIN")

        return eng
    try:
        import psycopg  # noqa: F401
    except ImportError:
        raise StoreError(f"{su.shown}: PostgreSQL stores need the psycopg package",
                         fix="install lumeval with the postgres extra: pip install 'lumeval[postgres]'") from None
    return create_engine(su.url, poolclass=NullPool, connect_args={"connect_timeout": PG_CONNECT_TIMEOUT_S})


def _first_line(exc: BaseException) -> str:
    orig = getattr(exc, "orig", None) or exc
    text = str(orig).strip().splitlines()
    return text[0].strip() if text else type(orig).__name__


#: The hint for a WAL-mode store opened with ``?mode=ro`` that SQLite could not open.
WAL_READ_ONLY_FIX = ("a read-only view (?mode=ro) of a store in WAL mode still needs the store's -wal and -shm files "
                     "(SQLite keeps the readers' shared memory there): they must exist next to it, or this user must "
                     "be allowed to create them in its folder — give viewers write access to the folder, or read a "
                     "copy of the store")


def _fix_for(su: StoreURL, text: str, *, wal: bool = False, write: bool = True) -> str:
    t = text.lower()
    if wal and not write and su.url.endswith("?mode=ro&uri=true") and ("readonly" in t or "read-only" in t or "unable to open" in t
                                                         or "permission denied" in t or "disk i/o" in t):
        return WAL_READ_ONLY_FIX
    if "readonly" in t or "read-only" in t or "read only" in t or "permission denied" in t:
        return "the store is read-only here: record into a store this user may write, or ask its owner"
    if su.backend == "postgresql":
        if "password" in t or "authentication" in t:
            return "check the user name and password (or the server's pg_hba.conf)"
        if "does not exist" in t:
            return "check the database name (create it with createdb) and the user"
        return "check the host, port and that the PostgreSQL server is running and reachable"
    return "check the path, that its folder exists and is writable, and the free space"


@contextmanager
def connect(su: StoreURL, *, write: bool, action: str):
    """A connection inside one transaction (committed on success, rolled back on error).

    Every database error becomes one :class:`StoreError` line naming the store and ``action``.
    For SQLite, reading a file that does not exist is refused (a read never creates a store);
    WAL mode is switched on by the first writer.
    """
    import sqlite3

    from sqlalchemy.exc import DBAPIError, IntegrityError, SQLAlchemyError

    wal = False
    if su.backend == "sqlite":
        p = su.sqlite_path
        assert p is not None
        folder = os.path.dirname(p) or "."
        if os.path.isdir(p):
            raise StoreError(f"{su.shown}: is a folder, not a store file", fix="give a file path such as history.db")
        if not write and not os.path.exists(p):
            raise StoreError(f"{su.shown}: no store here (the file does not exist)",
                             fix="check the path; a store is created by `lumeval lot ... --store PATH`")
        if write and not os.path.isdir(folder):
            raise StoreError(f"{su.shown}: the folder {folder} does not exist", fix="create the folder first")
        if os.path.exists(p):
            import stat

            mode = os.stat(p).st_mode
            if not stat.S_ISREG(mode):  # a FIFO would block the open (and SQLite) forever
                from ..spectra.text import special_file_kind

                raise StoreError(f"{su.shown}: is {special_file_kind(mode)}, not a regular file: a store is a file",
                                 fix="give the path of a lumeval store file such as history.db")
            try:
                with open(p, "rb") as fh:
                    head = fh.read(20)
            except OSError as exc:
                raise StoreError(f"{su.shown}: cannot be read ({exc.strerror or exc})",
                                 fix="check the file's permissions") from None
            if head and head[:16] != b"SQLite format 3\x00":
                raise StoreError(f"{su.shown}: not an SQLite database", fix="give the path of a lumeval store")
            # file format versions 2/2 at bytes 18-19: a database in WAL mode (sqlite.org/fileformat2.html §1.3.4)
            wal = head[18:20] == b"\x02\x02"
    eng = _make_engine(su)
    try:
        with eng.connect() as conn:
            conn.info["lumeval_write"] = write
            if su.backend == "sqlite" and write:
                # a database of another application is refused before anything is changed in it
                _refuse_foreign_sqlite(conn.connection.driver_connection, su)
                # outside any transaction (SQLite cannot change the journal mode inside one);
                # the mode is stored in the file, so this is a no-op after the first writer
                import time

                _switch_to_wal(conn.connection.driver_connection, time.monotonic() + SQLITE_BUSY_TIMEOUT_S)
            with conn.begin():
                yield conn
                from .. import _stop

                _stop.check()  # a stop received on the way (even if swallowed): rolled back, not committed
    except (StoreError, IntegrityError):  # IntegrityError: the caller decides (a lot recorded twice)
        raise
    except (DBAPIError, SQLAlchemyError, sqlite3.Error) as exc:
        text = _first_line(exc)
        err = StoreError(f"{su.shown}: cannot {action} ({text})", fix=_fix_for(su, text, wal=wal, write=write))
        err.busy = su.backend == "sqlite" and _is_sqlite_busy(text)
        raise err from None
    finally:
        eng.dispose()


def _foreign_store_error(su: StoreURL, count: int) -> StoreError:
    what = "1 table, index, view or trigger" if count == 1 else f"{count} tables, indexes, views or triggers"
    return StoreError(f"{su.shown}: a database of another application (it holds {what} and no "
                      "lumeval_schema table): not a lumeval store, and left unchanged",
                      fix="give the path or URL of a lumeval store, or of a new or empty database")


def _refuse_foreign_sqlite(raw, su: StoreURL) -> None:
    """Refuse an SQLite database that holds anything but is not a lumeval store (no
    ``lumeval_schema`` table), before the journal mode or the schema are touched: lumeval
    never adds its tables to someone else's database. An empty database (no table, view,
    index or trigger) may become a store. Only reads ``sqlite_master``."""
    names = [r[0] for r in raw.execute("SELECT name FROM sqlite_master").fetchall()]
    if names and "lumeval_schema" not in names:
        raise _foreign_store_error(su, len(names))


def ensure_schema(conn, su: StoreURL, *, create: bool) -> None:
    """Check the store's schema version; create the schema in an empty database when ``create``.

    Raises :class:`StoreError` for a store of another version, or when there is no store and
    ``create`` is false.
    """
    v = stored_version(conn)
    if v is None and su.backend == "postgresql" and create:
        _schema_lock(conn, su)
        v = stored_version(conn)
    if v is None:
        if not create:
            raise StoreError(f"{su.shown}: holds no lumeval store (no lumeval_schema table)",
                             fix="check the URL; a store is created by `lumeval lot ... --store URL`")
        from sqlalchemy import inspect

        others = inspect(conn).get_table_names()
        if others:  # PostgreSQL (SQLite was checked before the journal mode was set)
            raise _foreign_store_error(su, len(others))
        md, _t = _tables()
        md.create_all(conn)
        _stamp(conn, SCHEMA_VERSION)
        return
    check_version(v, su)


def check_version(v: int, su: StoreURL) -> None:
    if v > SCHEMA_VERSION:
        raise StoreError(
            f"{su.shown}: the store has schema version {v}, written by a newer lumeval; this lumeval "
            f"({_lumeval_version()}) reads version {SCHEMA_VERSION} and will not guess",
            fix="upgrade lumeval on this station")
    if v < SCHEMA_VERSION:
        raise StoreError(
            f"{su.shown}: the store has schema version {v}, written by an older lumeval; this lumeval reads "
            f"version {SCHEMA_VERSION}",
            fix=f"back the store up, then run `lumeval history migrate --store {su.shown}` (every station that "
                "writes to it then needs this lumeval or newer)")


def _schema_lock(conn, su: StoreURL) -> None:
    """On PostgreSQL, take the advisory lock that serialises creating and migrating the schema
    (held to the end of the transaction); nothing on SQLite, whose writers queue anyway."""
    if su.backend == "postgresql":
        conn.exec_driver_sql(f"SELECT pg_advisory_xact_lock({_PG_SCHEMA_LOCK})")


def _no_store(su: StoreURL) -> StoreError:
    return StoreError(f"{su.shown}: holds no lumeval store (no lumeval_schema table)", fix="check the URL")


def migrate(su: StoreURL) -> tuple[int, int]:
    """Migrate the store to :data:`SCHEMA_VERSION`, one transaction per step, then add the
    :data:`EXTRA_INDEXES` it lacks (:func:`migrate_report`).

    Returns (version before, version after). Refuses a newer store and an empty database.
    """
    before, after, _added = migrate_report(su)
    return before, after


def migrate_report(su: StoreURL) -> tuple[int, int, tuple[str, ...]]:
    """:func:`migrate`, returning (version before, version after, names of the indexes added)."""
    # read first: a file that holds no store is refused untouched (a write connection switches
    # an SQLite file to WAL mode, which turned an empty file into a 4 kB database; found by a
    # review)
    with connect(su, write=False, action="read the store") as conn:
        if stored_version(conn) is None:
            raise _no_store(su)
    with connect(su, write=True, action="migrate the store") as conn:
        _schema_lock(conn, su)
        before = stored_version(conn)
        if before is None:
            raise _no_store(su)
        if before > SCHEMA_VERSION:
            check_version(before, su)
    v = before
    while v < SCHEMA_VERSION:
        with connect(su, write=True, action=f"migrate the store from schema {v} to {v + 1}") as conn:
            _schema_lock(conn, su)
            now = stored_version(conn) or v
            if now != v:  # another process migrated meanwhile
                v = now
                continue
            MIGRATIONS[v](conn)
            _stamp(conn, v + 1)
        v += 1
    with connect(su, write=True, action="add the store's missing indexes") as conn:
        _schema_lock(conn, su)
        added = add_missing_indexes(conn)
    return before, v, added
