"""Channel roles: automatic assignment over many naming styles, recorder profiles, reports.

Sources of the naming conventions checked here:

- IEEE C37.111-2013 (COMTRADE), channel definition lines: the ``ph`` field is a free
  alphanumeric phase identification (examples A, B, C, N) — from memory.
- IEC 60445:2017, conductor identification: L1, L2, L3 for line conductors, N for neutral —
  from memory.
- IEEE C37.2-2008, device function numbers: 52 = AC circuit breaker, 52a / 52b = breaker
  auxiliary contact closed / open when the breaker is closed, 79 = reclosing relay — from
  memory.
- R/S/T phase letters, "3I0" residual current (Fortescue's zero-sequence current times
  three), bus/line VT wording ("BUS", "BB", "SS" vs "LINE"): common practice.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from recordscan.core import roles as R
from recordscan.core.record import AnalogChannel, Provenance, Record, StatusChannel
from recordscan.errors import FormatError, MissingFileError, RoleError
from recordscan.io.profiles import (
    Profile,
    assign_roles,
    classify_channel,
    load_profile,
    parse_profile,
    role_report,
)

N = 8
T = np.arange(N) / 1000.0


def _a(name: str, unit: str = "V", ph: str = "", circuit: str = "", idx: int = 0):
    return AnalogChannel(
        name, np.arange(N, dtype=float), unit=unit, source_phase=ph, circuit=circuit,
        source_index=idx,
    )  # fmt: skip


def _d(name: str, values=None, ph: str = "", idx: int = 0) -> StatusChannel:
    vals = np.array([1, 1, 1, 0, 0, 0, 1, 1], bool) if values is None else values
    return StatusChannel(name, vals, source_phase=ph, source_index=idx)


def _rec(analog=(), digital=(), path: str = "") -> Record:
    return Record(t_s=T, analog=analog, digital=digital, provenance=Provenance(path=path))


# --------------------------------------------------------------------- naming styles
ANALOG_CASES = [
    # (name, unit, ph field, role, canonical phase)         style (source)
    ("VA", "V", "", "v_a", "A"),  # A/B/C letters (C37.111 ph examples, from memory)
    ("Va line", "V", "", "v_a", "A"),  # common practice
    ("VAN", "V", "", "v_a", "A"),  # phase-to-neutral suffix, common practice
    ("V A-N", "V", "", "v_a", "A"),  # common practice
    ("U_L1", "V", "", "v_a", "A"),  # IEC 60445 L1/L2/L3 (from memory), U for voltage
    ("UL2", "V", "", "v_b", "B"),
    ("I L2", "A", "", "i_b", "B"),
    ("IL3", "A", "", "i_c", "C"),
    ("LINE 1 V A", "V", "", "v_a", "A"),  # the '1' is the bay, 'A' the phase
    ("LINE 1 V C", "V", "", "v_c", "C"),
    ("UR", "V", "", "v_a", "A"),  # R/S/T, common practice
    ("US", "V", "", "v_b", "B"),
    ("IT", "A", "", "i_c", "C"),
    ("I", "A", "2", "i_b", "B"),  # phase only in the cfg ph field as 1/2/3
    ("Current", "A", "L3", "i_c", "C"),
    ("V", "V", "c", "v_c", "C"),
    ("I3", "A", "", "i_c", "C"),  # 1/2/3 style in the name
    ("IN", "A", "", "i_n", "N"),  # residual, common practice
    ("3I0", "A", "", "i_n", "N"),
    ("I RES", "A", "", "i_n", "N"),
    ("VN", "V", "", "v_n", "N"),
    ("3U0", "V", "", "v_n", "N"),
    ("I", "A", "N", "i_n", "N"),
    ("VA BUS", "V", "", "vbus_a", "A"),  # bus VT, common practice
    ("BB U L3", "V", "", "vbus_c", "C"),
    ("SS VB", "V", "", "vbus_b", "B"),
    ("VB", "V", "", "v_b", "B"),
    ("LINE VT A", "V", "", "v_a", "A"),  # 'VT' is the instrument, not phase T
    ("ARC I", "A", "", "arc_i", None),  # staged-test fault-point arc quantities
    ("FAULT ARC V", "V", "", "arc_v", None),
    ("REACTOR NEUTRAL I", "A", "", "i_nr", "N"),
    ("INR", "A", "", "i_nr", "N"),
]


@pytest.mark.parametrize(("name", "unit", "ph", "role", "phase"), ANALOG_CASES)
def test_analog_naming_styles(name: str, unit: str, ph: str, role: str, phase: str) -> None:
    cand = classify_channel(_a(name, unit, ph))
    assert (cand.role, cand.phase) == (role, phase)
    rec = assign_roles(_rec(analog=(_a(name, unit, ph),)))
    assert rec.analog[0].role == role
    assert rec.analog[0].phase == phase
    assert rec.analog[0].source_phase == ph  # the file's own text is kept


DIGITAL_CASES = [
    # (name, ph, role, inverted)
    ("52a A", "", "pole_a", False),  # IEEE C37.2 52a contact: closed when breaker closed
    ("52b B", "", "pole_b", True),  # 52b contact: open when breaker closed → inverted
    ("CB POLE A CLOSED", "", "pole_a", False),
    ("BKR C OPEN", "", "pole_c", True),
    ("POLE L2 OPEN", "", "pole_b", True),
    ("CB CLOSED", "T", "pole_c", False),  # phase from the ph field
    ("TRIP A", "", "trip_a", False),
    ("TR L1", "", "trip_a", False),
    ("Trip S", "", "trip_b", False),
    ("TRIP 3PH", "", "trip_3p", False),
    ("TRIP 3 POLE", "", "trip_3p", False),
    ("79 CLOSE", "", "reclose", False),  # IEEE C37.2 device 79 = reclosing relay
    ("AR CLOSE", "", "reclose", False),
    ("RECLOSE", "", "reclose", False),
    ("RECLOSE PERMIT", "", "permit", False),
    ("ARC EXTINCT", "", "permit", False),
]


@pytest.mark.parametrize(("name", "ph", "role", "inverted"), DIGITAL_CASES)
def test_digital_naming_styles(name: str, ph: str, role: str, inverted: bool) -> None:
    raw = np.array([1, 1, 1, 0, 0, 0, 1, 1], bool)
    rec = assign_roles(_rec(digital=(_d(name, raw, ph, idx=4),)))
    ch = rec.digital[0]
    assert ch.role == role
    expected = ~raw if inverted else raw
    np.testing.assert_array_equal(ch.values, expected)
    steps = [s for s in rec.processing if s.startswith("inverted digital channel 4 ")]
    assert len(steps) == (1 if inverted else 0)
    assert role_report(rec).inverted == ((name,) if inverted else ())


@pytest.mark.parametrize(
    ("channel", "why"),
    [
        (_a("VAB"), "phase-to-phase"),
        (_a("U L1-L2"), "phases A, B"),
        (_a("FREQ", "Hz"), "not a voltage or current"),
        (_a("IA", "V"), "disagrees"),  # unit says volts, name says current
        (_a("Ia", "A", "B"), "phase field says B"),
        (_a("I0", "A"), "zero-sequence"),  # I0 may be IN/3: never guessed
        (_a("DC SUPPLY", "V"), "no phase"),
        (_d("CB A"), "sense"),
        (_d("TRIP"), "trip without a phase"),
        (_d("AR BLOCK"), "not recognised"),
        (_d("79 LOCKOUT CLOSE"), "not the command"),
        (_d("POLE DISCREPANCY"), "not recognised"),
        (_d("50BF TRIP A"), "not the trip command"),  # IEEE C37.2 50BF: breaker failure
        (_d("DTT RX TRIP"), "not the trip command"),  # direct transfer trip received
        (_d("TRIP CIRCUIT A FAIL"), "not the trip command"),
    ],
)
def test_unclear_channels_get_no_role(channel, why: str) -> None:
    cand = classify_channel(channel)
    assert cand.role is None
    assert why in cand.reason


# --------------------------------------------------------------------- whole records
def _bay_record(prefix: str = "", path: str = "") -> tuple[AnalogChannel | StatusChannel, ...]:
    return (
        tuple(_a(f"{prefix}V{p}", "V", idx=k + 1) for k, p in enumerate("ABC"))
        + tuple(_a(f"{prefix}I{p}", "A", idx=k + 4) for k, p in enumerate("ABC"))
        + (_a(f"{prefix}IN", "A", idx=7),)
    )


def _full_record(path: str = "rec.cfg") -> Record:
    analog = _bay_record()
    digital = (
        _d("BKR A OPEN", idx=1),
        _d("BKR B OPEN", idx=2),
        _d("BKR C OPEN", idx=3),
        _d("TRIP A", idx=4),
        _d("TRIP B", idx=5),
        _d("TRIP C", idx=6),
        _d("79 CLOSE", idx=7),
    )
    return _rec(analog, digital, path)


def test_full_record_gets_every_role() -> None:
    rec = assign_roles(_full_record())
    assert rec.roles == {
        "v_a": "VA", "v_b": "VB", "v_c": "VC", "i_a": "IA", "i_b": "IB", "i_c": "IC",
        "i_n": "IN", "pole_a": "BKR A OPEN", "pole_b": "BKR B OPEN", "pole_c": "BKR C OPEN",
        "trip_a": "TRIP A", "trip_b": "TRIP B", "trip_c": "TRIP C", "reclose": "79 CLOSE",
    }  # fmt: skip
    rep = role_report(rec)
    assert rep.ok and rep.message() == ""
    assert rep.inverted == ("BKR A OPEN", "BKR B OPEN", "BKR C OPEN")
    assert rec.require("v_a", "i_n")[1].name == "IN"


def test_two_bays_are_ambiguous_and_reported(tmp_path: Path) -> None:
    analog = (
        _a("LINE 1 V A", idx=1),
        _a("LINE 2 V A", idx=2),
        _a("LINE 1 V B", idx=3),
        _a("P MW", "W", idx=4),
    )
    rec = assign_roles(_rec(analog, path="ashcombe.cfg"))
    assert [ch.role for ch in rec.analog] == [None, None, "v_b", None]
    assert [ch.phase for ch in rec.analog[:3]] == ["A", "A", "B"]
    rep = role_report(rec)
    assert not rep.ok
    assert list(rep.ambiguous) == ["v_a"]
    assert [i.name for i in rep.ambiguous["v_a"]] == ["LINE 1 V A", "LINE 2 V A"]
    assert [i.name for i in rep.unassigned] == ["P MW"]
    msg = rep.message()
    assert msg.startswith("ashcombe.cfg: 1 channel(s) without a role, 1 role(s)")
    assert "ambiguous v_a: analog 1 'LINE 1 V A', analog 2 'LINE 2 V A'" in msg
    assert "--profile" in msg and "[analog]" in msg
    # the example in the message is a valid profile that settles the ambiguity
    (tmp_path / "example.toml").write_text(rep.profile_example(), encoding="utf-8")
    fixed = assign_roles(rec, profile=tmp_path / "example.toml")
    assert fixed.roles["v_a"] == "LINE 1 V A"


def test_zero_sequence_sibling_blocks_digit_phases() -> None:
    # I0, I1, I2 are sequence components, not phases 1/2/3 (Fortescue): no guess.
    rec = assign_roles(_rec((_a("I0", "A"), _a("I1", "A"), _a("I2", "A"))))
    assert [ch.role for ch in rec.analog] == [None, None, None]
    assert all("sequence" in i.reason for i in role_report(rec).unassigned[1:])


def test_candidate_for_a_taken_role_is_reported() -> None:
    base = _rec((_a("VA"), _a("VA LINE 2")))
    rec = dataclasses_replace_role(base, 0, "v_a")
    out = assign_roles(rec)
    assert out.analog[0].role == "v_a" and out.analog[1].role is None
    assert "already has" in role_report(out).unassigned[0].reason


def dataclasses_replace_role(rec: Record, pos: int, role: str) -> Record:
    analog = list(rec.analog)
    analog[pos] = AnalogChannel(
        analog[pos].name, analog[pos].values, unit=analog[pos].unit, role=role
    )
    return rec.with_channels(analog=analog)


# --------------------------------------------------------------------- profiles
PROFILE = """
schema = 1
name = "Ashcombe 500 kV recorder 2"
bay = "brightwater-1"

