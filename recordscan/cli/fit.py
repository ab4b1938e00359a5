"""``recordscan fit``: arc-model parameters from a record."""

from __future__ import annotations

from pathlib import Path

import click

from recordscan.cli.common import CAUTION, atomic_write_bytes, to_json_text


@click.command("fit")
@click.argument("record_path", metavar="RECORD", type=click.Path(path_type=str))
@click.option(
    "--line",
    "line_path",
    type=click.Path(dir_okay=False),
    help="Line description (indirect fit of terminal records).",
)
@click.option(
    "--remote",
    "remote_path",
    type=click.Path(dir_okay=False),
    help="The other terminal's record of the same event (indirect fit).",
)
@click.option(
    "--period",
    type=click.Choice(["both", "primary", "secondary"]),
    default="both",
    show_default=True,
)
@click.option(
    "--law",
    type=click.Choice(["auto", "constant", "linear", "johns"]),
    default="auto",
    show_default=True,
    help="Arc elongation law.",
)
@click.option("--l0", "l0_m", type=float, help="Initial arc length in m (default 3).")
@click.option(
    "--bootstrap",
    "n_bootstrap",
    default=0,
    show_default=True,
    type=click.IntRange(0, 1000),
    help="Block-bootstrap refits for 95 % intervals.",
)
@click.option("--profile", type=click.Path(dir_okay=False), help="Recorder profile.")
@click.option("--json", "as_json", is_flag=True, help="Print JSON (one object per period).")
@click.option("--plot", "plot_dir", type=click.Path(file_okay=False), help="Write figures here.")
@click.option(
    "--db",
    "db_url",
    is_flag=False,
    flag_value="",
    default=None,
    help="Attach the secondary-arc fit to the record in the arc-parameter database "
    "(path or URL; bare --db = default). Store the record first with scan --db.",
)
def fit(
    record_path: str,
    line_path: str | None,
    remote_path: str | None,
    period: str,
    law: str,
    l0_m: float | None,
    n_bootstrap: int,
    profile: str | None,
    as_json: bool,
    plot_dir: str | None,
    db_url: str | None,
) -> None:
    """Back-calculate arc-model parameters from RECORD."""
    from recordscan.fit import DirectFitOptions, IndirectFitOptions, fit_record
    from recordscan.io import read

    record = read(record_path, profile=profile)
    remote = read(remote_path, profile=profile) if remote_path else None
    if line_path is None and remote is not None:
        raise click.UsageError("--remote needs --line (the indirect fit uses the line model)")
    periods = ("primary", "secondary") if period == "both" else (period,)
    results = fit_record(
        record,
        periods=periods,
        l0_m=l0_m,
        options=DirectFitOptions(law=law, n_bootstrap=n_bootstrap),
        line=line_path,
        remote=remote,
        indirect_options=IndirectFitOptions(law="linear" if law == "auto" else law),
    )
    if plot_dir:
        from recordscan.plot.event import figure_png
        from recordscan.plot.fit import plot_fit

        for r in results:
            png = figure_png(plot_fit(r))
            atomic_write_bytes(Path(plot_dir) / f"{Path(record_path).stem}-{r.period}-fit.png", png)
    for r in results:
        d = r.to_dict()
        d["file"] = record_path
        d["sha256"] = record.provenance.sha256
        if as_json:
            click.echo(to_json_text(d))
            continue
        click.echo(
            f"{Path(record_path).name}: {r.method} fit of the {r.period} arc "
            f"({r.t_window_s[0]:.3f}–{r.t_window_s[1]:.3f} s, {r.n_samples} samples)"
        )
        for name, est in r.estimates.items():
            sd = "" if est.stderr is None else f" ± {est.stderr:.3g}"
            warn = "" if est.plausible else "  OUTSIDE PUBLISHED RANGE"
            click.echo(f"  {name:<14} {est.value:.5g}{sd}  [{est.status}]{warn}")
        click.echo(f"  elongation law: {r.elongation_law} {dict(r.elongation_params)}")
        click.echo(
            f"  residual: {r.residual_rms:.4g} V rms ({100 * r.residual_rel:.2f} %); "
            f"{'converged' if r.success else 'NOT USABLE'}: {r.message}"
        )
        for f in r.flags:
            click.echo(f"  note: {f}")
    if db_url is not None:
        from recordscan.fleet.store import open_store

        keep = [r for r in results if r.period == "secondary"] or results[-1:]
        from recordscan.errors import StoreError

        with open_store(db_url or None) as store:
            try:
                for r in keep:
                    store.add_fit(record.provenance.sha256, r.to_dict())
            except StoreError as exc:
                raise StoreError(
                    f"{exc}; store the record first: recordscan scan {record_path} --db …"
                ) from None
            if not as_json:
                click.echo(
                    f"stored the {keep[0].method} {keep[0].period}-arc fit in {store.url_display}"
                )
    if not as_json:
        click.echo(CAUTION)
