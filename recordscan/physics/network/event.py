"""A whole single-pole trip event simulated in the time domain.

The circuit (one line between two Thevenin sources)::

    source L ─ bus L ─ breaker L ─ line end L ── line (pi cascade or travelling wave) ──
        ── fault node (arc to ground) ── line ── line end R ─ breaker R ─ bus R ─ source R
                          shunt reactors (four-legged) at either line end

Sources are EMFs behind 3×3 R–L matrices built from their positive- and zero-sequence
impedances, each with a damping resistance in parallel and a small bus capacitance. Breaker
poles interrupt at the first current zero after their contact-separation instant and close
at a set instant (each pole, each end). The fault is a Kizilcay-form arc (primary set while
the faulted phase is connected to a source, secondary set once its last pole has opened,
with elongation, extinction and dielectric recovery / restrike from
:mod:`recordscan.physics.arc`) in series with a fixed resistance, or a permanent fixed
resistance. Reclosing onto a burning (or restriking) arc re-establishes the fault and
trips all poles at both ends after a protection delay.

Entry point: :func:`simulate_event`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from recordscan.errors import ModelError
from recordscan.physics.arc import (
    PRIMARY_ARC,
    ArcParameters,
    DielectricRecovery,
    JohnsElongation,
)
from recordscan.physics.network import kernel as _k
from recordscan.physics.network.elements import (
    CLARKE_T as _CLARKE,
)
from recordscan.physics.network.elements import (
    NetlistBuilder,
    TravellingWaveSegment,
    balanced_matrix,
    modal_parameters,
)
from recordscan.physics.network.solver import (
    CompiledNetwork,
    compile_network,
    initial_state,
    nodal_matrix,
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
    "build_network",
    "simulate_event",
]

PHASES: tuple[str, str, str] = ("A", "B", "C")
_MAX_SWITCHINGS = 10_000
_LOG_ROWS = 4096


def _fail(msg: str) -> None:
    raise ModelError(msg)


@dataclass(frozen=True)
class LineModelData:
    """Per-length phase matrices of a line and its length.

    Attributes
    ----------
    r_ohm_per_m, l_h_per_m, c_f_per_m : numpy.ndarray
        (3, 3) series resistance, series inductance and Maxwell (nodal) capacitance
        matrices per metre.
    length_m : float
        Line length [m].
    """

    r_ohm_per_m: np.ndarray
    l_h_per_m: np.ndarray
    c_f_per_m: np.ndarray
    length_m: float

    def __post_init__(self) -> None:
        for name in ("r_ohm_per_m", "l_h_per_m", "c_f_per_m"):
            m = np.array(getattr(self, name), dtype=float)
            if m.shape != (3, 3) or not np.all(np.isfinite(m)):
                _fail(f"line {name} must be a finite 3×3 matrix, got shape {m.shape}")
            if not np.allclose(m, m.T, rtol=1e-9, atol=0.0):
                _fail(f"line {name} must be symmetric")
            m.setflags(write=False)
            object.__setattr__(self, name, m)
        if not (math.isfinite(self.length_m) and self.length_m > 0):
            _fail(f"line length_m must be > 0, got {self.length_m}")
        for name in ("l_h_per_m", "c_f_per_m"):
            if np.min(np.linalg.eigvalsh(getattr(self, name))) <= 0:
                _fail(f"line {name} must be positive definite")

    @classmethod
    def from_sequence(
        cls,
        *,
        r1_ohm_per_m: float,
        l1_h_per_m: float,
        c1_f_per_m: float,
        r0_ohm_per_m: float,
        l0_h_per_m: float,
        c0_f_per_m: float,
        length_m: float,
    ) -> LineModelData:
        """Transposed line from sequence data (self = (x0 + 2x1)/3, mutual = (x0 − x1)/3)."""
        return cls(
            balanced_matrix(float(r1_ohm_per_m), float(r0_ohm_per_m)),
            balanced_matrix(float(l1_h_per_m), float(l0_h_per_m)),
            balanced_matrix(float(c1_f_per_m), float(c0_f_per_m)),
            float(length_m),
        )


@dataclass(frozen=True)
class SourceSpec:
    """A Thevenin source: line-to-line RMS EMF, its angle and sequence impedances.

    Attributes
    ----------
    v_ll_rms_v : float
        Line-to-line RMS EMF [V].
    angle_deg : float
        Angle of phase A [degrees] (the load angle is the difference between ends).
    z1_ohm, z0_ohm : complex
        Positive- and zero-sequence impedances at the system frequency [Ω].
    """

    v_ll_rms_v: float
    angle_deg: float
    z1_ohm: complex
    z0_ohm: complex


@dataclass(frozen=True)
class ReactorSpec:
    """Shunt reactors at a line end: three phase reactors and a neutral reactor.

    Attributes
    ----------
    x_phase_ohm : float
        Phase reactor reactance at the system frequency [Ω].
    x_neutral_ohm : float
        Neutral reactor reactance [Ω]; 0.0 = star point solidly grounded.
    q_factor : float
        Quality factor X/R of every reactor.
    """

    x_phase_ohm: float
    x_neutral_ohm: float = 0.0
    q_factor: float = 300.0


@dataclass(frozen=True)
class BreakerSpec:
    """Pole operations at one line end.

    Attributes
    ----------
    trip_s : dict
        Contact-separation instant per phase [s]; a phase absent or ``None`` never trips.
        A negative instant means the pole is open from the start.
    close_s : dict
        Reclose instant per phase [s]; absent or ``None`` = no reclose.
    three_pole_trip_delay_s : float
        Protection delay from a re-established fault to contact separation of all poles.
    """

    trip_s: dict[str, float | None] = field(default_factory=dict)
    close_s: dict[str, float | None] = field(default_factory=dict)
    three_pole_trip_delay_s: float = 0.06


@dataclass(frozen=True)
class FaultSpec:
    """A phase-to-ground fault at a distance from the local end.

    Attributes
    ----------
    phase : str
        Faulted phase ("A", "B" or "C"); the single-pole trip acts on it.
    location_m : float
        Distance from the local line end [m].
    inception_s : float
        Fault inception instant [s].
    r_fault_ohm : float
        Fixed resistance in series with the arc (tower footing); the whole fault path for
        a permanent fault.
    primary, secondary : ArcParameters
        Arc parameters while the phase is connected to a source / after its last pole opened.
    elongation : object
        Elongation law with ``.code`` and ``.params`` (see :mod:`recordscan.physics.arc`);
        its clock starts with the secondary arc and restarts at each restrike.
    permanent : bool
        A fixed resistance that never extinguishes (no arc).
    restrike_enabled : bool
        Whether a recovery voltage above the path's withstand re-ignites the arc.
    phases : tuple of str
        Further phases with their own arc to ground (multi-phase faults); may be empty.
    recovery : DielectricRecovery
        Dielectric recovery of the path after an extinction.
    max_restrikes : int or None
        At most this many restrikes; after them the path holds whatever the recovery
        voltage (a corpus bound, not physics; re-ignitions are not counted). None: no bound.
    """

    phase: str
    location_m: float
    inception_s: float
    r_fault_ohm: float = 0.5
    primary: ArcParameters = PRIMARY_ARC
    secondary: ArcParameters = field(default_factory=ArcParameters)
    elongation: Any = field(default_factory=JohnsElongation)
    permanent: bool = False
    restrike_enabled: bool = True
    phases: tuple[str, ...] = ()
    recovery: DielectricRecovery = field(default_factory=DielectricRecovery)
    max_restrikes: int | None = None

    @property
    def all_phases(self) -> tuple[str, ...]:
        """The faulted phase first, then the further phases (no repeats)."""
        out = [self.phase]
        out += [p for p in self.phases if p not in out]
        return tuple(out)


@dataclass(frozen=True)
class EventSpec:
    """Everything needed to simulate one event.

    Attributes
    ----------
    line : LineModelData
    frequency_hz : float
    local, remote : SourceSpec
    reactor_local, reactor_remote : ReactorSpec or None
    breaker_local, breaker_remote : BreakerSpec
    fault : FaultSpec or None
    t_end_s : float
        Simulated duration [s].
    dt_s : float
        Time step [s].
    line_model : str
        ``"pi"`` (cascaded coupled pi sections) or ``"travelling_wave"`` (Bergeron modes,
        transposed lines only).
    n_sections : int
        Number of pi sections over the whole line.
    bus_capacitance_f : float
        Stray capacitance of each bus phase to ground [F].
    source_damping_ratio : float
        Damping resistance in parallel with each source, as a multiple of |Z1|.
    """

    line: LineModelData
    frequency_hz: float
    local: SourceSpec
    remote: SourceSpec
    reactor_local: ReactorSpec | None
    reactor_remote: ReactorSpec | None
    breaker_local: BreakerSpec
    breaker_remote: BreakerSpec
    fault: FaultSpec | None
    t_end_s: float
    dt_s: float = 20e-6
    line_model: str = "pi"
    n_sections: int = 8
    bus_capacitance_f: float = 10e-9
    source_damping_ratio: float = 50.0


@dataclass(frozen=True)
class EventTruth:
    """What really happened in a simulated event (instants in seconds from t = 0).

    ``pole_open_s`` maps ``(end, phase)`` (end 0 local, 1 remote) to the first current-zero
    interruption of that pole; ``pole_operations`` lists every operation as
    ``(kind, t_s, end, phase)`` with kind "open" or "close". ``restrike_s`` lists the
    re-breakdowns of the path after a quarter cycle or more of zero current (IEC 60050-441
    "restrike"), each following one of ``extinctions_s``; ``reignition_s`` those within
    less than a quarter cycle of a current zero (IEC 60050-441 "re-ignition"), after which
    the arc goes on in its channel — their current zeros are not listed as extinctions.
    ``extinctions_s`` are the instants the arc stopped conducting (``_conduction_end``);
    ``race_start_s`` the kernel's own instants for the same extinctions, where each race
    between recovery voltage and withstand starts (last current zero or re-ignition).
    """

    inception_s: float | None
    faulted_phase: str | None
    faulted_phases: tuple[str, ...]
    pole_open_s: dict[tuple[int, str], float]
    pole_operations: tuple[tuple[str, float, int, str], ...]
    secondary_arc_start_s: float | None
    restrike_s: tuple[float, ...]
    extinction_s: float | None
    extinctions_s: tuple[float, ...]
    reclose_s: dict[int, float | None]
    outcome: str
    three_pole_trip_s: float | None
    secondary_arc_current_rms_a: float | None
    recovery_voltage_rms_v: float | None
    primary_fault_current_rms_a: float | None
    reignition_s: tuple[float, ...] = ()
    race_start_s: tuple[float, ...] = ()


@dataclass(frozen=True)
class EventResult:
    """Simulated waveforms (read-only arrays) and the truth of the event.

    Shapes: ``t_s`` (n,); ``v_line_v``, ``v_bus_v``, ``i_line_a``, ``pole_closed``
    (2 ends, 3 phases, n); ``i_reactor_neutral_a`` (2, n); ``arc_*`` (n,) for the faulted
    phase (zeros without a fault); ``arc_i_all_a`` (n_faulted_phases, n).
    """

    t_s: np.ndarray
    v_line_v: np.ndarray
    v_bus_v: np.ndarray
    i_line_a: np.ndarray
    i_reactor_neutral_a: np.ndarray
    arc_i_a: np.ndarray
    arc_v_v: np.ndarray
    arc_g_siemens: np.ndarray
    arc_l_m: np.ndarray
    pole_closed: np.ndarray
    truth: EventTruth
    arc_i_all_a: np.ndarray
    n_refactorisations: int = 0


# --------------------------------------------------------------------------- building


def _validate(spec: EventSpec) -> None:
    if not (math.isfinite(spec.frequency_hz) and spec.frequency_hz > 0):
        _fail(f"frequency_hz must be > 0, got {spec.frequency_hz}")
    if not (math.isfinite(spec.dt_s) and 0 < spec.dt_s <= 1e-3):
        _fail(f"dt_s must lie in (0, 1 ms], got {spec.dt_s}")
    if not (math.isfinite(spec.t_end_s) and spec.t_end_s > 2 * spec.dt_s):
        _fail(f"t_end_s must exceed two time steps, got {spec.t_end_s}")
    if spec.t_end_s / spec.dt_s > 5e7:
        _fail("too many time steps (over 5e7): shorten t_end_s or enlarge dt_s")
    if spec.line_model not in ("pi", "travelling_wave"):
        _fail(f"line_model must be 'pi' or 'travelling_wave', got {spec.line_model!r}")
    if int(spec.n_sections) < 1:
        _fail(f"n_sections must be >= 1, got {spec.n_sections}")
    if spec.bus_capacitance_f < 0 or spec.source_damping_ratio < 0:
        _fail("bus_capacitance_f and source_damping_ratio must be >= 0")
    for name, src in (("local", spec.local), ("remote", spec.remote)):
        for zn in ("z1_ohm", "z0_ohm"):
            z = complex(getattr(src, zn))
            if z.real < 0 or z.imag <= 0:
                _fail(f"{name} source {zn} must have R >= 0 and X > 0, got {z}")
        if not src.v_ll_rms_v > 0:
            _fail(f"{name} source v_ll_rms_v must be > 0")
    for name, r in (("local", spec.reactor_local), ("remote", spec.reactor_remote)):
        if r is not None and not (r.x_phase_ohm > 0 and r.x_neutral_ohm >= 0 and r.q_factor > 0):
            _fail(f"{name} reactor needs x_phase_ohm > 0, x_neutral_ohm >= 0, q_factor > 0")
    for name, br in (("local", spec.breaker_local), ("remote", spec.breaker_remote)):
        for key in (*br.trip_s, *br.close_s):
            if key not in PHASES:
                _fail(f"{name} breaker: unknown phase {key!r} (use 'A', 'B', 'C')")
        if br.three_pole_trip_delay_s < 0:
            _fail(f"{name} breaker three_pole_trip_delay_s must be >= 0")
    f = spec.fault
    if f is not None:
        for p in f.all_phases:
            if p not in PHASES:
                _fail(f"fault phase {p!r} is not one of 'A', 'B', 'C'")
        if not (0.0 <= f.location_m <= spec.line.length_m):
            _fail(f"fault location_m {f.location_m} lies outside the line (0…length_m)")
        if not f.r_fault_ohm > 0:
            _fail(f"fault r_fault_ohm must be > 0, got {f.r_fault_ohm}")
        if f.max_restrikes is not None and not (
            isinstance(f.max_restrikes, int) and f.max_restrikes >= 0
        ):
            _fail(f"fault max_restrikes must be an integer >= 0 or None, got {f.max_restrikes!r}")


@dataclass(frozen=True)
class _Layout:
    line_nodes: np.ndarray  # (2, 3)
    bus_nodes: np.ndarray  # (2, 3)
    fault_nodes: np.ndarray  # (3,)
    breaker_blocks: np.ndarray  # (6,)
    neutral_blocks: tuple[tuple[int, ...], tuple[int, ...]]


def _pi_cascade(b: NetlistBuilder, k: np.ndarray, m: np.ndarray, line: LineModelData,
                length_m: float, n_sec: int, tag: str) -> None:  # fmt: skip
    ls = length_m / n_sec
    nodes = [k] + [b.add_nodes(3) for _ in range(n_sec - 1)] + [m]
    c_half = line.c_f_per_m * ls / 2.0
    for s in range(n_sec):
        b.add_rl(nodes[s], nodes[s + 1], line.r_ohm_per_m * ls, line.l_h_per_m * ls,
                 label=f"{tag} series {s}")  # fmt: skip
    for s, nd in enumerate(nodes):
        factor = 1.0 if s in (0, n_sec) else 2.0
        b.add_c(nd, [-1, -1, -1], c_half * factor, label=f"{tag} shunt {s}")


def _line_part(b: NetlistBuilder, spec: EventSpec, k: np.ndarray, m: np.ndarray,
               length_m: float, n_sec: int, tag: str) -> None:  # fmt: skip
    line = spec.line
    if spec.line_model == "pi":
        _pi_cascade(b, k, m, line, length_m, n_sec, tag)
        return
    r_m, l_m, c_m = modal_parameters(line.r_ohm_per_m, line.l_h_per_m, line.c_f_per_m)
    tau = length_m * np.sqrt(l_m * c_m)
    if np.min(tau) < spec.dt_s:
        _pi_cascade(b, k, m, line, length_m, 1, tag)  # shorter than one step of travel
        return
    b.add_segment(
        TravellingWaveSegment(
            k=np.asarray(k), m=np.asarray(m), z_surge_ohm=np.sqrt(l_m / c_m),
            r_total_ohm=r_m * length_m, tau_s=tau,
        )
    )  # fmt: skip


def _phase_emf(src: SourceSpec) -> np.ndarray:
    amp = src.v_ll_rms_v * math.sqrt(2.0) / math.sqrt(3.0)
    ang = np.deg2rad(src.angle_deg + np.array([0.0, -120.0, 120.0]))
    return amp * np.exp(1j * ang)


def build_network(spec: EventSpec) -> tuple[CompiledNetwork, _Layout]:
    """Describe the event's circuit and compile it (see the module docstring)."""
    _validate(spec)
    w = 2.0 * math.pi * spec.frequency_hz
    b = NetlistBuilder()
    bus = np.array([b.add_nodes(3), b.add_nodes(3)])
    line_end = np.array([b.add_nodes(3), b.add_nodes(3)])
    gnd = np.array([-1, -1, -1])
    for e, src in enumerate((spec.local, spec.remote)):
        z = balanced_matrix(complex(src.z1_ohm), complex(src.z0_ohm))
        emf = _phase_emf(src)
        b.add_rl(bus[e], gnd, z.real, z.imag / w, emf_v=emf, label=f"source {e}")
        if spec.source_damping_ratio > 0:
            r_d = spec.source_damping_ratio * abs(complex(src.z1_ohm))
            b.add_g(bus[e], gnd, np.eye(3) / r_d, emf_v=emf, label=f"source damping {e}")
        if spec.bus_capacitance_f > 0:
            b.add_c(bus[e], gnd, np.eye(3) * spec.bus_capacitance_f, label=f"bus {e}")
    breaker_blocks = []
    for e in range(2):
        for ph in range(3):
            breaker_blocks.append(
                b.add_g([bus[e, ph]], [line_end[e, ph]], [[1.0]], label=f"breaker {e}{ph}")
            )
    length = spec.line.length_m
    n_sec = int(spec.n_sections)
    f = spec.fault
    if f is None or f.location_m <= 0.0 or f.location_m >= length:
        _line_part(b, spec, line_end[0], line_end[1], length, n_sec, "line")
        fault_nodes = line_end[1] if (f is not None and f.location_m >= length) else line_end[0]
    else:
        fault_nodes = b.add_nodes(3)
        n1 = min(max(1, round(n_sec * f.location_m / length)), max(1, n_sec - 1))
        n2 = max(1, n_sec - n1)
        _line_part(b, spec, line_end[0], fault_nodes, f.location_m, n1, "line 1")
        _line_part(b, spec, fault_nodes, line_end[1], length - f.location_m, n2, "line 2")
    neutral: list[tuple[int, ...]] = [(), ()]
    for e, rs in enumerate((spec.reactor_local, spec.reactor_remote)):
        if rs is None:
            continue
        lp, rp = rs.x_phase_ohm / w, rs.x_phase_ohm / rs.q_factor
        if rs.x_neutral_ohm > 0:
            nn = int(b.add_nodes(1)[0])
            for ph in range(3):
                b.add_rl([line_end[e, ph]], [nn], [[rp]], [[lp]], label=f"reactor {e}{ph}")
            ln, rn = rs.x_neutral_ohm / w, rs.x_neutral_ohm / rs.q_factor
            neutral[e] = (b.add_rl([nn], [-1], [[rn]], [[ln]], label=f"neutral reactor {e}"),)
        else:
            neutral[e] = tuple(
                b.add_rl([line_end[e, ph]], [-1], [[rp]], [[lp]], label=f"reactor {e}{ph}")
                for ph in range(3)
            )
    net = compile_network(
        b,
        dt_s=spec.dt_s,
        frequency_hz=spec.frequency_hz,
        breaker_blocks=np.array(breaker_blocks),
        bus_nodes=bus.reshape(-1),
    )
    layout = _Layout(
        line_nodes=line_end,
        bus_nodes=bus,
        fault_nodes=np.asarray(fault_nodes),
        breaker_blocks=np.array(breaker_blocks),
        neutral_blocks=(neutral[0], neutral[1]),
    )
    return net, layout


