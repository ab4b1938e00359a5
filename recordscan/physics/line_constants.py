"""Per-length electrical constants of an overhead line from its tower geometry.

Series impedance
    Each phase position holds a bundle of ``n`` sub-conductors, replaced by one equivalent
    conductor (GMR of the bundle for inductance, resistance divided by ``n``). The earth
    return is added either by Carson's correction terms (series expansion of Carson's
    integral, J. R. Carson, "Wave propagation in overhead wires with ground return", Bell
    System Technical Journal 5, 1926; coefficients b_i, c_i, d_i in the tabulated form of
    the transients literature, e.g. H. W. Dommel, 1986, from memory, and verified in the
    tests against a numerical evaluation of Carson's integral) or by the complex-depth
    approximation (A. Deri, G. Tevan, A. Semlyen and A. Castanheira, "The complex ground
    return plane", IEEE Trans. PAS-100(8), 1981; C. Gary, 1976, from memory). Shield wires,
    grounded at every tower, are eliminated by Kron reduction.

Shunt capacitance
    Maxwell potential coefficients with the images of the conductors in a perfectly
    conducting earth, ``P_ii = ln(2 h_i / r_eq,i) / (2π ε0)``, ``P_ij = ln(D'_ij / D_ij) /
    (2π ε0)``; shield wires are at earth potential and are Kron-reduced out of ``P``;
    ``C = P⁻¹`` (the Maxwell capacitance matrix, negative off-diagonal terms).

Conductor heights are the average over a span, ``h_avg = h_tower − 2/3·sag`` (parabolic sag,
common practice). Everything is SI: metres, ohms per metre, farads per metre.

This module imports only numpy (it is used by the line-file loader).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from recordscan.errors import ModelError

__all__ = [
    "EPSILON_0_F_PER_M",
    "MU_0_H_PER_M",
    "Bundle",
    "Conductor",
    "LineConstants",
    "TowerGeometry",
    "Wire",
    "carson_correction_ohm_per_m",
    "complex_depth_correction_ohm_per_m",
    "line_constants",
]

#: Vacuum permittivity (CODATA 2018).
EPSILON_0_F_PER_M = 8.8541878128e-12
#: Vacuum permeability (4π·1e-7, the pre-2019 exact value; differs from CODATA 2018 by 5e-10).
MU_0_H_PER_M = 4.0e-7 * math.pi

EarthModel = Literal["carson", "complex_depth"]


def _readonly(a: np.ndarray, dtype: type) -> np.ndarray:
    arr = np.array(a, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr


# --------------------------------------------------------------------------- geometry


@dataclass(frozen=True)
class Conductor:
    """One sub-conductor type.

    Attributes
    ----------
    diameter_m : float
        Outside diameter.
    resistance_ohm_per_m : float
        AC resistance of one sub-conductor at the operating temperature.
    gmr_m : float or None
        Geometric mean radius (self-GMR). ``None`` uses ``0.7788·r`` (solid round,
        non-magnetic conductor, ``e^(−1/4)·r``); stranded ACSR is typically 0.77–0.81·r.
    """

    diameter_m: float
    resistance_ohm_per_m: float
    gmr_m: float | None = None

    def __post_init__(self) -> None:
        if not (self.diameter_m > 0 and math.isfinite(self.diameter_m)):
            raise ModelError(f"conductor diameter must be positive, got {self.diameter_m!r} m")
        if not (self.resistance_ohm_per_m >= 0 and math.isfinite(self.resistance_ohm_per_m)):
            raise ModelError(
                f"conductor resistance must be non-negative, got {self.resistance_ohm_per_m!r}"
            )
        if self.gmr_m is not None and not (0 < self.gmr_m <= self.radius_m):
            raise ModelError(
                f"conductor GMR must be in (0, radius = {self.radius_m} m], got {self.gmr_m!r}"
            )

    @property
    def radius_m(self) -> float:
        """Outside radius."""
        return 0.5 * self.diameter_m

    @property
    def self_gmr_m(self) -> float:
        """The GMR used for inductance (given, or ``e^(−1/4)·r``)."""
        return self.gmr_m if self.gmr_m is not None else math.exp(-0.25) * self.radius_m


@dataclass(frozen=True)
class Bundle:
    """``n_sub`` identical sub-conductors on a circle, adjacent ones ``spacing_m`` apart.

    Attributes
    ----------
    conductor : Conductor
        The sub-conductor.
    n_sub : int
        Number of sub-conductors (1 = single conductor).
    spacing_m : float
        Distance between adjacent sub-conductors (ignored for ``n_sub = 1``).
    """

    conductor: Conductor
    n_sub: int = 1
    spacing_m: float = 0.0

    def __post_init__(self) -> None:
        if int(self.n_sub) != self.n_sub or self.n_sub < 1:
            raise ModelError(f"bundle sub-conductor count must be a whole number ≥ 1: {self.n_sub}")
        if self.n_sub > 1 and not (self.spacing_m > self.conductor.diameter_m):
            raise ModelError(
                f"bundle spacing {self.spacing_m} m must exceed the sub-conductor diameter "
                f"{self.conductor.diameter_m} m"
            )

    @property
    def circle_radius_m(self) -> float:
        """Radius of the circle through the sub-conductor centres, ``s / (2 sin(π/n))``."""
        if self.n_sub == 1:
            return 0.0
        return self.spacing_m / (2.0 * math.sin(math.pi / self.n_sub))

    def _equivalent(self, r_m: float) -> float:
        n = self.n_sub
        if n == 1:
            return r_m
        return (n * r_m * self.circle_radius_m ** (n - 1)) ** (1.0 / n)

    @property
    def radius_eq_m(self) -> float:
        """Equivalent radius for capacitance, ``(n·r·R^(n−1))^(1/n)`` with the outside radius."""
        return self._equivalent(self.conductor.radius_m)

    @property
    def gmr_eq_m(self) -> float:
        """Equivalent GMR for inductance, ``(n·GMR·R^(n−1))^(1/n)``."""
        return self._equivalent(self.conductor.self_gmr_m)

    @property
    def resistance_ohm_per_m(self) -> float:
        """AC resistance of the bundle (sub-conductors in parallel)."""
        return self.conductor.resistance_ohm_per_m / self.n_sub


@dataclass(frozen=True)
class Wire:
    """A conductor position on the tower (a phase bundle or a shield wire).

    Attributes
    ----------
    x_m : float
        Horizontal position.
    height_m : float
        Height of the attachment point (bundle centre) above ground at the tower.
    bundle : Bundle
        What hangs there.
    sag_m : float
        Mid-span sag; the average height is ``height_m − 2/3·sag_m``.
    """

    x_m: float
    height_m: float
    bundle: Bundle
    sag_m: float = 0.0

    def __post_init__(self) -> None:
        if not (0 <= self.sag_m < self.height_m):
            raise ModelError(
                f"sag must be in [0, height): sag {self.sag_m} m, height {self.height_m} m"
            )

    @property
    def h_avg_m(self) -> float:
        """Average height over the span, ``h − 2/3·sag``."""
        return self.height_m - 2.0 / 3.0 * self.sag_m


@dataclass(frozen=True)
class TowerGeometry:
    """Phases A, B, C (in this order), shield wires and the earth beneath.

    Attributes
    ----------
    phases : tuple of Wire
        Exactly three phase positions, A, B, C.
    shield_wires : tuple of Wire
        Shield (ground) wires, grounded at every tower; may be empty.
    earth_resistivity_ohm_m : float
        Uniform earth resistivity.
    """

    phases: tuple[Wire, Wire, Wire]
    shield_wires: tuple[Wire, ...] = ()
    earth_resistivity_ohm_m: float = 100.0

    def __post_init__(self) -> None:
        if len(self.phases) != 3:
            raise ModelError(f"a line needs exactly three phase positions, got {len(self.phases)}")
        if not (self.earth_resistivity_ohm_m > 0 and math.isfinite(self.earth_resistivity_ohm_m)):
            raise ModelError(
                f"earth resistivity must be positive, got {self.earth_resistivity_ohm_m!r} Ω·m"
            )
        wires = self.wires
        for i in range(len(wires)):
            for j in range(i + 1, len(wires)):
                d = math.hypot(wires[i].x_m - wires[j].x_m, wires[i].h_avg_m - wires[j].h_avg_m)
                reach = (
                    wires[i].bundle.circle_radius_m
                    + wires[j].bundle.circle_radius_m
                    + wires[i].bundle.conductor.radius_m
                    + wires[j].bundle.conductor.radius_m
                )
                if d <= reach:
                    raise ModelError(
                        f"conductor positions {i} and {j} overlap (centres {d:.3f} m apart)"
                    )

    @property
    def wires(self) -> tuple[Wire, ...]:
        """Phases first, then shield wires."""
        return (*self.phases, *self.shield_wires)


# ---------------------------------------------------------------------------- earth return


def _carson_coefficients(n_terms: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Coefficients b_i, c_i, d_i of Carson's series (Carson 1926; tabulated form)."""
    b = np.zeros(n_terms + 1)
    c = np.zeros(n_terms + 1)
    b[1] = math.sqrt(2.0) / 6.0
    b[2] = 1.0 / 16.0
    c[2] = 1.3659315
    for i in range(3, n_terms + 1):
        b[i] = b[i - 2] / (i * (i + 2))
        if i % 2 == 0:
            c[i] = c[i - 2] + 1.0 / i + 1.0 / (i + 2)
    # the signs of the terms change after each four successive terms (checked against a
    # numerical quadrature of Carson's integral in tests/test_line_constants.py)
    for i in range(1, n_terms + 1):
        if ((i - 1) // 4) % 2 == 1:
            b[i] = -b[i]
    d = math.pi / 4.0 * b
    return b, c, d


_CARSON_B, _CARSON_C, _CARSON_D = _carson_coefficients(40)


def carson_correction_ohm_per_m(
    distance_m: np.ndarray | float,
    angle_rad: np.ndarray | float,
    *,
    frequency_hz: float,
    earth_resistivity_ohm_m: float,
    n_terms: int = 40,
) -> np.ndarray:
    """Carson's earth-return correction ``ΔR + jΔX`` by his series.

    Parameters
    ----------
    distance_m : array_like
        Distance from conductor *i* to the image of conductor *k* (``2 h_i`` for a self term).
    angle_rad : array_like
        Angle between the vertical and the line from *i* to the image of *k* (0 for self).
    frequency_hz : float
        Frequency.
    earth_resistivity_ohm_m : float
        Earth resistivity.
    n_terms : int
        Number of series terms (the series converges for any ``a``; 40 terms are ample for
        ``a < 5``).

    Returns
    -------
    numpy.ndarray
        Complex correction in Ω/m, to be added to the perfect-earth impedance.

    Notes
    -----
    ``a = 4π·√5·1e-4·D·√(f/ρ)``; leading terms ``ΔR ≈ ωμ0/8`` and
    ``ΔX ≈ (ωμ0/2π)·(0.6159315 − ln a)`` (Carson 1926).
    """
    if n_terms > 40:
        raise ModelError("at most 40 Carson terms are tabulated")
    dist = np.asarray(distance_m, dtype=float)
    phi = np.asarray(angle_rad, dtype=float)
    omega = 2.0 * math.pi * frequency_hz
    a = (
        4.0
        * math.pi
        * math.sqrt(5.0)
        * 1e-4
        * dist
        * math.sqrt(frequency_hz / earth_resistivity_ohm_m)
    )
    if np.any(a > 8.0):
        raise ModelError(
            f"Carson's series is not reliable for a = {float(np.max(a)):.2f} > 8 "
            "(very high frequency or poor earth); use earth_model='complex_depth'"
        )
    ln_a = np.log(a)
    b, c, d = _CARSON_B, _CARSON_C, _CARSON_D
    dr = np.full(np.broadcast(a, phi).shape, math.pi / 8.0)
    dx = 0.5 * (0.6159315 - ln_a) + 0.0 * phi
    for i in range(1, n_terms + 1):
        ai = a**i
        cos_i = np.cos(i * phi)
        sin_i = np.sin(i * phi)
        m = i % 4
        if m == 1:
            dr = dr - b[i] * ai * cos_i
            dx = dx + b[i] * ai * cos_i
        elif m == 2:
            dr = dr + b[i] * ((c[i] - ln_a) * ai * cos_i + phi * ai * sin_i)
            dx = dx - d[i] * ai * cos_i
        elif m == 3:
            dr = dr + b[i] * ai * cos_i
            dx = dx + b[i] * ai * cos_i
        else:
            dr = dr - d[i] * ai * cos_i
            dx = dx - b[i] * ((c[i] - ln_a) * ai * cos_i + phi * ai * sin_i)
    scale = omega * MU_0_H_PER_M / math.pi
    return scale * (dr + 1j * dx)


def complex_depth_correction_ohm_per_m(
    height_i_m: np.ndarray | float,
    height_k_m: np.ndarray | float,
    horizontal_m: np.ndarray | float,
    *,
    frequency_hz: float,
    earth_resistivity_ohm_m: float,
) -> np.ndarray:
    """Earth-return correction by the complex-depth approximation.

    The earth is replaced by a perfect conductor at the complex depth
    ``p = √(ρ / (jωμ0))``; the correction to the perfect-earth impedance is
    ``(jωμ0/2π)·ln(D''_ik / D'_ik)`` with ``D''`` the distance to the image mirrored in the
    plane at depth ``p`` (Deri, Tevan, Semlyen & Castanheira, IEEE Trans. PAS-100(8), 1981).

    Parameters
    ----------
    height_i_m, height_k_m : array_like
        Average heights of the two conductors.
    horizontal_m : array_like
        Horizontal distance between them (0 for a self term).
    frequency_hz : float
        Frequency.
    earth_resistivity_ohm_m : float
        Earth resistivity.

    Returns
    -------
    numpy.ndarray
        Complex correction in Ω/m.
    """
    omega = 2.0 * math.pi * frequency_hz
    p = np.sqrt(earth_resistivity_ohm_m / (1j * omega * MU_0_H_PER_M))
    hi = np.asarray(height_i_m, dtype=float)
    hk = np.asarray(height_k_m, dtype=float)
    x = np.asarray(horizontal_m, dtype=float)
    d_img = np.sqrt((hi + hk) ** 2 + x**2)
    d_cplx = np.sqrt((hi + hk + 2.0 * p) ** 2 + x**2)
    return 1j * omega * MU_0_H_PER_M / (2.0 * math.pi) * np.log(d_cplx / d_img)


# -------------------------------------------------------------------------- the constants


@dataclass(frozen=True, eq=False)
class LineConstants:
    """Per-length series impedance and shunt capacitance of a three-phase line.

    Attributes
    ----------
    z_ohm_per_m : numpy.ndarray
        3×3 complex series impedance matrix at ``frequency_hz`` (phases A, B, C; shield wires
        and earth return included).
    c_f_per_m : numpy.ndarray
        3×3 Maxwell capacitance matrix (positive diagonal, negative off-diagonal).
    frequency_hz : float
        The frequency of ``z_ohm_per_m``.
    is_transposed : bool
        True when the matrices are the symmetric (averaged) ones of a transposed line.

    Notes
    -----
    Sequence values (``r1_ohm_per_m`` …) are always those of the transposed average.
    """

    z_ohm_per_m: np.ndarray
    c_f_per_m: np.ndarray
    frequency_hz: float
    is_transposed: bool = False
    _seq: dict[str, float] = field(default_factory=dict, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        z = np.asarray(self.z_ohm_per_m, dtype=complex)
        c = np.asarray(self.c_f_per_m, dtype=float)
        if z.shape != (3, 3) or c.shape != (3, 3):
            raise ModelError(f"line matrices must be 3×3, got {z.shape} and {c.shape}")
        if not (np.all(np.isfinite(z)) and np.all(np.isfinite(c))):
            raise ModelError("line matrices contain non-finite values")
        if not (self.frequency_hz > 0):
            raise ModelError(f"frequency must be positive, got {self.frequency_hz!r} Hz")
        if np.any(np.linalg.eigvalsh(0.5 * (c + c.T)) <= 0):
            raise ModelError("the capacitance matrix is not positive definite")
        object.__setattr__(self, "z_ohm_per_m", _readonly(z, complex))
        object.__setattr__(self, "c_f_per_m", _readonly(c, float))
        self._seq.update(self._sequence())

    # ---- matrices
    @property
    def omega_rad_per_s(self) -> float:
        """Angular frequency ``2πf``."""
        return 2.0 * math.pi * self.frequency_hz

    @property
    def r_ohm_per_m(self) -> np.ndarray:
        """Series resistance matrix, ``Re z``."""
        return _readonly(self.z_ohm_per_m.real, float)

    @property
    def l_h_per_m(self) -> np.ndarray:
        """Series inductance matrix, ``Im z / ω``."""
        return _readonly(self.z_ohm_per_m.imag / self.omega_rad_per_s, float)

    @property
    def p_m_per_f(self) -> np.ndarray:
        """Maxwell potential-coefficient matrix, ``C⁻¹``."""
        return _readonly(np.linalg.inv(self.c_f_per_m), float)

    @property
    def c_ground_f_per_m(self) -> np.ndarray:
        """Phase-to-ground partial capacitances (row sums of ``C``), shape (3,)."""
        return _readonly(self.c_f_per_m.sum(axis=1), float)

    @property
    def c_phase_phase_f_per_m(self) -> np.ndarray:
        """Phase-to-phase partial capacitances ``−C_ij`` (zero diagonal), shape (3, 3)."""
        cm = -np.array(self.c_f_per_m)
        np.fill_diagonal(cm, 0.0)
        return _readonly(cm, float)

    def transposed(self) -> LineConstants:
        """The ideally transposed line: averaged ``z`` and averaged potential coefficients.

        Transposition averages the series impedance matrix and the potential-coefficient
        matrix ``P`` (charges are what the conductors carry through the transposition cycle);
        ``C`` is the inverse of the averaged ``P``.
        """
        z = _average(self.z_ohm_per_m)
        p = _average(self.p_m_per_f).real
        return LineConstants(
            z_ohm_per_m=z,
            c_f_per_m=np.linalg.inv(p),
            frequency_hz=self.frequency_hz,
            is_transposed=True,
        )

    @classmethod
    def from_sequence(
        cls,
        r1_ohm_per_m: float,
        x1_ohm_per_m: float,
        c1_f_per_m: float,
        r0_ohm_per_m: float,
        x0_ohm_per_m: float,
        c0_f_per_m: float,
        frequency_hz: float,
    ) -> LineConstants:
        """Transposed matrices from positive- and zero-sequence data (reactances at f).

        ``Z_s = (Z0 + 2Z1)/3``, ``Z_m = (Z0 − Z1)/3``; likewise for ``C``.
        """
        vals = (r1_ohm_per_m, x1_ohm_per_m, c1_f_per_m, r0_ohm_per_m, x0_ohm_per_m, c0_f_per_m)
        if not all(math.isfinite(v) for v in vals):
            raise ModelError("sequence data must be finite numbers")
        if min(r1_ohm_per_m, r0_ohm_per_m) < 0 or min(x1_ohm_per_m, x0_ohm_per_m) <= 0:
            raise ModelError("sequence resistances must be ≥ 0 and reactances > 0")
        if min(c1_f_per_m, c0_f_per_m) <= 0:
            raise ModelError("sequence capacitances must be > 0")
        z1 = complex(r1_ohm_per_m, x1_ohm_per_m)
        z0 = complex(r0_ohm_per_m, x0_ohm_per_m)
        z = _symmetric((z0 + 2 * z1) / 3, (z0 - z1) / 3)
        c = _symmetric((c0_f_per_m + 2 * c1_f_per_m) / 3, (c0_f_per_m - c1_f_per_m) / 3)
        return cls(z_ohm_per_m=z, c_f_per_m=c.real, frequency_hz=frequency_hz, is_transposed=True)

    # ---- sequence values (of the transposed average)
    def _sequence(self) -> dict[str, float]:
        z = _average(self.z_ohm_per_m)
        p = _average(np.linalg.inv(self.c_f_per_m)).real
        zs, zm = z[0, 0], z[0, 1]
        ps, pm = p[0, 0], p[0, 1]
        z1, z0 = zs - zm, zs + 2 * zm
        w = 2.0 * math.pi * self.frequency_hz
        return {
            "r1": float(z1.real),
            "x1": float(z1.imag),
            "l1": float(z1.imag / w),
            "c1": float(1.0 / (ps - pm)),
            "r0": float(z0.real),
            "x0": float(z0.imag),
            "l0": float(z0.imag / w),
            "c0": float(1.0 / (ps + 2 * pm)),
        }

    @property
    def r1_ohm_per_m(self) -> float:
        """Positive-sequence resistance (transposed average)."""
        return self._seq["r1"]

    @property
    def x1_ohm_per_m(self) -> float:
        """Positive-sequence reactance at ``frequency_hz``."""
        return self._seq["x1"]

    @property
    def l1_h_per_m(self) -> float:
        """Positive-sequence inductance."""
        return self._seq["l1"]

    @property
    def c1_f_per_m(self) -> float:
        """Positive-sequence capacitance, ``1/(P_s − P_m)``."""
        return self._seq["c1"]

    @property
    def r0_ohm_per_m(self) -> float:
        """Zero-sequence resistance (earth return included)."""
        return self._seq["r0"]

    @property
    def x0_ohm_per_m(self) -> float:
        """Zero-sequence reactance at ``frequency_hz``."""
        return self._seq["x0"]

    @property
    def l0_h_per_m(self) -> float:
        """Zero-sequence inductance."""
        return self._seq["l0"]

    @property
    def c0_f_per_m(self) -> float:
        """Zero-sequence capacitance, ``1/(P_s + 2P_m)``."""
        return self._seq["c0"]

    @property
    def cm_f_per_m(self) -> float:
        """Phase-to-phase partial capacitance of the transposed line, ``(C1 − C0)/3``."""
        return (self.c1_f_per_m - self.c0_f_per_m) / 3.0

    @property
    def z1_ohm_per_m(self) -> complex:
        """Positive-sequence impedance ``r1 + j·x1``."""
        return complex(self.r1_ohm_per_m, self.x1_ohm_per_m)

    @property
    def z0_ohm_per_m(self) -> complex:
        """Zero-sequence impedance ``r0 + j·x0``."""
        return complex(self.r0_ohm_per_m, self.x0_ohm_per_m)

    def to_dict(self) -> dict[str, object]:
        """SI-keyed summary (matrices as nested lists; complex as ``[re, im]``)."""
        z = self.z_ohm_per_m
        return {
            "frequency_hz": self.frequency_hz,
            "is_transposed": self.is_transposed,
            "r1_ohm_per_m": self.r1_ohm_per_m,
            "x1_ohm_per_m": self.x1_ohm_per_m,
            "l1_h_per_m": self.l1_h_per_m,
            "c1_f_per_m": self.c1_f_per_m,
            "r0_ohm_per_m": self.r0_ohm_per_m,
            "x0_ohm_per_m": self.x0_ohm_per_m,
            "l0_h_per_m": self.l0_h_per_m,
            "c0_f_per_m": self.c0_f_per_m,
            "r_ohm_per_m": z.real.tolist(),
            "l_h_per_m": (z.imag / self.omega_rad_per_s).tolist(),
            "c_f_per_m": self.c_f_per_m.tolist(),
            "c_ground_f_per_m": self.c_ground_f_per_m.tolist(),
            "c_phase_phase_f_per_m": self.c_phase_phase_f_per_m.tolist(),
        }


def _average(m: np.ndarray) -> np.ndarray:
    n = m.shape[0]
    diag = np.trace(m) / n
    off = (m.sum() - np.trace(m)) / (n * (n - 1))
    return _symmetric(diag, off)


def _symmetric(diag: complex | float, off: complex | float) -> np.ndarray:
    m = np.full((3, 3), off, dtype=complex)
    np.fill_diagonal(m, diag)
    return m


def _kron(m: np.ndarray, n_keep: int) -> np.ndarray:
    """Eliminate the conductors after the first ``n_keep`` (at zero voltage)."""
    if m.shape[0] == n_keep:
        return m
    a = m[:n_keep, :n_keep]
    b = m[:n_keep, n_keep:]
    c = m[n_keep:, :n_keep]
    d = m[n_keep:, n_keep:]
    return a - b @ np.linalg.solve(d, c)


def line_constants(
    geometry: TowerGeometry,
    *,
    frequency_hz: float,
    earth_model: EarthModel = "carson",
) -> LineConstants:
    """Series impedance and shunt capacitance matrices of a line from its geometry.

    Parameters
    ----------
    geometry : TowerGeometry
        Phase and shield-wire positions, bundles and earth resistivity.
    frequency_hz : float
        Frequency for the series impedance (Carson terms depend on it).
    earth_model : {"carson", "complex_depth"}
        Earth-return correction: Carson's series or the complex-depth approximation.

    Returns
    -------
    LineConstants
        Untransposed 3×3 matrices (call :meth:`LineConstants.transposed` for the averaged
        line).
    """
    if not (frequency_hz > 0 and math.isfinite(frequency_hz)):
        raise ModelError(f"frequency must be positive, got {frequency_hz!r} Hz")
    if earth_model not in ("carson", "complex_depth"):
        raise ModelError(f"earth model must be 'carson' or 'complex_depth', got {earth_model!r}")
    wires = geometry.wires
    x = np.array([w.x_m for w in wires])
    h = np.array([w.h_avg_m for w in wires])
    r_eq = np.array([w.bundle.radius_eq_m for w in wires])
    gmr = np.array([w.bundle.gmr_eq_m for w in wires])
    r_dc = np.array([w.bundle.resistance_ohm_per_m for w in wires])
    if np.any(h <= r_eq):
        raise ModelError("every conductor must be above ground (average height > radius)")

    dx = x[:, None] - x[None, :]
    d = np.hypot(dx, h[:, None] - h[None, :])
    d_img = np.hypot(dx, h[:, None] + h[None, :])
    np.fill_diagonal(d, 1.0)
    k = 1.0 / (2.0 * math.pi * EPSILON_0_F_PER_M)

    # potential coefficients (perfect earth, images)
    log_p = np.log(d_img / d)
    np.fill_diagonal(log_p, np.log(2.0 * h / r_eq))
    p = k * log_p

    # series impedance, perfect earth part
    omega = 2.0 * math.pi * frequency_hz
    log_l = np.log(d_img / d)
    np.fill_diagonal(log_l, np.log(2.0 * h / gmr))
    z = 1j * omega * MU_0_H_PER_M / (2.0 * math.pi) * log_l + np.diag(r_dc)

    rho = geometry.earth_resistivity_ohm_m
    if earth_model == "carson":
        phi = np.arctan2(np.abs(dx), h[:, None] + h[None, :])
        z = z + carson_correction_ohm_per_m(
            d_img, phi, frequency_hz=frequency_hz, earth_resistivity_ohm_m=rho
        )
    else:
        z = z + complex_depth_correction_ohm_per_m(
            h[:, None], h[None, :], dx, frequency_hz=frequency_hz, earth_resistivity_ohm_m=rho
        )

    z3 = _kron(z, 3)
    p3 = _kron(p, 3)
    return LineConstants(
        z_ohm_per_m=z3,
        c_f_per_m=np.linalg.inv(p3),
        frequency_hz=frequency_hz,
        is_transposed=False,
    )
