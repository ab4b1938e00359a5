"""Restrikes: a recovery of the open phase that collapses again into a burning arc.

While the arc burns, the open-phase voltage is clamped to the arc voltage. A recovery shows as
the voltage rising well above the local arc-voltage level (``excursion_factor`` times the
median ``|v|`` of the burning arc nearby); a restrike is the end of such an excursion by a
collapse back to the arc level — a breakdown of the hot channel, within microseconds — rather
than by the recovery voltage's own zero crossing (after which ``|v|`` rises again within half a
cycle). The instant is the largest one-sample drop of ``|v|`` where the excursion ended; the
restrike voltage is the largest ``|v|`` in the quarter cycle before it. Recoveries shorter than
a cycle are found too: the decision does not wait for a one-cycle window.
"""

from __future__ import annotations

import numpy as np

from recordscan.core.events import Event, Evidence
from recordscan.core.record import Record
from recordscan.core.roles import V_LINE
from recordscan.detect._base import Quantities, finite_values
from recordscan.detect.secondary_arc import ArcTrace
from recordscan.signal.charfunc import fast_median, finite_array_median
from recordscan.signal.filters import moving_average, running_max
from recordscan.signal.onset import runs

__all__ = ["detect_restrikes", "local_arc_level"]


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
        A recovery is ``|v|`` above this multiple of the local arc-voltage level.
    min_recovery_cycles : float
        Shortest recovery that counts.
    settle_cycles : float
        Collapses ending within this many cycles of the start of the trace (itself one
        cycle after the arc start) are not counted: the open phase's switching transient
        (far end's opening, travelling waves, a CVT's response) is still dying out. On the
        simulated corpus 8 of the 9 collapses found there were spurious.
    h_on : float
        The arc signature (harmonic ratio of the trace) must reach this within 2.5 cycles
        after the collapse.
    reset_ratio : float
        A reset of the arc-voltage level: the one-cycle peak before an instant this many times
        the one after it, the arc burning on both sides (see :func:`_level_resets`).

    Returns
    -------
    list of Event
        ``kind="restrike"`` events in time order (empty when none).
    """
    q = quantities or Quantities(record)
    role = V_LINE[trace.phase]
    a = trace.start_idx
    b = trace.stop_idx if until_idx is None else min(until_idx, trace.stop_idx)
    if b - a < 4:
        return []
    v = finite_values(q.values(role)[a:b])
    absv = np.abs(v)
    n = trace.n_cycle
    burning = trace.burning[: b - a]
    level = local_arc_level(absv, burning, block=int(4 * n), floor=4.0 * q.noise(role))
    # a short average (1/16 cycle) keeps single noisy samples from counting as a recovery
    smooth = moving_average(absv, max(1, round(n / 16)))
    exc = smooth > excursion_factor * level
    half = max(1, round(n / 2))
    recovered = running_max(exc.astype(np.float64), half) > 0
    s, e = runs(recovered)
    out: list[Event] = []
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
    out += _level_resets(
        record, trace, q, b, [e.t_s for e in out], ratio=reset_ratio, settle_cycles=settle_cycles
    )
    out.sort(key=lambda e: e.t_s)
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
