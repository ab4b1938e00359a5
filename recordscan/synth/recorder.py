"""The recorder side of a simulated event: instruments, sampling and channels of one line end.

:func:`record_end` takes the solver's result (:mod:`recordscan.physics.network.event`) and
the scenario and returns the :class:`~recordscan.core.record.Record` a disturbance
recorder at that end would have written: line VTs (ideal, CVT or magnetic), CTs, residual
and neutral-reactor currents, optional bus VTs and staged-test arc channels, anti-alias
filtering, sampling at the recorder rate, noise, 16-bit quantisation, and the digital
channels (trip per phase, pole status through auxiliary contacts, reclose command).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from recordscan.core import roles as R
from recordscan.core.record import AnalogChannel, Provenance, Record, Scaling, StatusChannel
from recordscan.physics import instruments as ins
from recordscan.synth.scenario import Scenario, utc_text_to_ns

__all__ = ["ENDS", "PHASES", "Timing", "record_end"]

ENDS = ("local", "remote")
PHASES = ("A", "B", "C")
#: fictional epoch of the demo records: 2026-03-14 09:26:53 UTC
_EPOCH_NS = 1_773_480_413 * 1_000_000_000


@dataclass(frozen=True)
class Timing:
    """Simulator-time instants derived from a scenario (seconds)."""

    record_start_s: float
    inception_s: float | None
    trip_command_s: Mapping[str, float | None]
    contact_separation_s: Mapping[str, Mapping[str, float]]
    close_s: Mapping[str, Mapping[str, float]]
    reclose_command_s: Mapping[str, float | None]
    dead_time_s: float
    t_end_s: float


# ----------------------------------------------------------------------------- recorder
def _analog(
    name: str,
    values: np.ndarray,
    *,
    unit: str,
    phase: str | None,
    role: str,
    circuit: str,
    primary: float,
    secondary: float,
    secondary_values: bool,
) -> AnalogChannel:
    return AnalogChannel(
        name=name,
        values=values,
        unit=unit,
        phase=phase,
        role=role,
        circuit=circuit,
        source_phase=phase or "",
        source_unit=unit,
        scaling=Scaling(primary=primary, secondary=secondary, ps="S" if secondary_values else "P"),
    )


def record_end(
    scenario: Scenario,
    line: Any,
    result: Any,
    timing: Timing,
    end: str,
    rng: np.random.Generator,
) -> Record:
    inst = scenario.instruments
    f = float(line.frequency_hz)
    t_sim = np.asarray(result.t_s, dtype=float)
    dt = float(t_sim[1] - t_sim[0])
    e = ENDS.index(end)
    v_ph = line.v_phase_v
    vt_p = inst.vt_primary_v or v_ph
    vt_s = inst.vt_secondary_v or 115.0 / math.sqrt(3.0)
    secondary_values = scenario.output.values == "secondary"
    t_rec = ins.record_instants(
        start_s=timing.record_start_s, length_s=inst.record_length_s, rate_hz=inst.rate_hz
    )
    circuit = line.name
    cvt = None
    if inst.vt == "cvt":
        cvt = ins.CvtParameters.typical(
            v_phase_v=v_ph,
            frequency_hz=f,
            c_total_f=inst.cvt_c_total_nf * 1e-9,
            burden_va=inst.cvt_burden_va,
        )
    ct = ins.CtParameters(saturation=inst.ct_saturation)

    def chain(x: np.ndarray, ref_rms: float) -> np.ndarray:
        y = ins.anti_alias(x, dt_s=dt, rate_hz=inst.rate_hz, frequency_hz=f)
        y = ins.sample_at(t_sim, y, t_rec)
        if inst.snr_db is not None:
            y = ins.add_noise(y, snr_db=inst.snr_db, reference_rms=ref_rms, rng=rng)
        return ins.quantise(y, n_bits=16)[0]

    analog: list[AnalogChannel] = []
    for k, ph in enumerate(PHASES):
        v = ins.vt_response(
            np.asarray(result.v_line_v[e, k], dtype=float),
            kind=inst.vt,
            dt_s=dt,
            frequency_hz=f,
            cvt=cvt,
        )
        analog.append(
            _analog(
                f"V{ph} line",
                chain(v, v_ph),
                unit="V",
                phase=ph,
                role=R.V_LINE[ph],
                circuit=circuit,
                primary=vt_p,
                secondary=vt_s,
                secondary_values=secondary_values,
            )
        )
    if inst.bus_vt:
        for k, ph in enumerate(PHASES):
            analog.append(
                _analog(
                    f"V{ph} bus",
                    chain(np.asarray(result.v_bus_v[e, k], dtype=float), v_ph),
                    unit="V",
                    phase=ph,
                    role=R.V_BUS[ph],
                    circuit=circuit,
                    primary=vt_p,
                    secondary=vt_s,
                    secondary_values=secondary_values,
                )
            )
    i_sum = np.zeros_like(t_sim)
    for k, ph in enumerate(PHASES):
        i = ins.ct_response(
            np.asarray(result.i_line_a[e, k], dtype=float), dt_s=dt, frequency_hz=f, params=ct
        )
        i_sum = i_sum + i
        analog.append(
            _analog(
                f"I{ph}",
                chain(i, inst.ct_primary_a),
                unit="A",
                phase=ph,
                role=R.I_LINE[ph],
                circuit=circuit,
                primary=inst.ct_primary_a,
                secondary=inst.ct_secondary_a,
                secondary_values=secondary_values,
            )
        )
    analog.append(
        _analog(
            "IN",
            chain(i_sum, inst.ct_primary_a),
            unit="A",
            phase="N",
            role=R.I_RESIDUAL,
            circuit=circuit,
            primary=inst.ct_primary_a,
            secondary=inst.ct_secondary_a,
            secondary_values=secondary_values,
        )
    )
    reactor = (scenario.reactor_local, scenario.reactor_remote)[e]
    has_reactor = (result.i_reactor_neutral_a is not None) and reactor.mode != "none"
    if has_reactor and np.any(np.asarray(result.i_reactor_neutral_a[e]) != 0):
        i_nr = ins.ct_response(
            np.asarray(result.i_reactor_neutral_a[e], dtype=float),
            dt_s=dt,
            frequency_hz=f,
            params=ct,
        )
        analog.append(
            _analog(
                "I reactor neutral",
                chain(i_nr, 100.0),
                unit="A",
                phase="N",
                role=R.I_NEUTRAL_REACTOR,
                circuit=circuit,
                primary=200.0,
                secondary=1.0,
                secondary_values=secondary_values,
            )
        )
    if inst.arc_channels and end == "local" and scenario.fault.kind != "none":
        arc_i = np.nan_to_num(np.asarray(result.arc_i_a, dtype=float))
        arc_v = np.nan_to_num(np.asarray(result.arc_v_v, dtype=float))
        analog.append(
            _analog(
                "ARC I",
                chain(arc_i, 50.0),
                unit="A",
                phase=None,
                role=R.ARC_CURRENT,
                circuit="fault point",
                primary=1.0,
                secondary=1.0,
                secondary_values=False,
            )
        )
        analog.append(
            _analog(
                "ARC V",
                chain(arc_v, 10e3),
                unit="V",
                phase=None,
                role=R.ARC_VOLTAGE,
                circuit="fault point",
                primary=1.0,
                secondary=1.0,
                secondary_values=False,
            )
        )

    br = scenario.breaker
    digital: list[StatusChannel] = []
    trip_issue = timing.trip_command_s[end]
    truth_3p = getattr(result.truth, "three_pole_trip_s", None)
    trip3_issue = None if truth_3p is None else truth_3p - br.opening_time_s
    tripped = set(timing.contact_separation_s[end])
    for ph in PHASES:
        trip = ins.trip_command(
            t_rec, issue_s=trip_issue if ph in tripped else None, hold_s=br.trip_hold_s
        )
        trip |= ins.trip_command(t_rec, issue_s=trip3_issue, hold_s=br.trip_hold_s)
        digital.append(
            StatusChannel(
                f"TRIP {ph}", trip, phase=ph, role=R.TRIP[ph], circuit=circuit, source_phase=ph
            )
        )
    for k, ph in enumerate(PHASES):
        pole = ins.status_through_contacts(
            t_sim,
            np.asarray(result.pole_closed[e, k], dtype=bool),
            t_rec,
            open_delay_s=br.aux_open_delay_s,
            close_delay_s=br.aux_close_delay_s,
        )
        digital.append(
            StatusChannel(
                f"POLE {ph} CLOSED",
                pole,
                phase=ph,
                role=R.POLE_CLOSED[ph],
                circuit=circuit,
                normal_state=1,
                source_phase=ph,
            )
        )
    digital.append(
        StatusChannel(
            "RECLOSE",
            ins.reclose_command(t_rec, issue_s=timing.reclose_command_s[end]),
            role=R.RECLOSE,
            circuit=circuit,
        )
    )
    if scenario.fault.kind not in ("single_phase", "none") or trip3_issue is not None:
        issue = trip3_issue if scenario.fault.kind in ("single_phase",) else trip_issue
        digital.append(
            StatusChannel(
                "TRIP 3P",
                ins.trip_command(t_rec, issue_s=issue, hold_s=br.trip_hold_s),
                role=R.TRIP_3P,
                circuit=circuit,
            )
        )

    station = line.stations[e]
    if scenario.output.start_utc is not None:
        start_ns = utc_text_to_ns(scenario.output.start_utc)
    else:
        start_ns = _EPOCH_NS + (scenario.seed % 86_400) * 1_000_000_000
    trigger_rel = (
        timing.inception_s
        if timing.inception_s is not None
        else timing.record_start_s + inst.pre_fault_s
    ) - timing.record_start_s
    return Record(
        t_s=t_rec - timing.record_start_s,
        analog=tuple(analog),
        digital=tuple(digital),
        frequency_hz=f,
        station=station,
        device=f"{station} line recorder",
        start_ns=start_ns,
        trigger_ns=start_ns + round(trigger_rel * 1e9),
        sample_rates=((float(inst.rate_hz), int(t_rec.shape[0])),),
        header_text=(
            f"Simulated record (recordscan), scenario {scenario.name!r}, end {end} "
            f"({station}). Fictional data for demonstration and testing."
        ),
        provenance=Provenance(notes=("simulated",)),
        processing=("simulated by recordscan.synth",),
    )
