"""Faulted-phase selection from superimposed phasors, and evolving faults.

The superimposed (fault minus pre-fault) phase-to-phase current phasors separate the fault types
(the classic delta-quantity phase selector; e.g. Phadke & Thorp, *Computer Relaying for Power
Systems*, 2nd ed., 2009 — section from memory): for a phase-A-to-ground fault ΔI_B ≈ ΔI_C (both
carry only the zero-sequence share), so |ΔI_BC| is small against |ΔI_AB| and |ΔI_CA|; a B–C
fault makes |ΔI_BC| largest with the other two about half of it; a three-phase fault makes all
three equal. Without currents, the phase-voltage dips are used.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from recordscan.core.record import Record
from recordscan.core.roles import I_LINE, PHASES, V_LINE
from recordscan.detect._base import Quantities, where
from recordscan.errors import DetectionError

__all__ = ["FaultSelection", "select_phases", "selection_from_deltas"]

_PAIRS = (("A", "B"), ("B", "C"), ("C", "A"))


@dataclass(frozen=True)
class FaultSelection:
    """Which phases a fault involves.

    Attributes
    ----------
    phases : tuple of str
        Faulted phases, sorted.
    ground : bool
        Whether ground (zero sequence) is involved.
    label : str
        ``"AG"``, ``"BC"``, ``"BCG"``, ``"ABC"``…
    t_s : float
        Instant the phasors were taken.
    quantity : str
        ``"current"`` or ``"voltage"``.
    ratios : dict
        Pair name → |Δ| relative to the largest pair (currents) or phase → dip (voltages).
    evolution : tuple of str
        Labels at later instants when the fault changed (empty if it did not).
    confidence : float
        0…1.
    """

    phases: tuple[str, ...]
    ground: bool
    label: str
    t_s: float
    quantity: str
    ratios: dict[str, float]
    evolution: tuple[str, ...] = ()
    confidence: float = 0.9

    @property
    def is_single_phase(self) -> bool:
        """True for a single-phase-to-ground fault that did not evolve."""
        return len(self.phases) == 1 and not self.evolution


def _label(phases: tuple[str, ...], ground: bool) -> str:
    return "".join(phases) + ("G" if ground and len(phases) < 3 else "")


def selection_from_deltas(
    d_i: dict[str, complex], *, single_ratio: float = 0.25, ground_ratio: float = 0.1
) -> tuple[tuple[str, ...], bool, dict[str, float]]:
    """Classify from superimposed phase-current phasors.

    Parameters
    ----------
    d_i : dict
        Phase → superimposed current phasor.
    single_ratio : float
        The smallest phase-to-phase delta below this fraction of the largest means a
        single-phase fault on the phase outside that pair.
    ground_ratio : float
        ``|ΔI0|`` above this fraction of the largest phase delta means ground involved.

    Returns
    -------
    (phases, ground, ratios)
    """
    pair = {a + b: abs(d_i[a] - d_i[b]) for a, b in _PAIRS}
    big = max(pair.values())
    if big <= 0:
        return (), False, {k: 0.0 for k in pair}
    ratios = {k: v / big for k, v in pair.items()}
    i0 = abs(sum(d_i.values())) / 3.0
    ground = i0 > ground_ratio * max(abs(v) for v in d_i.values())
    order = sorted(pair, key=pair.get)  # type: ignore[arg-type]
    smallest, middle = order[0], order[1]
    if ratios[smallest] < single_ratio:
        ph = next(p for p in PHASES if p not in smallest)
        return (ph,), True, ratios  # one phase can only fault to ground
    if ratios[smallest] < 0.75 and ratios[middle] < 0.75:
        largest = order[2]
        return tuple(sorted(largest)), ground, ratios
    return PHASES, ground, ratios


def select_phases(
    record: Record,
    *,
    inception_s: float,
    until_s: float | None = None,
    quantities: Quantities | None = None,
    single_ratio: float = 0.25,
) -> FaultSelection:
    """Select the faulted phases one cycle after inception, and follow their evolution.

    Parameters
    ----------
    record : Record
        The record.
    inception_s : float
        Fault inception.
    until_s : float, optional
        The first pole opening (the fault phasors are taken before it).
    quantities : Quantities, optional
        Shared computed quantities.
    single_ratio : float
        See :func:`selection_from_deltas`.

    Returns
    -------
    FaultSelection
        Faulted phases and ground involvement.

    Raises
    ------
    DetectionError
        Neither the three currents nor the three voltages are recorded.
    """
    q = quantities or Quantities(record)
    k_inc = q.idx(inception_s)
    n = q.n_cycle(k_inc)
    k_pre = max(k_inc - 1, 0)
    k_f = k_inc + int(np.ceil(1.05 * n))
    stop = q.seg_end(k_inc) - 1 if until_s is None else q.idx(until_s) - 1
    if k_f > stop:
        k_f = max(min(stop, k_f), k_inc + 1)
    use_i = q.has_currents()
    if not use_i and not q.has_voltages():
        raise DetectionError(
            f"{where(record)}: phase selection needs the three phase currents or the three "
            "line voltages"
        )

    def at(k: int) -> tuple[tuple[str, ...], bool, dict[str, float]]:
        if use_i:
            d = {p: complex(q.phasor(I_LINE[p])[k] - q.phasor(I_LINE[p])[k_pre]) for p in PHASES}
            return selection_from_deltas(d, single_ratio=single_ratio)
        pre = {p: abs(q.phasor(V_LINE[p])[k_pre]) for p in PHASES}
        now = {p: abs(q.phasor(V_LINE[p])[k]) for p in PHASES}
        dips = {p: 1.0 - now[p] / pre[p] if pre[p] > 0 else 0.0 for p in PHASES}
        hit = tuple(p for p in PHASES if dips[p] > 0.5 * max(dips.values()) and dips[p] > 0.1)
        v0 = abs(sum(q.phasor(V_LINE[p])[k] for p in PHASES)) / 3.0
        ground = v0 > 0.05 * float(np.mean(list(pre.values())))
        return hit, ground, dips

    phases, ground, ratios = at(k_f)
    if not phases:
        phases, ground = (), False
    labels = [_label(phases, ground)]
    current = set(phases)
    k = k_f + round(0.5 * n)
    while k < stop and k < k_f + int(10 * n):
        ph2, g2, _ = at(k)
        if ph2 and set(ph2) > current:
            labels.append(_label(tuple(sorted(ph2)), g2))
            current = set(ph2)
        k += max(1, round(0.5 * n))
    quality = 1.0 - min(ratios.values()) if len(phases) == 1 else 0.8
    return FaultSelection(
        phases=phases,
        ground=ground,
        label=labels[0],
        t_s=float(record.t_s[k_f]),
        quantity="current" if use_i else "voltage",
        ratios=ratios,
        evolution=tuple(labels[1:]),
        confidence=float(np.clip(quality, 0.3, 1.0)),
    )
