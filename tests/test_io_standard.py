"""COMTRADE files recreated by hand from the field rules of the standard.

Sources
-------
* IEEE Std C37.111-2013 / IEC 60255-24:2013, "Common format for transient data exchange
  (COMTRADE) for power systems": cfg line order and fields, the four data formats, the
  ``nrates``/``samp``/``endsamp`` rules, ``timemult``, ``time_code``, the .cff container.
* IEEE Std C37.111-1999: 13-field analog lines with primary/secondary ratio and P/S flag,
  dd/mm/yyyy dates, ``timemult``.
* IEEE Std C37.111-1991: 2-field first line, 10-field analog and 3-field status lines,
  mm/dd/yy dates.
The field rules are applied from memory of those documents (no copy was at hand); the
missing-value markers are listed with the same caveat in tests/reference/comtrade.toml.
Binary test files are packed with :mod:`struct`, independently of the reader's numpy dtype.
Expected instants are computed with ``numpy.datetime64`` (an independent calendar).
The channel and station names are invented (fictional Valdmere scenario).
"""

from __future__ import annotations

import math
import struct
import sys
from pathlib import Path

import numpy as np
import pytest

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

from recordscan.io import read
from recordscan.io.comtrade.convert import canonical_phase

REF = tomllib.loads(
    (Path(__file__).parent / "reference" / "comtrade.toml").read_text(encoding="utf-8")
)


def _ns(iso: str) -> int:
    """Integer ns since 1970 of an ISO instant (numpy's calendar as the reference)."""
    return int(np.datetime64(iso, "ns").astype(np.int64))


def _put(tmp: Path, stem: str, cfg: str, dat: bytes | str, *, enc: str = "utf-8") -> Path:
    (tmp / f"{stem}.cfg").write_bytes(cfg.replace("\n", "\r\n").encode(enc))
    data = dat.replace("\n", "\r\n").encode("ascii") if isinstance(dat, str) else dat
    (tmp / f"{stem}.dat").write_bytes(data)
    return tmp / f"{stem}.cfg"


# C37.111-2013 field rules, line by line (values invented):
#  station_name,rec_dev_id,rev_year / TT,##A,##D /
#  An,ch_id,ph,ccbm,uu,a,b,skew,min,max,primary,secondary,PS /
#  Dn,ch_id,ph,ccbm,y / lf / nrates / samp,endsamp (×nrates) /
#  dd/mm/yyyy,hh:mm:ss.ssssss (first sample) / same (trigger) / ft / timemult /
#  time_code,local_code / tmq_code,leapsec
CFG_2013 = """Ashcombe,Valdmere DFR 7,2013
6,4A,2D
1,VA,A,Line Brightwater,kV,0.01,0,0,-32767,32767,400,0.11,P
2,VB,B,Line Brightwater,kV,0.01,-0.5,0,-32767,32767,400,0.11,P
3,IA,A,Line Brightwater,A,0.001,0,12.5,-32767,32767,2000,1,S
4,IN,N,Line Brightwater,mA,2,0,0,-32767,32767,2000,1,S
1,TRIP A,A,Line Brightwater,0
2,52a A,A,Line Brightwater,1
50
2
2000,4
1000,6
02/12/2026,01:02:03.123456789
02/12/2026,01:02:03.124456789
{ft}
1
+1,+1
0,0
"""

# six samples: (VA, VB, IA, IN) raw values, None = missing; status (TRIP A, 52a A)
ROWS = [
    ((100, 100, 1000, 500), (0, 1)),
    ((200, -100, -1, 0), (0, 1)),
    ((None, 0, 2, -500), (1, 1)),
    ((-300, None, 3, 250), (1, 0)),
    ((32767, -32767, 4, 1), (1, 0)),
    ((0, 0, -32767, -1), (0, 0)),
]
# timestamps in ns (cfg stamps have 9 fraction digits → ns time base, C37.111-2013)
STAMPS_NS = [0, 500_000, 1_000_000, 1_500_000, 2_500_000, 3_500_000]


