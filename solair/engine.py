"""Orchestration: weather file -> exterior forcing -> sol-air temperature per surface.

:func:`exterior_forcing` computes, once per weather file, everything that does
not depend on the finish: the sun's geometry for each hour, the irradiance on
every surface, the sky temperature and the convective coefficient.
:func:`sol_air` applies the surface balance of :mod:`solair.balance` for
given absorptance and emissivity (which may carry extra dimensions such as
``finish``). :func:`compute` is both together with each surface's own
finish. The physics lives in :mod:`solair.sun`, :mod:`solair.sky`,
:mod:`solair.convection`, :mod:`solair.longwave` and :mod:`solair.balance`;
this module only wires it up and labels the result (docs/architecture.md).

Result: an :class:`xarray.Dataset` with dims ``(time, surface)``; ``time`` is
naive UTC, each label the **end** of the hour it covers; the global attribute
``utc_offset_hours`` gives local standard time (:func:`solair.output.local_time`).
"""

from __future__ import annotations

import os
from collections.abc import Iterable

import numpy as np
import pandas as pd
import pvlib
import xarray as xr

from solair import balance, irradiance, longwave, sun
from solair import convection as _convection
from solair import sky as _sky
from solair.errors import ConfigurationError
from solair.provenance import CAUTION, solair_version
from solair.surfaces import Surface, check_unique_names, default_surfaces
from solair.variable_meta import META as _META
from solair.variable_meta import label as _label

__all__ = [
    "CAUTION",
    "LINEARISATIONS",
    "TERRAINS",
    "exterior_forcing",
    "sol_air",
    "compute",
    "check_options",
]

LINEARISATIONS = balance.LINEARISATIONS
TERRAINS = frozenset({"station", *_convection.TERRAIN_ASHRAE})

_TIME_CONVENTION = (
    "time is UTC (no zone in the coordinate); each label is the end of the hour its values "
    "cover; local standard time = UTC + utc_offset_hours; solar geometry at mid-hour, or at "
    "the middle of the sunlit part of hours that contain sunrise or sunset"
)

def check_options(
    *,
    sky: str = "auto",
    transposition: str = "perez",
    convection_model: str = "iso6946",
    linearisation: str = "air",
    terrain: str = "station",
) -> None:
    """Raise ConfigurationError for an unknown model name, listing the allowed ones."""
    checks = (
        ("sky model", sky, sky_models()),
        ("transposition model", transposition, irradiance.TRANSPOSITION_MODELS),
        ("convection model", convection_model, _convection.CONVECTION_MODELS),
        ("linearisation", linearisation, LINEARISATIONS),
        ("terrain", terrain, TERRAINS),
    )
    for label, value, allowed in checks:
        if not isinstance(value, str) or value not in allowed:
            raise ConfigurationError(f"{label} {value!r} is not one of {sorted(allowed)}")


def sky_models() -> frozenset[str]:
    """Names accepted by ``sky=``: "auto", "infrared" and every clear-sky correlation."""
    return frozenset({"auto", "infrared", *_sky.CLEAR_SKY_MODELS})


def _as_weather(weather):
    if isinstance(weather, str | os.PathLike):
        from solair.weather import read_weather

        return read_weather(weather)
    if not hasattr(weather, "data") or not hasattr(weather, "site"):
        raise ConfigurationError(
            f"weather {type(weather).__name__} is neither a solair Weather nor a file path"
        )
    return weather


def _column(df: pd.DataFrame, name: str) -> np.ndarray | None:
    if name not in df.columns:
        return None
    v = df[name].to_numpy(dtype=float)
    return v if np.isfinite(v).any() else None


def _fraction(value, name: str) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ConfigurationError(f"{name} {value!r} is not a number") from None
    if not np.isfinite(x) or not 0.0 <= x <= 1.0:
        raise ConfigurationError(f"{name} {value!r} is outside [0, 1]")
    return x


