"""Data shaping behind the figures: pure functions over arrays and tables.

Every figure in :mod:`solair.plots` is drawn from one of these functions, so the
numbers a figure shows can be tested without drawing it. Times are the
hour-ending labels of the result datasets (see ``docs/architecture.md``): each
hour is placed at its **middle** (label − 30 min) before it is given a day and an
hour of day, so the hour 00:00–01:00 of 1 January (label 01:00) is day 1, hour 0
and the last hour of the year (label 2002-01-01 00:00) is day 365, hour 23.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence

import numpy as np
import pandas as pd
import xarray as xr

from solair.errors import ConfigurationError

__all__ = [
    "DAYS_PER_YEAR",
    "HOURS_PER_DAY",
    "local_labels",
    "mid_hour",
    "carpet_grid",
    "duration_curve",
    "monthly_statistics",
    "week_mask",
    "finish_metrics",
    "FINISH_METRICS",
    "portfolio_grid",
    "metrics_from_table",
    "main_variable",
    "monthly_means_table",
    "design_values_table",
    "most_absorbing_finish",
    "metric_label",
]

DAYS_PER_YEAR = 365
HOURS_PER_DAY = 24
_HALF_HOUR = pd.Timedelta(minutes=30)
_MONTH_NAMES = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov",
                "Dec"]

#: metrics recomputed from a time × surface × finish dataset: name -> (label, unit)
FINISH_METRICS: dict[str, tuple[str, str]] = {
    "peak_temperature": ("Peak temperature", "°C"),
    "hours_below_dew_point": ("Hours below the air dew point", "h"),
    "heat_gain": ("Heat gain through the construction", "kWh/m²"),
}


def local_labels(ds: xr.Dataset) -> pd.DatetimeIndex:
    """Hour-ending labels of a result in local standard time (naive).

    Parameters
    ----------
    ds : xarray.Dataset
        A solair result: ``time`` in naive UTC and the global attribute
        ``utc_offset_hours`` [h] (local standard time = UTC + offset).

    Returns
    -------
    pandas.DatetimeIndex
        The local standard time labels, without time zone.

    Raises
    ------
    ConfigurationError
        When the dataset has no ``time`` coordinate or no ``utc_offset_hours``.
    """
    if "time" not in ds.coords:
        raise ConfigurationError("result has no 'time' coordinate; a solair run/compare/batch "
                                 "NetCDF result is needed")
    if "utc_offset_hours" not in ds.attrs:
        raise ConfigurationError("result has no 'utc_offset_hours' attribute; cannot place its "
                                 "hours in local standard time")
    offset = float(ds.attrs["utc_offset_hours"])
    index = pd.DatetimeIndex(ds["time"].values)
    if index.tz is not None:
        index = index.tz_convert("UTC").tz_localize(None)
    return index + pd.Timedelta(hours=offset)


def mid_hour(labels: pd.DatetimeIndex) -> pd.DatetimeIndex:
    """Middle of each hour given by its hour-ending label (label − 30 min)."""
    return pd.DatetimeIndex(labels) - _HALF_HOUR


def _day_and_hour(labels: pd.DatetimeIndex) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Day of a non-leap year (1–365), hour of day (0–23) and a keep-mask (drops 29 Feb)."""
    mid = mid_hour(labels)
    doy = np.asarray(mid.day_of_year)
    leap = np.asarray(mid.is_leap_year)
    month = np.asarray(mid.month)
    day = np.asarray(mid.day)
    feb29 = leap & (month == 2) & (day == 29)
    doy = doy - (leap & (month > 2)).astype(int)
    return doy, np.asarray(mid.hour), ~feb29


