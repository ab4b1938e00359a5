"""Steady states of the time-domain network solver against closed-form circuit results.

Line data (transposed, per km): C1 = 12.5 nF, C0 = 7.5 nF (C0/C1 = 0.6), L1 = 0.87 mH,
L0 = 2.7 mH, R1 = 0.02 Ω, R0 = 0.25 Ω — round numbers of the order of a 500 kV single
circuit ("common practice" values, not a particular line). 100 km keeps the line in the
lumped limit the closed forms assume (βℓ = 0.126 rad at 60 Hz).

Closed forms (all derived from the capacitive coupling of a transposed line, with the
phase-to-phase partial capacitance Cm = (C1 − C0)/3 and phase-to-ground Cg = C0; see
E. W. Kimbark, "Suppression of ground-fault arcs on single-pole-switched EHV lines by
shunt reactors", IEEE Trans. PAS-83(3), 1964, and N. Knudsen, "Single-phase switching of
transmission lines using reactors for extinction of the secondary arc", CIGRE paper 310,
1962):

- secondary arc current with a bolted fault: I_s = ω·(C1 − C0)·V_ph·ℓ/3;
- recovery voltage of the isolated phase: V_rec/V_ph = (C1 − C0)/(2·C1 + C0);
- solidly grounded reactors of compensation F: V_rec/V_ph = (1 − c)/(3·((2 + c)/3 − F));
- neutral reactor cancelling Cm: X_n = X_p²/(X_pp − 3·X_p) = X_p·(C1 − C0)/(3·(C0 − (1 − F)·C1));
- free frequency of the open phase with that reactor: f_n/f = sqrt((F·C1 − Cm)/(C0 + 2·Cm)).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from recordscan.physics.network import (
    BreakerSpec,
    EventSpec,
    FaultSpec,
    LineModelData,
    ReactorSpec,
    SourceSpec,
    simulate_event,
)

F_HZ = 60.0
W = 2 * math.pi * F_HZ
C1, C0 = 12.5e-12, 7.5e-12  # F/m
LENGTH_M = 100e3
V_LL = 500e3
V_PH = V_LL / math.sqrt(3)
DT = 1.0 / (F_HZ * 800)  # 800 steps per cycle (20.8 µs)

LINE = LineModelData.from_sequence(
    r1_ohm_per_m=0.02e-3,
    l1_h_per_m=0.87e-6,
    c1_f_per_m=C1,
    r0_ohm_per_m=0.25e-3,
    l0_h_per_m=2.7e-6,
    c0_f_per_m=C0,
    length_m=LENGTH_M,
)
STIFF = SourceSpec(V_LL, 0.0, complex(0.05, 2.0), complex(0.1, 4.0))


def spec_with(
    *,
    fault: FaultSpec | None,
    trip: dict[str, float],
    reactor: ReactorSpec | None = None,
    t_end_s: float = 0.1,
    line_model: str = "pi",
    n_sections: int = 8,
) -> EventSpec:
    """One-pole-open case with identical stiff sources and optional reactors at both ends."""
    return EventSpec(
        line=LINE,
        frequency_hz=F_HZ,
        local=STIFF,
        remote=STIFF,
        reactor_local=reactor,
        reactor_remote=reactor,
        breaker_local=BreakerSpec(trip_s=trip),
        breaker_remote=BreakerSpec(trip_s=trip),
        fault=fault,
        t_end_s=t_end_s,
        dt_s=DT,
        line_model=line_model,
        n_sections=n_sections,
    )


def fundamental_rms(t_s: np.ndarray, x: np.ndarray) -> float:
    """RMS of the system-frequency component (least squares with a DC term)."""
    a = np.column_stack([np.cos(W * t_s), np.sin(W * t_s), np.ones_like(t_s)])
    coef, *_ = np.linalg.lstsq(a, x, rcond=None)
    return float(math.hypot(coef[0], coef[1]) / math.sqrt(2))


def bolted(location_m: float = 0.5 * LENGTH_M, inception_s: float = -1.0) -> FaultSpec:
    return FaultSpec(
        phase="A", location_m=location_m, inception_s=inception_s, r_fault_ohm=1e-3,
        permanent=True,
    )  # fmt: skip


def reactor_for(f_comp: float, *, tuned: bool, length_m: float = LENGTH_M) -> ReactorSpec:
    """Reactors at each of the two ends, half the compensation each (Q very high)."""
    x_p_total = 1.0 / (f_comp * W * C1 * length_m)
    x_n_total = x_p_total * (C1 - C0) / (3 * (C0 - (1 - f_comp) * C1)) if tuned else 0.0
    return ReactorSpec(x_phase_ohm=2 * x_p_total, x_neutral_ohm=2 * x_n_total, q_factor=1e5)


I_S_CLOSED = W * (C1 - C0) / 3 * V_PH * LENGTH_M  # 18.138 A


def test_secondary_current_uncompensated_matches_closed_form() -> None:
    # Kimbark (1964): I_s = ω·(C1 − C0)·V·ℓ/3 for a transposed uncompensated line.
    res = simulate_event(spec_with(fault=bolted(), trip={"A": -1.0}))
    last = res.t_s > res.t_s[-1] - 3 / F_HZ
    i_s = fundamental_rms(res.t_s[last], res.arc_i_a[last])
    assert i_s == pytest.approx(I_S_CLOSED, rel=0.01)
    # the steady state at the start persists (no start-up transient)
    first = res.t_s < 3 / F_HZ
    assert fundamental_rms(res.t_s[first], res.arc_i_a[first]) == pytest.approx(i_s, rel=1e-4)


def test_secondary_current_reached_from_a_real_fault_and_trip() -> None:
    # Same closed form, reached through a fault at 20 ms and a single-pole trip at 40 ms.
    spec = spec_with(fault=bolted(inception_s=0.02), trip={"A": 0.04}, t_end_s=0.3)
    res = simulate_event(spec)
    assert set(res.truth.pole_open_s) == {(0, "A"), (1, "A")}
    last = res.t_s > res.t_s[-1] - 5 / F_HZ
    assert fundamental_rms(res.t_s[last], res.arc_i_a[last]) == pytest.approx(I_S_CLOSED, rel=0.01)


@pytest.mark.parametrize("location_frac", [0.0, 0.3, 1.0])
def test_secondary_current_independent_of_fault_location(location_frac: float) -> None:
    # Capacitive component does not depend on the fault position (Kimbark 1964).
    res = simulate_event(spec_with(fault=bolted(location_frac * LENGTH_M), trip={"A": -1.0}))
    last = res.t_s > res.t_s[-1] - 3 / F_HZ
    assert fundamental_rms(res.t_s[last], res.arc_i_a[last]) == pytest.approx(I_S_CLOSED, rel=0.01)


def test_recovery_voltage_ratio_uncompensated() -> None:
    # V_rec/V_ph = (C1 − C0)/(2C1 + C0) = 0.4/2.6 = 0.153846 for C0/C1 = 0.6 (derived).
    res = simulate_event(spec_with(fault=None, trip={"A": -1.0}))
    for end in (0, 1):
        v = fundamental_rms(res.t_s, res.v_line_v[end, 0])
        assert v / V_PH == pytest.approx(0.4 / 2.6, rel=0.01)


def test_recovery_voltage_after_opening_at_current_zero() -> None:
    # Opening a healthy phase at its current zero leaves the same fundamental (plus the
    # trapped charge, a DC component the fit separates).
    res = simulate_event(spec_with(fault=None, trip={"A": 0.02}, t_end_s=0.15))
    last = res.t_s > 0.08
    v = fundamental_rms(res.t_s[last], res.v_line_v[0, 0, last])
    assert v / V_PH == pytest.approx(0.4 / 2.6, rel=0.01)


@pytest.mark.parametrize(("f_comp", "expected_pu"), [(0.6, 0.5), (0.7, 0.8), (0.8, 2.0)])
def test_solidly_grounded_reactors_raise_recovery_voltage(
    f_comp: float, expected_pu: float
) -> None:
    # V_rec/V = (1 − c)/(3((2 + c)/3 − F)), c = C0/C1 = 0.6 (derived from the lumped circuit).
    # Near resonance the distributed line departs from the lumped limit as ℓ²: a 50 km
    # line is within 1 % and halving the length brings it closer still.
    errors = []
    for length_m in (50e3, 25e3):
        spec = spec_with(
            fault=None,
            trip={"A": -1.0},
            reactor=reactor_for(f_comp, tuned=False, length_m=length_m),
        )
        spec = dataclasses.replace(spec, line=dataclasses.replace(LINE, length_m=length_m))
        res = simulate_event(spec)
        v = fundamental_rms(res.t_s, res.v_line_v[0, 0])
        assert v / V_PH == pytest.approx(expected_pu, rel=0.01)
        errors.append(abs(v / V_PH - expected_pu))
    assert errors[1] <= errors[0] + 1e-9


def test_tuned_neutral_reactor_suppresses_secondary_current() -> None:
    # Knudsen (1962), Kimbark (1964): the neutral reactor X_n = X_p²/(X_pp − 3X_p) cancels the
    # interphase capacitance; the capacitive secondary arc current falls by more than 90 %.
    plain = simulate_event(spec_with(fault=bolted(), trip={"A": -1.0}))
    tuned = simulate_event(
        spec_with(fault=bolted(), trip={"A": -1.0}, reactor=reactor_for(0.7, tuned=True))
    )
    solid = simulate_event(
        spec_with(fault=bolted(), trip={"A": -1.0}, reactor=reactor_for(0.7, tuned=False))
    )
    i_plain = fundamental_rms(plain.t_s, plain.arc_i_a)
    i_tuned = fundamental_rms(tuned.t_s, tuned.arc_i_a)
    i_solid = fundamental_rms(solid.t_s, solid.arc_i_a)
    assert i_tuned < 0.1 * i_plain
    # star reactors solidly grounded do not cancel Cm: I_s stays uncompensated (derived)
    assert i_solid == pytest.approx(i_plain, rel=0.01)
    # the four-legged reactor carries zero-sequence current in its neutral
    assert np.max(np.abs(tuned.i_reactor_neutral_a)) > 0.0


def test_free_frequency_with_tuned_neutral_reactor() -> None:
    # f_n/f = sqrt((F·C1 − Cm)/(C0 + 2Cm)) = 0.80861 for F = 0.7, c = 0.6 (derived):
    # the open phase rings at 48.517 Hz at 60 Hz once its poles open.
    spec = spec_with(
        fault=None, trip={"A": 0.01}, reactor=reactor_for(0.7, tuned=True), t_end_s=1.0
    )
    spec = dataclasses.replace(spec, dt_s=50e-6)
    res = simulate_event(spec)
    sel = res.t_s > 0.05
    t, v = res.t_s[sel], res.v_line_v[0, 0, sel]
    up = np.nonzero((v[:-1] < 0) & (v[1:] >= 0))[0]
    t_up = t[up] - v[up] * (t[up + 1] - t[up]) / (v[up + 1] - v[up])
    f_n = (len(t_up) - 1) / (t_up[-1] - t_up[0])
    cm = (C1 - C0) / 3
    expected = math.sqrt((0.7 * C1 - cm) / (C0 + 2 * cm))
    assert expected == pytest.approx(0.80861, abs=1e-5)
    assert f_n / F_HZ == pytest.approx(expected, rel=0.005)


def _phasor(t_s: np.ndarray, x: np.ndarray) -> complex:
    """Complex RMS phasor of the system-frequency component (x ≈ Re(√2·X·e^{jωt}))."""
    a = np.column_stack([np.cos(W * t_s), -np.sin(W * t_s), np.ones_like(t_s)])
    coef, *_ = np.linalg.lstsq(a, x, rcond=None)
    return complex(coef[0], coef[1]) / math.sqrt(2)


def test_inductive_component_varies_linearly_with_fault_position() -> None:
    # Quasi-static induced component (derived; lossless mutual coupling, no reactors): the
    # open phase sees e = ω·l_m·|I_b + I_c| per metre, l_m = (L0 − L1)/3, and charges through
    # c_eff = (2C1 + C0)/3 per metre, so I_s,ind = ω·c_eff·e·ℓ·(ℓ/2 − x): linear in x, and
    # |I(0) − I(ℓ)| = ω·c_eff·e·ℓ². R0 = R1 here so that the mutual impedance is a pure
    # reactance, as the closed form assumes. Load angle 30° for a heavy load current.
    line = LineModelData.from_sequence(
        r1_ohm_per_m=0.02e-3, l1_h_per_m=0.87e-6, c1_f_per_m=C1,
        r0_ohm_per_m=0.02e-3, l0_h_per_m=2.7e-6, c0_f_per_m=C0, length_m=LENGTH_M,
    )  # fmt: skip
    out = {}
    for frac in (0.0, 0.5, 1.0):
        spec = spec_with(fault=bolted(frac * LENGTH_M), trip={"A": -1.0})
        spec = dataclasses.replace(
            spec, line=line, remote=dataclasses.replace(STIFF, angle_deg=-30.0)
        )
        res = simulate_event(spec)
        i_bc_loc = _phasor(res.t_s, res.i_line_a[0, 1] + res.i_line_a[0, 2])
        i_bc_rem = _phasor(res.t_s, res.i_line_a[1, 1] + res.i_line_a[1, 2])
        out[frac] = (_phasor(res.t_s, res.arc_i_a), (i_bc_loc - i_bc_rem) / 2)
    i0, ih, il = out[0.0][0], out[0.5][0], out[1.0][0]
    assert abs(i0 + il - 2 * ih) < 0.01 * abs(ih)  # linear in x
    e_v_per_m = W * (2.7e-6 - 0.87e-6) / 3 * abs(out[0.5][1])
    expected = W * (2 * C1 + C0) / 3 * e_v_per_m * LENGTH_M**2
    assert abs(i0 - il) == pytest.approx(expected, rel=0.02)
    # the mid-line fault sees the capacitive part only, ω(C1 − C0)V·ℓ/3 (Kimbark 1964), with
    # V the mean healthy-phase voltage along the line: on a short line the linear blend of
    # the end voltages, of mean magnitude V_ph·cos(δ/2) for a load angle δ (derived)
    assert abs(ih) == pytest.approx(I_S_CLOSED * math.cos(math.radians(15.0)), rel=0.01)


def test_untransposed_line_couples_through_its_capacitance_matrix() -> None:
    # Untransposed line (derived from the Maxwell capacitance matrix, off-diagonals
    # negative): with phase k open and bolted, I_s = ω·|Σ_{j≠k} C_kj·V_j|·ℓ; isolated,
    # V_rec = |Σ_{j≠k} C_kj·V_j| / C_kk. Illustrative flat-line matrix (nF/km).
    c_nf = np.array([[10.9, -1.9, -0.8], [-1.9, 11.2, -1.9], [-0.8, -1.9, 10.9]])
    line = dataclasses.replace(LINE, c_f_per_m=c_nf * 1e-12 / 1e3)
    v = V_PH * np.exp(1j * np.deg2rad([0.0, -120.0, 120.0]))
    for k, name in enumerate("ABC"):
        others = [j for j in range(3) if j != k]
        coupled = abs(sum(c_nf[k, j] * 1e-15 * v[j] for j in others))
        f = FaultSpec(
            phase=name, location_m=0.5 * LENGTH_M, inception_s=-1.0, r_fault_ohm=1e-3,
            permanent=True,
        )  # fmt: skip
        spec = dataclasses.replace(spec_with(fault=f, trip={name: -1.0}), line=line)
        res = simulate_event(spec)
        assert fundamental_rms(res.t_s, res.arc_i_a) == pytest.approx(
            W * coupled * LENGTH_M, rel=0.01
        )
        spec = dataclasses.replace(spec_with(fault=None, trip={name: -1.0}), line=line)
        res = simulate_event(spec)
        v_rec = fundamental_rms(res.t_s, res.v_line_v[0, k])
        assert v_rec == pytest.approx(coupled / (c_nf[k, k] * 1e-15), rel=0.01)
