"""Extinction time against secondary-arc current (or recovery voltage) across the fleet.

A straight line through the observed extinctions by the Theil–Sen estimator (median of
pairwise slopes: Theil 1950; Sen, J. Am. Stat. Assoc. 63 (1968) 1379–1389; intercept the
median of y − slope·x, so the residuals have median zero), robust against
the odd mis-detected event, with a prediction band whose scale is the median absolute
deviation of the residuals (×1.4826, consistent with the normal standard deviation).
Censored arcs (still burning at reclose or record end) only give lower bounds: they are
left out of the fit and drawn separately, so the fitted line understates long arcs — the
report says so.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import stats

from recordscan.fleet.survival import Origin, StatisticsError

if TYPE_CHECKING:
    import pandas as pd

_MAD_TO_SIGMA = 1.482602218505602  # 1 / Φ⁻¹(3/4)
_MAD_EFFICIENCY = 0.3675  # asymptotic efficiency of the MAD relative to the SD, normal data


@dataclass(frozen=True)
class Trend:
    """A robust straight line ``y = intercept + slope·x`` with a prediction band.

    Attributes
    ----------
    slope, intercept : float
        Theil–Sen line.
    slope_low, slope_high : float
        Confidence limits of the slope (scipy's Theil–Sen interval) at ``level``.
    scale : float
        Robust residual scale (1.4826·MAD).
    n : int
        Points in the fit.
    level : float
        Two-sided level of the slope interval and of the prediction band.
    x_mean, sxx : float
        Mean of x and Σ(x − x̄)² (for the band's widening away from the centre).
    """

    slope: float
    intercept: float
    slope_low: float
    slope_high: float
    scale: float
    n: int
    level: float
    x_mean: float
    sxx: float

    def predict(self, x: ArrayLike) -> NDArray[np.float64]:
        """Fitted value at ``x``."""
        return self.intercept + self.slope * np.asarray(x, dtype=float)

    def band(self, x: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Prediction band ``(low, high)`` for a new observation at ``x``."""
        xx = np.asarray(x, dtype=float)
        # The MAD scale has about 37 % of the efficiency of the standard deviation at the
        # normal (Huber, Robust Statistics, 1981): its Student-t gets the matching fewer
        # degrees of freedom.
        q = stats.t.ppf(0.5 + self.level / 2.0, max(_MAD_EFFICIENCY * (self.n - 2), 1.0))
        half = q * self.scale * np.sqrt(1.0 + 1.0 / self.n + (xx - self.x_mean) ** 2 / self.sxx)
        y = self.predict(xx)
        return y - half, y + half


def robust_trend(x: ArrayLike, y: ArrayLike, *, level: float = 0.95) -> Trend:
    """Theil–Sen line with a robust prediction band.

    Parameters
    ----------
    x, y : array_like
        Points (non-finite pairs are dropped).
    level : float
        Two-sided level of the slope interval and the band.

    Returns
    -------
    Trend
    """
    xa = np.asarray(x, dtype=float).ravel()
    ya = np.asarray(y, dtype=float).ravel()
    if xa.shape != ya.shape:
        raise StatisticsError(f"trend: {xa.size} x values but {ya.size} y values")
    keep = np.isfinite(xa) & np.isfinite(ya)
    xa, ya = xa[keep], ya[keep]
    if xa.size < 3 or np.ptp(xa) == 0:
        raise StatisticsError(f"trend: need at least 3 points with different x, got {xa.size}")
    res = stats.theilslopes(ya, xa, alpha=level, method="joint")
    resid = ya - (res.intercept + res.slope * xa)
    scale = _MAD_TO_SIGMA * float(np.median(np.abs(resid - np.median(resid))))
    return Trend(
        slope=float(res.slope),
        intercept=float(res.intercept),
        slope_low=float(res.low_slope),
        slope_high=float(res.high_slope),
        scale=scale,
        n=int(xa.size),
        level=float(level),
        x_mean=float(xa.mean()),
        sxx=float(((xa - xa.mean()) ** 2).sum()),
    )


@dataclass(frozen=True)
class TrendData:
    """Points for an extinction-time trend plot.

    Attributes
    ----------
    x, y_s : ndarray
        Observed extinctions: driver value (A or V) and time to extinction, s.
    x_censored, y_censored_s : ndarray
        Arcs still burning at the end of observation: driver value and lower bound, s.
    line : tuple of str
        Line of each observed point.
    trend : Trend or None
        Fitted line (``None`` with fewer than 3 usable points).
    driver : str
        Column used as x.
    """

    x: NDArray[np.float64]
    y_s: NDArray[np.float64]
    x_censored: NDArray[np.float64]
    y_censored_s: NDArray[np.float64]
    line: tuple[str, ...]
    trend: Trend | None
    driver: str


def extinction_trend(
    frame: pd.DataFrame,
    *,
    driver: str = "secondary_arc_current_rms_a",
    origin: Origin = "secondary_arc_start",
    level: float = 0.95,
) -> TrendData:
    """Extinction time against ``driver`` for the stored single-pole trips.

    Parameters
    ----------
    frame : pandas.DataFrame
        Events from the store.
    driver : str
        ``"secondary_arc_current_rms_a"`` or ``"recovery_voltage_rms_v"`` (any numeric
        event column works).
    origin : {"secondary_arc_start", "pole_open"}
        Where the clock starts.
    level : float
        Level of the band.
    """
    if driver not in frame:
        raise StatisticsError(f"trend: no column {driver!r} in the events")
    col = "secondary_arc_start_s" if origin == "secondary_arc_start" else "pole_open_s"
    spt = frame[frame["event"] == "single_pole_trip"]
    x = spt[driver].to_numpy(dtype=float)
    t0 = spt[col].to_numpy(dtype=float)
    ext = spt["extinction_s"].to_numpy(dtype=float)
    until = spt["observed_until_s"].to_numpy(dtype=float)
    cens = spt["extinction_censored"].to_numpy(dtype=bool) & ~np.isfinite(ext)
    seen = np.isfinite(ext) & np.isfinite(t0) & np.isfinite(x)
    lower = cens & np.isfinite(until) & np.isfinite(t0) & np.isfinite(x)
    lines = spt["line"].fillna("").to_numpy(dtype=object)
    xs, ys = x[seen], (ext - t0)[seen]
    trend = None
    if xs.size >= 3 and np.ptp(xs) > 0:
        trend = robust_trend(xs, ys, level=level)
    return TrendData(
        x=xs,
        y_s=ys,
        x_censored=x[lower],
        y_censored_s=(until - t0)[lower],
        line=tuple(str(v) for v in lines[seen]),
        trend=trend,
        driver=driver,
    )
