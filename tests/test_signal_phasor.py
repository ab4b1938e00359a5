"""Phasor estimation checks against published definitions and derived closed forms."""

from __future__ import annotations

import numpy as np
import pytest

from recordscan.signal.filters import mimic_filter, running_max
from recordscan.signal.phasor import (
    estimate_frequency,
    full_cycle_phasor,
    half_cycle_phasor,
    sliding_rms,
    sliding_window_sum,
    tracked_phasor,
)


def _tve(est: np.ndarray, ref: complex) -> np.ndarray:
    """Total vector error as defined in IEC/IEEE 60255-118-1:2018 (clause number from memory)."""
    return np.abs(est - ref) / abs(ref)


@pytest.mark.parametrize("f0_hz", [50.0, 60.0])
@pytest.mark.parametrize("df_hz", [-2.0, 2.0])
@pytest.mark.parametrize("n_per_cycle", [32, 166.67])
def test_tve_within_one_percent_off_nominal_with_tracking(f0_hz, df_hz, n_per_cycle) -> None:
    # IEC/IEEE 60255-118-1:2018, steady-state TVE limit 1 % over the ±2 Hz range (P class).
    fs = n_per_cycle * f0_hz
    f = f0_hz + df_hz
    t = np.arange(int(fs * 1.0)) / fs
    amp, phi = 100.0, np.deg2rad(30.0)
    x = np.sqrt(2) * amp * np.cos(2 * np.pi * f * t + phi)
    ph, f_est = tracked_phasor(x, fs_hz=fs, f_hz=f0_hz)
    assert f_est == pytest.approx(f, abs=1e-3)
    valid = ph[np.isfinite(ph)]
    assert np.max(_tve(valid, amp * np.exp(1j * phi))) <= 0.01


def test_steady_sinusoid_exact_at_nominal() -> None:
    # Phadke & Thorp (2008), full-cycle DFT: X = A·exp(jφ) exactly (derived; N = 32, 30°).
    fs, f0 = 32 * 60.0, 60.0
    t = np.arange(320) / fs
    x = np.sqrt(2) * 100.0 * np.cos(2 * np.pi * f0 * t + np.deg2rad(30.0))
    ph = full_cycle_phasor(x, fs_hz=fs, f_hz=f0)
    assert np.all(np.isnan(ph[:31]))
    assert np.allclose(ph[31:], 100.0 * np.exp(1j * np.deg2rad(30.0)), atol=1e-10)


@pytest.mark.parametrize(
    ("df_hz", "p_ref", "q_ref"),
    [(0.5, 0.999886, 0.004176), (1.0, 0.999544, 0.008315), (2.0, 0.998175, 0.016473)],
)
def test_uncompensated_offnominal_ripple_matches_p_q(df_hz, p_ref, q_ref) -> None:
    # Phadke & Thorp, "Synchronized Phasor Measurements and Their Applications" (2008),
    # off-nominal DFT: X_est = P·X + Q·conj(X); |P| = |sin(Nθ−/2)/(N sin(θ−/2))|,
    # |Q| likewise with θ+ (derived values for f0 = 60 Hz, N = 32).
    f0, n = 60.0, 32
    fs = n * f0
    f = f0 + df_hz
    t = np.arange(int(fs * 2)) / fs
    x = np.sqrt(2) * np.cos(2 * np.pi * f * t + 0.3)
    mag = np.abs(full_cycle_phasor(x, fs_hz=fs, f_hz=f0))
    mag = mag[np.isfinite(mag)]
    assert (mag.max() + mag.min()) / 2 == pytest.approx(p_ref, abs=2e-5)
    assert (mag.max() - mag.min()) / 2 == pytest.approx(q_ref, abs=2e-5)


def test_dft_rejects_dc_and_harmonics_exactly() -> None:
    # Derived: the N-point DFT kernel is orthogonal to DC and harmonics 2…N−1.
    fs, f0 = 32 * 50.0, 50.0
    t = np.arange(200) / fs
    x = 7.0 + sum(np.cos(2 * np.pi * h * f0 * t + h) for h in range(2, 16))
    ph = full_cycle_phasor(x, fs_hz=fs, f_hz=f0)
    assert np.nanmax(np.abs(ph)) < 1e-12