def carpet_grid(values: Sequence[float] | np.ndarray, labels: pd.DatetimeIndex) -> np.ndarray:
    """Arrange hourly values on a day-of-year × hour-of-day grid.

    Parameters
    ----------
    values : array_like, shape (n,)
        Hourly values (e.g. ``temp_sol_air`` [°C]).
    labels : pandas.DatetimeIndex, shape (n,)
        Hour-ending labels in local standard time.

    Returns
    -------
    numpy.ndarray, shape (365, 24)
        ``grid[d, h]`` holds the value of the hour starting at ``h``:00 on day
        ``d + 1`` of a non-leap year. Each hour is placed at its middle (label −
        30 min), so a year of 8760 hour-ending labels fills the grid exactly. In a
        leap year 29 February is left out; a cell that receives several hours
        (several years) holds their mean; a cell with no hour holds NaN.

    Raises
    ------
    ConfigurationError
        When ``values`` and ``labels`` differ in length.
    """
    values = np.asarray(values, dtype=float).ravel()
    labels = pd.DatetimeIndex(labels)
    if values.size != labels.size:
        raise ConfigurationError(f"carpet grid: {values.size} values for {labels.size} time labels")
    doy, hour, keep = _day_and_hour(labels)
    keep &= np.isfinite(values)
    total = np.zeros((DAYS_PER_YEAR, HOURS_PER_DAY))
    count = np.zeros((DAYS_PER_YEAR, HOURS_PER_DAY))
    np.add.at(total, (doy[keep] - 1, hour[keep]), values[keep])
    np.add.at(count, (doy[keep] - 1, hour[keep]), 1.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(count > 0, total / np.where(count > 0, count, 1.0), np.nan)


def duration_curve(values: Sequence[float] | np.ndarray, *,
                   percent: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """Duration (exceedance) curve of hourly values.

    Parameters
    ----------
    values : array_like, shape (n,)
        Hourly values; NaN are left out.
    percent : bool, default False
        Give the abscissa in % of the hours instead of hours.

    Returns
    -------
    hours : numpy.ndarray, shape (m,)
        Number of hours [h] (or share of the hours [%]) during which the value is
        reached or exceeded: 1, 2, …, m (or 100·k/m).
    sorted_values : numpy.ndarray, shape (m,)
        The values sorted in descending order.
    """
    values = np.asarray(values, dtype=float).ravel()
    values = values[np.isfinite(values)]
    ordered = np.sort(values)[::-1]
    rank = np.arange(1, ordered.size + 1, dtype=float)
    if percent:
        rank = 100.0 * rank / max(ordered.size, 1)
    return rank, ordered


def monthly_statistics(values: Sequence[float] | np.ndarray, labels: pd.DatetimeIndex, *,
                       percentiles: tuple[float, float] = (10.0, 90.0)) -> pd.DataFrame:
    """Monthly mean, percentile band, minimum and maximum of hourly values.

    Parameters
    ----------
    values : array_like, shape (n,)
        Hourly values.
    labels : pandas.DatetimeIndex, shape (n,)
        Hour-ending labels in local standard time; each hour is given to the month
        of its middle (the hour ending 1 February 00:00 belongs to January).
    percentiles : (float, float), default (10, 90)
        Lower and upper percentiles [%] of the band (linear interpolation between
        order statistics, as :func:`numpy.percentile`).

    Returns
    -------
    pandas.DataFrame
        Index ``month`` 1–12 (months without data are left out); columns ``mean``,
        ``p_low``, ``p_high``, ``min``, ``max``, ``hours``.
    """
    values = np.asarray(values, dtype=float).ravel()
    labels = pd.DatetimeIndex(labels)
    if values.size != labels.size:
        raise ConfigurationError(f"monthly statistics: {values.size} values for "
                                 f"{labels.size} time labels")
    low, high = percentiles
    if not 0.0 <= low < high <= 100.0:
        raise ConfigurationError(f"percentile band {percentiles!r} must satisfy "
                                 "0 <= low < high <= 100")
    month = np.asarray(mid_hour(labels).month)
    rows = {}
    for m in range(1, 13):
        sel = values[(month == m) & np.isfinite(values)]
        if sel.size == 0:
            continue
        rows[m] = {
            "mean": float(sel.mean()),
            "p_low": float(np.percentile(sel, low)),
            "p_high": float(np.percentile(sel, high)),
            "min": float(sel.min()),
            "max": float(sel.max()),
            "hours": int(sel.size),
        }
    table = pd.DataFrame.from_dict(rows, orient="index")
    table.index.name = "month"
    return table


_START_RE = re.compile(r"^(?:(\d{4})-)?(\d{1,2})-(\d{1,2})$")


def week_mask(labels: pd.DatetimeIndex, *, week: int | None = None,
              start: str | None = None) -> np.ndarray:
    """Select seven days of hours by week number or start date.

    Parameters
    ----------
    labels : pandas.DatetimeIndex
        Hour-ending labels in local standard time.
    week : int, optional
        Week number 1–53: week N covers days 7(N−1)+1 … 7N of the year (week 1 is
        1–7 January; week 53 is 31 December only).
    start : str, optional
        First day, ``YYYY-MM-DD`` or ``MM-DD``; the year of the data is used (the
        reference year 2001 for typical years), so ``07-15`` means 15 July.

    Returns
    -------
    numpy.ndarray of bool
        True for the hours whose middle lies in the selected seven days.

    Raises
    ------
    ConfigurationError
        When both or neither are given, the week is outside 1–53, the date cannot
        be read or no hour falls in the window.
    """
    if (week is None) == (start is None):
        raise ConfigurationError("give exactly one of week (1-53) or start date (MM-DD)")
    mid = mid_hour(pd.DatetimeIndex(labels))
    year = int(mid[0].year)
    if week is not None:
        if not 1 <= int(week) <= 53:
            raise ConfigurationError(f"week {week!r} is outside 1-53")
        first = pd.Timestamp(year=year, month=1, day=1) + pd.Timedelta(days=7 * (int(week) - 1))
    else:
        match = _START_RE.match(str(start).strip())
        if not match:
            raise ConfigurationError(f"start date {start!r} is not of the form YYYY-MM-DD or MM-DD")
        try:
            first = pd.Timestamp(year=year, month=int(match.group(2)), day=int(match.group(3)))
        except ValueError as exc:
            raise ConfigurationError(f"start date {start!r} is not a date ({exc})") from None
    mask = np.asarray((mid >= first) & (mid < first + pd.Timedelta(days=7)))
    if not mask.any():
        raise ConfigurationError(f"no hour of the result falls in the 7 days from {first:%Y-%m-%d}")
    return mask


def _surface_variable(ds: xr.Dataset) -> str:
    for name in ("temp_surface", "temp_sol_air"):
        if name in ds.data_vars:
            return name
    raise ConfigurationError("result has neither 'temp_surface' nor 'temp_sol_air'")


def finish_metrics(ds: xr.Dataset) -> pd.DataFrame:
    """Key metrics per surface × finish, recomputed from a compare/batch dataset.

    Parameters
    ----------
    ds : xarray.Dataset
        A ``(time, surface, finish)`` result with ``temp_surface`` (or, failing
        that, ``temp_sol_air``) [°C], ``temp_dew`` [°C] and optionally
        ``heat_flux`` [W m-2] (positive into the building).

    Returns
    -------
    pandas.DataFrame
        One row per surface × finish (columns ``surface``, ``finish``) with
        ``peak_temperature`` [°C] (annual maximum), ``hours_below_dew_point`` [h]
        (hours with the surface colder than the air dew point: dew or frost,
        common practice) and, when ``heat_flux`` is present, ``heat_gain``
        [kWh m-2] (Σ max(q, 0)·1 h / 1000). The frame's ``attrs["variable"]`` names
        the temperature used.
    """
    if "finish" not in ds.dims:
        raise ConfigurationError("finish metrics need a compare or batch result "
                                 "(dims time x surface x finish)")
    var = _surface_variable(ds)
    temp = ds[var].transpose("time", "surface", "finish")
    out = {
        "peak_temperature": temp.max("time"),
    }
    if "temp_dew" in ds.data_vars:
        out["hours_below_dew_point"] = (temp < ds["temp_dew"]).sum("time")
    if "heat_flux" in ds.data_vars:
        flux = ds["heat_flux"].transpose("time", "surface", "finish")
        out["heat_gain"] = flux.clip(min=0.0).sum("time") / 1000.0
    table = xr.Dataset(out).to_dataframe().reset_index()
    keep = ["surface", "finish", *out]
    table = table[keep]
    table.attrs["variable"] = var
    return table


def portfolio_grid(table: pd.DataFrame, metric: str, *, finish: str | None = None) -> pd.DataFrame:
    """Pivot a batch summary table to climate × surface for one metric.

    Parameters
    ----------
    table : pandas.DataFrame
        The batch summary: columns ``climate`` and ``surface``, optionally
        ``finish``, and numeric metric columns.
    metric : str
        Metric column to show.
    finish : str, optional
        Finish to keep when the table has several; required then.

    Returns
    -------
    pandas.DataFrame
        Rows = climates (in order of first appearance), columns = surfaces (in
        order of first appearance), values = the metric.
    """
    for col in ("climate", "surface"):
        if col not in table.columns:
            raise ConfigurationError(f"summary table has no {col!r} column; columns are "
                                     f"{list(table.columns)}")
    numeric = [c for c in table.columns
               if c not in ("climate", "surface", "finish")
               and pd.api.types.is_numeric_dtype(table[c]) and table[c].notna().any()]
    if metric not in numeric:
        raise ConfigurationError(f"metric {metric!r} is not one of {sorted(numeric)}")
    if "finish" in table.columns:
        finishes = list(dict.fromkeys(table["finish"]))
        if finish is None:
            if len(finishes) > 1:
                raise ConfigurationError(f"summary table holds several finishes; choose one "
                                         f"of {finishes} with --finish")
            finish = finishes[0]
        if finish not in finishes:
            raise ConfigurationError(f"finish {finish!r} is not one of {finishes}")
        table = table[table["finish"] == finish]
    elif finish is not None:
        raise ConfigurationError(f"summary table has no 'finish' column (finish {finish!r} given)")
    climates = list(dict.fromkeys(table["climate"]))
    surfaces = list(dict.fromkeys(table["surface"]))
    grid = table.pivot_table(index="climate", columns="surface", values=metric, aggfunc="mean")
    return grid.reindex(index=climates, columns=surfaces)


_UNITS = {"kWh m-2": "kWh/m²", "kg m-2": "kg/m²", "W m-2": "W/m²", "K h": "K·h"}
_COLUMN_TEXT = {"absorptance": ("Solar absorptance α of the finish", ""),
                "emissivity": ("Thermal emissivity ε of the finish", ""),
                "sri": ("Solar reflectance index, ASTM E1980-11", ""),
                "u_value": ("Thermal transmittance of the construction", "W/(m²·K)")}


def metric_label(name: str) -> tuple[str, str]:
    """Readable label and unit of a metric column.

    The names of :data:`FINISH_METRICS` first, then the columns of the compare
    metrics table (:data:`solair.compare.METRIC_COLUMNS`, ``"text [unit]"``),
    else the name itself without a unit.
    """
    if name in FINISH_METRICS:
        return FINISH_METRICS[name]
    if name in _COLUMN_TEXT:
        return _COLUMN_TEXT[name]
    try:
        from solair.compare import METRIC_COLUMNS
    except ImportError:  # pragma: no cover - the compare module is part of solair
        METRIC_COLUMNS = {}
    text = METRIC_COLUMNS.get(name)
    if text:
        match = re.match(r"^(.*?)\s*\[(.*)\]\s*$", text)
        if match:
            label, unit = match.group(1), match.group(2)
            unit = _UNITS.get(unit, unit)
            return label[:1].upper() + label[1:], ("" if unit == "-" else unit)
        return text[:1].upper() + text[1:], ""
    return name.replace("_", " "), ""


def metrics_from_table(table: pd.DataFrame) -> pd.DataFrame:
    """A compare metrics table (or batch summary) with the key metrics under the plot names.

    Adds ``peak_temperature`` (= ``temp_surface_max``), ``hours_below_dew_point``
    (= ``dew_hours`` + ``frost_hours``: the surface below the air dew point, above
    or below 0 °C) and keeps ``heat_gain`` and every other column.
    """
    out = table.copy()
    if "peak_temperature" not in out and "temp_surface_max" in out:
        out["peak_temperature"] = out["temp_surface_max"]
        out.attrs["variable"] = "temp_surface"
    if "hours_below_dew_point" not in out and {"dew_hours", "frost_hours"} <= set(out.columns):
        out["hours_below_dew_point"] = out["dew_hours"] + out["frost_hours"]
    return out


def main_variable(ds: xr.Dataset) -> str:
    """temp_surface for a compare/batch result (the response), else temp_sol_air."""
    if "finish" in ds.dims and "temp_surface" in ds.data_vars:
        return "temp_surface"
    return "temp_sol_air" if "temp_sol_air" in ds.data_vars else "temp_surface"


def _per_surface(ds: xr.Dataset, var: str, finish: str | None) -> Iterable[tuple[str, np.ndarray]]:
    da = ds[var]
    if "finish" in da.dims:
        da = da.sel(finish=finish)
    for s in ds["surface"].values:
        yield str(s), np.asarray(da.sel(surface=s).values, dtype=float)


def monthly_means_table(ds: xr.Dataset, *, finish: str | None = None) -> pd.DataFrame:
    """Monthly mean of the air and of :func:`main_variable` per surface [°C] (local months)."""
    labels = local_labels(ds)
    var = main_variable(ds)
    series = list(_per_surface(ds, var, finish))
    if "temp_air" in ds.data_vars:
        series.insert(0, ("air", np.asarray(ds["temp_air"].values, dtype=float)))
    columns = {s: monthly_statistics(v, labels)["mean"] for s, v in series}
    frame = pd.DataFrame(columns)
    frame.index = pd.Index([_MONTH_NAMES[m - 1] for m in frame.index], name="month")
    frame.loc["year"] = [float(np.nanmean(v)) for _, v in series]
    return frame


def design_values_table(ds: xr.Dataset, *, finish: str | None = None) -> pd.DataFrame:
    """Annual 1 % / 99 % values per surface [°C] (common practice).

    ``exceeded 1 % of hours`` is the 99th percentile of the hourly values (about
    88 h per year above it); ``exceeded 99 % of hours`` is the 1st percentile
    (about 88 h per year below it), after the annual-percentile convention of
    climatic design data (common practice).
    """
    var = main_variable(ds)
    rows = {}
    series = list(_per_surface(ds, var, finish))
    if "temp_air" in ds.data_vars:
        series.insert(0, ("air", np.asarray(ds["temp_air"].values, dtype=float)))
    for s, v in series:
        v = v[np.isfinite(v)]
        rows[s] = {"min": v.min(), "exceeded 99 % of hours": np.percentile(v, 1.0),
                   "mean": v.mean(), "exceeded 1 % of hours": np.percentile(v, 99.0),
                   "max": v.max()}
    frame = pd.DataFrame.from_dict(rows, orient="index")
    frame.index.name = "surface"
    return frame


def most_absorbing_finish(ds: xr.Dataset) -> str | None:
    """The finish shown in hourly tables and figures: the most absorbing one (worst case)."""
    if "finish" not in ds.dims:
        return None
    names = [str(f) for f in ds["finish"].values]
    if "absorptance" in ds.coords and ds["absorptance"].dims == ("finish",):
        return names[int(np.argmax(ds["absorptance"].values))]
    return names[0]
