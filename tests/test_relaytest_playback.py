"""Relay playback sets: plan parsing, secondary-value records, truth and determinism.

External references:

- COMTRADE scaling (IEEE Std C37.111-2013, clause on the cfg analog channel line: value =
  a·x + b in the units flagged P or S, with the primary and secondary ratio terms): the
  independent PyPI ``comtrade`` package reads the playback files as secondary values; times
  primary/secondary they equal the project reader's primary values within one LSB.
- VT ratio 345 kV/√3 : 115 V/√3 — nominal phase-to-ground secondary 115/√3 = 66.40 V at
  rated primary voltage (definition of the rated transformation ratio, IEC 61869-3 /
  IEEE C57.13, from memory); CT 2000:1 → secondary = primary/2000 (same definition).
- Latest permissible permit = secondary-arc start + allowed dead time − breaker closing
  time: derived (the dead time runs from pole opening to contact touch, and the close
  command precedes the touch by the closing time).
- Phase reactance of a shunt reactor bank compensating a fraction F of the charging of
  half the line: X_p = 1/(F·ω·C1·ℓ/2) (Kimbark, "Suppression of ground-fault arcs on
  single-pole-switched EHV lines by shunt reactors", IEEE Trans. PAS 83(3), 1964; derived
  closed form).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from recordscan.errors import FormatError
from recordscan.relaytest.manifest import load_manifest
from recordscan.relaytest.plan import latest_permit_s, load_plan, parse_plan
from recordscan.relaytest.playback import PlaybackSet, build_playback_set

SQRT3 = math.sqrt(3.0)
F_HZ = 60.0

#: a small plan on an inline 345 kV line (test data, not the demo)
TINY = """
schema = 1
name = "tiny"
seed = 3
[base.line]
name = "test line 345 kV"
voltage_kv = 345
frequency_hz = 60
length_km = 120
local_station = "Corrow"
remote_station = "Dunhallow"
[base.line.sequence]
r1_ohm_per_km = 0.037
x1_ohm_per_km = 0.366
c1_nf_per_km = 11.85
r0_ohm_per_km = 0.26
x0_ohm_per_km = 1.2
c0_nf_per_km = 6.79
[base.arc]
u0_v_per_m = 3000.0
[base.instruments]
vt = "ideal"
snr_db = "none"
[playback]
vt_secondary_v = 115
ct_primary_a = 2000
ct_secondary_a = 1
rate_hz = 2000
pre_fault_s = 0.05
revision = "2013"
format = "BINARY"
[reclose]
max_dead_time_s = 0.5
close_time_s = 0.05
[[case]]
label = "near fault"
location_pct = 30
[[case]]
label = "permanent"
permanent = true
[[case]]
label = "far fault"
location_pct = 85
u0_v_per_m = 3500
"""


def write_plan(folder: Path, text: str = TINY, name: str = "plan.toml") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    p = folder / name
    p.write_text(text, encoding="utf-8")
    return p


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, PlaybackSet]:
    root = tmp_path_factory.mktemp("playback")
    plan = load_plan(write_plan(root))
    return root, build_playback_set(plan, root / "set")


def test_latest_permit_arithmetic() -> None:
    # derived: 0.12 s + 0.5 s − 0.05 s
    assert latest_permit_s(0.12, max_dead_time_s=0.5, close_time_s=0.05) == pytest.approx(
        0.57, abs=1e-15
    )


def test_manifest_truth(built: tuple[Path, PlaybackSet]) -> None:
    root, pset = built
    cases, meta = load_manifest(root / "set" / "manifest.json")
    assert [c.case for c in cases] == ["case-001", "case-002", "case-003"]
    assert meta["seed"] == 3 and meta["failed_cases"] == []
    csv_cases, _ = load_manifest(root / "set" / "manifest.csv")
    assert [c.case for c in csv_cases] == [c.case for c in cases]
    for c, cc in zip(cases, csv_cases, strict=True):
        assert cc.extinction_s == pytest.approx(c.extinction_s, abs=1e-6)
        assert (root / "set" / c.file).is_file()
        # truth in playback-record time: inception at the plan's pre-fault time
        assert c.inception_s == pytest.approx(0.05, abs=1e-9)
        assert c.sample_rate_hz == 2000.0 and c.frequency_hz == F_HZ
        # latest permit = secondary-arc start + 0.5 s − 0.05 s (derived)
        assert c.latest_permit_s == pytest.approx(c.secondary_arc_start_s + 0.45, abs=1e-12)
        # the pole interrupts at a current zero after contact separation: within one cycle
        # of inception + relay 20 ms + remote delay 10 ms + opening 25 ms ± scatter/2
        # (derived from the scenario timing defaults, docs/scenario.md)
        upper = c.inception_s + 0.02 + 0.01 + 0.025 + 0.001 + 1.0 / F_HZ
        assert c.inception_s + 0.02 + 0.025 - 0.001 < c.secondary_arc_start_s <= upper
    by = {c.case: c for c in cases}
    assert by["case-002"].permanent and by["case-002"].extinction_s is None
    assert by["case-002"].expected == "block"
    for k in ("case-001", "case-003"):
        c = by[k]
        assert c.expected == "permit"
        assert c.secondary_arc_start_s < c.extinction_s <= c.latest_permit_s
    assert pset.n_permit == 2 and pset.n_block == 1
    assert "near fault" in by["case-001"].notes and "permit expected" in by["case-001"].notes


def test_playback_files_read_back_at_secondary_values(built: tuple[Path, PlaybackSet]) -> None:
    """Our reader and the PyPI ``comtrade`` package agree on the secondary scaling."""
    import comtrade

    from recordscan.io import read

    root, pset = built
    vt_ratio = (345e3 / SQRT3) / (115.0 / SQRT3)
    ct_ratio = 2000.0 / 1.0
    for case in pset.cases:
        cfg = root / "set" / case.file
        ours = read(cfg)
        ref = comtrade.Comtrade(ignore_warnings=True)
        ref.load(str(cfg), str(cfg.with_suffix(".dat")))
        names = [ch.name for ch in ours.analog]
        assert names == ["VA line", "VB line", "VC line", "IA", "IB", "IC", "IN"]
        assert ref.analog_count == 7
        # only trip and pole status are played back (the reclose is the relay's decision)
        assert {d.role for d in ours.digital} == {
            "trip_a", "trip_b", "trip_c", "pole_a", "pole_b", "pole_c",
        }  # fmt: skip
        for k, ch in enumerate(ours.analog):
            info = ref.cfg.analog_channels[k]
            assert info.pors.upper() == "S"
            ratio = vt_ratio if ch.unit == "V" else ct_ratio
            assert float(info.primary) / float(info.secondary) == pytest.approx(ratio, rel=1e-12)
            lsb_primary = ch.scaling.a * ch.scaling.to_primary
            sec = np.asarray(ref.analog[k], dtype=float)
            assert np.max(np.abs(sec * ratio - ch.values)) <= 1.01 * lsb_primary
        # pre-fault VA: ideal VT, 1.0 pu sources, 120 km line → within 5 % of the rated
        # secondary 115/√3 = 66.40 V (rated ratio definition; Ferranti rise ≪ 5 %)
        n_pre = int(0.04 * 2000)  # two cycles before inception
        va = np.asarray(ref.analog[0], dtype=float)[:n_pre]
        rms = float(np.sqrt(np.mean((va - va.mean()) ** 2)))
        assert rms == pytest.approx(115.0 / SQRT3, rel=0.05)
        # the faulted phase current during the fault: secondary = primary / 2000 exactly
        ia_primary = ours.analog[3].values
        assert np.max(np.abs(np.asarray(ref.analog[3]) - ia_primary / ct_ratio)) <= (
            1.01 * ours.analog[3].scaling.a
        )


def test_set_is_deterministic(tmp_path: Path, built: tuple[Path, PlaybackSet]) -> None:
    root, _ = built
    again = build_playback_set(load_plan(write_plan(tmp_path)), tmp_path / "set")
    a = json.loads((root / "set" / "manifest.json").read_text(encoding="utf-8"))
    b = json.loads(again.manifest_json_path.read_text(encoding="utf-8"))
    a.pop("plan_file")
    b.pop("plan_file")
    assert a == b
    assert (root / "set" / "manifest.csv").read_bytes() == again.manifest_csv_path.read_bytes()
    for c in again.cases:
        assert (root / "set" / c.file).with_suffix(".dat").read_bytes() == (
            tmp_path / "set" / c.file
        ).with_suffix(".dat").read_bytes()


RANDOM_PLAN = (
    TINY.split("[[case]]")[0]
    + """
