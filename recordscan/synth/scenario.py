"""Scenario files: one simulated event described in TOML (schema in ``docs/scenario.md``).

A scenario names the line (a line description file, or inline sequence data), the two
sources, the fault and its arc, the breaker and reclose timing, the shunt reactors, the
instrument transformers and recorder, what to write, and a random seed. Every table and
key is optional except ``[line]``; defaults are stated in the schema document and in
:func:`parse_scenario`. A bad file raises :class:`recordscan.errors.FormatError` naming the
file and the key.

The parsed scenario is a tree of frozen dataclasses in SI units (the file uses the
engineer's units, named in each key: ``voltage_kv``, ``length_km``, ``c1_nf_per_km``…).
:mod:`recordscan.synth.scenario_toml` writes a scenario back as TOML.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from recordscan.core.tomlfile import read_toml
from recordscan.errors import FormatError

if sys.version_info >= (3, 11):  # pragma: no cover - version switch
    pass
else:  # pragma: no cover
    pass

__all__ = [
    "ArcSettings",
    "BreakerSettings",
    "FaultSettings",
    "InlineLine",
    "InstrumentSettings",
    "LineSettings",
    "LoadSettings",
    "OutputSettings",
    "ReactorSettings",
    "Scenario",
    "SimulationSettings",
    "SourceSettings",
    "default_dead_time_s",
    "load_scenario",
    "min_deionisation_time_s",
    "parse_scenario",
    "utc_text_to_ns",
]

SCENARIO_SCHEMA = 1
FAULT_KINDS = ("single_phase", "two_phase_ground", "three_phase", "none")
VT_KINDS = ("ideal", "cvt", "magnetic")
ELONGATION_LAWS = ("johns", "linear", "constant")
REVISIONS = ("1999", "2013")
DATA_FORMATS = ("ASCII", "BINARY", "BINARY32", "FLOAT32")


def min_deionisation_time_s(v_ll_v: float) -> float:
    """Longer of two common-practice minimum deionisation times for a line voltage.

    ``(10.5 + kV/34.5)`` cycles of 60 Hz and ``175 + 0.5·kV`` ms, kV the rated line-to-line
    voltage (common practice; rules of thumb for three-pole reclosing, which a single-pole
    dead time must not undercut).
    """
    kv = v_ll_v / 1e3
    return max((10.5 + kv / 34.5) / 60.0, 0.175 + 0.0005 * kv)


def default_dead_time_s(v_ll_v: float, line_setting_s: float | None = None) -> float:
    """Single-pole dead time used when a scenario does not give one.

    The line's own setting when it is not shorter than :func:`min_deionisation_time_s`,
    otherwise that minimum rounded up to the next 50 ms; never below 0.5 s (typical EHV
    single-pole dead times are 0.5–1.5 s, common practice).
    """
    floor = math.ceil(min_deionisation_time_s(v_ll_v) / 0.05 - 1e-9) * 0.05
    floor = max(floor, 0.5)
    if line_setting_s is not None and line_setting_s >= floor:
        return float(line_setting_s)
    return round(floor, 6)


# ----------------------------------------------------------------------------- dataclasses
@dataclass(frozen=True)
class InlineLine:
    """A line given by sequence data inside the scenario (transposed)."""

    name: str
    voltage_v: float
    frequency_hz: float
    length_m: float
    r1_ohm_per_m: float
    x1_ohm_per_m: float
    c1_f_per_m: float
    r0_ohm_per_m: float
    x0_ohm_per_m: float
    c0_f_per_m: float
    local_station: str = "Local"
    remote_station: str = "Remote"
    dead_time_s: float | None = None


@dataclass(frozen=True)
class LineSettings:
    """Which line: a description file (resolved path) or inline sequence data."""

    file: str | None = None
    inline: InlineLine | None = None


@dataclass(frozen=True)
class SourceSettings:
    """A Thevenin source behind a line end.

    Attributes
    ----------
    short_circuit_mva : float
        Three-phase short-circuit power at the bus, MVA.
    x_over_r : float
        Positive-sequence X/R ratio.
    z0_over_z1 : float
        Zero- to positive-sequence impedance magnitude ratio (same angle).
    v_pu : float
        Source voltage magnitude per unit of the line's rated voltage.
    """

    short_circuit_mva: float = 20_000.0
    x_over_r: float = 15.0
    z0_over_z1: float = 1.0
    v_pu: float = 1.0


@dataclass(frozen=True)
class LoadSettings:
    """Pre-fault power flow: the local source leads by ``angle_deg`` or carries ``current_a``."""

    angle_deg: float | None = 10.0
    current_a: float | None = None


@dataclass(frozen=True)
class FaultSettings:
    """The fault.

    Attributes
    ----------
    kind : str
        ``single_phase``, ``two_phase_ground``, ``three_phase`` or ``none`` (a routine
        trigger with no fault).
    phases : tuple of str
        Faulted phases (one for a single-phase fault).
    location_pct : float
        Distance from the local end, per cent of the line length.
    point_on_wave_deg : float
        Phase angle of the (first) faulted phase's local voltage at inception, degrees
        (0 = positive peak, 90 = a falling zero crossing).
    resistance_ohm : float
        Fault resistance in series with the arc (tower footing, etc.).
    permanent : bool
        A permanent fault: a fixed resistance that never extinguishes.
    """

    kind: str = "single_phase"
    phases: tuple[str, ...] = ("A",)
    location_pct: float = 50.0
    point_on_wave_deg: float = 60.0
    resistance_ohm: float = 0.5
    permanent: bool = False


@dataclass(frozen=True)
class ArcSettings:
    """Secondary-arc parameters (Kizilcay form) and its elongation and restrike behaviour.

    ``None`` for a parameter means the model's default (recordscan.physics.arc).
    """

    u0_v_per_m: float | None = None
    r0_ohm_per_m: float | None = None
    tau0_s: float | None = None
    alpha: float | None = None
    l0_m: float | None = None
    g_min_siemens_per_m: float | None = None
    dr_dt_ohm_per_m_s: float | None = None
    elongation: str = "johns"
    elongation_speed_m_per_s: float = 3.0
    restrike: bool = True
    recovery_rate_scale: float = 1.0
    #: duration of the hot channel's first linear recovery [s]; None: no saturation
    recovery_saturation_s: float | None = None
    #: how long the withstand then stays [s]; None: for good
    recovery_plateau_s: float | None = None
    #: relative scatter of the restrike withstand, redrawn every half cycle (0: none)
    restrike_scatter_pu: float = 0.0
    #: at most this many restrikes (None: no bound; a corpus bound, not physics)
    max_restrikes: int | None = None


@dataclass(frozen=True)
class BreakerSettings:
    """Protection and breaker timing (both ends unless stated).

    Attributes
    ----------
    relay_time_s : float
        Fault inception to trip command, local end.
    remote_delay_s : float
        Extra delay of the remote end's trip command (teleprotection).
    opening_time_s : float
        Trip command to contact separation.
    pole_scatter_s : float
        Largest random spread between poles (uniform in ±scatter/2), seconds.
    dead_time_s : float or None
        Contact separation to contact touch on reclose; None → :func:`default_dead_time_s`.
    reclose : bool
        Reclose after a single-pole trip.
    closing_time_s : float
        Reclose command to contact touch.
    remote_reclose_delay_s : float
        The remote (follower) end recloses this much later.
    three_pole_trip_delay_s : float
        Reclose onto a fault → three-pole trip after this delay.
    trip_hold_s : float
        How long the trip output stays asserted.
    aux_open_delay_s, aux_close_delay_s : float
        Auxiliary-contact delays of the pole status channels.
    """

    relay_time_s: float = 0.02
    remote_delay_s: float = 0.01
    opening_time_s: float = 0.025
    pole_scatter_s: float = 0.002
    dead_time_s: float | None = None
    reclose: bool = True
    closing_time_s: float = 0.05
    remote_reclose_delay_s: float = 0.0
    three_pole_trip_delay_s: float = 0.06
    trip_hold_s: float = 0.1
    aux_open_delay_s: float = 0.004
    aux_close_delay_s: float = 0.006


@dataclass(frozen=True)
class ReactorSettings:
    """Shunt reactor bank at one end.

    ``mode`` is ``"line"`` (as the line file says), ``"none"``, or ``"given"`` (the values
    here: phase reactance from ``x_phase_ohm`` or ``mvar`` at rated voltage; neutral
    reactor ``x_neutral_ohm``, 0 for a solidly grounded bank).
    """

    mode: str = "line"
    x_phase_ohm: float | None = None
    mvar: float | None = None
    x_neutral_ohm: float = 0.0
    q_factor: float = 300.0


@dataclass(frozen=True)
class InstrumentSettings:
    """Instrument transformers and the recorder.

    Attributes
    ----------
    vt : str
        Line VT kind: ``ideal``, ``cvt`` or ``magnetic``.
    vt_primary_v, vt_secondary_v : float or None
        VT ratio terms, phase-to-ground volts; None → rated phase voltage and 115/√3 V.
    ct_primary_a, ct_secondary_a : float
        CT ratio terms.
    ct_saturation : bool
        Model CT core saturation.
    rate_hz : float
        Recorder sample rate.
    snr_db : float or None
        Noise level (None: no noise).
    record_length_s : float
        Record length.
    pre_fault_s : float
        Record time before fault inception (before the trigger for ``kind = "none"``).
    arc_channels : bool
        Also record the fault-point arc current and voltage (a staged test).
    bus_vt : bool
        Also record bus-side voltages (ideal VTs).
    cvt_c_total_nf, cvt_burden_va : float
        CVT divider capacitance C1+C2 and burden (typical 100 nF, 200 VA; see
        :meth:`recordscan.physics.instruments.CvtParameters.typical`).
    """

    vt: str = "cvt"
    vt_primary_v: float | None = None
    vt_secondary_v: float | None = None
    ct_primary_a: float = 2000.0
    ct_secondary_a: float = 1.0
    ct_saturation: bool = False
    rate_hz: float = 4000.0
    snr_db: float | None = 50.0
    record_length_s: float = 1.6
    pre_fault_s: float = 0.1
    arc_channels: bool = False
    bus_vt: bool = False
    cvt_c_total_nf: float = 100.0
    cvt_burden_va: float = 200.0


@dataclass(frozen=True)
class OutputSettings:
    """What to write: COMTRADE revision and format, container, recorded ends, units.

    ``start_utc`` is the UTC instant of the records' first sample as ISO 8601 text
    (``2026-03-14T09:26:53.250Z``); None → a fixed fictional date offset by the seed.
    """

    revision: str = "2013"
    data_format: str = "BINARY"
    cff: bool = False
    ends: tuple[str, ...] = ("local",)
    values: str = "secondary"
    stem: str | None = None
    start_utc: str | None = None


@dataclass(frozen=True)
class SimulationSettings:
    """Network solver options."""

    dt_s: float = 20e-6
    line_model: str = "pi"
    n_sections: int = 8
    settle_s: float = 0.0


@dataclass(frozen=True)
class Scenario:
    """One simulated event (see ``docs/scenario.md``)."""

    name: str
    line: LineSettings
    description: str = ""
    seed: int = 0
    local: SourceSettings = field(default_factory=SourceSettings)
    remote: SourceSettings = field(default_factory=SourceSettings)
    load: LoadSettings = field(default_factory=LoadSettings)
    fault: FaultSettings = field(default_factory=FaultSettings)
    arc: ArcSettings = field(default_factory=ArcSettings)
    breaker: BreakerSettings = field(default_factory=BreakerSettings)
    reactor_local: ReactorSettings = field(default_factory=ReactorSettings)
    reactor_remote: ReactorSettings = field(default_factory=ReactorSettings)
    instruments: InstrumentSettings = field(default_factory=InstrumentSettings)
    output: OutputSettings = field(default_factory=OutputSettings)
    simulation: SimulationSettings = field(default_factory=SimulationSettings)
    source_path: str = ""


# ----------------------------------------------------------------------------- parsing
class _Table:
    """Typed access to one TOML table with errors naming the file and the key."""

    def __init__(self, data: Mapping[str, Any], where: str, name: str) -> None:
        if not isinstance(data, Mapping):
            raise FormatError(f"{where}: [{name}] must be a table")
        self.data = dict(data)
        self.where = where
        self.name = name
        self.used: set[str] = set()

    def _key(self, key: str) -> str:
        return f"{self.where}: {self.name}.{key}" if self.name else f"{self.where}: {key}"

    def fail(self, key: str, msg: str) -> FormatError:
        return FormatError(f"{self._key(key)}: {msg}")

    def get(self, key: str, default: Any = None) -> Any:
        self.used.add(key)
        return self.data.get(key, default)

    def num(
        self,
        key: str,
        default: float | None,
        *,
        lo: float | None = None,
        hi: float | None = None,
        lo_open: bool = False,
    ) -> float | None:
        v = self.get(key, None)
        if v is None:
            return default
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise self.fail(key, f"expected a number, got {v!r}")
        v = float(v)
        if not math.isfinite(v):
            raise self.fail(key, "must be finite")
        if lo is not None and (v < lo or (lo_open and v == lo)):
            raise self.fail(key, f"must be {'>' if lo_open else '>='} {lo:g}, got {v:g}")
        if hi is not None and v > hi:
            raise self.fail(key, f"must be <= {hi:g}, got {v:g}")
        return v

    def req_num(self, key: str, **kw: Any) -> float:
        if key not in self.data:
            raise self.fail(key, "is required")
        out = self.num(key, None, **kw)
        assert out is not None
        return out

    def boolean(self, key: str, default: bool) -> bool:
        v = self.get(key, None)
        if v is None:
            return default
        if not isinstance(v, bool):
            raise self.fail(key, f"expected true or false, got {v!r}")
        return v

    def text(self, key: str, default: str | None, choices: tuple[str, ...] = ()) -> str | None:
        v = self.get(key, None)
        if v is None:
            return default
        if not isinstance(v, str):
            raise self.fail(key, f"expected a string, got {v!r}")
        if choices and v not in choices:
            raise self.fail(key, f"must be one of {', '.join(choices)}, got {v!r}")
        return v

    def sub(self, key: str) -> _Table:
        self.used.add(key)
        v = self.data.get(key, {})
        name = f"{self.name}.{key}" if self.name else key
        return _Table(v, self.where, name)

    def finish(self) -> None:
        extra = sorted(set(self.data) - self.used)
        if extra:
            raise self.fail(extra[0], "unknown key (see docs/scenario.md)")


def _count(t: _Table, key: str) -> int | None:
    """An optional non-negative integer."""
    v = t.get(key, None)
    if v is None:
        return None
    if isinstance(v, bool) or not isinstance(v, int) or v < 0:
        raise t.fail(key, f"expected an integer >= 0, got {v!r}")
    return int(v)


def _phases(t: _Table, kind: str) -> tuple[str, ...]:
    default = {"single_phase": ("A",), "two_phase_ground": ("A", "B")}.get(kind, ())
    if kind == "three_phase":
        default = ("A", "B", "C")
    v = t.get("phases", None)
    if v is None:
        one = t.get("phase", None)
        v = [one] if one is not None else list(default)
    elif "phase" in t.data:
        t.used.add("phase")
        raise t.fail("phase", "give either phase or phases, not both")
    if not isinstance(v, list) or not all(isinstance(p, str) for p in v):
        raise t.fail("phases", f"expected a list of phase letters, got {v!r}")
    ph = tuple(p.upper() for p in v)
    if any(p not in ("A", "B", "C") for p in ph) or len(set(ph)) != len(ph):
        raise t.fail("phases", f"phases must be distinct A, B or C, got {v!r}")
    need = {"single_phase": 1, "two_phase_ground": 2, "three_phase": 3, "none": 0}[kind]
    if kind == "none":
        return ()
    if len(ph) != need:
        raise t.fail("phases", f"a {kind} fault needs {need} phase(s), got {len(ph)}")
    return ph


def _start_utc(t: _Table) -> str | None:
    import datetime as dt

    v = t.get("start_utc", None)
    if v is None:
        return None
    if isinstance(v, str):
        try:
            v = dt.datetime.fromisoformat(v.replace("Z", "+00:00"))
        except ValueError:
            raise t.fail("start_utc", f"not an ISO 8601 date and time: {v!r}") from None
    if not isinstance(v, dt.datetime):
        raise t.fail("start_utc", "expected a date and time such as 2026-03-14T09:26:53Z")
    if v.tzinfo is None:
        v = v.replace(tzinfo=dt.timezone.utc)
    v = v.astimezone(dt.timezone.utc)
    return v.strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def utc_text_to_ns(text: str) -> int:
    """Integer UTC nanoseconds of a ``start_utc`` text (microsecond resolution)."""
    import datetime as dt

    v = dt.datetime.strptime(text, "%Y-%m-%dT%H:%M:%S.%fZ").replace(tzinfo=dt.timezone.utc)
    epoch = dt.datetime(1970, 1, 1, tzinfo=dt.timezone.utc)
    delta = v - epoch
    return (delta.days * 86_400 + delta.seconds) * 1_000_000_000 + delta.microseconds * 1_000


def _source(t: _Table) -> SourceSettings:
    s = SourceSettings(
        short_circuit_mva=t.num("short_circuit_mva", 20_000.0, lo=0, lo_open=True),
        x_over_r=t.num("x_over_r", 15.0, lo=0, lo_open=True),
        z0_over_z1=t.num("z0_over_z1", 1.0, lo=0, lo_open=True),
        v_pu=t.num("v_pu", 1.0, lo=0.5, hi=1.5),
    )
    t.finish()
    return s


def _reactor(t: _Table) -> ReactorSettings:
    mode = t.text("mode", None, ("line", "none", "given"))
    x_p = t.num("x_phase_ohm", None, lo=0, lo_open=True)
    mvar = t.num("mvar", None, lo=0, lo_open=True)
    if mode is None:
        mode = "given" if (x_p is not None or mvar is not None) else "line"
    if mode == "given" and x_p is None and mvar is None:
        raise t.fail("mode", "a given reactor needs x_phase_ohm or mvar")
    if x_p is not None and mvar is not None:
        raise t.fail("mvar", "give either x_phase_ohm or mvar, not both")
    xn = t.get("x_neutral_ohm", 0.0)
    if xn == "solid":
        xn = 0.0
    if isinstance(xn, bool) or not isinstance(xn, (int, float)) or xn < 0:
        raise t.fail("x_neutral_ohm", f'expected ohms >= 0 or "solid", got {xn!r}')
    r = ReactorSettings(
        mode=mode,
        x_phase_ohm=x_p,
        mvar=mvar,
        x_neutral_ohm=float(xn),
        q_factor=t.num("q_factor", 300.0, lo=1.0),
    )
    t.finish()
    return r


def _line(t: _Table, base: Path | None) -> LineSettings:
    f = t.text("file", None)
    if f is not None:
        p = Path(f)
        if not p.is_absolute() and base is not None:
            p = base / p
        for k in t.data:
            if k != "file":
                t.used.add(k)
                raise t.fail(k, "a line given by file takes no other keys")
        t.finish()
        return LineSettings(file=str(p))
    if not t.data:
        raise FormatError(f'{t.where}: [line] is required (file = "..." or inline data)')
    seq = t.sub("sequence")
    km = 1e-3
    inline = InlineLine(
        name=t.text("name", "inline line") or "inline line",
        voltage_v=t.req_num("voltage_kv", lo=1, lo_open=True) * 1e3,
        frequency_hz=t.req_num("frequency_hz", lo=1, lo_open=True),
        length_m=t.req_num("length_km", lo=0, lo_open=True) * 1e3,
        r1_ohm_per_m=seq.req_num("r1_ohm_per_km", lo=0) * km,
        x1_ohm_per_m=seq.req_num("x1_ohm_per_km", lo=0, lo_open=True) * km,
        c1_f_per_m=seq.req_num("c1_nf_per_km", lo=0, lo_open=True) * 1e-12,
        r0_ohm_per_m=seq.req_num("r0_ohm_per_km", lo=0) * km,
        x0_ohm_per_m=seq.req_num("x0_ohm_per_km", lo=0, lo_open=True) * km,
        c0_f_per_m=seq.req_num("c0_nf_per_km", lo=0, lo_open=True) * 1e-12,
        local_station=t.text("local_station", "Local") or "Local",
        remote_station=t.text("remote_station", "Remote") or "Remote",
        dead_time_s=t.num("dead_time_s", None, lo=0, lo_open=True),
    )
    if inline.c0_f_per_m >= inline.c1_f_per_m:
        raise seq.fail("c0_nf_per_km", "must be smaller than c1_nf_per_km")
    seq.finish()
    t.finish()
    return LineSettings(inline=inline)


def parse_scenario(
    data: Mapping[str, Any], *, where: str = "scenario", base_dir: Path | None = None
) -> Scenario:
    """Build a :class:`Scenario` from parsed TOML data.

    Parameters
    ----------
    data : Mapping
        The TOML document as a dict.
    where : str
        Name of the source used in error messages (the file path).
    base_dir : pathlib.Path, optional
        Directory against which a relative ``line.file`` is resolved.

    Raises
    ------
    recordscan.errors.FormatError
        Unknown or missing keys, wrong types or values out of range; the message names the
        file and the key.
    """
    top = _Table(data, where, "")
    schema = top.num("schema", SCENARIO_SCHEMA)
    if schema != SCENARIO_SCHEMA:
        raise top.fail("schema", f"this recordscan reads scenario schema {SCENARIO_SCHEMA}")
    name = top.text("name", None) or (Path(where).stem if where != "scenario" else "scenario")
    seed_v = top.get("seed", 0)
    if isinstance(seed_v, bool) or not isinstance(seed_v, int) or seed_v < 0:
        raise top.fail("seed", f"expected a non-negative integer, got {seed_v!r}")
    if "line" not in data:
        raise FormatError(f'{where}: [line] is required (file = "..." or inline data)')
    line = _line(top.sub("line"), base_dir)

    src = top.sub("sources")
    local = _source(src.sub("local"))
    remote = _source(src.sub("remote"))
    angle = src.num("load_angle_deg", None, lo=-60, hi=60)
    cur = src.num("load_current_a", None, lo=0)
    if angle is not None and cur is not None:
        raise src.fail("load_current_a", "give either load_angle_deg or load_current_a")
    load = LoadSettings(angle_deg=angle if cur is None else None, current_a=cur)
    if angle is None and cur is None:
        load = LoadSettings()
    src.finish()

    ft = top.sub("fault")
    kind = ft.text("kind", "single_phase", FAULT_KINDS) or "single_phase"
    fault = FaultSettings(
        kind=kind,
        phases=_phases(ft, kind),
        location_pct=ft.num("location_pct", 50.0, lo=0.5, hi=99.5),
        point_on_wave_deg=ft.num("point_on_wave_deg", 60.0, lo=-360, hi=360),
        resistance_ohm=ft.num("resistance_ohm", 0.5, lo=0),
        permanent=ft.boolean("permanent", False),
    )
    ft.finish()

    at = top.sub("arc")
    arc = ArcSettings(
        u0_v_per_m=at.num("u0_v_per_m", None, lo=0, lo_open=True),
        r0_ohm_per_m=at.num("r0_ohm_per_m", None, lo=0),
        tau0_s=at.num("tau0_s", None, lo=0, lo_open=True),
        alpha=at.num("alpha", None, lo=-2, hi=0),
        l0_m=at.num("l0_m", None, lo=0, lo_open=True),
        g_min_siemens_per_m=at.num("g_min_siemens_per_m", None, lo=0, lo_open=True),
        dr_dt_ohm_per_m_s=at.num("dr_dt_ohm_per_m_s", None, lo=0, lo_open=True),
        elongation=at.text("elongation", "johns", ELONGATION_LAWS) or "johns",
        elongation_speed_m_per_s=at.num("elongation_speed_m_per_s", 3.0, lo=0),
        restrike=at.boolean("restrike", True),
        recovery_rate_scale=at.num("recovery_rate_scale", 1.0, lo=0, lo_open=True),
        recovery_saturation_s=at.num("recovery_saturation_s", None, lo=0, lo_open=True),
        recovery_plateau_s=at.num("recovery_plateau_s", None, lo=0),
        restrike_scatter_pu=at.num("restrike_scatter_pu", 0.0, lo=0, hi=0.3) or 0.0,
        max_restrikes=_count(at, "max_restrikes"),
    )
    at.finish()

    bt = top.sub("breaker")
    pos = {"lo": 0.0}
    breaker = BreakerSettings(
        relay_time_s=bt.num("relay_time_s", 0.02, **pos),
        remote_delay_s=bt.num("remote_delay_s", 0.01, **pos),
        opening_time_s=bt.num("opening_time_s", 0.025, **pos),
        pole_scatter_s=bt.num("pole_scatter_s", 0.002, lo=0, hi=0.02),
        dead_time_s=bt.num("dead_time_s", None, lo=0.05, hi=10),
        reclose=bt.boolean("reclose", True),
        closing_time_s=bt.num("closing_time_s", 0.05, **pos),
        remote_reclose_delay_s=bt.num("remote_reclose_delay_s", 0.0, **pos),
        three_pole_trip_delay_s=bt.num("three_pole_trip_delay_s", 0.06, lo=0, lo_open=True),
        trip_hold_s=bt.num("trip_hold_s", 0.1, lo=0, lo_open=True),
        aux_open_delay_s=bt.num("aux_open_delay_s", 0.004, **pos),
        aux_close_delay_s=bt.num("aux_close_delay_s", 0.006, **pos),
    )
    bt.finish()

    rt = top.sub("reactors")
    reactor_local = _reactor(rt.sub("local"))
    reactor_remote = _reactor(rt.sub("remote"))
    rt.finish()

    it = top.sub("instruments")
    snr = it.get("snr_db", 50.0)
    if snr == "none" or snr is False:
        snr_v: float | None = None
    else:
        snr_v = it.num("snr_db", 50.0, lo=10, hi=120)
    instruments = InstrumentSettings(
        vt=it.text("vt", "cvt", VT_KINDS) or "cvt",
        vt_primary_v=it.num("vt_primary_v", None, lo=0, lo_open=True),
        vt_secondary_v=it.num("vt_secondary_v", None, lo=0, lo_open=True),
        ct_primary_a=it.num("ct_primary_a", 2000.0, lo=0, lo_open=True),
        ct_secondary_a=it.num("ct_secondary_a", 1.0, lo=0, lo_open=True),
        ct_saturation=it.boolean("ct_saturation", False),
        rate_hz=it.num("rate_hz", 4000.0, lo=500, hi=20_000),
        snr_db=snr_v,
        record_length_s=it.num("record_length_s", 1.6, lo=0.05, hi=20),
        pre_fault_s=it.num("pre_fault_s", 0.1, lo=0.02, hi=5),
        arc_channels=it.boolean("arc_channels", False),
        bus_vt=it.boolean("bus_vt", False),
        cvt_c_total_nf=it.num("cvt_c_total_nf", 100.0, lo=1.0, hi=1000.0),
        cvt_burden_va=it.num("cvt_burden_va", 200.0, lo=1.0, hi=2000.0),
    )
    if instruments.pre_fault_s >= instruments.record_length_s:
        raise it.fail("pre_fault_s", "must be shorter than record_length_s")
    it.finish()

    ot = top.sub("output")
    ends = ot.get("ends", ["local"])
    if isinstance(ends, str):
        ends = [ends]
    if (
        not isinstance(ends, list)
        or not ends
        or any(e not in ("local", "remote") for e in ends)
        or len(set(ends)) != len(ends)
    ):
        raise ot.fail("ends", f"expected a list of 'local'/'remote', got {ends!r}")
    fmt = ot.text("format", "BINARY")
    fmt = (fmt or "BINARY").upper()
    if fmt not in DATA_FORMATS:
        raise ot.fail("format", f"must be one of {', '.join(DATA_FORMATS)}, got {fmt!r}")
    rev = ot.get("revision", "2013")
    rev = str(rev)
    if rev not in REVISIONS:
        raise ot.fail("revision", f"must be one of {', '.join(REVISIONS)}, got {rev!r}")
    cff = ot.boolean("cff", False)
    if cff and rev != "2013":
        raise ot.fail("cff", "a .cff container is a 2013 revision feature")
    if rev == "1999" and fmt not in ("ASCII", "BINARY"):
        raise ot.fail("format", "revision 1999 has ASCII and BINARY only")
    output = OutputSettings(
        revision=rev,
        data_format=fmt,
        cff=cff,
        ends=tuple(ends),
        values=ot.text("values", "secondary", ("primary", "secondary")) or "secondary",
        stem=ot.text("stem", None),
        start_utc=_start_utc(ot),
    )
    ot.finish()

    st = top.sub("simulation")
    sim = SimulationSettings(
        dt_s=st.num("dt_s", 20e-6, lo=1e-6, hi=1e-4),
        line_model=st.text("line_model", "pi", ("pi", "travelling_wave")) or "pi",
        n_sections=int(st.num("n_sections", 8, lo=1, hi=64) or 8),
        settle_s=st.num("settle_s", 0.0, lo=0, hi=2),
    )
    st.finish()
    if instruments.rate_hz * 0.5 >= 0.5 / sim.dt_s:
        raise it.fail("rate_hz", "too high for the simulation step (raise it or lower dt_s)")

    desc = top.text("description", "") or ""
    top.finish()
    return Scenario(
        name=name,
        line=line,
        description=desc,
        seed=int(seed_v),
        local=local,
        remote=remote,
        load=load,
        fault=fault,
        arc=arc,
        breaker=breaker,
        reactor_local=reactor_local,
        reactor_remote=reactor_remote,
        instruments=instruments,
        output=output,
        simulation=sim,
        source_path=where if where != "scenario" else "",
    )


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario TOML file.

    Raises
    ------
    recordscan.errors.MissingFileError
        The file does not exist.
    recordscan.errors.FormatError
        The file is not valid TOML or breaks the schema (message names file and key).
    """

    p = Path(path)
    data = read_toml(p, what="scenario")
    return parse_scenario(data, where=str(p), base_dir=p.parent)
