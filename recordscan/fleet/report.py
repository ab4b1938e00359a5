"""The fleet report: one self-contained HTML page over the arc-parameter database.

Figures are embedded as base64 PNG (matplotlib, Agg back-end), so the page can be mailed or
archived as one file. The page carries the caution, the filters used, the database and the
software versions.
"""

from __future__ import annotations

import base64
import html
import io
import math
import platform
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timezone
from importlib import metadata
from typing import TYPE_CHECKING, Any

from recordscan.fleet.deadtime import DeadTimeEvidence, dead_time_evidence
from recordscan.fleet.store import EventFilter, Store
from recordscan.fleet.survival import PERCENTILES, extinction_sample
from recordscan.fleet.trend import extinction_trend

if TYPE_CHECKING:
    import pandas as pd

#: Group name of events stored without a line.
UNKNOWN_LINE = "(line not known)"

_CSS = """
body { font-family: system-ui, sans-serif; margin: 1.5em auto; max-width: 1100px;
       color: #1d1d1d; line-height: 1.4; padding: 0 1em; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; }
h2 { font-size: 1.15em; border-bottom: 1px solid #bbb; margin-top: 1.6em; }
.caution { border: 2px solid #a15c00; background: #fff4e0; padding: 0.6em 0.9em;
           font-weight: 600; }
.meta { color: #555; font-size: 0.9em; }
table { border-collapse: collapse; font-size: 0.85em; margin: 0.5em 0; }
th, td { border: 1px solid #ccc; padding: 0.2em 0.5em; text-align: right; }
th { background: #eee; }
td.l, th.l { text-align: left; }
img { max-width: 100%; }
.note { font-size: 0.85em; color: #444; }
.scroll { max-height: 30em; overflow-y: auto; }
"""


@dataclass(frozen=True)
class ReportOptions:
    """What the report covers.

    Attributes
    ----------
    probability : float
        Extinction probability for the dead-time evidence.
    confidence : float
        Confidence level of the bands and limits.
    title : str
        Page title.
    """

    probability: float = 0.95
    confidence: float = 0.95
    title: str = "Secondary-arc fleet report"


def _png(fig: Any) -> str:
    import matplotlib.pyplot as plt

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110)
    plt.close(fig)
    return base64.b64encode(buf.getvalue()).decode("ascii")


def _img(fig: Any, alt: str) -> str:
    return f'<img alt="{html.escape(alt)}" src="data:image/png;base64,{_png(fig)}">'


def _txt(value: Any, empty: str = "—") -> str:
    """Escaped text of a stored value; missing (None or NaN) shows as ``empty``."""
    if value is None or (isinstance(value, float) and value != value):
        return empty
    return html.escape(str(value))


def _ms(t: float | None) -> str:
    return "—" if t is None or not math.isfinite(t) else f"{t * 1e3:.0f}"


def _num(x: Any, fmt: str = "{:.1f}", scale: float = 1.0) -> str:
    if x is None:
        return "—"
    try:
        v = float(x)
    except (TypeError, ValueError):
        return html.escape(str(x))
    return "—" if not math.isfinite(v) else fmt.format(v * scale)


def _table(head: Sequence[str], rows: Sequence[Sequence[str]], *, left: int | set[int] = 1) -> str:
    lefts = set(range(left)) if isinstance(left, int) else left

    def cell(tag: str, i: int, text: str) -> str:
        return f'<{tag} class="l">{text}</{tag}>' if i in lefts else f"<{tag}>{text}</{tag}>"

    th = "".join(cell("th", i, html.escape(h)) for i, h in enumerate(head))
    body = "".join(
        "<tr>" + "".join(cell("td", i, c) for i, c in enumerate(row)) + "</tr>" for row in rows
    )
    return f"<table><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>"


def _limits(t: float | None, lo: float | None, hi: float | None) -> str:
    """A percentile with its limits in ms; "not reached" / "…" where the data stop short."""
    main = "not reached" if t is None else _ms(t)
    low = "…" if lo is None else _ms(lo)
    high = "…" if hi is None else _ms(hi)
    return f"{main} <small>({low}–{high})</small>"


