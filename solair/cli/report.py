"""``solair report``: one self-contained HTML page from one or more results."""

from __future__ import annotations

from pathlib import Path

import click


@click.command("report")
@click.argument("results", nargs=-1, required=True,
                type=click.Path(dir_okay=False, path_type=Path))
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False, path_type=Path),
              help="The HTML file to write (.html).")
@click.option("--title", default=None, help="Page title (default: the site names).")
@click.option("--dpi", type=click.IntRange(50, 300), default=110, show_default=True,
              help="Resolution of the embedded figures.")
def report(results: tuple[Path, ...], output: Path, title: str | None, dpi: int) -> None:
    """Write a self-contained HTML report from RESULTS.

    RESULTS are NetCDF files of `solair run`, `solair compare --hourly` or
    `solair batch`, the hourly CSV of `solair run` (its `# ` metadata lines
    give the site and models), and CSV tables of `solair compare -o` or the
    batch summary.
    Figures are embedded; the page links to nothing outside itself. Engineering
    estimate; verify against local codes and licensed professional practice.
    """
    from solair.report import write_report

    write_report(list(results), output, title=title, dpi=dpi)
    click.echo(f"wrote {output}")
