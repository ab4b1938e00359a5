"""Triage indicators beside the timeline — rules of thumb of the trade, labelled as such.

- Minimum deionisation time for three-pole reclosing: ``10.5 + kV/34.5`` cycles (60 Hz
  cycles; common practice, attributed to Boisseau, Wyman & Skeats, AIEE Trans. 1949 — from
  memory) and ``175 + 0.5·kV`` ms (common practice). kV is the rated line-to-line voltage.
  They do not cover the secondary arc; a single-pole dead time should exceed them.
- Primary fault current over secondary-arc current: a ratio of about 50 or more goes with a
  high chance of a successful single-pole reclose (common practice).
"""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = [
    "RATIO_RULE",
    "Triage",
    "deionisation_rules_s",
    "deionisation_time_cycles",
    "deionisation_time_ms_rule",
    "triage",
]

#: primary / secondary-arc current ratio above which success is likely (common practice)
RATIO_RULE = 50.0

RULE_CYCLES = "10.5+kV/34.5 cycles"
RULE_MS = "175+0.5kV ms"


def deionisation_time_cycles(kv: float) -> float:
    """Minimum deionisation time ``10.5 + kV/34.5`` in 60 Hz cycles (common practice)."""
    return 10.5 + kv / 34.5


def deionisation_time_ms_rule(kv: float) -> float:
    """Minimum deionisation time ``175 + 0.5·kV`` in ms (common practice)."""
    return 175.0 + 0.5 * kv


def deionisation_rules_s(kv: float) -> dict[str, float]:
    """Both rules in seconds (the cycles rule in 60 Hz cycles, kept in seconds at 50 Hz)."""
    return {
        RULE_CYCLES: deionisation_time_cycles(kv) / 60.0,
        RULE_MS: deionisation_time_ms_rule(kv) / 1000.0,
    }


@dataclass(frozen=True)
class Triage:
    """Indicators an analyst expects beside the timeline.

    Attributes
    ----------
    primary_fault_current_rms_a : float or None
        Fault current before the pole opened.
    secondary_arc_current_rms_a : float or None
        Measured (arc channel) or estimated (line data).
    secondary_arc_current_source : str or None
        ``"measured"`` or ``"estimated"``.
    current_ratio : float or None
        Primary / secondary-arc current.
    ratio_favourable : bool or None
        ``current_ratio ≥ 50`` (common practice).
    dead_time_s : float or None
        Reclose − pole opening.
    voltage_kv : float or None
        Voltage class used for the rules.
    deionisation_rules : dict
        Rule → minimum time in s (common practice).
    dead_time_margin_s : dict
        Rule → dead time minus the rule's minimum.
    notes : tuple of str
        Labels of the rules of thumb.
    """

    primary_fault_current_rms_a: float | None = None
    secondary_arc_current_rms_a: float | None = None
    secondary_arc_current_source: str | None = None
    current_ratio: float | None = None
    ratio_favourable: bool | None = None
    dead_time_s: float | None = None
    voltage_kv: float | None = None
    deionisation_rules: dict[str, float] = field(default_factory=dict)
    dead_time_margin_s: dict[str, float] = field(default_factory=dict)
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        """Plain-JSON form."""
        d = dict(self.__dict__)
        d["notes"] = list(self.notes)
        return d


def triage(
    *,
    primary_fault_current_rms_a: float | None,
    secondary_arc_current_rms_a: float | None,
    secondary_arc_current_source: str | None,
    dead_time_s: float | None,
    voltage_kv: float | None,
) -> Triage:
    """Assemble the triage indicators.

    Parameters
    ----------
    primary_fault_current_rms_a, secondary_arc_current_rms_a : float or None
        Currents.
    secondary_arc_current_source : str or None
        Where the secondary-arc current came from.
    dead_time_s : float or None
        Dead time.
    voltage_kv : float or None
        Line voltage class, kV line-to-line.

    Returns
    -------
    Triage
        The indicators.
    """
    ratio = None
    if primary_fault_current_rms_a and secondary_arc_current_rms_a:
        ratio = primary_fault_current_rms_a / secondary_arc_current_rms_a
    rules = deionisation_rules_s(voltage_kv) if voltage_kv else {}
    margins = {k: dead_time_s - v for k, v in rules.items()} if dead_time_s is not None else {}
    notes = (
        "deionisation times are rules of thumb for three-pole reclosing (common practice)",
        f"current ratio ≥ {RATIO_RULE:g} favours a successful single-pole reclose "
        "(common practice)",
    )
    return Triage(
        primary_fault_current_rms_a=primary_fault_current_rms_a,
        secondary_arc_current_rms_a=secondary_arc_current_rms_a,
        secondary_arc_current_source=secondary_arc_current_source
        if secondary_arc_current_rms_a
        else None,
        current_ratio=ratio,
        ratio_favourable=None if ratio is None else ratio >= RATIO_RULE,
        dead_time_s=dead_time_s,
        voltage_kv=voltage_kv,
        deionisation_rules=rules,
        dead_time_margin_s=margins,
        notes=notes,
    )
