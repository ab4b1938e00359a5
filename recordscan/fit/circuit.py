"""The open-phase circuit of a single-pole trip, for fits from terminal records.

Once the poles of the faulted phase ``k`` are open at both ends, the open conductor is an
isolated node coupled to the healthy phases by the line's capacitance matrix and, on
compensated lines, by the shunt reactor banks. With the whole-line Maxwell (nodal)
capacitance matrix ``C`` (per-metre matrix times the length) the conductor's charge is
``q_k = Σ_j C_kj·v_j`` and Kirchhoff's current law on the conductor reads (derived)::

    dq_k/dt = −i_arc − i_reactor,k ,     i_reactor = Γ·λ ,   dλ/dt = v − λ/T

where the reactor banks, whose phase and neutral reactors share one quality factor Q, have
the time-domain admittance ``Y(s) = Γ/(s + 1/T)`` with ``T = Q/ω`` and
``Γ = I/L_p − J·L_n/(L_p·(3·L_n + L_p))`` (``J`` all ones; from
``Y = y_p·I − y_p²/(3·y_p + y_n)·J`` with ``y = 1/(R + sL)``, derived). So the arc current
can be **estimated** from the three measured line-side voltages
(:func:`estimate_arc_current`), and the open-phase voltage can be **simulated** with a
dynamic arc, driven by the measured healthy-phase voltages (:func:`simulate_open_phase`,
a compiled loop).

Simplifications (stated in docs/fitting.md): the open conductor is one node (its voltage is
taken as uniform along the line: the inductive voltage induced along it by the healthy
phases' currents is left to a fitted power-frequency term), the fixed fault resistance in
series with the arc is neglected against the arc resistance, and reactor losses follow one
shared quality factor.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.signal import butter, sosfiltfilt

from recordscan.errors import FitError
from recordscan.physics import arc as _arc

__all__ = [
    "OpenPhaseCircuit",
    "OpenPhaseResponse",
    "estimate_arc_current",
    "open_phase_circuit",
    "reactor_flux",
    "series_drop",
    "simulate_open_line",
    "simulate_open_phase",
    "terminal_terms",
]

_PHASES = ("A", "B", "C")


@dataclass(frozen=True)
class OpenPhaseCircuit:
    """Lumped whole-line quantities of the open-phase circuit.

    Attributes
    ----------
    phase_idx : int
        Index (0, 1, 2 for A, B, C) of the open (faulted) phase.
    c_f : numpy.ndarray
        (3, 3) whole-line Maxwell capacitance matrix [F] (per-metre matrix × length).
    gamma_per_h : numpy.ndarray
        (3, 3) reactor matrix Γ [1/H] of all banks together (zeros without reactors).
    gamma_ends_per_h : numpy.ndarray
        (2, 3, 3) the same per bank: at the "from" end (0) and at the "to" end (1).
    t_leak_s : float
        Reactor current time constant ``T = Q/ω`` [s] (``inf`` for lossless reactors).
    frequency_hz : float
        Power frequency.
    """

    phase_idx: int
    c_f: np.ndarray
    gamma_per_h: np.ndarray
    gamma_ends_per_h: np.ndarray
    t_leak_s: float
    frequency_hz: float

    @property
    def c_self_f(self) -> float:
        """Self capacitance ``C_kk`` of the open conductor [F]."""
        return float(self.c_f[self.phase_idx, self.phase_idx])

    @property
    def has_reactors(self) -> bool:
        """Whether any reactor bank is connected."""
        return bool(np.any(self.gamma_per_h != 0.0))


def _gamma(x_phase_ohm: float, x_neutral_ohm: float, omega: float) -> np.ndarray:
    lp = x_phase_ohm / omega
    ln = x_neutral_ohm / omega
    return np.eye(3) / lp - np.ones((3, 3)) * ln / (lp * (3.0 * ln + lp))


def open_phase_circuit(line: Any, phase: str) -> OpenPhaseCircuit:
    """The open-phase circuit of ``phase`` on ``line``.

    Parameters
    ----------
    line : recordscan.physics.line.LineDescription
        The line (``constants.c_f_per_m``, ``length_m``, ``reactors``, ``frequency_hz``).
    phase : str
        The open phase, ``"A"``, ``"B"`` or ``"C"``.

    Returns
    -------
    OpenPhaseCircuit
    """
    if phase not in _PHASES:
        raise FitError(f"open phase must be one of A, B, C, got {phase!r}")
    c = np.asarray(line.constants.c_f_per_m, dtype=float) * float(line.length_m)
    if c.shape != (3, 3) or not np.all(np.isfinite(c)) or c[0, 0] <= 0:
        raise FitError(f"{line.source or line.name}: line capacitance matrix is not usable")
    omega = 2.0 * math.pi * float(line.frequency_hz)
    ends = np.zeros((2, 3, 3))
    qs = []
    for e, r in enumerate(line.reactors):
        if r is None:
            continue
        ends[e] = _gamma(r.x_phase_ohm, r.x_neutral_ohm, omega)
        qs.append(float(r.quality_factor))
    q = min(qs) if qs else math.inf
    t_leak = q / omega if math.isfinite(q) else math.inf
    return OpenPhaseCircuit(
        PHASES_INDEX[phase], c, ends.sum(axis=0), ends, t_leak, float(line.frequency_hz)
    )


PHASES_INDEX = {p: i for i, p in enumerate(_PHASES)}


def reactor_flux(
    t_s: np.ndarray, v_v: np.ndarray, *, t_leak_s: float, t_ref_s: float
) -> np.ndarray:
    """Leaky flux integral ``dλ/dt = v − λ/T`` of each row, steady before ``t_ref_s``.

    The integration constant is set so that the flux has zero mean over the whole cycles
    before ``t_ref_s`` (the pre-fault sinusoidal steady state), which fixes the reactor
    currents through the whole record because inductor currents are continuous.

    Parameters
    ----------
    t_s : numpy.ndarray
        Sample times [s] (uniform).
    v_v : numpy.ndarray
        (m, n) voltages [V].
    t_leak_s : float
        Leak time constant [s] (``inf`` = pure integral).
    t_ref_s : float
        End of the steady pre-fault interval (fault inception) [s].

    Returns
    -------
    numpy.ndarray
        (m, n) flux [V·s].
    """
    v = np.atleast_2d(np.asarray(v_v, dtype=float))
    dt = float(np.median(np.diff(t_s)))
    a = 0.0 if not math.isfinite(t_leak_s) else dt / t_leak_s
    # trapezoidal leaky integral: λ[n+1] = (λ[n](1 − a/2) + dt·(v[n]+v[n+1])/2)/(1 + a/2)
    from scipy.signal import lfilter

    b_coef = np.array([dt / 2.0, dt / 2.0]) / (1.0 + a / 2.0)
    a_coef = np.array([1.0, -(1.0 - a / 2.0) / (1.0 + a / 2.0)])
    lam = lfilter(b_coef, a_coef, v, axis=1)
    decay = (-a_coef[1]) ** np.arange(v.shape[1])
    sel = t_s < t_ref_s
    if sel.sum() >= 4:
        c = -lam[:, sel].mean(axis=1) / max(float(decay[sel].mean()), 1e-12)
        lam = lam + c[:, None] * decay[None, :]
    return lam


def series_drop(
    t_s: np.ndarray,
    v_abc_v: np.ndarray,
    i_abc_a: np.ndarray,
    line: Any,
    *,
    gamma_end_per_h: np.ndarray | None = None,
    lam_abc_vs: np.ndarray | None = None,
    cutoff_hz: float | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Series voltage drop along the line from a terminal, as a polynomial in distance.

    With the phase currents entering the line at the terminal ``i(0)`` (breaker current
    minus the line-side reactor current) and the shunt (charging) current spread evenly,
    ``i(s) = i(0) − s·c·dv/dt`` (per-length Maxwell matrix ``c``), the drop to distance
    ``s`` is (derived) ``D(s) = s·A − s²/2·B`` with ``A = z∘i(0)``, ``B = z∘(c·dv/dt)`` and
    ``z∘i = r·i + l·di/dt`` (per-length series matrices).

    Parameters
    ----------
    t_s : numpy.ndarray
        Uniform sample times [s].
    v_abc_v, i_abc_a : numpy.ndarray
        (3, n) terminal voltages [V] and currents into the line [A].
    line : LineDescription
        The line (``constants.r_ohm_per_m``, ``l_h_per_m``, ``c_f_per_m``).
    gamma_end_per_h : numpy.ndarray, optional
        (3, 3) reactor matrix of this terminal's line-side bank.
    lam_abc_vs : numpy.ndarray, optional
        (3, n) reactor flux (:func:`reactor_flux`) when a bank is given.
    cutoff_hz : float, optional
        Low-pass corner of the derivatives (default 8 × the power frequency).

    Returns
    -------
    (A, B, E) : tuple of numpy.ndarray
        (3, n) each: ``A`` [V/m], ``B`` [V/m²] and ``E = z∘(L·c·dv/dt)`` [V/m], the drop per
        metre of the whole-line shunt current (with a negative sign the current of a fault
        to ground on an isolated conductor, which flows beyond the fault in the
        opposite direction).
    """
    t = np.asarray(t_s, dtype=float)
    fs = 1.0 / float(np.median(np.diff(t)))
    fc = cutoff_hz if cutoff_hz is not None else 8.0 * float(line.frequency_hz)
    cst = line.constants
    r = np.asarray(cst.r_ohm_per_m, dtype=float)
    ell = np.asarray(cst.l_h_per_m, dtype=float)
    c = np.asarray(cst.c_f_per_m, dtype=float)
    i0 = _lowpass(np.asarray(i_abc_a, dtype=float), fs_hz=fs, cutoff_hz=fc)
    if gamma_end_per_h is not None and lam_abc_vs is not None:
        i0 = i0 - _lowpass(gamma_end_per_h @ lam_abc_vs, fs_hz=fs, cutoff_hz=fc)
    v = _lowpass(np.asarray(v_abc_v, dtype=float), fs_hz=fs, cutoff_hz=fc)
    shunt = c @ np.gradient(v, t, axis=1)  # charging current per metre [A/m]

    def z_of(x: np.ndarray) -> np.ndarray:
        return r @ x + ell @ np.gradient(x, t, axis=1)

    length = float(line.length_m)
    return z_of(i0), z_of(shunt), length * _z_diag(r, ell, shunt, t)


