"""Command-line interface of solair: a thin layer over the library.

Each command lives in its own module under ``solair/cli/`` and is imported only
when it is invoked, so ``solair --help`` stays instant. Every
:class:`solair.errors.SolairError` raised by a command becomes one line on
stderr and exit status 2.
"""

from __future__ import annotations

import importlib
import sys

import click

from solair.errors import SolairError

# command name -> (module, attribute, one-line help shown by `solair --help`)
COMMANDS: dict[str, tuple[str, str, str]] = {
    "info": ("solair.cli.info", "info",
             "Vet a weather file: site, period, fills and ranges per field."),
    "run": ("solair.cli.run", "run",
            "Hourly sol-air temperature and R_se per surface, as CSV or NetCDF."),
    "compare": ("solair.cli.compare", "compare",
                "Compare finishes: surface response and risk metrics per surface."),
    "batch": ("solair.cli.batch", "batch",
              "Run a portfolio of climates x surfaces x finishes (dask)."),
    "plot": ("solair.cli.plot", "plot", "Draw a figure from a run, compare or batch result."),
    "report": ("solair.cli.report", "report", "Write a self-contained HTML report from results."),
}


class _LazyGroup(click.Group):
    """A click group whose subcommands are imported on first use."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        return list(COMMANDS)

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        if cmd_name not in COMMANDS:
            return None
        module, attr, _ = COMMANDS[cmd_name]
        return getattr(importlib.import_module(module), attr)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        rows = [(name, COMMANDS[name][2]) for name in self.list_commands(ctx)]
        if rows:
            with formatter.section("Commands"):
                formatter.write_dl(rows)


class _SolairCommandGroup(_LazyGroup):
    """Turns solair's errors and click's usage errors (bad option value, missing option) of
    every command into one line on stderr and exit status 2."""

    def invoke(self, ctx: click.Context):  # noqa: D102
        try:
            return super().invoke(ctx)
        except SolairError as exc:
            click.echo(f"solair: error: {exc}", err=True)
            ctx.exit(2)
        except click.UsageError as exc:
            click.echo(f"solair: error: {' '.join(exc.format_message().split())}", err=True)
            ctx.exit(2)


def fail(message: str):
    """Raise the one-line error of a bad command-line option (exit status 2)."""
    from solair.errors import ConfigurationError

    raise ConfigurationError(message)


@click.group(cls=_SolairCommandGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="solair", prog_name="solair")
def cli() -> None:
    """solair: exterior equivalent (sol-air) temperature of building surfaces.

    Reads EPW, TMY3 and TMY2 weather files and computes, hour by hour and per
    surface, the sol-air temperature and the external surface resistance
    R_se. Results are engineering estimates: verify them against local codes
    and licensed professional practice.
    """


def main() -> None:
    """Entry point of the ``solair`` console script."""
    cli(prog_name="solair")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
