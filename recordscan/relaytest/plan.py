"""Playback plans: which cases a relay playback set holds (TOML, schema in docs/relaytest.md).

A plan names a *base scenario* (a scenario file, inline scenario tables, or a file with
inline changes), then the cases: hand-picked ``[[case]]`` tables, a ``[grid]`` of values
(every combination) and ``[random]`` draws (``n`` per grid point) over plan *variables*
(voltage class, length, compensation and neutral-reactor detuning, fault location, load,
arc parameters and elongation, restrike behaviour, permanent faults, VT kind, noise…). The
``[playback]`` table sets what the test set plays: VT and CT ratios (secondary values),
sample rate, COMTRADE revision and format, pre-fault time and record length. The
``[reclose]`` table sets the longest allowed dead time and the breaker closing time that
give each case's latest permissible reclose permit::

    latest_permit_s = secondary_arc_start_s + max_dead_time_s − close_time_s

Everything is checked when the plan is read (:func:`load_plan`); a bad plan raises
:class:`recordscan.errors.FormatError` naming the file and the key. The cases are drawn
deterministically: case ``k`` uses a generator seeded by ``(seed, k)``, so the same plan
always gives the same cases.

In a playback case the breaker never recloses by itself: the pole stays open to the end of
the record, because the reclose is what the relay under test decides.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import os
import sys
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from recordscan.core.tomlfile import read_toml
from recordscan.errors import FormatError, ModelError, RecordScanError
from recordscan.relaytest.plan_vars import (
    VARIABLES,
    Draw,
    Where,
    check_value,
    get_table,
    get_variable,
    num_key,
    parse_draw,
    reject_unknown,
)
from recordscan.synth.scenario import (
    DATA_FORMATS,
    REVISIONS,
    InlineLine,
    LineSettings,
    ReactorSettings,
    Scenario,
    default_dead_time_s,
    parse_scenario,
)

if sys.version_info >= (3, 11):  # pragma: no cover - version switch
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = [
    "PLAN_SCHEMA",
    "VARIABLES",
    "Plan",
    "PlanCase",
    "PlaybackSettings",
    "RecloseLimits",
    "latest_permit_s",
    "load_plan",
    "parse_plan",
]

PLAN_SCHEMA = 1
SQRT3 = math.sqrt(3.0)
#: the pole interrupts at a current zero: at most this many cycles after contact separation
#: (half a cycle for a sinusoid; one full cycle allowed for offset currents)
_ZERO_WAIT_CYCLES = 1.0
#: default record time after the latest permissible permit
_TAIL_S = 0.2


def latest_permit_s(
    secondary_arc_start_s: float, *, max_dead_time_s: float, close_time_s: float
) -> float:
    """The latest reclose-permit instant that still closes within the allowed dead time.

    The dead time runs from the pole opening to the contact touch; the reclose command
    (the permit) must come ``close_time_s`` before the touch::

        latest = secondary_arc_start_s + max_dead_time_s − close_time_s

    Parameters
    ----------
    secondary_arc_start_s : float
        Last pole opening of the faulted phase (start of the secondary arc), seconds.
    max_dead_time_s : float
        Longest allowed single-pole dead time.
    close_time_s : float
        Breaker closing time (reclose command to contact touch).

    Returns
    -------
    float
        Seconds on the same axis as ``secondary_arc_start_s``.
    """
    return secondary_arc_start_s + max_dead_time_s - close_time_s


# ----------------------------------------------------------------------------- dataclasses
@dataclass(frozen=True)
class PlaybackSettings:
    """What the test set plays back.

    Attributes
    ----------
    vt_primary_ll_v : float or None
        VT rated primary, line-to-line (the phase ratio is ``primary/√3 : secondary/√3``);
        None = each case's rated line voltage.
    vt_secondary_ll_v : float
        VT rated secondary, line-to-line (nominal 100–120 V).
    ct_primary_a, ct_secondary_a : float
        CT ratio (secondary 1–5 A).
    rate_hz : float
        Sample rate of the playback records.
    revision, data_format : str
        COMTRADE revision and data format.
    cff : bool
        One ``.cff`` file per case (2013 only).
    pre_fault_s : float
        Record time before fault inception.
    record_length_s : float or None
        Record length; None = long enough for each case (latest permit + 0.2 s).
    """

    vt_primary_ll_v: float | None = None
    vt_secondary_ll_v: float = 115.0
    ct_primary_a: float = 2000.0
    ct_secondary_a: float = 1.0
    rate_hz: float = 4000.0
    revision: str = "2013"
    data_format: str = "BINARY"
    cff: bool = False
    pre_fault_s: float = 0.1
    record_length_s: float | None = None


@dataclass(frozen=True)
class RecloseLimits:
    """The reclose timing that sets each case's latest permissible permit.

    ``None`` = the default: the dead time of the case's line
    (:func:`recordscan.synth.scenario.default_dead_time_s`) and the base scenario's
    breaker closing time.
    """

    max_dead_time_s: float | None = None
    close_time_s: float | None = None


@dataclass(frozen=True)
class PlanCase:
    """One case of a plan, ready to simulate.

    Attributes
    ----------
    case : str
        Case id (``case-001``…).
    origin : str
        Where it came from (``case table 2``, ``grid point 3``, ``grid point 1, draw 2``).
    label : str
        The plan's label of a hand-picked case ("" otherwise).
    settings : Mapping[str, Any]
        Plan variables set for this case (name → value).
    scenario : Scenario
        The scenario to simulate (local end only, secondary values, no automatic reclose).
    max_dead_time_s, close_time_s : float
        Reclose timing of :func:`latest_permit_s`.
    line_name : str
        Name of the simulated line.
    """

    case: str
    origin: str
    label: str
    settings: Mapping[str, Any]
    scenario: Scenario
    max_dead_time_s: float
    close_time_s: float
    line_name: str = ""

    def latest_permit_s(self, secondary_arc_start_s: float) -> float:
        """:func:`latest_permit_s` with this case's timing."""
        return latest_permit_s(
            secondary_arc_start_s,
            max_dead_time_s=self.max_dead_time_s,
            close_time_s=self.close_time_s,
        )

    def describe(self) -> str:
        """One line describing the case (for the manifest's notes)."""
        parts = [self.label] if self.label else []
        parts.append(self.line_name)
        parts += [_show(k, v) for k, v in self.settings.items() if k not in ("line_file", "vt")]
        parts.append(f"VT {self.scenario.instruments.vt}")
        return "; ".join(p for p in parts if p)


