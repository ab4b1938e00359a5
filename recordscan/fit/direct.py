"""Direct fit: arc parameters from a measured arc current and arc voltage.

For records that carry the current through the fault arc and the voltage across it (staged
fault tests, fault-point measurements). The steps follow the structure of the model
``dg/dt = (G − g)/τ``, ``G = |i|/((u0 + r0·|i|)·l)``, ``τ = τ0·(l/l0)^α``:

1. instantaneous conductance ``g = i/u``, masked near current and voltage zeros;
2. stationary characteristic ``(u0, r0)`` from the quasi-stationary samples near each
   current peak (``|u| ≈ (u0 + r0·|i|)·l``, a straight line per half-cycle);
3. arc length history ``l(t)`` from the voltage envelope, and the elongation law;
4. ``τ(t)`` per half-cycle from the conductance equation, then ``α`` and ``τ0`` from
   ``log τ`` against ``log(l/l0)``;
5. output-error refinement: the arc equation driven by the measured current must reproduce
   the measured voltage (``scipy.optimize.least_squares``); candidate elongation laws are
   compared by AIC.

``l0`` cannot be separated from ``u0`` and ``r0`` by a voltage fit (scaling all lengths by k
and both gradients by 1/k leaves ``u`` unchanged), so it is held at its prior (the insulator
string or arcing-horn length) and stated so.
"""

from __future__ import annotations

import itertools
import math
import warnings
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy.optimize import least_squares

from recordscan.errors import FitError, FitWarning
from recordscan.fit.result import (
    FITTED,
    PRIOR,
    WEAK,
    ArcFitResult,
    ParameterEstimate,
    plausible,
)
from recordscan.physics.arc import (
    ArcParameters,
    ArcResponse,
    ConstantLength,
    JohnsElongation,
    LinearElongation,
    simulate_current_driven,
)

LAWS = ("constant", "linear", "johns")


@dataclass(frozen=True)
class DirectFitOptions:
    """Settings of the direct fit.

    Attributes
    ----------
    law : str
        ``"auto"`` (compare the laws by AIC) or one of ``"constant"``, ``"linear"``,
        ``"johns"``.
    i_mask_frac : float
        Samples with ``|i|`` below this fraction of the window's current peak are left out
        of the output error (near current zeros ``u = i/g`` is ill-conditioned).
    fit_alpha : bool
        Estimate α; if the arc length hardly changes it is held at its prior anyway.
    n_bootstrap : int
        Moving-block residual bootstrap refits for 95 % intervals (0 = none).
    seed : int
        Random seed of the bootstrap.
    max_nfev : int
        Optimiser evaluation budget per law.
    """

    law: str = "auto"
    i_mask_frac: float = 0.08
    fit_alpha: bool = True
    n_bootstrap: int = 0
    seed: int = 0
    max_nfev: int = 400


def _law(name: str, v_m_per_s: float) -> ConstantLength | LinearElongation | JohnsElongation:
    if name == "linear":
        return LinearElongation(v_m_per_s=max(v_m_per_s, 0.0))
    if name == "johns":
        return JohnsElongation()
    return ConstantLength()


def _half_cycles(i: np.ndarray) -> list[slice]:
    s = np.signbit(i)
    edges = np.flatnonzero(s[1:] != s[:-1]) + 1
    bounds = np.concatenate(([0], edges, [i.size]))
    return [slice(int(a), int(b)) for a, b in itertools.pairwise(bounds) if b - a >= 4]


@dataclass(frozen=True)
class InitialEstimates:
    """Step-by-step estimates before the output-error refinement."""

    u0_v_per_m: float
    r0_ohm_per_m: float
    tau0_s: float
    alpha: float
    v_m_per_s: float
    alpha_identifiable: bool
    t_half_s: np.ndarray
    l_half_m: np.ndarray
    tau_half_s: np.ndarray


