"""Figures of solair results: carpet, duration, monthly, finishes, portfolio, sky-spread.

Use :func:`draw` with a loaded result (:func:`load_result`) and a kind from
:data:`PLOT_KINDS`; it returns a :class:`matplotlib.figure.Figure` (object API,
Agg canvas, no pyplot state). :func:`save_figure` writes it atomically and
:func:`figure_png` returns the PNG bytes. The data shaping behind each figure
is in :mod:`solair.plots.shaping`.

Results read (see ``docs/architecture.md``):

* ``run``: NetCDF from ``solair run``, dims ``(time, surface)``;
* ``compare`` / ``batch``: NetCDF with dims ``(time, surface, finish)``;
* ``metrics``: CSV table with ``surface`` and ``finish`` columns (``solair compare -o``);
* ``summary``: CSV table with ``climate`` and ``surface`` columns (``solair batch``).
"""

from __future__ import annotations

import io
import os
import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import xarray as xr
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from solair.errors import ConfigurationError
from solair.output import atomic_path
from solair.plots import figures, shaping

__all__ = [
    "PLOT_KINDS",
    "RESULT_TYPES",
    "detect_result_type",
    "load_result",
    "dataset_from_hourly_table",
    "draw",
    "figure_png",
    "save_figure",
    "figures",
    "shaping",
]

#: result type -> what it is
RESULT_TYPES: dict[str, str] = {
    "run": "hourly sol-air result (time x surface), NetCDF from `solair run`",
    "compare": "finish comparison (time x surface x finish), NetCDF from `solair compare --hourly`",
    "batch": "one climate of a portfolio (time x surface x finish), NetCDF from `solair batch`",
    "metrics": "metrics table per surface x finish, CSV from `solair compare -o`",
    "summary": "portfolio summary per climate x surface (x finish), CSV from `solair batch`",
}

#: plot kind -> (one-line description, result types it accepts)
PLOT_KINDS: dict[str, tuple[str, frozenset[str]]] = {
    "carpet": ("day of year x hour of day of a surface variable (or its excess over the air)",
               frozenset({"run", "compare", "batch"})),
    "duration": ("duration curves per surface (hours per year a value is reached or exceeded)",
                 frozenset({"run", "compare", "batch"})),
    "monthly": ("monthly mean and 10-90 % band per surface",
                frozenset({"run", "compare", "batch"})),
    "finishes": ("bars of peak temperature, hours below dew point and heat gain per finish",
                 frozenset({"compare", "batch", "metrics"})),
    "portfolio": ("heat map of one metric per climate x surface",
                  frozenset({"summary"})),
    "sky-spread": ("band of sky and sol-air temperature over the sky models, one week",
                   frozenset({"run", "compare", "batch"})),
}

_IMAGE_SUFFIXES = {".png": "png", ".svg": "svg", ".pdf": "pdf"}


def detect_result_type(result: xr.Dataset | pd.DataFrame) -> str:
    """Which solair output a loaded result is: a key of :data:`RESULT_TYPES`."""
    if isinstance(result, pd.DataFrame):
        cols = set(result.columns)
        if {"climate", "surface"} <= cols:
            return "summary"
        if {"surface", "finish"} <= cols:
            return "metrics"
        if "time_local" in cols:
            raise ConfigurationError("an hourly CSV table must be read with load_result(), "
                                     "or written as NetCDF (`solair run WEATHER -o result.nc`)")
        raise ConfigurationError(f"table with columns {sorted(cols)} is neither a batch summary "
                                 "(climate, surface, ...) nor a metrics table "
                                 "(surface, finish, ...)")
    if "time" not in result.dims or "surface" not in result.dims:
        raise ConfigurationError(f"dataset with dims {dict(result.sizes)} is not a solair result "
                                 "(needs dims time and surface)")
    if "finish" not in result.dims:
        return "run"
    command = str(result.attrs.get("solair_command", ""))
    if command in ("compare", "batch"):
        return command
    batch_marks = ("climate_label", "portfolio", "climate")
    return "batch" if any(m in result.attrs for m in batch_marks) else "compare"


