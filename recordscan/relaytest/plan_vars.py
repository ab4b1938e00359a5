"""Plan variables and the checking of plan values (see :mod:`recordscan.relaytest.plan`).

A plan variable is one thing a playback plan may vary between cases (voltage class,
length, compensation, fault location, arc parameters…). This module holds their
definitions, the checks of their values and the random draws of ``[random]`` tables;
:mod:`recordscan.relaytest.plan` applies them to the scenario.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from recordscan.errors import FormatError
from recordscan.synth.scenario import ELONGATION_LAWS, VT_KINDS

__all__ = [
    "VARIABLES",
    "Draw",
    "Variable",
    "Where",
    "check_value",
    "get_table",
    "get_variable",
    "num_key",
    "parse_draw",
    "reject_unknown",
]


# ----------------------------------------------------------------------------- variables
@dataclass(frozen=True)
class Variable:
    """A plan variable: what it may hold and what it changes in the scenario."""

    name: str
    kind: str  # "num", "choice", "bool", "file"
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    choices: tuple[Any, ...] = ()
    also: tuple[str, ...] = ()  # extra string values a number variable accepts
    meaning: str = ""


def _num(name: str, lo: float | None, hi: float | None, meaning: str, **kw: Any) -> Variable:
    return Variable(name, "num", lo=lo, hi=hi, meaning=meaning, **kw)


#: the plan variables (name → definition); docs/relaytest.md lists the same
VARIABLES: dict[str, Variable] = {
    v.name: v
    for v in (
        Variable("line_file", "file",
                 meaning="line description file (relative to the plan), instead of the base line"),
        Variable("voltage_kv", "choice", choices=(345, 400, 500, 765),
                 meaning="voltage class: the line becomes typical data of that class"),
        _num("length_km", 0.0, 1500.0, "line length", lo_open=True),
        _num("compensation", 0.0, 0.95,
             "shunt compensation degree (a bank at each end, half each); 0 = none"),
        _num("neutral_detuning", 0.0, 3.0,
             "neutral reactor / the tuned value (1 = tuned, 0 = solidly grounded bank)"),
        _num("location_pct", 0.5, 99.5, "fault location, % of length from the local end"),
        _num("load_angle_deg", -60.0, 60.0, "load angle of the local source"),
        _num("point_on_wave_deg", -360.0, 360.0, "fault inception angle"),
        _num("fault_resistance_ohm", 0.0, 1000.0, "fault resistance in series with the arc"),
        Variable("phase", "choice", choices=("A", "B", "C"), meaning="faulted phase"),
        Variable("permanent", "bool", meaning="a permanent fault (never goes out)"),
        _num("u0_v_per_m", 0.0, 50_000.0, "arc voltage gradient", lo_open=True),
        _num("r0_ohm_per_m", 0.0, 1.0, "arc resistance per length"),
        _num("tau0_s", 0.0, 0.1, "arc time constant", lo_open=True),
        _num("alpha", -2.0, 0.0, "arc time-constant exponent"),
        _num("l0_m", 0.0, 100.0, "initial arc length", lo_open=True),
        _num("g_min_siemens_per_m", 0.0, 1.0, "extinction conductance", lo_open=True),
        Variable("elongation", "choice", choices=ELONGATION_LAWS, meaning="arc elongation"),
        _num("elongation_speed_m_per_s", 0.0, 200.0, "linear elongation speed"),
        Variable("restrike", "bool", meaning="the arc may restrike"),
        _num("recovery_rate_scale", 0.0, 100.0, "dielectric recovery speed (lower: more "
             "restrikes)", lo_open=True),
        Variable("vt", "choice", choices=VT_KINDS, meaning="line VT kind"),
        _num("max_dead_time_s", 0.1, 10.0, "longest allowed dead time (overrides [reclose])"),
        _num("snr_db", 10.0, 120.0, "noise level, or \"none\"", also=("none",)),
    )
}  # fmt: skip


# ----------------------------------------------------------------------------- checking
class Where:
    """The plan file's name, for error messages that name the file and the key."""

    def __init__(self, path: str) -> None:
        self.path = path

    def fail(self, key: str, msg: str) -> FormatError:
        """A :class:`FormatError` ``"<file>: <key>: <msg>"`` (to raise)."""
        return FormatError(f"{self.path}: {key}: {msg}")


def check_value(w: Where, key: str, var: Variable, v: Any) -> Any:
    """Validate one value of a variable; return it normalised."""
    if var.kind == "bool":
        if not isinstance(v, bool):
            raise w.fail(key, f"expected true or false, got {v!r}")
        return v
    if var.kind == "file":
        if not isinstance(v, str) or not v.strip():
            raise w.fail(key, f"expected a file name, got {v!r}")
        return v
    if var.kind == "choice":
        if isinstance(v, str) and var.name == "phase":
            v = v.upper()
        ok = [c for c in var.choices if c == v and isinstance(v, bool) == isinstance(c, bool)]
        if not ok:
            opts = ", ".join(str(c) for c in var.choices)
            raise w.fail(key, f"must be one of {opts}, got {v!r}")
        return ok[0]
    if isinstance(v, str) and v in var.also:
        return v
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise w.fail(key, f"expected a number, got {v!r}")
    x = float(v)
    if not math.isfinite(x):
        raise w.fail(key, "must be finite")
    if var.lo is not None and (x < var.lo or (var.lo_open and x == var.lo)):
        raise w.fail(key, f"must be {'>' if var.lo_open else '>='} {var.lo:g}, got {x:g}")
    if var.hi is not None and x > var.hi:
        raise w.fail(key, f"must be <= {var.hi:g}, got {x:g}")
    return x


