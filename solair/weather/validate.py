"""Validation of a parsed weather file into solair's canonical hourly table.

Steps, in order (each problem raises :class:`solair.errors.WeatherFileError`
naming the file, the line where there is one, the field and what is wrong):

1. header values: latitude, longitude, elevation and time zone in range, and the
   time zone plausible for the longitude;
2. time stamps: 29 February dropped (with a note) when present, then no duplicate
   stamps, rows in time order, exactly the 8760 hours of the year;
3. physical range checks per field (values the file marks as missing are NaN and
   are not range-checked); irradiance not above what the sun can deliver;
4. short gaps (up to :data:`MAX_GAP_HOURS`) filled by linear interpolation in time,
   irradiance kept non-negative, counted per field;
5. derivations, with a :class:`WeatherWarning`: dew point from RH (or RH from dew
   point), over liquid water at all temperatures as meteorological humidity is
   reported (WMO convention), and pressure from the site altitude
   (:func:`pvlib.atmosphere.alt2pres`);
6. what is still missing in a required field is a gap longer than the limit: error
   naming the field and the time range;
7. the timing of the irradiance is compared with the sun's: a file whose rows are
   stamped in another time zone than its header says gets a warning.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd

from solair.errors import WeatherFileError
from solair.weather.formats import OPTIONAL, REQUIRED, UNITS, RawTable

__all__ = ["MAX_GAP_HOURS", "RANGES", "WeatherWarning", "REFERENCE_YEAR", "canonical_index",
           "validate", "irradiance_timing_offset", "extraterrestrial_horizontal"]

#: longest run of missing hours filled by interpolation [h]
MAX_GAP_HOURS = 6
#: the canonical table's (non-leap) reference year
REFERENCE_YEAR = 2001

#: physical range per field [lower, upper] in the canonical unit. Bounds follow the
#: EnergyPlus EPW data dictionary's valid ranges as recalled (from memory: dry bulb
#: -70..70 °C, here widened to the -89 °C record low; RH 0..110 %; pressure
#: 31 000..120 000 Pa; wind 0..40 m/s; direction 0..360°; cloud 0..10 tenths); the
#: rest is common practice.
RANGES = {
    "temp_air": (-90.0, 70.0),
    "temp_dew": (-100.0, 60.0),
    "relative_humidity": (0.0, 110.0),
    "pressure": (31000.0, 120000.0),
    "wind_speed": (0.0, 40.0),
    "wind_direction": (0.0, 360.0),
    "ghi": (0.0, 1500.0),
    "dni": (0.0, 1400.0),
    "dhi": (0.0, 1000.0),
    "ghi_infrared": (0.0, 800.0),
    "total_sky_cover": (0.0, 10.0),
    "opaque_sky_cover": (0.0, 10.0),
    "albedo": (0.0, 1.0),
}
_IRRADIANCE = ("ghi", "dni", "dhi")
#: small negative irradiance (sensor offset at night) clipped to 0 down to this [W/m²]
_NEGATIVE_TOLERANCE = -10.0
#: irradiance bounds: ghi/dhi <= 1.1·E0h + margin, dni <= E0n + margin (common practice)
_GHI_FACTOR, _IRR_MARGIN = 1.1, 30.0
#: |irradiance timing offset| above which the header time zone is doubted [h]
TIMING_TOLERANCE_HOURS = 0.5


class WeatherWarning(UserWarning):
    """A weather file was accepted but something was derived or looks doubtful."""


def _fail(name: str, msg: str, line: int | None = None) -> WeatherFileError:
    where = f"{name}, line {line}" if line is not None else name
    return WeatherFileError(f"{where}: {msg}")


def _stamp(ts: pd.Timestamp) -> str:
    return ts.strftime("%m-%d %H:%M")


# --------------------------------------------------------------------------- header

def check_header(meta: dict, name: str, utc_offset: float | None) -> None:
    """Latitude, longitude, elevation and time zone in range; zone plausible.

    Ranges of the EPW data dictionary's LOCATION record (latitude ±90°, longitude
    ±180°, elevation -1000..9999.9 m); the time zone is allowed -12..+14 h, the
    zones in use (the dictionary stops at +12).
    """
    lat, lon, alt, tz = meta["latitude"], meta["longitude"], meta["altitude"], meta["utc_offset"]
    checks = [("latitude", lat, -90.0, 90.0, "°"), ("longitude", lon, -180.0, 180.0, "°"),
              ("elevation", alt, -1000.0, 9999.9, "m"), ("time zone", tz, -12.0, 14.0, "h")]
    for what, v, lo, hi, unit in checks:
        if not np.isfinite(v) or not lo <= v <= hi:
            raise _fail(name, f"header {what} = {v:g} {unit} is outside [{lo:g}, {hi:g}] {unit}",
                        1)
    zone = tz if utc_offset is None else utc_offset
    # a time zone's meridian is 15°·offset; real zones stray up to ~3 h from it
    # (common practice); more points at a sign error in longitude or zone
    diff = abs(((lon - 15.0 * zone) + 180.0) % 360.0 - 180.0)
    if diff > 60.0:
        raise _fail(name, f"header time zone UTC{zone:+g} h does not fit longitude {lon:g}° "
                    f"(zone meridian {15 * zone:g}°, {diff:.0f}° away; check the signs: "
                    "east and north are positive)", 1)


# --------------------------------------------------------------------------- time index

def canonical_index(month, day, hour, utc_offset: float) -> pd.DatetimeIndex:
    """Hour-ending labels on the reference year, tz-aware at ``utc_offset`` hours."""
    month, day, hour = (np.asarray(x, dtype=np.int64) for x in (month, day, hour))
    if len(month) and ((month < 1) | (month > 12)).any():
        raise ValueError("month outside 1-12")
    first = np.cumsum([0, 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])  # day before month
    length = np.diff(first)
    if len(month) and ((day < 1) | (day > length[month - 1])).any():
        raise ValueError(f"day does not exist in {REFERENCE_YEAR}")
    # wall-clock hours since the reference year's start, then microseconds, the unit
    # pandas gives dates (no string or per-row date parsing)
    hours = (first[month - 1] + day - 1) * 24 + hour
    start = np.datetime64(f"{REFERENCE_YEAR}-01-01", "us").astype(np.int64)
    idx = pd.DatetimeIndex((start + hours * 3_600_000_000).astype("datetime64[us]"))
    return idx.tz_localize(_fixed_tz(utc_offset))


def _fixed_tz(utc_offset: float):
    import datetime as dt

    return dt.timezone(dt.timedelta(hours=float(utc_offset)))


def _build_index(raw: RawTable, name: str, utc_offset: float, notes: list[str]):
    """The canonical index, the rows kept (None: all) and their line numbers."""
    month, day, hour, line = raw.month, raw.day, raw.hour, raw.line
    keep = None
    leap = (month == 2) & (day == 29)
    if leap.any():
        if int(leap.sum()) != 24 or len(month) != 8784:
            raise _fail(name, f"has {len(month)} hourly rows with {int(leap.sum())} on "
                        "29 February; a leap year has 8784 rows with 24 on 29 February",
                        int(line[leap][0]))
        keep = ~leap
        notes.append(f"29 February dropped ({int(leap.sum())} rows, lines "
                     f"{int(line[leap][0])}-{int(line[leap][-1])}) to fit the non-leap "
                     f"reference year {REFERENCE_YEAR}")
        month, day, hour, line = month[keep], day[keep], hour[keep], line[keep]
    idx = canonical_index(month, day, hour, utc_offset)
    dup = idx.duplicated(keep="first")
    if dup.any():
        i = int(np.flatnonzero(dup)[0])
        j = int(np.flatnonzero(idx == idx[i])[0])
        raise _fail(name, f"duplicate time stamp {month[i]:02d}/{day[i]:02d} hour {hour[i]} "
                    f"(hour-ending), already on line {int(line[j])}", int(line[i]))
    step = np.diff(idx.asi8)
    if (step <= 0).any():
        i = int(np.flatnonzero(step <= 0)[0]) + 1
        raise _fail(name, f"time stamp {month[i]:02d}/{day[i]:02d} hour {hour[i]} comes "
                    f"before the previous row's {month[i - 1]:02d}/{day[i - 1]:02d} hour "
                    f"{hour[i - 1]}: rows must be in time order", int(line[i]))
    full = pd.date_range(pd.Timestamp(REFERENCE_YEAR, 1, 1, 1), periods=8760, freq="h",
                         tz=_fixed_tz(utc_offset))
    if len(idx) != 8760 or not idx.equals(full):
        missing = full.difference(idx)
        extra = idx.difference(full)
        detail = ""
        if len(missing):
            detail = f"; first missing hour ends {_stamp(missing[0])}"
            if len(idx) and idx[-1] < missing[0]:
                detail += f" (the file stops at line {int(line[-1])})"
        elif len(extra):
            detail = f"; unexpected stamp {_stamp(extra[0])}"
        raise _fail(name, f"has {len(idx)} hourly rows, expected 8760 (a whole year of "
                    f"hours, or 8784 with 29 February){detail}")
    return idx, keep, line


# --------------------------------------------------------------------------- sun

def _fields(index: pd.DatetimeIndex, utc: bool = False):
    """Day of year, hour and minute of ``index`` in its own zone (or in UTC) as numpy arrays.

    Computed from the nanoseconds for a fixed-offset zone (the canonical index's);
    pandas' field accessors otherwise (same numbers, slower).
    """
    off = None
    if index.tz is not None:
        try:
            off = index.tz.utcoffset(None)
        except Exception:  # noqa: BLE001 - a zone with rules: let pandas do it
            off = None
    if off is None:
        idx = index.tz_convert("UTC") if utc else index
        return (idx.day_of_year.to_numpy(), idx.hour.to_numpy(), idx.minute.to_numpy())
    ns = index.as_unit("ns").asi8
    if not utc:
        ns = ns + int(off.total_seconds() * 1e9)
    t = ns.astype("datetime64[ns]")
    doy = (t.astype("datetime64[D]") - t.astype("datetime64[Y]")).astype(np.int64) + 1
    return doy, (ns // 3_600_000_000_000) % 24, (ns // 60_000_000_000) % 60


def extraterrestrial_horizontal(index: pd.DatetimeIndex, latitude: float, longitude: float,
                                substeps: int = 6) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Hourly mean extraterrestrial irradiance on a horizontal plane, and on a normal one.

    The horizontal value is the mean of E0n·max(cos θz, 0) over ``substeps``
    instants inside each hour ending at the label (Spencer 1971 declination and
    equation of time, via :mod:`pvlib.solarposition`; E0n by
    :func:`pvlib.irradiance.get_extra_radiation`).

    Returns
    -------
    (e0h, e0n, sun_up) : tuple of numpy.ndarray
        Extraterrestrial horizontal and normal irradiance [W/m²], and whether the
        sun's centre is within 1.5° below the horizon or higher at any instant of the
        hour (refraction and the solar disc lift it by about 0.8°).

    References
    ----------
    Spencer, J. W. (1971). Fourier series representation of the position of the
    sun. *Search* 2(5), 172.
    """
    from pvlib import irradiance, solarposition

    doy = _fields(index)[0]
    # the day terms once per calendar day (a year has 365 of them, not 8760)
    days = np.arange(1, 367)
    e0n = np.asarray(irradiance.get_extra_radiation(days), dtype=float)[doy - 1]
    decl = solarposition.declination_spencer71(days)[doy - 1]
    eot = solarposition.equation_of_time_spencer71(days)[doy - 1]  # [min]
    # hours since 00:00 UTC of the label, then apparent solar time (vectorised hour angle)
    _, hour, minute = _fields(index, utc=True)
    utc_hours = hour + minute / 60.0
    lat = np.radians(latitude)
    # instants from the hour start to its end, all at once: (substeps + 1, n_hours)
    fractions = np.linspace(0.0, 1.0, substeps + 1)[:, None]
    solar = utc_hours - (1.0 - fractions) + longitude / 15.0 + eot / 60.0
    ha = np.radians(15.0 * (solar - 12.0))
    cz = np.sin(lat) * np.sin(decl) + np.cos(lat) * np.cos(decl) * np.cos(ha)
    cos_max = cz.max(axis=0)
    w = np.ones((substeps + 1, 1))
    w[[0, -1]] = 0.5  # trapezoidal rule over the hour
    cos_sum = (w * np.clip(cz, 0.0, None)).sum(axis=0)
    return e0n * cos_sum / substeps, e0n, cos_max > -np.sin(np.radians(1.5))


def irradiance_timing_offset(ghi: np.ndarray, index: pd.DatetimeIndex, longitude: float,
                             utc_offset: float) -> float:
    """How far the irradiance is off the sun's timing [h] (0 for a consistent file).

    The GHI-weighted circular mean of apparent solar time at mid-hour is compared with
    solar noon. The local apparent solar time of clock time t (local standard time at
    UTC+``utc_offset``) is t + (longitude − 15·offset)/15 h + EoT. A file whose rows
    are in UTC but whose header says UTC+1 shows about −1 h; the offset that fits the
    data is then ``utc_offset + round(result)``.
    """
    from pvlib import solarposition

    doy, hour, minute = _fields(index - pd.Timedelta(minutes=30))
    eot = solarposition.equation_of_time_spencer71(np.arange(1, 367))[doy - 1] / 60.0
    clock = hour + minute / 60.0
    solar = clock + (longitude - 15.0 * utc_offset) / 15.0 + eot
    w = np.nan_to_num(np.clip(ghi, 0.0, None))
    ang = 2.0 * np.pi * solar / 24.0
    mean = np.arctan2(np.sum(w * np.sin(ang)), np.sum(w * np.cos(ang))) * 24.0 / (2.0 * np.pi)
    return float(((mean - 12.0) + 12.0) % 24.0 - 12.0)


# --------------------------------------------------------------------------- values
# The helpers below take the columns as a mapping name -> values (a dict of numpy
# arrays inside validate(); a DataFrame works too) and the index separately: the
# table is built once at the end, without pandas' per-column overhead on the way.

def _check_ranges(data, line: np.ndarray, name: str, notes: list[str]) -> None:
    for col, (lo, hi) in RANGES.items():
        if col not in data:
            continue
        v = np.asarray(data[col]) + 0.0  # + 0.0 turns -0.0 into 0.0
        data[col] = v
        if col in _IRRADIANCE or col == "ghi_infrared":
            small = (v < lo) & (v >= _NEGATIVE_TOLERANCE)
            if small.any():
                v = np.where(small, 0.0, v)
                data[col] = v
                notes.append(f"{col}: {int(small.sum())} slightly negative values "
                             f"(>= {_NEGATIVE_TOLERANCE:g} W/m²) set to 0")
        bad = (v < lo) | (v > hi)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            unit = UNITS[col]
            raise _fail(name, f"{col} = {v[i]:g} {unit} is outside [{lo:g}, {hi:g}] {unit} "
                        f"({int(bad.sum())} such rows)", int(line[i]))


def _check_consistency(data, index: pd.DatetimeIndex, line: np.ndarray, name: str,
                       lat: float, lon: float, timing_offset: float) -> None:
    idx = index
    if timing_offset:
        idx = idx - pd.Timedelta(hours=timing_offset)  # check against the sun as the data are
    e0h, e0n, up = extraterrestrial_horizontal(idx, lat, lon)
    limits = {"ghi": _GHI_FACTOR * e0h + _IRR_MARGIN, "dhi": _GHI_FACTOR * e0h + _IRR_MARGIN,
              "dni": e0n * up + _IRR_MARGIN}
    for col, lim in limits.items():
        v = np.asarray(data[col])
        bad = v > lim
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise _fail(name, f"{col} = {v[i]:g} W/m² in the hour ending {_stamp(index[i])} "
                        f"exceeds what the sun can deliver ({lim[i]:.0f} W/m²: extraterrestrial "
                        f"{e0h[i]:.0f} W/m² horizontal, {e0n[i]:.0f} W/m² normal)", int(line[i]))
    td, t = np.asarray(data["temp_dew"]), np.asarray(data["temp_air"])
    bad = td > t + 1.0
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise _fail(name, f"temp_dew = {td[i]:g} °C is above temp_air = {t[i]:g} °C "
                    "by more than 1 K", int(line[i]))


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """(start, stop) index pairs of the True runs of ``mask``."""
    m = np.concatenate([[False], mask, [False]])
    d = np.diff(m.astype(int))
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1), strict=True))


