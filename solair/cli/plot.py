"""``solair plot``: draw one figure from a run, compare or batch result."""

from __future__ import annotations

from pathlib import Path

import click

from solair.errors import ConfigurationError

_KINDS = ("carpet", "duration", "monthly", "finishes", "portfolio", "sky-spread")


@click.command("plot")
@click.argument("result", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--kind", "kind", required=True, type=click.Choice(_KINDS),
              help="carpet: day x hour colour map; duration: sorted hourly values per surface; "
                   "monthly: monthly mean and 10-90 % band; finishes: metric bars per finish; "
                   "portfolio: metric per climate x surface (batch summary CSV); "
                   "sky-spread: band over the sky models for one week.")
@click.option("--surface", "surfaces", multiple=True, metavar="NAME",
              help="Surface to draw (repeatable; default all, or the first for carpet and "
                   "sky-spread).")
@click.option("--variable", default=None, metavar="NAME",
              help="Hourly variable (default temp_sol_air, else temp_surface).")
@click.option("--minus-air", is_flag=True,
              help="Carpet of the variable minus the air temperature, colours centred on 0 K.")
@click.option("--finish", default=None, metavar="NAME",
              help="Finish of a compare/batch result or summary (default the first).")
@click.option("--week", type=int, default=None, metavar="N",
              help="Sky-spread: week 1-53 (default: the week of largest spread).")
@click.option("--start", default=None, metavar="MM-DD",
              help="Sky-spread: first of the seven days drawn, MM-DD or YYYY-MM-DD.")
@click.option("--metric", default=None, metavar="NAME",
              help="Portfolio: the summary column to map; finishes: the metric columns to draw "
                   "(comma-separated).")
@click.option("--percent", is_flag=True, help="Duration curves against % of the year.")
@click.option("--dpi", type=click.IntRange(50, 600), default=200, show_default=True,
              help="Resolution of a PNG figure.")
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False, path_type=Path),
              help="Figure file: .png, .svg or .pdf.")
def plot(result: Path, kind: str, surfaces: tuple[str, ...], variable: str | None,
         minus_air: bool, finish: str | None, week: int | None, start: str | None,
         metric: str | None, percent: bool, dpi: int, output: Path) -> None:
    """Draw a figure from RESULT (NetCDF of run/compare/batch, or a CSV table).

    Times are shown in local standard time. Figures are engineering estimates;
    verify against local codes and licensed professional practice.
    """
    from solair import plots

    if week is not None and start is not None:
        raise ConfigurationError("give --week or --start, not both")
    data = plots.load_result(result)
    fig = plots.draw(data, kind, surfaces=list(surfaces) or None, variable=variable,
                     finish=finish, minus_air=minus_air, week=week, start=start, metric=metric,
                     percent=percent)
    plots.save_figure(fig, output, dpi=dpi)
    click.echo(f"wrote {output}")
