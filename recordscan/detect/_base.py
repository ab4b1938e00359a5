"""Shared per-record quantities for the detectors (computed once, segment by segment).

:class:`Quantities` wraps a :class:`~recordscan.core.record.Record` and computes, on demand
and once, the signal-layer arrays the detectors need (phasors, RMS, superimposed values,
harmonic ratio). Every array has the record's full length; each uniform segment is processed
on its own, so the first cycle after a gap is NaN and nothing is interpolated across a gap.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable

import numpy as np

from recordscan.core.record import Record, Segment
from recordscan.core.roles import I_LINE, PHASES, POLE_CLOSED, V_LINE
from recordscan.errors import DetectionError
from recordscan.signal.charfunc import finite_array_median, robust_scale
from recordscan.signal.filters import highpass
from recordscan.signal.phasor import (
    dft_kernel,
    real_parts_phasor,
    samples_per_cycle,
    sliding_rms,
)
from recordscan.signal.sequence import superimposed
from recordscan.signal.spectral import harmonic_ratio

__all__ = [
    "HARMONICS",
    "Quantities",
    "decimate_record",
    "finite_median",
    "finite_values",
    "where",
]

#: harmonic orders of the arc signature (those below 0.45·fs are used)
HARMONICS: tuple[int, ...] = (3, 5, 7)


def finite_median(x: np.ndarray) -> float:
    """Median of the finite values (NaN when there are none), without a warning."""
    x = np.asarray(x, dtype=np.float64).reshape(-1)
    ok = np.isfinite(x)
    if not ok.all():
        x = x[ok]
    return finite_array_median(x) if x.size else float("nan")


def decimate_record(record: Record, *, min_samples_per_cycle: float = 40.0) -> Record:
    """Block-average each uniform segment down to at least ``min_samples_per_cycle``.

    Each block of ``k = floor(rate / (min_samples_per_cycle·f))`` samples becomes its mean,
    stamped at the mean of its instants (a boxcar anti-alias filter with nulls at multiples
    of the new rate; gain at the 7th harmonic ≥ 0.99 for 40 samples per cycle — derived from
    the boxcar's sinc response). Trailing samples that do not fill a block are dropped; digital
    channels keep the last sample of each block; gaps stay gaps; channels without a role are
    left out. Returns ``record`` itself when
    no segment is fast enough to decimate.
    """
    f = record.frequency_hz or 50.0
    segs = [s for s in record.segments if s.n_samples > 0]
    factors = [max(1, int(s.rate_hz // (min_samples_per_cycle * f))) for s in segs]
    if all(k == 1 for k in factors):
        return record
    # only channels with a role matter to the detectors
    record_analog = [ch for ch in record.analog if ch.role]
    record_digital = [ch for ch in record.digital if ch.role]
    t_parts: list[np.ndarray] = []
    a_parts: list[list[np.ndarray]] = [[] for _ in record_analog]
    d_parts: list[list[np.ndarray]] = [[] for _ in record_digital]
    for seg, k in zip(segs, factors, strict=True):
        n_blk = seg.n_samples // k
        if n_blk == 0:
            continue
        lo, hi = seg.start_idx, seg.start_idx + n_blk * k
        t_parts.append(_block_mean(record.t_s, lo, n_blk, k))
        for j, ch in enumerate(record_analog):
            a_parts[j].append(_block_mean(ch.values, lo, n_blk, k))
        for j, ch in enumerate(record_digital):
            d_parts[j].append(ch.values[lo + k - 1 : hi : k])
    analog = [
        ch.with_values(_joined(parts)) for ch, parts in zip(record_analog, a_parts, strict=True)
    ]
    digital = [
        ch.with_values(_joined(parts)) for ch, parts in zip(record_digital, d_parts, strict=True)
    ]
    return Record(
        t_s=_joined(t_parts),
        analog=tuple(analog),
        digital=tuple(digital),
        frequency_hz=record.frequency_hz,
        station=record.station,
        device=record.device,
        start_ns=record.start_ns,
        trigger_ns=record.trigger_ns,
        header_text=record.header_text,
        info_text=record.info_text,
        provenance=record.provenance,
        processing=(*record.processing, f"block-averaged to {min_samples_per_cycle:g}+ per cycle"),
    )


def _block_mean(x: np.ndarray, lo: int, n_blk: int, k: int) -> np.ndarray:
    """Means of ``n_blk`` consecutive blocks of ``k`` samples from ``x[lo]`` on.

    Below 8 samples per block, summed block member by block member (k strided passes; the
    same additions in the same order as ``reshape(n_blk, k).mean(axis=1)``, whose
    short-axis reduction is slow); numpy's pairwise summation from 8 on is kept as is.
    """
    hi = lo + n_blk * k
    if k >= 8:
        return x[lo:hi].reshape(n_blk, k).mean(axis=1)
    out = x[lo:hi:k].copy()
    for j in range(1, k):
        out += x[lo + j : hi : k]
    out /= k
    return out


def finite_values(x: np.ndarray) -> np.ndarray:
    """``np.nan_to_num(x)``, or ``x`` itself (no copy) when all finite: for reading only."""
    return x if np.isfinite(x).all() else np.nan_to_num(x)


_finite = finite_values


def _joined(parts: list[np.ndarray]) -> np.ndarray:
    """Concatenate, read-only, so that the record takes the array without another copy."""
    out = parts[0] if len(parts) == 1 else np.concatenate(parts)
    if out.base is not None:
        out = out.copy()
    out.setflags(write=False)
    return out


def where(record: Record) -> str:
    """Name of the record for messages."""
    return record.provenance.path or record.station or "record"


class Quantities:
    """Lazily computed, cached signal quantities of one record.

    Parameters
    ----------
    record : Record
        The record (roles assigned).
    f_hz : float, optional
        Frequency of the DFT windows (default the record's nominal frequency).
    """

    def __init__(self, record: Record, *, f_hz: float | None = None) -> None:
        if record.n_samples < 4:
            raise DetectionError(f"{where(record)}: record holds fewer than 4 samples")
        self.record = record
        self.f_hz = float(f_hz or record.frequency_hz or 0.0)
        if not self.f_hz > 0:
            raise DetectionError(
                f"{where(record)}: nominal frequency unknown; set the line frequency in the cfg"
            )
        self.cycle_s = 1.0 / self.f_hz
        self.segments: tuple[Segment, ...] = tuple(
            s for s in record.segments if s.rate_hz > 0 and s.n_samples > 1
        )
        if not self.segments:
            raise DetectionError(f"{where(record)}: no uniformly sampled segment to analyse")
        self._seg_id = np.zeros(record.n_samples, dtype=np.int64) - 1
        for k, s in enumerate(self.segments):
            self._seg_id[s.start_idx : s.stop_idx] = k
        self._cache: dict[tuple[str, str], np.ndarray] = {}
        self._kernels: dict[tuple[str, str], tuple[np.ndarray, np.ndarray]] = {}
        self._by_role: dict[str, np.ndarray | None] = {}

    # ------------------------------------------------------------------ time helpers
    @property
    def t_s(self) -> np.ndarray:
        """The record's time axis."""
        return self.record.t_s

    def idx(self, t_s: float) -> int:
        """Index of the first sample at or after ``t_s`` (clipped to the record)."""
        i = int(np.searchsorted(self.record.t_s, t_s - 1e-12, side="left"))
        return min(max(i, 0), self.record.n_samples - 1)

    def segment_at(self, idx: int) -> Segment:
        """The uniform segment holding sample ``idx`` (the nearest one if in none)."""
        k = int(self._seg_id[min(max(idx, 0), self.record.n_samples - 1)])
        if k < 0:
            mids = [abs((s.start_idx + s.stop_idx) / 2 - idx) for s in self.segments]
            k = int(np.argmin(mids))
        return self.segments[k]

    def n_cycle(self, idx: int) -> float:
        """Samples per cycle at sample ``idx``."""
        return self.segment_at(idx).rate_hz / self.f_hz

    def seg_end(self, idx: int) -> int:
        """Exclusive end index of the segment holding ``idx``."""
        return self.segment_at(idx).stop_idx

    # ------------------------------------------------------------------ channels
    def values(self, role: str) -> np.ndarray | None:
        """Samples of the analog channel with ``role`` or None."""
        try:
            return self._by_role[role]
        except KeyError:
            ch = self.record.analog_by_role(role)
            self._by_role[role] = out = None if ch is None else ch.values
            return out

    def status(self, role: str) -> np.ndarray | None:
        """Samples of the digital channel with ``role`` or None."""
        ch = self.record.digital_by_role(role)
        return None if ch is None else ch.values

    def channel_name(self, role: str) -> str:
        """Name of the channel with ``role`` ('' if none)."""
        ch = self.record.analog_by_role(role) or self.record.digital_by_role(role)
        return "" if ch is None else ch.name

    def has_currents(self) -> bool:
        """True when all three phase currents are recorded."""
        return all(self.values(I_LINE[p]) is not None for p in PHASES)

    def has_voltages(self) -> bool:
        """True when all three line-side voltages are recorded."""
        return all(self.values(V_LINE[p]) is not None for p in PHASES)

    def has_pole_status(self) -> bool:
        """True when all three pole-closed status channels are recorded."""
        return all(self.status(POLE_CLOSED[p]) is not None for p in PHASES)

    # ------------------------------------------------------------------ per-segment maps
    def _per_segment(
        self, x: np.ndarray, fn: Callable[[np.ndarray, float, float], np.ndarray], dtype: type
    ) -> np.ndarray:
        if len(self.segments) == 1 and self.segments[0].n_samples == x.shape[0]:
            # one segment over the whole record: its result is the array (no copy)
            s = self.segments[0]
            if x.shape[0] >= 2:
                return np.asarray(fn(x, s.rate_hz, float(self.t_s[0])), dtype=dtype)
        out = np.full(x.shape[0], np.nan, dtype=dtype)
        for s in self.segments:
            part = x[s.start_idx : s.stop_idx]
            if part.shape[0] < 2:
                continue
            out[s.start_idx : s.stop_idx] = fn(part, s.rate_hz, float(self.t_s[s.start_idx]))
        return out

    def _cached(self, role: str, kind: str, make: Callable[[np.ndarray], np.ndarray]):
        key = (role, kind)
        if key not in self._cache:
            x = self.values(role)
            if x is None:
                raise DetectionError(f"{where(self.record)}: no channel has role {role}")
            arr = make(_finite(x))
            arr.setflags(write=False)
            self._cache[key] = arr
        return self._cache[key]

    def _kernel(self, fs: float, t0: float, n: int) -> tuple[np.ndarray, np.ndarray]:
        """Real and imaginary parts of the DFT kernel of a segment (computed once)."""
        key = (f"{fs!r}:{t0!r}:{n}", "kernel")
        if key not in self._kernels:
            k = dft_kernel(n, fs_hz=fs, f_hz=self.f_hz, t0_s=t0)
            self._kernels[key] = (k.real.copy(), k.imag.copy())
        return self._kernels[key]

    def _phasor_of(self, x: np.ndarray, fs: float, t0: float) -> np.ndarray:
        """:func:`full_cycle_phasor` of finite samples ``x`` (rows) of one segment."""
        kr, ki = self._kernel(fs, t0, x.shape[-1])
        return real_parts_phasor(x, kr, ki, samples_per_cycle(fs, self.f_hz))

    def phasor(self, role: str) -> np.ndarray:
        """Sliding full-cycle phasor (RMS, absolute-time reference) of ``role``."""
        f = self.f_hz

        def make(x: np.ndarray) -> np.ndarray:
            def one(p: np.ndarray, fs: float, t0: float) -> np.ndarray:
                if p.shape[0] < fs / f + 1:
                    return np.full(p.shape[0], np.nan, dtype=complex)
                return self._phasor_of(p, fs, t0)

            return self._per_segment(x, one, np.complex128)

        return self._cached(role, "phasor", make)

    def _todo(self, roles: Iterable[str], kind: str) -> list[str]:
        """The recorded roles whose ``kind`` is not cached yet (each once, in order)."""
        return [
            r
            for r in dict.fromkeys(roles)
            if (r, kind) not in self._cache and self.values(r) is not None
        ]

    def prefetch_phasors(self, roles: Iterable[str]) -> None:
        """Compute the :meth:`phasor` of several roles together (one 2-D pass per segment;
        the same values as one role at a time)."""
        todo = self._todo(roles, "phasor")
        if len(todo) < 2:
            return
        f = self.f_hz
        xs = self._stacked(todo)
        whole = len(self.segments) == 1 and self.segments[0].n_samples == xs.shape[1]
        s = self.segments[0]
        if whole and xs.shape[1] >= 2 and xs.shape[1] >= s.rate_hz / f + 1:
            # one segment over the whole record: its result is the array (no copy)
            out = self._phasor_of(xs, s.rate_hz, float(self.t_s[0]))
            out.setflags(write=False)
            self._cache[("|".join(todo), "phasor rows")] = out
            for j, r in enumerate(todo):
                self._cache[(r, "phasor")] = out[j]
            return
        out = np.full(xs.shape, np.nan, dtype=np.complex128)
        for s in self.segments:
            part = xs[:, s.start_idx : s.stop_idx]
            fs = s.rate_hz
            if part.shape[1] < 2 or part.shape[1] < fs / f + 1:
                continue
            t0 = float(self.t_s[s.start_idx])
            out[:, s.start_idx : s.stop_idx] = self._phasor_of(part, fs, t0)
        out.setflags(write=False)
        self._cache[("|".join(todo), "phasor rows")] = out
        for j, r in enumerate(todo):
            self._cache[(r, "phasor")] = out[j]

    def phasor_rows(self, roles: list[str]) -> np.ndarray:
        """The :meth:`phasor` of several roles as the rows of one array."""
        block = self._cache.get(("|".join(roles), "phasor rows"))
        return block if block is not None else np.stack([self.phasor(r) for r in roles])

    def delta_rows(self, roles: list[str]) -> np.ndarray:
        """The :meth:`delta` of several roles as the rows of one array."""
        block = self._cache.get(("|".join(roles), "delta rows"))
        return block if block is not None else np.stack([self.delta(r) for r in roles])

    def _stacked(self, roles: list[str]) -> np.ndarray:
        """The finite samples of several roles as the rows of one array (made once)."""
        key = ("|".join(roles), "stack")
        if key not in self._cache:
            self._cache[key] = np.stack([_finite(self.values(r)) for r in roles])
        return self._cache[key]

    def prefetch_deltas(self, roles: Iterable[str]) -> None:
        """Compute the :meth:`delta` of several roles together (one 2-D pass per segment;
        the same values as one role at a time)."""
        todo = self._todo(roles, "delta")
        if len(todo) < 2:
            return
        f = self.f_hz
        xs = self._stacked(todo)
        out = np.full(xs.shape, np.nan)
        for s in self.segments:
            part = xs[:, s.start_idx : s.stop_idx]
            if part.shape[1] < 2 or part.shape[1] < s.rate_hz / f + 2:
                continue
            out[:, s.start_idx : s.stop_idx] = superimposed(part, length=s.rate_hz / f)
        out.setflags(write=False)
        self._cache[("|".join(todo), "delta rows")] = out
        for j, r in enumerate(todo):
            self._cache[(r, "delta")] = out[j]

    def magnitude(self, role: str) -> np.ndarray:
        """Magnitude of :meth:`phasor`."""
        key = (role, "magnitude")
        if key not in self._cache:
            arr = np.abs(self.phasor(role))
            arr.setflags(write=False)
            self._cache[key] = arr
        return self._cache[key]

    def rms(self, role: str) -> np.ndarray:
        """Sliding one-cycle RMS of ``role``."""
        f = self.f_hz

        def make(x: np.ndarray) -> np.ndarray:
            def one(p: np.ndarray, fs: float, t0: float) -> np.ndarray:
                if p.shape[0] < fs / f + 1:
                    return np.full(p.shape[0], np.nan)
                return sliding_rms(p, length=fs / f)

            return self._per_segment(x, one, np.float64)

        return self._cached(role, "rms", make)

    def delta(self, role: str) -> np.ndarray:
        """Superimposed (one-cycle delta) samples of ``role``."""
        f = self.f_hz

        def make(x: np.ndarray) -> np.ndarray:
            def one(p: np.ndarray, fs: float, t0: float) -> np.ndarray:
                if p.shape[0] < fs / f + 2:
                    return np.full(p.shape[0], np.nan)
                return superimposed(p, length=fs / f)

            return self._per_segment(x, one, np.float64)

        return self._cached(role, "delta", make)

    def noise(self, role: str) -> float:
        """Robust noise σ of ``role`` from its one-cycle delta over the record's second cycle.

        In steady state the delta holds only noise, ``√2·σ`` for white noise.
        """
        key = (role, "noise")
        if key not in self._cache:
            seg = self.segments[0]
            n = seg.rate_hz / self.f_hz
            lo = seg.start_idx + int(np.ceil(n)) + 1
            hi = min(seg.start_idx + int(np.ceil(2 * n)), seg.stop_idx)
            d = self.delta(role)[lo:hi]
            self._cache[key] = np.array(robust_scale(d) / np.sqrt(2.0))
        return float(self._cache[key])

    def hratio_cycles(self, rate_hz: float) -> int:
        """Window of the harmonic ratio in cycles: 2 below 24 samples per cycle, else 1."""
        return 2 if rate_hz / self.f_hz < 24 else 1

    def hratio_noise(self, role: str, idx: int) -> float:
        """Expected noise power in the harmonic bins of :meth:`hratio` at sample ``idx``.

        White noise σ gives ``E|X_h|² = 2σ²/L`` per RMS-scaled bin of an ``L``-sample window
        (derived), summed over the harmonics below 0.45·fs.
        """
        fs = self.segment_at(idx).rate_hz
        length = self.hratio_cycles(fs) * fs / self.f_hz
        n_h = sum(1 for h in HARMONICS if h * self.f_hz < 0.45 * fs)
        return n_h * 2.0 * self.noise(role) ** 2 / length

    def hratio(self, role: str, lo: int | None = None, hi: int | None = None) -> np.ndarray:
        """Sliding ratio of harmonics 3, 5 (7 when sampled) to the RMS of ``role``.

        Only samples ``lo:hi`` are computed (on a stretch three windows wider on each side,
        so that the filter's edges stay outside); the rest is NaN.
        """
        n_all = self.record.n_samples
        lo = 0 if lo is None else max(0, lo)
        hi = n_all if hi is None else min(n_all, hi)
        if lo > 0 or hi < n_all:
            key = (role, f"hratio:{lo}:{hi}")
            if key not in self._cache:
                pad = int(
                    np.ceil(3 * self.n_cycle(lo) * self.hratio_cycles(self.segment_at(lo).rate_hz))
                )
                a = max(self.segment_at(lo).start_idx, lo - pad)
                b = min(self.seg_end(max(hi - 1, lo)), hi + pad)  # keep filter edges away
                sub = self._hratio_range(role, a, b)
                out = np.full(n_all, np.nan)
                out[lo:hi] = sub[lo - a : hi - a]
                out.setflags(write=False)
                self._cache[key] = out
            return self._cache[key]
        return self._hratio_full(role)

    def _hratio_range(self, role: str, a: int, b: int) -> np.ndarray:
        """Harmonic ratio over samples ``a:b`` computed on that stretch alone (per segment)."""
        x = _finite(self.values(role))
        out = np.full(b - a, np.nan)
        for sgm in self.segments:
            s0, s1 = max(sgm.start_idx, a), min(sgm.stop_idx, b)
            if s1 - s0 < sgm.rate_hz / self.f_hz + 1:
                continue
            out[s0 - a : s1 - a] = self._hratio_piece(x[s0:s1], sgm.rate_hz, float(self.t_s[s0]))
        return out

    def _hratio_piece(self, p: np.ndarray, fs: float, t0: float) -> np.ndarray:
        f = self.f_hz
        hp = highpass(p, fs_hz=fs, cutoff_hz=2.0 * f) if fs > 5.0 * f else p
        return harmonic_ratio(
            hp,
            fs_hz=fs,
            f_hz=f,
            harmonics=HARMONICS,
            t0_s=t0,
            rms_of=p,
            n_cycles=self.hratio_cycles(fs),
        )

    def _hratio_full(self, role: str) -> np.ndarray:
        f = self.f_hz

        def make(x: np.ndarray) -> np.ndarray:
            def one(p: np.ndarray, fs: float, t0: float) -> np.ndarray:
                if p.shape[0] < fs / f + 1:
                    return np.full(p.shape[0], np.nan)
                # the fundamental and a free (beat) component near it are filtered out first
                # so that their leakage into the harmonic bins cannot mimic an arc
                hp = highpass(p, fs_hz=fs, cutoff_hz=2.0 * f) if fs > 5.0 * f else p
                return harmonic_ratio(
                    hp,
                    fs_hz=fs,
                    f_hz=f,
                    harmonics=HARMONICS,
                    t0_s=t0,
                    rms_of=p,
                    n_cycles=self.hratio_cycles(fs),
                )

            return self._per_segment(x, one, np.float64)

        return self._cached(role, "hratio", make)
