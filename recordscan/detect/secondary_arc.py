"""Secondary-arc period and final extinction on the open phase.

While the secondary arc burns, the line-side voltage of the open phase is essentially the arc
voltage: square-wave-like (an ideal square wave has odd harmonics 1/k and THD 48.34 %,
derived from its Fourier series), a few per cent of the phase voltage. Once the arc is extinct
the open phase carries the recovery voltage coupled from the healthy phases: nearly
sinusoidal, usually much larger (uncompensated lines: (C1 − C0)/(2·C1 + C0) ≈ 15 % of the phase
voltage, a derived circuit result), beating on shunt-compensated lines.

The detector combines three cues:

1. a *harmonic signature* — the one-cycle ratio ``H`` of harmonics 3, 5 and 7 to the RMS
   (:func:`recordscan.signal.spectral.harmonic_ratio`), with two thresholds (hysteresis) so
   that noise, quantisation and CVT transients (low-frequency, not odd harmonics) do not
   flip the state;
2. the *level* of the open-phase fundamental relative to the healthy-phase voltage — a
   recovered phase whose voltage stays below ``level_min`` is flagged (bolted fault, or a
   very well compensated line);
3. a *sample-level refinement*: a sinusoid-plus-drift model of the recovery voltage is fitted
   just after the coarse instant and extrapolated backwards; the extinction is the first
   sample after the last one that departs from it by more than the arc-voltage scale — the
   instant the square wave stopped flipping.

The final extinction is the end of the last burning stretch, provided the phase stays clear
until the end of the observation (reclose or record end); otherwise the result is censored.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from recordscan.core.events import Event, Evidence
from recordscan.core.record import Record
from recordscan.core.roles import ARC_CURRENT, PHASES, V_LINE
from recordscan.detect._base import Quantities, finite_median, finite_values, where
from recordscan.detect.arc_results import ArcTrace, ExtinctionResult
from recordscan.detect.faint_loops import faint_loops_in_record, recovered_tail
from recordscan.detect.recovery_fit import refine_full_rate, refine_on_recovery_fit
from recordscan.detect.ringdown import faint_signature_end, ringdown_extinction
from recordscan.errors import DetectionError
from recordscan.signal.charfunc import robust_scale, step_score
from recordscan.signal.filters import running_max
from recordscan.signal.onset import hysteresis_state, runs

__all__ = [
    "ArcTrace",
    "ExtinctionResult",
    "arc_trace",
    "detect_extinction",
    "with_burning_after",
]


def _open_voltage_role(record: Record, phase: str) -> str:
    role = V_LINE[phase]
    if record.analog_by_role(role) is None:
        raise DetectionError(
            f"{where(record)}: the line-side voltage of the open phase ({role}) is needed to "
            "follow the secondary arc; a bus-side VT cannot see the open phase"
        )
    return role


def arc_trace(
    record: Record,
    *,
    phase: str,
    start_s: float,
    until_s: float,
    quantities: Quantities | None = None,
    h_on: float = 0.15,
    h_off: float = 0.08,
    min_burn_cycles: float = 1.0,
    significance: float = 2.0,
) -> ArcTrace:
    """Compute the arc-burning state of the open phase over ``[start_s + 1 cycle, until_s)``.

    Parameters
    ----------
    record : Record
        The record.
    phase : str
        Open phase.
    start_s, until_s : float
        Secondary arc start and end of the observation.
    quantities : Quantities, optional
        Shared computed quantities.
    h_on, h_off : float
        Harmonic-ratio thresholds: burning once ``H ≥ h_on``, clear once ``H < h_off``
        (an ideal square wave gives 0.374 with harmonics 3, 5, 7; a sinusoid 0).
    min_burn_cycles : float
        Burning stretches shorter than this are blips and are ignored.
    significance : float
        The harmonic power must exceed this multiple of the expected noise power in the
        bins to count as an arc signature.

    Returns
    -------
    ArcTrace
        The per-sample state.
    """
    q = quantities or Quantities(record)
    role = _open_voltage_role(record, phase)
    k0 = q.idx(start_s)
    n = q.n_cycle(k0)
    a = min(k0 + int(np.ceil(n)), record.n_samples)
    b = max(min(q.idx(until_s), record.n_samples), a)
    if until_s >= record.t_s[-1]:
        b = record.n_samples
    h_raw = np.asarray(q.hratio(role, a, b)[a:b])
    rms = q.rms(role)[a:b]
    # remove the expected noise power from the harmonic bins; demand significance over it
    p_noise = q.hratio_noise(role, a)
    with np.errstate(invalid="ignore"):
        p_h = (h_raw * rms) ** 2
        h = np.sqrt(np.maximum(p_h - p_noise, 0.0)) / np.sqrt(np.maximum(rms**2 - p_noise, 1e-30))
        h = np.where(p_h > significance * p_noise, h, np.minimum(h, 0.5 * h_off))
    h[~np.isfinite(h_raw)] = np.nan
    mag = np.abs(q.phasor(role)[a:b])
    others = [
        np.abs(q.phasor(V_LINE[p])[a:b])
        for p in PHASES
        if p != phase and q.values(V_LINE[p]) is not None
    ]
    if others:
        stack = np.vstack(others)
        ok = np.isfinite(stack)
        cnt = ok.sum(axis=0)
        with np.errstate(invalid="ignore", divide="ignore"):
            ref = np.where(cnt > 0, np.where(ok, stack, 0.0).sum(axis=0) / cnt, np.nan)
    else:
        ref = np.full(b - a, np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        level = mag / ref
    burning = hysteresis_state(h, on=h_on, off=h_off)
    burning &= np.isfinite(h)
    s, e = runs(burning)
    for si, ei in zip(s, e, strict=True):
        if si > 0 and ei - si < min_burn_cycles * n:  # a run from the start is the arc itself
            burning[si:ei] = False
    amp = None
    if np.any(burning):
        v = np.abs(np.nan_to_num(q.values(role)[a:b]))
        amp = float(np.percentile(v[burning], 90))
    return ArcTrace(phase, a, b, h, level, burning, amp, n)


def with_burning_after(trace: ArcTrace, restrike_idx: list[int], stop_idx: int) -> ArcTrace:
    """Return the trace with the arc marked burning for half a cycle after each restrike.

    A restrike means the arc burns again, even when it goes out too soon for the one- or
    two-cycle harmonic window to show it; the final extinction cannot precede it.
    """
    if not restrike_idx:
        return trace
    burning = trace.burning.copy()
    half = max(1, int(np.ceil(trace.n_cycle / 2)))
    for k in restrike_idx:
        lo = k - trace.start_idx
        hi = min(lo + half, stop_idx - trace.start_idx, burning.shape[0] - 1)
        if 0 <= lo < hi:
            burning[lo:hi] = True
    return dataclasses.replace(trace, burning=burning)


def _with_weak_signature(tr: ArcTrace, *, weak_margin: float) -> ArcTrace:
    """Add to the burning state the stretches of a weak but clear arc signature."""
    h = tr.hratio
    valid = np.flatnonzero(np.isfinite(h))
    n_tail = int(2 * tr.n_cycle)
    if valid.size < 3 * n_tail:
        return tr
    floor = finite_median(h[valid[-n_tail:]])
    if not np.isfinite(floor):
        return tr
    with np.errstate(invalid="ignore"):
        weak = h > max(3.0 * floor, floor + weak_margin)
    ws, we = runs(weak)
    for si, ei in zip(ws, we, strict=True):
        if ei - si < 4 * tr.n_cycle:  # a transient after the extinction is shorter
            weak[si:ei] = False
    if not np.any(weak & ~tr.burning):
        return tr
    return dataclasses.replace(tr, burning=tr.burning | weak)


def _beat_onset(
    q: Quantities, phase: str, *, lo: int, hi: int, n: float, thr: float = 0.12
) -> int | None:
    """Start of the open phase's final free (beating) oscillation, or None.

    While the arc burns the open-phase voltage is forced: its phasor relative to
    ``−(sum of the healthy-phase voltages)`` keeps a steady angle and size. Once extinct, a
    compensated line's open phase rings at its own frequency and the ratio rotates and
    breathes at the beat frequency. The change per cycle of ``log`` of that ratio (angle and
    log-magnitude) above ``thr``, bridged over five cycles, must last to the end.
    """
    others = [p for p in ("A", "B", "C") if p != phase]
    if any(q.values(V_LINE[p]) is None for p in (phase, *others)):
        return None
    lag = max(1, round(n))
    if hi - lo < 6 * lag:
        return None
    v = q.phasor(V_LINE[phase])[lo:hi]
    ref = -(q.phasor(V_LINE[others[0]])[lo:hi] + q.phasor(V_LINE[others[1]])[lo:hi])
    with np.errstate(invalid="ignore", divide="ignore"):
        z = np.log(v / ref)
    ok = np.isfinite(z)
    if ok.sum() < 6 * lag:
        return None
    z = np.where(ok, z, 0.0)
    ang = np.unwrap(z.imag)
    w = z.real + 1j * ang
    c = np.zeros(w.shape[0])
    c[lag:] = np.abs(w[lag:] - w[:-lag])
    c[~ok] = 0.0
    active = running_max((c > thr).astype(np.float64), int(5 * lag)) > 0
    if not active[-1]:
        return None
    idle = np.flatnonzero(~active)
    if idle.size == 0:
        return None
    start = int(idle[-1]) + 1
    # walk back to where the one-cycle change left the forced (arc) level
    before = c[max(start - 5 * lag, lag) : max(start - lag, lag + 1)]
    base = float(np.median(before)) if before.size else 0.0
    quiet = np.flatnonzero(c[: start + 1] <= max(2.0 * base, thr / 4))
    onset = int(quiet[-1]) + 1 if quiet.size else start
    return lo + max(min(onset, start), 0)


def _last_level_step(
    tr: ArcTrace, k_f: int, n: float, *, floor_idx: int, rel: float = 0.1, span: float = 10.0
) -> int | None:
    """The last step of the open-phase level in the ``span`` cycles before ``k_f``.

    The one-cycle level ramps over a cycle after a change, so ``step_score`` with a half-width
    of one cycle peaks half a cycle after it. A step must exceed ``rel`` of the smaller side.
    Returns the index (into the trace) of the change, or None.
    """
    w = max(2, round(n))
    lo = max(k_f - int(span * n), floor_idx, w)
    hi = min(k_f + w, tr.level_pu.shape[0] - w)
    if hi - lo < 2 * w:
        return None
    lvl = np.nan_to_num(tr.level_pu, nan=0.0)
    score = step_score(lvl[lo - w : hi + w], n=w)[w : w + hi - lo]
    if not np.any(np.isfinite(score)):
        return None
    ref_lvl = max(float(np.median(lvl[max(lo - w, 0) : lo])), 1e-6)
    big = np.flatnonzero(np.abs(np.nan_to_num(score)) > rel * ref_lvl)
    if big.size == 0:
        return None
    # the last run of large scores; its peak is half a cycle after the change
    ends = np.flatnonzero(np.diff(big) > 1)
    start = int(big[ends[-1] + 1]) if ends.size else int(big[0])
    run = np.arange(start, int(big[-1]) + 1)
    peak = int(run[np.argmax(np.abs(score[run]))])
    return max(lo + peak - w // 2, 0)


def _floor_reached(h: np.ndarray, floor: float, contrast: float) -> int | None:
    """Where the falling harmonic ratio reaches its floor: a straight line through its fall
    from 70 % to 20 % of the contrast, extended to the floor (index into ``h``)."""
    if contrast <= 0:
        return None
    hi = np.flatnonzero(h <= floor + 0.7 * contrast)
    if hi.size == 0:
        return None
    i70 = int(hi[0])
    lo = np.flatnonzero(h[i70:] <= floor + 0.2 * contrast)
    if lo.size == 0:
        return None
    i20 = i70 + int(lo[0])
    if i20 - i70 < 3:
        return i20
    x = np.arange(i70, i20 + 1, dtype=np.float64)
    y = h[i70 : i20 + 1]
    ok = np.isfinite(y)
    if ok.sum() < 3:
        return i20
    slope, icpt = np.polyfit(x[ok], y[ok], 1)
    if slope >= 0:
        return i20
    return int(np.clip(round((floor - icpt) / slope), i20, h.shape[0] - 1))


def detect_extinction(
    record: Record,
    *,
    phase: str,
    arc_start_s: float,
    until_s: float,
    quantities: Quantities | None = None,
    h_on: float = 0.15,
    h_off: float = 0.08,
    level_min: float = 0.03,
    trace: ArcTrace | None = None,
    refine_record: Record | None = None,
    weak_margin: float = 0.015,
    weak_tail: float = 0.06,
    beat_check: bool = False,
    free_frequency_hz: float | None = None,
) -> ExtinctionResult:
    """Find the final extinction of the secondary arc on ``phase``.

    Parameters
    ----------
    record : Record
        The record.
    phase : str
        Open phase.
    arc_start_s : float
        Start of the secondary arc (the last pole opening of the phase).
    until_s : float
        End of the observation (reclose instant, or the end of the record).
    quantities : Quantities, optional
        Shared computed quantities.
    h_on, h_off : float
        Harmonic-ratio thresholds (see :func:`arc_trace`).
    level_min : float
        A recovered phase below this fraction of the healthy-phase voltage is flagged.
    trace : ArcTrace, optional
        A trace already computed with the same settings.
    weak_margin : float
        A weak arc signature: ``H`` above ``max(3·floor, floor + weak_margin)`` for four
        cycles,
        the floor being the median ``H`` of the last two cycles observed (a clean recovery).
        Catches arcs whose voltage is swamped by a sinusoid induced along the open phase.
    weak_tail : float
        If the harmonic ratio over the last three cycles observed is at least this, the arc
        still burns (weakly) at the end of the observation: censored. A recovered phase
        settles near 0 once its switching transient has died out.
    beat_check : bool
        The line is shunt-compensated: also look for the onset of the open phase's free
        oscillation (its voltage phasor stops being locked to the healthy phases and beats),
        and take it when it is more than two cycles away from the harmonic-signature instant.
    free_frequency_hz : float, optional
        The open phase's free-oscillation frequency expected from the line description
        (:func:`recordscan.physics.coupling.open_phase_coupling`); guides the ring-down fit
        (:mod:`recordscan.detect.ringdown`) on compensated lines.
    refine_record : Record, optional
        The same record at its full sample rate when ``record`` was block-averaged
        (:func:`recordscan.detect._base.decimate_record`): the instant is then refined on
        the full-rate samples.

    Returns
    -------
    ExtinctionResult
        The final extinction, or a censored result.

    Raises
    ------
    DetectionError
        When the open phase's line-side voltage is not recorded and no arc-current channel
        exists.
    """
    q = quantities or Quantities(record)
    if q.values(ARC_CURRENT) is not None:
        return _from_arc_current(record, q, phase, arc_start_s, until_s)
    tr = trace or arc_trace(
        record,
        phase=phase,
        start_s=arc_start_s,
        until_s=until_s,
        quantities=q,
        h_on=h_on,
        h_off=h_off,
    )
    role = V_LINE[phase]
    t = record.t_s
    a, b, n = tr.start_idx, tr.stop_idx, tr.n_cycle
    observed = float(t[b - 1]) if b > 0 else float(until_s)
    params = {"h_on": h_on, "h_off": h_off, "level_min": level_min}
    chans = (q.channel_name(role),)
    tr = _with_weak_signature(tr, weak_margin=weak_margin)
    s, e = runs(tr.burning)
    intervals = tuple(
        (float(t[a + si]) - n / 2 / q.segment_at(a).rate_hz, float(t[a + ei - 1]))
        for si, ei in zip(s, e, strict=True)
    )
    valid = np.isfinite(tr.hratio)
    if not np.any(valid):
        return ExtinctionResult(
            None,
            True,
            observed,
            arc_start_s,
            (),
            None,
            ("the open phase was observed for less than a cycle after the arc start",),
        )
    last_valid = int(np.flatnonzero(valid)[-1])

    def late_or_none(why: str) -> ExtinctionResult | None:
        # an extinction too close to the end for the harmonic window (not with the beat)
        if beat_check:
            return None
        return _late_extinction(
            record,
            q,
            role=role,
            phase=phase,
            arc_start_s=arc_start_s,
            observed=observed,
            intervals=intervals,
            arc_amp=tr.arc_amplitude_v,
            why=why,
        )

    if s.size and e[-1] > last_valid:
        late = late_or_none("the arc signature reaches the end of the observation")
        if late is not None:
            return late
        return ExtinctionResult(
            None,
            True,
            observed,
            arc_start_s,
            intervals,
            tr.arc_amplitude_v,
            ("the arc still burns at the end of the observation",),
        )
    warns: list[str] = []
    v = finite_values(q.values(role))
    rd = None
    lo_rd = max(a - int(np.ceil(n)), q.segment_at(a).start_idx)
    if beat_check and q.segment_at(b - 1).start_idx <= lo_rd:
        rd = ringdown_extinction(v, t, lo=lo_rd, hi=b, f_hz=q.f_hz, fn_guess_hz=free_frequency_hz)
    # a clear free oscillation at the line's natural frequency: the phase is not clamped
    # (overrides the bolted-fault guard below)
    rings = rd is not None and (
        free_frequency_hz is None or abs(rd.free_frequency_hz / free_frequency_hz - 1.0) < 0.1
    )
    n_tail = int(3 * n)
    valid_idx = np.flatnonzero(valid)
    if valid_idx.size > 2 * n_tail:
        h_tail = finite_median(tr.hratio[valid_idx[-n_tail:]])
        if h_tail >= weak_tail:
            late = late_or_none(
                f"a weak arc signature (harmonic ratio {h_tail:.2f}) reaches the last three cycles"
            )
            if late is not None:
                return late
            return ExtinctionResult(
                None,
                True,
                observed,
                arc_start_s,
                intervals,
                tr.arc_amplitude_v,
                (
                    f"a weak arc signature (harmonic ratio {h_tail:.2f}) persists to the end "
                    "of the observation: the arc is taken as still burning",
                ),
            )
    if s.size == 0:
        lvl = tr.level_pu[valid]
        if lvl.size and finite_median(lvl) < level_min:
            return ExtinctionResult(
                None,
                True,
                observed,
                arc_start_s,
                (),
                None,
                (
                    "no arc signature and no recovery voltage on the open phase: a bolted "
                    "(permanent) fault, or the voltage is not measured on the line side",
                ),
            )
        kc = a
        arc_amp = float(robust_scale(v[a : a + int(n)]) or 0.0)
        method = "recovery voltage from the start (arc extinct at once)"
        warns.append("no arc signature after the pole opening: the arc went out at once")
    else:
        kc = a + int(e[-1])
        arc_amp = tr.arc_amplitude_v or 0.0
        method = "arc-voltage harmonic signature, refined on the recovery-voltage fit"
    seg_lo = q.segment_at(kc).start_idx
    lo = max(a - int(np.ceil(n)), seg_lo)
    dt = 1.0 / q.segment_at(kc).rate_hz
    m = q.hratio_cycles(q.segment_at(kc).rate_hz)
    win = max(1, round(m * n))
    # The causal harmonic window is wholly clean one window after the extinction: find where
    # H settled on its recovered floor (a long arc's voltage can be only mildly distorted,
    # so H may fall below the clear threshold well before the arc goes out).
    tail = tr.hratio[kc - a :]
    k_f = kc
    if tail.size > win:
        h_floor = finite_median(tail[win:])
        head = tr.hratio[max(kc - a - win, 0) : kc - a] if s.size else tail[:win]
        head = head[np.isfinite(head)]
        h_ref = float(np.max(head)) if head.size else float("nan")
        if np.isfinite(h_floor) and np.isfinite(h_ref):
            contrast = max(h_ref - h_floor, 0.0)
            early = tail[: 3 * win]
            below = np.flatnonzero(early <= h_floor + 0.15 * contrast)
            k_f = kc + (int(below[0]) if below.size else 0)
            k_floor = _floor_reached(early, h_floor, contrast)
            if k_floor is not None:
                k_f = kc + k_floor
    k_est = max(k_f - win + 1, lo)
    ref = refine_on_recovery_fit(v, t, kc=k_f, n=n, f_hz=q.f_hz, lo=lo, hi=b, arc_amp=arc_amp)
    if ref is not None and not k_est - 0.3 * n <= ref[0] <= k_f:
        ref = None  # the fit's departure is not where the harmonic window says
    step = None if ref is not None else _last_level_step(tr, k_f - a, n, floor_idx=lo - a)
    if ref is not None:
        k_ext, thr = ref
        unc = max(dt, 0.05 * q.cycle_s)
    elif step is not None:
        k_ext, thr = a + step, float("nan")
        unc = 0.25 * q.cycle_s
        method = "last step of the open-phase voltage level after the arc signature"
    else:
        k_ext, thr = k_est, float("nan")
        unc = 0.25 * q.cycle_s
        warns.append("extinction instant from the harmonic window alone (not refined)")
    kc = k_f
    if s.size == 0:
        k_ext = max(k_ext, q.idx(arc_start_s))
    if k_ext < seg_lo or kc - seg_lo < n:
        # the change falls at the start of a segment: it happened in the record gap before it
        gap_lo = float(t[seg_lo - 1]) if seg_lo > 0 else float(t[0])
        unc = max(unc, float(t[seg_lo]) - gap_lo)
        warns.append("extinction fell in a gap of the record; its instant is bounded by the gap")
    # where the sample-level harmonic refinement agrees with the ring-down (1.5 cycles), it
    # is kept: it is the sharper of the two
    agree = rd is not None and ref is not None and abs(rd.index - k_ext) <= 1.5 * n
    if rd is not None and not agree:
        k_ext = rd.index
        unc = 0.25 * q.cycle_s
        ref = None
        method = (
            f"start of the open phase's free ring-down ({rd.free_frequency_hz:.1f} Hz, "
            "forced-plus-free fit)"
        )
        j_weak = faint_signature_end(tr.hratio, rd.index - a, n)
        if j_weak is not None and a + j_weak < b:
            # a fading arc: its faint, steady signature outlasts the ring-down's start
            k_ext = a + j_weak
            unc = 0.5 * q.cycle_s
            method += ", moved to the end of the faint arc signature that outlasts it"
    elif beat_check and rd is None:
        k_beat = _beat_onset(q, phase, lo=max(a + int(n), lo), hi=b, n=n)
        if k_beat is not None and abs(k_beat - k_ext) > 2 * n:
            # on a shunt-compensated line the open phase rings at its own frequency once the
            # arc is out: where that beat begins is the better evidence
            k_ext = k_beat
            unc = 0.5 * q.cycle_s
            method = "onset of the free oscillation (beat) of the open phase"
    t_ext = float(t[k_ext]) - 0.5 * dt
    if refine_record is not None and ref is not None:
        fine = refine_full_rate(
            refine_record,
            role,
            t_kc=float(t[kc]),
            t_lo=float(t[lo]),
            t_hi=float(t[b - 1]),
            f_hz=q.f_hz,
            arc_amp=arc_amp,
            window_cycles=m,
            t_coarse=t_ext,
        )
        if fine is not None:
            t_ext, unc = fine
    # the arc's last loops may be too faint for the harmonic signature (or the band-passed
    # ring-down): look for departures from the recovery waveform just after the instant
    fl = None
    # (not after a step of the level, a sharp change that the CVT's transient then follows,
    # nor after the onset of the beat)
    if not method.startswith(("onset", "last step")):
        fl = faint_loops_in_record(
            refine_record or record,
            role,
            f_hz=q.f_hz,
            t_ext_s=t_ext,
            t_end_s=observed,
            free_hz=(
                (rd.free_frequency_hz if rd is not None else free_frequency_hz)
                if beat_check
                else None
            ),
            max_departure_v=arc_amp,
        )
    if fl is not None:
        t_ext, unc = fl.t_s, max(unc, 0.25 * q.cycle_s)
        method += ", extended to the last faint arc loop"
    after = tr.level_pu[kc - a : min(kc - a + int(2 * n), b - a)]
    after = after[np.isfinite(after)]
    lvl_after = float(np.median(after)) if after.size else float("nan")
    before = tr.level_pu[max(kc - a - int(2 * n), 0) : max(kc - a - int(n), 1)]
    before = before[np.isfinite(before)]
    lvl_before = float(np.median(before)) if before.size else float("nan")
    h_before = finite_median(tr.hratio[tr.burning]) if s.size else float("nan")
    h_after = finite_median(tr.hratio[kc - a :]) if kc - a < tr.hratio.size else float("nan")
    conf = 0.9
    if np.isfinite(lvl_after) and lvl_after < level_min and not rings:
        return ExtinctionResult(
            None,
            True,
            observed,
            arc_start_s,
            intervals,
            tr.arc_amplitude_v,
            (
                f"the arc signature ended but the open phase stayed at {lvl_after:.1%} of the "
                "healthy-phase voltage: a bolted (permanent) fault, or a very well compensated "
                "line; no extinction reported",
            ),
        )
    if ref is None:
        conf = min(conf, 0.75)
    summary = (
        f"arc-voltage harmonic ratio fell from {h_before:.2f} to {h_after:.2f}; open-phase "
        f"voltage went from {lvl_before:.1%} to {lvl_after:.1%} of the healthy phases at "
        f"{t_ext * 1e3:.1f} ms and stayed recovered for {(observed - t_ext) * 1e3:.0f} ms"
        if s.size
        else f"recovery voltage present from {t_ext * 1e3:.1f} ms"
    )
    ev = Event(
        kind="extinction",
        t_s=t_ext,
        uncertainty_s=unc,
        method=method,
        confidence=conf,
        evidence=Evidence(
            summary=summary,
            quantities={
                "harmonic_ratio_before": h_before,
                "harmonic_ratio_after": h_after,
                "level_before_pu": lvl_before,
                "level_after_pu": lvl_after,
                "residual_threshold_v": thr,
                "arc_voltage_peak_v": arc_amp,
            },
            channels=chans,
        ),
        params=params,
        phase=phase,
    )
    return ExtinctionResult(
        ev, False, observed, arc_start_s, intervals, tr.arc_amplitude_v, tuple(warns)
    )


def _late_extinction(
    record: Record,
    q: Quantities,
    *,
    role: str,
    phase: str,
    arc_start_s: float,
    observed: float,
    intervals: tuple[tuple[float, float], ...],
    arc_amp: float | None,
    why: str,
) -> ExtinctionResult | None:
    """An extinction too close to the end of the observation for the harmonic window.

    Called where the arc signature reaches the last three cycles (``why`` says how): if
    the last cycle is a clean recovery (:func:`recordscan.detect.faint_loops.recovered_tail`)
    the arc went out just before it.
    """
    ch = record.analog_by_role(role)
    if ch is None:
        return None
    k = record.n_samples - 1 if observed >= record.t_s[-1] else q.idx(observed)
    seg = q.segment_at(k)
    lo, hi = seg.start_idx, seg.stop_idx
    got = recovered_tail(
        finite_values(ch.values[lo:hi]),
        record.t_s[lo:hi],
        f_hz=q.f_hz,
        t_end_s=observed,
        noise_v=q.noise(role),
    )
    if got is None or got.t_s <= arc_start_s:
        return None
    ev = Event(
        kind="extinction",
        t_s=got.t_s,
        uncertainty_s=0.5 * q.cycle_s,
        method="last departure from the clean recovery of the final cycle (extinction "
        "less than three cycles before the end of the observation)",
        confidence=0.6,
        evidence=Evidence(
            summary=f"{why}; the last cycle observed fits a clean recovery voltage (residual at "
            f"the noise) and the voltage last departed from it by more than "
            f"{got.threshold_v:.3g} V at {got.t_s * 1e3:.1f} ms",
            quantities={"threshold_v": got.threshold_v, "peak_departure_v": got.peak_departure_v},
            channels=(q.channel_name(role),),
        ),
        phase=phase,
    )
    return ExtinctionResult(
        ev,
        False,
        observed,
        arc_start_s,
        intervals,
        arc_amp,
        (
            "extinction less than three cycles before the end of the observation: placed on "
            "the last cycle's clean recovery, to half a cycle",
        ),
    )


def _from_arc_current(
    record: Record, q: Quantities, phase: str, start_s: float, until_s: float
) -> ExtinctionResult:
    """Extinction from a measured fault-point arc current (staged tests)."""
    i = np.nan_to_num(q.values(ARC_CURRENT))
    t = record.t_s
    k0 = q.idx(start_s)
    k1 = record.n_samples if until_s >= t[-1] else q.idx(until_s)
    n = q.n_cycle(k0)
    k0 = min(k0 + int(np.ceil(n)), k1)  # past the primary arc's last loop
    seg = i[k0:k1]
    if seg.size < 2:
        return ExtinctionResult(None, True, float(until_s), start_s)
    sigma = q.noise(ARC_CURRENT)
    peak = float(np.percentile(np.abs(seg), 99))
    thr = max(5.0 * sigma, 0.02 * peak, 1e-6)
    active = np.abs(seg) > thr
    observed = float(t[k1 - 1])
    if not np.any(active):
        k = k0
    else:
        last = int(np.flatnonzero(active)[-1])
        if k1 - (k0 + last) < n:
            return ExtinctionResult(
                None,
                True,
                observed,
                start_s,
                warnings=("arc current flows until the end of the observation",),
            )
        k = k0 + last + 1
    s, e = runs(active)
    intervals = tuple((float(t[k0 + a]), float(t[k0 + b - 1])) for a, b in zip(s, e, strict=True))
    t_ext = float(t[min(k, record.n_samples - 1)])
    ev = Event(
        kind="extinction",
        t_s=t_ext,
        uncertainty_s=1.0 / q.segment_at(k0).rate_hz,
        method="measured arc current",
        confidence=0.98,
        evidence=Evidence(
            summary=f"arc current last exceeded {thr:.3g} A at {t_ext * 1e3:.2f} ms",
            quantities={"threshold_a": thr, "arc_current_peak_a": peak},
            channels=(q.channel_name(ARC_CURRENT),),
        ),
        phase=phase,
    )
    return ExtinctionResult(ev, False, observed, start_s, intervals, None)
