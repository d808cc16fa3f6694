"""Figures of solair results (matplotlib object API, Agg canvas, no pyplot state).

Each ``*_figure`` function takes a result (dataset or table) and returns a
:class:`matplotlib.figure.Figure` sized for an A4 page (7.5 in wide, text ≥ 8 pt).
The numbers come from :mod:`solair.plots.shaping`. Time axes are in local
standard time (the result's ``utc_offset_hours``).
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Sequence
from typing import Any

import matplotlib
import numpy as np
import pandas as pd
import xarray as xr
from matplotlib import colors, dates
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure, SubFigure

from solair.errors import ConfigurationError
from solair.plots import shaping

__all__ = [
    "FIGURE_WIDTH",
    "carpet_figure",
    "duration_figure",
    "monthly_figure",
    "finishes_figure",
    "portfolio_figure",
    "sky_spread_figure",
    "select_surfaces",
    "select_finish",
]

FIGURE_WIDTH = 7.5  # in, fits an A4 text width with margins
_STYLE = {
    "font.size": 9,
    "axes.titlesize": 9.5,
    "axes.labelsize": 9,
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "legend.fontsize": 8,
    "figure.titlesize": 10.5,
    "axes.grid": True,
    "grid.alpha": 0.3,
    "grid.linewidth": 0.5,
    "savefig.dpi": 200,
}
_MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]
_MONTH_START_DOY = [1, 32, 60, 91, 121, 152, 182, 213, 244, 274, 305, 335]
_UNIT_TEXT = {"degC": "°C", "degree_Celsius": "°C", "celsius": "°C", "C": "°C",
              "W m-2": "W/m²", "W/m2": "W/m²", "W m-2 K-1": "W/(m²·K)", "m2 K W-1": "m²·K/W",
              "m s-1": "m/s", "1": "–", "h": "h", "kWh m-2": "kWh/m²"}
_SHORT_NAME = {"temp_sol_air": "Sol-air temperature", "temp_surface": "Surface temperature",
               "temp_air": "Air temperature", "temp_sky": "Sky temperature",
               "temp_dew": "Dew point"}


def _styled(func: Callable[..., Figure]) -> Callable[..., Figure]:
    """Draw inside solair's rc settings, without touching the global state."""

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Figure:
        with matplotlib.rc_context(_STYLE):
            return func(*args, **kwargs)

    return wrapper


CAUTION_TEXT = ("Engineering estimate; verify against local codes and licensed professional "
                "practice.")


def _figure(height: float) -> tuple[Figure, SubFigure]:
    """A figure with a drawing panel and a footer line carrying the caution."""
    fig = Figure(figsize=(FIGURE_WIDTH, height + 0.22), layout="constrained")
    FigureCanvasAgg(fig)
    panel, footer = fig.subfigures(2, 1, height_ratios=[height, 0.22])
    footer.text(0.99, 0.5, f"solair · {CAUTION_TEXT}", ha="right", va="center", fontsize=8,
                color="0.4")
    return fig, panel


def unit_text(da: xr.DataArray, default: str = "") -> str:
    """Readable unit of a variable from its ``units`` attribute."""
    units = str(da.attrs.get("units", default))
    return _UNIT_TEXT.get(units, units)


def variable_label(ds: xr.Dataset, name: str) -> str:
    """Axis label 'Long name [unit]' of a variable."""
    da = ds[name]
    text = _SHORT_NAME.get(name) or str(da.attrs.get("long_name", name))
    unit = unit_text(da)
    return f"{text} [{unit}]" if unit else text


def _site(ds: xr.Dataset) -> str:
    return str(ds.attrs.get("site_name") or ds.attrs.get("weather_file") or "unnamed site")


def _offset_text(ds: xr.Dataset) -> str:
    offset = float(ds.attrs.get("utc_offset_hours", 0.0))
    sign = "+" if offset >= 0 else "−"
    hours = abs(offset)
    text = f"{hours:g}" if hours % 1 else f"{int(hours)}"
    return f"local standard time, UTC{sign}{text}"


def _surface_text(ds: xr.Dataset, surface: str) -> str:
    parts = []
    if "surface_tilt" in ds.coords:
        parts.append(f"tilt {float(ds['surface_tilt'].sel(surface=surface)):g}°")
    if "surface_azimuth" in ds.coords:
        parts.append(f"azimuth {float(ds['surface_azimuth'].sel(surface=surface)):g}°")
    return f"{surface} ({', '.join(parts)})" if parts else str(surface)


