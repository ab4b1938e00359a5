"""``recordscan inspect``: what is in a COMTRADE record, and which channel plays which role.

Only numpy and the reader are imported on this path (no scipy, pandas or matplotlib), so
the command starts quickly even on a large record.
"""

from __future__ import annotations

from datetime import datetime, timedelta, timezone
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click

from recordscan.cli.common import CAUTION, echo_json

if TYPE_CHECKING:  # pragma: no cover
    from recordscan.core.record import Record
    from recordscan.io.profiles import Profile, RoleReport

_EPOCH = datetime(1970, 1, 1, tzinfo=timezone.utc)


def iso_ns(ns: int | None) -> str | None:
    """Format integer UTC nanoseconds as ISO 8601 with nine decimals and a ``Z``.

    Parameters
    ----------
    ns : int or None
        Nanoseconds since 1970-01-01T00:00:00Z (may be negative).

    Returns
    -------
    str or None
        ``"2026-03-14T09:26:53.589793238Z"``, or None when ``ns`` is None.
    """
    if ns is None:
        return None
    sec, frac = divmod(int(ns), 1_000_000_000)
    stamp = _EPOCH + timedelta(seconds=sec)
    return f"{stamp:%Y-%m-%dT%H:%M:%S}.{frac:09d}Z"


def _range(values: Any) -> tuple[float | None, float | None, int]:
    """Min, max (None when no finite sample) and the number of missing (NaN) samples."""
    import numpy as np

    if values.shape[0] == 0:
        return None, None, 0
    lo = float(values.min())
    hi = float(values.max())
    n_missing = 0
    if lo != lo or hi != hi:  # NaN present: take the finite samples only
        finite = values[np.isfinite(values)]
        n_missing = int(values.shape[0] - finite.shape[0])
        if finite.shape[0] == 0:
            return None, None, n_missing
        lo, hi = float(finite.min()), float(finite.max())
    return lo, hi, n_missing


def summarise(
    record: Record, report: RoleReport, *, line_file: Path | None = None
) -> dict[str, Any]:
    """Build the inspect summary of a record (plain JSON types, SI units).

    Parameters
    ----------
    record : Record
        The record, roles assigned.
    report : RoleReport
        Its role report (:func:`recordscan.io.profiles.role_report`).
    line_file : pathlib.Path, optional
        Line description file named by the recorder profile.

    Returns
    -------
    dict
        Keys ``file``, ``sha256``, ``station``, ``device``, ``revision``, ``format``,
        ``container``, ``encoding``, ``frequency_hz``, ``sample_rates``, ``n_samples``,
        ``duration_s``, ``start``, ``start_ns``, ``trigger``, ``trigger_ns``,
        ``trigger_s``, ``time_source``, ``segments``, ``analog``, ``digital``, ``roles``,
        ``role_problems``, ``notes``, ``line_file``, ``caution``.
    """
    import numpy as np

    t = record.t_s
    segments = [
        {
            "start_s": float(t[s.start_idx]),
            "end_s": float(t[s.stop_idx - 1]),
            "n_samples": s.n_samples,
            "rate_hz": s.rate_hz,
        }
        for s in record.segments
    ]
    analog = []
    for pos, ch in enumerate(record.analog):
        lo, hi, n_missing = _range(ch.values)
        analog.append(
            {
                "index": ch.source_index or pos + 1,
                "name": ch.name,
                "phase": ch.phase,
                "unit": ch.unit,
                "role": ch.role,
                "circuit": ch.circuit,
                "source_phase": ch.source_phase,
                "source_unit": ch.source_unit,
                "min": lo,
                "max": hi,
                "n_missing": n_missing,
            }
        )
    digital = []
    for pos, ch in enumerate(record.digital):
        v = ch.values
        changes = np.flatnonzero(v[1:] != v[:-1]) if v.shape[0] > 1 else np.empty(0, int)
        digital.append(
            {
                "index": ch.source_index or pos + 1,
                "name": ch.name,
                "phase": ch.phase,
                "role": ch.role,
                "circuit": ch.circuit,
                "source_phase": ch.source_phase,
                "normal_state": ch.normal_state,
                "inverted": ch.name in report.inverted,
                "initial": bool(v[0]) if v.shape[0] else None,
                "n_changes": int(changes.shape[0]),
                "first_change_s": float(t[changes[0] + 1]) if changes.shape[0] else None,
            }
        )
    prov = record.provenance
    return {
        "file": prov.path,
        "sha256": prov.sha256,
        "station": record.station,
        "device": record.device,
        "revision": prov.revision,
        "format": prov.data_format,
        "container": prov.container,
        "encoding": prov.encoding,
        "frequency_hz": record.frequency_hz,
        "sample_rates": [[float(r), int(n)] for r, n in record.sample_rates],
        "n_samples": record.n_samples,
        "duration_s": record.duration_s,
        "start": iso_ns(record.start_ns),
        "start_ns": record.start_ns,
        "trigger": iso_ns(record.trigger_ns),
        "trigger_ns": record.trigger_ns,
        "trigger_s": record.trigger_s,
        "time_source": prov.time_source,
        "segments": segments,
        "analog": analog,
        "digital": digital,
        "roles": dict(record.roles),
        "role_problems": {
            "ambiguous": {
                role: [i.name for i in issues] for role, issues in report.ambiguous.items()
            },
            "unassigned": [
                {"kind": i.kind, "index": i.index, "name": i.name, "reason": i.reason}
                for i in report.unassigned
            ],
            "message": report.message(),
        },
        "notes": list(prov.notes),
        "line_file": str(line_file) if line_file is not None else None,
        "caution": CAUTION,
    }


