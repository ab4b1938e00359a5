"""The one orchestrator: a record in, the single-pole-trip event chain out.

:func:`analyse` runs the detectors of :mod:`recordscan.detect` in order — pre-fault state,
fault inception, pole openings, phase selection and classification, trip, far-end opening,
reclose and outcome, secondary arc, restrikes, final extinction, recovery voltage, fault
location, triage — and returns an immutable :class:`Analysis`. Only single-pole trips go down
the secondary-arc chain; other events are reported as what they are.

:func:`pair` aligns a second terminal's record with the first (timestamps, refined on the
fault inception seen by both).
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import TYPE_CHECKING, Any

import numpy as np

from recordscan.core.events import Event
from recordscan.core.record import Record
from recordscan.core.roles import ARC_CURRENT, V_LINE
from recordscan.detect._base import Quantities, decimate_record, where
from recordscan.detect.classify import Classification, classify_event, fault_current_rms
from recordscan.detect.inception import (
    PrefaultState,
    detect_inception,
    measure_frequency,
    prefault_state,
)
from recordscan.detect.locate import FaultLocation, locate_single_ended, locate_two_ended
from recordscan.detect.phase_select import FaultSelection, select_phases
from recordscan.detect.pole_opening import (
    PoleOpening,
    detect_pole_openings,
    detect_trip,
    infer_remote_opening,
)
from recordscan.detect.reclose import RecloseResult, detect_reclose
from recordscan.detect.recovery import RecoveryVoltage, measure_recovery_voltage
from recordscan.detect.refine import refine_inception, refine_opening, refine_restrike
from recordscan.detect.restrike import detect_restrikes
from recordscan.detect.secondary_arc import (
    ExtinctionResult,
    arc_trace,
    detect_extinction,
    with_burning_after,
)
from recordscan.detect.triage import Triage, triage
from recordscan.errors import DetectionError, RecordScanError

if TYPE_CHECKING:  # pragma: no cover
    from recordscan.physics.line import LineDescription

__all__ = [
    "SCHEMA_VERSION",
    "Analysis",
    "Pairing",
    "ScanOptions",
    "analyse",
    "error_json_dict",
    "pair",
]

#: version of the JSON produced by :meth:`Analysis.to_json_dict` (docs/scan-schema.md)
SCHEMA_VERSION = 1


@dataclass(frozen=True)
class ScanOptions:
    """Detector settings (defaults suit 50/60 Hz records at 960 Hz – 20 kHz).

    Attributes
    ----------
    inception_noise_factor, inception_current_fraction, inception_voltage_fraction : float
        Fault-inception thresholds (:func:`recordscan.detect.inception.detect_inception`).
    single_phase_ratio : float
        Phase selection (:func:`recordscan.detect.phase_select.selection_from_deltas`).
    quiet_cycles : float
        How long a phase current must stay interrupted to count as a pole opening.
    h_on, h_off : float
        Harmonic-ratio thresholds of the arc signature.
    level_min : float
        Recovered open-phase voltage below this fraction of the healthy phases is flagged.
    weak_margin, weak_tail : float
        Weak arc signature above the recovered floor, and the harmonic ratio at the end of
        the observation that means the arc still burns
        (:func:`recordscan.detect.secondary_arc.detect_extinction`).
    excursion_factor : float
        A recovery is ``|v|`` above this multiple of the local arc-voltage level.
    min_recovery_cycles : float
        Shortest recovery counted before a restrike.
    max_stagger_s : float
        Longest far-end opening delay searched for.
    infer_remote : bool
        Infer the far-end opening from one record.
    frequency_tolerance_hz : float
        Beyond this deviation from nominal the DFT windows follow the measured frequency.
    min_samples_per_cycle : float or None
        Faster records are block-averaged to about this many samples per cycle for the
        detectors (speed); pole openings, restrikes and the extinction are then refined on
        the full-rate samples. None analyses at the recorded rate throughout.
    """

    inception_noise_factor: float = 8.0
    inception_current_fraction: float = 0.5
    inception_voltage_fraction: float = 0.08
    single_phase_ratio: float = 0.25
    quiet_cycles: float = 0.75
    h_on: float = 0.15
    h_off: float = 0.08
    level_min: float = 0.03
    weak_margin: float = 0.015
    weak_tail: float = 0.06
    excursion_factor: float = 2.0
    min_recovery_cycles: float = 0.2
    max_stagger_s: float = 0.3
    infer_remote: bool = True
    frequency_tolerance_hz: float = 0.2
    min_samples_per_cycle: float | None = 40.0


@dataclass(frozen=True)
class Pairing:
    """How a remote terminal's record is aligned with the local one.

    ``t_local = t_remote + offset_s``.

    Attributes
    ----------
    remote : Record
        The remote record.
    offset_s : float
        Offset to add to remote times.
    method : str
        ``"timestamps refined on fault inception"``, ``"fault inception"`` or
        ``"timestamps"``.
    timestamp_offset_s : float or None
        Offset from the start timestamps alone.
    warnings : tuple of str
        Disagreements between timestamps and inception.
    """

    remote: Record
    offset_s: float
    method: str
    timestamp_offset_s: float | None = None
    warnings: tuple[str, ...] = ()


def pair(local: Record, remote: Record, *, options: ScanOptions | None = None) -> Pairing:
    """Align ``remote`` to ``local``: by timestamps, refined on the fault inception.

    Parameters
    ----------
    local, remote : Record
        Records of the two terminals of one line.
    options : ScanOptions, optional
        Detector settings.

    Returns
    -------
    Pairing
        The alignment.

    Raises
    ------
    DetectionError
        When neither timestamps nor a fault inception in both records can align them.
    """
    opts = options or ScanOptions()
    ts = None
    if local.start_ns is not None and remote.start_ns is not None:
        ts = (remote.start_ns - local.start_ns) * 1e-9
    inc_l = _inception(local, Quantities(local), opts)
    inc_r = _inception(remote, Quantities(remote), opts)
    if inc_l is not None and inc_r is not None:
        by_inc = inc_l.t_s - inc_r.t_s
        if ts is None:
            return Pairing(remote, by_inc, "fault inception")
        warns: tuple[str, ...] = ()
        if abs(by_inc - ts) > 0.5 / local.frequency_hz:
            warns = (
                f"record clocks disagree by {(by_inc - ts) * 1e3:.1f} ms with the fault "
                "inception; aligned on the inception",
            )
        return Pairing(remote, by_inc, "timestamps refined on fault inception", ts, warns)
    if ts is not None:
        return Pairing(remote, ts, "timestamps", ts, ("fault inception not seen in both records",))
    raise DetectionError(
        f"{where(remote)}: cannot align with {where(local)}: no start timestamps and no fault "
        "inception seen in both records"
    )


def _inception(record: Record, q: Quantities, opts: ScanOptions) -> Event | None:
    return detect_inception(
        record,
        quantities=q,
        noise_factor=opts.inception_noise_factor,
        current_fraction=opts.inception_current_fraction,
        voltage_fraction=opts.inception_voltage_fraction,
    )


def _frozen(m: Mapping[str, Any]) -> Mapping[str, Any]:
    return MappingProxyType(dict(m))


@dataclass(frozen=True)
class Analysis:
    """The analysed event chain of one record (immutable).

    Every instant is seconds from the record's first sample. Attributes not applicable to
    the event are None (or empty).

    Attributes
    ----------
    record : Record
        The record analysed (full rate, as given).
    classification : Classification
        ``event`` kind, plain ``detail``, faulted phase, opened phases, confidence.
    prefault : PrefaultState or None
        Frequency, phasors, sequence magnitudes and load before the fault.
    inception : Event or None
        Fault inception.
    selection : FaultSelection or None
        Faulted phases, ground involvement, evolution.
    trip : Event or None
        First trip command (digital channels).
    openings : Mapping[str, PoleOpening]
        First opening of each pole at this terminal after inception.
    remote_pole_open : Event or None
        Far-end opening of the faulted phase (paired record or inferred).
    remote_pole_open_source : str or None
        ``"paired record"`` or ``"inferred"``.
    secondary_arc_start_s : float or None
        Later of the two openings of the faulted phase.
    restrikes : tuple of Event
        Restrikes before the final extinction.
    extinction : ExtinctionResult or None
        Final extinction (or censoring) with the burning stretches.
    recovery : RecoveryVoltage or None
        Recovery voltage after the final extinction.
    location : FaultLocation or None
        Fault location (with a line description).
    triage : Triage or None
        Currents, ratio, dead time and the deionisation rules of thumb.
    reclose : RecloseResult or None
        Reclose, outcome, three-pole trip, dead time.
    pairing : Pairing or None
        Alignment with the remote record.
    line_name : str or None
        Line description's name.
    voltage_kv : float or None
        Line voltage class.
    frequency_hz : float
        Frequency of the DFT windows.
    warnings : tuple of str
        Degraded evidence and assumptions.
    confidence : float
        Overall confidence (geometric mean of the chain's confidences).
    """

    record: Record = field(repr=False, compare=False)
    classification: Classification
    prefault: PrefaultState | None = None
    inception: Event | None = None
    selection: FaultSelection | None = None
    trip: Event | None = None
    openings: Mapping[str, PoleOpening] = field(default_factory=dict)
    remote_pole_open: Event | None = None
    remote_pole_open_source: str | None = None
    secondary_arc_start_s: float | None = None
    restrikes: tuple[Event, ...] = ()
    extinction: ExtinctionResult | None = None
    recovery: RecoveryVoltage | None = None
    location: FaultLocation | None = None
    triage: Triage | None = None
    reclose: RecloseResult | None = None
    pairing: Pairing | None = field(default=None, repr=False, compare=False)
    line_name: str | None = None
    voltage_kv: float | None = None
    frequency_hz: float = 0.0
    warnings: tuple[str, ...] = ()
    confidence: float = 0.0

    def __post_init__(self) -> None:
        object.__setattr__(self, "openings", _frozen(self.openings))

    # ------------------------------------------------------------------ convenience
    @property
    def event(self) -> str:
        """``"single_pole_trip"``, ``"three_pole_trip"``, ``"no_fault"`` or ``"unclassified"``."""
        return self.classification.event

    @property
    def faulted_phase(self) -> str | None:
        """Faulted (opened) phase of a single-pole trip."""
        return self.classification.faulted_phase

    @property
    def pole_open(self) -> PoleOpening | None:
        """Local opening of the faulted phase (single-pole trips)."""
        p = self.faulted_phase
        return None if p is None else self.openings.get(p)

    @property
    def extinction_s(self) -> float | None:
        """Final extinction, None when censored or not applicable."""
        return None if self.extinction is None else self.extinction.extinction_s

    @property
    def reclose_s(self) -> float | None:
        """Reclose instant."""
        return None if self.reclose is None else self.reclose.reclose_s

    @property
    def extinction_margin_s(self) -> float | None:
        """Reclose instant minus final extinction."""
        if self.reclose_s is None or self.extinction_s is None:
            return None
        return self.reclose_s - self.extinction_s

    def events(self) -> tuple[Event, ...]:
        """Every detected instant, in time order."""
        evs: list[Event] = []
        for e in (self.inception, self.trip, self.remote_pole_open):
            if e is not None:
                evs.append(e)
        evs += [o.event for o in self.openings.values()]
        evs += list(self.restrikes)
        if self.extinction is not None and self.extinction.extinction is not None:
            evs.append(self.extinction.extinction)
        if self.reclose is not None:
            evs += [e for e in (self.reclose.reclose, self.reclose.three_pole_trip) if e]
        return tuple(sorted(evs, key=lambda e: e.t_s))

    # ------------------------------------------------------------------ JSON
    def to_json_dict(self, *, file: str | None = None, sha256: str | None = None) -> dict[str, Any]:
        """The record's line of ``recordscan scan --json`` (docs/scan-schema.md, version 1).

        Parameters
        ----------
        file : str, optional
            Path as given (default the record's provenance path).
        sha256 : str, optional
            Content hash (default the record's provenance hash).

        Returns
        -------
        dict
            JSON-ready values (NaN is left for the writer to map to null).
        """
        import scipy

        from recordscan import __version__

        rec = self.record
        ext = self.extinction
        rv = self.recovery
        tri = self.triage
        rc = self.reclose
        po = self.pole_open
        sa = self.secondary_arc_start_s
        ext_s = self.extinction_s
        restrike_v = [
            float(e.evidence.quantities.get("voltage_v", float("nan"))) for e in self.restrikes
        ]
        out: dict[str, Any] = {
            "schema": SCHEMA_VERSION,
            "file": file if file is not None else rec.provenance.path,
            "sha256": sha256 if sha256 is not None else rec.provenance.sha256,
            "status": "ok",
            "error": None,
            "station": rec.station,
            "device": rec.device,
            "start": _iso(rec.start_ns),
            "frequency_hz": float(rec.frequency_hz),
            "sample_rate_hz": float(rec.sample_rate_hz),
            "line": self.line_name,
            "voltage_kv": self.voltage_kv,
            "event": self.event,
            "event_detail": self.classification.detail,
            "faulted_phase": self.faulted_phase,
            "fault_inception_s": None if self.inception is None else self.inception.t_s,
            "trip_s": None if self.trip is None else self.trip.t_s,
            "pole_open_s": None if po is None else po.t_s,
            "pole_open_source": None if po is None else po.source,
            "remote_pole_open_s": None
            if self.remote_pole_open is None
            else self.remote_pole_open.t_s,
            "secondary_arc_start_s": sa,
            "restrike_s": [e.t_s for e in self.restrikes],
            "restrike_voltage_v": restrike_v,
            "extinction_s": ext_s,
            "extinction_censored": bool(ext.censored) if ext is not None else False,
            "observed_until_s": None if ext is None else ext.observed_until_s,
            "secondary_arc_duration_s": None if ext_s is None or sa is None else ext_s - sa,
            "recovery_voltage_rms_v": None if rv is None else rv.rms_v,
            "recovery_voltage_peak_v": None if rv is None else rv.peak_v,
            "recovery_voltage_beat_hz": None if rv is None else rv.beat_hz,
            "recovery_voltage_ratio": None if rv is None else rv.ratio,
            "secondary_arc_current_rms_a": None if tri is None else tri.secondary_arc_current_rms_a,
            "secondary_arc_current_source": None
            if tri is None
            else tri.secondary_arc_current_source,
            "primary_fault_current_rms_a": None if tri is None else tri.primary_fault_current_rms_a,
            "current_ratio": None if tri is None else tri.current_ratio,
            "fault_location_m": None if self.location is None else self.location.distance_m,
            "fault_location_pct": None if self.location is None else self.location.distance_pct,
            "fault_location_error_m": None if self.location is None else self.location.error_m,
            "reclose_s": self.reclose_s,
            "outcome": None if rc is None else rc.outcome,
            "three_pole_trip_s": (
                None if rc is None or rc.three_pole_trip is None else rc.three_pole_trip.t_s
            ),
            "dead_time_s": None if rc is None else rc.dead_time_s,
            "extinction_margin_s": self.extinction_margin_s,
            "deionisation_rules": {} if tri is None else dict(tri.deionisation_rules),
            "confidence": self.confidence,
            "events": [e.to_dict() for e in self.events()],
            "warnings": list(self.warnings),
            "versions": {
                "recordscan": __version__,
                "numpy": np.__version__,
                "scipy": scipy.__version__,
            },
            # additions beyond the fixed schema (documented in docs/detection.md)
            "fault_type": None if self.selection is None else self.selection.label,
            "remote_pole_open_source": self.remote_pole_open_source,
            "recovery_voltage_forced_rms_v": None if rv is None else rv.forced_rms_v,
            "recovery_voltage_free_hz": None if rv is None else rv.free_frequency_hz,
            "recovery_voltage_thd": None if rv is None else rv.thd,
            "recovery_voltage_estimate_v": None if rv is None else rv.estimate_rms_v,
            "fault_location_method": None if self.location is None else self.location.method,
            "prefault": None if self.prefault is None else self.prefault.to_dict(),
            "triage": None if tri is None else tri.to_dict(),
        }
        return out


def error_json_dict(*, file: str, error: str, sha256: str = "") -> dict[str, Any]:
    """The JSON line of a record that could not be analysed (same keys, values null)."""
    from recordscan import __version__

    keys = (
        "station device start frequency_hz sample_rate_hz line voltage_kv event_detail "
        "faulted_phase fault_inception_s trip_s pole_open_s pole_open_source remote_pole_open_s "
        "secondary_arc_start_s extinction_s observed_until_s secondary_arc_duration_s "
        "recovery_voltage_rms_v recovery_voltage_peak_v recovery_voltage_beat_hz "
        "recovery_voltage_ratio secondary_arc_current_rms_a secondary_arc_current_source "
        "primary_fault_current_rms_a current_ratio fault_location_m fault_location_pct "
        "fault_location_error_m reclose_s outcome three_pole_trip_s dead_time_s "
        "extinction_margin_s"
    ).split()
    out: dict[str, Any] = {"schema": SCHEMA_VERSION, "file": file, "sha256": sha256}
    out.update({"status": "error", "error": error, "event": "unclassified"})
    out.update(dict.fromkeys(keys))
    out.update(
        {
            "restrike_s": [],
            "restrike_voltage_v": [],
            "extinction_censored": False,
            "deionisation_rules": {},
            "confidence": 0.0,
            "events": [],
            "warnings": [],
            "versions": {"recordscan": __version__, "numpy": np.__version__},
        }
    )
    return out


def _iso(ns: int | None) -> str | None:
    if ns is None:
        return None
    sec, frac = divmod(int(ns), 1_000_000_000)
    base = _dt.datetime.fromtimestamp(sec, tz=_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%S")
    return f"{base}.{frac:09d}Z"


def _load(line: LineDescription | str | Path | None) -> LineDescription | None:
    if line is None:
        return None
    if isinstance(line, (str, Path)):
        from recordscan.physics.line import load_line

        return load_line(line)
    return line


def analyse(
    record: Record,
    *,
    line: LineDescription | str | Path | None = None,
    remote: Record | None = None,
    options: ScanOptions | None = None,
) -> Analysis:
    """Analyse one record (optionally with the remote terminal's record and the line data).

    Parameters
    ----------
    record : Record
        The local terminal's record, roles assigned.
    line : LineDescription or path, optional
        Line description (enables fault location, recovery-voltage ratio, estimated
        secondary-arc current and the deionisation rules).
    remote : Record, optional
        The other terminal's record of the same event.
    options : ScanOptions, optional
        Detector settings.

    Returns
    -------
    Analysis
        The event chain.

    Raises
    ------
    DetectionError
        The record cannot be evaluated (no phase currents or voltages, too short…).
    RecordScanError
        The line file cannot be read.
    """
    opts = options or ScanOptions()
    ld = _load(line)
    warns: list[str] = []
    full = record
    if opts.min_samples_per_cycle:
        record = decimate_record(full, min_samples_per_cycle=opts.min_samples_per_cycle)
        if remote is not None:
            remote = decimate_record(remote, min_samples_per_cycle=opts.min_samples_per_cycle)
    q = Quantities(record)
    inc = _inception(record, q, opts)
    f_until = None if inc is None else inc.t_s
    f_meas = measure_frequency(record, until_s=f_until)
    if abs(f_meas - record.frequency_hz) > opts.frequency_tolerance_hz:
        q = Quantities(record, f_hz=f_meas)
        warns.append(f"DFT windows follow the measured frequency {f_meas:.3f} Hz")
        inc = _inception(record, q, opts)
    # the pre-fault state measures the frequency up to the inception again: reuse it
    known_f = {f_until: f_meas} if f_until is not None else {}
    kv = None if ld is None else ld.voltage_v / 1e3
    common = {
        "record": full,
        "line_name": None if ld is None else ld.name,
        "voltage_kv": kv,
        "frequency_hz": q.f_hz,
    }
    if inc is None:
        pre = _safe_prefault(record, q, None, warns, known_f)
        cls = classify_event(
            quantities=q, inception=None, selection=None, openings={}, prefault=pre
        )
        return Analysis(
            classification=cls,
            prefault=pre,
            warnings=_uniq(warns, pre),
            confidence=cls.confidence,
            **common,
        )
    pre = _safe_prefault(record, q, inc.t_s, warns, known_f)
    openings = detect_pole_openings(
        record, after_s=inc.t_s, quantities=q, quiet_cycles=opts.quiet_cycles
    )
    first = min((o.t_s for o in openings.values()), default=None)
    sel = select_phases(
        record,
        inception_s=inc.t_s,
        until_s=first,
        quantities=q,
        single_ratio=opts.single_phase_ratio,
    )
    cls = classify_event(
        quantities=q, inception=inc, selection=sel, openings=openings, prefault=pre
    )
    trip = detect_trip(record, after_s=inc.t_s - q.cycle_s, quantities=q)
    p = cls.faulted_phase
    i_fault = None
    if sel.phases:
        i_fault = fault_current_rms(q, sel.phases[0], inception_s=inc.t_s, until_s=first)
    if cls.event != "single_pole_trip" or p is None:
        tri = triage(
            primary_fault_current_rms_a=i_fault,
            secondary_arc_current_rms_a=None,
            secondary_arc_current_source=None,
            dead_time_s=None,
            voltage_kv=kv,
        )
        if full is not record:
            inc = refine_inception(full, inc)
            openings = {k: refine_opening(full, o) for k, o in openings.items()}
        return Analysis(
            classification=cls,
            prefault=pre,
            inception=inc,
            selection=sel,
            trip=trip,
            openings=openings,
            triage=tri,
            warnings=_uniq(warns, pre),
            confidence=float(min(cls.confidence, inc.confidence)),
            **common,
        )
    local = openings[p]
    # ---------------------------------------------------------------- reclose
    load_a = None if pre is None else pre.i_rms_a.get(p)
    v_ph = None if pre is None else pre.v_rms_v.get(p)
    rc = detect_reclose(
        record,
        phase=p,
        open_s=local.t_s,
        fault_current_rms_a=i_fault,
        load_current_rms_a=load_a,
        v_phase_rms_v=v_ph,
        quantities=q,
    )
    # ---------------------------------------------------------------- far end
    remote_ev: Event | None = None
    remote_src: str | None = None
    pairing: Pairing | None = None
    rem_q: Quantities | None = None
    rem_inc: Event | None = None
    rem_open: PoleOpening | None = None
    if remote is not None:
        pairing = pair(record, remote, options=opts)
        warns += list(pairing.warnings)
        rem_q = Quantities(remote)
        rem_inc = _inception(remote, rem_q, opts)
        if rem_inc is not None:
            r_open = detect_pole_openings(
                remote, after_s=rem_inc.t_s, quantities=rem_q, quiet_cycles=opts.quiet_cycles
            )
            rem_open = r_open.get(p)
        if rem_open is not None:
            e = rem_open.event
            remote_ev = Event(
                kind="pole_open_remote",
                t_s=e.t_s + pairing.offset_s,
                uncertainty_s=e.uncertainty_s,
                method=f"{e.method} (remote record, {pairing.method})",
                confidence=e.confidence,
                evidence=e.evidence,
                params={"offset_s": pairing.offset_s},
                phase=p,
            )
            remote_src = "paired record"
        else:
            warns.append("the paired record shows no opening of the faulted phase")
    elif opts.infer_remote and q.has_currents():
        remote_ev = infer_remote_opening(
            record,
            phase=p,
            local_open_s=local.t_s,
            quantities=q,
            until_s=rc.reclose_s,
            max_stagger_s=opts.max_stagger_s,
        )
        remote_src = None if remote_ev is None else "inferred"
    arc_start = local.t_s if remote_ev is None else max(local.t_s, remote_ev.t_s)
    until = rc.reclose_s if rc.reclose_s is not None else float(record.t_s[-1])
    # ---------------------------------------------------------------- location
    loc: FaultLocation | None = None
    if ld is not None:
        z1 = complex(ld.constants.r1_ohm_per_m, ld.constants.x1_ohm_per_m) * ld.length_m
        z0 = complex(ld.constants.r0_ohm_per_m, ld.constants.x0_ohm_per_m) * ld.length_m
        try:
            if remote is not None and rem_q is not None and rem_inc is not None:
                loc = locate_two_ended(
                    record,
                    remote,
                    inception_local_s=inc.t_s,
                    inception_remote_s=rem_inc.t_s,
                    z1_ohm=z1,
                    length_m=ld.length_m,
                    clear_local_s=local.t_s,
                    clear_remote_s=None if rem_open is None else rem_open.t_s,
                    q_local=q,
                    q_remote=rem_q,
                )
            if loc is None:
                loc = locate_single_ended(
                    record,
                    phase=p,
                    inception_s=inc.t_s,
                    clear_s=local.t_s,
                    z1_ohm=z1,
                    z0_ohm=z0,
                    length_m=ld.length_m,
                    quantities=q,
                )
        except DetectionError as exc:
            warns.append(str(exc))
        if loc is not None and not -0.05 <= loc.distance_pct / 100 <= 1.05:
            warns.append(f"fault location {loc.distance_pct:.0f} % lies off the line; ignored")
            loc = None
    # ---------------------------------------------------------------- line estimate
    est_v = est_a = est_fn = None
    expect_pu: tuple[complex, complex] | None = None
    if ld is not None:
        try:
            from recordscan.physics.coupling import open_phase_coupling

            cp = open_phase_coupling(
                ld,
                faulted_phase=p,
                fault_at_m=None if loc is None else float(np.clip(loc.distance_m, 0, ld.length_m)),
                load_current_a=float(load_a or 0.0),
            )
            est_v, est_a = cp.recovery_voltage_rms_v, cp.secondary_arc_current_rms_a
            est_fn = cp.free_frequency_hz
            if ld.compensation == 0:
                expect_pu = (cp.recovery_phasor_from_end_pu, cp.bolted_phasor_from_end_pu)
        except RecordScanError as exc:
            warns.append(f"line estimate unavailable: {exc}")
    level_min = opts.level_min
    if est_v is not None and ld is not None:
        # a recovered phase well below the expected recovery voltage is no recovery
        level_min = float(np.clip(0.4 * est_v / ld.v_phase_v, 0.01, 0.1))
    # ---------------------------------------------------------------- secondary arc
    ext: ExtinctionResult | None = None
    restrikes: list[Event] = []
    try:
        tr = arc_trace(
            record,
            phase=p,
            start_s=arc_start,
            until_s=until,
            quantities=q,
            h_on=opts.h_on,
            h_off=opts.h_off,
        )
        restrikes = detect_restrikes(
            record,
            trace=tr,
            quantities=q,
            excursion_factor=opts.excursion_factor,
            min_recovery_cycles=opts.min_recovery_cycles,
            h_on=opts.h_on,
        )
        # the arc burns again after each restrike, even if too briefly for the signature
        tr = with_burning_after(tr, [q.idx(r.t_s) for r in restrikes], q.idx(until))
        ext_opts: dict[str, Any] = {
            "phase": p,
            "until_s": until,
            "quantities": q,
            "h_on": opts.h_on,
            "h_off": opts.h_off,
            "level_min": level_min,
            "refine_record": full if full is not record else None,
            "weak_margin": opts.weak_margin,
            "weak_tail": opts.weak_tail,
            "beat_check": ld is not None and ld.compensation > 0,
            "free_frequency_hz": est_fn,
        }
        ext = detect_extinction(record, arc_start_s=arc_start, trace=tr, **ext_opts)
        if ext.extinction_s is not None and restrikes and restrikes[-1].t_s > ext.extinction_s:
            # the arc burned again after the extinction found (a restrike after a recovery
            # of a cycle or more): the final extinction follows the last restrike
            t_r = restrikes[-1].t_s
            again = detect_extinction(record, arc_start_s=t_r, **ext_opts)
            ext = dataclasses.replace(
                again,
                arc_start_s=arc_start,
                burning_intervals=tuple(i for i in ext.burning_intervals if i[0] < t_r)
                + again.burning_intervals,
            )
        if expect_pu is not None:
            ext = _bolted_check(ext, q, p, until, expect_pu)
        warns += list(ext.warnings)
        if ext.extinction_s is not None:
            restrikes = [r for r in restrikes if r.t_s < ext.extinction_s]
    except DetectionError as exc:
        if q.values(ARC_CURRENT) is None:
            warns.append(str(exc))
        else:
            ext = detect_extinction(
                record, phase=p, arc_start_s=arc_start, until_s=until, quantities=q
            )
    rv = None
    if ext is not None and ext.extinction_s is not None:
        rv = measure_recovery_voltage(
            record,
            phase=p,
            from_s=ext.extinction_s,
            until_s=until,
            quantities=q,
            estimate_rms_v=est_v,
        )
    # ---------------------------------------------------------------- triage
    i_arc, src = _arc_current(record, q, arc_start, ext, until)
    if i_arc is None and est_a is not None:
        i_arc, src = est_a, "estimated"
    tri = triage(
        primary_fault_current_rms_a=i_fault,
        secondary_arc_current_rms_a=i_arc,
        secondary_arc_current_source=src,
        dead_time_s=rc.dead_time_s,
        voltage_kv=kv,
    )
    if full is not record:
        inc = refine_inception(full, inc)
        openings = {k: refine_opening(full, o) for k, o in openings.items()}
        # (a reset of the arc-voltage level is placed on a zero crossing, not a collapse)
        restrikes = [
            e if "reset_ratio" in e.params else refine_restrike(full, e) for e in restrikes
        ]
    confs = [cls.confidence, inc.confidence, local.event.confidence]
    if ext is not None and ext.extinction is not None:
        confs.append(ext.extinction.confidence)
    if ext is None:
        confs.append(0.3)
    return Analysis(
        classification=cls,
        prefault=pre,
        inception=inc,
        selection=sel,
        trip=trip,
        openings=openings,
        remote_pole_open=remote_ev,
        remote_pole_open_source=remote_src,
        secondary_arc_start_s=arc_start,
        restrikes=tuple(restrikes),
        extinction=ext,
        recovery=rv,
        location=loc,
        triage=tri,
        reclose=rc,
        pairing=pairing,
        warnings=_uniq(warns, pre),
        confidence=float(np.prod(confs) ** (1.0 / len(confs))),
        **common,
    )


def _arc_current(
    record: Record,
    q: Quantities,
    start_s: float,
    ext: ExtinctionResult | None,
    until_s: float,
) -> tuple[float | None, str | None]:
    """RMS of a measured arc current over the secondary-arc period."""
    i = q.values(ARC_CURRENT)
    if i is None:
        return None, None
    end = ext.extinction_s if ext is not None and ext.extinction_s is not None else until_s
    a, b = q.idx(start_s + q.cycle_s), q.idx(end)
    if b - a < 2:
        return None, None
    x = np.nan_to_num(i[a:b])
    return float(np.sqrt(np.mean(x * x))), "measured"


def _safe_prefault(
    record: Record,
    q: Quantities,
    before_s: float | None,
    warns: list[str],
    known_f: Mapping[float, float],
) -> PrefaultState | None:
    f_hz = None if before_s is None else known_f.get(before_s)
    try:
        return prefault_state(record, before_s=before_s, quantities=q, frequency_hz=f_hz)
    except DetectionError as exc:
        warns.append(str(exc))
        return None


def _uniq(warns: list[str], pre: PrefaultState | None) -> tuple[str, ...]:
    allw = list(pre.warnings if pre else ()) + warns
    return tuple(dict.fromkeys(allw))


def _bolted_check(
    ext: ExtinctionResult,
    q: Quantities,
    phase: str,
    until_s: float,
    expect_pu: tuple[complex, complex],
) -> ExtinctionResult:
    """Withdraw an extinction when the open phase then carries a bolted-fault voltage.

    ``expect_pu`` holds the phasors the recording end should see after an extinction and
    while the fault path is a short, over the open phase's own rated phasor (line
    description, :func:`recordscan.physics.coupling.open_phase_coupling`; used on
    uncompensated lines, where the two differ in angle as well as size). The measured
    phasor, over ``−(V_j + V_l)`` of the healthy phases (the open phase's own voltage in a
    balanced system), is the median from two cycles after the extinction to half a cycle
    before the end of the observation. Nearer the bolted phasor: the fault path still
    conducts (a permanent fault), and the apparent recovery was the end of the switching
    transient.
    """
    rec_pu, bolt_pu = expect_pu
    if ext.extinction_s is None or not (np.isfinite(rec_pu) and np.isfinite(bolt_pu)):
        return ext
    others = [x for x in ("A", "B", "C") if x != phase]
    v_open = q.phasor(V_LINE[phase]) if q.values(V_LINE[phase]) is not None else None
    if v_open is None or any(q.values(V_LINE[x]) is None for x in others):
        return ext
    ref = -(q.phasor(V_LINE[others[0]]) + q.phasor(V_LINE[others[1]]))
    k0 = q.idx(ext.extinction_s + 2.0 * q.cycle_s)
    k1 = q.idx(until_s - 0.5 * q.cycle_s)
    if k1 - k0 < 2:
        return ext
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = v_open[k0:k1] / ref[k0:k1]
    ratio = ratio[np.isfinite(ratio)]
    if ratio.size < 2:
        return ext
    meas = complex(float(np.median(ratio.real)), float(np.median(ratio.imag)))
    if abs(meas - bolt_pu) >= abs(meas - rec_pu):
        return ext
    return dataclasses.replace(
        ext,
        extinction=None,
        censored=True,
        warnings=(
            *ext.warnings,
            f"after the arc signature ended the open phase carried {abs(meas):.1%} of its rated "
            f"voltage at {np.degrees(np.angle(meas)):.0f} deg, nearer the "
            f"{abs(bolt_pu):.1%} at {np.degrees(np.angle(bolt_pu)):.0f} deg expected while "
            f"the fault path conducts than the {abs(rec_pu):.1%} at "
            f"{np.degrees(np.angle(rec_pu)):.0f} deg of a recovery (line description): a "
            "permanent fault suspected; no extinction reported",
        ),
    )
