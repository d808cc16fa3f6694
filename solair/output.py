"""Writing results: CSV and NetCDF (atomic), local time, monthly means, design values.

Result datasets keep their ``time`` coordinate as naive UTC hour-ending
labels with the global attribute ``utc_offset_hours`` (see
docs/architecture.md). The writers here are the only place results touch the
file system, and every write is atomic: the file is written under a temporary
name in the destination folder and moved into place with :func:`os.replace`
only when complete, so a failed or interrupted write never leaves a
half-written output.

CSV layout (for a spreadsheet): one row per hour, one column per variable and
surface. The first column ``time_local`` is the hour-ending label in local
standard time in ISO 8601 form with its offset (``2001-07-01T14:00:00-05:00``);
variables without a ``surface`` dimension come next (``temp_air (°C)``,
``temp_sky (°C)``, ``sky_source``), then per-surface columns named
``variable[surface] (unit)``, e.g. ``temp_sol_air[roof] (°C)``. Variables with
further dimensions (e.g. ``finish``) are labelled ``variable[surface|finish]``.

The table is preceded by a short block of metadata lines, each starting with
``# ``: what the file is, the caution, the site, the time convention, each
surface (tilt, azimuth, absorptance, emissivity), the models and the hours per
sky source, and last a ``# solair record (JSON): {...}`` line holding the
global attributes, the per-surface coordinates and the variable attributes
exactly (read back by :func:`read_csv_metadata`). Read the table with
``pandas.read_csv(path, comment="#")``; a spreadsheet shows the lines as text
above the table, and the ``# reading:`` line gives the line number of the
header row for import dialogs that skip leading rows. Header fields that hold a
``#`` (a surface named ``wall#2``) are quoted, which pandas' default C parser
respects.
"""

from __future__ import annotations

import contextlib
import itertools
import json
import os
import uuid
from pathlib import Path

import numpy as np
import pandas as pd
import xarray as xr

from solair.errors import ConfigurationError
from solair.provenance import CAUTION

__all__ = [
    "OUTPUT_FORMATS",
    "local_time",
    "to_table",
    "write_result",
    "write_table",
    "read_csv_metadata",
    "csv_metadata_lines",
    "CSV_RECORD_PREFIX",
    "monthly_means",
    "design_values",
    "atomic_path",
]

#: File suffix -> format written by :func:`write_result`.
OUTPUT_FORMATS = {".csv": "csv", ".nc": "netcdf"}

#: Start of the metadata line of a result CSV that holds the JSON record.
CSV_RECORD_PREFIX = "# solair record (JSON): "

_UNIT_TEXT = {"degC": "°C", "1": "-"}
_FLOAT_FORMAT = "%.6g"


def local_time(ds: xr.Dataset) -> pd.DatetimeIndex:
    """The hour-ending time labels of ``ds`` as a tz-aware index in local standard time.

    Uses the dataset's global attribute ``utc_offset_hours`` (local standard
    time = UTC + offset).
    """
    if "utc_offset_hours" not in ds.attrs:
        raise ConfigurationError(
            "result has no 'utc_offset_hours' attribute: cannot give local time"
        )
    offset = float(ds.attrs["utc_offset_hours"])
    tz = _fixed_tz(offset)
    return pd.DatetimeIndex(ds["time"].values).tz_localize("UTC").tz_convert(tz)


def _fixed_tz(offset_hours: float):
    import datetime as dt

    return dt.timezone(dt.timedelta(hours=offset_hours))


def _unit(da: xr.DataArray) -> str:
    u = str(da.attrs.get("units", ""))
    return _UNIT_TEXT.get(u, u)


def _column_name(name: str, labels: tuple, unit: str) -> str:
    label = f"{name}[{'|'.join(str(x) for x in labels)}]" if labels else name
    return f"{label} ({unit})" if unit and name != "sky_source" else label


def to_table(ds: xr.Dataset, dim: str = "time") -> pd.DataFrame:
    """Flatten the variables of ``ds`` that have dimension ``dim`` into a wide table.

    One row per ``dim`` value; one column per variable and combination of
    its other coordinates, named ``variable[label] (unit)``.
    """
    columns: dict[str, np.ndarray] = {}
    for name, da in ds.data_vars.items():
        if dim not in da.dims:
            continue
        others = [d for d in da.dims if d != dim]
        da = da.transpose(dim, *others)
        unit = _unit(da)
        values = da.values
        if not others:
            columns[_column_name(name, (), unit)] = values
            continue
        coords = [ds[d].values if d in ds.coords else np.arange(ds.sizes[d]) for d in others]
        for pos in itertools.product(*(range(len(c)) for c in coords)):
            labels = tuple(c[i] for c, i in zip(coords, pos))
            columns[_column_name(name, labels, unit)] = values[(slice(None), *pos)]
    return pd.DataFrame(columns)


