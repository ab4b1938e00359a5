"""Reading speed: recordscan.io.read of a 16-channel, 10 kHz, 10 s BINARY record against a
plain numpy structured read (np.frombuffer + a·x + b per channel) of the same file, timed in
the same run (best of 21, the candidates interleaved). Target (issue 2): ratio below 2.
The provenance SHA-256 is computed on first access, so it is timed separately.

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


def _best_interleaved(fns: dict[str, Callable[[], object]], repeat: int = 21) -> dict[str, float]:
    """Best time of each function, the functions run in turn so that a change of machine
    load during the run hits them alike."""
    best = dict.fromkeys(fns, float("inf"))
    for _ in range(repeat):
        for key, fn in fns.items():
            t0 = time.perf_counter()
            fn()
            best[key] = min(best[key], time.perf_counter() - t0)
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

    def ours_hashed() -> str:
        return read(cfg_path, assign_roles=False).provenance.sha256

    ours()  # warm caches and imports
    ours_with_roles()
    times = _best_interleaved(
        {"plain": plain, "ours": ours, "roles": ours_with_roles, "hashed": ours_hashed}
    )
    t_plain = times["plain"]
    t_ours = times["ours"]
    ratio = t_ours / t_plain
    print(
        f"\nBINARY 16 ch x 10 kHz x 10 s: plain numpy {t_plain * 1e3:.2f} ms, "
        f"recordscan.io.read {t_ours * 1e3:.2f} ms (ratio {ratio:.2f}), "
        f"with role assignment {times['roles'] * 1e3:.2f} ms "
        f"(ratio {times['roles'] / t_plain:.2f}), read and ask for the provenance SHA-256 "
        f"(computed on first access) {times['hashed'] * 1e3:.2f} ms "
        f"(ratio {times['hashed'] / t_plain:.2f})"
    )
    blob = cfg_path.read_bytes() + dat_path.read_bytes()
    assert ours_hashed() == hashlib.sha256(blob).hexdigest()
    np.testing.assert_allclose(ours().analog[3].values, plain()[3], rtol=1e-12)
    assert ratio < 2.0
