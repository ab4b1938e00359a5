"""Kaplan–Meier estimate, Greenwood variance, bands, percentiles (recordscan.fleet.survival)."""

from __future__ import annotations

import sys
from fractions import Fraction
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

from recordscan.fleet.survival import (
    StatisticsError,
    extinction_sample,
    kaplan_meier,
    summarise,
)

REF = tomllib.loads((Path(__file__).parent / "reference" / "fleet_kaplan_meier.toml").read_text())


def _remission() -> tuple[np.ndarray, np.ndarray]:
    ev = REF["data"]["events_weeks"]
    ce = REF["data"]["censored_weeks"]
    t = np.array(ev + ce, dtype=float)
    d = np.array([True] * len(ev) + [False] * len(ce))
    return t, d


def test_remission_data_textbook_table() -> None:
    # Kleinbaum & Klein, "Survival Analysis: A Self-Learning Text", 3rd ed. (2012), ch. 2,
    # remission data group 1 (6-MP), and Klein & Moeschberger, "Survival Analysis", 2nd ed.
    # (2003), Table 4.1A — values from memory (tests/reference/fleet_kaplan_meier.toml).
    t, d = _remission()
    km = kaplan_meier(t, d)
    row = REF["survival"]
    np.testing.assert_array_equal(km.times_s, row["time_weeks"])
    np.testing.assert_array_equal(km.n_at_risk, row["n_at_risk"])
    np.testing.assert_allclose(km.survival, row["value"], atol=row["tolerance_abs"])
    se = REF["greenwood_se"]
    np.testing.assert_allclose(np.sqrt(km.greenwood_var), se["value"], atol=se["tolerance_abs"])
    assert km.percentile(0.5)[0] == REF["median"]["value"]
    assert km.n == 21 and km.n_censored == 12


def test_small_example_closed_form() -> None:
    # Derived closed form (hand-worked with exact fractions): times 1, 2+, 3, 4+, 5.
    # S(1) = 4/5; S(3) = 4/5·2/3 = 8/15; S(5) = 0.
    # Greenwood at 3: S² (1/(5·4) + 1/(3·2)) = (64/225)(13/60).
    km = kaplan_meier([1, 2, 3, 4, 5], [True, False, True, False, True])
    np.testing.assert_array_equal(km.times_s, [1, 3, 5])
    np.testing.assert_array_equal(km.n_at_risk, [5, 3, 1])
    exact_s = [Fraction(4, 5), Fraction(8, 15), Fraction(0)]
    np.testing.assert_allclose(km.survival, [float(f) for f in exact_s], rtol=1e-15)
    var3 = Fraction(64, 225) * (Fraction(1, 20) + Fraction(1, 6))
    assert km.greenwood_var[1] == pytest.approx(float(var3), rel=1e-14)
    assert km.greenwood_var[2] == 0.0  # S = 0: nothing left to vary
    assert km.lower[2] == 0.0 and km.upper[2] == km.upper[1]  # band kept open at S = 0
    one = kaplan_meier([0.5], [True])  # a single arc says little: band spans 0…1
    assert (one.survival[0], one.lower[0], one.upper[0]) == (0.0, 0.0, 1.0)
    assert one.percentile(0.95) == (0.5, 0.5, None)
    # Step function, right-continuous; beyond the last time S stays 0 (last was an event).
    np.testing.assert_allclose(
        km.survival_at([0.5, 1.0, 2.9, 3.0, 4.9, 5.0, 9.0]), [1, 0.8, 0.8, 8 / 15, 8 / 15, 0, 0]
    )
    # Percentiles: smallest t with S(t) <= 1 − p.
    assert km.percentile(0.2)[0] == 1.0
    assert km.percentile(0.3)[0] == 3.0
    assert km.percentile(0.5)[0] == 5.0
    # Log(−log) band at t = 1 by its formula (Kalbfleisch & Prentice): S^exp(±z·se_θ),
    # se_θ = sqrt(Σ d/(n(n−d))) / |ln S|, z = 1.959964 (normal 97.5 % point).
    z = 1.959963984540054
    se_theta = np.sqrt(1 / 20) / abs(np.log(0.8))
    assert km.lower[0] == pytest.approx(0.8 ** np.exp(z * se_theta), rel=1e-12)
    assert km.upper[0] == pytest.approx(0.8 ** np.exp(-z * se_theta), rel=1e-12)


def test_last_time_censored_leaves_tail_unknown() -> None:
    km = kaplan_meier([1.0, 2.0, 3.0], [True, True, False])
    assert np.isnan(km.survival_at(3.5))
    assert km.survival_at(2.5) == pytest.approx(1 / 3)
    assert km.percentile(0.9)[0] is None  # S stays at 1/3 > 0.1


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(min_value=0, max_value=40), min_size=1, max_size=60))
def test_without_censoring_equals_empirical_cdf(values: list[int]) -> None:
    # Without censoring the product-limit estimate is 1 − the empirical CDF (Kaplan & Meier
    # 1958, section 2), and Greenwood's variance reduces to the binomial F(1 − F)/n.
    t = np.asarray(values, dtype=float) / 4.0
    km = kaplan_meier(t, np.ones(t.size, bool))
    grid = np.unique(np.r_[t, t + 0.1, t - 0.1])
    grid = grid[grid <= t.max()]
    ecdf = (t[None, :] <= grid[:, None]).mean(axis=1)
    np.testing.assert_allclose(1.0 - km.survival_at(grid), ecdf, atol=1e-12)
    f = 1.0 - km.survival
    np.testing.assert_allclose(km.greenwood_var, f * (1 - f) / t.size, atol=1e-12)


