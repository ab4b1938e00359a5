"""Reclose instant and outcome of the open phase.

The reclose is the first return of the open phase's current (or the pole-status channel
closing, or — without either — the open-phase voltage returning to near its pre-fault value).
Onto a fault the current rises far above the load and the breaker trips all three poles;
otherwise the reclose succeeded.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from recordscan.core.events import Event, Evidence
from recordscan.core.record import Record
from recordscan.core.roles import I_LINE, PHASES, POLE_CLOSED, V_LINE
from recordscan.detect._base import Quantities, finite_values
from recordscan.signal.charfunc import fast_median
from recordscan.signal.onset import first_sustained, last_crossing_before

__all__ = ["RecloseResult", "detect_reclose"]


@dataclass(frozen=True)
class RecloseResult:
    """Reclose and outcome.

    Attributes
    ----------
    reclose : Event or None
        ``kind="reclose"``.
    outcome : str
        ``"success"``, ``"reclose_onto_fault"`` or ``"no_reclose"``.
    three_pole_trip : Event or None
        All three poles open after a reclose onto a fault.
    dead_time_s : float or None
        Reclose instant minus pole opening.
    """

    reclose: Event | None
    outcome: str
    three_pole_trip: Event | None = None
    dead_time_s: float | None = None

    @property
    def reclose_s(self) -> float | None:
        """Reclose instant."""
        return None if self.reclose is None else self.reclose.t_s


def detect_reclose(
    record: Record,
    *,
    phase: str,
    open_s: float,
    fault_current_rms_a: float | None,
    load_current_rms_a: float | None,
    v_phase_rms_v: float | None,
    quantities: Quantities | None = None,
    fault_factor: float = 0.3,
) -> RecloseResult:
    """Find the reclose of ``phase`` after it opened at ``open_s``, and the outcome.

    Parameters
    ----------
    record : Record
        The record.
    phase : str
        The open phase.
    open_s : float
        Local pole opening.
    fault_current_rms_a : float or None
        Primary fault current (the reference for "onto a fault").
    load_current_rms_a : float or None
        Pre-fault load current of the phase.
    v_phase_rms_v : float or None
        Pre-fault phase voltage (for the voltage fallback).
    quantities : Quantities, optional
        Shared computed quantities.
    fault_factor : float
        After the reclose, a current above ``max(fault_factor·fault current, 2·load)``
        means a reclose onto a fault — unless it stays below twice that and the phase voltage
        came back above 95 % of its pre-fault value (a long line's charging current).

    Returns
    -------
    RecloseResult
        Reclose and outcome; ``no_reclose`` when none is seen in the record.
    """
    q = quantities or Quantities(record)
    k_open = q.idx(open_s)
    n = q.n_cycle(k_open)
    start = k_open + int(np.ceil(n))
    t = record.t_s
    role_i = I_LINE[phase]
    k_rc: int | None = None
    method = ""
    chan = ""
    st = q.status(POLE_CLOSED[phase])
    if q.values(role_i) is not None and start < record.n_samples:
        # the phasor rejects the decaying DC a CT leaves after the interruption
        mag = q.magnitude(role_i)
        sigma = q.noise(role_i) * np.sqrt(2.0 / n)
        thr = max(10.0 * sigma, 0.002 * (fault_current_rms_a or 0.0), 1e-9)
        with np.errstate(invalid="ignore"):
            active = mag > thr
        cross = first_sustained(active, n_hold=max(3, round(n / 4)), start=start + int(n))
        if cross is not None:
            k_rc = last_crossing_before(mag, cross, level=max(3.0 * sigma, 0.1 * thr))
            method, chan = "phase current returned", q.channel_name(role_i)
    if k_rc is None and st is not None:
        closed = np.asarray(st, dtype=bool)
        hits = np.flatnonzero(closed[start:])
        if hits.size:
            k_rc = start + int(hits[0])
            method, chan = "pole status channel", q.channel_name(POLE_CLOSED[phase])
    if (
        k_rc is None
        and q.values(role_i) is None
        and v_phase_rms_v
        and q.values(V_LINE[phase]) is not None
    ):
        mag = q.magnitude(V_LINE[phase])
        with np.errstate(invalid="ignore"):
            back = mag > 0.8 * v_phase_rms_v
        k = first_sustained(back, n_hold=max(3, round(n / 2)), start=start)
        if k is not None:
            k_rc = max(k - int(0.8 * n), start)
            method, chan = "open-phase voltage restored", q.channel_name(V_LINE[phase])
    if k_rc is None:
        return RecloseResult(None, "no_reclose")
    dt = 1.0 / q.segment_at(k_rc).rate_hz
    t_rc = float(t[k_rc]) - 0.5 * dt
    unc = dt if method != "open-phase voltage restored" else 0.5 * q.cycle_s
    seg = q.segment_at(k_rc)
    if k_rc == seg.start_idx and k_rc > 0:
        unc = max(unc, float(t[k_rc] - t[k_rc - 1]))  # reclosed inside a record gap
    reclose = Event(
        kind="reclose",
        t_s=t_rc,
        uncertainty_s=unc,
        method=method,
        confidence=0.95 if method != "open-phase voltage restored" else 0.6,
        evidence=Evidence(
            summary=f"{method} at {t_rc * 1e3:.1f} ms ({(t_rc - open_s) * 1e3:.0f} ms dead time)",
            quantities={"dead_time_s": t_rc - open_s},
            channels=(chan,),
        ),
        phase=phase,
    )
    outcome = "success"
    three: Event | None = None
    if q.values(role_i) is not None:
        k_a = k_rc + int(np.ceil(1.1 * n))
        k_b = min(k_rc + int(4 * n), seg.stop_idx)
        mag = q.magnitude(role_i)[k_a:k_b]
        mag = mag[np.isfinite(mag)]
        level = max(fault_factor * (fault_current_rms_a or 0.0), 2.0 * (load_current_rms_a or 0.0))
        i_max = float(np.max(mag)) if mag.size else 0.0
        onto_fault = bool(fault_current_rms_a and i_max > level)
        if (
            onto_fault
            and i_max < 2.0 * fault_factor * (fault_current_rms_a or 0.0)
            and v_phase_rms_v
            and q.values(V_LINE[phase]) is not None
        ):
            # a moderate current with the phase voltage fully back is the charging current of
            # a long line, not a fault (a fault holds the voltage down)
            v_after = np.abs(q.phasor(V_LINE[phase])[k_a:k_b])
            v_after = v_after[np.isfinite(v_after)]
            if v_after.size and fast_median(v_after) > 0.95 * v_phase_rms_v:
                onto_fault = False
        if onto_fault:
            outcome = "reclose_onto_fault"
            three = _three_pole_trip(q, after=k_rc + int(n))
    return RecloseResult(reclose, outcome, three, t_rc - open_s)


def _three_pole_trip(q: Quantities, *, after: int) -> Event | None:
    """All three phase currents interrupted after ``after`` (the later of the three)."""
    from recordscan.detect.pole_opening import current_quiet_threshold

    ks = []
    for p in PHASES:
        i = q.values(I_LINE[p])
        if i is None:
            return None
        n = q.n_cycle(after)
        thr, _ = current_quiet_threshold(i, start=after, n_cycle=n, sigma=q.noise(I_LINE[p]))
        quiet = np.abs(finite_values(i[after:])) < thr
        k = first_sustained(quiet, n_hold=max(3, round(0.75 * n)))
        if k is not None:
            k += after
        if k is None:
            return None
        ks.append(k)
    k = max(ks)
    t = float(q.t_s[k])
    return Event(
        kind="three_pole_trip",
        t_s=t,
        uncertainty_s=1.0 / q.segment_at(k).rate_hz,
        method="all phase currents interrupted",
        confidence=0.9,
        evidence=Evidence(summary=f"all three phase currents interrupted by {t * 1e3:.1f} ms"),
    )
