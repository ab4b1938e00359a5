"""Phasors, RMS and frequency from uniformly sampled arrays.

All functions take bare numpy arrays sampled uniformly at ``fs_hz``. Sliding estimates are
computed with cumulative sums (one pass, no loop over samples) and are *causal*: the value at
sample ``n`` uses the window that ends at ``n``; samples before the first full window are NaN.

A window of one cycle of ``f_hz`` rarely holds an integer number of samples (10 kHz at 60 Hz
is 166.67 samples). The window then holds ``floor(L)`` samples at full weight and the oldest
sample at the fractional weight ``L − floor(L)`` (``L = fs_hz/f_hz``), which keeps the
rejection of DC and of the negative-frequency image to second order in ``1/L``.

Phasors are referenced to absolute time: the kernel is ``exp(−j·ω·t_k)`` with ``t_k`` the
sample instant, so a steady ``sqrt(2)·A·cos(ω·t + φ)`` gives ``A·exp(jφ)`` at every sample
(Phadke & Thorp, *Synchronized Phasor Measurements and Their Applications*, 2008, ch. 1–2:
the full-cycle DFT phasor estimator).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "dft_kernel",
    "estimate_frequency",
    "frequency_from_phasor",
    "full_cycle_phasor",
    "half_cycle_phasor",
    "real_parts_phasor",
    "samples_per_cycle",
    "sliding_rms",
    "sliding_window_sum",
    "tracked_phasor",
]


def samples_per_cycle(fs_hz: float, f_hz: float) -> float:
    """Return the (possibly fractional) number of samples in one cycle of ``f_hz``."""
    if fs_hz <= 0 or f_hz <= 0:
        raise ValueError("sample rate and frequency must be positive")
    return fs_hz / f_hz


def _window_parts(length: float) -> tuple[int, float, int]:
    """Whole samples, fractional weight of the oldest one, and the first full index."""
    if length < 1:
        raise ValueError("window length must be at least one sample")
    n_full = int(np.floor(length + 1e-9))
    frac = float(length - n_full)
    if frac < 1e-9:
        frac = 0.0
    return n_full, frac, (n_full if frac > 0 else n_full - 1)


def sliding_window_sum(z: np.ndarray, length: float) -> np.ndarray:
    """Causal sliding sum of ``z`` over a window of ``length`` samples (fractional allowed).

    Parameters
    ----------
    z : numpy.ndarray
        Real or complex samples (a 2-D array: each row on its own, along the last axis).
    length : float
        Window length in samples (≥ 1). The oldest sample carries the fractional weight.

    Returns
    -------
    numpy.ndarray
        Same shape and kind as ``z``; NaN until the first full window.
    """
    z = np.asarray(z)
    n = z.shape[-1]
    n_full, frac, first = _window_parts(length)
    dtype = np.complex128 if np.iscomplexobj(z) else np.float64
    if n <= first:
        return np.full(z.shape, np.nan, dtype=dtype)
    out = np.empty(z.shape, dtype=dtype)
    out[..., :first] = np.nan
    c = np.empty((*z.shape[:-1], n + 1), dtype=dtype)
    c[..., 0] = 0
    np.cumsum(z, axis=-1, out=c[..., 1:])
    # out[k] = c[k+1] − c[k+1−n_full] (+ frac·z[k−n_full]) for k ≥ first
    np.subtract(
        c[..., first + 1 :], c[..., first + 1 - n_full : n + 1 - n_full], out=out[..., first:]
    )
    if frac > 0:
        out[..., first:] += frac * z[..., first - n_full : n - n_full]
    return out


def dft_kernel(n: int, *, fs_hz: float, f_hz: float, t0_s: float = 0.0) -> np.ndarray:
    """The DFT kernel ``exp(−j·2π·f·t_k)`` at the sample instants ``t_k = t0 + k/fs``.

    Long kernels are built as ``exp(−j·ω·(t0 + q·B/fs))·exp(−j·ω·r/fs)`` for ``k = q·B + r``
    (``B ≈ √n``): two short complex exponentials and one product per sample instead of one
    complex exponential per sample (equal to the direct form to round-off).
    """
    if n < 1024:
        t = t0_s + np.arange(n) / fs_hz
        return np.exp(-1j * 2.0 * np.pi * f_hz * t)
    b = int(np.ceil(np.sqrt(n)))
    n_q = -(-n // b)
    w = -1j * 2.0 * np.pi * f_hz
    coarse = np.exp(w * (t0_s + np.arange(n_q) * (b / fs_hz)))
    fine = np.exp(w * (np.arange(b) / fs_hz))
    return np.multiply.outer(coarse, fine).reshape(-1)[:n]


def full_cycle_phasor(
    x: np.ndarray,
    *,
    fs_hz: float,
    f_hz: float,
    t0_s: float = 0.0,
    harmonic: int = 1,
    kernel: np.ndarray | None = None,
) -> np.ndarray:
    """Sliding full-cycle DFT phasor (RMS magnitude) of ``x`` at ``harmonic·f_hz``.

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples (a 2-D array: one channel per row, the same instants).
    fs_hz : float
        Sample rate.
    f_hz : float
        Fundamental frequency of the window (nominal, or tracked).
    t0_s : float
        Instant of the first sample (phase reference is absolute time).
    harmonic : int
        Harmonic order of the kernel (1 = fundamental).
    kernel : numpy.ndarray, optional
        ``dft_kernel(len(x), fs_hz=fs_hz, f_hz=harmonic·f_hz, t0_s=t0_s)`` when already
        computed (shared by the channels of one segment).

    Returns
    -------
    numpy.ndarray
        Complex RMS phasors, NaN before the first full cycle. For
        ``x = sqrt(2)·A·cos(2π·h·f·t + φ)`` the result is ``A·exp(jφ)``; DC and the integer
        harmonics other than ``h`` are rejected (exactly when ``fs_hz/f_hz`` is an integer).
    """
    x = np.asarray(x, dtype=np.float64)
    length = samples_per_cycle(fs_hz, f_hz)
    k = (
        kernel
        if kernel is not None
        else dft_kernel(x.shape[-1], fs_hz=fs_hz, f_hz=harmonic * f_hz, t0_s=t0_s)
    )
    if np.isfinite(x).all():
        return real_parts_phasor(x, k.real, k.imag, length)
    out = sliding_window_sum(x * k, length)
    out *= np.sqrt(2.0) / length
    return out


def real_parts_phasor(
    x: np.ndarray, kernel_re: np.ndarray, kernel_im: np.ndarray, length: float
) -> np.ndarray:
    """:func:`full_cycle_phasor` of finite real samples, given the kernel's parts.

    ``x·kernel`` of a real ``x`` has the parts ``x·Re k`` and ``x·Im k``: two real products
    written into the parts of one complex array (the numbers of the complex product, for a
    finite ``x``; no cast of ``x`` to complex).

    Parameters
    ----------
    x : numpy.ndarray
        Finite uniform samples (a 2-D array: one channel per row).
    kernel_re, kernel_im : numpy.ndarray
        Real and imaginary parts of the DFT kernel (:func:`dft_kernel`), length
        ``x.shape[-1]`` (a 2-D kernel: one row per row of ``x``).
    length : float
        Samples per cycle of the kernel's fundamental (window length).

    Returns
    -------
    numpy.ndarray
        Complex RMS phasors, NaN before the first full cycle.
    """
    shape = np.broadcast_shapes(x.shape, np.shape(kernel_re))
    z = np.empty(shape, dtype=np.complex128)
    np.multiply(x, kernel_re, out=z.real)
    np.multiply(x, kernel_im, out=z.imag)
    out = _sliding_sum_of_temporary(z, length)
    out *= np.sqrt(2.0) / length
    return out


def _sliding_sum_of_temporary(z: np.ndarray, length: float) -> np.ndarray:
    """:func:`sliding_window_sum` of a complex temporary that may be overwritten.

    The same numbers with one record-sized array fewer: the running sum goes to a buffer
    without the leading zero (``c[k + 1]`` is ``s[k]``; ``c[0] = 0`` is subtracted as such)
    and the fractional oldest sample is weighted in place in ``z``.
    """
    n = z.shape[-1]
    n_full, frac, first = _window_parts(length)
    out = np.empty(z.shape, dtype=np.complex128)
    if n <= first:
        out[...] = np.nan
        return out
    out[..., :first] = np.nan
    s = np.cumsum(z, axis=-1)
    lo = max(first, n_full)
    # out[k] = c[k+1] − c[k+1−n_full] = s[k] − s[k−n_full] (k ≥ n_full); s[k] − 0 at k = n_full−1
    np.subtract(s[..., lo:], s[..., lo - n_full : n - n_full], out=out[..., lo:])
    if first < lo:
        np.subtract(s[..., first], 0, out=out[..., first])
    if frac > 0:
        tail = z[..., first - n_full : n - n_full]
        tail *= frac
        out[..., first:] += tail
    return out


def half_cycle_phasor(x: np.ndarray, *, fs_hz: float, f_hz: float, t0_s: float = 0.0) -> np.ndarray:
    """Sliding half-cycle DFT phasor (faster response; does not reject DC or even harmonics).

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples.
    fs_hz, f_hz : float
        Sample rate and fundamental frequency.
    t0_s : float
        Instant of the first sample.

    Returns
    -------
    numpy.ndarray
        Complex RMS phasors, NaN before the first full half cycle.
    """
    x = np.asarray(x, dtype=np.float64)
    length = samples_per_cycle(fs_hz, f_hz) / 2.0
    k = dft_kernel(x.shape[0], fs_hz=fs_hz, f_hz=f_hz, t0_s=t0_s)
    return (np.sqrt(2.0) / length) * sliding_window_sum(x * k, length)


def sliding_rms(x: np.ndarray, *, length: float) -> np.ndarray:
    """Causal sliding RMS over ``length`` samples (fractional allowed), NaN before the first."""
    x = np.asarray(x, dtype=np.float64)
    ms = sliding_window_sum(x * x, length) / length
    return np.sqrt(np.maximum(ms, 0.0))


def frequency_from_phasor(
    phasor: np.ndarray, *, fs_hz: float, f_hz: float, lag: int | None = None
) -> np.ndarray:
    """Instantaneous frequency from the rotation of an absolute-time phasor.

    Parameters
    ----------
    phasor : numpy.ndarray
        Complex phasors computed with the kernel frequency ``f_hz``.
    fs_hz, f_hz : float
        Sample rate and kernel frequency.
    lag : int, optional
        Samples between the two phasors compared (default one cycle, rounded).

    Returns
    -------
    numpy.ndarray
        ``f_hz + dφ/dt / 2π`` per sample, NaN where not available.
    """
    if lag is None:
        lag = max(1, round(samples_per_cycle(fs_hz, f_hz)))
    out = np.full(phasor.shape[0], np.nan)
    if phasor.shape[0] <= lag:
        return out
    rot = phasor[lag:] * np.conj(phasor[:-lag])
    out[lag:] = f_hz + np.angle(rot) * fs_hz / (2.0 * np.pi * lag)
    return out


def estimate_frequency(x: np.ndarray, *, fs_hz: float, f_hz: float, n_iter: int = 3) -> float:
    """Estimate the (steady) power frequency of ``x`` by iterated phasor rotation.

    The first pass uses a window of one nominal cycle; its phasor magnitude and angle ripple
    at twice the frequency when off nominal, so the estimate is the mean over the valid
    samples and the window is re-tuned to it (frequency tracking), ``n_iter`` times.

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples holding at least three cycles.
    fs_hz, f_hz : float
        Sample rate and nominal frequency.
    n_iter : int
        Number of re-tuning passes.

    Returns
    -------
    float
        Estimated frequency in Hz (``f_hz`` when the signal is too short or flat).
    """
    x = np.asarray(x, dtype=np.float64)
    f = float(f_hz)
    for _ in range(max(1, n_iter)):
        if x.shape[0] < 3 * samples_per_cycle(fs_hz, f):
            return float(f_hz)
        ph = full_cycle_phasor(x, fs_hz=fs_hz, f_hz=f)
        inst = frequency_from_phasor(ph, fs_hz=fs_hz, f_hz=f)
        ok = np.isfinite(inst) & (np.abs(ph) > 1e-12)
        if not np.any(ok):
            return float(f_hz)
        f_new = float(np.mean(inst[ok]))
        if not 0.5 * f_hz < f_new < 1.5 * f_hz:
            return float(f_hz)
        if abs(f_new - f) < 1e-6:
            f = f_new
            break
        f = f_new
    return f


def tracked_phasor(
    x: np.ndarray,
    *,
    fs_hz: float,
    f_hz: float,
    t0_s: float = 0.0,
    estimate_from: slice | None = None,
) -> tuple[np.ndarray, float]:
    """Full-cycle phasor with the window tuned to the measured frequency.

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples.
    fs_hz, f_hz : float
        Sample rate and nominal frequency.
    t0_s : float
        Instant of the first sample.
    estimate_from : slice, optional
        The steady part of ``x`` to measure the frequency on (default all of it).

    Returns
    -------
    (numpy.ndarray, float)
        Complex RMS phasors and the tracked frequency in Hz.
    """
    x = np.asarray(x, dtype=np.float64)
    part = x if estimate_from is None else x[estimate_from]
    f = estimate_frequency(part, fs_hz=fs_hz, f_hz=f_hz)
    return full_cycle_phasor(x, fs_hz=fs_hz, f_hz=f, t0_s=t0_s), f
