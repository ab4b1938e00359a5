"""The PyPI ``comtrade`` package (python-comtrade, D. Parrini, MIT) as an independent reader
of the files recordscan writes, and the documented places where the two readers differ.

Where it is right (primary-flagged channels, records without gaps, the binary and 99999
missing markers) its values must equal ours after the unit prefix (kV → V). Each known
difference is asserted here, so that docs/comtrade.md stays true for the installed version:

* it ignores the .dat timestamps when a sample rate is given (a dead-time gap disappears);
* it has no primary/secondary scaling (an ``S`` channel comes out in secondary units);
* it reads a 16-bit -1 in a 1991 BINARY file as missing;
* it reads a 1991 3-field status line's normal state into the phase field;
* it reads 1991 two-digit years literally (year 95) and fails on an empty ASCII field.
"""

from __future__ import annotations

import datetime
import struct
import warnings
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from test_io_roundtrip import CASES, _event_record
from test_io_standard import CFG_1991, CFG_2013, _ascii_2013, _put

from recordscan.io import read, write


def _reference(path: Path) -> Any:
    import comtrade

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return comtrade.load(str(path), use_numpy_arrays=True, use_double_precision=True)


@pytest.mark.parametrize(("revision", "fmt", "cff"), CASES)
def test_reference_reader_agrees(tmp_path: Path, revision: str, fmt: str, cff: bool) -> None:
    rec = _event_record(n_digital=5)
    no_gap = rec.slice_time(0.0, 1.0)  # the first segment alone: no gap
    files = write(no_gap, tmp_path / "corrow", revision=revision, data_format=fmt, cff=cff)
    ours = read(files[0], assign_roles=False)
    ref = _reference(files[0])
    assert ref.total_samples == ours.n_samples
    np.testing.assert_allclose(np.asarray(ref.time), ours.t_s, atol=1e-9)
    # VA is primary, written in kV: ours (V) = 1000 × theirs, NaN in the same place
    va_ref = np.asarray(ref.analog[0]) * 1e3
    np.testing.assert_array_equal(np.isnan(va_ref), np.isnan(ours.analog[0].values))
    np.testing.assert_allclose(va_ref, ours.analog[0].values, rtol=1e-12, equal_nan=True)
    for k, ch in enumerate(ours.digital):
        np.testing.assert_array_equal(np.asarray(ref.status[k]) != 0, ch.values)
    assert ref.station_name == "Elderby" and ref.frequency == 50.0


def test_reference_ignores_timestamp_gaps_and_ratio(tmp_path: Path) -> None:
    rec = _event_record(n_digital=2)
    files = write(rec, tmp_path / "gap", data_format="BINARY")
    ours = read(files[0], assign_roles=False)
    ref = _reference(files[0])
    t_ref = np.asarray(ref.time)
    assert ours.t_s[1000] == pytest.approx(3.0)  # we keep the 2 s dead time
    assert t_ref[1000] == pytest.approx(1.0)  # it spaces every sample by 1/rate
    # IA is flagged S with 2000:1: it returns secondary amperes
    np.testing.assert_allclose(np.asarray(ref.analog[1]) * 2000.0, ours.analog[1].values, rtol=1e-9)


def test_reference_1991_differences(tmp_path: Path) -> None:
    dat = b"".join(
        struct.pack("<IIhhH", k + 1, ts, va, ia, st)
        for k, (ts, va, ia, st) in enumerate([(0, 10, -1, 0), (833, 20, 5, 1), (1667, -5, 0, 1)])
    )
    cfg = _put(tmp_path, "c91", CFG_1991, dat)
    ours = read(cfg, assign_roles=False)
    ref = _reference(cfg)
    assert ours.analog[1].values[0] == -0.5 and np.isnan(np.asarray(ref.analog[1])[0])
    assert ours.digital[0].normal_state == 1
    assert ref.cfg.status_channels[0].y == 0 and ref.cfg.status_channels[0].ph == "1"
    assert ref.start_timestamp.year == 95
    assert ours.start_ns == int(np.datetime64("1995-07-04T12:00:00", "ns").astype(np.int64))


def test_reference_fails_on_empty_ascii_field(tmp_path: Path) -> None:
    cfg = _put(tmp_path, "e", CFG_2013.format(ft="ASCII"), _ascii_2013())
    assert np.isnan(read(cfg, assign_roles=False).analog[0].values[2])
    with pytest.raises(ValueError):
        _reference(cfg)


def test_reference_truncates_ns_and_ignores_time_code(tmp_path: Path) -> None:
    from test_io_standard import _binary_2013

    cfg = _put(tmp_path, "tz", CFG_2013.format(ft="BINARY"), _binary_2013("BINARY"))
    ours = read(cfg, assign_roles=False)
    ref = _reference(cfg)
    # cfg stamp 02/12/2026,01:02:03.123456789 with time_code +1
    assert ref.start_timestamp == datetime.datetime(2026, 12, 2, 1, 2, 3, 123456)
    assert ours.start_ns == int(
        np.datetime64("2026-12-02T00:02:03.123456789", "ns").astype(np.int64)
    )
