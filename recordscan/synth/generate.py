"""Simulate a scenario: network event → instruments → recorder → :class:`Record` + truth.

:func:`simulate` turns a :class:`~recordscan.synth.scenario.Scenario` into an
:class:`EventSpec` for the time-domain solver (:mod:`recordscan.physics.network.event`),
runs it, passes the line-side voltages and currents through the instrument transformers
and the recorder model (:mod:`recordscan.physics.instruments`), and returns one record per
recorded line end with channel roles assigned, plus the truth of the event in record time
(seconds from each record's first sample). :func:`write_event` writes the records as
COMTRADE and the truth as JSON.
"""

from __future__ import annotations

import cmath
import dataclasses
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from recordscan.core.files import atomic_write_text
from recordscan.core.record import Record
from recordscan.errors import FormatError, ModelError
from recordscan.synth.recorder import ENDS, PHASES, Timing, record_end
from recordscan.synth.scenario import Scenario, default_dead_time_s, load_scenario
from recordscan.synth.scenario_toml import scenario_to_dict

__all__ = [
    "SimulatedEvent",
    "build_event_spec",
    "resolve_line",
    "simulate",
    "write_event",
]

TRUTH_SCHEMA = 1
_PHASE_SHIFT_DEG = {"A": 0.0, "B": -120.0, "C": 120.0}


@dataclass(frozen=True)
class SimulatedEvent:
    """The result of :func:`simulate`.

    Attributes
    ----------
    scenario : Scenario
        What was simulated.
    records : Mapping[str, Record]
        ``"local"`` and/or ``"remote"`` → the recorder's record (roles assigned).
    truth : dict
        The truth of the event in record time (see ``docs/scenario.md``).
    raw : object or None
        The solver's result (``EventResult``) when asked for with ``keep_raw``.
    """

    scenario: Scenario
    records: Mapping[str, Record]
    truth: dict[str, Any]
    raw: Any = field(default=None, repr=False, compare=False)


# ----------------------------------------------------------------------------- line
def resolve_line(scenario: Scenario) -> Any:
    """The :class:`~recordscan.physics.line.LineDescription` of a scenario."""
    from recordscan.physics.line import LineDescription, load_line
    from recordscan.physics.line_constants import LineConstants

    if scenario.line.file is not None:
        return load_line(scenario.line.file)
    il = scenario.line.inline
    assert il is not None
    consts = LineConstants.from_sequence(
        il.r1_ohm_per_m,
        il.x1_ohm_per_m,
        il.c1_f_per_m,
        il.r0_ohm_per_m,
        il.x0_ohm_per_m,
        il.c0_f_per_m,
        il.frequency_hz,
    )
    return LineDescription(
        name=il.name,
        from_station=il.local_station,
        to_station=il.remote_station,
        voltage_v=il.voltage_v,
        frequency_hz=il.frequency_hz,
        length_m=il.length_m,
        transposed=True,
        constants=consts,
        dead_time_s=il.dead_time_s,
        source=scenario.source_path or "inline",
    )


def _reactor_spec(setting: Any, from_line: Any, voltage_v: float) -> Any:
    from recordscan.physics.network.event import ReactorSpec

    if setting.mode == "none":
        return None
    if setting.mode == "line":
        if from_line is None:
            return None
        q = from_line.quality_factor
        return ReactorSpec(
            x_phase_ohm=from_line.x_phase_ohm,
            x_neutral_ohm=from_line.x_neutral_ohm,
            q_factor=q if math.isfinite(q) else 300.0,
        )
    x_p = setting.x_phase_ohm
    if x_p is None:
        x_p = voltage_v**2 / (setting.mvar * 1e6)
    return ReactorSpec(
        x_phase_ohm=x_p, x_neutral_ohm=setting.x_neutral_ohm, q_factor=setting.q_factor
    )


def _source_spec(setting: Any, voltage_v: float, angle_deg: float) -> Any:
    from recordscan.physics.network.event import SourceSpec

    z_mag = voltage_v**2 / (setting.short_circuit_mva * 1e6)
    r = z_mag / math.sqrt(1.0 + setting.x_over_r**2)
    z1 = complex(r, r * setting.x_over_r)
    return SourceSpec(
        v_ll_rms_v=setting.v_pu * voltage_v,
        angle_deg=angle_deg,
        z1_ohm=z1,
        z0_ohm=z1 * setting.z0_over_z1,
    )


