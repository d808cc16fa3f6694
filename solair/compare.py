"""Finish comparison: surface response and risk metrics per surface × finish.

:func:`compare` computes the exterior forcing once per weather file
(:func:`solair.engine.exterior_forcing`), the sol-air temperature of every
finish on every surface in one broadcast call (:func:`solair.engine.sol_air`),
the surface response through the construction for all surface × finish
columns together (:func:`solair.response.surface_response`), and the metrics of
:mod:`solair.metrics`.

Results are engineering estimates; verify them against local codes and
licensed professional practice.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

import numpy as np
import pandas as pd
import xarray as xr

from solair import metrics as _m
from solair.constructions import Construction, r_si, resolve_construction
from solair.errors import ConfigurationError
from solair.finishes import Finish, get_finish, sri
from solair.provenance import CAUTION
from solair.response import EXTERIOR_MODELS, RESPONSE_MODELS, surface_response

__all__ = ["compare", "sri_table", "CAUTION", "METRIC_COLUMNS", "EVAPOTRANSPIRATION_NOTE"]

EVAPOTRANSPIRATION_NOTE = (
    "vegetated roof results are indicative only: the sol-air balance ignores "
    "evapotranspiration, which keeps a planted roof much cooler")

_VARS = {
    "temp_surface": ("degC", "exterior surface temperature of the finish on the construction"),
    "heat_flux": ("W m-2", "heat flow density into the building through the construction "
                           "(positive inwards)"),
    "heat_flux_exterior": ("W m-2", "heat flow density into the construction at its exterior "
                                    "face, latent heat included"),
    "latent_flux": ("W m-2", "latent heat of dew or frost released at the exterior surface "
                             "(negative while it evaporates)"),
    "condensation": ("kg m-2", "water condensed on the exterior surface during the hour "
                               "(negative when evaporating)"),
    "condensate": ("kg m-2", "dew or frost held on the exterior surface at the end of the hour"),
    "temp_sol_air": ("degC", "exterior equivalent (sol-air) temperature"),
    "h_e": ("W m-2 K-1", "external surface heat transfer coefficient h_conv + h_rad"),
}

#: Time-only weather variables of the hourly result: units, long_name, CF standard_name.
_AIR_VARS = {
    "temp_air": ("degC", "dry-bulb air temperature", "air_temperature"),
    "temp_dew": ("degC", "dew-point temperature of the air", "dew_point_temperature"),
}

#: Metric columns of the table (after surface, finish, label, absorptance, emissivity, sri).
METRIC_COLUMNS = {
    "temp_surface_max": "peak surface temperature [°C]",
    "temp_surface_p99": "99th percentile of the hourly surface temperature [°C]",
    "hours_above_threshold": "hours with the surface above the threshold [h]",
    "threshold": "the threshold [°C]",
    "daily_range_max": "largest daily surface temperature range [K]",
    "dew_hours": "hours with T_s below the air dew point and T_s >= 0 °C [h]",
    "frost_hours": "hours with T_s below the air dew point and T_s < 0 °C [h]",
    "freeze_thaw_cycles": "completed freeze-thaw cycles of the surface [-]",
    "undercooling_hours": "night hours (ghi = 0) with T_s below the air temperature [h]",
    "undercooling_degree_hours": "sum of (T_a - T_s) over those hours [K h]",
    "heat_gain": "annual heat gain through the construction [kWh m-2]",
    "heat_loss": "annual heat loss through the construction [kWh m-2]",
    "heat_flux_peak_in": "peak hourly heat flux into the building [W m-2]",
    "heat_flux_peak_out": "peak hourly heat flux out of the building [W m-2]",
    "condensate_total": "water condensed on the exterior surface over the year [kg m-2]",
    "wet_hours": "hours in which the exterior surface holds dew or frost [h]",
    "u_value": "ISO 6946 U-value of the construction for the surface tilt [W m-2 K-1]",
    "note": "caveat of the finish (e.g. indicative only), empty when none",
}

_OWN_KEYS = {"response", "temp_indoor", "threshold", "dew", "exterior", "linearisation",
             "substeps", "finish_table"}
_ENGINE_KEYS = {"sky", "transposition", "convection", "albedo", "sky_air_split", "temp_ground",
                "terrain", "height", "roughness", "solar_position_method"}


def _finishes(finishes, extra) -> list[Finish]:
    out = []
    for f in finishes:
        out.append(f if isinstance(f, Finish) else get_finish(str(f), extra))
    if not out:
        raise ConfigurationError("no finishes given: give at least one finish")
    names = [f.name for f in out]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise ConfigurationError(f"finish(es) {dup} given more than once")
    return out


def compare(
    weather,
    surfaces: Iterable[Any] | None,
    finishes: Sequence[Finish | str],
    construction: Construction | str | None = None,
    *,
    response: str | None = None,
    temp_indoor: float | np.ndarray = 20.0,
    threshold: float = 60.0,
    dew: bool = True,
    exterior: str = "linear",
    linearisation: str | None = None,
    substeps: int = 6,
    finish_table: dict[str, Finish] | None = None,
    **engine_options: Any,
) -> tuple[xr.Dataset, pd.DataFrame]:
    """Compare finishes on the surfaces of a building for one weather year.

    Parameters
    ----------
    weather : solair.Weather or path
    surfaces : iterable of solair.Surface or None
        None: :func:`solair.surfaces.default_surfaces` (roof + 8 facades).
    finishes : sequence of Finish or finish names
        Names are looked up in ``finish_table`` then the catalogue.
    construction : Construction, library name, ``FILE.toml`` or ``FILE.toml:NAME``, optional
    response : {"transient", "steady", "massless"}, optional
        Default "transient" with a construction, "massless" without.
    temp_indoor : float or array (time,)
        Indoor air temperature [°C].
    threshold : float
        Surface temperature for ``hours_above_threshold`` [°C].
    dew : bool
        Dew and frost with latent heat on the exterior surface.
    exterior : {"linear", "nonlinear"}
        Exterior boundary of the response (see :func:`solair.response.surface_response`).
    linearisation : {"air", "surface"}, optional
        Linearisation of the sol-air balance (default "surface": h_rad at the
        massless adiabatic solution, exact for the massless response and much
        closer than "air" for a sunlit dark roof; ``exterior="nonlinear"``
        solves the exact balance at the computed surface temperature).
    substeps : int
        Time steps per hour of the transient model.
    finish_table : dict, optional
        User finishes (e.g. from :func:`solair.finishes.load_finishes`).
    **engine_options
        Passed to :func:`solair.engine.exterior_forcing` (sky, transposition,
        convection, albedo, ...).

    Returns
    -------
    (xarray.Dataset, pandas.DataFrame)
        Hourly results over (time, surface, finish) and the metrics, one row
        per surface × finish with the finish's SRI (ASTM E1980-11, medium wind).
    """
    from solair import engine
    from solair.output import local_time

    unknown = sorted(set(engine_options) - _ENGINE_KEYS)
    if unknown:
        raise ConfigurationError(
            f"compare: unknown option(s) {unknown}; allowed {sorted(_ENGINE_KEYS | _OWN_KEYS)}")
    if exterior not in EXTERIOR_MODELS:
        raise ConfigurationError(
            f"exterior boundary {exterior!r} is not one of {sorted(EXTERIOR_MODELS)}")
    cons = None if construction is None else resolve_construction(construction)
    if response is None:
        response = "transient" if cons is not None else "massless"
    if response not in RESPONSE_MODELS:
        raise ConfigurationError(
            f"response model {response!r} is not one of {sorted(RESPONSE_MODELS)}")
    if response != "massless" and cons is None:
        raise ConfigurationError(f"response {response!r} needs a construction")
    try:
        threshold = float(threshold)
    except (TypeError, ValueError):
        raise ConfigurationError(f"threshold {threshold!r} is not a number") from None
    fins = _finishes(finishes, finish_table)
    if linearisation is None:
        linearisation = "surface"
    if not hasattr(weather, "data"):
        from solair.weather import read_weather

        weather = read_weather(weather)

    forcing = engine.exterior_forcing(weather, surfaces, **engine_options)
    names = [f.name for f in fins]
    alpha = xr.DataArray([f.absorptance for f in fins], dims="finish", coords={"finish": names})
    eps = xr.DataArray([f.emissivity for f in fins], dims="finish", coords={"finish": names})
    # only what is read below: h_rad and r_se would be two more full arrays nobody reads
    sa = engine.sol_air(forcing, alpha, eps, linearisation=linearisation,
                        variables=("temp_sol_air", "h_e", "h_conv"))
    dims = ("time", "surface", "finish")
    t_eq = sa["temp_sol_air"].transpose(*dims).values
    h_e = sa["h_e"].transpose(*dims).values
    h_c = sa["h_conv"].transpose(*dims).values
    n_t, n_s, n_f = t_eq.shape

    def col(name):  # forcing variable broadcast to (time, surface, finish)
        da = forcing[name]
        own = [d for d in dims if d in da.dims]
        return da.transpose(*own).values.reshape(
            [da.sizes[d] if d in da.dims else 1 for d in dims])

    tilt = forcing["surface_tilt"].values[:, None]
    t_in = np.asarray(temp_indoor, dtype=float)
    if t_in.ndim == 1:
        if t_in.size != n_t:
            raise ConfigurationError(
                f"temp_indoor has {t_in.size} values; give one or one per hour ({n_t})")
        t_in = t_in[:, None, None]
    balance_inputs = None
    if exterior == "nonlinear":
        balance_inputs = {
            "temp_air": col("temp_air"), "poa_global": col("poa_global"),
            "absorptance": alpha.values[None, None, :], "emissivity": eps.values[None, None, :],
            "h_conv": h_c, "temp_sky": col("temp_sky"), "temp_ground": col("temp_ground"),
            "view_sky": col("view_sky"), "view_air": col("view_air"),
            "view_ground": col("view_ground"),
        }
    dew_inputs = None
    if dew:
        dew_inputs = {"temp_air": col("temp_air"), "temp_dew": col("temp_dew"),
                      "pressure": col("pressure"), "h_conv": h_c}
    res = surface_response(
        t_eq, h_e, model=response, construction=cons, surface_tilt=tilt, temp_indoor=t_in,
        exterior=exterior, balance=balance_inputs, dew=dew_inputs, substeps=substeps,
    )

    coords = {"time": forcing["time"], "surface": forcing["surface"],
              "surface_tilt": forcing["surface_tilt"],
              "surface_azimuth": forcing["surface_azimuth"],
              "finish": ("finish", names, {"long_name": "exterior finish"}),
              "absorptance": ("finish", alpha.values, {"units": "1",
                              "long_name": "solar absorptance of the finish"}),
              "emissivity": ("finish", eps.values, {"units": "1",
                             "long_name": "thermal emissivity of the finish"}),
              "sri": ("finish", np.array([f.sri() for f in fins]),
                      {"units": "1", "long_name": "solar reflectance index, ASTM E1980-11, "
                                                  "medium wind (h_c = 12 W m-2 K-1)"})}
    data = {"temp_surface": res["temp_surface"], "heat_flux": res["heat_flux"],
            "heat_flux_exterior": res["heat_flux_exterior"], "temp_sol_air": t_eq, "h_e": h_e}
    if dew:
        data.update(latent_flux=res["latent_flux"], condensation=res["condensation"],
                    condensate=res["condensate"])
    ds = _dataset(data, coords, forcing, dims)
    notes = [f"{f.name}: {f.note}" for f in fins if f.note]
    if any(f.indicative for f in fins):
        notes.append(EVAPOTRANSPIRATION_NOTE)
    ds.attrs.update(forcing.attrs)
    ds.attrs.update({
        "title": "solair finish comparison: surface response and risk metrics",
        "response_model": response,
        "exterior_boundary": exterior,
        "linearisation": linearisation,
        "dew_model": ("Lewis analogy mass transfer, latent heat 2.501e6 / 2.834e6 J kg-1"
                      if dew else "off"),
        "construction": "" if cons is None else cons.name,
        "construction_layers": "" if cons is None else "; ".join(
            f"{ly.name} {ly.thickness:g} m, {ly.conductivity:g} W/mK, {ly.density:g} kg/m3, "
            f"{ly.specific_heat:g} J/kgK" for ly in cons.layers),
        "construction_resistance": 0.0 if cons is None else cons.resistance,
        "temp_indoor": float(np.mean(t_in)),
        "substeps_per_hour": int(substeps) if response == "transient" else 1,
        "finish_sources": " | ".join(f"{f.name}: {f.source}" for f in fins),
        "notes": " | ".join(notes),
        "caution": CAUTION,
    })

    # ---- metrics per surface x finish: one compiled pass over the hours; the air, its
    # dew point and ghi stay time-only (never broadcast to time x surface x finish)
    start = local_time(ds) - pd.Timedelta(hours=1)
    day = np.asarray(start.year * 10000 + start.month * 100 + start.day)  # YYYYMMDD
    m = _m.surface_table(
        res["temp_surface"], col("temp_air"), col("temp_dew"),
        np.asarray(weather.data["ghi"].values, dtype=float)[:, None, None], res["heat_flux"],
        day, threshold=threshold, q=99.0)
    if dew:
        condensate_total = np.sum(np.maximum(res["condensation"], 0.0), axis=0)
        wet_hours = np.sum(res["wet"], axis=0)
    else:  # a dry surface: no condensate (the response's arrays are all zero)
        condensate_total = np.zeros((n_s, n_f))
        wet_hours = np.zeros((n_s, n_f), dtype=np.int64)
    table = {
        "temp_surface_max": m["temp_surface_max"],
        "temp_surface_p99": m["temp_surface_p99"],
        "hours_above_threshold": m["hours_above_threshold"],
        "threshold": np.full((n_s, n_f), threshold),
        "daily_range_max": m["daily_range_max"],
        "dew_hours": m["dew_hours"],
        "frost_hours": m["frost_hours"],
        "freeze_thaw_cycles": m["freeze_thaw_cycles"],
        "undercooling_hours": m["undercooling_hours"],
        "undercooling_degree_hours": m["undercooling_degree_hours"],
        "heat_gain": m["heat_gain"],
        "heat_loss": m["heat_loss"],
        "heat_flux_peak_in": m["heat_flux_peak_in"],
        "heat_flux_peak_out": m["heat_flux_peak_out"],
        "condensate_total": condensate_total,
        "wet_hours": wet_hours,
    }
    surf = np.repeat(forcing["surface"].values, n_f)
    rows = {
        "surface": surf,
        "finish": np.tile(names, n_s),
        "label": np.tile([f.label or f.name for f in fins], n_s),
        "absorptance": np.tile(alpha.values, n_s),
        "emissivity": np.tile(eps.values, n_s),
        "sri": np.tile(ds["sri"].values, n_s),
    }
    rows.update({k: np.asarray(v).reshape(-1) for k, v in table.items()})
    rows["note"] = np.tile([_finish_note(f) for f in fins], n_s)
    if cons is not None:
        tilts = np.repeat(forcing["surface_tilt"].values, n_f)
        rows["u_value"] = 1.0 / (r_si(tilts, False) + cons.resistance + 0.04)
    df = pd.DataFrame(rows)
    df.attrs.update({"caution": CAUTION, "notes": ds.attrs["notes"],
                     "response_model": response, "construction": ds.attrs["construction"]})
    return ds, df


def _dataset(data: dict[str, np.ndarray], coords: dict[str, Any], forcing: xr.Dataset,
             dims: tuple[str, ...]) -> xr.Dataset:
    """The hourly result: ``data`` over ``dims`` with their units, the coordinates, then the
    air and its dew point, once per hour (for carpets of the excess over the air,
    ``solair plot --minus-air``, and dew-point checks from the hourly file alone).

    Built in one construction, in the variable order of the earlier step-by-step build
    (result variables, coordinates, air variables); ``ds[k] = ...`` would merge each anew.
    """
    variables: dict[str, Any] = {
        k: xr.Variable(dims, v, {"units": _VARS[k][0], "long_name": _VARS[k][1]})
        for k, v in data.items()}
    variables.update({k: c.variable if isinstance(c, xr.DataArray) else xr.Variable(*c)
                      for k, c in coords.items()})
    for k, (units, long_name, standard_name) in _AIR_VARS.items():
        variables[k] = xr.Variable("time", np.asarray(forcing[k].values, dtype=float),
                                   {"units": units, "long_name": long_name,
                                    "standard_name": standard_name})
    # all passed as coordinates (which keep their order), then the results made data again
    return xr.Dataset(coords=variables).reset_coords([k for k in variables if k not in coords])


def _finish_note(f: Finish) -> str:
    parts = [f.note] if f.note else []
    if f.indicative:
        parts.append(EVAPOTRANSPIRATION_NOTE)
    return "; ".join(parts)


def sri_table(finishes: Sequence[Finish]) -> pd.DataFrame:
    """SRI of finishes at the three wind classes of ASTM E1980-11."""
    a = np.array([f.absorptance for f in finishes])
    e = np.array([f.emissivity for f in finishes])
    return pd.DataFrame({
        "finish": [f.name for f in finishes], "absorptance": a, "emissivity": e,
        **{f"sri_{w}": sri(a, e, wind=w) for w in ("low", "medium", "high")},
    })
