"""Indirect fit: secondary-arc parameters from terminal records and the line description.

The usual record carries only line-side voltages and currents. After the poles of the
faulted phase have opened at both ends, the open conductor is coupled to the healthy phases
through the line's capacitances and series impedances (and the reactor banks);
:mod:`recordscan.fit.circuit` turns this into a small circuit driven by the measured
healthy-phase voltages and currents, with the Kizilcay-form arc of
:mod:`recordscan.physics.arc` from the open conductor to ground. The fit:

1. **Event chain** from :func:`recordscan.analysis.analyse`: faulted phase, start of the
   secondary arc, restrikes, final extinction, reclose and fault location. The fitted arc
   episode starts at the last confirmed restrike before the final extinction (the arc
   path is re-formed there and its elongation starts again), otherwise at the
   secondary-arc start.
2. **Circuit.** By default the open conductor is a chain of pi sections (about 20 km
   each): every node carries its coupling charge from the healthy phases' voltages along
   the line, every section the voltage the healthy phases' currents induce in it (both
   from each terminal's measured quantities, power-frequency band), the arc sits at the
   node nearest the scan's fault location and reactor banks at the end nodes. The
   simulated terminal voltage of the open phase is compared with the measured one (the
   mean of both ends with two records). ``circuit_model="lumped"`` keeps one node at the
   fault, compared with the terminal voltage corrected by the series drop.
3. **Burning period — voltage.** The comparison is made in the power-frequency band only
   (the recorder noise and the line's own ringing lie above it). The arc's
   power-frequency voltage grows with its length, ``(u0 + r0·|i|)·(l0 + v·t)``, and its
   shape (amplitude and phase against the current) depends on the time constant: the
   least-squares fit gives ``u0`` (with ``l0`` held at its prior), the **elongation
   rate** ``v`` and ``τ0`` (α at its prior).
4. **Extinction.** With those held, α — the length dependence of τ, which sets the time
   constant where the arc is longest — is found so that the model arc, now free to go
   out by the extinction criterion of :mod:`recordscan.physics.arc`, goes out at the
   measured final extinction. When no α in range can, τ0 is moved as well (stated in the
   flags). ``u0`` and ``v`` keep their voltage values (refitting them at the matched α
   biased them: u0 up, v down, in the accuracy harness).

Honest limits: one extinction instant determines one combination of the time-constant law,
so α is always reported as weakly determined (it also absorbs what the circuit misses of
the current near its zeros); ``l0`` cannot be separated from ``u0`` and ``v`` (only
``u0·l0`` and ``v/l0`` are seen); ``r0`` is invisible at secondary-arc currents; the
extinction thresholds are the model's defaults. Each is reported as held at its prior or
weakly determined.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
from scipy.interpolate import CubicSpline
from scipy.optimize import least_squares
from scipy.signal import butter, sosfiltfilt

from recordscan.core.record import Record
from recordscan.errors import FitError, FitWarning, RecordScanError
from recordscan.fit.circuit import (
    estimate_arc_current,
    reactor_flux,
    simulate_open_line,
    simulate_open_phase,
)
from recordscan.fit.indirect_inputs import (
    IndirectFitOptions,
    IndirectInputs,
    prepare_indirect,
)
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
    ConstantLength,
    JohnsElongation,
    LinearElongation,
)

if TYPE_CHECKING:  # pragma: no cover
    from recordscan.analysis import Analysis
    from recordscan.physics.line import LineDescription

__all__ = ["IndirectFitOptions", "IndirectInputs", "fit_indirect", "prepare_indirect"]

_LAWS = ("linear", "johns", "constant")


def _law(name: str, rate: float) -> Any:
    if name == "linear":
        return LinearElongation(v_m_per_s=max(rate, 0.0))
    if name == "johns":
        return JohnsElongation(rate_per_s=max(rate, 0.0))
    return ConstantLength()


class _Model:
    """The open-phase circuit over the fit window, on a fine grid aligned with the record."""

    def __init__(self, inp: IndirectInputs, opt: IndirectFitOptions, prior: ArcParameters):
        self.inp, self.opt, self.prior = inp, opt, prior
        t = inp.t_s
        f = inp.circuit.frequency_hz
        self.cycle = 1.0 / f
        dt = float(t[1] - t[0])
        fs = 1.0 / dt
        k = inp.circuit.phase_idx
        c = inp.circuit.c_f
        others = [j for j in range(3) if j != k]
        # healthy phases: smooth (they are power-frequency sinusoids; keeps noise out)
        sos = butter(4, min(opt.source_band_factor * f / (0.5 * fs), 0.9), output="sos")
        v_s = sosfiltfilt(sos, inp.v_mean_v[others], axis=1)
        b = c[k, others[0]] * v_s[0] + c[k, others[1]] * v_s[1]
        # the model's node is the fault point; the conductor's charge follows its mean
        # voltage along the line, which differs from it by the series drops
        b = b + c[k, k] * sosfiltfilt(sos, inp.v_mean_v[k] - inp.v_fault_v)
        i0 = int(np.searchsorted(t, inp.t_episode_s))
        i1 = int(np.searchsorted(t, inp.t_stop_s, side="right"))
        i1 = min(i1, t.size)
        self.idx = np.arange(i0, i1)
        self.t = t[i0:i1]
        self.sub = max(1, math.ceil(dt / opt.fine_step_s - 1e-9))
        nf = (self.t.size - 1) * self.sub + 1
        self.t_fine = self.t[0] + np.arange(nf) * (dt / self.sub)
        self.b = CubicSpline(t[i0:i1], b[i0:i1])(self.t_fine)
        self.h = np.interp(self.t_fine, t[i0:i1], inp.h_a[i0:i1])
        self.v_meas = inp.v_fault_v[i0:i1]
        self.v0 = float(self.v_meas[0])
        self.lam0 = float(inp.lam_self_vs[i0])
        self.t_el0 = float(self.t[0] - inp.t_episode_s)
        self.fs = fs
        # compared band and the samples of the burning period used in the voltage fit
        self.sos = butter(4, min(opt.band_factor * f / (0.5 * fs), 0.9), output="sos")
        self.burn = (self.t >= inp.t_episode_s + opt.skip_cycles * self.cycle) & (
            self.t <= inp.t_burn_end_s - 0.5 * self.cycle
        )
        w = 2.0 * math.pi * f
        self.basis = np.vstack([np.cos(w * self.t), np.sin(w * self.t)]).T
        self.v_band = sosfiltfilt(self.sos, self.v_meas)
        self.scale = float(np.sqrt(np.mean(self.v_band[self.burn] ** 2))) or 1.0

    def params(self, u0: float, tau0: float, alpha: float) -> ArcParameters:
        p = self.prior
        return ArcParameters(
            u0_v_per_m=u0,
            r0_ohm_per_m=p.r0_ohm_per_m,
            tau0_s=tau0,
            alpha=alpha,
            l0_m=p.l0_m,
            g_min_siemens_per_m=p.g_min_siemens_per_m,
            dr_dt_ohm_per_m_s=p.dr_dt_ohm_per_m_s,
        )

    def run(self, ap: ArcParameters, law: Any, *, forced: bool) -> Any:
        return simulate_open_phase(
            self.t_fine,
            self.b,
            self.h,
            self.inp.circuit,
            params=ap,
            law=law,
            t_elongation_s=self.t_el0,
            v0_v=self.v0,
            lam0_vs=self.lam0,
            forced_burning=forced,
        )

    def nuisance(self, v_model_band: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Residual in the compared band after the fitted power-frequency phasor."""
        r = self.v_band[self.burn] - v_model_band[self.burn]
        if not self.opt.free_phasor:
            return r, np.zeros(2)
        a = self.basis[self.burn]
        coef, *_ = np.linalg.lstsq(a, r, rcond=None)
        return r - a @ coef, coef


