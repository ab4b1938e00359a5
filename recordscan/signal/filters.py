"""Small filters: decaying-DC (mimic) removal, moving average, running extremes."""

from __future__ import annotations

import numpy as np
from scipy.ndimage import maximum_filter1d, minimum_filter1d

__all__ = ["mimic_filter", "moving_average", "running_max", "running_min"]


def mimic_filter(x: np.ndarray, *, tau_s: float, fs_hz: float, f_hz: float) -> np.ndarray:
    """Remove a decaying DC offset with time constant ``tau_s`` (digital mimic filter).

    ``y[n] = K·((1 + τ)·x[n] − τ·x[n−1])`` with ``τ = tau_s·fs_hz`` in samples and ``K``
    chosen for unity gain at ``f_hz`` (Benmouyal, "Removal of DC-offset in current waveforms
    using digital mimic filtering", IEEE Trans. Power Delivery 10(2), 1995). An exponential
    ``exp(−t/tau_s)`` is cancelled to first order in the sample interval.

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples.
    tau_s : float
        Time constant of the offset to cancel (the primary system X/R divided by ω).
    fs_hz, f_hz : float
        Sample rate and power frequency.

    Returns
    -------
    numpy.ndarray
        Filtered samples; the first equals the input scaled by the gain constant.
    """
    x = np.asarray(x, dtype=np.float64)
    tau = tau_s * fs_hz
    w = 2.0 * np.pi * f_hz / fs_hz
    k = 1.0 / abs((1.0 + tau) - tau * np.exp(-1j * w))
    prev = np.concatenate(([x[0]], x[:-1])) if x.size else x
    return k * ((1.0 + tau) * x - tau * prev)


def moving_average(x: np.ndarray, n: int) -> np.ndarray:
    """Causal moving average over ``n`` samples (shorter windows at the start)."""
    x = np.asarray(x, dtype=np.float64)
    if n < 1:
        raise ValueError("n must be at least 1")
    c = np.concatenate(([0.0], np.cumsum(x)))
    idx = np.arange(1, x.shape[0] + 1)
    lo = np.maximum(idx - n, 0)
    return (c[idx] - c[lo]) / (idx - lo)


def running_max(x: np.ndarray, n: int) -> np.ndarray:
    """Causal running maximum over the last ``n`` samples (including the current one)."""
    x = np.asarray(x, dtype=np.float64)
    n = max(1, int(n))
    return maximum_filter1d(x, size=n, origin=(n - 1) // 2, mode="nearest")


def running_min(x: np.ndarray, n: int) -> np.ndarray:
    """Causal running minimum over the last ``n`` samples (including the current one)."""
    x = np.asarray(x, dtype=np.float64)
    n = max(1, int(n))
    return minimum_filter1d(x, size=n, origin=(n - 1) // 2, mode="nearest")
