"""``recordscan verify``: a relay's extinction detection against known truth."""

from __future__ import annotations

from pathlib import Path

import click

from recordscan.cli.common import CAUTION, atomic_write_bytes, atomic_write_text, to_json_text


@click.command("verify")
@click.argument("results", nargs=-1, required=True, type=click.Path(path_type=str))
@click.option("--manifest", type=click.Path(dir_okay=False), help="manifest.json/.csv of the set.")
@click.option("--max-latency-cycles", default=3.0, show_default=True, type=float)
@click.option("--max-premature", default=0, show_default=True, type=int)
@click.option("--max-missed", default=0, show_default=True, type=int)
@click.option("--max-no-response", default=0, show_default=True, type=int)
@click.option(
    "--profile", type=click.Path(dir_okay=False), help="Profile mapping the permit output."
)
@click.option("--json", "as_json", is_flag=True, help="Print the verification as JSON.")
@click.option(
    "--report", "report_dir", type=click.Path(file_okay=False), help="Write HTML + JSON here."
)
def verify(
    results: tuple[str, ...],
    manifest: str | None,
    max_latency_cycles: float,
    max_premature: int,
    max_missed: int,
    max_no_response: int,
    profile: str | None,
    as_json: bool,
    report_dir: str | None,
) -> None:
    """Compare a relay's reclose permits (CSV or captured records) with the truth."""
    from recordscan.relaytest.collect import verify_paths
    from recordscan.relaytest.verify import AcceptanceLimits

    limits = AcceptanceLimits(max_latency_cycles, max_premature, max_missed, max_no_response)
    rep = verify_paths(results, manifest=manifest, limits=limits, profile=profile).to_dict()
    if report_dir:
        from recordscan.plot.event import figure_png
        from recordscan.plot.relaytest import plot_case_timelines, plot_latency_histogram
        from recordscan.report.verify_page import render_verify_page

        figs = {
            "Latency histogram": figure_png(
                plot_latency_histogram(rep, limit_cycles=max_latency_cycles)
            ),
            "Case timelines": figure_png(plot_case_timelines(rep["cases"][:60])),
        }
        out = Path(report_dir)
        atomic_write_text(out / "verification.json", to_json_text(rep, indent=1))
        atomic_write_text(out / "verification.html", render_verify_page(rep, figures=figs))
        atomic_write_bytes(out / "latency.png", figs["Latency histogram"])
    if as_json:
        click.echo(to_json_text(rep))
        return
    c = rep["counts"]
    click.echo(
        f"{c['cases']} cases: {c['premature_permit']} premature permit(s), "
        f"{c['missed_permit']} missed, {c['no_response']} without response, "
        f"{c['correct_permit']} correct permit(s), {c['correct_block']} correct block(s)"
    )
    for v in rep["cases"]:
        if v["verdict"] == "premature_permit":
            click.echo(f"  DANGER {v['case']}: {v['detail']}")
    lat = rep["latency_s"]
    if lat.get("median") is not None:
        click.echo(
            f"latency after extinction: median {lat['median'] * 1e3:.1f} ms, "
            f"95th percentile {lat['p95'] * 1e3:.1f} ms, worst {lat['max'] * 1e3:.1f} ms"
        )
    for crit in rep["criteria"]:
        mark = "pass" if crit["passed"] else "FAIL"
        click.echo(f"  [{mark}] {crit['criterion']}: {crit['measured']} (limit {crit['limit']})")
    for g in rep["guidance"]:
        click.echo(g)
    click.echo("RESULT: " + ("PASSED" if rep["passed"] else "FAILED"))
    if report_dir:
        click.echo(f"report: {Path(report_dir) / 'verification.html'}")
    click.echo(CAUTION)