# --------------------------------------------------------------------------- running


def _pole_times(br: BreakerSpec, key: str) -> np.ndarray:
    src = br.trip_s if key == "trip" else br.close_s
    out = np.full(3, np.inf)
    for ph, name in enumerate(PHASES):
        val = src.get(name)
        if val is not None:
            if not math.isfinite(float(val)):
                _fail(f"breaker {key} instant for phase {name} must be finite, got {val}")
            out[ph] = float(val)
    return out


def _arc_arrays(spec: EventSpec, layout: _Layout) -> tuple[np.ndarray, np.ndarray, list[str]]:
    f = spec.fault
    if f is None:
        return np.zeros((0, _k.N_ARC_CONF)), np.zeros((0, 2, 7)), []
    phases = list(f.all_phases)
    conf = np.zeros((len(phases), _k.N_ARC_CONF))
    par = np.zeros((len(phases), 2, 7))
    law = f.elongation
    p1, p2 = (*tuple(law.params), 0.0, 0.0)[:2]
    for k, name in enumerate(phases):
        ph = PHASES.index(name)
        conf[k, _k.C_NODE] = layout.fault_nodes[ph]
        conf[k, _k.C_PHASE] = ph
        conf[k, _k.C_RF] = f.r_fault_ohm
        conf[k, _k.C_PERM] = 1.0 if f.permanent else 0.0
        conf[k, _k.C_RESTRIKE] = 1.0 if f.restrike_enabled else 0.0
        conf[k, _k.C_T0] = f.inception_s
        conf[k, _k.C_CODE] = int(law.code)
        conf[k, _k.C_P1] = float(p1)
        conf[k, _k.C_P2] = float(p2)
        conf[k, _k.C_CEIL] = f.recovery.ceiling_for(f.secondary.l0_m)
        conf[k, _k.C_RATE] = f.recovery.rate_scale
        conf[k, _k.C_TSAT] = f.recovery.saturation_time_s
        conf[k, _k.C_TPLAT] = f.recovery.plateau_s
        conf[k, _k.C_SCATTER] = f.recovery.scatter_pu
        conf[k, _k.C_SEED] = float(f.recovery.scatter_seed % 2147483646)
        conf[k, _k.C_MAXRS] = -1.0 if f.max_restrikes is None else float(f.max_restrikes)
        par[k, 0] = f.primary.as_tuple()
        par[k, 1] = f.secondary.as_tuple()
    return conf, par, phases


