"""Steady-state open-phase coupling: secondary-arc current and recovery voltage.

One phase is open at both ends (single-pole trip); the two healthy phases stay connected to
their sources at both ends and may carry load. The open phase couples to them

- capacitively, through the interphase capacitances, driven by the healthy-phase voltages;
- inductively, through the mutual series impedances, driven by the healthy-phase currents.

The line is solved as a cascade of many short pi sections with the full 3×3 series impedance
and capacitance matrices (so untransposed lines are treated exactly as described), with the
line-side shunt reactor banks (phase and neutral reactors) at either end. The fault is a
short from the open phase to ground at distance ``x`` from the "from" end; after extinction
the fault is removed and the open-phase voltage at that point is the recovery voltage.

Sources: the healthy phases are held at the rated phase voltage at both ends (stiff buses).
Superposition splits the result into

- the *capacitive component*: both ends at the same voltages, no load current;
- the *inductive component*: equal and opposite end voltages on the healthy phases chosen
  so that the through current (at the "from" end) equals the given load current.

For a transposed line whose series impedance is negligible the solution reproduces the
lumped closed forms (:func:`closed_form_transposed`): ``I_s = |ωC_m − B_pp|·V``,
``V_rec = V·(B_m − B_pp)/((B_0 + 2B_m) − (B_pg + 2B_pp))`` (E. W. Kimbark, IEEE Trans.
PAS-83(3), 1964). The inductive component follows the quasi-static result
``ω·c_eff·e·ℓ·|ℓ/2 − x|`` (:func:`closed_form_inductive_a`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.linalg import solve_banded

from recordscan.errors import ModelError
from recordscan.physics.line import LineDescription
from recordscan.physics.reactors import FourLeggedReactor

__all__ = [
    "CouplingResult",
    "DetuningSweep",
    "closed_form_inductive_a",
    "closed_form_transposed",
    "coupling_by_phase",
    "detuning_sweep",
    "open_phase_coupling",
]

_PHASES = ("A", "B", "C")
#: default longest pi section; 5 km keeps the section error below 1e-4 at 60 Hz.
MAX_SECTION_M = 5_000.0


@dataclass(frozen=True)
class FaultProfile:
    """Secondary-arc current and recovery voltage against fault position.

    Attributes
    ----------
    fault_at_m : numpy.ndarray
        Fault positions from the "from" end.
    secondary_arc_current_rms_a, capacitive_component_a, inductive_component_a : numpy.ndarray
        Arc current (total, and its two components) at each position.
    recovery_voltage_rms_v : numpy.ndarray
        Recovery voltage at each position.
    """

    fault_at_m: np.ndarray
    secondary_arc_current_rms_a: np.ndarray
    capacitive_component_a: np.ndarray
    inductive_component_a: np.ndarray
    recovery_voltage_rms_v: np.ndarray

    def to_dict(self) -> dict[str, list[float]]:
        """SI-keyed arrays as lists."""
        return {
            "fault_at_m": self.fault_at_m.tolist(),
            "secondary_arc_current_rms_a": self.secondary_arc_current_rms_a.tolist(),
            "capacitive_component_a": self.capacitive_component_a.tolist(),
            "inductive_component_a": self.inductive_component_a.tolist(),
            "recovery_voltage_rms_v": self.recovery_voltage_rms_v.tolist(),
        }


@dataclass(frozen=True)
class CouplingResult:
    """Open-phase coupling of one line for one faulted phase and fault position.

    All currents and voltages are rms magnitudes of the power-frequency steady state.

    Attributes
    ----------
    line_name : str
        Name of the line.
    faulted_phase : str
        The open (faulted) phase.
    fault_at_m : float
        Fault position from the "from" end.
    length_m, v_phase_v, frequency_hz : float
        Line length, rated phase voltage, rated frequency.
    load_current_a, load_angle_deg : float
        Healthy-phase load current and its lag behind the phase voltage.
    secondary_arc_current_rms_a : float
        Total secondary-arc current (phasor sum of the components).
    capacitive_component_a, inductive_component_a : float
        The two components.
    recovery_voltage_rms_v : float
        Open-phase voltage at the fault point after extinction (forced component at f).
    recovery_voltage_capacitive_v, recovery_voltage_inductive_v : float
        Its components.
    recovery_voltage_from_end_v, recovery_voltage_to_end_v : float
        Open-phase voltage at the two line ends after extinction.
    bolted_voltage_from_end_v, bolted_voltage_to_end_v : float
        Open-phase voltage at the two line ends while the fault path is a short (a bolted
        or permanent fault, or a burning arc of negligible voltage): what is induced along
        the open conductor between the end and the fault.
    recovery_phasor_from_end_pu, bolted_phasor_from_end_pu : complex
        The same two voltages at the "from" end as phasors over the open phase's own rated
        phasor (angle included): what the recording end should see after an extinction and
        while the fault path still conducts.
    compensation : float
        Positive-sequence compensation degree of the reactor banks.
    phase_reactor_ohm, neutral_reactor_ohm : tuple
        ``(from end, to end)`` reactances; ``None`` where there is no bank.
    free_frequency_hz, beat_frequency_hz : float
        Free oscillation of the open phase with the reactors after extinction and
        ``|f − f_n|`` (``nan`` without reactors).
    transposed : bool
        Whether the line was treated as transposed.
    n_sections : int
        Number of pi sections used.
    profile : FaultProfile or None
        Scan over fault positions when no position was given.
    """

    line_name: str
    faulted_phase: str
    fault_at_m: float
    length_m: float
    v_phase_v: float
    frequency_hz: float
    load_current_a: float
    load_angle_deg: float
    secondary_arc_current_rms_a: float
    capacitive_component_a: float
    inductive_component_a: float
    recovery_voltage_rms_v: float
    recovery_voltage_capacitive_v: float
    recovery_voltage_inductive_v: float
    recovery_voltage_from_end_v: float
    recovery_voltage_to_end_v: float
    compensation: float
    phase_reactor_ohm: tuple[float | None, float | None]
    neutral_reactor_ohm: tuple[float | None, float | None]
    free_frequency_hz: float
    beat_frequency_hz: float
    transposed: bool
    n_sections: int
    profile: FaultProfile | None = field(default=None, repr=False)
    bolted_voltage_from_end_v: float = math.nan
    bolted_voltage_to_end_v: float = math.nan
    recovery_phasor_from_end_pu: complex = complex(math.nan, math.nan)
    bolted_phasor_from_end_pu: complex = complex(math.nan, math.nan)

    @property
    def recovery_voltage_pu(self) -> float:
        """Recovery voltage over the rated phase voltage."""
        return self.recovery_voltage_rms_v / self.v_phase_v

    @property
    def recovery_voltage_peak_max_v(self) -> float:
        """Highest instantaneous recovery voltage after extinction, ``2·√2·V_rec``.

        At the current zero that ends the arc the open phase is at (nearly) zero volts while
        the forced recovery voltage, in quadrature with the arc current in a lossless
        network, is at its peak; the free part (trapped charge on an uncompensated line, the
        oscillation at ``f_n`` with reactors) therefore starts equal and opposite to the
        forced peak, and the two add up to twice the forced peak half a beat later (or half
        a cycle later without reactors). Losses and the arc voltage make the real peak a
        little lower: an upper estimate.
        """
        return 2.0 * math.sqrt(2.0) * self.recovery_voltage_rms_v

    def to_dict(self) -> dict[str, Any]:
        """SI-keyed dictionary (JSON-ready; ``nan`` stays ``nan``)."""
        return {
            "line_name": self.line_name,
            "faulted_phase": self.faulted_phase,
            "fault_at_m": self.fault_at_m,
            "length_m": self.length_m,
            "v_phase_v": self.v_phase_v,
            "frequency_hz": self.frequency_hz,
            "load_current_a": self.load_current_a,
            "load_angle_deg": self.load_angle_deg,
            "secondary_arc_current_rms_a": self.secondary_arc_current_rms_a,
            "capacitive_component_a": self.capacitive_component_a,
            "inductive_component_a": self.inductive_component_a,
            "recovery_voltage_rms_v": self.recovery_voltage_rms_v,
            "recovery_voltage_pu": self.recovery_voltage_pu,
            "recovery_voltage_peak_max_v": self.recovery_voltage_peak_max_v,
            "recovery_voltage_capacitive_v": self.recovery_voltage_capacitive_v,
            "recovery_voltage_inductive_v": self.recovery_voltage_inductive_v,
            "recovery_voltage_from_end_v": self.recovery_voltage_from_end_v,
            "recovery_voltage_to_end_v": self.recovery_voltage_to_end_v,
            "bolted_voltage_from_end_v": self.bolted_voltage_from_end_v,
            "bolted_voltage_to_end_v": self.bolted_voltage_to_end_v,
            "compensation": self.compensation,
            "phase_reactor_ohm": list(self.phase_reactor_ohm),
            "neutral_reactor_ohm": list(self.neutral_reactor_ohm),
            "free_frequency_hz": self.free_frequency_hz,
            "beat_frequency_hz": self.beat_frequency_hz,
            "transposed": self.transposed,
            "n_sections": self.n_sections,
            "profile": None if self.profile is None else self.profile.to_dict(),
        }


# ------------------------------------------------------------------------ closed forms


def closed_form_transposed(
    *,
    c1_f: float,
    c0_f: float,
    v_phase_v: float,
    frequency_hz: float,
    reactors: tuple[FourLeggedReactor, ...] = (),
) -> tuple[float, float]:
    """Lumped capacitive secondary-arc current and recovery voltage of a transposed line.

    ``I_s = |ωC_m − ΣB_pp|·V`` and ``V_rec = V·|B_m − ΣB_pp| / |(B_0 + 2B_m) − Σ(B_pg +
    2B_pp)|`` with whole-line ``C1``, ``C0``, ``C_m = (C1 − C0)/3`` (Kimbark 1964; without
    reactors ``V_rec/V = (C1 − C0)/(2C1 + C0)``). Lossless reactors.

    Returns
    -------
    (float, float)
        ``(I_s in A, V_rec in V)``.
    """
    w = 2.0 * math.pi * frequency_hz
    b_m = w * (c1_f - c0_f) / 3.0
    b_0 = w * c0_f
    b_pp = sum(r.b_pp_siemens for r in reactors)
    b_pg = sum(r.b_pg_siemens for r in reactors)
    i_s = abs(b_m - b_pp) * v_phase_v
    denom = (b_0 + 2.0 * b_m) - (b_pg + 2.0 * b_pp)
    v_rec = math.inf if denom == 0 else abs(b_m - b_pp) / abs(denom) * v_phase_v
    return i_s, v_rec


def closed_form_inductive_a(
    *,
    c1_f_per_m: float,
    c0_f_per_m: float,
    l1_h_per_m: float,
    l0_h_per_m: float,
    length_m: float,
    fault_at_m: float,
    load_current_a: float,
    frequency_hz: float,
) -> float:
    """Quasi-static inductive secondary-arc current of a transposed, uncompensated line.

    The healthy-phase currents induce ``e = ω·l_m·|I_b + I_c|`` per metre on the open phase
    (``l_m = (L0 − L1)/3``; for balanced load ``|I_b + I_c| = I_load``); the open conductor
    charges through ``c_eff = (2C1 + C0)/3`` per metre, so a fault at ``x`` carries
    ``ω·c_eff·e·ℓ·|ℓ/2 − x|`` — zero at mid-line, largest at the ends.
    """
    w = 2.0 * math.pi * frequency_hz
    l_m = (l0_h_per_m - l1_h_per_m) / 3.0
    e_v_per_m = w * l_m * abs(load_current_a)
    c_eff = (2.0 * c1_f_per_m + c0_f_per_m) / 3.0
    return w * c_eff * e_v_per_m * length_m * abs(0.5 * length_m - fault_at_m)


# --------------------------------------------------------------------------- the network


@dataclass(frozen=True)
class _Network:
    nodes_m: np.ndarray
    y: np.ndarray  # (3n, 3n) nodal admittance


def _build_network(line: LineDescription, nodes_m: np.ndarray) -> _Network:
    const = line.constants
    z = np.asarray(const.z_ohm_per_m)
    c = np.asarray(const.c_f_per_m)
    w = 2.0 * math.pi * line.frequency_hz
    n = nodes_m.size
    y = np.zeros((3 * n, 3 * n), dtype=complex)
    z_inv = np.linalg.inv(z)
    for i in range(n - 1):
        dl = nodes_m[i + 1] - nodes_m[i]
        ys = z_inv / dl
        yc = 0.5j * w * c * dl
        a = slice(3 * i, 3 * i + 3)
        b = slice(3 * i + 3, 3 * i + 6)
        y[a, a] += ys + yc
        y[b, b] += ys + yc
        y[a, b] -= ys
        y[b, a] -= ys
    for bank, node in ((line.reactor_from, 0), (line.reactor_to, n - 1)):
        if bank is not None:
            s = slice(3 * node, 3 * node + 3)
            y[s, s] += bank.admittance_matrix_siemens()
    return _Network(nodes_m=nodes_m, y=y)


def _mesh(length_m: float, max_section_m: float, extra_m: tuple[float, ...] = ()) -> np.ndarray:
    n = max(10, 10 * math.ceil(length_m / (10.0 * max_section_m)))
    pts = np.linspace(0.0, length_m, n + 1)
    if extra_m:
        pts = np.union1d(pts, np.asarray(extra_m, dtype=float))
        # merge points closer than 1 m (a fault at a node stays on the node)
        keep = np.concatenate(([True], np.diff(pts) > 1.0))
        keep[-1] = True
        pts = pts[keep]
        pts[-1] = length_m
    return pts


_BAND = 5  # node-major ordering: a node couples to its neighbours' three phases only


def _solve(
    net: _Network, fixed_idx: list[int], fixed_v: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Voltages everywhere and injected currents at the fixed nodes, for several columns.

    ``fixed_v`` has shape (len(fixed_idx), k); returns ``(V (3n, k), I_fixed (m, k))``.
    The fixed rows are replaced by ``V_i = value`` so the system stays banded.
    """
    n3 = net.y.shape[0]
    fixed = np.asarray(fixed_idx)
    a = np.array(net.y)
    a[fixed, :] = 0.0
    a[fixed, fixed] = 1.0
    rhs = np.zeros((n3, fixed_v.shape[1]), dtype=complex)
    rhs[fixed] = fixed_v
    ab = np.zeros((2 * _BAND + 1, n3), dtype=complex)
    for off in range(-_BAND, _BAND + 1):
        d = np.diagonal(a, offset=off)
        if off >= 0:
            ab[_BAND - off, off:] = d
        else:
            ab[_BAND - off, : n3 + off] = d
    try:
        v = solve_banded((_BAND, _BAND), ab, rhs, check_finite=False)
    except np.linalg.LinAlgError:
        raise ModelError(
            "the open phase is exactly resonant with the reactors (singular network); "
            "change the reactor data"
        ) from None
    i_fixed = net.y[fixed] @ v
    return v, i_fixed