def atomic_path(path: str | os.PathLike):
    """Context manager giving a temporary path beside ``path``; moved onto it on success.

    On any exception the temporary file is removed and the exception
    propagates; ``path`` itself is never touched unless the write completed.
    """
    return _Atomic(Path(path))


class _Atomic(contextlib.AbstractContextManager):
    def __init__(self, path: Path) -> None:
        self.path = path

    def __enter__(self) -> Path:
        folder = self.path.parent
        if not folder.is_dir():
            raise ConfigurationError(f"output folder {str(folder)!r} does not exist")
        if self.path.is_dir():
            raise ConfigurationError(f"output path {str(self.path)!r} is a folder, not a file")
        # a fresh name, created by the writer itself (so it gets the usual permissions)
        self.tmp = folder / f".{self.path.name}.{uuid.uuid4().hex[:12]}.part"
        return self.tmp

    def __exit__(self, exc_type, exc, tb) -> bool:
        if exc_type is None:
            try:
                os.replace(self.tmp, self.path)
            except BaseException:
                self.tmp.unlink(missing_ok=True)
                raise
        else:
            self.tmp.unlink(missing_ok=True)
        return False


def _output_format(path: Path) -> str:
    fmt = OUTPUT_FORMATS.get(path.suffix.lower())
    if fmt is None:
        raise ConfigurationError(
            f"output file {str(path)!r}: suffix {path.suffix!r} is not one of "
            f"{sorted(OUTPUT_FORMATS)}"
        )
    return fmt


def write_table(df: pd.DataFrame, path: str | os.PathLike, *, index: bool = True) -> Path:
    """Write a pandas table as CSV, atomically (suffix must be .csv)."""
    path = Path(path)
    if path.suffix.lower() != ".csv":
        raise ConfigurationError(f"table file {str(path)!r}: suffix {path.suffix!r} is not '.csv'")
    with atomic_path(path) as tmp:
        df.to_csv(tmp, index=index, float_format=_FLOAT_FORMAT, encoding="utf-8")
    return path


def _netcdf_ready(ds: xr.Dataset) -> xr.Dataset:
    """Attributes as netCDF can hold them (no None, no bool, no nested containers)."""

    def clean(attrs: dict) -> dict:
        out = {}
        for k, v in attrs.items():
            if v is None:
                continue
            if isinstance(v, bool | np.bool_):
                v = int(v)
            elif isinstance(v, dict):
                v = "; ".join(f"{a}={b}" for a, b in v.items())
            elif isinstance(v, list | tuple) and not all(
                isinstance(x, int | float | np.number) for x in v
            ):
                v = ", ".join(str(x) for x in v)
            out[k] = v
        return out

    ds = ds.copy()
    ds.attrs = clean(ds.attrs)
    for name in ds.variables:
        ds[name].attrs = clean(ds[name].attrs)
    ds.attrs["time_zone_of_time_coordinate"] = "UTC"
    return ds


def write_result(ds: xr.Dataset, path: str | os.PathLike) -> Path:
    """Write a result dataset to CSV or NetCDF, chosen by the suffix (.csv or .nc).

    * ``.csv``: the metadata lines of :func:`csv_metadata_lines` (each
      starting with ``# ``), then the wide table of :func:`to_table` with
      ``time_local`` (local standard time, ISO 8601 with offset) as first
      column; UTF-8 with a byte-order mark (so spreadsheets show °C right;
      pandas skips it); values with 6 significant digits. Read it with
      ``pandas.read_csv(path, comment="#")``; :func:`read_csv_metadata`
      returns the provenance record.
    * ``.nc``: netCDF4 through ``engine="h5netcdf"``; ``time`` stays naive
      UTC (CF units "hours since ..."), the offset is the global attribute
      ``utc_offset_hours``.

    The write is atomic (temporary file in the same folder, then
    :func:`os.replace`).

    Raises
    ------
    ConfigurationError
        Unknown suffix, or the destination folder does not exist.
    """
    path = Path(path)
    fmt = _output_format(path)
    if fmt == "csv":
        table = to_table(ds, "time")
        times = local_time(ds)
        table.insert(0, "time_local", times.strftime("%Y-%m-%dT%H:%M:%S") + _iso_offset(times))
        head = [*csv_metadata_lines(ds, _iso_offset(times)), _header_line(table.columns)]
        with atomic_path(path) as tmp:
            # a byte-order mark, so that spreadsheets read the file as UTF-8 (°C, —)
            with open(tmp, "w", encoding="utf-8-sig", newline="") as fh:
                fh.write("\n".join(head) + "\n")
            table.to_csv(tmp, mode="a", header=False, index=False, float_format=_FLOAT_FORMAT,
                         encoding="utf-8", lineterminator="\n")
    else:
        out = _netcdf_ready(ds)
        out["time"].encoding.update({"units": "hours since 2001-01-01 00:00:00", "dtype": "int64"})
        with atomic_path(path) as tmp:
            out.to_netcdf(tmp, engine="h5netcdf")
    return path


