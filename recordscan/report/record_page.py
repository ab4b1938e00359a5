"""Self-contained HTML pages for scanned records and an index page for a batch.

Pages only read a scan result (docs/scan-schema.md) and already-rendered figures; they never
recompute. Each page carries the engineering caution and the versions and provenance.
"""

from __future__ import annotations

import base64
import html
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

CAUTION_HTML = (
    "<strong>Caution.</strong> These results support, never replace, the judgement of a "
    "qualified protection engineer. A wrong dead time can cost a line or damage equipment. "
    "Defer to local codes, utility standards and licensed practice, and check every figure "
    "against the record and the system data before acting on it."
)

STYLE = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:1.5em auto;max-width:1100px;
color:#1a1a1a;line-height:1.4;padding:0 1em}
h1{font-size:1.4em;margin-bottom:.2em}h2{font-size:1.1em;margin-top:1.6em;border-bottom:1px solid #ccc}
table{border-collapse:collapse;font-size:.9em;margin:.5em 0}
td,th{border:1px solid #d0d0d0;padding:.25em .6em;text-align:left;vertical-align:top}
th{background:#f0f0f0}td.num{text-align:right;font-variant-numeric:tabular-nums}
.caution{background:#fff4e5;border-left:4px solid #d97a00;padding:.6em 1em;margin:1em 0}
.muted{color:#666;font-size:.85em}.bad{color:#a50026;font-weight:600}.good{color:#1b7837;font-weight:600}
img{max-width:100%;border:1px solid #ddd}
"""


def _esc(x: Any) -> str:
    return html.escape("" if x is None else str(x))


def fmt_s(t: Any) -> str:
    """Format a time in seconds as ``1.2345 s`` (or an em dash when missing)."""
    if t is None:
        return "—"
    return f"{float(t):.4f} s"


def fmt_num(x: Any, unit: str, scale: float = 1.0, digits: int = 1) -> str:
    """Format a number in a display unit (or an em dash when missing)."""
    if x is None:
        return "—"
    return f"{float(x) * scale:,.{digits}f} {unit}"


def _page(title: str, body: str) -> str:
    return (
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        f"<title>{_esc(title)}</title><style>{STYLE}</style></head><body>{body}</body></html>"
    )


def _timeline_rows(result: Mapping[str, Any]) -> list[tuple[str, Any, str]]:
    rows = [
        ("Fault inception", result.get("fault_inception_s"), "superimposed quantities"),
        ("Trip command", result.get("trip_s"), "digital channel"),
        ("Pole open (local)", result.get("pole_open_s"), result.get("pole_open_source") or ""),
        ("Pole open (far end)", result.get("remote_pole_open_s"), "inferred or paired record"),
        ("Secondary arc start", result.get("secondary_arc_start_s"), "last pole open"),
    ]
    volts = result.get("restrike_voltage_v") or []
    for k, t in enumerate(result.get("restrike_s") or []):
        v = volts[k] if k < len(volts) else None
        rows.append((f"Restrike {k + 1}", t, fmt_num(v, "kV", 1e-3) + " at restrike"))
    ext_note = "final extinction"
    if result.get("extinction_censored"):
        ext_note = (
            "arc still burning at the end of the observation "
            f"({fmt_s(result.get('observed_until_s'))}): extinction time censored"
        )
    rows += [
        ("Final extinction", result.get("extinction_s"), ext_note),
        ("Reclose", result.get("reclose_s"), "reclose command or pole closing"),
        ("Three-pole trip", result.get("three_pole_trip_s"), "after reclose onto fault"),
    ]
    return rows


def render_record_page(
    result: Mapping[str, Any],
    *,
    figures: Mapping[str, bytes] | None = None,
    index_href: str | None = None,
) -> str:
    """Return a self-contained HTML page for one scanned record.

    Parameters
    ----------
    result : Mapping
        Scan result (docs/scan-schema.md).
    figures : Mapping of str to bytes, optional
        Caption → PNG bytes, embedded as data URIs.
    index_href : str, optional
        Link back to the batch index.

    Returns
    -------
    str
        The HTML text.
    """
    name = str(result.get("file", "record"))
    parts = [f"<h1>Record {_esc(name)}</h1>"]
    if index_href:
        parts.append(f"<p><a href='{_esc(index_href)}'>← all records</a></p>")
    parts.append(f"<div class='caution'>{CAUTION_HTML}</div>")
    if result.get("status") != "ok":
        parts.append(f"<p class='bad'>Not analysed: {_esc(result.get('error'))}</p>")
        return _page(name, "".join(parts))
    outcome = result.get("outcome")
    cls = "good" if outcome == "success" else ("bad" if outcome == "reclose_onto_fault" else "")
    parts.append(
        "<table>"
        f"<tr><th>Station</th><td>{_esc(result.get('station'))}</td>"
        f"<th>Device</th><td>{_esc(result.get('device'))}</td></tr>"
        f"<tr><th>Start</th><td>{_esc(result.get('start'))}</td>"
        f"<th>Line</th><td>{_esc(result.get('line') or 'not given')}</td></tr>"
        f"<tr><th>Event</th><td>{_esc(result.get('event'))} {_esc(result.get('event_detail'))}</td>"
        f"<th>Faulted phase</th><td>{_esc(result.get('faulted_phase') or '—')}</td></tr>"
        f"<tr><th>Outcome</th><td class='{cls}'>{_esc(outcome or '—')}</td>"
        f"<th>Confidence</th><td>{float(result.get('confidence') or 0):.2f}</td></tr>"
        "</table>"
    )
    parts.append("<h2>Timeline</h2><table><tr><th>Instant</th><th>Time</th><th>Note</th></tr>")
    for label, t, note in _timeline_rows(result):
        parts.append(
            f"<tr><td>{_esc(label)}</td><td class='num'>{fmt_s(t)}</td><td>{_esc(note)}</td></tr>"
        )
    parts.append("</table>")
    parts.append("<h2>Triage indicators</h2>" + _triage_table(result))
    for caption, png in (figures or {}).items():
        b64 = base64.b64encode(png).decode("ascii")
        parts.append(
            f"<h2>{_esc(caption)}</h2><img alt='{_esc(caption)}' src='data:image/png;base64,{b64}'>"
        )
    parts.append(
        "<h2>Evidence behind each instant</h2>" + _evidence_table(result.get("events") or [])
    )
    warnings = result.get("warnings") or []
    if warnings:
        parts.append(
            "<h2>Warnings</h2><ul>" + "".join(f"<li>{_esc(w)}</li>" for w in warnings) + "</ul>"
        )
    parts.append("<h2>Provenance</h2>" + _provenance(result))
    return _page(name, "".join(parts))


def _triage_table(result: Mapping[str, Any]) -> str:
    rows = [
        (
            "Primary fault current (RMS)",
            fmt_num(result.get("primary_fault_current_rms_a"), "kA", 1e-3, 2),
            "",
        ),
        (
            "Secondary arc current (RMS)",
            fmt_num(result.get("secondary_arc_current_rms_a"), "A"),
            result.get("secondary_arc_current_source") or "",
        ),
        (
            "Current ratio primary/secondary",
            "—" if result.get("current_ratio") is None else f"{result['current_ratio']:.0f}",
            "rule of thumb (common practice): about 50 or more favours a successful reclose",
        ),
        (
            "Recovery voltage (RMS)",
            fmt_num(result.get("recovery_voltage_rms_v"), "kV", 1e-3, 2),
            "",
        ),
        (
            "Recovery voltage (peak)",
            fmt_num(result.get("recovery_voltage_peak_v"), "kV", 1e-3, 2),
            "",
        ),
        (
            "Recovery voltage beat",
            fmt_num(result.get("recovery_voltage_beat_hz"), "Hz", 1.0, 2),
            "compensated lines",
        ),
        (
            "Recovery voltage measured / estimated",
            "—"
            if result.get("recovery_voltage_ratio") is None
            else f"{result['recovery_voltage_ratio']:.2f}",
            "estimate from the line description",
        ),
        ("Secondary arc duration", fmt_s(result.get("secondary_arc_duration_s")), ""),
        ("Dead time", fmt_s(result.get("dead_time_s")), "reclose − pole open"),
        (
            "Extinction margin",
            fmt_s(result.get("extinction_margin_s")),
            "reclose − final extinction",
        ),
        (
            "Fault location",
            fmt_num(result.get("fault_location_m"), "km", 1e-3)
            + (
                ""
                if result.get("fault_location_pct") is None
                else f" ({result['fault_location_pct']:.0f} %)"
            ),
            ""
            if result.get("fault_location_error_m") is None
            else f"± {result['fault_location_error_m'] / 1e3:.1f} km",
        ),
    ]
    for rule, t in (result.get("deionisation_rules") or {}).items():
        rows.append(
            (f"Minimum deionisation time, {rule}", fmt_s(t), "rule of thumb (common practice)")
        )
    body = "".join(
        f"<tr><td>{_esc(a)}</td><td class='num'>{_esc(b)}</td><td>{_esc(c)}</td></tr>"
        for a, b, c in rows
    )
    return f"<table><tr><th>Indicator</th><th>Value</th><th>Note</th></tr>{body}</table>"


def _evidence_table(events: Sequence[Mapping[str, Any]]) -> str:
    if not events:
        return "<p class='muted'>No instants detected.</p>"
    rows = []
    for ev in events:
        evid = ev.get("evidence") or {}
        rows.append(
            f"<tr><td>{_esc(ev.get('kind'))}</td><td class='num'>{fmt_s(ev.get('t_s'))}</td>"
            f"<td class='num'>± {float(ev.get('uncertainty_s') or 0) * 1e3:.1f} ms</td>"
            f"<td>{_esc(ev.get('method'))}</td><td class='num'>{float(ev.get('confidence') or 0):.2f}</td>"
            f"<td>{_esc(evid.get('summary'))}</td></tr>"
        )
    return (
        "<table><tr><th>Instant</th><th>Time</th><th>Uncertainty</th><th>Method</th>"
        "<th>Confidence</th><th>Evidence</th></tr>" + "".join(rows) + "</table>"
    )


def _provenance(result: Mapping[str, Any]) -> str:
    versions = result.get("versions") or {}
    items = [
        ("File", result.get("file")),
        ("SHA-256", result.get("sha256")),
        ("Sample rate", fmt_num(result.get("sample_rate_hz"), "Hz", 1.0, 0)),
        ("Nominal frequency", fmt_num(result.get("frequency_hz"), "Hz", 1.0, 0)),
        ("Versions", ", ".join(f"{k} {v}" for k, v in versions.items())),
    ]
    return (
        "<table>"
        + "".join(f"<tr><th>{_esc(a)}</th><td>{_esc(b)}</td></tr>" for a, b in items)
        + "</table>"
    )


def render_index(results: Iterable[Mapping[str, Any]], *, pages: Mapping[str, str]) -> str:
    """Return the batch index page: one row per record, linking to its page.

    Parameters
    ----------
    results : iterable of Mapping
        Scan results.
    pages : Mapping of str to str
        ``file`` → relative link of its page.
    """
    rows = []
    n = 0
    for r in results:
        n += 1
        link = pages.get(str(r.get("file")))
        name = _esc(r.get("file"))
        cell = f"<a href='{_esc(link)}'>{name}</a>" if link else name
        if r.get("status") != "ok":
            rows.append(
                f"<tr><td>{cell}</td><td colspan='6' class='bad'>error: {_esc(r.get('error'))}</td></tr>"
            )
            continue
        rows.append(
            f"<tr><td>{cell}</td><td>{_esc(r.get('event'))}</td><td>{_esc(r.get('faulted_phase') or '—')}</td>"
            f"<td class='num'>{fmt_s(r.get('extinction_s'))}</td><td class='num'>{len(r.get('restrike_s') or [])}</td>"
            f"<td>{_esc(r.get('outcome') or '—')}</td><td class='num'>{fmt_s(r.get('extinction_margin_s'))}</td></tr>"
        )
    body = (
        f"<h1>Scanned records ({n})</h1><div class='caution'>{CAUTION_HTML}</div>"
        "<table><tr><th>Record</th><th>Event</th><th>Phase</th><th>Extinction</th>"
        "<th>Restrikes</th><th>Outcome</th><th>Extinction margin</th></tr>"
        + "".join(rows)
        + "</table>"
    )
    return _page("recordscan — scanned records", body)