_COLUMN = re.compile(r"^(?P<name>[A-Za-z_][A-Za-z0-9_]*)(?:\[(?P<label>[^\]]+)\])?"
                     r"(?: \((?P<unit>[^)]*)\))?$")
_UNIT_BACK = {"°C": "degC"}


def dataset_from_hourly_table(table: pd.DataFrame, *, name: str = "",
                              metadata: dict | None = None) -> xr.Dataset:
    """Rebuild a run dataset from the hourly CSV of ``solair run`` (``time_local`` first).

    Columns are ``variable (unit)`` or ``variable[surface] (unit)``; the local
    times carry their UTC offset, so ``time`` (UTC) and ``utc_offset_hours`` are
    restored. ``metadata`` is the record of the CSV's ``#`` lines
    (:func:`solair.output.read_csv_metadata`): with it the global attributes
    (site, models, sky-source counts...), the surface coordinates
    (``surface_tilt``, ``surface_azimuth``, ``absorptance``, ``emissivity``),
    the view factors and the variable attributes come back as they were in
    the run. Without it (a CSV from before the metadata block, or edited)
    ``site_name`` is set from ``name`` and the attribute ``source_table`` says
    the rest is unknown.

    Raises
    ------
    ConfigurationError
        Unreadable times or columns, a table with more than one label per
        column, or a record that does not match the table's surfaces.
    """
    try:
        stamps = pd.to_datetime(table["time_local"], format="ISO8601")
    except (ValueError, TypeError) as exc:
        raise ConfigurationError(f"column time_local: cannot read the times ({exc})") from None
    if stamps.dt.tz is None:
        raise ConfigurationError("column time_local: times carry no UTC offset")
    offset = stamps.iloc[0].utcoffset().total_seconds() / 3600.0
    utc = pd.DatetimeIndex(stamps.dt.tz_convert("UTC").dt.tz_localize(None).to_numpy()
                           .astype("datetime64[ns]"), name="time")
    flat: dict[str, tuple[str, np.ndarray]] = {}
    per_surface: dict[str, dict[str, np.ndarray]] = {}
    units: dict[str, str] = {}
    for col in table.columns[1:]:
        match = _COLUMN.match(str(col))
        if not match or (match.group("label") and "|" in match.group("label")):
            raise ConfigurationError(f"column {col!r} is not 'variable[surface] (unit)'; "
                                     "plot the NetCDF output instead")
        var, label = match.group("name"), match.group("label")
        units[var] = _UNIT_BACK.get(match.group("unit") or "", match.group("unit") or "1")
        try:
            values = table[col].to_numpy(dtype=float)
        except (ValueError, TypeError):
            raise ConfigurationError(f"column {col!r} holds values that are not numbers"
                                     ) from None
        if label is None:
            flat[var] = ("time", values)
        else:
            per_surface.setdefault(var, {})[label] = values
    surfaces = list(dict.fromkeys(s for cols in per_surface.values() for s in cols))
    data: dict[str, Any] = {k: (dims, v) for k, (dims, v) in flat.items()}
    for var, cols in per_surface.items():
        missing = [s for s in surfaces if s not in cols]
        if missing:
            raise ConfigurationError(f"variable {var!r} has no column for surface {missing[0]!r}")
        data[var] = (("time", "surface"), np.stack([cols[s] for s in surfaces], axis=1))
    ds = xr.Dataset(data, coords={"time": utc, "surface": surfaces})
    record = metadata or {}
    var_attrs = record.get("variables", {}) if isinstance(record.get("variables"), dict) else {}
    for var in ds.data_vars:
        attrs = var_attrs.get(var) if isinstance(var_attrs.get(var), dict) else {}
        ds[var].attrs.update({"long_name": var.replace("_", " "), **attrs,
                              "units": units[var]})
    if record:
        _restore_record(ds, record)
        ds.attrs["utc_offset_hours"] = offset
        ds.attrs["source_table"] = "hourly CSV table of solair run, with its metadata lines"
    else:
        ds.attrs.update({"site_name": name or "unnamed site", "utc_offset_hours": offset,
                         "source_table": "hourly CSV table without solair's metadata lines: "
                                         "no site, surface geometry or model attributes"})
    return ds