def initial_estimates(
    t: np.ndarray,
    i: np.ndarray,
    u: np.ndarray,
    *,
    l0_m: float,
    prior: ArcParameters,
    t_start_s: float,
) -> InitialEstimates:
    """Steps 1–4 of the module docstring (stationary line, length, τ, α)."""
    peaks_t, a_k, b_k, ipk = [], [], [], []
    for sl in _half_cycles(i):
        ai = np.abs(i[sl])
        au = np.abs(u[sl])
        pk = float(np.percentile(ai, 90))  # robust against reignition spikes
        sel = (ai > 0.6 * pk) & (ai < 1.5 * pk)
        if sel.sum() < 3:
            continue
        x, y = ai[sel], au[sel]
        if np.ptp(x) > 0.05 * pk:
            b, a = np.polyfit(x, y, 1)
        else:
            a, b = float(np.median(y)), 0.0
        if a <= 0:
            a, b = float(np.median(y)), 0.0
        peaks_t.append(float(t[sl][np.argmax(ai)]))
        a_k.append(float(a))
        b_k.append(max(float(b), 0.0))
        ipk.append(pk)
    if len(a_k) < 3:
        raise FitError("fewer than three usable half-cycles of arc current in the fit window")
    tk = np.array(peaks_t)
    ak, bk, ik = np.array(a_k), np.array(b_k), np.array(ipk)
    early = tk <= tk[0] + max(0.05, 3.0 / max(len(tk), 1) * (tk[-1] - tk[0]) / 3.0)
    early[: min(3, early.size)] = True
    u_pk = ak + bk * ik  # stationary voltage at each peak
    ratio = float(np.median(bk[early] / np.maximum(ak[early], 1e-9)))  # r0/u0
    u0 = float(np.median(ak[early])) / l0_m
    r0 = max(ratio * u0, 0.0)
    if not plausible("u0_v_per_m", u0):
        u0 = prior.u0_v_per_m
    if not plausible("r0_ohm_per_m", r0):
        r0 = prior.r0_ohm_per_m
    l_k = u_pk / (u0 + r0 * ik)
    # linear elongation through l0 at the arc start
    dt_k = np.maximum(tk - t_start_s, 0.0)
    v = float(np.sum((l_k - l0_m) * dt_k) / max(np.sum(dt_k**2), 1e-12))
    v = max(v, 0.0)
    # τ per half-cycle from the conductance equation
    ell = np.interp(t, tk, l_k)
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.where(np.abs(u) > 0, i / u, np.nan)
    dg = np.gradient(g, t)
    big_g = np.abs(i) / ((u0 + r0 * np.abs(i)) * ell)
    tau_k = []
    for sl in _half_cycles(i):
        ai = np.abs(i[sl])
        sel = (ai > 0.15 * ai.max()) & np.isfinite(g[sl]) & np.isfinite(dg[sl])
        if sel.sum() < 4:
            tau_k.append(np.nan)
            continue
        d, r = dg[sl][sel], (big_g[sl] - g[sl])[sel]
        den = float(np.sum(d * d))
        tau_k.append(float(np.sum(d * r) / den) if den > 0 else np.nan)
    tau_arr = np.array(tau_k[: tk.size]) if len(tau_k) >= tk.size else np.full(tk.size, np.nan)
    ok = np.isfinite(tau_arr) & (tau_arr > 1e-6) & (tau_arr < 0.05)
    l_ratio = l_k / l0_m
    alpha_id = bool(ok.sum() >= 4 and np.ptp(np.log(np.maximum(l_ratio[ok], 1e-3))) > math.log(1.3))
    if alpha_id:
        alpha, ln_tau0 = np.polyfit(np.log(np.maximum(l_ratio[ok], 1e-3)), np.log(tau_arr[ok]), 1)
        alpha = float(np.clip(alpha, -1.5, 0.5))
        tau0 = float(math.exp(ln_tau0))
    else:
        alpha = prior.alpha
        tau0 = float(np.median(tau_arr[ok])) if ok.any() else prior.tau0_s
    if not plausible("tau0_s", tau0):
        tau0 = prior.tau0_s
    return InitialEstimates(u0, r0, tau0, alpha, v, alpha_id, tk, l_k, tau_arr)


