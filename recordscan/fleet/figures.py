"""Figures of the fleet report (matplotlib, imported lazily; ``ax=None`` in, handle out).

Times are shown in ms, currents in A, voltages in kV (display units from
:mod:`recordscan.units`); everything passed in is SI.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from recordscan.fleet.survival import Origin, extinction_sample
from recordscan.fleet.trend import TrendData
from recordscan.units import DISPLAY

if TYPE_CHECKING:
    import pandas as pd
    from matplotlib.axes import Axes

_MS = DISPLAY["time"][1]
_KV = DISPLAY["voltage"][1]


def _axes(ax: Axes | None, size: tuple[float, float] = (7.5, 4.2)) -> Axes:
    if ax is not None:
        return ax
    import matplotlib.pyplot as plt

    _, ax = plt.subplots(figsize=size, layout="constrained")
    return ax


def survival_plot(
    frame: pd.DataFrame,
    *,
    origin: Origin = "pole_open",
    confidence: float = 0.95,
    ax: Axes | None = None,
) -> Axes:
    """Kaplan–Meier "arc still burning" curves per line, with bands and censoring marks.

    Parameters
    ----------
    frame : pandas.DataFrame
        Events from the store.
    origin : {"pole_open", "secondary_arc_start"}
        Where the clock starts.
    confidence : float
        Level of the shaded band.
    ax : matplotlib Axes, optional
        Draw here (a new figure otherwise).

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    drawn = 0
    frame = frame.assign(line=frame["line"].fillna("(line not known)"))
    for i, (line, group) in enumerate(frame.groupby("line", sort=True)):
        sample = extinction_sample(group, origin=origin)
        if sample.n == 0:
            continue
        km = sample.estimate(confidence=confidence)
        colour = f"C{i % 10}"
        t = np.r_[0.0, km.times_s, km.max_time_s] * _MS
        s = np.r_[1.0, km.survival, km.survival[-1] if km.survival.size else 1.0]
        lo = np.r_[1.0, km.lower, km.lower[-1] if km.lower.size else 1.0]
        hi = np.r_[1.0, km.upper, km.upper[-1] if km.upper.size else 1.0]
        label = f"{line} (n={km.n}, {km.n_censored} censored)"
        ax.step(t, s, where="post", color=colour, label=label)
        ax.fill_between(t, lo, hi, step="post", color=colour, alpha=0.15, linewidth=0)
        cens = sample.durations_s[~sample.observed]
        if cens.size:
            ax.plot(cens * _MS, km.survival_at(cens), "|", color=colour, markersize=10, mew=1.5)
        setting = group["line_dead_time_s"].dropna().unique()
        if setting.size == 1:
            ax.axvline(setting[0] * _MS, color=colour, linestyle=":", linewidth=1.2)
        drawn += 1
    start = "local pole opening" if origin == "pole_open" else "start of the secondary arc"
    ax.set_xlabel(f"time from {start} ({DISPLAY['time'][0]})")
    ax.set_ylabel("fraction of arcs still burning")
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlim(left=0.0)
    ax.grid(True, alpha=0.3)
    if drawn:
        ax.legend(fontsize="small", loc="upper right")
    else:
        ax.text(0.5, 0.5, "no timed single-pole trips", ha="center", transform=ax.transAxes)
    ax.set_title(
        f"Secondary-arc extinction (Kaplan–Meier, {confidence:.0%} band; "
        "| = still burning at reclose or record end; dotted = dead-time setting)",
        fontsize="small",
    )
    return ax


def trend_plot(data: TrendData, *, ax: Axes | None = None) -> Axes:
    """Extinction time against secondary-arc current (or recovery voltage) with the trend.

    Parameters
    ----------
    data : TrendData
        From :func:`recordscan.fleet.trend.extinction_trend`.
    ax : matplotlib Axes, optional
        Draw here.
    """
    ax = _axes(ax)
    is_voltage = data.driver.endswith("_v")
    scale = _KV if is_voltage else 1.0
    unit = DISPLAY["voltage"][0] if is_voltage else DISPLAY["small_current"][0]
    lines = sorted(set(data.line))
    for i, line in enumerate(lines):
        sel = np.array([ln == line for ln in data.line], dtype=bool)
        ax.plot(data.x[sel] * scale, data.y_s[sel] * _MS, "o", color=f"C{i % 10}", ms=5, label=line)
    if data.x_censored.size:
        ax.plot(
            data.x_censored * scale,
            data.y_censored_s * _MS,
            "^",
            mfc="none",
            color="0.3",
            ms=7,
            label="still burning (lower bound)",
        )
    if data.trend is not None:
        tr = data.trend
        xs = np.linspace(min(data.x.min(), 0.0), data.x.max(), 100)
        lo, hi = tr.band(xs)
        ax.plot(xs * scale, tr.predict(xs) * _MS, "k-", lw=1.2, label="robust trend")
        ax.fill_between(
            xs * scale,
            lo * _MS,
            hi * _MS,
            color="0.5",
            alpha=0.18,
            lw=0,
            label=f"{tr.level:.0%} prediction band",
        )
    name = "recovery voltage" if is_voltage else "secondary arc current"
    ax.set_xlabel(f"{name} ({unit} rms)")
    ax.set_ylabel(f"time to extinction ({DISPLAY['time'][0]})")
    ax.grid(True, alpha=0.3)
    ax.set_xlim(left=0.0)
    ax.set_ylim(bottom=0.0)
    if data.x.size or data.x_censored.size:
        ax.legend(fontsize="small", loc="upper left")
    else:
        ax.text(0.5, 0.5, f"no events with a {name}", ha="center", transform=ax.transAxes)
    return ax


