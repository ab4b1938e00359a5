"""Bad input: every case of issue 2's list gives one clear line naming the file, raised as the
right :class:`recordscan.errors.RecordScanError` subclass; mangled files never raise anything
else (hypothesis). Well-formed starting files follow IEEE C37.111-2013 field rules (from
memory); the mangling is random.
"""

from __future__ import annotations

import random
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from recordscan.core.record import AnalogChannel, Record, StatusChannel
from recordscan.errors import FormatError, MissingFileError, RecordScanError
from recordscan.io import read, write


def _record() -> Record:
    t = np.arange(20) / 1000.0
    return Record(
        t_s=t,
        analog=(
            AnalogChannel("VA", 1e5 * np.sin(2 * np.pi * 50 * t), unit="V", source_unit="kV"),
            AnalogChannel("IA", 1e3 * np.cos(2 * np.pi * 50 * t), unit="A"),
        ),
        digital=(StatusChannel("TRIP A", t > 0.01),),
        station="Dunhallow",
        start_ns=1_700_000_000_000_000_000,
    )


def _written(tmp: Path, fmt: str = "BINARY", *, cff: bool = False) -> list[Path]:
    return write(_record(), tmp / "rec", data_format=fmt, cff=cff)


def _check(exc: pytest.ExceptionInfo[RecordScanError], path: Path) -> None:
    msg = str(exc.value)
    assert "\n" not in msg
    assert msg.startswith(str(path)), msg


def _edit_cfg(cfg: Path, old: str, new: str) -> None:
    text = cfg.read_text(encoding="utf-8")
    assert old in text
    cfg.write_text(text.replace(old, new, 1), encoding="utf-8")


def test_truncated_dat(tmp_path: Path) -> None:
    cfg, dat = _written(tmp_path)
    dat.write_bytes(dat.read_bytes()[:-3])
    with pytest.raises(FormatError, match="not a whole number") as exc:
        read(cfg, assign_roles=False)
    _check(exc, dat)


@pytest.mark.parametrize(("change", "word"), [(-1, "shorter"), (+1, "longer")])
def test_dat_shorter_or_longer_than_cfg(tmp_path: Path, change: int, word: str) -> None:
    # never zero-filled, never cut: reported
    cfg, dat = _written(tmp_path)
    data = dat.read_bytes()
    row = len(data) // 20
    dat.write_bytes(data[:-row] if change < 0 else data + data[-row:])
    with pytest.raises(FormatError, match=word) as exc:
        read(cfg, assign_roles=False)
    _check(exc, dat)


@pytest.mark.parametrize("extra", [",7", ""])
def test_ascii_line_with_wrong_value_count(tmp_path: Path, extra: str) -> None:
    cfg, dat = _written(tmp_path, "ASCII")
    lines = dat.read_text().splitlines()
    lines[4] = lines[4] + extra if extra else lines[4].rsplit(",", 1)[0]
    dat.write_text("\n".join(lines) + "\n")
    with pytest.raises(FormatError, match="line 5 has") as exc:
        read(cfg, assign_roles=False)
    _check(exc, dat)


def test_ascii_non_numeric_value(tmp_path: Path) -> None:
    cfg, dat = _written(tmp_path, "ASCII")
    dat.write_text(dat.read_text().replace("\n3,", "\n3x,", 1))
    with pytest.raises(FormatError, match="non-numeric") as exc:
        read(cfg, assign_roles=False)
    _check(exc, dat)


@pytest.mark.parametrize(
    ("old", "new", "match"),
    [
        ("3,2A,1D", "4,2A,1D", "total channel count"),  # wrong channel counts
        ("3,2A,1D", "4,3A,1D", "fields"),  # counts say more analog lines than there are
        ("3,2A,1D", "2,1A,1D", "status channel 1 has 13 fields"),  # fewer
        ("\r\nBINARY\r\n", "\r\nBINARY64\r\n", "unknown data file type"),
        ("1000,20", "-1000,20", "negative sample rate"),
        ("\r\n1\r\n1000,20", "\r\n2\r\n1000,10\r\n0,20", "zero sample rate"),
        ("\r\n1\r\n1000,20", "\r\n1\r\n1000,0", "last sample number"),
        ("Dunhallow,,2013", "Dunhallow,,2017", "unknown COMTRADE revision"),
        (",kV,", ",kV,1,", "has 14 fields"),  # one value too many
        ("\r\n50\r\n", "\r\nfifty\r\n", "not a number"),
        ("/2023,", "/2023x,", "cannot read the date"),
    ],
)
def test_cfg_errors(tmp_path: Path, old: str, new: str, match: str) -> None:
    cfg, _ = _written(tmp_path)
    text = cfg.read_bytes().decode()
    assert old in text, text
    cfg.write_bytes(text.replace(old, new, 1).encode())
    with pytest.raises(FormatError, match=match) as exc:
        read(cfg, assign_roles=False)
    _check(exc, cfg)


