"""Restrikes: a recovery of the open phase that collapses again into a burning arc.

A restrike (IEC 60050-441, from memory: a resumption of current a quarter cycle or more after
a current zero; issue 4: "each recovery that collapses again") ends a recovery. While the
gap holds, the open-phase voltage is the recovery voltage: capacitively coupled from the
healthy phases, and on a shunt-compensated line beating with the line's own free
oscillation — over one cycle a power-frequency sinusoid whose amplitude and phase drift
slowly. When the gap breaks down the voltage collapses within microseconds to the
arc-voltage level and the arc's harmonic signature returns.

The default detector (:func:`_departures`) follows that description: it fits the recovery
waveform over the cycle before each instant, carries the fit a quarter cycle forward and
reports where an *established* recovery (a good fit a quarter cycle earlier too, no arc
signature in it) departs abruptly from its prediction by falling, the arc then being seen
again. Two older detectors stay available (off by default; on the simulated corpus they
add spurious restrikes): the end of an excursion of ``|v|`` above the local arc level by a
collapse (:func:`_collapses`), and a reset of a growing arc voltage (:func:`_level_resets`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from recordscan.core.events import Event, Evidence
from recordscan.core.record import Record
from recordscan.core.roles import V_LINE
from recordscan.detect._base import Quantities, finite_values
from recordscan.detect.secondary_arc import ArcTrace
from recordscan.signal.charfunc import fast_median, finite_array_median
from recordscan.signal.filters import moving_average, running_max
from recordscan.signal.onset import runs

__all__ = ["RecoveryFit", "detect_restrikes", "local_arc_level", "recovery_fit"]


def local_arc_level(
    abs_v: np.ndarray, burning: np.ndarray, *, block: int, floor: float
) -> np.ndarray:
    """Median ``|v|`` of the burning samples in each block and the one before it.

    Parameters
    ----------
    abs_v : numpy.ndarray
        ``|v|`` over the secondary-arc period.
    burning : numpy.ndarray
        Arc-burning state per sample.
    block : int
        Block length in samples.
    floor : float
        Lowest level returned (a few noise σ).

    Returns
    -------
    numpy.ndarray
        Level per sample (blocks without a burning sample keep the previous level).
    """
    n = abs_v.shape[0]
    out = np.full(n, floor)
    block = max(1, int(block))
    level = floor
    finite = bool(np.isfinite(abs_v).all())
    for j in range(0, n, block):
        lo = max(0, j - block)
        sel = burning[lo : j + block]
        if sel.any():
            part = abs_v[lo : j + block][sel]
            level = max(finite_array_median(part) if finite else fast_median(part), floor)
        out[j : j + block] = level
    return out


def detect_restrikes(
    record: Record,
    *,
    trace: ArcTrace,
    quantities: Quantities | None = None,
    until_idx: int | None = None,
    excursion_factor: float = 2.0,
    min_recovery_cycles: float = 0.2,
    settle_cycles: float = 2.5,
    h_on: float = 0.15,
    reset_ratio: float = 1.6,
    use_collapse: bool = False,
    use_resets: bool = False,
    use_departure: bool = True,
    dep: dict | None = None,
) -> list[Event]:
    """Restrikes on the open phase within the evaluated arc trace.

    Parameters
    ----------
    record : Record
        The record.
    trace : ArcTrace
        The open phase's arc state (:func:`recordscan.detect.secondary_arc.arc_trace`).
    quantities : Quantities, optional
        Shared computed quantities.
    until_idx : int, optional
        Last sample to consider (default the end of the trace).
    excursion_factor : float
        (collapse detector) A recovery is ``|v|`` above this multiple of the local
        arc-voltage level.
    min_recovery_cycles : float
        (collapse detector) Shortest recovery that counts.
    settle_cycles : float
        (collapse and reset detectors) Nothing ending within this many cycles of the start
        of the trace counts: the switching transient after the pole opening.
    h_on : float
        The arc signature (harmonic ratio of the trace) expected after a restrike.
    reset_ratio : float
        (reset detector) The one-cycle peak before an instant this many times the one after
        it, the arc burning on both sides (see :func:`_level_resets`).
    use_departure, use_collapse, use_resets : bool
        Which detectors run: the departure of an established recovery from its waveform
        (default), the collapse of an excursion above the arc level, the reset of a growing
        arc voltage. On the simulated corpus (seeds 2026, 7, 11, 13; docs/detection.md) the
        departure alone gives observable-restrike precision / recall 0.96 / 0.59; adding the
        collapse detector 0.45 / 0.61, adding the reset detector 0.41 / 0.59 (the resets
        raise the recall on all truth restrikes, re-breakdowns within a cycle included,
        from 0.36 to 0.55 at precision 0.61).
    dep : dict, optional
        Settings passed to :func:`_departures` (its keyword options).

    Returns
    -------
    list of Event
        ``kind="restrike"`` events in time order (empty when none).
    """
    q = quantities or Quantities(record)
    a = trace.start_idx
    b = trace.stop_idx if until_idx is None else min(until_idx, trace.stop_idx)
    if b - a < 4:
        return []
    out: list[Event] = []
    if use_departure:
        out += _departures(record, trace, q, b, h_on=h_on, **(dep or {}))
    if use_collapse:
        out += _collapses(
            record,
            trace,
            q,
            b,
            excursion_factor=excursion_factor,
            min_recovery_cycles=min_recovery_cycles,
            settle_cycles=settle_cycles,
            h_on=h_on,
        )
    if use_resets:
        out += _level_resets(
            record,
            trace,
            q,
            b,
            [e.t_s for e in out],
            ratio=reset_ratio,
            settle_cycles=settle_cycles,
        )
    out.sort(key=lambda e: e.t_s)
    return out


def _collapses(
    record: Record,
    trace: ArcTrace,
    q: Quantities,
    b: int,
    *,
    excursion_factor: float,
    min_recovery_cycles: float,
    settle_cycles: float,
    h_on: float,
) -> list[Event]:
    """Restrikes seen as an excursion of ``|v|`` above the arc level ending in a collapse."""
    role = V_LINE[trace.phase]
    a = trace.start_idx
    n = trace.n_cycle
    out: list[Event] = []
    v = finite_values(q.values(role)[a:b])
    absv = np.abs(v)
    burning = trace.burning[: b - a]
    level = local_arc_level(absv, burning, block=int(4 * n), floor=4.0 * q.noise(role))
    # a short average (1/16 cycle) keeps single noisy samples from counting as a recovery
    smooth = moving_average(absv, max(1, round(n / 16)))
    exc = smooth > excursion_factor * level
    half = max(1, round(n / 2))
    recovered = running_max(exc.astype(np.float64), half) > 0
    s, e = runs(recovered)
    t = record.t_s
    for si, ei in zip(s, e, strict=True):
        if ei >= b - a:
            continue  # still recovered at the end: the final extinction, not a restrike
        if ei < settle_cycles * n:
            continue  # the switching transient after the pole opening, not a recovery
        hits = np.flatnonzero(exc[si:ei])
        if hits.size == 0:
            continue
        first_exc, last_exc = si + int(hits[0]), si + int(hits[-1])
        if last_exc - first_exc < min_recovery_cycles * n:
            continue
        if hits.size < 0.3 * (last_exc - first_exc + 1):
            continue  # scattered exceedances: noise, not a recovery
        # the short average lags: the collapse lies up to 1/16 cycle before last_exc
        lo = max(last_exc - round(n / 16) - 1, first_exc)
        hi = min(last_exc + max(2, int(n / 8)) + 1, b - a)
        drops = absv[lo : hi - 1] - absv[lo + 1 : hi]
        if drops.size == 0:
            continue
        k_rel = lo + 1 + int(np.argmax(drops))
        after = absv[k_rel + 1 : min(k_rel + 1 + half, b - a)]
        if after.size and fast_median(after) > 1.5 * level[k_rel]:
            continue  # the voltage did not fall back to the arc level
        span = max(1, round(n / 40))
        pre = float(np.max(absv[max(k_rel - span, 0) : k_rel]))
        post = float(np.min(absv[k_rel : min(k_rel + span, b - a)]))
        if post > 0.5 * pre:
            continue  # a gradual fall (a beat minimum, a zero crossing), not a collapse
        sig = trace.hratio[k_rel + half : min(k_rel + int(2.5 * n), trace.hratio.shape[0])]
        sig = sig[np.isfinite(sig)]
        if sig.size and not float(np.max(sig)) >= h_on:
            continue  # no arc signature after it
        quarter = max(1, int(n / 4))
        v_pk = float(np.max(absv[max(k_rel - quarter, 0) : k_rel]))
        k = a + k_rel
        dt = 1.0 / q.segment_at(k).rate_hz
        rec_ms = (k_rel - first_exc) / q.segment_at(k).rate_hz * 1e3
        out.append(
            Event(
                kind="restrike",
                t_s=float(t[k]) - 0.5 * dt,
                uncertainty_s=dt,
                method="open-phase voltage collapsed from recovery to the arc level",
                confidence=0.85,
                evidence=Evidence(
                    summary=(
                        f"open-phase voltage collapsed from {v_pk:.3g} V peak to the arc level "
                        f"({level[k_rel]:.3g} V) after about {rec_ms:.0f} ms of recovery"
                    ),
                    quantities={
                        "voltage_v": v_pk,
                        "arc_level_v": float(level[k_rel]),
                        "recovery_s": rec_ms / 1e3,
                    },
                    channels=(q.channel_name(role),),
                ),
                params={
                    "excursion_factor": excursion_factor,
                    "min_recovery_cycles": min_recovery_cycles,
                },
                phase=trace.phase,
            )
        )
    return out


def _reset_crossing(vs: np.ndarray, k: int, nc: int) -> int:
    """The zero crossing of ``vs`` near ``k`` with the largest fall of the half-cycle peak."""
    lo, hi = max(k - 2 * nc, 0), min(k + 2 * nc, vs.shape[0])
    seg = vs[lo:hi]
    z = np.flatnonzero(np.signbit(seg[:-1]) != np.signbit(seg[1:])) + 1
    best, best_r = k, 0.0
    for i in range(1, z.size - 1):
        if abs(lo + int(z[i]) - k) > nc:
            continue
        before = float(np.max(np.abs(seg[z[i - 1] : z[i]])))
        after = float(np.max(np.abs(seg[z[i] : z[i + 1]])))
        if after > 0 and before / after > best_r:
            best, best_r = lo + int(z[i]), before / after
    return best


def _level_resets(
    record: Record,
    trace: ArcTrace,
    q: Quantities,
    b: int,
    known_s: list[float],
    *,
    ratio: float,
    settle_cycles: float,
) -> list[Event]:
    """Restrikes seen as a reset of the arc-voltage level within a burning period.

    An elongating secondary arc's voltage grows; when the arc goes out at a current zero, the
    gap recovers for a fraction of a cycle and breaks down again, the new arc is short and
    its voltage starts low again. The peak ``|v|`` over the cycle before such an instant is
    ``ratio`` times or more the peak over the cycle after it (skipping a quarter cycle), and
    the arc signature is present on both sides; the cycle before it lies after the first
    ``settle_cycles`` of the trace (switching transient). The instant is the largest
    The arc goes out at a current zero, where a long (resistive) arc's voltage changes sign:
    the instant is the zero crossing of the voltage, within a cycle of the reset point,
    between the half-cycle loops whose peak ratio (before / after) is the largest. The
    restrike voltage reported is the largest ``|v|`` in the quarter cycle after that zero
    (the re-ignition peak).
    """
    role = V_LINE[trace.phase]
    a = trace.start_idx
    n = trace.n_cycle
    nc = max(4, round(n))
    raw = finite_values(q.values(role)[a:b])
    v = np.abs(raw)
    m = v.shape[0]
    if m < 6 * nc:
        return []
    # zero crossings of a lightly smoothed copy (1/8 cycle, centred) place the current zero
    w8 = max(1, nc // 8)
    vs = np.convolve(raw, np.ones(w8) / w8, mode="same")
    burning = trace.burning[:m]
    # causal and anti-causal one-cycle peaks
    back = running_max(v, nc)  # max over [k - nc + 1, k]
    fwd = np.full(m, np.nan)
    q4 = nc // 4
    fwd[: m - nc - q4] = back[nc + q4 : m]  # max over [k + q4 + 1, k + q4 + nc]
    with np.errstate(invalid="ignore", divide="ignore"):
        r = back / fwd
    cand = np.flatnonzero(np.nan_to_num(r) >= ratio)
    out: list[Event] = []
    t = record.t_s
    last = -(10**9)
    for k in cand:
        if k < max(2 * nc, (settle_cycles + 1) * n) or k + 2 * nc >= m or k - last < 2 * nc:
            continue
        if not (np.any(burning[k - 2 * nc : k - nc]) and np.any(burning[k + nc : k + 2 * nc])):
            continue
        k_rel = _reset_crossing(vs, k, nc)
        t_k = float(t[a + k_rel])
        last = k
        if any(abs(t_k - x) < 2.5 / q.f_hz for x in known_s):
            # the same restrike, already found as the collapse of its recovery
            continue
        # the re-ignition peak in the quarter cycle after the current zero
        v_pk = float(np.max(v[k_rel : min(k_rel + nc // 4 + 1, m)]))
        dt = 1.0 / q.segment_at(a + k_rel).rate_hz
        out.append(
            Event(
                kind="restrike",
                t_s=t_k - 0.5 * dt,
                uncertainty_s=0.25 / q.f_hz,
                method="reset of the arc-voltage level (a new, short arc after a brief recovery)",
                confidence=0.7,
                evidence=Evidence(
                    summary=(
                        f"open-phase voltage peak fell from {float(back[k]):.3g} V over the "
                        f"cycle before to {float(fwd[k]):.3g} V over the cycle after, the arc "
                        "signature present on both sides"
                    ),
                    quantities={
                        "voltage_v": v_pk,
                        "peak_before_v": float(back[k]),
                        "peak_after_v": float(fwd[k]),
                    },
                    channels=(q.channel_name(role),),
                ),
                params={"reset_ratio": ratio},
                phase=trace.phase,
            )
        )
    return out


@dataclass(frozen=True)
class RecoveryFit:
    """Sliding fits of a recovery waveform (see :func:`recovery_fit`).

    Row ``j`` belongs to the window ``[j, j + window)``; its boundary is sample
    ``j + window``.

    Attributes
    ----------
    residual : numpy.ndarray
        Rms residual of the fit over the window.
    amplitude : numpy.ndarray
        Peak of the fitted oscillation over the window (``√2`` × rms about its mean).
    departure : numpy.ndarray
        Rms difference between the samples ``[j + window, j + window + ahead)`` and the fit
        carried forward over them.
    back : numpy.ndarray
        Rms difference between the samples ``[j - ahead, j)`` and the fit carried backward
        (``inf`` for the first ``ahead`` rows).
    predicted, following : numpy.ndarray
        The fit carried forward and the samples it is compared with, ``(rows, ahead)``.
    """

    residual: np.ndarray
    amplitude: np.ndarray
    departure: np.ndarray
    back: np.ndarray
    predicted: np.ndarray
    following: np.ndarray


def recovery_fit(v: np.ndarray, n_cycle: float, *, window: int, ahead: int) -> RecoveryFit:
    """Fit ``a·cos + b·sin + τ·(c·cos + d·sin) + e`` at the power frequency over each window.

    The model is a power-frequency sinusoid whose amplitude and phase drift linearly over the
    window, plus an offset: over a cycle it represents a coupled recovery voltage and, to first
    order in the detuning, the beat of a shunt-compensated line's free oscillation with it.
    On uniform samples the basis in time relative to the window is the same for every window
    (a time shift only rotates ``cos``/``sin`` into each other), so one pseudo-inverse serves
    all windows.

    Parameters
    ----------
    v : numpy.ndarray
        Uniformly sampled voltage.
    n_cycle : float
        Samples per power-frequency cycle.
    window, ahead : int
        Fit length and prediction length in samples.

    Returns
    -------
    RecoveryFit
        One row per window position (``len(v) - window - ahead + 1`` rows).

    Raises
    ------
    ValueError
        When ``v`` is shorter than ``window + ahead`` samples.
    """
    w, f = int(window), int(ahead)
    if w < 6 or f < 1 or v.shape[0] < w + f:
        raise ValueError("recovery_fit needs window >= 6, ahead >= 1 and len(v) >= window + ahead")
    om = 2.0 * np.pi / n_cycle
    tau = np.arange(-f, w + f) - (w - 1.0)
    c, s_ = np.cos(om * tau), np.sin(om * tau)
    x = np.column_stack([c, s_, tau / n_cycle * c, tau / n_cycle * s_, np.ones_like(tau)])
    xb, xw, xf = x[:f], x[f : f + w], x[f + w :]
    # xw = Q·R: the fit of a window is Q·(Qᵀ·v), its coefficients R⁻¹·Qᵀ·v
    qm, rm = np.linalg.qr(xw)
    rinv = np.linalg.inv(rm)
    v = np.asarray(v, dtype=np.float64)
    rows = v.shape[0] - w - f + 1
    # Qᵀ·v for every window at once (one correlation per basis column)
    proj = np.empty((rows, qm.shape[1]))
    for col in range(qm.shape[1]):
        proj[:, col] = np.correlate(v[: rows + w - 1], qm[:, col], mode="valid")
    csum = np.concatenate(([0.0], np.cumsum(v * v)))
    energy = csum[w : w + rows] - csum[:rows]
    rin = np.sqrt(np.maximum(energy - np.sum(proj * proj, axis=1), 0.0) / w)
    # the fitted oscillation about its mean: (I - 11ᵀ/w)·Q·p
    centred = qm - qm.mean(axis=0, keepdims=True)
    gram = centred.T @ centred
    amp = np.sqrt(np.maximum(2.0 / w * np.einsum("ij,jk,ik->i", proj, gram, proj), 0.0))
    coef = proj @ rinv.T
    pred = coef @ xf.T
    fut = sliding_window_view(v[w:], f)[:rows]
    ef = np.sqrt(np.mean((fut - pred) ** 2, axis=1))
    eb = np.full(rows, np.inf)
    if rows > f:
        # row j's backward stretch [j - f, j)
        prev = sliding_window_view(v, f)[: rows - f]
        eb[f:] = np.sqrt(np.mean((prev - coef[f:] @ xb.T) ** 2, axis=1))
    return RecoveryFit(rin, amp, ef, eb, pred, fut)


def _departures(
    record: Record,
    trace: ArcTrace,
    q: Quantities,
    b: int,
    *,
    h_on: float,
    fit_cycles: float = 1.0,
    ahead_cycles: float = 0.25,
    residual_max: float = 0.12,
    amplitude_min: float = 8.0,
    departure_min: float = 0.5,
    score_min: float = 5.0,
    collapse_max: float = 0.9,
    h_recovered: float = 0.06,
    after_rms_max: float = 0.75,
    back_max: float = 0.4,
    h_after_min: float | None = None,
    jump_min: float = 0.3,
) -> list[Event]:
    """Restrikes seen as the end of an established recovery waveform.

    Over each ``fit_cycles`` window the open-phase voltage is fitted by :func:`recovery_fit`
    and the fit is carried ``ahead_cycles`` forward and backward. A restrike ends an
    *established* recovery: the fit over the cycle ending a quarter cycle earlier is good
    (residual below ``residual_max`` of its amplitude, amplitude above ``amplitude_min``
    noise σ), the one-cycle harmonic ratio there is below ``h_recovered``, and the last
    cycle's fit carried backward matches the quarter cycle before it (rms error below
    ``back_max`` of the amplitude). The waveform then departs from the forward prediction
    (rms departure above ``departure_min`` of the amplitude and ``score_min`` times the
    recovery's fit residual plus noise) abruptly (the first two samples by ``jump_min`` of
    the amplitude) and by falling (rms below ``collapse_max`` of the predicted one). The arc
    must then be seen again: its harmonic signature (``h_after_min``, default ``h_on``)
    within 2.5 cycles, or the voltage held below ``after_rms_max`` of the recovery amplitude
    over the cycle after (a brief, faint arc on a compensated line). Candidates within 1.25
    cycles are one restrike, placed at the boundary whose first sample departs most.

    Parameters
    ----------
    record, trace, q, b
        The record, its arc trace, shared quantities and the end of the range (exclusive).
    h_on, fit_cycles, ahead_cycles, residual_max, amplitude_min, departure_min, score_min,
    collapse_max, h_recovered, after_rms_max, back_max, h_after_min, jump_min
        The settings above (defaults chosen on the simulated corpus seeds 2026, 7, 11, 13
        and the hand-built sweep; docs/detection.md).

    Returns
    -------
    list of Event
        ``kind="restrike"`` events.
    """
    role = V_LINE[trace.phase]
    n = trace.n_cycle
    a0 = max(trace.start_idx - int(n / 2), q.segment_at(trace.start_idx).start_idx)
    v = finite_values(q.values(role)[a0:b]).astype(np.float64)
    m = v.shape[0]
    w = max(8, round(fit_cycles * n))
    f = max(2, round(ahead_cycles * n))
    lag = max(1, round(n / 4))
    if m < w + f + lag + 1:
        return []
    fits = recovery_fit(v, n, window=w, ahead=f)
    rin, amp, ef, eb = fits.residual, fits.amplitude, fits.departure, fits.back
    pred, fut = fits.predicted, fits.following
    p_rms = np.sqrt(np.mean(pred**2, axis=1))
    collapse = np.sqrt(np.mean(fut**2, axis=1)) / np.maximum(p_rms, 1e-30)
    sig = max(q.noise(role), 1e-12)
    score = ef / (rin + sig)
    # a breakdown is abrupt: the first samples after the boundary already depart
    step = np.abs(fut[:, : min(2, f)] - pred[:, : min(2, f)])
    jump = np.max(step, axis=1)
    jump_score = step[:, 0] / (rin + sig)
    kk = np.arange(rin.shape[0]) + w + a0  # the boundary: first sample after the window
    # harmonic ratio of the cycle before each boundary, a quarter cycle earlier
    hrel = kk - lag - trace.start_idx
    h_before = np.full(kk.shape[0], np.inf)
    inside = (hrel >= 0) & (hrel < trace.hratio.shape[0])
    h_before[inside] = np.nan_to_num(trace.hratio[hrel[inside]], nan=np.inf)
    rin_l = np.full(kk.shape[0], np.inf)
    amp_l = np.zeros(kk.shape[0])
    rin_l[lag:], amp_l[lag:] = rin[:-lag], amp[:-lag]
    # the departure counts against the residual of the established recovery (the fit a
    # quarter cycle earlier may be the cleaner one when the boundary falls a sample late)
    score = ef / (np.minimum(rin, rin_l) + sig)
    with np.errstate(invalid="ignore", divide="ignore"):
        cand = (
            (rin_l < residual_max * amp_l)
            & (amp_l > amplitude_min * sig)
            & (h_before < h_recovered)
            & (eb < back_max * amp)
            & (ef > departure_min * amp)
            & (score > score_min)
            & (collapse < collapse_max)
            & (jump > jump_min * amp)
        )
    idx = np.flatnonzero(cand)
    out: list[Event] = []
    if idx.size == 0:
        return out
    t = record.t_s
    hr = trace.hratio
    h_back = h_on if h_after_min is None else h_after_min
    # a restrike needs an established recovery before it: two are never within 1.25 cycles
    for grp in np.split(idx, np.flatnonzero(np.diff(idx) > 1.25 * n) + 1):
        j = int(grp[np.argmax(jump_score[grp])])
        k = int(kk[j])
        kr = k - a0
        h_lo = k - trace.start_idx
        sig_after = hr[max(h_lo, 0) : max(h_lo + int(2.5 * n), 0)]
        sig_after = sig_after[np.isfinite(sig_after)]
        h_after = float(np.max(sig_after)) if sig_after.size else float("nan")
        cyc_after = v[kr : kr + round(n)]
        held = float(np.sqrt(2.0 * np.mean(cyc_after**2)) / amp[j]) if cyc_after.size else 1.0
        if not (h_after >= h_back or held < after_rms_max):
            continue  # the waveform changed but no arc followed (a transient of the recovery)
        dt = 1.0 / q.segment_at(k).rate_hz
        v_pk = float(np.max(np.abs(v[kr - lag : kr])))
        out.append(
            Event(
                kind="restrike",
                t_s=float(t[k]) - 0.5 * dt,
                uncertainty_s=0.25 / q.f_hz,
                method="open-phase voltage left its established recovery waveform and collapsed",
                confidence=0.8,
                evidence=Evidence(
                    summary=(
                        f"a recovery voltage of {float(amp_l[j]):.3g} V peak, established over "
                        f"the cycle before, departed from its waveform ({float(ef[j]):.3g} V "
                        f"rms) and fell to {float(collapse[j]):.0%} of it; "
                        + (
                            f"arc signature {h_after:.2f} after it"
                            if h_after >= h_back
                            else f"held at {held:.0%} of it over the next cycle"
                        )
                    ),
                    quantities={
                        "voltage_v": v_pk,
                        "recovery_peak_v": float(amp_l[j]),
                        "departure_v": float(ef[j]),
                        "harmonic_ratio_after": h_after,
                    },
                    channels=(q.channel_name(role),),
                ),
                params={"departure_score_min": score_min},
                phase=trace.phase,
            )
        )
    return out
