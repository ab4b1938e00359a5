"""simulate(): scenario → records with roles + truth; write_event(): COMTRADE + truth JSON.

Checks are consistency checks between the truth the simulator reports, the timing the
scenario asks for (derived: a pole interrupts at the first current zero after contact
separation, i.e. within half a cycle; it recloses a dead time after contact separation),
and the channels the recorder model produces; the written files are read back by the
project's reader and by the independent PyPI ``comtrade`` package.
"""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np
import pytest

from recordscan.core import roles as R
from recordscan.synth import parse_scenario, simulate, write_event
from recordscan.synth.generate import SimulatedEvent

BASE = {
    "name": "gen-test",
    "seed": 5,
    "line": {
        "voltage_kv": 345,
        "frequency_hz": 60,
        "length_km": 120,
        "local_station": "Corrow",
        "remote_station": "Dunhallow",
        "sequence": {
            "r1_ohm_per_km": 0.037,
            "x1_ohm_per_km": 0.366,
            "c1_nf_per_km": 11.85,
            "r0_ohm_per_km": 0.26,
            "x0_ohm_per_km": 1.2,
            "c0_nf_per_km": 6.79,
        },
    },
    "fault": {"phase": "B", "location_pct": 40.0},
    "arc": {"u0_v_per_m": 3000.0},
    "breaker": {"dead_time_s": 0.6},
    "instruments": {
        "vt": "ideal",
        "rate_hz": 2000.0,
        "snr_db": "none",
        "record_length_s": 1.2,
        "pre_fault_s": 0.1,
    },
    "output": {"ends": ["local", "remote"]},
}
F_HZ = 60.0
CYCLE_S = 1.0 / F_HZ


def _scenario(**tables: dict) -> object:
    data = json.loads(json.dumps(BASE))
    for k, v in tables.items():
        if isinstance(v, dict) and isinstance(data.get(k), dict):
            if "phases" in v:
                data[k].pop("phase", None)
            data[k].update(v)
        else:
            data[k] = v
    return parse_scenario(data)


@pytest.fixture(scope="module")
def event() -> SimulatedEvent:
    return simulate(_scenario())


def test_truth_is_consistent_with_the_asked_timing(event: SimulatedEvent) -> None:
    tr = event.truth
    sc = event.scenario
    assert tr["event"] == "single_pole_trip" and tr["faulted_phase"] == "B"
    assert tr["fault_inception_s"] == pytest.approx(sc.instruments.pre_fault_s, abs=1e-9)
    inc = tr["fault_inception_s"]
    for end, delay in (("local", 0.0), ("remote", sc.breaker.remote_delay_s)):
        t_open = tr["pole_open_s"][end]["B"]
        sep = inc + sc.breaker.relay_time_s + delay + sc.breaker.opening_time_s
        # first current zero after contact separation (± pole scatter/2)
        slack = sc.breaker.pole_scatter_s / 2 + 1e-4
        assert sep - slack <= t_open <= sep + slack + CYCLE_S / 2
        assert set(tr["pole_open_s"][end]) == {"B"}
    sa = tr["secondary_arc_start_s"]
    assert sa == pytest.approx(max(p["B"] for p in tr["pole_open_s"].values()), abs=1e-9)
    rc = tr["reclose_s"]["local"]
    assert rc is not None
    # contact touch = contact separation + dead time; separation ≤ interruption
    assert rc - tr["pole_open_s"]["local"]["B"] == pytest.approx(
        sc.breaker.dead_time_s, abs=CYCLE_S / 2 + sc.breaker.pole_scatter_s
    )
    assert tr["dead_time_setting_s"] == sc.breaker.dead_time_s
    ext = tr["extinction_s"]
    assert tr["outcome"] in ("success", "reclose_onto_fault")
    for end in ("local", "remote"):
        closed = tr["reclose_s"][end] is not None
        assert tr["outcome_by_end"][end] == (tr["outcome"] if closed else "no_reclose")
    if tr["outcome"] == "success":
        assert ext is not None and sa < ext < rc
        assert tr["extinction_margin_s"] == pytest.approx(rc - ext)
        assert all(sa < t < ext for t in tr["restrike_s"])
    assert tr["secondary_arc_current_rms_a"] > 0


def test_records_have_roles_rates_and_shared_time(event: SimulatedEvent) -> None:
    assert set(event.records) == {"local", "remote"}
    sc = event.scenario
    n = math.floor(sc.instruments.record_length_s * sc.instruments.rate_hz + 1e-9) + 1
    for end, rec in event.records.items():
        assert rec.n_samples == n
        assert rec.sample_rate_hz == pytest.approx(2000.0)
        assert rec.t_s[0] == 0.0
        for role in (
            *R.V_LINE.values(),
            *R.I_LINE.values(),
            *R.POLE_CLOSED.values(),
            *R.TRIP.values(),
            R.RECLOSE,
            R.I_RESIDUAL,
        ):
            assert role in rec.roles, (end, role)
        assert rec.trigger_s == pytest.approx(event.truth["fault_inception_s"], abs=1e-9)
    assert event.records["local"].station == "Corrow"
    assert event.records["remote"].station == "Dunhallow"
    assert event.records["local"].start_ns == event.records["remote"].start_ns


