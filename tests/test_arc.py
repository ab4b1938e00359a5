"""Dynamic arc model: closed forms, an independent integrator, published parameter arithmetic.

Sources are named beside each check; reference rows live in tests/reference/arc.toml.
"""

from __future__ import annotations

import math
import time
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.typing import ArrayLike
from scipy.integrate import solve_ivp
from scipy.optimize import brentq, minimize_scalar

from recordscan.errors import ModelError
from recordscan.physics import arc
from recordscan.physics.arc import (
    PRIMARY_ARC,
    ArcParameters,
    ConstantLength,
    DielectricRecovery,
    JohnsElongation,
    LinearElongation,
    arc_rhs,
    arc_step_scalar,
    dielectric_strength_scalar,
    elongation_length_scalar,
    extinction_scalar,
    find_restrike,
    simulate_current_driven,
)
from recordscan.physics.gap import cold_gap_ceiling_v

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

REF = tomllib.loads((Path(__file__).parent / "reference" / "arc.toml").read_text())


def _close(actual: float, row: dict) -> None:
    if "rel_tol" in row:
        assert actual == pytest.approx(row["value"], rel=row["rel_tol"])
    else:
        assert actual == pytest.approx(row["value"], abs=row["abs_tol"])


# --------------------------------------------------------------------------- sinusoidal current


def _series(i_pk: float, u0: float, l_m: float, tau: float, w: float, k: int) -> complex:
    """Complex amplitude of the 2k-th harmonic (derived: |sin| series through the lag)."""
    g_pk = i_pk / (u0 * l_m)
    return -(4.0 / math.pi) * g_pk / ((4 * k * k - 1) * (1.0 + 2j * k * w * tau))


def _series_waveform(t: ArrayLike, i_pk: float, u0: float, l_m: float, tau: float, w: float):
    # terms fall as 1/k^3, so 2000 of them leave a truncation error below 1e-10 of G_pk
    k = np.arange(1, 2001)
    amp = np.array([_series(i_pk, u0, l_m, tau, w, int(kk)) for kk in k])
    tt = np.atleast_1d(np.asarray(t, dtype=float))
    g = (2.0 / math.pi) * i_pk / (u0 * l_m) + np.real(np.exp(2j * w * np.outer(tt, k)) @ amp)
    return g


def _extremum(sign: float, args: tuple, period_s: float) -> float:
    coarse = np.linspace(0.0, period_s, 2001)
    g = sign * _series_waveform(coarse, *args)
    t0 = coarse[int(np.argmax(g))]
    res = minimize_scalar(
        lambda x: -sign * float(_series_waveform(x, *args)[0]),
        bounds=(t0 - period_s / 2000, t0 + period_s / 2000),
        method="bounded",
        options={"xatol": 1e-12},
    )
    return sign * -float(res.fun)


def test_sinusoid_reference_numbers_follow_from_the_closed_form() -> None:
    # Derived (REFERENCE row values recomputed here from the closed form, not trusted).
    s = REF["sinusoid"]
    v = s["values"]
    w = 2 * math.pi * s["f_hz"]
    args = (s["i_peak_a"], s["u0_v_per_m"], s["l_m"], s["tau_s"], w)
    g_pk = s["i_peak_a"] / (s["u0_v_per_m"] * s["l_m"])
    _close(g_pk, v["g_peak_siemens"])
    _close(2 / math.pi * g_pk, v["mean_siemens"])
    h2 = _series(*args, 1)
    _close(abs(h2), v["h2_siemens"])
    _close(abs(h2) / g_pk, v["h2_over_g_peak"])
    _close(math.degrees(math.atan(2 * w * s["tau_s"])), v["h2_lag_deg"])
    _close(abs(_series(*args, 2)), v["h4_siemens"])
    _close(abs(_series(*args, 3)), v["h6_siemens"])
    _close(_extremum(1.0, args, 1.0 / s["f_hz"]), v["max_siemens"])
    _close(_extremum(-1.0, args, 1.0 / s["f_hz"]), v["min_siemens"])