class _Problem:
    """Output-error problem for one elongation law (vector ↔ parameters)."""

    def __init__(
        self,
        t: np.ndarray,
        i: np.ndarray,
        u: np.ndarray,
        mask: np.ndarray,
        *,
        law: str,
        l0_m: float,
        prior: ArcParameters,
        fit_alpha: bool,
        t_start_s: float,
        fit_r0: bool = True,
        oversample: int = 1,
    ) -> None:
        self.t, self.i, self.u, self.mask = t, i, u, mask
        # the sampled current is band-limited: interpolate it onto a finer grid when the arc
        # time constant approaches the sample interval (|i| has a kink at each zero)
        self.k = max(int(oversample), 1)
        if self.k > 1:
            from scipy.interpolate import CubicSpline

            idx = np.arange((t.size - 1) * self.k + 1) / self.k
            self.t_fine = np.interp(idx, np.arange(t.size), t)
            self.i_fine = CubicSpline(t, i)(self.t_fine)
        else:
            self.t_fine, self.i_fine = t, i
        self.law, self.l0_m, self.prior, self.t_start_s = law, l0_m, prior, t_start_s
        self.names = ["u0_v_per_m", "tau0_s"]
        if fit_r0:
            self.names.insert(1, "r0_ohm_per_m")
        if fit_alpha:
            self.names.append("alpha")
        if law == "linear":
            self.names.append("v_m_per_s")
        self.scale = float(np.sqrt(np.mean(u[mask] ** 2))) or 1.0
        self.g0 = abs(float(i[0] / u[0])) if u[0] != 0 else None

    def to_x(self, p: dict[str, float]) -> np.ndarray:
        x = []
        for n in self.names:
            v = p[n]
            x.append(math.log(max(v, 1e-12)) if n in ("u0_v_per_m", "tau0_s") else v)
        return np.array(x)

    def from_x(self, x: np.ndarray) -> dict[str, float]:
        out = {}
        for n, v in zip(self.names, x, strict=True):
            out[n] = math.exp(v) if n in ("u0_v_per_m", "tau0_s") else float(v)
        return out

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        lo, hi = [], []
        for n in self.names:
            b = {
                "u0_v_per_m": (math.log(50.0), math.log(50_000.0)),
                "r0_ohm_per_m": (0.0, 2.0),
                "tau0_s": (math.log(5e-6), math.log(0.1)),
                "alpha": (-2.5, 1.0),
                "v_m_per_s": (0.0, 100.0),
            }[n]
            lo.append(b[0])
            hi.append(b[1])
        return np.array(lo), np.array(hi)

    def params(self, p: dict[str, float]) -> tuple[ArcParameters, object]:
        ap = ArcParameters(
            u0_v_per_m=p["u0_v_per_m"],
            r0_ohm_per_m=max(p.get("r0_ohm_per_m", self.prior.r0_ohm_per_m), 0.0),
            tau0_s=p["tau0_s"],
            alpha=p.get("alpha", self.prior.alpha),
            l0_m=self.l0_m,
            g_min_siemens_per_m=self.prior.g_min_siemens_per_m,
            dr_dt_ohm_per_m_s=self.prior.dr_dt_ohm_per_m_s,
        )
        return ap, _law(self.law, p.get("v_m_per_s", 0.0))

    def simulate(self, p: dict[str, float]) -> ArcResponse:
        ap, lw = self.params(p)
        r = simulate_current_driven(
            self.t_fine,
            self.i_fine,
            params=ap,
            law=lw,
            t_start_s=self.t_start_s,
            g0_siemens=self.g0,
        )
        if self.k == 1:
            return r
        k = self.k
        idx = None if r.extinction_idx is None else r.extinction_idx // k
        return ArcResponse(
            t_s=r.t_s[::k],
            i_a=r.i_a[::k],
            g_siemens=r.g_siemens[::k],
            u_v=r.u_v[::k],
            l_m=r.l_m[::k],
            tau_s=r.tau_s[::k],
            extinction_idx=idx,
            extinction_s=r.extinction_s,
        )

    def residual(self, x: np.ndarray, u_target: np.ndarray | None = None) -> np.ndarray:
        target = self.u if u_target is None else u_target
        try:
            resp = self.simulate(self.from_x(x))
        except Exception:  # a parameter vector outside the model's domain
            return np.full(int(self.mask.sum()), 1e3)
        r = (resp.u_v[self.mask] - target[self.mask]) / self.scale
        return np.where(np.isfinite(r), r, 1e3)