def _day_of_year(t: np.ndarray) -> np.ndarray:
    """Fractional day of year (1 = 1 January 00:00) of naive UTC datetime64 values."""
    years = t.astype("datetime64[Y]")
    return (t - years).astype("timedelta64[s]").astype(float) / 86400.0 + 1.0


def _clear_sky_ghi(geom: sun.HourlySunGeometry, site, pressure: float) -> np.ndarray:
    """Hour-mean clear-sky GHI [W m-2] (Ineichen & Perez 2002 with the Linke turbidity
    climatology of Remund et al. 2003, both as pvlib implements them).

    Evaluated at the hour's sun position and scaled by the sunlit fraction of
    the hour, so that it compares with the file's hour-mean GHI in sunrise and
    sunset hours too.

    References
    ----------
    .. [1] Ineichen, P. and Perez, R. (2002). A new airmass independent
       formulation for the Linke turbidity coefficient. Solar Energy 73(3),
       151-157. :doi:`10.1016/S0038-092X(02)00045-2`
    """
    linke = sun.linke_turbidity(geom.time, site.latitude, site.longitude)
    with np.errstate(invalid="ignore"):
        am_rel = pvlib.atmosphere.get_relative_airmass(geom.apparent_zenith)
    am_abs = pvlib.atmosphere.get_absolute_airmass(am_rel, pressure)
    dni_extra = pvlib.irradiance.get_extra_radiation(_day_of_year(geom.time))
    with np.errstate(invalid="ignore", divide="ignore"):
        cs = pvlib.clearsky.ineichen(
            geom.apparent_zenith, am_abs, np.asarray(linke, dtype=float), site.altitude,
            np.asarray(dni_extra, dtype=float),
        )
    ghi_clear = np.nan_to_num(np.asarray(cs["ghi"], dtype=float), nan=0.0)
    return ghi_clear * geom.sunlit_fraction


def exterior_forcing(
    weather,
    surfaces: Iterable[Surface] | None = None,
    *,
    sky: str = "auto",
    transposition: str = "perez",
    convection: str = "iso6946",
    albedo: float | None = None,
    sky_air_split: bool = False,
    temp_ground: float | np.ndarray | None = None,
    terrain: str = "station",
    height: float = 10.0,
    roughness: str = "medium_rough",
    sky_spread: bool = False,
    solar_position_method: str = "spa_nodes",
) -> xr.Dataset:
    """Everything about the exterior that does not depend on the finish, per hour and surface.

    Parameters
    ----------
    weather : solair.Weather or path
        A weather year from :func:`solair.read_weather`, or a file path.
    surfaces : iterable of Surface, optional
        Default :func:`solair.surfaces.default_surfaces` (roof + 8 facades).
    sky : str
        "auto" (file infrared where valid, else Clark-Allen corrected by the
        opaque sky cover where given, else by a cloud fraction estimated from
        the measured irradiance), "infrared", or a clear-sky correlation name
        (see :func:`sky_models`).
    transposition : {"perez", "haydavies", "isotropic"}
    convection : str
        A key of :data:`solair._convection.CONVECTION_MODELS`.
    albedo : float, optional
        Ground solar reflectance [-]; default the file's hourly albedo where
        present (NaN hours filled with 0.2), else 0.2.
    sky_air_split : bool
        Split the sky view into sky and near-horizon air (Walton 1983).
    temp_ground : float or array (n_hours,), optional
        Ground and surroundings temperature [°C]; default the air temperature.
    terrain : str
        "station" (station wind used as is, default) or an ASHRAE terrain
        class for :func:`solair._convection.local_wind_speed`.
    height : float
        Height of the surfaces for the terrain profile [m].
    roughness : str
        Walton roughness class (walton model only).
    sky_spread : bool
        Also evaluate every clear-sky correlation (variable
        ``temp_sky_models`` (time, sky_model), and ``temp_sky_min/max``).
    solar_position_method : str
        See :func:`solair.sun.solar_position`.

    Returns
    -------
    xarray.Dataset
        ``temp_air``, ``temp_dew``, ``relative_humidity``, ``pressure``,
        ``wind_speed``, ``wind_direction``, ``solar_zenith``,
        ``solar_azimuth``, ``temp_sky``, ``sky_source``, ``temp_ground``
        (time); ``poa_global``, ``h_conv`` (time, surface); ``view_sky``,
        ``view_air``, ``view_ground`` (surface); provenance attributes.
    """
    check_options(sky=sky, transposition=transposition, convection_model=convection,
                  terrain=terrain)
    if roughness not in _convection.ROUGHNESS_WALTON:
        raise ConfigurationError(
            f"surface roughness {roughness!r} is not one of {sorted(_convection.ROUGHNESS_WALTON)}"
        )
    if solar_position_method not in sun.SOLAR_POSITION_METHODS:
        raise ConfigurationError(
            f"solar position method {solar_position_method!r} is not one of "
            f"{sorted(sun.SOLAR_POSITION_METHODS)}"
        )
    surfaces = check_unique_names(default_surfaces() if surfaces is None else surfaces)
    albedo_fixed = None if albedo is None else _fraction(albedo, "albedo")
    w = _as_weather(weather)
    return _forcing(w, surfaces, sky, transposition, convection, albedo_fixed, bool(sky_air_split),
                    temp_ground, terrain, height, roughness, bool(sky_spread),
                    solar_position_method)


