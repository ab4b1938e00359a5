"""The verifier against a synthetic relay built from the truth.

The "relay" here is constructed in the test from known truth with injected latencies,
premature permits and misses; the verifier must report exactly what was injected (counts
exactly, latencies within one sample of the relay's record). The one-cycle floor of a
full-cycle window detector is derived: 1/f (16.7 ms at 60 Hz, 20 ms at 50 Hz).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from recordscan.core.record import Record, StatusChannel
from recordscan.relaytest.manifest import (
    TruthCase,
    load_manifest,
    manifest_csv,
    manifest_json,
)
from recordscan.relaytest.verify import (
    AcceptanceLimits,
    RelayResponse,
    permit_intervals,
    response_from_record,
    responses_from_csv,
    verify,
)


def _truth(
    k: int,
    *,
    permanent: bool = False,
    restrikes: tuple[float, ...] = (),
    ext: float | None = 0.45,
    f: float = 60.0,
) -> TruthCase:
    return TruthCase(
        case=f"case-{k:03d}",
        file=f"case-{k:03d}.cfg",
        frequency_hz=f,
        inception_s=0.1,
        permanent=permanent,
        secondary_arc_start_s=0.16,
        restrike_s=restrikes,
        extinction_s=None if permanent else ext,
        latest_permit_s=0.9,
    )


def test_each_verdict_once() -> None:
    cases = [
        _truth(1),  # correct permit, 20 ms latency
        _truth(2, restrikes=(0.30, 0.38)),  # premature between restrikes
        _truth(3),  # missed
        _truth(4, permanent=True),  # correct block
        _truth(5, permanent=True),  # premature on a permanent fault
        _truth(6),  # no response
        _truth(7, ext=1.2),  # arc outlives the dead time: block
    ]
    responses = {
        "case-001": RelayResponse("case-001", ((0.47, None),)),
        "case-002": RelayResponse("case-002", ((0.33, 0.36), (0.47, None))),
        "case-003": RelayResponse("case-003", ()),
        "case-004": RelayResponse("case-004", ()),
        "case-005": RelayResponse("case-005", ((0.6, None),)),
        "case-007": RelayResponse("case-007", ((1.25, None),)),
        "case-099": RelayResponse("case-099", ((0.5, None),)),
    }
    rep = verify(cases, responses)
    v = {x.case: x.verdict for x in rep.verdicts}
    assert v == {
        "case-001": "correct_permit",
        "case-002": "premature_permit",
        "case-003": "missed_permit",
        "case-004": "correct_block",
        "case-005": "premature_permit",
        "case-006": "no_response",
        "case-007": "correct_block",
    }
    assert rep.counts["premature_permit"] == 2
    assert rep.unknown_cases == ("case-099",)
    assert not rep.passed
    d = rep.to_dict()
    # the dangerous failure is always listed first
    assert [c["verdict"] for c in d["cases"][:2]] == ["premature_permit"] * 2
    assert "between restrikes 1 and 2" in next(
        c["detail"] for c in d["cases"] if c["case"] == "case-002"
    )
    lat = next(x for x in rep.verdicts if x.case == "case-001")
    assert lat.latency_s == pytest.approx(0.02)
    assert lat.latency_cycles == pytest.approx(1.2)


def test_guidance_states_derived_one_cycle_floor() -> None:
    # derived: a full-cycle window needs 1/f to fill — 16.7 ms at 60 Hz, 20.0 ms at 50 Hz
    rep = verify([_truth(1), _truth(2, f=50.0)], {})
    text = " ".join(rep.guidance)
    assert "16.7 ms at 60 Hz" in text and "20.0 ms at 50 Hz" in text and "derived" in text


@settings(max_examples=40, deadline=None)
@given(
    lat_cycles=st.lists(st.floats(0.2, 6.0), min_size=5, max_size=25),
    rate=st.sampled_from([960.0, 1920.0, 4000.0, 10_000.0]),
    offset=st.floats(-0.4, 0.4),
    seed=st.integers(0, 2**31 - 1),
)
def test_injected_relay_is_reported_exactly(
    lat_cycles: list[float], rate: float, offset: float, seed: int
) -> None:
    """A synthetic relay record at its own rate and clock offset; injected faults recovered."""
    rng = np.random.default_rng(seed)
    f = 50.0
    cases, records, injected = [], {}, {}
    for k, lc in enumerate(lat_cycles):
        kind = rng.choice(["ok", "premature", "miss", "block"], p=[0.55, 0.15, 0.15, 0.15])
        truth = _truth(k, permanent=(kind == "block"), restrikes=(0.25,), f=f)
        cases.append(truth)
        # the relay's own record (own rate, own clock) covers the whole playback
        t_rel = np.arange(0.0, 2.5, 1.0 / rate)
        shift = offset - 0.5  # relay clock → playback time
        t_play = t_rel + shift
        if kind == "ok":
            permit = t_play >= truth.extinction_s + lc / f
        elif kind == "premature":
            permit = t_play >= 0.2  # before restrike and extinction
        else:
            permit = np.zeros_like(t_rel, dtype=bool)
        injected[truth.case] = (kind, lc)
        rec = Record(
            t_s=t_rel, digital=(StatusChannel("PERMIT", permit, role="permit"),), frequency_hz=f
        )
        # the relay's inception on its own clock is the playback inception minus the shift
        records[truth.case] = response_from_record(
            rec, truth, detected_inception_s=truth.inception_s - shift
        )
    rep = verify(cases, records, limits=AcceptanceLimits(max_latency_cycles=10))
    expect = {
        "ok": "correct_permit",
        "premature": "premature_permit",
        "miss": "missed_permit",
        "block": "correct_block",
    }
    for v in rep.verdicts:
        kind, lc = injected[v.case]
        assert v.verdict == expect[kind]
        if kind == "ok":
            assert v.latency_s == pytest.approx(lc / f, abs=1.0 / rate + 1e-9)
    n_prem = sum(k == "premature" for k, _ in injected.values())
    assert rep.counts["premature_permit"] == n_prem


def test_latency_limit_fails_the_set() -> None:
    cases = [_truth(1), _truth(2)]
    resp = {
        "case-001": RelayResponse("case-001", ((0.45 + 2.0 / 60, None),)),
        "case-002": RelayResponse("case-002", ((0.45 + 4.0 / 60, None),)),
    }
    rep = verify(cases, resp, limits=AcceptanceLimits(max_latency_cycles=3))
    crit = {c[0]: c[3] for c in rep.criteria}
    assert crit["detection latency"] is False and crit["premature permits"] is True
    assert rep.latency_stats_s["max"] == pytest.approx(4.0 / 60)


def test_permit_intervals_edges() -> None:
    t = np.arange(10) * 0.1
    x = np.array([1, 1, 0, 0, 1, 1, 1, 0, 1, 1], dtype=bool)
    assert permit_intervals(t, x) == ((0.0, 0.2), (0.4, pytest.approx(0.7)), (0.8, None))


def test_manifest_round_trip_json_and_csv(tmp_path) -> None:
    cases = [_truth(1, restrikes=(0.3, 0.35)), _truth(2, permanent=True)]
    (tmp_path / "m.json").write_text(manifest_json(cases, meta={"seed": 7}))
    (tmp_path / "m.csv").write_text(manifest_csv(cases))
    a, meta = load_manifest(tmp_path / "m.json")
    b, _ = load_manifest(tmp_path / "m.csv")
    assert meta["seed"] == 7
    assert [c.to_dict() for c in a] == [c.to_dict() for c in cases]
    assert [c.restrike_s for c in b] == [c.restrike_s for c in cases]
    assert [c.expected for c in b] == ["permit", "block"]
    json.loads((tmp_path / "m.json").read_text())


def test_csv_responses_with_relay_clock(tmp_path) -> None:
    cases = [_truth(1)]
    p = tmp_path / "r.csv"
    p.write_text("case,permit_s,inception_s\ncase-001,1.47,1.1\n")
    resp = responses_from_csv(p, cases)
    assert resp["case-001"].first_permit_s == pytest.approx(0.47)
    rep = verify(cases, resp)
    assert rep.verdicts[0].verdict == "correct_permit"


def test_bad_csv_is_a_format_error(tmp_path) -> None:
    from recordscan.errors import FormatError

    p = tmp_path / "bad.csv"
    p.write_text("id,time\n1,2\n")
    with pytest.raises(FormatError, match=r"bad\.csv"):
        responses_from_csv(p, [])