@dataclass(frozen=True)
class _Point:
    i_cap: complex
    i_ind: complex
    v_cap: complex
    v_ind: complex
    v_ends_cap: tuple[complex, complex]
    v_ends_ind: tuple[complex, complex]
    v_ends_bolted: tuple[complex, complex]


def _evaluate(
    net: _Network,
    *,
    k: int,
    fault_node: int,
    v_phase_v: float,
    load: np.ndarray,
) -> _Point:
    """Arc (fault) and recovery (no fault) solutions at one fault node.

    ``load`` holds the healthy-phase load current phasors (from end, into the line).
    """
    n = net.nodes_m.size
    healthy = [j for j in range(3) if j != k]
    v_src = v_phase_v * np.exp(-2j * np.pi / 3 * np.arange(3))
    ends = [3 * 0 + j for j in healthy] + [3 * (n - 1) + j for j in healthy]
    # columns: capacitive drive, unit differential drive on each healthy phase
    drive = np.zeros((4, 3), dtype=complex)
    drive[:, 0] = np.concatenate([v_src[healthy], v_src[healthy]])
    for col, _ in enumerate(healthy):
        drive[col, col + 1] = 0.5
        drive[2 + col, col + 1] = -0.5
    f_idx = 3 * fault_node + k

    out: dict[str, Any] = {}
    for case, fixed, values in (
        ("arc", [*ends, f_idx], np.vstack([drive, np.zeros((1, 3))])),
        ("rec", ends, drive),
    ):
        v, i_fixed = _solve(net, fixed, values)
        # through current at the from end per unit differential drive: a 2×2 matrix
        m = i_fixed[:2, 1:3]
        try:
            dv = np.linalg.solve(m, load)
        except np.linalg.LinAlgError:
            raise ModelError("cannot set the load current on this network") from None
        # the capacitive drive also makes the healthy phases carry charging current; the
        # differential drive is scaled so that its own through current equals the load
        ind_cols = v[:, 1:3] @ dv
        out[case] = (v, i_fixed, dv, ind_cols)

    a_idx, b_idx = k, 3 * (n - 1) + k
    v, i_fixed, dv, ind = out["arc"]
    i_cap = -i_fixed[-1, 0]
    i_ind = -(i_fixed[-1, 1:3] @ dv)
    bolted = (complex(v[a_idx, 0] + ind[a_idx]), complex(v[b_idx, 0] + ind[b_idx]))
    v, _, dv, ind = out["rec"]
    v_cap = v[f_idx, 0]
    v_ind = ind[f_idx]
    return _Point(
        i_cap=complex(i_cap),
        i_ind=complex(i_ind),
        v_cap=complex(v_cap),
        v_ind=complex(v_ind),
        v_ends_cap=(complex(v[a_idx, 0]), complex(v[b_idx, 0])),
        v_ends_ind=(complex(ind[a_idx]), complex(ind[b_idx])),
        v_ends_bolted=bolted,
    )


