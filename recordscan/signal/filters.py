"""Small filters: decaying-DC (mimic) removal, a zero-phase high-pass, moving average,
running extremes."""

from __future__ import annotations

import functools
from collections.abc import Callable

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
    if x.ndim == 1 and np.isfinite(x).all():
        # the same extremes by scipy's running-extreme filter (O(len) whatever n): the window
        # [k - n + 1, k] with x[0] repeated before the start ("nearest" edge)
        from scipy.ndimage import maximum_filter1d, minimum_filter1d

        filt = maximum_filter1d if fn == "max" else minimum_filter1d
        return filt(x, size=n, mode="nearest", origin=(n - 1) // 2)
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

    The same steps as ``scipy.signal.sosfiltfilt`` with its defaults (odd extension of
    3·ntaps samples at each end, initial states from ``sosfilt_zi`` scaled by the first
    sample of each pass), with the design and its initial states worked out once per
    setting. Returns a copy of ``x`` when it is too short for the filter's edge padding.
    """
    x = np.asarray(x, dtype=np.float64)
    sos, zi, edge = _highpass_design(int(order), float(cutoff_hz), float(fs_hz))
    sos = sos.copy()  # the cached design stays read-only; scipy wants a writable buffer
    pad = 3 * (2 * sos.shape[0] + 1)
    if x.shape[0] <= pad:
        return x.copy()
    if edge > 0:
        ext = np.concatenate((2 * x[0:1] - x[edge:0:-1], x, 2 * x[-1:] - x[-2 : -(edge + 2) : -1]))
    else:
        ext = x
    y = _sosfilt_pass(sos, ext, zi * ext[0:1])
    y = _sosfilt_pass(sos, y[::-1], zi * y[-1:])
    y = y[::-1]
    if edge > 0:
        y = y[edge:-edge]
    return y


def _sosfilt_pass(sos: np.ndarray, x: np.ndarray, zi: np.ndarray) -> np.ndarray:
    """``scipy.signal.sosfilt(sos, x, zi=zi)[0]`` of a 1-D float64 ``x``.

    Calls scipy's compiled second-order-section loop directly (what ``sosfilt`` runs after
    checking and reshaping its arguments; the same numbers) when it is available.
    """
    loop = _sosfilt_loop()
    if loop is None:  # pragma: no cover - another scipy layout
        from scipy.signal import sosfilt

        return sosfilt(sos, x, zi=zi)[0]
    y = np.array(x, dtype=np.float64, order="C").reshape(1, -1)
    z = np.ascontiguousarray(zi, dtype=np.float64).reshape(1, sos.shape[0], 2).copy()
    loop(sos, y, z)
    return y[0]


@functools.lru_cache(maxsize=1)
def _sosfilt_loop() -> Callable[..., None] | None:
    """scipy's compiled loop behind ``sosfilt`` (imported on first use), or None."""
    try:
        from scipy.signal import sosfilt
        from scipy.signal._sosfilt import _sosfilt

        sos = np.array([[0.5, 0.2, 0.1, 1.0, -0.3, 0.1]])
        x = np.array([[1.0, -2.0, 0.5, 3.0]])
        zi = np.array([[[0.1, -0.2]]])
        want = sosfilt(sos, x[0], zi=zi[:, 0, :])[0]
        _sosfilt(sos, x, zi)
    except Exception:  # pragma: no cover - another scipy layout: sosfilt itself is used
        return None
    return _sosfilt if np.array_equal(x[0], want) else None


@functools.lru_cache(maxsize=64)
def _highpass_design(
    order: int, cutoff_hz: float, fs_hz: float
) -> tuple[np.ndarray, np.ndarray, int]:
    """Butterworth high-pass sections, their ``sosfilt_zi`` states and the padding length."""
    from scipy.signal import butter, sosfilt_zi

    sos = butter(order, cutoff_hz, btype="highpass", fs=fs_hz, output="sos")
    n_sections = sos.shape[0]
    ntaps = 2 * n_sections + 1
    ntaps -= min(int((sos[:, 2] == 0).sum()), int((sos[:, 5] == 0).sum()))
    zi = sosfilt_zi(sos)
    sos.setflags(write=False)
    zi.setflags(write=False)
    return sos, zi, 3 * ntaps
