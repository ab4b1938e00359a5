"""Travelling-wave (Bergeron) line model of the network solver.

Checks are derived: a wave front travels at v = 1/sqrt(L'·C') per mode (telegrapher's
equations), so closing a breaker onto an open line shows nothing at the far end before
ℓ·sqrt(L1'·C1') (the faster, aerial modes), and the steady state of the travelling-wave
line agrees with the closed-form secondary arc current ω·(C1 − C0)·V·ℓ/3 (Kimbark, IEEE
Trans. PAS-83(3), 1964) as the pi model does.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from recordscan.errors import ModelError
from recordscan.physics.network import (
    BreakerSpec,
    EventSpec,
    FaultSpec,
    LineModelData,
    SourceSpec,
    simulate_event,
)

F_HZ = 50.0
L1, L0, C1, C0 = 0.85e-6, 2.6e-6, 13.3e-12, 7.6e-12


def line(length_m: float, *, lossless: bool = False) -> LineModelData:
    r1, r0 = (0.0, 0.0) if lossless else (0.03e-3, 0.25e-3)
    return LineModelData.from_sequence(
        r1_ohm_per_m=r1, l1_h_per_m=L1, c1_f_per_m=C1,
        r0_ohm_per_m=r0, l0_h_per_m=L0, c0_f_per_m=C0, length_m=length_m,
    )  # fmt: skip


SRC = SourceSpec(400e3, 0.0, complex(0.1, 3.0), complex(0.2, 6.0))


def test_step_reaches_far_end_after_travel_time() -> None:
    length = 300e3
    tau1 = length * math.sqrt(L1 * C1)  # aerial modes (derived), 1.0065 ms
    t_close = 1.0 / F_HZ  # phase A at its crest
    spec = EventSpec(
        line=line(length, lossless=True), frequency_hz=F_HZ, local=SRC, remote=SRC,
        reactor_local=None, reactor_remote=None,
        breaker_local=BreakerSpec(
            trip_s={"A": -1.0, "B": -1.0, "C": -1.0},
            close_s={"A": t_close, "B": t_close, "C": t_close},
        ),
        breaker_remote=BreakerSpec(trip_s={"A": -1.0, "B": -1.0, "C": -1.0}),
        fault=None, t_end_s=0.03, dt_s=5e-6, line_model="travelling_wave",
    )  # fmt: skip
    res = simulate_event(spec)
    v_pk = 400e3 * math.sqrt(2 / 3)
    far = np.max(np.abs(res.v_line_v[1]), axis=0)
    near = np.max(np.abs(res.v_line_v[0]), axis=0)
    dt = spec.dt_s
    assert np.max(near[res.t_s < t_close - dt]) < 1e-6 * v_pk
    assert np.max(near[res.t_s > t_close + dt][:5]) > 0.5 * v_pk
    assert np.max(far[res.t_s < t_close + tau1 - dt]) < 1e-3 * v_pk
    arrived = res.t_s[np.argmax(far > 0.5 * v_pk)]
    # the open end doubles the incident wave: a front well above half the crest
    assert arrived == pytest.approx(t_close + tau1, abs=2 * dt)


def _bolted_is(model: str, n_sections: int = 8) -> float:
    length = 100e3
    spec = EventSpec(
        line=line(length), frequency_hz=F_HZ, local=SRC, remote=SRC,
        reactor_local=None, reactor_remote=None,
        breaker_local=BreakerSpec(trip_s={"A": -1.0}),
        breaker_remote=BreakerSpec(trip_s={"A": -1.0}),
        fault=FaultSpec(phase="A", location_m=40e3, inception_s=-1.0, r_fault_ohm=1e-3,
                        permanent=True),
        t_end_s=0.06, line_model=model, n_sections=n_sections,
    )  # fmt: skip
    res = simulate_event(spec)
    w = 2 * math.pi * F_HZ
    a = np.column_stack([np.cos(w * res.t_s), np.sin(w * res.t_s), np.ones_like(res.t_s)])
    coef, *_ = np.linalg.lstsq(a, res.arc_i_a, rcond=None)
    return math.hypot(coef[0], coef[1]) / math.sqrt(2)


def test_travelling_wave_steady_state_matches_closed_form_and_pi() -> None:
    w = 2 * math.pi * F_HZ
    closed = w * (C1 - C0) / 3 * 400e3 / math.sqrt(3) * 100e3
    i_tw = _bolted_is("travelling_wave")
    i_pi = _bolted_is("pi", 16)
    assert i_tw == pytest.approx(closed, rel=0.01)
    assert i_tw == pytest.approx(i_pi, rel=0.005)


def test_travelling_wave_refuses_untransposed_line() -> None:
    ln = line(100e3)
    c = np.array(ln.c_f_per_m)
    c[0, 2] = c[2, 0] = 0.9 * c[0, 2]
    bad = dataclasses.replace(ln, c_f_per_m=c)
    spec = EventSpec(
        line=bad, frequency_hz=F_HZ, local=SRC, remote=SRC, reactor_local=None,
        reactor_remote=None, breaker_local=BreakerSpec(), breaker_remote=BreakerSpec(),
        fault=None, t_end_s=0.01, line_model="travelling_wave",
    )  # fmt: skip
    with pytest.raises(ModelError, match="transposed"):
        simulate_event(spec)


def test_fault_close_to_an_end_keeps_the_closed_form() -> None:
    # A 2 km stretch travels in 6.7 µs, less than one 20 µs step: it becomes a pi section,
    # and the secondary arc current still follows ω(C1 − C0)·V·ℓ/3 (Kimbark 1964).
    spec = EventSpec(
        line=line(100e3), frequency_hz=F_HZ, local=SRC, remote=SRC,
        reactor_local=None, reactor_remote=None,
        breaker_local=BreakerSpec(trip_s={"A": -1.0}),
        breaker_remote=BreakerSpec(trip_s={"A": -1.0}),
        fault=FaultSpec(phase="A", location_m=2e3, inception_s=-1.0, r_fault_ohm=1e-3,
                        permanent=True),
        t_end_s=0.06, line_model="travelling_wave",
    )  # fmt: skip
    res = simulate_event(spec)
    w = 2 * math.pi * F_HZ
    a = np.column_stack([np.cos(w * res.t_s), np.sin(w * res.t_s), np.ones_like(res.t_s)])
    coef, *_ = np.linalg.lstsq(a, res.arc_i_a, rcond=None)
    closed = w * (C1 - C0) / 3 * 400e3 / math.sqrt(3) * 100e3
    assert math.hypot(coef[0], coef[1]) / math.sqrt(2) == pytest.approx(closed, rel=0.01)


def test_lossy_bergeron_steady_state_is_its_ladder_phasor() -> None:
    # The lumped-loss Bergeron companion (after Dommel, IEEE Trans. PAS-88(4), 1969; loss
    # placement from memory) is the
    # exact time-domain form of R/4 – lossless half – R/2 – lossless half – R/4. Started
    # from the phasor solution of that ladder (ABCD chain, derived), a loaded line must stay
    # in its steady state: the first and the tenth cycle have the same phasors.
    spec = EventSpec(
        line=line(300e3), frequency_hz=F_HZ, local=SRC,
        remote=dataclasses.replace(SRC, angle_deg=-20.0),
        reactor_local=None, reactor_remote=None,
        breaker_local=BreakerSpec(), breaker_remote=BreakerSpec(),
        fault=None, t_end_s=0.2, line_model="travelling_wave",
    )  # fmt: skip
    res = simulate_event(spec)
    w = 2 * math.pi * F_HZ
    per = round(1 / (F_HZ * spec.dt_s))

    def phasor(x: np.ndarray, sl: slice) -> complex:
        t = res.t_s[sl]
        a = np.column_stack([np.cos(w * t), -np.sin(w * t), np.ones_like(t)])
        c, *_ = np.linalg.lstsq(a, x[sl], rcond=None)
        return complex(c[0], c[1])

    first, last = slice(0, per), slice(9 * per, 10 * per)
    for x in (res.v_line_v[1, 0], res.i_line_a[0, 0], res.i_line_a[1, 2]):
        p0, p9 = phasor(x, first), phasor(x, last)
        assert abs(p9 - p0) < 1e-5 * abs(p0)
    assert abs(phasor(res.i_line_a[0, 0], first)) > 1000.0  # a real load flow
