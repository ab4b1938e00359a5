"""Figures of one analysed record: the whole event and a zoom on the opened phase.

Every detected instant of the scan result is drawn as a vertical line and labelled. The
functions take the record and the scan result (the JSON-ready dict of
:meth:`recordscan.analysis.Analysis.to_json_dict`), so a figure can be redrawn from stored
results without recomputing anything.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from recordscan.core import roles
from recordscan.core.record import Record
from recordscan.units import DISPLAY

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: colours of our own: phase A, B, C (dark red, dark green, dark blue), neutral grey
PHASE_COLOURS = {"A": "#b2182b", "B": "#1b7837", "C": "#2166ac", "N": "#555555"}

#: instant key in the scan result → (label, colour, line style)
INSTANT_STYLE: dict[str, tuple[str, str, str]] = {
    "fault_inception_s": ("fault", "#000000", "-"),
    "trip_s": ("trip", "#7f3b08", ":"),
    "pole_open_s": ("pole open", "#542788", "--"),
    "remote_pole_open_s": ("far-end open", "#8073ac", "--"),
    "secondary_arc_start_s": ("secondary arc", "#e08214", "--"),
    "extinction_s": ("extinction", "#01665e", "-"),
    "reclose_s": ("reclose", "#c51b7d", "-"),
    "three_pole_trip_s": ("3-pole trip", "#40004b", ":"),
}


def _plt() -> Any:
    import matplotlib

    if matplotlib.get_backend().lower() not in ("agg", "module://matplotlib_inline.backend_inline"):
        matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def instants(result: Mapping[str, Any]) -> list[tuple[str, float, str, str]]:
    """Return ``(label, t_s, colour, style)`` for every instant present in a scan result."""
    out: list[tuple[str, float, str, str]] = []
    for key, (label, colour, style) in INSTANT_STYLE.items():
        value = result.get(key)
        if isinstance(value, (int, float)) and np.isfinite(value):
            out.append((label, float(value), colour, style))
    for k, t in enumerate(result.get("restrike_s") or []):
        out.append((f"restrike {k + 1}", float(t), "#d6604d", "-."))
    return sorted(out, key=lambda x: x[1])


def mark_instants(
    ax: Axes,
    result: Mapping[str, Any],
    *,
    t_lim: Sequence[float] | None = None,
    labels: bool = True,
) -> None:
    """Draw every detected instant on ``ax``; label them (staggered) when ``labels``."""
    lo, hi = ax.get_xlim() if t_lim is None else t_lim
    shown = [x for x in instants(result) if lo <= x[1] <= hi]
    for k, (label, t, colour, style) in enumerate(shown):
        ax.axvline(t, color=colour, linestyle=style, linewidth=1.1, alpha=0.9)
        if not labels:
            continue
        y = 0.98 - 0.11 * (k % 5)
        ax.text(
            t,
            y,
            f" {label}\n {t:.3f} s",
            transform=ax.get_xaxis_transform(),
            fontsize=7,
            color=colour,
            va="top",
            ha="left",
            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.7, "pad": 0.5},
        )


def _phase_channels(record: Record, table: Mapping[str, str]) -> list[tuple[str, np.ndarray]]:
    out = []
    for ph in roles.PHASES:
        ch = record.analog_by_role(table[ph])
        if ch is not None:
            out.append((ph, np.asarray(ch.values)))
    return out


def _plot_gapped(ax: Axes, record: Record, y: np.ndarray, **kw: Any) -> None:
    """Plot y(t) segment by segment so a recorder gap is not bridged by a line."""
    first = True
    for seg in record.segments:
        sl = slice(seg.start_idx, seg.stop_idx)
        ax.plot(record.t_s[sl], y[sl], **(kw if first else {**kw, "label": None}))
        first = False


def plot_event(record: Record, result: Mapping[str, Any], *, ax: Axes | None = None) -> Figure:
    """Whole-event figure: line voltages, currents and digital channels with instants.

    Parameters
    ----------
    record : Record
        The analysed record (roles assigned).
    result : Mapping
        Scan result (docs/scan-schema.md).
    ax : matplotlib Axes, optional
        If given, only the voltage panel is drawn into it.

    Returns
    -------
    matplotlib.figure.Figure
    """
    plt = _plt()
    v_unit, v_fac = DISPLAY["voltage"]
    i_unit, i_fac = DISPLAY["current"]
    if ax is not None:
        axes = [ax]
        fig = ax.figure
    else:
        fig, axes = plt.subplots(
            3, 1, figsize=(11, 7.5), sharex=True, gridspec_kw={"height_ratios": [3, 3, 1.4]}
        )
    volt = _phase_channels(record, roles.V_LINE)
    for ph, y in volt:
        _plot_gapped(axes[0], record, y * v_fac, color=PHASE_COLOURS[ph], lw=0.7, label=f"V{ph}")
    axes[0].set_ylabel(f"line voltage [{v_unit}]")
    axes[0].legend(loc="lower left", fontsize=7, ncol=3)
    title = f"{result.get('station') or record.station} — {result.get('event', '')}"
    if result.get("faulted_phase"):
        title += f", phase {result['faulted_phase']}"
    if result.get("outcome"):
        title += f", outcome: {str(result['outcome']).replace('_', ' ')}"
    axes[0].set_title(title, fontsize=10)
    if len(axes) > 1:
        for ph, y in _phase_channels(record, roles.I_LINE):
            _plot_gapped(
                axes[1], record, y * i_fac, color=PHASE_COLOURS[ph], lw=0.7, label=f"I{ph}"
            )
        axes[1].set_ylabel(f"line current [{i_unit}]")
        axes[1].legend(loc="lower left", fontsize=7, ncol=3)
        dig = [ch for ch in record.digital if ch.role]
        for k, ch in enumerate(dig[:10]):
            axes[2].step(
                record.t_s,
                np.asarray(ch.values, dtype=float) * 0.8 + k,
                where="post",
                lw=0.9,
                color=PHASE_COLOURS.get(ch.phase or "N", "#555555"),
            )
        axes[2].set_yticks(np.arange(len(dig[:10])) + 0.4)
        axes[2].set_yticklabels([ch.role or ch.name for ch in dig[:10]], fontsize=7)
        axes[2].set_xlabel("time from first sample [s]")
        if not dig:
            axes[2].text(
                0.5,
                0.5,
                "no digital channels with roles",
                ha="center",
                transform=axes[2].transAxes,
                fontsize=8,
            )
    for k, a in enumerate(axes):
        a.grid(alpha=0.3)
        mark_instants(a, result, t_lim=(float(record.t_s[0]), float(record.t_s[-1])), labels=k == 0)
    fig.tight_layout()
    return fig


def plot_open_phase(
    record: Record, result: Mapping[str, Any], *, ax: Axes | None = None, margin_s: float = 0.05
) -> Figure:
    """Zoom on the opened phase from pole opening to the end of the observation.

    The open-phase line voltage is drawn with its one-cycle RMS, and the healthy-phase RMS
    for scale; secondary arc, restrikes, extinction and reclose are marked.

    Parameters
    ----------
    record : Record
        The analysed record.
    result : Mapping
        Scan result; needs ``faulted_phase``.
    ax : matplotlib Axes, optional
        Axes to draw into; a new figure otherwise.
    margin_s : float
        Time shown before pole opening and after the observation end.

    Returns
    -------
    matplotlib.figure.Figure
    """
    plt = _plt()
    if ax is None:
        fig, ax = plt.subplots(figsize=(11, 4))
    else:
        fig = ax.figure
    ph = result.get("faulted_phase")
    v_unit, v_fac = DISPLAY["voltage"]
    ch = record.analog_by_role(roles.V_LINE[ph]) if ph in roles.V_LINE else None
    if ch is None:
        ax.text(
            0.5,
            0.5,
            "no line-side voltage of the opened phase in this record",
            ha="center",
            transform=ax.transAxes,
        )
        return fig
    y = np.asarray(ch.values)
    _plot_gapped(ax, record, y * v_fac, color=PHASE_COLOURS[ph], lw=0.6, label=f"V{ph} (open)")
    n_cyc = max(round(record.sample_rate_hz / record.frequency_hz), 1)
    rms = np.sqrt(np.convolve(np.nan_to_num(y) ** 2, np.ones(n_cyc) / n_cyc, mode="same"))
    _plot_gapped(ax, record, rms * v_fac, color="#000000", lw=1.0, label="one-cycle RMS")
    t0 = result.get("pole_open_s") or result.get("fault_inception_s") or float(record.t_s[0])
    t1 = result.get("observed_until_s") or result.get("reclose_s") or float(record.t_s[-1])
    t1 = max(t1, result.get("extinction_s") or t1)
    lo = max(float(record.t_s[0]), t0 - margin_s)
    hi = min(float(record.t_s[-1]), t1 + margin_s + 0.1)
    ax.set_xlim(lo, hi)
    # scale to the dead time (arc voltage and recovery voltage are a few per cent of the
    # phase voltage); the pre-fault and reclosed voltages run off the axis
    cycle = 1.0 / record.frequency_hz if record.frequency_hz > 0 else 0.02
    dead_end = result.get("reclose_s") or result.get("observed_until_s") or hi
    sel = (record.t_s >= t0 + cycle) & (record.t_s <= dead_end - 0.25 * cycle)
    if not np.any(sel):
        sel = (record.t_s >= lo) & (record.t_s <= hi)
    if np.any(sel):
        peak = float(np.nanmax(np.abs(y[sel]))) * v_fac
        ax.set_ylim(-1.3 * peak, 1.9 * peak)
    ax.set_ylabel(f"open-phase voltage [{v_unit}]")
    ax.set_xlabel("time from first sample [s]")
    ax.set_title(f"Opened phase {ph}: secondary arc and recovery voltage", fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(loc="lower left", fontsize=7)
    mark_instants(ax, result, t_lim=(lo, hi))
    fig.tight_layout()
    return fig


def figure_png(fig: Figure, *, dpi: int = 110) -> bytes:
    """Render a figure to PNG bytes and close it."""
    import io

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    _plt().close(fig)
    return buf.getvalue()