@dataclass(frozen=True)
class _LineRun:
    v_v: np.ndarray
    v_arc_v: np.ndarray
    i_a: np.ndarray
    g_siemens: np.ndarray
    l_m: np.ndarray
    extinction_s: float | None


class _LineModel(_Model):
    """The open conductor as a chain of pi sections, compared at its terminal(s).

    The healthy phases' voltages and currents along the line follow from each terminal's
    power-frequency terms (``v_j(s) = v_j(0) − s·a_j + s²/2·b_j``, ``i_j(s) = i_j(0) −
    s·(c·dv/dt)_j``; with both terminals, weighted by distance); they give each node's
    coupling charge and each section's induced voltage. The model's terminal voltage (the
    mean of both ends with two records) is compared with the measured one.
    """

    def __init__(self, inp: IndirectInputs, opt: IndirectFitOptions, prior: ArcParameters):
        super().__init__(inp, opt, prior)
        line = inp.line
        length = float(line.length_m)
        # sections of at most section_m on either side of the fault, a node at the fault
        x = float(np.clip(inp.fault_distance_m, 0.0, length))
        n_tot = max(opt.min_sections, math.ceil(length / opt.section_m))
        n1 = round(n_tot * x / length)
        n1 = max(n1, math.ceil(x / opt.section_m)) if x > 1.0 else 0
        n2 = max(math.ceil((length - x) / opt.section_m), n_tot - n1) if length - x > 1.0 else 0
        parts = [np.linspace(0.0, x, n1 + 1)] if n1 else [np.zeros(1)]
        if n2:
            parts.append(np.linspace(x, length, n2 + 1)[1:])
        s_nodes = np.concatenate(parts)
        nb = s_nodes.size - 1
        self.nb = nb
        self.s_nodes = s_nodes
        seg = np.diff(s_nodes)
        k = inp.circuit.phase_idx
        others = [j for j in range(3) if j != k]
        c = np.asarray(line.constants.c_f_per_m, dtype=float)
        i0, i1 = int(self.idx[0]), int(self.idx[-1]) + 1
        t_rec = inp.t_s[i0:i1]
        s_mid = 0.5 * (s_nodes[:-1] + s_nodes[1:])
        node_len = np.zeros(nb + 1)
        node_len[:-1] += 0.5 * seg
        node_len[1:] += 0.5 * seg
        terms = inp.terms

        def healthy_v(tr: dict[str, np.ndarray], s_m: np.ndarray) -> np.ndarray:
            # (len(s), 2, n): v_j(s) for the two healthy phases, from one terminal
            a_t, b_t, v_t = tr["a"][others, i0:i1], tr["b"][others, i0:i1], tr["v"][others, i0:i1]
            return (
                v_t[None] - s_m[:, None, None] * a_t[None]
                + 0.5 * s_m[:, None, None] ** 2 * b_t[None]
            )  # fmt: skip

        def emf(tr: dict[str, np.ndarray], s_m: np.ndarray, sign: float) -> np.ndarray:
            a_h = tr["a"][k, i0:i1] - tr["a_own"][k, i0:i1]
            b_h = tr["b"][k, i0:i1] - tr["b_own"][k, i0:i1]
            return sign * (a_h[None] - s_m[:, None] * b_h[None]) * seg[:, None]

        vh = healthy_v(terms[0], s_nodes)
        em = emf(terms[0], s_mid, 1.0)
        if len(terms) > 1:
            wr_n = (s_nodes / length)[:, None, None]
            vh = (1.0 - wr_n) * vh + wr_n * healthy_v(terms[1], length - s_nodes)
            wr_b = (s_mid / length)[:, None]
            em = (1.0 - wr_b) * em + wr_b * emf(terms[1], length - s_mid, -1.0)
        b_nodes = node_len[:, None] * (c[k, others[0]] * vh[:, 0] + c[k, others[1]] * vh[:, 1])
        tf = self.t_fine

        def fine(x: np.ndarray) -> np.ndarray:
            return np.vstack([np.interp(tf, t_rec, row) for row in x])

        self.b_nodes = fine(b_nodes)
        self.emf = fine(em)
        h = np.zeros((nb + 1, t_rec.size))
        lam_init = np.zeros(nb + 1)
        circ = inp.circuit
        for e_rec, tr in enumerate(terms):
            e_line = inp.local_end_idx if e_rec == 0 else 1 - inp.local_end_idx
            node = 0 if e_line == 0 else nb
            gam = circ.gamma_ends_per_h[e_line]
            lam = tr["lam"][:, i0:i1]
            h[node] = gam[k, others[0]] * lam[others[0]] + gam[k, others[1]] * lam[others[1]]
            lam_init[node] = float(lam[k, 0])
        if len(terms) == 1 and circ.has_reactors:
            # the far bank sees the far-end voltages estimated from the local terminal
            e_line = 1 - inp.local_end_idx
            node = 0 if e_line == 0 else nb
            gam = circ.gamma_ends_per_h[e_line]
            if np.any(gam != 0.0):
                tr0 = terms[0]
                v_far = tr0["v"] - length * tr0["a"] + 0.5 * length**2 * tr0["b"]
                lam_far = reactor_flux(inp.t_s, v_far, t_leak_s=circ.t_leak_s,
                                       t_ref_s=inp.inception_s)[:, i0:i1]  # fmt: skip
                h[node] = (
                    gam[k, others[0]] * lam_far[others[0]] + gam[k, others[1]] * lam_far[others[1]]
                )
                lam_init[node] = float(lam_far[k, 0])
        self.h_nodes = fine(h)
        self.lam_init = lam_init
        self.arc_node = int(np.argmin(np.abs(s_nodes - x)))
        v_loc = terms[0]["v_raw_k"][i0:i1]
        if len(terms) > 1:
            self.v_meas = 0.5 * (v_loc + terms[1]["v_raw_k"][i0:i1])
        else:
            self.v_meas = v_loc
        self.v_init = np.full(nb + 1, float(np.median(self.v_meas[: max(self.sub, 4)])))
        self.v_band = sosfiltfilt(self.sos, self.v_meas)
        self.scale = float(np.sqrt(np.mean(self.v_band[self.burn] ** 2))) or 1.0
        self.v_fault = inp.v_fault_v[i0:i1]

    def run(self, ap: ArcParameters, law: Any, *, forced: bool) -> Any:
        r = simulate_open_line(
            self.t_fine, self.inp.line, self.inp.circuit, b_c=self.b_nodes, emf_v=self.emf,
            h_a=self.h_nodes, arc_node=self.arc_node, params=ap, law=law,
            t_elongation_s=self.t_el0, v_init_v=self.v_init, lam_init_vs=self.lam_init,
            forced_burning=forced, s_nodes_m=self.s_nodes,
        )  # fmt: skip
        v = r.v_local_v if len(self.inp.terms) == 1 else 0.5 * (r.v_local_v + r.v_remote_v)
        return _LineRun(v, r.v_arc_v, r.i_a, r.g_siemens, r.l_m, r.extinction_s)


