"""Plane-of-array irradiance: beam, sky-diffuse and ground-reflected, on every surface.

:func:`plane_of_array` assembles pvlib's component functions for all surfaces at once
(numpy broadcasting of hours of shape ``(n_hours, 1)`` against surfaces of shape
``(n_surfaces,)``), each evaluated only in the hours where it can be non-zero. The sun's
position comes from :mod:`solair.sun`.

Angles in degrees; azimuths in pvlib's convention (clockwise from north:
N = 0, E = 90, S = 180, W = 270); irradiance in [W m-2].

References
----------
.. [1] Perez, R., Ineichen, P., Seals, R., Michalsky, J. and Stewart, R.
   (1990). Modeling daylight availability and irradiance components from
   direct and global irradiance. Solar Energy 44(5), 271-289.
   :doi:`10.1016/0038-092X(90)90055-H`
.. [2] Hay, J. E. and Davies, J. A. (1980). Calculation of the solar
   radiation incident on an inclined surface. Proc. First Canadian Solar
   Radiation Data Workshop, 59-72.
.. [3] Holmgren, W. F., Hansen, C. W. and Mikofski, M. A. (2018). pvlib
   python: a python package for modeling solar energy systems. Journal of
   Open Source Software 3(29), 884. :doi:`10.21105/joss.00884`
"""

from __future__ import annotations

import numpy as np
import pvlib

from solair.errors import ConfigurationError

__all__ = ["DEFAULT_ALBEDO", "TRANSPOSITION_MODELS", "check_transposition_model",
           "plane_of_array"]

#: Ground reflectance used where the weather file has none [-] (common practice for grass
#: and mixed surroundings).
DEFAULT_ALBEDO = 0.2

#: Sky-diffuse transposition models passed to pvlib.
TRANSPOSITION_MODELS = frozenset({"isotropic", "haydavies", "perez"})


def check_transposition_model(name: str) -> str:
    """Return ``name`` if it is a known transposition model, else raise ConfigurationError."""
    if name not in TRANSPOSITION_MODELS:
        raise ConfigurationError(
            f"transposition model {name!r} is not one of {sorted(TRANSPOSITION_MODELS)}"
        )
    return name


def _isotropic(dhi: np.ndarray, tilt: np.ndarray) -> np.ndarray:
    """Isotropic sky diffuse DHI (1 + cos β) / 2 [W m-2], hours (n, 1) x surfaces (m,)."""
    return dhi * (1.0 + np.cos(np.radians(tilt))) / 2.0


