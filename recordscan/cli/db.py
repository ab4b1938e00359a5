"""``recordscan db``: the arc-parameter database — store, list, statistics, reports."""

from __future__ import annotations

import io
import json
from collections.abc import Callable
from datetime import timedelta
from pathlib import Path
from typing import Any

import click

from recordscan.cli.common import CAUTION, atomic_write_bytes, atomic_write_text, echo_json

_OUTCOMES = ("success", "reclose_onto_fault", "no_reclose")


def _open(ctx: click.Context) -> Any:
    from recordscan.fleet.store import open_store

    return open_store(ctx.obj.get("db"))


def _filter_options(f: Callable[..., Any]) -> Callable[..., Any]:
    opts = [
        click.option("--line", help="Only this line (exact name)."),
        click.option(
            "--kv",
            type=click.FloatRange(min=0.0, min_open=True),
            help="Only this voltage class, kV line-to-line.",
        ),
        click.option("--since", help="Records starting at or after this UTC date/instant."),
        click.option(
            "--until", help="Records starting before this UTC instant (a date: to its end)."
        ),
        click.option("--outcome", type=click.Choice(_OUTCOMES), help="Only this reclose outcome."),
        click.option("--tag", "tag_kv", metavar="KEY=VALUE", help="Only records with this tag."),
    ]
    for opt in reversed(opts):
        f = opt(f)
    return f


def _key_value(text: str, what: str) -> tuple[str, str]:
    key, sep, value = text.partition("=")
    if not sep or not key.strip():
        raise click.BadParameter(f"{text!r}: write KEY=VALUE", param_hint=what)
    return key.strip(), value.strip()


def _make_filter(
    line: str | None,
    kv: float | None,
    since: str | None,
    until: str | None,
    outcome: str | None,
    tag_kv: str | None,
) -> tuple[Any, str]:
    from recordscan.fleet.store import EventFilter, parse_instant_ns

    until_ns = None
    if until is not None:
        until_ns = parse_instant_ns(until, where="--until")
        if len(until.strip()) == 10:  # a date: include the whole day
            until_ns += int(timedelta(days=1).total_seconds() * 1e9)
    flt = EventFilter(
        line=line,
        voltage_v=None if kv is None else kv * 1e3,
        since_ns=None if since is None else parse_instant_ns(since, where="--since"),
        until_ns=until_ns,
        outcome=outcome,
        tag=None if tag_kv is None else _key_value(tag_kv, "--tag"),
    )
    words = []
    if line:
        words.append(f"line {line}")
    if kv is not None:
        words.append(f"{kv:g} kV")
    if since:
        words.append(f"from {since}")
    if until:
        words.append(f"until {until}")
    if outcome:
        words.append(f"outcome {outcome}")
    if tag_kv:
        words.append(f"tag {tag_kv}")
    return flt, ", ".join(words) or "all stored events"


def _txt(value: Any, empty: str = "—") -> str:
    """Text of a stored value; missing (None or NaN) shows as ``empty``."""
    if value is None or (isinstance(value, float) and value != value):
        return empty
    return str(value)


def _ms(t: Any) -> str:
    try:
        v = float(t)
    except (TypeError, ValueError):
        return "—"
    return "—" if v != v else f"{v * 1e3:.0f}"


@click.group("db")
@click.option(
    "--db",
    "db_url",
    metavar="PATH|URL",
    help="Database file or SQLAlchemy URL (default: $RECORDSCAN_DB, else "
    "~/.local/share/recordscan/arcs.sqlite).",
)
@click.pass_context
def db(ctx: click.Context, db_url: str | None) -> None:
    """The arc-parameter database: store, statistics, reports."""
    ctx.obj = {"db": db_url}


