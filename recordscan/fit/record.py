"""Arc-parameter fits of a whole record: find the arc periods, fit each one."""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from recordscan.core import roles
from recordscan.core.record import Record
from recordscan.errors import FitError, FitWarning
from recordscan.fit.direct import DirectFitOptions, fit_direct
from recordscan.fit.indirect import IndirectFitOptions, fit_indirect
from recordscan.fit.result import ArcFitResult
from recordscan.physics.arc import PRIMARY_ARC, ArcParameters

if TYPE_CHECKING:  # pragma: no cover
    from recordscan.physics.line import LineDescription


@dataclass(frozen=True)
class ArcPeriods:
    """Primary and secondary arc periods found on a measured arc current.

    Attributes
    ----------
    primary_s : tuple of float or None
        Start and end of the primary (fault-current) arc.
    secondary_s : tuple of float or None
        Start and end (extinction) of the secondary arc.
    """

    primary_s: tuple[float, float] | None
    secondary_s: tuple[float, float] | None


def _moving_rms(x: np.ndarray, n: int) -> np.ndarray:
    c = np.concatenate(([0.0], np.cumsum(np.nan_to_num(x) ** 2)))
    out = np.empty_like(x)
    half = n // 2
    idx = np.arange(x.size)
    lo = np.clip(idx - half, 0, x.size)
    hi = np.clip(idx + n - half, 0, x.size)
    out[:] = np.sqrt((c[hi] - c[lo]) / np.maximum(hi - lo, 1))
    return out