def _z_diag(r: np.ndarray, ell: np.ndarray, x: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Each phase's own series drop ``r_jj·x_j + l_jj·dx_j/dt`` (no mutual terms)."""
    return np.diag(r)[:, None] * x + np.diag(ell)[:, None] * np.gradient(x, t, axis=1)


def terminal_terms(
    t_s: np.ndarray,
    v_abc_v: np.ndarray,
    i_abc_a: np.ndarray,
    line: Any,
    *,
    gamma_end_per_h: np.ndarray | None = None,
    lam_abc_vs: np.ndarray | None = None,
    cutoff_hz: float | None = None,
) -> dict[str, np.ndarray]:
    """Power-frequency terms of one terminal for the sectioned open-conductor model.

    Returns
    -------
    dict
        ``v`` (3, n) filtered terminal voltages; ``a``, ``b`` the drop terms of
        :func:`series_drop` (``v_j(s) = v_j(0) − s·a_j + s²/2·b_j``); ``a_own``, ``b_own``
        each phase's own share of them (``r_jj``, ``l_jj`` only), so that
        ``a_k − a_own_k`` is the voltage per metre induced on phase k by the others.
    """
    t = np.asarray(t_s, dtype=float)
    fs = 1.0 / float(np.median(np.diff(t)))
    fc = cutoff_hz if cutoff_hz is not None else 8.0 * float(line.frequency_hz)
    cst = line.constants
    r = np.asarray(cst.r_ohm_per_m, dtype=float)
    ell = np.asarray(cst.l_h_per_m, dtype=float)
    c = np.asarray(cst.c_f_per_m, dtype=float)
    i0 = _lowpass(np.asarray(i_abc_a, dtype=float), fs_hz=fs, cutoff_hz=fc)
    if gamma_end_per_h is not None and lam_abc_vs is not None:
        i0 = i0 - _lowpass(gamma_end_per_h @ lam_abc_vs, fs_hz=fs, cutoff_hz=fc)
    v = _lowpass(np.asarray(v_abc_v, dtype=float), fs_hz=fs, cutoff_hz=fc)
    shunt = c @ np.gradient(v, t, axis=1)
    a = r @ i0 + ell @ np.gradient(i0, t, axis=1)
    b = r @ shunt + ell @ np.gradient(shunt, t, axis=1)
    return {
        "v": v,
        "a": a,
        "b": b,
        "a_own": _z_diag(r, ell, i0, t),
        "b_own": _z_diag(r, ell, shunt, t),
    }


def _lowpass(x: np.ndarray, *, fs_hz: float, cutoff_hz: float) -> np.ndarray:
    wn = min(cutoff_hz / (0.5 * fs_hz), 0.95)
    sos = butter(4, wn, output="sos")
    return sosfiltfilt(sos, x, axis=-1)


def estimate_arc_current(
    t_s: np.ndarray,
    v_abc_v: np.ndarray,
    circuit: OpenPhaseCircuit,
    *,
    t_ref_s: float,
    cutoff_hz: float | None = None,
) -> np.ndarray:
    """Arc current estimated from the three line-side voltages (circuit identity above).

    ``i_arc = −d/dt(Σ_j C_kj·v_j) − Σ_j Γ_kj·λ_j``, the derivative taken on the charge after
    a zero-phase low-pass filter. Valid only while both poles of the open phase are open.

    Parameters
    ----------
    t_s : numpy.ndarray
        Uniform sample times [s].
    v_abc_v : numpy.ndarray
        (3, n) line-side phase voltages [V] (phases A, B, C).
    circuit : OpenPhaseCircuit
        From :func:`open_phase_circuit`.
    t_ref_s : float
        Fault inception (end of the steady pre-fault interval, for the reactor flux).
    cutoff_hz : float, optional
        Low-pass corner (default the lower of 20·f and 0.4 × the sample rate).

    Returns
    -------
    numpy.ndarray
        Estimated arc current [A] (positive from the conductor to ground).
    """
    t = np.asarray(t_s, dtype=float)
    v = np.asarray(v_abc_v, dtype=float)
    fs = 1.0 / float(np.median(np.diff(t)))
    fc = cutoff_hz if cutoff_hz is not None else min(20.0 * circuit.frequency_hz, 0.4 * fs)
    k = circuit.phase_idx
    q = circuit.c_f[k] @ v
    q = _lowpass(q, fs_hz=fs, cutoff_hz=fc)
    i = -np.gradient(q, t)
    if circuit.has_reactors:
        lam = reactor_flux(t, v, t_leak_s=circuit.t_leak_s, t_ref_s=t_ref_s)
        i = i - _lowpass(circuit.gamma_per_h[k] @ lam, fs_hz=fs, cutoff_hz=fc)
    return i


# --------------------------------------------------------------------------- simulation


def _open_phase_kernel(
    dt: float,
    b: np.ndarray,
    h: np.ndarray,
    c_kk: float,
    g_kk: float,
    leak: float,
    v0: float,
    lam0: float,
    g0: float,
    u0: float,
    r0: float,
    tau0: float,
    alpha: float,
    l0: float,
    gmin: float,
    drdt: float,
    code: int,
    p1: float,
    p2: float,
    t_el0: float,
    forced: bool,
    out_v: np.ndarray,
    out_i: np.ndarray,
    out_g: np.ndarray,
    out_l: np.ndarray,
) -> int:
    """Backward-Euler open-phase node with the arc's exponential conductance update.

    Returns the index of the model's extinction (−1 if the arc burns to the end).
    """
    n = b.shape[0]
    a = 1.0 / (1.0 + dt * leak)
    v = v0
    lam = lam0
    g = g0
    q = c_kk * v0 + b[0]
    ext = -1
    out_v[0] = v
    out_g[0] = g
    out_i[0] = g * v
    out_l[0] = _elong(code, p1, p2, t_el0, l0)
    for m in range(n - 1):
        rhs = q - b[m + 1] - dt * g_kk * a * lam - dt * h[m + 1]
        v = rhs / (c_kk + dt * g + dt * dt * a * g_kk)
        i_arc = g * v
        q = c_kk * v + b[m + 1]
        lam = a * (lam + dt * v)
        ell = _elong(code, p1, p2, t_el0 + (m + 1) * dt, l0)
        if g > 0.0:
            g_new = _step(g, i_arc, ell, dt, u0, r0, tau0, alpha, l0)
            if (not forced) and _ext(g_new, g, ell, dt, gmin, drdt):
                g_new = 0.0
                ext = m + 1
            g = g_new
        out_v[m + 1] = v
        out_i[m + 1] = i_arc
        out_g[m + 1] = g
        out_l[m + 1] = ell
    return ext


_KERNEL: list[Any] = []


def _compiled() -> Any:
    if not _KERNEL:
        import numba

        global _step, _ext, _elong
        _step = numba.njit(cache=True)(_arc.arc_step_scalar)
        _ext = numba.njit(cache=True)(_arc.extinction_scalar)
        _elong = numba.njit(cache=True)(_arc.elongation_length_scalar)
        _KERNEL.append(numba.njit(cache=False, nogil=True)(_open_phase_kernel))
    return _KERNEL[0]


_step = _arc.arc_step_scalar
_ext = _arc.extinction_scalar
_elong = _arc.elongation_length_scalar


@dataclass(frozen=True)
class OpenPhaseResponse:
    """Simulated open-phase circuit on its fine time grid.

    Attributes
    ----------
    t_s, v_v, i_a, g_siemens, l_m : numpy.ndarray
        Time [s], open-phase voltage [V], arc current [A], arc conductance [S] and length
        [m].
    extinction_s : float or None
        Instant the model's arc went out (None: still burning, or extinction suppressed).
    """

    t_s: np.ndarray
    v_v: np.ndarray
    i_a: np.ndarray
    g_siemens: np.ndarray
    l_m: np.ndarray
    extinction_s: float | None


def simulate_open_phase(
    t_s: np.ndarray,
    b_v: np.ndarray,
    h_a: np.ndarray,
    circuit: OpenPhaseCircuit,
    *,
    params: _arc.ArcParameters,
    law: Any,
    t_elongation_s: float,
    v0_v: float = 0.0,
    lam0_vs: float = 0.0,
    g0_siemens: float | None = None,
    forced_burning: bool = False,
) -> OpenPhaseResponse:
    """Simulate the open phase with a dynamic arc, driven by the healthy phases.

    Parameters
    ----------
    t_s : numpy.ndarray
        Uniform fine time grid [s] (a step well below the arc time constant).
    b_v : numpy.ndarray
        Healthy phases' share of the open conductor's charge, ``Σ_{j≠k} C_kj·v_j`` [C].
    h_a : numpy.ndarray
        Healthy phases' share of the open phase's reactor current ``Σ_{j≠k} Γ_kj·λ_j`` [A].
    circuit : OpenPhaseCircuit
        From :func:`open_phase_circuit`.
    params : ArcParameters
        Arc parameters (extinction thresholds included).
    law : elongation law
        ``ConstantLength``, ``LinearElongation`` or ``JohnsElongation``.
    t_elongation_s : float
        Elongation clock at the first grid instant (time since the arc episode began).
    v0_v, lam0_vs : float
        Open-phase voltage and flux at the first instant.
    g0_siemens : float, optional
        Arc conductance at the first instant (default: carries 30 A at ``u0·l``).
    forced_burning : bool
        Suppress the extinction test (fit of the burning period).

    Returns
    -------
    OpenPhaseResponse
    """
    t = np.ascontiguousarray(t_s, dtype=float)
    n = t.size
    dt = float(t[1] - t[0])
    k = circuit.phase_idx
    p = params
    p1, p2 = law.params
    l_start = float(law.length_m(np.array([t_elongation_s]), p.l0_m)[0])
    g0 = g0_siemens if g0_siemens is not None else 30.0 / (p.u0_v_per_m * l_start)
    leak = 0.0 if not math.isfinite(circuit.t_leak_s) else 1.0 / circuit.t_leak_s
    out = [np.empty(n) for _ in range(4)]
    ext = _compiled()(
        dt,
        np.ascontiguousarray(b_v, dtype=float),
        np.ascontiguousarray(h_a, dtype=float),
        circuit.c_self_f,
        float(circuit.gamma_per_h[k, k]),
        leak,
        float(v0_v),
        float(lam0_vs),
        float(g0),
        p.u0_v_per_m,
        p.r0_ohm_per_m,
        p.tau0_s,
        p.alpha,
        p.l0_m,
        p.g_min_siemens_per_m,
        p.dr_dt_ohm_per_m_s,
        int(law.code),
        float(p1),
        float(p2),
        float(t_elongation_s),
        bool(forced_burning),
        *out,
    )
    return OpenPhaseResponse(
        t_s=t,
        v_v=out[0],
        i_a=out[1],
        g_siemens=out[2],
        l_m=out[3],
        extinction_s=None if ext < 0 else float(t[ext]),
    )


# --------------------------------------------------------------------------- sectioned line


def _open_line_kernel(
    dt: float,
    cap: np.ndarray,
    alpha_b: np.ndarray,
    beta_b: np.ndarray,
    b: np.ndarray,
    e: np.ndarray,
    h: np.ndarray,
    g_end: np.ndarray,
    leak: float,
    v_init: np.ndarray,
    lam_init: np.ndarray,
    arc_node: int,
    g0: float,
    u0: float,
    r0: float,
    tau0: float,
    alpha: float,
    l0: float,
    gmin: float,
    drdt: float,
    code: int,
    p1: float,
    p2: float,
    t_el0: float,
    forced: bool,
    out_v0: np.ndarray,
    out_vn: np.ndarray,
    out_va: np.ndarray,
    out_i: np.ndarray,
    out_g: np.ndarray,
    out_l: np.ndarray,
) -> int:
    """Trapezoidal nodal solution of the open conductor as a chain of pi sections.

    Node equations (tridiagonal) with the arc at ``arc_node`` (conductance held over the
    step, then advanced by the exponential update) and reactor banks at the end nodes.
    Returns the index of the model's extinction (−1 if none).
    """
    nn = cap.shape[0]
    nb = nn - 1
    ns = b.shape[1]
    v = v_init.copy()
    ib = np.zeros(nb)
    for m in range(nb):
        ib[m] = 0.0
    lam = lam_init.copy()
    kap = 1.0 / (1.0 + 0.5 * dt * leak)
    g = g0
    ext = -1
    diag = np.empty(nn)
    low = np.empty(nn)
    up = np.empty(nn)
    rhs = np.empty(nn)
    hist = np.empty(nb)
    cp = np.empty(nn)
    dp = np.empty(nn)
    out_v0[0] = v[0]
    out_vn[0] = v[nn - 1]
    out_va[0] = v[arc_node]
    out_i[0] = g * v[arc_node]
    out_g[0] = g
    out_l[0] = _elong(code, p1, p2, t_el0, l0)
    for s in range(ns - 1):
        for m in range(nb):
            # i' = α·(v_m' − v_{m+1}') + hist, trapezoidal R–L branch with its emf
            hist[m] = beta_b[m] * ib[m] + alpha_b[m] * (v[m] - v[m + 1] - e[m, s] - e[m, s + 1])
        for n in range(nn):
            diag[n] = cap[n]
            low[n] = 0.0
            up[n] = 0.0
            inflow = 0.0
            if n > 0:
                diag[n] += 0.5 * dt * alpha_b[n - 1]
                low[n] = -0.5 * dt * alpha_b[n - 1]
                inflow += ib[n - 1] + hist[n - 1]
            if n < nb:
                diag[n] += 0.5 * dt * alpha_b[n]
                up[n] = -0.5 * dt * alpha_b[n]
                inflow -= ib[n] + hist[n]
            rhs[n] = cap[n] * v[n] - (b[n, s + 1] - b[n, s]) + 0.5 * dt * inflow
            if n == arc_node:
                diag[n] += 0.5 * dt * g
                rhs[n] -= 0.5 * dt * g * v[n]
            if g_end[n] != 0.0:
                # reactor: i_r = Γ·λ + h, λ' = κ·(λ·(1 − a/2) + dt/2·(v + v'))
                gk = g_end[n]
                diag[n] += 0.5 * dt * gk * kap * 0.5 * dt
                lam_c = kap * (lam[n] * (1.0 - 0.5 * dt * leak) + 0.5 * dt * v[n])
                ir_old = gk * lam[n] + h[n, s]
                rhs[n] -= 0.5 * dt * (ir_old + gk * lam_c + h[n, s + 1])
        # Thomas algorithm
        cp[0] = up[0] / diag[0]
        dp[0] = rhs[0] / diag[0]
        for n in range(1, nn):
            den = diag[n] - low[n] * cp[n - 1]
            cp[n] = up[n] / den
            dp[n] = (rhs[n] - low[n] * dp[n - 1]) / den
        vn = np.empty(nn)
        vn[nn - 1] = dp[nn - 1]
        for n in range(nn - 2, -1, -1):
            vn[n] = dp[n] - cp[n] * vn[n + 1]
        for m in range(nb):
            ib[m] = alpha_b[m] * (vn[m] - vn[m + 1]) + hist[m]
        for n in range(nn):
            if g_end[n] != 0.0:
                lam[n] = kap * (lam[n] * (1.0 - 0.5 * dt * leak) + 0.5 * dt * (v[n] + vn[n]))
        v = vn
        va = v[arc_node]
        i_arc = g * va
        ell = _elong(code, p1, p2, t_el0 + (s + 1) * dt, l0)
        if g > 0.0:
            g_new = _step(g, i_arc, ell, dt, u0, r0, tau0, alpha, l0)
            if (not forced) and _ext(g_new, g, ell, dt, gmin, drdt):
                g_new = 0.0
                ext = s + 1
            g = g_new
        out_v0[s + 1] = v[0]
        out_vn[s + 1] = v[nn - 1]
        out_va[s + 1] = va
        out_i[s + 1] = i_arc
        out_g[s + 1] = g
        out_l[s + 1] = ell
    return ext


_LINE_KERNEL: list[Any] = []


def _compiled_line() -> Any:
    if not _LINE_KERNEL:
        import numba

        _compiled()  # binds the compiled scalar arc functions first
        _LINE_KERNEL.append(numba.njit(cache=False, nogil=True)(_open_line_kernel))
    return _LINE_KERNEL[0]


@dataclass(frozen=True)
class OpenLineResponse:
    """Simulated sectioned open conductor on its fine time grid.

    Attributes
    ----------
    t_s : numpy.ndarray
        Time [s].
    v_local_v, v_remote_v, v_arc_v : numpy.ndarray
        Open-phase voltage at the local end, the remote end and the arc [V].
    i_a, g_siemens, l_m : numpy.ndarray
        Arc current [A], conductance [S] and length [m].
    extinction_s : float or None
        Instant the model's arc went out.
    """

    t_s: np.ndarray
    v_local_v: np.ndarray
    v_remote_v: np.ndarray
    v_arc_v: np.ndarray
    i_a: np.ndarray
    g_siemens: np.ndarray
    l_m: np.ndarray
    extinction_s: float | None


def simulate_open_line(
    t_s: np.ndarray,
    line: Any,
    circuit: OpenPhaseCircuit,
    *,
    b_c: np.ndarray,
    emf_v: np.ndarray,
    h_a: np.ndarray,
    arc_node: int,
    params: _arc.ArcParameters,
    law: Any,
    t_elongation_s: float,
    v_init_v: np.ndarray,
    lam_init_vs: np.ndarray,
    g0_siemens: float | None = None,
    forced_burning: bool = False,
    s_nodes_m: np.ndarray | None = None,
) -> OpenLineResponse:
    """Simulate the open conductor as ``N`` pi sections with the arc at one node.

    Parameters
    ----------
    t_s : numpy.ndarray
        Uniform fine grid [s].
    line : LineDescription
        The line (per-length ``r``, ``l``, ``c`` of the open phase, length).
    circuit : OpenPhaseCircuit
        Open phase and reactor banks.
    b_c : numpy.ndarray
        (N+1, n) healthy phases' share of each node's charge ``Δ_n·Σ_{j≠k} c_kj·v_j(s_n)``
        [C] (``Δ_n`` half the length of the sections either side of the node).
    emf_v : numpy.ndarray
        (N, n) voltage induced in each section by the healthy phases' currents [V].
    h_a : numpy.ndarray
        (N+1, n) healthy phases' share of the reactor current at each node [A] (zeros
        except at the end nodes with a bank).
    arc_node : int
        Node of the fault.
    params, law, t_elongation_s
        Arc parameters, elongation law and the elongation clock at the first instant.
    v_init_v, lam_init_vs : numpy.ndarray
        (N+1,) node voltages and reactor fluxes at the first instant.
    g0_siemens : float, optional
        Arc conductance at the first instant (default: carries 30 A at ``u0·l``).
    forced_burning : bool
        Suppress the extinction test.
    s_nodes_m : numpy.ndarray, optional
        (N+1,) node positions from the local end [m] (default: equal sections); a node at
        the fault keeps the arc where it is.

    Returns
    -------
    OpenLineResponse
    """
    t = np.ascontiguousarray(t_s, dtype=float)
    dt = float(t[1] - t[0])
    k = circuit.phase_idx
    nn = b_c.shape[0]
    nb = nn - 1
    if s_nodes_m is None:
        s_nodes_m = np.linspace(0.0, float(line.length_m), nn)
    seg = np.diff(np.asarray(s_nodes_m, dtype=float))
    if seg.size != nb or np.any(seg <= 0.0):
        raise FitError("section nodes must be increasing, one more than the sections")
    node_len = np.zeros(nn)
    node_len[:-1] += 0.5 * seg
    node_len[1:] += 0.5 * seg
    cst = line.constants
    cap = float(np.asarray(cst.c_f_per_m)[k, k]) * node_len
    r_b = float(np.asarray(cst.r_ohm_per_m)[k, k]) * seg
    l_b = float(np.asarray(cst.l_h_per_m)[k, k]) * seg
    den = l_b + 0.5 * dt * r_b
    alpha_b = 0.5 * dt / den
    beta_b = (l_b - 0.5 * dt * r_b) / den
    g_end = np.zeros(nn)
    g_end[0] = float(circuit.gamma_ends_per_h[0][k, k])
    g_end[-1] = float(circuit.gamma_ends_per_h[1][k, k])
    leak = 0.0 if not math.isfinite(circuit.t_leak_s) else 1.0 / circuit.t_leak_s
    p = params
    p1, p2 = law.params
    l_start = float(law.length_m(np.array([t_elongation_s]), p.l0_m)[0])
    g0 = g0_siemens if g0_siemens is not None else 30.0 / (p.u0_v_per_m * l_start)
    n = t.size
    outs = [np.empty(n) for _ in range(6)]
    ext = _compiled_line()(
        dt, cap, alpha_b, beta_b,
        np.ascontiguousarray(b_c, dtype=float), np.ascontiguousarray(emf_v, dtype=float),
        np.ascontiguousarray(h_a, dtype=float), g_end, leak,
        np.ascontiguousarray(v_init_v, dtype=float), np.ascontiguousarray(lam_init_vs, dtype=float),
        int(arc_node), float(g0), p.u0_v_per_m, p.r0_ohm_per_m, p.tau0_s, p.alpha, p.l0_m,
        p.g_min_siemens_per_m, p.dr_dt_ohm_per_m_s, int(law.code), float(p1), float(p2),
        float(t_elongation_s), bool(forced_burning), *outs,
    )  # fmt: skip
    return OpenLineResponse(
        t_s=t,
        v_local_v=outs[0],
        v_remote_v=outs[1],
        v_arc_v=outs[2],
        i_a=outs[3],
        g_siemens=outs[4],
        l_m=outs[5],
        extinction_s=None if ext < 0 else float(t[ext]),
    )
