"""``solair info WEATHER``: vet a weather file before running it.

Prints the site, the period, completeness and fills per field, and the minimum,
mean and maximum of every field. A bad file raises
:class:`solair.errors.WeatherFileError`, which the command group turns into one
line on stderr and exit status 2. Warnings (derived fields, a time zone that does
not fit the irradiance) are printed as ``solair: warning: ...`` lines on stderr;
the exit status is then still 0.
"""

from __future__ import annotations

import warnings

import click

__all__ = ["info", "format_info"]


_DECIMALS = {"Pa": 0, "°C": 1, "%": 1, "m/s": 1, "°": 0, "W/m²": 1, "tenths": 1, "1": 2}


def _deg(value: float, pos: str, neg: str) -> str:
    return f"{abs(value):.3f}° {pos if value >= 0 else neg}"


def format_info(weather) -> str:
    """The text ``solair info`` prints for a :class:`solair.weather.Weather`."""
    from solair.weather import MAX_GAP_HOURS, REFERENCE_YEAR

    s = weather.site
    d = weather.data
    n = len(d)
    lines = [
        f"file       {s.path} ({s.source_format.upper()})",
        f"site       {s.name}",
        f"location   {_deg(s.latitude, 'N', 'S')}, {_deg(s.longitude, 'E', 'W')}, "
        f"{s.altitude:g} m above sea level",
        f"time zone  UTC{s.utc_offset:+g} h, local standard time; each row is labelled by "
        "the end of the hour it covers",
        f"period     {d.index[0]:%Y-%m-%d %H:%M} to {d.index[-1]:%Y-%m-%d %H:%M}, {n} hours "
        f"(reference year {REFERENCE_YEAR})",
    ]
    sky = []
    for col, label in (("ghi_infrared", "horizontal infrared"),
                       ("opaque_sky_cover", "opaque sky cover"),
                       ("total_sky_cover", "total sky cover")):
        if col in d:
            sky.append(f"{label} {int(d[col].notna().sum())} h")
    lines.append("sky input  " + (", ".join(sky) if sky else
                                  "none in the file (sky temperature from a clear-sky "
                                  "correlation and an irradiance cloud estimate)"))
    lines.append(f"fills      gaps up to {MAX_GAP_HOURS} h filled by linear interpolation: "
                 f"{sum(weather.filled.values())} values in all")
    lines.append("")
    table = weather.summary()
    derived = getattr(weather, "derived", {})
    head = f"{'field':<18} {'unit':<7} {'valid':>6} {'in file':>9} {'filled':>7} " \
           f"{'min':>10} {'mean':>10} {'max':>10}"
    lines.append(head)
    lines.append("-" * len(head))
    for field, row in table.iterrows():
        dec = _DECIMALS.get(row["unit"], 2)
        stats = " ".join(f"{row[k]:>10.{dec}f}" for k in ("min", "mean", "max"))
        lines.append(
            f"{field:<18} {row['unit']:<7} {row['valid']:>6d} "
            f"{100 * (row['valid'] - row['filled'] - derived.get(field, 0)) / n:>8.1f}% "
            f"{row['filled']:>7d} {stats}")
    lines.append("in file: share of the hours holding the file's own value (not filled, not "
                 "derived); filled: values interpolated")
    if weather.notes:
        lines.append("")
        lines.append("notes")
        lines.extend(f"  - {note}" for note in weather.notes)
    return "\n".join(lines)


@click.command("info")
@click.argument("weather_file", metavar="WEATHER", type=click.Path(path_type=str))
@click.option("--utc-offset", type=float, default=None, metavar="HOURS",
              help="UTC offset of the file's time stamps [h], overriding the header "
                   "(e.g. 0 for a file whose rows are in UTC).")
def info(weather_file: str, utc_offset: float | None) -> None:
    """Vet a weather file: site, period, completeness, fills and ranges per field.

    WEATHER is an EPW, TMY3 (CSV) or TMY2 file; the format is recognised from
    the content.
    """
    from solair.weather import read_weather

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        weather = read_weather(weather_file, utc_offset=utc_offset)
    for w in caught:
        click.echo(f"solair: warning: {w.message}", err=True)
    click.echo(format_info(weather))
