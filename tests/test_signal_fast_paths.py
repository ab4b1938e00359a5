"""The faster code paths of the signal layer give the numbers of their plain references.

Each fast path (written for the scan's speed, issue 4) is checked on random inputs against a
direct computation with numpy itself: the complex sliding DFT, ``sliding_window_view`` for
running extremes, the padded-``diff`` run finder, ``np.linalg.lstsq`` for least squares and
``np.median`` for medians. Exact equality where the fast path does the same arithmetic;
a round-off tolerance where it does not (stated beside each check).
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.lib.stride_tricks import sliding_window_view

from recordscan.signal.charfunc import fast_median, finite_array_median, robust_scale
from recordscan.signal.filters import running_max, running_min
from recordscan.signal.onset import first_sustained, runs
from recordscan.signal.phasor import (
    dft_kernel,
    full_cycle_phasor,
    real_parts_phasor,
    sliding_window_sum,
)
from recordscan.signal.spectral import _basis, _FreeComponentFit, _ls_fit


def _complex_phasor(x: np.ndarray, fs: float, f: float, t0: float, h: int) -> np.ndarray:
    """The full-cycle DFT phasor in complex arithmetic (the textbook form: Phadke & Thorp,
    *Synchronized Phasor Measurements and Their Applications*, 2008, ch. 1)."""
    length = fs / f
    k = dft_kernel(x.shape[-1], fs_hz=fs, f_hz=h * f, t0_s=t0)
    out = sliding_window_sum(x * k, length)
    out *= np.sqrt(2.0) / length
    return out


@pytest.mark.parametrize("seed", range(4))
def test_real_parts_phasor_equals_complex_product(seed: int) -> None:
    rng = np.random.default_rng(seed)
    for _ in range(50):
        fs = float(rng.choice([960.0, 1000.0, 2000.0, 2500.0, 4000.0, 1234.5]))
        f = float(rng.choice([50.0, 60.0, 49.7, 60.3]))
        n = int(rng.integers(1, 2000))
        shape = (n,) if rng.random() < 0.5 else (3, n)
        x = rng.normal(size=shape) * 10 ** rng.uniform(-3, 6)
        h = int(rng.choice([1, 3, 5]))
        want = _complex_phasor(x, fs, f, 0.013, h)
        got = full_cycle_phasor(x, fs_hz=fs, f_hz=f, t0_s=0.013, harmonic=h)
        assert np.array_equal(want, got, equal_nan=True)
        k = dft_kernel(n, fs_hz=fs, f_hz=h * f, t0_s=0.013)
        direct = real_parts_phasor(x, k.real.copy(), k.imag.copy(), fs / f)
        assert np.array_equal(want, direct, equal_nan=True)


def test_full_cycle_phasor_keeps_nan_handling_of_complex_path() -> None:
    x = np.sin(np.arange(400) * 0.3)
    x[200] = np.nan
    got = full_cycle_phasor(x, fs_hz=1000.0, f_hz=50.0)
    want = _complex_phasor(x, 1000.0, 50.0, 0.0, 1)
    assert np.array_equal(got, want, equal_nan=True)


def test_running_extremes_equal_sliding_window_view() -> None:
    rng = np.random.default_rng(7)
    for trial in range(600):
        n = int(rng.integers(1, 120))
        m = int(rng.integers(1, 800))
        x = rng.normal(size=m) if trial % 2 else (rng.random(m) > 0.7).astype(float)
        pad = np.concatenate((np.full(n - 1, x[0]), x))
        win = sliding_window_view(pad, n)
        assert np.array_equal(running_max(x, n), win.max(axis=1))
        assert np.array_equal(running_min(x, n), win.min(axis=1))
    x = np.array([1.0, np.nan, 3.0, 0.0, 2.0])  # NaN: the window reduction (NaN spreads)
    pad = np.concatenate((np.full(2, x[0]), x))
    assert np.array_equal(
        running_max(x, 3), sliding_window_view(pad, 3).max(axis=1), equal_nan=True
    )


def _runs_reference(m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    padded = np.zeros(m.size + 2, dtype=np.int8)
    padded[1:-1] = m
    d = np.diff(padded)
    return np.flatnonzero(d == 1), np.flatnonzero(d == -1)


def test_runs_and_first_sustained_equal_padded_diff() -> None:
    rng = np.random.default_rng(11)
    for _ in range(5000):
        n = int(rng.integers(0, 60))
        m = rng.random(n) < rng.random()
        s, e = runs(m)
        s0, e0 = _runs_reference(m)
        assert np.array_equal(s, s0) and np.array_equal(e, e0)
        hold = int(rng.integers(-1, 8))
        start = int(rng.integers(0, n + 3))
        sub = m[start:]
        rs, re_ = _runs_reference(sub)
        ok = np.flatnonzero((re_ - rs) >= max(1, hold))
        want = None if ok.size == 0 else int(rs[ok[0]] + start)
        assert first_sustained(m, n_hold=hold, start=start) == want


def test_medians_equal_numpy_median() -> None:
    rng = np.random.default_rng(3)
    for n in range(1, 60):
        x = rng.normal(size=n)
        assert finite_array_median(x) == float(np.median(x))
        assert fast_median(x) == float(np.median(x))
        want = 1.4826 * float(np.median(np.abs(x - np.median(x))))
        assert robust_scale(x) == want
    x = np.array([1.0, np.nan, 5.0, 2.0])
    assert robust_scale(x) == 1.4826 * float(np.median(np.abs(x[[0, 2, 3]] - 2.0)))


def test_least_squares_fit_equals_lstsq() -> None:
    """The normal-equations fit of fit_beat against numpy's SVD least squares (round-off:
    relative 1e-9 on coefficients of a well-conditioned basis)."""
    rng = np.random.default_rng(5)
    fs, f = 833.3, 60.0
    t = np.arange(400) / fs
    x = 3.0 + 2.0 * np.cos(2 * np.pi * f * t + 0.4) + 0.7 * np.sin(2 * np.pi * 41.3 * t)
    x += rng.normal(scale=0.05, size=t.size)
    fixed = _basis(t, [f])
    for fr in (30.0, 41.3, 55.0, 80.0):
        a = _basis(t, [f, fr])
        want, *_ = np.linalg.lstsq(a.T, x, rcond=None)
        res_want = float(np.sqrt(np.mean((x - want @ a) ** 2)))
        coef, res = _ls_fit(x, t, [f, fr], fixed=fixed)
        np.testing.assert_allclose(coef, want, rtol=1e-9, atol=1e-9)
        assert res == pytest.approx(res_want, rel=1e-9)
        coef2, res2 = _FreeComponentFit(x, t, fixed).fit(fr)
        assert np.array_equal(coef, coef2) and res == res2
    # a singular system (the free frequency equal to the forced one) falls back to lstsq
    coef, res = _ls_fit(x, t, [f, f], fixed=fixed)
    assert np.isfinite(coef).all() and np.isfinite(res)


def test_harmonic_kernels_by_powers_equal_direct_exponentials() -> None:
    """Powers of the fundamental's kernel against ``exp(−j·2π·h·f·t)`` itself (round-off:
    relative 1e-11 over 10 s of 60 Hz samples, harmonic 7)."""
    from recordscan.signal.spectral import _kernel_powers

    fs, f, t0 = 2500.0, 60.0, 0.37
    n = int(10 * fs)
    base = dft_kernel(n, fs_hz=fs, f_hz=f, t0_s=t0)
    got = _kernel_powers(base, [5, 3, 7, 1])
    for row, h in zip(got, [5, 3, 7, 1], strict=True):
        np.testing.assert_allclose(row, dft_kernel(n, fs_hz=fs, f_hz=h * f, t0_s=t0), atol=1e-11)


@pytest.mark.parametrize("n_cycles", [1, 2])
def test_harmonic_ratio_equals_one_phasor_per_harmonic(n_cycles: int) -> None:
    """The 2-D harmonic ratio against the sum of one complex phasor per harmonic (round-off:
    relative 1e-10)."""
    from recordscan.signal.phasor import sliding_rms
    from recordscan.signal.spectral import harmonic_ratio

    rng = np.random.default_rng(9)
    fs, f = 2400.0, 50.0
    t = np.arange(3000) / fs
    x = np.sign(np.sin(2 * np.pi * f * t)) + rng.normal(scale=0.05, size=t.size)
    got = harmonic_ratio(x, fs_hz=fs, f_hz=f, harmonics=(3, 5, 7), t0_s=0.1, n_cycles=n_cycles)
    m = n_cycles
    acc = np.zeros(t.size)
    for h in (3, 5, 7):
        acc = acc + np.abs(_complex_phasor(x, fs, f / m, 0.1, h * m)) ** 2
    want = np.sqrt(acc) / sliding_rms(x, length=m * fs / f)
    np.testing.assert_allclose(got, want, rtol=1e-10, equal_nan=True)


def test_sosfilt_pass_equals_scipy_sosfilt() -> None:
    from scipy.signal import butter, sosfilt, sosfilt_zi

    from recordscan.signal.filters import _sosfilt_pass

    sos = butter(4, 120.0, btype="highpass", fs=2500.0, output="sos")
    x = np.random.default_rng(1).normal(size=1000)
    zi = sosfilt_zi(sos) * x[0]
    assert np.array_equal(_sosfilt_pass(sos, x, zi), sosfilt(sos, x, zi=zi)[0])


def test_uniform_record_check_gives_the_segment_loop_answer(monkeypatch) -> None:
    """Record segments with the chunked uniformity check against the interval-run loop alone
    (forced by disabling the check) on jittered, stepped and gapped time axes."""
    import recordscan.core.record as rec_mod

    rng = np.random.default_rng(0)
    for trial in range(400):
        n = int(rng.integers(3, 20000))
        dt = np.full(n - 1, 1e-4) * (1 + rng.normal(scale=10 ** rng.uniform(-9, -1.5), size=n - 1))
        if trial % 3 == 0:
            dt[int(rng.integers(0, n - 1))] *= rng.uniform(1.0, 50.0)
        if trial % 5 == 0:
            dt[int(rng.integers(0, n - 1)) :] *= 2.0
        t = np.concatenate(([0.0], np.cumsum(dt)))
        fast = rec_mod.Record(t_s=t)._find_segments()
        with monkeypatch.context() as m:
            m.setattr(rec_mod, "_uniform", lambda t, chunk=8192: False)
            slow = rec_mod.Record(t_s=t)._find_segments()
        assert fast == slow


def test_long_dft_kernel_equals_direct_exponential() -> None:
    """The blocked kernel of a long record against ``exp(−j·2π·f·t)`` sample by sample
    (round-off: both forms round the phase angle, so they agree to a few units in the last
    place of the largest angle, 2π·f·t_max)."""
    for n, fs, f, t0 in [
        (7500, 2500.0, 60.0, 0.0),
        (200000, 20000.0, 350.0, 0.3),
        (1500, 960.0, 50.0, 2.0),
    ]:
        t = t0 + np.arange(n) / fs
        want = np.exp(-1j * 2.0 * np.pi * f * t)
        got = dft_kernel(n, fs_hz=fs, f_hz=f, t0_s=t0)
        assert got.shape == (n,)
        atol = 4.0 * float(np.spacing(2.0 * np.pi * f * t[-1]))
        np.testing.assert_allclose(got, want, rtol=0, atol=atol)


def test_row_medians_of_inception_equal_per_row_functions() -> None:
    """The 2-D robust scales and medians of the inception reference cycle against
    ``robust_scale`` / ``np.median`` row by row (exact), NaN rows included."""
    from recordscan.detect.inception import _finite_medians, _robust_scales

    rng = np.random.default_rng(4)
    for n in (1, 2, 7, 40, 41):
        rows = rng.normal(size=(6, n)) * 10 ** rng.uniform(-3, 5, size=(6, 1))
        assert _robust_scales(rows) == [robust_scale(r) for r in rows]
        assert _finite_medians(rows) == [float(np.median(r)) for r in rows]
        rows[2, 0] = np.nan
        rows[4, :] = np.nan
        assert _robust_scales(rows) == [robust_scale(r) for r in rows]
        meds = _finite_medians(rows)
        assert np.isnan(meds[4])
        if n > 1:
            assert meds[2] == float(np.median(rows[2, 1:]))