def _header_line(columns) -> str:
    """The CSV header row; fields holding a separator, quote or '#' are quoted."""
    out = []
    for col in map(str, columns):
        if any(ch in col for ch in ',"#\n\r'):
            col = '"' + col.replace('"', '""') + '"'
        out.append(col)
    return ",".join(out)


def _jsonable(value):
    if isinstance(value, np.ndarray):
        return [_jsonable(v) for v in value.tolist()]
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, np.bool_ | bool):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.floating | float):
        v = float(value)
        return v if np.isfinite(v) else None
    if isinstance(value, int | str) or value is None:
        return value
    return str(value)


def _g(value) -> str:
    try:
        return f"{float(value):g}"
    except (TypeError, ValueError):
        return str(value)


def _positive(value) -> bool:
    try:
        return float(value) > 0
    except (TypeError, ValueError):
        return False


def _one_line(text) -> str:
    return " ".join(str(text).split())


def csv_metadata_lines(ds: xr.Dataset, offset_text: str | None = None) -> list[str]:
    """The ``# ``-prefixed metadata lines written above the header of a result CSV.

    Human-readable lines first (product and version, caution, site, weather
    file, time convention, one line per surface and per finish, models, sky
    sources), then :data:`CSV_RECORD_PREFIX` followed by one JSON object with
    ``attrs`` (the global attributes), ``coords`` (the 1-D coordinates and
    time-independent variables other than ``time``, as lists with their
    dimension) and ``variables`` (each variable's attributes).
    """
    a = ds.attrs
    product = " ".join(("solair", str(a.get("solair_version", "")))).strip()
    lines = [f"{product} — exterior equivalent (sol-air) temperature and external surface "
             "resistance R_se", f"caution: {a.get('caution', CAUTION)}"]
    if "site_name" in a:
        where = ", ".join(f"{label} {_g(a[key])}{unit}" for key, label, unit in (
            ("latitude", "latitude", "°"), ("longitude", "longitude", "° (east positive)"),
            ("altitude", "altitude", " m")) if key in a)
        lines.append(f"site: {a['site_name']}" + (f" ({where})" if where else ""))
    if "weather_file" in a:
        fmt = a.get("weather_format", a.get("source_format", ""))
        lines.append(f"weather file: {a['weather_file']}" + (f" ({fmt})" if fmt else ""))
    if offset_text is None and "utc_offset_hours" in a:
        offset_text = _iso_offset(local_time(ds))
    lines.append("time: hour-ending labels (time_local = end of the hour each row covers), "
                 f"local standard time (UTC{offset_text or ''})")
    for dim in ("surface", "finish"):
        if dim not in ds.dims:
            continue
        props = [(c, label, unit) for c, label, unit in (
            ("surface_tilt", "tilt", "°"), ("surface_azimuth", "azimuth", "°"),
            ("absorptance", "absorptance", ""), ("emissivity", "emissivity", ""),
            ("sri", "SRI", "")) if c in ds.coords and ds[c].dims == (dim,)]
        for i, label in enumerate(ds[dim].values):
            text = ", ".join(f"{name} {_g(ds[c].values[i])}{unit}" for c, name, unit in props)
            lines.append(f"{dim} {label}" + (f": {text}" if text else ""))
    models = [(key, label) for key, label in (
        ("sky_model", "sky"), ("transposition_model", "transposition"),
        ("convection_model", "convection"), ("linearisation", "linearisation"),
        ("solar_position_method", "solar position"), ("clear_sky_model", "clear sky"),
        ("albedo_source", "albedo"), ("temp_ground_source", "ground temperature"),
        ("terrain", "terrain"), ("response_model", "surface response"),
        ("construction", "construction")) if key in a]
    if models:
        lines.append("models: " + "; ".join(f"{label} {_one_line(a[key])}"
                                            for key, label in models))
    sources = [(k[len("sky_source_hours_"):], a[k]) for k in a
               if str(k).startswith("sky_source_hours_") and _positive(a[k])]
    if sources:
        lines.append("sky sources: " + ", ".join(f"{name} {int(n)} h" for name, n in sources))
    # this line, the record line, then the header row
    lines.append(f'reading: the header row is line {len(lines) + 3}; pandas.read_csv(path, '
                 'comment="#") skips these lines')
    record = {
        "attrs": _jsonable(dict(a)),
        "coords": {name: {"dims": list(var.dims), "values": _jsonable(var.values),
                          "attrs": _jsonable(dict(var.attrs))}
                   for name, var in ds.variables.items()
                   if name != "time" and len(var.dims) == 1 and var.dims[0] != "time"},
        "variables": {name: _jsonable(dict(var.attrs)) for name, var in ds.data_vars.items()
                      if "time" in var.dims},
    }
    out = ["# " + _one_line(line) for line in lines]
    out.append(CSV_RECORD_PREFIX + json.dumps(record, ensure_ascii=False, allow_nan=False))
    return out


