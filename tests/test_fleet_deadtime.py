"""Dead-time evidence and the extinction-time trend (recordscan.fleet.deadtime, .trend)."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from fleet_results import make_fleet

from recordscan.fleet.deadtime import (
    DEIONISATION_RULES,
    dead_time_evidence,
    rule_cycles_s,
    rule_linear_s,
)
from recordscan.fleet.survival import StatisticsError, kaplan_meier
from recordscan.fleet.trend import extinction_trend, robust_trend

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

REF = tomllib.loads((Path(__file__).parent / "reference" / "fleet_deionisation.toml").read_text())


def test_cycles_rule_at_345_500_765_kv() -> None:
    # Common practice: t = 10.5 + kV/34.5 cycles (60-Hz cycles).
    row = REF["cycles_rule"]
    for kv, cycles, ms in zip(row["voltage_kv"], row["cycles"], row["time_ms"], strict=True):
        t_s = rule_cycles_s(kv * 1e3)
        assert t_s * 60.0 == pytest.approx(cycles, abs=row["tolerance_cycles"])
        assert t_s * 1e3 == pytest.approx(ms, abs=row["tolerance_ms"])


def test_linear_rule_at_345_500_765_kv() -> None:
    # Common practice: t ≈ 175 + 0.5·kV ms.
    row = REF["linear_rule"]
    for kv, ms in zip(row["voltage_kv"], row["time_ms"], strict=True):
        assert rule_linear_s(kv * 1e3) * 1e3 == pytest.approx(ms, abs=1e-9)
    assert set(DEIONISATION_RULES) == {"10.5+kV/34.5 cycles", "175+0.5kV ms"}
    with pytest.raises(StatisticsError, match="positive"):
        rule_linear_s(0.0)


def _frame(durations: list[float], censored: list[bool], *, kv: float = 500.0) -> pd.DataFrame:
    n = len(durations)
    pole = np.full(n, 0.1)
    d = np.asarray(durations)
    c = np.asarray(censored)
    return pd.DataFrame(
        {
            "sha256": [f"{i:064x}" for i in range(n)],
            "event": ["single_pole_trip"] * n,
            "line": ["Corrow–Dunhallow"] * n,
            "voltage_v": np.full(n, kv * 1e3),
            "pole_open_s": pole,
            "secondary_arc_start_s": pole + 0.005,
            "extinction_s": np.where(c, np.nan, pole + d),
            "extinction_censored": c,
            "observed_until_s": np.where(c, pole + d, pole + 1.0),
            "line_dead_time_s": np.full(n, 0.5),
        }
    )


def test_evidence_matches_kaplan_meier_and_rules() -> None:
    durations = [0.21, 0.25, 0.30, 0.33, 0.35, 0.40, 0.42, 0.45, 0.52, 0.60, 0.65, 0.70] * 2
    censored = [False] * 22 + [True, True]
    frame = _frame(durations, censored)
    ev = dead_time_evidence(frame, scope="Corrow–Dunhallow", probability=0.9)
    km = kaplan_meier(durations, ~np.asarray(censored))
    assert (ev.empirical_s, ev.empirical_low_s, ev.empirical_high_s) == km.percentile(0.9)
    assert ev.n_events == 24 and ev.n_censored == 2 and ev.n_extinct == 22
    assert ev.voltage_v == 500e3
    assert ev.rules_s["10.5+kV/34.5 cycles"] == pytest.approx(0.4165, abs=5e-5)
    assert ev.rules_s["175+0.5kV ms"] == pytest.approx(0.425)
    assert ev.setting_s == 0.5
    p, lo, hi = km.extinct_by(0.5)
    assert ev.extinct_by_setting == pytest.approx(float(p))
    assert ev.extinct_by_setting_low == pytest.approx(float(lo))
    assert ev.extinct_by_setting_high == pytest.approx(float(hi))
    assert lo <= p <= hi
    assert any("lower bounds" in n for n in ev.notes)
    assert ev.to_dict()["rules_s"] == ev.rules_s


def test_evidence_says_when_the_data_cannot_give_the_figure() -> None:
    frame = _frame([0.2, 0.3, 0.9, 0.9], [False, False, True, True])
    ev = dead_time_evidence(frame, scope="few", probability=0.95)
    assert ev.empirical_s is None
    assert any("cannot give this figure" in n for n in ev.notes)
    assert any("at least 20 are needed" in n for n in ev.notes)  # 1/(1 − 0.95) = 20
    empty = dead_time_evidence(frame.iloc[0:0], scope="none", voltage_v=345e3)
    assert empty.n_events == 0 and empty.empirical_s is None
    assert empty.rules_s["175+0.5kV ms"] == pytest.approx(0.3475)


def test_theil_sen_ignores_a_gross_outlier() -> None:
    # Derived: the median of pairwise slopes of points on y = 0.05 + 0.02·x with one outlier
    # among 11 points is exactly 0.02 (at most 10 of 55 slopes are disturbed).
    x = np.arange(11, dtype=float) * 4.0
    y = 0.05 + 0.02 * x
    y[5] = 5.0
    tr = robust_trend(x, y)
    assert tr.slope == pytest.approx(0.02, rel=1e-12)
    assert tr.intercept == pytest.approx(0.05, rel=1e-9)
    assert tr.scale == pytest.approx(0.0, abs=1e-12)
    with pytest.raises(StatisticsError, match="at least 3"):
        robust_trend([1.0, 1.0, 1.0], [1.0, 2.0, 3.0])


def test_prediction_band_coverage_on_normal_scatter() -> None:
    # Known truth: y = 0.1 + 0.015·x + N(0, 0.05²). A 95 % prediction band must hold about
    # 95 % of new points on average over data sets (definition of a prediction interval);
    # 200 data sets of 30 points, 200 new points each → standard error ≈ 0.3 %.
    rng = np.random.default_rng(11)
    coverage, slope_hits = [], 0
    for _ in range(200):
        x = rng.uniform(5, 40, 30)
        y = 0.1 + 0.015 * x + rng.normal(0, 0.05, x.size)
        tr = robust_trend(x, y)
        slope_hits += tr.slope_low <= 0.015 <= tr.slope_high
        xn = rng.uniform(5, 40, 200)
        yn = 0.1 + 0.015 * xn + rng.normal(0, 0.05, xn.size)
        lo, hi = tr.band(xn)
        coverage.append(np.mean((yn >= lo) & (yn <= hi)))
    assert 0.935 <= np.mean(coverage) <= 0.96
    assert 0.90 <= slope_hits / 200 <= 0.99  # Sen's interval for the slope, nominal 95 %


def test_trend_from_stored_events_separates_censored_arcs() -> None:
    rows = make_fleet(12, seed=3)
    frame = pd.DataFrame(rows)
    frame["voltage_v"] = frame["voltage_kv"] * 1e3
    data = extinction_trend(frame)
    n_cens = int(frame["extinction_censored"].sum())
    assert data.x.size + data.x_censored.size == len(frame)
    assert data.x_censored.size == n_cens
    assert data.trend is not None and data.trend.slope > 0  # invented data rise with current
    with pytest.raises(StatisticsError, match="no column"):
        extinction_trend(frame, driver="wind_speed_m_per_s")
