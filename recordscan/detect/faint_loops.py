"""The last faint current loops of a dying secondary arc, after its harmonic signature ends.

A secondary arc does not stop all at once. As it stretches, its voltage approaches the
recovery voltage that drives it and its current loops shrink (on the simulated corpus to
a fifth or less of the earlier loops) before the arc fails to re-ignite at a current zero.
The harmonic signature of the open-phase voltage (:func:`recordscan.detect.secondary_arc.
arc_trace`) falls below its threshold with the last *strong* loops; the faint loops that
follow still bend the voltage around its peaks, by a few per cent, where the arc re-ignites
each half cycle. Once the arc is out, the open phase carries the recovery voltage: on an
uncompensated line a sinusoid locked to the healthy phases plus a slowly varying offset
(trapped charge), on a compensated one also the free oscillation at the line's own
frequency (derived circuit result, see :mod:`recordscan.detect.ringdown`).

:func:`faint_loops_end` fits that recovery waveform to a stretch that starts
``gap_cycles`` after the extinction found so far, extrapolates it back over the gap and
returns the end of the last departure larger than ``k_sigma`` times the fit's residual RMS
(the noise). The 8σ and the 1.5-cycle gap are our choices, checked on the simulated
accuracy corpus (docs/accuracy/scan.md): they leave the post-extinction switching and
instrument transients (which die out within the gap) below the bound in most records.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from recordscan.core.record import Record

__all__ = ["FaintLoops", "faint_loops_end", "faint_loops_in_record"]


@dataclass(frozen=True)
class FaintLoops:
    """The end of the last faint arc loop.

    Attributes
    ----------
    t_s : float
        Instant just after the last significant departure from the recovery fit [s].
    threshold_v : float
        Departure bound (``k_sigma`` × the fit's residual RMS) [V].
    peak_departure_v : float
        Largest departure found between the extinction found so far and the fit [V].
    """

    t_s: float
    threshold_v: float
    peak_departure_v: float


def _basis(
    x: np.ndarray, f_hz: float, free_hz: float | None, *, curvature: bool = True
) -> np.ndarray:
    """Recovery-waveform columns: sinusoid at f, offset, slope (in cycles), optionally the
    curvature and the free oscillation at ``free_hz``."""
    w = 2.0 * np.pi * f_hz
    y = x * f_hz
    cols = [np.cos(w * x), np.sin(w * x), np.ones_like(x), y]
    if curvature:
        cols.append(y * y)
    if free_hz is not None:
        wn = 2.0 * np.pi * free_hz
        cols += [np.cos(wn * x), np.sin(wn * x)]
    return np.stack(cols, axis=1)


def faint_loops_end(
    v: np.ndarray,
    t: np.ndarray,
    *,
    f_hz: float,
    t_ext_s: float,
    t_end_s: float,
    free_hz: float | None = None,
    max_departure_v: float | None = None,
    k_sigma: float = 8.0,
    min_departure_frac: float = 0.01,
    gap_cycles: float = 1.5,
    fit_cycles: float = 2.0,
) -> FaintLoops | None:
    """End of the faint arc loops that outlast the extinction found so far, or None.

    Parameters
    ----------
    v, t : numpy.ndarray
        Open-phase line-side voltage [V] and its uniform time axis [s] (one segment).
    f_hz : float
        Power frequency.
    t_ext_s : float
        Extinction found so far (end of the harmonic arc signature, refined).
    t_end_s : float
        End of the observation (reclose or end of record).
    free_hz : float, optional
        Free-oscillation frequency of the open phase (shunt-compensated line); adds that
        component to the recovery fit.
    max_departure_v : float, optional
        No answer when the largest departure after ``t_ext_s`` exceeds this (pass the arc's
        voltage amplitude: a faint loop cannot bend the voltage more than the arc did while
        it burned; a larger departure is a switching or instrument transient, e.g. a CVT's
        subsidence after an abrupt extinction).
    k_sigma : float
        Departure bound in units of the fit's residual RMS.
    min_departure_frac : float
        Lower limit of the bound, as a fraction of the fitted power-frequency amplitude.
    gap_cycles, fit_cycles : float
        Start of the fitted stretch after ``t_ext_s`` and its length, in cycles.

    Returns
    -------
    FaintLoops or None
        None when there is too little recovery to fit or no departure after ``t_ext_s``.
    """
    t = np.asarray(t, dtype=np.float64)
    if t.size < 4:
        return None
    dt = float(t[1] - t[0])
    if dt <= 0:
        return None
    n = 1.0 / (f_hz * dt)
    k0 = int(np.searchsorted(t, t_ext_s))
    kb = int(np.searchsorted(t, t_end_s))
    a = k0 + int(np.ceil(gap_cycles * n))
    b = min(a + int(np.ceil(fit_cycles * n)), kb, t.size)
    if b - a < max(int(0.75 * fit_cycles * n), 8):
        return None
    lo = max(k0 - int(0.5 * n), 0)
    x = np.asarray(v[a:b], dtype=np.float64)
    m = _basis(t[a:b] - t[a], f_hz, free_hz)
    coef, *_ = np.linalg.lstsq(m, x, rcond=None)
    sigma = float(np.sqrt(np.mean((x - m @ coef) ** 2)))
    back = _basis(t[lo:a] - t[a], f_hz, free_hz) @ coef
    res = np.abs(np.asarray(v[lo:a], dtype=np.float64) - back)
    # the noise, but never below a per cent of the recovery voltage (noise-free or
    # finely quantised records: the fit's own model error is not an arc)
    thr = max(k_sigma * sigma, min_departure_frac * float(np.hypot(coef[0], coef[1])))
    big = np.flatnonzero(res > thr)
    if big.size == 0 or sigma <= 0:
        return None
    k = lo + int(big[-1]) + 1
    if k <= k0:
        return None
    peak = float(np.max(res[k0 - lo :]))
    if max_departure_v is not None and peak > max_departure_v:
        return None  # larger than the arc itself: a switching or instrument transient
    return FaintLoops(float(t[k]) - 0.5 * dt, thr, peak)


def faint_loops_in_record(
    record: Record,
    role: str,
    *,
    f_hz: float,
    t_ext_s: float,
    t_end_s: float,
    free_hz: float | None = None,
    max_departure_v: float | None = None,
) -> FaintLoops | None:
    """:func:`faint_loops_end` on the channel with ``role`` of ``record``.

    Works on the record segment that holds ``t_ext_s`` (a record gap ends the search).
    """
    ch = record.analog_by_role(role)
    if ch is None:
        return None
    t = record.t_s
    k = int(np.searchsorted(t, t_ext_s))
    seg = next((s for s in record.segments if s.start_idx <= k < s.stop_idx), None)
    if seg is None:
        return None
    lo, hi = seg.start_idx, seg.stop_idx
    v = np.nan_to_num(np.asarray(ch.values[lo:hi], dtype=np.float64))
    return faint_loops_end(
        v,
        t[lo:hi],
        f_hz=f_hz,
        t_ext_s=t_ext_s,
        t_end_s=t_end_s,
        free_hz=free_hz,
        max_departure_v=max_departure_v,
    )


def recovered_tail(
    v: np.ndarray,
    t: np.ndarray,
    *,
    f_hz: float,
    t_end_s: float,
    noise_v: float,
    clean_factor: float = 1.4,
    k_sigma: float = 8.0,
    min_departure_frac: float = 0.01,
    search_cycles: float = 3.0,
) -> FaintLoops | None:
    """An extinction less than three cycles before the end of the observation, or None.

    The last cycle before ``t_end_s`` is fitted with a power-frequency sinusoid plus a
    straight line (the recovery voltage and its slowly varying offset). When that fit is as
    clean as the channel's noise (residual RMS at most ``clean_factor`` × ``noise_v``), the
    phase carries the recovery voltage at the end, and the extinction is the end of the last
    departure from the fit, extrapolated back over up to ``search_cycles``, larger than
    ``k_sigma`` × the noise (and ``min_departure_frac`` of the recovery amplitude).

    Parameters
    ----------
    v, t : numpy.ndarray
        Open-phase voltage [V] and its uniform time axis [s] (one segment).
    f_hz : float
        Power frequency.
    t_end_s : float
        End of the observation (reclose or end of record).
    noise_v : float
        Noise σ of the channel [V].
    clean_factor, k_sigma, min_departure_frac, search_cycles : float
        See above.

    Returns
    -------
    FaintLoops or None
        The instant (with the bound and the largest departure), or None when the last cycle
        is not a clean recovery or nothing departs from it.
    """
    t = np.asarray(t, dtype=np.float64)
    if t.size < 8 or noise_v <= 0:
        return None
    dt = float(t[1] - t[0])
    n = 1.0 / (f_hz * dt)
    kb = min(int(np.searchsorted(t, t_end_s)), t.size)
    a = kb - int(np.ceil(n))
    lo = a - int(np.ceil(search_cycles * n))
    if lo < 0 or a - lo < 4:
        return None

    def basis(x: np.ndarray) -> np.ndarray:
        return _basis(x, f_hz, None, curvature=False)

    x = np.asarray(v[a:kb], dtype=np.float64)
    m = basis(t[a:kb] - t[a])
    coef, *_ = np.linalg.lstsq(m, x, rcond=None)
    sigma = float(np.sqrt(np.mean((x - m @ coef) ** 2)))
    if sigma > clean_factor * noise_v:
        return None
    thr = max(k_sigma * max(sigma, noise_v), min_departure_frac * float(np.hypot(coef[0], coef[1])))
    res = np.abs(np.asarray(v[lo:a], dtype=np.float64) - basis(t[lo:a] - t[a]) @ coef)
    big = np.flatnonzero(res > thr)
    if big.size == 0:
        return None
    k = lo + int(big[-1]) + 1
    return FaintLoops(float(t[k]) - 0.5 * dt, thr, float(np.max(res)))
