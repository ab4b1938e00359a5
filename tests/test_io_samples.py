"""The sample records shipped in the source distribution of the PyPI ``comtrade`` package.

Source: python-comtrade by David Parrini, ``comtrade`` sdist on PyPI (MIT licence), files
``tests/sample_files/*``. They are fetched at test time with ``pip download`` into a cache
directory and never copied into this repository. If they cannot be fetched the tests FAIL
(they are part of the external checks; see docs/comtrade.md).

Expected values come from the files themselves (cfg a/b/ratio fields, dat integers) and from
the ``comtrade`` package as an independent reader where it is right. Where the two readers
differ by design (primary/secondary ratio, UTC conversion, nanoseconds) the test states it.
"""

from __future__ import annotations

import importlib.metadata
import os
import shutil
import subprocess
import sys
import tarfile
import warnings
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from recordscan.io import read

CACHE = Path(os.environ.get("RECORDSCAN_TEST_CACHE", Path.home() / ".cache" / "recordscan-test"))


def _ns(iso: str) -> int:
    return int(np.datetime64(iso, "ns").astype(np.int64))


@pytest.fixture(scope="module")
def samples() -> Path:
    """Directory holding the sdist's sample_files (downloaded once, then cached)."""
    version = importlib.metadata.version("comtrade")
    root = CACHE / f"comtrade-{version}"
    target = root / "sample_files"
    if (target / "sample_ascii.cfg").is_file():
        return target
    root.mkdir(parents=True, exist_ok=True)
    cmd = [
        sys.executable,
        "-m",
        "pip",
        "download",
        "--no-deps",
        "--no-binary",
        ":all:",
        f"comtrade=={version}",
        "-d",
        str(root),
        "--quiet",
    ]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=300, check=False)
    archives = sorted(root.glob("comtrade-*.tar.gz"))
    if proc.returncode != 0 or not archives:
        pytest.fail(
            "cannot fetch the comtrade sdist sample files with pip "
            f"(needed as an external check): {proc.stderr.strip()[-400:]}"
        )
    tmp = root / "unpack"
    with tarfile.open(archives[-1]) as tar:
        members = [m for m in tar.getmembers() if "/tests/sample_files/" in m.name and m.isfile()]
        for m in members:
            m.name = Path(m.name).name
        tar.extractall(tmp, members=members, filter="data")
    if target.exists():
        shutil.rmtree(target)
    tmp.rename(target)
    return target


def _pair(samples: Path, tmp: Path, cfg_name: str, dat_name: str) -> Path:
    """Pair a sample cfg with a sample dat under one stem in ``tmp``."""
    shutil.copy(samples / cfg_name, tmp / "rec.cfg")
    shutil.copy(samples / dat_name, tmp / "rec.dat")
    return tmp / "rec.cfg"


def _reference(path: Path, **kw: Any) -> Any:
    import comtrade

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return comtrade.load(str(path), use_numpy_arrays=True, use_double_precision=True, **kw)


def test_ascii_2013(samples: Path) -> None:
    rec = read(samples / "sample_ascii.cfg", assign_roles=False)
    ref = _reference(samples / "sample_ascii.cfg")
    assert rec.n_samples == 40 and rec.sample_rates == ((1200.0, 40),)
    assert [c.name for c in rec.analog] == ["IA", "IB", "IC", "3I0"]
    assert [c.phase for c in rec.analog] == ["A", "B", "C", "N"]
    # channels are flagged S with ratio 933:1; the comtrade package gives secondary values
    for ch, ref_vals in zip(rec.analog, ref.analog, strict=True):
        np.testing.assert_allclose(ch.values, np.asarray(ref_vals) * 933.0, rtol=1e-12)
    np.testing.assert_allclose(rec.t_s, ref.time, atol=1e-12)
    # first IA sample from the files: x = -83, a = 0.1138916015625, b = 0.05694580078125
    assert rec.analog[0].values[0] == pytest.approx(
        (-83 * 0.1138916015625 + 0.05694580078125) * 933
    )
    assert rec.digital[3].values[10] and not rec.digital[3].values[9]
    # 12/01/2011 is dd/mm/yyyy; time_code -5h30 → UTC = local + 5 h 30 min
    assert rec.start_ns == _ns("2011-01-12T11:25:30.075011")
    assert rec.trigger_ns == _ns("2011-01-12T11:25:30.078261")


def test_cff_matches_cfg_pair(samples: Path) -> None:
    a = read(samples / "sample_ascii.cfg", assign_roles=False)
    b = read(samples / "sample_ascii.cff", assign_roles=False)
    assert b.provenance.container == "cff"
    np.testing.assert_array_equal(a.t_s, b.t_s)
    for x, y in zip(a.analog + a.digital, b.analog + b.digital, strict=True):
        np.testing.assert_array_equal(x.values, y.values)
    ref = _reference(samples / "sample_ascii.cff")
    np.testing.assert_allclose(b.analog[1].values, np.asarray(ref.analog[1]) * 933.0, rtol=1e-12)