def _load_angle_deg(scenario: Scenario, line: Any) -> float:
    if scenario.load.current_a is None:
        return float(scenario.load.angle_deg or 0.0)
    v = line.voltage_v
    zs = []
    for s in (scenario.local, scenario.remote):
        zs.append(v**2 / (s.short_circuit_mva * 1e6))
    c = line.constants
    z_line = abs(complex(c.r1_ohm_per_m, c.x1_ohm_per_m)) * line.length_m
    z_total = zs[0] + z_line + zs[1]
    # |V_s − V_r| = 2·V·sin(δ/2) drives I through the series impedance (charging neglected)
    x = scenario.load.current_a * z_total / (2.0 * v / math.sqrt(3.0))
    if x >= 1.0:
        raise ModelError(
            f"load current {scenario.load.current_a:g} A exceeds what the sources and line "
            "can carry; give a smaller load_current_a"
        )
    return math.degrees(2.0 * math.asin(x))


# ----------------------------------------------------------------------------- timing
def _timing(scenario: Scenario, line: Any, angle_deg: float, rng: np.random.Generator) -> Timing:
    f = line.frequency_hz
    period = 1.0 / f
    inst = scenario.instruments
    br = scenario.breaker
    fault = scenario.fault
    base = scenario.simulation.settle_s + inst.pre_fault_s
    dead = (
        br.dead_time_s
        if br.dead_time_s is not None
        else default_dead_time_s(line.voltage_v, line.dead_time_s)
    )
    empty: dict[str, dict[str, float]] = {"local": {}, "remote": {}}
    if fault.kind == "none":
        t0 = base - inst.pre_fault_s
        return Timing(
            record_start_s=t0,
            inception_s=None,
            trip_command_s={"local": None, "remote": None},
            contact_separation_s=empty,
            close_s={"local": {}, "remote": {}},
            reclose_command_s={"local": None, "remote": None},
            dead_time_s=dead,
            t_end_s=t0 + inst.record_length_s,
        )
    # inception where the first faulted phase's source voltage has the asked angle
    ph0 = fault.phases[0]
    theta_deg = fault.point_on_wave_deg - angle_deg - _PHASE_SHIFT_DEG[ph0]
    frac = (theta_deg / 360.0) % 1.0
    k = math.ceil(base / period - frac - 1e-12)
    t_inc = (k + frac) * period
    t0 = t_inc - inst.pre_fault_s
    single = fault.kind == "single_phase"
    tripped = fault.phases if single else PHASES
    trip_cmd = {
        "local": t_inc + br.relay_time_s,
        "remote": t_inc + br.relay_time_s + br.remote_delay_s,
    }
    sep: dict[str, dict[str, float]] = {}
    close: dict[str, dict[str, float]] = {}
    rc_cmd: dict[str, float | None] = {}
    for end in ENDS:
        sep[end] = {
            ph: trip_cmd[end] + br.opening_time_s + br.pole_scatter_s * (rng.random() - 0.5)
            for ph in tripped
        }
        if single and br.reclose:
            extra = br.remote_reclose_delay_s if end == "remote" else 0.0
            close[end] = {ph: sep[end][ph] + dead + extra for ph in tripped}
            rc_cmd[end] = min(close[end].values()) - br.closing_time_s
        else:
            close[end] = {}
            rc_cmd[end] = None
    return Timing(
        record_start_s=t0,
        inception_s=t_inc,
        trip_command_s=trip_cmd,
        contact_separation_s=sep,
        close_s=close,
        reclose_command_s=rc_cmd,
        dead_time_s=dead,
        t_end_s=t0 + inst.record_length_s,
    )


def _arc_objects(scenario: Scenario) -> tuple[Any, Any, Any]:
    from recordscan.physics import arc as A

    a = scenario.arc
    kw = {
        f.name: getattr(a, f.name)
        for f in dataclasses.fields(A.ArcParameters)
        if getattr(a, f.name, None) is not None
    }
    params = A.ArcParameters(**kw)
    if a.elongation == "johns":
        law: Any = A.JohnsElongation()
    elif a.elongation == "linear":
        law = A.LinearElongation(v_m_per_s=a.elongation_speed_m_per_s)
    else:
        law = A.ConstantLength()
    recovery = A.DielectricRecovery(
        rate_scale=a.recovery_rate_scale,
        saturation_time_s=(
            a.recovery_saturation_s if a.recovery_saturation_s is not None else math.inf
        ),
        plateau_s=a.recovery_plateau_s if a.recovery_plateau_s is not None else math.inf,
        scatter_pu=a.restrike_scatter_pu,
        scatter_seed=int(scenario.seed) if scenario.seed is not None else 0,
    )
    return params, law, recovery


