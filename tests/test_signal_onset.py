"""Decision rules: runs, hysteresis, change points, STA/LTA (checked against direct loops)."""

from __future__ import annotations

import numpy as np
import pytest

from recordscan.signal.charfunc import robust_scale, sta_lta, step_score
from recordscan.signal.onset import (
    change_point_mean,
    first_sustained,
    hysteresis_state,
    last_crossing_before,
    runs,
)


def test_runs_and_first_sustained() -> None:
    m = np.array([0, 1, 1, 0, 1, 1, 1, 1, 0, 1], dtype=bool)
    s, e = runs(m)
    assert s.tolist() == [1, 4, 9] and e.tolist() == [3, 8, 10]
    assert first_sustained(m, n_hold=3) == 4
    assert first_sustained(m, n_hold=5) is None
    assert first_sustained(m, n_hold=1, start=5) == 5


def test_hysteresis_matches_loop() -> None:
    rng = np.random.default_rng(5)
    cf = rng.uniform(size=300)
    st = hysteresis_state(cf, on=0.8, off=0.3)
    ref, cur = [], False
    for v in cf:
        if v >= 0.8:
            cur = True
        elif v < 0.3:
            cur = False
        ref.append(cur)
    assert st.tolist() == ref


def test_change_point_mean_locates_step() -> None:
    rng = np.random.default_rng(7)
    x = np.concatenate([np.zeros(137), np.ones(200)]) + 0.05 * rng.normal(size=337)
    k, gain = change_point_mean(x)
    assert k == 137
    assert gain > 0.95


def test_last_crossing_before() -> None:
    x = np.array([0, 0, 1, 2, 3, 0, 5, 6, 7.0])
    assert last_crossing_before(x, 8, level=1.0) == 6
    assert last_crossing_before(x, 4, level=1.0) == 2


def test_sta_lta_and_step_score() -> None:
    cf = np.concatenate([np.ones(500), 10 * np.ones(100)])
    r = sta_lta(cf, n_sta=10, n_lta=200)
    assert r[499] == pytest.approx(1.0)
    assert r[520] == pytest.approx(10 / ((179 + 21 * 10) / 200))  # direct means
    sc = step_score(np.concatenate([np.zeros(50), 2 * np.ones(50)]), n=10)
    assert int(np.nanargmax(sc)) == 50 and np.nanmax(sc) == pytest.approx(2.0)
    # 1.4826·MAD estimates σ of Gaussian noise (derived: 1/Φ⁻¹(3/4); Rousseeuw & Croux 1993)
    g = np.random.default_rng(1).normal(scale=3.0, size=200000)
    assert robust_scale(g) == pytest.approx(3.0, rel=0.01)
