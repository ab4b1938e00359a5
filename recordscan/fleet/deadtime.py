"""Dead-time evidence: what the stored events say, beside the rules of thumb.

The empirical figure is the time from the local pole opening (when a dead-time timer
starts) by which a chosen fraction of secondary arcs had gone out, from the Kaplan–Meier
estimate of :mod:`recordscan.fleet.survival` (arcs still burning at reclose or at the end
of the record are censored, not dropped). It is set beside the classic minimum
de-ionisation rules of the trade, the line's current setting when known, and the number of
events behind it. It is *evidence* for a qualified engineer's decision, never a setting: the
gap also needs time to recover its strength after the arc is out, and the record set may not
cover the worst conditions (wind, rain, long arcs, high current).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from typing import TYPE_CHECKING, Any

from recordscan.fleet.survival import Origin, StatisticsError, extinction_sample

if TYPE_CHECKING:
    import pandas as pd

#: Seconds in one cycle of the 60-Hz system the rule below was written for.
_CYCLE_60HZ_S = 1.0 / 60.0


def rule_cycles_s(voltage_v: float) -> float:
    """Minimum de-ionisation time ``t = 10.5 + kV/34.5`` cycles, in seconds.

    Common practice (a rule of thumb for three-pole reclosing; kV is the rated
    line-to-line voltage; the cycles are 60-Hz cycles, so the time in seconds is the same on
    a 50-Hz system). Not a single-pole dead time: the secondary arc lengthens it.

    Parameters
    ----------
    voltage_v : float
        Rated line-to-line voltage, V.
    """
    _check_voltage(voltage_v)
    return (10.5 + voltage_v / 1e3 / 34.5) * _CYCLE_60HZ_S


def rule_linear_s(voltage_v: float) -> float:
    """Minimum de-ionisation time ``t ≈ 175 + 0.5·kV`` ms, in seconds (common practice).

    Parameters
    ----------
    voltage_v : float
        Rated line-to-line voltage, V.
    """
    _check_voltage(voltage_v)
    return 0.175 + 0.5e-3 * (voltage_v / 1e3)


def _check_voltage(voltage_v: float) -> None:
    if not math.isfinite(voltage_v) or voltage_v <= 0:
        raise StatisticsError(f"rule of thumb: voltage must be positive, got {voltage_v} V")


#: Rules of thumb by the names the scan output uses (``deionisation_rules``).
DEIONISATION_RULES: dict[str, Callable[[float], float]] = {
    "10.5+kV/34.5 cycles": rule_cycles_s,
    "175+0.5kV ms": rule_linear_s,
}


@dataclass(frozen=True)
class DeadTimeEvidence:
    """What the database says about a dead time for a line or group.

    Attributes
    ----------
    scope : str
        Plain description of the events used (line name, voltage class, filters).
    probability : float
        Fraction of arcs that must be out (e.g. 0.95).
    confidence : float
        Two-sided confidence level of the limits.
    origin : str
        Where the clock starts (``"pole_open"`` by default).
    n_events, n_extinct, n_censored, n_excluded : int
        Arcs used; of those, extinctions seen and lower bounds only; single-pole trips left
        out for want of timing.
    empirical_s, empirical_low_s, empirical_high_s : float or None
        Time by which ``probability`` of arcs were out, with its limits (``None`` where the
        data do not reach that level).
    max_observed_s : float or None
        Longest time in the data.
    voltage_v : float or None
        Voltage class used for the rules of thumb.
    rules_s : dict
        Rule-of-thumb minimum de-ionisation times, s (common practice).
    setting_s : float or None
        Current dead-time setting, if known.
    extinct_by_setting, extinct_by_setting_low, extinct_by_setting_high : float or None
        Estimated probability that the arc is out by the current setting, with its band.
    notes : list of str
        Plain warnings about the strength of the figure.
    """

    scope: str
    probability: float
    confidence: float
    origin: str
    n_events: int
    n_extinct: int
    n_censored: int
    n_excluded: int
    empirical_s: float | None
    empirical_low_s: float | None
    empirical_high_s: float | None
    max_observed_s: float | None
    voltage_v: float | None
    rules_s: dict[str, float] = field(default_factory=dict)
    setting_s: float | None = None
    extinct_by_setting: float | None = None
    extinct_by_setting_low: float | None = None
    extinct_by_setting_high: float | None = None
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON form."""
        return asdict(self)