@db.command("import")
@click.argument("files", nargs=-1, required=True, type=click.Path(dir_okay=False))
@click.option("--line-file", type=click.Path(dir_okay=False), help="Line description for all.")
@click.option("--tag", "tags", multiple=True, metavar="KEY=VALUE", help="Tag every record.")
@click.option("--replace", is_flag=True, help="Store again over records already present.")
@click.option("--json", "as_json", is_flag=True, help="Print the counts as JSON.")
@click.pass_context
def import_(
    ctx: click.Context,
    files: tuple[str, ...],
    line_file: str | None,
    tags: tuple[str, ...],
    replace: bool,
    as_json: bool,
) -> None:
    """Store earlier scan output (JSON Lines files written by `recordscan scan --json`)."""
    from recordscan.errors import FormatError, MissingFileError

    results: list[dict[str, Any]] = []
    for name in files:
        path = Path(name)
        if not path.is_file():
            raise MissingFileError(f"{path}: no such file")
        for n, text in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
            if not text.strip():
                continue
            try:
                results.append(json.loads(text))
            except json.JSONDecodeError as exc:
                raise FormatError(f"{path}: line {n}: not JSON ({exc.msg})") from None
    line = None
    if line_file is not None:
        from recordscan.physics.line import load_line

        line = load_line(line_file)
    tag_map = dict(_key_value(t, "--tag") for t in tags)
    with _open(ctx) as store:
        summary = store.ingest_many(results, line=line, tags=tag_map, replace=replace)
        url = store.url
    if as_json:
        echo_json({**summary.to_dict(), "database": url})
        return
    s = summary.to_dict()
    click.echo(
        f"{len(results)} results: {s['added']} added, {s['duplicate']} already stored, "
        f"{s['replaced']} replaced — {url}"
    )


@db.command("lines")
@click.option("--json", "as_json", is_flag=True, help="Print JSON.")
@click.pass_context
def lines(ctx: click.Context, as_json: bool) -> None:
    """List the lines with their number of stored events."""
    with _open(ctx) as store:
        rows = store.lines()
    if as_json:
        echo_json(rows)
        return
    if not rows:
        click.echo("no lines stored")
        return
    click.echo(f"{'line':<32} {'kV':>6} {'km':>7} {'dead time ms':>12} {'events':>7}  compensation")
    for r in rows:
        kv = "—" if r["voltage_v"] is None else f"{r['voltage_v'] / 1e3:.0f}"
        km = "—" if r["length_m"] is None else f"{r['length_m'] / 1e3:.1f}"
        click.echo(
            f"{r['name']:<32} {kv:>6} {km:>7} {_ms(r['dead_time_s']):>12} {r['n_events']:>7}  "
            f"{_txt(r['compensation'])}"
        )


@db.command("events")
@_filter_options
@click.option("--limit", type=click.IntRange(1), help="At most this many (newest).")
@click.option("--json", "as_json", is_flag=True, help="Print JSON (one list).")
@click.pass_context
def events(ctx: click.Context, limit: int | None, as_json: bool, **filters: Any) -> None:
    """List stored event chains (oldest first)."""
    flt, _ = _make_filter(**filters)
    with _open(ctx) as store:
        frame = store.events(flt)
    if limit is not None:
        frame = frame.tail(limit)
    if as_json:
        echo_json(frame.astype(object).where(frame.notna(), None).to_dict(orient="records"))
        return
    if frame.empty:
        click.echo("no events match")
        return
    click.echo(
        f"{'start (UTC)':<19} {'line':<28} {'ph':<2} {'to ext. ms':>10} {'rs':>2} "
        f"{'Is A':>6} {'outcome':<18} record"
    )
    for r in frame.itertuples(index=False):
        if r.extinction_censored:
            ext = ">" + _ms(r.observed_until_s - r.pole_open_s)
        else:
            ext = _ms(r.extinction_s - r.pole_open_s)
        cur = (
            "—"
            if r.secondary_arc_current_rms_a != r.secondary_arc_current_rms_a
            else (f"{r.secondary_arc_current_rms_a:.1f}")
        )
        click.echo(
            f"{_txt(r.start, '')[:19]:<19} {_txt(r.line)[:28]:<28} "
            f"{_txt(r.faulted_phase):<2} {ext:>10} {r.n_restrikes:>2} {cur:>6} "
            f"{_txt(r.outcome, _txt(r.event)):<18} {r.sha256[:12]}"
        )
    click.echo(f"{len(frame)} events")