def simulate_event(spec: EventSpec) -> EventResult:
    """Simulate one event with fixed-step trapezoidal companion models.

    Parameters
    ----------
    spec
        The event description.

    Returns
    -------
    EventResult
        Waveforms at every time step and the event's truth.

    Raises
    ------
    ModelError
        If the description is inconsistent (the message says which field).
    """
    net, layout = build_network(spec)
    n_total = round(spec.t_end_s / spec.dt_s) + 1
    trip_t = np.concatenate([_pole_times(spec.breaker_local, "trip"),
                             _pole_times(spec.breaker_remote, "trip")])  # fmt: skip
    close_t = np.concatenate([_pole_times(spec.breaker_local, "close"),
                              _pole_times(spec.breaker_remote, "close")])  # fmt: skip
    pole_closed = (trip_t >= 0.0).astype(np.int64)
    trip_t[pole_closed == 0] = np.inf  # open from the start: that trip is spent
    close_t[(pole_closed == 1) & (close_t <= np.where(trip_t < np.inf, trip_t, -np.inf))] = np.inf
    arc_conf, arc_par, fault_phases = _arc_arrays(spec, layout)
    n_arc = arc_conf.shape[0]
    shunt: dict[int, float] = {}
    f = spec.fault
    if f is not None and f.permanent and f.inception_s <= 0.0:
        for k in range(n_arc):
            shunt[int(arc_conf[k, _k.C_NODE])] = 1.0 / f.r_fault_ohm
    net.set_poles(pole_closed)
    st = initial_state(net, pole_closed=pole_closed, shunt_g=shunt)
    neu_ports = np.full((2, 3), -1, dtype=np.int64)
    for e in range(2):
        for j, bi in enumerate(layout.neutral_blocks[e]):
            neu_ports[e, j] = net.blk_off[bi]
    delays = np.array([spec.breaker_local.three_pole_trip_delay_s,
                       spec.breaker_remote.three_pole_trip_delay_s])  # fmt: skip
    out_vline = np.zeros((6, n_total))
    out_vbus = np.zeros((6, n_total))
    out_iline = np.zeros((6, n_total))
    out_ineu = np.zeros((2, n_total))
    out_pole = np.zeros((6, n_total), dtype=np.int64)
    na = max(n_arc, 1)
    out_ai, out_av = np.zeros((na, n_total)), np.zeros((na, n_total))
    out_ag, out_al = np.zeros((na, n_total)), np.zeros((na, n_total))
    arc_state = np.zeros((n_arc, _k.N_ARC_STATE))
    log = np.zeros((_LOG_ROWS, 4))
    log_n = np.zeros(1, dtype=np.int64)
    emf_re, emf_im = np.ascontiguousarray(net.emf.real), np.ascontiguousarray(net.emf.imag)
    n = 0
    n_fact = 0
    while n < n_total:
        net.set_poles(pole_closed)
        yinv = np.linalg.inv(nodal_matrix(net))
        n_fact += 1
        if n_fact > _MAX_SWITCHINGS:
            _fail("more than 10000 breaker operations: check the breaker instants")
        n = _k.run_kernel(
            n, n_total, spec.dt_s, net.omega_rad_s, yinv, net.port_a, net.port_b,
            emf_re, emf_im, net.blk_off, net.blk_size, net.blk_g, net.blk_b, net.blk_a,
            st["u_prev"], st["i_prev"], net.tw_k, net.tw_m, net.tw_zp, net.tw_h,
            net.tw_q, net.tw_frac, st["tw_vk"], st["tw_vm"], st["tw_ik"], st["tw_im"],
            np.ascontiguousarray(_CLARKE), net.brk_k, pole_closed, trip_t, close_t,
            st["brk_i_prev"], delays, layout.line_nodes.reshape(-1),
            layout.bus_nodes.reshape(-1), neu_ports, out_vline, out_vbus, out_iline,
            out_ineu, out_pole, arc_conf, arc_par, arc_state, out_ai, out_av, out_ag,
            out_al, log, log_n,
        )  # fmt: skip
    t_s = np.arange(n_total) * spec.dt_s
    rows = log[: int(log_n[0])]
    truth = _truth(spec, rows, t_s, out_ai[0], out_ag[0], out_vline, fault_phases)

    def ro(a: np.ndarray) -> np.ndarray:
        a = np.ascontiguousarray(a)
        a.setflags(write=False)
        return a

    return EventResult(
        t_s=ro(t_s),
        v_line_v=ro(out_vline.reshape(2, 3, n_total)),
        v_bus_v=ro(out_vbus.reshape(2, 3, n_total)),
        i_line_a=ro(out_iline.reshape(2, 3, n_total)),
        i_reactor_neutral_a=ro(out_ineu),
        arc_i_a=ro(out_ai[0]),
        arc_v_v=ro(out_av[0]),
        arc_g_siemens=ro(out_ag[0]),
        arc_l_m=ro(out_al[0]),
        pole_closed=ro(out_pole.reshape(2, 3, n_total).astype(bool)),
        truth=truth,
        arc_i_all_a=ro(out_ai[:n_arc]),
        n_refactorisations=n_fact,
    )