def _fill_short_gaps(data, filled: dict[str, int]) -> None:
    for col in list(data):
        v = np.asarray(data[col], dtype=float)
        na = np.isnan(v)
        if not na.any() or na.all():
            continue
        short = np.zeros(len(v), dtype=bool)
        for a, b in _runs(na):
            if b - a <= MAX_GAP_HOURS:
                short[a:b] = True
        if not short.any():
            continue
        x = np.arange(len(v))
        ok = ~na
        # linear in time; the year wraps around (Dec 31 joins Jan 1 of a typical year)
        xp = np.concatenate([x[ok] - len(v), x[ok], x[ok] + len(v)])
        fp = np.tile(v[ok], 3)
        new = v.copy()
        new[short] = np.interp(x[short], xp, fp)
        if col in _IRRADIANCE or col == "ghi_infrared":
            new[short] = np.clip(new[short], 0.0, None)
        data[col] = new
        filled[col] = filled.get(col, 0) + int(short.sum())


def _derive(data, altitude: float, name: str, notes: list[str],
            counts: dict[str, int]) -> None:
    from pvlib.atmosphere import alt2pres

    from solair import psychrometrics as ps

    t = np.asarray(data["temp_air"])
    derived = []
    td = np.asarray(data["temp_dew"])
    rh = np.asarray(data["relative_humidity"])
    need = np.isnan(td) & ~np.isnan(rh) & ~np.isnan(t)
    if need.any():
        td = td.copy()
        dew = ps.dew_point(t[need], np.clip(rh[need], 0.0, 100.0), phase="water")
        td[need] = np.minimum(dew, t[need])
        data["temp_dew"] = td
        counts["temp_dew"] = int(need.sum())
        derived.append(f"temp_dew from relative_humidity and temp_air in {int(need.sum())} hours")
    need = np.isnan(rh) & ~np.isnan(td) & ~np.isnan(t)
    if need.any():
        rh = rh.copy()
        rh[need] = ps.relative_humidity(t[need], td[need], phase="water")
        data["relative_humidity"] = rh
        counts["relative_humidity"] = int(need.sum())
        derived.append(f"relative_humidity from temp_dew and temp_air in {int(need.sum())} hours")
    p = np.asarray(data["pressure"])
    need = np.isnan(p)
    if need.any():
        p = p.copy()
        p[need] = float(alt2pres(altitude))
        data["pressure"] = p
        counts["pressure"] = int(need.sum())
        derived.append(f"pressure {float(alt2pres(altitude)):.0f} Pa from the site altitude "
                       f"{altitude:g} m (pvlib.atmosphere.alt2pres) in {int(need.sum())} hours")
    for d in derived:
        notes.append("derived " + d)
        warnings.warn(f"{name}: derived {d}", WeatherWarning, stacklevel=4)