def test_ascii_missing_values(samples: Path, tmp_path: Path) -> None:
    rec = read(
        _pair(samples, tmp_path, "sample_ascii.cfg", "sample_ascii_missing.dat"), assign_roles=False
    )
    ref = _reference(tmp_path / "rec.cfg")
    # 99999 marks the missing samples: (row 2, IA), (3, IB), (4, IC), (5, 3I0)
    for j, row in enumerate([1, 2, 3, 4]):
        assert np.isnan(rec.analog[j].values[row])
        assert np.isnan(np.asarray(ref.analog[j])[row])  # the comtrade package agrees
        assert np.isfinite(np.delete(rec.analog[j].values, row)).all()


@pytest.mark.parametrize("dat", ["sample_bin.dat", "sample_bin_missing.dat"])
def test_binary_1999(samples: Path, tmp_path: Path, dat: str) -> None:
    rec = read(_pair(samples, tmp_path, "sample_bin.cfg", dat), assign_roles=False)
    ref = _reference(tmp_path / "rec.cfg")
    assert rec.provenance.revision == "1999" and rec.n_samples == 5
    assert len(rec.digital) == 16
    for ch, ref_vals in zip(rec.analog, ref.analog, strict=True):
        assert ch.unit == "V" and ch.source_unit == "kV"
        # P channels in kV: primary V = 1000 × the comtrade package's value
        np.testing.assert_allclose(ch.values, np.asarray(ref_vals) * 1e3, rtol=1e-12)
    # the .dat timestamps are all 0: the 15360 Hz rate gives the time axis
    np.testing.assert_allclose(rec.t_s, np.arange(5) / 15360.0, atol=1e-15)
    assert rec.provenance.time_source == "rates"
    if dat == "sample_bin_missing.dat":
        # 0x8000 in (row 1, VA), (2, VB), (3, VC), (4, VN)
        assert [int(np.flatnonzero(np.isnan(c.values))[0]) for c in rec.analog] == [0, 1, 2, 3]


def test_float32_cff_with_nanoseconds(samples: Path) -> None:
    rec = read(samples / "sample_float32.cff", assign_roles=False)
    ref = _reference(samples / "sample_float32.cff")
    assert rec.provenance.data_format == "FLOAT32" and rec.n_samples == 301
    np.testing.assert_allclose(rec.analog[0].values, ref.analog[0], rtol=1e-12)
    np.testing.assert_array_equal(rec.digital[0].values, np.asarray(ref.status[0]) != 0)
    # nanosecond stamps kept exactly (the comtrade package truncates them to µs)
    assert rec.start_ns == _ns("2021-02-17T17:37:12.422969065")
    assert rec.trigger_ns == _ns("2021-02-17T17:37:13.922969065")
    # its .dat stamps step by 10 ns-counts while the rate says 10 ms: the rate wins
    np.testing.assert_allclose(rec.t_s, np.arange(301) / 100.0, atol=1e-12)
    assert any("disagree" in n for n in rec.provenance.notes)


def test_latin1_names(samples: Path, tmp_path: Path) -> None:
    for cfg, dat in (
        ("sample_iso8859-1.cfg", "sample_iso8859-1.dat"),
        ("sample_iso8859-1_bin.cfg", "sample_iso8859-1_bin.dat"),
    ):
        rec = read(_pair(samples, tmp_path, cfg, dat), assign_roles=False)
        assert rec.provenance.encoding == "latin-1"
        assert (rec.station, rec.device) == ("Estação de Medição", "Oscilógrafo")
        ref = _reference(tmp_path / "rec.cfg", encoding="latin-1")
        for ch, ref_vals in zip(rec.analog, ref.analog, strict=True):
            np.testing.assert_allclose(ch.values, np.asarray(ref_vals) * 933.0, rtol=1e-12)


def test_sub_characters_and_utf8_names(samples: Path, tmp_path: Path) -> None:
    base = read(samples / "sample_ascii.cfg", assign_roles=False)
    rec = read(
        _pair(samples, tmp_path, "sample_sub_char.cfg", "sample_ascii.dat"), assign_roles=False
    )
    np.testing.assert_array_equal(rec.analog[0].values, base.analog[0].values)
    rec = read(
        _pair(samples, tmp_path, "sample_ascii_utf-8.cfg", "sample_ascii.dat"), assign_roles=False
    )
    assert rec.provenance.encoding == "utf-8"
    assert rec.station.endswith("터파크387")