def _rms(x: np.ndarray) -> float | None:
    return float(np.sqrt(np.mean(np.square(x)))) if x.size else None


def _conduction_end(
    t_x: float,
    t_s: np.ndarray,
    arc_i: np.ndarray,
    arc_g: np.ndarray,
    f_hz: float,
    *,
    after_reignition: bool = False,
) -> float:
    """The instant an extinguished arc stopped conducting, from its logged extinction ``t_x``.

    The kernel logs an extinction at the arc's last current zero, or at its last re-ignition
    when the current has had no zero since (the dielectric race of Johns et al. 1994 starts
    there); the extinction criterion fires a fraction of a cycle later, while the conductance
    of the cooling channel decays. An AC arc goes out at that current zero: what flows after
    it is the post-arc current of the cooling channel (common practice: interruption is at
    the current zero that is not followed by a re-ignition). But when ``t_x`` is a
    re-ignition or restrike instant (``after_reignition``), or the criterion fires more
    than half a cycle after ``t_x`` (a unipolar current: on a shunt-compensated line, the
    open phase's trapped charge and reactor current discharging through the arc after the
    pole opening), the arc
    conducted a loop of its own after ``t_x``: it went out where that conduction ended, the
    last sample before the criterion fired whose current exceeds 5 % of the largest since
    ``t_x``.
    """
    k = int(np.searchsorted(t_s, t_x))
    off = np.flatnonzero(arc_g[k:] <= 0.0)
    if off.size == 0:
        return t_x
    kc = k + int(off[0])
    if not after_reignition and float(t_s[kc]) - t_x <= 0.5 / f_hz:
        return t_x
    seg = np.abs(arc_i[k:kc])
    if seg.size == 0 or not np.any(seg > 0):
        return float(t_s[kc])
    on = np.flatnonzero(seg > 0.05 * float(seg.max()))
    return max(float(t_s[k + int(on[-1])]), t_x)