def _free_frequency(line: LineDescription, k: int) -> float:
    banks = [b for b in line.reactors if b is not None]
    if not banks:
        return math.nan
    w = 2.0 * math.pi * line.frequency_hz
    b_l = sum(
        -float(
            FourLeggedReactor(x_phase_ohm=b.x_phase_ohm, x_neutral_ohm=b.x_neutral_ohm)
            .admittance_matrix_siemens()[k, k]
            .imag
        )
        for b in banks
    )
    b_c = w * float(line.constants.c_f_per_m[k, k]) * line.length_m
    return line.frequency_hz * math.sqrt(b_l / b_c)


def open_phase_coupling(
    line: LineDescription,
    *,
    faulted_phase: str = "A",
    fault_at_m: float | None = None,
    load_current_a: float = 0.0,
    load_angle_deg: float = 0.0,
    max_section_m: float = MAX_SECTION_M,
    n_positions: int = 11,
) -> CouplingResult:
    """Secondary-arc current and recovery voltage with one pole open.

    Parameters
    ----------
    line : LineDescription
        The line, with its reactor banks.
    faulted_phase : {"A", "B", "C"}
        The open phase.
    fault_at_m : float or None
        Fault position from the "from" end. ``None`` scans ``n_positions`` equally spaced
        positions and reports the one with the largest secondary-arc current (the scan is
        kept in ``profile``).
    load_current_a : float
        Healthy-phase load current (rms) flowing from the "from" end to the "to" end;
        negative for the other direction.
    load_angle_deg : float
        Angle by which the load current lags its phase voltage (power-factor angle).
    max_section_m : float
        Longest pi section of the line model.
    n_positions : int
        Number of fault positions of the scan when ``fault_at_m`` is ``None``.

    Returns
    -------
    CouplingResult

    Raises
    ------
    ModelError
        Bad phase or position, or an exactly resonant network.
    """
    if faulted_phase not in _PHASES:
        raise ModelError(f"faulted phase must be 'A', 'B' or 'C', got {faulted_phase!r}")
    length = line.length_m
    if fault_at_m is not None and not (0.0 <= fault_at_m <= length):
        raise ModelError(
            f"fault position {fault_at_m / 1e3:.3f} km is outside line {line.name!r} "
            f"(0–{length / 1e3:.3f} km)"
        )
    if not math.isfinite(load_current_a) or not math.isfinite(load_angle_deg):
        raise ModelError("load current and angle must be finite")
    if not (max_section_m > 0):
        raise ModelError(f"max_section_m must be positive, got {max_section_m!r}")
    k = _PHASES.index(faulted_phase)
    v_ph = line.v_phase_v
    v_src = v_ph * np.exp(-2j * np.pi / 3 * np.arange(3))
    healthy = [j for j in range(3) if j != k]
    lag = math.radians(load_angle_deg)
    load = load_current_a * v_src[healthy] / v_ph * np.exp(-1j * lag)

    if fault_at_m is None:
        if n_positions < 2:
            raise ModelError("n_positions must be at least 2")
        positions = tuple(np.linspace(0.0, length, n_positions))
    else:
        positions = (float(fault_at_m),)
    nodes = _mesh(length, max_section_m, positions)
    net = _build_network(line, nodes)
    points = []
    for x in positions:
        node = int(np.argmin(np.abs(nodes - x)))
        points.append(_evaluate(net, k=k, fault_node=node, v_phase_v=v_ph, load=load))
    totals = np.array([abs(p.i_cap + p.i_ind) for p in points])
    best = int(np.argmax(totals))
    p = points[best]
    profile = None
    if fault_at_m is None:
        profile = FaultProfile(
            fault_at_m=np.asarray(positions),
            secondary_arc_current_rms_a=totals,
            capacitive_component_a=np.array([abs(q.i_cap) for q in points]),
            inductive_component_a=np.array([abs(q.i_ind) for q in points]),
            recovery_voltage_rms_v=np.array([abs(q.v_cap + q.v_ind) for q in points]),
        )
    f_n = _free_frequency(line, k)
    banks = line.reactors
    return CouplingResult(
        line_name=line.name,
        faulted_phase=faulted_phase,
        fault_at_m=float(positions[best]),
        length_m=length,
        v_phase_v=v_ph,
        frequency_hz=line.frequency_hz,
        load_current_a=float(load_current_a),
        load_angle_deg=float(load_angle_deg),
        secondary_arc_current_rms_a=float(totals[best]),
        capacitive_component_a=abs(p.i_cap),
        inductive_component_a=abs(p.i_ind),
        recovery_voltage_rms_v=abs(p.v_cap + p.v_ind),
        recovery_voltage_capacitive_v=abs(p.v_cap),
        recovery_voltage_inductive_v=abs(p.v_ind),
        recovery_voltage_from_end_v=abs(p.v_ends_cap[0] + p.v_ends_ind[0]),
        recovery_voltage_to_end_v=abs(p.v_ends_cap[1] + p.v_ends_ind[1]),
        compensation=line.compensation,
        phase_reactor_ohm=tuple(None if b is None else b.x_phase_ohm for b in banks),  # type: ignore[arg-type]
        neutral_reactor_ohm=tuple(None if b is None else b.x_neutral_ohm for b in banks),  # type: ignore[arg-type]
        free_frequency_hz=f_n,
        beat_frequency_hz=abs(line.frequency_hz - f_n) if math.isfinite(f_n) else math.nan,
        transposed=line.transposed,
        n_sections=int(nodes.size - 1),
        profile=profile,
        bolted_voltage_from_end_v=abs(p.v_ends_bolted[0]),
        bolted_voltage_to_end_v=abs(p.v_ends_bolted[1]),
        recovery_phasor_from_end_pu=complex((p.v_ends_cap[0] + p.v_ends_ind[0]) / v_src[k]),
        bolted_phasor_from_end_pu=complex(p.v_ends_bolted[0] / v_src[k]),
    )


