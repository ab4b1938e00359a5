"""Figures of an arc-parameter fit: measured vs fitted voltage, current, conductance, length."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from recordscan.fit.result import ArcFitResult
from recordscan.units import DISPLAY

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.figure import Figure


def plot_fit(result: ArcFitResult) -> Figure:
    """Four panels: arc voltage (measured, fitted), arc current, conductance, arc length."""
    from recordscan.plot.event import _plt

    plt = _plt()
    c = result.curves
    t = np.asarray(c["t_s"])
    v_unit, v_fac = DISPLAY["voltage"]
    fig, ax = plt.subplots(
        4, 1, figsize=(10, 9), sharex=True, gridspec_kw={"height_ratios": [3, 2, 2, 1.5]}
    )
    ax[0].plot(t, np.asarray(c["u_measured_v"]) * v_fac, color="#4d4d4d", lw=0.8, label="measured")
    ax[0].plot(
        t,
        np.asarray(c["u_fitted_v"]) * v_fac,
        color="#b2182b",
        lw=0.8,
        ls="--",
        label=(
            "model driven by the measured current"
            if result.method == "direct"
            else "open-phase circuit with the fitted arc"
        ),
    )
    um = np.asarray(c["u_measured_v"]) * v_fac
    lim = 1.3 * float(np.nanpercentile(np.abs(um), 99.5))
    ax[0].set_ylim(-lim, lim)
    ax[0].set_ylabel(f"arc voltage [{v_unit}]")
    ax[0].legend(fontsize=7, loc="upper right")
    est = result.estimates
    title = (
        f"{result.method} fit, {result.period} arc: u0 = {est['u0_v_per_m'].value / 1e3:.3f} kV/m "
        f"({est['u0_v_per_m'].status}), r0 = {est['r0_ohm_per_m'].value * 1e3:.1f} mΩ/m "
        f"({est['r0_ohm_per_m'].status}), τ0 = {est['tau0_s'].value * 1e3:.3f} ms, "
        f"α = {est['alpha'].value:.2f} ({est['alpha'].status}), law: {result.elongation_law}"
    )
    ax[0].set_title(title, fontsize=8.5)
    ax[1].plot(t, c["i_a"], color="#2166ac", lw=0.8)
    ax[1].set_ylabel(
        "arc current [A]" if result.method == "direct" else "arc current, estimated [A]"
    )
    gm = np.asarray(c["g_measured_siemens"]) * 1e3
    ax[2].plot(t, gm, color="#4d4d4d", lw=0.6, label="measured i/u")
    ax[2].plot(
        t, np.asarray(c["g_fitted_siemens"]) * 1e3, color="#b2182b", lw=0.8, ls="--", label="fitted"
    )
    gl = float(np.nanpercentile(np.abs(gm[np.isfinite(gm)]), 99)) if np.isfinite(gm).any() else 1
    ax[2].set_ylim(-0.05 * gl, 1.3 * gl)
    ax[2].set_ylabel("conductance [mS]")
    ax[2].legend(fontsize=7, loc="upper right")
    ax[3].plot(t, c["l_m"], color="#1b7837")
    ax[3].set_ylabel("arc length [m]")
    ax[3].set_xlabel("time from first sample [s]")
    for a in ax:
        a.grid(alpha=0.3)
    fig.tight_layout()
    return fig