def read_csv_metadata(path: str | os.PathLike) -> dict:
    """The JSON record from the metadata lines of a result CSV written by :func:`write_result`.

    Returns ``{}`` for a CSV without a record (an older file, or one from
    another program); otherwise a dict with ``attrs``, ``coords`` and
    ``variables`` (see :func:`csv_metadata_lines`).

    Raises
    ------
    ConfigurationError
        The record line is present but is not valid JSON.
    """
    path = Path(path)
    with open(path, encoding="utf-8-sig", errors="replace") as fh:
        for number, line in enumerate(fh, start=1):
            if not line.startswith("#"):
                return {}
            if line.startswith(CSV_RECORD_PREFIX):
                try:
                    record = json.loads(line[len(CSV_RECORD_PREFIX):])
                except json.JSONDecodeError as exc:
                    raise ConfigurationError(
                        f"{path}, line {number}: the solair record is not valid JSON ({exc.msg})"
                    ) from None
                if not isinstance(record, dict):
                    raise ConfigurationError(
                        f"{path}, line {number}: the solair record is not a JSON object")
                return record
    return {}


def _iso_offset(times: pd.DatetimeIndex) -> str:
    off = times[0].utcoffset() if len(times) else pd.Timedelta(0)
    minutes = int(round(off.total_seconds() / 60.0))
    sign = "+" if minutes >= 0 else "-"
    return f"{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


def monthly_means(ds: xr.Dataset) -> pd.DataFrame:
    """Monthly means per surface, in local standard time months (for monthly envelope methods).

    Months are taken from the hour-ending label shifted back by 30 min, so the
    hour 23:00-24:00 of the last day of a month counts in that month.

    Returns
    -------
    pandas.DataFrame
        Index ``month`` (1-12); columns ``temp_air (°C)``, ``temp_sky (°C)``
        and, per surface, ``temp_sol_air[name] (°C)``, ``poa_global[name]
        (W m-2)``, ``r_se[name] (m2 K W-1)`` (those present in ``ds``).
    """
    month = (local_time(ds) - pd.Timedelta(minutes=30)).month
    wanted = [v for v in ("temp_air", "temp_sky", "temp_sol_air", "poa_global", "r_se") if v in ds]
    if "temp_sol_air" not in wanted:
        raise ConfigurationError("result has no 'temp_sol_air': monthly means need a run result")
    table = to_table(ds[wanted], "time")
    table.index = pd.Index(month, name="month")
    return table.groupby(level="month").mean()


def design_values(ds: xr.Dataset, levels: tuple[float, float] = (1.0, 99.0)) -> pd.DataFrame:
    """Design levels of the sol-air temperature per surface.

    The 1st and 99th percentiles of the hourly ``temp_sol_air`` over the
    whole record (linear interpolation between order statistics, numpy's
    default): the value exceeded in 99 % of hours (cold design level) and
    the value exceeded in 1 % of hours (warm design level), in the manner of
    the climatic design conditions of ASHRAE Handbook--Fundamentals ch. 14
    (annual percentiles of hourly values). The same levels of ``temp_air``
    are given for comparison.

    Returns
    -------
    pandas.DataFrame
        Index ``surface``; columns ``temp_sol_air_p01 (°C)``,
        ``temp_sol_air_p99 (°C)``, ``temp_air_p01 (°C)``,
        ``temp_air_p99 (°C)``.
    """
    if "temp_sol_air" not in ds:
        raise ConfigurationError("result has no 'temp_sol_air': design values need a run result")
    lo, hi = levels
    tsa = ds["temp_sol_air"].transpose("time", "surface").values
    ta = ds["temp_air"].values
    q = np.percentile(tsa, [lo, hi], axis=0)
    qa = np.percentile(ta, [lo, hi])
    lab = [f"p{lo:02.0f}", f"p{hi:02.0f}"]
    out = pd.DataFrame(
        {
            f"temp_sol_air_{lab[0]} (°C)": q[0],
            f"temp_sol_air_{lab[1]} (°C)": q[1],
            f"temp_air_{lab[0]} (°C)": np.full(q.shape[1], qa[0]),
            f"temp_air_{lab[1]} (°C)": np.full(q.shape[1], qa[1]),
        },
        index=pd.Index(ds["surface"].values, name="surface"),
    )
    return out