def _optics_text(ds: xr.Dataset, surface: str, finish: str | None) -> str:
    bits = []
    for name, sym in (("absorptance", "α"), ("emissivity", "ε")):
        if name not in ds.coords and name not in ds.data_vars:
            continue
        da = ds[name]
        if "finish" in da.dims and finish is not None:
            da = da.sel(finish=finish)
        if "surface" in da.dims:
            da = da.sel(surface=surface)
        if da.ndim == 0:
            bits.append(f"{sym} = {float(da):.2f}")
    return ", ".join(bits)


def select_surfaces(ds: xr.Dataset, surfaces: Sequence[str] | None,
                    *, default_all: bool = True) -> list[str]:
    """Validate surface names against the result; default: all (or the first)."""
    if "surface" not in ds.dims:
        raise ConfigurationError("result has no 'surface' dimension")
    allowed = [str(s) for s in ds["surface"].values]
    if not surfaces:
        return allowed if default_all else allowed[:1]
    unknown = [s for s in surfaces if s not in allowed]
    if unknown:
        raise ConfigurationError(f"surface {unknown[0]!r} is not one of {allowed}")
    return list(dict.fromkeys(surfaces))


def select_finish(ds: xr.Dataset, finish: str | None) -> str | None:
    """Validate a finish name; default: the first finish of a compare/batch result."""
    if "finish" not in ds.dims:
        if finish is not None:
            raise ConfigurationError(f"finish {finish!r} given but the result has no finishes "
                                     "(a run result); drop --finish")
        return None
    allowed = [str(f) for f in ds["finish"].values]
    if finish is None:
        return allowed[0]
    if finish not in allowed:
        raise ConfigurationError(f"finish {finish!r} is not one of {allowed}")
    return finish


def _require(ds: xr.Dataset, name: str, hint: str = "") -> xr.DataArray:
    if name not in ds.data_vars:
        have = sorted(str(v) for v in ds.data_vars if "time" in ds[v].dims)
        extra = f"; {hint}" if hint else ""
        raise ConfigurationError(f"variable {name!r} is not in the result (hourly variables: "
                                 f"{have}){extra}")
    return ds[name]


def _series(ds: xr.Dataset, name: str, surface: str | None, finish: str | None) -> np.ndarray:
    da = _require(ds, name)
    if "surface" in da.dims:
        da = da.sel(surface=surface)
    if "finish" in da.dims:
        da = da.sel(finish=finish)
    extra = [d for d in da.dims if d != "time"]
    if extra:
        raise ConfigurationError(f"variable {name!r} has extra dimensions {extra}; "
                                 "cannot draw it as one hourly series")
    return np.asarray(da.values, dtype=float)


def _default_variable(ds: xr.Dataset, variable: str | None) -> str:
    if variable is not None:
        _require(ds, variable)
        return variable
    for name in ("temp_sol_air", "temp_surface"):
        if name in ds.data_vars:
            return name
    return str(_require(ds, "temp_sol_air").name)


def _month_axis(ax: Any) -> None:
    ax.set_xticks(_MONTH_START_DOY)
    ax.set_xticklabels(_MONTHS)
    ax.set_xlim(0.5, 365.5)


def _finish_suffix(finish: str | None) -> str:
    return f", finish {finish}" if finish else ""


