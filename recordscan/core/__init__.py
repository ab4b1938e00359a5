"""Core data objects: records, channel roles, detected events."""

from recordscan.core.events import Event, Evidence
from recordscan.core.record import (
    AnalogChannel,
    Provenance,
    Record,
    Scaling,
    Segment,
    StatusChannel,
)

__all__ = [
    "AnalogChannel",
    "Event",
    "Evidence",
    "Provenance",
    "Record",
    "Scaling",
    "Segment",
    "StatusChannel",
]
