"""The orchestrator: JSON schema of docs/scan-schema.md, pairing of two terminals, and the
event chain on the simulated demo records against their truth files (the simulator's own
record of what it did — an independent model: network solver, arc model, instruments)."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest
from test_detect_waveforms import Scenario, build

from recordscan.analysis import Analysis, analyse, error_json_dict, pair
from recordscan.cli.common import to_json_text

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_records"
LINES = {
    "AB500": "ashcombe-brightwater",
    "BC765": "brightwater-corrow",
    "CD345": "corrow-dunhallow",
    "DE400": "dunhallow-elderby",
}


def _schema_keys() -> list[str]:
    text = (ROOT / "docs" / "scan-schema.md").read_text(encoding="utf-8")
    keys: list[str] = []
    for line in text.splitlines():
        if line.startswith("| `"):
            first_cell = line.split("|")[1]
            keys += re.findall(r"`([a-z0-9_]+)`", first_cell)
    return keys


def test_json_has_every_schema_key_and_serialises() -> None:
    keys = _schema_keys()
    assert {"file", "extinction_s", "deionisation_rules", "versions"} <= set(keys)
    rec, _ = build(Scenario(restrikes_after_s=(0.1,)))
    a = analyse(rec)
    assert isinstance(a, Analysis)
    d = a.to_json_dict(file="x.cfg", sha256="abc")
    assert set(keys) <= set(d)
    assert d["schema"] == 1 and d["status"] == "ok" and d["file"] == "x.cfg"
    assert d["start"] == "2026-05-28T20:26:40.000000000Z"
    back = json.loads(to_json_text(d))
    assert back["event"] == "single_pole_trip"
    assert len(back["restrike_s"]) == len(back["restrike_voltage_v"]) == 1
    assert back["secondary_arc_duration_s"] == pytest.approx(
        back["extinction_s"] - back["secondary_arc_start_s"]
    )
    times = [e["t_s"] for e in back["events"]]
    assert times == sorted(times)
    err = error_json_dict(file="bad.cfg", error="bad.cfg: not a cfg")
    assert set(keys) <= set(err) and err["status"] == "error"


def test_pair_aligns_by_timestamps_and_inception() -> None:
    rec, truth = build(Scenario())
    remote = rec.slice_time(0.02, None)  # a second recorder that started 20 ms later
    p = pair(rec, remote)
    assert p.offset_s == pytest.approx(0.02, abs=2e-4)
    assert p.method == "timestamps refined on fault inception"
    a = analyse(rec, remote=remote)
    assert a.remote_pole_open is not None
    assert a.remote_pole_open.t_s == pytest.approx(truth["pole_open_s"], abs=3e-4)


def _sample_cases() -> list[tuple[Path, Path]]:
    out = []
    for truth in sorted(SAMPLES.glob("*.truth.json")):
        stem = truth.name[: -len(".truth.json")]
        recs = sorted(
            p
            for p in SAMPLES.glob(stem + "*")
            if p.suffix in (".cfg", ".cff") and not p.stem.endswith("_remote")
        )
        out += [(r, truth) for r in recs]
    return out


@pytest.mark.parametrize(("path", "truth_path"), _sample_cases(), ids=lambda p: p.name)
def test_demo_records_against_simulator_truth(path: Path, truth_path: Path) -> None:
    from recordscan.io import read

    truth = json.loads(truth_path.read_text(encoding="utf-8"))
    line = SAMPLES / "lines" / f"{LINES[path.name[:5]]}.toml"
    rec = read(path)
    a = analyse(rec, line=line)
    assert a.event == truth["event"]
    if truth["event"] != "single_pole_trip":
        assert a.faulted_phase is None and a.extinction_s is None
        return
    f = rec.frequency_hz
    assert a.faulted_phase == truth["faulted_phase"]
    assert abs(a.inception.t_s - truth["fault_inception_s"]) < 0.25 / f
    assert abs(a.pole_open.t_s - truth["pole_open_s"]["local"][a.faulted_phase]) < 0.1 / f
    assert a.reclose.outcome == truth["outcome"]
    if truth["extinction_s"] is None:
        assert a.extinction_s is None and a.extinction.censored
    else:
        assert abs(a.extinction_s - truth["extinction_s"]) <= 1.0 / f  # issue 4 floor
    if truth["reclose_s"]["local"] is not None:
        assert abs(a.reclose_s - truth["reclose_s"]["local"]) < 0.1 / f
    if truth.get("fault_location_m") is not None and a.location is not None:
        assert (
            abs(a.location.distance_m - truth["fault_location_m"])
            < 0.05 * (truth["line"]["length_m"])
        )
    if truth.get("recovery_voltage_rms_v") and a.recovery is not None:
        assert a.recovery.rms_v == pytest.approx(truth["recovery_voltage_rms_v"], rel=0.1)
    assert np.isfinite(a.confidence)


def test_paired_demo_records_two_terminals() -> None:
    from recordscan.io import read

    stem = "AB500-20260314-0926"
    truth = json.loads((SAMPLES / f"{stem}.truth.json").read_text(encoding="utf-8"))
    local = read(SAMPLES / f"{stem}_local.cfg")
    remote = read(SAMPLES / f"{stem}_remote.cfg")
    a = analyse(local, remote=remote, line=SAMPLES / "lines" / "ashcombe-brightwater.toml")
    ph = truth["faulted_phase"]
    f = local.frequency_hz
    assert a.remote_pole_open_source == "paired record"
    assert abs(a.remote_pole_open.t_s - truth["pole_open_s"]["remote"][ph]) < 0.1 / f
    assert a.secondary_arc_start_s == pytest.approx(truth["secondary_arc_start_s"], abs=0.1 / f)
    assert a.location.method == "two-ended negative sequence"
    assert abs(a.location.distance_m - truth["fault_location_m"]) < 0.05 * truth["line"]["length_m"]
