"""``recordscan testset``: a plan file → a relay playback set (COMTRADE records + manifest)."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from recordscan.cli.common import CAUTION, echo_json


@click.command("testset")
@click.argument("plan_file", metavar="PLAN.toml", type=click.Path(path_type=Path, dir_okay=False))
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(path_type=Path, file_okay=False),
    help="Folder for the playback records and manifest.json/.csv.",
)
@click.option("--json", "as_json", is_flag=True, help="Print the summary as JSON.")
def testset(plan_file: Path, out_dir: Path, as_json: bool) -> None:
    """Simulate every case of PLAN.toml and write the relay playback set to --out.

    Records are written at secondary values (the plan's VT and CT ratios); the manifest
    lists each case's truth: fault inception, restrikes, final extinction and the latest
    permissible reclose permit. Schema and example: docs/relaytest.md.
    """
    from recordscan.errors import ModelError
    from recordscan.relaytest.plan import load_plan
    from recordscan.relaytest.playback import build_playback_set

    plan = load_plan(plan_file)  # a bad plan stops here, before anything is written
    with click.progressbar(
        length=len(plan.cases), label="simulating cases", file=sys.stderr, show_pos=True
    ) as bar:
        result = build_playback_set(plan, out_dir, progress=lambda *_: bar.update(1))
    s = result.summary()
    if as_json:
        echo_json({**s, "caution": CAUTION})
    else:
        click.echo(
            f"{s['cases']} case(s) written to {out_dir}: {s['expected_permits']} expect a "
            f"reclose permit, {s['expected_blocks']} expect a block "
            f"({s['permanent_faults']} permanent fault(s)); "
            f"{s['cases_with_restrikes']} with restrikes"
        )
        click.echo(f"manifest: {result.manifest_json_path} and {result.manifest_csv_path.name}")
        click.echo(f"files: {s['n_files']}")
        for f in result.failures:
            click.echo(f"  FAILED {f.case} ({f.origin}): {f.error}")
        click.echo(CAUTION)
    if result.failures:
        first = result.failures[0]
        raise ModelError(
            f"{len(result.failures)} of {len(plan.cases)} case(s) could not be simulated "
            f"(listed in manifest.json); first: {first.case}: {first.error}"
        )
