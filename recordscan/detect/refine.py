"""Full-rate refinement of instants found on a block-averaged record.

:func:`recordscan.analysis.analyse` runs the detectors on a record block-averaged to about 40
samples per cycle (:func:`recordscan.detect._base.decimate_record`) and then re-finds the
sharp instants on the full-rate samples near the coarse ones. Each function returns its
input unchanged when the full-rate samples do not confirm a nearby instant.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from recordscan.core.events import Event
from recordscan.core.record import Record
from recordscan.core.roles import I_LINE, POLE_CLOSED, V_LINE
from recordscan.detect._base import finite_values
from recordscan.detect.pole_opening import PoleOpening, zero_crossing
from recordscan.signal.charfunc import robust_scale
from recordscan.signal.onset import last_crossing_before
from recordscan.signal.sequence import superimposed

__all__ = ["refine_inception", "refine_opening", "refine_restrike"]


def refine_inception(full: Record, inc: Event) -> Event:
    """Walk the inception back to where the full-rate delta left its noise band."""
    ch = full.analog_by_role(str(inc.params.get("role", "")))
    if ch is None:
        return inc
    t = full.t_s
    cyc = 1.0 / full.frequency_hz
    k = int(np.searchsorted(t, inc.t_s))
    seg = next((s for s in full.segments if s.start_idx <= k < s.stop_idx), None)
    if seg is None or seg.rate_hz <= 0:
        return inc
    n = seg.rate_hz * cyc
    lo = max(seg.start_idx, k - int(3 * n))
    hi = min(seg.stop_idx, k + int(0.5 * n))
    if k - lo < 2.5 * n:
        return inc
    d = superimposed(finite_values(ch.values[lo:hi]), length=n)
    base = d[int(np.ceil(n)) + 1 : int(np.ceil(2 * n))]
    sigma = robust_scale(base)
    jump = np.abs(d[k - lo - int(0.1 * n) :])
    peak = float(np.max(jump)) if jump.size else 0.0
    thr = max(8.0 * sigma, 0.3 * peak)
    over = np.flatnonzero(jump > thr)
    if over.size == 0:
        return inc
    cross = k - lo - int(0.1 * n) + int(over[0])
    onset = last_crossing_before(np.abs(d), cross, level=max(3.0 * sigma, 1e-12))
    t_new = float(t[lo + onset])
    if abs(t_new - inc.t_s) > 0.1 * cyc:
        return inc
    return dataclasses.replace(inc, t_s=t_new, uncertainty_s=1.0 / seg.rate_hz)


def refine_opening(full: Record, op: PoleOpening) -> PoleOpening:
    """Re-find a current-zero opening on the full-rate samples (block averages blur it)."""
    if op.source != "current_zero":
        return op
    ch = full.analog_by_role(I_LINE[op.phase])
    thr = op.event.evidence.quantities.get("threshold_a")
    if ch is None or thr is None:
        return op
    t = full.t_s
    cyc = 1.0 / full.frequency_hz
    lo = int(np.searchsorted(t, op.t_s - 0.5 * cyc))
    hi = int(np.searchsorted(t, op.t_s + 0.75 * cyc))
    above = np.flatnonzero(np.abs(finite_values(ch.values[lo:hi])) >= thr)
    if above.size == 0 or lo + above[-1] + 1 >= hi:
        return op
    k = lo + int(above[-1]) + 1
    seg = next((s for s in full.segments if s.start_idx <= k < s.stop_idx), None)
    if seg is None or seg.rate_hz <= 0:
        return op
    t_new = zero_crossing(t, ch.values, k, seg.rate_hz * cyc)
    if abs(t_new - op.t_s) > 0.25 * cyc:
        return op
    t_dig = op.digital_t_s
    st = full.digital_by_role(POLE_CLOSED[op.phase])
    if t_dig is not None and st is not None:  # the status edge at full rate too
        a = int(np.searchsorted(t, t_dig - 0.25 * cyc))
        b = int(np.searchsorted(t, t_dig + 0.25 * cyc))
        edges = np.flatnonzero(np.diff(np.asarray(st.values[a:b], dtype=np.int8)) == -1)
        if edges.size:
            t_dig = float(t[a + edges[0] + 1])
    lag = None if t_dig is None or op.aux_lag_s is None else t_dig - t_new
    q = dict(op.event.evidence.quantities)
    q["aux_lag_s"] = lag
    ev = dataclasses.replace(
        op.event,
        t_s=t_new,
        uncertainty_s=1.0 / seg.rate_hz,
        evidence=dataclasses.replace(op.event.evidence, quantities=q),
    )
    return dataclasses.replace(op, event=ev, digital_t_s=t_dig, aux_lag_s=lag)


def refine_restrike(full: Record, ev: Event) -> Event:
    """Place a restrike on the largest full-rate collapse of ``|v|`` near it."""
    ch = full.analog_by_role(V_LINE[ev.phase or "A"])
    if ch is None:
        return ev
    t = full.t_s
    cyc = 1.0 / full.frequency_hz
    lo = int(np.searchsorted(t, ev.t_s - 0.06 * cyc))
    hi = int(np.searchsorted(t, ev.t_s + 0.06 * cyc))
    if hi - lo < 3:
        return ev
    av = np.abs(finite_values(ch.values[lo:hi]))
    j = int(np.argmax(av[:-1] - av[1:]))
    k = lo + j + 1
    dt = float(t[k] - t[k - 1])
    return dataclasses.replace(ev, t_s=float(t[k]) - 0.5 * dt, uncertainty_s=dt)