def test_band_coverage_exponential_with_random_censoring() -> None:
    # Known truth: extinction times exponential (mean 0.3 s), independent uniform censoring.
    # A pointwise 95 % band must cover the true S(t0) = exp(−t0/0.3) about 95 % of the time
    # (derived: definition of a confidence interval); 600 repetitions → ±2.2 % (3σ).
    rng = np.random.default_rng(6)
    t0, hits, reps = 0.25, 0, 600
    for _ in range(reps):
        x = rng.exponential(0.3, 80)
        c = rng.uniform(0.0, 1.5, 80)
        km = kaplan_meier(np.minimum(x, c), x <= c)
        _, lo, hi = km.extinct_by(t0)
        true_f = 1 - np.exp(-t0 / 0.3)
        hits += bool(lo <= true_f <= hi)
    assert 0.92 <= hits / reps <= 0.975


def test_percentile_limits_bracket_estimate() -> None:
    t, d = _remission()
    km = kaplan_meier(t, d)
    est, lo, hi = km.percentile(0.25)
    assert lo is not None and hi is not None and lo <= est <= hi
    summary = summarise(km)
    assert summary["percentiles"]["p50"]["t_s"] == 23.0
    assert summary["percentiles"]["p90"]["t_s"] is None  # never reached: S stays 0.448
    assert summary["n_censored"] == 12


def test_bad_input_is_a_clear_error() -> None:
    with pytest.raises(StatisticsError, match="durations"):
        kaplan_meier([1.0, np.nan], [True, True])
    with pytest.raises(StatisticsError, match="observed flags"):
        kaplan_meier([1.0, 2.0], [True])
    with pytest.raises(StatisticsError, match="probability"):
        kaplan_meier([1.0], [True]).percentile(1.0)


def test_extinction_sample_from_events_frame() -> None:
    frame = pd.DataFrame(
        {
            "sha256": ["a", "b", "c", "d", "e"],
            "event": ["single_pole_trip"] * 4 + ["three_pole_trip"],
            "pole_open_s": [0.10, 0.10, 0.10, np.nan, 0.1],
            "secondary_arc_start_s": [0.12, 0.11, 0.13, 0.1, 0.1],
            "extinction_s": [0.42, np.nan, np.nan, 0.3, 0.2],
            "extinction_censored": [False, True, False, False, False],
            "observed_until_s": [1.1, 0.9, 1.1, 1.0, 1.0],
        }
    )
    s = extinction_sample(frame, origin="pole_open")
    assert s.sha256 == ("a", "b")
    np.testing.assert_allclose(s.durations_s, [0.32, 0.80])
    np.testing.assert_array_equal(s.observed, [True, False])
    assert s.n_excluded == 2  # c: neither extinction nor censoring; d: no pole opening
    s2 = extinction_sample(frame)
    np.testing.assert_allclose(s2.durations_s, [0.30, 0.79, 0.2])


@settings(max_examples=60, deadline=None)
@given(
    st.lists(
        st.tuples(st.integers(min_value=0, max_value=30), st.booleans()), min_size=1, max_size=50
    )
)
def test_matches_a_plain_loop_of_the_product_limit_definition(pairs: list) -> None:
    # Reference: the definition written out as a loop (Kaplan & Meier 1958, eq. 2):
    # S(t) = Π_{t_j <= t} (1 − d_j / n_j), n_j = number with time >= t_j.
    t = np.array([p[0] for p in pairs], dtype=float)
    d = np.array([p[1] for p in pairs], dtype=bool)
    km = kaplan_meier(t, d)
    s, gw = 1.0, 0.0
    expected_s, expected_var = [], []
    for tj in sorted(set(t[d])):
        n_j = sum(1 for x in t if x >= tj)
        d_j = sum(1 for x, o in zip(t, d, strict=True) if o and x == tj)
        s *= 1.0 - d_j / n_j
        gw = gw + d_j / (n_j * (n_j - d_j)) if n_j > d_j else float("inf")
        expected_s.append(s)
        expected_var.append(s * s * gw if s > 0 else 0.0)
    np.testing.assert_allclose(km.survival, expected_s, rtol=1e-12, atol=0)
    np.testing.assert_allclose(km.greenwood_var, expected_var, rtol=1e-12, atol=0)


@pytest.mark.bench
def test_bench_kaplan_meier_against_the_plain_loop() -> None:
    # Ratio of the vectorised estimator to the definition as a Python loop, same data.
    import time

    rng = np.random.default_rng(3)
    x = np.round(rng.exponential(0.3, 3000), 3)
    c = np.round(rng.uniform(0, 1.5, x.size), 3)
    t, d = np.minimum(x, c), x <= c

    def loop() -> list[float]:
        s, out = 1.0, []
        for tj in np.unique(t[d]):
            n_j = int((t >= tj).sum())
            d_j = int((d & (t == tj)).sum())
            s *= 1.0 - d_j / n_j
            out.append(s)
        return out

    t0 = time.perf_counter()
    ref = loop()
    t1 = time.perf_counter()
    for _ in range(20):
        km = kaplan_meier(t, d)
    t2 = time.perf_counter()
    np.testing.assert_allclose(km.survival, ref, rtol=1e-12)
    ratio = (t1 - t0) / ((t2 - t1) / 20)
    print(f"\nkaplan_meier n=3000: {ratio:.0f}× faster than the per-time loop")
    assert ratio > 5