def build_event_spec(
    scenario: Scenario, *, line: Any = None, rng: np.random.Generator | None = None
) -> tuple[Any, Timing, Any]:
    """The solver input for a scenario.

    Returns
    -------
    (EventSpec, Timing, LineDescription)
        The solver's event description, the derived instants in simulator time, and the
        line.
    """
    from recordscan.physics import arc as A
    from recordscan.physics.network import event as ev

    line = line if line is not None else resolve_line(scenario)
    rng = rng if rng is not None else np.random.default_rng(scenario.seed)
    angle = _load_angle_deg(scenario, line)
    timing = _timing(scenario, line, angle, rng)
    c = line.constants
    line_data = ev.LineModelData(
        r_ohm_per_m=np.asarray(c.r_ohm_per_m, dtype=float),
        l_h_per_m=np.asarray(c.l_h_per_m, dtype=float),
        c_f_per_m=np.asarray(c.c_f_per_m, dtype=float),
        length_m=float(line.length_m),
    )
    r_from, r_to = line.reactors
    fault_spec = None
    if scenario.fault.kind != "none":
        params, law, recovery = _arc_objects(scenario)
        fs_fields = {f.name for f in dataclasses.fields(ev.FaultSpec)}
        kw: dict[str, Any] = {
            "phase": scenario.fault.phases[0],
            "location_m": scenario.fault.location_pct / 100.0 * line.length_m,
            "inception_s": timing.inception_s,
            "r_fault_ohm": scenario.fault.resistance_ohm,
            "primary": A.PRIMARY_ARC,
            "secondary": params,
            "elongation": law,
            "permanent": scenario.fault.permanent,
            "restrike_enabled": scenario.arc.restrike,
            "max_restrikes": scenario.arc.max_restrikes,
        }
        if len(scenario.fault.phases) > 1:
            if "phases" not in fs_fields:
                raise ModelError("this simulator cannot model multi-phase faults")
            kw["phases"] = tuple(scenario.fault.phases)
        for name in ("recovery", "dielectric", "dielectric_recovery"):
            if name in fs_fields:
                kw[name] = recovery
                break
        fault_spec = ev.FaultSpec(**kw)
    bk_fields = {f.name for f in dataclasses.fields(ev.BreakerSpec)}
    breakers = []
    for end in ENDS:
        bkw: dict[str, Any] = {
            "trip_s": dict(timing.contact_separation_s[end]),
            "close_s": dict(timing.close_s[end]),
        }
        if "three_pole_trip_delay_s" in bk_fields:
            bkw["three_pole_trip_delay_s"] = scenario.breaker.three_pole_trip_delay_s
        breakers.append(ev.BreakerSpec(**bkw))
    sim = scenario.simulation
    dt = sim.dt_s
    spec = ev.EventSpec(
        line=line_data,
        frequency_hz=float(line.frequency_hz),
        local=_source_spec(scenario.local, line.voltage_v, angle),
        remote=_source_spec(scenario.remote, line.voltage_v, 0.0),
        reactor_local=_reactor_spec(scenario.reactor_local, r_from, line.voltage_v),
        reactor_remote=_reactor_spec(scenario.reactor_remote, r_to, line.voltage_v),
        breaker_local=breakers[0],
        breaker_remote=breakers[1],
        fault=fault_spec,
        t_end_s=timing.t_end_s + 4 * dt + 2e-3,
        dt_s=dt,
        line_model=sim.line_model,
        n_sections=sim.n_sections,
    )
    return spec, timing, line


# ----------------------------------------------------------------------------- truth
def _rel(t: float | None, t0: float) -> float | None:
    return None if t is None else float(t) - t0


