"""Speed of the direct arc-parameter fit (``pytest -m bench benchmarks/test_bench_fit.py -s``).

Target (issue): a direct fit of one record in under 5 s on one core. Reported as the wall
time and as a ratio to one forward simulation of the arc over the same record measured in
the same run (the fit's unit of work).
"""

from __future__ import annotations

import time

import numpy as np
import pytest

from recordscan.core.record import AnalogChannel, Record
from recordscan.fit import fit_record
from recordscan.physics.arc import ArcParameters, LinearElongation, simulate_current_driven
from recordscan.synth.staged import simulate_staged_arc


@pytest.mark.bench
def test_direct_fit_speed() -> None:
    prim = simulate_staged_arc(
        ArcParameters(u0_v_per_m=1250, r0_ohm_per_m=0.015),
        period="primary",
        i_s_rms_a=12_000,
        duration_s=0.1,
        rate_hz=5000,
        frequency_hz=50,
    )
    sec = simulate_staged_arc(
        ArcParameters(),
        law=LinearElongation(5.0),
        i_s_rms_a=30,
        duration_s=1.0,
        rate_hz=5000,
        frequency_hz=50,
    )
    t = np.concatenate([prim.t_s, prim.t_s[-1] + 2e-4 + sec.t_s])
    i = np.concatenate([prim.i_a, sec.i_a])
    rec = Record(
        t_s=t,
        analog=(
            AnalogChannel("ARC I", i, unit="A", role="arc_i"),
            AnalogChannel("ARC V", np.concatenate([prim.u_v, sec.u_v]), unit="V", role="arc_v"),
        ),
        frequency_hz=50.0,
    )
    simulate_current_driven(t, i)  # compile once
    t0 = time.perf_counter()
    for _ in range(20):
        simulate_current_driven(t, i, params=ArcParameters(), law=LinearElongation(5.0))
    forward = (time.perf_counter() - t0) / 20
    fit_record(rec)  # warm caches
    best = np.inf
    for _ in range(3):
        t0 = time.perf_counter()
        fit_record(rec)
        best = min(best, time.perf_counter() - t0)
    print(
        f"\ndirect fit of a {t[-1]:.2f} s staged record at 5 kHz (both periods): "
        f"{best:.2f} s = {best / forward:.0f} × one forward simulation ({forward * 1e3:.2f} ms)"
    )
    assert best < 5.0