@_styled
def carpet_figure(ds: xr.Dataset, *, surfaces: Sequence[str] | None = None,
                  variable: str | None = None, minus_air: bool = False,
                  finish: str | None = None) -> Figure:
    """Carpet plot: day of year × hour of day of an hourly surface variable.

    One panel per surface (at most 4). With ``minus_air`` the difference from
    ``temp_air`` is drawn with a diverging colour map centred on 0 K.
    """
    variable = _default_variable(ds, variable)
    names = select_surfaces(ds, surfaces, default_all=False)
    if len(names) > 4:
        raise ConfigurationError(f"carpet plot draws at most 4 surfaces, {len(names)} given")
    finish = select_finish(ds, finish)
    labels = shaping.local_labels(ds)
    grids = []
    for name in names:
        values = _series(ds, variable, name, finish)
        if minus_air:
            values = values - _series(ds, "temp_air", None, None)
        grids.append(shaping.carpet_grid(values, labels))
    lo = float(np.nanmin([np.nanmin(g) for g in grids]))
    hi = float(np.nanmax([np.nanmax(g) for g in grids]))
    base = _SHORT_NAME.get(variable, variable)
    if minus_air:
        span = max(abs(lo), abs(hi), 0.1)
        # symmetric about zero, so equal colour depth means equal kelvin above or below air
        norm: colors.Normalize = colors.TwoSlopeNorm(vcenter=0.0, vmin=-span, vmax=span)
        cmap = "RdBu_r"
        cbar_label = f"{base} − air temperature [K]"
    else:
        norm = colors.Normalize(vmin=lo, vmax=hi)
        cmap = "inferno"
        cbar_label = variable_label(ds, variable)
    fig, panel = _figure(0.6 + 2.1 * len(names))
    axes = panel.subplots(len(names), 1, squeeze=False, sharex=True)[:, 0]
    image = None
    for ax, name, grid in zip(axes, names, grids):
        image = ax.imshow(grid.T, origin="lower", aspect="auto", cmap=cmap, norm=norm,
                          extent=(0.5, 365.5, 0.0, 24.0), interpolation="nearest")
        ax.grid(False)
        ax.set_yticks(range(0, 25, 6))
        ax.set_yticklabels([f"{h:02d}:00" for h in range(0, 25, 6)])
        ax.set_ylabel("Hour of day")
        optics = _optics_text(ds, name, finish)
        ax.set_title(f"{_surface_text(ds, name)}{_finish_suffix(finish)}"
                     + (f"; {optics}" if optics else ""), loc="left")
        _month_axis(ax)
    axes[-1].set_xlabel(f"Day of year ({_offset_text(ds)})")
    panel.colorbar(image, ax=list(axes), label=cbar_label, shrink=0.95, pad=0.01)
    what = f"{base} − air temperature" if minus_air else base
    panel.suptitle(f"{_site(ds)}: {what}, hour by hour", x=0.01, ha="left")
    return fig


def _rotation(labels: Sequence[Any]) -> float:
    """Tick label rotation: upright while the labels fit side by side on 7.5 in."""
    width = sum(len(str(x)) + 2 for x in labels)
    return 0.0 if width <= 90 else 45.0


def _colours(n: int) -> list[Any]:
    cmap = matplotlib.colormaps["tab10" if n <= 10 else "tab20"]
    return [cmap(i % cmap.N) for i in range(n)]


@_styled
def duration_figure(ds: xr.Dataset, *, surfaces: Sequence[str] | None = None,
                    variable: str | None = None, finish: str | None = None,
                    percent: bool = False) -> Figure:
    """Duration curves (values sorted in descending order) per surface, with the air's."""
    variable = _default_variable(ds, variable)
    names = select_surfaces(ds, surfaces)
    finish = select_finish(ds, finish)
    fig, panel = _figure(4.2)
    ax = panel.subplots()
    for name, colour in zip(names, _colours(len(names))):
        x, y = shaping.duration_curve(_series(ds, variable, name, finish), percent=percent)
        ax.plot(x, y, color=colour, lw=1.3, label=name)
    if "temp_air" in ds.data_vars and variable != "temp_air":
        x, y = shaping.duration_curve(_series(ds, "temp_air", None, None), percent=percent)
        ax.plot(x, y, color="black", lw=1.0, ls="--", label="air")
    n_hours = int(ds.sizes["time"])
    if percent:
        ax.set_xlim(0, 100)
        ax.set_xlabel("Share of the year the value is reached or exceeded [%]")
    else:
        ax.set_xlim(0, n_hours)
        ax.set_xlabel("Hours per year the value is reached or exceeded [h]")
        top = ax.secondary_xaxis("top", functions=(lambda h: 100.0 * h / n_hours,
                                                   lambda p: p * n_hours / 100.0))
        top.set_xlabel("[% of the year]")
    ax.set_ylabel(variable_label(ds, variable))
    ax.legend(ncols=1 if len(names) < 6 else 2, loc="upper right", title="surface")
    what = _SHORT_NAME.get(variable, variable).lower()
    panel.suptitle(f"{_site(ds)}: duration curves of the {what}{_finish_suffix(finish)}",
                 x=0.01, ha="left")
    return fig


