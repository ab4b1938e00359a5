"""Spectral checks: square-wave THD, harmonic ratio, beat fit (derived closed forms)."""

from __future__ import annotations

import numpy as np
import pytest

from recordscan.signal.sequence import phase_components, sequence_components, superimposed
from recordscan.signal.spectral import envelope, fit_beat, harmonic_ratio, harmonic_spectrum, thd

SQUARE_THD = np.sqrt(np.pi**2 / 8 - 1)  # derived from the Fourier series: 0.4834


def _square(n_per_cycle: int, n_cycles: int) -> np.ndarray:
    k = np.arange(n_per_cycle * n_cycles) + 0.5
    return np.sign(np.cos(2 * np.pi * k / n_per_cycle))


def test_square_wave_thd_48_34_percent() -> None:
    # Derived (Fourier series of a square wave; e.g. Oppenheim & Willsky 1997, from memory):
    # THD = sqrt(π²/8 − 1) = 48.34 %.
    assert SQUARE_THD == pytest.approx(0.4834, abs=5e-5)
    x = _square(2000, 3)
    assert thd(x, fs_hz=2000 * 60.0, f_hz=60.0) == pytest.approx(SQUARE_THD, abs=2e-4)


def test_square_wave_harmonic_amplitudes() -> None:
    # Derived: odd harmonic k has amplitude (4/π)/k; truncated THD = sqrt(Σ_{k=3,5..K} 1/k²).
    x = _square(2000, 2)
    spec = harmonic_spectrum(x, fs_hz=2000 * 50.0, f_hz=50.0, n_harmonics=9)
    assert spec[1] == pytest.approx(4 / np.pi / np.sqrt(2), rel=1e-5)
    assert spec[3] / spec[1] == pytest.approx(1 / 3, rel=1e-4)
    assert spec[2] == pytest.approx(0.0, abs=1e-9)
    t9 = thd(x, fs_hz=2000 * 50.0, f_hz=50.0, method="harmonics", n_harmonics=9)
    assert t9 == pytest.approx(np.sqrt(1 / 9 + 1 / 25 + 1 / 49 + 1 / 81), rel=1e-4)


def test_harmonic_ratio_square_vs_sine() -> None:
    # Derived: (2√2/π)·sqrt(1/9 + 1/25) = 0.3500 for a square wave, 0 for a sinusoid.
    fs = 200 * 60.0
    x = _square(200, 4)
    r = harmonic_ratio(x, fs_hz=fs, f_hz=60.0, harmonics=(3, 5))
    ref = 2 * np.sqrt(2) / np.pi * np.sqrt(1 / 9 + 1 / 25)
    assert np.nanmedian(r) == pytest.approx(ref, rel=2e-3)
    s = np.cos(2 * np.pi * np.arange(800) / 200)
    assert np.nanmax(harmonic_ratio(s, fs_hz=fs, f_hz=60.0)) < 1e-9


def test_fit_beat_finds_free_frequency() -> None:
    # Derived beat of two sinusoids at f and f_n: envelope period 1/|f − f_n|.
    fs, f, fn = 5000.0, 60.0, 48.517
    t = np.arange(int(0.6 * fs)) / fs
    x = 30 * np.cos(2 * np.pi * f * t + 0.2) + 20 * np.cos(2 * np.pi * fn * t - 1.0)
    fit = fit_beat(x, fs_hz=fs, f_hz=f)
    assert fit.beat_hz == pytest.approx(f - fn, abs=0.02)
    assert fit.forced_rms == pytest.approx(30 / np.sqrt(2), rel=1e-3)
    assert fit.free_rms == pytest.approx(20 / np.sqrt(2), rel=1e-3)
    env = envelope(x)
    mid = env[500:-500]
    assert mid.max() == pytest.approx(50, rel=0.02)
    assert mid.min() == pytest.approx(10, rel=0.1)


def test_fit_beat_plain_sinusoid_has_no_beat() -> None:
    fs = 4000.0
    t = np.arange(2000) / fs
    fit = fit_beat(10 * np.sin(2 * np.pi * 50 * t), fs_hz=fs, f_hz=50.0)
    assert fit.beat_hz is None
    assert fit.forced_rms == pytest.approx(10 / np.sqrt(2), rel=1e-6)


def test_fortescue_known_unbalanced_set() -> None:
    # Fortescue (1918), derived: a set built from chosen sequence values returns them.
    x0, x1, x2 = 0.2 - 0.1j, 1.0 + 0.0j, 0.3 * np.exp(1j * 0.7)
    xa, xb, xc = phase_components(x0, x1, x2)
    a = np.exp(2j * np.pi / 3)
    assert xb == pytest.approx(x0 + a * a * x1 + a * x2)
    y0, y1, y2 = sequence_components(xa, xb, xc)
    assert (y0, y1, y2) == pytest.approx((x0, x1, x2))
    # balanced positive sequence set: only X1 (derived)
    b0, b1, b2 = sequence_components(1.0, a * a, a)
    assert abs(b0) < 1e-12 and abs(b2) < 1e-12 and b1 == pytest.approx(1.0)
    # single-phase set Ia = 3, Ib = Ic = 0: I0 = I1 = I2 = 1 (derived, the SLG fault case)
    assert sequence_components(3.0, 0.0, 0.0) == pytest.approx((1.0, 1.0, 1.0))


def test_superimposed_zero_in_steady_state_and_step_after() -> None:
    fs, f = 10000.0, 60.0
    t = np.arange(3000) / fs
    x = np.cos(2 * np.pi * f * t) * np.where(t > 0.15, 5.0, 1.0)
    d = superimposed(x, length=fs / f)
    assert np.nanmax(np.abs(d[200:1490])) < 2e-3  # linear-interpolation error only
    assert np.nanmax(np.abs(d[1510:1600])) > 1.0