def _opt(x: float) -> float | None:
    return float(x) if x is not None and math.isfinite(x) else None


def dead_time_evidence(
    frame: pd.DataFrame,
    *,
    scope: str,
    probability: float = 0.95,
    confidence: float = 0.95,
    voltage_v: float | None = None,
    setting_s: float | None = None,
    origin: Origin = "pole_open",
) -> DeadTimeEvidence:
    """Dead-time evidence from stored events.

    Parameters
    ----------
    frame : pandas.DataFrame
        Events of one line or group (:meth:`recordscan.fleet.store.Store.events`).
    scope : str
        Plain description of what ``frame`` holds (shown with the figure).
    probability : float
        Fraction of arcs that must be out, in (0, 1).
    confidence : float
        Two-sided confidence level of the limits.
    voltage_v : float, optional
        Voltage class for the rules of thumb; default the frame's most common voltage.
    setting_s : float, optional
        Current dead-time setting; default the line's stored setting when the frame holds a
        single line that has one.
    origin : {"pole_open", "secondary_arc_start"}
        Where the clock starts.

    Returns
    -------
    DeadTimeEvidence
    """
    if not 0.0 < probability < 1.0:
        raise StatisticsError(f"probability must be in (0, 1), got {probability}")
    sample = extinction_sample(frame, origin=origin)
    notes: list[str] = []
    if voltage_v is None and "voltage_v" in frame and frame["voltage_v"].notna().any():
        voltage_v = float(frame["voltage_v"].dropna().mode().iloc[0])
        if frame["voltage_v"].dropna().nunique() > 1:
            notes.append("events of several voltage classes are mixed; rules use the commonest")
    if setting_s is None and "line_dead_time_s" in frame:
        settings = frame["line_dead_time_s"].dropna().unique()
        if settings.size == 1:
            setting_s = float(settings[0])
    rules = {} if voltage_v is None else {k: f(voltage_v) for k, f in DEIONISATION_RULES.items()}
    if sample.n == 0:
        notes.append("no single-pole trip with a timed extinction or observation end")
        return DeadTimeEvidence(
            scope=scope,
            probability=probability,
            confidence=confidence,
            origin=origin,
            n_events=0,
            n_extinct=0,
            n_censored=0,
            n_excluded=sample.n_excluded,
            empirical_s=None,
            empirical_low_s=None,
            empirical_high_s=None,
            max_observed_s=None,
            voltage_v=voltage_v,
            rules_s=rules,
            setting_s=setting_s,
            notes=notes,
        )
    km = sample.estimate(confidence=confidence)
    t, lo, hi = km.percentile(probability)
    n_extinct = km.n - km.n_censored
    if t is None:
        notes.append(
            f"fewer than {probability:.0%} of the arcs were seen to go out within the "
            f"observations (longest {km.max_time_s:.3f} s): the data cannot give this figure"
        )
    elif hi is None:
        notes.append("the upper confidence limit is not reached within the data")
    need = math.ceil(1.0 / (1.0 - probability))
    if km.n < need:
        notes.append(
            f"only {km.n} event{'s' if km.n != 1 else ''}: at least {need} are needed before "
            f"the {probability:.0%} point "
            "rests on more than the single longest arc"
        )
    if km.n_censored:
        notes.append(
            f"{km.n_censored} arc(s) still burned at reclose or record end (lower bounds only)"
        )
    p_set = p_lo = p_hi = None
    if setting_s is not None:
        p, plo, phi = km.extinct_by(setting_s)
        p_set, p_lo, p_hi = _opt(float(p)), _opt(float(plo)), _opt(float(phi))
        if p_set is None:
            notes.append("the current setting is beyond the longest observation")
    return DeadTimeEvidence(
        scope=scope,
        probability=probability,
        confidence=confidence,
        origin=origin,
        n_events=km.n,
        n_extinct=n_extinct,
        n_censored=km.n_censored,
        n_excluded=sample.n_excluded,
        empirical_s=t,
        empirical_low_s=lo,
        empirical_high_s=hi,
        max_observed_s=km.max_time_s,
        voltage_v=voltage_v,
        rules_s=rules,
        setting_s=setting_s,
        extinct_by_setting=p_set,
        extinct_by_setting_low=p_lo,
        extinct_by_setting_high=p_hi,
        notes=notes,
    )
