"""Reading speed: recordscan.io.read of a 16-channel, 10 kHz, 10 s BINARY record against a
plain numpy structured read (np.frombuffer + a·x + b per channel) of the same file, timed in
the same run. Target (issue 2): ratio below 2.

Run: ``.venv/bin/python -m pytest -m bench -s benchmarks/test_bench_io.py``
"""

from __future__ import annotations

import hashlib
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

from recordscan.core.record import AnalogChannel, Record, StatusChannel
from recordscan.io import read, write
from recordscan.io.comtrade.cfg import parse_cfg


def _best(fn: Callable[[], object], repeat: int = 9) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


@pytest.mark.bench
def test_binary_read_vs_plain_numpy(tmp_path: Path) -> None:
    rate_hz, n_analog = 10_000.0, 16
    t = np.arange(int(10 * rate_hz)) / rate_hz
    rng = np.random.default_rng(7)
    analog = tuple(
        AnalogChannel(f"CH{k}", 1e3 * np.sin(2 * np.pi * 50 * t + k) + rng.normal(size=t.size))
        for k in range(n_analog)
    )
    digital = tuple(StatusChannel(f"D{k}", t > 0.1 * k) for k in range(8))
    rec = Record(t_s=t, analog=analog, digital=digital, start_ns=1_700_000_000_000_000_000)
    cfg_path, dat_path = write(rec, tmp_path / "bench", data_format="BINARY")
    cfg = parse_cfg(cfg_path.read_text(), name="bench")
    a = np.array([c.a for c in cfg.analog])
    b = np.array([c.b for c in cfg.analog])
    dtype = np.dtype([("n", "<u4"), ("ts", "<u4"), ("a", "<i2", (n_analog,)), ("d", "<u2", (1,))])

    def plain() -> list[np.ndarray]:
        rows = np.frombuffer(dat_path.read_bytes(), dtype=dtype)
        raw = rows["a"]
        return [raw[:, j] * a[j] + b[j] for j in range(n_analog)]

    def ours() -> Record:
        return read(cfg_path, assign_roles=False)

    def ours_with_roles() -> Record:
        return read(cfg_path)

    ours()  # warm caches and imports
    ours_with_roles()
    t_plain = _best(plain)
    t_ours = _best(ours)
    t_roles = _best(ours_with_roles)
    blob = cfg_path.read_bytes() + dat_path.read_bytes()
    t_hash = _best(lambda: hashlib.sha256(blob).hexdigest())
    ratio = t_ours / t_plain
    print(
        f"\nBINARY 16 ch x 10 kHz x 10 s: plain numpy {t_plain * 1e3:.2f} ms, "
        f"recordscan.io.read {t_ours * 1e3:.2f} ms (ratio {ratio:.2f}), "
        f"with role assignment {t_roles * 1e3:.2f} ms (ratio {t_roles / t_plain:.2f}); "
        f"the provenance SHA-256 alone takes {t_hash * 1e3:.2f} ms "
        f"({t_hash / t_plain:.2f} x plain; hidden on a background thread only when a core "
        "is free)"
    )
    np.testing.assert_allclose(ours().analog[3].values, plain()[3], rtol=1e-12)
    assert ratio < 2.0