def _truth(
    scenario: Scenario, line: Any, result: Any, timing: Timing, params: Any
) -> dict[str, Any]:
    tr = result.truth
    t0 = timing.record_start_s
    kind = scenario.fault.kind
    pole_open: dict[str, dict[str, float]] = {"local": {}, "remote": {}}
    for key, t in dict(getattr(tr, "pole_open_s", {}) or {}).items():
        end, ph = key
        end_name = ENDS[end] if isinstance(end, int) else str(end)
        if t is not None:
            pole_open[end_name][str(ph)] = float(t) - t0
    reclose: dict[str, float | None] = {}
    for end, t in dict(getattr(tr, "reclose_s", {}) or {}).items():
        end_name = ENDS[end] if isinstance(end, int) else str(end)
        reclose[end_name] = _rel(t, t0)
    reclose_first = min((t for t in reclose.values() if t is not None), default=None)
    extinction = _rel(getattr(tr, "extinction_s", None), t0)
    if kind == "none":
        event = "no_fault"
    elif kind == "single_phase":
        event = "single_pole_trip"
    else:
        event = "three_pole_trip"
    outcome = getattr(tr, "outcome", "no_reclose") if kind == "single_phase" else "no_reclose"
    margin = (
        reclose_first - extinction
        if (reclose_first is not None and extinction is not None)
        else None
    )
    chain = kind == "single_phase"
    if not chain:
        # the single-pole event chain does not apply: a three-pole trip de-energises the
        # line and whatever the fault path does afterwards is not a secondary arc
        extinction = None
        margin = None
    return {
        "schema": TRUTH_SCHEMA,
        "scenario": scenario.name,
        "event": event,
        "fault_kind": kind,
        "faulted_phase": scenario.fault.phases[0] if scenario.fault.phases else None,
        "faulted_phases": list(scenario.fault.phases),
        "permanent": bool(scenario.fault.permanent) if kind != "none" else False,
        "fault_location_m": (
            scenario.fault.location_pct / 100.0 * line.length_m if kind != "none" else None
        ),
        "fault_inception_s": _rel(timing.inception_s, t0),
        "trip_command_s": {e: _rel(timing.trip_command_s[e], t0) for e in ENDS},
        "pole_open_s": pole_open,
        "secondary_arc_start_s": (
            _rel(getattr(tr, "secondary_arc_start_s", None), t0) if chain else None
        ),
        "restrike_s": (
            [float(t) - t0 for t in (getattr(tr, "restrike_s", ()) or ())] if chain else []
        ),
        "extinctions_s": (
            [float(t) - t0 for t in (getattr(tr, "extinctions_s", ()) or ())] if chain else []
        ),
        "reignition_s": (
            [float(t) - t0 for t in (getattr(tr, "reignition_s", ()) or ())] if chain else []
        ),
        "extinction_s": extinction,
        "secondary_arc_current_rms_a": (
            getattr(tr, "secondary_arc_current_rms_a", None) if chain else None
        ),
        "recovery_voltage_rms_v": getattr(tr, "recovery_voltage_rms_v", None) if chain else None,
        "primary_fault_current_rms_a": getattr(tr, "primary_fault_current_rms_a", None),
        "pole_operations": [
            {"kind": str(kind_), "t_s": float(t) - t0, "end": ENDS[int(end)], "phase": str(ph)}
            for kind_, t, end, ph in (getattr(tr, "pole_operations", ()) or ())
        ],
        "reclose_command_s": {e: _rel(timing.reclose_command_s[e], t0) for e in ENDS},
        "reclose_s": reclose,
        "outcome": outcome,
        "outcome_by_end": {
            e: (outcome if reclose.get(e) is not None else "no_reclose") for e in ENDS
        },
        "three_pole_trip_s": _rel(getattr(tr, "three_pole_trip_s", None), t0),
        "dead_time_setting_s": timing.dead_time_s,
        "extinction_margin_s": margin,
        "arc_parameters": dataclasses.asdict(params) if params is not None else None,
        "elongation": scenario.arc.elongation,
        "line": {
            "name": line.name,
            "voltage_v": line.voltage_v,
            "frequency_hz": line.frequency_hz,
            "length_m": line.length_m,
            "compensation": line.compensation,
            "stations": list(line.stations),
        },
        "recorder": {
            "rate_hz": scenario.instruments.rate_hz,
            "vt": scenario.instruments.vt,
            "snr_db": scenario.instruments.snr_db,
            "record_length_s": scenario.instruments.record_length_s,
            "pre_fault_s": scenario.instruments.pre_fault_s,
        },
        "time_reference": "seconds from the first sample of each record (all ends share it)",
    }


def _check_truth(truth: Mapping[str, Any], where: str) -> None:
    """Internal consistency of the truth (order of instants); a violation is a defect."""
    inc = truth["fault_inception_s"]
    sa = truth["secondary_arc_start_s"]
    ext = truth["extinction_s"]
    problems = []
    for end, poles in truth["pole_open_s"].items():
        for ph, t in poles.items():
            if inc is not None and t < inc:
                problems.append(f"pole {end} {ph} opens before inception")
    if sa is not None and ext is not None and ext < sa:
        problems.append("extinction before the secondary arc starts")
    for t in truth["restrike_s"]:
        if sa is not None and t < sa:
            problems.append("restrike before the secondary arc starts")
    if problems:
        raise ModelError(f"{where}: inconsistent simulated truth: {'; '.join(problems)}")


