"""``solair run``: hourly sol-air temperature and R_se per surface, written as CSV or NetCDF.

Heavy imports (pvlib, pandas, xarray) happen inside the command so that
``solair --help`` and ``solair run --help`` stay instant.
"""

from __future__ import annotations

import click

from solair.cli import fail

# Model names are repeated here (not imported) so --help needs no heavy import;
# tests check they match the library's sets.
SKY_CHOICES = (
    "auto", "infrared", "swinbank", "brunt", "brutsaert", "idso_jackson", "idso",
    "berdahl_fromberg", "berdahl_martin", "clark_allen", "prata", "dilley_obrien",
    "li_jiang_coimbra",
)
TRANSPOSITION_CHOICES = ("perez", "haydavies", "isotropic")
CONVECTION_CHOICES = ("iso6946", "iso6946_conventional", "yazdanian_klems", "walton")
LINEARISATION_CHOICES = ("air", "surface")


def _fraction(ctx, param, value):
    if value is None:
        return None
    if not 0.0 <= value <= 1.0:
        raise click.BadParameter(f"{value:g} is outside [0, 1]")
    return value


@click.command(
    "run",
    context_settings={"help_option_names": ["-h", "--help"]},
    epilog="Results are engineering estimates; verify against local codes and licensed "
    "professional practice.",
)
@click.argument("weather", type=click.Path(dir_okay=False))
@click.option("-o", "--output", "output", required=True, type=click.Path(dir_okay=False),
              help="Result file: .csv (one row per hour, local standard time, units in the "
                   "header) or .nc (NetCDF, time in UTC with the offset as an attribute).")
@click.option("--surface", "surfaces", multiple=True, metavar="NAME,TILT,AZIMUTH",
              help="A surface: name, tilt in degrees (0 roof facing up, 90 wall) and azimuth "
                   "in degrees clockwise from north (or N, NE, ... NW). Repeat for several. "
                   "Default: roof and the eight facades N, NE, E, SE, S, SW, W, NW.")
@click.option("--absorptance", type=float, default=0.6, show_default=True,
              callback=_fraction, help="Solar absorptance of the finish, 0-1, for every surface.")
@click.option("--emissivity", type=float, default=0.9, show_default=True,
              callback=_fraction, help="Thermal emissivity of the finish, 0-1, for every surface.")
@click.option("--sky", type=click.Choice(SKY_CHOICES), default="auto", show_default=True,
              help="Sky temperature: auto (file infrared where valid, else sky cover, else a "
                   "cloud estimate from the measured irradiance), infrared, or one clear-sky "
                   "correlation (cloud-corrected where the file allows).")
@click.option("--transposition", type=click.Choice(TRANSPOSITION_CHOICES), default="perez",
              show_default=True, help="Sky-diffuse model for the irradiance on tilted planes.")
@click.option("--convection", type=click.Choice(CONVECTION_CHOICES), default="iso6946",
              show_default=True,
              help="External convection: ISO 6946 Annex C (4 + 4v), the ISO 6946 conventional "
                   "R_se = 0.04, or a wind-direction-aware model.")
@click.option("--linearisation", type=click.Choice(LINEARISATION_CHOICES), default="air",
              show_default=True,
              help="Long-wave linearisation: about the air temperature, or at the massless "
                   "adiabatic surface temperature (solved to 1e-6 K).")
@click.option("--albedo", type=float, default=None, callback=_fraction,
              help="Ground solar reflectance 0-1 [default: the file's albedo where present, "
                   "else 0.2].")
@click.option("--sky-spread", is_flag=True, default=False,
              help="Also evaluate every clear-sky correlation and report the lowest and highest "
                   "sky and sol-air temperature per hour.")
@click.option("--monthly", type=click.Path(dir_okay=False), default=None, metavar="FILE.csv",
              help="Also write monthly means per surface (for monthly envelope methods).")
@click.option("--design", type=click.Path(dir_okay=False), default=None, metavar="FILE.csv",
              help="Also write design values per surface: the 1st and 99th percentiles of the "
                   "hourly sol-air temperature.")
@click.option("--utc-offset", type=float, default=None, metavar="HOURS",
              help="UTC offset of the file's time stamps, overriding its header (e.g. 0 for a "
                   "file stamped in UTC).")
def run(weather, output, surfaces, absorptance, emissivity, sky, transposition, convection,
        linearisation, albedo, sky_spread, monthly, design, utc_offset):
    """Hourly sol-air temperature and R_se per surface from a weather file (EPW, TMY3, TMY2)."""
    from pathlib import Path

    from solair.engine import CAUTION, compute
    from solair.output import (
        OUTPUT_FORMATS,
        design_values,
        monthly_means,
        write_result,
        write_table,
    )
    from solair.surfaces import default_surfaces, parse_surface
    from solair.weather import read_weather

    out = Path(output)
    if out.suffix.lower() not in OUTPUT_FORMATS:
        fail(f"output file {output!r}: suffix {out.suffix!r} is not one of "
              f"{sorted(OUTPUT_FORMATS)}")
    for label, extra in (("--monthly", monthly), ("--design", design)):
        if extra is not None and Path(extra).suffix.lower() != ".csv":
            fail(f"{label} file {extra!r}: suffix must be '.csv'")
    for p in (output, monthly, design):
        if p is not None and not Path(p).resolve().parent.is_dir():
            fail(f"output folder of {p!r} does not exist")
    if surfaces:
        chosen = [parse_surface(s, absorptance, emissivity) for s in surfaces]
    else:
        chosen = default_surfaces(absorptance, emissivity)

    w = read_weather(weather, utc_offset=utc_offset)
    ds = compute(w, chosen, sky=sky, transposition=transposition, convection=convection,
                 linearisation=linearisation, albedo=albedo, sky_spread=sky_spread)
    write_result(ds, out)
    written = [str(out)]
    if monthly:
        write_table(monthly_means(ds), monthly)
        written.append(str(monthly))
    if design:
        write_table(design_values(ds), design)
        written.append(str(design))

    a = ds.attrs
    from solair.sky import SKY_SOURCES

    used = ", ".join(
        f"{SKY_SOURCES[c]} {a[f'sky_source_hours_{SKY_SOURCES[c]}']} h"
        for c in sorted(SKY_SOURCES) if a.get(f"sky_source_hours_{SKY_SOURCES[c]}", 0)
    )
    tsa = ds["temp_sol_air"]
    click.echo(f"site: {a['site_name']} ({a['latitude']:.3f}, {a['longitude']:.3f}, "
               f"{a['altitude']:.0f} m, UTC{a['utc_offset_hours']:+g}), {ds.sizes['time']} hours")
    click.echo(f"surfaces: {', '.join(map(str, ds['surface'].values))}")
    click.echo(f"models: sky {sky}, transposition {transposition}, convection {convection}, "
               f"linearisation {linearisation}")
    click.echo(f"sky sources: {used}")
    click.echo(f"sol-air temperature: {float(tsa.min()):.1f} to {float(tsa.max()):.1f} °C "
               f"(air {float(ds['temp_air'].min()):.1f} to {float(ds['temp_air'].max()):.1f} °C)")
    click.echo(f"written: {', '.join(written)}")
    click.echo(f"caution: {CAUTION}")