def fit_direct(
    t_s: ArrayLike,
    i_a: ArrayLike,
    u_v: ArrayLike,
    *,
    l0_m: float = 3.0,
    t_start_s: float | None = None,
    period: str = "secondary",
    prior: ArcParameters | None = None,
    options: DirectFitOptions | None = None,
) -> ArcFitResult:
    """Fit arc parameters to one arc period of measured current and voltage.

    Parameters
    ----------
    t_s, i_a, u_v : array_like
        Sample times [s], arc current [A] and arc voltage [V] over the period to fit.
    l0_m : float
        Initial arc length (held; see module docstring).
    t_start_s : float, optional
        Instant the arc (and its elongation) started; default the first sample.
    period : str
        ``"primary"`` or ``"secondary"`` (labels the result).
    prior : ArcParameters, optional
        Prior values for parameters the data cannot determine (default: the published
        set of Prikler et al., 14th PSCC 2002).
    options : DirectFitOptions, optional
        Fit settings.

    Returns
    -------
    ArcFitResult
        ``success`` False (with a :class:`recordscan.errors.FitWarning`) when the optimiser
        did not converge; the estimates are then the last iterate, labelled as such.
    """
    opt = options or DirectFitOptions()
    pr = prior or ArcParameters(l0_m=l0_m)
    t = np.asarray(t_s, dtype=float)
    i = np.asarray(i_a, dtype=float)
    u = np.asarray(u_v, dtype=float)
    good = np.isfinite(t) & np.isfinite(i) & np.isfinite(u)
    t, i, u = t[good], i[good], u[good]
    if t.size < 50:
        raise FitError(f"only {t.size} valid samples in the fit window; need at least 50")
    t0 = float(t[0]) if t_start_s is None else float(t_start_s)
    # start where the arc conductance is measurable (a current peak region), and start the
    # model from the measured conductance there: a guessed initial state biases short windows
    # crest of the driven current, robust against reignition spikes (capacitor discharges)
    i_ref = math.sqrt(2.0) * float(np.sqrt(np.mean(i**2)))
    first = int(np.argmax(np.abs(i) > 0.3 * i_ref))
    t, i, u = t[first:], i[first:], u[first:]
    init = initial_estimates(t, i, u, l0_m=l0_m, prior=pr, t_start_s=t0)
    mask = np.abs(i) > opt.i_mask_frac * i_ref
    fit_alpha = opt.fit_alpha and init.alpha_identifiable
    # r0 shows only where r0·|i| is a visible part of the gradient (kA primary arcs); at the
    # tens of amperes of a secondary arc it is far below the model and noise error
    i_pk = float(np.max(np.abs(i)))
    fit_r0 = pr.r0_ohm_per_m * i_pk >= 0.05 * init.u0_v_per_m
    dt = float(np.median(np.diff(t)))
    l_max = max(float(np.nanmax(init.l_half_m)), l0_m)
    tau_min = init.tau0_s * min((l_max / l0_m) ** init.alpha, 1.0) * 0.5
    k_over = int(np.clip(math.ceil(6.0 * dt / max(tau_min, 1e-6)), 1, 16))
    laws = LAWS if opt.law == "auto" else (opt.law,)
    if any(law not in LAWS for law in laws):
        raise FitError(f"unknown elongation law {opt.law!r}; use auto, {', '.join(LAWS)}")
    start = {
        "u0_v_per_m": init.u0_v_per_m,
        "r0_ohm_per_m": init.r0_ohm_per_m,
        "tau0_s": init.tau0_s,
        "alpha": init.alpha,
        "v_m_per_s": init.v_m_per_s,
    }
    prior_start = {
        "u0_v_per_m": pr.u0_v_per_m,
        "r0_ohm_per_m": pr.r0_ohm_per_m,
        "tau0_s": pr.tau0_s,
        "alpha": pr.alpha,
        "v_m_per_s": max(init.v_m_per_s, 1.0),
    }
    best = None
    for law in laws:
        prob = _Problem(
            t,
            i,
            u,
            mask,
            law=law,
            l0_m=l0_m,
            prior=pr,
            fit_alpha=fit_alpha,
            t_start_s=t0,
            fit_r0=fit_r0,
            oversample=k_over,
        )
        lo, hi = prob.bounds()
        # two starts: the step-by-step estimates and the prior (guards against a local
        # minimum when the initial estimates are poor, e.g. at low sample rates)
        sol = None
        for begin in (start, prior_start):
            x0 = np.clip(prob.to_x(begin), lo + 1e-9, hi - 1e-9)
            cand = least_squares(
                prob.residual,
                x0,
                bounds=(lo, hi),
                x_scale="jac",
                max_nfev=opt.max_nfev,
                diff_step=1e-4,
            )
            if sol is None or cand.cost < sol.cost * (1 - 1e-6):
                sol = cand
        assert sol is not None
        m = sol.fun.size
        rss = float(np.sum(sol.fun**2))
        aic = m * math.log(max(rss / m, 1e-300)) + 2 * len(prob.names)
        if best is None or aic < best[0]:
            best = (aic, law, prob, sol)
    assert best is not None
    _aic, law, prob, sol = best
    return _finish(prob, sol, law=law, init=init, opt=opt, period=period, prior=pr, t0=t0)


