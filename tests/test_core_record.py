"""The Record object: immutability, segments across gaps, slicing and resampling."""

from __future__ import annotations

import numpy as np
import pytest

from recordscan.core.record import AnalogChannel, Record, StatusChannel
from recordscan.errors import RoleError


def _record() -> Record:
    t = np.concatenate([np.arange(1000) / 1000.0, 3.0 + np.arange(500) / 1000.0])
    return Record(
        t_s=t,
        analog=(AnalogChannel("VA", np.sin(2 * np.pi * 50 * t), unit="V", phase="A", role="v_a"),),
        digital=(StatusChannel("52a A", t > 0.5, phase="A", role="pole_a"),),
        frequency_hz=50.0,
        start_ns=1_700_000_000_000_000_000,
        trigger_ns=1_700_000_000_100_000_000,
    )


def test_arrays_are_read_only() -> None:
    rec = _record()
    with pytest.raises(ValueError):
        rec.t_s[0] = 1.0
    with pytest.raises(ValueError):
        rec.analog[0].values[0] = 1.0


def test_gap_is_kept_as_two_segments() -> None:
    # A 2 s gap between a trip segment and a reclose segment is dead time: it must survive.
    rec = _record()
    segs = rec.segments
    assert [(s.start_idx, s.stop_idx) for s in segs] == [(0, 1000), (1000, 1500)]
    assert all(abs(s.rate_hz - 1000.0) < 1e-6 for s in segs)
    assert rec.duration_s == pytest.approx(3.499)


def test_slice_rebases_time_and_start() -> None:
    rec = _record()
    cut = rec.slice_time(0.25, 0.75)
    assert cut.n_samples == 500
    assert cut.t_s[0] == 0.0
    assert cut.start_ns == rec.start_ns + 250_000_000
    assert cut.processing[-1].startswith("slice_time")
    assert rec.processing == ()


def test_resample_keeps_gap_and_holds_digital() -> None:
    rec = _record()
    res = rec.resample(500.0)
    assert len(res.segments) == 2
    assert res.n_samples == 500 + 250
    assert res.digital[0].values.dtype == np.bool_


def test_roles_and_require() -> None:
    rec = _record()
    assert rec.roles == {"v_a": "VA", "pole_a": "52a A"}
    assert rec.require("v_a")[0].name == "VA"
    with pytest.raises(RoleError, match="i_a"):
        rec.require("v_a", "i_a")


def test_channel_length_mismatch_rejected() -> None:
    with pytest.raises(ValueError, match="samples"):
        Record(t_s=np.arange(10.0), analog=(AnalogChannel("x", np.zeros(9)),))


def test_trigger_seconds() -> None:
    assert _record().trigger_s == pytest.approx(0.1)


def test_dataframe_columns() -> None:
    df = _record().to_dataframe()
    assert list(df.columns) == ["VA [v_a]", "52a A [pole_a]"]
    assert df.index.name == "t_s"