@db.command("show")
@click.argument("record")
@click.option("--json", "as_json", is_flag=True, help="Print JSON.")
@click.pass_context
def show(ctx: click.Context, record: str, as_json: bool) -> None:
    """Everything stored about one record (give the start of its sha256)."""
    with _open(ctx) as store:
        info = store.show(record)
    if as_json:
        echo_json(info)
        return
    rec, res = info["record"], info["result"] or {}
    click.echo(f"record   {rec['sha256']}")
    click.echo(f"file     {rec['path']}")
    click.echo(f"station  {rec['station']} / {rec['device']}   start {rec['start']}")
    if rec["status"] != "ok":
        click.echo(f"error    {rec['error']}")
        return
    click.echo(f"line     {res.get('line')}   event {res.get('event')} ({res.get('event_detail')})")
    for key in (
        "fault_inception_s",
        "pole_open_s",
        "secondary_arc_start_s",
        "extinction_s",
        "observed_until_s",
        "reclose_s",
    ):
        if res.get(key) is not None:
            click.echo(f"  {key[:-2]:<24} {res[key]:9.4f} s")
    for r in info["restrikes"]:
        v = "" if r["voltage_v"] is None else f"  at {r['voltage_v'] / 1e3:.1f} kV"
        click.echo(f"  restrike {r['seq'] + 1:<15} {r['t_s']:9.4f} s{v}")
    click.echo(f"outcome  {res.get('outcome')}   censored {res.get('extinction_censored')}")
    for fit in info["fits"]:
        ok = "converged" if fit.get("success") else "not converged"
        click.echo(
            f"fit      {fit.get('method')}: {ok}; u0 {fit.get('u0_v_per_m')} V/m, "
            f"tau0 {fit.get('tau0_s')} s"
        )
    for k, v in info["tags"].items():
        click.echo(f"tag      {k} = {v}")


@db.command("export")
@click.argument("out", type=click.Path(dir_okay=False))
@click.option("--csv", "fmt", flag_value="csv", help="Write CSV.")
@click.option("--parquet", "fmt", flag_value="parquet", help="Write Parquet.")
@_filter_options
@click.pass_context
def export(ctx: click.Context, out: str, fmt: str | None, **filters: Any) -> None:
    """Write the stored events (every scan field) to a CSV or Parquet file."""
    if fmt is None:
        raise click.UsageError("choose --csv or --parquet")
    flt, words = _make_filter(**filters)
    with _open(ctx) as store:
        frame = store.events(flt)
    if fmt == "csv":
        atomic_write_text(out, frame.to_csv(index=False))
    else:
        buf = io.BytesIO()
        frame.to_parquet(buf, index=False)
        atomic_write_bytes(out, buf.getvalue())
    click.echo(f"{len(frame)} events ({words}) written to {out}")


@db.command("tag")
@click.argument("record")
@click.argument("pairs", nargs=-1, metavar="KEY=VALUE...")
@click.option("--remove", multiple=True, metavar="KEY", help="Remove this tag.")
@click.pass_context
def tag(ctx: click.Context, record: str, pairs: tuple[str, ...], remove: tuple[str, ...]) -> None:
    """Set free tags on a record (weather, wind speed, season, maintenance notes…)."""
    if not pairs and not remove:
        raise click.UsageError("give KEY=VALUE pairs or --remove KEY")
    items = [_key_value(p, "KEY=VALUE") for p in pairs]
    with _open(ctx) as store:
        sha = ""
        for key, value in items:
            sha = store.tag(record, key=key, value=value)
        for key in remove:
            sha = store.tag(record, key=key, value=None)
    click.echo(f"{sha[:12]}: {len(items)} set, {len(remove)} removed")


