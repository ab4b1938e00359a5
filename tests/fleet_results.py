"""Scan results (docs/scan-schema.md, version 1) for the store and report tests.

Invented test data in the demo scenario (Valdmere Transmission): not reference values.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path
from typing import Any

import numpy as np

LINES = {
    "Ashcombe–Brightwater": 400.0,
    "Corrow–Dunhallow": 500.0,
    "Dunhallow–Elderby": 765.0,
}


def make_result(
    i: int,
    *,
    line: str = "Ashcombe–Brightwater",
    voltage_kv: float = 400.0,
    rng: np.random.Generator | None = None,
    censored: bool | None = None,
) -> dict[str, Any]:
    """One plausible single-pole-trip scan result (every key of schema version 1)."""
    rng = rng or np.random.default_rng(i)
    sha = hashlib.sha256(f"{line}/{i}".encode()).hexdigest()
    pole_open = 0.100 + float(rng.uniform(0.0, 0.01))
    arc_start = pole_open + float(rng.uniform(0.002, 0.012))
    current_a = float(rng.uniform(5.0, 40.0))
    duration = 0.03 + 0.018 * current_a + float(rng.exponential(0.08))
    dead_time = 0.8
    reclose = pole_open + dead_time
    until = reclose
    is_cens = (arc_start + duration > reclose) if censored is None else censored
    extinction = None if is_cens else arc_start + min(duration, reclose - arc_start - 0.01)
    n_restrikes = int(rng.integers(0, 3))
    restrikes = sorted(float(rng.uniform(arc_start, until)) for _ in range(n_restrikes))
    day = int(rng.integers(0, 730))
    start = np.datetime64("2024-01-01T00:00:00", "ns") + np.timedelta64(day, "D")
    start += np.timedelta64(int(rng.integers(0, 86_400_000_000_000)), "ns")
    outcome = "reclose_onto_fault" if is_cens and rng.uniform() < 0.5 else "success"
    rms_v = None if extinction is None else float(rng.uniform(20e3, 60e3))
    return {
        "schema": 1,
        "file": f"records/{line}/{i:04d}.cfg",
        "sha256": sha,
        "status": "ok",
        "error": None,
        "station": line.split("–")[0],
        "device": "DFR-7",
        "start": str(start) + "Z",
        "frequency_hz": 50.0,
        "sample_rate_hz": 5000.0,
        "line": line,
        "voltage_kv": voltage_kv,
        "event": "single_pole_trip",
        "event_detail": "single-phase fault B",
        "faulted_phase": "B",
        "fault_inception_s": 0.040,
        "trip_s": 0.060,
        "pole_open_s": pole_open,
        "pole_open_source": "digital",
        "remote_pole_open_s": arc_start,
        "secondary_arc_start_s": arc_start,
        "restrike_s": restrikes,
        "restrike_voltage_v": [float(rng.uniform(50e3, 150e3)) for _ in restrikes],
        "extinction_s": extinction,
        "extinction_censored": extinction is None,
        "observed_until_s": until,
        "secondary_arc_duration_s": None if extinction is None else extinction - arc_start,
        "recovery_voltage_rms_v": rms_v,
        "recovery_voltage_peak_v": None if rms_v is None else rms_v * 2**0.5,
        "recovery_voltage_beat_hz": None,
        "recovery_voltage_ratio": None if rms_v is None else float(rng.uniform(0.8, 1.2)),
        "secondary_arc_current_rms_a": current_a,
        "secondary_arc_current_source": "estimated",
        "primary_fault_current_rms_a": 8000.0,
        "current_ratio": 8000.0 / current_a,
        "fault_location_m": float(rng.uniform(0, 150e3)),
        "fault_location_pct": None,
        "fault_location_error_m": 2000.0,
        "reclose_s": reclose,
        "outcome": outcome,
        "three_pole_trip_s": reclose + 0.05 if outcome == "reclose_onto_fault" else None,
        "dead_time_s": dead_time,
        "extinction_margin_s": None if extinction is None else reclose - extinction,
        "deionisation_rules": {
            "10.5+kV/34.5 cycles": (10.5 + voltage_kv / 34.5) / 60.0,
            "175+0.5kV ms": 0.175 + 0.0005 * voltage_kv,
        },
        "confidence": 0.9,
        "events": [
            {
                "kind": "pole_open",
                "t_s": pole_open,
                "uncertainty_s": 1e-4,
                "method": "digital channel",
                "confidence": 1.0,
                "phase": "B",
                "params": {},
                "evidence": {"summary": "pole B open contact", "quantities": {}, "channels": []},
            }
        ],
        "warnings": [],
        "versions": {"recordscan": "0.1.0", "numpy": np.__version__, "scipy": "x"},
    }


def make_fleet(n_per_line: int = 12, *, seed: int = 1) -> list[dict[str, Any]]:
    """Results on the three demo lines."""
    rng = np.random.default_rng(seed)
    out = []
    for line, kv in LINES.items():
        out += [make_result(i, line=line, voltage_kv=kv, rng=rng) for i in range(n_per_line)]
    return out


def make_fit(result: dict[str, Any], *, method: str = "direct") -> dict[str, Any]:
    """An arc-fit result dict of the agreed shape."""
    h = int(result["sha256"][:6], 16) / 0xFFFFFF
    fit: dict[str, Any] = {
        "method": method,
        "u0_v_per_m": 1200.0 + 600.0 * h,
        "r0_ohm_per_m": 0.02,
        "tau0_s": 5e-4 * (1 + h),
        "alpha": 0.2,
        "l0_m": 3.5,
        "elongation_law": "linear",
        "elongation_params": {"rate_m_per_s": 10.0},
        "residual_rms": 0.05,
        "success": True,
        "message": "converged",
    }
    for p in ("u0_v_per_m", "r0_ohm_per_m", "tau0_s", "alpha", "l0_m"):
        fit[f"{p}_stderr"] = 0.1 * fit[p]
        fit[f"{p}_status"] = "fitted"
    return fit


def write_jsonl(path: Path, results: list[dict[str, Any]]) -> Path:
    """Write results as JSON Lines."""
    path.write_text("".join(json.dumps(r) + "\n" for r in results), encoding="utf-8")
    return path