def _truth(spec: EventSpec, rows: np.ndarray, t_s: np.ndarray, arc_i: np.ndarray,
           arc_g: np.ndarray, vline: np.ndarray, phases: list[str]) -> EventTruth:  # fmt: skip
    kinds = {v: k for k, v in _k.LOG_KINDS.items()}

    def times(kind: str, idx: int | None = 0) -> list[float]:
        sel = rows[:, 0] == kinds[kind]
        if idx is not None:
            sel &= rows[:, 2] == idx
        return [float(x) for x in rows[sel, 1]]

    ops: list[tuple[str, float, int, str]] = []
    pole_open: dict[tuple[int, str], float] = {}
    for r in rows:
        if r[0] in (kinds["pole_open"], kinds["pole_close"]):
            pole = int(r[2])
            key = (pole // 3, PHASES[pole % 3])
            kind = "open" if r[0] == kinds["pole_open"] else "close"
            ops.append((kind, float(r[1]), key[0], key[1]))
            if kind == "open" and key not in pole_open:
                pole_open[key] = float(r[1])
    if not phases:
        return EventTruth(None, None, (), pole_open, tuple(ops), None, (), None, (),
                          {0: None, 1: None}, "no_reclose", None, None, None, None)  # fmt: skip
    fp = phases[0]
    inc = times("inception")
    inception = inc[0] if inc else None
    sec = times("secondary_start")
    sec_start = sec[0] if sec else None
    reclose: dict[int, float | None] = {0: None, 1: None}
    if sec_start is not None:
        for kind, t, end, ph in ops:
            if kind == "close" and ph == fp and t >= sec_start and reclose[end] is None:
                reclose[end] = t
    first_reclose = min((t for t in reclose.values() if t is not None), default=None)
    limit = first_reclose if first_reclose is not None else float(t_s[-1]) + 1.0
    restrikes = tuple(t for t in times("restrike") if t < limit)
    reignitions = tuple(t for t in times("reignition") if t < limit)
    # an extinction followed by a re-ignition (current back within a quarter cycle) was no
    # interruption of the arc: it is not listed
    undone = {max(e for e in times("extinction") if e <= t) for t in reignitions}
    race = tuple(t for t in times("extinction") if t not in undone)
    # a re-ignition or restrike instant logged as the race start: no current zero since
    reig = np.asarray(times("reignition") + times("restrike"))
    half_step = 0.5 * float(t_s[1] - t_s[0]) if t_s.size > 1 else 0.0
    ends = tuple(
        _conduction_end(
            t,
            t_s,
            arc_i,
            arc_g,
            spec.frequency_hz,
            after_reignition=bool(reig.size and np.min(np.abs(reig - t)) <= half_step),
        )
        for t in race
    )
    race = tuple(r for r, t in zip(race, ends, strict=True) if t < limit)
    exts = tuple(t for t in ends if t < limit)
    final_ext = None
    if exts and (not restrikes or exts[-1] > restrikes[-1]):
        final_ext = exts[-1]
    reest = times("reestablished")
    tpt = times("three_pole_trip", None)
    if reest:
        outcome = "reclose_onto_fault"
    elif first_reclose is not None:
        outcome = "success"
    else:
        outcome = "no_reclose"
    i_sec = None
    if sec_start is not None:
        stop = final_ext if final_ext is not None else limit
        sel = (t_s >= sec_start) & (t_s < stop) & (arc_g > 0)
        i_sec = _rms(arc_i[sel])
    v_rec = None
    if final_ext is not None:
        ph = PHASES.index(fp)
        sel = (t_s > final_ext) & (t_s < limit)
        v_rec = _rms(vline[ph][sel])
    i_prim = None
    if inception is not None:
        stop = sec_start if sec_start is not None else float(t_s[-1]) + 1.0
        i_prim = _rms(arc_i[(t_s >= inception) & (t_s < stop)])
    return EventTruth(
        inception_s=inception,
        faulted_phase=fp,
        faulted_phases=tuple(phases),
        pole_open_s=pole_open,
        pole_operations=tuple(ops),
        secondary_arc_start_s=sec_start,
        restrike_s=restrikes,
        reignition_s=reignitions,
        race_start_s=race,
        extinction_s=final_ext,
        extinctions_s=exts,
        reclose_s=reclose,
        outcome=outcome,
        three_pole_trip_s=tpt[0] if tpt else None,
        secondary_arc_current_rms_a=i_sec,
        recovery_voltage_rms_v=v_rec,
        primary_fault_current_rms_a=i_prim,
    )
