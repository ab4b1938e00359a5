"""Small filters: decaying-DC (mimic) removal, a zero-phase high-pass, moving average,
running extremes."""

from __future__ import annotations

import functools

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

__all__ = [
    "highpass",
    "mimic_filter",
    "moving_average",
    "running_max",
    "running_min",
]


def mimic_filter(x: np.ndarray, *, tau_s: float, fs_hz: float, f_hz: float) -> np.ndarray:
    """Remove a decaying DC offset with time constant ``tau_s`` (digital mimic filter).

    ``y[n] = K·((1 + τ)·x[n] − τ·x[n−1])`` with ``τ = tau_s·fs_hz`` in samples and ``K`` chosen
    for unity gain at ``f_hz`` (Benmouyal, "Removal of DC-offset in current waveforms using
    digital mimic filtering", IEEE Trans. Power Delivery 10(2), 1995 — from memory). An
    exponential ``exp(−t/tau_s)`` is cancelled to first order in the sample interval.

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


def _running(x: np.ndarray, n: int, fn: str) -> np.ndarray:
    x = np.asarray(x, dtype=np.float64)
    n = max(1, int(n))
    if x.size == 0 or n == 1:
        return x.copy()
    pad = np.concatenate((np.full(n - 1, x[0]), x))
    win = sliding_window_view(pad, n)
    return win.max(axis=1) if fn == "max" else win.min(axis=1)


def running_max(x: np.ndarray, n: int) -> np.ndarray:
    """Causal running maximum over the last ``n`` samples (including the current one)."""
    return _running(x, n, "max")


def running_min(x: np.ndarray, n: int) -> np.ndarray:
    """Causal running minimum over the last ``n`` samples (including the current one)."""
    return _running(x, n, "min")


def highpass(x: np.ndarray, *, fs_hz: float, cutoff_hz: float, order: int = 4) -> np.ndarray:
    """Zero-phase Butterworth high-pass (forward and backward; gain ``|H|²`` of one pass).

    Returns a copy of ``x`` when it is too short for the filter's edge padding.
    """
    from scipy.signal import sosfiltfilt

    x = np.asarray(x, dtype=np.float64)
    sos = _highpass_sos(int(order), float(cutoff_hz), float(fs_hz)).copy()  # scipy writes
    pad = 3 * (2 * sos.shape[0] + 1)
    if x.shape[0] <= pad:
        return x.copy()
    return sosfiltfilt(sos, x)


@functools.lru_cache(maxsize=64)
def _highpass_sos(order: int, cutoff_hz: float, fs_hz: float) -> np.ndarray:
    """Butterworth high-pass design as second-order sections, designed once per setting."""
    from scipy.signal import butter

    sos = butter(order, cutoff_hz, btype="highpass", fs=fs_hz, output="sos")
    sos.setflags(write=False)
    return sos
