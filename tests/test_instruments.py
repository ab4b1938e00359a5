"""Instrument transformers and recorder model.

References
----------
- CVT: its own transfer function, built here independently from the circuit impedances
  (divider Thevenin source, compensating reactor, magnetising branch, burden, suppression
  circuit — the standard linear CVT equivalent, common practice), solved by
  ``scipy.signal.lsim`` (matrix exponential; an independent reference library).
- Butterworth magnitude ``1/sqrt(1 + (f/fc)^(2n))`` (S. Butterworth, "On the theory of
  filter amplifiers", Wireless Engineer 7, 1930 — citation from memory; derived closed form).
- Uniform quantisation noise ``LSB/sqrt(12)`` (W. R. Bennett, "Spectra of quantized
  signals", Bell System Technical Journal 27, 1948 — citation from memory; derived).
- Signal-to-noise ratio definition ``20·log10(signal RMS / noise RMS)`` (derived).
- First-order high-pass CT model: decay ``exp(-t/τ)`` of a DC step (derived closed form).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.polynomial import polynomial as P
from scipy import signal

from recordscan.errors import ModelError
from recordscan.physics import instruments as ins

F_HZ = 60.0
DT_S = 20e-6
V_PH_V = 500e3 / math.sqrt(3)


def _cvt_tf(p: ins.CvtParameters) -> tuple[np.ndarray, np.ndarray]:
    """H(s) = (ratio) · Z_load / (Z_load + R_c + s L_c + 1/(s C_e)) from impedances.

    Polynomials in ascending powers of s, as (numerator, denominator) of V_out/V_in with
    V_out the burden voltage times (C1 + C2)/C1. Built from admittances so that nothing of
    the state-space model under test is reused.
    """
    ce = p.c1_f + p.c2_f
    # suppression branch: R_f + (s L_f || 1/(s C_f)) = R_f + s L_f / (1 + s² L_f C_f)
    zf_num = P.polyadd(
        P.polymul([p.r_fsc_ohm], [1.0, 0.0, p.l_fsc_h * p.c_fsc_f]), [0.0, p.l_fsc_h]
    )
    zf_den = np.array([1.0, 0.0, p.l_fsc_h * p.c_fsc_f])
    # load admittance Y = 1/R_b + 1/(s L_m) + zf_den/zf_num  over common denominator
    # Y = [ s L_m zf_num + R_b zf_num + s L_m R_b zf_den ] / [ R_b s L_m zf_num ]
    sl = np.array([0.0, p.l_mag_h])
    y_num = P.polyadd(
        P.polyadd(P.polymul(sl, zf_num), p.r_burden_ohm * zf_num),
        P.polymul(p.r_burden_ohm * sl, zf_den),
    )
    y_den = P.polymul(p.r_burden_ohm * sl, zf_num)
    # series impedance Z_s = R_c + s L_c + 1/(s C_e) = (s C_e R_c + s² L_c C_e + 1)/(s C_e)
    zs_num = np.array([1.0, ce * p.r_comp_ohm, p.l_comp_h * ce])
    zs_den = np.array([0.0, ce])
    # V_m/E = Z_L/(Z_L + Z_s) = 1/(1 + Z_s Y) = zs_den y_den / (zs_den y_den + zs_num y_num)
    num = P.polymul(zs_den, y_den)
    den = P.polyadd(num, P.polymul(zs_num, y_num))
    # E = V_in C1/C_e and the output is V_m C_e/C1: the two cancel
    return num[::-1], den[::-1]


def test_cvt_transient_matches_its_transfer_function() -> None:
    """Zero-state response to a sinusoid that collapses at a voltage zero (the severe case
    for a CVT) agrees with scipy.signal.lsim of the impedance-built H(s)."""
    p = ins.CvtParameters.typical(v_phase_v=V_PH_V, frequency_hz=F_HZ)
    t = np.arange(0.0, 0.25, DT_S)
    v = math.sqrt(2) * V_PH_V * np.sin(2 * math.pi * F_HZ * t)
    v[t >= 6 / F_HZ] = 0.0
    ours = ins.cvt_response(v, p, dt_s=DT_S, frequency_hz=F_HZ, steady_start=False)
    num, den = _cvt_tf(p)
    # normalise to help lsim's conversion
    num, den = num / den[0], den / den[0]
    _, ref, _ = signal.lsim((num, den), v, t)
    peak = math.sqrt(2) * V_PH_V
    assert np.max(np.abs(ours - ref)) < 2e-3 * peak
    after = t >= 6 / F_HZ + 1 / F_HZ
    # the subsidence transient is there, and it is what H(s) says it is
    assert np.max(np.abs(ref[after])) > 0.01 * peak


def test_cvt_steady_state_gain_and_steady_start() -> None:
    """Steady state before the collapse equals H(jω)·v (impedance formula), no start-up."""
    p = ins.CvtParameters.typical(v_phase_v=V_PH_V, frequency_hz=F_HZ)
    num, den = _cvt_tf(p)
    h = np.polyval(num, 2j * math.pi * F_HZ) / np.polyval(den, 2j * math.pi * F_HZ)
    # tuned compensating reactor: ratio error well under 1 % (common practice for class 0.5/1)
    assert abs(abs(h) - 1.0) < 0.01
    t = np.arange(0.0, 0.2, DT_S)
    v = math.sqrt(2) * V_PH_V * np.cos(2 * math.pi * F_HZ * t + 0.3)
    y = ins.cvt_response(v, p, dt_s=DT_S, frequency_hz=F_HZ)
    expect = np.real(h * math.sqrt(2) * V_PH_V * np.exp(1j * (2 * math.pi * F_HZ * t + 0.3)))
    assert np.max(np.abs(y - expect)) < 1e-3 * math.sqrt(2) * V_PH_V
    # model's own frequency response agrees with the impedance formula
    assert abs(ins.cvt_model(p).frequency_response(F_HZ)[0] - h) < 1e-9


@pytest.mark.parametrize("rate_hz", [960.0, 4000.0, 10000.0])
def test_anti_alias_attenuation_at_nyquist(rate_hz: float) -> None:
    """Order-3 Butterworth at rate/4: |H| at rate/2 = 1/sqrt(1 + 2^6) = −18.13 dB
    (Butterworth 1930, derived)."""
    filt = ins.AntiAliasFilter(order=3, cutoff_fraction=0.25)
    f_test = rate_hz / 2
    t = np.arange(0.0, 0.1, DT_S)
    x = np.sin(2 * math.pi * f_test * t)
    y = ins.anti_alias(x, dt_s=DT_S, rate_hz=rate_hz, frequency_hz=F_HZ, filt=filt)
    tail = t > 0.05
    amp = math.sqrt(2) * np.std(y[tail])
    expect_db = -10 * math.log10(1 + 2.0**6)
    assert 20 * math.log10(amp) == pytest.approx(expect_db, abs=0.2)
    # the power frequency passes (|H| = 1/sqrt(1+(60/fc)^6) ≈ 1)
    x60 = np.sin(2 * math.pi * F_HZ * t)
    y60 = ins.anti_alias(x60, dt_s=DT_S, rate_hz=rate_hz, frequency_hz=F_HZ, filt=filt)
    fc = 0.25 * rate_hz
    assert math.sqrt(2) * np.std(y60[tail]) == pytest.approx(
        1 / math.sqrt(1 + (F_HZ / fc) ** 6), rel=2e-3
    )


def test_quantisation_noise_is_lsb_over_root_12(rng: np.random.Generator) -> None:
    """Bennett 1948 (derived): uniform error of variance LSB²/12, bounded by LSB/2."""
    t = np.arange(200_000) / 10_000.0
    x = 1000.0 * np.sin(2 * math.pi * 60.0 * t) + 37.0 * rng.standard_normal(t.shape)
    xq, a, _b = ins.quantise(x, n_bits=16)
    err = xq - x
    assert np.max(np.abs(err)) <= a / 2 * (1 + 1e-9)
    assert np.std(err) == pytest.approx(a / math.sqrt(12), rel=0.02)
    assert a == pytest.approx((x.max() - x.min()) / (2 * 32767))


@pytest.mark.parametrize("snr_db", [40.0, 50.0, 60.0])
def test_noise_snr_within_half_db(snr_db: float, rng: np.random.Generator) -> None:
    t = np.arange(0.0, 1.0, 1 / 4000.0)
    x = 100.0 * math.sqrt(2) * np.sin(2 * math.pi * F_HZ * t)
    ref_rms = float(np.sqrt(np.mean(x**2)))
    y = ins.add_noise(x, snr_db=snr_db, reference_rms=ref_rms, rng=rng)
    measured = 20 * math.log10(ref_rms / np.std(y - x))
    assert measured == pytest.approx(snr_db, abs=0.5)


@pytest.mark.parametrize("rate_hz", [960.0, 7680.0, 10000.0])
def test_sampling_off_grid(rate_hz: float) -> None:
    """Recorder instants off the 20 µs grid: interpolated values equal the sinusoid."""
    t = np.arange(0.0, 0.5, DT_S)
    x = np.sin(2 * math.pi * F_HZ * t + 0.4)
    tr = ins.record_instants(start_s=0.0123457, length_s=0.4, rate_hz=rate_hz)
    y = ins.sample_at(t, x, tr)
    assert np.max(np.abs(y - np.sin(2 * math.pi * F_HZ * tr + 0.4))) < 1e-7
    with pytest.raises(ModelError):
        ins.sample_at(t, x, tr + 1.0)


def test_aux_contact_delays() -> None:
    t = np.arange(0.0, 1.0, DT_S)
    closed = (t < 0.3) | (t >= 0.8)
    tr = ins.record_instants(start_s=0.0, length_s=0.99, rate_hz=1000.0)
    st = ins.status_through_contacts(t, closed, tr, open_delay_s=0.004, close_delay_s=0.006)
    opened = tr[np.flatnonzero(~st)[0]]
    reclosed = tr[np.flatnonzero(~st)[-1] + 1]
    # within one recorder sample (1 ms)
    assert opened == pytest.approx(0.304, abs=1.01e-3)
    assert reclosed == pytest.approx(0.806, abs=1.01e-3)


def test_ct_linear_decays_dc_with_secondary_time_constant() -> None:
    """First-order high-pass (derived): response to a DC step decays as exp(−t/τ)."""
    tau = 0.5
    t = np.arange(0.0, 1.0, DT_S)
    i = np.where(t >= 0.1, 1000.0, 0.0)
    y = ins.ct_response(
        i, dt_s=DT_S, frequency_hz=F_HZ, params=ins.CtParameters(tau_secondary_s=tau)
    )
    k = t >= 0.1
    expect = 1000.0 * np.exp(-(t[k] - 0.1) / tau)
    assert np.max(np.abs(y[k] - expect)) < 0.5


def test_ct_saturation_below_knee_is_linear_and_above_clips() -> None:
    t = np.arange(0.0, 0.3, DT_S)
    w = 2 * math.pi * F_HZ
    i = 20_000.0 * (np.cos(w * t) - np.exp(-t / 0.05))  # fully offset fault current
    lin = ins.CtParameters(tau_secondary_s=2.0, saturation=False)
    sat_high = ins.CtParameters(tau_secondary_s=2.0, saturation=True, knee_flux_a_s=1e6)
    y_lin = ins.ct_response(i, dt_s=DT_S, frequency_hz=F_HZ, params=lin)
    # zero pre-event current: the linear model starts from rest too
    y_hi = ins.ct_response(i, dt_s=DT_S, frequency_hz=F_HZ, params=sat_high)
    assert np.max(np.abs(y_hi - y_lin)) < 0.01 * 20_000.0
    sat_low = ins.CtParameters(tau_secondary_s=2.0, saturation=True, knee_flux_a_s=30.0)
    y_sat = ins.ct_response(i, dt_s=DT_S, frequency_hz=F_HZ, params=sat_low)
    assert np.max(np.abs(y_sat)) < 0.9 * np.max(np.abs(y_lin))


def test_magnetic_vt_passes_power_frequency() -> None:
    m = ins.magnetic_vt_model(ins.MagneticVtParameters())
    h = m.frequency_response(F_HZ)[0]
    assert abs(h) == pytest.approx(1.0, abs=2e-3)
    with pytest.raises(ModelError):
        ins.vt_response(np.ones(10), kind="optical", dt_s=DT_S, frequency_hz=F_HZ)


def test_trip_and_reclose_commands() -> None:
    tr = np.arange(0.0, 1.0, 1e-3)
    trip = ins.trip_command(tr, issue_s=0.12, hold_s=0.1)
    assert tr[trip][0] == pytest.approx(0.12) and tr[trip][-1] == pytest.approx(0.219)
    assert not ins.reclose_command(tr, issue_s=None).any()


def test_cvt_transient_grows_with_burden() -> None:
    """Common practice (from memory): a CVT's subsidence transient after a voltage collapse
    is larger with a heavier burden. Second cycle after a collapse at a voltage zero."""
    t = np.arange(0.0, 0.3, DT_S)
    peak = math.sqrt(2) * V_PH_V
    v = peak * np.sin(2 * math.pi * F_HZ * t)
    v[t >= 0.1] = 0.0
    second = (t >= 0.1 + 1 / F_HZ) & (t < 0.1 + 2 / F_HZ)
    sizes = []
    for burden_va in (50.0, 200.0):
        p = ins.CvtParameters.typical(v_phase_v=V_PH_V, frequency_hz=F_HZ, burden_va=burden_va)
        y = ins.cvt_response(v, p, dt_s=DT_S, frequency_hz=F_HZ)
        sizes.append(float(np.max(np.abs(y[second]))) / peak)
    assert sizes[0] < sizes[1]
    # the typical set shows a transient of a few per cent, not an ideal VT's zero
    assert 0.02 < sizes[1] < 0.2