def _restore_record(ds: xr.Dataset, record: dict) -> None:
    """Global attributes and 1-D coordinates of the CSV record onto the rebuilt dataset."""
    attrs = record.get("attrs", {})
    if isinstance(attrs, dict):
        ds.attrs.update({str(k): v for k, v in attrs.items() if v is not None})
    coords = record.get("coords", {})
    if not isinstance(coords, dict):
        return
    names = coords.get("surface", {}).get("values") if isinstance(coords.get("surface"),
                                                                   dict) else None
    if names is not None and [str(n) for n in names] != [str(s) for s in ds["surface"].values]:
        raise ConfigurationError(f"the metadata lists surfaces {names}, the table's columns "
                                 f"have {list(ds['surface'].values)}")
    for cname, item in coords.items():
        if cname in ("surface", "time") or not isinstance(item, dict):
            continue
        dims, values = item.get("dims"), item.get("values")
        if dims != ["surface"] or not isinstance(values, list) or len(values) != ds.sizes[
                "surface"] or any(isinstance(v, list | dict) for v in values):
            continue  # other dimensions (finish) are not in a run table
        arr = np.asarray([np.nan if v is None else v for v in values])
        da = xr.DataArray(arr, dims=("surface",), attrs=item.get("attrs") or {})
        if cname in ("surface_tilt", "surface_azimuth", "absorptance", "emissivity"):
            ds.coords[cname] = da
        elif cname not in ds.variables:
            ds[cname] = da


def load_result(path: str | os.PathLike[str]) -> xr.Dataset | pd.DataFrame:
    """Read a result file: NetCDF (``.nc``) into memory, or a CSV table (``.csv``).

    The hourly CSV of ``solair run`` is rebuilt into a dataset with
    :func:`dataset_from_hourly_table`; other CSV files are metrics or summary tables.

    Raises
    ------
    ConfigurationError
        When the file is missing, has another suffix or cannot be read.
    """
    path = Path(path)
    if not path.is_file():
        raise ConfigurationError(f"{path}: no such result file")
    suffix = path.suffix.lower()
    try:
        if suffix in (".nc", ".nc4", ".netcdf"):
            with xr.open_dataset(path) as ds:
                result: xr.Dataset | pd.DataFrame = ds.load()
        elif suffix == ".csv":
            result = pd.read_csv(path, comment="#")
            if "time_local" in result.columns:
                from solair.output import read_csv_metadata

                result = dataset_from_hourly_table(result, name=path.stem,
                                                   metadata=read_csv_metadata(path))
        else:
            raise ConfigurationError(f"{path}: suffix {path.suffix!r} is not one of "
                                     "['.nc', '.csv']")
    except ConfigurationError:
        raise
    except Exception as exc:  # noqa: BLE001 - any reader failure is a user's file problem
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise ConfigurationError(f"{path}: cannot be read as a solair result ({first})") from None
    detect_result_type(result)
    return result


