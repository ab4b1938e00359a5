"""Synthetic staged-fault-test records: a secondary arc in its open-phase coupling circuit.

A staged test measures the current through the fault arc and the voltage across it. This
module produces such records with known arc parameters, for the direct fit, its accuracy
harness and the demo. The circuit is the lumped open-phase equivalent of a transposed line
(derived in docs/arc-model.md and REFERENCE section 4.1): the healthy phases drive the
faulted conductor through the interphase capacitance ``C_m`` (a source ``e(t)`` of the
healthy-phase voltage sum), the faulted conductor has ``C_g`` to ground, and the arc
conductance ``g`` connects it to ground::

    (C_m + C_g)·dv/dt = C_m·de/dt − g·v
    dg/dt = (G − g)/τ,  G = |g·v| / ((u0 + r0·|g·v|)·l(t)),  τ = τ0·(l/l0)^α

The pair is integrated with ``scipy.integrate.solve_ivp`` (adaptive, tight tolerance) —
deliberately not with the fitter's own discrete kernel — and then sampled at a recorder
rate, with noise and 16-bit quantisation, so that a fit of the result is not a tautology.
After the arc goes out (``g·l`` below the extinction threshold) ``g`` is set to zero and the
recovery voltage follows; restrikes are not modelled here (see the network simulator).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

from recordscan.physics.arc import (
    ArcParameters,
    ConstantLength,
    JohnsElongation,
    LinearElongation,
)


@dataclass(frozen=True)
class StagedArc:
    """A sampled staged-test arc record with its truth.

    Attributes
    ----------
    t_s, i_a, u_v : numpy.ndarray
        Samples (recorder rate) of arc current and arc voltage, noise and quantisation
        included.
    extinction_s : float or None
        True extinction instant (None if the arc outlived the simulation).
    params : ArcParameters
        Arc parameters used.
    law_name : str
        ``"constant"``, ``"linear"`` or ``"johns"``.
    v_m_per_s : float
        Elongation speed of the linear law (0 otherwise).
    frequency_hz, rate_hz : float
        Power frequency and recorder rate.
    """

    t_s: np.ndarray
    i_a: np.ndarray
    u_v: np.ndarray
    extinction_s: float | None
    params: ArcParameters
    law_name: str
    v_m_per_s: float
    frequency_hz: float
    rate_hz: float


def _quantise(x: np.ndarray, bits: int = 16) -> np.ndarray:
    span = float(np.max(np.abs(x))) or 1.0
    lsb = 2.0 * span / (2**bits - 2)
    return np.round(x / lsb) * lsb


def simulate_staged_arc(
    params: ArcParameters,
    *,
    law: ConstantLength | LinearElongation | JohnsElongation | None = None,
    i_s_rms_a: float = 30.0,
    v_phase_rms_v: float = 230e3,
    coupling_ratio: float = 0.15,
    frequency_hz: float = 50.0,
    duration_s: float = 0.4,
    rate_hz: float = 5000.0,
    snr_db: float | None = 50.0,
    seed: int = 0,
    rtol: float = 1e-7,
    period: str = "secondary",
) -> StagedArc:
    """Simulate a secondary arc in the open-phase circuit and sample it like a recorder.

    Parameters
    ----------
    params : ArcParameters
        Arc parameters.
    law : elongation law, optional
        Default :class:`ConstantLength`.
    i_s_rms_a : float
        Secondary arc current the circuit would drive into a short circuit [A rms].
    v_phase_rms_v : float
        Phase-to-ground voltage of the healthy phases [V rms] (the coupled source is the
        negative of their sum, of the same magnitude on a balanced system).
    coupling_ratio : float
        ``C_m/(C_m + C_g)``: recovery voltage per unit of phase voltage (0.15 is typical of
        an uncompensated line, REFERENCE 4.1).
    frequency_hz, duration_s, rate_hz : float
        Power frequency, simulated time and recorder sample rate.
    snr_db : float or None
        Signal-to-noise ratio of added white noise on both channels (None = none).
    seed : int
        Noise seed.
    rtol : float
        Relative tolerance of the integration.
    period : str
        ``"secondary"`` (the coupling circuit above) or ``"primary"``: the arc in series
        with a stiff source behind an R–L impedance (X/R = 15) that drives ``i_s_rms_a``
        into a short circuit, ``L·di/dt = e − R·i − i/g`` (kA fault currents make ``r0``
        visible).

    Returns
    -------
    StagedArc
    """
    lw = law if law is not None else ConstantLength()
    w = 2 * math.pi * frequency_hz
    e_pk = math.sqrt(2) * v_phase_rms_v
    c_m = i_s_rms_a / (w * v_phase_rms_v)
    c_tot = c_m / coupling_ratio
    p = params
    l0 = p.l0_m

    def length(t: float) -> float:
        return float(lw.length_m(np.array([t]), l0)[0])

    def rhs(t: float, y: np.ndarray) -> np.ndarray:
        v, g = y
        i = g * v
        ell = length(t)
        ai = abs(i)
        big_g = ai / ((p.u0_v_per_m + p.r0_ohm_per_m * ai) * ell)
        tau = p.tau0_s * (ell / l0) ** p.alpha
        dv = (c_m * e_pk * w * math.cos(w * t) - i) / c_tot
        return np.array([dv, (big_g - g) / tau])

    def extinct(t: float, y: np.ndarray) -> float:
        return y[1] * length(t) - p.g_min_siemens_per_m * 0.2

    if period == "primary":
        return _primary(
            p, lw, i_s_rms_a, v_phase_rms_v, frequency_hz, duration_s, rate_hz, snr_db, seed, rtol
        )
    extinct.terminal = True  # type: ignore[attr-defined]
    extinct.direction = -1  # type: ignore[attr-defined]
    # start at a current peak region with the stationary conductance of the driven current
    g0 = i_s_rms_a * math.sqrt(2) * 2 / math.pi / ((p.u0_v_per_m + p.r0_ohm_per_m * i_s_rms_a) * l0)
    v0 = 0.0
    max_step = min(1.0 / (frequency_hz * 400), p.tau0_s / 4)
    sol = solve_ivp(
        rhs,
        (0.0, duration_s),
        [v0, g0],
        method="RK45",
        rtol=rtol,
        atol=[1e-3, 1e-12],
        max_step=max_step,
        dense_output=True,
        events=extinct,
    )
    t_ext = float(sol.t_events[0][0]) if sol.t_events[0].size else None
    t = np.arange(0.0, duration_s, 1.0 / rate_hz)
    v = np.empty_like(t)
    g = np.empty_like(t)
    burning = t <= (t_ext if t_ext is not None else duration_s + 1)
    yv = sol.sol(t[burning])
    v[burning], g[burning] = yv[0], yv[1]
    if t_ext is not None and (~burning).any():
        # after extinction the node follows the capacitive divider (no arc current)
        v_ext = float(sol.sol(t_ext)[0])
        e_ext = e_pk * math.sin(w * t_ext)
        tt = t[~burning]
        v[~burning] = v_ext + coupling_ratio * (e_pk * np.sin(w * tt) - e_ext)
        g[~burning] = 0.0
    i = g * v
    rng = np.random.default_rng(seed)
    if snr_db is not None:
        for arr in (i, v):
            p_sig = float(np.mean(arr**2))
            arr += rng.normal(0.0, math.sqrt(p_sig / 10 ** (snr_db / 10)), arr.size)
    i_q, v_q = _quantise(i), _quantise(v)
    name = (
        "linear"
        if isinstance(lw, LinearElongation)
        else ("johns" if isinstance(lw, JohnsElongation) else "constant")
    )
    vel = lw.v_m_per_s if isinstance(lw, LinearElongation) else 0.0
    return StagedArc(t, i_q, v_q, t_ext, p, name, vel, frequency_hz, rate_hz)


def _name(lw: object) -> tuple[str, float]:
    if isinstance(lw, LinearElongation):
        return "linear", lw.v_m_per_s
    if isinstance(lw, JohnsElongation):
        return "johns", 0.0
    return "constant", 0.0


def _noisy(arrs: tuple[np.ndarray, ...], snr_db: float | None, seed: int) -> list[np.ndarray]:
    rng = np.random.default_rng(seed)
    out = []
    for arr in arrs:
        a = arr.copy()
        if snr_db is not None:
            p_sig = float(np.mean(a**2))
            a += rng.normal(0.0, math.sqrt(p_sig / 10 ** (snr_db / 10)), a.size)
        out.append(_quantise(a))
    return out


def _primary(
    p: ArcParameters,
    lw: object,
    i_f_rms_a: float,
    v_phase_rms_v: float,
    frequency_hz: float,
    duration_s: float,
    rate_hz: float,
    snr_db: float | None,
    seed: int,
    rtol: float,
) -> StagedArc:
    w = 2 * math.pi * frequency_hz
    e_pk = math.sqrt(2) * v_phase_rms_v
    z = v_phase_rms_v / i_f_rms_a
    x_over_r = 15.0
    r_s = z / math.hypot(1.0, x_over_r)
    l_s = r_s * x_over_r / w
    l0 = p.l0_m

    def length(t: float) -> float:
        return float(lw.length_m(np.array([t]), l0)[0])  # type: ignore[attr-defined]

    def rhs(t: float, y: np.ndarray) -> np.ndarray:
        i, g = y
        ell = length(t)
        ai = abs(i)
        big_g = ai / ((p.u0_v_per_m + p.r0_ohm_per_m * ai) * ell)
        tau = p.tau0_s * (ell / l0) ** p.alpha
        di = (e_pk * math.sin(w * t) - r_s * i - i / max(g, 1e-9)) / l_s
        return np.array([di, (big_g - g) / tau])

    g0 = i_f_rms_a / ((p.u0_v_per_m + p.r0_ohm_per_m * i_f_rms_a) * l0)
    # start at the natural current zero of the steady state so no DC offset builds up
    phi = math.atan(x_over_r)
    t_start = phi / w
    sol = solve_ivp(
        rhs,
        (t_start, t_start + duration_s),
        [0.0, g0],
        method="LSODA",
        rtol=rtol,
        atol=[1e-2, 1e-9],
        max_step=1.0 / (frequency_hz * 400),
        dense_output=True,
    )
    t = np.arange(0.0, duration_s, 1.0 / rate_hz)
    y = sol.sol(t + t_start)
    i, g = y[0], np.maximum(y[1], 1e-9)
    u = i / g
    i_q, u_q = _noisy((i, u), snr_db, seed)
    name, vel = _name(lw)
    return StagedArc(t, i_q, u_q, None, p, name, vel, frequency_hz, rate_hz)