_OUTCOMES = (
    ("success", "reclosed, held"),
    ("reclose_onto_fault", "reclosed onto the fault"),
    ("no_reclose", "no reclose"),
)


def outcomes_plot(frame: pd.DataFrame, *, ax: Axes | None = None) -> Axes:
    """Reclose outcomes per calendar quarter (stacked counts)."""
    import pandas as pd

    ax = _axes(ax, (7.5, 3.6))
    spt = frame[(frame["event"] == "single_pole_trip") & frame["start_ns"].notna()]
    if spt.empty:
        ax.text(0.5, 0.5, "no dated single-pole trips", ha="center", transform=ax.transAxes)
        return ax
    when = pd.to_datetime(spt["start_ns"].astype("int64"), unit="ns", utc=True)
    quarter = when.dt.tz_localize(None).dt.to_period("Q").astype(str)
    outcome = spt["outcome"].fillna("unknown")
    table = pd.crosstab(quarter, outcome).sort_index()
    bottom = np.zeros(len(table))
    x = np.arange(len(table))
    keys = [k for k, _ in _OUTCOMES if k in table] + [
        k for k in table.columns if k not in dict(_OUTCOMES)
    ]
    for i, key in enumerate(keys):
        vals = table[key].to_numpy(dtype=float)
        ax.bar(x, vals, bottom=bottom, color=f"C{i % 10}", label=dict(_OUTCOMES).get(key, key))
        bottom += vals
    ax.set_xticks(x, table.index, rotation=45, ha="right", fontsize="small")
    ax.set_ylabel("single-pole trips")
    ax.legend(fontsize="small")
    ax.grid(True, axis="y", alpha=0.3)
    return ax


_PARAMS = (
    ("u0_v_per_m", "arc voltage gradient u0", "V/m", 1.0),
    ("tau0_s", "time constant τ0", "ms", 1e3),
    ("r0_ohm_per_m", "resistance per length r0", "Ω/m", 1.0),
    ("alpha", "exponent α", "", 1.0),
    ("l0_m", "initial arc length l0", "m", 1.0),
)


def parameter_plots(fits: pd.DataFrame) -> Any:
    """Histograms of the fitted arc parameters (successful fits only); returns the figure."""
    import matplotlib.pyplot as plt

    ok = fits[fits["success"].fillna(False).astype(bool)] if not fits.empty else fits
    present = [p for p in _PARAMS if p[0] in ok and ok[p[0]].notna().any()]
    if not present:
        fig, ax = plt.subplots(figsize=(7.5, 1.6), layout="constrained")
        ax.axis("off")
        ax.text(0.5, 0.5, "no successful arc-parameter fits stored", ha="center")
        return fig
    ncols = min(3, len(present))
    nrows = -(-len(present) // ncols)
    fig, axes = plt.subplots(
        nrows, ncols, figsize=(9.0, 2.9 * nrows), layout="constrained", squeeze=False
    )
    flat = list(axes.ravel())
    for ax in flat[len(present) :]:
        ax.axis("off")
    for ax, (col, label, unit, scale) in zip(flat, present, strict=False):
        vals = ok[col].dropna().to_numpy(dtype=float) * scale
        ax.hist(vals, bins=min(20, max(5, vals.size // 3)), color="C0", alpha=0.8)
        ax.set_xlabel(f"{label} ({unit})" if unit else label)
        ax.set_ylabel("fits")
        med = f"{np.median(vals):.4g} {unit}".strip()
        ax.set_title(f"median {med}, n={vals.size}", fontsize="medium")
        ax.grid(True, alpha=0.3)
    return fig