def draw(result: xr.Dataset | pd.DataFrame, kind: str, *,
         surfaces: Sequence[str] | None = None, variable: str | None = None,
         finish: str | None = None, minus_air: bool = False, week: int | None = None,
         start: str | None = None, metric: str | None = None, percent: bool = False) -> Figure:
    """Draw a figure of the given kind from a loaded result.

    Parameters
    ----------
    result : xarray.Dataset or pandas.DataFrame
        As returned by :func:`load_result` or by the library functions.
    kind : str
        A key of :data:`PLOT_KINDS`.
    surfaces : sequence of str, optional
        Surfaces to draw (default: all; the first for carpet and sky-spread).
    variable : str, optional
        Hourly variable (default ``temp_sol_air``, else ``temp_surface``).
    finish : str, optional
        Finish of a compare/batch result (default the first) or of a summary.
    minus_air : bool
        Carpet of the difference from ``temp_air`` (diverging colours, 0 K centred).
    week, start : int or str, optional
        Week (1–53) or start date (``MM-DD``) of the sky-spread window.
    metric : str, optional
        Metric column for ``portfolio`` (required), or the metrics (comma-separated) drawn
        by ``finishes`` (default: peak temperature, hours below the dew point, heat gain).
    percent : bool
        Duration curve abscissa in % of the year.

    Raises
    ------
    ConfigurationError
        Unknown kind, a kind that does not fit the result, unknown surface,
        finish, variable or metric.
    """
    if kind not in PLOT_KINDS:
        raise ConfigurationError(f"plot kind {kind!r} is not one of {sorted(PLOT_KINDS)}")
    rtype = detect_result_type(result)
    accepted = PLOT_KINDS[kind][1]
    if rtype not in accepted:
        fits = sorted(k for k, (_, types) in PLOT_KINDS.items() if rtype in types)
        raise ConfigurationError(f"plot kind {kind!r} needs a {' or '.join(sorted(accepted))} "
                                 f"result, the file is a {rtype} result (kinds for it: {fits})")
    if kind in ("carpet", "duration", "monthly", "sky-spread"):
        _unused(kind, metric=metric)
    if kind == "carpet":
        return figures.carpet_figure(result, surfaces=surfaces, variable=variable,
                                     minus_air=minus_air, finish=finish)
    _unused(kind, minus_air=minus_air)
    if kind == "duration":
        return figures.duration_figure(result, surfaces=surfaces, variable=variable,
                                       finish=finish, percent=percent)
    if kind == "monthly":
        return figures.monthly_figure(result, surfaces=surfaces, variable=variable,
                                      finish=finish)
    if kind == "sky-spread":
        return figures.sky_spread_figure(result, surfaces=surfaces, week=week, start=start,
                                         finish=finish)
    _unused(kind, week=week, start=start)
    if kind == "finishes":
        if isinstance(result, xr.Dataset):
            table = shaping.finish_metrics(result)
            site = str(result.attrs.get("site_name", ""))
        else:
            table, site = shaping.metrics_from_table(result), ""
        return figures.finishes_figure(table, site=site, surfaces=surfaces,
                                       metric_names=([m.strip() for m in metric.split(",")]
                                                     if metric else None))
    table = shaping.metrics_from_table(result)
    if metric is None:
        numeric = sorted(c for c in table.columns if c not in ("climate", "surface", "finish")
                         and pd.api.types.is_numeric_dtype(table[c]) and table[c].notna().any())
        raise ConfigurationError(f"plot kind 'portfolio' needs --metric, one of {numeric}")
    return figures.portfolio_figure(table, metric, finish=finish, surfaces=surfaces)


def _unused(kind: str, **options: Any) -> None:
    for name, value in options.items():
        if value not in (None, False):
            raise ConfigurationError(f"option {name.replace('_', '-')} does not apply to plot "
                                     f"kind {kind!r}")


def figure_png(fig: Figure, *, dpi: float = 200) -> bytes:
    """The figure as PNG bytes."""
    buffer = io.BytesIO()
    if not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    fig.savefig(buffer, format="png", dpi=dpi)
    return buffer.getvalue()


def save_figure(fig: Figure, path: str | os.PathLike[str], *, dpi: float = 200) -> Path:
    """Write the figure to ``path`` (PNG, SVG or PDF by suffix), atomically.

    The image is written to a temporary file in the same folder and moved into
    place, so an interrupted run never leaves a half-written figure.
    """
    path = Path(path)
    fmt = _IMAGE_SUFFIXES.get(path.suffix.lower())
    if fmt is None:
        raise ConfigurationError(f"{path}: figure suffix {path.suffix!r} is not one of "
                                 f"{sorted(_IMAGE_SUFFIXES)}")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise ConfigurationError(f"{path}: folder {folder} does not exist")
    with atomic_path(path) as tmp, open(tmp, "wb") as out:
        fig.savefig(out, format=fmt, dpi=dpi)
    return path
