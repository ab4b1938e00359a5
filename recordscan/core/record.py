"""The record object: one recording of a power-system event, in primary SI units.

A :class:`Record` holds a time axis in seconds from the first sample, analog channels as
float64 arrays in primary V or A (other quantities keep their own unit), digital channels as
bool arrays, and the metadata an analyst needs (station, device, start and trigger instants,
nominal frequency, where it came from). It is immutable: arrays are read-only and every
transform returns a new record with one more entry in :attr:`Record.processing`.

Time
----
``t_s`` is the authoritative time axis. A recorder may write several sample rates, or
segments separated by gaps that only the sample timestamps show (a dead time of seconds
between a trip segment and a reclose segment). Such gaps are kept: ``t_s`` jumps across them
and :attr:`Record.segments` lists the uniformly sampled pieces.
"""

from __future__ import annotations

import dataclasses
import hashlib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from recordscan.errors import RoleError

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd


def _rate(dt: np.ndarray, first: int, last: int) -> float:
    """Rate of samples first..last (inclusive) from their intervals; 0 for a lone sample."""
    if last <= first:
        return 0.0
    interval = float(np.median(dt[first:last]))
    return 1.0 / interval if interval > 0 else 0.0


def _sealed(a: np.ndarray) -> bool:
    """Read-only memory: an owning read-only array, or a read-only view of one."""
    if a.flags.writeable:
        return False
    if a.flags.owndata:
        return True
    base = a.base
    return isinstance(base, np.ndarray) and base.flags.owndata and not base.flags.writeable


def _uniform(t: np.ndarray, chunk: int = 8192) -> bool:
    """True when no sample interval of ``t`` differs from the next by more than 1 % of the
    smallest interval (then none differs by 1 % of its own: one uniform segment).

    Worked through in chunks so that no record-sized temporary is made (the same interval
    values as ``np.diff``).
    """
    d_max = 0.0
    dt_min = np.inf
    for lo in range(0, t.shape[0] - 1, chunk):
        part = t[lo : lo + chunk + 2]
        dt = part[1:] - part[:-1]
        dt_min = min(dt_min, float(dt.min()))
        if dt.shape[0] > 1:
            dd = dt[1:] - dt[:-1]
            d_max = max(d_max, float(dd.max()), -float(dd.min()))
    return bool(d_max <= 0.01 * max(dt_min, 1e-15))


def _readonly(a: np.ndarray, dtype: type | np.dtype) -> np.ndarray:
    # an array that is already read-only, of the right dtype and owns its memory (or is a
    # read-only view of a read-only array that does) cannot be changed by the caller without
    # undoing that on purpose: keep it (readers hand over freshly decoded arrays, or rows of
    # one decoded block, this way and save a copy); anything else is copied
    if isinstance(a, np.ndarray) and a.dtype == dtype and a.flags.c_contiguous and _sealed(a):
        return a
    arr = np.array(a, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True)
class Scaling:
    """Where an analog channel's primary SI values came from.

    Attributes
    ----------
    a, b : float
        COMTRADE multiplier and offset (value in the file's unit = a·x + b).
    unit_factor : float
        Multiplier from the file's unit to SI (1000 for kV).
    primary, secondary : float
        Transformer ratio terms from the cfg (1.0 when not given).
    ps : str
        ``"P"`` or ``"S"``: whether ``a·x + b`` was in primary or secondary units.
    skew_s : float
        Channel time skew from the cfg, seconds.
    """

    a: float = 1.0
    b: float = 0.0
    unit_factor: float = 1.0
    primary: float = 1.0
    secondary: float = 1.0
    ps: str = "P"
    skew_s: float = 0.0

    @property
    def to_primary(self) -> float:
        """Factor from the file's stored unit to primary SI."""
        ratio = self.primary / self.secondary if self.ps.upper() == "S" else 1.0
        return self.unit_factor * ratio


