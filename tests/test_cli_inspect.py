"""``recordscan inspect`` on COMTRADE files written by hand from the IEEE C37.111-2013 rules.

The cfg below is built from the field rules of IEEE C37.111-2013 (COMTRADE), clause 6
(configuration file: station line, channel counts ``TT,##A,##D``, 13-field analog lines
``An,ch_id,ph,ccbm,uu,a,b,skew,min,max,primary,secondary,PS``, 5-field status lines
``Dn,ch_id,ph,ccbm,y``, ``lf``, ``nrates`` and ``samp,endsamp``, start and trigger
``dd/mm/yyyy,hh:mm:ss.ssssss``, ``ft``, ``timemult``, time codes) and clause 7 (ASCII data
``n,timestamp,A1…,D1…``, timestamp in microseconds × timemult) — field order from memory.
Analog values follow the standard's scaling ``value = a·x + b`` in the channel's unit ``uu``
(kV → × 1000 to V). ISO 8601 instants are checked against Python's own ``datetime``.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from datetime import datetime, timezone
from pathlib import Path

import numpy as np
import pytest

from recordscan.cli.inspect import iso_ns
from recordscan.cli.main import main

N = 40
RATE_HZ = 1000.0
GAP_US = 500_000  # dead time between the two segments that only the timestamps show


def analog_counts() -> dict[str, np.ndarray]:
    """Stored integers x for each analog channel (scaled by a·x + b)."""
    k = np.arange(N)
    return {
        "VA": np.round(30000 * np.sin(2 * np.pi * 60 * k / RATE_HZ)).astype(int),
        "VB": np.round(30000 * np.sin(2 * np.pi * 60 * k / RATE_HZ - 2.0944)).astype(int),
        "IA": np.round(2000 * np.cos(2 * np.pi * 60 * k / RATE_HZ)).astype(int),
        "IN": (k % 7) - 3,
    }


# (name, ph, ccbm, uu, a, b)
ANALOG = [
    ("VA", "A", "LINE 1", "kV", 0.01, 0.0),
    ("VB", "B", "LINE 1", "kV", 0.01, 0.0),
    ("IA", "A", "LINE 1", "A", 0.5, 0.0),
    ("IN", "N", "LINE 1", "A", 2.0, 1.0),
]
DIGITAL = ["52b A", "TRIP A", "79 CLOSE"]


def digital_states() -> dict[str, np.ndarray]:
    k = np.arange(N)
    return {
        "52b A": (k >= 12).astype(int),  # 52b contact closes when pole A opens
        "TRIP A": ((k >= 10) & (k < 16)).astype(int),
        "79 CLOSE": (k >= 30).astype(int),
    }


def write_record(
    folder: Path,
    *,
    stem: str = "ashcombe",
    analog: list[tuple[str, str, str, str, float, float]] | None = None,
    digital: list[str] | None = None,
    gap: bool = True,
    binary: bool = False,
) -> Path:
    """Write a 2013 ASCII (or BINARY) cfg/dat pair by hand; return the cfg path."""
    analog = ANALOG if analog is None else analog
    digital = DIGITAL if digital is None else digital
    counts = analog_counts()
    states = digital_states()
    lines = [
        "Ashcombe,DR-7,2013",
        f"{len(analog) + len(digital)},{len(analog)}A,{len(digital)}D",
    ]
    for i, (name, ph, ccbm, uu, a, b) in enumerate(analog, 1):
        lines.append(f"{i},{name},{ph},{ccbm},{uu},{a},{b},0,-32767,32767,500,0.11547,P")
    for i, name in enumerate(digital, 1):
        lines.append(f"{i},{name},,LINE 1,0")
    lines += [
        "60",
        "1",
        f"{RATE_HZ:g},{N}",
        "14/03/2026,09:26:53.589793",
        "14/03/2026,09:26:53.599793",
        "BINARY" if binary else "ASCII",
        "1",
        "0,0",
        "0,0",
    ]
    cfg = folder / f"{stem}.cfg"
    cfg.write_text("\r\n".join(lines) + "\r\n", encoding="utf-8")
    if binary:
        # C37.111-2013 clause 7 binary data: per sample a 4-byte sample number, a 4-byte
        # timestamp, 2-byte signed analog values, then 2-byte words of 16 status bits,
        # little-endian (from memory)
        n_words = (len(digital) + 15) // 16
        dtype = np.dtype(
            [("n", "<u4"), ("t", "<u4"), ("a", "<i2", (len(analog),)), ("d", "<u2", (n_words,))]
        )
        data = np.zeros(N, dtype)
        data["n"] = np.arange(1, N + 1)
        data["t"] = np.arange(N) * 1000 + np.where(gap & (np.arange(N) >= N // 2), GAP_US, 0)
        for j, (name, *_) in enumerate(analog):
            data["a"][:, j] = counts.get(name, counts["VA"])
        for j, name in enumerate(digital):
            data["d"][:, j // 16] |= (states.get(name, states["TRIP A"]) << (j % 16)).astype(
                np.uint16
            )
        (folder / f"{stem}.dat").write_bytes(data.tobytes())
        return cfg
    rows = []
    for k in range(N):
        t_us = k * 1000 + (GAP_US if gap and k >= N // 2 else 0)
        vals = [str(counts.get(name, counts["VA"])[k]) for name, *_ in analog]
        vals += [str(states.get(name, states["TRIP A"])[k]) for name in digital]
        rows.append(",".join([str(k + 1), str(t_us), *vals]))
    (folder / f"{stem}.dat").write_text("\r\n".join(rows) + "\r\n", encoding="utf-8")
    return cfg


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    """Run the CLI in-process like the console script; return (exit code, stdout, stderr)."""
    with pytest.raises(SystemExit) as exc:
        main(args)
    out = capsys.readouterr()
    return int(exc.value.code or 0), out.out, out.err


@pytest.fixture
def cfg(tmp_path: Path) -> Path:
    return write_record(tmp_path)


def test_json_summary(cfg: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = run(["inspect", str(cfg), "--json"], capsys)
    assert code == 0, err
    s = json.loads(out)
    assert s["revision"] == "2013" and s["format"] == "ASCII"
    assert s["frequency_hz"] == 60.0
    assert s["sample_rates"] == [[1000.0, N]]
    assert s["n_samples"] == N
    assert s["station"] == "Ashcombe" and s["device"] == "DR-7"
    # instants: Python's datetime as the independent reference
    start = datetime(2026, 3, 14, 9, 26, 53, 589793, tzinfo=timezone.utc)
    assert s["start"] == start.strftime("%Y-%m-%dT%H:%M:%S.%f") + "000Z"
    assert s["trigger"] == "2026-03-14T09:26:53.599793000Z"
    assert s["start_ns"] == int(start.timestamp()) * 10**9 + 589_793_000
    # the gap that only the timestamps show is kept as two segments (C37.111 clause 7)
    assert [g["n_samples"] for g in s["segments"]] == [20, 20]
    assert [g["rate_hz"] for g in s["segments"]] == pytest.approx([1000.0, 1000.0], rel=1e-9)
    assert s["segments"][1]["start_s"] - s["segments"][0]["end_s"] == pytest.approx(0.501)
    # channel lists, canonical phases and roles
    assert [(c["index"], c["name"], c["phase"], c["unit"], c["role"]) for c in s["analog"]] == [
        (1, "VA", "A", "V", "v_a"),
        (2, "VB", "B", "V", "v_b"),
        (3, "IA", "A", "A", "i_a"),
        (4, "IN", "N", "A", "i_n"),
    ]
    assert [(c["index"], c["name"], c["role"]) for c in s["digital"]] == [
        (1, "52b A", "pole_a"),
        (2, "TRIP A", "trip_a"),
        (3, "79 CLOSE", "reclose"),
    ]
    assert s["roles"]["pole_a"] == "52b A" and s["roles"]["i_n"] == "IN"
    assert s["file"].endswith("ashcombe.cfg")
    assert len(s["sha256"]) == 64
    assert s["role_problems"]["unassigned"] == [] and s["role_problems"]["message"] == ""


def test_json_ranges_follow_the_standard_scaling(cfg: Path, capsys) -> None:
    # C37.111: value = a·x + b in the unit uu; kV is converted to V (primary, P flag).
    s = json.loads(run(["inspect", str(cfg), "--json"], capsys)[1])
    counts = analog_counts()
    for ch, (name, _ph, _cc, uu, a, b) in zip(s["analog"], ANALOG, strict=True):
        factor = 1000.0 if uu == "kV" else 1.0
        values = (a * counts[name] + b) * factor
        assert ch["min"] == pytest.approx(values.min(), rel=1e-9)
        assert ch["max"] == pytest.approx(values.max(), rel=1e-9)
        assert ch["n_missing"] == 0
    pole = s["digital"][0]
    # 52b A was 0 then 1 (open-sense contact); inverted to "pole closed": 1 then 0
    assert pole["inverted"] is True and pole["initial"] is True
    assert pole["n_changes"] == 1
    assert pole["first_change_s"] == pytest.approx(0.012)


def test_text_summary(cfg: Path, capsys) -> None:
    code, out, _ = run(["inspect", str(cfg)], capsys)
    assert code == 0
    assert "Station:     Ashcombe" in out
    assert "revision 2013, ASCII" in out
    assert "Segments:    2" in out and "then a gap of 0.501000 s" in out
    # VA peaks at 30000 · 0.01 kV = 300 kV
    # VA peak = max(x) · a = max(x) · 0.01 kV (C37.111 scaling), shown in kV
    assert f"{analog_counts()['VA'].max() * 0.01:.4g} kV" in out
    assert "pole_a (inverted)" in out
    assert "Roles: every channel has a role." in out
    assert "Caution:" in out


def test_ambiguous_record_shows_how_to_write_a_profile(tmp_path: Path, capsys) -> None:
    analog = [
        ("LINE 1 V A", "", "", "kV", 0.01, 0.0),
        ("LINE 2 V A", "", "", "kV", 0.01, 0.0),
        ("LINE 1 I A", "", "", "A", 0.5, 0.0),
        ("FREQ", "", "", "Hz", 0.001, 60.0),
    ]
    cfg = write_record(tmp_path, stem="corrow", analog=analog, digital=["CB A"])
    code, out, _ = run(["inspect", str(cfg)], capsys)
    assert code == 0
    assert "ambiguous v_a: analog 1 'LINE 1 V A', analog 2 'LINE 2 V A'" in out
    assert "no role: analog 4 'FREQ'" in out
    assert "no role: digital 1 'CB A'" in out
    assert "--profile" in out
    s = json.loads(run(["inspect", str(cfg), "--json"], capsys)[1])
    assert s["role_problems"]["ambiguous"] == {"v_a": ["LINE 1 V A", "LINE 2 V A"]}
    assert {u["name"] for u in s["role_problems"]["unassigned"]} == {"FREQ", "CB A"}
    assert "v_a" not in s["roles"]
    # a profile with two bays settles it; --bay chooses the other line
    prof = tmp_path / "corrow.toml"
    prof.write_text(
        'schema = 1\nbay = "line-1"\n'
        '[bays.line-1]\nmatch = "LINE 1 *"\nline = "lines/l1.toml"\n'
        '[bays.line-1.digital]\npole_a = { name = "CB A", invert = true }\n'
        '[bays.line-2]\nmatch = "LINE 2 *"\n',
        encoding="utf-8",
    )
    s1 = json.loads(run(["inspect", str(cfg), "--json", "--profile", str(prof)], capsys)[1])
    assert s1["roles"]["v_a"] == "LINE 1 V A" and s1["roles"]["pole_a"] == "CB A"
    assert s1["line_file"] == str(tmp_path / "lines/l1.toml")
    args = ["inspect", str(cfg), "--json", "--profile", str(prof), "--bay", "line-2"]
    s2 = json.loads(run(args, capsys)[1])
    assert s2["roles"]["v_a"] == "LINE 2 V A" and "i_a" not in s2["roles"]


@pytest.mark.parametrize(
    ("mangle", "expect"),
    [
        (lambda d: (d / "ashcombe.dat").unlink(), "ashcombe"),
        (lambda d: (d / "ashcombe.cfg").write_text("", encoding="utf-8"), "ashcombe.cfg"),
        (
            lambda d: (d / "ashcombe.cfg").write_text(
                (d / "ashcombe.cfg").read_text().replace("ASCII", "BINARY17"), encoding="utf-8"
            ),
            "ashcombe.cfg",
        ),
    ],
)
def test_bad_record_exit_2_one_line(tmp_path: Path, capsys, mangle, expect: str) -> None:
    cfg = write_record(tmp_path)
    mangle(tmp_path)
    code, out, err = run(["inspect", str(cfg), "--json"], capsys)
    assert code == 2
    assert out == ""
    assert err.startswith("recordscan: error: ") and err.count("\n") == 1
    assert expect in err
    assert "Traceback" not in err


def test_bad_profile_exit_2_names_key(cfg: Path, tmp_path: Path, capsys) -> None:
    prof = tmp_path / "bad.toml"
    prof.write_text("[analog]\nv_x = 'VA'\n", encoding="utf-8")
    code, out, err = run(["inspect", str(cfg), "--profile", str(prof)], capsys)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "bad.toml: key 'analog.v_x'" in err


def test_iso_ns_is_nanosecond_exact() -> None:
    # 2^62 ns is beyond float64's integer precision; the text must still be exact.
    ns = 2**62
    sec, frac = divmod(ns, 10**9)
    expected = datetime.fromtimestamp(sec, tz=timezone.utc).strftime("%Y-%m-%dT%H:%M:%S")
    assert iso_ns(ns) == f"{expected}.{frac:09d}Z"
    assert iso_ns(-1) == "1969-12-31T23:59:59.999999999Z"
    assert iso_ns(None) is None


def test_whole_process_no_heavy_imports_no_traceback(tmp_path: Path) -> None:
    """As a console process: lazy imports on the inspect path, one-line errors, exit 2."""
    cfg = write_record(tmp_path, binary=True)
    code = (
        "import sys\n"
        "from recordscan.cli.main import main\n"
        "try:\n"
        f"    main(['inspect', {str(cfg)!r}, '--json'])\n"
        "except SystemExit as e:\n"
        "    heavy = sorted(m for m in ('scipy', 'pandas', 'matplotlib') if m in sys.modules)\n"
        "    print('HEAVY=' + ','.join(heavy), file=sys.stderr)\n"
        "    raise\n"
    )
    env = {**os.environ, "PYTHONWARNINGS": "error"}
    proc = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, check=False
    )
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["n_samples"] == N
    assert "HEAVY=\n" in proc.stderr
    (tmp_path / "ashcombe.dat").write_bytes(b"\x01\x00\x00")  # truncated binary data
    entry = f"from recordscan.cli.main import main; main(['inspect', {str(cfg)!r}])"
    proc = subprocess.run(
        [sys.executable, "-c", entry], capture_output=True, text=True, check=False
    )
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert "ashcombe" in proc.stderr


def test_record_written_by_recordscan_io_write(tmp_path: Path, capsys) -> None:
    """A record built in memory, written with recordscan.io.write, inspected back.

    The expected values are the in-memory record's own; BINARY stores 16-bit integers, so
    ranges agree within one quantisation step of each channel (C37.111 a·x + b scaling).
    """
    from recordscan.core.record import AnalogChannel, Record, StatusChannel
    from recordscan.io import write

    rate = 4800.0
    t = np.concatenate([np.arange(480) / rate, 2.0 + np.arange(960) / rate])  # 1.9 s dead time
    w = 2 * np.pi * 60.0 * t
    v_pk = 500e3 * np.sqrt(2 / 3)
    analog = [
        AnalogChannel(f"V{p} line", v_pk * np.sin(w - k * 2.0944), unit="V", source_phase=p)
        for k, p in enumerate("ABC")
    ] + [AnalogChannel("IN", 40.0 * np.cos(w), unit="A", source_phase="N")]
    digital = [
        StatusChannel("POLE A CLOSED", t < 0.05, source_phase="A"),
        StatusChannel("RECLOSE", t > 2.1),
    ]
    rec = Record(
        t_s=t,
        analog=analog,
        digital=digital,
        frequency_hz=60.0,
        station="Dunhallow Süd",
        device="DR-3",
        start_ns=1_795_000_000_123_456_789,
        trigger_ns=1_795_000_000_173_456_789,
    )
    files = write(rec, tmp_path / "dunhallow.cfg", data_format="BINARY", encoding="latin-1")
    code, out, err = run(["inspect", str(files[0]), "--json", "--encoding", "latin-1"], capsys)
    assert code == 0, err
    s = json.loads(out)
    assert s["station"] == "Dunhallow Süd" and s["encoding"] == "latin-1"
    assert s["n_samples"] == t.shape[0]
    assert s["start"] == iso_ns(rec.start_ns) and s["trigger_s"] == pytest.approx(0.05)
    assert [g["n_samples"] for g in s["segments"]] == [480, 960]
    assert s["roles"] == {
        "v_a": "VA line", "v_b": "VB line", "v_c": "VC line", "i_n": "IN",
        "pole_a": "POLE A CLOSED", "reclose": "RECLOSE",
    }  # fmt: skip
    for ch, src in zip(s["analog"], analog, strict=True):
        step = np.ptp(src.values) / 2**15
        assert ch["min"] == pytest.approx(src.values.min(), abs=step)
        assert ch["max"] == pytest.approx(src.values.max(), abs=step)
    assert [d["n_changes"] for d in s["digital"]] == [1, 1]
