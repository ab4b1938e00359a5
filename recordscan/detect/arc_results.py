"""Result types of the secondary-arc detectors (:mod:`recordscan.detect.secondary_arc`).

Kept apart so that the helpers of the extinction detector can build them without a circular
import; :mod:`recordscan.detect.secondary_arc` re-exports both.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from recordscan.core.events import Event

__all__ = ["ArcTrace", "ExtinctionResult"]


@dataclass(frozen=True)
class ArcTrace:
    """The open phase's arc state between the arc start and the end of the observation.

    Attributes
    ----------
    phase : str
        Open phase.
    start_idx, stop_idx : int
        Sample range evaluated (``stop_idx`` exclusive).
    hratio : numpy.ndarray
        One-cycle harmonic ratio per sample of the range.
    level_pu : numpy.ndarray
        Open-phase fundamental relative to the healthy-phase voltage.
    burning : numpy.ndarray
        Arc-burning state per sample (short blips removed).
    arc_amplitude_v : float or None
        Typical peak of the arc voltage (None if it never burned).
    n_cycle : float
        Samples per cycle.
    """

    phase: str
    start_idx: int
    stop_idx: int
    hratio: np.ndarray
    level_pu: np.ndarray
    burning: np.ndarray
    arc_amplitude_v: float | None
    n_cycle: float


@dataclass(frozen=True)
class ExtinctionResult:
    """Final extinction of the secondary arc.

    Attributes
    ----------
    extinction : Event or None
        ``kind="extinction"``; None when censored.
    censored : bool
        True when the arc (or the fault) outlived the observation.
    observed_until_s : float
        End of the observation (reclose or record end).
    arc_start_s : float
        Start of the secondary arc.
    burning_intervals : tuple of (float, float)
        Stretches in which the arc burned (s).
    arc_voltage_peak_v : float or None
        Typical arc-voltage peak.
    warnings : tuple of str
        Degraded evidence.
    """

    extinction: Event | None
    censored: bool
    observed_until_s: float
    arc_start_s: float
    burning_intervals: tuple[tuple[float, float], ...] = ()
    arc_voltage_peak_v: float | None = None
    warnings: tuple[str, ...] = ()

    @property
    def extinction_s(self) -> float | None:
        """Instant of the final extinction, None when censored or not found."""
        return None if self.extinction is None else self.extinction.t_s
