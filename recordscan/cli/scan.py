"""``recordscan scan``: the event chain of every record given, one result per record."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

import click

from recordscan.cli.common import CAUTION, to_json_text


def _fmt(t: Any) -> str:
    return "—" if t is None else f"{t:.3f}s"


def summary_line(r: dict[str, Any]) -> str:
    """One human line per record."""
    name = Path(str(r.get("file"))).name
    if r.get("status") != "ok":
        return f"{name}: ERROR {r.get('error')}"
    parts = [f"{name}: {r.get('event')}"]
    if r.get("faulted_phase"):
        parts.append(f"phase {r['faulted_phase']}")
    if r.get("event") == "single_pole_trip":
        n_rs = len(r.get("restrike_s") or [])
        ext = r.get("extinction_s")
        parts.append("extinction " + (_fmt(ext) if ext is not None else "not seen (censored)"))
        parts.append(f"{n_rs} restrike{'s' if n_rs != 1 else ''}")
        parts.append(f"outcome {r.get('outcome') or '—'}")
        if r.get("extinction_margin_s") is not None:
            parts.append(f"margin {r['extinction_margin_s'] * 1e3:.0f} ms")
    return ", ".join(parts)


def timeline(r: dict[str, Any]) -> str:
    """A compact timeline for a single record."""
    from recordscan.plot.event import instants

    lines = [f"  {label:<16} {t:9.4f} s" for label, t, _c, _s in instants(r)]
    extra = []
    if r.get("secondary_arc_current_rms_a") is not None:
        extra.append(
            f"  secondary arc current {r['secondary_arc_current_rms_a']:.1f} A rms "
            f"({r.get('secondary_arc_current_source')})"
        )
    if r.get("recovery_voltage_rms_v") is not None:
        extra.append(f"  recovery voltage {r['recovery_voltage_rms_v'] / 1e3:.1f} kV rms")
    if r.get("dead_time_s") is not None:
        extra.append(f"  dead time {r['dead_time_s'] * 1e3:.0f} ms")
    if r.get("fault_location_m") is not None:
        extra.append(f"  fault location {r['fault_location_m'] / 1e3:.1f} km from this end")
    return "\n".join(lines + extra)


@click.command("scan")
@click.argument("paths", nargs=-1, type=click.Path(path_type=str))
@click.option("--json", "as_json", is_flag=True, help="Print JSON Lines (one object per record).")
@click.option(
    "--out", "out_path", type=click.Path(dir_okay=False), help="Also write JSON Lines here."
)
@click.option(
    "--line",
    "line_path",
    type=click.Path(dir_okay=False),
    help="Line description for every record.",
)
@click.option(
    "--profile", type=click.Path(dir_okay=False), help="Recorder profile (channel roles)."
)
@click.option("--encoding", help="Text encoding of the configuration files.")
@click.option(
    "--pair", nargs=2, type=click.Path(path_type=str), help="LOCAL REMOTE records of one event."
)
@click.option("--plot", "plot_dir", type=click.Path(file_okay=False), help="Write figures here.")
@click.option(
    "--report", "report_dir", type=click.Path(file_okay=False), help="Write HTML pages here."
)
@click.option(
    "--jobs",
    "n_jobs",
    default=1,
    show_default=True,
    type=click.IntRange(1, 64),
    help="Parallel worker processes.",
)
@click.option(
    "--db",
    "db_url",
    is_flag=False,
    flag_value="",
    default=None,
    help="Store results in the arc-parameter database (path or URL; bare --db = default).",
)
def scan(
    paths: tuple[str, ...],
    as_json: bool,
    out_path: str | None,
    line_path: str | None,
    profile: str | None,
    encoding: str | None,
    pair: tuple[str, str] | None,
    plot_dir: str | None,
    report_dir: str | None,
    n_jobs: int,
    db_url: str | None,
) -> None:
    """Find the single-pole trip event chain in records (files or folders)."""
    from recordscan.batch import (
        ScanJob,
        ScanOutputs,
        find_records,
        match_line,
        pair_records,
        run_jobs,
        write_index,
    )
    from recordscan.errors import RecordScanError

    if pair:
        if paths:
            raise click.UsageError("give either PATHS or --pair LOCAL REMOTE, not both")
        records, problems = find_records([pair[0], pair[1]])
        if problems:
            raise RecordScanError(problems[0])
        jobs = [
            ScanJob(pair[0], line_path or match_line(Path(pair[0])), pair[1], profile, encoding)
        ]
    else:
        if not paths:
            raise click.UsageError("give at least one record or folder")
        records, problems = find_records(paths)
        for p in problems:
            click.echo(f"recordscan: skipped {p}", err=True)
        jobs = [
            ScanJob(
                str(r),
                line_path or match_line(r),
                None if rem is None else str(rem),
                profile,
                encoding,
            )
            for r, rem in pair_records(records)
        ]
    if not jobs:
        raise RecordScanError("no COMTRADE records found in " + ", ".join(paths))

    store = None
    if db_url is not None:
        from recordscan.fleet.store import open_store

        store = open_store(db_url or None)

    outputs = ScanOutputs(plot_dir=plot_dir, report_dir=report_dir)
    results: list[dict[str, Any]] = []
    batch = len(jobs) > 1
    stream = sys.stdout
    fh = None
    if out_path:
        Path(out_path).parent.mkdir(parents=True, exist_ok=True)
        fh = open(out_path + ".part", "w", encoding="utf-8")
    try:
        with (
            click.progressbar(length=len(jobs), label="scanning", file=sys.stderr, show_pos=True)
            if batch
            else _NoBar() as bar
        ):
            for res in run_jobs(jobs, outputs=outputs, n_workers=n_jobs, progress=bar.update):
                results.append(res)
                clean = {k: v for k, v in res.items() if not k.startswith("_")}
                if store is not None and res.get("status") == "ok":
                    line = _line_dict(res)
                    store.ingest(clean, record_meta=res.get("_meta"), line=line)
                if fh is not None:
                    fh.write(to_json_text(clean) + "\n")
                if as_json:
                    stream.write(to_json_text(clean) + "\n")
        if fh is not None:
            fh.close()
            Path(out_path + ".part").replace(out_path)  # type: ignore[operator]
            fh = None
    finally:
        if fh is not None:
            fh.close()
            Path(out_path + ".part").unlink(missing_ok=True)  # type: ignore[operator]

    if report_dir:
        write_index(report_dir, results)
    if not as_json:
        for res in results:
            click.echo(summary_line(res))
        if len(results) == 1 and results[0].get("status") == "ok":
            click.echo(timeline(results[0]))
        n_bad = sum(r.get("status") != "ok" for r in results)
        if batch:
            click.echo(
                f"{len(results)} records, {len(results) - n_bad} analysed, {n_bad} with errors"
            )
        if store is not None:
            click.echo(f"stored in {store.url_display}")
        click.echo(CAUTION)
    if results and all(r.get("status") != "ok" for r in results) and not batch:
        raise RecordScanError(results[0].get("error") or "record could not be analysed")


def _line_dict(res: dict[str, Any]) -> dict[str, Any] | None:
    meta = res.get("_meta") or {}
    lp = meta.get("line_path")
    if not lp:
        return None
    from recordscan.physics.line import load_line

    line = load_line(lp)
    return line.to_dict() if hasattr(line, "to_dict") else {"name": line.name}


class _NoBar:
    """Stand-in for a progress bar on single records."""

    def __enter__(self) -> _NoBar:
        return self

    def __exit__(self, *exc: object) -> None:
        return None

    def update(self, n: int) -> None:
        """Ignore progress."""