class _VoltageProblem:
    """Power-frequency voltage of the burning arc: ``u0``, the elongation rate and ``τ0``."""

    def __init__(self, model: _Model, law: str, alpha: float, tau0_s: float | None) -> None:
        self.m, self.law, self.alpha, self.tau0_fixed = model, law, alpha, tau0_s
        self.names = ["u0_v_per_m"]
        if law != "constant":
            self.names.append("v_m_per_s" if law == "linear" else "rate_per_s")
        if tau0_s is None:
            self.names.append("tau0_s")

    def from_x(self, x: np.ndarray) -> dict[str, float]:
        out = {} if self.tau0_fixed is None else {"tau0_s": self.tau0_fixed}
        for n, val in zip(self.names, x, strict=True):
            out[n] = math.exp(float(val)) if n in ("u0_v_per_m", "tau0_s") else float(val)
        return out

    def to_x(self, p: dict[str, float]) -> np.ndarray:
        return np.array(
            [math.log(p[n]) if n in ("u0_v_per_m", "tau0_s") else p[n] for n in self.names]
        )

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        lo_t, hi_t = self.m.opt.tau0_bounds_s
        b = {
            "u0_v_per_m": (math.log(100.0), math.log(20_000.0)),
            "v_m_per_s": (0.0, 100.0),
            "rate_per_s": (0.0, 60.0),
            "tau0_s": (math.log(lo_t), math.log(hi_t)),
        }
        return np.array([b[n][0] for n in self.names]), np.array([b[n][1] for n in self.names])

    def arc(self, p: dict[str, float]) -> tuple[ArcParameters, Any]:
        ap = self.m.params(p["u0_v_per_m"], p["tau0_s"], self.alpha)
        rate = p.get("v_m_per_s", p.get("rate_per_s", 0.0))
        return ap, _law(self.law, rate)

    def simulate(self, p: dict[str, float], *, forced: bool = True) -> Any:
        ap, lw = self.arc(p)
        return self.m.run(ap, lw, forced=forced)

    def residual(self, x: np.ndarray) -> np.ndarray:
        try:
            resp = self.simulate(self.from_x(x))
        except RecordScanError:
            return np.full(int(self.m.burn.sum()), 1e3)
        vb = sosfiltfilt(self.m.sos, resp.v_v[:: self.m.sub])
        r, _ = self.m.nuisance(vb)
        r = r / self.m.scale
        return np.where(np.isfinite(r), r, 1e3)