[grid]
location_pct = [20, 80]
vt = ["cvt", "magnetic"]
[random]
n = 3
u0_v_per_m = { range = [1500, 3500] }
g_min_siemens_per_m = { log_range = [3e-5, 5e-4] }
elongation = { choice = ["johns", "linear"] }
permanent = { probability = 0.3 }
snr_db = 45
"""
)


def test_grid_and_random_expansion_is_deterministic() -> None:
    a = parse_plan(_toml(RANDOM_PLAN), where="r.toml")
    b = parse_plan(_toml(RANDOM_PLAN), where="r.toml")
    c = parse_plan(_toml(RANDOM_PLAN.replace("seed = 3", "seed = 4")), where="r.toml")
    assert len(a.cases) == 2 * 2 * 3
    assert [x.settings for x in a.cases] == [x.settings for x in b.cases]
    assert [x.scenario.seed for x in a.cases] == [x.scenario.seed for x in b.cases]
    assert [x.settings for x in a.cases] != [x.settings for x in c.cases]
    pts = {(x.settings["location_pct"], x.settings["vt"]) for x in a.cases}
    assert pts == {(20.0, "cvt"), (20.0, "magnetic"), (80.0, "cvt"), (80.0, "magnetic")}
    for x in a.cases:
        s = x.settings
        assert 1500 <= s["u0_v_per_m"] <= 3500
        assert 3e-5 <= s["g_min_siemens_per_m"] <= 5e-4
        assert s["elongation"] in ("johns", "linear")
        assert x.scenario.arc.u0_v_per_m == s["u0_v_per_m"]
        assert x.scenario.instruments.vt == s["vt"]
        assert x.scenario.instruments.snr_db == 45.0
        assert x.scenario.fault.location_pct == s["location_pct"]
        assert x.scenario.fault.permanent == s["permanent"]
        assert not x.scenario.breaker.reclose  # the relay decides the reclose
    assert a.cases[3].origin == "grid point 2, draw 1"


def _toml(text: str) -> dict:
    import tomllib

    return tomllib.loads(text)


def test_compensation_and_voltage_class_variables() -> None:
    text = (
        TINY.split("[[case]]")[0]
        + """
