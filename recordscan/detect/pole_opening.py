"""Trip command and pole opening per phase; far-end opening inferred from one end.

A pole clears the primary arc at a current zero, after which the phase current at the breaker
stays at zero. Where pole-status channels exist their change is reported beside it with the
lag of the auxiliary contact (the contact follows the main contacts by a few ms — common
practice). With one end recorded, the far end's opening of the faulted phase shows as a
second disturbance of the healthy-phase currents after the local opening.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from recordscan.core.events import Event, Evidence
from recordscan.core.record import Record
from recordscan.core.roles import I_LINE, PHASES, POLE_CLOSED, TRIP, TRIP_3P
from recordscan.detect._base import Quantities, finite_values
from recordscan.signal.charfunc import fast_median
from recordscan.signal.onset import first_sustained

__all__ = [
    "PoleOpening",
    "current_quiet_threshold",
    "detect_pole_openings",
    "detect_trip",
    "infer_remote_opening",
    "zero_crossing",
]


@dataclass(frozen=True)
class PoleOpening:
    """Opening of one pole at the recorded terminal.

    Attributes
    ----------
    phase : str
        Canonical phase.
    event : Event
        ``kind="pole_open"``; ``t_s`` is the instant the primary arc was cleared.
    source : str
        ``"current_zero"`` or ``"digital"``.
    digital_t_s : float or None
        Instant the pole-status channel changed (None without one).
    aux_lag_s : float or None
        ``digital_t_s − current-zero instant`` when both exist.
    """

    phase: str
    event: Event
    source: str
    digital_t_s: float | None = None
    aux_lag_s: float | None = None

    @property
    def t_s(self) -> float:
        """Instant of the opening."""
        return self.event.t_s


def _edge(values: np.ndarray, t_s: np.ndarray, *, start: int, rising: bool) -> float | None:
    v = np.asarray(values, dtype=bool)[start:]
    if v.size < 2:
        return None
    d = np.diff(v.view(np.int8))
    hits = np.flatnonzero(d == (1 if rising else -1))
    if hits.size == 0:
        return None
    return float(t_s[start + hits[0] + 1])


def detect_trip(
    record: Record, *, after_s: float, quantities: Quantities | None = None
) -> Event | None:
    """First trip command (per-phase or three-pole) asserted at or after ``after_s``.

    Returns None when no trip channel is recorded or none asserts.
    """
    q = quantities or Quantities(record)
    start = max(q.idx(after_s) - 1, 0)
    found: list[tuple[float, str, str | None]] = []
    for role, ph in [*((TRIP[p], p) for p in PHASES), (TRIP_3P, None)]:
        v = q.status(role)
        if v is None:
            continue
        if v[start]:
            continue
        t = _edge(v, record.t_s, start=start, rising=True)
        if t is not None:
            found.append((t, role, ph))
    if not found:
        return None
    t, role, ph = min(found)
    phases = sorted({p for tt, _, p in found if p and tt - t < 0.01})
    return Event(
        kind="trip",
        t_s=t,
        uncertainty_s=0.5 / record.sample_rate_hz,
        method="digital channel",
        confidence=1.0,
        evidence=Evidence(
            summary=f"{role} asserted at {t * 1e3:.2f} ms",
            quantities={"three_pole": role == TRIP_3P},
            channels=(q.channel_name(role),),
        ),
        phase=ph if len(phases) <= 1 else None,
    )


def current_quiet_threshold(
    i: np.ndarray, *, start: int, n_cycle: float, sigma: float, fraction: float = 0.04
) -> tuple[float, float]:
    """Threshold under which a phase current counts as interrupted, and the fault peak.

    ``max(fraction·peak, 8·σ)`` with ``peak`` the largest ``|i|`` in the three cycles from
    ``start`` and σ the current's noise (:meth:`Quantities.noise`).
    """
    seg = finite_values(i[start : start + int(3 * n_cycle) + 1])
    peak = float(np.max(np.abs(seg))) if seg.size else 0.0
    return max(fraction * peak, 8.0 * sigma, 1e-9), peak


def zero_crossing(t_s: np.ndarray, i: np.ndarray, k: int, n_cycle: float) -> float:
    """Instant the current reached zero, extrapolated from the last samples before ``k``.

    ``k`` is the first sample of the interrupted stretch; the two samples before it are on
    the falling flank of the last loop, whose straight-line zero is taken (at most
    two samples or 1/20 cycle after ``k − 1``).
    """
    dt = float(t_s[k] - t_s[k - 1]) if k > 0 else 0.0
    if k < 2:
        return float(t_s[k]) - 0.5 * dt
    y1, y2 = float(i[k - 2]), float(i[k - 1])
    if y1 == y2 or np.sign(y1) != np.sign(y2) or abs(y2) > abs(y1):
        return float(t_s[k]) - 0.5 * dt
    frac = min(max(y2 / (y1 - y2), 0.0), max(2.0, n_cycle / 20.0))
    return float(t_s[k - 1]) + frac * dt


def _current_zero_opening(
    q: Quantities, phase: str, *, after_idx: int, quiet_cycles: float
) -> tuple[int, float] | None:
    i = q.values(I_LINE[phase])
    if i is None:
        return None
    n = q.n_cycle(after_idx)
    sigma = q.noise(I_LINE[phase])
    thr, _ = current_quiet_threshold(i, start=after_idx, n_cycle=n, sigma=sigma)
    quiet = np.abs(finite_values(i[after_idx:])) < thr
    k = first_sustained(quiet, n_hold=max(3, round(quiet_cycles * n)))
    if k is not None:
        k += after_idx
    if k is None or k <= after_idx:
        # never interrupted, or already quiet: it carried no current to interrupt
        return None
    # an open pole carries only noise; a lightly loaded healthy phase back at its pre-fault
    # current can stay under a noise-set threshold sample by sample, but not in RMS
    pre = finite_values(i[max(after_idx - int(2 * n), 0) : max(after_idx - int(0.25 * n), 0)])
    post = finite_values(i[k : k + int(n)])
    if pre.size and post.size and sigma > 0:
        pre_rms = float(np.sqrt(np.mean(pre * pre)))
        post_rms = float(np.sqrt(np.mean(post * post)))
        if pre_rms > 3.0 * sigma and post_rms > max(2.0 * sigma, 0.25 * pre_rms):
            return None
    return k, thr


def detect_pole_openings(
    record: Record,
    *,
    after_s: float,
    quantities: Quantities | None = None,
    quiet_cycles: float = 0.75,
) -> dict[str, PoleOpening]:
    """First opening of each pole at or after ``after_s`` (normally the fault inception).

    From the phase current (the first run of at least ``quiet_cycles`` cycles below the
    interruption threshold; the current zero is extrapolated from the samples just before
    it) when the current is
    recorded, else from the pole-status channel. Phases that do not open are absent.

    Parameters
    ----------
    record : Record
        The record.
    after_s : float
        Search start.
    quantities : Quantities, optional
        Shared computed quantities.
    quiet_cycles : float
        How long the current must stay interrupted.

    Returns
    -------
    dict
        Phase → :class:`PoleOpening`.
    """
    q = quantities or Quantities(record)
    a = q.idx(after_s)
    out: dict[str, PoleOpening] = {}
    for p in PHASES:
        st = q.status(POLE_CLOSED[p])
        t_dig = None
        if st is not None:
            t_dig = _edge(st, record.t_s, start=max(a - int(q.n_cycle(a)), 0), rising=False)
        cz = _current_zero_opening(q, p, after_idx=a, quiet_cycles=quiet_cycles)
        if cz is not None:
            k, thr = cz
            dt = 1.0 / q.segment_at(k).rate_hz
            t = zero_crossing(record.t_s, q.values(I_LINE[p]), k, q.n_cycle(k))
            lag = None if t_dig is None else t_dig - t
            if lag is not None and abs(lag) > 5 * q.cycle_s:
                lag = None  # the status change belongs to another operation
            summary = f"phase {p} current stayed below {thr:.3g} A from {t * 1e3:.2f} ms"
            if lag is not None:
                summary += f"; pole status changed {lag * 1e3:+.1f} ms later (auxiliary contact)"
            ev = Event(
                kind="pole_open",
                t_s=t,
                uncertainty_s=dt,
                method="final current zero",
                confidence=0.95,
                evidence=Evidence(
                    summary=summary,
                    quantities={"threshold_a": thr, "aux_lag_s": lag},
                    channels=(q.channel_name(I_LINE[p]),),
                ),
                params={"quiet_cycles": quiet_cycles},
                phase=p,
            )
            out[p] = PoleOpening(p, ev, "current_zero", t_dig, lag)
        elif t_dig is not None:
            ev = Event(
                kind="pole_open",
                t_s=t_dig,
                uncertainty_s=0.25 * q.cycle_s,
                method="pole status channel",
                confidence=0.8,
                evidence=Evidence(
                    summary=(
                        f"pole {p} status opened at {t_dig * 1e3:.2f} ms (auxiliary contact; "
                        "the main contacts clear at a current zero a few ms earlier)"
                    ),
                    channels=(q.channel_name(POLE_CLOSED[p]),),
                ),
                phase=p,
            )
            out[p] = PoleOpening(p, ev, "digital", t_dig, None)
    return out


def infer_remote_opening(
    record: Record,
    *,
    phase: str,
    local_open_s: float,
    quantities: Quantities | None = None,
    until_s: float | None = None,
    max_stagger_s: float = 0.3,
    noise_factor: float = 8.0,
    fraction: float = 0.05,
) -> Event | None:
    """Infer the far end's opening of ``phase`` from the healthy-phase currents.

    Once both ends of the faulted phase are open, the healthy-phase current phasors settle to
    their final (load and coupling) state; the last change before it is the later of the two
    openings. The final state is taken ``max_stagger_s`` + 1.5 cycles after the local opening
    (or just before ``until_s``, the reclose); each healthy phase's settling instant — the
    last sample whose phasor differs from the final one by more than ``fraction`` of it (and
    ``noise_factor`` times the phasor noise) — minus one cycle (the DFT window) is the far-end
    opening.

    Returns
    -------
    Event or None
        ``kind="pole_open_remote"``; None when the settling instant is not later than the
        local opening (the far end opened first or with it) or the record is too short.
    """
    q = quantities or Quantities(record)
    k0 = q.idx(local_open_s)
    n = q.n_cycle(k0)
    k_fin = k0 + int(np.ceil(max_stagger_s * q.f_hz * n + 1.5 * n))
    k_fin = min(k_fin, q.seg_end(k0) - 1)
    if until_s is not None:
        k_fin = min(k_fin, q.idx(until_s) - 1)
    if k_fin - k0 < 3 * n:
        return None
    best: tuple[int, str, float] | None = None
    lo = k0 + int(np.ceil(n))
    for p in PHASES:
        if p == phase or q.values(I_LINE[p]) is None:
            continue
        ph = q.phasor(I_LINE[p])
        tail = ph[k_fin - int(n / 2) : k_fin + 1]
        tail = tail[np.isfinite(tail)]
        if tail.size == 0:
            continue
        final = complex(fast_median(tail.real), fast_median(tail.imag))
        d = np.abs(ph[lo : k_fin + 1] - final)
        sigma = q.noise(I_LINE[p]) * np.sqrt(2.0 / n)
        thr = max(noise_factor * sigma, fraction * abs(final), 1e-9)
        above = np.flatnonzero(~(d <= thr))
        if above.size == 0:
            continue
        settle = lo + int(above[-1]) + 1
        k_r = settle - round(n)
        step = float(d[0]) / thr
        if best is None or k_r > best[0]:
            best = (k_r, p, step)
    if best is None or best[0] <= k0 + 0.1 * n:
        return None
    k_r, p, step = best
    t = float(record.t_s[k_r])
    return Event(
        kind="pole_open_remote",
        t_s=t,
        uncertainty_s=0.25 * q.cycle_s,
        method="healthy-phase currents settled after the local opening",
        confidence=0.7,
        evidence=Evidence(
            summary=(
                f"phase {p} current reached its final state one cycle after "
                f"{(t - local_open_s) * 1e3:.1f} ms past the local opening of phase {phase}: "
                "far end taken as open then"
            ),
            quantities={"stagger_s": t - local_open_s, "change_over_threshold": step},
            channels=(q.channel_name(I_LINE[p]),),
        ),
        params={"max_stagger_s": max_stagger_s, "fraction": fraction},
        phase=phase,
    )