def _fit_voltage(
    model: _Model,
    law: str,
    alpha: float,
    starts: list[dict[str, float]],
    tau0_s: float | None = None,
) -> tuple[_VoltageProblem, Any]:
    """Least-squares fit of the burning-period voltage from several starts; the best."""
    prob = _VoltageProblem(model, law, alpha, tau0_s)
    lo, hi = prob.bounds()
    best = None
    for st in starts:
        full = {"v_m_per_s": 3.0, "rate_per_s": 10.0, **st}
        x0 = np.clip(prob.to_x(full), lo + 1e-9, hi - 1e-9)
        sol = least_squares(
            prob.residual,
            x0,
            bounds=(lo, hi),
            x_scale="jac",
            diff_step=1e-3,
            max_nfev=model.opt.max_nfev,
        )
        if best is None or sol.cost < best.cost * (1 - 1e-9):
            best = sol
    assert best is not None
    return prob, best


def _match_extinction(
    model: _Model,
    ext_of: Any,
    lo: float,
    hi: float,
    t_ext: float,
) -> tuple[float, bool, float]:
    """Value in ``[lo, hi]`` at which the model arc goes out at ``t_ext``.

    ``ext_of(x)`` is the model's extinction instant (``inf`` when it burns on), assumed to
    rise with ``x``. A grid, then bisection; extinctions fall on current zeros, so the
    relation has steps and the closer side is kept. Returns the value, whether it matches
    within half a cycle, and the half-width of the values that do.
    """
    grid = np.linspace(lo, hi, 13)
    d = np.array([ext_of(float(x)) for x in grid]) - t_ext
    if np.all(d > 0):
        return float(grid[0]), bool(abs(d[0]) <= 0.5 * model.cycle), math.nan
    if np.all(d < 0):
        return float(grid[-1]), bool(abs(d[-1]) <= 0.5 * model.cycle), math.nan
    j = int(np.flatnonzero(d >= 0)[0])
    a, b = float(grid[max(j - 1, 0)]), float(grid[j])
    for _ in range(10):
        mid = 0.5 * (a + b)
        if ext_of(mid) - t_ext >= 0:
            b = mid
        else:
            a = mid
    x = a if abs(ext_of(a) - t_ext) < abs(ext_of(b) - t_ext) else b
    half = 0.5 * model.cycle
    step = (hi - lo) / 12.0
    probe = x + np.linspace(-step, step, 9)
    ok = [float(y) for y in probe if lo <= y <= hi and abs(ext_of(float(y)) - t_ext) <= half]
    band = (max(ok) - min(ok)) / 2.0 if len(ok) >= 2 else math.nan
    return x, abs(ext_of(x) - t_ext) <= half, band