def _forcing(w, surfaces, sky_model, transposition, conv_model, albedo_fixed, sky_air_split,
             temp_ground, terrain, height, roughness, sky_spread, sp_method) -> xr.Dataset:
    site, df = w.site, w.data
    n = len(df)
    index = pd.DatetimeIndex(df.index)
    time_utc = (index.tz_convert("UTC").tz_localize(None) if index.tz is not None
                else index).to_numpy(dtype="datetime64[ns]")
    get = {c: df[c].to_numpy(dtype=float) for c in (
        "temp_air", "temp_dew", "relative_humidity", "pressure", "wind_speed", "wind_direction",
        "ghi", "dni", "dhi")}
    ta, p = get["temp_air"], get["pressure"]

    geom = sun.hourly_sun_geometry(
        time_utc, site.latitude, site.longitude, site.altitude,
        pressure=float(np.mean(p)), temperature=float(np.mean(ta)), method=sp_method,
    )
    zen = geom.apparent_zenith

    # ground reflectance
    file_albedo = _column(df, "albedo")
    if albedo_fixed is not None:
        alb, albedo_source = albedo_fixed, f"user value {albedo_fixed:g}"
    elif file_albedo is not None:
        alb = np.where(np.isfinite(file_albedo), file_albedo, irradiance.DEFAULT_ALBEDO)
        albedo_source = f"weather file (missing hours {irradiance.DEFAULT_ALBEDO:g})"
    else:
        alb, albedo_source = irradiance.DEFAULT_ALBEDO, f"default {irradiance.DEFAULT_ALBEDO:g}"

    tilt = np.array([s.surface_tilt for s in surfaces])
    azim = np.array([s.surface_azimuth for s in surfaces])
    dni_extra = np.asarray(pvlib.irradiance.get_extra_radiation(_day_of_year(geom.time)))
    with np.errstate(invalid="ignore"):
        airmass = pvlib.atmosphere.get_relative_airmass(zen)
    poa = irradiance.plane_of_array(
        tilt, azim, zen, geom.azimuth, get["dni"], get["ghi"], get["dhi"],
        model=transposition, albedo=alb, dni_extra=dni_extra, airmass=airmass,
    )
    beam_lost = int(np.sum((get["dni"] > 0.0) & (zen >= 90.0)))

    # sky; the irradiance cloud estimate only where some hour has neither infrared nor cover
    ir = _column(df, "ghi_infrared")
    cover = _column(df, "opaque_sky_cover")
    cloud = None
    if _sky.cloud_fraction_needed(sky_model, ta, ghi_infrared=ir, opaque_sky_cover=cover,
                                  spread=sky_spread):
        ghi_clear = _clear_sky_ghi(geom, site, float(np.mean(p)))
        cloud = _sky.cloud_fraction_from_irradiance(get["ghi"], ghi_clear, solar_zenith=zen)
    temp_sky, source = _sky.get_sky_temperature(
        ta, get["temp_dew"], p, model=sky_model, ghi_infrared=ir, opaque_sky_cover=cover,
        cloud_fraction=cloud, solar_hour=geom.solar_hour,
    )

    # wind and convection
    wind = _convection.local_wind_speed(get["wind_speed"], terrain=terrain, height=height)
    h_conv = _convection.get_convection_coefficient(
        wind[:, None], model=conv_model, wind_direction=get["wind_direction"][:, None],
        surface_tilt=tilt[None, :], surface_azimuth=azim[None, :], roughness=roughness,
    )
    view_sky, view_air, view_ground = longwave.view_factors(tilt, sky_air_split=sky_air_split)

    if temp_ground is None:
        tg, ground_source = ta, "air temperature"
    else:
        try:
            tg = np.broadcast_to(np.asarray(temp_ground, dtype=float), (n,)).astype(float)
        except ValueError:
            raise ConfigurationError(
                f"temp_ground must be one number or one value per hour ({n}), got shape "
                f"{np.shape(temp_ground)}"
            ) from None
        ground_source = "user value"
        if not np.all(np.isfinite(tg)) or np.any((tg < -90) | (tg > 90)):
            raise ConfigurationError("temp_ground must be finite and within [-90, 90] °C")

    T, S = ("time",), ("time", "surface")
    data = {
        "temp_air": (T, ta), "temp_dew": (T, get["temp_dew"]),
        "relative_humidity": (T, get["relative_humidity"]), "pressure": (T, p),
        "wind_speed": (T, np.asarray(wind, dtype=float)),
        "wind_direction": (T, get["wind_direction"]),
        "solar_zenith": (T, zen), "solar_azimuth": (T, geom.azimuth),
        "temp_sky": (T, np.asarray(temp_sky, dtype=float)),
        "sky_source": (T, np.asarray(source, dtype=np.int8)),
        "temp_ground": (T, tg),
        "poa_global": (S, poa["poa_global"]),
        "h_conv": (S, np.broadcast_to(np.asarray(h_conv, dtype=float), (n, len(surfaces)))),
        "view_sky": (("surface",), view_sky), "view_air": (("surface",), view_air),
        "view_ground": (("surface",), view_ground),
    }
    coords = {
        "time": ("time", time_utc),
        "surface": ("surface", np.array([s.name for s in surfaces], dtype=object)),
        "surface_tilt": ("surface", tilt),
        "surface_azimuth": ("surface", azim),
    }
    ds = xr.Dataset(data, coords=coords)
    if sky_spread:
        models = _sky.sky_temperature_all_models(
            ta, get["temp_dew"], p, opaque_sky_cover=cover, cloud_fraction=cloud,
            solar_hour=geom.solar_hour,
        )
        names = list(models)
        stack = np.stack([np.asarray(models[k], dtype=float) for k in names], axis=-1)
        ds["temp_sky_models"] = (("time", "sky_model"), stack)
        ds = ds.assign_coords(sky_model=("sky_model", np.array(names, dtype=object)))
        ds["temp_sky_min"] = (T, stack.min(axis=-1))
        ds["temp_sky_max"] = (T, stack.max(axis=-1))
    for name in ds.variables:
        if name in _META:
            _label(ds.variables[name], name)
    ds.variables["time"].attrs.update({"long_name": "end of the hour (UTC)",
                                       "standard_name": "time"})
    ds.variables["surface"].attrs["long_name"] = "surface name"
    if "sky_model" in ds.coords:
        ds.variables["sky_model"].attrs["long_name"] = "clear-sky emissivity correlation"
    codes = sorted(_sky.SKY_SOURCES)
    ds.variables["sky_source"].attrs.update({
        "flag_values": np.array(codes, dtype=np.int8),
        "flag_meanings": " ".join(_sky.SKY_SOURCES[c] for c in codes),
    })

    counts = np.bincount(np.asarray(source, dtype=np.int64), minlength=len(codes))
    ds.attrs.update({
        "title": "solair exterior forcing",
        "solair_version": solair_version(),
        "pvlib_version": pvlib.__version__,
        "sky_model": sky_model,
        "transposition_model": transposition,
        "convection_model": conv_model,
        "solar_position_method": sp_method,
        "clear_sky_model": "ineichen (pvlib), Linke turbidity climatology",
        "albedo_source": albedo_source,
        "sky_air_split": int(sky_air_split),
        "temp_ground_source": ground_source,
        "terrain": terrain,
        "surface_height_m": float(height),
        "roughness": roughness,
        "weather_file": str(site.path),
        "weather_format": site.source_format,
        "site_name": site.name,
        "latitude": float(site.latitude),
        "longitude": float(site.longitude),
        "altitude": float(site.altitude),
        "utc_offset_hours": float(site.utc_offset),
        "time_convention": _TIME_CONVENTION,
        "sunrise_sunset_hours": int(geom.crossing.sum()),
        "perez_fallback_hours": int(poa["sky_diffuse_fallback_hours"]),
        "perez_fallback_hours_with_diffuse": int(poa["sky_diffuse_fallback_hours_with_diffuse"]),
        "beam_hours_sun_below_horizon": beam_lost,
        "weather_notes": " | ".join(getattr(w, "notes", []) or []),
        "caution": CAUTION,
    })
    for code, count in zip(codes, counts):
        ds.attrs[f"sky_source_hours_{_sky.SKY_SOURCES[code]}"] = int(count)
    _assert_finite(ds)
    return ds


