"""Harmonics, total harmonic distortion, envelopes and beat frequency.

The arc voltage of a burning secondary arc is square-wave-like: an ideal square wave has odd
harmonics of amplitude 1/k of the fundamental and a total harmonic distortion of
``sqrt(π²/8 − 1) = 48.34 %`` (derived from its Fourier series, e.g. Oppenheim & Willsky,
*Signals and Systems*, 2nd ed., 1997 — section from memory). A recovery voltage is nearly
sinusoidal.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from recordscan.signal.phasor import (
    dft_kernel,
    full_cycle_phasor,
    real_parts_phasor,
    samples_per_cycle,
    sliding_rms,
)


def _gesv_gufunc() -> Callable[..., np.ndarray] | None:
    """The gufunc behind ``np.linalg.solve`` (its wrapper's checks cost more than a 5×5
    solve), when this numpy has it and it solves a known system; else None."""
    try:
        from numpy.linalg import _umath_linalg

        fn = _umath_linalg.solve1
        got = fn(np.array([[2.0, 1.0], [1.0, 3.0]]), np.array([3.0, 5.0]), signature="dd->d")
    except Exception:  # pragma: no cover - another numpy layout: np.linalg.solve is used
        return None
    return fn if np.allclose(got, [0.8, 1.4], rtol=0, atol=1e-12) else None


_SOLVE1 = _gesv_gufunc()

__all__ = [
    "BeatFit",
    "envelope",
    "fit_beat",
    "harmonic_ratio",
    "harmonic_spectrum",
    "thd",
]


def _integer_cycle_weights(n: int, length: float) -> tuple[np.ndarray, float]:
    """Weights over the last whole number of cycles of ``n`` samples (fractional oldest)."""
    n_cyc = int(np.floor(n / length + 1e-9))
    if n_cyc < 1:
        raise ValueError("signal shorter than one cycle")
    span = n_cyc * length
    n_full = int(np.floor(span + 1e-9))
    frac = span - n_full
    w = np.zeros(n)
    w[n - n_full :] = 1.0
    if frac > 1e-9 and n - n_full - 1 >= 0:
        w[n - n_full - 1] = frac
    return w, span


def harmonic_spectrum(
    x: np.ndarray, *, fs_hz: float, f_hz: float, n_harmonics: int | None = None
) -> np.ndarray:
    """RMS magnitudes of the harmonics of ``x`` over its last whole number of cycles.

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples (at least one cycle).
    fs_hz, f_hz : float
        Sample rate and fundamental frequency.
    n_harmonics : int, optional
        Highest harmonic (default: the highest below the Nyquist frequency).

    Returns
    -------
    numpy.ndarray
        ``spec[h]`` = RMS magnitude of harmonic ``h`` (``spec[0]`` is the DC value's
        magnitude).
    """
    x = np.asarray(x, dtype=np.float64)
    length = samples_per_cycle(fs_hz, f_hz)
    w, span = _integer_cycle_weights(x.shape[0], length)
    h_max = int(np.floor((fs_hz / 2.0) / f_hz - 1e-9))
    if n_harmonics is not None:
        h_max = min(h_max, n_harmonics)
    t = np.arange(x.shape[0]) / fs_hz
    h = np.arange(h_max + 1)[:, None]
    kern = np.exp(-1j * 2.0 * np.pi * f_hz * h * t[None, :])
    sums = (kern * (w * x)[None, :]).sum(axis=1)
    spec = np.abs(sums) * np.sqrt(2.0) / span
    spec[0] = abs(sums[0].real) / span
    return spec


def thd(
    x: np.ndarray,
    *,
    fs_hz: float,
    f_hz: float,
    method: str = "parseval",
    n_harmonics: int | None = None,
) -> float:
    """Total harmonic distortion of ``x`` (ratio, not per cent) over whole cycles.

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples.
    fs_hz, f_hz : float
        Sample rate and fundamental frequency.
    method : {"parseval", "harmonics"}
        ``"parseval"``: ``sqrt(rms² − dc² − X1²)/X1`` — all non-fundamental content up to the
        Nyquist frequency (aliases included). ``"harmonics"``: ``sqrt(Σ_{h≥2} X_h²)/X1`` over
        the integer harmonics up to ``n_harmonics``.
    n_harmonics : int, optional
        Highest harmonic for ``method="harmonics"``.

    Returns
    -------
    float
        THD as a ratio (0.4834 for an ideal square wave).
    """
    x = np.asarray(x, dtype=np.float64)
    if method == "harmonics":
        spec = harmonic_spectrum(x, fs_hz=fs_hz, f_hz=f_hz, n_harmonics=n_harmonics)
        if spec.shape[0] < 2 or spec[1] <= 0:
            return float("nan")
        return float(np.sqrt(np.sum(spec[2:] ** 2)) / spec[1])
    if method != "parseval":
        raise ValueError(f"unknown THD method {method!r}")
    length = samples_per_cycle(fs_hz, f_hz)
    w, span = _integer_cycle_weights(x.shape[0], length)
    spec = harmonic_spectrum(x, fs_hz=fs_hz, f_hz=f_hz, n_harmonics=1)
    ms = float(np.sum(w * x * x) / span)
    rest = ms - spec[0] ** 2 - spec[1] ** 2
    if spec[1] <= 0:
        return float("nan")
    return float(np.sqrt(max(rest, 0.0)) / spec[1])


def harmonic_ratio(
    x: np.ndarray,
    *,
    fs_hz: float,
    f_hz: float,
    harmonics: tuple[int, ...] = (3, 5),
    t0_s: float = 0.0,
    rms_of: np.ndarray | None = None,
    n_cycles: int = 1,
) -> np.ndarray:
    """Sliding one-cycle ratio of selected harmonics to the total RMS.

    ``r = sqrt(Σ_h |X_h|²) / rms``. Relative to the window RMS (not the fundamental) the
    ratio stays bounded when the fundamental vanishes (beat minima). For an ideal square
    wave and harmonics (3, 5) it is ``(2·sqrt(2)/π)·sqrt(1/9 + 1/25) = 0.3500`` (derived
    from the Fourier series); for a sinusoid it is 0. Broadband noise adds little because
    only a few DFT bins are summed.

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples.
    fs_hz, f_hz : float
        Sample rate and fundamental frequency.
    harmonics : tuple of int
        Harmonic orders to sum; those at or above the Nyquist frequency are dropped.
    t0_s : float
        Instant of the first sample.
    rms_of : numpy.ndarray, optional
        Signal whose RMS is the denominator (default ``x``) — e.g. the unfiltered signal
        when ``x`` was high-pass filtered to keep the fundamental's leakage out of the bins.
    n_cycles : int
        Window length in cycles (longer windows lower the noise in the bins).

    Returns
    -------
    numpy.ndarray
        Ratio per sample (NaN before the first full cycle or where the RMS is zero).
    """
    x = np.asarray(x, dtype=np.float64)
    m = max(1, int(n_cycles))
    length = m * samples_per_cycle(fs_hz, f_hz)
    orders = [h for h in harmonics if not h * f_hz >= 0.45 * fs_hz]
    acc = np.zeros(x.shape[0])
    if orders and np.isfinite(x).all():
        # all the harmonics' sliding DFTs in one 2-D pass; their kernels are powers of the
        # fundamental's (one complex exponential instead of one per harmonic)
        kern = _kernel_powers(dft_kernel(x.shape[0], fs_hz=fs_hz, f_hz=f_hz, t0_s=t0_s), orders)
        ph = real_parts_phasor(x, kern.real, kern.imag, samples_per_cycle(fs_hz, f_hz / m))
        mag2 = np.abs(ph)
        mag2 *= mag2
        acc = mag2[0]
        for row in mag2[1:]:
            acc += row
    else:
        for h in orders:
            ph = full_cycle_phasor(x, fs_hz=fs_hz, f_hz=f_hz / m, t0_s=t0_s, harmonic=h * m)
            acc = acc + np.abs(ph) ** 2
    rms = sliding_rms(x if rms_of is None else np.asarray(rms_of, float), length=length)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.sqrt(acc) / rms
    r[~np.isfinite(r)] = np.nan
    return r


def _kernel_powers(base: np.ndarray, orders: list[int]) -> np.ndarray:
    """Rows ``base**h`` for the positive integers ``orders``, by repeated multiplication
    (equal to the direct kernels of the harmonics to round-off)."""
    out = np.empty((len(orders), base.shape[0]), dtype=np.complex128)
    squares = base * base
    cur, cur_h = base, 1
    for j, h in sorted(enumerate(orders), key=lambda jh: jh[1]):
        if h < 1:
            raise ValueError("harmonic orders must be positive integers")
        while h - cur_h >= 2:
            cur = cur * squares
            cur_h += 2
        if h - cur_h == 1:
            cur = cur * base
            cur_h += 1
        out[j] = cur
    return out


def envelope(x: np.ndarray) -> np.ndarray:
    """Magnitude of the analytic signal (Hilbert transform) of ``x`` minus its mean."""
    from scipy.signal import hilbert

    x = np.asarray(x, dtype=np.float64)
    if x.shape[0] < 2:
        return np.abs(x)
    return np.abs(hilbert(x - np.mean(x)))


@dataclass(frozen=True)
class BeatFit:
    """A two-frequency fit ``A1·cos(ω·t + φ1) + A2·exp(−t/τ)·cos(ω_n·t + φ2)`` (no decay fit).

    Attributes
    ----------
    forced_rms : float
        RMS of the component at the power frequency (unit of the input).
    free_rms : float
        RMS of the second (free) component; 0 when none was found.
    free_frequency_hz : float or None
        Frequency of the free component.
    beat_hz : float or None
        ``|f − f_n|``, None when no second component was found.
    peak : float
        Largest absolute sample.
    residual_rms : float
        RMS of what the fit leaves.
    """

    forced_rms: float
    free_rms: float
    free_frequency_hz: float | None
    beat_hz: float | None
    peak: float
    residual_rms: float


def golden_min(fun: Callable[[float], float], lo: float, hi: float, *, tol: float) -> float:
    """Minimum of a unimodal function on [lo, hi] by golden-section search."""
    g = (np.sqrt(5.0) - 1.0) / 2.0
    a, b = lo, hi
    c, d = b - g * (b - a), a + g * (b - a)
    fc, fd = fun(c), fun(d)
    while b - a > tol:
        if fc < fd:
            b, d, fd = d, c, fc
            c = b - g * (b - a)
            fc = fun(c)
        else:
            a, c, fc = c, d, fd
            d = a + g * (b - a)
            fd = fun(d)
    return 0.5 * (a + b)


def _ls_fit(
    x: np.ndarray, t: np.ndarray, freqs: list[float], *, fixed: np.ndarray | None = None
) -> tuple[np.ndarray, float]:
    """Least-squares fit of a constant and a sinusoid per frequency; (coefficients, RMS
    residual). ``fixed``: the rows ``[1, cos, sin]`` of ``freqs[0]``, when already built."""
    if fixed is None:
        fixed = _basis(t, freqs[:1])
    a = np.empty((1 + 2 * len(freqs), t.shape[0]))
    a[:3] = fixed
    for k, f in enumerate(freqs[1:]):
        w = 2 * np.pi * f * t
        np.cos(w, out=a[3 + 2 * k])
        np.sin(w, out=a[4 + 2 * k])
    with np.errstate(all="ignore"):
        return _solve_rows(a, x)


def _solve_rows(a: np.ndarray, x: np.ndarray) -> tuple[np.ndarray, float]:
    """Least squares of ``x`` on the rows of ``a`` by the normal equations (``lstsq`` when
    they are singular); (coefficients, RMS residual).

    Call it under ``np.errstate(all="ignore")``: a singular system then gives non-finite
    values from the solver (instead of an error) and takes the fallback.
    """
    gram = a @ a.T
    rhs = a @ x
    coef = None
    if _SOLVE1 is not None:
        # the gufunc behind np.linalg.solve without its per-call checks (same LAPACK gesv,
        # same numbers)
        coef = _SOLVE1(gram, rhs, signature="dd->d")
        if not np.isfinite(coef).all():
            coef = None
    if coef is None:
        try:
            coef = np.linalg.solve(gram, rhs)
        except np.linalg.LinAlgError:
            coef = np.linalg.lstsq(a.T, x, rcond=None)[0]
    res = x - coef @ a
    res *= res
    # np.mean's own steps (pairwise sum, then one division), without its wrapper
    return coef, float(np.sqrt(np.add.reduce(res) / res.shape[0]))


class _FreeComponentFit:
    """Residual RMS of the forced-plus-free fit as a function of the free frequency.

    The forced rows are copied once into a work array whose last two rows are rewritten per
    call (the same arithmetic as :func:`_ls_fit` with ``fixed``).
    """

    def __init__(self, x: np.ndarray, t: np.ndarray, fixed: np.ndarray) -> None:
        self.x, self.t = x, t
        self.a = np.empty((5, t.shape[0]))
        self.a[:3] = fixed
        self.w = np.empty(t.shape[0])

    def fit(self, fr: float) -> tuple[np.ndarray, float]:
        """Coefficients and RMS residual with the free component at ``fr``."""
        np.multiply(2 * np.pi * fr, self.t, out=self.w)
        np.cos(self.w, out=self.a[3])
        np.sin(self.w, out=self.a[4])
        return _solve_rows(self.a, self.x)

    def __call__(self, fr: float) -> float:
        """RMS residual with the free component at ``fr`` (the golden-section objective)."""
        a, x, res = self.a, self.x, self.w
        np.multiply(2 * np.pi * fr, self.t, out=res)
        np.cos(res, out=a[3])
        np.sin(res, out=a[4])
        if _SOLVE1 is not None:
            coef = _SOLVE1(a @ a.T, a @ x, signature="dd->d")
            np.dot(coef, a, out=res)
            np.subtract(x, res, out=res)
            res *= res
            r = math.sqrt(np.add.reduce(res) / res.shape[0])
            if math.isfinite(r):
                return r
        return _solve_rows(a, x)[1]  # (a singular system: the checked path)


def _basis(t: np.ndarray, freqs: list[float]) -> np.ndarray:
    """Rows ``1, cos(2π·f·t), sin(2π·f·t)`` for each frequency."""
    a = np.empty((1 + 2 * len(freqs), t.shape[0]))
    a[0] = 1.0
    for k, f in enumerate(freqs):
        w = 2 * np.pi * f * t
        np.cos(w, out=a[1 + 2 * k])
        np.sin(w, out=a[2 + 2 * k])
    return a


def fit_beat(
    x: np.ndarray,
    *,
    fs_hz: float,
    f_hz: float,
    min_free_fraction: float = 0.1,
) -> BeatFit:
    """Fit the forced (power-frequency) and free components of a recovery voltage.

    The forced component is a linear least-squares sinusoid at ``f_hz``; the free component's
    frequency is searched in 0.3–1.7·``f_hz`` (coarse zero-padded spectrum of the residual,
    then a bounded scalar search on the fit residual). The envelope then beats at
    ``|f − f_n|`` (circuit result for an LC-coupled open phase; see docs/detection.md).

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples of the recovery voltage (a few cycles at least).
    fs_hz, f_hz : float
        Sample rate and power frequency.
    min_free_fraction : float
        The free component is reported only if its RMS exceeds this fraction of the forced
        one and the fit improves by more than a third.

    Returns
    -------
    BeatFit
        The fitted components.
    """
    x = np.asarray(x, dtype=np.float64)
    peak = float(np.max(np.abs(x))) if x.size else 0.0
    step = max(1, int(fs_hz // (12.0 * f_hz)))  # ≥ 12 samples per cycle: f, f_n ≤ 1.7 f
    x = x[::step]
    fs_hz = fs_hz / step
    t = np.arange(x.shape[0]) / fs_hz
    fixed = _basis(t, [f_hz])  # the forced rows, shared by every fit below
    coef1, res1 = _ls_fit(x, t, [f_hz], fixed=fixed)
    forced = float(np.hypot(coef1[1], coef1[2]) / np.sqrt(2.0))
    dur = x.shape[0] / fs_hz
    if dur < 3.0 / f_hz or res1 < min_free_fraction * forced:
        # too short to resolve a beat, or the forced sinusoid leaves too little to be one
        return BeatFit(forced, 0.0, None, None, peak, res1)
    a = np.ascontiguousarray(fixed.T)  # columns 1, cos, sin: the same values, sample-major
    resid = x - a @ coef1
    n_fft = int(2 ** np.ceil(np.log2(max(8 * x.shape[0], 1024))))
    spec = np.abs(np.fft.rfft(resid * np.hanning(x.shape[0]), n_fft))
    freqs = np.fft.rfftfreq(n_fft, 1.0 / fs_hz)
    band = (freqs > 0.3 * f_hz) & (freqs < 1.7 * f_hz)
    if not np.any(band):
        return BeatFit(forced, 0.0, None, None, peak, res1)
    f_guess = float(freqs[band][np.argmax(spec[band])])
    step = max(fs_hz / n_fft * 4, 1.0 / dur)
    lo, hi = max(0.3 * f_hz, f_guess - step), min(1.7 * f_hz, f_guess + step)
    free_fit = _FreeComponentFit(x, t, fixed)
    with np.errstate(all="ignore"):
        fn = golden_min(free_fit, lo, hi, tol=0.05)
        coef2, res2 = free_fit.fit(fn)
    forced2 = float(np.hypot(coef2[1], coef2[2]) / np.sqrt(2.0))
    free2 = float(np.hypot(coef2[3], coef2[4]) / np.sqrt(2.0))
    if free2 > min_free_fraction * max(forced2, 1e-300) and res2 < res1 / 1.5:
        return BeatFit(forced2, free2, fn, abs(f_hz - fn), peak, res2)
    return BeatFit(forced, 0.0, None, None, peak, res1)
