"""write → read round trips for every revision, data format and container.

The check is the format's own quantisation: a value read back equals a·x + b for the stored
integer x (IEEE Std C37.111-2013, analog channel scaling, from memory), so it lies within
a/2 of the written value; FLOAT32 keeps float32 precision (IEEE 754 binary32, 24-bit
significand: relative error ≤ 2**-24, normal range from 2**-126). Time is kept within half
a timestamp count. The records are invented (fictional Valdmere scenario).
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from recordscan.core.record import AnalogChannel, Record, Scaling, StatusChannel
from recordscan.io import read, write

CASES = [
    ("2013", "ASCII", False),
    ("2013", "ASCII", True),
    ("2013", "BINARY", False),
    ("2013", "BINARY", True),
    ("2013", "BINARY32", False),
    ("2013", "BINARY32", True),
    ("2013", "FLOAT32", False),
    ("2013", "FLOAT32", True),
    ("1999", "ASCII", False),
    ("1999", "BINARY", False),
]
F32_EPS = 2.0**-24


def _tolerance(back: AnalogChannel, fmt: str, original: np.ndarray) -> np.ndarray:
    """Half a quantisation step in primary units (format rules above)."""
    if fmt == "FLOAT32":
        # relative float32 rounding, plus the float32 subnormal floor (2**-126) times a
        return np.abs(original) * F32_EPS * 1.0001 + abs(back.scaling.a) * 2.0**-126
    return np.full(original.shape, 0.5 * abs(back.scaling.a) * back.scaling.to_primary * 1.0001)


def _event_record(n_digital: int = 18) -> Record:
    """A segmented trip/reclose record: 1 s, 2 s dead time, 0.5 s; ns start instant."""
    t = np.concatenate([np.arange(1000) / 1000.0, 3.0 + np.arange(500) / 1000.0])
    rng = np.random.default_rng(20261202)
    va = 400e3 * np.sqrt(2 / 3) * np.sin(2 * np.pi * 50 * t)
    va[5] = np.nan
    ia = 1500.0 * np.cos(2 * np.pi * 50 * t)
    digital = [StatusChannel("52a A", t > 0.5, source_phase="A", normal_state=1)]
    digital += [StatusChannel(f"DI {k}", rng.random(t.size) > 0.5) for k in range(n_digital - 1)]
    return Record(
        t_s=t,
        analog=(
            AnalogChannel("VA", va, unit="V", phase="A", source_unit="kV", source_phase="A"),
            AnalogChannel(
                "IA",
                ia,
                unit="A",
                phase="A",
                source_unit="A",
                scaling=Scaling(ps="S", primary=2000.0, secondary=1.0, skew_s=25e-6),
            ),
            AnalogChannel("I const", np.full(t.size, -1.0), unit="A"),
            AnalogChannel("empty", np.full(t.size, np.nan), unit="A"),
        ),
        digital=tuple(digital),
        frequency_hz=50.0,
        station="Elderby",
        device="Valdmere DFR 12",
        start_ns=1_796_169_723_123_456_789,
        trigger_ns=1_796_169_723_223_456_789,
        header_text="Single-pole trip, Line Corrow\n",
        info_text="[Valdmere]\nbay=3\n",
    )


@pytest.mark.parametrize(("revision", "fmt", "cff"), CASES)
def test_round_trip(tmp_path: Path, revision: str, fmt: str, cff: bool) -> None:
    rec = _event_record()
    files = write(rec, tmp_path / "elderby", revision=revision, data_format=fmt, cff=cff)
    assert [f.suffix for f in files] == ([".cff"] if cff else [".cfg", ".dat", ".hdr", ".inf"])
    back = read(files[0], assign_roles=False)
    np.testing.assert_allclose(back.t_s, rec.t_s, rtol=0, atol=5e-7)
    assert len(back.segments) == 2  # the 2 s dead time survives
    for a, b in zip(rec.analog, back.analog, strict=True):
        assert (a.name, a.unit) == (b.name, b.unit)
        same_nan = np.isnan(a.values) == np.isnan(b.values)
        assert same_nan.all()
        ok = ~np.isnan(a.values)
        err = np.abs(b.values[ok] - a.values[ok])
        assert (err <= _tolerance(b, fmt, a.values[ok])).all()
    # the secondary-flagged channel stays secondary with its ratio (relay playback)
    assert back.analog[1].scaling.ps == "S"
    assert back.analog[1].scaling.primary / back.analog[1].scaling.secondary == 2000.0
    assert back.analog[1].scaling.skew_s == pytest.approx(25e-6)
    assert back.analog[0].source_unit == "kV"
    assert back.analog[2].values[0] == -1.0  # a constant -1 is kept exactly, never NaN
    for a, b in zip(rec.digital, back.digital, strict=True):
        assert (a.values == b.values).all() and a.normal_state == b.normal_state
    ns_exact = revision == "2013"  # 1999 stamps hold microseconds
    assert back.start_ns == (rec.start_ns if ns_exact else rec.start_ns // 1000 * 1000)
    assert back.trigger_ns == (rec.trigger_ns if ns_exact else rec.trigger_ns // 1000 * 1000)
    assert back.header_text.strip() == rec.header_text.strip()
    assert "bay=3" in back.info_text
    assert (back.station, back.device, back.frequency_hz) == ("Elderby", "Valdmere DFR 12", 50.0)
    assert back.provenance.revision == revision and back.provenance.data_format == fmt


def test_quantisation_uses_the_integer_range(tmp_path: Path) -> None:
    rec = _event_record()
    for fmt, xmax in (("BINARY", 32767), ("BINARY32", 2**31 - 1)):
        files = write(rec, tmp_path / fmt, data_format=fmt)
        back = read(files[0], assign_roles=False)
        va = back.analog[0]
        raw = (va.values / va.scaling.to_primary - va.scaling.b) / va.scaling.a
        assert np.nanmax(np.abs(raw)) == pytest.approx(xmax, abs=0.5)


def test_multi_rate_record(tmp_path: Path) -> None:
    # 4 kHz for 0.1 s then 1 kHz: two declared rates, no gap
    t1 = np.arange(400) / 4000.0
    t2 = t1[-1] + np.arange(1, 301) / 1000.0
    t = np.concatenate([t1, t2])
    rec = Record(t_s=t, analog=(AnalogChannel("VB", np.sin(t), unit="V"),), frequency_hz=60.0)
    back = read(write(rec, tmp_path / "mr")[0], assign_roles=False)
    assert back.sample_rates == ((4000.0, 400), (1000.0, 700))
    assert back.provenance.time_source == "rates"
    np.testing.assert_allclose(back.t_s, t, atol=1e-12)


def test_long_record_uses_timemult(tmp_path: Path) -> None:
    # > 4295 s in microseconds overflows uint32 timestamps: timemult stretches the unit
    t = np.concatenate([np.arange(10) * 1e-3, 5000.0 + np.arange(10) * 1e-3])
    rec = Record(t_s=t, analog=(AnalogChannel("IA", np.arange(20.0), unit="A"),))
    back = read(write(rec, tmp_path / "long")[0], assign_roles=False)
    np.testing.assert_allclose(back.t_s, t, atol=1e-6)


@pytest.mark.parametrize(
    ("enc", "station", "name"),
    [
        ("cp1251", "Подстанция Элдерби", "Ток фаза А"),
        ("gbk", "阿什科姆变电站", "线路电压A相"),
        ("latin-1", "Estação Corrow", "Tensão fase A"),
        ("cp1251", "ПС ЭЛДЕРБИ", "ТОКИ"),  # capitals: even byte runs GBK could also decode
        ("gbk", "科罗变电站（2）", "电流"),
        ("gbk", "Ashcombe", "500kV线路A相电压"),  # hanzi glued to Latin letters
        ("latin-1", "Größe Überwachung", "Oscilógrafo"),
        ("cp1252", "Station “Ashcombe”", "Strom €"),
    ],
)
def test_legacy_encodings_are_detected(tmp_path: Path, enc: str, station: str, name: str) -> None:
    rec = Record(
        t_s=np.arange(4) / 1000.0,
        analog=(AnalogChannel(name, np.arange(4.0), unit="A"),),
        station=station,
    )
    files = write(rec, tmp_path / "enc", encoding=enc)
    back = read(files[0], assign_roles=False)
    assert back.provenance.encoding == enc
    assert (back.station, back.analog[0].name) == (station, name)
    # the caller's encoding wins over detection
    assert read(files[0], encoding=enc, assign_roles=False).station == station


def test_write_is_atomic_on_error(tmp_path: Path) -> None:
    rec = Record(t_s=np.arange(3.0), analog=(AnalogChannel("Ток", np.zeros(3), unit="A"),))
    from recordscan.errors import FormatError

    with pytest.raises(FormatError, match="cannot be written in ascii"):
        write(rec, tmp_path / "x", encoding="ascii")
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- property tests
@st.composite
def records(draw: st.DrawFn) -> Record:
    n1 = draw(st.integers(1, 40))
    n2 = draw(st.integers(0, 20))
    rate = draw(st.sampled_from([600.0, 1000.0, 1200.0, 4800.0, 10000.0, 15360.0]))
    t = np.arange(n1) / rate
    if n2:
        gap = draw(st.floats(0.01, 3.0))
        t = np.concatenate([t, t[-1] + gap + np.arange(n2) / rate])
    if draw(st.booleans()) and n1 > 2:
        # irregular sampling (whole microseconds): only timestamps can carry it
        steps = draw(st.lists(st.integers(1, 5000), min_size=n1 - 1, max_size=n1 - 1))
        t = np.concatenate([[0.0], np.cumsum(steps) * 1e-6])
    n = t.size
    n_an = draw(st.integers(0, 3))
    elements = st.one_of(
        st.floats(-1e7, 1e7, allow_nan=False, allow_infinity=False), st.just(float("nan"))
    )
    analog = []
    for k in range(n_an):
        vals = np.array(draw(st.lists(elements, min_size=n, max_size=n)))
        unit = draw(st.sampled_from(["V", "A"]))
        analog.append(AnalogChannel(f"CH{k}", vals, unit=unit))
    n_dig = draw(st.integers(0, 20))
    digital = [
        StatusChannel(f"D{k}", np.array(draw(st.lists(st.booleans(), min_size=n, max_size=n))))
        for k in range(n_dig)
    ]
    start = draw(st.integers(0, 4_000_000_000)) * 10**9 + draw(st.integers(0, 10**9 - 1))
    return Record(t_s=t, analog=tuple(analog), digital=tuple(digital), start_ns=start)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rec=records(), case=st.sampled_from(CASES))
def test_round_trip_property(rec: Record, case: tuple[str, str, bool]) -> None:
    revision, fmt, cff = case
    with tempfile.TemporaryDirectory() as tmp:
        files = write(rec, Path(tmp) / "p", revision=revision, data_format=fmt, cff=cff)
        back = read(files[0], assign_roles=False)
    assert back.n_samples == rec.n_samples
    np.testing.assert_allclose(back.t_s, rec.t_s, rtol=0, atol=5e-7)
    for a, b in zip(rec.analog, back.analog, strict=True):
        assert (np.isnan(a.values) == np.isnan(b.values)).all()
        ok = ~np.isnan(a.values)
        err = np.abs(b.values[ok] - a.values[ok])
        assert (err <= _tolerance(b, fmt, a.values[ok]) + 1e-9 * np.abs(a.values[ok])).all()
    for a, b in zip(rec.digital, back.digital, strict=True):
        assert (a.values == b.values).all()
    if revision == "2013":
        assert back.start_ns == rec.start_ns
    else:
        assert back.start_ns == rec.start_ns // 1000 * 1000


def test_unknown_instants_and_single_sample(tmp_path: Path) -> None:
    # no start/trigger known: blank stamps are written and read back as None
    rec = Record(t_s=np.array([0.0]), analog=(AnalogChannel("IA", np.array([-1.0]), unit="A"),))
    back = read(write(rec, tmp_path / "one", data_format="ASCII")[0], assign_roles=False)
    assert back.start_ns is None and back.trigger_ns is None
    assert back.n_samples == 1 and back.analog[0].values[0] == -1.0


def _sha_of(path: str) -> str:
    return read(path, assign_roles=False).provenance.sha256


def test_read_in_forked_worker_after_parent_read(tmp_path: Path) -> None:
    # a read in a forked child (multiprocessing on Linux, as scan --jobs does) after a read in
    # the parent must work and hash the same bytes (an earlier reader hashed on a thread
    # that a forked child did not inherit)
    import hashlib
    import multiprocessing
    import warnings

    if "fork" not in multiprocessing.get_all_start_methods():
        pytest.fail("this check needs the fork start method (Linux)")
    t = np.arange(50_000) / 1e4
    files = write(Record(t_s=t, analog=(AnalogChannel("IA", np.sin(t), unit="A"),)), tmp_path / "f")
    expected = hashlib.sha256(files[0].read_bytes() + files[1].read_bytes()).hexdigest()
    assert _sha_of(str(files[0])) == expected
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)  # fork with threads (3.12+)
        with multiprocessing.get_context("fork").Pool(1) as pool:
            result = pool.map_async(_sha_of, [str(files[0])]).get(timeout=60)
    assert result == [expected]