def _finish(
    prob: _Problem,
    sol: object,
    *,
    law: str,
    init: InitialEstimates,
    opt: DirectFitOptions,
    period: str,
    prior: ArcParameters,
    t0: float,
) -> ArcFitResult:
    x = sol.x  # type: ignore[attr-defined]
    fun = sol.fun  # type: ignore[attr-defined]
    jac = sol.jac  # type: ignore[attr-defined]
    p = prob.from_x(x)
    m, k = fun.size, x.size
    s2 = float(np.sum(fun**2)) / max(m - k, 1)
    flags: list[str] = []
    try:
        cov_x = np.linalg.inv(jac.T @ jac) * s2
        sd_x = np.sqrt(np.clip(np.diag(cov_x), 0, None))
        with np.errstate(invalid="ignore", divide="ignore"):
            corr = cov_x / np.outer(sd_x, sd_x)
        corr = np.nan_to_num(corr)
    except np.linalg.LinAlgError:
        sd_x = np.full(k, np.inf)
        corr = np.eye(k)
        flags.append("Jacobian singular: parameters cannot be separated by these data")
    # residuals of one record are correlated in time: inflate by the effective sample size
    r = fun
    rho = float(np.corrcoef(r[:-1], r[1:])[0, 1]) if r.size > 3 and np.std(r) > 0 else 0.0
    rho = min(max(rho, 0.0), 0.99)
    inflate = math.sqrt((1 + rho) / (1 - rho))
    sd_x = sd_x * inflate
    boot = _bootstrap(prob, sol, opt) if opt.n_bootstrap > 0 else {}
    estimates: dict[str, ParameterEstimate] = {}
    for j, n in enumerate(prob.names):
        val = p[n]
        sd = float(sd_x[j] * val) if n in ("u0_v_per_m", "tau0_s") else float(sd_x[j])
        others = np.abs(np.delete(corr[j], j)) if k > 1 else np.array([0.0])
        rel = sd / abs(val) if val != 0 else math.inf
        weak = (
            (n == "alpha" and sd > 0.15)
            or (n != "alpha" and rel > 0.25)
            or (others.size and float(others.max()) > 0.98)
        )
        if n == "r0_ohm_per_m" and val < 1e-4:
            weak = sd > 0.005
        status = WEAK if weak else FITTED
        estimates[n] = ParameterEstimate(n, val, sd, status, plausible(n, val))
    if "alpha" not in estimates:
        estimates["alpha"] = ParameterEstimate("alpha", prior.alpha, None, PRIOR, True)
        flags.append(
            "alpha held at its prior: the arc length changed too little in this record to "
            "separate the length dependence of the time constant"
        )
    if "r0_ohm_per_m" not in estimates:
        estimates["r0_ohm_per_m"] = ParameterEstimate(
            "r0_ohm_per_m", prior.r0_ohm_per_m, None, PRIOR, True
        )
        flags.append(
            "r0 held at its prior: at this arc current r0·|i| is under 5 % of u0, so the record "
            "cannot determine it (fit it from a primary-arc period)"
        )
    estimates["l0_m"] = ParameterEstimate("l0_m", prob.l0_m, None, PRIOR, True)
    for n, est in estimates.items():
        if not est.plausible:
            flags.append(f"{n} = {est.value:.4g} lies outside the broad published range")
    resp = prob.simulate(p)
    res_v = (resp.u_v - prob.u)[prob.mask]
    resid_rms = float(np.sqrt(np.mean(res_v**2)))
    rel = resid_rms / prob.scale
    success = bool(sol.success) and rel < 0.5  # type: ignore[attr-defined]
    msg = str(sol.message)  # type: ignore[attr-defined]
    if not success:
        msg = f"fit not usable: {msg}; relative residual {rel:.2f}"
        warnings.warn(f"arc fit did not converge ({msg})", FitWarning, stacklevel=3)
    with np.errstate(divide="ignore", invalid="ignore"):
        g_meas = np.where(np.abs(prob.u) > 0, prob.i / prob.u, np.nan)
    elong = {"v_m_per_s": p["v_m_per_s"]} if law == "linear" else {}
    return ArcFitResult(
        method="direct",
        period=period,
        estimates=estimates,
        elongation_law=law,
        elongation_params=elong,
        correlation=corr,
        fitted_names=tuple(prob.names),
        residual_rms=resid_rms,
        residual_rel=rel,
        success=success,
        message=msg,
        flags=tuple(flags),
        t_window_s=(float(prob.t[0]), float(prob.t[-1])),
        extinction_s=resp.extinction_s,
        n_samples=int(prob.mask.sum()),
        curves={
            "t_s": prob.t,
            "i_a": prob.i,
            "u_measured_v": prob.u,
            "u_fitted_v": resp.u_v,
            "g_measured_siemens": g_meas,
            "g_fitted_siemens": resp.g_siemens,
            "l_m": resp.l_m,
        },
        bootstrap=boot,
    )


def _bootstrap(
    prob: _Problem, sol: object, opt: DirectFitOptions
) -> dict[str, tuple[float, float]]:
    """Moving-block residual bootstrap: refit on fitted output + resampled residual blocks."""
    rng = np.random.default_rng(opt.seed)
    x = sol.x  # type: ignore[attr-defined]
    base = prob.simulate(prob.from_x(x)).u_v
    res = np.where(prob.mask, prob.u - base, 0.0)
    n = res.size
    block = max(int(n / 40), 8)
    lo, hi = prob.bounds()
    draws = []
    for _ in range(opt.n_bootstrap):
        starts = rng.integers(0, max(n - block, 1), size=n // block + 1)
        resampled = np.concatenate([res[s : s + block] for s in starts])[:n]
        target = base + resampled
        s2 = least_squares(
            prob.residual,
            x,
            bounds=(lo, hi),
            x_scale="jac",
            max_nfev=opt.max_nfev // 2,
            diff_step=1e-4,
            args=(target,),
        )
        draws.append(prob.from_x(s2.x))
    out = {}
    for name in prob.names:
        vals = np.array([d[name] for d in draws])
        out[name] = (float(np.percentile(vals, 2.5)), float(np.percentile(vals, 97.5)))
    return out