def find_arc_periods(t_s: np.ndarray, i_a: np.ndarray, *, frequency_hz: float) -> ArcPeriods:
    """Split a measured arc current into primary and secondary arc periods.

    The primary arc carries the fault current (kA); when the poles open the current drops by
    one to three orders of magnitude to the secondary arc current (tens of A), which ends at
    the final extinction. Levels are judged on the one-cycle RMS.

    Parameters
    ----------
    t_s, i_a : numpy.ndarray
        Time [s] and arc current [A].
    frequency_hz : float
        Power frequency.

    Returns
    -------
    ArcPeriods
    """
    t = np.asarray(t_s, dtype=float)
    i = np.asarray(i_a, dtype=float)
    dt = float(np.median(np.diff(t)))
    n = max(round(1.0 / (frequency_hz * dt)), 4)
    rms = _moving_rms(i, n)
    top = float(rms.max())
    if top <= 0:
        return ArcPeriods(None, None)
    on = np.flatnonzero(rms > 0.3 * top)
    prim = None
    sec_start_idx = 0
    if on.size:
        # the primary arc: the high-current run around the peak, if a much lower current follows
        k0, k1 = int(on[0]), int(on[-1])
        tail = rms[k1 + n :]
        if tail.size > n and top > 20 * float(np.median(tail)):
            i_pk = float(np.max(np.abs(i[k0 : k1 + n])))
            big = np.flatnonzero(np.abs(i[: k1 + n]) > 0.2 * i_pk)
            last_big = int(big[-1])
            sgn = np.signbit(i[last_big:])
            zc = np.flatnonzero(sgn[1:] != sgn[:-1])
            end = last_big + (int(zc[0]) + 1 if zc.size else 0)
            prim = (float(t[k0]), float(t[end]))
            sec_start_idx = min(end + 1, t.size - 1)
    rest = rms[sec_start_idx:]
    if rest.size < 3 * n:
        return ArcPeriods(prim, None)
    level = float(np.percentile(rest, 90))
    if level <= 1e-4 * top:
        return ArcPeriods(prim, None)
    alive = np.flatnonzero(rest > 0.1 * level)
    s0 = sec_start_idx + int(alive[0])
    s1 = min(sec_start_idx + int(alive[-1]) + n // 2, t.size - 1)
    return ArcPeriods(prim, (float(t[s0]), float(t[s1])))


def fit_record(
    record: Record,
    *,
    periods: tuple[str, ...] = ("primary", "secondary"),
    l0_m: float | None = None,
    options: DirectFitOptions | None = None,
    line: LineDescription | str | Path | None = None,
    remote: Record | None = None,
    indirect_options: IndirectFitOptions | None = None,
) -> list[ArcFitResult]:
    """Fits of the arc periods of a record: direct with arc channels, else indirect.

    Parameters
    ----------
    record : Record
        With roles ``arc_i`` and ``arc_v`` a direct fit; without them, a terminal record
        fitted indirectly (needs ``line``).
    periods : tuple of str
        Which periods to fit (the indirect fit covers the secondary arc only).
    l0_m : float, optional
        Initial arc length (insulator string); default 3 m, stated as held at prior.
    options : DirectFitOptions, optional
        Direct fit settings.
    line : LineDescription or path, optional
        Line description: routes a record without arc channels to
        :func:`recordscan.fit.indirect.fit_indirect`.
    remote : Record, optional
        The other terminal's record (indirect fit).
    indirect_options : IndirectFitOptions, optional
        Indirect fit settings.

    Returns
    -------
    list of ArcFitResult
        One result per period found.
    """
    ch_i = record.analog_by_role(roles.ARC_CURRENT)
    ch_v = record.analog_by_role(roles.ARC_VOLTAGE)
    if (ch_i is None or ch_v is None) and line is not None:
        if "secondary" not in periods:
            raise FitError(
                f"{record.provenance.path or 'record'}: a terminal record gives only the "
                "secondary arc (indirect fit); ask for the secondary period"
            )
        prior = ArcParameters() if l0_m is None else ArcParameters(l0_m=float(l0_m))
        return [fit_indirect(record, line, remote=remote, prior=prior, options=indirect_options)]
    if ch_i is None or ch_v is None:
        raise FitError(
            f"{record.provenance.path or 'record'}: a direct fit needs arc current and arc "
            "voltage channels (roles arc_i, arc_v); for terminal records give the line "
            "description for an indirect fit"
        )
    t = np.asarray(record.t_s)
    i = np.asarray(ch_i.values)
    u = np.asarray(ch_v.values)
    found = find_arc_periods(t, i, frequency_hz=record.frequency_hz)
    l0 = 3.0 if l0_m is None else float(l0_m)
    cycle = 1.0 / record.frequency_hz
    out: list[ArcFitResult] = []
    skipped: list[str] = []
    for name in periods:
        win = found.primary_s if name == "primary" else found.secondary_s
        if win is None:
            continue
        a, b = win
        # skip the first cycle (pole-opening transient) and the last half-cycle (extinction)
        lo, hi = (
            (a + 0.25 * cycle, b - 0.25 * cycle)
            if name == "primary"
            else (a + cycle, b - 0.5 * cycle)
        )
        sel = (t >= lo) & (t <= hi)
        if sel.sum() < 50:
            continue
        prior = (
            ArcParameters(l0_m=l0)
            if name == "secondary"
            else ArcParameters(
                u0_v_per_m=PRIMARY_ARC.u0_v_per_m,
                r0_ohm_per_m=PRIMARY_ARC.r0_ohm_per_m,
                tau0_s=PRIMARY_ARC.tau0_s,
                alpha=PRIMARY_ARC.alpha,
                l0_m=l0,
            )
        )
        try:
            out.append(
                fit_direct(
                    t[sel],
                    i[sel],
                    u[sel],
                    l0_m=l0,
                    t_start_s=a,
                    period=name,
                    prior=prior,
                    options=options,
                )
            )
        except FitError as exc:
            skipped.append(f"{name} arc: {exc}")
            warnings.warn(f"{name} arc not fitted: {exc}", FitWarning, stacklevel=2)
    if not out:
        raise FitError(
            f"{record.provenance.path or 'record'}: no primary or secondary arc period long "
            "enough to fit was found on the arc current channel"
            + (f" ({'; '.join(skipped)})" if skipped else "")
        )
    return out