def _check_complete(data, index: pd.DatetimeIndex, line: np.ndarray, name: str) -> None:
    for col in REQUIRED:
        na = np.isnan(np.asarray(data[col], dtype=float))
        if not na.any():
            continue
        if na.all():
            raise _fail(name, f"{col} has no valid value in the whole file (all rows hold the "
                        "missing-value code)")
        a, b = _runs(na)[0]
        raise _fail(name, f"{col} is missing for {b - a} consecutive hours, from the hour "
                    f"ending {_stamp(index[a])} (line {int(line[a])}) to the hour ending "
                    f"{_stamp(index[b - 1])} (line {int(line[b - 1])}); gaps up to "
                    f"{MAX_GAP_HOURS} h are filled, longer ones are an error")


# --------------------------------------------------------------------------- entry

def validate(raw: RawTable, name: str, utc_offset: float | None = None):
    """Turn a :class:`RawTable` into ``(data, utc_offset, filled, notes, derived)``.

    Parameters
    ----------
    raw : RawTable
        Output of :func:`solair.weather.formats.parse`.
    name : str
        File name used in messages.
    utc_offset : float, optional
        Time zone of the file's time stamps [h]; overrides the header's when given.

    Returns
    -------
    tuple
        The canonical DataFrame, the UTC offset used [h], the fill counts per field,
        the notes and the counts of derived values per field.
    """
    notes = list(raw.notes)
    check_header(raw.meta, name, utc_offset)
    offset = raw.meta["utc_offset"] if utc_offset is None else float(utc_offset)
    if utc_offset is not None and float(utc_offset) != raw.meta["utc_offset"]:
        notes.append(f"time stamps taken as UTC{offset:+g} h as requested (header says "
                     f"UTC{raw.meta['utc_offset']:+g} h)")
    if not -12.0 <= offset <= 14.0:
        raise WeatherFileError(f"{name}: utc_offset = {offset:g} h is outside [-12, 14] h")
    index, keep, line = _build_index(raw, name, offset, notes)
    data = {}  # column -> values (own copies), the table is built at the end
    for col in raw.data.columns:
        v = raw.data[col].to_numpy(copy=True)
        data[col] = v if keep is None else v[keep]
    for col in (*REQUIRED, *OPTIONAL):
        if col not in data and col in REQUIRED:
            raise _fail(name, f"the file has no {col} field")
    if "albedo" in data:
        zero = data["albedo"] <= 0.0
        if zero.any():
            data["albedo"][zero] = np.nan
            notes.append(f"albedo: {int(zero.sum())} values of 0 taken as missing (no ground "
                         "has zero albedo)")
    _check_ranges(data, line, name, notes)
    ghi_known = data["ghi"]
    timing = 0.0
    if np.nansum(np.clip(ghi_known, 0, None)) > 0:
        timing = irradiance_timing_offset(ghi_known, index, raw.meta["longitude"], offset)
    shift = 0.0
    if abs(timing) > TIMING_TOLERANCE_HOURS:
        shift = float(np.round(timing))
        if shift:
            fits = offset + shift
            msg = (f"{name}: the irradiance peaks {abs(timing):.1f} h "
                   f"{'earlier' if timing < 0 else 'later'} than the sun does at UTC{offset:+g} h; "
                   f"the rows look stamped in UTC{fits:+g} h. If so, read it with "
                   f"utc_offset={fits:g} (on the command line: --utc-offset {fits:g})")
            notes.append(msg.split(": ", 1)[1])
            warnings.warn(msg, WeatherWarning, stacklevel=3)
    _check_consistency(data, index, line, name, raw.meta["latitude"], raw.meta["longitude"],
                       shift)
    filled: dict[str, int] = {}
    _fill_short_gaps(data, filled)
    derived: dict[str, int] = {}
    _derive(data, raw.meta["altitude"], name, notes, derived)
    _check_complete(data, index, line, name)
    given = {c: c in data and not np.isnan(data[c]).all() for c in OPTIONAL}
    cols = [c for c in REQUIRED] + [c for c in OPTIONAL if given[c]]
    for c in OPTIONAL:
        if c in data and not given[c]:
            notes.append(f"{c} not given in the file (all missing)")
    data = pd.DataFrame({c: data[c] for c in cols}, index=index, copy=False)
    filled = {c: filled.get(c, 0) for c in cols}
    return data, offset, filled, notes, derived
