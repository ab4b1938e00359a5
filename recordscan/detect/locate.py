"""Fault location along the line.

Single-ended: the Takagi method (Takagi, Yamakoshi, Yamaura, Kondow & Matsushima, "Development
of a new type fault locator using the one-terminal voltage and current data", IEEE Trans. PAS
101(8), 1982 — volume and issue from memory). For a phase-p-to-ground fault at per-unit distance
m, ``V = m·Z1·(I + k0·IR) + RF·IF``; multiplying by the conjugate of the superimposed current ΔI
(in phase with IF in a homogeneous system) and keeping the imaginary part removes RF: ``m =
Im(V·ΔI*) / Im(Z1·(I + k0·IR)·ΔI*)`` with ``k0 = (Z0 − Z1)/(3·Z1)`` and ``IR = IA + IB + IC``.
The load flow is removed by using ΔI instead of I.

Two-ended: unsynchronised negative-sequence method (Novosel, Hart, Udren & Garitty,
"Unsynchronized two-terminal fault location estimation", IEEE Trans. Power Delivery 11(1), 1996
— from memory): ``|V2S − m·Z2·I2S| = |V2R − (1 − m)·Z2·I2R|`` — magnitudes only, so the two
records need not share a phase reference; a quadratic in m.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from recordscan.core.record import Record
from recordscan.core.roles import I_LINE, PHASES, V_LINE
from recordscan.detect._base import Quantities, where
from recordscan.errors import DetectionError
from recordscan.signal.charfunc import fast_median
from recordscan.signal.sequence import sequence_components

__all__ = [
    "FaultLocation",
    "locate_single_ended",
    "locate_two_ended",
    "takagi_distance_pu",
    "two_ended_distance_pu",
]


@dataclass(frozen=True)
class FaultLocation:
    """Where the fault was.

    Attributes
    ----------
    distance_m : float
        From the local terminal.
    distance_pct : float
        Per cent of the line length.
    error_m : float
        Estimated error (spread of the per-sample estimates over the fault, with a floor of
        1 % of the line — our choice, see docs/detection.md).
    method : str
        ``"takagi"`` or ``"two-ended negative sequence"``.
    """

    distance_m: float
    distance_pct: float
    error_m: float
    method: str

    def to_dict(self) -> dict[str, float | str]:
        """Plain-JSON form."""
        return dict(self.__dict__)


def takagi_distance_pu(
    v: np.ndarray | complex,
    i: np.ndarray | complex,
    i_residual: np.ndarray | complex,
    delta_i: np.ndarray | complex,
    *,
    z1_ohm: complex,
    z0_ohm: complex,
) -> np.ndarray:
    """Takagi per-unit distance from phasors of the faulted phase.

    Parameters
    ----------
    v, i : complex
        Faulted-phase voltage and current phasors during the fault.
    i_residual : complex
        ``IA + IB + IC`` during the fault.
    delta_i : complex
        Faulted-phase current minus its pre-fault value.
    z1_ohm, z0_ohm : complex
        Positive- and zero-sequence impedance of the whole line.

    Returns
    -------
    numpy.ndarray
        Distance as a fraction of the line length.
    """
    k0 = (z0_ohm - z1_ohm) / (3.0 * z1_ohm)
    loop = z1_ohm * (np.asarray(i) + k0 * np.asarray(i_residual))
    dc = np.conj(np.asarray(delta_i))
    return np.imag(np.asarray(v) * dc) / np.imag(loop * dc)


def two_ended_distance_pu(
    v2_s: complex, i2_s: complex, v2_r: complex, i2_r: complex, *, z2_ohm: complex
) -> float:
    """Unsynchronised two-ended distance (fraction of the line from S) from negative sequence.

    Solves ``|V2S − m·Z2·I2S|² = |V2R − (1 − m)·Z2·I2R|²`` and returns the root in
    [−0.1, 1.1] closest to the line; NaN when none.
    """
    a, b = v2_s, z2_ohm * i2_s
    c, d = v2_r - z2_ohm * i2_r, z2_ohm * i2_r
    # |a − m b|² − |c + m d|² = 0
    qa = abs(b) ** 2 - abs(d) ** 2
    qb = -2.0 * (a * np.conj(b)).real - 2.0 * (c * np.conj(d)).real
    qc = abs(a) ** 2 - abs(c) ** 2
    if abs(qa) < 1e-12 * max(abs(qb), 1e-300):
        roots = np.array([-qc / qb]) if qb != 0 else np.array([])
    else:
        roots = np.roots([qa, qb, qc])
    roots = np.real(roots[np.abs(np.imag(roots)) < 1e-9]) if roots.size else roots
    ok = [float(r) for r in roots if -0.1 <= r <= 1.1]
    if not ok:
        return float("nan")
    return min(ok, key=lambda r: abs(r - 0.5))


def _fault_window(q: Quantities, inception_s: float, clear_s: float | None) -> np.ndarray:
    k0 = q.idx(inception_s)
    n = q.n_cycle(k0)
    a = k0 + int(np.ceil(1.05 * n))
    b = q.idx(clear_s) - 1 if clear_s is not None else k0 + int(4 * n)
    b = min(b, q.seg_end(k0) - 1)
    if b <= a:
        b = min(a + 1, q.seg_end(k0) - 1)
        a = max(k0 + int(n / 2), 0) if b <= a else a
    return np.arange(a, b + 1)


def locate_single_ended(
    record: Record,
    *,
    phase: str,
    inception_s: float,
    clear_s: float | None,
    z1_ohm: complex,
    z0_ohm: complex,
    length_m: float,
    quantities: Quantities | None = None,
) -> FaultLocation | None:
    """Takagi location of a single-phase-to-ground fault on ``phase``.

    Phasors are taken from one cycle after inception until the first pole opening; the
    median of the per-sample estimates is reported.

    Raises
    ------
    DetectionError
        When the three currents or the faulted-phase voltage are missing.
    """
    q = quantities or Quantities(record)
    if not q.has_currents() or q.values(V_LINE[phase]) is None:
        raise DetectionError(
            f"{where(record)}: fault location needs the three phase currents and the "
            f"faulted-phase voltage {V_LINE[phase]}"
        )
    idx = _fault_window(q, inception_s, clear_s)
    k_pre = max(q.idx(inception_s) - 1, 0)
    i_p = q.phasor(I_LINE[phase])
    v = q.phasor(V_LINE[phase])[idx]
    ir = sum(q.phasor(I_LINE[p])[idx] for p in PHASES)
    d_i = i_p[idx] - i_p[k_pre]
    m = takagi_distance_pu(v, i_p[idx], ir, d_i, z1_ohm=z1_ohm, z0_ohm=z0_ohm)
    m = m[np.isfinite(m)]
    if m.size == 0:
        return None
    med = fast_median(m)
    spread = float(np.percentile(m, 75) - np.percentile(m, 25)) if m.size > 3 else 0.05
    err = max(spread, 0.01) * length_m
    return FaultLocation(med * length_m, 100.0 * med, err, "takagi")


def locate_two_ended(
    local: Record,
    remote: Record,
    *,
    inception_local_s: float,
    inception_remote_s: float,
    z1_ohm: complex,
    length_m: float,
    clear_local_s: float | None = None,
    clear_remote_s: float | None = None,
    q_local: Quantities | None = None,
    q_remote: Quantities | None = None,
) -> FaultLocation | None:
    """Two-ended unsynchronised negative-sequence location (Z2 = Z1 on a line).

    Raises
    ------
    DetectionError
        When either record lacks the three voltages or currents.
    """
    ql = q_local or Quantities(local)
    qr = q_remote or Quantities(remote)
    for rec, q in ((local, ql), (remote, qr)):
        if not (q.has_currents() and q.has_voltages()):
            raise DetectionError(
                f"{where(rec)}: two-ended location needs three voltages and three currents"
            )

    def seq2(q: Quantities, inc: float, clr: float | None) -> tuple[complex, complex]:
        idx = _fault_window(q, inc, clr)
        k = int(idx[len(idx) // 2])
        v2 = sequence_components(*(q.phasor(V_LINE[p])[k] for p in PHASES))[2]
        i2 = sequence_components(*(q.phasor(I_LINE[p])[k] for p in PHASES))[2]
        return complex(v2), complex(i2)

    v2s, i2s = seq2(ql, inception_local_s, clear_local_s)
    v2r, i2r = seq2(qr, inception_remote_s, clear_remote_s)
    m = two_ended_distance_pu(v2s, i2s, v2r, i2r, z2_ohm=z1_ohm)
    if not np.isfinite(m):
        return None
    return FaultLocation(m * length_m, 100.0 * m, 0.01 * length_m, "two-ended negative sequence")
