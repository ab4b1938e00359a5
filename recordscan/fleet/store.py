"""The arc-parameter database: open, migrate, ingest scan results, query.

Scan results (docs/scan-schema.md, version 1) go in one transaction per record, keyed by the
record's sha256: ingesting the same record twice adds nothing, and a bad result or a crash
leaves no partial rows. Any SQLAlchemy URL works; an embedded SQLite file is the default
(see :func:`default_location`). Two processes may ingest at once: on SQLite the store uses
WAL journalling, a busy timeout, ``BEGIN IMMEDIATE`` for writes and retries on "database is
locked"; on PostgreSQL it relies on unique constraints with ``ON CONFLICT DO NOTHING`` and an
advisory lock around migrations.
"""

from __future__ import annotations

import json
import os
import random
import time
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal, TypeVar

import sqlalchemy as sa

from recordscan.errors import StoreError
from recordscan.fleet import schema as S
from recordscan.fleet.convert import (
    SHA_CHARS,
    Prepared,
    fit_row,
    line_fields,
    parse_instant_ns,
    prepare,
)

__all__ = [
    "ENV_VAR",
    "EventFilter",
    "IngestOutcome",
    "IngestSummary",
    "Store",
    "default_location",
    "migrate",
    "open_store",
    "parse_instant_ns",
]

if TYPE_CHECKING:
    import pandas as pd

T = TypeVar("T")

#: Environment variable that overrides the default database location.
ENV_VAR = "RECORDSCAN_DB"
_PG_LOCK_KEY = 720_611_006  # arbitrary constant: serialises migrations on PostgreSQL
_RETRY_ATTEMPTS = 30


def default_location() -> str:
    """Where the database lives when no ``--db`` is given.

    ``$RECORDSCAN_DB`` if set (a path or an SQLAlchemy URL), else
    ``$XDG_DATA_HOME/recordscan/arcs.sqlite`` (``~/.local/share/recordscan/arcs.sqlite``).
    """
    env = os.environ.get(ENV_VAR)
    if env:
        return env
    base = os.environ.get("XDG_DATA_HOME") or str(Path.home() / ".local" / "share")
    return str(Path(base) / "recordscan" / "arcs.sqlite")


def _to_url(url_or_path: str) -> sa.URL:
    if "://" in url_or_path:
        try:
            return sa.make_url(url_or_path)
        except sa.exc.ArgumentError as exc:
            raise StoreError(f"{url_or_path}: not a database URL ({exc})") from None
    path = Path(url_or_path).expanduser().resolve()
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(f"{path}: cannot create the database folder ({exc})") from None
    return sa.URL.create("sqlite", database=str(path))


def _is_sqlite(url: sa.URL) -> bool:
    return url.get_backend_name() == "sqlite"


def _sqlite_hooks(engine: sa.Engine, *, file_based: bool) -> None:
    """Proper transactions on the stdlib sqlite3 driver, WAL and a busy timeout."""

    @sa.event.listens_for(engine, "connect")
    def _connect(dbapi_conn: Any, _record: Any) -> None:
        dbapi_conn.isolation_level = None  # SQLAlchemy emits BEGIN itself (below)
        cur = dbapi_conn.cursor()
        cur.execute("PRAGMA busy_timeout = 30000")
        cur.execute("PRAGMA foreign_keys = ON")
        if file_based:
            for attempt in range(_RETRY_ATTEMPTS):
                try:
                    cur.execute("PRAGMA journal_mode = WAL")
                    break
                except Exception as exc:  # sqlite3.OperationalError: locked while converting
                    if "locked" not in str(exc) or attempt == _RETRY_ATTEMPTS - 1:
                        raise
                    time.sleep(0.05 * (attempt + 1))
            cur.execute("PRAGMA synchronous = NORMAL")
        cur.close()

    @sa.event.listens_for(engine, "begin")
    def _begin(conn: sa.Connection) -> None:
        mode = conn.get_execution_options().get("recordscan_begin", "DEFERRED")
        conn.exec_driver_sql(f"BEGIN {mode}")