def coupling_by_phase(
    line: LineDescription,
    *,
    fault_at_m: float | None = None,
    load_current_a: float = 0.0,
    load_angle_deg: float = 0.0,
    max_section_m: float = MAX_SECTION_M,
) -> dict[str, CouplingResult]:
    """:func:`open_phase_coupling` for each of the phases A, B, C."""
    return {
        ph: open_phase_coupling(
            line,
            faulted_phase=ph,
            fault_at_m=fault_at_m,
            load_current_a=load_current_a,
            load_angle_deg=load_angle_deg,
            max_section_m=max_section_m,
        )
        for ph in _PHASES
    }


@dataclass(frozen=True)
class DetuningSweep:
    """Secondary-arc current and recovery voltage against the neutral-reactor setting.

    Attributes
    ----------
    factors : numpy.ndarray
        Multipliers applied to every neutral reactance.
    neutral_reactor_ohm : numpy.ndarray
        Resulting neutral reactance at each end, shape (len(factors), 2) (``nan`` where an
        end has no bank).
    secondary_arc_current_rms_a, recovery_voltage_rms_v, recovery_voltage_pu : numpy.ndarray
        Results at each factor.
    free_frequency_hz : numpy.ndarray
        Free frequency of the open phase at each factor.
    """

    factors: np.ndarray
    neutral_reactor_ohm: np.ndarray
    secondary_arc_current_rms_a: np.ndarray
    recovery_voltage_rms_v: np.ndarray
    recovery_voltage_pu: np.ndarray
    free_frequency_hz: np.ndarray

    def to_dict(self) -> dict[str, Any]:
        """SI-keyed arrays as lists."""
        return {
            "factors": self.factors.tolist(),
            "neutral_reactor_ohm": self.neutral_reactor_ohm.tolist(),
            "secondary_arc_current_rms_a": self.secondary_arc_current_rms_a.tolist(),
            "recovery_voltage_rms_v": self.recovery_voltage_rms_v.tolist(),
            "recovery_voltage_pu": self.recovery_voltage_pu.tolist(),
            "free_frequency_hz": self.free_frequency_hz.tolist(),
        }