def test_status_channels_follow_truth(event: SimulatedEvent) -> None:
    tr = event.truth
    br = event.scenario.breaker
    step = 1 / 2000.0
    for end, rec in event.records.items():
        pole = rec.digital_by_role("pole_b")
        assert pole is not None
        t_off = rec.t_s[np.flatnonzero(~pole.values)[0]]
        expect = tr["pole_open_s"][end]["B"] + br.aux_open_delay_s
        assert expect - 1e-9 <= t_off <= expect + step + 1e-9
        assert rec.digital_by_role("pole_a").values.all()
        trip = rec.digital_by_role("trip_b")
        t_trip = rec.t_s[np.flatnonzero(trip.values)[0]]
        assert tr["trip_command_s"][end] - 1e-9 <= t_trip <= tr["trip_command_s"][end] + step
        assert not rec.digital_by_role("trip_a").values.any()
        rc = rec.digital_by_role("reclose")
        t_rc = rec.t_s[np.flatnonzero(rc.values)[0]]
        assert t_rc == pytest.approx(tr["reclose_command_s"][end], abs=step + 1e-9)


def test_voltage_levels_match_rating_and_recovery_truth(event: SimulatedEvent) -> None:
    rec = event.records["local"]
    v_ph = 345e3 / math.sqrt(3)
    pre = rec.t_s < event.truth["fault_inception_s"] - 0.01
    for role in ("v_a", "v_b", "v_c"):
        rms = float(np.sqrt(np.mean(rec.analog_by_role(role).values[pre] ** 2)))
        # 1 pu sources, short uncompensated line: within ±5 % of rated (common practice band)
        assert rms == pytest.approx(v_ph, rel=0.05)
    tr = event.truth
    if tr["extinction_s"] is not None and tr["recovery_voltage_rms_v"]:
        a = tr["extinction_s"] + 3 * CYCLE_S
        b = tr["reclose_s"]["local"] - CYCLE_S
        win = (rec.t_s >= a) & (rec.t_s < b)
        vb = rec.analog_by_role("v_b").values[win]
        # ideal VT, no noise: the recorded open-phase RMS equals the simulator's
        assert float(np.sqrt(np.mean(vb**2))) == pytest.approx(
            tr["recovery_voltage_rms_v"], rel=0.05
        )


def test_deterministic_from_seed() -> None:
    sc = _scenario(instruments={"snr_db": 45.0, "rate_hz": 1920.0, "vt": "cvt"})
    a = simulate(sc)
    b = simulate(sc)
    for x, y in zip(a.records["local"].analog, b.records["local"].analog, strict=True):
        assert np.array_equal(x.values, y.values)
    c = simulate(dataclasses.replace(sc, seed=sc.seed + 1))
    va, vc = a.records["local"].analog[0].values, c.records["local"].analog[0].values
    assert not np.array_equal(va, vc)


def test_multi_phase_fault_trips_three_poles_without_reclose() -> None:
    ev = simulate(
        _scenario(
            fault={"kind": "two_phase_ground", "phases": ["A", "C"]},
            instruments={"record_length_s": 0.4},
            output={"ends": ["local"], "values": "primary"},
        )
    )
    tr = ev.truth
    assert tr["event"] == "three_pole_trip" and tr["outcome"] == "no_reclose"
    assert set(tr["pole_open_s"]["local"]) == {"A", "B", "C"}
    rec = ev.records["local"]
    assert not rec.digital_by_role("reclose").values.any()
    assert "trip_3p" in rec.roles
    assert all(ch.scaling.ps == "P" for ch in rec.analog)


def test_routine_trigger_has_no_fault() -> None:
    ev = simulate(_scenario(fault={"kind": "none"}, instruments={"record_length_s": 0.3}, arc={}))
    tr = ev.truth
    assert tr["event"] == "no_fault" and tr["fault_inception_s"] is None
    assert tr["pole_open_s"] == {"local": {}, "remote": {}}
    rec = ev.records["local"]
    assert all(rec.digital_by_role(r).values.all() for r in R.POLE_CLOSED.values())
    assert not any(rec.digital_by_role(r).values.any() for r in R.TRIP.values())
    assert rec.trigger_s == pytest.approx(0.1)