@pytest.mark.parametrize("hold,rel", [("linear", 3e-6), ("zero", 2e-3)])
def test_sinusoid_periodic_steady_state_matches_series(hold: str, rel: float) -> None:
    # Derived closed form (tests/reference/arc.toml [sinusoid]): mean (2/pi)*I/(u0*l) exactly,
    # 2nd/4th/6th harmonics with lag atan(2k*w*tau), max/min of the steady state.
    s = REF["sinusoid"]
    v = s["values"]
    f = s["f_hz"]
    n_per = 16000  # an integer number of steps per period makes the DFT exact
    dt = 1.0 / (f * n_per)
    t = np.arange(0, 6 * n_per + 1) * dt  # 100 tau: start-up transient < 1e-40
    i = s["i_peak_a"] * np.sin(2 * math.pi * f * t)
    p = ArcParameters(u0_v_per_m=s["u0_v_per_m"], r0_ohm_per_m=0.0, tau0_s=s["tau_s"], l0_m=3.0)
    r = simulate_current_driven(t, i, params=p, hold=hold)
    g = r.g_siemens[-n_per - 1 : -1]
    tt = t[-n_per - 1 : -1]
    assert g.mean() == pytest.approx(v["mean_siemens"]["value"], rel=max(rel, 2e-6))
    w = 2 * math.pi * f
    for k, key in ((1, "h2_siemens"), (2, "h4_siemens"), (3, "h6_siemens")):
        c = 2.0 / n_per * np.sum(g * np.exp(-2j * k * w * tt))
        ref = _series(s["i_peak_a"], s["u0_v_per_m"], s["l_m"], s["tau_s"], w, k)
        assert abs(c - ref) <= 10 * rel * abs(ref)
        assert abs(c) == pytest.approx(v[key]["value"], rel=10 * rel + 5e-6)
    c2 = 2.0 / n_per * np.sum(g * np.exp(-2j * w * tt))
    # lag of the 2nd harmonic behind that of G itself (phase of -(...)/(1 + j2wτ))
    lag_deg = -math.degrees(np.angle(-c2))
    # a zero-order hold delays G by half a step: 2w*dt/2 more lag (derived, 0.0225 deg here)
    extra_deg = math.degrees(w * dt) if hold == "zero" else 0.0
    assert lag_deg == pytest.approx(v["h2_lag_deg"]["value"] + extra_deg, abs=2e-3)
    assert g.max() == pytest.approx(v["max_siemens"]["value"], rel=rel + 2e-6)
    assert g.min() == pytest.approx(v["min_siemens"]["value"], rel=rel + 5e-6)


@pytest.mark.parametrize("tau_s", [0.2e-3, 5e-3])
def test_mean_conductance_does_not_depend_on_tau(tau_s: float) -> None:
    # Derived: mean g = (2/pi)*I/(u0*l) for any tau (the DC term passes the lag unchanged).
    f, i_pk, u0, ell = 50.0, 30.0, 2000.0, 4.0
    n_per = 8000
    t = np.arange(0, 60 * n_per + 1) * (1.0 / (f * n_per))
    p = ArcParameters(u0_v_per_m=u0, r0_ohm_per_m=0.0, tau0_s=tau_s, l0_m=ell)
    r = simulate_current_driven(t, i_pk * np.sin(2 * math.pi * f * t), params=p)
    assert r.g_siemens[-n_per - 1 : -1].mean() == pytest.approx(
        2 / math.pi * i_pk / (u0 * ell), rel=1e-6
    )


# --------------------------------------------------------------------------- constant current


@pytest.mark.parametrize("hold", ["linear", "zero"])
def test_constant_current_exponential_approach(hold: str) -> None:
    # Derived: dg/dt = (G - g)/tau with constant G has g = G + (g0 - G)*exp(-t/tau).
    p = ArcParameters()
    i_a, g0 = 25.0, 1e-4
    t = np.linspace(0.0, 8e-3, 801)
    r = simulate_current_driven(t, np.full_like(t, i_a), params=p, g0_siemens=g0, hold=hold)
    big_g = i_a / ((p.u0_v_per_m + p.r0_ohm_per_m * i_a) * p.l0_m)
    np.testing.assert_allclose(
        r.g_siemens, big_g + (g0 - big_g) * np.exp(-t / p.tau0_s), rtol=1e-12, atol=0
    )
    # the scalar kernel, stepped by hand, is the same exact update
    g = g0
    for _ in range(100):
        g = arc_step_scalar(g, i_a, p.l0_m, 1e-5, *p.as_tuple()[:5])
    assert g == pytest.approx(big_g + (g0 - big_g) * math.exp(-1e-3 / p.tau0_s), rel=1e-12)


