"""Scenario files: schema, errors naming file and key, round trip, default dead times.

Dead-time defaults are checked against two minimum-deionisation rules of the trade
(common practice): ``10.5 + kV/34.5`` cycles of 60 Hz (reproduced in IEEE Std C37.104,
from memory) and ``175 + 0.5·kV`` ms.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from recordscan.errors import FormatError, MissingFileError
from recordscan.synth.scenario import (
    default_dead_time_s,
    load_scenario,
    min_deionisation_time_s,
    parse_scenario,
)
from recordscan.synth.scenario_toml import scenario_to_toml

REPO = Path(__file__).resolve().parents[1]
LINES = REPO / "sample_records" / "lines"

INLINE = """
name = "inline-test"
seed = 11
[line]
voltage_kv = 345
frequency_hz = 60
length_km = 120
local_station = "Corrow"
remote_station = "Dunhallow"
[line.sequence]
r1_ohm_per_km = 0.037
x1_ohm_per_km = 0.366
c1_nf_per_km = 11.85
r0_ohm_per_km = 0.26
x0_ohm_per_km = 1.2
c0_nf_per_km = 6.79
[fault]
phase = "B"
location_pct = 30
[instruments]
vt = "ideal"
rate_hz = 2000
snr_db = "none"
record_length_s = 0.5
pre_fault_s = 0.1
[output]
ends = ["local", "remote"]
revision = "1999"
format = "ASCII"
"""


def _write(tmp_path: Path, text: str, name: str = "s.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_inline_scenario_parses_with_si_values(tmp_path: Path) -> None:
    s = load_scenario(_write(tmp_path, INLINE))
    il = s.line.inline
    assert il is not None
    assert il.voltage_v == 345e3 and il.length_m == 120e3
    assert il.c1_f_per_m == pytest.approx(11.85e-12)
    assert il.x1_ohm_per_m == pytest.approx(0.366e-3)
    assert s.fault.phases == ("B",) and s.fault.kind == "single_phase"
    assert s.instruments.snr_db is None
    assert s.output.ends == ("local", "remote")
    # defaults
    assert s.breaker.dead_time_s is None
    assert s.arc.elongation == "johns"


def test_toml_round_trip(tmp_path: Path) -> None:
    s = load_scenario(_write(tmp_path, INLINE))
    text = scenario_to_toml(s, base_dir=tmp_path)
    s2 = load_scenario(_write(tmp_path, text, "again.toml"))
    assert s2 == s.__class__(**{**s.__dict__, "source_path": s2.source_path})


def test_line_file_resolved_relative_to_scenario(tmp_path: Path) -> None:
    d = tmp_path / "sc"
    d.mkdir()
    rel = Path("..") / "lines" / "x.toml"
    s = load_scenario(_write(d, f'[line]\nfile = "{rel.as_posix()}"\n'))
    assert s.line.file == str(d / rel)


@pytest.mark.parametrize(
    ("text", "key"),
    [
        ("[line]\nfile='l.toml'\n[fault]\nlocation_pct = 150\n", "fault.location_pct"),
        ("[line]\nfile='l.toml'\n[fault]\nphase = 'D'\n", "fault.phases"),
        ("[line]\nfile='l.toml'\n[fault]\nkind = 'two_phase_ground'\nphase='A'\n", "fault.phases"),
        ("[line]\nfile='l.toml'\n[breaker]\ndead_tme_s = 1.0\n", "breaker.dead_tme_s"),
        ("[line]\nfile='l.toml'\n[instruments]\nvt = 'optical'\n", "instruments.vt"),
        ("[line]\nfile='l.toml'\n[instruments]\nrate_hz = 'fast'\n", "instruments.rate_hz"),
        ("[line]\nfile='l.toml'\n[output]\nrevision = 1999\ncff = true\n", "output.cff"),
        ("[line]\nfile='l.toml'\n[output]\nends = ['middle']\n", "output.ends"),
        ("[line]\nfile='l.toml'\nseed = -1\n", "seed"),
        ("[line]\nvoltage_kv = 500\n", "line.frequency_hz"),
        ("[line]\nfile='l.toml'\nlength_km = 3\n", "line.length_km"),
        ("[line]\nfile='l.toml'\n[reactors.local]\nmode = 'given'\n", "reactors.local.mode"),
        ("[line]\nfile='l.toml'\n[arc]\nrestrike_scatter_pu = 0.5\n", "arc.restrike_scatter_pu"),
        ("[line]\nfile='l.toml'\n[arc]\nmax_restrikes = -1\n", "arc.max_restrikes"),
        ("[line]\nfile='l.toml'\n[arc]\nrecovery_plateau_s = -1\n", "arc.recovery_plateau_s"),
        ("[line]\nfile='l.toml'\n[arc]\nrecovery_saturation_s = 0\n", "arc.recovery_saturation_s"),
    ],
)
def test_bad_scenario_names_file_and_key(tmp_path: Path, text: str, key: str) -> None:
    p = _write(tmp_path, text)
    with pytest.raises(FormatError) as err:
        load_scenario(p)
    msg = str(err.value)
    assert str(p) in msg and key in msg
    assert "\n" not in msg


def test_missing_line_invalid_toml_and_missing_file(tmp_path: Path) -> None:
    with pytest.raises(FormatError, match=r"\[line\] is required"):
        load_scenario(_write(tmp_path, "name = 'x'\n"))
    with pytest.raises(FormatError, match="not valid TOML"):
        load_scenario(_write(tmp_path, "[line\n"))
    with pytest.raises(MissingFileError):
        load_scenario(tmp_path / "nothing.toml")
    with pytest.raises(FormatError, match="c0_nf_per_km"):
        parse_scenario(
            {
                "line": {
                    "voltage_kv": 500,
                    "frequency_hz": 60,
                    "length_km": 100,
                    "sequence": {
                        "r1_ohm_per_km": 0.02,
                        "x1_ohm_per_km": 0.3,
                        "c1_nf_per_km": 12,
                        "r0_ohm_per_km": 0.2,
                        "x0_ohm_per_km": 1.0,
                        "c0_nf_per_km": 13,
                    },
                }
            }
        )


@pytest.mark.parametrize(
    ("kv", "cycles", "ms"),
    [
        # 10.5 + kV/34.5 cycles (common practice); arithmetic at 60 Hz
        (345.0, 20.50, 341.7),
        (500.0, 24.99, 416.5),
        (765.0, 32.67, 544.6),
    ],
)
def test_deionisation_rule_arithmetic(kv: float, cycles: float, ms: float) -> None:
    assert 10.5 + kv / 34.5 == pytest.approx(cycles, abs=0.005)
    rule_a = (10.5 + kv / 34.5) / 60.0
    assert rule_a * 1e3 == pytest.approx(ms, abs=0.05)
    rule_b = 0.175 + 0.0005 * kv  # 175 + 0.5·kV ms (common practice)
    assert min_deionisation_time_s(kv * 1e3) == pytest.approx(max(rule_a, rule_b))


@pytest.mark.parametrize("kv", [345.0, 400.0, 500.0, 765.0, 1000.0])
@pytest.mark.parametrize("line_setting", [None, 0.3, 0.5, 1.0])
def test_default_dead_time_never_shorter_than_deionisation(
    kv: float, line_setting: float | None
) -> None:
    d = default_dead_time_s(kv * 1e3, line_setting)
    assert d >= (10.5 + kv / 34.5) / 60.0
    assert d >= 0.175 + 0.0005 * kv
    if line_setting is not None and line_setting >= d:
        assert d == line_setting


def test_demo_lines_default_dead_times_respect_rules() -> None:
    from recordscan.physics.line import load_line

    files = sorted(LINES.glob("*.toml"))
    assert files, "demo line files missing"
    for f in files:
        line = load_line(f)
        kv = line.voltage_v / 1e3
        d = default_dead_time_s(line.voltage_v, line.dead_time_s)
        assert d >= max((10.5 + kv / 34.5) / 60.0, 0.175 + 0.0005 * kv), f.name
        assert math.isfinite(d)