@_styled
def monthly_figure(ds: xr.Dataset, *, surfaces: Sequence[str] | None = None,
                   variable: str | None = None, finish: str | None = None,
                   percentiles: tuple[float, float] = (10.0, 90.0)) -> Figure:
    """Monthly mean and percentile band per surface (small multiples), with the air's mean."""
    variable = _default_variable(ds, variable)
    names = select_surfaces(ds, surfaces)
    finish = select_finish(ds, finish)
    labels = shaping.local_labels(ds)
    ncols = 1 if len(names) == 1 else (2 if len(names) <= 4 else 3)
    nrows = int(np.ceil(len(names) / ncols))
    fig, panel = _figure(0.9 + (2.0 if ncols > 1 else 3.2) * nrows)
    axes = panel.subplots(nrows, ncols, squeeze=False, sharex=True, sharey=True)
    air = None
    if "temp_air" in ds.data_vars and variable != "temp_air":
        air = shaping.monthly_statistics(_series(ds, "temp_air", None, None), labels,
                                         percentiles=percentiles)
    low, high = percentiles
    for k, ax in enumerate(axes.flat):
        if k >= len(names):
            ax.set_visible(False)
            continue
        name = names[k]
        stats = shaping.monthly_statistics(_series(ds, variable, name, finish), labels,
                                           percentiles=percentiles)
        months = stats.index.to_numpy()
        ax.fill_between(months, stats["p_low"], stats["p_high"], color="tab:orange", alpha=0.3,
                        lw=0, label=f"{low:g}–{high:g} % of hours")
        ax.plot(months, stats["mean"], color="tab:red", lw=1.5, marker="o", ms=2.5,
                label="monthly mean")
        ax.plot(months, stats["max"], color="tab:red", lw=0.6, ls=":", label="monthly max / min")
        ax.plot(months, stats["min"], color="tab:red", lw=0.6, ls=":")
        if air is not None:
            ax.plot(air.index, air["mean"], color="black", lw=1.0, ls="--", label="air, mean")
        ax.set_title(_surface_text(ds, name), loc="left")
        ax.set_xticks(range(1, 13))
        ax.set_xticklabels([m[0] for m in _MONTHS] if ncols > 1 else _MONTHS)
        ax.set_xlim(0.5, 12.5)
        if k % ncols == 0:
            ax.set_ylabel(variable_label(ds, variable))
    handles, texts = axes.flat[0].get_legend_handles_labels()
    panel.legend(handles, texts, loc="outside lower center", ncols=4)
    for k, ax in enumerate(axes.flat[:len(names)]):
        if k + ncols >= len(names):  # nothing drawn below: this panel carries the month axis
            ax.xaxis.set_tick_params(labelbottom=True)
            ax.set_xlabel("Month")
    panel.suptitle(f"{_site(ds)}: monthly {_SHORT_NAME.get(variable, variable).lower()}"
                 f"{_finish_suffix(finish)}", x=0.01, ha="left")
    return fig


