"""Benchmark: ``recordscan inspect --json`` as a whole process vs a bare numpy read.

The record is 60 s at 10 kHz with 32 analog and 16 digital channels in COMTRADE 2013
BINARY (about 44 MB), written here by hand from the IEEE C37.111-2013 binary layout
(4-byte sample number, 4-byte timestamp, 2-byte analog values, 2-byte status words;
little-endian — from memory). The baseline is a bare ``python -c`` process that imports
numpy, reads the channel scalings from the cfg, reads the .dat through a structured dtype
and scales every analog channel to float64. Target: ratio < 3 (issue 2).

Run with ``.venv/bin/python -m pytest -m bench -s benchmarks/test_bench_inspect.py``.
"""

from __future__ import annotations

import json
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

N_ANALOG = 32
N_DIGITAL = 16
RATE_HZ = 10_000
DURATION_S = 60
N = RATE_HZ * DURATION_S

BASELINE = """
import sys
import numpy as np
cfg, dat = sys.argv[1], sys.argv[2]
lines = open(cfg, encoding="utf-8").read().splitlines()
n_an = int(lines[1].split(",")[1].rstrip("Aa"))
n_di = int(lines[1].split(",")[2].rstrip("Dd"))
fields = [ln.split(",") for ln in lines[2 : 2 + n_an]]
a = np.array([float(f[5]) for f in fields])
b = np.array([float(f[6]) for f in fields])
mult = np.array([1000.0 if f[4].strip().lower() == "kv" else 1.0 for f in fields])
n_words = (n_di + 15) // 16
dt = np.dtype([("n", "<u4"), ("t", "<u4"), ("a", "<i2", (n_an,)), ("d", "<u2", (n_words,))])
raw = np.fromfile(dat, dtype=dt)
values = (raw["a"].astype(np.float64) * a + b) * mult
t_s = raw["t"].astype(np.float64) * 1e-6
print(values.shape[0], float(values[:, 0].max()))
"""


def _write(folder: Path) -> Path:
    lines = ["Elderby,DR-12,2013", f"{N_ANALOG + N_DIGITAL},{N_ANALOG}A,{N_DIGITAL}D"]
    for i in range(1, N_ANALOG + 1):
        kind = ("V", "kV", 0.02) if i % 2 else ("I", "A", 0.5)
        ph = "ABC"[(i - 1) % 3]
        lines.append(
            f"{i},{kind[0]}{ph} {i},{ph},BAY {1 + (i - 1) // 8},{kind[1]},{kind[2]},0,0,"
            "-32767,32767,1,1,P"
        )
    for i in range(1, N_DIGITAL + 1):
        lines.append(f"{i},STATUS {i},,,0")
    lines += [
        "60",
        "1",
        f"{RATE_HZ},{N}",
        "02/12/2026,01:00:00.000000",
        "02/12/2026,01:00:00.100000",
        "BINARY",
        "1",
        "0,0",
        "0,0",
    ]
    cfg = folder / "elderby.cfg"
    cfg.write_text("\r\n".join(lines) + "\r\n", encoding="utf-8")
    dt = np.dtype([("n", "<u4"), ("t", "<u4"), ("a", "<i2", (N_ANALOG,)), ("d", "<u2", (1,))])
    data = np.zeros(N, dt)
    k = np.arange(N)
    data["n"] = k + 1
    data["t"] = k * (1_000_000 // RATE_HZ)
    phase = 2 * np.pi * 60 * k / RATE_HZ
    for j in range(N_ANALOG):
        data["a"][:, j] = np.round(20000 * np.sin(phase - 2.0944 * (j % 3))).astype(np.int16)
    data["d"][:, 0] = np.where(k > N // 2, 0x00FF, 0x0000)
    data.tofile(folder / "elderby.dat")
    return cfg


def _best_of(cmd: list[str], repeats: int) -> tuple[float, str]:
    best = float("inf")
    out = ""
    for _ in range(repeats):
        t0 = time.perf_counter()
        proc = subprocess.run(cmd, capture_output=True, text=True, check=False)
        elapsed = time.perf_counter() - t0
        assert proc.returncode == 0, proc.stderr
        best = min(best, elapsed)
        out = proc.stdout
    return best, out


@pytest.mark.bench
def test_inspect_json_whole_process_vs_bare_numpy(tmp_path: Path) -> None:
    cfg = _write(tmp_path)
    script = Path(sys.executable).parent / "recordscan"
    inspect_cmd = (
        [str(script)]
        if script.exists()
        else [sys.executable, "-c", "from recordscan.cli.main import main; main()"]
    ) + ["inspect", str(cfg), "--json"]
    base_cmd = [sys.executable, "-c", BASELINE, str(cfg), str(cfg.with_suffix(".dat"))]
    # warm the page cache and the bytecode caches once, then interleave best-of runs
    _best_of(base_cmd, 1)
    _best_of(inspect_cmd, 1)
    t_base, base_out = _best_of(base_cmd, 3)
    t_insp, insp_out = _best_of(inspect_cmd, 3)
    summary = json.loads(insp_out)
    assert summary["n_samples"] == N == int(base_out.split()[0])
    assert len(summary["analog"]) == N_ANALOG and len(summary["digital"]) == N_DIGITAL
    assert summary["analog"][0]["max"] == pytest.approx(float(base_out.split()[1]), rel=1e-12)
    ratio = t_insp / t_base
    print(
        f"\ninspect --json (60 s, 32 A + 16 D, 10 kHz BINARY): {t_insp:.3f} s; "
        f"bare numpy read+scale process: {t_base:.3f} s; ratio {ratio:.2f} (target < 3)"
    )
    assert ratio < 3.0