def _display(value: float | None, unit: str, peak: float) -> str:
    from recordscan.units import DISPLAY

    if value is None:
        return "-"
    if unit == "V":
        name, factor = DISPLAY["voltage"]
    elif unit == "A":
        name, factor = DISPLAY["current" if peak >= 1000.0 else "small_current"]
    else:
        return f"{value:.6g} {unit}"
    return f"{value * factor:.4g} {name}"


def _table(rows: list[list[str]]) -> list[str]:
    widths = [max(len(r[k]) for r in rows) for k in range(len(rows[0]))]
    return [
        "  " + "  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)).rstrip() for r in rows
    ]


def format_text(summary: dict[str, Any]) -> str:
    """Render the summary as readable text."""
    s = summary
    out = [f"Record:      {s['file'] or '(in memory)'}"]
    if s["sha256"]:
        out.append(f"sha256:      {s['sha256']}")
    out.append(f"Station:     {s['station'] or '-'}    device: {s['device'] or '-'}")
    out.append(
        f"COMTRADE:    revision {s['revision'] or '-'}, {s['format'] or '-'}, "
        f"{s['container']}, text encoding {s['encoding']}"
    )
    trig = s["trigger"] or "-"
    if s["trigger_s"] is not None:
        trig += f"  ({s['trigger_s']:+.6f} s from the first sample)"
    out.append(f"Start:       {s['start'] or '-'}")
    out.append(f"Trigger:     {trig}")
    out.append(f"Nominal:     {s['frequency_hz']:g} Hz")
    rates = ", ".join(f"{r:g} Hz to sample {n}" for r, n in s["sample_rates"]) or "none given"
    out.append(f"Rates:       {rates} (time axis from {s['time_source']})")
    out.append(f"Samples:     {s['n_samples']} over {s['duration_s']:.6f} s")
    segs = s["segments"]
    out.append(f"Segments:    {len(segs)}")
    for k, seg in enumerate(segs):
        gap = ""
        if k + 1 < len(segs):
            gap = f"; then a gap of {segs[k + 1]['start_s'] - seg['end_s']:.6f} s"
        out.append(
            f"  {k + 1}: {seg['start_s']:.6f} s to {seg['end_s']:.6f} s, {seg['n_samples']} "
            f"samples at {seg['rate_hz']:g} Hz{gap}"
        )
    for note in s["notes"]:
        out.append(f"Note:        {note}")
    if s["line_file"]:
        out.append(f"Line file:   {s['line_file']}")
    out.append("")
    out.append(f"Analog channels ({len(s['analog'])}):")
    if s["analog"]:
        rows = [["#", "name", "phase", "unit", "role", "min", "max", "missing"]]
        for ch in s["analog"]:
            peak = max(abs(ch["min"] or 0.0), abs(ch["max"] or 0.0))
            rows.append(
                [
                    str(ch["index"]),
                    ch["name"],
                    ch["phase"] or "-",
                    ch["unit"],
                    ch["role"] or "-",
                    _display(ch["min"], ch["unit"], peak),
                    _display(ch["max"], ch["unit"], peak),
                    str(ch["n_missing"]),
                ]
            )
        out += _table(rows)
    out.append(f"Digital channels ({len(s['digital'])}):")
    if s["digital"]:
        rows = [["#", "name", "phase", "role", "first", "changes", "first change"]]
        for ch in s["digital"]:
            role = (ch["role"] or "-") + (" (inverted)" if ch["inverted"] else "")
            first = ch["first_change_s"]
            rows.append(
                [
                    str(ch["index"]),
                    ch["name"],
                    ch["phase"] or "-",
                    role,
                    "-" if ch["initial"] is None else str(int(ch["initial"])),
                    str(ch["n_changes"]),
                    "-" if first is None else f"{first:.6f} s",
                ]
            )
        out += _table(rows)
    out.append("")
    msg = s["role_problems"]["message"]
    out.append(msg if msg else "Roles: every channel has a role.")
    out.append("")
    out.append(s["caution"])
    return "\n".join(out)


def inspect_record(
    path: str | Path,
    *,
    encoding: str | None = None,
    profile: str | Path | Profile | None = None,
    bay: str | None = None,
) -> dict[str, Any]:
    """Read a record, assign roles and return its summary (see :func:`summarise`).

    Parameters
    ----------
    path : str or pathlib.Path
        The record (.cfg, .dat, stem or .cff).
    encoding : str, optional
        Text encoding of the configuration (detected when None).
    profile : str, pathlib.Path or Profile, optional
        Recorder profile.
    bay : str, optional
        Line bay of the profile.
    """
    from recordscan.io import read
    from recordscan.io.profiles import Profile, assign_roles, load_profile, role_report

    prof = profile if isinstance(profile, Profile) or profile is None else load_profile(profile)
    line_file = prof.select(bay).line_file if prof is not None else None
    rec = read(path, encoding=encoding, assign_roles=False)
    rec = assign_roles(rec, profile=prof, bay=bay)
    return summarise(rec, role_report(rec, profile=prof, bay=bay), line_file=line_file)


@click.command("inspect")
@click.argument("record", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
@click.option("--encoding", default=None, help="Text encoding of the cfg (detected if omitted).")
@click.option(
    "--profile",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Recorder profile (TOML) saying which channel plays which role.",
)
@click.option("--bay", default=None, help="Line bay of the profile to use.")
def inspect(
    record: Path, as_json: bool, encoding: str | None, profile: Path | None, bay: str | None
) -> None:
    """Summarise a COMTRADE record: rates, time segments, channels, roles and ranges."""
    summary = inspect_record(record, encoding=encoding, profile=profile, bay=bay)
    if as_json:
        echo_json(summary)
    else:
        click.echo(format_text(summary))
