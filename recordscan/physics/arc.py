"""Dynamic model of primary and secondary fault arcs (Kizilcay form), elongation, extinction and
dielectric recovery.

The arc is a time-varying conductance g [S] obeying the first-order energy balance

    dg/dt = (G − g)/τ,   G = |i| / ((u0 + r0·|i|)·l),   τ = τ0·(l/l0)^α

(Kizilcay & Pniok, "Digital simulation of fault arcs in power systems", ETEP 1(1), 1991;
Johns, Aggarwal & Song, "Improved techniques for modelling fault arcs on faulted EHV
transmission systems", IEE Proc.-Gener. Transm. Distrib. 141(2), 1994 — volumes from memory).
``u0`` is the characteristic arc voltage per unit length [V/m], ``r0`` the characteristic arc
resistance per unit length [Ω/m], ``l`` the arc length [m], ``τ0`` the time constant at the
initial length ``l0`` and ``α`` < 0 an exponent. The stationary characteristic is
``|u| = (u0 + r0·|i|)·l``. The default parameters are those identified from staged fault tests
on a 400 kV line by Prikler, Kizilcay, Bán & Handl, "Improved secondary arc models based on
identification of arc parameters from staged fault test records", 14th PSCC, Sevilla, 2002.

Two APIs over one model:

* readable: :class:`ArcParameters`, the elongation laws, :class:`DielectricRecovery`,
  :func:`simulate_current_driven` (returns an :class:`ArcResponse`), :func:`arc_rhs` (the
  ``solve_ivp``-shaped right-hand side), :func:`find_restrike`;
* compiled kernels: ``*_scalar`` functions written with :mod:`math` and float/int arguments
  only (no numpy objects, closures or dataclasses), so that a time-domain solver can wrap them
  with ``numba.njit``. Their argument orders are a stable interface.

Extinction (Kizilcay/Prikler type): the arc is declared extinct when its conductance per unit
length ``g·l`` (the reciprocal of the resistance per unit length ``r = R/l = 1/(g·l)``; the
literature quotes the threshold in µS/m) is below ``g_min`` while ``r`` rises faster than
``dr/dt``. Dielectric recovery after an extinction follows the reignition characteristic of
Johns et al. (1994), capped by the cold-gap breakdown of :mod:`recordscan.physics.gap`,
optionally pausing for a plateau and scattered per breakdown trial (our choices, see
:class:`DielectricRecovery`); a recovery voltage that outruns it restrikes the arc (race
model, Slepian).
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Callable
from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from recordscan.errors import ModelError
from recordscan.physics import gap as _gap

__all__ = [
    "ARC_TUPLE_FIELDS",
    "ELONGATION_CONSTANT",
    "ELONGATION_JOHNS",
    "ELONGATION_LINEAR",
    "PRIMARY_ARC",
    "ArcParameters",
    "ArcResponse",
    "ConstantLength",
    "DielectricRecovery",
    "JohnsElongation",
    "LinearElongation",
    "arc_rhs",
    "arc_step_scalar",
    "dielectric_strength_scalar",
    "elongation_length_scalar",
    "extinction_scalar",
    "find_restrike",
    "hot_channel_strength_scalar",
    "johns_primary_time_constant_s",
    "johns_secondary_gradient_v_per_m",
    "johns_secondary_parameters",
    "johns_secondary_time_constant_s",
    "simulate_current_driven",
    "stationary_conductance",
    "stationary_conductance_scalar",
    "time_constant",
    "time_constant_scalar",
]

#: Order of :meth:`ArcParameters.as_tuple` (the argument order of the compiled kernels).
ARC_TUPLE_FIELDS: tuple[str, ...] = (
    "u0_v_per_m",
    "r0_ohm_per_m",
    "tau0_s",
    "alpha",
    "l0_m",
    "g_min_siemens_per_m",
    "dr_dt_ohm_per_m_s",
)

#: Elongation law codes for :func:`elongation_length_scalar`.
ELONGATION_CONSTANT = 0
ELONGATION_JOHNS = 1
ELONGATION_LINEAR = 2

#: Johns et al. (1994) reignition slope per unit length: the bracket is in kV/(cm·s);
#: 1 kV/(cm·s) = 1e3 V / (1e-2 m · s) = 1e5 V/(m·s).
_KV_PER_CM_S_TO_V_PER_M_S = 1.0e5


# --------------------------------------------------------------------------- scalar kernels
# Plain math, float/int arguments: safe to wrap with numba.njit.


def time_constant_scalar(l_m: float, tau0_s: float, alpha: float, l0_m: float) -> float:
    """Arc time constant ``τ = τ0·(l/l0)^α`` [s]."""
    return tau0_s * (l_m / l0_m) ** alpha


def stationary_conductance_scalar(
    i_a: float, l_m: float, u0_v_per_m: float, r0_ohm_per_m: float
) -> float:
    """Stationary arc conductance ``G = |i|/((u0 + r0·|i|)·l)`` [S]."""
    ai = abs(i_a)
    return ai / ((u0_v_per_m + r0_ohm_per_m * ai) * l_m)


def arc_step_scalar(
    g_siemens: float,
    i_a: float,
    l_m: float,
    dt_s: float,
    u0_v_per_m: float,
    r0_ohm_per_m: float,
    tau0_s: float,
    alpha: float,
    l0_m: float,
) -> float:
    """Advance the arc conductance by one step with the exact exponential update.

    ``g' = G + (g − G)·exp(−dt/τ)`` with G and τ held at their values for current ``i_a`` and
    length ``l_m`` over the step (exact when they are constant; first order otherwise).

    Returns
    -------
    float
        Conductance at the end of the step [S].
    """
    ai = abs(i_a)
    big_g = ai / ((u0_v_per_m + r0_ohm_per_m * ai) * l_m)
    tau = tau0_s * (l_m / l0_m) ** alpha
    return big_g + (g_siemens - big_g) * math.exp(-dt_s / tau)


def extinction_scalar(
    g_siemens: float,
    g_prev_siemens: float,
    l_m: float,
    dt_s: float,
    g_min_siemens_per_m: float,
    dr_dt_ohm_per_m_s: float,
) -> bool:
    """Kizilcay/Prikler-type extinction test after a step from ``g_prev`` to ``g``.

    True when the conductance per unit length ``g·l`` is below ``g_min`` and the resistance
    per unit length ``r = 1/(g·l)`` rose faster than ``dr_dt`` over the step. A conductance
    that has fallen to zero (or below) counts as extinct.
    """
    if g_siemens <= 0.0:
        return True
    gl = g_siemens * l_m
    if gl >= g_min_siemens_per_m:
        return False
    if g_prev_siemens <= 0.0:
        return False
    r_now = 1.0 / gl
    r_prev = 1.0 / (g_prev_siemens * l_m)
    return (r_now - r_prev) / dt_s > dr_dt_ohm_per_m_s


def elongation_length_scalar(code: int, p1: float, p2: float, t_s: float, l0_m: float) -> float:
    """Arc length [m] at ``t_s`` seconds after the arc started, for a law given by code.

    Codes: 0 constant (``l0``); 1 Johns et al. (1994) generalised,
    ``l/l0 = 1 + p2·(t − p1)`` for t > p1 (p1 = hold time 0.1 s, p2 = 10 /s gives Johns's
    ``10·t``); 2 linear, ``l = l0 + p1·t`` (p1 = speed [m/s]). Before the start (t < 0) the
    length is ``l0``. An unknown code returns ``l0``.
    """
    if t_s <= 0.0:
        return l0_m
    if code == 1:
        if t_s <= p1:
            return l0_m
        return l0_m * (1.0 + p2 * (t_s - p1))
    if code == 2:
        return l0_m + p1 * t_s
    return l0_m


def hot_channel_strength_scalar(
    t_since_extinction_s: float,
    t_burn_s: float,
    i_s_rms_a: float,
    l_m: float,
    rate_scale: float,
) -> float:
    """Dielectric strength of the cooling arc channel [V] (Johns et al. 1994 form).

    ``V_r = rate_scale·[5 + 1620·T_e/(2.15 + I_s)]·(t − T_e)·l`` with the bracket in
    kV/(cm·s), T_e the burning time before extinction [s], I_s the secondary-arc current
    [A] and l the channel length. In SI the bracket is multiplied by 1e5 V/(m·s) per
    kV/(cm·s). Coefficients from memory (see docs/arc-model.md).
    """
    if t_since_extinction_s <= 0.0:
        return 0.0
    slope = 5.0 + 1620.0 * t_burn_s / (2.15 + abs(i_s_rms_a))
    return rate_scale * slope * 1.0e5 * t_since_extinction_s * l_m


def dielectric_strength_scalar(
    t_since_extinction_s: float,
    t_burn_s: float,
    i_s_rms_a: float,
    l_m: float,
    ceiling_v: float,
    rate_scale: float,
) -> float:
    """Restrike withstand of the arc path [V]: hot-channel recovery capped by the cold gap.

    Parameters
    ----------
    t_since_extinction_s
        Time since the last current extinction [s].
    t_burn_s
        How long the arc burned before that extinction [s] (Johns's T_e).
    i_s_rms_a
        RMS secondary-arc current before extinction [A].
    l_m
        Channel length [m] (the elongated length at extinction, or the law's length).
    ceiling_v
        Cold-gap breakdown voltage of the path [V crest], e.g. from
        :func:`recordscan.physics.gap.cold_gap_ceiling_v` or
        :attr:`DielectricRecovery.ceiling_v`.
    rate_scale
        Multiplier on the recovery slope (1.0 = Johns et al.).
    """
    # self-contained (no call to another Python function) so that numba.njit can compile it
    if t_since_extinction_s <= 0.0:
        return 0.0
    slope = 5.0 + 1620.0 * t_burn_s / (2.15 + abs(i_s_rms_a))
    v = rate_scale * slope * 1.0e5 * t_since_extinction_s * l_m
    return v if v < ceiling_v else ceiling_v


# --------------------------------------------------------------------------- data classes


def _check(cond: bool, msg: str) -> None:
    if not cond:
        raise ModelError(msg)


@dataclass(frozen=True)
class ArcParameters:
    """Parameters of the Kizilcay-form arc model and its extinction criterion.

    Defaults: Prikler, Kizilcay, Bán & Handl (14th PSCC, Sevilla, 2002), 400 kV staged tests.

    Attributes
    ----------
    u0_v_per_m
        Characteristic arc voltage per unit length [V/m].
    r0_ohm_per_m
        Characteristic arc resistance per unit length [Ω/m].
    tau0_s
        Time constant at the initial length [s].
    alpha
        Exponent of the length dependence of τ (negative: longer arcs cool faster).
    l0_m
        Initial arc length [m] (insulator string or arcing-horn gap).
    g_min_siemens_per_m
        Extinction threshold on the conductance per unit length ``g·l`` (reciprocal of the
        resistance per unit length; quoted in µS/m in the literature).
    dr_dt_ohm_per_m_s
        Extinction threshold on the rise rate of the resistance per unit length
        [Ω/(m·s)]. Default 1e7: at the conductance threshold the resistance per unit length
        is ``1/g_min`` = 20 kΩ/m, and an arc left without current (G = 0) raises it at
        ``r/τ0`` = 2e7 Ω/(m·s); half of that separates a collapsing channel from a low-current
        arc that is still being fed (our choice, see docs/arc-model.md).
    """

    u0_v_per_m: float = 900.0
    r0_ohm_per_m: float = 0.022
    tau0_s: float = 1.0e-3
    alpha: float = -0.5
    l0_m: float = 3.0
    g_min_siemens_per_m: float = 50e-6
    dr_dt_ohm_per_m_s: float = 1.0e7

    def __post_init__(self) -> None:
        for f in fields(self):
            v = getattr(self, f.name)
            _check(
                isinstance(v, numbers.Real) and not isinstance(v, bool) and math.isfinite(v),
                f"arc parameter {f.name} must be a finite number, got {v!r}",
            )
        _check(self.u0_v_per_m > 0.0, f"u0_v_per_m must be > 0, got {self.u0_v_per_m}")
        _check(self.r0_ohm_per_m >= 0.0, f"r0_ohm_per_m must be >= 0, got {self.r0_ohm_per_m}")
        _check(self.tau0_s > 0.0, f"tau0_s must be > 0, got {self.tau0_s}")
        _check(-3.0 <= self.alpha <= 3.0, f"alpha must lie in [-3, 3], got {self.alpha}")
        _check(self.l0_m > 0.0, f"l0_m must be > 0, got {self.l0_m}")
        _check(self.g_min_siemens_per_m > 0.0, "g_min_siemens_per_m must be > 0")
        _check(self.dr_dt_ohm_per_m_s > 0.0, "dr_dt_ohm_per_m_s must be > 0")

    def as_tuple(self) -> tuple[float, ...]:
        """Parameters as plain floats in the order of :data:`ARC_TUPLE_FIELDS`.

        ``(u0_v_per_m, r0_ohm_per_m, tau0_s, alpha, l0_m, g_min_siemens_per_m,
        dr_dt_ohm_per_m_s)`` — the first five are the trailing arguments of
        :func:`arc_step_scalar`, the last two those of :func:`extinction_scalar`.
        """
        return tuple(float(getattr(self, name)) for name in ARC_TUPLE_FIELDS)

    @property
    def r_extinction_ohm_per_m(self) -> float:
        """Resistance per unit length above which extinction may be declared [Ω/m]."""
        return 1.0 / self.g_min_siemens_per_m


#: Primary (fault-current) arc: about 1.2–1.4 kV/m over 2–20 kA, close to the roughly
#: current-independent 15 V/cm of Johns et al. (1994) and the common 1–1.5 kV/m; τ0 = 1 ms
#: matches Johns's τ_p = 2.85e-5·I_p/l_p (I_p peak A, l_p cm) = 0.95 ms at 10 kA over 3 m.
PRIMARY_ARC = ArcParameters(u0_v_per_m=1200.0, r0_ohm_per_m=0.01, tau0_s=1.0e-3, alpha=-0.5)


def _length_array(t: np.ndarray, l0_m: float) -> np.ndarray:
    return np.full(t.shape, float(l0_m))


@dataclass(frozen=True)
class ConstantLength:
    """Arc of constant length ``l0`` (no elongation)."""

    code: int = field(default=ELONGATION_CONSTANT, init=False)

    @property
    def params(self) -> tuple[float, float]:
        """``(p1, p2)`` for :func:`elongation_length_scalar`."""
        return (0.0, 0.0)

    def length_m(self, t_since_start_s: ArrayLike, l0_m: float) -> np.ndarray:
        """Arc length [m] (vectorised)."""
        return _length_array(np.asarray(t_since_start_s, dtype=float), l0_m)


@dataclass(frozen=True)
class JohnsElongation:
    """Piecewise elongation of Johns, Aggarwal & Song (1994): l/l0 = 1 (t ≤ 0.1 s), 10·t after.

    Generalised as ``l/l0 = 1 + rate_per_s·(t − t_hold_s)`` for t > t_hold_s, which is
    Johns's ``10·t`` for the defaults and continuous for any parameters.
    """

    t_hold_s: float = 0.1
    rate_per_s: float = 10.0
    code: int = field(default=ELONGATION_JOHNS, init=False)

    def __post_init__(self) -> None:
        _check(
            math.isfinite(self.t_hold_s) and self.t_hold_s >= 0.0,
            f"t_hold_s must be >= 0, got {self.t_hold_s}",
        )
        _check(
            math.isfinite(self.rate_per_s) and self.rate_per_s >= 0.0,
            f"rate_per_s must be >= 0, got {self.rate_per_s}",
        )

    @property
    def params(self) -> tuple[float, float]:
        """``(p1, p2) = (t_hold_s, rate_per_s)`` for :func:`elongation_length_scalar`."""
        return (float(self.t_hold_s), float(self.rate_per_s))

    def length_m(self, t_since_start_s: ArrayLike, l0_m: float) -> np.ndarray:
        """Arc length [m] (vectorised)."""
        t = np.asarray(t_since_start_s, dtype=float)
        grow = 1.0 + self.rate_per_s * np.maximum(t - self.t_hold_s, 0.0)
        return l0_m * np.where(t > 0.0, grow, 1.0)


@dataclass(frozen=True)
class LinearElongation:
    """Linear elongation by wind, buoyancy and electrodynamic forces: ``l = l0 + v·t``.

    Speeds of 1–10 m/s are typical (common practice).
    """

    v_m_per_s: float = 3.0
    code: int = field(default=ELONGATION_LINEAR, init=False)

    def __post_init__(self) -> None:
        _check(
            math.isfinite(self.v_m_per_s) and self.v_m_per_s >= 0.0,
            f"v_m_per_s must be >= 0, got {self.v_m_per_s}",
        )

    @property
    def params(self) -> tuple[float, float]:
        """``(p1, p2) = (v_m_per_s, 0)`` for :func:`elongation_length_scalar`."""
        return (float(self.v_m_per_s), 0.0)

    def length_m(self, t_since_start_s: ArrayLike, l0_m: float) -> np.ndarray:
        """Arc length [m] (vectorised)."""
        t = np.asarray(t_since_start_s, dtype=float)
        return l0_m + self.v_m_per_s * np.maximum(t, 0.0)


ElongationLaw = ConstantLength | JohnsElongation | LinearElongation


@dataclass(frozen=True)
class DielectricRecovery:
    """Dielectric recovery of the arc path after a current extinction.

    Attributes
    ----------
    rate_scale
        Multiplier on the Johns et al. (1994) recovery slope (1.0 = as published).
    gap_m
        Clearance of the path for the cold-gap ceiling [m]; ``None`` uses the arc's l0.
    gap_factor
        Switching-impulse gap factor K of the path (rod–plane 1.0).
    altitude_m
        Site altitude [m].
    saturation_time_s
        Duration of the hot channel's first linear (Johns) recovery [s]; after it the
        withstand stays at the value reached, ``V_r(t_sat)``, for :attr:`plateau_s` — a
        slowly recovering residual column — then rises again along Johns's slope (our
        choice, see docs/arc-model.md). ``math.inf`` (default): Johns's line up to the cold
        gap.
    plateau_s
        How long the withstand stays at ``V_r(t_sat)`` [s] (``math.inf``: for good).
    scatter_pu
        Relative standard deviation of the breakdown voltage of the recovering path; the
        withstand is multiplied by a Gaussian factor ``1 + scatter_pu·z`` redrawn at every
        crest of the recovery voltage (statistical breakdown of self-restoring air
        insulation, IEC 60071-2; 0 = deterministic).
    scatter_seed
        Seed of the network simulator's generator of those factors.
    """

    rate_scale: float = 1.0
    gap_m: float | None = None
    gap_factor: float = 1.0
    altitude_m: float = 0.0
    saturation_time_s: float = math.inf
    plateau_s: float = math.inf
    scatter_pu: float = 0.0
    scatter_seed: int = 0

    def __post_init__(self) -> None:
        _check(
            math.isfinite(self.rate_scale) and self.rate_scale > 0.0,
            f"rate_scale must be > 0, got {self.rate_scale}",
        )
        _check(
            not math.isnan(self.saturation_time_s) and self.saturation_time_s > 0.0,
            f"saturation_time_s must be > 0 (math.inf: no saturation), got "
            f"{self.saturation_time_s}",
        )
        _check(
            not math.isnan(self.plateau_s) and self.plateau_s >= 0.0,
            f"plateau_s must be >= 0 (math.inf: the withstand stays), got {self.plateau_s}",
        )
        _check(
            math.isfinite(self.scatter_pu) and 0.0 <= self.scatter_pu <= 0.3,
            f"scatter_pu must lie in [0, 0.3], got {self.scatter_pu}",
        )
        _check(
            isinstance(self.scatter_seed, numbers.Integral) and self.scatter_seed >= 0,
            f"scatter_seed must be an integer >= 0, got {self.scatter_seed!r}",
        )
        self.ceiling_for(1.0)  # validates gap_m, gap_factor and altitude_m through gap.py

    def recovery_time_s(self, t_since_extinction_s: ArrayLike) -> np.ndarray:
        """Time over which the channel has recovered: ``t`` less the plateau (vectorised).

        ``min(t, t_sat) + max(t − t_sat − plateau, 0)``; Johns's characteristic is evaluated
        at this time.
        """
        t = np.asarray(t_since_extinction_s, dtype=float)
        t_sat = self.saturation_time_s
        after = t - t_sat - self.plateau_s if math.isfinite(self.plateau_s) else -np.inf
        return np.minimum(t, t_sat) + np.maximum(after, 0.0)

    def ceiling_for(self, l0_m: float) -> float:
        """Cold-gap ceiling [V crest] for an arc path whose clearance is ``gap_m`` or ``l0_m``."""
        d = self.gap_m if self.gap_m is not None else l0_m
        return _gap.cold_gap_ceiling_v(d, gap_factor=self.gap_factor, altitude_m=self.altitude_m)

    def strength_v(
        self,
        t_since_extinction_s: ArrayLike,
        *,
        t_burn_s: float,
        i_s_rms_a: float,
        l_m: ArrayLike,
        l0_m: float,
    ) -> np.ndarray:
        """Withstand of the path [V] after an extinction (vectorised, 50 % value).

        Same arithmetic as :func:`dielectric_strength_scalar` with the ceiling for ``l0_m``,
        evaluated at :meth:`recovery_time_s`; the scatter is not applied (it is a property
        of each breakdown trial, see the kernel).
        """
        t = self.recovery_time_s(np.asarray(t_since_extinction_s, dtype=float))
        slope = 5.0 + 1620.0 * t_burn_s / (2.15 + abs(i_s_rms_a))
        hot = self.rate_scale * slope * _KV_PER_CM_S_TO_V_PER_M_S * np.maximum(t, 0.0)
        hot = hot * np.asarray(l_m, dtype=float)
        return np.minimum(hot, self.ceiling_for(l0_m))


def find_restrike(
    t_since_extinction_s: ArrayLike,
    v_recovery_v: ArrayLike,
    *,
    t_burn_s: float,
    i_s_rms_a: float,
    l_m: ArrayLike,
    l0_m: float,
    recovery: DielectricRecovery | None = None,
) -> int | None:
    """First sample at which the recovery voltage across the path exceeds its withstand.

    Parameters
    ----------
    t_since_extinction_s
        Sample times counted from the extinction [s].
    v_recovery_v
        Voltage across the arc path at those times [V] (its magnitude is compared).
    t_burn_s, i_s_rms_a, l_m, l0_m
        See :func:`dielectric_strength_scalar`; ``l0_m`` sets the cold-gap clearance when
        ``recovery.gap_m`` is None.
    recovery
        Dielectric recovery settings (default :class:`DielectricRecovery`).

    Returns
    -------
    int or None
        Index of the restrike, or None if the path withstands the whole waveform.
    """
    rec = recovery if recovery is not None else DielectricRecovery()
    t = np.asarray(t_since_extinction_s, dtype=float)
    v = np.abs(np.asarray(v_recovery_v, dtype=float))
    if t.shape != v.shape or t.ndim != 1:
        raise ModelError("t_since_extinction_s and v_recovery_v must be 1-D arrays of one length")
    w = rec.strength_v(t, t_burn_s=t_burn_s, i_s_rms_a=i_s_rms_a, l_m=l_m, l0_m=l0_m)
    hit = np.flatnonzero((t > 0.0) & (v > w))
    return int(hit[0]) if hit.size else None


# --------------------------------------------------------------------------- Johns et al. set
# Johns, Aggarwal & Song (1994) give their arc in cm and A; the coefficients are from memory
# (widely reproduced, e.g. Dudurych et al. 2004) and whether their currents are peak or rms
# is unverified. Converted here to metres: 1 V/cm = 100 V/m, l_cm = 100·l_m.


def johns_secondary_gradient_v_per_m(i_s_a: ArrayLike) -> float | np.ndarray:
    """Secondary-arc voltage gradient ``V_s = 75·I_s^−0.4`` V/cm of Johns et al. (1994), in V/m."""
    i = np.abs(np.asarray(i_s_a, dtype=float))
    _check(bool(np.all(i > 0.0)), "secondary-arc current must be non-zero")
    out = 100.0 * 75.0 * i**-0.4
    return float(out) if out.ndim == 0 else out


def johns_secondary_time_constant_s(i_s_a: ArrayLike, l_m: ArrayLike) -> float | np.ndarray:
    """Secondary-arc time constant ``τ_s = 2.51e-3·I_s^1.4/l_s`` (l_s in cm) of Johns et al."""
    i = np.abs(np.asarray(i_s_a, dtype=float))
    ell = np.asarray(l_m, dtype=float)
    _check(bool(np.all(ell > 0.0)), "arc length must be > 0")
    out = 2.51e-3 * i**1.4 / (100.0 * ell)
    return float(out) if out.ndim == 0 else out


def johns_primary_time_constant_s(i_p_a: ArrayLike, l_m: ArrayLike) -> float | np.ndarray:
    """Primary-arc time constant ``τ_p = 2.85e-5·I_p/l_p`` (l_p in cm) of Johns et al."""
    i = np.abs(np.asarray(i_p_a, dtype=float))
    ell = np.asarray(l_m, dtype=float)
    _check(bool(np.all(ell > 0.0)), "arc length must be > 0")
    out = 2.85e-5 * i / (100.0 * ell)
    return float(out) if out.ndim == 0 else out


def johns_secondary_parameters(
    i_s_a: float, *, l0_m: float = 3.0, base: ArcParameters | None = None
) -> ArcParameters:
    """The Johns et al. secondary arc at current ``i_s_a`` expressed in the Kizilcay form.

    ``G = |i|/(V_s·l)`` is the Kizilcay G with ``u0 = V_s(I_s)`` and ``r0 = 0``;
    ``τ_s ∝ 1/l`` is ``τ0·(l/l0)^α`` with ``α = −1`` and ``τ0 = τ_s(I_s, l0)``. Extinction
    thresholds are taken from ``base`` (default :class:`ArcParameters`).
    """
    b = base if base is not None else ArcParameters()
    return ArcParameters(
        u0_v_per_m=float(johns_secondary_gradient_v_per_m(i_s_a)),
        r0_ohm_per_m=0.0,
        tau0_s=float(johns_secondary_time_constant_s(i_s_a, l0_m)),
        alpha=-1.0,
        l0_m=l0_m,
        g_min_siemens_per_m=b.g_min_siemens_per_m,
        dr_dt_ohm_per_m_s=b.dr_dt_ohm_per_m_s,
    )


# --------------------------------------------------------------------------- vectorised model


def stationary_conductance(
    i_a: ArrayLike, l_m: ArrayLike, *, params: ArcParameters | None = None
) -> np.ndarray:
    """Stationary conductance ``|i|/((u0 + r0·|i|)·l)`` [S] (vectorised)."""
    p = params if params is not None else ArcParameters()
    ai = np.abs(np.asarray(i_a, dtype=float))
    return ai / ((p.u0_v_per_m + p.r0_ohm_per_m * ai) * np.asarray(l_m, dtype=float))


def time_constant(l_m: ArrayLike, *, params: ArcParameters | None = None) -> np.ndarray:
    """Time constant ``τ0·(l/l0)^α`` [s] (vectorised)."""
    p = params if params is not None else ArcParameters()
    return p.tau0_s * (np.asarray(l_m, dtype=float) / p.l0_m) ** p.alpha


def arc_rhs(
    t_s: float,
    g_siemens: ArrayLike,
    *,
    current: Callable[[float], float],
    length: Callable[[float], float],
    params: ArcParameters | None = None,
) -> np.ndarray:
    """Right-hand side ``dg/dt = (G − g)/τ`` in the shape ``scipy.integrate.solve_ivp`` expects.

    ``current(t)`` and ``length(t)`` give the arc current [A] and length [m] at time t.
    """
    p = params if params is not None else ArcParameters()
    i = float(current(t_s))
    ell = float(length(t_s))
    big_g = stationary_conductance_scalar(i, ell, p.u0_v_per_m, p.r0_ohm_per_m)
    tau = time_constant_scalar(ell, p.tau0_s, p.alpha, p.l0_m)
    return (big_g - np.asarray(g_siemens, dtype=float)) / tau


def _kernel_py(
    t: np.ndarray,
    big_g: np.ndarray,
    tau: np.ndarray,
    g0: float,
    linear: bool,
) -> np.ndarray:
    """Conductance recursion over a sampled current (the compiled kernel's source).

    Zero-order hold: exact for G and τ constant over each step. Linear hold: exact for G
    varying linearly between samples (τ at the step's mean), second-order accurate.
    """
    n = t.shape[0]
    g = np.empty(n)
    g[0] = g0
    for k in range(n - 1):
        dt = t[k + 1] - t[k]
        if linear:
            tk = 0.5 * (tau[k] + tau[k + 1])
            e = math.exp(-dt / tk)
            s = (big_g[k + 1] - big_g[k]) / dt
            g[k + 1] = big_g[k] + s * (dt - tk) + (g[k] - big_g[k] + s * tk) * e
        else:
            e = math.exp(-dt / tau[k])
            g[k + 1] = big_g[k] + (g[k] - big_g[k]) * e
    return g


_KERNEL: list[Any] = []


def _kernel() -> Callable[..., np.ndarray]:
    """The recursion compiled with numba when it is installed, else the Python loop."""
    if not _KERNEL:
        try:
            import numba
        except ImportError:  # pragma: no cover - numba is a dependency
            _KERNEL.append(_kernel_py)
        else:
            _KERNEL.append(numba.njit(cache=True, nogil=True)(_kernel_py))
    return _KERNEL[0]


@dataclass(frozen=True)
class ArcResponse:
    """Response of the arc to a prescribed current (read-only arrays).

    Attributes
    ----------
    t_s, i_a
        Sample times [s] and the prescribed current [A].
    g_siemens, u_v, l_m, tau_s
        Conductance, voltage ``i/g``, length and time constant at each sample.
    extinction_idx, extinction_s
        First sample (and its time) at which the extinction criterion holds, or None.
        With the current prescribed the arc cannot go out; this is where it would.
    """

    t_s: np.ndarray
    i_a: np.ndarray
    g_siemens: np.ndarray
    u_v: np.ndarray
    l_m: np.ndarray
    tau_s: np.ndarray
    extinction_idx: int | None
    extinction_s: float | None

    def __post_init__(self) -> None:
        for name in ("t_s", "i_a", "g_siemens", "u_v", "l_m", "tau_s"):
            arr = np.array(getattr(self, name), dtype=float)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)


def simulate_current_driven(
    t_s: ArrayLike,
    i_a: ArrayLike,
    *,
    params: ArcParameters | None = None,
    law: ElongationLaw | None = None,
    g0_siemens: float | None = None,
    t_start_s: float | None = None,
    hold: str = "linear",
) -> ArcResponse:
    """Arc conductance and voltage for a prescribed current.

    Parameters
    ----------
    t_s
        Strictly increasing sample times [s] (non-uniform steps allowed).
    i_a
        Arc current at those times [A].
    params
        Arc parameters (default :class:`ArcParameters`).
    law
        Elongation law (default :class:`ConstantLength`).
    g0_siemens
        Conductance at the first sample. Default: the stationary conductance at the mean
        absolute current of the record (for a sinusoid with r0 = 0 that is the exact mean of
        the periodic steady state, so the start-up transient is small).
    t_start_s
        Instant the arc (and its elongation) started [s]; default the first sample.
    hold
        ``"linear"``: G varies linearly between samples (second order, for records sampled at
        a few kHz); ``"zero"``: G held over each step (the same arithmetic as
        :func:`arc_step_scalar`).

    Returns
    -------
    ArcResponse
    """
    p = params if params is not None else ArcParameters()
    lw = law if law is not None else ConstantLength()
    t = np.ascontiguousarray(t_s, dtype=float)
    i = np.ascontiguousarray(i_a, dtype=float)
    if t.ndim != 1 or t.shape != i.shape or t.size < 2:
        raise ModelError("t_s and i_a must be 1-D arrays of one length with at least 2 samples")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(i))):
        raise ModelError("t_s and i_a must be finite")
    if np.any(np.diff(t) <= 0.0):
        raise ModelError("t_s must be strictly increasing")
    if hold not in ("linear", "zero"):
        raise ModelError(f"hold must be 'linear' or 'zero', got {hold!r}")
    t0 = float(t[0]) if t_start_s is None else float(t_start_s)
    ell = np.asarray(lw.length_m(t - t0, p.l0_m), dtype=float)
    big_g = stationary_conductance(i, ell, params=p)
    tau = time_constant(ell, params=p)
    if g0_siemens is None:
        g0 = float(stationary_conductance(np.mean(np.abs(i)), ell[0], params=p))
    else:
        g0 = float(g0_siemens)
        _check(math.isfinite(g0) and g0 >= 0.0, f"g0_siemens must be >= 0, got {g0_siemens}")
    g = _kernel()(t, big_g, tau, g0, hold == "linear")
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.where(g > 0.0, i / np.where(g > 0.0, g, 1.0), np.where(i == 0.0, 0.0, np.inf))
        gl = g * ell
        r_now = 1.0 / gl[1:]
        r_prev = 1.0 / (g[:-1] * ell[1:])
        rising = (r_now - r_prev) / np.diff(t) > p.dr_dt_ohm_per_m_s
    ext = (g[1:] <= 0.0) | ((gl[1:] < p.g_min_siemens_per_m) & (g[:-1] > 0.0) & rising)
    hits = np.flatnonzero(ext)
    idx = int(hits[0]) + 1 if hits.size else None
    return ArcResponse(
        t_s=t,
        i_a=i,
        g_siemens=g,
        u_v=u,
        l_m=ell,
        tau_s=tau,
        extinction_idx=idx,
        extinction_s=float(t[idx]) if idx is not None else None,
    )
