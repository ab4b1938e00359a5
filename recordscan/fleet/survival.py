"""Extinction-time statistics that respect censoring (Kaplan–Meier).

A secondary arc still burning when the breaker recloses, or when the record ends, gives only
a lower bound on its extinction time: it is *right-censored*. The Kaplan–Meier
product-limit estimator uses those lower bounds correctly; the ordinary empirical
distribution would bias the extinction time low.

Here the "event" of survival analysis is the final extinction of the secondary arc and
``S(t)`` is the probability that the arc still burns ``t`` seconds after its origin (by default
the start of the secondary arc; for dead-time questions the local pole opening).
``1 − S(t)`` is the probability that the arc is out by ``t``.

Methods (published, named as such):

- product-limit estimator: Kaplan & Meier, "Nonparametric estimation from incomplete
  observations", J. Am. Stat. Assoc. 53 (1958) 457–481;
- variance: Greenwood's formula (Greenwood 1926), ``Var S = S² Σ d/(n(n−d))``;
- pointwise confidence band on the log(−log) scale (Kalbfleisch & Prentice, *The
  Statistical Analysis of Failure Time Data*), which stays inside [0, 1];
- percentile confidence limits by inverting the pointwise band (in the manner of Brookmeyer &
  Crowley, Biometrics 38 (1982) 29–41).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import stats

from recordscan.errors import RecordScanError

if TYPE_CHECKING:
    import pandas as pd

Origin = Literal["secondary_arc_start", "pole_open"]


class StatisticsError(RecordScanError, ValueError):
    """The data cannot support the requested statistic (too few or invalid values)."""


@dataclass(frozen=True)
class KaplanMeier:
    """A Kaplan–Meier estimate of the survival (arc still burning) function.

    Attributes
    ----------
    times_s : ndarray
        Distinct times at which at least one extinction was observed, ascending.
    n_at_risk : ndarray of int
        Arcs still burning and observed just before each time.
    n_events : ndarray of int
        Extinctions at each time.
    survival : ndarray
        ``S(t)`` just after each time (step function, right-continuous).
    greenwood_var : ndarray
        Greenwood variance of ``survival`` (``inf`` once an interval empties the risk set
        with events, ``0`` where ``S = 0``).
    lower, upper : ndarray
        Pointwise confidence band (log(−log) transform) at level ``confidence``.
    confidence : float
        Two-sided confidence level of the band.
    n : int
        Number of arcs.
    n_censored : int
        Number of censored arcs (lower bounds only).
    max_time_s : float
        Largest observed or censored time: beyond it the estimate says nothing.
    """

    times_s: NDArray[np.float64]
    n_at_risk: NDArray[np.int64]
    n_events: NDArray[np.int64]
    survival: NDArray[np.float64]
    greenwood_var: NDArray[np.float64]
    lower: NDArray[np.float64]
    upper: NDArray[np.float64]
    confidence: float
    n: int
    n_censored: int
    max_time_s: float

    def _step(self, values: NDArray[np.float64], t_s: ArrayLike, first: float) -> NDArray:
        t = np.asarray(t_s, dtype=float)
        if self.n == 0:
            return np.full(t.shape, np.nan)
        idx = np.searchsorted(self.times_s, t, side="right") - 1
        if values.size:
            out = np.where(idx >= 0, values[np.clip(idx, 0, None)], first)
        else:
            out = np.full(t.shape, first)
        if values.size == 0 or self.survival[-1] > 0:  # unknown beyond the last observation
            out = np.where(t > self.max_time_s, np.nan, out)
        return out

    def survival_at(self, t_s: ArrayLike) -> NDArray[np.float64]:
        """``S(t)``: probability the arc still burns at ``t_s`` (NaN beyond the data)."""
        return self._step(self.survival, t_s, 1.0)

    def extinct_by(self, t_s: ArrayLike) -> tuple[NDArray, NDArray, NDArray]:
        """Probability the arc is out by ``t_s``, with the band: ``(p, low, high)``.

        Beyond the largest observed time the values are NaN (not known).
        """
        s = self._step(self.survival, t_s, 1.0)
        lo = self._step(self.lower, t_s, 1.0)
        hi = self._step(self.upper, t_s, 1.0)
        return 1.0 - s, 1.0 - hi, 1.0 - lo

    def percentile(self, p: float) -> tuple[float | None, float | None, float | None]:
        """Time by which a fraction ``p`` of arcs is out, with confidence limits.

        Returns ``(t_s, low_s, high_s)``: ``t_s`` is the smallest time with
        ``S(t) <= 1 − p`` (the usual convention, e.g. the median at ``p = 0.5``); the
        limits are where the band's upper and lower edges cross ``1 − p``. ``None`` where
        the level is not reached within the data (the arcs outlived the observations).
        """
        if not 0.0 < p < 1.0:
            raise StatisticsError(f"percentile: probability must be in (0, 1), got {p}")
        level = 1.0 - p + 1e-12

        def first(values: NDArray[np.float64]) -> float | None:
            hit = np.flatnonzero(values <= level)
            return float(self.times_s[hit[0]]) if hit.size else None

        return first(self.survival), first(self.lower), first(self.upper)


def kaplan_meier(
    durations_s: ArrayLike, observed: ArrayLike, *, confidence: float = 0.95
) -> KaplanMeier:
    """Kaplan–Meier estimate with Greenwood variance and a log(−log) band.

    Parameters
    ----------
    durations_s : array_like
        Extinction time, or for a censored arc the lower bound (observation end), s.
    observed : array_like of bool
        ``True`` where the extinction was seen, ``False`` where censored.
    confidence : float
        Two-sided level of the pointwise band (default 0.95).

    Returns
    -------
    KaplanMeier

    Notes
    -----
    Ties between an extinction and a censoring at the same time follow the usual
    convention: the censored arc counts as at risk at that time. Where the estimate reaches 0
    (the longest arc was seen to go out) the band's upper edge stays at its previous value,
    as the log(−log) band is undefined there.
    """
    t = np.asarray(durations_s, dtype=float).ravel()
    d = np.asarray(observed, dtype=bool).ravel()
    if t.shape != d.shape:
        raise StatisticsError(f"kaplan_meier: {t.size} durations but {d.size} observed flags")
    if not np.all(np.isfinite(t)) or np.any(t < 0):
        raise StatisticsError("kaplan_meier: durations must be finite and non-negative")
    if not 0.0 < confidence < 1.0:
        raise StatisticsError(f"kaplan_meier: confidence must be in (0, 1), got {confidence}")
    times, n_ev = np.unique(t[d], return_counts=True)
    n_ev = n_ev.astype(np.int64)
    # at risk at t_j: arcs whose time (extinction or censoring) is >= t_j; O(n log n)
    n_risk = (t.size - np.searchsorted(np.sort(t), times, side="left")).astype(np.int64)
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = 1.0 - n_ev / n_risk
        surv = np.cumprod(factor)
        terms = np.where(n_risk > n_ev, n_ev / (n_risk * (n_risk - n_ev)), np.inf)
        cum = np.cumsum(terms)
        var = np.where(surv > 0, surv**2 * cum, 0.0)
        z = stats.norm.ppf(0.5 + confidence / 2.0)
        log_s = np.log(surv)
        se_theta = np.sqrt(cum) / np.abs(log_s)
        inside = (surv > 0) & (surv < 1) & np.isfinite(se_theta)
        lower = np.where(inside, surv ** np.exp(z * se_theta), 0.0)
        upper = np.where(inside, surv ** np.exp(-z * se_theta), np.where(surv >= 1, 1.0, 0.0))
    lower = np.where(surv >= 1, 1.0, lower)
    # Where S reaches 0 the log(−log) band is undefined and Greenwood's variance is 0: keep the
    # upper edge of the step before (1 before any event) rather than claim certainty.
    for k in np.flatnonzero(surv <= 0):
        upper[k] = upper[k - 1] if k > 0 else 1.0
    return KaplanMeier(
        times_s=times,
        n_at_risk=n_risk,
        n_events=n_ev,
        survival=surv,
        greenwood_var=var,
        lower=lower,
        upper=upper,
        confidence=float(confidence),
        n=int(t.size),
        n_censored=int((~d).sum()),
        max_time_s=float(t.max()) if t.size else 0.0,
    )


@dataclass(frozen=True)
class ExtinctionSample:
    """Extinction times of stored events, ready for :func:`kaplan_meier`.

    Attributes
    ----------
    durations_s : ndarray
        Time from the origin to final extinction, or to the end of observation (censored).
    observed : ndarray of bool
        Extinction seen.
    sha256 : tuple of str
        Record of each value, same order.
    n_excluded : int
        Single-pole trips left out because the origin or both the extinction and the
        observation end are unknown.
    origin : str
        ``"secondary_arc_start"`` or ``"pole_open"``.
    """

    durations_s: NDArray[np.float64]
    observed: NDArray[np.bool_]
    sha256: tuple[str, ...]
    n_excluded: int
    origin: str

    @property
    def n(self) -> int:
        """Number of usable arcs."""
        return int(self.durations_s.size)

    def estimate(self, *, confidence: float = 0.95) -> KaplanMeier:
        """Kaplan–Meier estimate of this sample."""
        return kaplan_meier(self.durations_s, self.observed, confidence=confidence)


def extinction_sample(
    frame: pd.DataFrame, *, origin: Origin = "secondary_arc_start"
) -> ExtinctionSample:
    """Pick the extinction times out of :meth:`recordscan.fleet.store.Store.events`.

    Only single-pole trips count. An arc with ``extinction_s`` is observed; an arc with
    ``extinction_censored`` and ``observed_until_s`` is censored at that instant. Times are
    measured from ``origin``: the start of the secondary arc (last pole open, both ends) or
    the local pole opening (the instant a dead-time timer starts).

    Parameters
    ----------
    frame : pandas.DataFrame
        Events as returned by the store.
    origin : {"secondary_arc_start", "pole_open"}
        Where the clock starts.
    """
    col = {"secondary_arc_start": "secondary_arc_start_s", "pole_open": "pole_open_s"}.get(origin)
    if col is None:
        raise StatisticsError(
            f"origin must be 'secondary_arc_start' or 'pole_open', got {origin!r}"
        )
    spt = frame[frame["event"] == "single_pole_trip"]
    t0 = spt[col].to_numpy(dtype=float)
    ext = spt["extinction_s"].to_numpy(dtype=float)
    until = spt["observed_until_s"].to_numpy(dtype=float)
    censored = spt["extinction_censored"].to_numpy(dtype=bool)
    seen = np.isfinite(ext)
    cens = ~seen & censored & np.isfinite(until)
    end = np.where(seen, ext, until)
    ok = np.isfinite(t0) & (seen | cens) & (end >= t0)
    return ExtinctionSample(
        durations_s=(end - t0)[ok],
        observed=seen[ok],
        sha256=tuple(spt["sha256"].to_numpy()[ok]),
        n_excluded=int((~ok).sum()),
        origin=origin,
    )


#: Percentiles reported in summaries (fraction of arcs out).
PERCENTILES: tuple[float, ...] = (0.5, 0.9, 0.95, 0.99)


def summarise(km: KaplanMeier, *, percentiles: tuple[float, ...] = PERCENTILES) -> dict:
    """Plain-JSON summary: counts and percentiles with their limits (s; ``None`` = not reached)."""
    rows = {}
    for p in percentiles:
        t, lo, hi = km.percentile(p)
        rows[f"p{round(p * 100):d}"] = {"t_s": t, "low_s": lo, "high_s": hi}
    return {
        "n": km.n,
        "n_extinct": km.n - km.n_censored,
        "n_censored": km.n_censored,
        "confidence": km.confidence,
        "max_time_s": km.max_time_s,
        "percentiles": rows,
    }
