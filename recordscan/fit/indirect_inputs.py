"""Inputs of the indirect fit: options, and what it takes from records, line and scan.

Split from :mod:`recordscan.fit.indirect` (which re-exports these names).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
from scipy.signal import butter, sosfiltfilt

from recordscan.core import roles
from recordscan.core.record import Record
from recordscan.errors import FitError, FitWarning, RecordScanError
from recordscan.fit.circuit import (
    OpenPhaseCircuit,
    open_phase_circuit,
    reactor_flux,
    series_drop,
    terminal_terms,
)

if TYPE_CHECKING:  # pragma: no cover
    from recordscan.analysis import Analysis
    from recordscan.physics.line import LineDescription

__all__ = ["IndirectFitOptions", "IndirectInputs", "prepare_indirect"]


@dataclass(frozen=True)
class IndirectFitOptions:
    """Settings of the indirect fit.

    Attributes
    ----------
    law : str
        ``"linear"`` (``l = l0 + v·t``; also what ``"auto"`` means here), ``"johns"``
        (Johns et al. 1994 form with its hold time, rate fitted) or ``"constant"``.
    fine_step_s : float
        Largest step of the circuit simulation (the record interval is divided into
        equal sub-steps no longer than this).
    band_factor : float
        Upper edge of the compared band as a multiple of the power frequency.
    min_burning_cycles : float
        Shortest arc episode that can be fitted.
    tau0_bounds_s : tuple of float
        Search range of τ0 in the extinction profile.
    max_nfev : int
        Optimiser evaluation budget of the voltage fit.
    fit_alpha : bool
        Set α from the measured final extinction (when one was observed).
    alpha_bounds : tuple of float
        Search range of α.
    source_band_factor : float
        Low-pass corner (× power frequency) of the measured quantities that drive the
        circuit (healthy-phase voltages, series-drop terms): they are power-frequency
        quantities, and recorder noise passed to the driving current would scatter the
        model's extinction.
    free_phasor : bool
        Fit a free power-frequency phasor alongside the arc (absorbs an induced voltage the
        series-drop correction missed, but also the level of the arc voltage: ``u0`` then
        rests on the growth alone).
    circuit_model : str
        ``"sections"``: the open conductor as a chain of pi sections (its standing waves
        shape the arc current on long lines), compared at the terminals; ``"lumped"``: one
        node at the fault, compared with the terminal voltage corrected by the series drop.
    section_m, min_sections : float, int
        Longest section and fewest sections of the sectioned model.
    skip_cycles : float
        Cycles after the start of the arc episode left out of the voltage comparison
        (pole-opening transients, the model's start-up).
    """

    law: str = "linear"
    fine_step_s: float = 25e-6
    band_factor: float = 1.6
    min_burning_cycles: float = 4.0
    tau0_bounds_s: tuple[float, float] = (0.05e-3, 10e-3)
    max_nfev: int = 200
    free_phasor: bool = False
    circuit_model: str = "sections"
    skip_cycles: float = 3.0
    section_m: float = 20e3
    min_sections: int = 6
    fit_alpha: bool = True
    alpha_bounds: tuple[float, float] = (-1.5, 0.2)
    source_band_factor: float = 3.0


@dataclass(frozen=True)
class IndirectInputs:
    """Everything the indirect fit takes from the records, the line and the event chain.

    Attributes
    ----------
    t_s : numpy.ndarray
        Record sample times [s] (local record).
    v_fault_v : numpy.ndarray
        Voltage of the open phase at the fault, estimated from the terminal(s): the
        terminal voltage minus the series drop to the fault (:func:`series_drop`).
    v_mean_v : numpy.ndarray
        (3, n) phase voltages averaged along the line (they set the conductor charges).
    h_a : numpy.ndarray
        Healthy phases' share of the open phase's reactor current [A] (zeros without
        reactors).
    lam_self_vs : numpy.ndarray
        Reactor flux of the open phase (start value of the simulation).
    circuit : OpenPhaseCircuit
        The open-phase circuit.
    phase : str
        Faulted (open) phase.
    fault_distance_m : float
        Fault distance from the local terminal used for the drop.
    t_episode_s : float
        Start of the fitted arc episode (secondary-arc start or last restrike).
    t_burn_end_s : float
        End of the burning period (the measured final extinction, or the end of the
        observation when the extinction is censored).
    extinction_s : float or None
        Measured final extinction (None: not observed).
    t_stop_s : float
        End of the simulated window (before any reclose).
    inception_s : float
        Fault inception (for the reactor flux).
    restrike_s : tuple of float
        Restrikes found by the scan.
    two_ended : bool
        Whether the remote record was used.
    notes : tuple of str
        How the inputs were obtained (location source, restrikes ignored…).
    source : str
        Record path for messages.
    line : LineDescription
        The line.
    local_end_idx : int
        Line end (0 "from", 1 "to") of the local record.
    terms : tuple of dict
        Per terminal (local, then remote when used; on the local time base) the
        power-frequency terms of :func:`recordscan.fit.circuit.terminal_terms`, with
        ``v_raw_k`` (the open phase's measured voltage) and ``lam`` (reactor flux).
    """

    t_s: np.ndarray
    v_fault_v: np.ndarray
    v_mean_v: np.ndarray
    h_a: np.ndarray
    lam_self_vs: np.ndarray
    circuit: OpenPhaseCircuit
    phase: str
    fault_distance_m: float
    t_episode_s: float
    t_burn_end_s: float
    extinction_s: float | None
    t_stop_s: float
    inception_s: float
    restrike_s: tuple[float, ...]
    two_ended: bool
    notes: tuple[str, ...]
    source: str
    line: Any = None
    local_end_idx: int = 0
    terms: tuple[dict[str, np.ndarray], ...] = ()


def _channels(record: Record, table: dict[str, str], where: str, what: str) -> np.ndarray | None:
    chans = []
    for ph in ("A", "B", "C"):
        ch = record.analog_by_role(table[ph])
        if ch is None:
            return None
        chans.append(np.asarray(ch.values, dtype=float))
    x = np.vstack(chans)
    bad = ~np.all(np.isfinite(x), axis=0)
    if bad.any():
        idx = np.flatnonzero(~bad)
        if idx.size < 10:
            raise FitError(f"{where}: the {what} hold no valid samples")
        t = np.asarray(record.t_s, dtype=float)
        for r in range(3):
            x[r, bad] = np.interp(t[bad], t[idx], x[r, idx])
    return x


def _end_quantities(
    record: Record,
    ld: LineDescription,
    circ: OpenPhaseCircuit,
    *,
    end_idx: int,
    distance_m: float,
    inception_s: float,
    where: str,
    cutoff_hz: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, bool, dict[str, np.ndarray]]:
    """Terminal voltages, fault-point, line-mean and far-end voltages, terminal terms."""
    if not record.is_uniform:
        raise FitError(f"{where}: the indirect fit needs a uniformly sampled record")
    v = _channels(record, roles.V_LINE, where, "line-side voltages")
    if v is None:
        raise FitError(
            f"{where}: the three line-side phase voltages (roles v_a, v_b, v_c) are needed "
            "for an indirect fit; assign them with a recorder profile"
        )
    i = _channels(record, roles.I_LINE, where, "phase currents")
    t = np.asarray(record.t_s, dtype=float)
    k = circ.phase_idx
    length = float(ld.length_m)
    gam = circ.gamma_ends_per_h[end_idx]
    lam = None
    if np.any(gam != 0.0):
        lam = reactor_flux(t, v, t_leak_s=circ.t_leak_s, t_ref_s=inception_s)
    if i is None:
        i = np.zeros_like(v)
        ok = False
    else:
        ok = True
    terms = terminal_terms(t, v, i, ld, gamma_end_per_h=gam, lam_abc_vs=lam, cutoff_hz=cutoff_hz)
    terms["v_raw_k"] = v[k]
    terms["lam"] = lam if lam is not None else np.zeros_like(v)
    if not ok:
        return v, v[k], v, v, False, terms
    a_m, b_m, e_m = series_drop(
        t, v, i, ld, gamma_end_per_h=gam, lam_abc_vs=lam, cutoff_hz=cutoff_hz
    )
    d = distance_m
    v_f = v[k] - (d * a_m[k] - 0.5 * d * d * b_m[k])
    v_mean = v - (0.5 * length * a_m - length * length / 6.0 * b_m)
    # the open conductor beyond the fault carries the arc current's far share the other way
    # (its shunt current is minus the arc current without reactors): mean correction
    v_mean[k] = v_mean[k] - (length - d) ** 2 / (2.0 * length) * e_m[k]
    v_far = v - (length * a_m - 0.5 * length * length * b_m)
    v_far[k] = v_far[k] - (length - d) * e_m[k]
    return v, v_f, v_mean, v_far, True, terms


def _restrike_real(t: np.ndarray, v: np.ndarray, t_r: float, cycle: float) -> bool:
    """A restrike follows a recovered (high) open-phase voltage; a false one does not.

    ``v`` is the power-frequency band of the open-phase voltage (the line's own ringing
    after the pole openings is outside it).
    """
    before = (t >= t_r - 2.0 * cycle) & (t < t_r - 0.25 * cycle)
    after = (t > t_r + 0.5 * cycle) & (t <= t_r + 2.5 * cycle)
    if before.sum() < 4 or after.sum() < 4:
        return True
    rb = float(np.sqrt(np.mean(v[before] ** 2)))
    ra = float(np.sqrt(np.mean(v[after] ** 2)))
    return rb > 2.0 * ra


def prepare_indirect(
    record: Record,
    line: LineDescription | str | Path,
    *,
    analysis: Analysis | None = None,
    remote: Record | None = None,
    options: IndirectFitOptions | None = None,
) -> IndirectInputs:
    """Collect the fit's inputs; raise :class:`FitError` with guidance when they are missing.

    Parameters
    ----------
    record : Record
        Local terminal record (roles assigned).
    line : LineDescription or path
        The line description.
    analysis : Analysis, optional
        The event chain of ``record`` (computed when not given).
    remote : Record, optional
        The remote terminal's record of the same event.
    options : IndirectFitOptions, optional
        Fit settings.

    Returns
    -------
    IndirectInputs
    """
    from recordscan.analysis import analyse, pair
    from recordscan.physics.line import load_line

    opt = options or IndirectFitOptions()
    where = record.provenance.path or "record"
    ld = load_line(line) if isinstance(line, (str, Path)) else line
    if analysis is None:
        try:
            analysis = analyse(record, line=ld, remote=remote)
        except RecordScanError as exc:
            raise FitError(f"{where}: the event chain could not be found ({exc})") from None
    an = analysis
    if an.event != "single_pole_trip" or an.faulted_phase is None:
        raise FitError(
            f"{where}: no secondary arc to fit: the record shows {an.event.replace('_', ' ')}; "
            "the indirect fit needs a single-pole trip (check the record with "
            "'recordscan scan')"
        )
    sa = an.secondary_arc_start_s
    ext = an.extinction_s
    if sa is None:
        raise FitError(
            f"{where}: no secondary arc was found after the single-pole trip of phase "
            f"{an.faulted_phase} (the open-phase voltage shows no arc signature); there is "
            "nothing to fit — check the event chain with 'recordscan scan'"
        )
    cycle = 1.0 / record.frequency_hz
    notes: list[str] = []
    circ = open_phase_circuit(ld, an.faulted_phase)
    length = float(ld.length_m)
    inc = an.inception.t_s if an.inception is not None else sa - 0.1
    if an.location is not None and 0.0 <= an.location.distance_m <= length:
        x = float(an.location.distance_m)
        notes.append(f"fault at {x / 1e3:.1f} km ({an.location.method} location)")
    else:
        x = 0.5 * length
        notes.append("fault location unknown: mid-line assumed for the series drop")
    local_idx = 1 if (record.station and record.station == ld.to_station) else 0
    v, v_f, v_mean, v_far, drop_ok, terms_l = _end_quantities(
        record, ld, circ, end_idx=local_idx, distance_m=x, inception_s=inc, where=where,
        cutoff_hz=opt.source_band_factor * record.frequency_hz,
    )  # fmt: skip
    if not drop_ok:
        notes.append("no phase currents: the series drop to the fault is neglected")
    t = np.asarray(record.t_s, dtype=float)
    v_ends = [v, v_far]  # by local/remote
    terms_all = [terms_l]
    two = False
    if remote is not None:
        try:
            pr = an.pairing if an.pairing is not None else pair(record, remote)
            rw = remote.provenance.path or "remote record"
            vr, vr_f, vr_mean, _vr_far, _ok_r, terms_r = _end_quantities(
                remote, ld, circ, end_idx=1 - local_idx, distance_m=length - x,
                inception_s=inc - pr.offset_s, where=rw,
                cutoff_hz=opt.source_band_factor * record.frequency_hz,
            )  # fmt: skip
            tr = np.asarray(remote.t_s, dtype=float) + pr.offset_s
            if tr[0] <= t[0] + 0.05 and tr[-1] >= min(t[-1], (ext or t[-1]) + 0.1):

                def on_local(y: np.ndarray) -> np.ndarray:
                    return np.interp(t, tr, y)

                v_f = 0.5 * (v_f + on_local(vr_f))
                v_mean = 0.5 * (v_mean + np.vstack([on_local(r) for r in vr_mean]))
                v_ends[1] = np.vstack([on_local(r) for r in vr])
                terms_all.append(
                    {
                        key: (np.vstack([on_local(r) for r in val]) if val.ndim == 2
                              else on_local(val))
                        for key, val in terms_r.items()
                    }
                )  # fmt: skip
                two = True
            else:
                notes.append("remote record does not cover the event: not used")
        except RecordScanError as exc:
            warnings.warn(f"remote record not used: {exc}", FitWarning, stacklevel=2)
    k = circ.phase_idx
    h = np.zeros_like(t)
    lam_self = np.zeros_like(t)
    if circ.has_reactors:
        for e_rec, vv in enumerate(v_ends):
            e_line = local_idx if e_rec == 0 else 1 - local_idx
            gam = circ.gamma_ends_per_h[e_line]
            if not np.any(gam != 0.0):
                continue
            lam = reactor_flux(t, vv, t_leak_s=circ.t_leak_s, t_ref_s=inc)
            for j in range(3):
                if j != k:
                    h = h + gam[k, j] * lam[j]
            lam_self = lam_self + 0.5 * lam[k]
    restrikes = tuple(float(e.t_s) for e in an.restrikes)
    before = [r for r in restrikes if r < (ext if ext is not None else math.inf)]
    fs = 1.0 / float(t[1] - t[0])
    sos = butter(4, min(opt.band_factor * record.frequency_hz / (0.5 * fs), 0.9), output="sos")
    v_band = sosfiltfilt(sos, v_f)
    real = [r for r in before if _restrike_real(t, v_band, r, cycle)]
    if len(real) < len(before):
        notes.append(f"{len(before) - len(real)} restrike(s) of the scan not confirmed")
    t_ep = max([sa, *real])
    rc = an.reclose_s
    t_obs_end = float(t[-1]) - cycle
    if rc is not None and rc > t_ep:
        t_obs_end = min(t_obs_end, rc - 0.25 * cycle)
    if ext is not None:
        t_burn_end = float(ext)
        t_stop = min(ext + 4.0 * cycle, t_obs_end)
    else:
        t_burn_end = t_obs_end
        t_stop = t_obs_end
    if (t_burn_end - t_ep) < opt.min_burning_cycles * cycle:
        raise FitError(
            f"{where}: the secondary arc burned only {(t_burn_end - t_ep) * 1e3:.0f} ms from "
            f"{'its last restrike' if real else 'the last pole opening'}; at least "
            f"{opt.min_burning_cycles:g} cycles are needed to fit it"
        )
    return IndirectInputs(
        t_s=t,
        v_fault_v=v_f,
        v_mean_v=v_mean,
        h_a=h,
        lam_self_vs=lam_self,
        circuit=circ,
        phase=an.faulted_phase,
        fault_distance_m=x,
        t_episode_s=float(t_ep),
        t_burn_end_s=float(t_burn_end),
        extinction_s=None if ext is None else float(ext),
        t_stop_s=float(t_stop),
        inception_s=float(inc),
        restrike_s=restrikes,
        two_ended=two,
        notes=tuple(notes),
        source=where,
        line=ld,
        local_end_idx=local_idx,
        terms=tuple(terms_all),
    )
