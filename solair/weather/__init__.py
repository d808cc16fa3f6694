"""Weather input: read EPW, TMY3 and TMY2 files into one validated canonical table.

>>> from solair.weather import read_weather
>>> w = read_weather("weather_samples/harbourside_depot.epw")  # doctest: +SKIP
>>> w.site.latitude, w.data["temp_air"].mean()                  # doctest: +SKIP

The canonical table (see docs/architecture.md and docs/weather.md): 8760 rows,
each labelled by the **end** of the hour it covers, tz-aware in local standard
time, on the reference year 2001 (first label 2001-01-01 01:00, last
2002-01-01 00:00); pvlib column names, SI units.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from os import PathLike
from pathlib import Path

import numpy as np
import pandas as pd

from solair.errors import WeatherFileError
from solair.weather.formats import FORMATS, OPTIONAL, REQUIRED, UNITS, detect_format, parse
from solair.weather.validate import MAX_GAP_HOURS, REFERENCE_YEAR, WeatherWarning, validate

__all__ = ["Site", "Weather", "read_weather", "detect_format", "WeatherWarning", "FORMATS",
           "REQUIRED", "OPTIONAL", "UNITS", "MAX_GAP_HOURS", "REFERENCE_YEAR"]

#: control characters other than tab, line feed and carriage return
_CONTROL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f]")
#: files larger than this are refused before reading [bytes] (an hourly year is ~1.6 MB)
_MAX_BYTES = 50_000_000


@dataclass(frozen=True)
class Site:
    """Where the weather was recorded.

    Attributes
    ----------
    name : str
        Station or site name from the header.
    latitude, longitude : float
        Degrees, north and east positive.
    altitude : float
        Elevation above sea level [m].
    utc_offset : float
        Offset of the time stamps [h]: local standard time = UTC + offset.
    source_format : str
        ``"epw"``, ``"tmy3"`` or ``"tmy2"``.
    path : str
        The file read.
    """

    name: str
    latitude: float
    longitude: float
    altitude: float
    utc_offset: float
    source_format: str
    path: str


@dataclass
class Weather:
    """A validated hourly weather year.

    Attributes
    ----------
    site : Site
        Site metadata.
    data : pandas.DataFrame
        The canonical hourly table (required columns without NaN).
    filled : dict[str, int]
        Values filled by interpolation, per field (gaps up to ``MAX_GAP_HOURS``).
    notes : list[str]
        What was derived, dropped or assumed while reading.
    derived : dict[str, int]
        Values derived from other fields (dew point, RH, pressure), per field; only
        the fields with derived values appear.
    """

    site: Site
    data: pd.DataFrame
    filled: dict[str, int] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    derived: dict[str, int] = field(default_factory=dict)

    def summary(self) -> pd.DataFrame:
        """One row per field: unit, valid count, filled count, min, mean and max.

        ``valid`` counts the hours with a value (file or filled); ``filled`` those
        filled by interpolation.
        """
        rows = []
        for col in self.data.columns:
            v = self.data[col].to_numpy(dtype=float)
            ok = np.isfinite(v)
            rows.append({
                "field": col,
                "unit": UNITS.get(col, ""),
                "valid": int(ok.sum()),
                "filled": int(self.filled.get(col, 0)),
                "min": float(v[ok].min()) if ok.any() else np.nan,
                "mean": float(v[ok].mean()) if ok.any() else np.nan,
                "max": float(v[ok].max()) if ok.any() else np.nan,
            })
        return pd.DataFrame(rows).set_index("field")


def _read_text(path: Path, name: str) -> str:
    if not path.exists():
        raise WeatherFileError(f"{name}: file not found ({path})")
    if path.is_dir():
        raise WeatherFileError(f"{name}: is a directory, not a weather file")
    size = path.stat().st_size
    if size == 0:
        raise WeatherFileError(f"{name}: the file is empty")
    if size > _MAX_BYTES:
        raise WeatherFileError(f"{name}: {size} bytes is too large for an hourly weather year "
                               f"(limit {_MAX_BYTES})")
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise WeatherFileError(f"{name}: cannot be read ({exc.strerror or exc})") from None
    if b"\x00" in raw:
        line = raw[: raw.index(b"\x00")].count(b"\n") + 1
        raise WeatherFileError(f"{name}, line {line}: binary content (NUL byte); a weather "
                               "file is text")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    m = _CONTROL.search(text, 0, 20000)
    if m is not None:
        bad = m.start()
        # counted in newlines: form feed and vertical tab are control characters that
        # str.splitlines() would also take for line ends
        line = text.count("\n", 0, bad) + 1
        raise WeatherFileError(f"{name}, line {line}: binary content (control characters); "
                               "a weather file is text")
    if not text.strip():
        raise WeatherFileError(f"{name}: the file holds only blank lines")
    return text


def read_weather(path: str | PathLike, *, utc_offset: float | None = None) -> Weather:
    """Read and validate an EPW, TMY3 or TMY2 file.

    The format is recognised from the content, not the suffix. Files are parsed
    with :func:`pvlib.iotools.read_epw` / :func:`pvlib.iotools.read_tmy3` after
    solair's own line-by-line structure checks (TMY2 with solair's fixed-width
    reader of the TMY2 layout), converted to SI units and pvlib names, validated
    and gap-filled (see docs/weather.md).

    Parameters
    ----------
    path : str or path-like
        The weather file.
    utc_offset : float, optional
        UTC offset of the file's time stamps [h], overriding the header's. Use it
        for a file whose rows are stamped in another zone than its header says
        (e.g. ``utc_offset=0`` for rows in UTC). The canonical index then carries
        this offset.

    Returns
    -------
    Weather

    Raises
    ------
    solair.errors.WeatherFileError
        For any problem of the file, naming the file, the line where there is one,
        the field and what is wrong.

    Warns
    -----
    WeatherWarning
        When values are derived (dew point, RH, pressure) or when the irradiance
        timing does not fit the header's time zone.
    """
    p = Path(path)
    name = p.name or str(path)
    text = _read_text(p, name)
    try:
        raw = parse(text, name)
        data, offset, filled, notes, derived = validate(raw, name, utc_offset)
    except WeatherFileError:
        raise
    except (ValueError, KeyError, IndexError, TypeError) as exc:  # never a bare traceback
        raise WeatherFileError(f"{name}: could not be validated ({type(exc).__name__}: {exc})"
                               ) from None
    site = Site(name=raw.meta["name"], latitude=float(raw.meta["latitude"]),
                longitude=float(raw.meta["longitude"]), altitude=float(raw.meta["altitude"]),
                utc_offset=float(offset), source_format=raw.source_format, path=str(path))
    return Weather(site=site, data=data, filled=filled, notes=notes, derived=derived)