@dataclass(frozen=True)
class Plan:
    """A parsed playback plan (see module docstring and docs/relaytest.md)."""

    name: str
    seed: int
    base: Scenario
    playback: PlaybackSettings
    reclose: RecloseLimits
    cases: tuple[PlanCase, ...]
    description: str = ""
    source_path: str = ""
    variables: Mapping[str, Any] = field(default_factory=dict)


def _show(name: str, v: Any) -> str:
    if isinstance(v, bool):
        return name.replace("_", " ") if v else f"no {name.replace('_', ' ')}"
    if isinstance(v, float):
        return f"{name} {v:.4g}"
    return f"{name} {v}"


_PLAYBACK_KEYS = (
    "vt_primary_kv", "vt_secondary_v", "ct_primary_a", "ct_secondary_a", "rate_hz",
    "revision", "format", "cff", "pre_fault_s", "record_length_s",
)  # fmt: skip


def _playback(w: Where, t: Mapping[str, Any]) -> PlaybackSettings:
    reject_unknown(w, t, "playback", _PLAYBACK_KEYS)
    p = "playback"
    vt_p = num_key(w, t, p, "vt_primary_kv", None, lo=1.0, hi=2000.0)
    vt_s = num_key(w, t, p, "vt_secondary_v", 115.0, lo=100.0, hi=120.0)
    ct_p = num_key(w, t, p, "ct_primary_a", 2000.0, lo=1.0, hi=100_000.0)
    ct_s = num_key(w, t, p, "ct_secondary_a", 1.0, lo=1.0, hi=5.0)
    rate = num_key(w, t, p, "rate_hz", 4000.0, lo=500.0, hi=20_000.0)
    pre = num_key(w, t, p, "pre_fault_s", 0.1, lo=0.02, hi=5.0)
    length = num_key(w, t, p, "record_length_s", None, lo=0.1, hi=20.0)
    rev = str(t.get("revision", "2013"))
    if rev not in REVISIONS:
        raise w.fail("playback.revision", f"must be one of {', '.join(REVISIONS)}, got {rev!r}")
    fmt = t.get("format", "BINARY")
    if not isinstance(fmt, str) or fmt.upper() not in DATA_FORMATS:
        raise w.fail("playback.format", f"must be one of {', '.join(DATA_FORMATS)}, got {fmt!r}")
    fmt = fmt.upper()
    cff = t.get("cff", False)
    if not isinstance(cff, bool):
        raise w.fail("playback.cff", f"expected true or false, got {cff!r}")
    if cff and rev != "2013":
        raise w.fail("playback.cff", "a .cff container is a 2013 revision feature")
    if rev == "1999" and fmt not in ("ASCII", "BINARY"):
        raise w.fail("playback.format", "revision 1999 has ASCII and BINARY only")
    assert vt_s is not None and ct_p is not None and ct_s is not None
    assert rate is not None and pre is not None
    if length is not None and pre >= length:
        raise w.fail("playback.pre_fault_s", "must be shorter than record_length_s")
    return PlaybackSettings(
        vt_primary_ll_v=None if vt_p is None else vt_p * 1e3,
        vt_secondary_ll_v=vt_s,
        ct_primary_a=ct_p,
        ct_secondary_a=ct_s,
        rate_hz=rate,
        revision=rev,
        data_format=fmt,
        cff=cff,
        pre_fault_s=pre,
        record_length_s=length,
    )