def _ext_function(model: _Model, law: str, p: dict[str, float], *, vary: str, fixed: float) -> Any:
    rate = p.get("v_m_per_s", p.get("rate_per_s", 0.0))
    lw = _law(law, rate)

    def ext_of(x: float) -> float:
        if vary == "alpha":
            ap = model.params(p["u0_v_per_m"], p["tau0_s"], x)
        else:  # log τ0
            ap = model.params(p["u0_v_per_m"], math.exp(x), fixed)
        e = model.run(ap, lw, forced=False).extinction_s
        return math.inf if e is None else e

    return ext_of


def fit_indirect(
    record: Record,
    line: LineDescription | str | Path,
    *,
    analysis: Analysis | None = None,
    remote: Record | None = None,
    prior: ArcParameters | None = None,
    options: IndirectFitOptions | None = None,
) -> ArcFitResult:
    """Fit the secondary arc's parameters from terminal records and the line description.

    Parameters
    ----------
    record : Record
        The local terminal's record of a single-pole trip (roles assigned).
    line : LineDescription or path
        The line (capacitance matrix, length, reactors).
    analysis : Analysis, optional
        The scan of ``record`` (computed when not given).
    remote : Record, optional
        The remote terminal's record: the two ends' voltages are averaged (the average of a
        linear profile along the open conductor is its mid-line value).
    prior : ArcParameters, optional
        Values of the parameters held at their priors (``r0``, ``α``, ``l0``, the extinction
        thresholds) and the start of ``u0`` and ``τ0`` (default the published set of
        Prikler et al., 14th PSCC, Sevilla, 2002).
    options : IndirectFitOptions, optional
        Fit settings.

    Returns
    -------
    ArcFitResult
        ``method="indirect"``, ``period="secondary"``; ``extinction_s`` is the fitted model's
        extinction instant.

    Raises
    ------
    FitError
        No secondary arc (or too short a one) to fit, or missing voltages.
    """
    opt = options or IndirectFitOptions()
    law = "linear" if opt.law == "auto" else opt.law
    if law not in _LAWS:
        raise FitError(f"unknown elongation law {opt.law!r}; use auto, {', '.join(_LAWS)}")
    pr = prior or ArcParameters()
    inp = prepare_indirect(record, line, analysis=analysis, remote=remote, options=opt)
    if opt.circuit_model not in ("sections", "lumped"):
        raise FitError(f"unknown circuit model {opt.circuit_model!r}; use sections or lumped")
    model = _LineModel(inp, opt, pr) if opt.circuit_model == "sections" else _Model(inp, opt, pr)
    if model.burn.sum() < 20:
        raise FitError(f"{inp.source}: too few samples in the burning period to fit")
    flags: list[str] = list(inp.notes)
    base = {"u0_v_per_m": pr.u0_v_per_m, "tau0_s": pr.tau0_s}
    starts = [dict(base, v_m_per_s=r, rate_per_s=2.0 * r) for r in (2.0, 8.0, 20.0)]
    # 1. burning period: u0, rate and τ0 from the voltage, α at its prior
    prob1, sol1 = _fit_voltage(model, law, pr.alpha, starts)
    p = prob1.from_x(sol1.x)
    sd1, _corr1 = _stderr(model, prob1, sol1, flags)
    t_ext = inp.extinction_s
    if t_ext is None or not opt.fit_alpha:
        if t_ext is None:
            flags.append("final extinction not observed (censored): α held at its prior")
        return _finish(model, prob1, sol1, p, pr.alpha, None, sd1, True, flags, law)
    # 2. extinction: α (the length dependence of τ, which sets τ where the arc is longest)
    #    so that the model arc goes out at the measured instant. u0 and the rate keep their
    #    voltage values: refitting them at the matched α lets them absorb what the circuit
    #    misses near current zeros (measured: a bias of u0 up and the rate down)
    lo_a, hi_a = opt.alpha_bounds
    ext_of = _ext_function(model, law, p, vary="alpha", fixed=math.nan)
    alpha, matched, band_a = _match_extinction(model, ext_of, lo_a, hi_a, t_ext)
    tau_sd = {"tau0_s": sd1.get("tau0_s")}
    if not matched:
        # α alone cannot: move τ0 as well (α stays at the nearer end of its range)
        lo_t, hi_t = opt.tau0_bounds_s
        ext_of = _ext_function(model, law, p, vary="tau0", fixed=alpha)
        ln_t, matched, band_lt = _match_extinction(
            model, ext_of, math.log(lo_t), math.log(hi_t), t_ext
        )
        p["tau0_s"] = math.exp(ln_t)
        tau_sd = {"tau0_s": p["tau0_s"] * band_lt if math.isfinite(band_lt) else None}
        flags.append("α alone could not reproduce the measured extinction: τ0 moved as well")
    if not matched:
        flags.append("no α and τ0 in range let the model arc go out at the measured extinction")
    a_sd = band_a if math.isfinite(band_a) else None
    return _finish(model, prob1, sol1, p, alpha, a_sd, tau_sd, matched, flags, law)


