"""Regenerate the demo records in ``sample_records/`` from ``sample_records/scenarios/``.

Run ``python -m recordscan.synth.demo`` from a source checkout (or give ``--scenarios`` and
``--out``). Every scenario is simulated, written as COMTRADE with its truth JSON, and
checked against what the demo is meant to show (:data:`EXPECTED`); a scenario whose
simulated outcome no longer matches is reported and the exit status is 1, so a change in
the physics that alters the demo does not go unnoticed.

The utility, stations, lines and events are fictional ("Valdmere Transmission").
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from recordscan.synth.generate import simulate, write_event
from recordscan.synth.scenario import load_scenario

__all__ = ["EXPECTED", "main", "regenerate"]

#: scenario name → (event, outcome, minimum number of restrikes)
EXPECTED: dict[str, tuple[str, str, int]] = {
    "AB500-20260314-0926": ("single_pole_trip", "success", 0),
    "BC765-20260402-1417": ("single_pole_trip", "success", 0),
    "CD345-20260511-0342": ("single_pole_trip", "reclose_onto_fault", 0),
    "DE400-20260619-2203": ("single_pole_trip", "success", 1),
    "AB500-20260703-1150": ("single_pole_trip", "reclose_onto_fault", 0),
    "CD345-20260801-0600": ("no_fault", "no_reclose", 0),
    "DE400-20260912-1533": ("three_pole_trip", "no_reclose", 0),
    "CD345-20261020-1010-staged": ("single_pole_trip", "success", 0),
}


def _default_root() -> Path:
    return Path(__file__).resolve().parents[2] / "sample_records"


def regenerate(scenario_dir: Path, out_dir: Path) -> list[str]:
    """Simulate and write every ``*.toml`` in ``scenario_dir``; return the mismatches."""
    problems: list[str] = []
    files = sorted(scenario_dir.glob("*.toml"))
    if not files:
        problems.append(f"{scenario_dir}: no scenario files")
    for f in files:
        sc = load_scenario(f)
        event = simulate(sc)
        paths = write_event(event, out_dir)
        tr = event.truth
        got = (tr["event"], tr["outcome"], len(tr["restrike_s"]))
        print(
            f"{f.name}: {got[0]}, {got[1]}, {got[2]} restrike(s) → "
            + ", ".join(p.name for p in paths)
        )
        want = EXPECTED.get(sc.name)
        if want is not None and (got[0] != want[0] or got[1] != want[1] or got[2] < want[2]):
            problems.append(f"{f.name}: expected {want}, simulated {got}")
    return problems


def main(argv: list[str] | None = None) -> int:
    """Command-line entry point (``python -m recordscan.synth.demo``)."""
    root = _default_root()
    ap = argparse.ArgumentParser(prog="python -m recordscan.synth.demo", description=__doc__)
    ap.add_argument("--scenarios", type=Path, default=root / "scenarios")
    ap.add_argument("--out", type=Path, default=root)
    args = ap.parse_args(argv)
    problems = regenerate(args.scenarios, args.out)
    for p in problems:
        print(f"demo mismatch: {p}", file=sys.stderr)
    return 1 if problems else 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