def _reclose(w: Where, t: Mapping[str, Any]) -> RecloseLimits:
    reject_unknown(w, t, "reclose", ("max_dead_time_s", "close_time_s"))
    return RecloseLimits(
        max_dead_time_s=num_key(w, t, "reclose", "max_dead_time_s", None, lo=0.1, hi=10.0),
        close_time_s=num_key(w, t, "reclose", "close_time_s", None, lo=0.0, hi=1.0),
    )


# ----------------------------------------------------------------------------- base
_BASE_TABLES = ("line", "sources", "fault", "arc", "breaker", "reactors", "instruments",
                "simulation")  # fmt: skip
_BASE_TOP = ("name", "description", "seed", "schema")
#: instrument keys that the playback table sets instead
_PLAYBACK_OWNED = ("vt_primary_v", "vt_secondary_v", "ct_primary_a", "ct_secondary_a",
                   "rate_hz", "record_length_s", "pre_fault_s")  # fmt: skip


def _merge(a: Mapping[str, Any], b: Mapping[str, Any]) -> dict[str, Any]:
    out = dict(a)
    for k, v in b.items():
        if isinstance(v, Mapping) and isinstance(out.get(k), Mapping):
            out[k] = _merge(out[k], v)
        else:
            out[k] = v
    return out