def test_half_cycle_phasor_rejects_odd_harmonics_not_dc() -> None:
    # Derived: a half-cycle window spans whole periods of e^{−j2ωt} and of odd harmonics
    # of the kernel product, but not of DC.
    fs, f0 = 32 * 60.0, 60.0
    t = np.arange(200) / fs
    x = np.sqrt(2) * 10 * np.cos(2 * np.pi * f0 * t) + np.cos(2 * np.pi * 3 * f0 * t)
    ph = half_cycle_phasor(x, fs_hz=fs, f_hz=f0)
    assert np.allclose(ph[16:], 10.0, atol=1e-10)
    ph_dc = half_cycle_phasor(x + 1.0, fs_hz=fs, f_hz=f0)
    assert np.nanmax(np.abs(ph_dc - ph)) > 0.1


def test_step_settles_in_one_cycle() -> None:
    # Derived: a full-cycle window holds only post-step samples N samples after the step.
    fs, f0 = 32 * 60.0, 60.0
    t = np.arange(400) / fs
    x = np.sqrt(2) * np.cos(2 * np.pi * f0 * t) * np.where(t >= 100 / fs, 3.0, 1.0)
    ph = full_cycle_phasor(x, fs_hz=fs, f_hz=f0)
    assert abs(ph[100 + 31]) == pytest.approx(3.0, abs=1e-10)
    assert abs(ph[100 + 30]) < 2.99


def test_sliding_sum_and_rms_against_direct() -> None:
    rng = np.random.default_rng(3)
    x = rng.normal(size=100)
    s = sliding_window_sum(x, 7.0)
    ref = np.array([x[i - 6 : i + 1].sum() for i in range(6, 100)])
    assert np.allclose(s[6:], ref)
    s2 = sliding_window_sum(x, 7.25)
    ref2 = np.array([x[i - 6 : i + 1].sum() + 0.25 * x[i - 7] for i in range(7, 100)])
    assert np.allclose(s2[7:], ref2)
    r = sliding_rms(np.sqrt(2) * np.sin(2 * np.pi * np.arange(400) / 40), length=40.0)
    assert np.allclose(r[39:], 1.0)  # RMS of a unit-RMS sinusoid (derived)


def test_frequency_estimate_off_nominal() -> None:
    fs = 10000.0
    t = np.arange(5000) / fs
    x = np.cos(2 * np.pi * 59.3 * t)
    assert estimate_frequency(x, fs_hz=fs, f_hz=60.0) == pytest.approx(59.3, abs=1e-3)


def test_mimic_filter_cancels_decaying_offset() -> None:
    # Benmouyal, IEEE Trans. Power Delivery 10(2), 1995 (from memory): the mimic filter
    # zeroes exp(−t/τ) to first order; its fundamental gain is unity by construction.
    fs, f0, tau = 9600.0, 60.0, 0.05
    t = np.arange(3000) / fs
    x = np.sqrt(2) * (np.cos(2 * np.pi * f0 * t) - np.exp(-t / tau))
    y = mimic_filter(x, tau_s=tau, fs_hz=fs, f_hz=f0)
    ph = full_cycle_phasor(y, fs_hz=fs, f_hz=f0)
    raw = full_cycle_phasor(x, fs_hz=fs, f_hz=f0)
    err_f = np.nanmax(np.abs(np.abs(ph[400:]) - 1.0))
    err_raw = np.nanmax(np.abs(np.abs(raw[160:800]) - 1.0))
    assert err_f < 0.01 < err_raw


def test_running_max_matches_direct() -> None:
    x = np.random.default_rng(2).normal(size=60)
    for n in (1, 4, 9):
        ref = np.array([x[max(0, i - n + 1) : i + 1].max() for i in range(60)])
        assert np.array_equal(running_max(x, n), ref)
