"""Typed detector results: an instant with its evidence and confidence."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any


def _frozen(m: Mapping[str, Any] | None) -> Mapping[str, Any]:
    return MappingProxyType(dict(m or {}))


@dataclass(frozen=True)
class Evidence:
    """What supports a detected instant.

    Attributes
    ----------
    summary : str
        One plain sentence an analyst can read ("open-phase voltage rose from 2.1 % to 15.8 %
        of nominal and stayed there for 412 ms").
    quantities : Mapping[str, float]
        Named numbers behind the decision (SI units, unit in the key name).
    channels : tuple of str
        Names of the channels the decision used.
    """

    summary: str
    quantities: Mapping[str, Any] = field(default_factory=dict)
    channels: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "quantities", _frozen(self.quantities))

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON form."""
        return {
            "summary": self.summary,
            "quantities": dict(self.quantities),
            "channels": list(self.channels),
        }


@dataclass(frozen=True)
class Event:
    """A detected instant.

    Attributes
    ----------
    kind : str
        What happened (``"fault_inception"``, ``"pole_open"``, ``"restrike"``…).
    t_s : float
        Instant in seconds from the record's first sample.
    uncertainty_s : float
        One-sigma-like uncertainty of ``t_s`` (half a sample at least).
    method : str
        Plain name of the method that found it.
    confidence : float
        0…1, how sure the detector is that the event happened as stated.
    evidence : Evidence
        What supports it.
    params : Mapping[str, Any]
        Detector settings used.
    phase : str or None
        Phase concerned, canonical.
    """

    kind: str
    t_s: float
    uncertainty_s: float
    method: str
    confidence: float
    evidence: Evidence
    params: Mapping[str, Any] = field(default_factory=dict)
    phase: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "params", _frozen(self.params))
        if not 0.0 <= self.confidence <= 1.0:
            raise ValueError(f"confidence {self.confidence} outside 0…1")

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON form."""
        return {
            "kind": self.kind,
            "t_s": self.t_s,
            "uncertainty_s": self.uncertainty_s,
            "method": self.method,
            "confidence": self.confidence,
            "phase": self.phase,
            "params": dict(self.params),
            "evidence": self.evidence.to_dict(),
        }