def _retryable(exc: BaseException) -> bool:
    orig = getattr(exc, "orig", None)
    text = str(orig if orig is not None else exc).lower()
    if "database is locked" in text or "database is busy" in text:
        return True
    code = getattr(orig, "sqlstate", None) or getattr(orig, "pgcode", None)
    return code in {"40001", "40P01"}  # serialization failure, deadlock (PostgreSQL)


@dataclass(frozen=True)
class IngestOutcome:
    """What happened to one scan result.

    Attributes
    ----------
    sha256 : str
        Content hash of the record.
    status : {"added", "duplicate", "replaced"}
        ``"duplicate"``: the record was already stored and nothing changed.
    record_id : int
        Row id in ``records``.
    """

    sha256: str
    status: Literal["added", "duplicate", "replaced"]
    record_id: int


@dataclass
class IngestSummary:
    """Counts of an :meth:`Store.ingest_many` run."""

    outcomes: list[IngestOutcome] = field(default_factory=list)

    @property
    def n_added(self) -> int:
        """Records newly stored."""
        return sum(o.status == "added" for o in self.outcomes)

    @property
    def n_duplicate(self) -> int:
        """Records already present (nothing stored)."""
        return sum(o.status == "duplicate" for o in self.outcomes)

    @property
    def n_replaced(self) -> int:
        """Records stored again over an earlier version."""
        return sum(o.status == "replaced" for o in self.outcomes)

    def to_dict(self) -> dict[str, int]:
        """Plain counts."""
        return {
            "added": self.n_added,
            "duplicate": self.n_duplicate,
            "replaced": self.n_replaced,
        }


@dataclass(frozen=True)
class EventFilter:
    """Which events a query returns (all given conditions must hold).

    Attributes
    ----------
    line : str or None
        Line name (exact).
    voltage_v : float or None
        Voltage class, line-to-line; matches within 1 %.
    since_ns, until_ns : int or None
        Record start instant, UTC ns: ``since_ns <= start_ns < until_ns``.
    outcome : str or None
        ``"success"``, ``"reclose_onto_fault"`` or ``"no_reclose"``.
    tag : tuple of (str, str) or None
        A ``(key, value)`` tag the record must carry.
    """

    line: str | None = None
    voltage_v: float | None = None
    since_ns: int | None = None
    until_ns: int | None = None
    outcome: str | None = None
    tag: tuple[str, str] | None = None


