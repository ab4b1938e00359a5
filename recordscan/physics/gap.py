"""Breakdown strength of air gaps: the cold-gap ceiling on restrike voltage.

Formulas (all in SI here: volts crest, metres) and where they come from:

* Switching impulse, positive polarity, rod–plane gap, IEC 60071-2 (insulation co-ordination,
  application guide), 1996 edition, Annex G — from memory; the 2018 edition re-organises the
  annexes, and we have not re-read it:  ``U50_RP = 1080·ln(0.46·d + 1)`` kV, d in m, stated
  for gaps up to about 25 m.
* Other geometries through the gap factor K (Paris & Cortina 1968): ``U50 = K·U50_RP``.
* Power-frequency (AC) breakdown, rod–plane (same annex, from memory):
  ``U50_RP = 750·√2·ln(1 + 0.55·d^1.2)`` kV crest, with the AC gap factor
  ``K_ff = 1.35·K − 0.35·K²``.
* Lightning impulse, positive polarity (same annex, from memory):
  ``U50 = (0.74 + 0.26·K)·530·d`` kV.
* Statistical withstand ``U_w = U50·(1 − z·σ)`` with the conventional deviation σ (6 % of U50
  for switching, 3 % for AC and lightning) and z = 1.3 (10 % flashover probability; some texts
  use 1.28) — conventional IEC values, from memory.
* Altitude: ``K_a = exp(m·H/8150)``, m = 1 for AC and lightning, m < 1 for switching —
  IEC 60071-2, from memory.
* For comparison: the power law of Paris (1967) / Paris & Cortina (1968),
  ``U50_RP = 500·d^0.6`` kV, and the form of Gallet et al. (1975), ``3400/(1 + 8/d)`` kV —
  both from memory.

The recovery voltage across a secondary-arc path (tens of kV) is far below these values (an
838 kV rms AC withstand for a 3 m rod–plane gap), so restrikes are hot-channel events; the cold
gap only caps the dielectric recovery of the cooling channel in :mod:`recordscan.physics.arc`.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from recordscan.errors import ModelError

__all__ = [
    "ALTITUDE_SCALE_M",
    "MAX_GAP_M",
    "SIGMA_AC_PU",
    "SIGMA_LIGHTNING_PU",
    "SIGMA_SWITCHING_PU",
    "altitude_correction_factor",
    "cold_gap_ceiling_v",
    "power_frequency_gap_factor",
    "statistical_withstand_v",
    "u50_lightning_v",
    "u50_power_frequency_rod_plane_v",
    "u50_power_frequency_v",
    "u50_switching_gallet_v",
    "u50_switching_paris_v",
    "u50_switching_rod_plane_v",
    "u50_switching_v",
]

#: Largest gap for which the IEC rod–plane formula is stated (from memory) [m].
MAX_GAP_M = 25.0
#: Conventional deviation of the switching-impulse breakdown voltage, per unit of U50.
SIGMA_SWITCHING_PU = 0.06
#: Conventional deviation of the AC breakdown voltage, per unit of U50.
SIGMA_AC_PU = 0.03
#: Conventional deviation of the lightning-impulse breakdown voltage, per unit of U50.
SIGMA_LIGHTNING_PU = 0.03
#: Height scale of the altitude correction exp(m·H/8150) [m].
ALTITUDE_SCALE_M = 8150.0


def _gap(d_m: ArrayLike) -> np.ndarray:
    d = np.asarray(d_m, dtype=float)
    if not np.all(np.isfinite(d)) or np.any(d <= 0.0):
        raise ModelError(f"gap length must be a positive finite number of metres, got {d_m!r}")
    if np.any(d > MAX_GAP_M):
        raise ModelError(
            f"gap length {float(np.max(d)):g} m is beyond the {MAX_GAP_M:g} m validity of the "
            "IEC 60071-2 gap formulas; use a shorter gap or a measured breakdown value"
        )
    return d


def _gap_factor(k: ArrayLike) -> np.ndarray:
    kk = np.asarray(k, dtype=float)
    if not np.all(np.isfinite(kk)) or np.any(kk < 1.0) or np.any(kk > 2.0):
        raise ModelError(f"gap factor K must lie in [1, 2] (rod–plane is 1), got {k!r}")
    return kk


def _out(x: np.ndarray) -> float | np.ndarray:
    return float(x) if x.ndim == 0 else x


def u50_switching_rod_plane_v(d_m: ArrayLike) -> float | np.ndarray:
    """50 % switching-impulse breakdown voltage of a rod–plane gap (positive polarity).

    Parameters
    ----------
    d_m
        Gap length [m], 0 < d ≤ 25.

    Returns
    -------
    float or ndarray
        U50 crest [V]: ``1080e3·ln(0.46·d + 1)`` (IEC 60071-2:1996 Annex G, from memory).
    """
    d = _gap(d_m)
    return _out(1080e3 * np.log(0.46 * d + 1.0))


def u50_switching_v(d_m: ArrayLike, *, gap_factor: float = 1.0) -> float | np.ndarray:
    """50 % switching-impulse breakdown voltage of a gap with gap factor K [V crest].

    ``U50 = K·U50_RP`` (Paris & Cortina 1968; IEC 60071-2 Annex G, from memory).
    """
    k = _gap_factor(gap_factor)
    return _out(k * np.asarray(u50_switching_rod_plane_v(d_m)))


def power_frequency_gap_factor(gap_factor: ArrayLike) -> float | np.ndarray:
    """AC gap factor from the switching-impulse gap factor: ``K_ff = 1.35·K − 0.35·K²``.

    IEC 60071-2:1996 Annex G, from memory.
    """
    k = _gap_factor(gap_factor)
    return _out(1.35 * k - 0.35 * k * k)


def u50_power_frequency_rod_plane_v(d_m: ArrayLike) -> float | np.ndarray:
    """50 % power-frequency breakdown voltage of a rod–plane gap [V crest].

    ``750e3·√2·ln(1 + 0.55·d^1.2)`` (IEC 60071-2:1996 Annex G, from memory).
    """
    d = _gap(d_m)
    return _out(750e3 * math.sqrt(2.0) * np.log(1.0 + 0.55 * d**1.2))


def u50_power_frequency_v(d_m: ArrayLike, *, gap_factor: float = 1.0) -> float | np.ndarray:
    """50 % power-frequency breakdown voltage of a gap with switching gap factor K [V crest].

    ``U50 = K_ff·U50_RP,AC`` with ``K_ff = 1.35·K − 0.35·K²``.
    """
    kff = np.asarray(power_frequency_gap_factor(gap_factor))
    return _out(kff * np.asarray(u50_power_frequency_rod_plane_v(d_m)))


def u50_lightning_v(d_m: ArrayLike, *, gap_factor: float = 1.0) -> float | np.ndarray:
    """50 % positive lightning-impulse breakdown voltage [V crest].

    ``(0.74 + 0.26·K)·530e3·d`` (IEC 60071-2:1996 Annex G, from memory).
    """
    d = _gap(d_m)
    k = _gap_factor(gap_factor)
    return _out((0.74 + 0.26 * k) * 530e3 * d)


def u50_switching_paris_v(d_m: ArrayLike) -> float | np.ndarray:
    """Rod–plane switching U50 by the power law ``500e3·d^0.6`` [V crest] (Paris, from memory).

    For comparison with the IEC form only.
    """
    d = _gap(d_m)
    return _out(500e3 * d**0.6)


def u50_switching_gallet_v(d_m: ArrayLike) -> float | np.ndarray:
    """Rod–plane switching U50 in the form of Gallet et al. (1975): ``3400e3/(1 + 8/d)`` [V].

    From memory; for comparison with the IEC form only.
    """
    d = _gap(d_m)
    return _out(3400e3 / (1.0 + 8.0 / d))


def statistical_withstand_v(
    u50_v: ArrayLike, *, sigma_pu: float = SIGMA_SWITCHING_PU, z: float = 1.3
) -> float | np.ndarray:
    """Statistical withstand voltage ``U50·(1 − z·σ)`` [V].

    Parameters
    ----------
    u50_v
        50 % breakdown voltage [V].
    sigma_pu
        Conventional deviation per unit of U50 (6 % switching, 3 % AC and lightning).
    z
        Standard normal deviate of the withstand probability: 1.3 (conventional, 10 %
        flashover) or 1.28.
    """
    if not (0.0 <= sigma_pu < 0.5) or not (0.0 <= z < 5.0):
        raise ModelError(f"sigma_pu must lie in [0, 0.5) and z in [0, 5), got {sigma_pu}, {z}")
    u = np.asarray(u50_v, dtype=float)
    return _out(u * (1.0 - z * sigma_pu))


def altitude_correction_factor(altitude_m: ArrayLike, *, m: float = 1.0) -> float | np.ndarray:
    """Atmospheric correction for altitude ``K_a = exp(m·H/8150)`` (IEC 60071-2, from memory).

    The withstand of a gap at altitude H is its sea-level value divided by ``K_a``. Use m = 1
    for AC and lightning; m < 1 for switching impulses.
    """
    h = np.asarray(altitude_m, dtype=float)
    if not np.all(np.isfinite(h)) or np.any(h < 0.0) or np.any(h > 6000.0):
        raise ModelError(f"altitude must lie in [0, 6000] m, got {altitude_m!r}")
    if not (0.0 <= m <= 1.0):
        raise ModelError(f"altitude exponent m must lie in [0, 1], got {m}")
    return _out(np.exp(m * h / ALTITUDE_SCALE_M))


def cold_gap_ceiling_v(d_m: float, *, gap_factor: float = 1.0, altitude_m: float = 0.0) -> float:
    """Cold-gap ceiling on the restrike voltage of an arc path of length ``d_m`` [V crest].

    The 50 % power-frequency breakdown voltage of the gap (the recovery voltage of a secondary
    arc path is a power-frequency voltage), corrected for altitude with m = 1. A hot channel
    never needs more than this to break down again.

    Parameters
    ----------
    d_m
        Clearance of the arc path (insulator string or arcing-horn gap) [m].
    gap_factor
        Switching-impulse gap factor K of the geometry (rod–plane 1.0; conductor to
        structure about 1.3, from memory).
    altitude_m
        Site altitude [m].
    """
    u = float(u50_power_frequency_v(d_m, gap_factor=gap_factor))
    return u / float(altitude_correction_factor(altitude_m, m=1.0))
