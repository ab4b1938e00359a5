"""Pre-fault state and fault inception from superimposed (delta) quantities.

The superimposed quantity ``Δx(t) = x(t) − x(t − T)`` is zero in steady state and equals the
change a fault causes during the first cycle after it (the incremental-quantity principle of
superimposed-component relaying; e.g. Phadke & Thorp, *Computer Relaying for Power Systems*, 2nd
ed., 2009 — chapter from memory). Inception is the first sample where the delta of any phase
current or voltage leaves its noise band by a margin and stays out for a short hold, walked back
to where it left the band.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from recordscan.core.events import Event, Evidence
from recordscan.core.record import Record
from recordscan.core.roles import I_LINE, PHASES, V_LINE
from recordscan.detect._base import Quantities, finite_values, where
from recordscan.errors import DetectionError
from recordscan.signal.charfunc import fast_median, robust_scale
from recordscan.signal.onset import first_sustained, last_crossing_before
from recordscan.signal.phasor import estimate_frequency
from recordscan.signal.sequence import sequence_components

__all__ = ["PrefaultState", "detect_inception", "measure_frequency", "prefault_state"]


@dataclass(frozen=True)
class PrefaultState:
    """Steady state before the fault.

    Attributes
    ----------
    t0_s, t1_s : float
        Window used.
    frequency_hz : float
        Measured power frequency (from a phase voltage, else a current).
    nominal_frequency_hz : float
        The record's nominal frequency.
    v_rms_v, i_rms_a : dict
        Phase → fundamental RMS magnitude (phases recorded only).
    v_phasor_v, i_phasor_a : dict
        Phase → complex phasor at the end of the window.
    v1_rms_v, v2_rms_v, v0_rms_v : float or None
        Voltage sequence magnitudes.
    i1_rms_a, i2_rms_a, i0_rms_a : float or None
        Current sequence magnitudes.
    load_current_a : float or None
        Largest phase current.
    warnings : tuple of str
        Observations (frequency off nominal, unbalance…).
    """

    t0_s: float
    t1_s: float
    frequency_hz: float
    nominal_frequency_hz: float
    v_rms_v: dict[str, float] = field(default_factory=dict)
    i_rms_a: dict[str, float] = field(default_factory=dict)
    v_phasor_v: dict[str, complex] = field(default_factory=dict)
    i_phasor_a: dict[str, complex] = field(default_factory=dict)
    v1_rms_v: float | None = None
    v2_rms_v: float | None = None
    v0_rms_v: float | None = None
    i1_rms_a: float | None = None
    i2_rms_a: float | None = None
    i0_rms_a: float | None = None
    load_current_a: float | None = None
    warnings: tuple[str, ...] = ()

    @property
    def v_phase_v(self) -> float | None:
        """Mean phase-voltage RMS (None without voltages)."""
        return float(np.mean(list(self.v_rms_v.values()))) if self.v_rms_v else None

    def to_dict(self) -> dict[str, object]:
        """Plain-JSON form (phasors as [re, im])."""
        return {
            "t0_s": self.t0_s,
            "t1_s": self.t1_s,
            "frequency_hz": self.frequency_hz,
            "nominal_frequency_hz": self.nominal_frequency_hz,
            "v_rms_v": dict(self.v_rms_v),
            "i_rms_a": dict(self.i_rms_a),
            "v1_rms_v": self.v1_rms_v,
            "v2_rms_v": self.v2_rms_v,
            "v0_rms_v": self.v0_rms_v,
            "i1_rms_a": self.i1_rms_a,
            "i2_rms_a": self.i2_rms_a,
            "i0_rms_a": self.i0_rms_a,
            "load_current_a": self.load_current_a,
            "warnings": list(self.warnings),
        }


def measure_frequency(record: Record, *, until_s: float | None = None) -> float:
    """Measure the power frequency on the first segment (before ``until_s``).

    Uses the first recorded phase voltage, else phase current, with frequency tracking
    (:func:`recordscan.signal.phasor.estimate_frequency`). Returns the nominal frequency when
    fewer than three cycles are available.
    """
    seg = record.segments[0]
    stop = seg.stop_idx
    if until_s is not None:
        stop = min(stop, int(np.searchsorted(record.t_s, until_s)))
    for role in (*V_LINE.values(), *I_LINE.values()):
        ch = record.analog_by_role(role)
        if ch is None:
            continue
        x = finite_values(ch.values[seg.start_idx : stop])
        if x.size and np.ptp(x) > 0:
            return estimate_frequency(x, fs_hz=seg.rate_hz, f_hz=record.frequency_hz)
    return float(record.frequency_hz)


def prefault_state(
    record: Record,
    *,
    before_s: float | None = None,
    quantities: Quantities | None = None,
    n_cycles: float = 1.0,
    frequency_hz: float | None = None,
) -> PrefaultState:
    """Measure the steady state in the ``n_cycles`` before ``before_s`` (fault inception).

    Parameters
    ----------
    record : Record
        The record.
    before_s : float, optional
        End of the window (default: the end of the first two cycles of the record).
    quantities : Quantities, optional
        Shared computed quantities.
    n_cycles : float
        Window length in cycles (phasors at the window end use one cycle).
    frequency_hz : float, optional
        ``measure_frequency(record, until_s=before_s)`` when the caller has it already.

    Returns
    -------
    PrefaultState
        The pre-fault state.

    Raises
    ------
    DetectionError
        When less than one cycle precedes ``before_s``.
    """
    q = quantities or Quantities(record)
    first = q.segments[0]
    t_first_valid = float(record.t_s[first.start_idx]) + q.cycle_s
    t1 = t_first_valid + q.cycle_s if before_s is None else float(before_s)
    if t1 < t_first_valid - 1e-9:
        raise DetectionError(
            f"{where(record)}: less than one cycle before the fault; the pre-fault state "
            "cannot be measured (record a longer pre-trigger time)"
        )
    t0 = max(t_first_valid, t1 - n_cycles * q.cycle_s)
    i1 = max(q.idx(t1) - 1, 0)
    f_meas = measure_frequency(record, until_s=t1) if frequency_hz is None else frequency_hz
    warns: list[str] = []
    dev = f_meas - record.frequency_hz
    if abs(dev) > 0.05 * record.frequency_hz:
        warns.append(
            f"measured frequency {f_meas:.2f} Hz is far from the nominal "
            f"{record.frequency_hz:g} Hz: check the cfg line frequency"
        )
    elif abs(dev) > 0.1:
        warns.append(f"pre-fault frequency {f_meas:.3f} Hz ({dev:+.3f} Hz off nominal)")
    v_ph: dict[str, complex] = {}
    i_ph: dict[str, complex] = {}
    for p in PHASES:
        if q.values(V_LINE[p]) is not None:
            v_ph[p] = complex(q.phasor(V_LINE[p])[i1])
        if q.values(I_LINE[p]) is not None:
            i_ph[p] = complex(q.phasor(I_LINE[p])[i1])
    out: dict[str, float | None] = {}
    for name, table in (("v", v_ph), ("i", i_ph)):
        if len(table) == 3 and all(np.isfinite(abs(z)) for z in table.values()):
            x0, x1, x2 = sequence_components(table["A"], table["B"], table["C"])
            unit = "v" if name == "v" else "a"
            out[f"{name}0_rms_{unit}"] = float(abs(x0))
            out[f"{name}1_rms_{unit}"] = float(abs(x1))
            out[f"{name}2_rms_{unit}"] = float(abs(x2))
    load = max((abs(z) for z in i_ph.values()), default=None)
    return PrefaultState(
        t0_s=t0,
        t1_s=t1,
        frequency_hz=f_meas,
        nominal_frequency_hz=float(record.frequency_hz),
        v_rms_v={p: abs(z) for p, z in v_ph.items()},
        i_rms_a={p: abs(z) for p, z in i_ph.items()},
        v_phasor_v=v_ph,
        i_phasor_a=i_ph,
        load_current_a=None if load is None else float(load),
        warnings=tuple(warns),
        **out,  # type: ignore[arg-type]
    )


def _robust_scales(rows: np.ndarray) -> list[float]:
    """:func:`robust_scale` of each row (one 2-D median pass when all are finite)."""
    if rows.shape[1] and np.isfinite(rows).all():
        med = np.median(rows, axis=1)
        dev = np.abs(rows - med[:, None])
        return [float(1.4826 * m) for m in np.median(dev, axis=1)]
    return [robust_scale(r) for r in rows]


def _finite_medians(rows: np.ndarray) -> list[float]:
    """Median of the finite values of each row (NaN for a row without any)."""
    if rows.shape[1] and np.isfinite(rows).all():
        return [float(m) for m in np.median(rows, axis=1)]
    out = []
    for r in rows:
        ok = np.isfinite(r)
        out.append(fast_median(r[ok]) if np.any(ok) else float("nan"))
    return out


def detect_inception(
    record: Record,
    *,
    quantities: Quantities | None = None,
    noise_factor: float = 8.0,
    current_fraction: float = 0.5,
    voltage_fraction: float = 0.08,
    hold_cycles: float = 0.125,
) -> Event | None:
    """Find the fault inception from superimposed phase currents and voltages.

    A phase quantity triggers when ``|Δx|`` exceeds ``max(noise_factor·σ, fraction·peak)``
    (σ: robust noise of ``Δx`` over the first valid cycle; ``peak``: √2·pre-fault RMS of the
    phase, ``current_fraction`` for currents, ``voltage_fraction`` for voltages) for
    ``hold_cycles``. The onset is walked back to where ``|Δx|`` left ``3σ``.

    Parameters
    ----------
    record : Record
        Record with phase currents and/or line voltages.
    quantities : Quantities, optional
        Shared computed quantities.
    noise_factor, current_fraction, voltage_fraction, hold_cycles : float
        Decision settings (see above).

    Returns
    -------
    Event or None
        ``kind="fault_inception"``; None when nothing exceeds the thresholds.

    Raises
    ------
    DetectionError
        No phase current or voltage, or less than two cycles in the first segment.
    """
    q = quantities or Quantities(record)
    seg = q.segments[0]
    n = q.n_cycle(seg.start_idx)
    if seg.n_samples < 3 * n:
        raise DetectionError(
            f"{where(record)}: first segment shorter than three cycles; cannot take a "
            "pre-fault reference"
        )
    base = slice(seg.start_idx + int(np.ceil(n)) + 1, seg.start_idx + int(np.ceil(2 * n)))
    ref_idx = base.stop
    hold = max(2, round(hold_cycles * n))
    best: tuple[int, int, str, float, float] | None = None  # onset, cross, role, ratio, σ
    roles = [(I_LINE[p], current_fraction) for p in PHASES] + [
        (V_LINE[p], voltage_fraction) for p in PHASES
    ]
    present = [(role, frac) for role, frac in roles if q.values(role) is not None]
    used = [role for role, _ in present]
    if used:
        q.prefetch_phasors(used)
        q.prefetch_deltas(used)
        deltas = q.delta_rows(used)
        abs_d = np.abs(deltas)
        sigmas = _robust_scales(deltas[:, base])
        mags = np.abs(q.phasor_rows(used)[:, base])
        peaks = _finite_medians(mags)
    for j, (role, frac) in enumerate(present):
        sigma = sigmas[j]
        peak = np.sqrt(2.0) * peaks[j] if np.isfinite(peaks[j]) else 0.0
        thr = max(noise_factor * sigma, frac * peak, 1e-9)
        with np.errstate(invalid="ignore"):
            mask = abs_d[j, ref_idx:] > thr
        cross = first_sustained(mask, n_hold=hold)
        if cross is None:
            continue
        cross += ref_idx
        onset = last_crossing_before(abs_d[j], cross, level=max(3.0 * sigma, 1e-12))
        ratio = float(np.nanmax(abs_d[j, cross : cross + hold]) / thr)
        if best is None or onset < best[0]:
            best = (onset, cross, role, ratio, sigma)
    if not used:
        raise DetectionError(
            f"{where(record)}: no phase current or line voltage role assigned; fault inception "
            "needs i_a/i_b/i_c or v_a/v_b/v_c (see docs/profiles.md)"
        )
    if best is None:
        return None
    onset, cross, role, ratio, sigma = best
    t = float(record.t_s[onset])
    dt = 1.0 / q.segment_at(onset).rate_hz
    conf = float(min(1.0, 0.5 + 0.1 * ratio))
    return Event(
        kind="fault_inception",
        t_s=t,
        uncertainty_s=max(0.5 * dt, dt * (cross - onset) / 4.0),
        method="superimposed quantities",
        confidence=conf,
        evidence=Evidence(
            summary=(
                f"one-cycle delta of {role} left its noise band at {t * 1e3:.2f} ms and "
                f"exceeded the threshold {ratio:.1f}-fold"
            ),
            quantities={"delta_noise": sigma, "threshold_ratio": ratio},
            channels=(q.channel_name(role),),
        ),
        params={
            "role": role,
            "noise_factor": noise_factor,
            "current_fraction": current_fraction,
            "voltage_fraction": voltage_fraction,
            "hold_cycles": hold_cycles,
        },
    )