# ---------------------------------------------------------------------------- the store
class Store:
    """An open arc-parameter database. Create with :func:`open_store`.

    Parameters
    ----------
    engine : sqlalchemy.Engine
        Engine of a migrated database.
    """

    def __init__(self, engine: sa.Engine) -> None:
        self.engine = engine

    # -- plumbing
    @property
    def url(self) -> str:
        """Database URL with any password hidden."""
        return self.engine.url.render_as_string(hide_password=True)

    @property
    def url_display(self) -> str:
        """Same as :attr:`url` (database URL with any password hidden)."""
        return self.url

    @property
    def dialect(self) -> str:
        """Backend name (``"sqlite"``, ``"postgresql"``…)."""
        return self.engine.dialect.name

    def close(self) -> None:
        """Release all connections."""
        self.engine.dispose()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _write(self, fn: Callable[[sa.Connection], T]) -> T:
        """Run ``fn`` in one write transaction, retrying on lock contention."""
        for attempt in range(_RETRY_ATTEMPTS):
            try:
                with self.engine.connect() as conn:
                    conn = conn.execution_options(recordscan_begin="IMMEDIATE")
                    with conn.begin():
                        return fn(conn)
            except sa.exc.DBAPIError as exc:
                if not _retryable(exc) or attempt == _RETRY_ATTEMPTS - 1:
                    raise StoreError(f"{self.url}: write failed ({_short(exc)})") from None
                time.sleep(min(2.0, 0.02 * 2**attempt) * (0.5 + random.random()))
        raise AssertionError("unreachable")  # pragma: no cover

    def _read(self, fn: Callable[[sa.Connection], T]) -> T:
        try:
            with self.engine.connect() as conn, conn.begin():
                return fn(conn)
        except sa.exc.DBAPIError as exc:
            raise StoreError(f"{self.url}: query failed ({_short(exc)})") from None

    def schema_version(self) -> int:
        """Highest applied migration."""
        return self._read(lambda c: _current_version(c))

    # -- writing
    def upsert_line(self, line: Any) -> int:
        """Store or update a line description; returns its id.

        Parameters
        ----------
        line : dataclass or mapping
            A :func:`recordscan.physics.line.load_line` result or a dict with at least
            ``name`` (and any of ``voltage_v``, ``length_m``, ``frequency_hz``,
            ``dead_time_s``, ``reactors``, ``compensation``).
        """
        fields = line_fields(line)
        return self._write(lambda conn: _ensure_line(conn, fields, full=True))

    def ingest(
        self,
        result: Mapping[str, Any],
        *,
        record_meta: Mapping[str, Any] | None = None,
        line: Any = None,
        fit: Mapping[str, Any] | None = None,
        tags: Mapping[str, Any] | None = None,
        replace: bool = False,
    ) -> IngestOutcome:
        """Store one scan result (one transaction; idempotent by sha256).

        Parameters
        ----------
        result : mapping
            One object of the scan JSON Lines schema (version 1 or later).
        record_meta : mapping, optional
            Extra facts about the record kept as JSON with it.
        line : dataclass or mapping, optional
            Line description; its name overrides the result's ``line``.
        fit : mapping, optional
            Arc-parameter fit result (``method``, parameters, ``…_stderr``, ``…_status``,
            ``residual_rms``, ``success``, ``message``…).
        tags : mapping, optional
            Free tags (weather, wind speed, season, maintenance notes…); values as text.
        replace : bool
            Store again over an existing record with the same sha256 (e.g. after a
            rescan with a newer version). Default: keep the stored one.

        Returns
        -------
        IngestOutcome
        """
        prepared = prepare(result, record_meta=record_meta, line=line, fit=fit)
        tag_rows = {str(k): str(v) for k, v in (tags or {}).items()}
        return self._write(lambda conn: _insert(conn, prepared, tag_rows, replace=replace))

    def ingest_many(
        self,
        results: Iterable[Mapping[str, Any]],
        *,
        line: Any = None,
        tags: Mapping[str, Any] | None = None,
        replace: bool = False,
    ) -> IngestSummary:
        """Store many scan results, each in its own transaction.

        Every result is validated and converted before the first is written, so a bad
        entry stores nothing. ``line`` and ``tags`` apply to all of them.
        """
        prepared = [prepare(r, record_meta=None, line=line, fit=None) for r in results]
        tag_rows = {str(k): str(v) for k, v in (tags or {}).items()}
        summary = IngestSummary()
        for item in prepared:
            summary.outcomes.append(
                self._write(lambda conn, p=item: _insert(conn, p, tag_rows, replace=replace))
            )
        return summary

    def add_fit(self, sha256_prefix: str, fit: Mapping[str, Any]) -> str:
        """Attach an arc-parameter fit to a stored record (replacing one of the same method).

        Parameters
        ----------
        sha256_prefix : str
            The record's sha256 or its first digits (at least 4).
        fit : mapping
            Fit result (``method``, parameters with ``…_stderr`` and ``…_status``,
            ``elongation_law``, ``elongation_params``, ``residual_rms``, ``success``,
            ``message``).

        Returns
        -------
        str
            Full sha256 of the record.
        """
        values = fit_row(fit, f"fit for record {sha256_prefix}")

        def run(conn: sa.Connection) -> str:
            rec_id, sha = _find_record(conn, sha256_prefix, self.url)
            conn.execute(
                sa.delete(S.arc_fits).where(
                    S.arc_fits.c.record_id == rec_id, S.arc_fits.c.method == values["method"]
                )
            )
            conn.execute(sa.insert(S.arc_fits).values(record_id=rec_id, **values))
            return sha

        return self._write(run)

    def tag(self, sha256_prefix: str, *, key: str, value: str | None) -> str:
        """Set (or with ``value=None`` remove) a free tag on a stored record.

        Returns the full sha256 of the tagged record.
        """
        if not key.strip():
            raise StoreError("tag: the key must not be empty")

        def run(conn: sa.Connection) -> str:
            rec_id, sha = _find_record(conn, sha256_prefix, self.url)
            conn.execute(sa.delete(S.tags).where(S.tags.c.record_id == rec_id, S.tags.c.key == key))
            if value is not None:
                conn.execute(sa.insert(S.tags).values(record_id=rec_id, key=key, value=value))
            return sha

        return self._write(run)

    # -- reading
    def lines(self) -> list[dict[str, Any]]:
        """Every line with its number of stored events."""

        def run(conn: sa.Connection) -> list[dict[str, Any]]:
            n = (
                sa.select(S.events.c.line_id, sa.func.count().label("n_events"))
                .group_by(S.events.c.line_id)
                .subquery()
            )
            q = (
                sa.select(
                    S.lines.c.name,
                    S.lines.c.voltage_v,
                    S.lines.c.length_m,
                    S.lines.c.frequency_hz,
                    S.lines.c.compensation,
                    S.lines.c.dead_time_s,
                    sa.func.coalesce(n.c.n_events, 0).label("n_events"),
                )
                .select_from(S.lines.outerjoin(n, n.c.line_id == S.lines.c.id))
                .order_by(S.lines.c.name)
            )
            return [dict(r._mapping) for r in conn.execute(q)]

        return self._read(run)

    def line(self, name: str) -> dict[str, Any] | None:
        """One line's stored description (``None`` if unknown)."""

        def run(conn: sa.Connection) -> dict[str, Any] | None:
            row = conn.execute(sa.select(S.lines).where(S.lines.c.name == name)).first()
            return None if row is None else dict(row._mapping)

        return self._read(run)

    def events(self, flt: EventFilter | None = None) -> pd.DataFrame:
        """Stored event chains with their record facts, oldest first.

        Columns: ``sha256``, ``path``, ``station``, ``device``, ``start``, ``start_ns``,
        ``line``, ``voltage_v``, every scan field of :mod:`recordscan.fleet.schema` and
        ``line_dead_time_s`` (the line's current setting, if known).
        """
        import pandas as pd

        flt = flt or EventFilter()
        e, r = S.events, S.records
        cols = [c for c in e.c if c.name not in ("id", "record_id", "line_id", "result_json")]
        q = (
            sa.select(
                r.c.sha256,
                r.c.path,
                r.c.station,
                r.c.device,
                r.c.start,
                r.c.start_ns,
                *cols,
                S.lines.c.dead_time_s.label("line_dead_time_s"),
            )
            .select_from(e.join(r, r.c.id == e.c.record_id).outerjoin(S.lines))
            .order_by(r.c.start_ns, r.c.sha256)
        )
        q = _apply_filter(q, flt)
        rows = self._read(lambda c: [dict(x._mapping) for x in c.execute(q)])
        names = ["sha256", "path", "station", "device", "start", "start_ns"]
        names += [c.name for c in cols] + ["line_dead_time_s"]
        frame = pd.DataFrame(rows, columns=names)
        float_cols = [*S.EVENT_FLOAT_FIELDS, "voltage_v", "line_dead_time_s"]
        frame[float_cols] = frame[float_cols].astype(float)
        frame["extinction_censored"] = frame["extinction_censored"].astype(bool)
        return frame

    def fits(self, flt: EventFilter | None = None) -> pd.DataFrame:
        """Stored arc fits joined with their event's line and record facts."""
        import pandas as pd

        flt = flt or EventFilter()
        f, e, r = S.arc_fits, S.events, S.records
        cols = [c for c in f.c if c.name not in ("id", "record_id", "fit_json")]
        q = (
            sa.select(r.c.sha256, r.c.start_ns, e.c.line, e.c.voltage_v, *cols)
            .select_from(f.join(r, r.c.id == f.c.record_id).join(e, e.c.record_id == r.c.id))
            .order_by(r.c.start_ns, r.c.sha256, f.c.method)
        )
        q = _apply_filter(q, flt)
        rows = self._read(lambda c: [dict(x._mapping) for x in c.execute(q)])
        names = ["sha256", "start_ns", "line", "voltage_v", *(c.name for c in cols)]
        return pd.DataFrame(rows, columns=names)

    def show(self, sha256_prefix: str) -> dict[str, Any]:
        """Everything stored about one record: facts, scan result, restrikes, fits, tags."""

        def run(conn: sa.Connection) -> dict[str, Any]:
            rec_id, _ = _find_record(conn, sha256_prefix, self.url)
            rec = dict(
                conn.execute(sa.select(S.records).where(S.records.c.id == rec_id)).one()._mapping
            )
            meta = rec.pop("meta_json")
            rec["meta"] = None if meta is None else json.loads(meta)
            ev = conn.execute(
                sa.select(S.events.c.result_json).where(S.events.c.record_id == rec_id)
            ).scalar()
            rs = conn.execute(
                sa.select(S.restrikes.c.seq, S.restrikes.c.t_s, S.restrikes.c.voltage_v)
                .where(S.restrikes.c.record_id == rec_id)
                .order_by(S.restrikes.c.seq)
            )
            fits = conn.execute(
                sa.select(S.arc_fits.c.fit_json)
                .where(S.arc_fits.c.record_id == rec_id)
                .order_by(S.arc_fits.c.method)
            )
            tg = conn.execute(
                sa.select(S.tags.c.key, S.tags.c.value)
                .where(S.tags.c.record_id == rec_id)
                .order_by(S.tags.c.key)
            )
            return {
                "record": rec,
                "result": None if ev is None else json.loads(ev),
                "restrikes": [dict(x._mapping) for x in rs],
                "fits": [json.loads(x[0]) for x in fits],
                "tags": {k: v for k, v in tg},
            }

        return self._read(run)

    def counts(self) -> dict[str, int]:
        """Row count of every table (for summaries and tests)."""

        def run(conn: sa.Connection) -> dict[str, int]:
            return {
                t.name: int(conn.execute(sa.select(sa.func.count()).select_from(t)).scalar() or 0)
                for t in S.V1_TABLES
            }

        return self._read(run)