def plane_of_array(
    surface_tilt,
    surface_azimuth,
    solar_zenith,
    solar_azimuth,
    dni,
    ghi,
    dhi,
    *,
    model: str = "perez",
    albedo=DEFAULT_ALBEDO,
    dni_extra=None,
    airmass=None,
) -> dict[str, np.ndarray]:
    """Total irradiance on every surface for every hour, by pvlib's functions.

    The hourly arrays are reshaped to columns ``(n_hours, 1)`` and broadcast
    against the surfaces ``(n_surfaces,)``, giving ``(n_hours, n_surfaces)``
    directly in the (time, surface) order of the results; numpy arrays are
    passed (pvlib's Series branches do not broadcast). The components are
    pvlib's: :func:`pvlib.irradiance.get_ground_diffuse`, the beam
    DNI·max(cos θ, 0) with cos θ from :func:`pvlib.irradiance.aoi_projection`,
    and :func:`pvlib.irradiance.get_sky_diffuse`. These are evaluated only in
    the hours where they can be non-zero (beam: DNI ≠ 0; Perez: air mass
    defined), which halves the work of a year; the numbers are those of
    :func:`pvlib.irradiance.get_total_irradiance` (the beam to ~1e-12 W m-2:
    pvlib's goes through the angle, cos(arccos(cos θ))).

    Beam: where the sun is on or below the horizon (``solar_zenith >= 90``)
    the beam is set to zero -- it cannot be projected from there; the hour's
    horizontal beam DNI·cos(z) is ≤ 0 anyway. The engine places the sun above
    the horizon in every hour that has sunlight (:func:`hourly_sun_geometry`)
    and counts any remaining case.

    Sky diffuse, Perez [2]_: pvlib's Perez returns NaN where the clearness ε
    is undefined (DHI = DNI = 0 with the sun up) and 0 where the relative
    air mass is undefined (sun below the horizon, e.g. twilight hours with
    DHI > 0). In both kinds of hours the isotropic sky diffuse
    DHI·(1 + cos β)/2 is used instead, so no measured diffuse energy is
    dropped; the number of such hours is returned.

    Parameters
    ----------
    surface_tilt, surface_azimuth : array (n_surfaces,) [deg]
    solar_zenith, solar_azimuth : array (n_hours,) [deg]
        Apparent zenith (refraction included) is the one to pass.
    dni, ghi, dhi : array (n_hours,) [W m-2]
    model : {"isotropic", "haydavies", "perez"}
    albedo : float or array (n_hours,) [-]
    dni_extra : array (n_hours,) [W m-2]
        Extraterrestrial normal irradiance; required by haydavies and perez.
    airmass : array (n_hours,) [-]
        Relative (not pressure-corrected) air mass; required by perez.

    Returns
    -------
    dict
        ``poa_global``, ``poa_direct``, ``poa_sky_diffuse``,
        ``poa_ground_diffuse`` (n_hours, n_surfaces) [W m-2]; and
        ``sky_diffuse_fallback_hours`` (int): hours where the isotropic sky
        diffuse replaced the chosen model's; ``..._with_diffuse``: those of
        them with DHI > 0 (in the others the sky diffuse is 0 either way).

    References
    ----------
    .. [2] Perez, R. et al. (1990). Solar Energy 44(5), 271-289.
       :doi:`10.1016/0038-092X(90)90055-H`
    .. [3] Hay, J. E. and Davies, J. A. (1980), see module references.
    """
    check_transposition_model(model)
    tilt = np.asarray(surface_tilt, dtype=float).reshape(-1)
    azim = np.asarray(surface_azimuth, dtype=float).reshape(-1)
    n = np.asarray(solar_zenith).size
    shape = (n, tilt.size)

    def col(x):  # hourly values as a column (n_hours, 1)
        return np.broadcast_to(np.asarray(x, dtype=float).reshape(-1, 1), (n, 1))

    zen, sazi, dhi, ghi = col(solar_zenith), col(solar_azimuth), col(dhi), col(ghi)
    sun_up = zen < 90.0
    dni = np.where(sun_up, col(dni), 0.0)
    kwargs = {}
    if model in ("haydavies", "perez"):
        if dni_extra is None:
            raise ConfigurationError(f"transposition model {model!r} needs dni_extra")
        kwargs["dni_extra"] = col(dni_extra)
    if model == "perez":
        if airmass is None:
            raise ConfigurationError("transposition model 'perez' needs airmass")
        kwargs["airmass"] = col(airmass)
    # pvlib's functions on the hours where they can give anything but 0: the beam
    # where DNI != 0 (it is 0 with the sun down), Perez where the air mass is defined
    # (pvlib's Perez is 0 elsewhere); one angle-of-incidence projection for the beam
    # (pvlib's poa_components takes the angle and would take its cosine again)
    with np.errstate(invalid="ignore", divide="ignore"):
        ground = pvlib.irradiance.get_ground_diffuse(tilt, ghi, col(albedo))
        ground = np.ascontiguousarray(np.broadcast_to(np.asarray(ground, dtype=float), shape))
        rows = np.flatnonzero(dni[:, 0] != 0.0)
        beam = dni[rows] * pvlib.irradiance.aoi_projection(tilt, azim, zen[rows], sazi[rows])
        beam = np.maximum(beam, 0.0)
        beam[~np.isfinite(beam)] = 0.0
        direct = np.zeros(shape)
        direct[rows] = beam
        if model == "perez":
            rows = sun_up[:, 0] | np.isfinite(kwargs["airmass"][:, 0])
        else:
            rows = np.ones(n, dtype=bool)
        sub = np.flatnonzero(rows)
        sky_rows = np.broadcast_to(pvlib.irradiance.get_sky_diffuse(
            tilt, azim, zen[sub], sazi[sub], dni[sub], ghi[sub], dhi[sub],
            model=model, **{k: v[sub] for k, v in kwargs.items()},
        ), (sub.size, tilt.size))
    # isotropic sky diffuse where the model's is undefined (see above)
    bad = ~np.isfinite(sky_rows)
    if model == "perez":
        bad = bad | (~sun_up[sub] & (dhi[sub] > 0.0))
    sky = np.zeros(shape)
    sky[sub] = sky_rows
    row_bad = bad.any(axis=1)
    fix = sub[row_bad]
    if fix.size:
        sky[fix] = np.where(bad[row_bad], _isotropic(dhi[fix], tilt), sky[fix])
    out = np.flatnonzero(~rows & ~sun_up[:, 0] & (dhi[:, 0] > 0.0))  # Perez, sun down
    if out.size:
        sky[out] = _isotropic(dhi[out], tilt)
    fix = np.concatenate([fix, out])
    fallback_hours = int(fix.size)
    fallback_with_diffuse = int(np.count_nonzero(dhi[fix, 0] > 0.0))
    total = direct + sky + ground
    return {
        "poa_global": total,
        "poa_direct": direct,
        "poa_sky_diffuse": sky,
        "poa_ground_diffuse": ground,
        "sky_diffuse_fallback_hours": fallback_hours,
        "sky_diffuse_fallback_hours_with_diffuse": fallback_with_diffuse,
    }