@pytest.mark.parametrize("i_a", [-400.0, -5.0, 2.0, 60.0, 1500.0])
def test_stationary_characteristic(i_a: float) -> None:
    # Derived: at rest G*u = i, so |u| = (u0 + r0*|i|)*l with the sign of i (Kizilcay form;
    # with r0 = 0 it is the constant arc voltage u0*l, not Mayr's constant power).
    p = ArcParameters(u0_v_per_m=1100.0, r0_ohm_per_m=0.05, l0_m=2.5)
    t = np.linspace(0.0, 40e-3, 401)  # 40 tau
    r = simulate_current_driven(t, np.full_like(t, i_a), params=p, g0_siemens=1e-3)
    assert r.u_v[-1] == pytest.approx(
        math.copysign((1100.0 + 0.05 * abs(i_a)) * 2.5, i_a), rel=1e-9
    )
    p0 = ArcParameters(u0_v_per_m=1100.0, r0_ohm_per_m=0.0, l0_m=2.5)
    r0 = simulate_current_driven(t, np.full_like(t, i_a), params=p0, g0_siemens=1e-3)
    assert abs(r0.u_v[-1]) == pytest.approx(1100.0 * 2.5, rel=1e-9)


# --------------------------------------------------------------------------- independent reference


def _ivp_reference(p: ArcParameters, law, t_eval: np.ndarray, current, g0: float) -> np.ndarray:
    sol = solve_ivp(
        lambda t, g: arc_rhs(
            t, g, current=current, length=lambda s: float(law.length_m(s, p.l0_m)), params=p
        ),
        (t_eval[0], t_eval[-1]),
        [g0],
        method="DOP853",
        t_eval=t_eval,
        rtol=1e-11,
        atol=1e-14,
        max_step=2e-5,
    )
    assert sol.success
    return sol.y[0]


def test_exact_update_converges_to_solve_ivp() -> None:
    # Independent reference library: scipy.integrate.solve_ivp (DOP853, rtol 1e-11) on the same
    # ODE, with r0 > 0, alpha < 0 and a growing arc (linear law), 30 A rms at 50 Hz.
    p = ArcParameters()
    law = LinearElongation(v_m_per_s=8.0)
    amp, w = 30.0 * math.sqrt(2.0), 2 * math.pi * 50.0

    def current(t: float) -> float:
        return amp * math.sin(w * t + 0.3)

    t_ref = np.linspace(0.0, 0.06, 61)
    g0 = 8e-3
    g_ref = _ivp_reference(p, law, t_ref, current, g0)
    errs = {}
    for hold in ("linear", "zero"):
        for dt in (20e-6, 10e-6, 5e-6):
            t = np.arange(0, round(0.06 / dt) + 1) * dt
            r = simulate_current_driven(
                t, amp * np.sin(w * t + 0.3), params=p, law=law, g0_siemens=g0, hold=hold
            )
            g_at = np.interp(t_ref, t, r.g_siemens)
            errs[hold, dt] = float(np.max(np.abs(g_at - g_ref)) / np.max(np.abs(g_ref)))
    assert errs["linear", 5e-6] < 1e-6
    assert errs["zero", 5e-6] < 1e-3
    # zero hold: first order (error halves with the step); linear hold: better than first
    # order (the kink of |i| at current zeros makes its ratio uneven, 3 to 14 per halving)
    assert errs["zero", 20e-6] / errs["zero", 10e-6] == pytest.approx(2.0, rel=0.1)
    assert errs["zero", 10e-6] / errs["zero", 5e-6] == pytest.approx(2.0, rel=0.1)
    assert errs["linear", 20e-6] > errs["linear", 10e-6] > errs["linear", 5e-6]
    assert errs["linear", 20e-6] / errs["linear", 5e-6] > 8.0


def test_zero_hold_is_the_scalar_kernel() -> None:
    # The compiled-kernel scalar functions and the vectorised simulator agree to rounding.
    p = ArcParameters(alpha=-0.4)
    law = JohnsElongation()
    t = np.linspace(0.0, 0.3, 3001)
    i = 15.0 * np.sin(2 * math.pi * 50 * t) + 2.0
    r = simulate_current_driven(t, i, params=p, law=law, g0_siemens=2e-3, hold="zero")
    g = 2e-3
    for k in range(t.size - 1):
        ell = elongation_length_scalar(law.code, *law.params, t[k], p.l0_m)
        assert ell == pytest.approx(r.l_m[k], rel=1e-14)
        g = arc_step_scalar(g, i[k], ell, t[k + 1] - t[k], *p.as_tuple()[:5])
    assert g == pytest.approx(r.g_siemens[-1], rel=1e-10)