def _stderr(
    model: _Model, prob: _VoltageProblem, sol: Any, flags: list[str]
) -> tuple[dict[str, float | None], np.ndarray]:
    """Standard errors of the voltage fit's parameters (Jacobian, correlated residuals)."""
    fun, jac, x = sol.fun, sol.jac, sol.x
    m, k = fun.size, x.size
    s2 = float(np.sum(fun**2)) / max(m - k, 1)
    try:
        cov = np.linalg.inv(jac.T @ jac) * s2
        sd = np.sqrt(np.clip(np.diag(cov), 0, None))
        with np.errstate(invalid="ignore", divide="ignore"):
            corr = np.nan_to_num(cov / np.outer(sd, sd))
    except np.linalg.LinAlgError:
        sd = np.full(k, np.inf)
        corr = np.eye(k)
        flags.append("Jacobian singular: the voltage cannot separate the parameters")
    # band-limited residuals are strongly correlated: inflate by the samples per band
    n_eff = max(m * 2.0 * model.opt.band_factor / (model.fs * model.cycle), 2.0)
    sd = sd * math.sqrt(m / n_eff)
    p = prob.from_x(x)
    out: dict[str, float | None] = {}
    for j, name in enumerate(prob.names):
        val = sd[j] * p[name] if name in ("u0_v_per_m", "tau0_s") else sd[j]
        out[name] = float(val) if math.isfinite(val) else None
    return out, corr


