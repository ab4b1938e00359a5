"""Time-domain (EMT-style) network solver for whole single-pole trip events.

Public surface: :func:`simulate_event` with its description dataclasses
(:class:`EventSpec`, :class:`LineModelData`, :class:`SourceSpec`, :class:`ReactorSpec`,
:class:`BreakerSpec`, :class:`FaultSpec`) and results (:class:`EventResult`,
:class:`EventTruth`). See ``docs/simulator.md``.
"""

from __future__ import annotations

from recordscan.physics.network.event import (
    PHASES,
    BreakerSpec,
    EventResult,
    EventSpec,
    EventTruth,
    FaultSpec,
    LineModelData,
    ReactorSpec,
    SourceSpec,
    simulate_event,
)

__all__ = [
    "PHASES",
    "BreakerSpec",
    "EventResult",
    "EventSpec",
    "EventTruth",
    "FaultSpec",
    "LineModelData",
    "ReactorSpec",
    "SourceSpec",
    "simulate_event",
]