def _short(exc: BaseException) -> str:
    orig = getattr(exc, "orig", None)
    return str(orig if orig is not None else exc).strip().splitlines()[0]


def _apply_filter(q: sa.Select, flt: EventFilter) -> sa.Select:
    e, r = S.events, S.records
    if flt.line is not None:
        q = q.where(e.c.line == flt.line)
    if flt.voltage_v is not None:
        tol = 0.01 * abs(flt.voltage_v)
        q = q.where(e.c.voltage_v.between(flt.voltage_v - tol, flt.voltage_v + tol))
    if flt.since_ns is not None:
        q = q.where(r.c.start_ns >= flt.since_ns)
    if flt.until_ns is not None:
        q = q.where(r.c.start_ns < flt.until_ns)
    if flt.outcome is not None:
        q = q.where(e.c.outcome == flt.outcome)
    if flt.tag is not None:
        key, value = flt.tag
        q = q.where(
            sa.exists().where(
                S.tags.c.record_id == r.c.id, S.tags.c.key == key, S.tags.c.value == value
            )
        )
    return q


def _find_record(conn: sa.Connection, prefix: str, url: str) -> tuple[int, str]:
    p = prefix.strip().lower()
    if len(p) < 4 or not set(p) <= SHA_CHARS:
        raise StoreError(f"{p!r}: give at least 4 hexadecimal digits of the record's sha256")
    rows = conn.execute(
        sa.select(S.records.c.id, S.records.c.sha256)
        .where(S.records.c.sha256.like(p + "%"))
        .limit(2)
    ).all()
    if not rows:
        raise StoreError(f"{url}: no stored record has a sha256 starting with {p}")
    if len(rows) > 1:
        raise StoreError(f"{url}: several records match {p}; give more digits")
    return int(rows[0][0]), str(rows[0][1])


