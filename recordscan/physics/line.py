"""Line description files: one overhead line, its terminals, reactors and reclosing setting.

The file is TOML in recordscan's own schema (documented in ``docs/line-file.md``)::

    name = "Ashcombe–Brightwater 500 kV"
    from_station = "Ashcombe"
    to_station = "Brightwater"
    voltage_kv = 500.0          # line-to-line rms
    frequency_hz = 60.0
    length_km = 240.0
    transposed = true
    dead_time_s = 0.8
    [geometry] … or [sequence] …
    [reactor.from] / [reactor.to] …

:func:`load_line` reads a file, :func:`parse_line` a mapping already read (a scenario may embed
a line table). Both return a frozen :class:`LineDescription`; every problem is a
:class:`recordscan.errors.FormatError` naming the file and the key.

Imports only the standard library (``tomllib``; ``tomli`` on Python 3.10) and numpy, so that
every layer can use it cheaply.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from recordscan.core.tomlfile import read_toml
from recordscan.errors import FormatError, ModelError
from recordscan.physics.line_constants import (
    Bundle,
    Conductor,
    LineConstants,
    TowerGeometry,
    Wire,
    line_constants,
)
from recordscan.physics.reactors import FourLeggedReactor, reactance_from_mvar_ohm

if sys.version_info >= (3, 11):
    pass
else:  # pragma: no cover - Python 3.10
    pass

__all__ = ["LineDescription", "load_line", "parse_line"]

_TOP_KEYS = {
    "schema",
    "name",
    "from_station",
    "to_station",
    "voltage_kv",
    "frequency_hz",
    "length_km",
    "transposed",
    "dead_time_s",
    "notes",
    "geometry",
    "sequence",
    "reactor",
}


@dataclass(frozen=True, eq=False)
class LineDescription:
    """One line as described by a line file (SI inside).

    Attributes
    ----------
    name : str
        Line name.
    from_station, to_station : str
        Stations at the two ends; "from" is the end where distances are measured from.
    voltage_v : float
        Rated line-to-line rms voltage.
    frequency_hz : float
        Rated frequency.
    length_m : float
        Route length.
    transposed : bool
        Whether the line is (ideally) transposed.
    constants : LineConstants
        Per-length constants as operated: the transposed average when ``transposed`` is true,
        the untransposed matrices otherwise.
    reactor_from, reactor_to : FourLeggedReactor or None
        Line-side shunt reactor banks at each end.
    dead_time_s : float or None
        The single-pole dead time setting in service.
    notes : str
        Free text.
    geometry : TowerGeometry or None
        Tower geometry when the file gave one.
    earth_model : str
        Earth-return method used for ``constants`` (``"carson"``, ``"complex_depth"``, or
        ``"sequence"`` for sequence data).
    source : str
        Where the description came from (file path).
    """

    name: str
    from_station: str
    to_station: str
    voltage_v: float
    frequency_hz: float
    length_m: float
    transposed: bool
    constants: LineConstants
    reactor_from: FourLeggedReactor | None = None
    reactor_to: FourLeggedReactor | None = None
    dead_time_s: float | None = None
    notes: str = ""
    geometry: TowerGeometry | None = None
    earth_model: str = "sequence"
    source: str = ""

    @property
    def v_phase_v(self) -> float:
        """Rated phase-to-ground rms voltage, ``V_LL/√3``."""
        return self.voltage_v / math.sqrt(3.0)

    @property
    def stations(self) -> tuple[str, str]:
        """``(from_station, to_station)``."""
        return (self.from_station, self.to_station)

    @property
    def reactors(self) -> tuple[FourLeggedReactor | None, FourLeggedReactor | None]:
        """Reactor banks ``(at from_station, at to_station)``; ``None`` where there is none."""
        return (self.reactor_from, self.reactor_to)

    @property
    def compensation(self) -> float:
        """Positive-sequence compensation degree ``Σ(1/X_p) / (ω·C1·length)``."""
        b_c1 = 2.0 * math.pi * self.frequency_hz * self.constants.c1_f_per_m * self.length_m
        b_l = sum(r.b1_siemens for r in self.reactors if r is not None)
        return b_l / b_c1

    def with_reactors(
        self,
        reactor_from: FourLeggedReactor | None,
        reactor_to: FourLeggedReactor | None,
    ) -> LineDescription:
        """A copy with other reactor banks (for sweeps)."""
        return LineDescription(
            name=self.name,
            from_station=self.from_station,
            to_station=self.to_station,
            voltage_v=self.voltage_v,
            frequency_hz=self.frequency_hz,
            length_m=self.length_m,
            transposed=self.transposed,
            constants=self.constants,
            reactor_from=reactor_from,
            reactor_to=reactor_to,
            dead_time_s=self.dead_time_s,
            notes=self.notes,
            geometry=self.geometry,
            earth_model=self.earth_model,
            source=self.source,
        )

    def to_dict(self) -> dict[str, Any]:
        """SI-keyed summary for JSON output."""
        return {
            "name": self.name,
            "from_station": self.from_station,
            "to_station": self.to_station,
            "voltage_v": self.voltage_v,
            "v_phase_v": self.v_phase_v,
            "frequency_hz": self.frequency_hz,
            "length_m": self.length_m,
            "transposed": self.transposed,
            "dead_time_s": self.dead_time_s,
            "compensation": self.compensation,
            "earth_model": self.earth_model,
            "reactor_from": None if self.reactor_from is None else self.reactor_from.to_dict(),
            "reactor_to": None if self.reactor_to is None else self.reactor_to.to_dict(),
            "constants": self.constants.to_dict(),
            "source": self.source,
        }


def load_line(path: str | Path) -> LineDescription:
    """Read a line description file.

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    LineDescription

    Raises
    ------
    MissingFileError
        The file does not exist.
    FormatError
        The file is not valid TOML or breaks the schema; the message names file and key.
    """
    p = Path(path)
    data = read_toml(p, what="line description")
    return parse_line(data, source=str(p))


# ------------------------------------------------------------------------------- parsing


class _Reader:
    """Typed access to a TOML table with errors that name the file and the key."""

    def __init__(self, source: str) -> None:
        self.source = source

    def fail(self, key: str, problem: str) -> FormatError:
        return FormatError(f"{self.source}: key '{key}': {problem}")

    def table(self, data: Mapping[str, Any], key: str, where: str) -> Mapping[str, Any] | None:
        val = data.get(key)
        if val is None:
            return None
        if not isinstance(val, Mapping):
            raise self.fail(_join(where, key), "must be a table")
        return val

    def text(
        self, data: Mapping[str, Any], key: str, where: str, *, default: str | None = None
    ) -> str:
        val = data.get(key, default)
        if val is None:
            raise self.fail(_join(where, key), "is required")
        if not isinstance(val, str):
            raise self.fail(_join(where, key), f"must be text, got {val!r}")
        return val

    def number(
        self,
        data: Mapping[str, Any],
        key: str,
        where: str,
        *,
        default: float | None = None,
        positive: bool = True,
        allow_zero: bool = False,
        required: bool = True,
    ) -> float | None:
        val = data.get(key)
        if val is None:
            if default is not None or not required:
                return default
            raise self.fail(_join(where, key), "is required")
        if isinstance(val, bool) or not isinstance(val, (int, float)):
            raise self.fail(_join(where, key), f"must be a number, got {val!r}")
        out = float(val)
        if not math.isfinite(out):
            raise self.fail(_join(where, key), f"must be finite, got {val!r}")
        if positive and (out < 0 or (out == 0 and not allow_zero)):
            need = "≥ 0" if allow_zero else "> 0"
            raise self.fail(_join(where, key), f"must be {need}, got {val!r}")
        return out

    def req(self, data: Mapping[str, Any], key: str, where: str, **kw: Any) -> float:
        val = self.number(data, key, where, **kw)
        assert val is not None
        return val

    def unknown(self, data: Mapping[str, Any], allowed: set[str], where: str) -> None:
        extra = sorted(set(data) - allowed)
        if extra:
            raise self.fail(
                _join(where, extra[0]),
                f"unknown key (allowed here: {', '.join(sorted(allowed))})",
            )


def _join(where: str, key: str) -> str:
    return f"{where}.{key}" if where else key


def parse_line(data: Mapping[str, Any], *, source: str = "<line>") -> LineDescription:
    """Build a :class:`LineDescription` from a mapping in the line-file schema.

    Parameters
    ----------
    data : Mapping
        Parsed TOML (top-level table of a line file, or a table embedded elsewhere).
    source : str
        Name used in error messages (file path, or ``"scenario.toml [line]"``).

    Returns
    -------
    LineDescription
    """
    rd = _Reader(source)
    if not isinstance(data, Mapping):
        raise FormatError(f"{source}: a line description must be a table")
    rd.unknown(data, _TOP_KEYS, "")
    schema = data.get("schema", 1)
    if schema != 1:
        raise rd.fail("schema", f"this version reads schema 1, got {schema!r}")
    name = rd.text(data, "name", "")
    from_station = rd.text(data, "from_station", "")
    to_station = rd.text(data, "to_station", "")
    voltage_v = rd.req(data, "voltage_kv", "") * 1e3
    frequency_hz = rd.req(data, "frequency_hz", "")
    length_m = rd.req(data, "length_km", "") * 1e3
    transposed = data.get("transposed", True)
    if not isinstance(transposed, bool):
        raise rd.fail("transposed", f"must be true or false, got {transposed!r}")
    dead_time_s = rd.number(data, "dead_time_s", "", required=False)
    notes = rd.text(data, "notes", "", default="")

    geo_tab = rd.table(data, "geometry", "")
    seq_tab = rd.table(data, "sequence", "")
    if (geo_tab is None) == (seq_tab is None):
        raise rd.fail("geometry", "give exactly one of [geometry] or [sequence]")
    geometry: TowerGeometry | None = None
    try:
        if geo_tab is not None:
            geometry, earth_model = _parse_geometry(rd, geo_tab)
            raw = line_constants(geometry, frequency_hz=frequency_hz, earth_model=earth_model)
            constants = raw.transposed() if transposed else raw
        else:
            assert seq_tab is not None
            if not transposed:
                raise rd.fail(
                    "transposed", "sequence data describe a transposed line; use [geometry]"
                )
            constants = _parse_sequence(rd, seq_tab, frequency_hz)
            earth_model = "sequence"
    except ModelError as exc:
        where = "geometry" if geo_tab is not None else "sequence"
        raise rd.fail(where, str(exc)) from None

    reactor_from = reactor_to = None
    rea_tab = rd.table(data, "reactor", "")
    if rea_tab is not None:
        rd.unknown(rea_tab, {"from", "to"}, "reactor")
        f_tab = rd.table(rea_tab, "from", "reactor")
        t_tab = rd.table(rea_tab, "to", "reactor")
        if f_tab is not None:
            reactor_from = _parse_reactor(rd, f_tab, "reactor.from", voltage_v)
        if t_tab is not None:
            reactor_to = _parse_reactor(rd, t_tab, "reactor.to", voltage_v)

    return LineDescription(
        name=name,
        from_station=from_station,
        to_station=to_station,
        voltage_v=voltage_v,
        frequency_hz=frequency_hz,
        length_m=length_m,
        transposed=transposed,
        constants=constants,
        reactor_from=reactor_from,
        reactor_to=reactor_to,
        dead_time_s=dead_time_s,
        notes=notes,
        geometry=geometry,
        earth_model=earth_model,
        source=source,
    )


_CONDUCTOR_KEYS = {
    "diameter_mm",
    "gmr_mm",
    "resistance_ohm_per_km",
    "bundle_count",
    "bundle_spacing_m",
}


def _parse_bundle(rd: _Reader, tab: Mapping[str, Any], where: str) -> Bundle:
    rd.unknown(tab, _CONDUCTOR_KEYS, where)
    diameter_m = rd.req(tab, "diameter_mm", where) * 1e-3
    gmr = rd.number(tab, "gmr_mm", where, required=False)
    resistance = rd.req(tab, "resistance_ohm_per_km", where, allow_zero=True) * 1e-3
    count = tab.get("bundle_count", 1)
    if isinstance(count, bool) or not isinstance(count, int) or count < 1:
        raise rd.fail(f"{where}.bundle_count", f"must be a whole number ≥ 1, got {count!r}")
    spacing = rd.number(tab, "bundle_spacing_m", where, required=count > 1, default=None)
    try:
        cond = Conductor(
            diameter_m=diameter_m,
            resistance_ohm_per_m=resistance,
            gmr_m=None if gmr is None else gmr * 1e-3,
        )
        return Bundle(cond, n_sub=count, spacing_m=0.0 if spacing is None else spacing)
    except ModelError as exc:
        raise rd.fail(where, str(exc)) from None


def _parse_positions(
    rd: _Reader, items: Any, where: str, bundle: Bundle, *, phases: bool
) -> list[Wire]:
    if not isinstance(items, list) or not all(isinstance(t, Mapping) for t in items):
        raise rd.fail(where, "must be an array of tables ([[…]])")
    out: list[Wire] = []
    order: list[str] = []
    for i, tab in enumerate(items):
        w = f"{where}[{i}]"
        allowed = {"x_m", "height_m", "sag_m"} | ({"phase"} if phases else set())
        rd.unknown(tab, allowed, w)
        x_m = rd.req(tab, "x_m", w, positive=False)
        height_m = rd.req(tab, "height_m", w)
        sag_m = rd.req(tab, "sag_m", w, default=0.0, allow_zero=True)
        if phases:
            label = tab.get("phase", "ABC"[i] if i < 3 else "?")
            if label not in ("A", "B", "C"):
                raise rd.fail(f"{w}.phase", f"must be 'A', 'B' or 'C', got {label!r}")
            order.append(label)
        try:
            out.append(Wire(x_m=x_m, height_m=height_m, bundle=bundle, sag_m=sag_m))
        except ModelError as exc:
            raise rd.fail(w, str(exc)) from None
    if phases:
        if sorted(order) != ["A", "B", "C"]:
            raise rd.fail(where, f"needs one entry for each of A, B, C, got {order}")
        out = [out[order.index(p)] for p in "ABC"]
    return out


def _parse_geometry(rd: _Reader, tab: Mapping[str, Any]) -> tuple[TowerGeometry, str]:
    where = "geometry"
    rd.unknown(
        tab,
        {
            "earth_resistivity_ohm_m",
            "earth_model",
            "phase_conductor",
            "phase",
            "shield_wire_conductor",
            "shield_wire",
        },
        where,
    )
    rho = rd.req(tab, "earth_resistivity_ohm_m", where, default=100.0)
    earth_model = rd.text(tab, "earth_model", where, default="carson")
    if earth_model not in ("carson", "complex_depth"):
        raise rd.fail(
            f"{where}.earth_model", f"must be 'carson' or 'complex_depth', got {earth_model!r}"
        )
    pc = rd.table(tab, "phase_conductor", where)
    if pc is None:
        raise rd.fail(f"{where}.phase_conductor", "is required")
    bundle = _parse_bundle(rd, pc, f"{where}.phase_conductor")
    if "phase" not in tab:
        raise rd.fail(f"{where}.phase", "is required (three [[geometry.phase]] tables)")
    phases = _parse_positions(rd, tab["phase"], f"{where}.phase", bundle, phases=True)
    shields: list[Wire] = []
    if "shield_wire" in tab:
        sc = rd.table(tab, "shield_wire_conductor", where)
        if sc is None:
            raise rd.fail(f"{where}.shield_wire_conductor", "is required with shield wires")
        sb = _parse_bundle(rd, sc, f"{where}.shield_wire_conductor")
        shields = _parse_positions(rd, tab["shield_wire"], f"{where}.shield_wire", sb, phases=False)
    try:
        geo = TowerGeometry(
            phases=(phases[0], phases[1], phases[2]),
            shield_wires=tuple(shields),
            earth_resistivity_ohm_m=rho,
        )
    except ModelError as exc:
        raise rd.fail(where, str(exc)) from None
    return geo, earth_model


def _parse_sequence(rd: _Reader, tab: Mapping[str, Any], frequency_hz: float) -> LineConstants:
    where = "sequence"
    keys = (
        "r1_ohm_per_km",
        "x1_ohm_per_km",
        "c1_nf_per_km",
        "r0_ohm_per_km",
        "x0_ohm_per_km",
        "c0_nf_per_km",
    )
    rd.unknown(tab, set(keys), where)
    r1, x1, c1, r0, x0, c0 = (rd.req(tab, k, where, allow_zero=k[0] == "r") for k in keys)
    if not c1 > c0:
        raise rd.fail(f"{where}.c0_nf_per_km", f"must be below c1_nf_per_km ({c0} ≥ {c1})")
    return LineConstants.from_sequence(
        r1 * 1e-3, x1 * 1e-3, c1 * 1e-12, r0 * 1e-3, x0 * 1e-3, c0 * 1e-12, frequency_hz
    )


def _parse_reactor(
    rd: _Reader, tab: Mapping[str, Any], where: str, voltage_v: float
) -> FourLeggedReactor:
    rd.unknown(tab, {"mvar", "phase_ohm", "neutral_ohm", "quality_factor"}, where)
    mvar = rd.number(tab, "mvar", where, required=False)
    phase_ohm = rd.number(tab, "phase_ohm", where, required=False)
    if (mvar is None) == (phase_ohm is None):
        raise rd.fail(f"{where}.mvar", "give exactly one of mvar or phase_ohm")
    x_p = reactance_from_mvar_ohm(mvar * 1e6, voltage_v) if mvar is not None else phase_ohm
    neutral = tab.get("neutral_ohm", "solid")
    if neutral == "solid":
        x_n = 0.0
    elif isinstance(neutral, str):
        raise rd.fail(
            f"{where}.neutral_ohm", f"must be a number of ohms or 'solid', got {neutral!r}"
        )
    else:
        x_n = rd.req(tab, "neutral_ohm", where, allow_zero=True)
    q = rd.req(tab, "quality_factor", where, default=math.inf)
    assert x_p is not None
    try:
        return FourLeggedReactor(x_phase_ohm=x_p, x_neutral_ohm=x_n, quality_factor=q)
    except ModelError as exc:
        raise rd.fail(where, str(exc)) from None