# ----------------------------------------------------------------------------- public
def simulate(scenario: Scenario | str | Path, *, keep_raw: bool = False) -> SimulatedEvent:
    """Simulate one scenario end to end.

    Parameters
    ----------
    scenario : Scenario or path
        A parsed scenario or a scenario TOML file.
    keep_raw : bool
        Keep the solver's full result in :attr:`SimulatedEvent.raw`.

    Returns
    -------
    SimulatedEvent
        Records per recorded end and the truth.

    Raises
    ------
    recordscan.errors.FormatError
        The scenario or its line file is invalid.
    recordscan.errors.ModelError
        The scenario cannot be simulated (e.g. impossible load).
    """
    from recordscan.physics.network.event import simulate_event

    if not isinstance(scenario, Scenario):
        scenario = load_scenario(scenario)
    rng = np.random.default_rng(scenario.seed)
    spec, timing, line = build_event_spec(scenario, rng=rng)
    result = simulate_event(spec)
    params = spec.fault.secondary if spec.fault is not None else None
    truth = _truth(scenario, line, result, timing, params)
    # a line file relative to the scenario file, as written there (no machine's own path)
    src = scenario.source_path
    truth["scenario_echo"] = scenario_to_dict(scenario, base_dir=Path(src).parent if src else None)
    _check_truth(truth, scenario.source_path or scenario.name)
    records = {
        end: record_end(scenario, line, result, timing, end, rng) for end in scenario.output.ends
    }
    return SimulatedEvent(
        scenario=scenario, records=records, truth=truth, raw=result if keep_raw else None
    )


def _stem(event: SimulatedEvent, end: str) -> str:
    base = event.scenario.output.stem or event.scenario.name
    if len(event.records) == 1:
        return base
    return f"{base}_{end}"


def write_event(
    event: SimulatedEvent,
    out_dir: str | Path,
    *,
    revision: str | None = None,
    data_format: str | None = None,
    cff: bool | None = None,
) -> list[Path]:
    """Write an event's records as COMTRADE and its truth as ``<stem>.truth.json``.

    Parameters
    ----------
    event : SimulatedEvent
        From :func:`simulate`.
    out_dir : path
        Output folder (created).
    revision, data_format, cff : optional
        Override the scenario's ``[output]`` settings.

    Returns
    -------
    list of pathlib.Path
        The files written (COMTRADE files of each end, then the truth JSON).
    """
    from recordscan.io import write

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    o = event.scenario.output
    rev = revision or o.revision
    fmt = (data_format or o.data_format).upper()
    use_cff = o.cff if cff is None else cff
    if rev not in ("1999", "2013"):
        raise FormatError(f"COMTRADE revision {rev!r}: use 1999 or 2013")
    if fmt not in ("ASCII", "BINARY", "BINARY32", "FLOAT32"):
        raise FormatError(f"COMTRADE data format {fmt!r}: use ASCII, BINARY, BINARY32 or FLOAT32")
    if rev == "1999" and (use_cff or fmt not in ("ASCII", "BINARY")):
        raise FormatError(
            "COMTRADE 1999 has ASCII and BINARY .cfg/.dat only; use revision 2013 for "
            f"{'.cff' if use_cff else fmt}"
        )
    written: list[Path] = []
    files: dict[str, list[str]] = {}
    for end, rec in event.records.items():
        stem = _stem(event, end)
        paths = write(rec, out / f"{stem}.cfg", revision=rev, data_format=fmt, cff=use_cff)
        paths = [Path(p) for p in paths]
        written.extend(paths)
        files[end] = [p.name for p in paths]
    truth = dict(event.truth)
    truth["files"] = files
    truth["comtrade"] = {"revision": rev, "data_format": fmt, "cff": bool(use_cff)}
    base = event.scenario.output.stem or event.scenario.name
    tpath = out / f"{base}.truth.json"
    _atomic_text(tpath, json.dumps(_json_clean(truth), indent=1, allow_nan=False) + "\n")
    written.append(tpath)
    return written


def _json_clean(obj: Any) -> Any:
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, complex):
        return {
            "re": obj.real,
            "im": obj.imag,
            "abs": abs(obj),
            "deg": math.degrees(cmath.phase(obj)),
        }
    if isinstance(obj, Mapping):
        return {str(k): _json_clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_json_clean(v) for v in obj]
    if isinstance(obj, np.generic):
        return _json_clean(obj.item())
    return obj


def _atomic_text(path: Path, text: str) -> None:
    atomic_write_text(path, text)
