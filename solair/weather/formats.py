"""Format detection and parsing of EPW, TMY3 and TMY2 files into a raw SI table.

Each reader checks the file's structure line by line (header records, field
count, date and hour fields, numbers) before it hands the text to
:mod:`pvlib.iotools`, so that a broken file raises
:class:`solair.errors.WeatherFileError` naming the line and field instead of a
pandas traceback or a silently shortened table. The readers return a
:class:`RawTable`: the canonical columns in SI units with the format's
missing-value codes turned into NaN, plus each row's month, day, hour-ending
hour and line number in the file. Validation, gap filling and the time index
live in :mod:`solair.weather.validate`.

References
----------
.. [1] U.S. DOE, *EnergyPlus Auxiliary Programs*, "Weather Converter Program",
   EnergyPlus Weather File (EPW) Data Dictionary (missing codes and units).
.. [2] Wilcox, S. and Marion, W. (2008). *Users Manual for TMY3 Data Sets*,
   NREL/TP-581-43156. doi:10.2172/928611
.. [3] Marion, W. and Urban, K. (1995). *User's Manual for TMY2s*, NREL.
   doi:10.2172/87130
"""

from __future__ import annotations

import contextlib
import csv
import io
import re
import warnings
from collections.abc import Iterator
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from solair.errors import WeatherFileError

__all__ = ["RawTable", "detect_format", "parse", "FORMATS"]

FORMATS = frozenset({"epw", "tmy3", "tmy2"})

#: canonical column -> unit, in the order of the canonical table
REQUIRED = ("temp_air", "temp_dew", "relative_humidity", "pressure", "wind_speed",
            "wind_direction", "ghi", "dni", "dhi")
OPTIONAL = ("ghi_infrared", "total_sky_cover", "opaque_sky_cover", "albedo")
UNITS = {
    "temp_air": "°C", "temp_dew": "°C", "relative_humidity": "%", "pressure": "Pa",
    "wind_speed": "m/s", "wind_direction": "°", "ghi": "W/m²", "dni": "W/m²", "dhi": "W/m²",
    "ghi_infrared": "W/m²", "total_sky_cover": "tenths", "opaque_sky_cover": "tenths",
    "albedo": "1",
}


@dataclass
class RawTable:
    """A parsed weather file before validation.

    ``data`` holds canonical columns in SI units (NaN where the file gives the
    missing code); ``month``, ``day``, ``hour`` (1–24, hour-ending) and ``line``
    (1-based line number in the file) are integer arrays aligned with its rows.
    """

    source_format: str
    meta: dict
    data: pd.DataFrame
    month: np.ndarray
    day: np.ndarray
    hour: np.ndarray
    line: np.ndarray
    notes: list[str] = field(default_factory=list)


def _fail(name: str, msg: str, line: int | None = None) -> WeatherFileError:
    where = f"{name}, line {line}" if line is not None else name
    return WeatherFileError(f"{where}: {msg}")


# --------------------------------------------------------------------------- detection

_TMY2_HEADER = re.compile(
    r"^\s*(?P<wban>\d{5})\s+(?P<city>.*?)\s+(?P<state>[A-Z]{2})\s+(?P<tz>[-+]?\d+)\s+"
    r"(?P<ns>[NS])\s+(?P<latd>\d+)\s+(?P<latm>\d+)\s+(?P<ew>[EW])\s+(?P<lond>\d+)\s+"
    r"(?P<lonm>\d+)\s+(?P<alt>[-+]?\d+)\s*$"
)


def detect_format(text: str, name: str = "weather file") -> str:
    """Recognise the weather format from the file's content.

    Parameters
    ----------
    text : str
        The whole file's text.
    name : str
        File name used in error messages.

    Returns
    -------
    str
        ``"epw"``, ``"tmy3"`` or ``"tmy2"``.

    Notes
    -----
    EPW: the first record is ``LOCATION,...``. TMY3: the second line starts
    with ``Date (MM/DD/YYYY),Time (HH:MM)``. TMY2: the first line is the
    fixed-width site header (WBAN number, city, state, time zone, N/S latitude,
    E/W longitude, elevation) and data lines are 141 characters after a space.
    The file suffix is not used.
    """
    lines = _first_lines(text, 2)
    first = lines[0] if lines else ""
    if first.strip().upper().startswith("LOCATION,"):
        return "epw"
    if len(lines) > 1 and lines[1].startswith("Date (MM/DD/YYYY),Time (HH:MM)"):
        return "tmy3"
    if _TMY2_HEADER.match(first):
        return "tmy2"
    if first.count(",") == 6 and len(lines) > 1 and lines[1].lower().startswith("date"):
        return "tmy3"
    shown = first[:60] + ("..." if len(first) > 60 else "")
    raise _fail(name, "not a recognised weather file: line 1 is "
                f"{shown!r}; expected an EPW 'LOCATION,...' record, a TMY3 site line "
                "followed by 'Date (MM/DD/YYYY),Time (HH:MM),...', or a TMY2 site header", 1)


