"""Write a :class:`~recordscan.synth.scenario.Scenario` back in its TOML schema.

Used for the truth JSON's scenario echo and for the scenario files written beside swept
records; :func:`scenario_to_toml` output reads back with
:func:`recordscan.synth.scenario.load_scenario` to an equal scenario (up to the rounding of
unit conversions).
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path
from typing import Any

from recordscan.synth.scenario import SCENARIO_SCHEMA, Scenario

__all__ = ["scenario_to_dict", "scenario_to_toml"]


def scenario_to_dict(s: Scenario, *, base_dir: str | Path | None = None) -> dict[str, Any]:
    """The scenario in the file's own schema (TOML-ready; ``None`` values left out).

    A line file is written relative to ``base_dir`` when given (the directory the TOML
    will live in), otherwise as resolved when the scenario was read.
    """
    import os

    km = 1e3
    out: dict[str, Any] = {"schema": SCENARIO_SCHEMA, "name": s.name}
    if s.description:
        out["description"] = s.description
    out["seed"] = s.seed
    if s.line.file is not None:
        f = s.line.file
        if base_dir is not None:
            f = os.path.relpath(Path(f).resolve(), Path(base_dir).resolve()).replace(os.sep, "/")
        out["line"] = {"file": f}
    else:
        il = s.line.inline
        assert il is not None
        out["line"] = {
            "name": il.name,
            "voltage_kv": il.voltage_v / 1e3,
            "frequency_hz": il.frequency_hz,
            "length_km": il.length_m / km,
            "local_station": il.local_station,
            "remote_station": il.remote_station,
            "sequence": {
                "r1_ohm_per_km": il.r1_ohm_per_m * km,
                "x1_ohm_per_km": il.x1_ohm_per_m * km,
                "c1_nf_per_km": il.c1_f_per_m * 1e12,
                "r0_ohm_per_km": il.r0_ohm_per_m * km,
                "x0_ohm_per_km": il.x0_ohm_per_m * km,
                "c0_nf_per_km": il.c0_f_per_m * 1e12,
            },
        }
        if il.dead_time_s is not None:
            out["line"]["dead_time_s"] = il.dead_time_s
    sources: dict[str, Any] = {
        "local": dataclasses.asdict(s.local),
        "remote": dataclasses.asdict(s.remote),
    }
    if s.load.current_a is not None:
        sources["load_current_a"] = s.load.current_a
    elif s.load.angle_deg is not None:
        sources["load_angle_deg"] = s.load.angle_deg
    out["sources"] = sources
    fault = dataclasses.asdict(s.fault)
    fault["phases"] = list(s.fault.phases)
    out["fault"] = fault
    out["arc"] = dataclasses.asdict(s.arc)
    out["breaker"] = dataclasses.asdict(s.breaker)
    out["reactors"] = {
        "local": dataclasses.asdict(s.reactor_local),
        "remote": dataclasses.asdict(s.reactor_remote),
    }
    out["instruments"] = dataclasses.asdict(s.instruments)
    if s.instruments.snr_db is None:
        out["instruments"]["snr_db"] = "none"
    o = dataclasses.asdict(s.output)
    o["ends"] = list(s.output.ends)
    o["format"] = o.pop("data_format")
    out["output"] = o
    out["simulation"] = dataclasses.asdict(s.simulation)
    return _drop_none(out)


def _drop_none(d: Any) -> Any:
    if isinstance(d, dict):
        return {k: _drop_none(v) for k, v in d.items() if v is not None}
    return d


def _toml_value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if not math.isfinite(v):
            raise ValueError("TOML scenario values must be finite")
        return repr(v)
    if isinstance(v, str):
        esc = v.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
        return f'"{esc}"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {type(v).__name__} to TOML")


def scenario_to_toml(s: Scenario, *, base_dir: str | Path | None = None) -> str:
    """The scenario as TOML text that :func:`load_scenario` reads back to an equal scenario.

    ``base_dir``: the directory the text will be saved in (line file written relative).
    """
    d = scenario_to_dict(s, base_dir=base_dir)
    lines: list[str] = []

    def emit(table: dict[str, Any], prefix: str) -> None:
        scalars = {k: v for k, v in table.items() if not isinstance(v, dict)}
        subs = {k: v for k, v in table.items() if isinstance(v, dict)}
        if prefix and scalars:
            lines.append(f"\n[{prefix}]")
        for k, v in scalars.items():
            lines.append(f"{k} = {_toml_value(v)}")
        for k, v in subs.items():
            emit(v, f"{prefix}.{k}" if prefix else k)

    emit(d, "")
    return "\n".join(lines).lstrip("\n") + "\n"
