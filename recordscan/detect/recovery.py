"""Recovery voltage on the open phase after the final extinction.

RMS and peak over the observed recovery, the forced (power-frequency) and free components
and their beat (:func:`recordscan.signal.spectral.fit_beat`), the total harmonic distortion,
and — when a line description gives an estimate — the ratio of the measured forced component
to the estimate.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from recordscan.core.record import Record
from recordscan.core.roles import V_LINE
from recordscan.detect._base import Quantities
from recordscan.signal.spectral import fit_beat, thd

__all__ = ["RecoveryVoltage", "measure_recovery_voltage"]


@dataclass(frozen=True)
class RecoveryVoltage:
    """Measured recovery voltage.

    Attributes
    ----------
    t0_s, t1_s : float
        Window measured.
    rms_v, peak_v : float
        RMS and largest absolute value over the window.
    forced_rms_v : float
        Power-frequency component.
    free_rms_v : float
        Free (natural-frequency) component, 0 when none.
    free_frequency_hz, beat_hz : float or None
        Natural frequency and beat of a compensated line's recovery voltage.
    thd : float or None
        Total harmonic distortion (ratio) over the whole cycles of the window.
    estimate_rms_v : float or None
        Estimate from line data.
    ratio : float or None
        ``forced_rms_v / estimate_rms_v``.
    """

    t0_s: float
    t1_s: float
    rms_v: float
    peak_v: float
    forced_rms_v: float
    free_rms_v: float
    free_frequency_hz: float | None
    beat_hz: float | None
    thd: float | None
    estimate_rms_v: float | None = None
    ratio: float | None = None

    def to_dict(self) -> dict[str, float | None]:
        """Plain-JSON form."""
        return dict(self.__dict__)


def measure_recovery_voltage(
    record: Record,
    *,
    phase: str,
    from_s: float,
    until_s: float,
    quantities: Quantities | None = None,
    estimate_rms_v: float | None = None,
    skip_cycles: float = 0.5,
    max_window_s: float = 0.5,
) -> RecoveryVoltage | None:
    """Measure the open phase's recovery voltage between ``from_s`` and ``until_s``.

    Parameters
    ----------
    record : Record
        The record.
    phase : str
        Open phase.
    from_s, until_s : float
        Final extinction and end of the observation.
    quantities : Quantities, optional
        Shared computed quantities.
    estimate_rms_v : float, optional
        Recovery voltage estimated from line data.
    skip_cycles : float
        Cycles skipped after the extinction (the switching transient).
    max_window_s : float
        Longest window analysed (0.5 s resolves beats down to a few Hz).

    Returns
    -------
    RecoveryVoltage or None
        None when less than two cycles of one uniform segment are available.
    """
    q = quantities or Quantities(record)
    role = V_LINE[phase]
    x_all = q.values(role)
    if x_all is None:
        return None
    k0 = q.idx(from_s + skip_cycles * q.cycle_s)
    end_s = min(until_s, from_s + max_window_s)
    k1 = record.n_samples if end_s >= record.t_s[-1] else q.idx(end_s)
    k1 = min(k1, q.seg_end(k0))
    fs = q.segment_at(k0).rate_hz
    if k1 - k0 < 2 * fs / q.f_hz:
        return None
    x = np.nan_to_num(x_all[k0:k1])
    fit = fit_beat(x, fs_hz=fs, f_hz=q.f_hz)
    try:
        distortion = thd(x, fs_hz=fs, f_hz=q.f_hz) if fit.beat_hz is None else None
    except ValueError:
        distortion = None
    ratio = None
    if estimate_rms_v is not None and estimate_rms_v > 0:
        ratio = fit.forced_rms / estimate_rms_v
    return RecoveryVoltage(
        t0_s=float(record.t_s[k0]),
        t1_s=float(record.t_s[k1 - 1]),
        rms_v=float(np.sqrt(np.mean(x * x))),
        peak_v=fit.peak,
        forced_rms_v=fit.forced_rms,
        free_rms_v=fit.free_rms,
        free_frequency_hz=fit.free_frequency_hz,
        beat_hz=fit.beat_hz,
        thd=distortion,
        estimate_rms_v=estimate_rms_v,
        ratio=ratio,
    )