def _as_property(value, name: str, ds: xr.Dataset) -> xr.DataArray:
    """absorptance/emissivity as a DataArray: scalar, per surface, or with its own dims."""
    if isinstance(value, xr.DataArray):
        da = value.astype(float)
    else:
        arr = np.asarray(value, dtype=float)
        if arr.ndim == 0:
            da = xr.DataArray(arr)
        elif arr.ndim == 1 and arr.size == ds.sizes["surface"]:
            da = xr.DataArray(arr, dims=("surface",))
        else:
            raise ConfigurationError(
                f"{name} must be a number, one value per surface ({ds.sizes['surface']}) or "
                f"an xarray.DataArray; got shape {arr.shape}"
            )
    v = da.values
    if not np.all(np.isfinite(v)) or np.any((v < 0.0) | (v > 1.0)):
        raise ConfigurationError(f"{name} {np.unique(v)[:5].tolist()} is outside [0, 1]")
    return da


def sol_air(
    forcing: xr.Dataset,
    absorptance,
    emissivity,
    *,
    linearisation: str = "air",
    variables: Iterable[str] | None = None,
) -> xr.Dataset:
    """Sol-air temperature, h_rad, h_e and R_se for given finish properties.

    Parameters
    ----------
    forcing : xarray.Dataset
        From :func:`exterior_forcing`.
    absorptance, emissivity : float, array (n_surface,) or xarray.DataArray
        Solar absorptance and thermal emissivity [-]; a DataArray may carry
        extra dimensions (e.g. ``finish``), which the result gains.
    linearisation : {"air", "surface"}
        Linearisation of the long-wave exchange (:func:`solair.balance.temp_sol_air`).
    variables : iterable of str, optional
        Those wanted of ``temp_sol_air``, ``h_conv``, ``h_rad``, ``h_e``, ``r_se`` (default
        all); the others are not computed. The values returned are unchanged.

    Returns
    -------
    xarray.Dataset
        ``temp_sol_air``, ``h_conv``, ``h_rad``, ``h_e``, ``r_se`` (or the
        ``variables`` asked for) over (time, surface, extra dims); with
        ``temp_sol_air_min/max`` when the forcing holds the sky-model spread and
        ``temp_sol_air`` is asked for.
    """
    if linearisation not in LINEARISATIONS:
        raise ConfigurationError(
            f"linearisation {linearisation!r} is not one of {sorted(LINEARISATIONS)}"
        )
    wanted = balance.select_outputs(variables, ("temp_sol_air", "h_conv", "h_rad", "h_e", "r_se"))
    a = _as_property(absorptance, "absorptance", forcing)
    e = _as_property(emissivity, "emissivity", forcing)
    conventional = forcing.attrs.get("convection_model") == "iso6946_conventional"
    f, fv = forcing, forcing.variables
    extra = [d for d in (*a.dims, *e.dims) if d not in ("time", "surface")]
    dims = ("time", "surface", *dict.fromkeys(extra))
    sizes = {**f.sizes, **a.sizes, **e.sizes}

    def on(da):  # numpy view broadcastable to dims (size-1 axes where da lacks a dim)
        own = [d for d in dims if d in da.dims]
        v = getattr(da, "variable", da).transpose(*own).values  # a Variable's is cheaper
        return v.reshape([sizes[d] if d in da.dims else 1 for d in dims])

    ta, tg = on(fv["temp_air"]), on(fv["temp_ground"])

    def run(temp_sky, outputs):
        return balance.temp_sol_air(
            ta, on(fv["poa_global"]), on(a), on(e), on(fv["h_conv"]), temp_sky, temp_ground=tg,
            view_sky=on(fv["view_sky"]), view_air=on(fv["view_air"]),
            view_ground=on(fv["view_ground"]), linearisation=linearisation,
            conventional=conventional, variables=outputs,
        )

    shape = tuple(sizes[d] for d in dims)
    res = run(on(fv["temp_sky"]), wanted)
    coords = {d: f[d] if d in f.coords else (a[d] if d in a.coords else e[d])
              for d in dims if d in f.coords or d in a.coords or d in e.coords}
    for c in ("surface_tilt", "surface_azimuth"):
        coords[c] = f[c]
    out = xr.Dataset(
        {k: (dims, np.broadcast_to(np.asarray(res[k], dtype=float), shape))
         for k in wanted},
        coords=coords,
    )
    if "temp_sky_models" in f and "temp_sol_air" in wanted:
        lo = hi = None
        for model in f["sky_model"].values:
            ts = on(f["temp_sky_models"].sel(sky_model=model).drop_vars("sky_model"))
            t = np.broadcast_to(np.asarray(run(ts, ("temp_sol_air",))["temp_sol_air"],
                                           dtype=float), shape)
            lo = t if lo is None else np.minimum(lo, t)
            hi = t if hi is None else np.maximum(hi, t)
        out["temp_sol_air_min"] = (dims, lo)
        out["temp_sol_air_max"] = (dims, hi)
    for name in out.data_vars:
        _label(out.variables[name], name)
    out.attrs.update({"linearisation": linearisation, "caution": CAUTION})
    # no _assert_finite(out): every variable comes from balance.temp_sol_air, which checks
    # its inputs and raises on any non-finite output (a second pass: ~5 ms at 8760x17x4)
    return out


