"""Decision rules on characteristic functions: runs, triggers, onsets, change points."""

from __future__ import annotations

import numpy as np

__all__ = [
    "change_point_mean",
    "first_sustained",
    "hysteresis_state",
    "last_crossing_before",
    "runs",
]


def runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start and stop (exclusive) indices of the runs of True in ``mask``."""
    m = np.asarray(mask, dtype=bool).reshape(-1)
    n = m.size
    if n == 0:
        return np.empty(0, dtype=np.int64), np.empty(0, dtype=np.int64)
    # every change of state is a run's start or stop; they alternate, beginning with a
    # start (a run at the very beginning starts at 0, one at the very end stops at n)
    edges = np.flatnonzero(m[1:] != m[:-1]) + 1
    head, tail = bool(m[0]), bool(m[-1])
    if head or tail:
        edges = np.concatenate(([0] if head else [], edges, [n] if tail else [])).astype(np.int64)
    return edges[0::2], edges[1::2]


def first_sustained(mask: np.ndarray, *, n_hold: int, start: int = 0) -> int | None:
    """Index of the first sample at or after ``start`` that begins ≥ ``n_hold`` True samples."""
    m = np.asarray(mask, dtype=bool).reshape(-1)[start:]
    hold = max(1, n_hold)
    # the False samples bound the runs: a run begins after each False (or at the start) and
    # lasts to the next False (or the end)
    off = np.flatnonzero(~m)
    if off.size == 0:
        return start if m.size >= hold else None
    if off[0] >= hold:  # the run from the start
        return start
    long = np.flatnonzero(np.diff(off) > hold)
    if long.size:
        return int(off[long[0]]) + 1 + start
    if m.size - 1 - off[-1] >= hold:  # the run to the end
        return int(off[-1]) + 1 + start
    return None


def hysteresis_state(cf: np.ndarray, *, on: float, off: float, initial: bool = False) -> np.ndarray:
    """Two-threshold state: True once ``cf ≥ on``, False again once ``cf < off``.

    Vectorised: each sample takes the state of the last decisive sample at or before it.
    NaN samples are not decisive.

    Parameters
    ----------
    cf : numpy.ndarray
        Characteristic function.
    on, off : float
        Thresholds (``off ≤ on``).
    initial : bool
        State before the first decisive sample.

    Returns
    -------
    numpy.ndarray
        Boolean state per sample.
    """
    cf = np.asarray(cf, dtype=np.float64)
    if off > on:
        raise ValueError("off threshold above on threshold")
    with np.errstate(invalid="ignore"):
        hi = cf >= on
        lo = cf < off
    decisive = hi | lo
    idx = np.where(decisive, np.arange(cf.shape[0]), -1)
    last = np.maximum.accumulate(idx) if idx.size else idx
    state = np.where(last >= 0, hi[np.maximum(last, 0)], initial)
    return state.astype(bool)


def last_crossing_before(x: np.ndarray, idx: int, *, level: float) -> int:
    """Walk back from ``idx`` to the first sample of the run where ``x ≥ level`` ends at idx.

    Returns the smallest ``k ≤ idx`` such that ``x[k:idx+1] ≥ level`` throughout (``idx`` if
    ``x[idx] < level``).
    """
    x = np.asarray(x, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        below = np.flatnonzero(~(x[: idx + 1] >= level))
    if below.size == 0:
        return 0
    return int(min(below[-1] + 1, idx))


def change_point_mean(x: np.ndarray, *, min_size: int = 1) -> tuple[int, float]:
    """Best single change point of the mean (least squares), and the variance it explains.

    Parameters
    ----------
    x : numpy.ndarray
        Finite samples.
    min_size : int
        Smallest segment on either side.

    Returns
    -------
    (int, float)
        Index ``k`` of the first sample after the change, and the fraction of the total sum
        of squares removed by splitting there (0…1).
    """
    x = np.asarray(x, dtype=np.float64)
    n = x.shape[0]
    if n < 2 * max(1, min_size):
        return n // 2, 0.0
    c1 = np.cumsum(x)
    c2 = np.cumsum(x * x)
    k = np.arange(max(1, min_size), n - max(1, min_size) + 1)
    s_left = c1[k - 1]
    s_right = c1[-1] - s_left
    sse = c2[-1] - s_left**2 / k - s_right**2 / (n - k)
    total = c2[-1] - c1[-1] ** 2 / n
    j = int(np.argmin(sse))
    gain = 0.0 if total <= 0 else float(1.0 - sse[j] / total)
    return int(k[j]), gain