@dataclass(frozen=True)
class AnalogChannel:
    """One analog channel, values in primary SI units.

    Attributes
    ----------
    name : str
        Channel name as recorded.
    values : numpy.ndarray
        float64 samples (primary V or A; other quantities in ``unit``). NaN marks missing data.
    unit : str
        SI unit of ``values`` (``"V"``, ``"A"``, or the file's unit for other quantities).
    phase : str or None
        Canonical phase ``"A"``, ``"B"``, ``"C"``, ``"N"`` (neutral/residual) or None.
    role : str or None
        Role in the analysis (see :mod:`recordscan.core.roles`), None when unassigned.
    circuit : str
        Circuit component text from the file (``ccbm``).
    source_index : int
        1-based channel index in the source file (0 when synthetic).
    source_phase : str
        The phase text as written in the file.
    source_unit : str
        The unit text as written in the file.
    scaling : Scaling
        Scaling provenance.
    """

    name: str
    values: np.ndarray
    unit: str = "V"
    phase: str | None = None
    role: str | None = None
    circuit: str = ""
    source_index: int = 0
    source_phase: str = ""
    source_unit: str = ""
    scaling: Scaling = field(default_factory=Scaling)

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", _readonly(self.values, np.float64))

    def with_values(self, values: np.ndarray) -> AnalogChannel:
        """Return a copy of the channel with new sample values."""
        return dataclasses.replace(self, values=values)


@dataclass(frozen=True)
class StatusChannel:
    """One digital (status) channel.

    Attributes
    ----------
    name : str
        Channel name as recorded.
    values : numpy.ndarray
        bool samples (True = the state the name describes is asserted, as recorded).
    phase : str or None
        Canonical phase or None.
    role : str or None
        Role in the analysis (see :mod:`recordscan.core.roles`).
    circuit : str
        Circuit component text from the file.
    normal_state : int
        The cfg's normal state ``y`` (0 or 1).
    source_index : int
        1-based index in the source file (0 when synthetic).
    source_phase : str
        The phase text as written in the file.
    """

    name: str
    values: np.ndarray
    phase: str | None = None
    role: str | None = None
    circuit: str = ""
    normal_state: int = 0
    source_index: int = 0
    source_phase: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "values", _readonly(self.values, np.bool_))

    def with_values(self, values: np.ndarray) -> StatusChannel:
        """Return a copy of the channel with new sample values."""
        return dataclasses.replace(self, values=values)


class _LazyDigest:
    """``Provenance.sha256``: the digest given, or one computed on first access.

    A reader hands the bytes it decoded (``hash_source``) instead of a digest, so a read
    that nobody asks the hash of does not pay for it. The first access hashes those bytes
    (not the file again: the digest must describe what was decoded even if the file
    changes later), caches the hex digest and lets go of the bytes.
    """

    def __set_name__(self, owner: type, name: str) -> None:
        self._slot = "_" + name

    def __get__(self, obj: object, objtype: type | None = None) -> str:
        if obj is None:
            return ""  # the dataclass default
        d = obj.__dict__
        value: str = d.get(self._slot, "")
        source = d.get("hash_source", ())
        if not value and source:
            hasher = hashlib.sha256()
            for chunk in source:
                hasher.update(chunk)
            value = hasher.hexdigest()
            d[self._slot] = value
            d["hash_source"] = ()
        return value

    def __set__(self, obj: object, value: str) -> None:
        obj.__dict__[self._slot] = value