def _dialect_insert(conn: sa.Connection, table: sa.Table) -> Any:
    name = conn.dialect.name
    if name == "sqlite":
        from sqlalchemy.dialects.sqlite import insert
    elif name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    else:
        return None
    return insert(table)


def _ensure_line(conn: sa.Connection, fields: Mapping[str, Any], *, full: bool) -> int:
    """Id of the named line, inserting it if new; ``full`` updates the given fields."""
    name = fields["name"]
    ins = _dialect_insert(conn, S.lines)
    if ins is not None:
        conn.execute(ins.values(**fields).on_conflict_do_nothing(index_elements=["name"]))
    elif conn.execute(sa.select(S.lines.c.id).where(S.lines.c.name == name)).first() is None:
        conn.execute(sa.insert(S.lines).values(**fields))
    if full:
        conn.execute(sa.update(S.lines).where(S.lines.c.name == name).values(**fields))
    else:  # fill a missing voltage class from a scan result, never overwrite
        v = fields.get("voltage_v")
        if v is not None:
            conn.execute(
                sa.update(S.lines)
                .where(S.lines.c.name == name, S.lines.c.voltage_v.is_(None))
                .values(voltage_v=v)
            )
    return int(conn.execute(sa.select(S.lines.c.id).where(S.lines.c.name == name)).scalar_one())