def versions() -> dict[str, str]:
    """Versions of recordscan and the libraries behind the figures."""
    out = {"python": platform.python_version()}
    for name in ("recordscan", "numpy", "scipy", "pandas", "matplotlib", "SQLAlchemy"):
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def _line_rows(frame: pd.DataFrame, opts: ReportOptions) -> tuple[list[list[str]], list]:
    rows: list[list[str]] = []
    evidence: list[DeadTimeEvidence] = []
    for line, group in frame.groupby("line", sort=True):
        sample = extinction_sample(group, origin="pole_open")
        if sample.n == 0:
            continue
        km = sample.estimate(confidence=opts.confidence)
        cells = [html.escape(str(line)), str(km.n), str(km.n_censored)]
        for p in PERCENTILES:
            cells.append(_limits(*km.percentile(p)))
        rows.append(cells)
        evidence.append(
            dead_time_evidence(
                group,
                scope=str(line),
                probability=opts.probability,
                confidence=opts.confidence,
            )
        )
    return rows, evidence


def _evidence_rows(evidence: list[DeadTimeEvidence]) -> list[list[str]]:
    rows = []
    for ev in evidence:
        rules = ev.rules_s
        rows.append(
            [
                html.escape(ev.scope),
                _num(ev.voltage_v, "{:.0f}", 1e-3),
                _limits(ev.empirical_s, ev.empirical_low_s, ev.empirical_high_s),
                _ms(rules.get("10.5+kV/34.5 cycles")),
                _ms(rules.get("175+0.5kV ms")),
                _ms(ev.setting_s),
                "—"
                if ev.extinct_by_setting is None
                else f"{ev.extinct_by_setting:.2f} <small>({ev.extinct_by_setting_low:.2f}–"
                f"{ev.extinct_by_setting_high:.2f})</small>",
                f"{ev.n_events} ({ev.n_extinct} out)",
                html.escape("; ".join(ev.notes)) or "—",
            ]
        )
    return rows


def _events_rows(frame: pd.DataFrame) -> list[list[str]]:
    rows = []
    for r in frame.itertuples(index=False):
        dur = r.extinction_s - r.pole_open_s
        cens = bool(r.extinction_censored)
        dur_text = f"&gt; {_ms(r.observed_until_s - r.pole_open_s)}" if cens else _ms(dur)
        rows.append(
            [
                _txt(r.start, "")[:19].replace("T", " "),
                _txt(r.line),
                _txt(r.faulted_phase),
                dur_text,
                str(int(r.n_restrikes)),
                _num(r.secondary_arc_current_rms_a),
                _num(r.recovery_voltage_rms_v, "{:.1f}", 1e-3),
                _ms(r.dead_time_s),
                _txt(r.outcome),
                f"<code>{html.escape(str(r.sha256)[:12])}</code>",
            ]
        )
    return rows