@_styled
def finishes_figure(metrics: pd.DataFrame, *, site: str = "",
                    surfaces: Sequence[str] | None = None,
                    metric_names: Sequence[str] | None = None,
                    units: dict[str, str] | None = None) -> Figure:
    """Grouped bars of key metrics: one panel per metric, surfaces on x, one bar per finish.

    ``metrics`` has columns ``surface``, ``finish`` and the metric columns (as
    from :func:`solair.plots.shaping.finish_metrics` or a compare metrics table).
    """
    for col in ("surface", "finish"):
        if col not in metrics.columns:
            raise ConfigurationError(f"metrics table has no {col!r} column; columns are "
                                     f"{list(metrics.columns)}")
    numeric = [c for c in metrics.columns if c not in ("climate", "surface", "finish")
               and pd.api.types.is_numeric_dtype(metrics[c]) and metrics[c].notna().any()]
    if metric_names is None:
        metric_names = [m for m in shaping.FINISH_METRICS if m in numeric] or numeric[:3]
    unknown = [m for m in metric_names if m not in numeric]
    if unknown:
        raise ConfigurationError(f"metric {unknown[0]!r} is not one of {sorted(numeric)}")
    all_surfaces = list(dict.fromkeys(metrics["surface"].astype(str)))
    if surfaces:
        bad = [s for s in surfaces if s not in all_surfaces]
        if bad:
            raise ConfigurationError(f"surface {bad[0]!r} is not one of {all_surfaces}")
        all_surfaces = list(dict.fromkeys(surfaces))
    finishes = list(dict.fromkeys(metrics["finish"].astype(str)))
    units = units or {}
    fig, panel = _figure(0.9 + 2.1 * len(metric_names))
    axes = panel.subplots(len(metric_names), 1, squeeze=False, sharex=True)[:, 0]
    width = 0.8 / max(len(finishes), 1)
    x = np.arange(len(all_surfaces))
    table = metrics.assign(surface=metrics["surface"].astype(str),
                           finish=metrics["finish"].astype(str)).set_index(["surface", "finish"])
    basis = str(metrics.attrs.get("variable", ""))
    n_bars = len(finishes) * len(all_surfaces)
    for ax, metric in zip(axes, metric_names):
        top = 0.0
        column = np.abs(metrics[metric].to_numpy(dtype=float))
        largest = float(np.nanmax(column)) if np.isfinite(column).any() else 0.0
        fmt = "%.0f" if largest >= 20 else ("%.1f" if largest >= 1 else "%.2g")
        for j, (fin, colour) in enumerate(zip(finishes, _colours(len(finishes)))):
            values = [float(table[metric].get((s, fin), np.nan)) for s in all_surfaces]
            bars = ax.bar(x - 0.4 + width * (j + 0.5), values, width=width * 0.92,
                          color=colour, label=fin)
            top = max(top, float(np.nanmax(np.abs(values))) if np.isfinite(values).any() else 0)
            if n_bars <= 16 and np.nanmax(np.abs(values)) > 0:
                ax.bar_label(bars, fmt=fmt, fontsize=8, padding=1)
        if top == 0.0:
            ax.set_ylim(0.0, 1.0)
            ax.text(0.5, 0.5, "zero for every surface and finish", transform=ax.transAxes,
                    ha="center", va="center", color="0.3")
        label, unit = shaping.metric_label(metric)
        if metric == "peak_temperature" and basis:
            label = f"Peak {_SHORT_NAME.get(basis, basis).lower()}"
        if metric == "hours_below_dew_point" and basis:
            what = _SHORT_NAME.get(basis, basis).lower()
            label = f"Hours with the {what} below the air dew point"
        unit = units.get(metric, unit)
        ax.set_ylabel(f"[{unit}]" if unit else "")
        ax.set_title(label, loc="left")
        ax.grid(axis="x", visible=False)
        ax.axhline(0.0, color="black", lw=0.6)
        ax.margins(y=0.12)
    axes[-1].set_xticks(x)
    axes[-1].set_xticklabels(all_surfaces, rotation=_rotation(all_surfaces))
    axes[-1].set_xlabel("Surface")
    handles, texts = axes[0].get_legend_handles_labels()
    panel.legend(handles, texts, loc="outside lower center", ncols=min(len(finishes), 4),
               title="finish", title_fontsize=8)
    panel.suptitle(f"{site + ': ' if site else ''}finish comparison", x=0.01, ha="left")
    return fig


@_styled
def portfolio_figure(table: pd.DataFrame, metric: str, *, finish: str | None = None,
                     surfaces: Sequence[str] | None = None, unit: str = "",
                     title: str = "") -> Figure:
    """Heat map of one metric per climate (rows) × surface (columns), values written in."""
    grid = shaping.portfolio_grid(table, metric, finish=finish)
    if surfaces:
        bad = [s for s in surfaces if s not in grid.columns]
        if bad:
            raise ConfigurationError(f"surface {bad[0]!r} is not one of {list(grid.columns)}")
        grid = grid[list(dict.fromkeys(surfaces))]
    values = grid.to_numpy(dtype=float)
    n_rows, n_cols = values.shape
    fig, panel = _figure(max(2.4, 1.3 + 0.38 * n_rows))
    ax = panel.subplots()
    image = ax.imshow(values, aspect="auto", cmap="YlOrRd", interpolation="nearest")
    ax.grid(False)
    ax.set_xticks(range(n_cols))
    ax.set_xticklabels([str(c) for c in grid.columns], rotation=_rotation(grid.columns))
    ax.set_yticks(range(n_rows))
    ax.set_yticklabels([str(r) for r in grid.index])
    ax.set_xlabel("Surface")
    ax.set_ylabel("Climate")
    finite = values[np.isfinite(values)]
    mid = float(np.mean([finite.min(), finite.max()])) if finite.size else 0.0
    digits = 0 if finite.size and np.nanmax(np.abs(finite)) >= 100 else 1
    for i in range(n_rows):
        for j in range(n_cols):
            v = values[i, j]
            if np.isfinite(v):
                ax.text(j, i, f"{v:.{digits}f}", ha="center", va="center", fontsize=8,
                        color="white" if v > mid else "black")
    label, default_unit = shaping.metric_label(metric)
    unit = unit or default_unit
    panel.colorbar(image, ax=ax, label=f"[{unit}]" if unit else "", pad=0.01)
    chosen = finish if finish else (str(table["finish"].iloc[0]) if "finish" in table else "")
    panel.suptitle(f"{title + ': ' if title else ''}{label} per climate and surface"
                 f"{_finish_suffix(chosen)}", x=0.01, ha="left")
    return fig


