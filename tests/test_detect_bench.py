"""Speed: a typical record (16 analog channels, 10 kHz, 3 s, BINARY) is fully analysed in under
3× the time it takes to load it (issue 4). Ratio measured in one run; run with -m bench -s."""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np
import pytest
from test_detect_waveforms import Scenario, build

from recordscan.analysis import analyse
from recordscan.core.record import AnalogChannel


def _median_time(fn, n: int = 5) -> float:
    out = []
    for _ in range(n):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return float(np.median(out))


@pytest.mark.bench
def test_scan_under_three_times_load(tmp_path: Path) -> None:
    from recordscan.io import read, write

    rec, _ = build(Scenario(fs_hz=10000.0, duration_s=3.0, reclose_after_s=1.0, noise_snr_db=50.0))
    extra = [
        AnalogChannel(f"AUX{k}", ch.values * (0.5 + 0.05 * k), ch.unit, None, None)
        for k, ch in enumerate(rec.analog * 2)
    ][:10]
    rec = rec.with_channels(analog=(*rec.analog, *extra))
    assert len(rec.analog) == 16
    path = tmp_path / "bench.cfg"
    write(rec, path, data_format="BINARY")
    loaded = read(path)
    analyse(loaded)  # warm caches and lazy imports
    t_load = _median_time(lambda: read(path))
    t_scan = _median_time(lambda: analyse(read(path)))
    ratio = t_scan / t_load
    print(
        f"\nload {t_load * 1e3:.1f} ms, load+analyse {t_scan * 1e3:.1f} ms, ratio {ratio:.2f}, "
        f"{1.0 / t_scan:.1f} records/s (one process)"
    )
    assert analyse(loaded).event == "single_pole_trip"
    assert ratio < 3.0
