"""Event classification: which kind of operation a record shows.

``single_pole_trip`` (one phase to ground, that pole alone opened), ``three_pole_trip`` (all
three poles opened together, whatever the fault), ``no_fault`` (a trigger without fault
current) and ``unclassified`` (anything the evidence does not settle — never forced into the
single-pole chain).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from recordscan.core.events import Event
from recordscan.core.roles import I_LINE, V_LINE
from recordscan.detect._base import Quantities
from recordscan.detect.inception import PrefaultState
from recordscan.detect.phase_select import FaultSelection
from recordscan.detect.pole_opening import PoleOpening
from recordscan.signal.charfunc import fast_median

__all__ = ["EVENT_KINDS", "Classification", "classify_event", "fault_current_rms"]

EVENT_KINDS = ("single_pole_trip", "three_pole_trip", "no_fault", "unclassified")


@dataclass(frozen=True)
class Classification:
    """What the record shows.

    Attributes
    ----------
    event : str
        One of :data:`EVENT_KINDS`.
    detail : str
        Plain words ("phase A to ground, single-pole trip", "evolving fault B → BC").
    faulted_phase : str or None
        The single faulted phase of a single-pole trip.
    fault_label : str or None
        Fault type label (``"AG"``, ``"BC"``…).
    opened_phases : tuple of str
        Poles opened in the first trip.
    confidence : float
        0…1.
    """

    event: str
    detail: str
    faulted_phase: str | None = None
    fault_label: str | None = None
    opened_phases: tuple[str, ...] = ()
    confidence: float = 0.5


def fault_current_rms(
    q: Quantities, phase: str, *, inception_s: float, until_s: float | None
) -> float | None:
    """Median fundamental RMS of a phase current between one cycle after inception and
    ``until_s`` (the pole opening; three cycles if unknown). None without the channel."""
    if q.values(I_LINE[phase]) is None:
        return None
    k0 = q.idx(inception_s)
    n = q.n_cycle(k0)
    a = k0 + int(np.ceil(n))
    b = q.idx(until_s) if until_s is not None else k0 + int(4 * n)
    b = min(max(b, a + 1), q.seg_end(k0))
    mag = q.magnitude(I_LINE[phase])[a:b]
    mag = mag[np.isfinite(mag)]
    if mag.size == 0:
        return None
    return fast_median(mag)


def classify_event(
    *,
    quantities: Quantities,
    inception: Event | None,
    selection: FaultSelection | None,
    openings: dict[str, PoleOpening],
    prefault: PrefaultState | None,
    fault_current_factor: float = 1.5,
    simultaneous_s: float = 0.04,
) -> Classification:
    """Classify the record from the detector results.

    Parameters
    ----------
    quantities : Quantities
        The record's computed quantities.
    inception : Event or None
        Fault inception.
    selection : FaultSelection or None
        Faulted phases.
    openings : dict
        First opening per phase after inception.
    prefault : PrefaultState or None
        Steady state before the fault (load current).
    fault_current_factor : float
        A fault must raise a faulted phase current above this multiple of the pre-fault
        load (or dip its voltage by more than 10 %).
    simultaneous_s : float
        Openings within this time of the first belong to the same trip.

    Returns
    -------
    Classification
        The classification.
    """
    q = quantities
    if inception is None:
        return Classification("no_fault", "no disturbance above the thresholds", confidence=0.9)
    if selection is None or not selection.phases:
        return Classification(
            "unclassified", "a disturbance without an identifiable faulted phase", confidence=0.4
        )
    first = min((o.t_s for o in openings.values()), default=None)
    # fault confirmation: fault current well above load, or a voltage dip
    confirmed = False
    ratios = []
    for p in selection.phases:
        ifl = fault_current_rms(q, p, inception_s=inception.t_s, until_s=first)
        load = (prefault.i_rms_a.get(p) if prefault else None) or 0.0
        if ifl is not None:
            ratios.append(ifl / max(load, 1e-9))
            if ifl > fault_current_factor * load:
                confirmed = True
        if prefault and p in prefault.v_rms_v and q.values(V_LINE[p]) is not None:
            k = q.idx(inception.t_s) + int(np.ceil(1.05 * q.n_cycle(q.idx(inception.t_s))))
            if first is not None:
                k = min(k, max(q.idx(first) - 1, q.idx(inception.t_s)))
            v_now = abs(q.phasor(V_LINE[p])[k])
            if np.isfinite(v_now) and v_now < 0.9 * prefault.v_rms_v[p]:
                confirmed = True
    if not confirmed:
        return Classification(
            "no_fault",
            "disturbance without fault current or voltage dip (routine trigger)",
            confidence=0.7,
        )
    label = selection.label
    evolving = ""
    if selection.evolution:
        evolving = "evolving fault " + " → ".join((label, *selection.evolution))
    if first is None:
        return Classification(
            "unclassified",
            (evolving or f"fault {label}") + "; no pole opening seen in the record",
            fault_label=label,
            confidence=0.5,
        )
    group = tuple(sorted(p for p, o in openings.items() if o.t_s - first <= simultaneous_s))
    if len(group) == 3:
        kind = "multi-phase fault" if len(selection.phases) > 1 else "single-phase fault"
        detail = (evolving or f"{kind} {label}") + ", three-pole trip"
        return Classification(
            "three_pole_trip",
            detail,
            fault_label=label,
            opened_phases=group,
            confidence=0.9,
        )
    if len(group) == 1 and selection.is_single_phase and group[0] == selection.phases[0]:
        p = group[0]
        return Classification(
            "single_pole_trip",
            f"phase {p} to ground, single-pole trip",
            faulted_phase=p,
            fault_label=label,
            opened_phases=group,
            confidence=float(min(0.98, selection.confidence)),
        )
    if len(group) == 1 and len(selection.phases) == 1 and not selection.evolution:
        detail = f"fault {label} but pole {group[0]} opened"
    elif len(group) == 1:
        detail = (evolving or f"multi-phase fault {label}") + f", only pole {group[0]} opened"
    else:
        detail = (evolving or f"fault {label}") + f", poles {''.join(group)} opened"
    return Classification(
        "unclassified", detail, fault_label=label, opened_phases=group, confidence=0.5
    )
