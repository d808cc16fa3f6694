"""``solair compare``: finishes side by side — surface response and risk metrics per surface.

Heavy imports happen inside the command so that ``solair compare --help`` stays
instant.
"""

from __future__ import annotations

import click

from solair.cli import fail

RESPONSE_CHOICES = ("transient", "steady", "massless")
EXTERIOR_CHOICES = ("linear", "nonlinear")


_SHOWN = ("surface", "finish", "sri", "temp_surface_max", "temp_surface_p99",
          "hours_above_threshold", "daily_range_max", "dew_hours", "frost_hours",
          "freeze_thaw_cycles", "undercooling_hours", "heat_gain", "heat_loss",
          "heat_flux_peak_in", "condensate_total", "wet_hours")


@click.command(
    "compare",
    context_settings={"help_option_names": ["-h", "--help"]},
    epilog="Results are engineering estimates; verify against local codes and licensed "
    "professional practice.",
)
@click.argument("weather", type=click.Path(dir_okay=False))
@click.option("--finish", "finishes", multiple=True, metavar="NAME",
              help="A finish from the catalogue (or from --finish-file); '<name>_aged' gives "
                   "the aged values where known. Repeat for several.")
@click.option("--finish-file", type=click.Path(dir_okay=False), default=None,
              metavar="FILE.toml", help="Extra finishes, schema of solair/data/finishes.toml.")
@click.option("--construction", default=None, metavar="NAME|FILE.toml[:NAME]",
              help="A library construction or a TOML file (schema of "
                   "solair/data/constructions.toml). Without one the surface is massless.")
@click.option("--surface", "surfaces", multiple=True, metavar="NAME,TILT,AZIMUTH",
              help="A surface: name, tilt [°] (0 roof, 90 wall), azimuth [° from north] or a "
                   "compass point. Repeat for several. Default: roof and eight facades.")
@click.option("--response", type=click.Choice(RESPONSE_CHOICES), default=None,
              help="Surface response [default: transient with a construction, else massless].")
@click.option("--exterior", type=click.Choice(EXTERIOR_CHOICES), default="linear",
              show_default=True,
              help="Exterior boundary: hourly sol-air temperature and h_e, or the nonlinear "
                   "surface balance at the computed surface temperature.")
@click.option("--indoor", type=float, default=20.0, show_default=True, metavar="T",
              help="Indoor air temperature [°C].")
@click.option("--threshold", type=float, default=60.0, show_default=True, metavar="T",
              help="Surface temperature for the hours-above count [°C].")
@click.option("--no-dew", is_flag=True, default=False,
              help="Leave out dew and frost (no latent heat, no condensate).")
@click.option("-o", "--output", "output", required=True, type=click.Path(dir_okay=False),
              metavar="TABLE.csv", help="Metrics table, one row per surface x finish.")
@click.option("--hourly", type=click.Path(dir_okay=False), default=None, metavar="OUT.nc",
              help="Also write the hourly results (time x surface x finish) as NetCDF.")
@click.option("--utc-offset", type=float, default=None, metavar="HOURS",
              help="UTC offset of the file's time stamps, overriding its header.")
def compare(weather, finishes, finish_file, construction, surfaces, response, exterior, indoor,
            threshold, no_dew, output, hourly, utc_offset):
    """Compare exterior finishes on a weather file: surface temperatures, dew, heat flow."""
    from pathlib import Path

    from solair.compare import CAUTION
    from solair.compare import compare as run_compare
    from solair.finishes import available_finishes, get_finish, load_finishes

    out = Path(output)
    if out.suffix.lower() != ".csv":
        fail(f"output table {output!r}: suffix {out.suffix!r} is not '.csv'")
    if hourly is not None and Path(hourly).suffix.lower() != ".nc":
        fail(f"--hourly file {hourly!r}: suffix must be '.nc'")
    for p in (output, hourly):
        if p is not None and not Path(p).resolve().parent.is_dir():
            fail(f"output folder of {p!r} does not exist")
    extra = load_finishes(finish_file) if finish_file else None
    if not finishes:
        fail(f"give at least one --finish; allowed: {available_finishes(extra)}")
    chosen = [get_finish(name, extra) for name in finishes]

    from solair.constructions import resolve_construction
    from solair.output import write_result, write_table
    from solair.surfaces import parse_surface
    from solair.weather import read_weather

    cons = None if construction is None else resolve_construction(construction)
    surf = [parse_surface(s) for s in surfaces] if surfaces else None
    w = read_weather(weather, utc_offset=utc_offset)
    ds, table = run_compare(w, surf, chosen, cons, response=response, temp_indoor=indoor,
                            threshold=threshold, dew=not no_dew, exterior=exterior)
    write_table(table, out, index=False)
    written = [str(out)]
    if hourly:
        write_result(ds, hourly)
        written.append(str(hourly))

    a = ds.attrs
    click.echo(f"site: {a.get('site_name', '')} ({a.get('latitude', 0):.3f}, "
               f"{a.get('longitude', 0):.3f}), {ds.sizes['time']} hours")
    label = "massless surface" if cons is None else f"{cons.name} (U = " \
        f"{float(table['u_value'].iloc[0]):.3f} W/m2K)"
    click.echo(f"response: {a['response_model']}, construction: {label}, indoor {indoor:g} °C, "
               f"dew {'off' if no_dew else 'on'}")
    shown = table[[c for c in _SHOWN if c in table.columns]]
    click.echo(shown.to_string(index=False, float_format=lambda v: f"{v:.1f}"))
    for note in filter(None, str(a.get("notes", "")).split(" | ")):
        click.echo(f"note: {note}")
    click.echo(f"written: {', '.join(written)}")
    click.echo(f"caution: {CAUTION}")