[digital]
reclose = "AR CLOSE"

[bays.brightwater-1]
line = "lines/ashcombe-brightwater.toml"
match = ["LINE 1 *"]
[bays.brightwater-1.analog]
i_n = 9
[bays.brightwater-1.digital]
pole_a = { name = "CB1 A", invert = true }

[bays.corrow-2]
match = "LINE 2 *"
auto = true
[bays.corrow-2.digital]
pole_a = { index = 2, invert = false }
"""


def _two_bay_record() -> Record:
    phases = [
        _a(f"LINE {b} V {p}", "V", idx=3 * (b - 1) + k + 1)
        for b in (1, 2)
        for k, p in enumerate("ABC")
    ]
    analog = (
        *phases,
        _a("LINE 1 EARTH CT", "A", idx=7),
        _a("LINE 2 IN", "A", idx=8),
        _a("X9", "A", idx=9),
    )
    digital = (_d("CB1 A", idx=1), _d("CB2 A", idx=2), _d("AR CLOSE", idx=3))
    return _rec(analog, digital, "corrow.cfg")


@pytest.fixture
def profile_path(tmp_path: Path) -> Path:
    p = tmp_path / "recorder.toml"
    p.write_text(PROFILE, encoding="utf-8")
    return p


def test_load_profile_reads_bays(profile_path: Path) -> None:
    prof = load_profile(profile_path)
    assert isinstance(prof, Profile)
    assert prof.bay_names == ("brightwater-1", "corrow-2")
    sel = prof.select()
    assert sel.name == "brightwater-1"
    assert sel.line_file == profile_path.parent / "lines/ashcombe-brightwater.toml"
    assert [(r.role, r.name, r.index, r.invert) for r in sel.digital] == [
        ("reclose", "AR CLOSE", None, False),
        ("pole_a", "CB1 A", None, True),
    ]
    assert sel.analog[0].index == 9
    assert prof.select("corrow-2").match == ("LINE 2 *",)
    with pytest.raises(RoleError, match="no bay named 'dunhallow'"):
        prof.select("dunhallow")


def test_profile_selects_bay(profile_path: Path) -> None:
    rec = assign_roles(_two_bay_record(), profile=profile_path)
    assert rec.roles == {
        "v_a": "LINE 1 V A", "v_b": "LINE 1 V B", "v_c": "LINE 1 V C", "i_n": "X9",
        "pole_a": "CB1 A", "reclose": "AR CLOSE",
    }  # fmt: skip
    np.testing.assert_array_equal(rec.digital[0].values, ~_two_bay_record().digital[0].values)
    assert any("inverted digital channel 1 'CB1 A'" in s for s in rec.processing)
    other = assign_roles(_two_bay_record(), profile=profile_path, bay="corrow-2")
    assert other.roles["v_a"] == "LINE 2 V A" and other.roles["i_n"] == "LINE 2 IN"
    assert other.roles["pole_a"] == "CB2 A"
    np.testing.assert_array_equal(other.digital[1].values, _two_bay_record().digital[1].values)
    rep = role_report(other, profile=profile_path, bay="corrow-2")
    assert any("outside the bay" in i.reason for i in rep.unassigned)


def test_profile_without_bay_choice_is_refused(tmp_path: Path) -> None:
    p = tmp_path / "p.toml"
    p.write_text(PROFILE.replace('bay = "brightwater-1"\n', ""), encoding="utf-8")
    with pytest.raises(RoleError, match=r"p\.toml: the profile describes bays"):
        assign_roles(_two_bay_record(), profile=p)


def test_profile_auto_false_and_unknown_channel(tmp_path: Path) -> None:
    prof = parse_profile({"auto": False, "analog": {"v_a": "VA"}}, source=tmp_path / "x.toml")
    rec = assign_roles(_full_record(), profile=prof)
    assert rec.roles == {"v_a": "VA"}
    assert "auto = false" in role_report(rec, profile=prof).unassigned[0].reason
    bad = parse_profile({"analog": {"v_a": "V PHASE A"}}, source="y.toml")
    with pytest.raises(
        RoleError, match=r"rec\.cfg: profile y\.toml: analog role v_a: no analog channel named"
    ):
        assign_roles(_full_record(), profile=bad)
    with pytest.raises(RoleError, match="no digital channel 40"):
        assign_roles(_full_record(), profile=parse_profile({"digital": {"trip_3p": 40}}))


def test_profile_overrides_existing_role() -> None:
    rec = assign_roles(_full_record())
    swapped = assign_roles(rec, profile=parse_profile({"analog": {"v_a": "VB", "v_b": "VA"}}))
    assert swapped.roles["v_a"] == "VB" and swapped.roles["v_b"] == "VA"
    assert swapped.analog[1].phase == "A"


@pytest.mark.parametrize(
    ("text", "key"),
    [
        ("[analog]\nv_q = 'VA'\n", "analog.v_q"),  # unknown role
        ("[analog]\npole_a = 'X'\n", "analog.pole_a"),  # digital role under [analog]
        ("[analog]\nv_a = { name = 'VA', invert = true }\n", "analog.v_a.invert"),
        ("[digital]\npole_a = { name = 'X', index = 2 }\n", "digital.pole_a"),
        ("[digital]\npole_a = { nme = 'X' }\n", "digital.pole_a"),
        ("[digital]\npole_a = { name = 'X', invert = 'yes' }\n", "digital.pole_a.invert"),
        ("[analog]\nv_a = 0\n", "analog.v_a"),
        ("[analog]\nv_a = true\n", "analog.v_a"),
        ("[analog]\nv_a = ''\n", "analog.v_a"),
        ("[analog]\nv_a = 'VA'\nv_b = ' va '\n", "analog.v_b"),  # one channel, two roles
        ("colour = 'red'\n", "colour"),
        ("schema = 2\n", "schema"),
        ("auto = 1\n", "auto"),
        ("match = [1]\n", "match"),
        ("line = 3\n", "line"),
        ("bay = 'x'\n[bays.y]\n", "bay"),
        ("[bays.y]\nlines = 'a.toml'\n", "bays.y.lines"),
        ("bays = 3\n", "bays"),
    ],
)
def test_bad_profile_names_file_and_key(tmp_path: Path, text: str, key: str) -> None:
    p = tmp_path / "bad.toml"
    p.write_text(text, encoding="utf-8")
    with pytest.raises(FormatError) as exc:
        load_profile(p)
    msg = str(exc.value)
    assert msg.startswith(f"{p}: key '{key}':")
    assert "\n" not in msg


def test_bad_profile_files(tmp_path: Path) -> None:
    p = tmp_path / "broken.toml"
    p.write_text("[analog\n", encoding="utf-8")
    with pytest.raises(FormatError, match=r"broken\.toml: not valid TOML"):
        load_profile(p)
    p.write_bytes(b"name = '\xff'\n")
    with pytest.raises(FormatError, match="not UTF-8"):
        load_profile(p)
    with pytest.raises(MissingFileError, match=r"nowhere\.toml: recorder profile file not found"):
        load_profile(tmp_path / "nowhere.toml")


# --------------------------------------------------------------------- properties
NAMES = ["VA", "VB", "VC", "IA", "IB", "IC", "IN", "VA BUS", "FREQ", "LINE 2 V A"]
UNITS = {"IA": "A", "IB": "A", "IC": "A", "IN": "A", "FREQ": "Hz"}
DNAMES = ["52b A", "52b B", "TRIP A", "TRIP 3PH", "AR CLOSE", "CB C", "RECLOSE"]


@settings(max_examples=40, deadline=None)
@given(
    st.permutations(NAMES).flatmap(lambda p: st.tuples(st.just(p), st.integers(1, len(p)))),
    st.permutations(DNAMES),
)
def test_roles_do_not_depend_on_order_and_are_idempotent(analog_pick, dnames) -> None:
    perm, k = analog_pick
    names = list(perm[:k])
    rec = _rec(tuple(_a(n, UNITS.get(n, "V")) for n in names), tuple(_d(n) for n in dnames))
    once = assign_roles(rec)
    twice = assign_roles(once)
    by_name = {ch.name: ch.role for ch in (*once.analog, *once.digital)}
    # same answer as the channels taken one order or another
    ref = assign_roles(
        _rec(
            tuple(_a(n, UNITS.get(n, "V")) for n in sorted(names)),
            tuple(_d(n) for n in sorted(dnames)),
        )
    )
    assert by_name == {ch.name: ch.role for ch in (*ref.analog, *ref.digital)}
    assert twice.roles == once.roles
    for a, b in zip(once.digital, twice.digital, strict=True):
        np.testing.assert_array_equal(a.values, b.values)  # never inverted twice
    # "VA" and "LINE 2 V A" together are ambiguous; either alone is v_a
    both = {"VA", "LINE 2 V A"} <= set(names)
    assert (by_name.get("VA") == R.V_LINE["A"]) == ("VA" in names and not both)


def test_documented_example_profile_loads(tmp_path: Path) -> None:
    """The example in docs/profiles.md is a valid profile and means what the text says."""
    doc = (Path(__file__).resolve().parents[1] / "docs" / "profiles.md").read_text("utf-8")
    text = doc.split("```toml\n", 1)[1].split("```", 1)[0]
    (tmp_path / "ashcombe.toml").write_text(text, encoding="utf-8")
    prof = load_profile(tmp_path / "ashcombe.toml")
    assert prof.bay_names == ("brightwater-1", "corrow-2")
    bw = prof.select()
    assert bw.name == "brightwater-1" and bw.match == ("BW1 *", "LINE 1 *")
    assert {r.role: (r.name, r.index, r.invert) for r in bw.digital} == {
        "reclose": ("AR CLOSE", None, False),
        "pole_a": ("BW1 CB A", None, True),
        "pole_b": (None, 5, True),
    }
    assert bw.line_file == tmp_path / "../lines/ashcombe-brightwater.toml"
    cr = prof.select("corrow-2")
    assert cr.match == ("CR2 *",) and [r.role for r in cr.digital] == ["reclose"]


def test_inversion_is_never_applied_twice_and_is_undone_with_the_role() -> None:
    raw = np.array([1, 1, 1, 0, 0, 0, 1, 1], bool)
    rec = assign_roles(_rec(digital=(_d("BKR A OPEN", raw, idx=1), _d("CB A", raw, idx=2))))
    np.testing.assert_array_equal(rec.digital[0].values, ~raw)  # auto: open sense inverted
    # the profile says the same thing: the values must not flip back
    same = assign_roles(
        rec, profile=parse_profile({"digital": {"pole_a": {"name": "BKR A OPEN", "invert": True}}})
    )
    np.testing.assert_array_equal(same.digital[0].values, ~raw)
    # the profile gives pole_a to another channel: the first one returns to its recorded sense
    moved = assign_roles(
        rec, profile=parse_profile({"digital": {"pole_a": {"name": "CB A", "invert": False}}})
    )
    assert moved.digital[0].role is None and moved.digital[1].role == "pole_a"
    np.testing.assert_array_equal(moved.digital[0].values, raw)
    np.testing.assert_array_equal(moved.digital[1].values, raw)
    assert role_report(moved).inverted == ()
    assert moved.processing[-1].startswith("restored digital channel 1 'BKR A OPEN'")