[[case]]
compensation = 0.7
neutral_detuning = 0.9
[[case]]
voltage_kv = 500
length_km = 200
"""
    )
    plan = parse_plan(_toml(text), where="c.toml")
    comp, cls = plan.cases
    # Kimbark 1964 closed form: X_p = 1/(F·ω·C1·ℓ/2) for a bank at each end
    w = 2 * math.pi * F_HZ
    x_p = 1.0 / (0.7 * w * 11.85e-12 * 60e3)
    assert comp.scenario.reactor_local.x_phase_ohm == pytest.approx(x_p, rel=1e-6)
    # X_n cancelling Cm: X_p·(C1 − C0)/(3·(C0 − (1 − F)·C1)), here × 0.9 detuning
    x_n = x_p * (11.85 - 6.79) / (3 * (6.79 - 0.3 * 11.85))
    assert comp.scenario.reactor_remote.x_neutral_ohm == pytest.approx(0.9 * x_n, rel=1e-6)
    # a case of another voltage class: VT primary follows the line (500 kV/√3 : 115 V/√3)
    assert cls.scenario.line.inline.voltage_v == 500e3
    assert cls.scenario.line.inline.length_m == 200e3
    assert cls.scenario.instruments.vt_primary_v == pytest.approx(500e3 / SQRT3)
    assert cls.scenario.instruments.vt_secondary_v == pytest.approx(115.0 / SQRT3)
    assert cls.scenario.reactor_local.mode == "none"


#: (text to replace in TINY, replacement, key the message must name)
BAD = [
    ("schema = 1\n", "schema = 1\nbogus = 1\n", "bogus"),
    ("vt_secondary_v = 115", "vt_secondary_v = 230", "playback.vt_secondary_v"),
    ("ct_secondary_a = 1\n", "ct_secondary_a = 10\n", "playback.ct_secondary_a"),
    ('format = "BINARY"', 'format = "XML"', "playback.format"),
    ("[playback]\n", "[playback]\nrecord_length_s = 0.3\n", "playback.record_length_s"),
    ("[playback]\n", "[playback]\nvt_primary_kv = 500\n", "vt_primary_kv"),
    ("max_dead_time_s = 0.5", "max_dead_time_s = -1", "reclose.max_dead_time_s"),
    ("location_pct = 30", "location_pct = 120", "case[1].location_pct"),
    ("location_pct = 30", "wind_m_per_s = 3", "case[1].wind_m_per_s"),
    ("location_pct = 30", "neutral_detuning = 1.0", "neutral_detuning"),
    ("[[case]]", "[random]\nn = 2\nu0_v_per_m = { range = [3000, 1000] }\n[[case]]",
     "random.u0_v_per_m.range"),
    ("[[case]]", "[random]\nn = 0\n[[case]]", "random.n"),
    ("[[case]]", "[grid]\nvt = []\n[[case]]", "grid.vt"),
]  # fmt: skip


@pytest.mark.parametrize(("old", "new", "key"), BAD)
def test_bad_plans_name_the_file_and_key(tmp_path: Path, old: str, new: str, key: str) -> None:
    assert old in TINY
    p = write_plan(tmp_path, TINY.replace(old, new, 1))
    with pytest.raises(FormatError) as err:
        load_plan(p)
    msg = str(err.value)
    assert str(p) in msg and key in msg and "\n" not in msg


def test_missing_base_scenario_file(tmp_path: Path) -> None:
    p = write_plan(tmp_path, 'seed = 1\n[base]\nscenario = "nowhere.toml"\n')
    with pytest.raises(FormatError, match=r"base\.scenario: scenario file not found"):
        load_plan(p)


def test_documented_example_plan_parses(tmp_path: Path) -> None:
    """The example plan in docs/relaytest.md is a valid plan (paths as from sample_records)."""
    root = Path(__file__).resolve().parents[1]
    doc = (root / "docs" / "relaytest.md").read_text(encoding="utf-8")
    text = doc.split("```toml\n", 1)[1].split("```", 1)[0]
    text = text.replace('"../', f'"{(root / "sample_records").as_posix()}/')
    plan = load_plan(write_plan(tmp_path, text))
    assert len(plan.cases) == 2 + 3 * 2 * 2
    assert plan.cases[1].scenario.reactor_local.mode == "given"
    assert plan.cases[0].scenario.fault.permanent