def _expected_2013() -> dict[str, np.ndarray]:
    va = [math.nan if r[0][0] is None else r[0][0] * 0.01 * 1e3 for r in ROWS]
    vb = [math.nan if r[0][1] is None else (r[0][1] * 0.01 - 0.5) * 1e3 for r in ROWS]
    ia = [r[0][2] * 0.001 * 2000 for r in ROWS]  # secondary A × 2000/1
    i_n = [r[0][3] * 2 * 1e-3 * 2000 for r in ROWS]  # mA → A, secondary × 2000/1
    return {"VA": np.array(va), "VB": np.array(vb), "IA": np.array(ia), "IN": np.array(i_n)}


def _ascii_2013() -> str:
    lines = []
    for k, ((va, vb, ia, i_n), (s1, s2)) in enumerate(ROWS):
        # missing: empty field for VA, the 99999 marker for VB (both forms are read)
        f_va = "" if va is None else str(va)
        f_vb = "99999" if vb is None else str(vb)
        lines.append(f"{k + 1},{STAMPS_NS[k]},{f_va},{f_vb},{ia},{i_n},{s1},{s2}")
    return "\n".join(lines) + "\n"


def _binary_2013(ft: str) -> bytes:
    out = b""
    for k, (vals, (s1, s2)) in enumerate(ROWS):
        out += struct.pack("<II", k + 1, STAMPS_NS[k])
        for v in vals:
            if ft == "BINARY":
                out += struct.pack("<h", -32768 if v is None else v)  # 0x8000 missing
            elif ft == "BINARY32":
                out += struct.pack("<i", -(2**31) if v is None else v)  # 0x80000000
            else:
                out += struct.pack("<f", math.nan if v is None else float(v))
        out += struct.pack("<H", s1 | (s2 << 1))  # first status channel in bit 0
    return out


@pytest.mark.parametrize("ft", ["ASCII", "BINARY", "BINARY32", "FLOAT32"])
def test_2013_field_rules(tmp_path: Path, ft: str) -> None:
    dat = _ascii_2013() if ft == "ASCII" else _binary_2013(ft)
    cfg = _put(tmp_path, "ashcombe", CFG_2013.format(ft=ft), dat)
    rec = read(cfg, assign_roles=False)
    exp = _expected_2013()
    for ch in rec.analog:
        np.testing.assert_allclose(ch.values, exp[ch.name], rtol=1e-12, equal_nan=True)
    # a legitimate -1 is a value, never the missing marker
    assert rec.analog[2].values[1] == pytest.approx(-2.0)
    assert [ch.unit for ch in rec.analog] == ["V", "V", "A", "A"]
    assert [ch.phase for ch in rec.analog] == ["A", "B", "A", "N"]
    assert rec.analog[2].scaling.skew_s == pytest.approx(12.5e-6)
    assert rec.analog[2].scaling.ps == "S"
    assert rec.digital[0].values.tolist() == [False, False, True, True, True, False]
    assert rec.digital[1].values.tolist() == [True, True, True, False, False, False]
    assert rec.digital[1].normal_state == 1
    # nrates = 2: samples 1-4 at 2000 Hz, 5-6 at 1000 Hz (each interval at its sample's rate)
    np.testing.assert_allclose(rec.t_s, [0, 0.5e-3, 1e-3, 1.5e-3, 2.5e-3, 3.5e-3], atol=1e-15)
    assert rec.sample_rates == ((2000.0, 4), (1000.0, 6))
    assert rec.provenance.time_source == "rates"  # the stamps agree with the rates
    # time_code +1: stamps are UTC+1 → subtract one hour; ns kept exactly
    assert rec.start_ns == _ns("2026-12-02T00:02:03.123456789")
    assert rec.trigger_ns == _ns("2026-12-02T00:02:03.124456789")
    assert rec.trigger_s == pytest.approx(1e-3, abs=1e-12)
    assert rec.frequency_hz == 50.0
    assert (rec.station, rec.device) == ("Ashcombe", "Valdmere DFR 7")
    assert rec.provenance.revision == "2013"
    assert rec.provenance.data_format == ft
    assert rec.provenance.container == "cfg+dat"
    assert len(rec.provenance.sha256) == 64


