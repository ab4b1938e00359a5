"""The committed demo set in sample_records/: readable, as described, regenerable.

Sizes and contents are checked against what sample_records/README.md promises; records
are read back through the project's reader (its own tests check it against the standard
and the PyPI ``comtrade`` package).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from recordscan.io import read
from recordscan.synth.demo import EXPECTED
from recordscan.synth.generate import simulate, write_event
from recordscan.synth.scenario import load_scenario

ROOT = Path(__file__).resolve().parents[1] / "sample_records"
TRUTHS = sorted(ROOT.glob("*.truth.json"))


def test_every_scenario_has_an_expectation_and_a_truth() -> None:
    scenarios = sorted((ROOT / "scenarios").glob("*.toml"))
    assert len(scenarios) >= 8
    names = {load_scenario(p).name for p in scenarios}
    assert names == set(EXPECTED)
    assert {p.name.removesuffix(".truth.json") for p in TRUTHS} == names


@pytest.mark.parametrize("truth_path", TRUTHS, ids=lambda p: p.name)
def test_committed_records_read_back_as_described(truth_path: Path) -> None:
    truth = json.loads(truth_path.read_text(encoding="utf-8"))
    want = EXPECTED[truth["scenario"]]
    assert (truth["event"], truth["outcome"]) == want[:2]
    assert len(truth["restrike_s"]) >= want[2]
    for end, files in truth["files"].items():
        rec = read(ROOT / files[0])
        assert rec.provenance.revision == truth["comtrade"]["revision"]
        assert rec.provenance.data_format == truth["comtrade"]["data_format"]
        assert rec.provenance.container == ("cff" if truth["comtrade"]["cff"] else "cfg+dat")
        for role in ("v_a", "v_b", "v_c", "i_a", "i_b", "i_c", "pole_a", "trip_a", "reclose"):
            assert role in rec.roles, (end, role)
        assert rec.duration_s == pytest.approx(truth["recorder"]["record_length_s"], abs=1e-6)
        assert rec.sample_rate_hz == pytest.approx(truth["recorder"]["rate_hz"], rel=1e-6)
        if truth["fault_inception_s"] is not None:
            assert rec.trigger_s == pytest.approx(truth["fault_inception_s"], abs=1e-6)


def test_demo_set_mix_and_size() -> None:
    truths = [json.loads(p.read_text(encoding="utf-8")) for p in TRUTHS]
    flavours = {
        (t["comtrade"]["revision"], t["comtrade"]["data_format"], t["comtrade"]["cff"])
        for t in truths
    }
    assert ("1999", "ASCII", False) in flavours and any(f[2] for f in flavours)
    assert any(len(t["files"]) == 2 for t in truths)  # a two-ended pair
    assert any(t["line"]["compensation"] > 0.5 for t in truths)
    assert any(t["permanent"] for t in truths)
    assert any(t["event"] == "no_fault" for t in truths)
    assert any(t["outcome"] == "reclose_onto_fault" and not t["permanent"] for t in truths)
    assert any(len(t["restrike_s"]) >= 1 and t["outcome"] == "success" for t in truths)
    kv = {round(t["line"]["voltage_v"] / 1e3) for t in truths}
    assert len(kv) >= 3
    total = sum(p.stat().st_size for p in ROOT.iterdir() if p.is_file())
    assert total < 15e6


def test_regenerating_a_demo_record_reproduces_it(tmp_path: Path) -> None:
    sc = load_scenario(ROOT / "scenarios" / "06-corrow-dunhallow-routine.toml")
    paths = write_event(simulate(sc), tmp_path)
    new = read(paths[0])
    old = read(ROOT / paths[0].name)
    assert new.roles == old.roles and new.n_samples == old.n_samples
    for a, b in zip(new.analog, old.analog, strict=True):
        lsb = b.scaling.a * b.scaling.to_primary
        assert np.max(np.abs(a.values - b.values)) <= 2 * lsb
    for a, b in zip(new.digital, old.digital, strict=True):
        assert np.array_equal(a.values, b.values)
