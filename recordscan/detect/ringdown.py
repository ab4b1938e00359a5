"""Final extinction on a shunt-compensated line from the open phase's free ring-down.

Once the secondary arc is out, the open phase of a shunt-compensated line is a linear circuit
driven by the healthy phases: its voltage is a forced component at the power frequency ``f``
plus a free oscillation at the natural frequency ``f_n`` of the line capacitance with the
reactors, slowly damped by the reactors' losses (``f_n = f·sqrt((Bpg + 2·Bpp)/(B0 + 2·Bm))``
for the phase-to-ground and phase-to-phase susceptances; a derived circuit result), so the
recovery voltage beats at ``|f − f_n|``. While the arc burns the free oscillation is absent
(the arc clamps the phase). The model

    v(t) = c0 + a·cos ωt + b·sin ωt + e^{−σ(t−t0)}·(c·cos ω_n t + d·sin ω_n t)

is fitted (``f_n`` and ``σ`` by a bounded search on the residual, the rest by linear least
squares) to the last 0.3 s of the observation, where the phase is surely recovered, after a
zero-phase band-pass of 0.5–1.6·``f`` (which keeps both components and removes the line's
travelling-wave ringing and most of a CVT's slow transient after the extinction). The fitted
stretch is then grown backwards one cycle at a time while the earlier cycle still follows the
model (residual RMS below three times the fit's, or below a tenth of the free peak). Where
it stops, the model is extrapolated over the two cycles before; the extinction is the first
sample after the last one departing from it by more than ``max(4 × fit residual, 0.15 × free
peak)``. Without a clear free component (below 3 % of the forced one, or not significant
against the fit's noise) there is no answer and the caller keeps the other evidence.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import butter, sosfiltfilt

from recordscan.signal.spectral import golden_min

__all__ = ["RingdownFit", "faint_signature_end", "ringdown_extinction"]


@dataclass(frozen=True)
class RingdownFit:
    """Result of :func:`ringdown_extinction`.

    Attributes
    ----------
    index : int
        Sample index of the extinction.
    free_frequency_hz : float
        Fitted free-oscillation frequency.
    damping_per_s : float
        Fitted damping ``σ`` of the free oscillation.
    forced_peak_v, free_peak_v : float
        Peaks of the forced and free components at the start of the fitted stretch.
    residual_rms_v : float
        RMS residual of the fit over the recovered stretch.
    """

    index: int
    free_frequency_hz: float
    damping_per_s: float
    forced_peak_v: float
    free_peak_v: float
    residual_rms_v: float


def _basis(tt: np.ndarray, f_hz: float, fn_hz: float, sigma: float) -> np.ndarray:
    w, wn = 2 * np.pi * f_hz, 2 * np.pi * fn_hz
    damp = np.exp(-sigma * (tt - tt[0])) if tt.size else tt
    return np.stack(
        [
            np.ones_like(tt),
            np.cos(w * tt),
            np.sin(w * tt),
            damp * np.cos(wn * tt),
            damp * np.sin(wn * tt),
        ],
        axis=1,
    )


def _fit(
    x: np.ndarray, tt: np.ndarray, f_hz: float, fn_hz: float, sigma: float
) -> tuple[np.ndarray, float]:
    a = _basis(tt, f_hz, fn_hz, sigma)
    coef, *_ = np.linalg.lstsq(a, x, rcond=None)
    r = x - a @ coef
    return coef, float(np.sqrt(np.mean(r * r)))


class _Columns:
    """The five model columns over ``[lo, hi)`` for fixed ``f_n`` and ``σ`` (computed once).

    A fit over ``[k, e)`` rescales the free columns to 1 at ``t[k]`` (the span of the
    columns, and so the fit, is the same as with the damping referenced at ``t[k]``).
    """

    def __init__(
        self, t: np.ndarray, lo: int, hi: int, f_hz: float, fn_hz: float, sigma: float
    ) -> None:
        self.lo, self.t, self.sigma = lo, t, sigma
        self.t_ref = float(t[hi - 1])
        tt = t[lo:hi] - self.t_ref
        w, wn = 2 * np.pi * f_hz, 2 * np.pi * fn_hz
        self.cols = np.stack(
            [np.ones_like(tt), np.cos(w * tt), np.sin(w * tt), np.cos(wn * tt), np.sin(wn * tt)],
            axis=1,
        )
        self.log_damp = -sigma * tt

    def rows(self, a: int, b: int, k: int) -> np.ndarray:
        """Rows ``[a, b)`` with the free columns damped from ``t[k]`` (value 1 there)."""
        out = self.cols[a - self.lo : b - self.lo].copy()
        d = np.exp(self.log_damp[a - self.lo : b - self.lo] - self.log_damp[k - self.lo])
        out[:, 3:] *= d[:, None]
        return out

    def prepare_suffix(self, x: np.ndarray, hi: int) -> None:
        """Suffix sums of the normal equations over ``[k, hi)`` for every ``k`` (one pass)."""
        c = self.cols.copy()
        c[:, 3:] *= np.exp(self.log_damp)[:, None]  # damped from t_ref: grows backwards
        xs = x[self.lo : hi]
        self._g = np.cumsum((c[:, :, None] * c[:, None, :])[::-1], axis=0)[::-1]
        self._h = np.cumsum((c * xs[:, None])[::-1], axis=0)[::-1]
        self._xx = np.cumsum((xs * xs)[::-1])[::-1]
        self._hi = hi

    def fit(self, x: np.ndarray, k: int, e: int) -> tuple[np.ndarray, float]:
        """Least-squares fit over ``[k, e)`` in the frame of :meth:`rows` (``…, k)``)."""
        if e == getattr(self, "_hi", None):
            j = k - self.lo
            d = np.ones(5)
            d[3:] = np.exp(-self.log_damp[j])
            g = self._g[j] * d[:, None] * d[None, :]
            h = self._h[j] * d
            try:
                coef = np.linalg.solve(g, h)
                ss = max(float(self._xx[j] - coef @ h), 0.0)
                return coef, float(np.sqrt(ss / (e - k)))
            except np.linalg.LinAlgError:
                pass
        a = self.rows(k, e, k)
        coef, *_ = np.linalg.lstsq(a, x[k:e], rcond=None)
        r = x[k:e] - a @ coef
        return coef, float(np.sqrt(np.mean(r * r)))


def _tail_fit(
    x: np.ndarray, tt: np.ndarray, f_hz: float, fn_guess_hz: float | None
) -> tuple[float, float] | None:
    """Free frequency and damping from a recovered stretch (None without a clear free part)."""
    fs = 1.0 / float(np.median(np.diff(tt)))
    w = 2 * np.pi * f_hz
    a = np.stack([np.ones_like(tt), np.cos(w * tt), np.sin(w * tt)], axis=1)
    coef, *_ = np.linalg.lstsq(a, x, rcond=None)
    resid = x - a @ coef
    n_fft = int(2 ** np.ceil(np.log2(max(8 * x.shape[0], 1024))))
    spec = np.abs(np.fft.rfft(resid * np.hanning(x.shape[0]), n_fft))
    freqs = np.fft.rfftfreq(n_fft, 1.0 / fs)
    band = (freqs > 0.3 * f_hz) & (freqs < 1.7 * f_hz) & (np.abs(freqs - f_hz) > 0.01 * f_hz)
    if fn_guess_hz is not None and np.isfinite(fn_guess_hz):
        near = band & (np.abs(freqs - fn_guess_hz) < 0.15 * f_hz)
        if np.any(near):
            band = near
    if not np.any(band):
        return None
    f_pk = float(freqs[band][np.argmax(spec[band])])
    dur = float(tt[-1] - tt[0])
    half = max(2.0 / dur, 4 * fs / n_fft)
    fn = golden_min(
        lambda fr: _fit(x, tt, f_hz, fr, 0.0)[1],
        max(0.3 * f_hz, f_pk - half),
        min(1.7 * f_hz, f_pk + half),
        tol=5e-3,
    )
    sigma = golden_min(lambda s: _fit(x, tt, f_hz, fn, s)[1], 0.0, 20.0, tol=0.05)
    return fn, sigma


def ringdown_extinction(
    v: np.ndarray,
    t: np.ndarray,
    *,
    lo: int,
    hi: int,
    f_hz: float,
    fn_guess_hz: float | None = None,
    tail_s: float = 0.3,
    min_free_fraction: float = 0.03,
) -> RingdownFit | None:
    """Extinction from the start of the open phase's final free ring-down.

    Parameters
    ----------
    v, t : numpy.ndarray
        Open-phase line-side voltage and its time axis (one uniform segment over
        ``[lo, hi)``).
    lo, hi : int
        Sample range to search (from the arc start to the end of the observation).
    f_hz : float
        Power frequency.
    fn_guess_hz : float, optional
        Free-oscillation frequency expected from the line description.
    tail_s : float
        Length of the final stretch first fitted.
    min_free_fraction : float
        The free component must reach this fraction of the forced one (no beat, no answer).

    Returns
    -------
    RingdownFit or None
        None when the recovered stretch shows no clear free oscillation. A ring-down that
        reaches back to ``lo`` places the extinction within the first two cycles.
    """
    dt = float(np.median(np.diff(t[lo:hi]))) if hi - lo > 2 else 0.0
    if dt <= 0:
        return None
    n = round(1.0 / (f_hz * dt))
    if hi - lo < 8 * n:
        return None
    x = np.zeros_like(np.asarray(v, dtype=np.float64))
    # a zero-phase band-pass around f keeps the forced and free components and drops the
    # line's travelling-wave ringing and most of the CVT's slow transient after the extinction
    sos = butter(2, [0.5 * f_hz, 1.6 * f_hz], btype="bandpass", fs=1.0 / dt, output="sos")
    x[lo:hi] = sosfiltfilt(sos, np.asarray(v[lo:hi], dtype=np.float64))
    k = max(hi - round(tail_s / dt), lo + 2 * n)
    tt = t[k:hi] - t[k]
    got = _tail_fit(x[k:hi], tt, f_hz, fn_guess_hz)
    if got is None:
        return None
    fn, sigma = got
    coef, rms = _fit(x[k:hi], tt, f_hz, fn, sigma)
    forced = float(np.hypot(coef[1], coef[2]))
    free = float(np.hypot(coef[3], coef[4]))
    if free < min_free_fraction * forced or free < 8.0 * rms * np.sqrt(2.0 / (hi - k)):
        return None
    if abs(fn - f_hz) < 0.02 * f_hz:
        return None  # not separable from the forced component over the fitted stretch

    m = _Columns(t, lo, hi, f_hz, fn, sigma)
    m.prepare_suffix(x, hi)
    # grow the recovered stretch backwards while the earlier cycle follows the model
    while k - n >= lo:
        coef, rms_k = m.fit(x, k, hi)
        pred = m.rows(k - n, k, k) @ coef
        r_new = float(np.sqrt(np.mean((x[k - n : k] - pred) ** 2)))
        if r_new > max(3.0 * rms_k, 0.1 * free):
            break
        k -= n
    k = max(k, lo)  # the ring-down reaches back to the start: the arc went out at once
    coef, rms_k = m.fit(x, k, hi)
    s_lo = max(lo, k - 2 * n)
    res = np.abs(x[s_lo:k] - m.rows(s_lo, k, k) @ coef)
    big = np.flatnonzero(res > max(4.0 * rms_k, 0.15 * free))
    best = s_lo + int(big[-1]) + 1 if big.size else None
    idx = k if best is None else best
    tt = t[k:hi] - t[k]
    coef, rms = _fit(x[k:hi], tt, f_hz, fn, sigma)
    return RingdownFit(
        index=int(idx),
        free_frequency_hz=float(fn),
        damping_per_s=float(sigma),
        forced_peak_v=float(np.hypot(coef[1], coef[2])),
        free_peak_v=float(np.hypot(coef[3], coef[4])),
        residual_rms_v=rms,
    )


def faint_signature_end(
    h: np.ndarray,
    j0: int,
    n: float,
    *,
    h_max: float = 0.03,
    frac: float = 0.8,
    span: float = 4.0,
) -> int | None:
    """End of a faint arc signature that runs on past the ring-down's start ``j0``, or None.

    Parameters
    ----------
    h : numpy.ndarray
        Noise-corrected harmonic ratio of the open phase (one value per sample of the trace).
    j0 : int
        Index into ``h`` of the ring-down start.
    n : float
        Samples per power-frequency cycle.
    h_max, frac, span : float
        Bound on the faint ratio, share of significant samples, longest run (cycles).

    Returns
    -------
    int or None
        Index into ``h`` of the extinction, or None when no faint signature runs on.

    Notes
    -----
    A long arc on a compensated line fades out: its resistance grows over several cycles and
    the open phase already follows the recovery (forced-plus-free) waveform while the arc
    still conducts a little. What the terminal voltage still shows is a faint but significant
    harmonic ratio (``h > 0`` after the noise correction of
    :func:`recordscan.detect.secondary_arc.arc_trace`, every value below ``h_max``) that
    lasts to the arc's end. Required: a significant ratio over the whole cycle before ``j0``;
    then the last significant sample within ``span`` cycles after ``j0`` such that at least
    ``frac`` of the samples from ``j0`` to it are significant. The answer (trace index) is
    half a cycle after that sample: the faint signature of the last loops falls below the
    noise significance before the causal window has passed them (on the simulated corpus the
    last significant sample lies 0.2–1.3 cycles before the simulator's extinction; the bound
    and the offset are our choices, see docs/accuracy/scan.md).
    """
    w = max(1, round(n))
    if j0 - w < 0 or j0 >= h.shape[0]:
        return None
    pos = np.isfinite(h) & (h > 0.0)
    if pos[j0 - w : j0].mean() < 0.9:
        return None
    seg = pos[j0 : min(j0 + int(span * n), h.shape[0])]
    ok = seg & (np.cumsum(seg) / np.arange(1, seg.size + 1) >= frac)
    if not ok.any():
        return None
    je = int(np.flatnonzero(ok)[-1]) + 1
    if not np.all(np.nan_to_num(h[j0 - w : j0 + je]) < h_max):
        return None
    return j0 + je + w // 2