@dataclass(frozen=True)
class Provenance:
    """Where a record came from.

    Attributes
    ----------
    path : str
        The file that was read ('' for records built in memory).
    revision : str
        COMTRADE revision year (``"1991"``, ``"1999"``, ``"2013"``) or ``""``.
    data_format : str
        ``"ASCII"``, ``"BINARY"``, ``"BINARY32"``, ``"FLOAT32"`` or ``""``.
    container : str
        ``"cfg+dat"``, ``"cff"`` or ``"memory"``.
    sha256 : str
        Content hash (SHA-256, hex) of the file(s) read (cfg then dat, or the cff), ``""``
        in memory. Computed on first access from ``hash_source`` when not given.
    encoding : str
        Text encoding used for the configuration.
    time_source : str
        ``"timestamps"`` or ``"rates"``: what the time axis was built from.
    notes : tuple of str
        Tolerated deviations and reader decisions worth telling the analyst.
    hash_source : tuple of bytes
        The bytes read, in order, kept only until ``sha256`` is first asked for (then
        emptied); not compared, not shown.
    """

    path: str = ""
    revision: str = ""
    data_format: str = ""
    container: str = "memory"
    sha256: str = _LazyDigest()  # type: ignore[assignment]
    encoding: str = "utf-8"
    time_source: str = "rates"
    notes: tuple[str, ...] = ()
    hash_source: tuple[bytes, ...] = field(default=(), repr=False, compare=False)

    def __getstate__(self) -> dict[str, object]:
        # pickled (e.g. to a worker process): send the digest, not the bytes
        _ = self.sha256
        return dict(self.__dict__)


@dataclass(frozen=True)
class Segment:
    """A uniformly sampled, gap-free piece of a record: samples ``start_idx:stop_idx``."""

    start_idx: int
    stop_idx: int
    rate_hz: float

    @property
    def n_samples(self) -> int:
        """Number of samples in the segment."""
        return self.stop_idx - self.start_idx