def _base(w: Where, t: Mapping[str, Any], plan_dir: Path) -> Scenario:
    reject_unknown(w, t, "base", ("scenario", *_BASE_TABLES, *_BASE_TOP))
    data: dict[str, Any] = {}
    base_dir = plan_dir
    where = f"{w.path}: base"
    ref = t.get("scenario")
    if ref is not None:
        if not isinstance(ref, str):
            raise w.fail("base.scenario", f"expected a file name, got {ref!r}")
        p = Path(ref)
        p = p if p.is_absolute() else plan_dir / p
        try:
            data = tomllib.loads(p.read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise w.fail("base.scenario", f"scenario file not found: {p}") from None
        except (OSError, UnicodeDecodeError) as exc:
            raise w.fail("base.scenario", f"cannot read {p}: {exc}") from None
        except tomllib.TOMLDecodeError as exc:
            raise w.fail("base.scenario", f"{p} is not valid TOML ({exc})") from None
        base_dir = p.parent
        where = str(p)
        if "output" in data:
            data = {k: v for k, v in data.items() if k != "output"}
    inline = {k: v for k, v in t.items() if k != "scenario"}
    line_t = inline.get("line")
    if ref is not None and isinstance(line_t, Mapping) and isinstance(line_t.get("file"), str):
        # an inline line file is relative to the plan, not to the referenced scenario
        inline["line"] = {**line_t, "file": os.path.abspath(plan_dir / line_t["file"])}
    inst = inline.get("instruments", {})
    if isinstance(inst, Mapping):
        owned = sorted(set(inst) & set(_PLAYBACK_OWNED))
        if owned:
            raise w.fail(f"base.instruments.{owned[0]}", "set this in [playback] instead")
    if inline:
        data = _merge(data, inline)
        where = f"{w.path}: base" if ref is None else f"{w.path}: base (over {where})"
    if "line" not in data:
        raise w.fail("base", 'give scenario = "file.toml" or an inline [base.line] table')
    if isinstance(data.get("instruments"), Mapping):
        data["instruments"] = {
            k: v for k, v in data["instruments"].items() if k not in _PLAYBACK_OWNED
        }
    return parse_scenario(data, where=where, base_dir=base_dir)


# ----------------------------------------------------------------------------- cases
def _line_of(scenario: Scenario, cache: dict[str, Any]) -> Any:
    from recordscan.synth.generate import resolve_line

    key = scenario.line.file or repr(scenario.line.inline)
    if key not in cache:
        cache[key] = resolve_line(scenario)
    return cache[key]


def _inline_from(line: Any, *, length_m: float) -> InlineLine:
    c = line.constants
    return InlineLine(
        name=f"{line.name} ({length_m / 1e3:g} km)",
        voltage_v=float(line.voltage_v),
        frequency_hz=float(line.frequency_hz),
        length_m=length_m,
        r1_ohm_per_m=float(c.r1_ohm_per_m),
        x1_ohm_per_m=float(c.x1_ohm_per_m),
        c1_f_per_m=float(c.c1_f_per_m),
        r0_ohm_per_m=float(c.r0_ohm_per_m),
        x0_ohm_per_m=float(c.x0_ohm_per_m),
        c0_f_per_m=float(c.c0_f_per_m),
        local_station=line.stations[0],
        remote_station=line.stations[1],
        dead_time_s=line.dead_time_s,
    )


def _class_line(line: Any, kv: int, length_m: float) -> InlineLine:
    from recordscan.synth.sweep import LINE_CLASSES

    lc = LINE_CLASSES[kv]
    w = 2.0 * math.pi * float(line.frequency_hz)
    return InlineLine(
        name=f"{kv} kV {length_m / 1e3:g} km, typical data",
        voltage_v=kv * 1e3,
        frequency_hz=float(line.frequency_hz),
        length_m=length_m,
        r1_ohm_per_m=lc.r1_ohm_per_m,
        x1_ohm_per_m=w * lc.l1_h_per_m,
        c1_f_per_m=lc.c1_f_per_m,
        r0_ohm_per_m=lc.r0_ohm_per_m,
        x0_ohm_per_m=w * lc.l0_h_per_m,
        c0_f_per_m=lc.c0_f_per_m,
        local_station=line.stations[0],
        remote_station=line.stations[1],
        dead_time_s=None,
    )


def _given(r: Any) -> ReactorSettings:
    if r is None:
        return ReactorSettings(mode="none")
    q = r.quality_factor if math.isfinite(r.quality_factor) else 300.0
    return ReactorSettings(
        mode="given", x_phase_ohm=r.x_phase_ohm, x_neutral_ohm=r.x_neutral_ohm, q_factor=q
    )


def _case_scenario(
    base: Scenario,
    settings: Mapping[str, Any],
    *,
    name: str,
    seed: int,
    playback: PlaybackSettings,
    cache: dict[str, Any],
    plan_dir: Path,
) -> tuple[Scenario, Any]:
    """The scenario of one case and its resolved line."""
    rep = dataclasses.replace
    s = settings
    sc = base
    if "line_file" in s:
        f = Path(s["line_file"])
        f = f if f.is_absolute() else plan_dir / f
        sc = rep(sc, line=LineSettings(file=str(f)), reactor_local=ReactorSettings(),
                 reactor_remote=ReactorSettings())  # fmt: skip
    line = _line_of(sc, cache)
    # the line: voltage class and length
    if "voltage_kv" in s or "length_km" in s:
        length_m = float(s.get("length_km", line.length_m / 1e3)) * 1e3
        if "voltage_kv" in s:
            inline = _class_line(line, int(s["voltage_kv"]), length_m)
            r_local = r_remote = ReactorSettings(mode="none")
        else:
            inline = _inline_from(line, length_m=length_m)
            r_local, r_remote = sc.reactor_local, sc.reactor_remote
            if r_local.mode == "line":
                r_local = _given(line.reactors[0])
            if r_remote.mode == "line":
                r_remote = _given(line.reactors[1])
        sc = rep(sc, line=LineSettings(inline=inline), reactor_local=r_local,
                 reactor_remote=r_remote)  # fmt: skip
        line = _line_of(sc, cache)
    if "neutral_detuning" in s and "compensation" not in s:
        raise ModelError("neutral_detuning needs compensation in the same case")
    if "compensation" in s:
        comp = float(s["compensation"])
        if comp == 0.0:
            if "neutral_detuning" in s:
                raise ModelError("neutral_detuning needs a compensation above 0")
            react = ReactorSettings(mode="none")
        else:
            from recordscan.physics.reactors import size_neutral_reactor

            c = line.constants
            half = line.length_m / 2.0
            sz = size_neutral_reactor(
                c1_f=float(c.c1_f_per_m) * half,
                c0_f=float(c.c0_f_per_m) * half,
                compensation=comp,
                frequency_hz=float(line.frequency_hz),
            )
            x_n = sz.x_neutral_ohm * float(s.get("neutral_detuning", 1.0))
            react = ReactorSettings(mode="given", x_phase_ohm=sz.x_phase_ohm, x_neutral_ohm=x_n)
        sc = rep(sc, reactor_local=react, reactor_remote=react)
    # the fault and its arc
    f = sc.fault
    if f.kind != "single_phase":
        raise ModelError("a playback case needs a single-phase fault (fault.kind)")
    f = rep(
        f,
        phases=(s["phase"],) if "phase" in s else f.phases,
        location_pct=s.get("location_pct", f.location_pct),
        point_on_wave_deg=s.get("point_on_wave_deg", f.point_on_wave_deg),
        resistance_ohm=s.get("fault_resistance_ohm", f.resistance_ohm),
        permanent=s.get("permanent", f.permanent),
    )
    arc = rep(sc.arc, **{k: s[k] for k in _ARC_KEYS if k in s})
    load = sc.load
    if "load_angle_deg" in s:
        load = rep(load, angle_deg=s["load_angle_deg"], current_a=None)
    # the playback: ratios, rate, record; no automatic reclose
    pb = playback
    v_ll = float(line.voltage_v)
    vt_p_ll = pb.vt_primary_ll_v if pb.vt_primary_ll_v is not None else v_ll
    if abs(vt_p_ll / v_ll - 1.0) > 0.1:
        raise ModelError(
            f"the VT primary {vt_p_ll / 1e3:g} kV does not suit the {v_ll / 1e3:g} kV line "
            "(leave playback.vt_primary_kv out to follow each case's line)"
        )
    snr = s.get("snr_db", sc.instruments.snr_db)
    inst = rep(
        sc.instruments,
        vt=s.get("vt", sc.instruments.vt),
        snr_db=None if snr == "none" else snr,
        vt_primary_v=vt_p_ll / SQRT3,
        vt_secondary_v=pb.vt_secondary_ll_v / SQRT3,
        ct_primary_a=pb.ct_primary_a,
        ct_secondary_a=pb.ct_secondary_a,
        rate_hz=pb.rate_hz,
        pre_fault_s=pb.pre_fault_s,
        arc_channels=False,
        bus_vt=False,
    )
    if pb.rate_hz * 0.5 >= 0.5 / sc.simulation.dt_s:
        raise ModelError("playback.rate_hz is too high for the base scenario's simulation.dt_s")
    out = rep(sc.output, revision=pb.revision, data_format=pb.data_format, cff=pb.cff,
              ends=("local",), values="secondary", stem=name)  # fmt: skip
    br = rep(sc.breaker, reclose=False)
    sc = rep(sc, name=name, seed=seed, fault=f, arc=arc, load=load, instruments=inst,
             output=out, breaker=br)  # fmt: skip
    return sc, line


_ARC_KEYS = (
    "u0_v_per_m",
    "r0_ohm_per_m",
    "tau0_s",
    "alpha",
    "l0_m",
    "g_min_siemens_per_m",
    "elongation",
    "elongation_speed_m_per_s",
    "restrike",
    "recovery_rate_scale",
)


def _needed_length_s(sc: Scenario, line: Any, max_dead_s: float, close_s: float) -> float:
    """Record length that reaches past the latest permissible permit (upper bound)."""
    br = sc.breaker
    t_open = (
        sc.instruments.pre_fault_s
        + br.relay_time_s
        + br.remote_delay_s
        + br.opening_time_s
        + br.pole_scatter_s / 2.0
        + _ZERO_WAIT_CYCLES / float(line.frequency_hz)
    )
    return t_open + max_dead_s - close_s


def _expand(
    w: Where, data: Mapping[str, Any]
) -> list[tuple[str, str, dict[str, Any], Mapping[str, Draw]]]:
    """(origin, label, fixed settings, draws) per case, in order."""
    out: list[tuple[str, str, dict[str, Any], Mapping[str, Draw]]] = []
    cases = data.get("case", [])
    if not isinstance(cases, list) or not all(isinstance(c, Mapping) for c in cases):
        raise w.fail("case", "use [[case]] tables")
    for k, c in enumerate(cases, start=1):
        label = c.get("label", "")
        if not isinstance(label, str):
            raise w.fail(f"case[{k}].label", "expected a string")
        fixed = {}
        for name, v in c.items():
            if name == "label":
                continue
            key = f"case[{k}].{name}"
            fixed[name] = check_value(w, key, get_variable(w, key, name), v)
        out.append((f"case table {k}", label, fixed, {}))
    grid = get_table(w, data, "grid")
    rnd = get_table(w, data, "random")
    if not grid and not rnd:
        if not cases:
            out.append(("base scenario", "", {}, {}))
        return out
    axes: list[tuple[str, list[Any]]] = []
    for name, vals in grid.items():
        key = f"grid.{name}"
        var = get_variable(w, key, name)
        if not isinstance(vals, list) or not vals:
            raise w.fail(key, "expected a non-empty list of values")
        axes.append((name, [check_value(w, key, var, v) for v in vals]))
    n_draws = 1
    draws: dict[str, Draw] = {}
    if rnd:
        n = rnd.get("n")
        if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= 10_000:
            raise w.fail("random.n", f"expected a whole number of draws from 1 to 10000, got {n!r}")
        n_draws = n
        for name, spec in rnd.items():
            if name == "n":
                continue
            if name in grid:
                raise w.fail(f"random.{name}", "is also a grid axis; give it in one place")
            draws[name] = parse_draw(w, name, spec)
    points = list(itertools.product(*(vals for _, vals in axes))) if axes else [()]
    if len(points) * n_draws > 10_000:
        raise w.fail("grid", f"{len(points) * n_draws} cases is too many (at most 10000)")
    for i, point in enumerate(points, start=1):
        fixed = {name: v for (name, _), v in zip(axes, point, strict=True)}
        for j in range(1, n_draws + 1):
            if axes and rnd:
                origin = f"grid point {i}, draw {j}"
            elif axes:
                origin = f"grid point {i}"
            else:
                origin = f"draw {j}"
            out.append((origin, "", fixed, draws))
    return out


def parse_plan(
    data: Mapping[str, Any], *, where: str = "plan", base_dir: Path | None = None
) -> Plan:
    """Build a :class:`Plan` from parsed TOML data.

    Parameters
    ----------
    data : Mapping
        The TOML document.
    where : str
        The plan's name in error messages (its path).
    base_dir : pathlib.Path, optional
        Folder against which relative file names are resolved (the plan's folder).

    Raises
    ------
    recordscan.errors.FormatError
        Unknown keys, wrong types, values out of range, cases that cannot be set up; the
        message names the file and the key.
    """
    w = Where(where)
    plan_dir = base_dir if base_dir is not None else Path(".")
    reject_unknown(w, data, "", ("schema", "name", "description", "seed", "base", "playback",
                           "reclose", "grid", "random", "case"))  # fmt: skip
    schema = data.get("schema", PLAN_SCHEMA)
    if schema != PLAN_SCHEMA:
        raise w.fail("schema", f"this recordscan reads plan schema {PLAN_SCHEMA}, got {schema!r}")
    seed = data.get("seed", 0)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise w.fail("seed", f"expected a non-negative integer, got {seed!r}")
    name = data.get("name", Path(where).stem if where != "plan" else "plan")
    desc = data.get("description", "")
    if not isinstance(name, str) or not isinstance(desc, str):
        raise w.fail("name" if not isinstance(name, str) else "description", "expected a string")
    if "base" not in data:
        raise w.fail("base", 'a plan needs a [base] table (scenario = "file.toml" or inline)')
    cache: dict[str, Any] = {}
    try:
        base = _base(w, get_table(w, data, "base"), plan_dir)
        _line_of(base, cache)
    except FormatError:
        raise
    except RecordScanError as exc:
        raise w.fail("base", str(exc)) from None
    playback = _playback(w, get_table(w, data, "playback"))
    reclose = _reclose(w, get_table(w, data, "reclose"))
    specs = _expand(w, data)
    cases: list[PlanCase] = []
    for k, (origin, label, fixed, draws) in enumerate(specs, start=1):
        case_id = f"case-{k:03d}"
        rng = np.random.default_rng([seed, k])
        settings = dict(fixed)
        for nm, d in draws.items():
            settings[nm] = d.draw(rng)
        case_seed = int(rng.integers(0, 2**31 - 1))
        try:
            sc, line = _case_scenario(
                base,
                settings,
                name=case_id,
                seed=case_seed,
                playback=playback,
                cache=cache,
                plan_dir=plan_dir,
            )
            max_dead = settings.get("max_dead_time_s", reclose.max_dead_time_s)
            if max_dead is None:
                max_dead = default_dead_time_s(float(line.voltage_v), line.dead_time_s)
            close = (
                reclose.close_time_s
                if reclose.close_time_s is not None
                else sc.breaker.closing_time_s
            )
            if close >= max_dead:
                raise ModelError(
                    f"the closing time {close:g} s is not shorter than the dead time {max_dead:g} s"
                )
            need = _needed_length_s(sc, line, max_dead, close)
            length = playback.record_length_s
            if length is None:
                length = math.ceil((need + _TAIL_S) * 100.0 - 1e-9) / 100.0
            elif length < need + 0.02:
                raise FormatError(
                    f"{where}: playback.record_length_s: {case_id} needs at least "
                    f"{need + 0.02:.2f} s to reach past its latest permissible permit"
                )
            sc = dataclasses.replace(
                sc, instruments=dataclasses.replace(sc.instruments, record_length_s=length)
            )
        except FormatError:
            raise
        except RecordScanError as exc:
            raise FormatError(f"{where}: {case_id} ({origin}): {exc}") from None
        cases.append(
            PlanCase(
                case=case_id,
                origin=origin,
                label=label,
                settings=settings,
                scenario=sc,
                max_dead_time_s=float(max_dead),
                close_time_s=float(close),
                line_name=str(line.name),
            )
        )
    return Plan(
        name=name,
        seed=seed,
        base=base,
        playback=playback,
        reclose=reclose,
        cases=tuple(cases),
        description=desc,
        source_path=where if where != "plan" else "",
        variables={
            nm: VARIABLES[nm].meaning for nm in sorted({n for c in cases for n in c.settings})
        },
    )


def load_plan(path: str | Path) -> Plan:
    """Read and check a plan TOML file (see :func:`parse_plan`).

    Raises
    ------
    recordscan.errors.FormatError
        The file is missing, not TOML, or breaks the schema (message names file and key).
    """
    p = Path(path)
    data = read_toml(p, what="plan")
    return parse_plan(data, where=str(p), base_dir=p.parent)