def test_scalar_functions_compile_with_numba() -> None:
    # The network solver wraps these with numba.njit: they must compile and agree with Python.
    import numba

    p = ArcParameters()
    step = numba.njit(arc_step_scalar)
    ext = numba.njit(extinction_scalar)
    length = numba.njit(elongation_length_scalar)
    diel = numba.njit(dielectric_strength_scalar)
    args = (3e-3, 12.5, 3.7, 20e-6, *p.as_tuple()[:5])
    assert step(*args) == arc_step_scalar(*args)
    e_args = (1e-6, 2e-6, 3.0, 20e-6, p.g_min_siemens_per_m, p.dr_dt_ohm_per_m_s)
    assert ext(*e_args) == extinction_scalar(*e_args)
    assert length(1, 0.1, 10.0, 0.5, 3.0) == elongation_length_scalar(1, 0.1, 10.0, 0.5, 3.0)
    d_args = (0.01, 0.2, 20.0, 3.0, 1.0e6, 1.0)
    assert diel(*d_args) == dielectric_strength_scalar(*d_args)
    hot = numba.njit(arc.hot_channel_strength_scalar)
    assert hot(0.01, 0.2, 20.0, 3.0, 1.0) == arc.hot_channel_strength_scalar(
        0.01, 0.2, 20.0, 3.0, 1.0
    )
    big_g = numba.njit(arc.stationary_conductance_scalar)
    assert big_g(-7.0, 3.0, 900.0, 0.022) == arc.stationary_conductance_scalar(
        -7.0, 3.0, 900.0, 0.022
    )
    tau = numba.njit(arc.time_constant_scalar)
    assert tau(6.0, 1e-3, -0.5, 3.0) == arc.time_constant_scalar(6.0, 1e-3, -0.5, 3.0)


@settings(max_examples=60, deadline=None)
@given(
    g=st.floats(0.0, 1.0),
    i=st.floats(-5e4, 5e4),
    ell=st.floats(0.5, 100.0),
    dt=st.floats(1e-7, 1e-2),
)
def test_exact_update_stays_between_g_and_its_target(g: float, i: float, ell: float, dt: float):
    # Derived: the exact update is a convex combination of g and G (weight exp(-dt/tau)).
    p = ArcParameters()
    big_g = abs(i) / ((p.u0_v_per_m + p.r0_ohm_per_m * abs(i)) * ell)
    g1 = arc_step_scalar(g, i, ell, dt, *p.as_tuple()[:5])
    assert min(g, big_g) * (1 - 1e-12) <= g1 <= max(g, big_g) * (1 + 1e-12)


# --------------------------------------------------------------------------- elongation laws


def test_johns_elongation_law() -> None:
    # Johns, Aggarwal & Song 1994 (from memory): l/l0 = 1 (t <= 0.1 s), 10*t after.
    ref = REF["johns_elongation"]
    law = JohnsElongation()
    t = np.array(ref["t_s"])
    np.testing.assert_allclose(law.length_m(t, 3.0) / 3.0, ref["l_over_l0"], rtol=ref["rel_tol"])
    for tk, q in zip(ref["t_s"], ref["l_over_l0"], strict=True):
        assert elongation_length_scalar(law.code, *law.params, tk, 3.0) / 3.0 == pytest.approx(
            q, rel=ref["rel_tol"]
        )
    assert float(law.length_m(-1.0, 3.0)) == 3.0


def test_linear_and_constant_laws() -> None:
    # Arithmetic of l = l0 + v*t (tests/reference/arc.toml [linear_elongation]).
    ref = REF["linear_elongation"]
    law = LinearElongation(v_m_per_s=ref["v_m_per_s"])
    np.testing.assert_allclose(law.length_m(ref["t_s"], ref["l0_m"]), ref["l_m"], rtol=1e-12)
    for tk, lk in zip(ref["t_s"], ref["l_m"], strict=True):
        got = elongation_length_scalar(law.code, *law.params, tk, ref["l0_m"])
        assert got == pytest.approx(lk, rel=1e-12)
    c = ConstantLength()
    assert elongation_length_scalar(c.code, *c.params, 5.0, 2.0) == 2.0
    np.testing.assert_array_equal(c.length_m([0.0, 9.0], 2.0), [2.0, 2.0])


def test_time_constant_shrinks_as_the_arc_grows() -> None:
    # tau = tau0*(l/l0)^alpha; REFERENCE arithmetic: tau0 1 ms, alpha -0.4, l/l0 10 -> 0.398 ms
    # (Kizilcay-type form; numbers derived).
    p = ArcParameters(alpha=-0.4)
    assert float(arc.time_constant(30.0, params=p)) == pytest.approx(0.398107e-3, rel=1e-5)


