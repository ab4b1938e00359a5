"""Typed results of arc-parameter fits, in the shape of ``scipy.optimize.OptimizeResult``.

A fit never returns defaults as if fitted: every parameter carries a status — ``fitted``,
``weakly determined`` (standard error large or strongly correlated with another parameter)
or ``held at prior`` (not estimated; the value is the prior) — and the fit as a whole a
``success`` flag and a ``message``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

FITTED = "fitted"
WEAK = "weakly determined"
PRIOR = "held at prior"

#: broad plausibility ranges from the literature (REFERENCE: Johns, Aggarwal & Song 1994;
#: Prikler et al. 2002; Kizilcay & Koch 1994 — ranges recalled from memory, used only to flag)
PLAUSIBLE: dict[str, tuple[float, float]] = {
    "u0_v_per_m": (300.0, 10_000.0),
    "r0_ohm_per_m": (0.0, 0.5),
    "tau0_s": (0.05e-3, 10e-3),
    "alpha": (-1.5, 0.2),
    "v_m_per_s": (0.0, 30.0),
}


@dataclass(frozen=True)
class ParameterEstimate:
    """One fitted (or held) parameter.

    Attributes
    ----------
    name : str
        Parameter name with its unit suffix.
    value : float
        Estimate (or the prior when held).
    stderr : float or None
        Standard error (None when held at its prior).
    status : str
        ``"fitted"``, ``"weakly determined"`` or ``"held at prior"``.
    plausible : bool
        False when outside the broad published range in :data:`PLAUSIBLE`.
    """

    name: str
    value: float
    stderr: float | None
    status: str
    plausible: bool = True


@dataclass(frozen=True)
class ArcFitResult:
    """Result of one arc-parameter fit (one arc period).

    Attributes
    ----------
    method : str
        ``"direct"`` (arc current and voltage measured) or ``"indirect"`` (terminal records).
    period : str
        ``"primary"`` or ``"secondary"``.
    estimates : Mapping of str to ParameterEstimate
        ``u0_v_per_m``, ``r0_ohm_per_m``, ``tau0_s``, ``alpha``, ``l0_m`` and the elongation
        law's parameters.
    elongation_law : str
        ``"constant"``, ``"linear"`` or ``"johns"``.
    elongation_params : Mapping of str to float
        Parameters of the chosen law.
    correlation : numpy.ndarray
        Correlation matrix of the fitted parameters (order: ``fitted_names``).
    fitted_names : tuple of str
        Names of the parameters the optimiser moved.
    residual_rms : float
        RMS of the output error (V for voltage fits).
    residual_rel : float
        ``residual_rms`` relative to the RMS of the measured output.
    success : bool
        Whether the optimiser converged and the result is usable.
    message : str
        Optimiser message and any reason for ``success = False``.
    flags : tuple of str
        Plausibility and identifiability warnings in plain words.
    t_window_s : tuple of float
        Start and end of the fitted period, seconds from the record's first sample.
    extinction_s : float or None
        Extinction instant the fitted model predicts (direct) or matches (indirect).
    curves : Mapping of str to numpy.ndarray
        Time histories for figures: ``t_s``, ``i_a``, ``u_measured_v``, ``u_fitted_v``,
        ``g_measured_siemens``, ``g_fitted_siemens``, ``l_m``.
    """

    method: str
    period: str
    estimates: Mapping[str, ParameterEstimate]
    elongation_law: str
    elongation_params: Mapping[str, float]
    correlation: np.ndarray
    fitted_names: tuple[str, ...]
    residual_rms: float
    residual_rel: float
    success: bool
    message: str
    flags: tuple[str, ...] = ()
    t_window_s: tuple[float, float] = (math.nan, math.nan)
    extinction_s: float | None = None
    n_samples: int = 0
    curves: Mapping[str, np.ndarray] = field(default_factory=dict)
    bootstrap: Mapping[str, tuple[float, float]] = field(default_factory=dict)

    def value(self, name: str) -> float:
        """Estimate of a parameter by name."""
        return self.estimates[name].value

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON form (the keys of the ``recordscan fit --json`` output)."""
        out: dict[str, Any] = {
            "method": self.method,
            "period": self.period,
            "elongation_law": self.elongation_law,
            "elongation_params": dict(self.elongation_params),
        }
        for name, est in self.estimates.items():
            out[name] = est.value
            out[f"{name}_stderr"] = est.stderr
            out[f"{name}_status"] = est.status
            out[f"{name}_plausible"] = est.plausible
        out.update(
            {
                "residual_rms": self.residual_rms,
                "residual_rel": self.residual_rel,
                "success": self.success,
                "message": self.message,
                "flags": list(self.flags),
                "t_window_s": list(self.t_window_s),
                "extinction_s": self.extinction_s,
                "n_samples": self.n_samples,
                "fitted_names": list(self.fitted_names),
                "correlation": np.round(self.correlation, 4).tolist(),
                "bootstrap_ci95": {k: list(v) for k, v in self.bootstrap.items()},
            }
        )
        return out


def plausible(name: str, value: float) -> bool:
    """True when ``value`` lies in the broad published range of ``name`` (or none is known)."""
    lo, hi = PLAUSIBLE.get(name, (-math.inf, math.inf))
    return lo <= value <= hi
