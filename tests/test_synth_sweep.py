"""Random scenario corpora: determinism from a seed, coverage of the asked ranges, sizing.

The neutral-reactor check uses the closed form that cancels the interphase capacitance,
``X_n = X_p·(C1 − C0)/(3·(C0 − (1 − F)·C1))`` (Knudsen, CIGRE 1962; Kimbark, IEEE Trans.
PAS 83, 1964 — derived). Dead times are checked against the common-practice minimum
deionisation times ``10.5 + kV/34.5`` cycles and ``175 + 0.5·kV`` ms.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from recordscan.errors import FormatError, ModelError
from recordscan.synth.scenario import load_scenario
from recordscan.synth.scenario_toml import scenario_to_dict, scenario_to_toml
from recordscan.synth.sweep import (
    LINE_CLASSES,
    SweepRanges,
    draw_scenarios,
    load_ranges,
    ranges_from_dict,
)


@pytest.fixture(scope="module")
def corpus() -> tuple:
    return draw_scenarios(300, seed=20261202)


def test_same_seed_same_scenarios_other_seed_others() -> None:
    a = draw_scenarios(25, seed=7)
    b = draw_scenarios(25, seed=7)
    c = draw_scenarios(25, seed=8)
    assert a == b
    assert a != c
    assert draw_scenarios(5, seed=7) == a[:5]
    assert len({s.name for s in a}) == 25


def test_corpus_covers_the_asked_ranges(corpus: tuple) -> None:
    kv = {round(s.line.inline.voltage_v / 1e3) for s in corpus}
    assert kv == {345, 400, 500, 765}
    assert {s.line.inline.frequency_hz for s in corpus} == {50.0, 60.0}
    lengths = [s.line.inline.length_m / 1e3 for s in corpus]
    assert 80.0 <= min(lengths) and max(lengths) <= 400.0
    assert {s.instruments.vt for s in corpus} == {"cvt", "ideal", "magnetic"}
    snr = [s.instruments.snr_db for s in corpus]
    assert 40.0 <= min(snr) and max(snr) <= 60.0
    rates = {s.instruments.rate_hz for s in corpus}
    assert min(rates) == 960.0 and max(rates) == 10000.0
    kinds = {s.fault.kind for s in corpus}
    assert kinds == {"single_phase", "two_phase_ground", "three_phase", "none"}
    assert any(s.fault.permanent for s in corpus)
    assert any(s.reactor_local.mode == "given" for s in corpus)
    assert any(s.reactor_local.mode == "none" for s in corpus)
    assert any(s.reactor_local.x_neutral_ohm > 0 for s in corpus)
    assert {(s.output.revision, s.output.data_format, s.output.cff) for s in corpus} >= {
        ("2013", "BINARY", True),
        ("1999", "ASCII", False),
    }
    assert any(len(s.output.ends) == 2 for s in corpus)
    assert any(not s.breaker.reclose for s in corpus)
    for s in corpus:
        assert s.instruments.pre_fault_s < s.instruments.record_length_s <= 3.0
        k = s.line.inline.voltage_v / 1e3
        assert s.breaker.dead_time_s >= max((10.5 + k / 34.5) / 60, 0.175 + 0.0005 * k) - 1e-9


def test_restrike_withstand_draws_leave_every_other_draw_unchanged() -> None:
    # The saturation and scatter of the restrike withstand come from a side generator keyed
    # on each scenario's seed: switching them off gives the same corpus otherwise.
    import dataclasses

    on = draw_scenarios(40, seed=2026)
    off = draw_scenarios(
        40,
        seed=2026,
        ranges=SweepRanges(p_recovery_saturation=0.0, restrike_scatter_pu=(0.0, 0.0)),
    )
    plain = {"recovery_saturation_s": None, "recovery_plateau_s": None, "restrike_scatter_pu": 0.0}
    for a, b in zip(on, off, strict=True):
        assert b.arc.recovery_saturation_s is None and b.arc.restrike_scatter_pu == 0.0
        assert dataclasses.replace(a, arc=dataclasses.replace(a.arc, **plain)) == b
    sat = [s.arc.recovery_saturation_s for s in draw_scenarios(300, seed=20261202)]
    drawn = [x for x in sat if x is not None]
    r = SweepRanges()
    assert 0.55 < len(drawn) / len(sat) < 0.85  # p_recovery_saturation = 0.7
    assert r.recovery_saturation_s[0] <= min(drawn) and max(drawn) <= r.recovery_saturation_s[1]
    scatter = [s.arc.restrike_scatter_pu for s in draw_scenarios(50, seed=3)]
    lo, hi = r.restrike_scatter_pu
    assert all(lo <= x <= hi for x in scatter)
    # issue 4 asks for 0–4 restrikes per event: the corpus bound, an integer in range files
    assert {s.arc.max_restrikes for s in on} == {4}
    assert ranges_from_dict({"max_restrikes": 3}).max_restrikes == 3
    with pytest.raises(FormatError, match=r"sweep\.max_restrikes"):
        ranges_from_dict({"max_restrikes": 2.5})


def test_tuned_neutral_reactors_follow_the_closed_form() -> None:
    r = SweepRanges(p_compensated=1.0, p_neutral_reactor=1.0, neutral_detuning=(1.0, 1.0))
    for s in draw_scenarios(40, seed=3, ranges=r):
        if s.reactor_local.mode != "given":
            continue  # too short to compensate
        il = s.line.inline
        w = 2 * math.pi * il.frequency_hz
        c1 = il.c1_f_per_m * il.length_m / 2  # each end's bank compensates half the line
        c0 = il.c0_f_per_m * il.length_m / 2
        x_p = s.reactor_local.x_phase_ohm
        f = 1.0 / (x_p * w * c1)
        assert 0.55 - 1e-9 <= f <= 0.85 + 1e-9
        x_n = x_p * (c1 - c0) / (3 * (c0 - (1 - f) * c1))
        assert s.reactor_local.x_neutral_ohm == pytest.approx(x_n, rel=1e-9)


def test_drawn_scenarios_survive_toml(tmp_path: Path, corpus: tuple) -> None:
    for s in corpus[:30]:
        p = tmp_path / f"{s.name}.toml"
        p.write_text(scenario_to_toml(s), encoding="utf-8")
        back = load_scenario(p)
        _same(scenario_to_dict(back), scenario_to_dict(s))


def _same(a: object, b: object) -> None:
    """Equal up to the rounding of unit conversions (per km ↔ per m)."""
    if isinstance(a, dict) and isinstance(b, dict):
        assert a.keys() == b.keys()
        for k in a:
            _same(a[k], b[k])
    elif isinstance(a, float) and isinstance(b, float):
        assert math.isclose(a, b, rel_tol=1e-12)
    else:
        assert a == b


def test_line_classes_are_plausible() -> None:
    """C1/C0 of EHV single circuits 1.5–1.8 and C1 11–14.5 nF/km (common practice)."""
    for lc in LINE_CLASSES.values():
        assert 11e-12 <= lc.c1_f_per_m <= 14.5e-12
        assert 1.5 <= lc.c1_f_per_m / lc.c0_f_per_m <= 1.8
        # X0/X1 of EHV lines ≈ 2.5–3.5 (common practice)
        assert 2.5 <= lc.l0_h_per_m / lc.l1_h_per_m <= 3.5


def test_range_files(tmp_path: Path) -> None:
    p = tmp_path / "r.toml"
    p.write_text("[sweep]\nvoltage_kv = [500]\nlength_km = [100, 120]\n", encoding="utf-8")
    r = load_ranges(p)
    assert r.voltage_kv == (500,) and r.length_km == (100.0, 120.0)
    assert all(s.line.inline.voltage_v == 500e3 for s in draw_scenarios(10, seed=1, ranges=r))
    with pytest.raises(FormatError, match=r"sweep\.lenght_km"):
        ranges_from_dict({"lenght_km": [1, 2]}, where="r.toml")
    with pytest.raises(FormatError, match=r"sweep\.length_km"):
        ranges_from_dict({"length_km": [300, 100]}, where="r.toml")
    with pytest.raises(FormatError, match="voltage class"):
        ranges_from_dict({"voltage_kv": [220]}, where="r.toml")
    with pytest.raises(ModelError):
        draw_scenarios(-1, seed=0)


def test_fault_resistance_is_never_rounded_to_zero() -> None:
    # the simulator rejects a fault resistance of 0 ohm (seed 23 of the accuracy harness once
    # drew 0.004 ohm, which rounded to 0.0)
    r = SweepRanges(fault_resistance_ohm=(0.0, 0.004))
    for s in draw_scenarios(30, seed=5, ranges=r):
        if s.fault.kind != "none":
            assert s.fault.resistance_ohm >= 0.01