# --------------------------------------------------------------------------- Johns et al. set


def test_johns_gradient_and_time_constants() -> None:
    # Johns, Aggarwal & Song 1994 (coefficients from memory): arithmetic of V_s, tau_s, tau_p.
    ref = REF["johns_parameters"]
    for i_s, grad, tau_ms in zip(
        ref["i_s_a"], ref["gradient_v_per_cm"], ref["tau_s_ms_at_300cm"], strict=True
    ):
        assert arc.johns_secondary_gradient_v_per_m(i_s) / 100.0 == pytest.approx(
            grad, abs=ref["gradient_abs_tol"]
        )
        assert arc.johns_secondary_time_constant_s(i_s, 3.0) * 1e3 == pytest.approx(
            tau_ms, abs=ref["tau_s_abs_tol_ms"]
        )
    for i_p, tau_ms in zip(ref["i_p_a"], ref["tau_p_ms_at_300cm"], strict=True):
        assert arc.johns_primary_time_constant_s(i_p, 3.0) * 1e3 == pytest.approx(
            tau_ms, abs=ref["tau_p_abs_tol_ms"]
        )


def test_johns_set_in_kizilcay_form_keeps_tau_inverse_in_length() -> None:
    # Derived: tau_s = beta*I^1.4/l is tau0*(l/l0)^-1, so doubling l halves tau.
    p = arc.johns_secondary_parameters(20.0, l0_m=3.0)
    assert p.alpha == -1.0 and p.r0_ohm_per_m == 0.0
    assert float(arc.time_constant(6.0, params=p)) == pytest.approx(
        arc.johns_secondary_time_constant_s(20.0, 6.0), rel=1e-12
    )


def test_johns_reignition_slope_and_voltage() -> None:
    # Johns et al. 1994 V_r (from memory), units converted: 1 kV/(cm*s) = 1e5 V/(m*s).
    ref = REF["johns_reignition"]
    for c in ref["cases"]:
        v1 = arc.hot_channel_strength_scalar(1.0, c["t_burn_s"], c["i_s_a"], 1.0, 1.0)
        assert v1 / 1e5 == pytest.approx(c["slope_kv_per_cm_s"], abs=ref["slope_abs_tol"])
        slope_kv_per_ms = (
            arc.hot_channel_strength_scalar(1e-3, c["t_burn_s"], c["i_s_a"], c["l_m"], 1.0) / 1e3
        )
        assert slope_kv_per_ms == pytest.approx(c["slope_kv_per_ms"], abs=ref["slope_ms_abs_tol"])
        v50 = dielectric_strength_scalar(0.05, c["t_burn_s"], c["i_s_a"], c["l_m"], 1e9, 1.0)
        assert v50 / 1e3 == pytest.approx(c["v_after_50ms_kv"], abs=ref["v_abs_tol_kv"])
    assert arc.hot_channel_strength_scalar(-1e-3, 0.2, 20.0, 3.0, 1.0) == 0.0


# --------------------------------------------------------------------------- extinction


def test_extinction_criterion_needs_both_conditions() -> None:
    p = ArcParameters()
    gmin, drdt = p.g_min_siemens_per_m, p.dr_dt_ohm_per_m_s
    ell, dt = 3.0, 20e-6
    low = 0.5 * gmin / ell  # g*l below g_min
    # free decay (G = 0) at the threshold: r rises at r/tau = 2e7 Ohm/(m*s) > 1e7 (derived)
    decayed = low * math.exp(-dt / p.tau0_s)
    assert extinction_scalar(decayed, low, ell, dt, gmin, drdt)
    # same low conductance but held (dr/dt = 0): still burning
    assert not extinction_scalar(low, low, ell, dt, gmin, drdt)
    # falling fast but conductance per unit length above the threshold: still burning
    high = 10 * gmin / ell
    assert not extinction_scalar(high * 0.5, high, ell, dt, gmin, drdt)
    assert extinction_scalar(0.0, low, ell, dt, gmin, drdt)
    assert p.r_extinction_ohm_per_m == pytest.approx(2e4)