@_styled
def sky_spread_figure(ds: xr.Dataset, *, surfaces: Sequence[str] | None = None,
                      week: int | None = None, start: str | None = None,
                      finish: str | None = None) -> Figure:
    """Spread of the sky temperature and of the sol-air temperature over the sky models.

    Draws one week: top panel the air, the sky temperature used and the band
    ``temp_sky_min`` … ``temp_sky_max`` over the clear-sky correlations; bottom
    panel ``temp_sol_air`` with its band ``temp_sol_air_min`` … ``temp_sol_air_max``
    per surface (at most 3). Without ``week``/``start``, the week containing
    the hour of largest sol-air spread of the first surface.
    """
    hint = "compute it with `solair run --sky-spread`"
    for name in ("temp_sky_min", "temp_sky_max", "temp_sol_air_min", "temp_sol_air_max"):
        _require(ds, name, hint)
    names = select_surfaces(ds, surfaces, default_all=False)
    if len(names) > 3:
        raise ConfigurationError(f"sky-spread plot draws at most 3 surfaces, {len(names)} given")
    finish = select_finish(ds, finish)
    labels = shaping.local_labels(ds)
    if week is None and start is None:
        spread = (_series(ds, "temp_sol_air_max", names[0], finish)
                  - _series(ds, "temp_sol_air_min", names[0], finish))
        at = shaping.mid_hour(labels)[int(np.nanargmax(spread))]
        week = min(int((at.day_of_year - 1) // 7) + 1, 52)
    mask = shaping.week_mask(labels, week=week, start=start)
    t = labels[mask] - pd.Timedelta(minutes=30)
    fig, panel = _figure(5.6)
    top, bottom = panel.subplots(2, 1, sharex=True)
    top.fill_between(t, _series(ds, "temp_sky_min", None, None)[mask],
                     _series(ds, "temp_sky_max", None, None)[mask], color="tab:blue", alpha=0.25,
                     lw=0, label="sky, range over the\nsky correlations")
    if "temp_sky" in ds.data_vars:
        top.plot(t, _series(ds, "temp_sky", None, None)[mask], color="tab:blue", lw=1.2,
                 label="sky, model used")
    if "temp_air" in ds.data_vars:
        top.plot(t, _series(ds, "temp_air", None, None)[mask], color="black", lw=1.0,
                 label="air")
    top.set_ylabel("Temperature [°C]")
    top.set_title("Sky temperature", loc="left")
    top.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0))
    for name, colour in zip(names, _colours(len(names))):
        bottom.fill_between(t, _series(ds, "temp_sol_air_min", name, finish)[mask],
                            _series(ds, "temp_sol_air_max", name, finish)[mask], color=colour,
                            alpha=0.25, lw=0)
        bottom.plot(t, _series(ds, "temp_sol_air", name, finish)[mask], color=colour, lw=1.2,
                    label=f"{name}")
    if "temp_air" in ds.data_vars:
        bottom.plot(t, _series(ds, "temp_air", None, None)[mask], color="black", lw=0.8,
                    ls="--", label="air")
    bottom.set_ylabel("Sol-air temperature [°C]")
    bottom.set_title("Sol-air temperature: model used (line) and range over the sky models (band)",
                     loc="left")
    bottom.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0))
    bottom.xaxis.set_major_locator(dates.DayLocator())
    bottom.xaxis.set_major_formatter(dates.DateFormatter("%d %b"))
    bottom.xaxis.set_minor_locator(dates.HourLocator(byhour=[6, 12, 18]))
    bottom.set_xlabel(_offset_text(ds)[0].upper() + _offset_text(ds)[1:])
    first = t[0]
    which = f"week {week}" if start is None else f"7 days from {first:%d %b}"
    panel.suptitle(f"{_site(ds)}: spread over the sky-temperature models, {which}"
                 f"{_finish_suffix(finish)}", x=0.01, ha="left")
    return fig