def _delete_record(conn: sa.Connection, rec_id: int) -> None:
    for table in (S.tags, S.arc_fits, S.restrikes, S.events):
        conn.execute(sa.delete(table).where(table.c.record_id == rec_id))
    conn.execute(sa.delete(S.records).where(S.records.c.id == rec_id))


def _insert(
    conn: sa.Connection, p: Prepared, tag_rows: Mapping[str, str], *, replace: bool
) -> IngestOutcome:
    status: Literal["added", "duplicate", "replaced"] = "added"
    existing = conn.execute(
        sa.select(S.records.c.id).where(S.records.c.sha256 == p.sha256)
    ).scalar()
    if existing is not None:
        if not replace:
            return IngestOutcome(p.sha256, "duplicate", int(existing))
        _delete_record(conn, int(existing))
        status = "replaced"
    line_id = None
    if p.line is not None:
        line_id = _ensure_line(conn, p.line, full=len(p.line) > 2)
    values = {
        **p.record,
        "line_id": line_id,
        "ingested_at": datetime.now(timezone.utc).isoformat(timespec="seconds"),
    }
    ins = _dialect_insert(conn, S.records)
    if ins is not None:
        stmt = ins.values(**values).on_conflict_do_nothing(index_elements=["sha256"])
        rec_id = conn.execute(stmt.returning(S.records.c.id)).scalar()
        if rec_id is None:  # another process stored it between our check and insert
            other = conn.execute(sa.select(S.records.c.id).where(S.records.c.sha256 == p.sha256))
            return IngestOutcome(p.sha256, "duplicate", int(other.scalar_one()))
    else:
        rec_id = conn.execute(sa.insert(S.records).values(**values)).inserted_primary_key[0]
    rec_id = int(rec_id)
    if p.event is not None:
        conn.execute(sa.insert(S.events).values(record_id=rec_id, line_id=line_id, **p.event))
    if p.restrikes:
        conn.execute(sa.insert(S.restrikes), [{"record_id": rec_id, **r} for r in p.restrikes])
    if p.fit is not None:
        conn.execute(sa.insert(S.arc_fits).values(record_id=rec_id, **p.fit))
    if tag_rows:
        conn.execute(
            sa.insert(S.tags),
            [{"record_id": rec_id, "key": k, "value": v} for k, v in tag_rows.items()],
        )
    return IngestOutcome(p.sha256, status, rec_id)


