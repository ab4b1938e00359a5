"""Faint arc loops after the harmonic signature (recordscan.detect.faint_loops).

Synthetic waveforms built here (derived checks, no published source): a recovery voltage
(sinusoid plus a constant trapped charge) preceded by the last faint loops of a dying arc
(dips at the voltage peaks, where the arc re-ignites each half cycle, a few per cent of the
recovery voltage), with white noise at 50 dB.
"""

from __future__ import annotations

import numpy as np
import pytest

from recordscan.detect.faint_loops import faint_loops_end, recovered_tail

F = 50.0
FS = 4000.0


def _wave(loops_until_s: float | None, *, transient: float = 0.0, seed: int = 3):
    rng = np.random.default_rng(seed)
    t = np.arange(0.0, 0.6, 1.0 / FS)
    w = 2 * np.pi * F
    v = 40e3 * np.sin(w * t) + 6e3
    if loops_until_s is not None:
        # dips of 3 % at each peak while the faint loops last
        near_peak = np.abs(np.sin(w * t)) > 0.97
        v = np.where((t < loops_until_s) & near_peak, v - 1.2e3 * np.sign(np.sin(w * t)), v)
        if transient:
            dt = np.clip(t - loops_until_s, 0.0, None)
            ring = transient * np.exp(-dt / 0.04) * np.sin(2 * np.pi * 12.0 * dt)
            v = np.where(t >= loops_until_s, v + ring, v)
    v = v + rng.normal(0.0, 40e3 / np.sqrt(2) * 10 ** (-50 / 20), t.size)
    return t, v


def test_finds_the_end_of_the_faint_loops() -> None:
    t, v = _wave(0.30)
    got = faint_loops_end(v, t, f_hz=F, t_ext_s=0.30 - 1.0 / F, t_end_s=0.6)
    assert got is not None
    assert got.t_s == pytest.approx(0.30, abs=0.25 / F)
    assert got.peak_departure_v > got.threshold_v


def test_a_clean_recovery_gives_no_answer() -> None:
    t, v = _wave(None)
    assert faint_loops_end(v, t, f_hz=F, t_ext_s=0.25, t_end_s=0.6) is None


def test_a_transient_larger_than_the_arc_is_not_a_loop() -> None:
    # a CVT-like 12 Hz subsidence ring of 16 kV after an abrupt extinction
    t, v = _wave(0.25, transient=16e3)
    got = faint_loops_end(v, t, f_hz=F, t_ext_s=0.25, t_end_s=0.6, max_departure_v=8e3)
    assert got is None


def test_too_little_recovery_to_fit() -> None:
    t, v = _wave(0.30)
    assert faint_loops_end(v, t, f_hz=F, t_ext_s=0.28, t_end_s=0.32) is None


def _square_then_recovery(t_ext_s: float | None, seed: int = 5):
    rng = np.random.default_rng(seed)
    t = np.arange(0.0, 0.5, 1.0 / FS)
    w = 2 * np.pi * F
    v = 30e3 * np.sin(w * t + 0.4) + 5e3
    if t_ext_s is not None:
        arc = 9e3 * np.sign(np.sin(w * t))
        v = np.where(t < t_ext_s, arc, v)
    else:
        v = 9e3 * np.sign(np.sin(w * t))
    sigma = 30e3 / np.sqrt(2) * 10 ** (-50 / 20)
    return t, v + rng.normal(0.0, sigma, t.size), sigma


def test_recovered_tail_places_an_extinction_near_the_end() -> None:
    # the arc goes out 1.5 cycles before the reclose at 0.5 s
    t, v, sigma = _square_then_recovery(0.5 - 1.5 / F)
    got = recovered_tail(v, t, f_hz=F, t_end_s=0.5, noise_v=sigma)
    assert got is not None
    assert got.t_s == pytest.approx(0.5 - 1.5 / F, abs=0.1 / F)


def test_recovered_tail_refuses_an_arc_burning_to_the_end() -> None:
    t, v, sigma = _square_then_recovery(None)
    assert recovered_tail(v, t, f_hz=F, t_end_s=0.5, noise_v=sigma) is None
