"""The ``recordscan`` command.

Each sub-command lives in its own module of :mod:`recordscan.cli` and is imported only when
it is run, so that a quick ``recordscan inspect`` does not pay for scipy or matplotlib.
Deliberate errors (:class:`recordscan.errors.RecordScanError`) become a one-line message on
stderr and exit code 2.
"""

from __future__ import annotations

import sys
from importlib import import_module

import click

from recordscan import __version__

#: command name → (module, attribute, one-line help)
COMMANDS: dict[str, tuple[str, str, str]] = {
    "inspect": ("recordscan.cli.inspect", "inspect", "Summarise a COMTRADE record."),
    "export": ("recordscan.cli.export", "export", "Export a time window to CSV/Parquet/COMTRADE."),
    "scan": ("recordscan.cli.scan", "scan", "Find the single-pole trip event chain in records."),
    "coupling": ("recordscan.cli.coupling", "coupling", "Open-phase coupling of a described line."),
    "simulate": (
        "recordscan.cli.simulate",
        "simulate",
        "Simulate an event; write COMTRADE and truth.",
    ),
    "fit": ("recordscan.cli.fit", "fit", "Back-calculate arc-model parameters from a record."),
    "db": ("recordscan.cli.db", "db", "The arc-parameter database: store, statistics, reports."),
    "testset": ("recordscan.cli.testset", "testset", "Write a relay playback set from a plan."),
    "verify": ("recordscan.cli.verify", "verify", "Verify a relay's extinction detection."),
}


class LazyGroup(click.Group):
    """A click group that imports each command's module on first use."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(name for name in COMMANDS if _available(name))

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        if cmd_name not in COMMANDS:
            return None
        module, attr, _ = COMMANDS[cmd_name]
        try:
            mod = import_module(module)
        except ModuleNotFoundError as exc:
            if exc.name == module:
                return None
            raise
        return getattr(mod, attr)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        rows = [(name, COMMANDS[name][2]) for name in self.list_commands(ctx)]
        if rows:
            with formatter.section("Commands"):
                formatter.write_dl(rows)


def _available(name: str) -> bool:
    from importlib.util import find_spec

    try:
        return find_spec(COMMANDS[name][0]) is not None
    except ModuleNotFoundError:
        return False


@click.group(cls=LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="recordscan")
def cli() -> None:
    """recordscan: secondary-arc evidence from COMTRADE records.

    Results support, never replace, the judgement of a qualified protection engineer;
    defer to local codes and licensed practice.
    """


def main(argv: list[str] | None = None) -> None:
    """Entry point: run the CLI and map deliberate errors to exit code 2."""
    from recordscan.errors import RecordScanError

    try:
        cli.main(args=argv, prog_name="recordscan", standalone_mode=False)
    except click.exceptions.Abort:
        click.echo("recordscan: aborted", err=True)
        sys.exit(1)
    except click.ClickException as exc:
        exc.show()
        sys.exit(exc.exit_code)
    except RecordScanError as exc:
        click.echo(f"recordscan: error: {exc}", err=True)
        sys.exit(2)
    except BrokenPipeError:  # pragma: no cover - e.g. piped into head
        sys.exit(0)
    sys.exit(0)