# ---------------------------------------------------------------------------- migrations
def _current_version(conn: sa.Connection) -> int:
    if not sa.inspect(conn).has_table(S.schema_version.name):
        return 0
    v = conn.execute(sa.select(sa.func.max(S.schema_version.c.version))).scalar()
    return int(v or 0)


def migrate(engine: sa.Engine, *, target: int | None = None) -> int:
    """Apply the missing migration steps up to ``target`` (default: the latest).

    All steps run in one transaction, locked against other processes
    (``BEGIN IMMEDIATE`` on SQLite, an advisory lock on PostgreSQL).

    Returns
    -------
    int
        The schema version afterwards.
    """
    target = S.SCHEMA_VERSION if target is None else target
    if not 0 <= target <= S.SCHEMA_VERSION:
        raise StoreError(f"no schema version {target}; this recordscan knows 1…{S.SCHEMA_VERSION}")
    url = engine.url.render_as_string(hide_password=True)

    def run(conn: sa.Connection) -> int:
        if conn.dialect.name == "postgresql":
            conn.execute(sa.text("SELECT pg_advisory_xact_lock(:k)"), {"k": _PG_LOCK_KEY})
        S.schema_version.create(conn, checkfirst=True)
        current = _current_version(conn)
        if current > S.SCHEMA_VERSION:
            raise StoreError(
                f"{url}: database schema version {current} is newer than this recordscan "
                f"({S.SCHEMA_VERSION}); upgrade recordscan"
            )
        for step in S.MIGRATIONS:
            if current < step.version <= target:
                step.apply(conn)
                conn.execute(
                    sa.insert(S.schema_version).values(
                        version=step.version,
                        description=step.description,
                        applied_at=datetime.now(timezone.utc).isoformat(timespec="seconds"),
                    )
                )
                current = step.version
        return current

    store = Store(engine)
    return store._write(run)


def open_store(url_or_path: str | None = None, *, migrate_to: int | None = None) -> Store:
    """Open (creating and migrating as needed) the arc-parameter database.

    Parameters
    ----------
    url_or_path : str, optional
        An SQLAlchemy URL (``postgresql+psycopg://user@host/db``, ``sqlite:///file``) or a
        file path for an SQLite database. Default: :func:`default_location`.
    migrate_to : int, optional
        Stop at this schema version (tests of the migrations); default the latest.

    Returns
    -------
    Store
    """
    url = _to_url(url_or_path or default_location())
    shown = url.render_as_string(hide_password=True)
    kwargs: dict[str, Any] = {}
    if not _is_sqlite(url):
        kwargs["pool_pre_ping"] = True
    try:
        engine = sa.create_engine(url, **kwargs)
    except (sa.exc.ArgumentError, sa.exc.NoSuchModuleError, ImportError) as exc:
        raise StoreError(f"{shown}: cannot open this database ({_short(exc)})") from None
    if _is_sqlite(url):
        file_based = url.database not in (None, "", ":memory:")
        _sqlite_hooks(engine, file_based=file_based)
    try:
        migrate(engine, target=migrate_to)
    except StoreError:
        engine.dispose()
        raise
    except sa.exc.SQLAlchemyError as exc:
        engine.dispose()
        raise StoreError(f"{shown}: cannot open this database ({_short(exc)})") from None
    return Store(engine)
