"""Figures of a relay verification: latency histogram and per-case timelines."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: verdict → colour (our own choice: red danger, orange missed, grey missing, green fine)
VERDICT_COLOURS = {
    "premature_permit": "#b2182b",
    "missed_permit": "#e08214",
    "no_response": "#888888",
    "correct_permit": "#1b7837",
    "correct_block": "#4393c3",
}


def plot_latency_histogram(
    report: Mapping[str, Any], *, ax: Axes | None = None, limit_cycles: float | None = None
) -> Figure:
    """Histogram of detection latencies (cycles) of the correctly permitted cases."""
    from recordscan.plot.event import _plt

    plt = _plt()
    if ax is None:
        fig, ax = plt.subplots(figsize=(7, 3.6))
    else:
        fig = ax.figure
    lat = np.array(
        [c["latency_cycles"] for c in report["cases"] if c["latency_cycles"] is not None]
    )
    if lat.size:
        ax.hist(lat, bins=min(30, max(5, lat.size // 2)), color="#4d4d4d", edgecolor="white")
    else:
        ax.text(0.5, 0.5, "no correctly permitted case", ha="center", transform=ax.transAxes)
    ax.axvline(1.0, color="#2166ac", ls=":", lw=1.2)
    ax.set_xlim(left=0.0)  # room left of the floor line for its label
    ax.text(
        1.0,
        0.95,
        "one-cycle floor \n(derived) ",
        transform=ax.get_xaxis_transform(),
        fontsize=7,
        color="#2166ac",
        va="top",
        ha="right",
    )
    if limit_cycles is not None:
        ax.axvline(limit_cycles, color="#b2182b", ls="--", lw=1.2)
        ax.text(
            limit_cycles,
            0.75,
            " acceptance limit",
            transform=ax.get_xaxis_transform(),
            fontsize=7,
            color="#b2182b",
            va="top",
        )
    ax.set_xlabel("detection latency after true final extinction [cycles]")
    ax.set_ylabel("cases")
    ax.grid(alpha=0.3)
    fig.tight_layout()
    return fig


def plot_case_timelines(cases: Sequence[Mapping[str, Any]], *, ax: Axes | None = None) -> Figure:
    """One bar per case: arc burning (orange), restrikes, extinction, permit intervals."""
    from recordscan.plot.event import _plt

    plt = _plt()
    n = len(cases)
    if ax is None:
        fig, ax = plt.subplots(figsize=(9, 0.32 * n + 1.4))
    else:
        fig = ax.figure
    for k, c in enumerate(cases):
        y = n - 1 - k
        ext = c.get("extinction_s")
        lp = c.get("latest_permit_s")
        end = ext if ext is not None else (lp or 1.0)
        inc = c.get("inception_s")
        start = min([*c.get("restrike_s", []), end, 0.0 if inc is None else inc])
        ax.barh(y, end - start, left=start, height=0.35, color="#fdb863", edgecolor="none")
        for r in c.get("restrike_s") or []:
            ax.plot([r, r], [y - 0.25, y + 0.25], color="#d6604d", lw=1.4)
        if ext is not None:
            ax.plot([ext, ext], [y - 0.3, y + 0.3], color="#01665e", lw=2)
        if lp is not None:
            ax.plot([lp], [y], marker="|", color="#000000", ms=10)
        for a, b in c.get("permit_intervals_s") or []:
            b = b if b is not None else a + 0.15
            ax.barh(
                y - 0.3,
                b - a,
                left=a,
                height=0.15,
                color=VERDICT_COLOURS.get(c["verdict"], "#000000"),
            )
    ax.set_yticks(range(n))
    ax.set_yticklabels(
        [f"{c['case']} ({c['verdict'].replace('_', ' ')})" for c in cases][::-1], fontsize=7
    )
    ax.set_xlabel(
        "playback time [s]  (orange: arc burning; green tick: final extinction; "
        "coloured strip: permit; black tick: latest permissible permit)",
        fontsize=7,
    )
    ax.grid(alpha=0.3, axis="x")
    fig.tight_layout()
    return fig
