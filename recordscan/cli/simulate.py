"""``recordscan simulate``: scenario files (or a random sweep) → COMTRADE records + truth JSON."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from recordscan.cli.common import CAUTION, atomic_write_text, echo_json, to_json_text

_FORMATS = ("ASCII", "BINARY", "BINARY32", "FLOAT32")


def _fmt_s(v: Any) -> str:
    return "—" if v is None else f"{v:.3f} s"


def _summary(name: str, truth: dict[str, Any]) -> str:
    parts = [f"{name}: {truth['event']}"]
    if truth.get("faulted_phase"):
        parts.append(f"phase {'/'.join(truth['faulted_phases'])}")
    if truth["event"] == "single_pole_trip":
        parts.append(f"restrikes {len(truth['restrike_s'])}")
        parts.append(f"extinction {_fmt_s(truth['extinction_s'])}")
        closes = [t for t in truth["reclose_s"].values() if t is not None]
        parts.append(f"reclose {_fmt_s(min(closes, default=None))}")
        parts.append(f"outcome {truth['outcome']}")
    return ", ".join(parts)


@click.command("simulate")
@click.argument("scenarios", nargs=-1, type=click.Path(path_type=Path, dir_okay=False))
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(path_type=Path, file_okay=False),
    help="Folder for the COMTRADE files and truth JSON.",
)
@click.option(
    "--sweep",
    "sweep_n",
    type=click.IntRange(min=1),
    default=None,
    help="Draw N random scenarios; files given are then range files with a [sweep] table.",
)
@click.option("--seed", type=click.IntRange(min=0), default=0, show_default=True,
              help="Seed of the random sweep.")  # fmt: skip
@click.option(
    "--format",
    "data_format",
    type=click.Choice(_FORMATS, case_sensitive=False),
    default=None,
    help="Override the scenarios' COMTRADE data format.",
)
@click.option(
    "--revision",
    type=click.Choice(["1999", "2013"]),
    default=None,
    help="Override the scenarios' COMTRADE revision.",
)
@click.option("--cff/--no-cff", "cff", default=None, help="Write a single .cff file (2013).")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document with the truths.")
def simulate(
    scenarios: tuple[Path, ...],
    out_dir: Path,
    sweep_n: int | None,
    seed: int,
    data_format: str | None,
    revision: str | None,
    cff: bool | None,
    as_json: bool,
) -> None:
    """Simulate events from SCENARIO files and write COMTRADE records plus truth JSON.

    With --sweep N, N scenarios are drawn from built-in ranges (or from the [sweep] table
    of the files given) with --seed; each one's scenario TOML is written beside its
    records, with an index.json listing them all.
    """
    from recordscan.errors import FormatError, ModelError
    from recordscan.synth import load_scenario
    from recordscan.synth.generate import simulate as run
    from recordscan.synth.generate import write_event
    from recordscan.synth.scenario_toml import scenario_to_toml
    from recordscan.synth.sweep import draw_scenarios, load_ranges

    if sweep_n is not None:
        if len(scenarios) > 1:
            raise FormatError("--sweep takes at most one range file")
        ranges = load_ranges(scenarios[0]) if scenarios else None
        items = list(draw_scenarios(sweep_n, seed=seed, ranges=ranges))
    else:
        if not scenarios:
            raise click.UsageError("give one or more scenario files, or --sweep N")
        items = [load_scenario(p) for p in scenarios]
    if revision == "1999" and cff:
        raise FormatError("a .cff container is a 2013 revision feature; drop --cff")
    if revision == "1999" and data_format and data_format.upper() not in ("ASCII", "BINARY"):
        raise FormatError("revision 1999 has ASCII and BINARY only")

    out_dir.mkdir(parents=True, exist_ok=True)
    index: list[dict[str, Any]] = []
    failures: list[str] = []
    for sc in items:
        rev = revision
        if data_format is not None and data_format.upper() not in ("ASCII", "BINARY"):
            rev = rev or "2013"
        if cff:
            rev = "2013"
        try:
            event = run(sc)
            paths = write_event(event, out_dir, revision=rev, data_format=data_format, cff=cff)
        except ModelError as exc:
            if sweep_n is None:
                raise
            failures.append(f"{sc.name}: {exc}")
            continue
        if sweep_n is not None:
            atomic_write_text(out_dir / f"{sc.name}.scenario.toml", scenario_to_toml(sc))
        truth = {k: v for k, v in event.truth.items() if k != "scenario_echo"}
        index.append({"name": sc.name, "files": [p.name for p in paths], "truth": truth})
        if not as_json:
            click.echo(_summary(sc.name, truth))
    if sweep_n is not None:
        atomic_write_text(
            out_dir / "index.json",
            to_json_text({"seed": seed, "n": sweep_n, "events": index}, indent=1) + "\n",
        )
    if as_json:
        echo_json({"out": str(out_dir), "events": index, "caution": CAUTION})
    else:
        click.echo(f"wrote {len(index)} event(s) to {out_dir}")
        click.echo(CAUTION)
    if failures:
        raise ModelError(
            f"{len(failures)} of {len(items)} scenario(s) could not be simulated; first: "
            f"{failures[0]}"
        )
