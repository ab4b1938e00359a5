"""Shunt reactors with a neutral reactor (the four-legged arrangement).

Three phase reactors ``X_p`` in star, the star point grounded through a neutral reactor
``X_n``. Seen from the line the bank is a phase-to-ground reactance ``X_pg = X_p + 3X_n``
(the zero-sequence reactance) and a phase-to-phase (delta) reactance
``X_pp = X_p²/X_n + 3X_p``. Choosing ``1/X_pp = ωC_m`` cancels the interphase capacitance
of a transposed line, which is what suppresses the capacitive secondary-arc current
(E. W. Kimbark, "Suppression of ground-fault arcs on single-pole-switched EHV lines by shunt
reactors", IEEE Trans. PAS-83(3), 1964; N. Knudsen, CIGRE 1962 report 310).

Reactances are given at the rated frequency; admittances at another frequency scale as
``1/f``. The quality factor ``Q = X/R`` adds a series resistance ``X/Q`` to each reactor.

This module imports only numpy (it is used by the line-file loader).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from recordscan.errors import ModelError

__all__ = [
    "FourLeggedReactor",
    "NeutralReactorSizing",
    "free_frequency_hz",
    "phase_reactance_ohm",
    "reactance_from_mvar_ohm",
    "size_neutral_reactor",
]


@dataclass(frozen=True)
class FourLeggedReactor:
    """A three-phase shunt reactor bank, star point grounded directly or through ``X_n``.

    Attributes
    ----------
    x_phase_ohm : float
        Reactance of each phase reactor at the rated frequency.
    x_neutral_ohm : float
        Reactance of the neutral reactor at the rated frequency; 0 for a solidly grounded
        star point.
    quality_factor : float
        ``X/R`` of the phase and neutral reactors; ``inf`` for a lossless model.
    """

    x_phase_ohm: float
    x_neutral_ohm: float = 0.0
    quality_factor: float = math.inf

    def __post_init__(self) -> None:
        if not (self.x_phase_ohm > 0 and math.isfinite(self.x_phase_ohm)):
            raise ModelError(f"phase reactance must be positive, got {self.x_phase_ohm!r} Ω")
        if not (self.x_neutral_ohm >= 0 and math.isfinite(self.x_neutral_ohm)):
            raise ModelError(f"neutral reactance must be ≥ 0, got {self.x_neutral_ohm!r} Ω")
        if not (self.quality_factor > 0):
            raise ModelError(f"quality factor must be positive, got {self.quality_factor!r}")

    @property
    def x_pg_ohm(self) -> float:
        """Phase-to-ground (zero-sequence) reactance ``X_p + 3X_n``."""
        return self.x_phase_ohm + 3.0 * self.x_neutral_ohm

    @property
    def x_pp_ohm(self) -> float:
        """Phase-to-phase equivalent reactance ``X_p²/X_n + 3X_p`` (``inf`` if solid)."""
        if self.x_neutral_ohm == 0:
            return math.inf
        return self.x_phase_ohm**2 / self.x_neutral_ohm + 3.0 * self.x_phase_ohm

    @property
    def b_pg_siemens(self) -> float:
        """Phase-to-ground susceptance magnitude ``1/X_pg`` at the rated frequency."""
        return 1.0 / self.x_pg_ohm

    @property
    def b_pp_siemens(self) -> float:
        """Phase-to-phase susceptance magnitude ``1/X_pp`` at the rated frequency."""
        return 1.0 / self.x_pp_ohm

    @property
    def b1_siemens(self) -> float:
        """Positive-sequence susceptance magnitude ``1/X_p``."""
        return 1.0 / self.x_phase_ohm

    def mvar_at(self, voltage_ll_v: float) -> float:
        """Three-phase rating in var at the given line-to-line voltage, ``V²/X_p``."""
        return voltage_ll_v**2 / self.x_phase_ohm

    def admittance_matrix_siemens(self, *, frequency_ratio: float = 1.0) -> np.ndarray:
        """3×3 nodal admittance matrix of the bank between the phases and ground.

        Parameters
        ----------
        frequency_ratio : float
            ``f / f_rated``: reactances scale with it, resistances do not.

        Returns
        -------
        numpy.ndarray
            Complex ``Y`` with ``I = Y·V``; ``Y = y_p·I − y_p²/(3y_p + y_n)·J``.
        """
        q = self.quality_factor
        zp = self.x_phase_ohm * (1j * frequency_ratio + (0.0 if math.isinf(q) else 1.0 / q))
        yp = 1.0 / zp
        y = np.eye(3, dtype=complex) * yp
        if self.x_neutral_ohm == 0:
            return y
        zn = self.x_neutral_ohm * (1j * frequency_ratio + (0.0 if math.isinf(q) else 1.0 / q))
        yn = 1.0 / zn
        return y - yp**2 / (3.0 * yp + yn) * np.ones((3, 3))

    def with_neutral(self, x_neutral_ohm: float) -> FourLeggedReactor:
        """A copy with another neutral reactance."""
        return FourLeggedReactor(
            x_phase_ohm=self.x_phase_ohm,
            x_neutral_ohm=x_neutral_ohm,
            quality_factor=self.quality_factor,
        )

    def to_dict(self) -> dict[str, float | None]:
        """SI-keyed description; infinite values (solid neutral, lossless) become ``None``."""

        def fin(x: float) -> float | None:
            return x if math.isfinite(x) else None

        return {
            "phase_reactor_ohm": self.x_phase_ohm,
            "neutral_reactor_ohm": self.x_neutral_ohm,
            "phase_to_ground_ohm": self.x_pg_ohm,
            "phase_to_phase_ohm": fin(self.x_pp_ohm),
            "quality_factor": fin(self.quality_factor),
        }


def reactance_from_mvar_ohm(q_var: float, voltage_ll_v: float) -> float:
    """Phase reactance of a star bank rated ``q_var`` (three-phase) at ``voltage_ll_v``.

    ``X_p = V_LL² / Q``.
    """
    if not (q_var > 0 and voltage_ll_v > 0):
        raise ModelError(f"reactor rating and voltage must be positive ({q_var}, {voltage_ll_v})")
    return voltage_ll_v**2 / q_var


def phase_reactance_ohm(*, c1_f: float, compensation: float, frequency_hz: float) -> float:
    """Phase reactance giving the positive-sequence compensation degree ``F``.

    ``F = B_L1 / B_C1`` so ``X_p = 1/(F·ω·C1)``; ``c1_f`` is the whole line's (or the share
    compensated by this bank) positive-sequence capacitance in farads.
    """
    if not (0 < compensation and c1_f > 0 and frequency_hz > 0):
        raise ModelError(
            f"compensation, C1 and frequency must be positive ({compensation}, {c1_f}, "
            f"{frequency_hz})"
        )
    return 1.0 / (compensation * 2.0 * math.pi * frequency_hz * c1_f)


@dataclass(frozen=True)
class NeutralReactorSizing:
    """Result of :func:`size_neutral_reactor` (reactances at the rated frequency).

    Attributes
    ----------
    compensation : float
        Positive-sequence compensation degree ``F``.
    x_phase_ohm, x_neutral_ohm : float
        Phase and neutral reactances.
    ratio : float
        ``X_n / X_p``.
    free_frequency_hz : float
        Free oscillation frequency of the open phase with this bank (lossless).
    beat_frequency_hz : float
        ``|f − f_n|``.
    """

    compensation: float
    x_phase_ohm: float
    x_neutral_ohm: float
    ratio: float
    free_frequency_hz: float
    beat_frequency_hz: float

    @property
    def reactor(self) -> FourLeggedReactor:
        """The sized bank (lossless)."""
        return FourLeggedReactor(x_phase_ohm=self.x_phase_ohm, x_neutral_ohm=self.x_neutral_ohm)

    def mvar_at(self, voltage_ll_v: float) -> float:
        """Three-phase rating of the phase reactors in var at ``voltage_ll_v``."""
        return voltage_ll_v**2 / self.x_phase_ohm

    def to_dict(self) -> dict[str, float]:
        """SI-keyed description."""
        return {
            "compensation": self.compensation,
            "phase_reactor_ohm": self.x_phase_ohm,
            "neutral_reactor_ohm": self.x_neutral_ohm,
            "neutral_to_phase_ratio": self.ratio,
            "free_frequency_hz": self.free_frequency_hz,
            "beat_frequency_hz": self.beat_frequency_hz,
        }


def size_neutral_reactor(
    *, c1_f: float, c0_f: float, compensation: float, frequency_hz: float
) -> NeutralReactorSizing:
    """Phase and neutral reactances for compensation ``F`` that cancel the interphase capacitance.

    ``X_p = 1/(F·ω·C1)``; ``1/X_pp = ω·C_m`` with ``C_m = (C1 − C0)/3`` gives
    ``X_n = X_p²/(X_pp − 3X_p) = X_p·(C1 − C0)/(3·(C0 − (1 − F)·C1))`` (Kimbark 1964;
    Knudsen 1962). Feasible only when ``F > 1 − C0/C1``.

    Parameters
    ----------
    c1_f, c0_f : float
        Positive- and zero-sequence capacitance of the part of the line this bank
        compensates (whole line for one bank), farads.
    compensation : float
        Positive-sequence compensation degree ``F`` (0 < F).
    frequency_hz : float
        Rated frequency.

    Returns
    -------
    NeutralReactorSizing
    """
    if not (c1_f > c0_f > 0):
        raise ModelError(f"need C1 > C0 > 0 to size a neutral reactor (C1 {c1_f}, C0 {c0_f})")
    x_p = phase_reactance_ohm(c1_f=c1_f, compensation=compensation, frequency_hz=frequency_hz)
    denom = c0_f - (1.0 - compensation) * c1_f
    if denom <= 0:
        raise ModelError(
            f"no neutral reactor can cancel the interphase capacitance at compensation "
            f"{compensation:.3f}: it must exceed 1 − C0/C1 = {1.0 - c0_f / c1_f:.3f}"
        )
    x_n = x_p * (c1_f - c0_f) / (3.0 * denom)
    bank = FourLeggedReactor(x_phase_ohm=x_p, x_neutral_ohm=x_n)
    f_n = free_frequency_hz(c1_f=c1_f, c0_f=c0_f, reactors=(bank,), frequency_hz=frequency_hz)
    return NeutralReactorSizing(
        compensation=compensation,
        x_phase_ohm=x_p,
        x_neutral_ohm=x_n,
        ratio=x_n / x_p,
        free_frequency_hz=f_n,
        beat_frequency_hz=abs(frequency_hz - f_n),
    )


def free_frequency_hz(
    *,
    c1_f: float,
    c0_f: float,
    reactors: tuple[FourLeggedReactor, ...],
    frequency_hz: float,
) -> float:
    """Free oscillation frequency of one open phase of a transposed line with reactor banks.

    The open phase, with the healthy phases held by the sources, is a capacitance
    ``C0 + 2C_m = (2C1 + C0)/3`` against a reactor susceptance ``Σ (B_pg + 2B_pp)``:
    ``f_n = f·√((B_pg + 2B_pp)/(B0 + 2B_m))`` (Kimbark 1964). Lossless; ``nan`` without
    reactors.

    Parameters
    ----------
    c1_f, c0_f : float
        Whole-line positive- and zero-sequence capacitance, farads.
    reactors : tuple of FourLeggedReactor
        All banks on the line.
    frequency_hz : float
        Rated frequency.
    """
    if not reactors:
        return math.nan
    omega = 2.0 * math.pi * frequency_hz
    b_l = sum(r.b_pg_siemens + 2.0 * r.b_pp_siemens for r in reactors)
    b_c = omega * (2.0 * c1_f + c0_f) / 3.0
    return frequency_hz * math.sqrt(b_l / b_c)