def compute(
    weather,
    surfaces: Iterable[Surface] | None = None,
    *,
    sky: str = "auto",
    transposition: str = "perez",
    convection: str = "iso6946",
    linearisation: str = "air",
    albedo: float | None = None,
    sky_spread: bool = False,
    sky_air_split: bool = False,
    temp_ground: float | np.ndarray | None = None,
    terrain: str = "station",
    height: float = 10.0,
    roughness: str = "medium_rough",
    solar_position_method: str = "spa_nodes",
) -> xr.Dataset:
    """Hourly sol-air temperature and R_se of every surface from a weather year.

    :func:`exterior_forcing` followed by :func:`sol_air` with each surface's
    own absorptance and emissivity. Options as in those two functions; model
    names are checked before any work is done.

    Returns
    -------
    xarray.Dataset
        dims ``(time, surface)``; coordinates ``surface``, ``surface_tilt``,
        ``surface_azimuth``, ``absorptance``, ``emissivity``; variables
        ``temp_air``, ``temp_dew``, ``relative_humidity``, ``pressure``,
        ``wind_speed``, ``wind_direction``, ``solar_zenith``,
        ``solar_azimuth``, ``temp_sky``, ``sky_source``, ``temp_ground``,
        ``poa_global``, ``h_conv``, ``h_rad``, ``h_e``, ``r_se``,
        ``temp_sol_air``, ``view_sky``, ``view_air``, ``view_ground`` (and
        ``temp_sky_min/max``, ``temp_sol_air_min/max`` with
        ``sky_spread=True``), each with ``units`` and ``long_name``; the
        provenance in the global attributes.

    Examples
    --------
    >>> import solair                                          # doctest: +SKIP
    >>> ds = solair.compute("723170TYA.CSV")                  # doctest: +SKIP
    >>> ds["temp_sol_air"].sel(surface="roof").max()          # doctest: +SKIP
    """
    check_options(sky=sky, transposition=transposition, convection_model=convection,
                  linearisation=linearisation, terrain=terrain)
    surfaces = check_unique_names(default_surfaces() if surfaces is None else surfaces)
    forcing = exterior_forcing(
        weather, surfaces, sky=sky, transposition=transposition, convection=convection,
        albedo=albedo, sky_air_split=sky_air_split, temp_ground=temp_ground, terrain=terrain,
        height=height, roughness=roughness, sky_spread=sky_spread,
        solar_position_method=solar_position_method,
    )
    alpha = np.array([s.absorptance for s in surfaces])
    eps = np.array([s.emissivity for s in surfaces])
    result = sol_air(forcing, alpha, eps, linearisation=linearisation)
    order = ["temp_air", "temp_dew", "relative_humidity", "pressure", "wind_speed",
             "wind_direction", "solar_zenith", "solar_azimuth", "temp_sky", "sky_source",
             "temp_ground", "temp_sky_min", "temp_sky_max", "poa_global", "h_conv", "h_rad",
             "h_e", "r_se", "temp_sol_air", "temp_sol_air_min", "temp_sol_air_max",
             "view_sky", "view_air", "view_ground"]
    # assemble from the variables directly (both share the same time/surface coordinates)
    source = {**{k: forcing[k].variable for k in forcing.data_vars},
              **{k: result[k].variable for k in result.data_vars}}
    coords = {k: forcing.coords[k].variable for k in ("time", "surface", "surface_tilt",
                                                       "surface_azimuth")}
    coords["absorptance"] = xr.Variable("surface", alpha)
    coords["emissivity"] = xr.Variable("surface", eps)
    ds = xr.Dataset({k: source[k] for k in order if k in source}, coords=coords,
                    attrs=dict(forcing.attrs))
    for name in ("absorptance", "emissivity", "surface_tilt", "surface_azimuth"):
        _label(ds.variables[name], name)
    ds.attrs["title"] = "solair sol-air temperature and external surface resistance"
    ds.attrs["linearisation"] = linearisation
    return ds


def _assert_finite(ds: xr.Dataset) -> None:
    """Raise if any float variable holds NaN or inf (never return a silent NaN)."""
    for name, da in ds.data_vars.items():
        v = da.values
        # min and max propagate NaN and show inf: two passes with no full-size temporary
        if v.dtype.kind == "f" and v.size and not (np.isfinite(np.min(v))
                                                   and np.isfinite(np.max(v))):
            bad = ~np.isfinite(v)
            where = np.argwhere(bad)[0]
            at = ", ".join(f"{d}={ds[d].values[i]}" for d, i in zip(da.dims, where)
                           if d in ds.coords)
            raise ConfigurationError(
                f"{name} is not finite in {int(bad.sum())} values (first at {at}); "
                "check the weather file and the options"
            )