def _simple_cfg(*, nrates_block: str, ft: str = "BINARY", timemult: str = "1") -> str:
    return (
        "Brightwater,DFR 3,1999\n2,1A,1D\n"
        "1,IA,A,,A,1,0,0,-32767,32767,1,1,P\n1,TRIP A,A,,0\n50\n"
        f"{nrates_block}\n01/01/2026,00:00:00.000000\n01/01/2026,00:00:00.000000\n"
        f"{ft}\n{timemult}\n"
    )


def _simple_bin(stamps: list[int]) -> bytes:
    return b"".join(struct.pack("<IIhH", k + 1, ts, k, k % 2) for k, ts in enumerate(stamps))


def test_gap_in_timestamps_is_kept(tmp_path: Path) -> None:
    # a segmented trip/reclose record: 1000 Hz declared, the stamps show a 2 s dead time
    stamps = [0, 1000, 2000, 2_002_000, 2_003_000, 2_004_000]
    cfg = _put(tmp_path, "gap", _simple_cfg(nrates_block="1\n1000,6"), _simple_bin(stamps))
    rec = read(cfg, assign_roles=False)
    np.testing.assert_allclose(rec.t_s, [0, 1e-3, 2e-3, 2.002, 2.003, 2.004], atol=1e-12)
    assert rec.provenance.time_source == "timestamps"
    assert [(s.start_idx, s.stop_idx) for s in rec.segments] == [(0, 3), (3, 6)]


def test_stamps_disagreeing_with_rate_lose_to_rate(tmp_path: Path) -> None:
    # all-zero stamps (written by some recorders) say nothing: the rate wins, with a note
    cfg = _put(tmp_path, "zero", _simple_cfg(nrates_block="1\n1000,4"), _simple_bin([0] * 4))
    rec = read(cfg, assign_roles=False)
    np.testing.assert_allclose(rec.t_s, [0, 1e-3, 2e-3, 3e-3], atol=1e-15)
    assert rec.provenance.time_source == "rates"
    assert any("disagree" in n for n in rec.provenance.notes)


@pytest.mark.parametrize("block", ["0", "0\n0,4", "1\n0,4"])
def test_timestamp_only_records(tmp_path: Path, block: str) -> None:
    # nrates = 0 (with or without the '0,endsamp' line) and nrates = 1 with samp = 0:
    # the .dat timestamps are the only time source; timemult scales them (C37.111-1999)
    stamps = [0, 100, 200, 500_000]
    cfg = _put(tmp_path, "ts", _simple_cfg(nrates_block=block, timemult="2.5"), _simple_bin(stamps))
    rec = read(cfg, assign_roles=False)
    np.testing.assert_allclose(rec.t_s, np.array(stamps) * 2.5e-6, atol=1e-15)
    assert rec.provenance.time_source == "timestamps"
    assert rec.sample_rates == ()


CFG_1991 = """Corrow,DFR 2
3,2A,1D
1,VA,A,Line Dunhallow,kV,0.1,0,0,-32767,32767
2,IA,A,Line Dunhallow,A,0.5,0,0,-32767,32767
1,TRIP A,1
60
1
1200,3
07/04/95,12:00:00.000000
07/04/95,12:00:00.001000
BINARY
"""


def test_1991_specifics(tmp_path: Path) -> None:
    dat = b"".join(
        struct.pack("<IIhhH", k + 1, ts, va, ia, st)
        for k, (ts, va, ia, st) in enumerate([(0, 10, -1, 0), (833, 20, 5, 1), (1667, -5, 0, 1)])
    )
    rec = read(_put(tmp_path, "c91", CFG_1991, dat), assign_roles=False)
    assert rec.provenance.revision == "1991"
    # mm/dd/yy with the POSIX two-digit-year rule: 07/04/95 is 4 July 1995
    assert rec.start_ns == _ns("1995-07-04T12:00:00")
    assert rec.trigger_ns == _ns("1995-07-04T12:00:00.001")
    np.testing.assert_allclose(rec.analog[0].values, [1000.0, 2000.0, -500.0])
    # -1 (0xFFFF) is a legitimate sample value, not missing
    np.testing.assert_allclose(rec.analog[1].values, [-0.5, 2.5, 0.0])
    assert rec.digital[0].normal_state == 1  # 3-field status line n,ch_id,y
    assert rec.digital[0].values.tolist() == [False, True, True]
    assert rec.frequency_hz == 60.0


