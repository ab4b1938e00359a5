"""``recordscan export``: clipped windows as CSV, Parquet and COMTRADE.

Independent references: the CSV is read back with Python's ``csv`` module, the Parquet file
with ``pyarrow`` (the Apache Arrow reference implementation), the COMTRADE output with the
PyPI ``comtrade`` package (an independent reader). Expected values come from the IEEE
C37.111-2013 scaling ``value = a·x + b`` of the hand-written source record (see
tests/test_cli_inspect.py for the cfg field rules, from memory).
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest
from test_cli_inspect import ANALOG, N, analog_counts, digital_states, run, write_record


def _primary(name: str) -> np.ndarray:
    """Primary SI values of a source channel from the standard's scaling."""
    for ch_name, _ph, _cc, uu, a, b in ANALOG:
        if ch_name == name:
            return (a * analog_counts()[name] + b) * (1000.0 if uu == "kV" else 1.0)
    raise KeyError(name)


@pytest.fixture
def cfg(tmp_path: Path) -> Path:
    (tmp_path / "src").mkdir()
    return write_record(tmp_path / "src")


def test_csv_window(cfg: Path, tmp_path: Path, capsys) -> None:
    out = tmp_path / "out" / "window.csv"
    args = ["export", str(cfg), "--to", "csv", "--start", "0.005", "--end", "0.015"]
    code, stdout, err = run([*args, "--out", str(out), "--json"], capsys)
    assert code == 0, err
    info = json.loads(stdout)
    assert info["files"] == [str(out)] and info["n_samples"] == 10
    # the window starts 5 ms after the record's first sample (09:26:53.589793)
    assert info["start"] == "2026-03-14T09:26:53.594793000Z"
    rows = list(csv.reader(io.StringIO(out.read_text(encoding="utf-8"))))
    header, body = rows[0], rows[1:]
    assert header[:5] == ["t_s", "VA [v_a] (V)", "VB [v_b] (V)", "IA [i_a] (A)", "IN [i_n] (A)"]
    assert header[5] == "52b A [pole_a, inverted]"
    assert len(body) == 10
    t = np.array([float(r[0]) for r in body])
    np.testing.assert_allclose(t, np.arange(10) * 1e-3, atol=1e-12)
    np.testing.assert_allclose([float(r[1]) for r in body], _primary("VA")[5:15], rtol=1e-12)
    np.testing.assert_allclose([float(r[4]) for r in body], _primary("IN")[5:15], rtol=1e-12)
    pole = np.array([int(r[5]) for r in body])
    np.testing.assert_array_equal(pole, 1 - digital_states()["52b A"][5:15])  # closed sense
    trip = np.array([int(r[6]) for r in body])
    np.testing.assert_array_equal(trip, digital_states()["TRIP A"][5:15])


def test_parquet_window_from_trigger(cfg: Path, tmp_path: Path, capsys) -> None:
    import pyarrow.parquet as pq

    out = tmp_path / "w.parquet"
    # trigger is 10 ms after the first sample: [-2 ms, +3 ms) around it = samples 8..12
    args = ["export", str(cfg), "--to", "parquet", "--from-trigger", "--start", "-0.002"]
    code, _, err = run([*args, "--end", "0.003", "--out", str(out)], capsys)
    assert code == 0, err
    table = pq.read_table(out)
    assert table.num_rows == 5
    np.testing.assert_allclose(table.column("IA [i_a] (A)").to_numpy(), _primary("IA")[8:13])
    meta = json.loads(table.schema.metadata[b"recordscan"])
    assert meta["station"] == "Ashcombe"
    assert meta["trigger_ns"] - meta["start_ns"] == 2_000_000
    assert [c["role"] for c in meta["channels"][:4]] == ["v_a", "v_b", "i_a", "i_n"]


@pytest.mark.parametrize(("fmt", "cff"), [("BINARY", False), ("FLOAT32", True), ("ASCII", False)])
def test_comtrade_window_read_back_independently(
    cfg: Path, tmp_path: Path, capsys, fmt: str, cff: bool
) -> None:
    import comtrade  # the PyPI reference reader

    out = tmp_path / ("clip.cff" if cff else "clip.cfg")
    args = ["export", str(cfg), "--to", "comtrade", "--format", fmt, "--start", "0.003"]
    args += ["--end", "0.013", "--out", str(out)] + (["--cff"] if cff else [])
    code, _, err = run(args, capsys)
    assert code == 0, err
    ref = comtrade.Comtrade()
    if cff:
        ref.load(str(out))
    else:
        ref.load(str(out), str(out.with_suffix(".dat")))
    assert ref.total_samples == 10
    names = list(ref.analog_channel_ids)
    va = np.asarray(ref.analog[names.index("VA")])
    unit = ref.cfg.analog_channels[names.index("VA")].uu
    scale = 1000.0 if unit.strip().lower() == "kv" else 1.0
    # within the quantisation of the written format (16-bit step over the window's range)
    expected = _primary("VA")[3:13]
    step = np.ptp(expected) / 2**15 if fmt != "FLOAT32" else 1e-6 * np.abs(expected).max()
    np.testing.assert_allclose(va * scale, expected, atol=2 * step + 1e-9)
    status = list(ref.status_channel_ids)
    pole = np.asarray(ref.status[status.index("52b A")])
    np.testing.assert_array_equal(pole, digital_states()["52b A"][3:13])  # as recorded


@pytest.mark.parametrize(
    ("extra", "expect"),
    [
        (["--to", "csv", "--start", "2.0"], "window [2, end) s holds no samples"),
        (["--to", "csv", "--start", "0.01", "--end", "0.005"], "not after its start"),
        (["--to", "csv", "--format", "ASCII"], "apply to --to comtrade only"),
        (["--to", "comtrade", "--profile", "x.toml"], "--profile and --bay apply"),
    ],
)
def test_bad_window_exit_2_nothing_written(
    cfg: Path, tmp_path: Path, capsys, extra: list[str], expect: str
) -> None:
    out = tmp_path / "never" / "x.csv"
    code, stdout, err = run(["export", str(cfg), *extra, "--out", str(out)], capsys)
    assert code == 2 and stdout == ""
    assert err.startswith("recordscan: error: ") and err.count("\n") == 1
    assert expect in err
    assert not out.exists()
    assert not out.parent.exists() or list(out.parent.iterdir()) == []


def test_bad_record_nothing_written(tmp_path: Path, capsys) -> None:
    src = tmp_path / "src"
    src.mkdir()
    cfg = write_record(src)
    dat = src / "ashcombe.dat"
    rows = dat.read_text(encoding="utf-8").splitlines()
    dat.write_text("\r\n".join(rows[: N - 3]) + "\r\n", encoding="utf-8")  # 3 samples short
    out = tmp_path / "o.csv"
    code, stdout, err = run(["export", str(cfg), "--to", "csv", "--out", str(out)], capsys)
    assert code == 2 and stdout == "" and err.count("\n") == 1
    assert "ashcombe" in err and "Traceback" not in err
    assert list(tmp_path.iterdir()) == [src]


def test_clip_without_trigger_is_refused() -> None:
    from recordscan.cli.export import ExportError, clip
    from recordscan.core.record import Record

    rec = Record(t_s=np.arange(5) * 1e-3)
    assert clip(rec, start_s=0.001, end_s=0.003).n_samples == 2
    with pytest.raises(ExportError, match="no trigger time"):
        clip(rec, start_s=0.0, from_trigger=True)