def get_variable(w: Where, key: str, name: str) -> Variable:
    """The definition of plan variable ``name`` (error at ``key`` when unknown)."""
    if name not in VARIABLES:
        raise w.fail(key, "unknown plan variable (see docs/relaytest.md for the list)")
    return VARIABLES[name]


@dataclass(frozen=True)
class Draw:
    """How a ``[random]`` variable is drawn."""

    name: str
    how: str  # "fixed", "range", "log_range", "choice", "probability"
    args: tuple[Any, ...]

    def draw(self, rng: np.random.Generator) -> Any:
        """One value (numbers rounded to 4 significant digits, so notes stay readable)."""
        if self.how == "fixed":
            return self.args[0]
        if self.how == "range":
            return _round(float(rng.uniform(self.args[0], self.args[1])))
        if self.how == "log_range":
            lo, hi = math.log(self.args[0]), math.log(self.args[1])
            return _round(float(math.exp(rng.uniform(lo, hi))))
        if self.how == "choice":
            return self.args[int(rng.integers(0, len(self.args)))]
        return bool(rng.random() < self.args[0])


def _round(x: float) -> float:
    return float(f"{x:.4g}")


def parse_draw(w: Where, name: str, spec: Any) -> Draw:
    """Parse ``random.<name>``: a plain value, or one of range, log_range, choice, probability."""
    key = f"random.{name}"
    var = get_variable(w, key, name)
    if not isinstance(spec, Mapping):
        return Draw(name, "fixed", (check_value(w, key, var, spec),))
    if len(spec) != 1:
        raise w.fail(key, "give exactly one of range, log_range, choice, probability")
    (how, arg), = spec.items()  # fmt: skip
    sub = f"{key}.{how}"
    if how in ("range", "log_range"):
        if var.kind != "num":
            raise w.fail(sub, f"{name} is not a number; use choice or probability")
        if not isinstance(arg, list) or len(arg) != 2:
            raise w.fail(sub, "expected [low, high]")
        lo, hi = (check_value(w, sub, var, a) for a in arg)
        if isinstance(lo, str) or isinstance(hi, str):
            raise w.fail(sub, "a range needs numbers")
        if lo > hi:
            raise w.fail(sub, f"low {lo:g} is above high {hi:g}")
        if how == "log_range" and lo <= 0:
            raise w.fail(sub, "a log_range needs positive bounds")
        return Draw(name, how, (lo, hi))
    if how == "choice":
        if not isinstance(arg, list) or not arg:
            raise w.fail(sub, "expected a non-empty list of values")
        return Draw(name, how, tuple(check_value(w, sub, var, a) for a in arg))
    if how == "probability":
        if var.kind != "bool":
            raise w.fail(sub, f"{name} is not true/false; use range or choice")
        if isinstance(arg, bool) or not isinstance(arg, (int, float)) or not 0 <= arg <= 1:
            raise w.fail(sub, f"expected a number from 0 to 1, got {arg!r}")
        return Draw(name, how, (float(arg),))
    raise w.fail(sub, "unknown draw; use range, log_range, choice or probability")


def get_table(w: Where, data: Mapping[str, Any], key: str) -> dict[str, Any]:
    """``data[key]`` as a dict (empty when absent; error when not a table)."""
    v = data.get(key, {})
    if not isinstance(v, Mapping):
        raise w.fail(key, "must be a table")
    return dict(v)


def num_key(
    w: Where,
    t: Mapping[str, Any],
    prefix: str,
    key: str,
    default: float | None,
    *,
    lo: float,
    hi: float,
) -> float | None:
    """A number ``t[key]`` within ``[lo, hi]``, or ``default`` when absent."""
    if key not in t:
        return default
    v = t[key]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(float(v)):
        raise w.fail(f"{prefix}.{key}", f"expected a number, got {v!r}")
    if not lo <= float(v) <= hi:
        raise w.fail(f"{prefix}.{key}", f"must be from {lo:g} to {hi:g}, got {v:g}")
    return float(v)


def reject_unknown(w: Where, t: Mapping[str, Any], prefix: str, known: Sequence[str]) -> None:
    """Raise on the first key of ``t`` not in ``known`` (typos do not pass silently)."""
    extra = sorted(set(t) - set(known))
    if extra:
        name = f"{prefix}.{extra[0]}" if prefix else extra[0]
        raise w.fail(name, "unknown key (see docs/relaytest.md)")
