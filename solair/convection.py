"""Exterior convective heat-transfer coefficients and the local wind speed.

Models (keys of :data:`CONVECTION_MODELS`):

* ``"iso6946"``: ISO 6946:2017 Annex C, h_c = 4 + 4v (default).
* ``"iso6946_conventional"``: the conventional R_se = 0.04 m2 K W-1. The
  convective part is not a correlation: :func:`solair.balance.temp_sol_air`
  with ``conventional=True`` fixes h_e = 25 W m-2 K-1 and sets
  h_c = h_e - h_rad. Here it returns the conventional h_ce = 20 W m-2 K-1
  (ISO 13789:2017 Table 8) as a stand-in.
* ``"yazdanian_klems"``: Yazdanian & Klems (1994), windward/leeward.
* ``"walton"``: Walton (1983), natural + forced with surface-roughness classes,
  windward/leeward.

All inputs broadcast with numpy rules, e.g. ``wind_speed`` of shape
``(n_time, 1)`` against ``surface_tilt`` of shape ``(n_surface,)`` gives
``(n_time, n_surface)``. ``wind_speed`` is the local wind at the surface: reduce
the 10 m station value with :func:`local_wind_speed` first.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike, NDArray

from solair.errors import ConfigurationError

__all__ = [
    "CONVECTION_MODELS",
    "ROUGHNESS_WALTON",
    "TERRAIN_ASHRAE",
    "DEFAULT_TEMP_DIFFERENCE",
    "h_conv_iso6946",
    "h_conv_iso6946_conventional",
    "h_conv_yazdanian_klems",
    "h_conv_walton",
    "h_natural_walton",
    "is_windward",
    "get_convection_coefficient",
    "local_wind_speed",
]

Array = NDArray[np.float64]

#: |T_s - T_a| [K] used for the natural-convection part when the engine gives
#: no estimate (``temp_difference=None``): a typical night-time undercooling of
#: a roof and a modest daytime excess; the sign is then unknown, see each model.
DEFAULT_TEMP_DIFFERENCE = 5.0

#: Walton (1983) roughness multipliers R_f for the forced term (after Sparrow et al. 1979).
ROUGHNESS_WALTON = {
    "very_rough": 2.17,  # stucco
    "rough": 1.67,  # brick
    "medium_rough": 1.52,  # concrete
    "medium_smooth": 1.13,  # clear pine
    "smooth": 1.11,  # smooth plaster
    "very_smooth": 1.00,  # glass
}

#: ASHRAE Handbook-Fundamentals (ch. 24, Table 1) power-law terrain parameters:
#: name -> (exponent a, boundary-layer thickness delta [m]).
TERRAIN_ASHRAE = {
    "city": (0.33, 460.0),
    "suburban": (0.22, 370.0),
    "open": (0.14, 270.0),
    "flat": (0.10, 210.0),
}

#: Tilts within this many degrees of horizontal (up or down) count as windward.
HORIZONTAL_TOLERANCE = 10.0


def _wind(wind_speed: ArrayLike) -> Array:
    v = np.asarray(wind_speed, dtype=float)
    bad = ~np.isfinite(v) | (v < 0.0)
    if np.any(bad):
        raise ConfigurationError(
            f"wind_speed {v[bad].ravel()[:3].tolist()} m/s is not allowed: "
            "it must be finite and >= 0"
        )
    return v


def h_conv_iso6946(wind_speed: ArrayLike) -> Array:
    r"""External convective coefficient of ISO 6946:2017 Annex C.

    .. math:: h_c = 4 + 4v

    Parameters
    ----------
    wind_speed : array_like
        Wind speed adjacent to the surface v [m s-1].

    Returns
    -------
    h_conv : ndarray [W m-2 K-1]; 4 in calm air.

    References
    ----------
    .. [1] ISO 6946:2017, Building components and building elements - Thermal
       resistance and thermal transmittance - Calculation methods, Annex C.
    """
    return 4.0 + 4.0 * _wind(wind_speed)


def h_conv_iso6946_conventional(wind_speed: ArrayLike) -> Array:
    r"""Stand-in convective coefficient for the conventional R_se = 0.04 m2 K W-1.

    Returns h_ce = 20 W m-2 K-1 (ISO 6946 at v = 4 m/s; ISO 13789:2017
    Table 8) for every hour. The balance with ``conventional=True`` replaces it
    by h_e - h_rad with h_e = 1/R_se = 25 W m-2 K-1.

    References
    ----------
    .. [1] ISO 6946:2017, 6.8 and Annex C; ISO 13789:2017, Table 8.
    """
    return np.full(np.shape(_wind(wind_speed)), 20.0)


def is_windward(
    wind_direction: ArrayLike,
    surface_azimuth: ArrayLike,
    surface_tilt: ArrayLike,
    *,
    horizontal_tolerance: float = HORIZONTAL_TOLERANCE,
) -> NDArray[np.bool_]:
    """Whether a surface faces the wind.

    Windward when the angle between the direction the wind blows **from** and
    the outward normal's azimuth is at most 90° (common practice). Surfaces
    within ``horizontal_tolerance`` of horizontal (facing up or down) are
    always windward (common practice for roofs: no lee side). A non-finite wind
    direction (calm, "undefined") counts as windward.

    Parameters
    ----------
    wind_direction : array_like
        Direction the wind blows from [°], clockwise from north.
    surface_azimuth : array_like
        Azimuth of the outward normal [°], clockwise from north (pvlib).
    surface_tilt : array_like
        Tilt [°], 0 = facing up.

    Returns
    -------
    windward : ndarray of bool
    """
    wd = np.asarray(wind_direction, dtype=float)
    az = np.asarray(surface_azimuth, dtype=float)
    tilt = np.asarray(surface_tilt, dtype=float)
    delta = np.abs((wd - az + 180.0) % 360.0 - 180.0)
    flat = (tilt <= horizontal_tolerance) | (tilt >= 180.0 - horizontal_tolerance)
    return flat | ~np.isfinite(wd) | (delta <= 90.0)


def h_conv_yazdanian_klems(
    wind_speed: ArrayLike,
    windward: ArrayLike,
    temp_difference: ArrayLike | None = None,
) -> Array:
    r"""Exterior convective coefficient of Yazdanian & Klems (1994).

    .. math:: h_c = \sqrt{\left(C_t\,|\Delta T|^{1/3}\right)^2 + \left(a\,V^b\right)^2}

    with C_t = 0.84 and, windward, a = 3.26, b = 0.89; leeward a = 3.55,
    b = 0.617 (V the wind speed [m s-1], ΔT = T_s - T_a [K]). The values are
    the widely reproduced ones [from memory: not checked against the paper's
    table]; another set, a = 2.38 (windward) / 2.86 (leeward) with the same
    exponents, is also quoted in the literature, about 27 % lower in the forced
    term. The fit is from field measurements on a smooth (glazed) surface of a
    low-rise test facility; the paper gives no roughness dependence, so
    ``roughness`` is not used by this model. The leeward fit exceeds the
    windward one below V ≈ 1.4 m/s (a property of the fits). Expect ±30-50 %
    between models.

    Parameters
    ----------
    wind_speed : array_like
        Local wind speed V [m s-1].
    windward : array_like of bool
        Whether the surface is windward (:func:`is_windward`).
    temp_difference : array_like, optional
        T_s - T_a [K]; None uses :data:`DEFAULT_TEMP_DIFFERENCE`.

    Returns
    -------
    h_conv : ndarray [W m-2 K-1]

    References
    ----------
    .. [1] Yazdanian, M., Klems, J.H. (1994). Measurement of the exterior
       convective film coefficient for windows in low-rise buildings. ASHRAE
       Transactions 100(1), 1087-1096.
    """
    v = _wind(wind_speed)
    ww = np.asarray(windward, dtype=bool)
    dt = DEFAULT_TEMP_DIFFERENCE if temp_difference is None else temp_difference
    dt = np.abs(np.asarray(dt, dtype=float))
    a = np.where(ww, 3.26, 3.55)
    b = np.where(ww, 0.89, 0.617)
    return np.hypot(0.84 * np.cbrt(dt), a * v**b)


def h_natural_walton(surface_tilt: ArrayLike, temp_difference: ArrayLike | None = None) -> Array:
    r"""Natural-convection part of Walton (1983).

    With ΔT = T_s - T_a [K] and Σ the tilt:

    * unstable (ΔT cos Σ > 0, e.g. a warm roof facing up):
      :math:`h_n = 9.482\,|\Delta T|^{1/3} / (7.238 - |\cos\Sigma|)`
    * stable (ΔT cos Σ < 0): :math:`h_n = 1.810\,|\Delta T|^{1/3} / (1.382 + |\cos\Sigma|)`
    * vertical, or no sign known: :math:`h_n = 1.31\,|\Delta T|^{1/3}`

    Both branches give 1.31 |ΔT|^(1/3) for a vertical surface. With
    ``temp_difference=None`` the magnitude is :data:`DEFAULT_TEMP_DIFFERENCE`
    and the vertical value is used at every tilt (it lies between the stable
    and unstable values).

    References
    ----------
    .. [1] Walton, G.N. (1983). Thermal Analysis Research Program reference
       manual. NBSIR 83-2655, National Bureau of Standards.
    """
    tilt = np.asarray(surface_tilt, dtype=float)
    if temp_difference is None:
        return np.broadcast_to(1.31 * np.cbrt(DEFAULT_TEMP_DIFFERENCE), tilt.shape).copy()
    dt = np.asarray(temp_difference, dtype=float)
    cos_t = np.cos(np.radians(tilt))
    cube = np.cbrt(np.abs(dt))
    unstable = 9.482 * cube / (7.238 - np.abs(cos_t))
    stable = 1.810 * cube / (1.382 + np.abs(cos_t))
    sign = dt * cos_t
    return np.where(sign > 0.0, unstable, np.where(sign < 0.0, stable, 1.31 * cube))


def h_conv_walton(
    wind_speed: ArrayLike,
    windward: ArrayLike,
    surface_tilt: ArrayLike,
    temp_difference: ArrayLike | None = None,
    *,
    roughness: str = "medium_rough",
    perimeter_over_area: ArrayLike = 0.4,
) -> Array:
    r"""Exterior convective coefficient of Walton (1983), natural + forced.

    .. math::

        h_c = h_n + h_f, \qquad
        h_f = 2.537\,W_f\,R_f\,\sqrt{P\,V/A}

    with W_f = 1 windward and 0.5 leeward, R_f the roughness multiplier of
    :data:`ROUGHNESS_WALTON`, P/A the surface's perimeter over area [m-1]
    and h_n from :func:`h_natural_walton`. The forced term follows Sparrow,
    Ramsey & Mass (1979). In calm air h_f = 0 and only h_n remains.

    Parameters
    ----------
    wind_speed : array_like
        Local wind speed at the surface height V [m s-1].
    windward : array_like of bool
        Whether the surface is windward (:func:`is_windward`).
    surface_tilt : array_like
        Tilt [°].
    temp_difference : array_like, optional
        T_s - T_a [K].
    roughness : str, default "medium_rough"
        A key of :data:`ROUGHNESS_WALTON`.
    perimeter_over_area : array_like, default 0.4
        P/A [m-1]; 0.4 is a 10 m x 10 m surface.

    Returns
    -------
    h_conv : ndarray [W m-2 K-1]

    References
    ----------
    .. [1] Walton, G.N. (1983). NBSIR 83-2655, National Bureau of Standards.
    .. [2] Sparrow, E.M., Ramsey, J.W., Mass, E.A. (1979). Effect of finite
       width on heat transfer and fluid flow about an inclined rectangular
       plate. Journal of Heat Transfer 101, 199-204. doi:10.1115/1.3450946
    """
    if roughness not in ROUGHNESS_WALTON:
        raise ConfigurationError(
            f"surface roughness {roughness!r} is not one of {sorted(ROUGHNESS_WALTON)}"
        )
    v = _wind(wind_speed)
    pa = np.asarray(perimeter_over_area, dtype=float)
    if np.any(~np.isfinite(pa) | (pa <= 0.0)):
        raise ConfigurationError(f"perimeter_over_area {pa.tolist()} m-1 must be finite and > 0")
    w_f = np.where(np.asarray(windward, dtype=bool), 1.0, 0.5)
    h_f = 2.537 * w_f * ROUGHNESS_WALTON[roughness] * np.sqrt(pa * v)
    return h_natural_walton(surface_tilt, temp_difference) + h_f


#: Name -> correlation function.
CONVECTION_MODELS: dict[str, Callable[..., Array]] = {
    "iso6946": h_conv_iso6946,
    "iso6946_conventional": h_conv_iso6946_conventional,
    "yazdanian_klems": h_conv_yazdanian_klems,
    "walton": h_conv_walton,
}


def get_convection_coefficient(
    wind_speed: ArrayLike,
    *,
    model: str = "iso6946",
    wind_direction: ArrayLike | None = None,
    surface_tilt: ArrayLike | None = None,
    surface_azimuth: ArrayLike | None = None,
    temp_difference: ArrayLike | None = None,
    roughness: str = "medium_rough",
    perimeter_over_area: ArrayLike = 0.4,
) -> Array:
    """Exterior convective coefficient by the named model.

    Parameters
    ----------
    wind_speed : array_like
        Local wind speed [m s-1] (see :func:`local_wind_speed`).
    model : str, default "iso6946"
        A key of :data:`CONVECTION_MODELS`.
    wind_direction : array_like, optional
        Direction the wind blows from [°]; needed by the direction-aware models.
    surface_tilt, surface_azimuth : array_like, optional
        Surface orientation [°] (pvlib convention); needed by the
        direction-aware models.
    temp_difference : array_like, optional
        Estimate of T_s - T_a [K] for the natural-convection part; None uses
        :data:`DEFAULT_TEMP_DIFFERENCE` (see each model).
    roughness : str, default "medium_rough"
        Walton roughness class (:data:`ROUGHNESS_WALTON`).
    perimeter_over_area : array_like, default 0.4
        Walton's P/A [m-1].

    Returns
    -------
    h_conv : ndarray [W m-2 K-1], broadcast over all inputs.

    Raises
    ------
    ConfigurationError
        For an unknown model or roughness name, a missing orientation or wind
        direction, or a negative wind speed.
    """
    if not isinstance(model, str) or model not in CONVECTION_MODELS:
        raise ConfigurationError(
            f"convection model {model!r} is not one of {sorted(CONVECTION_MODELS)}"
        )
    if roughness not in ROUGHNESS_WALTON:
        raise ConfigurationError(
            f"surface roughness {roughness!r} is not one of {sorted(ROUGHNESS_WALTON)}"
        )
    shapes = [np.shape(a) for a in (wind_speed, wind_direction, surface_tilt, surface_azimuth,
                                     temp_difference) if a is not None]
    shape = np.broadcast_shapes(*shapes)
    if model in ("iso6946", "iso6946_conventional"):
        return np.broadcast_to(CONVECTION_MODELS[model](wind_speed), shape).copy()
    missing = [n for n, a in (("wind_direction", wind_direction), ("surface_tilt", surface_tilt),
                              ("surface_azimuth", surface_azimuth)) if a is None]
    if missing:
        raise ConfigurationError(
            f"convection model {model!r} needs {', '.join(missing)} "
            "(it tells windward from leeward)"
        )
    windward = is_windward(wind_direction, surface_azimuth, surface_tilt)
    if model == "yazdanian_klems":
        out = h_conv_yazdanian_klems(wind_speed, windward, temp_difference)
    else:
        out = h_conv_walton(wind_speed, windward, surface_tilt, temp_difference,
                            roughness=roughness, perimeter_over_area=perimeter_over_area)
    return np.broadcast_to(out, shape).copy()


def local_wind_speed(
    wind_speed: ArrayLike,
    *,
    terrain: str = "open",
    height: ArrayLike = 10.0,
    station_height: float = 10.0,
    station_terrain: str = "open",
) -> Array:
    r"""Local wind at a height above a terrain from the station's 10 m wind.

    ASHRAE power law:

    .. math::

        V_H = V_{met}\left(\frac{\delta_{met}}{H_{met}}\right)^{a_{met}}
              \left(\frac{H}{\delta}\right)^{a}

    with (a, δ) from :data:`TERRAIN_ASHRAE` (city 0.33/460 m, suburban
    0.22/370 m, open 0.14/270 m, flat 0.10/210 m) and the station in open
    terrain at 10 m. The defaults (open terrain, 10 m) give a factor of exactly
    1; ``terrain="station"`` returns the station value unchanged at any height.

    Parameters
    ----------
    wind_speed : array_like
        Station wind speed [m s-1].
    terrain : str, default "open"
        "station" or a key of :data:`TERRAIN_ASHRAE`.
    height : array_like, default 10
        Height of the surface (e.g. its centre) H [m], > 0.
    station_height : float, default 10
        Anemometer height [m].
    station_terrain : str, default "open"
        Terrain around the station.

    Returns
    -------
    wind_speed : ndarray [m s-1]

    References
    ----------
    .. [1] ASHRAE (2017). Handbook - Fundamentals, ch. 24 "Airflow around
       buildings", Eq. 4 and Table 1 [from memory].
    """
    v = _wind(wind_speed)
    allowed = ["station", *sorted(TERRAIN_ASHRAE)]
    for label, name in (("terrain", terrain), ("station terrain", station_terrain)):
        if name not in allowed:
            raise ConfigurationError(f"{label} {name!r} is not one of {allowed}")
    if terrain == "station":
        return v.copy()
    h = np.asarray(height, dtype=float)
    if np.any(~np.isfinite(h) | (h <= 0.0)) or not station_height > 0.0:
        raise ConfigurationError(f"height {h.tolist()} m must be finite and > 0")
    a_met, d_met = TERRAIN_ASHRAE["open" if station_terrain == "station" else station_terrain]
    a, d = TERRAIN_ASHRAE[terrain]
    return v * (d_met / station_height) ** a_met * (h / d) ** a
