"""Direct arc-parameter fits (arc current and voltage measured).

External checks:
- the closed-form periodic steady state of dg/dt = (G − g)/τ for a sinusoidal current with
  r0 = 0 and constant l, τ (derived: g = G_pk·[2/π − (4/π)·Σ Re{e^{j2kωt}/(1 + j2kωτ)}/(4k² − 1)],
  from the Fourier series of |sin|) — the "record" is built from that series, not from our
  integrator, then sampled with noise;
- the published default parameter set of Prikler, Kizilcay, Bán & Handl, "Improved secondary
  arc models based on identification of arc parameters from staged fault test records",
  14th PSCC, Sevilla, 2002 (u0 = 0.9 kV/m, r0 = 22 mΩ/m, τ0 = 1 ms, α = −0.5) recovered from a
  record simulated with it by scipy's solve_ivp (an independent integrator).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from recordscan.core.record import AnalogChannel, Record
from recordscan.errors import FitError, FitWarning
from recordscan.fit import DirectFitOptions, find_arc_periods, fit_direct, fit_record
from recordscan.physics.arc import ArcParameters, LinearElongation
from recordscan.synth.staged import simulate_staged_arc


def _closed_form_g(t: np.ndarray, *, g_pk: float, w: float, tau: float, n_terms: int = 400):
    k = np.arange(1, n_terms + 1)[:, None]
    terms = np.real(np.exp(1j * 2 * k * w * t[None, :]) / (1 + 1j * 2 * k * w * tau)) / (
        4 * k**2 - 1
    )
    return g_pk * (2 / math.pi - (4 / math.pi) * terms.sum(axis=0))


def test_closed_form_periodic_steady_state_is_recovered(rng: np.random.Generator) -> None:
    # REFERENCE: derived closed form (Fourier series of |sin|), values of the check set:
    # I = 20·√2 A, u0 = 1.5 kV/m, l = 3 m, τ = 1 ms, 60 Hz.
    f, i_pk, u0, ell, tau = 60.0, 20 * math.sqrt(2), 1500.0, 3.0, 1e-3
    w = 2 * math.pi * f
    t = np.arange(0.0, 0.25, 1.0 / 3840.0)  # recorder rate unrelated to any solver step
    g = _closed_form_g(t, g_pk=i_pk / (u0 * ell), w=w, tau=tau)
    i = i_pk * np.sin(w * t)
    u = i / g
    u_noisy = u + rng.normal(0, 0.003 * np.sqrt(np.mean(u**2)), u.size)  # ~50 dB
    res = fit_direct(
        t,
        i,
        u_noisy,
        l0_m=ell,
        prior=ArcParameters(r0_ohm_per_m=0.0, l0_m=ell),
        options=DirectFitOptions(law="constant"),
    )
    assert res.success
    assert res.value("u0_v_per_m") == pytest.approx(u0, rel=0.01)
    assert res.value("tau0_s") == pytest.approx(tau, rel=0.03)
    # the model's mean conductance (2/π)·I/(u0·l) is reproduced by the fitted curve
    g_fit = np.asarray(res.curves["g_fitted_siemens"])
    tt = np.asarray(res.curves["t_s"])
    last = tt > tt[-1] - 3 / f
    assert g_fit[last].mean() == pytest.approx(2 / math.pi * i_pk / (u0 * ell), rel=0.02)


def test_published_default_set_recovered() -> None:
    # Prikler et al., 14th PSCC 2002: u0 = 0.9 kV/m, τ0 = 1 ms, α = −0.5 (r0 = 22 mΩ/m)
    published = ArcParameters()
    rec = simulate_staged_arc(
        published,
        law=LinearElongation(v_m_per_s=5.0),
        i_s_rms_a=30.0,
        frequency_hz=50.0,
        duration_s=0.7,
        rate_hz=5000.0,
        snr_db=50.0,
        seed=3,
    )
    stop = rec.t_s < (rec.extinction_s or rec.t_s[-1]) - 0.01
    res = fit_direct(rec.t_s[stop], rec.i_a[stop], rec.u_v[stop], l0_m=3.0)
    assert res.success
    assert res.elongation_law == "linear"
    assert res.value("u0_v_per_m") == pytest.approx(900.0, rel=0.05)
    assert res.value("tau0_s") == pytest.approx(1.0e-3, rel=0.10)
    assert res.value("alpha") == pytest.approx(-0.5, abs=0.1)
    assert res.elongation_params["v_m_per_s"] == pytest.approx(5.0, rel=0.15)
    # at tens of amperes r0 cannot be determined and must say so
    assert res.estimates["r0_ohm_per_m"].status == "held at prior"
    assert res.estimates["l0_m"].status == "held at prior"
    d = res.to_dict()
    for key in (
        "method",
        "u0_v_per_m",
        "r0_ohm_per_m",
        "tau0_s",
        "alpha",
        "l0_m",
        "u0_v_per_m_stderr",
        "tau0_s_status",
        "residual_rms",
        "success",
        "message",
        "elongation_law",
        "elongation_params",
    ):
        assert key in d


def test_primary_arc_determines_r0() -> None:
    truth = ArcParameters(u0_v_per_m=1250.0, r0_ohm_per_m=0.015, tau0_s=0.8e-3, alpha=-0.5)
    rec = simulate_staged_arc(
        truth,
        period="primary",
        i_s_rms_a=15_000.0,
        frequency_hz=60.0,
        duration_s=0.1,
        rate_hz=4800.0,
        snr_db=50.0,
        seed=1,
    )
    res = fit_direct(
        rec.t_s,
        rec.i_a,
        rec.u_v,
        l0_m=3.0,
        period="primary",
        options=DirectFitOptions(law="constant"),
    )
    assert res.estimates["r0_ohm_per_m"].status == "fitted"
    assert res.value("r0_ohm_per_m") == pytest.approx(0.015, rel=0.10)
    assert res.value("u0_v_per_m") == pytest.approx(1250.0, rel=0.03)


def test_no_elongation_holds_alpha_at_prior() -> None:
    rec = simulate_staged_arc(
        ArcParameters(alpha=-0.7), i_s_rms_a=20.0, duration_s=0.3, rate_hz=4000.0, snr_db=55.0
    )
    res = fit_direct(rec.t_s, rec.i_a, rec.u_v, l0_m=3.0, options=DirectFitOptions(law="constant"))
    assert res.estimates["alpha"].status == "held at prior"
    assert any("alpha held" in f for f in res.flags)


def test_garbage_is_not_reported_as_fitted(rng: np.random.Generator) -> None:
    t = np.arange(0, 0.3, 1 / 4000)
    i = 30 * np.sin(2 * np.pi * 50 * t)
    u = rng.normal(0, 3000, t.size)  # no arc behind this voltage
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        res = fit_direct(t, i, u, l0_m=3.0, options=DirectFitOptions(law="constant"))
    assert not res.success
    assert "not usable" in res.message
    assert any(issubclass(w.category, FitWarning) for w in caught)


def test_too_short_window_is_a_fit_error() -> None:
    with pytest.raises(FitError, match="valid samples"):
        fit_direct(np.arange(10) / 1000, np.ones(10), np.ones(10))


def _staged_record() -> Record:
    a = simulate_staged_arc(
        ArcParameters(u0_v_per_m=1300, r0_ohm_per_m=0.012),
        period="primary",
        i_s_rms_a=12_000,
        duration_s=0.08,
        rate_hz=4800,
        frequency_hz=60,
    )
    b = simulate_staged_arc(
        ArcParameters(),
        law=LinearElongation(8.0),
        i_s_rms_a=25,
        duration_s=0.6,
        rate_hz=4800,
        frequency_hz=60,
    )
    t = np.concatenate([a.t_s, a.t_s[-1] + 1 / 4800 + b.t_s])
    return Record(
        t_s=t,
        analog=(
            AnalogChannel("ARC I", np.concatenate([a.i_a, b.i_a]), unit="A", role="arc_i"),
            AnalogChannel("ARC V", np.concatenate([a.u_v, b.u_v]), unit="V", role="arc_v"),
        ),
        frequency_hz=60.0,
    )


def test_record_periods_and_both_fits() -> None:
    rec = _staged_record()
    per = find_arc_periods(np.asarray(rec.t_s), np.asarray(rec.analog[0].values), frequency_hz=60.0)
    assert per.primary_s is not None and per.secondary_s is not None
    assert per.primary_s[1] == pytest.approx(0.08, abs=1 / 60)
    results = fit_record(rec)
    assert [r.period for r in results] == ["primary", "secondary"]
    prim, sec = results
    assert prim.value("u0_v_per_m") == pytest.approx(1300, rel=0.05)
    assert sec.value("u0_v_per_m") == pytest.approx(900, rel=0.05)


def test_record_without_arc_channels_is_refused() -> None:
    rec = Record(
        t_s=np.arange(100) / 1000.0, analog=(AnalogChannel("VA", np.zeros(100), role="v_a"),)
    )
    with pytest.raises(FitError, match="arc_i"):
        fit_record(rec)