def test_write_event_reads_back(tmp_path: Path, event: SimulatedEvent) -> None:
    """Round trip through our reader and the independent PyPI ``comtrade`` reader.

    COMTRADE scaling (IEEE C37.111-2013, value = a·x + b in secondary units with the
    primary/secondary ratio given): the secondary values the other reader returns times the
    ratio equal our primary values within one LSB.
    """
    import comtrade

    from recordscan.io import read

    paths = write_event(event, tmp_path, revision="2013", data_format="BINARY")
    names = {p.name for p in paths}
    assert {"gen-test_local.cfg", "gen-test_remote.cfg", "gen-test.truth.json"} <= names
    truth = json.loads((tmp_path / "gen-test.truth.json").read_text(encoding="utf-8"))
    assert truth["files"]["local"][0] == "gen-test_local.cfg"
    assert truth["extinction_s"] == event.truth["extinction_s"]
    assert truth["scenario_echo"]["fault"]["phases"] == ["B"]
    rec = event.records["local"]
    back = read(tmp_path / "gen-test_local.cfg")
    assert back.roles == rec.roles
    # nanosecond timestamps: the package truncates them and says so (not a problem here)
    ref = comtrade.Comtrade(ignore_warnings=True)
    ref.load(str(tmp_path / "gen-test_local.cfg"), str(tmp_path / "gen-test_local.dat"))
    assert ref.analog_count == len(rec.analog)
    assert ref.status_count == len(rec.digital)
    for k, ch in enumerate(rec.analog):
        got = back.analog[k].values
        lsb = back.analog[k].scaling.a * back.analog[k].scaling.to_primary
        assert np.max(np.abs(got - ch.values)) <= lsb
        ratio = ch.scaling.primary / ch.scaling.secondary
        assert np.max(np.abs(np.asarray(ref.analog[k]) * ratio - ch.values)) <= 1.01 * lsb
    for k, ch in enumerate(rec.digital):
        assert np.array_equal(back.digital[k].values, ch.values)


@pytest.mark.parametrize(
    ("revision", "fmt", "cff"), [("1999", "ASCII", False), ("2013", "FLOAT32", True)]
)
def test_write_other_flavours(
    tmp_path: Path, event: SimulatedEvent, revision: str, fmt: str, cff: bool
) -> None:
    from recordscan.io import read

    one = SimulatedEvent(
        scenario=event.scenario, records={"local": event.records["local"]}, truth=event.truth
    )
    paths = write_event(one, tmp_path, revision=revision, data_format=fmt, cff=cff)
    first = paths[0]
    assert first.suffix == (".cff" if cff else ".cfg")
    back = read(first)
    assert back.provenance.revision == revision and back.provenance.data_format == fmt
    v = back.analog_by_role("v_b")
    assert v is not None
    lsb = v.scaling.a * v.scaling.to_primary
    assert np.max(np.abs(v.values - event.records["local"].analog_by_role("v_b").values)) <= lsb


def test_staged_test_arc_channels() -> None:
    ev = simulate(
        _scenario(
            instruments={"arc_channels": True, "record_length_s": 0.5},
            output={"ends": ["local"]},
        ),
        keep_raw=True,
    )
    rec = ev.records["local"]
    arc_i = rec.analog_by_role("arc_i")
    arc_v = rec.analog_by_role("arc_v")
    assert arc_i is not None and arc_v is not None
    raw = ev.raw
    t0 = raw.truth.inception_s - ev.truth["fault_inception_s"]  # record start, sim time
    a = ev.truth["secondary_arc_start_s"] + 0.02
    b = 0.45
    win = (rec.t_s > a) & (rec.t_s < b)
    raw_win = (raw.t_s - t0 > a) & (raw.t_s - t0 < b)
    # the recorder chain keeps the RMS of the fault-point current and voltage (the
    # anti-alias filter's gain at 60 Hz is 1 − 1e-6, derived from the Butterworth form)
    for ch, x in ((arc_i, raw.arc_i_a), (arc_v, raw.arc_v_v)):
        rms_rec = float(np.sqrt(np.mean(ch.values[win] ** 2)))
        rms_raw = float(np.sqrt(np.mean(np.asarray(x)[raw_win] ** 2)))
        assert rms_rec == pytest.approx(rms_raw, rel=0.03)


def test_options_load_current_travelling_wave_bus_vt_saturation() -> None:
    """Load given as a current: the pre-fault phase current is the asked one (derived from
    the series impedance of sources and line, charging neglected → within 3 %)."""
    ev = simulate(
        _scenario(
            sources={"load_current_a": 800.0},
            simulation={"line_model": "travelling_wave", "settle_s": 0.05},
            instruments={
                "ct_saturation": True,
                "bus_vt": True,
                "vt": "magnetic",
                "snr_db": 40.0,
                "record_length_s": 0.4,
            },
            breaker={"reclose": False},
            output={"ends": ["local"]},
        )
    )
    rec = ev.records["local"]
    for role in ("vbus_a", "vbus_b", "vbus_c"):
        assert role in rec.roles
    pre = rec.t_s < ev.truth["fault_inception_s"] - 0.01
    for role in ("i_a", "i_b", "i_c"):
        rms = float(np.sqrt(np.mean(rec.analog_by_role(role).values[pre] ** 2)))
        assert rms == pytest.approx(800.0, rel=0.03)
    assert ev.truth["outcome"] == "no_reclose"


def test_write_event_refuses_impossible_flavours(tmp_path: Path, event: SimulatedEvent) -> None:
    from recordscan.errors import FormatError

    with pytest.raises(FormatError, match="1999"):
        write_event(event, tmp_path, revision="1999", data_format="FLOAT32")
    with pytest.raises(FormatError, match="cff"):
        write_event(event, tmp_path, revision="1999", cff=True)
    assert not any(tmp_path.iterdir())