def test_non_numeric_multiplier(tmp_path: Path) -> None:
    cfg, _ = _written(tmp_path)
    text = cfg.read_bytes().decode()
    lines = text.split("\r\n")
    fields = lines[2].split(",")
    fields[5] = "abc"
    lines[2] = ",".join(fields)
    cfg.write_bytes("\r\n".join(lines).encode())
    with pytest.raises(FormatError, match="multiplier a is not a number") as exc:
        read(cfg, assign_roles=False)
    _check(exc, cfg)


def test_missing_dat(tmp_path: Path) -> None:
    cfg, dat = _written(tmp_path)
    dat.unlink()
    with pytest.raises(MissingFileError) as exc:
        read(cfg, assign_roles=False)
    assert str(exc.value).startswith(str(tmp_path / "rec.dat"))


def test_missing_record(tmp_path: Path) -> None:
    with pytest.raises(MissingFileError):
        read(tmp_path / "nothing.cfg", assign_roles=False)
    with pytest.raises(MissingFileError):
        read(tmp_path / "nothing", assign_roles=False)


def test_undecodable_names(tmp_path: Path) -> None:
    cfg, _ = _written(tmp_path)
    data = cfg.read_bytes().replace(b"Dunhallow", b"Dun\xffhal\xfelow")
    cfg.write_bytes(data)
    with pytest.raises(FormatError, match="cannot be decoded as utf-8") as exc:
        read(cfg, encoding="utf-8", assign_roles=False)
    _check(exc, cfg)
    cfg.write_bytes(data.replace(b"Dun\xff", b"Dun\x01\x02"))
    with pytest.raises(FormatError, match=r"control characters|undecodable") as exc:
        read(cfg, assign_roles=False)
    _check(exc, cfg)


@pytest.mark.parametrize("which", ["cfg", "dat", "cff"])
def test_empty_files(tmp_path: Path, which: str) -> None:
    files = _written(tmp_path, cff=which == "cff")
    target = {"cfg": files[0], "dat": files[-1], "cff": files[0]}[which]
    target.write_bytes(b"")
    with pytest.raises(FormatError, match="empty") as exc:
        read(files[0], assign_roles=False)
    _check(exc, target)


def test_truncated_cff(tmp_path: Path) -> None:
    (cff,) = _written(tmp_path, cff=True)
    cff.write_bytes(cff.read_bytes()[:-10])
    with pytest.raises(FormatError, match="truncated") as exc:
        read(cff, assign_roles=False)
    _check(exc, cff)


def test_writer_refuses_bad_combinations(tmp_path: Path) -> None:
    with pytest.raises(FormatError, match="not 'FLOAT32'"):
        write(_record(), tmp_path / "x", revision="1999", data_format="FLOAT32")
    with pytest.raises(FormatError, match="only in revision 2013"):
        write(_record(), tmp_path / "x", revision="1999", cff=True)
    with pytest.raises(FormatError, match="revision"):
        write(_record(), tmp_path / "x", revision="1991")
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- mangling
FORMATS = [
    ("ASCII", False),
    ("ASCII", True),
    ("BINARY", False),
    ("BINARY32", True),
    ("FLOAT32", False),
]


def _mangle(data: bytes, how: str, rnd: random.Random) -> bytes:
    if not data:
        return data
    if how == "truncate":
        return data[: rnd.randrange(len(data))]
    if how == "flip":
        buf = bytearray(data)
        for _ in range(rnd.randint(1, 4)):
            i = rnd.randrange(len(buf))
            buf[i] ^= 1 << rnd.randrange(8)
        return bytes(buf)
    lines = data.split(b"\n")
    k = rnd.randrange(len(lines))
    if how == "drop_field":
        fields = lines[k].split(b",")
        if len(fields) > 1:
            del fields[rnd.randrange(len(fields))]
        lines[k] = b",".join(fields)
    elif how == "random_text":
        lines[k] = bytes(rnd.randrange(256) for _ in range(rnd.randint(0, 30)))
    else:  # drop_line
        del lines[k]
    return b"\n".join(lines)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    fmt=st.sampled_from(FORMATS),
    target=st.sampled_from(["cfg", "dat"]),
    how=st.sampled_from(["truncate", "flip", "drop_field", "random_text", "drop_line"]),
    seed=st.integers(0, 2**32 - 1),
)
def test_mangled_input_only_raises_own_errors(
    fmt: tuple[str, bool], target: str, how: str, seed: int
) -> None:
    data_format, cff = fmt
    rnd = random.Random(seed)
    with tempfile.TemporaryDirectory() as tmp:
        files = _written(Path(tmp), data_format, cff=cff)
        victim = files[0] if (cff or target == "cfg") else files[1]
        victim.write_bytes(_mangle(victim.read_bytes(), how, rnd))
        try:
            rec = read(files[0], assign_roles=False)
        except RecordScanError as exc:
            assert "\n" not in str(exc)
        else:
            assert rec.n_samples == len(rec.t_s)