@dataclass(frozen=True)
class Record:
    """An immutable power-system recording in primary SI units.

    Attributes
    ----------
    t_s : numpy.ndarray
        Sample instants, seconds from the first sample (strictly increasing).
    analog : tuple of AnalogChannel
        Analog channels.
    digital : tuple of StatusChannel
        Digital channels.
    frequency_hz : float
        Nominal power frequency (the cfg's ``lf``).
    station : str
        Station name.
    device : str
        Recording device identifier.
    start_ns : int or None
        UTC instant of the first sample, integer nanoseconds since 1970 (None if unknown).
    trigger_ns : int or None
        UTC instant of the trigger, integer nanoseconds since 1970 (None if unknown).
    sample_rates : tuple of (float, int)
        The file's declared rates as ``(rate_hz, last_sample_number)``; empty when the time
        axis came from timestamps alone.
    header_text, info_text : str
        Contents of .hdr and .inf files (or cff sections), kept as text.
    provenance : Provenance
        Source file, format and hash.
    processing : tuple of str
        Transform steps applied since reading.
    """

    t_s: np.ndarray
    analog: tuple[AnalogChannel, ...] = ()
    digital: tuple[StatusChannel, ...] = ()
    frequency_hz: float = 50.0
    station: str = ""
    device: str = ""
    start_ns: int | None = None
    trigger_ns: int | None = None
    sample_rates: tuple[tuple[float, int], ...] = ()
    header_text: str = ""
    info_text: str = ""
    provenance: Provenance = field(default_factory=Provenance)
    processing: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "t_s", _readonly(self.t_s, np.float64))
        object.__setattr__(self, "analog", tuple(self.analog))
        object.__setattr__(self, "digital", tuple(self.digital))
        n = self.t_s.shape[0]
        if self.t_s.ndim != 1:
            raise ValueError("t_s must be one-dimensional")
        for ch in (*self.analog, *self.digital):
            if ch.values.shape != (n,):
                raise ValueError(
                    f"channel {ch.name!r} has {ch.values.shape[0]} samples, time axis has {n}"
                )

    # ------------------------------------------------------------------ basic facts
    @property
    def n_samples(self) -> int:
        """Number of samples."""
        return int(self.t_s.shape[0])

    @property
    def duration_s(self) -> float:
        """Time from first to last sample, seconds."""
        return float(self.t_s[-1] - self.t_s[0]) if self.n_samples else 0.0

    @property
    def trigger_s(self) -> float | None:
        """Trigger instant in seconds from the first sample, or None if unknown."""
        if self.trigger_ns is None or self.start_ns is None:
            return None
        return (self.trigger_ns - self.start_ns) * 1e-9

    @property
    def segments(self) -> tuple[Segment, ...]:
        """Uniformly sampled, gap-free pieces of the record.

        A new segment starts wherever the sample interval changes by more than 1 % (a new
        rate or a gap). Worked out once per record (the time axis is read-only).
        """
        cached = self.__dict__.get("_segments")
        if cached is None:
            cached = self._find_segments()
            self.__dict__["_segments"] = cached  # a cache, not a field: frozen stays frozen
        return cached

    def _find_segments(self) -> tuple[Segment, ...]:
        n = self.n_samples
        if n < 2:
            return (Segment(0, n, 0.0),) if n else ()
        if n > 2 and _uniform(self.t_s):
            # the usual record: one segment (what the loop below finds for it)
            interval = float(self.t_s[1] - self.t_s[0])
            return (Segment(0, n, 1.0 / interval if interval > 0 else 0.0),)
        dt = np.diff(self.t_s)
        # runs of equal intervals (within 1 %); each run of intervals [a, b) spans samples a..b
        change = np.abs(np.diff(dt)) > 0.01 * np.maximum(dt[:-1], 1e-15)
        edges = np.concatenate(([0], np.flatnonzero(change) + 1, [dt.shape[0]]))
        segs: list[Segment] = []
        next_free = 0
        n_runs = edges.shape[0] - 1
        for k in range(n_runs):
            a, b = int(edges[k]), int(edges[k + 1])
            interval = float(dt[a])
            if b - a == 1 and n_runs > 1:
                # a lone interval: a gap if it is longer than its neighbours' intervals
                neigh = [float(dt[a - 1])] if a > 0 else []
                if b < dt.shape[0]:
                    neigh.append(float(dt[b]))
                if neigh and interval > 1.01 * max(neigh):
                    if next_free <= a:
                        segs.append(Segment(next_free, a + 1, _rate(dt, next_free, a)))
                        next_free = a + 1
                    continue
            start = max(a, next_free)
            if b + 1 > start:
                segs.append(Segment(start, b + 1, 1.0 / interval if interval > 0 else 0.0))
                next_free = b + 1
        if next_free < n:
            segs.append(Segment(next_free, n, _rate(dt, next_free, n - 1)))
        return tuple(segs)

    @property
    def sample_rate_hz(self) -> float:
        """Sample rate of the longest uniform segment, Hz."""
        segs = [s for s in self.segments if s.rate_hz > 0]
        if not segs:
            return 0.0
        return max(segs, key=lambda s: s.n_samples).rate_hz

    @property
    def is_uniform(self) -> bool:
        """True when the whole record is one uniformly sampled segment."""
        return len(self.segments) <= 1

    # ------------------------------------------------------------------ lookup
    def analog_by_role(self, role: str) -> AnalogChannel | None:
        """Return the analog channel with ``role``, or None."""
        for ch in self.analog:
            if ch.role == role:
                return ch
        return None

    def digital_by_role(self, role: str) -> StatusChannel | None:
        """Return the digital channel with ``role``, or None."""
        for ch in self.digital:
            if ch.role == role:
                return ch
        return None

    def require(self, *roles: str) -> tuple[AnalogChannel, ...]:
        """Return the analog channels for ``roles``; raise RoleError naming those missing."""
        found = [self.analog_by_role(r) for r in roles]
        missing = [r for r, ch in zip(roles, found, strict=True) if ch is None]
        if missing:
            where = self.provenance.path or "record"
            raise RoleError(
                f"{where}: no channel has role(s) {', '.join(missing)}; "
                "assign them with a recorder profile (see docs/profiles.md)"
            )
        return tuple(ch for ch in found if ch is not None)

    @property
    def roles(self) -> dict[str, str]:
        """Mapping role → channel name for every assigned channel."""
        out: dict[str, str] = {}
        for ch in (*self.analog, *self.digital):
            if ch.role:
                out[ch.role] = ch.name
        return out

    # ------------------------------------------------------------------ transforms
    def _derived(self, step: str, **changes: object) -> Record:
        return dataclasses.replace(self, processing=(*self.processing, step), **changes)

    def with_channels(
        self,
        *,
        analog: Iterable[AnalogChannel] | None = None,
        digital: Iterable[StatusChannel] | None = None,
        step: str = "channels replaced",
    ) -> Record:
        """Return a record with replaced channel tuples (same time axis)."""
        return self._derived(
            step,
            analog=tuple(self.analog if analog is None else analog),
            digital=tuple(self.digital if digital is None else digital),
        )

    def slice_time(self, t0_s: float | None = None, t1_s: float | None = None) -> Record:
        """Return the samples with ``t0_s <= t < t1_s`` (time axis re-based to start at 0).

        ``start_ns`` moves with the cut so absolute instants stay right.
        """
        lo = 0 if t0_s is None else int(np.searchsorted(self.t_s, t0_s, side="left"))
        hi = self.n_samples if t1_s is None else int(np.searchsorted(self.t_s, t1_s, "left"))
        if hi <= lo:
            raise ValueError(f"time window [{t0_s}, {t1_s}) holds no samples")
        offset = float(self.t_s[lo])
        start_ns = None if self.start_ns is None else self.start_ns + round(offset * 1e9)
        return self._derived(
            f"slice_time({t0_s}, {t1_s})",
            t_s=self.t_s[lo:hi] - offset,
            analog=tuple(ch.with_values(ch.values[lo:hi]) for ch in self.analog),
            digital=tuple(ch.with_values(ch.values[lo:hi]) for ch in self.digital),
            start_ns=start_ns,
        )

    def resample(self, rate_hz: float) -> Record:
        """Return the record on a uniform grid at ``rate_hz``.

        Analog channels are linearly interpolated inside each segment; across a gap the
        new grid has no samples unless ``fill_gaps`` semantics are wanted — gaps are kept by
        building the new axis segment by segment. Digital channels take the last earlier
        sample (zero-order hold).
        """
        if rate_hz <= 0:
            raise ValueError("rate_hz must be positive")
        step = 1.0 / rate_hz
        pieces = []
        for seg in self.segments:
            t0 = self.t_s[seg.start_idx]
            t1 = self.t_s[seg.stop_idx - 1]
            k0 = int(np.ceil(t0 / step - 1e-9))
            k1 = int(np.floor(t1 / step + 1e-9))
            if k1 >= k0:
                pieces.append(np.arange(k0, k1 + 1) * step)
        t_new = np.unique(np.concatenate(pieces)) if pieces else np.empty(0)
        analog = []
        for ch in self.analog:
            analog.append(ch.with_values(np.interp(t_new, self.t_s, ch.values)))
        idx = np.clip(np.searchsorted(self.t_s, t_new + 1e-12, side="right") - 1, 0, None)
        digital = [ch.with_values(ch.values[idx]) for ch in self.digital]
        return self._derived(
            f"resample({rate_hz:g} Hz)",
            t_s=t_new,
            analog=tuple(analog),
            digital=tuple(digital),
            sample_rates=((float(rate_hz), int(t_new.shape[0])),),
        )

    def to_dataframe(self) -> pd.DataFrame:
        """Return the samples as a pandas DataFrame indexed by ``t_s``.

        Analog columns are named after the channel (role in brackets when assigned);
        digital columns are bool.
        """
        import pandas as pd

        cols: dict[str, np.ndarray] = {}
        for ch in (*self.analog, *self.digital):
            key = ch.name if not ch.role else f"{ch.name} [{ch.role}]"
            while key in cols:
                key = key + "'"
            cols[key] = np.asarray(ch.values)
        return pd.DataFrame(cols, index=pd.Index(np.asarray(self.t_s), name="t_s"))

    def channel_names(self) -> Sequence[str]:
        """Names of all channels, analog first."""
        return [ch.name for ch in (*self.analog, *self.digital)]
