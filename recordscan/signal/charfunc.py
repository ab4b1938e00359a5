"""Characteristic functions: arrays that rise where something changes.

A detector computes a characteristic function from the raw samples, then applies a decision
rule (:mod:`recordscan.signal.onset`). The short-term/long-term average ratio is the classic
seismic trigger (Allen, "Automatic earthquake recognition and timing from single traces",
BSSA 68(5), 1978 — from memory); the robust scale is the normalised median absolute deviation
(Rousseeuw & Croux, JASA 88, 1993 — from memory: 1.4826·MAD estimates σ for Gaussian noise).
"""

from __future__ import annotations

import numpy as np

from recordscan.signal.filters import moving_average

__all__ = [
    "fast_median",
    "finite_array_median",
    "normalised_delta",
    "robust_scale",
    "sta_lta",
    "step_score",
]


def fast_median(x: np.ndarray) -> float:
    """``float(np.median(x))`` of a 1-D array, with less overhead on finite data.

    For finite data: one partition and the middle value (odd length) or the mean of the two
    middle values (even length) - the same numbers ``np.median`` takes, so the same result.
    Anything else (NaN, infinities, empty) goes to ``np.median`` itself.
    """
    x = np.asarray(x, dtype=np.float64)
    n = x.shape[0]
    if x.ndim != 1 or n == 0 or not np.isfinite(x).all():
        return float(np.median(x))
    h = n // 2
    if n % 2:
        return float(np.partition(x, h)[h])
    part = np.partition(x, (h - 1, h))
    return float((part[h - 1] + part[h]) / 2.0)


def robust_scale(x: np.ndarray) -> float:
    """Return 1.4826·median(|x − median(x)|) over the finite samples (0 if none)."""
    x = np.asarray(x, dtype=np.float64).reshape(-1)
    ok = np.isfinite(x)
    if not ok.all():
        x = x[ok]
    if x.size == 0:
        return 0.0
    dev = x - finite_array_median(x)
    np.abs(dev, out=dev)
    return float(1.4826 * finite_array_median(dev))


def finite_array_median(x: np.ndarray) -> float:
    """:func:`fast_median` of a non-empty 1-D float64 array known to be finite (unchecked)."""
    n = x.shape[0]
    h = n // 2
    if n % 2:
        return float(np.partition(x, h)[h])
    part = np.partition(x, (h - 1, h))
    return float((part[h - 1] + part[h]) / 2.0)


def sta_lta(cf: np.ndarray, *, n_sta: int, n_lta: int) -> np.ndarray:
    """Causal short-term / long-term average ratio of a non-negative function.

    Parameters
    ----------
    cf : numpy.ndarray
        Non-negative characteristic function (e.g. squared samples).
    n_sta, n_lta : int
        Short and long window lengths in samples (``n_sta < n_lta``).

    Returns
    -------
    numpy.ndarray
        Ratio per sample; 0 during the first ``n_lta`` samples.
    """
    cf = np.nan_to_num(np.asarray(cf, dtype=np.float64))
    if not 0 < n_sta < n_lta:
        raise ValueError("need 0 < n_sta < n_lta")
    sta = moving_average(cf, n_sta)
    lta = moving_average(cf, n_lta)
    out = np.zeros_like(cf)
    ok = (np.arange(cf.shape[0]) >= n_lta) & (lta > 0)
    out[ok] = sta[ok] / lta[ok]
    return out


def normalised_delta(delta: np.ndarray, *, baseline: slice) -> np.ndarray:
    """``|delta|`` divided by its robust noise scale over ``baseline`` (a quiet stretch).

    Parameters
    ----------
    delta : numpy.ndarray
        A superimposed quantity (zero in steady state).
    baseline : slice
        Samples known to be quiet (before the event).

    Returns
    -------
    numpy.ndarray
        ``|delta| / max(scale, tiny)``; NaN stays NaN.
    """
    delta = np.asarray(delta, dtype=np.float64)
    scale = robust_scale(delta[baseline])
    tiny = 1e-12 * max(float(np.nanmax(np.abs(delta))) if np.any(np.isfinite(delta)) else 1, 1)
    return np.abs(delta) / max(scale, tiny)


def step_score(x: np.ndarray, *, n: int) -> np.ndarray:
    """Difference of the means of the next ``n`` and the previous ``n`` samples.

    ``score[k] = mean(x[k:k+n]) − mean(x[k−n:k])``: a step in ``x`` at ``k`` gives a peak of
    the step height there. NaN within ``n`` samples of either end.

    Parameters
    ----------
    x : numpy.ndarray
        Samples (NaN-free).
    n : int
        Half-width in samples.

    Returns
    -------
    numpy.ndarray
        The score per sample.
    """
    x = np.asarray(x, dtype=np.float64)
    out = np.full(x.shape[0], np.nan)
    if n < 1 or x.shape[0] < 2 * n + 1:
        return out
    c = np.concatenate(([0.0], np.cumsum(x)))
    k = np.arange(n, x.shape[0] - n + 1)
    after = (c[k + n] - c[k]) / n
    before = (c[k] - c[k - n]) / n
    out[n : x.shape[0] - n + 1] = after - before
    return out
