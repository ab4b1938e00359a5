"""``recordscan coupling``: secondary-arc current and recovery voltage of a described line."""

from __future__ import annotations

import math
from typing import Any

import click

from recordscan.cli.common import CAUTION, echo_json


def _num(value: float | None, scale: float = 1.0, fmt: str = ".1f") -> str:
    if value is None or not math.isfinite(value):
        return "—"
    return format(value * scale, fmt)


def format_report(line: Any, results: dict[str, Any], detuning: Any | None) -> str:
    """Readable text report over the library results (display units here only)."""
    out = [
        f"{line.name}: {line.from_station} – {line.to_station}, "
        f"{line.voltage_v / 1e3:.0f} kV, {line.frequency_hz:g} Hz, {line.length_m / 1e3:.1f} km, "
        f"{'transposed' if line.transposed else 'not transposed'}",
        f"  line constants ({line.earth_model}): "
        f"C1 {line.constants.c1_f_per_m * 1e12:.3f} nF/km, "
        f"C0 {line.constants.c0_f_per_m * 1e12:.3f} nF/km, "
        f"X1 {line.constants.x1_ohm_per_m * 1e3:.4f} Ω/km, "
        f"X0 {line.constants.x0_ohm_per_m * 1e3:.4f} Ω/km",
    ]
    for end, bank in zip((line.from_station, line.to_station), line.reactors, strict=True):
        if bank is not None:
            neutral = (
                "solidly grounded"
                if bank.x_neutral_ohm == 0
                else f"neutral reactor {bank.x_neutral_ohm:.1f} Ω"
            )
            out.append(
                f"  reactor at {end}: {bank.mvar_at(line.voltage_v) / 1e6:.1f} Mvar "
                f"(X_p {bank.x_phase_ohm:.1f} Ω), {neutral}"
            )
    if any(b is not None for b in line.reactors):
        out.append(f"  compensation {line.compensation * 100:.1f} %")
    if line.dead_time_s is not None:
        out.append(f"  dead time setting {line.dead_time_s:.3f} s")
    first = next(iter(results.values()))
    out.append(
        f"  load {first.load_current_a:.0f} A, lagging {first.load_angle_deg:.1f}°"
        + ("" if first.profile is None else "; worst fault position of a scan along the line")
    )
    out.append("")
    head = (
        ("phase", "", 5),
        ("fault at", "[km]", 8),
        ("arc current", "[A rms]", 11),
        ("capacitive", "[A]", 10),
        ("inductive", "[A]", 9),
        ("recovery", "[kV rms]", 9),
        ("", "[pu]", 6),
        ("highest", "[kV pk]", 8),
        ("free freq.", "[Hz]", 10),
        ("beat", "[Hz]", 6),
    )
    out.append(
        "  " + "  ".join(f"{a:>{n}}" if i else f"{a:<{n}}" for i, (a, _, n) in enumerate(head))
    )
    out.append("  " + "  ".join(f"{b:>{n}}" for _, b, n in head))
    for ph, r in results.items():
        cells = (
            f"{ph:<5}",
            f"{r.fault_at_m / 1e3:8.1f}",
            f"{r.secondary_arc_current_rms_a:11.2f}",
            f"{r.capacitive_component_a:10.2f}",
            f"{r.inductive_component_a:9.2f}",
            f"{r.recovery_voltage_rms_v / 1e3:9.2f}",
            f"{r.recovery_voltage_pu:6.4f}",
            f"{r.recovery_voltage_peak_max_v / 1e3:8.1f}",
            f"{_num(r.free_frequency_hz, fmt='.2f'):>10}",
            f"{_num(r.beat_frequency_hz, fmt='.2f'):>6}",
        )
        out.append("  " + "  ".join(cells))
    if detuning is not None:
        out.append("")
        out.append("  neutral reactor detuning (all banks scaled together):")
        out.append("  factor  X_n [Ω] (from/to)     arc current [A]  recovery [kV]  [pu]")
        for i, f in enumerate(detuning.factors):
            xn = "/".join(_num(x, fmt=".1f") for x in detuning.neutral_reactor_ohm[i])
            out.append(
                f"  {f:6.2f}  {xn:<20}  {detuning.secondary_arc_current_rms_a[i]:15.2f}  "
                f"{detuning.recovery_voltage_rms_v[i] / 1e3:13.2f}  "
                f"{detuning.recovery_voltage_pu[i]:.4f}"
            )
    out.append("")
    out.append("  Steady state at rated frequency, the arc taken as a short circuit. After")
    out.append("  extinction the free part (trapped charge, or the oscillation at the free")
    out.append("  frequency) adds to the forced recovery voltage: 'highest' = 2·√2·rms,")
    out.append("  a lossless upper estimate.")
    out.append(CAUTION)
    return "\n".join(out)


@click.command("coupling")
@click.argument("line_file", type=click.Path(path_type=str))
@click.option(
    "--load-a",
    "load_a",
    type=float,
    default=0.0,
    show_default=True,
    help="Healthy-phase load current, A rms (negative: towards the from end).",
)
@click.option(
    "--load-angle",
    "load_angle",
    type=float,
    default=0.0,
    show_default=True,
    help="Lag of the load current behind its phase voltage, degrees.",
)
@click.option(
    "--fault-at",
    "fault_at_km",
    type=float,
    default=None,
    help="Fault distance from the from end, km (default: worst of a scan).",
)
@click.option(
    "--phase",
    type=click.Choice(["A", "B", "C"]),
    default=None,
    help="The open phase (default: all three).",
)
@click.option("--detuning", is_flag=True, help="Add a neutral-reactor detuning sweep.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document.")
def coupling(
    line_file: str,
    load_a: float,
    load_angle: float,
    fault_at_km: float | None,
    phase: str | None,
    detuning: bool,
    as_json: bool,
) -> None:
    """Secondary-arc current and recovery voltage of LINE_FILE with one pole open."""
    from recordscan.physics.coupling import detuning_sweep, open_phase_coupling
    from recordscan.physics.line import load_line

    line = load_line(line_file)
    fault_at_m = None if fault_at_km is None else fault_at_km * 1e3
    kw = {"fault_at_m": fault_at_m, "load_current_a": load_a, "load_angle_deg": load_angle}
    phases = [phase] if phase else ["A", "B", "C"]
    results = {ph: open_phase_coupling(line, faulted_phase=ph, **kw) for ph in phases}
    worst = max(results, key=lambda ph: results[ph].secondary_arc_current_rms_a)
    sweep = None
    if detuning:
        at = results[worst].fault_at_m
        sweep = detuning_sweep(line, faulted_phase=worst, **{**kw, "fault_at_m": at})
    if as_json:
        echo_json(
            {
                "line": line.to_dict(),
                "results": {ph: r.to_dict() for ph, r in results.items()},
                "worst_phase": worst,
                "detuning": None if sweep is None else sweep.to_dict(),
                "caution": CAUTION,
            }
        )
    else:
        click.echo(format_report(line, results, sweep))