def test_current_driven_extinction_found_when_current_dies() -> None:
    # A 20 A rms secondary arc whose current stops at t = 0.1 s: the conductance then decays
    # freely (G = 0) and the criterion must fire within a few tau; a steady 20 A arc never.
    p = ArcParameters()
    t = np.arange(0, 20001) * 10e-6
    i = 20 * math.sqrt(2) * np.sin(2 * math.pi * 50 * t)
    steady = simulate_current_driven(t, i, params=p)
    assert steady.extinction_idx is None and steady.extinction_s is None
    cut = np.where(t < 0.1, i, 0.0)
    r = simulate_current_driven(t, cut, params=p)
    assert r.extinction_s is not None
    # derived: g*l falls from ~g_mean*l to g_min at tau*ln(g_l/g_min) after the cut, a few ms
    g_l = r.g_siemens[int(0.1 / 10e-6)] * p.l0_m
    expected = 0.1 + p.tau0_s * math.log(g_l / p.g_min_siemens_per_m)
    assert r.extinction_s == pytest.approx(expected, abs=3e-5)


# --------------------------------------------------------------------------- restrike


def test_restrike_when_recovery_voltage_outruns_dielectric_strength() -> None:
    # Race model (Slepian, from memory for attribution): restrike at the first instant the
    # recovery voltage exceeds the rising withstand. A 45 kV rms recovery voltage, 20 A arc
    # that burned 0.2 s over 3 m: withstand slope 5.89 kV/ms (Johns et al. 1994, from memory).
    t = np.arange(0, 5001) * 10e-6
    v_crest = 45e3 * math.sqrt(2.0)
    v_rec = v_crest * np.sin(2 * math.pi * 50 * t + 1.2)  # already high at extinction
    idx = find_restrike(t, v_rec, t_burn_s=0.2, i_s_rms_a=20.0, l_m=3.0, l0_m=3.0)
    assert idx is not None
    w = DielectricRecovery().strength_v(t, t_burn_s=0.2, i_s_rms_a=20.0, l_m=3.0, l0_m=3.0)
    assert abs(v_rec[idx]) > w[idx] and np.all(np.abs(v_rec[1:idx]) <= w[1:idx])
    # a slow ramp that stays below the withstand (half its slope) never restrikes
    slow = 0.5 * 5.888e6 * t
    assert find_restrike(t, slow, t_burn_s=0.2, i_s_rms_a=20.0, l_m=3.0, l0_m=3.0) is None
    # a ramp at twice the slope overtakes at once; a faster recovery slows it (rate_scale)
    fast = 2.0 * 5.888e6 * t
    assert find_restrike(t, fast, t_burn_s=0.2, i_s_rms_a=20.0, l_m=3.0, l0_m=3.0) == 1
    quick = DielectricRecovery(rate_scale=3.0)
    assert (
        find_restrike(t, fast, t_burn_s=0.2, i_s_rms_a=20.0, l_m=3.0, l0_m=3.0, recovery=quick)
        is None
    )


def test_restrike_instant_matches_root_of_the_race() -> None:
    # A capacitive circuit interrupted at a current zero recovers as v = V(1 - cos wt) (derived;
    # V: uncompensated 500 kV line, V_rec/V_ph = 0.153846, derived). Against a linear withstand
    # s*t the race is lost iff s < V*w*max_x (1 - cos x)/x (derived). Independent references:
    # scipy.optimize.brentq for the crossing instant, minimize_scalar for the maximum.
    v_hat = 0.4 / 2.6 * 500e3 / math.sqrt(3.0) * math.sqrt(2.0)
    w = 2 * math.pi * 60.0
    kw = {"t_burn_s": 0.02, "i_s_rms_a": 30.0, "l_m": 3.0, "l0_m": 3.0}
    slope_1 = (5.0 + 1620.0 * 0.02 / 32.15) * 1e5 * 3.0  # V/s at rate_scale 1
    t = np.arange(0, 20001) * 1e-6
    v = v_hat * (1.0 - np.cos(w * t))

    rec = DielectricRecovery()
    root = brentq(lambda x: v_hat * (1 - math.cos(w * x)) - slope_1 * x, 1e-4, math.pi / w)
    idx = find_restrike(t, v, recovery=rec, **kw)
    assert idx is not None
    assert t[idx - 1] <= root <= t[idx]

    best = minimize_scalar(lambda x: -(1 - math.cos(x)) / x, bounds=(0.5, 3.0), method="bounded")
    critical_scale = v_hat * w * (-best.fun) / slope_1
    slow = DielectricRecovery(rate_scale=0.98 * critical_scale)
    fast = DielectricRecovery(rate_scale=1.02 * critical_scale)
    assert find_restrike(t, v, recovery=slow, **kw) is not None
    assert find_restrike(t, v, recovery=fast, **kw) is None


