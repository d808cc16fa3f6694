"""Units and names of the variables of solair's results (CF attributes).

:data:`META` maps a variable name to its units, long name and CF standard name;
:func:`label` writes them into a variable's attributes.
"""

from __future__ import annotations

import xarray as xr

__all__ = ["META", "label"]

#: name -> (units, long_name, CF standard_name or None)
META: dict[str, tuple[str, str, str | None]] = {
    "temp_air": ("degC", "dry-bulb air temperature", "air_temperature"),
    "temp_dew": ("degC", "dew-point temperature", "dew_point_temperature"),
    "relative_humidity": ("%", "relative humidity", "relative_humidity"),
    "pressure": ("Pa", "station air pressure", "surface_air_pressure"),
    "wind_speed": ("m s-1", "wind speed at the surface (after the terrain profile)", "wind_speed"),
    "wind_direction": ("degree", "direction the wind blows from", "wind_from_direction"),
    "solar_zenith": ("degree", "apparent solar zenith angle used for the hour",
                     "solar_zenith_angle"),
    "solar_azimuth": ("degree", "solar azimuth used for the hour, clockwise from north",
                      "solar_azimuth_angle"),
    "temp_sky": ("degC", "effective sky temperature (L_down = sigma T_sky^4)", None),
    "sky_source": ("1", "source of the sky temperature in each hour", None),
    "temp_ground": ("degC", "temperature of the ground and surroundings", None),
    "poa_global": ("W m-2", "solar irradiance on the plane of the surface", None),
    "h_conv": ("W m-2 K-1", "external convective heat transfer coefficient", None),
    "h_rad": ("W m-2 K-1", "external long-wave radiative heat transfer coefficient", None),
    "h_e": ("W m-2 K-1", "external surface heat transfer coefficient h_conv + h_rad", None),
    "r_se": ("m2 K W-1", "external surface resistance 1/h_e", None),
    "temp_sol_air": ("degC", "exterior equivalent (sol-air) temperature", None),
    "view_sky": ("1", "long-wave view factor to the sky", None),
    "view_air": ("1", "long-wave view factor to the near-horizon air", None),
    "view_ground": ("1", "long-wave view factor to the ground", None),
    "temp_sky_models": ("degC", "effective sky temperature by each clear-sky correlation", None),
    "temp_sky_min": ("degC", "lowest sky temperature across the clear-sky correlations", None),
    "temp_sky_max": ("degC", "highest sky temperature across the clear-sky correlations", None),
    "temp_sol_air_min": ("degC", "lowest sol-air temperature across the sky correlations", None),
    "temp_sol_air_max": ("degC", "highest sol-air temperature across the sky correlations", None),
    "surface_tilt": ("degree", "surface tilt from horizontal (0 facing up, 90 vertical)", None),
    "surface_azimuth": ("degree", "direction the surface faces, clockwise from north", None),
    "absorptance": ("1", "solar absorptance of the finish", None),
    "emissivity": ("1", "thermal emissivity of the finish", None),
}


def label(var: xr.Variable | xr.DataArray, name: str) -> xr.Variable | xr.DataArray:
    """Write ``units``, ``long_name`` (and ``standard_name``) of ``name`` into ``var.attrs``.

    A Dataset's variable is labelled in place through ``ds.variables[name]`` (a Variable:
    no DataArray is built for it).
    """
    units, long_name, standard = META[name]
    var.attrs.update({"units": units, "long_name": long_name})
    if standard:
        var.attrs["standard_name"] = standard
    return var