# --------------------------------------------------------------------------- helpers

def _first_lines(text: str, n: int) -> list[str]:
    """``text.splitlines()[:n]`` without splitting the whole text.

    The prefix up to the (n + 1)-th newline holds the first n lines whole, whatever
    other separators str.splitlines() also splits at.
    """
    pos = 0
    for _ in range(n + 1):
        j = text.find("\n", pos)
        if j < 0:
            return text.splitlines()[:n]
        pos = j + 1
    return text[:pos].splitlines()[:n]


def _data_lines(lines: list[str], start: int, name: str) -> list[str]:
    """Data lines from index ``start`` (0-based), trailing blank lines removed."""
    body = lines[start:]
    while body and not body[-1].strip():
        body.pop()
    for i, ln in enumerate(body):
        if not ln.strip():
            raise _fail(name, "empty line inside the data records", start + i + 1)
    if not body:
        raise _fail(name, "the file has a header but no data rows", start + 1)
    return body


@contextlib.contextmanager
def _quiet_pandas() -> Iterator[None]:
    """Silence pandas' mixed-type warning inside pvlib's readers.

    The warning names no file and no line; the columns solair uses are converted and
    checked field by field afterwards (:func:`_to_number`), and a bad value there is a
    :class:`WeatherFileError` naming the file, the line and the column.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", pd.errors.DtypeWarning)
        yield


def _to_number(values: pd.Series, column: str, lines: np.ndarray, name: str,
               field_name: str) -> np.ndarray:
    """Convert a column to float, naming the first line with a non-number."""
    if pd.api.types.is_numeric_dtype(values):
        return np.array(values.to_numpy(dtype=float), copy=True)
    stripped = values.astype(str).str.strip()
    num = pd.to_numeric(stripped, errors="coerce")
    bad = num.isna().to_numpy() & ~values.isna().to_numpy()
    empty = values.isna().to_numpy() | (stripped == "").to_numpy()
    bad = bad | empty
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        shown = "" if empty[i] else str(values.iloc[i])
        raise _fail(name, f"{field_name} ({column}) = {shown!r} is not a number", int(lines[i]))
    return np.array(num.to_numpy(dtype=float), copy=True)


def _check_nan_text(values: np.ndarray, rows: list[list[str]], k: int, col: str, label: str,
                    line_no: np.ndarray, name: str) -> None:
    """Where pandas gave NaN, the raw field must have been a number.

    pandas silently reads "NA", "n/a", "null", "nan" or an empty field as NaN, which
    would then pass for a gap; no weather format writes its missing values so.
    """
    for i in np.flatnonzero(np.isnan(values)):
        t = rows[i][k].strip()
        raise _fail(name, f"{col} ({label}) = {t!r} is not a number", int(line_no[i]))


def _int_field(text: str, what: str, line: int, name: str) -> int:
    t = text.strip()
    if not re.fullmatch(r"[-+]?\d+", t):
        raise _fail(name, f"{what} = {t!r} is not an integer", line)
    return int(t)


def _header_float(value: str, what: str, name: str, line: int = 1) -> float:
    try:
        return float(str(value).strip())
    except ValueError:
        raise _fail(name, f"header {what} = {str(value).strip()!r} is not a number", line) from None


# --------------------------------------------------------------------------- EPW

_EPW_RECORDS = ("LOCATION", "DESIGN CONDITIONS", "TYPICAL/EXTREME PERIODS",
                "GROUND TEMPERATURES", "HOLIDAYS/DAYLIGHT SAVINGS", "COMMENTS 1",
                "COMMENTS 2", "DATA PERIODS")
#: other spellings accepted for a record: the EPW data dictionary [1]_ names record 5
#: "HOLIDAYS/DAYLIGHT SAVINGS"; pvlib's bundled EPW and many converters write "SAVING"
_EPW_RECORD_ALIASES = {"HOLIDAYS/DAYLIGHT SAVINGS": ("HOLIDAYS/DAYLIGHT SAVING",)}
_EPW_NFIELDS = 35
# canonical name -> (pvlib column, EPW field number (1-based), missing when value >= code)
_EPW_FIELDS = {
    "temp_air": ("temp_air", 7, 99.9),
    "temp_dew": ("temp_dew", 8, 99.9),
    "relative_humidity": ("relative_humidity", 9, 999.0),
    "pressure": ("atmospheric_pressure", 10, 999999.0),
    "ghi_infrared": ("ghi_infrared", 13, 9999.0),
    "ghi": ("ghi", 14, 9999.0),
    "dni": ("dni", 15, 9999.0),
    "dhi": ("dhi", 16, 9999.0),
    "wind_direction": ("wind_direction", 21, 999.0),
    "wind_speed": ("wind_speed", 22, 999.0),
    "total_sky_cover": ("total_sky_cover", 23, 99.0),
    "opaque_sky_cover": ("opaque_sky_cover", 24, 99.0),
    "albedo": ("albedo", 33, 999.0),
}


def _epw_header(lines: list[str], name: str) -> dict:
    """Check the 8 EPW header records and read the LOCATION record into ``meta``."""
    for i, rec in enumerate(_EPW_RECORDS):
        got = lines[i].split(",")[0].strip().upper() if i < len(lines) else "<end of file>"
        if got != rec and got not in _EPW_RECORD_ALIASES.get(rec, ()):
            raise _fail(name, f"EPW header record {i + 1} is {got[:40]!r}, expected {rec!r} "
                        "(an EPW file has 8 header lines before the hourly data)", i + 1)
    loc = lines[0].split(",")
    if len(loc) < 10:
        raise _fail(name, f"LOCATION record has {len(loc)} fields, expected 10 (city, state, "
                    "country, source, WMO, latitude, longitude, time zone, elevation)", 1)
    meta = {
        "name": ", ".join(s.strip() for s in loc[1:4] if s.strip() not in ("", "-")) or "unknown",
        "latitude": _header_float(loc[6], "latitude", name),
        "longitude": _header_float(loc[7], "longitude", name),
        "utc_offset": _header_float(loc[8], "time zone", name),
        "altitude": _header_float(loc[9], "elevation", name),
    }
    return meta


def _parse_epw(text: str, name: str, fast: bool = True) -> RawTable:
    from pvlib.iotools import read_epw

    if fast:  # a well-formed file: one pandas.read_csv call (see solair.weather._fast)
        from solair.weather import _fast

        split = _fast.split_head(text, 8)
        if split is not None:
            raw = _fast.epw_body(split[1], _epw_header(split[0], name))
            if raw is not None:
                return raw
    lines = text.splitlines()
    meta = _epw_header(lines, name)
    body = _data_lines(lines, 8, name)
    rows: list[list[str]] = []
    month = np.empty(len(body), dtype=int)
    day = np.empty(len(body), dtype=int)
    hour = np.empty(len(body), dtype=int)
    for i, ln in enumerate(body):
        parts = ln.split(",")
        if len(parts) != _EPW_NFIELDS:
            raise _fail(name, f"{len(parts)} comma-separated fields, expected {_EPW_NFIELDS}",
                        i + 9)
        rows.append(parts)
        month[i] = _int_field(parts[1], "month (field 2)", i + 9, name)
        day[i] = _int_field(parts[2], "day (field 3)", i + 9, name)
        hour[i] = _int_field(parts[3], "hour (field 4)", i + 9, name)
    line_no = np.arange(9, 9 + len(body))
    _check_calendar(month, day, hour, line_no, name)
    # pvlib's index cannot hold 29 February on a non-leap year: coerce to 2000 (a
    # leap year); solair builds its own index from month, day and hour anyway.
    try:
        with _quiet_pandas():
            df, _ = read_epw(io.StringIO("\n".join(lines[:8] + body) + "\n"), coerce_year=2000)
    except Exception as exc:  # pvlib/pandas message is not for users; name the file
        raise _fail(name, f"EPW data could not be parsed ({type(exc).__name__}: {exc})") from None
    if len(df) != len(body):
        raise _fail(name, f"parsed {len(df)} rows but the file has {len(body)} data lines")
    out = {}
    for col, (src, fno, code) in _EPW_FIELDS.items():
        v = _to_number(df[src], f"field {fno}", line_no, name, col)
        _check_nan_text(v, rows, fno - 1, col, f"field {fno}", line_no, name)
        v[v >= code] = np.nan
        out[col] = v
    data = pd.DataFrame(out)
    return RawTable("epw", meta, data, month, day, hour, line_no)


# --------------------------------------------------------------------------- TMY3

_TMY3_MISSING = -9900.0
# canonical name -> (pvlib column after map_variables, source-flag column, scale to SI)
_TMY3_FIELDS = {
    "temp_air": ("temp_air", "Dry-bulb source", 1.0),
    "temp_dew": ("temp_dew", "Dew-point source", 1.0),
    "relative_humidity": ("relative_humidity", "RHum source", 1.0),
    "pressure": ("pressure", "Pressure source", 100.0),  # mbar -> Pa
    "ghi": ("ghi", "GHI source", 1.0),
    "dni": ("dni", "DNI source", 1.0),
    "dhi": ("dhi", "DHI source", 1.0),
    "wind_direction": ("wind_direction", "Wdir source", 1.0),
    "wind_speed": ("wind_speed", "Wspd source", 1.0),
    "total_sky_cover": ("TotCld (tenths)", "TotCld source", 1.0),
    "opaque_sky_cover": ("OpqCld (tenths)", "OpqCld source", 1.0),
    "albedo": ("albedo", "Alb source", 1.0),
}
# canonical -> the column heading in the TMY3 file (for messages)
_TMY3_LABELS = {"temp_air": "Dry-bulb (C)", "temp_dew": "Dew-point (C)", "relative_humidity":
                "RHum (%)", "pressure": "Pressure (mbar)", "ghi": "GHI (W/m^2)",
                "dni": "DNI (W/m^2)", "dhi": "DHI (W/m^2)", "wind_direction": "Wdir (degrees)",
                "wind_speed": "Wspd (m/s)", "total_sky_cover": "TotCld (tenths)",
                "opaque_sky_cover": "OpqCld (tenths)", "albedo": "Alb (unitless)"}
_TMY3_TIME = re.compile(r"^(\d{1,2}):(\d{2})$")
_TMY3_DATE = re.compile(r"^(\d{1,2})/(\d{1,2})/(\d{4})$")


def _tmy3_header(lines: list[str], name: str) -> tuple[dict, list[str]]:
    """Check the two TMY3 header lines; the site ``meta`` and the column names."""
    site = next(csv.reader([lines[0]]))
    if len(site) != 7:
        raise _fail(name, f"TMY3 site line has {len(site)} fields, expected 7 (USAF, name, "
                    "state, time zone, latitude, longitude, elevation)", 1)
    meta = {
        "name": f"{site[1].strip()}, {site[2].strip()}".strip(", ") or "unknown",
        "utc_offset": _header_float(site[3], "time zone", name),
        "latitude": _header_float(site[4], "latitude", name),
        "longitude": _header_float(site[5], "longitude", name),
        "altitude": _header_float(site[6], "elevation", name),
    }
    columns = lines[1].split(",")
    needed = ["GHI (W/m^2)", "DNI (W/m^2)", "DHI (W/m^2)", "Dry-bulb (C)", "Dew-point (C)",
              "RHum (%)", "Pressure (mbar)", "Wdir (degrees)", "Wspd (m/s)"]
    for col in needed:
        if col not in columns:
            raise _fail(name, f"TMY3 column header lacks {col!r}", 2)
    return meta, columns


def _parse_tmy3(text: str, name: str, fast: bool = True) -> RawTable:
    from pvlib.iotools import read_tmy3

    if fast:  # a well-formed file: one pandas.read_csv call (see solair.weather._fast)
        from solair.weather import _fast

        split = _fast.split_head(text, 2)
        if split is not None:
            meta, columns = _tmy3_header(split[0], name)
            raw = _fast.tmy3_body(split[1], meta, split[0][0], columns)
            if raw is not None:
                return raw
    lines = text.splitlines()
    meta, columns = _tmy3_header(lines, name)
    ncol = len(columns)
    body = _data_lines(lines, 2, name)
    rows: list[list[str]] = []
    month = np.empty(len(body), dtype=int)
    day = np.empty(len(body), dtype=int)
    hour = np.empty(len(body), dtype=int)
    for i, ln in enumerate(body):
        parts = ln.split(",")
        if len(parts) != ncol:
            raise _fail(name, f"{len(parts)} comma-separated fields, expected {ncol} as in "
                        "the column header on line 2", i + 3)
        rows.append(parts)
        d = _TMY3_DATE.match(parts[0].strip())
        t = _TMY3_TIME.match(parts[1].strip())
        if d is None:
            raise _fail(name, f"date {parts[0].strip()!r} is not MM/DD/YYYY", i + 3)
        if t is None or t.group(2) != "00":
            raise _fail(name, f"time {parts[1].strip()!r} is not a whole hour HH:00", i + 3)
        month[i], day[i], hour[i] = int(d.group(1)), int(d.group(2)), int(t.group(1))
    line_no = np.arange(3, 3 + len(body))
    _check_calendar(month, day, hour, line_no, name)
    try:
        with _quiet_pandas():
            df, _ = read_tmy3(io.StringIO("\n".join(lines[:2] + body) + "\n"),
                              map_variables=True)
    except Exception as exc:
        raise _fail(name, f"TMY3 data could not be parsed ({type(exc).__name__}: {exc})") from None
    out = {}
    for col, (src, flag, scale) in _TMY3_FIELDS.items():
        if src not in df.columns:
            if col in REQUIRED:
                raise _fail(name, f"TMY3 column for {col} ({src}) is missing", 2)
            continue
        label = _TMY3_LABELS.get(col, src)
        v = _to_number(df[src].reset_index(drop=True), f"column {label!r}", line_no, name, col)
        if label in columns:
            _check_nan_text(v, rows, columns.index(label), col, f"column {label!r}", line_no,
                            name)
        v[v <= _TMY3_MISSING] = np.nan
        if flag in df.columns and col in OPTIONAL:
            v[df[flag].astype(str).str.strip().to_numpy() == "?"] = np.nan
        out[col] = v * scale
    data = pd.DataFrame(out)
    return RawTable("tmy3", meta, data, month, day, hour, line_no)


# --------------------------------------------------------------------------- TMY2

# TMY2 fixed-width layout (User's Manual for TMY2s, Table 3-1), after the leading
# blank: (name, width); *_s and *_u are the source and uncertainty flags.
_TMY2_LAYOUT = [
    ("year", 2), ("month", 2), ("day", 2), ("hour", 2), ("ETR", 4), ("ETRN", 4),
    ("GHI", 4), ("GHI_s", 1), ("GHI_u", 1), ("DNI", 4), ("DNI_s", 1), ("DNI_u", 1),
    ("DHI", 4), ("DHI_s", 1), ("DHI_u", 1), ("GHillum", 4), ("GHillum_s", 1), ("GHillum_u", 1),
    ("DNillum", 4), ("DNillum_s", 1), ("DNillum_u", 1), ("DHillum", 4), ("DHillum_s", 1),
    ("DHillum_u", 1), ("Zenithlum", 4), ("Zenithlum_s", 1), ("Zenithlum_u", 1),
    ("TotCld", 2), ("TotCld_s", 1), ("TotCld_u", 1), ("OpqCld", 2), ("OpqCld_s", 1),
    ("OpqCld_u", 1), ("DryBulb", 4), ("DryBulb_s", 1), ("DryBulb_u", 1), ("DewPoint", 4),
    ("DewPoint_s", 1), ("DewPoint_u", 1), ("RHum", 3), ("RHum_s", 1), ("RHum_u", 1),
    ("Pressure", 4), ("Pressure_s", 1), ("Pressure_u", 1), ("Wdir", 3), ("Wdir_s", 1),
    ("Wdir_u", 1), ("Wspd", 3), ("Wspd_s", 1), ("Wspd_u", 1), ("Hvis", 4), ("Hvis_s", 1),
    ("Hvis_u", 1), ("CeilHgt", 5), ("CeilHgt_s", 1), ("CeilHgt_u", 1), ("PresentWeather", 10),
    ("Pwat", 3), ("Pwat_s", 1), ("Pwat_u", 1), ("AOD", 3), ("AOD_s", 1), ("AOD_u", 1),
    ("SnowDepth", 3), ("SnowDepth_s", 1), ("SnowDepth_u", 1), ("LastSnowfall", 2),
    ("LastSnowfall_s", 1), ("LastSnowfall_u", 1),
]
_TMY2_WIDTH = 1 + sum(w for _, w in _TMY2_LAYOUT)  # 142 characters per data line
_TMY2_POS = {}
_p = 1
for _n, _w in _TMY2_LAYOUT:
    _TMY2_POS[_n] = (_p, _p + _w)
    _p += _w
del _p, _n, _w
# canonical -> (TMY2 element, scale to SI). Temperatures and wind are in tenths,
# pressure in mbar (= hPa), cloud cover in tenths, RH in %, radiation in Wh/m².
_TMY2_FIELDS = {
    "temp_air": ("DryBulb", 0.1),
    "temp_dew": ("DewPoint", 0.1),
    "relative_humidity": ("RHum", 1.0),
    "pressure": ("Pressure", 100.0),
    "ghi": ("GHI", 1.0),
    "dni": ("DNI", 1.0),
    "dhi": ("DHI", 1.0),
    "wind_direction": ("Wdir", 1.0),
    "wind_speed": ("Wspd", 0.1),
    "total_sky_cover": ("TotCld", 1.0),
    "opaque_sky_cover": ("OpqCld", 1.0),
}


def _parse_tmy2(text: str, name: str) -> RawTable:
    lines = text.splitlines()
    m = _TMY2_HEADER.match(lines[0])
    if m is None:  # detect_format guarantees a match; kept for direct callers
        raise _fail(name, "TMY2 site header not recognised", 1)
    lat = (int(m["latd"]) + int(m["latm"]) / 60.0) * (1 if m["ns"] == "N" else -1)
    lon = (int(m["lond"]) + int(m["lonm"]) / 60.0) * (1 if m["ew"] == "E" else -1)
    if int(m["latm"]) >= 60 or int(m["lonm"]) >= 60:
        raise _fail(name, f"header minutes of latitude/longitude ({m['latm']}, {m['lonm']}) "
                    "must be below 60", 1)
    meta = {"name": f"{m['city'].strip()}, {m['state']}", "latitude": lat, "longitude": lon,
            "utc_offset": float(m["tz"]), "altitude": float(m["alt"])}
    body = _data_lines(lines, 1, name)
    for i, ln in enumerate(body):
        if len(ln.rstrip("\r")) != _TMY2_WIDTH:
            raise _fail(name, f"data line is {len(ln)} characters long, a TMY2 record has "
                        f"{_TMY2_WIDTH}", i + 2)
    line_no = np.arange(2, 2 + len(body))
    wanted = ["month", "day", "hour"] + [src for src, _ in _TMY2_FIELDS.values()]
    raw = {k: [ln[_TMY2_POS[k][0]:_TMY2_POS[k][1]] for ln in body] for k in wanted}
    canon = {src: col for col, (src, _) in _TMY2_FIELDS.items()}
    ints = {}
    for k in wanted:
        s = pd.Series(raw[k])
        where = f"TMY2 {k}, columns {_TMY2_POS[k][0] + 1}-{_TMY2_POS[k][1]}"
        ints[k] = _to_number(s, where, line_no, name, canon.get(k, k))
    month, day, hour = (ints[k].astype(int) for k in ("month", "day", "hour"))
    _check_calendar(month, day, hour, line_no, name)
    out = {}
    for col, (src, scale) in _TMY2_FIELDS.items():
        v = ints[src].copy()
        width = _TMY2_POS[src][1] - _TMY2_POS[src][0]
        v[v == float("9" * width)] = np.nan  # all-nines = missing (TMY2 manual)
        out[col] = v * scale
    data = pd.DataFrame(out)
    return RawTable("tmy2", meta, data, month, day, hour, line_no)


# --------------------------------------------------------------------------- common

def _check_calendar(month, day, hour, line_no, name: str) -> None:
    """Month 1–12, a real day of that month (29 Feb allowed), hour-ending 1–24."""
    days = np.array([0, 31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
    bad = (month < 1) | (month > 12)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise _fail(name, f"month = {month[i]} is outside 1-12", int(line_no[i]))
    bad = (day < 1) | (day > days[month])
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise _fail(name, f"day = {day[i]} does not exist in month {month[i]}", int(line_no[i]))
    bad = (hour < 1) | (hour > 24)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise _fail(name, f"hour = {hour[i]} is outside 1-24 (hour-ending)", int(line_no[i]))


_PARSERS = {"epw": _parse_epw, "tmy3": _parse_tmy3, "tmy2": _parse_tmy2}


def parse(text: str, name: str, *, fast: bool = True) -> RawTable:
    """Detect the format of ``text`` and parse it into a :class:`RawTable`.

    With ``fast`` (the default) a well-formed EPW or TMY3 file is parsed by
    :mod:`solair.weather._fast`; any file it does not accept as well formed goes
    through the line-by-line reader, which names the line and field at fault.
    ``fast=False`` always takes the line-by-line reader (same table, slower).
    """
    fmt = detect_format(text, name)
    if fmt == "tmy2":
        return _parse_tmy2(text, name)
    return _PARSERS[fmt](text, name, fast)
