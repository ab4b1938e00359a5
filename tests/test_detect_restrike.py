"""Restrikes as the departure of an established recovery waveform (recordscan.detect.restrike).

Checks of the sliding recovery fit against closed forms (derived), and of the detector on
hand-built waveforms whose instants and shapes are known by construction
(tests/test_detect_waveforms.py): a recovery of 1.5 cycles ended by a collapse to the arc
voltage is a restrike; a recovery whose own transient (trapped charge, a CVT-like ring) or
beat changes its waveform without any breakdown is not.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_detect_waveforms import V_PH, Scenario, build

from recordscan.analysis import analyse
from recordscan.detect.restrike import recovery_fit


def test_recovery_fit_represents_a_drifting_sinusoid_exactly() -> None:
    # (A + B·τ)·cos(ωτ + φ) + C expands into cos, sin, τ·cos, τ·sin and a constant: it lies
    # in the model's span, so the residual and both extrapolations vanish (derived).
    n = 32.0
    k = np.arange(400)
    v = (1000.0 + 3.0 * k) * np.cos(2 * np.pi * k / n + 0.7) + 250.0
    fit = recovery_fit(v, n, window=32, ahead=8)
    scale = float(np.max(np.abs(v)))
    # the residual is an energy difference: zero to rounding, about √ε·scale
    assert np.max(fit.residual) < 1e-6 * scale
    assert np.max(fit.departure) < 1e-9 * scale
    assert np.max(fit.back[8:]) < 1e-9 * scale
    assert np.all(np.isinf(fit.back[:8]))
    # the amplitude of the fitted oscillation is the envelope near the window (±3·32 V drift)
    j = 100
    env = 1000.0 + 3.0 * (j + 15.5)
    assert fit.amplitude[j] == pytest.approx(env, rel=0.01)


def test_recovery_fit_departure_of_a_collapse_is_the_missing_wave() -> None:
    # A sinusoid that drops to zero at sample k0: the window ending at k0 fits exactly and
    # the departure over the next `ahead` samples is the rms of the continuation that did
    # not happen (derived).
    n, k0, ahead = 40.0, 200, 10
    k = np.arange(400)
    v = 5000.0 * np.sin(2 * np.pi * k / n + 0.3)
    v[k0:] = 0.0
    fit = recovery_fit(v, n, window=40, ahead=ahead)
    j = k0 - 40  # row whose window is [k0 - 40, k0)
    missing = 5000.0 * np.sin(2 * np.pi * np.arange(k0, k0 + ahead) / n + 0.3)
    assert fit.residual[j] < 1e-6 * 5000.0  # an energy difference: zero to rounding
    assert fit.departure[j] == pytest.approx(float(np.sqrt(np.mean(missing**2))), rel=1e-9)
    assert np.allclose(fit.following[j], 0.0)


def test_recovery_fit_rejects_a_short_signal() -> None:
    with pytest.raises(ValueError):
        recovery_fit(np.zeros(20), 16.0, window=16, ahead=8)


@pytest.mark.parametrize("fs_hz", [960.0, 4800.0, 10000.0])
def test_restrike_after_a_recovery_found_with_time_and_voltage(fs_hz: float) -> None:
    # An uncompensated line: the recovery is the coupled sinusoid of peak √2·0.16·V_ph once
    # the trapped charge (τ 5 ms here) has gone; after 1.5 cycles it breaks down to the arc.
    sc = Scenario(
        fs_hz=fs_hz,
        restrikes_after_s=(0.1,),
        recovery_before_restrike_s=1.5 / 60.0,
        trapped_tau_s=0.005,
        noise_snr_db=50.0,
        seed=7,
    )
    rec, truth = build(sc)
    a = analyse(rec)
    assert len(truth["restrike_s"]) == 1
    assert len(a.restrikes) == 1
    ev = a.restrikes[0]
    t_true = float(truth["restrike_s"][0])
    assert abs(ev.t_s - t_true) * sc.f_hz < 0.25
    vf_pk = np.sqrt(2.0) * sc.recovery_pu * V_PH
    # the fitted recovery amplitude is the coupled voltage's peak (builder closed form)
    assert ev.evidence.quantities["recovery_peak_v"] == pytest.approx(vf_pk, rel=0.1)
    # the restrike voltage: the largest |v| in the quarter cycle before, at most that peak
    assert 0.3 * vf_pk < ev.evidence.quantities["voltage_v"] < 1.1 * vf_pk
    # and the final extinction is found after it, not at the extinction before it
    assert a.extinction_s is not None
    assert a.extinction_s > ev.t_s


@pytest.mark.parametrize(
    ("free_hz", "cvt"),
    [(None, False), (None, True), (0.8 * 60.0, False), (0.9 * 60.0, True)],
)
def test_recovery_transients_and_beats_are_not_restrikes(free_hz: float | None, cvt: bool) -> None:
    # No breakdown: the recovery's own decaying offset, a CVT-like ring, or the beat of a
    # compensated line's free oscillation change the waveform gradually; nothing collapses.
    sc = Scenario(
        free_hz=free_hz,
        recovery_pu=0.08 if free_hz else 0.16,
        cvt_transient=cvt,
        noise_snr_db=45.0,
        quantise_bits=16,
        seed=3,
    )
    rec, truth = build(sc)
    a = analyse(rec)
    assert truth["restrike_s"] == []
    assert a.restrikes == ()


def test_restrikes_follow_each_established_recovery() -> None:
    # Three restrikes, each after two cycles of recovery, at least six cycles apart.
    sc = Scenario(
        restrikes_after_s=(0.08, 0.2, 0.32),
        recovery_before_restrike_s=2.0 / 60.0,
        extinction_after_s=0.5,
        noise_snr_db=50.0,
        fs_hz=4800.0,
        seed=5,
    )
    rec, truth = build(sc)
    a = analyse(rec)
    got = [e.t_s for e in a.restrikes]
    want = [float(x) for x in truth["restrike_s"]]
    assert len(got) == len(want) == 3
    assert all(abs(g - w) * sc.f_hz < 0.25 for g, w in zip(got, want, strict=True))
    for e in a.restrikes:
        assert e.method.startswith("open-phase voltage left its established recovery")
        assert e.evidence.quantities["voltage_v"] > 0
