"""``recordscan export``: a time window of a record as CSV, Parquet or COMTRADE.

CSV and Parquet hold primary SI values (V, A) with one column per channel and a ``t_s``
column (seconds from the first exported sample). Roles are assigned (a recorder profile
may be given) and shown in the column names; an open-sense pole status that was inverted to
the closed sense says so. COMTRADE export writes the channels as recorded (nothing
inverted), so that the clipped file is faithful to its source.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click

from recordscan.cli.common import atomic_write_text, echo_json
from recordscan.core.files import temporary_for
from recordscan.errors import RecordScanError

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

    from recordscan.core.record import Record

TARGETS = ("csv", "parquet", "comtrade")
DATA_FORMATS = ("ASCII", "BINARY", "BINARY32", "FLOAT32")
_ON_LIMIT_S = 1e-9


class ExportError(RecordScanError, ValueError):
    """The export cannot be made as asked (empty window, options that do not fit)."""


def clip(
    record: Record,
    *,
    start_s: float | None = None,
    end_s: float | None = None,
    from_trigger: bool = False,
) -> Record:
    """Cut the samples with ``start_s <= t < end_s`` out of a record.

    Parameters
    ----------
    record : Record
        The record.
    start_s, end_s : float, optional
        Window limits in seconds from the first sample (or from the trigger when
        ``from_trigger``); open ends when None.
    from_trigger : bool
        Count the limits from the trigger instant.

    Returns
    -------
    Record
        The window, its time axis starting at 0 and ``start_ns`` moved with the cut.

    Raises
    ------
    ExportError
        The window is empty or inverted, or the record has no trigger time.
    """
    where = record.provenance.path or "record"
    offset = 0.0
    if from_trigger:
        if record.trigger_s is None:
            raise ExportError(f"{where}: the record has no trigger time; drop --from-trigger")
        offset = record.trigger_s
    if start_s is not None and end_s is not None and end_s <= start_s:
        raise ExportError(f"{where}: the window end {end_s} s is not after its start {start_s} s")
    # a sample within 1 ns (the finest COMTRADE time step) of a limit sits on it, so that
    # decimal limits such as 0.013 s cut where the engineer means despite binary rounding
    t0 = None if start_s is None else start_s + offset - _ON_LIMIT_S
    t1 = None if end_s is None else end_s + offset - _ON_LIMIT_S
    if start_s is None and end_s is None:
        return record
    try:
        return record.slice_time(t0, t1)
    except ValueError:
        last = record.duration_s
        lo = "start" if start_s is None else f"{start_s + offset:g}"
        hi = "end" if end_s is None else f"{end_s + offset:g}"
        raise ExportError(
            f"{where}: the window [{lo}, {hi}) s holds no samples (the record spans 0 to "
            f"{last:.6f} s from its first sample)"
        ) from None


def _columns(record: Record, inverted: tuple[str, ...]) -> dict[str, Any]:
    import numpy as np

    cols: dict[str, Any] = {"t_s": np.asarray(record.t_s)}
    for ch in (*record.analog, *record.digital):
        label = ch.name
        if ch.role:
            mark = ", inverted" if ch.name in inverted else ""
            label += f" [{ch.role}{mark}]"
        unit = getattr(ch, "unit", None)
        if unit is not None:
            label += f" ({unit})"
            values = np.asarray(ch.values)
        else:
            values = np.asarray(ch.values).astype(np.uint8)
        key = label
        k = 2
        while key in cols:
            key = f"{label} #{k}"
            k += 1
        cols[key] = values
    return cols


def _frame(record: Record, inverted: tuple[str, ...]) -> pd.DataFrame:
    import pandas as pd

    return pd.DataFrame(_columns(record, inverted))


def _metadata(record: Record) -> dict[str, Any]:
    from recordscan.cli.inspect import iso_ns

    chans = [
        {
            "name": ch.name,
            "kind": "analog" if hasattr(ch, "unit") else "digital",
            "unit": getattr(ch, "unit", None),
            "phase": ch.phase,
            "role": ch.role,
        }
        for ch in (*record.analog, *record.digital)
    ]
    return {
        "source": record.provenance.path,
        "source_sha256": record.provenance.sha256,
        "station": record.station,
        "device": record.device,
        "frequency_hz": record.frequency_hz,
        "start": iso_ns(record.start_ns),
        "start_ns": record.start_ns,
        "trigger": iso_ns(record.trigger_ns),
        "trigger_ns": record.trigger_ns,
        "processing": list(record.processing),
        "channels": chans,
    }


def write_csv(record: Record, path: Path, *, inverted: tuple[str, ...] = ()) -> Path:
    """Write the record as CSV (t_s then one column per channel), atomically."""
    text = _frame(record, inverted).to_csv(index=False, lineterminator="\n")
    atomic_write_text(path, text)
    return path


def write_parquet(record: Record, path: Path, *, inverted: tuple[str, ...] = ()) -> Path:
    """Write the record as Parquet with record metadata, atomically."""
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ModuleNotFoundError:
        raise ExportError(
            f"{path}: Parquet export needs the pyarrow package; install it or use --to csv"
        ) from None
    table = pa.Table.from_pandas(_frame(record, inverted), preserve_index=False)
    meta = dict(table.schema.metadata or {})
    meta[b"recordscan"] = json.dumps(_metadata(record), ensure_ascii=False).encode("utf-8")
    table = table.replace_schema_metadata(meta)
    with temporary_for(path) as tmp:
        pq.write_table(table, tmp)
    return path


def export_record(
    path: str | Path,
    out: str | Path,
    *,
    to: str,
    start_s: float | None = None,
    end_s: float | None = None,
    from_trigger: bool = False,
    data_format: str | None = None,
    cff: bool = False,
    encoding: str | None = None,
    profile: str | Path | None = None,
    bay: str | None = None,
) -> dict[str, Any]:
    """Read a record, cut a time window and write it out.

    Parameters
    ----------
    path : str or pathlib.Path
        The record (.cfg, .dat, stem or .cff).
    out : str or pathlib.Path
        Output file (for COMTRADE the .cfg, the stem or the .cff).
    to : {"csv", "parquet", "comtrade"}
        Output kind.
    start_s, end_s : float, optional
        Window in seconds from the first sample (or the trigger with ``from_trigger``).
    from_trigger : bool
        Count the window from the trigger instant.
    data_format : {"ASCII", "BINARY", "BINARY32", "FLOAT32"}, optional
        COMTRADE data format (BINARY when None).
    cff : bool
        Write a single COMTRADE 2013 .cff file.
    encoding : str, optional
        Text encoding of the source cfg.
    profile : str or pathlib.Path, optional
        Recorder profile for the roles shown in CSV/Parquet column names.
    bay : str, optional
        Line bay of the profile.

    Returns
    -------
    dict
        ``files`` written, ``n_samples``, ``duration_s`` and ``start`` of the window.
    """
    from recordscan.io import read

    kind = to.lower()
    if kind not in TARGETS:
        raise ExportError(f"{out}: unknown export kind {to!r} (use {', '.join(TARGETS)})")
    if kind != "comtrade" and (data_format is not None or cff):
        raise ExportError(f"{out}: --format and --cff apply to --to comtrade only")
    if kind == "comtrade" and (profile is not None or bay is not None):
        raise ExportError(
            f"{out}: COMTRADE export writes channels as recorded; --profile and --bay apply "
            "to csv and parquet"
        )
    fmt = (data_format or "BINARY").upper()
    if fmt not in DATA_FORMATS:
        raise ExportError(f"{out}: unknown COMTRADE data format {data_format!r}")
    out_path = Path(out)
    if kind == "comtrade":
        from recordscan.io import write

        rec = clip(
            read(path, encoding=encoding, assign_roles=False),
            start_s=start_s,
            end_s=end_s,
            from_trigger=from_trigger,
        )
        files = [Path(p) for p in write(rec, out_path, revision="2013", data_format=fmt, cff=cff)]
    else:
        from recordscan.io.profiles import assign_roles, role_report

        rec = read(path, encoding=encoding, assign_roles=False)
        rec = assign_roles(rec, profile=profile, bay=bay)
        inverted = role_report(rec).inverted
        rec = clip(rec, start_s=start_s, end_s=end_s, from_trigger=from_trigger)
        writer = write_csv if kind == "csv" else write_parquet
        files = [writer(rec, out_path, inverted=inverted)]
    from recordscan.cli.inspect import iso_ns

    return {
        "files": [str(f) for f in files],
        "n_samples": rec.n_samples,
        "duration_s": rec.duration_s,
        "start": iso_ns(rec.start_ns),
    }


@click.command("export")
@click.argument("record", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--to",
    "to",
    type=click.Choice(TARGETS, case_sensitive=False),
    required=True,
    help="Output kind.",
)
@click.option(
    "--out",
    type=click.Path(dir_okay=False, path_type=Path),
    required=True,
    help="Output file (for COMTRADE the .cfg or .cff name).",
)
@click.option("--start", "start_s", type=float, default=None, help="Window start, s.")
@click.option("--end", "end_s", type=float, default=None, help="Window end (excluded), s.")
@click.option(
    "--from-trigger",
    is_flag=True,
    help="Count --start/--end from the trigger instead of the first sample.",
)
@click.option(
    "--format",
    "data_format",
    type=click.Choice(DATA_FORMATS, case_sensitive=False),
    default=None,
    help="COMTRADE data format (default BINARY).",
)
@click.option("--cff", is_flag=True, help="Write one COMTRADE 2013 .cff file.")
@click.option("--encoding", default=None, help="Text encoding of the source cfg.")
@click.option(
    "--profile",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Recorder profile (TOML) for the roles in CSV/Parquet column names.",
)
@click.option("--bay", default=None, help="Line bay of the profile to use.")
@click.option("--json", "as_json", is_flag=True, help="Print what was written as JSON.")
def export(
    record: Path,
    to: str,
    out: Path,
    start_s: float | None,
    end_s: float | None,
    from_trigger: bool,
    data_format: str | None,
    cff: bool,
    encoding: str | None,
    profile: Path | None,
    bay: str | None,
    as_json: bool,
) -> None:
    """Export a time window of a record to CSV, Parquet or COMTRADE."""
    result = export_record(
        record,
        out,
        to=to,
        start_s=start_s,
        end_s=end_s,
        from_trigger=from_trigger,
        data_format=data_format,
        cff=cff,
        encoding=encoding,
        profile=profile,
        bay=bay,
    )
    if as_json:
        echo_json(result)
    else:
        for f in result["files"]:
            click.echo(f"wrote {f}")
        click.echo(f"{result['n_samples']} samples, {result['duration_s']:.6f} s")