def render_report(
    store: Store,
    *,
    caution: str,
    flt: EventFilter | None = None,
    filter_text: str = "all stored events",
    options: ReportOptions | None = None,
) -> str:
    """Build the fleet report as one HTML document.

    Parameters
    ----------
    store : Store
        Open database.
    caution : str
        The engineering caution, shown at the top and the bottom of the page.
    flt : EventFilter, optional
        Which events (default all).
    filter_text : str
        Plain description of the filter, shown on the page.
    options : ReportOptions, optional
        Probability, confidence, title.

    Returns
    -------
    str
        The HTML text (the caller writes it, atomically).
    """
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    from recordscan.fleet import figures

    opts = options or ReportOptions()
    frame = store.events(flt)
    frame["line"] = frame["line"].fillna(UNKNOWN_LINE)
    spt = frame[frame["event"] == "single_pole_trip"]
    fits = store.fits(flt)
    line_rows, evidence = _line_rows(spt, opts)

    def fig_of(draw: Any, size: tuple[float, float] = (8.5, 4.6)) -> Any:
        fig, ax = plt.subplots(figsize=size, layout="constrained")
        draw(ax)
        return fig

    parts: list[str] = []
    title = html.escape(opts.title)
    now = datetime.now(timezone.utc).isoformat(timespec="seconds")
    parts.append(f"<h1>{title}</h1>")
    parts.append(
        f'<p class="meta">Database {html.escape(store.url)} · {html.escape(filter_text)} · '
        f"{len(frame)} events, {len(spt)} single-pole trips · generated {now}</p>"
    )
    parts.append(f'<p class="caution">{html.escape(caution)}</p>')

    parts.append("<h2>Extinction time per line</h2>")
    parts.append(
        _img(
            fig_of(lambda ax: figures.survival_plot(spt, confidence=opts.confidence, ax=ax)),
            "extinction survival curves",
        )
    )
    head = ["line", "arcs", "censored"] + [f"{p:.0%} out by, ms" for p in PERCENTILES]
    parts.append(_table(head, line_rows))
    parts.append(
        f'<p class="note">Kaplan–Meier estimate from the local pole opening; in brackets the '
        f"{opts.confidence:.0%} limits; “not reached” and “…” where the data stop short of "
        "that level (the arcs outlived the observations). Arcs still "
        "burning at reclose or at the end of the record count as lower bounds (censored).</p>"
    )

    parts.append("<h2>Dead-time evidence</h2>")
    head = [
        "line",
        "kV",
        f"{opts.probability:.0%} out by, ms",
        "10.5+kV/34.5 cycles, ms",
        "175+0.5·kV ms",
        "setting, ms",
        "P(out by setting)",
        "events",
        "notes",
    ]
    parts.append(_table(head, _evidence_rows(evidence), left={0, 8}))
    parts.append(
        '<p class="note">The two rules of thumb are minimum de-ionisation times for three-pole '
        "reclosing (common practice); a single-pole dead time must also cover the secondary "
        "arc. The empirical figure is the time by which the stated fraction of arcs was seen "
        "to go out; the gap still needs time to recover after extinction. Evidence for a "
        "qualified engineer's decision, not a setting.</p>"
    )

    parts.append("<h2>Extinction time against secondary arc current</h2>")
    for driver in ("secondary_arc_current_rms_a", "recovery_voltage_rms_v"):
        data = extinction_trend(spt, driver=driver, level=opts.confidence)
        parts.append(_img(fig_of(lambda ax, d=data: figures.trend_plot(d, ax=ax)), driver))
        if data.trend is not None:
            tr = data.trend
            unit = "kV" if driver.endswith("_v") else "A"
            k = 1e6 if unit == "kV" else 1e3  # ms per kV or ms per A
            parts.append(
                f'<p class="note">Theil–Sen trend: {tr.slope * k:.2f} ms per {unit} '
                f"({tr.slope_low * k:.2f}–{tr.slope_high * k:.2f}), scatter "
                f"{tr.scale * 1e3:.0f} ms (robust), {tr.n} extinctions; arcs still burning "
                "are not in the fit, so long arcs are understated.</p>"
            )
    parts.append("<h2>Reclose outcomes over time</h2>")
    parts.append(_img(fig_of(lambda ax: figures.outcomes_plot(spt, ax=ax), (8.5, 3.6)), "outcomes"))
    parts.append("<h2>Arc-model parameters</h2>")
    parts.append(_img(figures.parameter_plots(fits), "parameter distributions"))
    parts.append(f'<p class="note">{len(fits)} stored fits.</p>')

    parts.append("<h2>Events</h2>")
    head = [
        "start (UTC)",
        "line",
        "phase",
        "to extinction, ms",
        "restrikes",
        "arc current, A",
        "recovery, kV",
        "dead time, ms",
        "outcome",
        "record",
    ]
    parts.append(f'<div class="scroll">{_table(head, _events_rows(spt), left={0, 1, 2, 8})}</div>')

    parts.append("<h2>Versions</h2>")
    ver = versions()
    parts.append(_table(["package", "version"], [[k, html.escape(v)] for k, v in ver.items()]))
    parts.append(f'<p class="caution">{html.escape(caution)}</p>')
    body = "\n".join(parts)
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        f"<title>{title}</title><style>{_CSS}</style></head><body>\n{body}\n</body></html>\n"
    )


__all__ = ["ReportOptions", "render_report", "versions"]
