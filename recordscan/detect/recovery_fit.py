"""Sample-level refinement of an extinction instant on the recovery-voltage fit.

Once the arc is out, the open phase carries the recovery voltage: over a cycle or two a
power-frequency sinusoid plus a slowly varying offset (the trapped charge). The fit of that
waveform just after the coarse instant, extrapolated backwards, departs from the recorded
voltage where the arc still burned; the first sample after the last departure is the
extinction (:func:`refine_on_recovery_fit`), repeated on the full-rate samples when the
detection ran on a block-averaged copy (:func:`refine_full_rate`). Used by
:func:`recordscan.detect.secondary_arc.detect_extinction`.
"""

from __future__ import annotations

import numpy as np

from recordscan.core.record import Record
from recordscan.detect._base import finite_values

__all__ = ["refine_full_rate", "refine_on_recovery_fit"]


def refine_full_rate(
    full: Record,
    role: str,
    *,
    t_kc: float,
    t_lo: float,
    t_hi: float,
    f_hz: float,
    arc_amp: float,
    window_cycles: int,
    t_coarse: float,
) -> tuple[float, float] | None:
    """Repeat the recovery-fit refinement on the full-rate samples near ``t_kc``.

    Parameters
    ----------
    full : Record
        The record at its full sample rate.
    role : str
        Role of the open phase's line-side voltage.
    t_kc, t_lo, t_hi : float
        Coarse change instant and the search bounds [s].
    f_hz : float
        Power frequency.
    arc_amp : float
        Arc-voltage amplitude [V] (sets the departure floor).
    window_cycles : int
        Length of the harmonic window the coarse instant came from (cycles).
    t_coarse : float
        The coarse extinction instant [s].

    Returns
    -------
    tuple of float or None
        ``(instant, uncertainty)`` in seconds, or None when the full-rate fit disagrees
        with the coarse one by more than a quarter cycle or finds no departure.
    """
    ch = full.analog_by_role(role)
    if ch is None:
        return None
    t = full.t_s
    k_lo = int(np.searchsorted(t, t_lo))
    k_hi = int(np.searchsorted(t, t_hi, side="right"))
    k_c = int(np.searchsorted(t, t_kc))
    if not k_lo < k_c < k_hi:
        return None
    seg = next((s for s in full.segments if s.start_idx <= k_c < s.stop_idx), None)
    if seg is None or seg.rate_hz <= 0:
        return None
    lo, hi = max(k_lo, seg.start_idx), min(k_hi, seg.stop_idx)
    n = seg.rate_hz / f_hz
    v = finite_values(ch.values)
    ref = refine_on_recovery_fit(v, t, kc=k_c, n=n, f_hz=f_hz, lo=lo, hi=hi, arc_amp=arc_amp)
    if ref is None or not k_c - window_cycles * n - 2 <= ref[0] <= k_c:
        return None
    dt = 1.0 / seg.rate_hz
    t_fine = float(t[ref[0]]) - 0.5 * dt
    if abs(t_fine - t_coarse) > 0.25 / f_hz:
        return None  # the full-rate fit disagrees with the block-averaged one: keep that
    return t_fine, max(dt, 0.05 / f_hz)


def refine_on_recovery_fit(
    v: np.ndarray,
    t: np.ndarray,
    *,
    kc: int,
    n: float,
    f_hz: float,
    lo: int,
    hi: int,
    arc_amp: float,
) -> tuple[int, float] | None:
    """Backward residual scan: first sample after the last departure from the recovery fit.

    Parameters
    ----------
    v, t : numpy.ndarray
        Open-phase voltage [V] and its uniform time axis [s].
    kc : int
        Index where the recovery is taken to have started (fit from there on).
    n : float
        Samples per power-frequency cycle.
    f_hz : float
        Power frequency.
    lo, hi : int
        Search bounds (indices).
    arc_amp : float
        Arc-voltage amplitude [V]: a departure must exceed 30 % of it (and 5× the fit's
        residual RMS).

    Returns
    -------
    tuple or None
        ``(index, threshold_v)``, or None when no departure is found.
    """
    w = 2 * np.pi * f_hz

    def basis(x: np.ndarray) -> np.ndarray:
        # columns cos, sin, 1, y, y² written in place (the values np.stack would gather)
        out = np.empty((x.shape[0], 5))
        wx = w * x
        np.cos(wx, out=out[:, 0])
        np.sin(wx, out=out[:, 1])
        out[:, 2] = 1.0
        np.multiply(x, f_hz, out=out[:, 3])
        np.multiply(out[:, 3], out[:, 3], out=out[:, 4])
        return out

    def scan(k_fit: int, k_top: int) -> tuple[int, float] | None:
        fit_b = min(k_fit + int(np.ceil(1.5 * n)), hi)
        if fit_b - k_fit < max(8, int(n)):
            return None
        tt = t[k_fit:fit_b] - t[k_fit]
        b_fit = basis(tt)
        coef, *_ = np.linalg.lstsq(b_fit, v[k_fit:fit_b], rcond=None)
        res_fit = v[k_fit:fit_b] - b_fit @ coef
        s_lo = max(lo, k_top - int(np.ceil(2.0 * n)))
        ts = t[s_lo : k_top + 1] - t[k_fit]
        res = np.abs(v[s_lo : k_top + 1] - basis(ts) @ coef)
        thr = max(5.0 * float(np.sqrt(np.mean(res_fit**2))), 0.3 * arc_amp)
        big = np.flatnonzero(res > thr)
        if big.size == 0:
            return None
        return s_lo + int(big[-1]) + 1, thr

    first = scan(kc, kc)
    if first is None:
        return None
    k1, thr1 = first
    # fit again from just after the first estimate: a shorter extrapolation
    k_fit = k1 + max(1, int(0.1 * n))
    if k_fit < kc:
        second = scan(k_fit, k_fit)
        if second is not None and second[0] <= k_fit:
            return second
    return k1, thr1
