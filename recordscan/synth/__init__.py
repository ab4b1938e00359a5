"""Synthetic events with known truth: scenario files, simulation, recorder output, sweeps.

- :func:`load_scenario` / :class:`Scenario` — the scenario TOML schema (docs/scenario.md);
- :func:`simulate` — scenario → records per line end + truth (:class:`SimulatedEvent`);
- :func:`write_event` — COMTRADE files and a truth JSON;
- :func:`draw_scenarios` — a deterministic random corpus from ranges and a seed.
"""

from __future__ import annotations

from recordscan.synth.generate import SimulatedEvent, simulate, write_event
from recordscan.synth.scenario import Scenario, load_scenario, parse_scenario
from recordscan.synth.sweep import SweepRanges, draw_scenarios

__all__ = [
    "Scenario",
    "SimulatedEvent",
    "SweepRanges",
    "draw_scenarios",
    "load_scenario",
    "parse_scenario",
    "simulate",
    "write_event",
]