def test_withstand_capped_by_cold_gap() -> None:
    # Derived logic: the hot channel never needs more than the cold gap to break down
    # (IEC 60071-2:1996 Annex G AC formula, from memory: 1184.7 kV crest at 3 m).
    ceiling = cold_gap_ceiling_v(3.0)
    assert dielectric_strength_scalar(10.0, 0.5, 10.0, 3.0, ceiling, 1.0) == ceiling
    rec = DielectricRecovery()
    assert rec.ceiling_for(3.0) == pytest.approx(1184.68e3, rel=1e-5)
    t = np.array([0.0, 1.0, 2.0])
    v = np.array([0.0, 1.1 * ceiling, 0.0])
    assert find_restrike(t, v, t_burn_s=0.2, i_s_rms_a=20.0, l_m=30.0, l0_m=3.0) == 1


def test_cold_gap_far_above_recovery_voltage() -> None:
    # Derived: uncompensated transposed line, V_rec/V_ph = (C1 - C0)/(2C1 + C0) = 0.153846 at
    # C0/C1 = 0.6 (capacitive divider); on a 500 kV line that is 44.4 kV rms. The 3.7 m gap of
    # such a line (string length: common practice) withstands more than ten times its crest.
    v_rec_crest = 0.4 / 2.6 * 500e3 / math.sqrt(3.0) * math.sqrt(2.0)
    assert cold_gap_ceiling_v(3.7) > 10.0 * v_rec_crest


# --------------------------------------------------------------------------- data and errors


def test_parameters_and_responses() -> None:
    p = ArcParameters()
    assert p.as_tuple() == (900.0, 0.022, 1e-3, -0.5, 3.0, 50e-6, 1e7)
    assert arc.ARC_TUPLE_FIELDS[0] == "u0_v_per_m"
    # primary-arc gradient 1-1.5 kV/m over 2-20 kA (common practice; Johns 15 V/cm from memory)
    for i_a in (2e3, 1e4, 2e4):
        grad = PRIMARY_ARC.u0_v_per_m + PRIMARY_ARC.r0_ohm_per_m * i_a
        assert 1000.0 <= grad <= 1500.0
    t = np.linspace(0, 0.01, 11)
    r = simulate_current_driven(t, np.ones_like(t), params=p)
    with pytest.raises(ValueError):
        r.g_siemens[0] = 1.0


@pytest.mark.parametrize(
    "kwargs",
    [
        {"u0_v_per_m": 0.0},
        {"r0_ohm_per_m": -1e-3},
        {"tau0_s": 0.0},
        {"l0_m": float("nan")},
        {"alpha": 7.0},
        {"g_min_siemens_per_m": 0.0},
    ],
)
def test_bad_parameters_raise_model_error(kwargs: dict) -> None:
    with pytest.raises(ModelError):
        ArcParameters(**kwargs)


def test_bad_inputs_raise_model_error() -> None:
    with pytest.raises(ModelError, match="strictly increasing"):
        simulate_current_driven([0.0, 0.0, 1.0], [1.0, 1.0, 1.0])
    with pytest.raises(ModelError, match="one length"):
        simulate_current_driven([0.0, 1.0], [1.0])
    with pytest.raises(ModelError, match="hold"):
        simulate_current_driven([0.0, 1.0], [1.0, 1.0], hold="cubic")
    with pytest.raises(ModelError):
        LinearElongation(v_m_per_s=-1.0)
    with pytest.raises(ModelError):
        DielectricRecovery(gap_m=0.0)
    with pytest.raises(ModelError, match="gap factor"):
        DielectricRecovery(gap_factor=0.5)
    with pytest.raises(ModelError, match="finite number"):
        ArcParameters(alpha=True)
    # numpy scalars (as a fitter passes them) are accepted and come back as plain floats
    p = ArcParameters(u0_v_per_m=np.float64(1000.0), l0_m=np.int64(2))
    assert p.as_tuple()[0] == 1000.0 and type(p.as_tuple()[4]) is float


