"""Faint arc loops after the harmonic signature (recordscan.detect.faint_loops).

Synthetic waveforms built here (derived checks, no published source): a recovery voltage
(sinusoid plus a constant trapped charge) preceded by the last faint loops of a dying arc
(dips at the voltage peaks, where the arc re-ignites each half cycle, a few per cent of the
recovery voltage), with white noise at 50 dB.
"""

from __future__ import annotations

import numpy as np
import pytest

from recordscan.detect.faint_loops import faint_loops_end

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
