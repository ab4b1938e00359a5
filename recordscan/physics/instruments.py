"""Instrument transformers and the recorder: what a disturbance recorder sees of the network.

Everything here works on bare arrays sampled on the simulator's fixed step ``dt_s`` and
returns arrays: voltages and currents stay in *primary-equivalent* units (volts and amperes
on the network side of the transformer, i.e. the secondary value times the nominal ratio),
so the instrument error is what remains. The COMTRADE writer turns them into secondary
values and 16-bit integers later.

Models
------
Ideal VT / CT
    Output equals input.
Capacitor voltage transformer (CVT)
    The standard linear equivalent circuit referred to the intermediate-voltage side
    (common practice; the same topology is used throughout the CVT transient literature):
    the capacitive divider as a Thevenin source ``e = v·C1/(C1+C2)`` behind ``C1+C2``, the
    series compensating reactor (``L_c``, ``R_c``, tuned so that ``ω²·L_c·(C1+C2) = 1``,
    transformer leakage lumped into it), the step-down transformer's magnetising inductance
    ``L_m`` across the burden ``R_b``, and a passive ferroresonance-suppression circuit
    (a damping resistor ``R_f`` in series with a parallel ``L_f``–``C_f`` tank tuned to the
    power frequency) across the burden. Parameter values of :meth:`CvtParameters.typical`
    are typical values (common practice), not a particular product.
Magnetic VT
    Unity gain at power frequency with the magnetising-branch high-pass (time constant
    ``L_m/R_b``) and the leakage-inductance/winding-capacitance resonance in the kHz range
    as a damped second-order low-pass (typical values, common practice).
CT
    Linear: magnetising-branch high-pass with secondary time constant ``L_m/R_b``.
    Optional saturation: piecewise-linear magnetising characteristic (knee flux, air-core
    slope), integrated with the backward Euler rule.
Recorder
    Anti-alias Butterworth low-pass (order 3, cut-off at a quarter of the recorder rate by
    default), sampling at the recorder instants by interpolation on the simulator grid
    (the simulator step need not divide the recorder interval), white Gaussian noise at a
    given signal-to-noise ratio, and digital channels (trip per phase, pole status through
    auxiliary contacts with their delay, reclose command).

Linear models are filtered with second-order sections obtained by the bilinear transform
(trapezoidal rule, as in EMT programs). A record starts in the pre-fault steady state, so
the response is split into the analytic steady-state response to the fitted pre-fault
power-frequency sinusoid plus the zero-state response to the remainder; no start-up
transient is produced by the instruments themselves.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import linalg, signal

from recordscan.errors import ModelError

__all__ = [
    "AntiAliasFilter",
    "CtParameters",
    "CvtParameters",
    "LinearModel",
    "MagneticVtParameters",
    "add_noise",
    "anti_alias",
    "apply_linear",
    "ct_response",
    "cvt_model",
    "cvt_response",
    "magnetic_vt_model",
    "quantise",
    "reclose_command",
    "record_instants",
    "sample_at",
    "status_through_contacts",
    "trip_command",
    "vt_response",
]


# ----------------------------------------------------------------------------- linear core
@dataclass(frozen=True)
class LinearModel:
    """A continuous-time linear single-input single-output model ``H(s)``.

    Attributes
    ----------
    a, b, c, d : numpy.ndarray
        State-space matrices (``dx/dt = a·x + b·u``, ``y = c·x + d·u``).
    name : str
        What the model represents.
    """

    a: np.ndarray
    b: np.ndarray
    c: np.ndarray
    d: np.ndarray
    name: str = ""

    def frequency_response(self, frequency_hz: float | np.ndarray) -> np.ndarray:
        """Return ``H(j·2π·f)`` (complex) at the given frequencies."""
        f = np.atleast_1d(np.asarray(frequency_hz, dtype=float))
        n = self.a.shape[0]
        out = np.empty(f.shape, dtype=complex)
        for k, fk in enumerate(f):
            s = 2j * math.pi * fk
            x = np.linalg.solve(s * np.eye(n) - self.a, self.b[:, 0])
            out[k] = (self.c @ x)[0] + self.d[0, 0]
        return out

    def zpk(self) -> tuple[np.ndarray, np.ndarray, float]:
        """Zeros, poles and gain of ``H(s)``.

        Poles are the eigenvalues of ``a``; zeros the finite generalised eigenvalues of the
        system pencil; the gain matches ``H`` at a frequency away from poles and zeros.
        """
        n = self.a.shape[0]
        p = np.linalg.eigvals(self.a)
        big = np.block([[self.a, self.b], [self.c, self.d]])
        ident = np.zeros((n + 1, n + 1))
        ident[:n, :n] = np.eye(n)
        zz = linalg.eigvals(big, ident)
        z = zz[np.isfinite(zz)]
        z = z[np.abs(z) < 1e12]
        scale = max(float(np.max(np.abs(p))) if p.size else 1.0, 1.0)
        s0 = 1j * scale * 1.2345
        h0 = (self.c @ np.linalg.solve(s0 * np.eye(n) - self.a, self.b[:, 0]))[0] + self.d[0, 0]
        k = h0 * np.prod(s0 - p) / np.prod(s0 - z)
        return z, p, float(np.real(k))

    def sos(self, dt_s: float, *, prewarp_hz: float | None = None) -> np.ndarray:
        """Second-order sections of the bilinear (trapezoidal) discretisation at ``dt_s``."""
        z, p, k = self.zpk()
        fs = 1.0 / dt_s
        if prewarp_hz is not None and prewarp_hz > 0:
            # scale s so that the discrete response matches exactly at prewarp_hz
            w = 2 * math.pi * prewarp_hz
            scale = w / (2 * fs * math.tan(w / (2 * fs)))
            z, p = z / scale, p / scale
            k = k * scale ** (len(z) - len(p))
        zd, pd, kd = signal.bilinear_zpk(z, p, k, fs)
        return signal.zpk2sos(zd, pd, kd)


def _fit_sinusoid(x: np.ndarray, dt_s: float, frequency_hz: float, n_cycles: float) -> complex:
    """Least-squares phasor (peak, cosine reference) of the first ``n_cycles`` of ``x``."""
    n = max(round(n_cycles / (frequency_hz * dt_s)), 4)
    n = min(n, x.shape[0])
    t = np.arange(n) * dt_s
    w = 2 * math.pi * frequency_hz
    basis = np.column_stack([np.cos(w * t), -np.sin(w * t), np.ones(n)])
    coef, *_ = np.linalg.lstsq(basis, x[:n], rcond=None)
    return complex(coef[0], coef[1])


def apply_linear(
    model: LinearModel,
    x: np.ndarray,
    *,
    dt_s: float,
    frequency_hz: float | None = None,
    steady_start: bool = True,
    prewarp_hz: float | None = None,
) -> np.ndarray:
    """Pass a uniformly sampled waveform through a linear model.

    Parameters
    ----------
    model : LinearModel
        The continuous model.
    x : numpy.ndarray
        Input samples on the step ``dt_s``.
    dt_s : float
        Sample interval, seconds.
    frequency_hz : float, optional
        Power frequency; needed when ``steady_start`` is true.
    steady_start : bool
        If true, the input is taken to be in a sinusoidal steady state before its first
        sample: the steady-state response to the power-frequency sinusoid fitted to the
        first cycle is added analytically and only the remainder is filtered from a zero
        state. If false, the model starts from a zero state.
    prewarp_hz : float, optional
        Frequency at which the bilinear map is made exact.

    Returns
    -------
    numpy.ndarray
        Output samples.
    """
    x = np.asarray(x, dtype=float)
    if x.ndim != 1 or x.shape[0] == 0:
        raise ModelError("instrument input must be a non-empty one-dimensional array")
    sos = model.sos(dt_s, prewarp_hz=prewarp_hz)
    if not steady_start:
        return signal.sosfilt(sos, x)
    if frequency_hz is None or frequency_hz <= 0:
        raise ModelError("steady_start needs the power frequency")
    phasor = _fit_sinusoid(x, dt_s, frequency_hz, 1.0)
    t = np.arange(x.shape[0]) * dt_s
    rot = np.exp(2j * math.pi * frequency_hz * t)
    x_ss = np.real(phasor * rot)
    # the model's steady state at the fitted frequency (the discrete map, so that the sum
    # is exactly the discrete zero-state response continued from steady state)
    h_ss = _discrete_gain(sos, frequency_hz, dt_s)
    y_ss = np.real(h_ss * phasor * rot)
    return y_ss + signal.sosfilt(sos, x - x_ss)


def _discrete_gain(sos: np.ndarray, frequency_hz: float, dt_s: float) -> complex:
    """Gain of second-order sections at ``frequency_hz`` (``z = exp(jωΔt)``)."""
    zi = np.exp(-1j * 2 * math.pi * frequency_hz * dt_s)
    powers = np.array([1.0, zi, zi * zi])
    return complex(np.prod((sos[:, :3] @ powers) / (sos[:, 3:] @ powers)))


# ----------------------------------------------------------------------------- CVT
@dataclass(frozen=True)
class CvtParameters:
    """Linear CVT equivalent circuit referred to the intermediate-voltage side.

    Attributes
    ----------
    c1_f, c2_f : float
        High-voltage and intermediate capacitor of the divider, farad.
    l_comp_h, r_comp_ohm : float
        Compensating reactor (with transformer leakage), henry and ohm.
    l_mag_h : float
        Step-down transformer magnetising inductance, henry.
    r_burden_ohm : float
        Burden referred to the intermediate voltage, ohm.
    l_fsc_h, c_fsc_f, r_fsc_ohm : float
        Ferroresonance-suppression circuit: tank inductance and capacitance (tuned to the
        power frequency) and series damping resistance.
    """

    c1_f: float
    c2_f: float
    l_comp_h: float
    r_comp_ohm: float
    l_mag_h: float
    r_burden_ohm: float
    l_fsc_h: float
    c_fsc_f: float
    r_fsc_ohm: float

    def __post_init__(self) -> None:
        for name in (
            "c1_f",
            "c2_f",
            "l_comp_h",
            "r_comp_ohm",
            "l_mag_h",
            "r_burden_ohm",
            "l_fsc_h",
            "c_fsc_f",
            "r_fsc_ohm",
        ):
            v = getattr(self, name)
            if not (math.isfinite(v) and v > 0):
                raise ModelError(f"CVT parameter {name} must be positive, got {v!r}")

    @classmethod
    def typical(
        cls,
        *,
        v_phase_v: float,
        frequency_hz: float,
        c_total_f: float = 100e-9,
        v_intermediate_v: float = 13e3,
        burden_va: float = 200.0,
        q_comp: float = 30.0,
    ) -> CvtParameters:
        """Typical CVT values (common practice) for a phase-to-ground voltage.

        The divider ratio puts ``v_intermediate_v`` on the intermediate capacitor; the
        compensating reactor is tuned to ``C1+C2`` at the power frequency with quality
        factor ``q_comp``; the burden draws ``burden_va`` at rated voltage; the magnetising
        current is 0.5 % of the burden current; the suppression tank is tuned to the power
        frequency with a reactance equal to the burden resistance, and its damping
        resistor is half the burden resistance. With these values a collapse of the primary
        voltage at a voltage zero leaves a decaying output of some 5–8 % of the pre-fault
        peak over the first cycles, the order of magnitude CVT transient studies report.
        """
        if v_phase_v <= v_intermediate_v:
            raise ModelError("CVT phase voltage must exceed the intermediate voltage")
        ratio = v_phase_v / v_intermediate_v  # (C1 + C2)/C1
        c1 = c_total_f / ratio
        c2 = c_total_f - c1
        w = 2 * math.pi * frequency_hz
        l_comp = 1.0 / (w * w * c_total_f)
        r_b = v_intermediate_v**2 / burden_va
        x_fsc = r_b
        return cls(
            c1_f=c1,
            c2_f=c2,
            l_comp_h=l_comp,
            r_comp_ohm=w * l_comp / q_comp,
            l_mag_h=r_b / (0.005 * w),
            r_burden_ohm=r_b,
            l_fsc_h=x_fsc / w,
            c_fsc_f=1.0 / (w * x_fsc),
            r_fsc_ohm=r_b / 2.0,
        )


def cvt_model(p: CvtParameters) -> LinearModel:
    """State-space model of the CVT from primary voltage to primary-equivalent output.

    States: divider capacitor voltage, compensating-reactor current, magnetising current,
    suppression-tank inductor current, suppression-tank capacitor voltage. The output is the
    burden voltage multiplied by the divider ratio ``(C1+C2)/C1``.
    """
    ce = p.c1_f + p.c2_f
    k_div = p.c1_f / ce
    gsum = 1.0 / p.r_burden_ohm + 1.0 / p.r_fsc_ohm
    # burden (node) voltage v_m = (i_l - i_mag + v_cf/R_f) / gsum
    vm = np.array([0.0, 1.0, -1.0, 0.0, 1.0 / p.r_fsc_ohm]) / gsum
    a = np.zeros((5, 5))
    # C_e dv_ce/dt = i_l
    a[0, 1] = 1.0 / ce
    # L_c di_l/dt = e - v_ce - R_c i_l - v_m
    a[1] = -vm / p.l_comp_h
    a[1, 0] -= 1.0 / p.l_comp_h
    a[1, 1] -= p.r_comp_ohm / p.l_comp_h
    # L_m di_mag/dt = v_m
    a[2] = vm / p.l_mag_h
    # L_f di_f/dt = v_cf
    a[3, 4] = 1.0 / p.l_fsc_h
    # C_f dv_cf/dt = (v_m - v_cf)/R_f - i_f
    a[4] = vm / (p.r_fsc_ohm * p.c_fsc_f)
    a[4, 4] -= 1.0 / (p.r_fsc_ohm * p.c_fsc_f)
    a[4, 3] -= 1.0 / p.c_fsc_f
    b = np.zeros((5, 1))
    b[1, 0] = k_div / p.l_comp_h
    c = (vm / k_div).reshape(1, 5)
    d = np.zeros((1, 1))
    return LinearModel(a, b, c, d, name="capacitor voltage transformer")


def cvt_response(
    v_v: np.ndarray,
    params: CvtParameters,
    *,
    dt_s: float,
    frequency_hz: float,
    steady_start: bool = True,
) -> np.ndarray:
    """Secondary output of a CVT (primary-equivalent volts) for a primary voltage waveform."""
    return apply_linear(
        cvt_model(params),
        v_v,
        dt_s=dt_s,
        frequency_hz=frequency_hz,
        steady_start=steady_start,
    )


# ----------------------------------------------------------------------------- magnetic VT
@dataclass(frozen=True)
class MagneticVtParameters:
    """Inductive (magnetic) VT as a band-pass around the power frequency.

    Attributes
    ----------
    tau_mag_s : float
        Magnetising-branch time constant ``L_m/R_b`` (high-pass), seconds.
    f_resonance_hz : float
        Leakage-inductance/winding-capacitance resonance, Hz.
    damping : float
        Damping ratio of that resonance.
    """

    tau_mag_s: float = 2.0
    f_resonance_hz: float = 4000.0
    damping: float = 0.3

    def __post_init__(self) -> None:
        if not (self.tau_mag_s > 0 and self.f_resonance_hz > 0 and self.damping > 0):
            raise ModelError("magnetic VT parameters must be positive")


def magnetic_vt_model(p: MagneticVtParameters) -> LinearModel:
    """State-space model ``H(s) = s·τ/(1 + s·τ) · ω_r²/(s² + 2ζω_r·s + ω_r²)``."""
    wr = 2 * math.pi * p.f_resonance_hz
    num = np.polymul([p.tau_mag_s, 0.0], [wr * wr])
    den = np.polymul([p.tau_mag_s, 1.0], [1.0, 2 * p.damping * wr, wr * wr])
    a, b, c, d = signal.tf2ss(num, den)
    return LinearModel(a, b, c, d, name="magnetic voltage transformer")


def vt_response(
    v_v: np.ndarray,
    *,
    kind: str,
    dt_s: float,
    frequency_hz: float,
    v_phase_v: float | None = None,
    cvt: CvtParameters | None = None,
    magnetic: MagneticVtParameters | None = None,
) -> np.ndarray:
    """Output of a line VT of ``kind`` ``"ideal"``, ``"cvt"`` or ``"magnetic"``.

    ``v_phase_v`` (rated phase voltage) is needed for a CVT when ``cvt`` is not given.
    """
    x = np.asarray(v_v, dtype=float)
    if kind == "ideal":
        return x.copy()
    if kind == "cvt":
        if cvt is None:
            if v_phase_v is None:
                raise ModelError("a CVT needs either its parameters or the rated phase voltage")
            cvt = CvtParameters.typical(v_phase_v=v_phase_v, frequency_hz=frequency_hz)
        return cvt_response(x, cvt, dt_s=dt_s, frequency_hz=frequency_hz)
    if kind == "magnetic":
        model = magnetic_vt_model(magnetic or MagneticVtParameters())
        return apply_linear(model, x, dt_s=dt_s, frequency_hz=frequency_hz)
    raise ModelError(f"unknown VT kind {kind!r}; use 'ideal', 'cvt' or 'magnetic'")


# ----------------------------------------------------------------------------- CT
@dataclass(frozen=True)
class CtParameters:
    """Current transformer (primary-referred).

    Attributes
    ----------
    tau_secondary_s : float
        Secondary time constant ``L_m/R_b`` in the linear region, seconds.
    saturation : bool
        Model the knee of the magnetising characteristic.
    knee_flux_a_s : float
        Knee of the core flux, expressed as the integral of the primary-referred secondary
        current ``∫ i₂ dt`` (burden volt-seconds divided by the burden resistance), A·s.
    saturated_ratio : float
        Ratio of the saturated (air-core) magnetising inductance to the linear one.
    """

    tau_secondary_s: float = 3.0
    saturation: bool = False
    knee_flux_a_s: float = 100.0
    saturated_ratio: float = 1e-3

    def __post_init__(self) -> None:
        if not (self.tau_secondary_s > 0 and self.knee_flux_a_s > 0):
            raise ModelError("CT time constant and knee must be positive")
        if not 0 < self.saturated_ratio <= 1:
            raise ModelError("CT saturated_ratio must be in (0, 1]")


def ct_response(
    i_a: np.ndarray,
    *,
    dt_s: float,
    frequency_hz: float,
    params: CtParameters | None = None,
) -> np.ndarray:
    """Primary-referred secondary current of a CT.

    Linear: ``i₂ = i₁ − i_m`` with ``τ·di_m/dt = i₂``, i.e. ``I₂/I₁ = sτ/(1 + sτ)``.
    With saturation the magnetising branch follows ``λ = ∫ i₂ dt`` (burden volt-seconds
    over ``R_b``): ``i_m = λ/τ`` below the knee and a slope ``1/(τ·saturated_ratio)`` above.
    """
    p = params or CtParameters()
    x = np.asarray(i_a, dtype=float)
    if not p.saturation:
        num = [p.tau_secondary_s, 0.0]
        den = [p.tau_secondary_s, 1.0]
        a, b, c, d = signal.tf2ss(num, den)
        model = LinearModel(a, b, c, d, name="current transformer")
        return apply_linear(model, x, dt_s=dt_s, frequency_hz=frequency_hz)
    return _ct_saturating(x, dt_s, p)


def _ct_saturating(x: np.ndarray, dt_s: float, p: CtParameters) -> np.ndarray:
    """Backward-Euler flux integration with a two-slope magnetising curve."""
    tau = p.tau_secondary_s
    knee = p.knee_flux_a_s
    tau_sat = tau * p.saturated_ratio
    out = np.empty_like(x)
    lam = 0.0
    im_knee = knee / tau
    for n in range(x.shape[0]):
        # solve lam_new = lam + dt*(x - im(lam_new)) for the two-slope im
        lin = (lam + dt_s * x[n]) / (1.0 + dt_s / tau)
        if abs(lin) <= knee:
            lam = lin
        else:
            sgn = 1.0 if lin > 0 else -1.0
            # im = sgn*im_knee + (lam - sgn*knee)/tau_sat
            lam = (lam + dt_s * (x[n] - sgn * im_knee) + dt_s * sgn * knee / tau_sat) / (
                1.0 + dt_s / tau_sat
            )
        if abs(lam) <= knee:
            im = lam / tau
        else:
            sgn = 1.0 if lam > 0 else -1.0
            im = sgn * im_knee + (lam - sgn * knee) / tau_sat
        out[n] = x[n] - im
    return out


# ----------------------------------------------------------------------------- recorder
@dataclass(frozen=True)
class AntiAliasFilter:
    """Analog anti-alias low-pass in front of the recorder's converter.

    Attributes
    ----------
    order : int
        Butterworth order.
    cutoff_fraction : float
        Cut-off (−3 dB) as a fraction of the recorder sample rate (0.25 → rate/4).
    """

    order: int = 3
    cutoff_fraction: float = 0.25

    def model(self, rate_hz: float) -> LinearModel:
        """Continuous Butterworth model for a recorder rate."""
        if not 0 < self.cutoff_fraction < 0.5:
            raise ModelError("anti-alias cutoff_fraction must be between 0 and 0.5")
        if self.order < 1:
            raise ModelError("anti-alias order must be at least 1")
        wc = 2 * math.pi * self.cutoff_fraction * rate_hz
        z, p, k = signal.butter(self.order, wc, analog=True, output="zpk")
        a, b, c, d = signal.zpk2ss(z, p, k)
        return LinearModel(a, b, c, d, name=f"Butterworth order {self.order}")


def anti_alias(
    x: np.ndarray,
    *,
    dt_s: float,
    rate_hz: float,
    frequency_hz: float,
    filt: AntiAliasFilter | None = None,
) -> np.ndarray:
    """Apply the recorder's anti-alias filter on the simulator grid.

    The bilinear map is made exact at the recorder's Nyquist frequency, where the
    attenuation matters for aliasing.
    """
    f = filt or AntiAliasFilter()
    if f.cutoff_fraction * rate_hz >= 0.5 / dt_s:
        raise ModelError(
            f"recorder rate {rate_hz:g} Hz is too high for the simulator step {dt_s:g} s"
        )
    return apply_linear(
        f.model(rate_hz),
        x,
        dt_s=dt_s,
        frequency_hz=frequency_hz,
        prewarp_hz=0.5 * rate_hz,
    )


def record_instants(*, start_s: float, length_s: float, rate_hz: float) -> np.ndarray:
    """Sample instants of a record, in simulator time, ``start_s + k/rate_hz``."""
    if rate_hz <= 0 or length_s <= 0:
        raise ModelError("recorder rate and record length must be positive")
    n = math.floor(length_s * rate_hz + 1e-9) + 1
    return start_s + np.arange(n) / rate_hz


def sample_at(t_sim_s: np.ndarray, x: np.ndarray, t_rec_s: np.ndarray) -> np.ndarray:
    """Sample a (band-limited) simulator waveform at recorder instants.

    Cubic interpolation between the simulator samples; the simulator step need not divide
    the recorder interval. Instants outside the simulated span are an error.
    """
    t_sim_s = np.asarray(t_sim_s, dtype=float)
    if t_rec_s[0] < t_sim_s[0] - 1e-12 or t_rec_s[-1] > t_sim_s[-1] + 1e-12:
        raise ModelError(
            f"record span {t_rec_s[0]:.6g}…{t_rec_s[-1]:.6g} s is outside the simulated span "
            f"{t_sim_s[0]:.6g}…{t_sim_s[-1]:.6g} s"
        )
    dt = t_sim_s[1] - t_sim_s[0]
    u = (np.clip(t_rec_s, t_sim_s[0], t_sim_s[-1]) - t_sim_s[0]) / dt
    k = np.clip(np.floor(u).astype(np.int64), 1, x.shape[0] - 3)
    s = u - k
    # Catmull-Rom (cubic Hermite) on the uniform simulator grid
    p0, p1, p2, p3 = x[k - 1], x[k], x[k + 1], x[k + 2]
    return p1 + 0.5 * s * (
        p2 - p0 + s * (2 * p0 - 5 * p1 + 4 * p2 - p3 + s * (3 * (p1 - p2) + p3 - p0))
    )


def add_noise(
    x: np.ndarray,
    *,
    snr_db: float,
    reference_rms: float,
    rng: np.random.Generator,
) -> np.ndarray:
    """Add white Gaussian noise so that ``20·log10(reference_rms/σ) = snr_db``.

    ``reference_rms`` is the channel's nominal signal (the pre-fault RMS of a voltage, the
    rated or load current of a current channel), so an open phase near zero volts still
    carries the noise of its measurement chain.
    """
    if not math.isfinite(snr_db):
        return np.asarray(x, dtype=float).copy()
    sigma = reference_rms / 10 ** (snr_db / 20.0)
    return np.asarray(x, dtype=float) + rng.normal(0.0, sigma, size=np.shape(x))


def quantise(x: np.ndarray, *, n_bits: int = 16) -> tuple[np.ndarray, float, float]:
    """Uniform quantisation as a COMTRADE writer scales a channel: ``a·round((x−b)/a) + b``.

    Returns the quantised values and the multiplier ``a`` (one LSB) and offset ``b``; the
    signed integer range ``±(2^(n−1) − 1)`` spans the channel's min…max.
    """
    x = np.asarray(x, dtype=float)
    lo, hi = float(np.min(x)), float(np.max(x))
    top = 2 ** (n_bits - 1) - 1
    b = 0.5 * (hi + lo)
    a = (hi - lo) / (2 * top) if hi > lo else 1.0
    q = np.clip(np.round((x - b) / a), -top, top)
    return a * q + b, a, b


def _state_at(
    t_rec_s: np.ndarray, t_edges_s: np.ndarray, states_after: np.ndarray, initial: bool
) -> np.ndarray:
    idx = np.searchsorted(t_edges_s, t_rec_s, side="right") - 1
    out = np.where(idx >= 0, states_after[np.clip(idx, 0, None)], initial)
    return out.astype(bool)


def status_through_contacts(
    t_sim_s: np.ndarray,
    closed: np.ndarray,
    t_rec_s: np.ndarray,
    *,
    open_delay_s: float,
    close_delay_s: float,
) -> np.ndarray:
    """Pole-closed status as auxiliary contacts report it, at recorder instants.

    Each change of the main contacts (``closed`` on the simulator grid) appears
    ``open_delay_s`` (closed → open) or ``close_delay_s`` (open → closed) later.
    """
    closed = np.asarray(closed, dtype=bool)
    change = np.flatnonzero(closed[1:] != closed[:-1]) + 1
    if change.size == 0:
        return np.full(t_rec_s.shape, bool(closed[0]))
    new_state = closed[change]
    delay = np.where(new_state, close_delay_s, open_delay_s)
    t_edges = t_sim_s[change] + delay
    order = np.argsort(t_edges, kind="stable")
    return _state_at(t_rec_s, t_edges[order], new_state[order], bool(closed[0]))


def trip_command(t_rec_s: np.ndarray, *, issue_s: float | None, hold_s: float) -> np.ndarray:
    """Trip output of the protection: asserted from ``issue_s`` for ``hold_s`` seconds."""
    if issue_s is None:
        return np.zeros(t_rec_s.shape, dtype=bool)
    return (t_rec_s >= issue_s) & (t_rec_s < issue_s + hold_s)


def reclose_command(
    t_rec_s: np.ndarray, *, issue_s: float | None, pulse_s: float = 0.1
) -> np.ndarray:
    """Reclose command pulse from ``issue_s`` lasting ``pulse_s``."""
    return trip_command(t_rec_s, issue_s=issue_s, hold_s=pulse_s)