def detuning_sweep(
    line: LineDescription,
    *,
    factors: np.ndarray | list[float] | None = None,
    faulted_phase: str = "A",
    fault_at_m: float | None = None,
    load_current_a: float = 0.0,
    load_angle_deg: float = 0.0,
    max_section_m: float = MAX_SECTION_M,
) -> DetuningSweep:
    """Sensitivity of the secondary-arc current and recovery voltage to the neutral reactor.

    Every neutral reactance is multiplied by each factor in turn (0 gives a solidly grounded
    star point).

    Parameters
    ----------
    line : LineDescription
        A line with at least one bank that has a neutral reactor.
    factors : array_like, optional
        Multipliers; default 0.5 … 1.5 in steps of 0.1.
    faulted_phase, fault_at_m, load_current_a, load_angle_deg, max_section_m
        As for :func:`open_phase_coupling`.

    Returns
    -------
    DetuningSweep
    """
    banks = line.reactors
    if not any(b is not None and b.x_neutral_ohm > 0 for b in banks):
        raise ModelError(f"line {line.name!r} has no neutral reactor to detune")
    fac = np.round(np.linspace(0.5, 1.5, 11), 10) if factors is None else np.asarray(factors)
    if fac.ndim != 1 or fac.size == 0 or np.any(fac < 0) or not np.all(np.isfinite(fac)):
        raise ModelError("detuning factors must be a non-empty list of numbers ≥ 0")
    i_s, v_rec, f_n, xn = [], [], [], []
    for f in fac:
        new = tuple(
            None if b is None else b.with_neutral(b.x_neutral_ohm * float(f)) for b in banks
        )
        res = open_phase_coupling(
            line.with_reactors(new[0], new[1]),
            faulted_phase=faulted_phase,
            fault_at_m=fault_at_m,
            load_current_a=load_current_a,
            load_angle_deg=load_angle_deg,
            max_section_m=max_section_m,
        )
        i_s.append(res.secondary_arc_current_rms_a)
        v_rec.append(res.recovery_voltage_rms_v)
        f_n.append(res.free_frequency_hz)
        xn.append([math.nan if b is None else b.x_neutral_ohm for b in new])
    v_rec_a = np.array(v_rec)
    return DetuningSweep(
        factors=fac.astype(float),
        neutral_reactor_ohm=np.array(xn, dtype=float),
        secondary_arc_current_rms_a=np.array(i_s),
        recovery_voltage_rms_v=v_rec_a,
        recovery_voltage_pu=v_rec_a / line.v_phase_v,
        free_frequency_hz=np.array(f_n),
    )