def test_cff_binary_section_cut_by_byte_count(tmp_path: Path) -> None:
    # .cff layout (C37.111-2013): CFG, INF, HDR, DAT sections under '--- file type' lines;
    # the binary DAT is cut by its byte count, so line-end bytes inside it are data.
    cfg = _simple_cfg(nrates_block="1\n1000,3").replace("1999", "2013") + "0,0\n0,0\n"
    dat = struct.pack("<IIhH", 1, 0, 0x0A0D, 0) + struct.pack("<IIhH", 2, 1000, 0x2D2D, 1)
    dat += struct.pack("<IIhH", 3, 2000, 10, 0)
    blob = (
        b"--- file type: CFG ---\r\n"
        + cfg.replace("\n", "\r\n").encode()
        + b"--- file type: INF ---\r\n[Valdmere]\r\nbay=7\r\n"
        + b"--- file type: HDR ---\r\nFault on Line Brightwater\r\n"
        + f"--- file type: DAT BINARY: {len(dat)} ---\r\n".encode()
        + dat
    )
    path = tmp_path / "brightwater.CFF"
    path.write_bytes(blob)
    rec = read(path, assign_roles=False)
    np.testing.assert_allclose(rec.analog[0].values, [0x0A0D, 0x2D2D, 10])
    assert rec.header_text.strip() == "Fault on Line Brightwater"
    assert "bay=7" in rec.info_text
    assert rec.provenance.container == "cff"
    import hashlib

    assert rec.provenance.sha256 == hashlib.sha256(blob).hexdigest()


def test_missing_markers_match_reference_table(tmp_path: Path) -> None:
    # the markers of tests/reference/comtrade.toml, each decoded to NaN by the reader
    rows = {row["format"]: row for row in REF["missing_marker"]}
    assert rows["BINARY"]["raw_hex"] == "8000"
    assert struct.unpack("<h", bytes.fromhex("0080"))[0] == rows["BINARY"]["value"]
    assert struct.unpack("<i", bytes.fromhex("00000080"))[0] == rows["BINARY32"]["value"]
    for ft in ("BINARY", "BINARY32", "FLOAT32", "ASCII"):
        dat = _ascii_2013() if ft == "ASCII" else _binary_2013(ft)
        rec = read(_put(tmp_path, f"m{ft}", CFG_2013.format(ft=ft), dat), assign_roles=False)
        assert math.isnan(rec.analog[0].values[2]) and math.isnan(rec.analog[1].values[3])
        assert np.isfinite(rec.analog[2].values).all()


@pytest.mark.parametrize(
    ("ph", "name", "expected"),
    [
        # cfg ph texts and common naming styles (common practice)
        ("A", "", "A"),
        ("r", "", "A"),
        ("S", "", "B"),
        ("T", "", "C"),
        ("L2", "", "B"),
        ("3", "", "C"),
        ("Ph B", "", "B"),
        ("N", "", "N"),
        ("AB", "", None),
        ("", "VA", "A"),
        ("", "Va line", "A"),
        ("", "U_L1", "A"),
        ("", "I L2", "B"),
        ("", "LINE 1 V A", "A"),
        ("", "IC", "C"),
        ("", "3I0", "N"),
        ("", "IN", "N"),
        ("", "Frequency", None),
    ],
)
def test_phase_texts(ph: str, name: str, expected: str | None) -> None:
    assert canonical_phase(ph, name) == expected


def test_upper_case_extensions_stem_and_blank_lines(tmp_path: Path) -> None:
    cfg = _simple_cfg(nrates_block="1\n1000,3").replace("\n", "  \n\n")  # trailing spaces
    (tmp_path / "DUNHALLOW.CFG").write_bytes(cfg.encode())
    dat = b"".join(struct.pack("<IIhH", k, k * 1000, k, 0) for k in range(3))  # 0-based
    (tmp_path / "DUNHALLOW.DAT").write_bytes(dat)
    for p in ("DUNHALLOW.CFG", "DUNHALLOW.DAT", "DUNHALLOW", "dunhallow.cfg", "Dunhallow"):
        rec = read(tmp_path / p, assign_roles=False)
        np.testing.assert_allclose(rec.analog[0].values, [0, 1, 2])
    assert any("start at 0" in n for n in rec.provenance.notes)
