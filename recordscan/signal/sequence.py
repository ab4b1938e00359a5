"""Symmetrical components and superimposed (delta) quantities.

Fortescue, "Method of symmetrical co-ordinates applied to the solution of polyphase
networks", AIEE Trans. 37, 1918: with ``a = exp(j·2π/3)``,
``X0 = (Xa + Xb + Xc)/3``, ``X1 = (Xa + a·Xb + a²·Xc)/3``, ``X2 = (Xa + a²·Xb + a·Xc)/3``.
"""

from __future__ import annotations

import numpy as np

__all__ = ["A_OP", "phase_components", "sequence_components", "superimposed"]

#: the Fortescue operator a = exp(j·120°)
A_OP: complex = complex(np.exp(1j * 2.0 * np.pi / 3.0))


def sequence_components(
    xa: np.ndarray | complex, xb: np.ndarray | complex, xc: np.ndarray | complex
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return the zero, positive and negative sequence components of three phasors.

    Parameters
    ----------
    xa, xb, xc : array_like of complex
        Phase A, B, C phasors (any common shape).

    Returns
    -------
    tuple of numpy.ndarray
        ``(x0, x1, x2)``.
    """
    xa, xb, xc = (np.asarray(v, dtype=np.complex128) for v in (xa, xb, xc))
    a, a2 = A_OP, A_OP * A_OP
    x0 = (xa + xb + xc) / 3.0
    x1 = (xa + a * xb + a2 * xc) / 3.0
    x2 = (xa + a2 * xb + a * xc) / 3.0
    return x0, x1, x2


def phase_components(
    x0: np.ndarray | complex, x1: np.ndarray | complex, x2: np.ndarray | complex
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Inverse of :func:`sequence_components`: ``(xa, xb, xc)`` from ``(x0, x1, x2)``."""
    x0, x1, x2 = (np.asarray(v, dtype=np.complex128) for v in (x0, x1, x2))
    a, a2 = A_OP, A_OP * A_OP
    return x0 + x1 + x2, x0 + a2 * x1 + a * x2, x0 + a * x1 + a2 * x2


def superimposed(x: np.ndarray, *, length: float, n_cycles: int = 1) -> np.ndarray:
    """Superimposed (delta) quantity: ``x(t) − x(t − n_cycles·T)``.

    In steady state the result is zero; after a disturbance it is the change the disturbance
    caused, for ``n_cycles`` cycles. A fractional delay (``length`` samples per cycle, not an
    integer) is taken by linear interpolation between the two nearest samples.

    Parameters
    ----------
    x : numpy.ndarray
        Uniform samples (a 2-D array: one channel per row, along the last axis).
    length : float
        Samples per cycle.
    n_cycles : int
        How many cycles back to compare.

    Returns
    -------
    numpy.ndarray
        Same shape as ``x``, NaN where the delayed sample is not available.
    """
    x = np.asarray(x, dtype=np.float64)
    delay = length * n_cycles
    m = int(np.floor(delay))
    frac = delay - m
    first = m + (1 if frac > 1e-9 else 0)
    n = x.shape[-1]
    if n <= first:
        return np.full(x.shape, np.nan)
    out = np.empty(x.shape)
    out[..., :first] = np.nan
    delayed = (1.0 - frac) * x[..., first - m : n - m]
    if frac > 1e-9:
        delayed += frac * x[..., first - m - 1 : n - m - 1]
    np.subtract(x[..., first:], delayed, out=out[..., first:])
    return out
