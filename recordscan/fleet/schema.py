"""Tables of the arc-parameter database and their step-by-step migrations.

The database holds one row per analysed record (``records``), the event chain the scan found
in it (``events``, every field of the scan JSON Lines schema version 1 plus the full JSON),
each restrike (``restrikes``), fitted arc parameters (``arc_fits``), free tags (``tags``) and
the lines they belong to (``lines``). Values are SI; absolute instants are integer UTC
nanoseconds (``…_ns``) next to the ISO text the scan wrote.

The version lives in ``schema_version`` (one row per applied step). :data:`MIGRATIONS` lists
the steps in order; :func:`recordscan.fleet.store.open_store` applies the missing ones inside
one locked transaction, so two processes opening a fresh database at once do not race.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import sqlalchemy as sa

metadata = sa.MetaData()

#: Arc-fit parameters stored with their ``_stderr`` and ``_status`` companions.
FIT_PARAMETERS: tuple[str, ...] = ("u0_v_per_m", "r0_ohm_per_m", "tau0_s", "alpha", "l0_m")

schema_version = sa.Table(
    "schema_version",
    metadata,
    sa.Column("version", sa.Integer, primary_key=True, autoincrement=False),
    sa.Column("description", sa.Text, nullable=False),
    sa.Column("applied_at", sa.Text, nullable=False),
)

lines = sa.Table(
    "lines",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("name", sa.Text, nullable=False, unique=True),
    sa.Column("voltage_v", sa.Float),
    sa.Column("length_m", sa.Float),
    sa.Column("frequency_hz", sa.Float),
    sa.Column("compensation", sa.Text),
    sa.Column("dead_time_s", sa.Float),
    sa.Column("reactors_json", sa.Text),
    sa.Column("description_json", sa.Text),
)

records = sa.Table(
    "records",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("sha256", sa.String(64), nullable=False, unique=True),
    sa.Column("path", sa.Text),
    sa.Column("station", sa.Text),
    sa.Column("device", sa.Text),
    sa.Column("start", sa.Text),
    sa.Column("start_ns", sa.BigInteger),
    sa.Column("frequency_hz", sa.Float),
    sa.Column("sample_rate_hz", sa.Float),
    sa.Column("status", sa.String(16), nullable=False),
    sa.Column("error", sa.Text),
    sa.Column("scan_schema", sa.Integer),
    sa.Column("recordscan_version", sa.Text),
    sa.Column("line_id", sa.Integer, sa.ForeignKey("lines.id")),
    sa.Column("meta_json", sa.Text),
    sa.Column("ingested_at", sa.Text, nullable=False),
)

# Scalar fields of the scan schema (docs/scan-schema.md, version 1) kept as columns.
EVENT_TEXT_FIELDS: tuple[str, ...] = (
    "event",
    "event_detail",
    "faulted_phase",
    "pole_open_source",
    "secondary_arc_current_source",
    "outcome",
)
EVENT_FLOAT_FIELDS: tuple[str, ...] = (
    "fault_inception_s",
    "trip_s",
    "pole_open_s",
    "remote_pole_open_s",
    "secondary_arc_start_s",
    "extinction_s",
    "observed_until_s",
    "secondary_arc_duration_s",
    "recovery_voltage_rms_v",
    "recovery_voltage_peak_v",
    "recovery_voltage_beat_hz",
    "recovery_voltage_ratio",
    "secondary_arc_current_rms_a",
    "primary_fault_current_rms_a",
    "current_ratio",
    "fault_location_m",
    "fault_location_pct",
    "fault_location_error_m",
    "reclose_s",
    "three_pole_trip_s",
    "dead_time_s",
    "extinction_margin_s",
    "confidence",
)

events = sa.Table(
    "events",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column(
        "record_id",
        sa.Integer,
        sa.ForeignKey("records.id", ondelete="CASCADE"),
        nullable=False,
        unique=True,
    ),
    sa.Column("line_id", sa.Integer, sa.ForeignKey("lines.id")),
    sa.Column("line", sa.Text),
    sa.Column("voltage_v", sa.Float),
    *(sa.Column(name, sa.Text) for name in EVENT_TEXT_FIELDS),
    *(sa.Column(name, sa.Float) for name in EVENT_FLOAT_FIELDS),
    sa.Column("extinction_censored", sa.Boolean),
    sa.Column("n_restrikes", sa.Integer, nullable=False),
    sa.Column("deionisation_rules_json", sa.Text),
    sa.Column("warnings_json", sa.Text),
    sa.Column("result_json", sa.Text, nullable=False),
)

restrikes = sa.Table(
    "restrikes",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column(
        "record_id",
        sa.Integer,
        sa.ForeignKey("records.id", ondelete="CASCADE"),
        nullable=False,
    ),
    sa.Column("seq", sa.Integer, nullable=False),
    sa.Column("t_s", sa.Float, nullable=False),
    sa.Column("voltage_v", sa.Float),
    sa.UniqueConstraint("record_id", "seq", name="uq_restrikes_record_seq"),
)


def _fit_columns() -> list[sa.Column]:
    cols: list[sa.Column] = []
    for name in FIT_PARAMETERS:
        cols += [
            sa.Column(name, sa.Float),
            sa.Column(f"{name}_stderr", sa.Float),
            sa.Column(f"{name}_status", sa.Text),
        ]
    return cols


arc_fits = sa.Table(
    "arc_fits",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column(
        "record_id",
        sa.Integer,
        sa.ForeignKey("records.id", ondelete="CASCADE"),
        nullable=False,
    ),
    sa.Column("method", sa.Text, nullable=False),
    *_fit_columns(),
    sa.Column("elongation_law", sa.Text),
    sa.Column("elongation_params_json", sa.Text),
    sa.Column("residual_rms", sa.Float),
    sa.Column("success", sa.Boolean),
    sa.Column("message", sa.Text),
    sa.Column("fit_json", sa.Text, nullable=False),
    sa.UniqueConstraint("record_id", "method", name="uq_arc_fits_record_method"),
)

tags = sa.Table(
    "tags",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column(
        "record_id",
        sa.Integer,
        sa.ForeignKey("records.id", ondelete="CASCADE"),
        nullable=False,
    ),
    sa.Column("key", sa.Text, nullable=False),
    sa.Column("value", sa.Text, nullable=False),
    sa.UniqueConstraint("record_id", "key", name="uq_tags_record_key"),
)

#: Tables created by the first migration, in dependency order.
V1_TABLES: tuple[sa.Table, ...] = (lines, records, events, restrikes, arc_fits, tags)

#: Indexes added by the second migration (name, table, columns).
V2_INDEXES: tuple[tuple[str, str, tuple[str, ...]], ...] = (
    ("ix_records_start_ns", "records", ("start_ns",)),
    ("ix_records_line_id", "records", ("line_id",)),
    ("ix_events_line", "events", ("line",)),
    ("ix_events_outcome", "events", ("outcome",)),
    ("ix_events_voltage_v", "events", ("voltage_v",)),
    ("ix_restrikes_record_id", "restrikes", ("record_id",)),
    ("ix_arc_fits_record_id", "arc_fits", ("record_id",)),
    ("ix_tags_key_value", "tags", ("key", "value")),
)


def _v1_tables(conn: sa.Connection) -> None:
    for table in V1_TABLES:
        table.create(conn, checkfirst=True)


def _v2_indexes(conn: sa.Connection) -> None:
    for name, table, columns in V2_INDEXES:
        conn.exec_driver_sql(f"CREATE INDEX IF NOT EXISTS {name} ON {table} ({', '.join(columns)})")


@dataclass(frozen=True)
class Migration:
    """One step of the schema.

    Attributes
    ----------
    version : int
        Schema version after the step.
    description : str
        What the step does, in plain words.
    apply : callable
        Function of an open connection (inside the migration transaction).
    """

    version: int
    description: str
    apply: Callable[[sa.Connection], None]


#: Every step in order; the last one's version is :data:`SCHEMA_VERSION`.
MIGRATIONS: tuple[Migration, ...] = (
    Migration(1, "lines, records, events, restrikes, arc_fits, tags", _v1_tables),
    Migration(2, "indexes for the line, outcome, voltage and date filters", _v2_indexes),
)

SCHEMA_VERSION: int = MIGRATIONS[-1].version