def test_saturated_recovery_lets_a_beating_recovery_voltage_restrike_late() -> None:
    # A recovery voltage that beats (shunt-compensated line: forced plus free component,
    # envelope E·sin(π·f_b·t), derived) never overtakes a linear withstand s·t when
    # s > E·π·f_b, because sin x ≤ x (derived). A channel whose recovery stops after t_sat
    # (withstand W_sat = s·t_sat, our model) restrikes at the first instant the envelope-
    # modulated voltage exceeds W_sat, several cycles after the extinction; the instant is
    # the root found independently by scipy.optimize.brentq.
    f_hz, f_beat_hz, e_v = 50.0, 5.0, 100e3
    kw = {"t_burn_s": 0.05, "i_s_rms_a": 30.0, "l_m": 3.0, "l0_m": 3.0}
    # Johns et al. (1994, from memory) slope: [5 + 1620·0.05/32.15] kV/(cm·s) over 3 m
    slope = (5.0 + 1620.0 * 0.05 / 32.15) * 1e5 * 3.0
    assert slope == pytest.approx(2.2558e6, rel=1e-4)
    assert slope > e_v * math.pi * f_beat_hz

    def v_of(x: float) -> float:
        return e_v * math.sin(math.pi * f_beat_hz * x) * math.cos(2 * math.pi * f_hz * x)

    t = np.arange(0, 15001) * 10e-6
    v = np.array([v_of(x) for x in t])
    assert find_restrike(t, v, **kw) is None
    t_sat = 0.033
    rec = DielectricRecovery(saturation_time_s=t_sat)
    w = rec.strength_v(t, **kw)
    assert w[-1] == pytest.approx(slope * t_sat, rel=1e-12)
    assert w[t <= t_sat] == pytest.approx(slope * t[t <= t_sat], rel=1e-12)
    idx = find_restrike(t, v, recovery=rec, **kw)
    assert idx is not None
    root = brentq(lambda x: abs(v_of(x)) - slope * t_sat, 0.055, 0.06)
    assert t[idx - 1] <= root <= t[idx]
    assert t[idx] * f_hz > 2.5  # more than two and a half cycles of recovery first
    # after a plateau the recovery resumes along the same slope (our model)
    paused = DielectricRecovery(saturation_time_s=t_sat, plateau_s=0.1)
    tt = np.array([0.0, 0.02, t_sat, 0.1, t_sat + 0.1, t_sat + 0.1 + 0.05])
    want = slope * np.array([0.0, 0.02, t_sat, t_sat, t_sat, t_sat + 0.05])
    assert paused.strength_v(tt, **kw) == pytest.approx(want, rel=1e-12)


def test_dielectric_recovery_rejects_bad_saturation_and_scatter() -> None:
    with pytest.raises(ModelError, match="saturation_time_s"):
        DielectricRecovery(saturation_time_s=0.0)
    with pytest.raises(ModelError, match="saturation_time_s"):
        DielectricRecovery(saturation_time_s=float("nan"))
    with pytest.raises(ModelError, match="plateau_s"):
        DielectricRecovery(plateau_s=-0.1)
    with pytest.raises(ModelError, match="scatter_pu"):
        DielectricRecovery(scatter_pu=0.5)
    with pytest.raises(ModelError, match="scatter_seed"):
        DielectricRecovery(scatter_seed=-1)
    # the defaults are Johns's line without saturation or scatter
    rec = DielectricRecovery()
    assert rec.saturation_time_s == math.inf and rec.scatter_pu == 0.0


# --------------------------------------------------------------------------- benchmark


@pytest.mark.bench
def test_bench_current_driven_speed() -> None:
    # Ratio of the compiled recursion to the same recursion in pure Python, and to solve_ivp,
    # on 1 s of a 20 A secondary arc sampled at 10 kHz (a fitting workload).
    p = ArcParameters()
    law = JohnsElongation()
    t = np.arange(0, 10001) * 1e-4
    i = 20 * math.sqrt(2) * np.sin(2 * math.pi * 50 * t)
    simulate_current_driven(t, i, params=p, law=law)  # compile / load cache
    n_rep = 50
    t0 = time.perf_counter()
    for _ in range(n_rep):
        simulate_current_driven(t, i, params=p, law=law)
    fast = (time.perf_counter() - t0) / n_rep
    ell = law.length_m(t, p.l0_m)
    big_g = arc.stationary_conductance(i, ell, params=p)
    tau = arc.time_constant(ell, params=p)
    t0 = time.perf_counter()
    arc._kernel_py(t, big_g, tau, 5e-3, True)
    slow = time.perf_counter() - t0
    t0 = time.perf_counter()
    _ivp_reference(
        p, law, t[::100], lambda s: 20 * math.sqrt(2) * math.sin(2 * math.pi * 50 * s), 5e-3
    )
    ivp = time.perf_counter() - t0
    print(
        f"\ncurrent-driven arc, 10 001 samples: compiled {fast * 1e3:.3f} ms; "
        f"pure-Python loop / compiled = {slow / fast:.0f}x; "
        f"solve_ivp / compiled = {ivp / fast:.0f}x"
    )
    assert slow / fast > 5.0