@db.command("deadtime")
@_filter_options
@click.option(
    "--probability",
    type=click.FloatRange(0.5, 0.999),
    default=0.95,
    show_default=True,
    help="Fraction of arcs that must be out.",
)
@click.option(
    "--confidence",
    type=click.FloatRange(0.5, 0.999),
    default=0.95,
    show_default=True,
    help="Confidence level of the limits.",
)
@click.option(
    "--from",
    "origin",
    type=click.Choice(["pole-open", "arc-start"]),
    default="pole-open",
    show_default=True,
    help="Measure from the local pole opening or the start of the secondary arc.",
)
@click.option("--setting-ms", type=float, help="Current dead-time setting (default: the line's).")
@click.option("--json", "as_json", is_flag=True, help="Print JSON.")
@click.pass_context
def deadtime(
    ctx: click.Context,
    probability: float,
    confidence: float,
    origin: str,
    setting_ms: float | None,
    as_json: bool,
    **filters: Any,
) -> None:
    """Dead-time evidence for a line or group, beside the rules of thumb."""
    from recordscan.fleet.deadtime import dead_time_evidence

    if not filters.get("line") and filters.get("kv") is None:
        raise click.UsageError("choose the events: --line NAME or --kv VOLTAGE")
    flt, words = _make_filter(**filters)
    with _open(ctx) as store:
        frame = store.events(flt)
    ev = dead_time_evidence(
        frame,
        scope=words,
        probability=probability,
        confidence=confidence,
        setting_s=None if setting_ms is None else setting_ms / 1e3,
        origin="pole_open" if origin == "pole-open" else "secondary_arc_start",
    )
    if as_json:
        echo_json({**ev.to_dict(), "caution": CAUTION})
        return
    start = "local pole opening" if ev.origin == "pole_open" else "start of the secondary arc"
    click.echo(f"Dead-time evidence — {ev.scope}")
    click.echo(
        f"  {ev.n_events} single-pole trips: {ev.n_extinct} extinctions seen, "
        f"{ev.n_censored} still burning at reclose or record end"
        + (f", {ev.n_excluded} without timing" if ev.n_excluded else "")
    )
    pct, conf = f"{ev.probability:.0%}", f"{ev.confidence:.0%}"
    if ev.empirical_s is None:
        click.echo(f"  {pct} of arcs out: not reached within the observations")
    else:
        low = _ms(ev.empirical_low_s)
        if ev.empirical_high_s is None:
            limits = f"{conf} limits {low} ms to beyond the data"
        else:
            limits = f"{conf} limits {low}–{_ms(ev.empirical_high_s)} ms"
        click.echo(f"  {pct} of arcs out by {_ms(ev.empirical_s)} ms after the {start} ({limits})")
    if ev.setting_s is not None:
        p = ev.extinct_by_setting
        text = (
            "beyond the data"
            if p is None
            else (f"{p:.2f} ({ev.extinct_by_setting_low:.2f}–{ev.extinct_by_setting_high:.2f})")
        )
        click.echo(f"  current setting {_ms(ev.setting_s)} ms: probability the arc is out {text}")
    if ev.rules_s:
        click.echo(
            f"  rules of thumb at {ev.voltage_v / 1e3:.0f} kV (common practice; minimum "
            "de-ionisation for three-pole reclosing):"
        )
        for name, t in ev.rules_s.items():
            click.echo(f"    {name:<22} {_ms(t):>6} ms")
    for note in ev.notes:
        click.echo(f"  note: {note}")
    click.echo(
        "  Evidence for a qualified engineer's decision, not a setting: the gap also needs "
        "time to recover after the arc is out."
    )
    click.echo(CAUTION)


@db.command("report")
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(file_okay=False),
    help="Folder for the HTML page.",
)
@_filter_options
@click.option(
    "--probability",
    type=click.FloatRange(0.5, 0.999),
    default=0.95,
    show_default=True,
    help="Fraction of arcs out for the dead-time evidence.",
)
@click.pass_context
def report(ctx: click.Context, out_dir: str, probability: float, **filters: Any) -> None:
    """Write the fleet report (one self-contained HTML page)."""
    from recordscan.fleet.report import ReportOptions, render_report

    flt, words = _make_filter(**filters)
    with _open(ctx) as store:
        text = render_report(
            store,
            caution=CAUTION,
            flt=flt,
            filter_text=words,
            options=ReportOptions(probability=probability),
        )
    path = Path(out_dir) / "fleet-report.html"
    atomic_write_text(path, text)
    click.echo(f"fleet report written to {path}")
    click.echo(CAUTION)
