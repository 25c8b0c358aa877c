"""Recording a judged lot: what is kept, how it is identified, and the one transaction that writes it.

A lot's identity in the store is its *content*: the SHA-256 of every input file (sorted) and of
the criteria file (FIPS 180-4). Recording the same inputs with the same criteria again finds
the earlier record ("already recorded as lot N") instead of adding a duplicate, whatever
``--lot-id`` says. Everything of one lot (the lot row, its inputs, its per-figure summaries and
every sample) is written in one transaction: after a crash or ``kill -9`` the store holds the
whole lot or nothing of it. The per-figure summaries leave out the values computed outside the
validity range, as the lot statistics do (:func:`figure_summaries`; docs/history.md).
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field

import numpy as np

from .db import (
    FILE_INDEX,
    SQLITE_BUSY_TIMEOUT_S,
    StoreError,
    StoreURL,
    connect,
    ensure_schema,
    missing_indexes,
    parse_store_url,
)

#: Samples written per INSERT batch.
INSERT_BATCH = 1000


@dataclass(frozen=True)
class Region:
    """The chromaticity category a lot is judged against (an ANSI quadrangle, or a nominal centre)."""

    name: str
    centre_upvp: tuple[float, float]
    corners_upvp: tuple[tuple[float, float], ...] | None


@dataclass(frozen=True)
class LotRecord:
    """Everything the store keeps of one lot (see :func:`lot_record`)."""

    label: str | None
    product: str | None
    criteria_file: str | None
    criteria_sha256: str | None
    identification: dict
    inputs: tuple[tuple[str, str, int | None], ...]  # (path, sha256, bytes)
    verdict: str  # "pass" | "fail" | "not judged"
    exit_code: int
    counts: dict
    yield_percent: float | None
    centroid_upvp: tuple[float | None, float | None]
    statistics: dict
    region: Region | None
    figures: dict  # name -> ndarray (N,)
    names: tuple[str, ...]
    sources: tuple[str, ...]
    sample_verdicts: tuple[str, ...] | None
    outliers: tuple[bool, ...]
    warnings: tuple[tuple[str, ...], ...]
    lumeval_version: str = ""
    extra: dict = field(default_factory=dict)
    #: bool (N,): samples whose reference-based figures were computed outside the validity range
    #: (|Duv| > 0.05); their values of those figures are left out of ``lot_figures`` (None: none).
    outside_validity: np.ndarray | None = None

    @property
    def lot_key(self) -> str:
        """SHA-256 of the sorted input SHA-256s and the criteria SHA-256 (hex)."""
        h = hashlib.sha256()
        for sha in sorted(s for _p, s, _b in self.inputs):
            h.update(sha.encode("ascii") + b"\n")
        h.update(b"criteria:" + (self.criteria_sha256 or "none").encode("ascii"))
        return h.hexdigest()

    def __len__(self) -> int:
        return len(self.names)


@dataclass(frozen=True)
class RecordResult:
    lot_id: int
    created: bool
    store: str
    product: str | None
    label: str | None
    #: (lot id, how many of this lot's input files it also holds) for every earlier lot of the
    #: same product that holds some of the same files (byte for byte): recorded under other
    #: criteria, or a lot that overlaps this one. A trend of the product counts those samples
    #: in each lot. ``n_inputs``: this lot's input files.
    overlaps: tuple[tuple[int, int], ...] = ()
    n_inputs: int = 0
    #: Indexes of :data:`lumeval.store.db.EXTRA_INDEXES` the store lacks (created by an earlier
    #: lumeval): recording works, but slows down as the store grows.
    missing_indexes: tuple[str, ...] = ()

    @property
    def message(self) -> str:
        what = f"lot {self.lot_id}" + (f" ({self.label})" if self.label else "")
        if self.created:
            return f"recorded as {what} in {self.store}" + self.overlap_note + self.index_note
        return f"already recorded as {what} in {self.store} (same input files and criteria): not recorded again"

    @property
    def overlap_note(self) -> str:
        """"; note: …" when earlier lots of the product hold some of the same input files ("" when none)."""
        if not self.overlaps:
            return ""
        n = self.n_inputs
        by_count: dict[int, list[int]] = {}
        for lot_id, k in self.overlaps:
            by_count.setdefault(k, []).append(lot_id)
        parts = []
        for k, ids in sorted(by_count.items(), key=lambda kv: -kv[0]):
            if k >= n:
                what = "its only input file is" if n == 1 else f"all {n} of its input files are"
            else:
                what = f"{k} of its {n} input files {'is' if k == 1 else 'are'}"
            parts.append(f"{what} already in {_lots_text(ids)}")
        return ("; note: " + "; ".join(parts) + " (the same bytes, recorded under other criteria or in another lot of "
                "this product): a trend of the product counts those samples in each of these lots")

    @property
    def index_note(self) -> str:
        """"; note: …" when the store lacks an index this lumeval creates ("" otherwise)."""
        if not self.missing_indexes:
            return ""
        return (f"; note: the store lacks the index {', '.join(self.missing_indexes)} (created by an earlier lumeval): "
                "recording slows down as the store grows; `lumeval history migrate` with this --store adds it")


def _lots_text(ids: list[int]) -> str:
    """"lot 3", "lots 1, 2 and 3", "lots 1, 2, 3, 4, 5 and 7 more"."""
    if len(ids) == 1:
        return f"lot {ids[0]}"
    shown, rest = ids[:_OVERLAPS_SHOWN], len(ids) - _OVERLAPS_SHOWN
    if rest > 0:
        return f"lots {', '.join(map(str, shown))} and {rest} more"
    return f"lots {', '.join(map(str, shown[:-1]))} and {shown[-1]}"


#: Earlier lots named in the overlap note before "and N more".
_OVERLAPS_SHOWN = 5


def _num(v):
    f = float(v)
    return f if math.isfinite(f) else None


def figure_summaries(figures: dict, outside_validity=None) -> list[dict]:
    """Per figure: count of the values used, mean, standard deviation (ddof 1; None below 2
    values), min and max, ignoring NaN and, for the figures computed against a reference
    illuminant, the values of the samples flagged in ``outside_validity`` (bool (N,): computed
    outside the validity range, |Duv| > 0.05, CIE 15:2004 §9.5; the rule of the lot statistics,
    :mod:`lumeval.lots.validity`). Vectorised over the (N, F) matrix."""
    from ..engine import is_validity_figure
    from ..lots.validity import sample_flags

    names = list(figures)
    if not names:
        return []
    M = np.column_stack([np.asarray(figures[k], dtype=float) for k in names]) if len(next(iter(figures.values()))) else np.empty((0, len(names)))
    fin = np.isfinite(M)
    flag = sample_flags(outside_validity, M.shape[0])
    if flag is not None:  # left out exactly as NaN is
        fin &= ~(flag[:, None] & np.array([is_validity_figure(k) for k in names])[None, :])
    n = fin.sum(axis=0)
    Z = np.where(fin, M, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = Z.sum(axis=0) / n
        dev = np.where(fin, M - mean, 0.0)
        std = np.sqrt((dev * dev).sum(axis=0) / (n - 1))
        mn = np.where(fin, M, np.inf).min(axis=0) if M.shape[0] else np.full(len(names), np.nan)
        mx = np.where(fin, M, -np.inf).max(axis=0) if M.shape[0] else np.full(len(names), np.nan)
    out = []
    for j, k in enumerate(names):
        c = int(n[j])
        out.append({"figure": k, "n": c, "mean": _num(mean[j]) if c else None, "std": _num(std[j]) if c >= 2 else None,
                    "min": _num(mn[j]) if c else None, "max": _num(mx[j]) if c else None})
    return out


def _region_of(criteria, stats) -> Region | None:
    """The ANSI quadrangle of the criteria's ``ansi_quadrangle`` clause, else the lot's nominal
    centre (from an ``sdcm`` clause), else None."""
    if criteria is not None:
        for c in getattr(criteria, "clauses", ()):
            if getattr(c, "KIND", "") == "ansi_quadrangle":
                q = getattr(c, "quadrangle", None)
                q = q() if callable(q) else q
                if q is not None and getattr(q, "corners_upvp", None) is not None:
                    corners = tuple((float(a), float(b)) for a, b in np.asarray(q.corners_upvp))
                    cu = np.asarray(q.centre_upvp, dtype=float)
                    return Region(str(q.name), (float(cu[0]), float(cu[1])), corners)
    nom = getattr(stats, "nominal_upvp", None)
    if nom is not None and np.all(np.isfinite(nom)):
        return Region(getattr(stats, "ellipse_name", "") or "nominal centre", (float(nom[0]), float(nom[1])), None)
    return None


def lot_record(run, *, criteria=None, lot_id: str | None = None, product: str | None = None,
               input_files=None, criteria_path=None) -> LotRecord:
    """Build the record of a judged lot (a :class:`lumeval.commands.lot.LotRun`).

    Hashes the input files (``input_files``, default the files the samples came from:
    ``run.read_paths``, the paths that open them) and the criteria file (``criteria_path``, the
    path as given, default ``run.criteria_file``); paths are recorded in their printable form. Lot label: ``lot_id``, else the criteria identification's ``lot``; product:
    ``product``, else the identification's ``product``.
    """
    from .. import __version__
    from ..render.lot_report import lot_document
    from ..render.provenance import sha256_of

    ident = dict(getattr(run, "identification", {}) or {})
    ident_s = {str(k): (v if isinstance(v, (str, int, float, bool)) or v is None else str(v)) for k, v in ident.items()}
    import os

    from .._paths import display_path, source_file

    if input_files is None:
        # the opened paths, not the samples' sources: a source is the printable name (a file
        # name's undecodable bytes shown as U+FFFD) and may hold "#" (FILE#column)
        known: dict[str, bool] = {}  # (a million sources of a few files: a few lookups)
        input_files = list(getattr(run, "read_paths", ()) or ()) or sorted({source_file(src, known) for src in run.sources})
    inputs = []
    for p in sorted(set(input_files), key=display_path):
        inputs.append((display_path(p), sha256_of(p), os.path.getsize(p)))
    crit_file = criteria_path if criteria_path is not None else getattr(run, "criteria_file", None)
    crit_sha = sha256_of(crit_file) if crit_file else None
    doc = lot_document(run)
    doc.pop("samples", None)
    doc.pop("cautions", None)
    counts = doc["counts"]
    y = doc["verdict"]["yield"]
    judged = run.check is not None or bool(run.lot_results)
    verdict = ("fail" if run.failed else "pass") if judged else "not judged"
    cu = getattr(run.stats, "centroid_upvp", None)
    centroid = (None, None) if cu is None else (_num(cu[0]), _num(cu[1]))
    v = run.sample_verdicts
    return LotRecord(
        label=lot_id if lot_id else (str(ident["lot"]) if ident.get("lot") is not None else None),
        product=product if product else (str(ident["product"]) if ident.get("product") is not None else None),
        criteria_file=display_path(crit_file) if crit_file else None,
        criteria_sha256=crit_sha,
        identification=ident_s,
        inputs=tuple(inputs),
        verdict=verdict,
        exit_code=int(run.exit_code),
        counts=counts,
        yield_percent=None if y is None else y.get("percent"),
        centroid_upvp=centroid,
        statistics=doc,
        region=_region_of(criteria, run.stats),
        figures={k: np.asarray(a, dtype=float) for k, a in run.figures.items()},
        names=tuple(run.names),
        sources=tuple(run.sources),
        sample_verdicts=tuple(v) if v is not None else None,
        outliers=tuple(bool(o) for o in np.asarray(run.stats.outlier, dtype=bool)),
        warnings=tuple(tuple(w) for w in run.warnings),
        lumeval_version=__version__,
        outside_validity=getattr(run.stats, "outside_validity", None),
    )


def _json(obj) -> str:
    return json.dumps(obj, ensure_ascii=False, allow_nan=False, separators=(",", ":"), default=str)


def _sample_rows(rec: LotRecord, lot_id: int):
    names = list(rec.figures)
    M = np.column_stack([rec.figures[k] for k in names]) if names and len(rec) else np.empty((len(rec), 0))
    for i in range(len(rec)):
        row = M[i]
        figs = {k: (float(x) if math.isfinite(x) else None) for k, x in zip(names, row.tolist())}
        yield {
            "lot_id": lot_id,
            "idx": i,
            "name": rec.names[i],
            "source": rec.sources[i],
            "verdict": rec.sample_verdicts[i] if rec.sample_verdicts is not None else None,
            "outlier": rec.outliers[i],
            "figures": _json(figs),
            "warnings": _json(list(rec.warnings[i])),
        }


def _now() -> str:
    from .db import _now as now

    return now()


def record_lot(store: str | StoreURL, rec: LotRecord, *, _after_batch=None) -> RecordResult:
    """Write ``rec`` into the store in one transaction (creating the store when empty).

    Returns the new lot's id, or the id of the earlier record of the same lot (``created``
    False). ``_after_batch(k)`` is called after each batch of samples (tests use it to
    interrupt a recording half-way).
    """
    import time

    from sqlalchemy import select

    from .db import _tables

    su = store if isinstance(store, StoreURL) else parse_store_url(store)
    t = _tables()[1]
    key = rec.lot_key

    def existing(conn):
        return conn.execute(select(t["lots"].c.id, t["lots"].c.label).where(t["lots"].c.lot_key == key)).first()

    deadline = time.monotonic() + SQLITE_BUSY_TIMEOUT_S
    pause = 0.01
    while True:
        try:
            return _record_once(su, rec, t, key, existing, _after_batch)
        except StoreError as exc:
            # a lock SQLite refused without waiting: the transaction was rolled back whole,
            # so recording again is safe
            if not exc.busy or time.monotonic() >= deadline:
                raise
        time.sleep(pause)
        pause = min(pause * 2, 0.5)


def _overlapping_lots(conn, t, rec: LotRecord, file_index: bool = True) -> tuple[tuple[int, int], ...]:
    """(lot id, how many of ``rec``'s input files it holds) of the lots of ``rec``'s product
    already in the store that hold any of its input files (the same SHA-256; two identical
    files of ``rec`` count as two), most shared first, then by id.

    ``file_index``: the store has the index on lot_inputs.sha256 (``ix_lot_inputs_sha256``):
    the lots holding any of the files are found by it, then those of the product are kept.
    Without it (a store created by an earlier lumeval) one query joins the two tables, which
    the product's index drives: it reads every input row of the product's lots, and no other."""
    from sqlalchemy import select

    per_sha: dict[str, int] = {}
    for _p, s, _b in rec.inputs:
        per_sha[s] = per_sha.get(s, 0) + 1
    shas = sorted(per_sha)
    if not shas:
        return ()
    lots = t["lots"]
    same_product = lots.c.product.is_(None) if rec.product is None else lots.c.product == rec.product
    found: dict[int, set[str]] = {}
    for part in _in_lists(shas):
        q = _files_query(t, part, None if file_index else same_product)
        for lot_id, sha in conn.execute(q):
            found.setdefault(int(lot_id), set()).add(sha)
    if file_index:  # the lots found, of the product only
        ids = sorted(found)
        ours: set[int] = set()
        for part in _in_lists(ids):
            ours.update(map(int, conn.execute(select(lots.c.id).where(lots.c.id.in_(part), same_product)).scalars()))
        found = {lot_id: got for lot_id, got in found.items() if lot_id in ours}
    shared = {lot_id: sum(per_sha[s] for s in got) for lot_id, got in found.items()}
    return tuple(sorted(shared.items(), key=lambda kv: (-kv[1], kv[0])))


#: Values of one SQL ``IN`` list at most (SQLite's oldest limit is 999 parameters a statement).
IN_LIST_MAX = 900


def _in_lists(values: list) -> list[list]:
    """``values`` in consecutive parts of at most :data:`IN_LIST_MAX`, one ``IN`` list each."""
    return [values[k:k + IN_LIST_MAX] for k in range(0, len(values), IN_LIST_MAX)]


def _files_query(t, shas: list[str], same_product=None):
    """The (lot id, SHA-256) pairs of the stored input files among ``shas``; with
    ``same_product`` (a condition on the lots table), of that product's lots only, joined."""
    from sqlalchemy import select

    li, lots = t["inputs"], t["lots"]
    q = select(li.c.lot_id, li.c.sha256).distinct().where(li.c.sha256.in_(shas))
    return q if same_product is None else q.join(lots, lots.c.id == li.c.lot_id).where(same_product)


def _record_once(su: StoreURL, rec: LotRecord, t, key: str, existing, _after_batch) -> RecordResult:
    from sqlalchemy import insert
    from sqlalchemy.exc import IntegrityError

    try:
        with connect(su, write=True, action="record the lot") as conn:
            ensure_schema(conn, su, create=True)
            row = existing(conn)
            if row is not None:
                return RecordResult(int(row[0]), False, su.shown, rec.product, row[1])
            lacking = missing_indexes(conn)
            overlaps = _overlapping_lots(conn, t, rec, FILE_INDEX not in lacking)
            reg = rec.region
            lot_id = conn.execute(insert(t["lots"]).values(
                lot_key=key, label=rec.label, product=rec.product, recorded_at=_now(),
                lumeval_version=rec.lumeval_version, criteria_file=rec.criteria_file,
                criteria_sha256=rec.criteria_sha256, identification=_json(rec.identification),
                n_samples=len(rec), n_passed=rec.counts.get("passed"), n_failed=rec.counts.get("failed"),
                n_not_judged=rec.counts.get("not_judged"), yield_percent=rec.yield_percent,
                verdict=rec.verdict, exit_code=rec.exit_code,
                centroid_u=rec.centroid_upvp[0], centroid_v=rec.centroid_upvp[1],
                statistics=_json(rec.statistics),
                region_name=reg.name if reg else None,
                region_centre_u=reg.centre_upvp[0] if reg else None,
                region_centre_v=reg.centre_upvp[1] if reg else None,
                region_corners=_json(reg.corners_upvp) if reg and reg.corners_upvp else None,
            ).returning(t["lots"].c.id)).scalar_one()
            if rec.inputs:
                conn.execute(insert(t["inputs"]), [
                    {"lot_id": lot_id, "position": k, "path": p, "sha256": s, "size_bytes": b}
                    for k, (p, s, b) in enumerate(rec.inputs)])
            figs = figure_summaries(rec.figures, rec.outside_validity)
            if figs:
                conn.execute(insert(t["figures"]), [{"lot_id": lot_id, **f} for f in figs])
            batch: list[dict] = []
            k = 0
            for row in _sample_rows(rec, lot_id):
                batch.append(row)
                if len(batch) >= INSERT_BATCH:
                    conn.execute(insert(t["samples"]), batch)
                    batch = []
                    k += 1
                    if _after_batch is not None:
                        _after_batch(k)
            if batch:
                conn.execute(insert(t["samples"]), batch)
                if _after_batch is not None:
                    _after_batch(k + 1)
            return RecordResult(int(lot_id), True, su.shown, rec.product, rec.label, overlaps, len(rec.inputs),
                                lacking)
    except IntegrityError:
        pass  # the same lot, recorded by another process at the same moment: report that record
    with connect(su, write=False, action="read the store") as conn:
        row = existing(conn)
    if row is None:  # pragma: no cover - the only unique key is lot_key
        raise StoreError(f"{su.shown}: cannot record the lot (a constraint of the store refused it)",
                         fix="report this with `lumeval --debug`")
    return RecordResult(int(row[0]), False, su.shown, rec.product, row[1])