def _finish(
    model: _Model,
    prob: _VoltageProblem,
    sol: Any,
    p: dict[str, float],
    alpha: float,
    alpha_sd: float | None,
    extra_sd: dict[str, float | None],
    matched: bool,
    flags: list[str],
    law: str,
) -> ArcFitResult:
    inp, pr = model.inp, model.prior
    sd, corr = _stderr(model, prob, sol, flags)
    sd = {**sd, **extra_sd}
    est: dict[str, ParameterEstimate] = {}
    names = [*prob.names] + ([] if "tau0_s" in prob.names else ["tau0_s"])
    for name in names:
        val = p[name]
        s = sd.get(name)
        rel = s / abs(val) if (s is not None and val != 0) else math.inf
        j = prob.names.index(name) if name in prob.names else -1
        others = np.abs(np.delete(corr[j], j)) if (j >= 0 and corr.shape[0] > 1) else np.zeros(1)
        weak = rel > 0.25 or float(others.max()) > 0.98
        if name in ("v_m_per_s", "rate_per_s") and val < 0.5 and s is not None and s < 0.5:
            weak = False
        est[name] = ParameterEstimate(name, val, s, WEAK if weak else FITTED, plausible(name, val))
    est["r0_ohm_per_m"] = ParameterEstimate("r0_ohm_per_m", pr.r0_ohm_per_m, None, PRIOR, True)
    if alpha_sd is None and alpha == pr.alpha and inp.extinction_s is None:
        est["alpha"] = ParameterEstimate("alpha", pr.alpha, None, PRIOR, True)
    else:
        est["alpha"] = ParameterEstimate("alpha", alpha, alpha_sd, WEAK, plausible("alpha", alpha))
        names.append("alpha")
        flags.append(
            "α set by the measured final extinction (one instant; it also absorbs what the "
            "circuit misses of the current near its zeros): weakly determined"
        )
    est["l0_m"] = ParameterEstimate("l0_m", pr.l0_m, None, PRIOR, True)
    flags.append(
        "l0 held at its prior (terminal voltages see u0·l0 and the elongation relative to "
        "l0); r0 and the extinction thresholds held at their priors"
    )
    if not inp.two_ended:
        flags.append("single-ended record: series drop to the fault from the scan's location")
    for n, e in est.items():
        if not e.plausible:
            flags.append(f"{n} = {e.value:.4g} lies outside the broad published range")
    ap = model.params(p["u0_v_per_m"], p["tau0_s"], alpha)
    law_obj = _law(law, p.get("v_m_per_s", p.get("rate_per_s", 0.0)))
    free = model.run(ap, law_obj, forced=inp.extinction_s is None)
    v_fit = free.v_v[:: model.sub]
    burning = model.run(ap, law_obj, forced=True).v_v[:: model.sub]
    r_band, coef = model.nuisance(sosfiltfilt(model.sos, burning))
    induced = model.basis @ coef
    resid_rms = float(np.sqrt(np.mean(r_band**2)))
    rel = resid_rms / model.scale
    ext_model = free.extinction_s
    success = bool(sol.success) and rel < 0.5
    msg = str(sol.message)
    if inp.extinction_s is not None:
        if ext_model is None:
            success = False
            msg = "fit not usable: the fitted model arc does not go out"
        else:
            d_ms = 1e3 * (ext_model - inp.extinction_s)
            msg += f"; model extinction {d_ms:+.1f} ms from the measured one"
            if not matched:
                flags.append(f"the fitted model goes out {d_ms:+.0f} ms from the measured one")
    if not success:
        if "not usable" not in msg:
            msg = f"fit not usable: {msg}; relative residual {rel:.2f}"
        warnings.warn(f"indirect arc fit did not converge ({msg})", FitWarning, stacklevel=3)
    i_est = estimate_arc_current(inp.t_s, inp.v_mean_v, inp.circuit, t_ref_s=inp.inception_s)[
        model.idx
    ]
    if isinstance(model, _LineModel):
        # figures show the fault point: the drop-corrected measurement and the model's arc
        u_meas = model.v_fault
        v_fit = np.asarray(free.v_arc_v)[:: model.sub]
    else:
        u_meas = model.v_meas - induced
    with np.errstate(divide="ignore", invalid="ignore"):
        g_meas = np.where(np.abs(u_meas) > 0.05 * model.scale, i_est / u_meas, np.nan)
        g_meas = np.where(g_meas > 0, g_meas, np.nan)
    nn = len(names)
    corr_full = np.eye(nn)
    corr_full[: corr.shape[0], : corr.shape[1]] = corr
    if law == "linear":
        elong = {"v_m_per_s": p["v_m_per_s"]}
    elif law == "johns":
        elong = {"t_hold_s": 0.1, "rate_per_s": p["rate_per_s"]}
    else:
        elong = {}
    return ArcFitResult(
        method="indirect",
        period="secondary",
        estimates=est,
        elongation_law=law,
        elongation_params=elong,
        correlation=corr_full,
        fitted_names=tuple(names),
        residual_rms=resid_rms,
        residual_rel=rel,
        success=success,
        message=msg,
        flags=tuple(flags),
        t_window_s=(float(model.t[0]), float(model.t[-1])),
        extinction_s=ext_model,
        n_samples=int(model.burn.sum()),
        curves={
            "t_s": model.t,
            "i_a": i_est,
            "u_measured_v": u_meas,
            "u_fitted_v": v_fit,
            "g_measured_siemens": g_meas,
            "g_fitted_siemens": free.g_siemens[:: model.sub],
            "l_m": free.l_m[:: model.sub],
        },
    )
