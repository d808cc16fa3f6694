"""Sky emissivity, cloud corrections and the effective sky temperature.

One function per published clear-sky correlation, the cloud corrections, the
sky temperature from a weather file's horizontal infrared, a daytime cloud
fraction from the measured irradiance, and the ``auto`` selection that picks the
best available source hour by hour.

The effective sky temperature follows from the sky emissivity as
:math:`T_{sky} = \\varepsilon_{sky}^{1/4}\\,T_a` (K), i.e. the horizontal
downwelling long-wave irradiance is :math:`L\\downarrow = \\varepsilon_{sky}\\sigma T_a^4`.

Every correlation ``emissivity_*(temp_air, temp_dew, pressure=101325.0, *,
solar_hour=None)`` takes ``temp_air`` and ``temp_dew`` [°C],
``pressure`` [Pa] (station) and ``solar_hour`` [h, solar time, 0-24], uses only
those it needs, broadcasts, and returns the clear-sky emissivity [-]. Each
converts to its own units (vapour pressure in hPa, dew point in °C or K, see
its docstring); the vapour pressure is the saturation pressure at the dew
point, :func:`solair.psychrometrics.vapor_pressure`.

References
----------
.. [1] Flerchinger, G.N., Xaio, W., Marks, D., Sauer, T.J., Yu, Q. (2009).
   Comparison of algorithms for incoming atmospheric long-wave radiation.
   Water Resources Research 45, W03423. doi:10.1029/2008WR007394
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from numpy.typing import ArrayLike, NDArray

from solair.errors import ConfigurationError
from solair.longwave import KELVIN, SIGMA
from solair.psychrometrics import vapor_pressure

__all__ = [
    "CLEAR_SKY_MODELS", "SKY_MODELS", "SKY_SOURCES", "emissivity_swinbank", "emissivity_brunt",
    "emissivity_brutsaert", "emissivity_idso_jackson", "emissivity_idso",
    "emissivity_berdahl_fromberg", "emissivity_berdahl_martin", "emissivity_clark_allen",
    "emissivity_prata", "emissivity_dilley_obrien", "emissivity_li_jiang_coimbra",
    "clear_sky_emissivity", "cloud_factor_clark_allen", "cloud_emissivity_martin_berdahl",
    "cloud_emissivity_crawford_duchon", "temp_sky_from_emissivity", "temp_sky_from_infrared",
    "infrared_is_valid", "cloud_fraction_from_irradiance", "cloud_fraction_needed",
    "get_sky_temperature", "sky_temperature_all_models",
]

Array = NDArray[np.float64]

#: Code -> name of the source of the sky temperature in each hour.
SKY_SOURCES = {0: "file_infrared", 1: "sky_cover_clark_allen", 2: "irradiance_cloud_estimate",
               3: "clear_sky_only"}

#: Valid band of the file's horizontal infrared, as a fraction of σT_a⁴.
INFRARED_VALID_RANGE = (0.5, 1.1)


def _vapor_pressure_hpa(temp_dew: ArrayLike) -> Array:
    """Vapour pressure [hPa] from the dew point [°C] (saturation pressure at T_dp)."""
    return np.asarray(vapor_pressure(np.asarray(temp_dew, dtype=float)), dtype=float) / 100.0


def _kelvin(temp: ArrayLike) -> Array:
    return np.asarray(temp, dtype=float) + KELVIN


def _zeros(temp: ArrayLike) -> Array:
    """Zeros shaped like ``temp`` (so a one-input correlation broadcasts over both)."""
    return np.zeros(np.shape(temp))


def emissivity_swinbank(temp_air, temp_dew=None, pressure=101325.0, *, solar_hour=None) -> Array:
    r"""Swinbank (1963), air temperature only.

    .. math:: L\downarrow = 5.31\times10^{-13}\,T_a^6 \ \Rightarrow\
              \varepsilon = 5.31\times10^{-13}\,T_a^2/\sigma \qquad (T_a\ \mathrm{[K]})

    References
    ----------
    .. [1] Swinbank, W.C. (1963). Long-wave radiation from clear skies. Q. J. R.
       Meteorol. Soc. 89, 339-348. doi:10.1002/qj.49708938105
    """
    return 5.31e-13 * _kelvin(temp_air) ** 2 / SIGMA


def emissivity_brunt(temp_air, temp_dew, pressure=101325.0, *, solar_hour=None) -> Array:
    r"""Brunt (1932).

    .. math:: \varepsilon = 0.52 + 0.065\sqrt{e} \qquad (e\ \mathrm{[hPa]})

    (= 0.52 + 0.205√e with e in kPa, the form of Flerchinger et al. 2009).

    References
    ----------
    .. [1] Brunt, D. (1932). Notes on radiation in the atmosphere. Q. J. R.
       Meteorol. Soc. 58, 389-420. doi:10.1002/qj.49705824704
    """
    return 0.52 + 0.065 * np.sqrt(_vapor_pressure_hpa(temp_dew)) + _zeros(temp_air)


def emissivity_brutsaert(temp_air, temp_dew, pressure=101325.0, *, solar_hour=None) -> Array:
    r"""Brutsaert (1975).

    .. math:: \varepsilon = 1.24\,(e/T_a)^{1/7} \qquad (e\ \mathrm{[hPa]},\ T_a\ \mathrm{[K]})

    References
    ----------
    .. [1] Brutsaert, W. (1975). On a derivable formula for long-wave radiation
       from clear skies. Water Resour. Res. 11(5), 742-744. doi:10.1029/WR011i005p00742
    """
    return 1.24 * (_vapor_pressure_hpa(temp_dew) / _kelvin(temp_air)) ** (1.0 / 7.0)


def emissivity_idso_jackson(temp_air, temp_dew=None, pressure=101325.0, *,
                            solar_hour=None) -> Array:
    r"""Idso & Jackson (1969), air temperature only.

    .. math:: \varepsilon = 1 - 0.261\exp\left[-7.77\times10^{-4}(273 - T_a)^2\right]
              \qquad (T_a\ \mathrm{[K]};\ \text{the paper's 273, not 273.15})

    References
    ----------
    .. [1] Idso, S.B., Jackson, R.D. (1969). Thermal radiation from the
       atmosphere. J. Geophys. Res. 74(23), 5397-5403. doi:10.1029/JC074i023p05397
    """
    return 1.0 - 0.261 * np.exp(-7.77e-4 * (273.0 - _kelvin(temp_air)) ** 2)


def emissivity_idso(temp_air, temp_dew, pressure=101325.0, *, solar_hour=None) -> Array:
    r"""Idso (1981).

    .. math:: \varepsilon = 0.70 + 5.95\times10^{-5}\,e\,\exp(1500/T_a)
              \qquad (e\ \mathrm{[hPa]},\ T_a\ \mathrm{[K]})

    References
    ----------
    .. [1] Idso, S.B. (1981). A set of equations for full spectrum and 8- to
       14-µm and 10.5- to 12.5-µm thermal radiation from cloudless skies. Water
       Resour. Res. 17(2), 295-304. doi:10.1029/WR017i002p00295
    """
    return 0.70 + 5.95e-5 * _vapor_pressure_hpa(temp_dew) * np.exp(1500.0 / _kelvin(temp_air))


def emissivity_berdahl_fromberg(temp_air, temp_dew, pressure=101325.0, *, solar_hour=None,
                                daytime=None) -> Array:
    r"""Berdahl & Fromberg (1982).

    .. math:: \varepsilon = 0.741 + 0.0062\,T_{dp}\ \text{(night)}, \quad
              0.727 + 0.0060\,T_{dp}\ \text{(day)} \qquad (T_{dp}\ \mathrm{[°C]})

    The night fit is used unless ``daytime`` (array of bool) marks day hours.

    References
    ----------
    .. [1] Berdahl, P., Fromberg, R. (1982). The thermal radiance of clear
       skies. Solar Energy 29(4), 299-314. doi:10.1016/0038-092X(82)90245-6
    """
    tdp = np.asarray(temp_dew, dtype=float) + _zeros(temp_air)
    night = 0.741 + 0.0062 * tdp
    if daytime is None:
        return night
    return np.where(np.asarray(daytime, dtype=bool), 0.727 + 0.0060 * tdp, night)


def emissivity_berdahl_martin(temp_air, temp_dew, pressure=101325.0, *, solar_hour=None) -> Array:
    r"""Berdahl & Martin (1984), with its diurnal and pressure terms.

    .. math::

        \varepsilon = 0.711 + 0.56\,(T_{dp}/100) + 0.73\,(T_{dp}/100)^2
        + 0.013\cos(2\pi t/24) + 0.00012\,(P - 1000)

    T_dp in °C, t the hour from (solar) midnight, P the station pressure in
    hPa. The diurnal term is left out when ``solar_hour`` is None. (The set
    0.758/0.521/0.625 is Li, Jiang & Coimbra 2017, not this model.)

    References
    ----------
    .. [1] Berdahl, P., Martin, M. (1984). Emissivity of clear skies. Solar
       Energy 32(5), 663-664. doi:10.1016/0038-092X(84)90144-0
    """
    x = np.asarray(temp_dew, dtype=float) / 100.0 + _zeros(temp_air)
    eps = 0.711 + 0.56 * x + 0.73 * x * x
    eps = eps + 0.00012 * (np.asarray(pressure, dtype=float) / 100.0 - 1000.0)
    if solar_hour is not None:
        eps = eps + 0.013 * np.cos(2.0 * np.pi * np.asarray(solar_hour, dtype=float) / 24.0)
    return eps


def emissivity_clark_allen(temp_air, temp_dew, pressure=101325.0, *, solar_hour=None) -> Array:
    r"""Clark & Allen (1978).

    .. math:: \varepsilon = 0.787 + 0.764\ln(T_{dp}/273) \qquad (T_{dp}\ \mathrm{[K]})

    References
    ----------
    .. [1] Clark, G., Allen, C. (1978). The estimation of atmospheric radiation
       for clear and cloudy skies. Proc. 2nd National Passive Solar Conference,
       Philadelphia, pp. 675-678.
    .. [2] Walton, G.N. (1983). Thermal Analysis Research Program reference
       manual. NBSIR 83-2655, National Bureau of Standards.
    """
    return 0.787 + 0.764 * np.log((_kelvin(temp_dew) + _zeros(temp_air)) / 273.0)


def _precipitable_water_prata_cm(temp_air, temp_dew) -> Array:
    """Precipitable water w [cm] = 46.5 e[hPa] / T_a[K] (Prata 1996)."""
    return 46.5 * _vapor_pressure_hpa(temp_dew) / _kelvin(temp_air)


def emissivity_prata(temp_air, temp_dew, pressure=101325.0, *, solar_hour=None) -> Array:
    r"""Prata (1996).

    .. math:: w = 46.5\,e/T_a\ \mathrm{[cm]}, \qquad
              \varepsilon = 1 - (1 + w)\exp\left[-(1.2 + 3w)^{1/2}\right]

    with e in hPa and T_a in K.

    References
    ----------
    .. [1] Prata, A.J. (1996). A new long-wave formula for estimating downward
       clear-sky radiation at the surface. Q. J. R. Meteorol. Soc. 122,
       1127-1151. doi:10.1002/qj.49712253306
    """
    w = _precipitable_water_prata_cm(temp_air, temp_dew)
    return 1.0 - (1.0 + w) * np.exp(-np.sqrt(1.2 + 3.0 * w))


def emissivity_dilley_obrien(temp_air, temp_dew, pressure=101325.0, *, solar_hour=None) -> Array:
    r"""Dilley & O'Brien (1998), irradiance form.

    .. math:: L\downarrow = 59.38 + 113.7\,(T_a/273.16)^6 + 96.96\sqrt{w/2.5}, \qquad
              \varepsilon = L\downarrow/(\sigma T_a^4)

    T_a in K, w the precipitable water in cm from Prata's relation.

    References
    ----------
    .. [1] Dilley, A.C., O'Brien, D.M. (1998). Estimating downward clear sky
       long-wave irradiance at the surface from screen temperature and
       precipitable water. Q. J. R. Meteorol. Soc. 124, 1391-1401.
       doi:10.1002/qj.49712454903
    """
    ta = _kelvin(temp_air)
    w = _precipitable_water_prata_cm(temp_air, temp_dew)
    return (59.38 + 113.7 * (ta / 273.16) ** 6 + 96.96 * np.sqrt(w / 2.5)) / (SIGMA * ta**4)


def emissivity_li_jiang_coimbra(temp_air, temp_dew, pressure=101325.0, *,
                                solar_hour=None) -> Array:
    r"""Li, Jiang & Coimbra (2017) recalibrated dew-point form (labelled extra).

    .. math:: \varepsilon = 0.758 + 0.521\,(T_{dp}/100) + 0.625\,(T_{dp}/100)^2
              \qquad (T_{dp}\ \mathrm{[°C]})

    Often mis-attributed to Berdahl & Martin (1984).

    References
    ----------
    .. [1] Li, M., Jiang, Y., Coimbra, C.F.M. (2017). On the determination of
       atmospheric longwave irradiance under all-sky conditions. Solar Energy
       144, 40-48. doi:10.1016/j.solener.2017.01.006
    """
    x = np.asarray(temp_dew, dtype=float) / 100.0 + _zeros(temp_air)
    return 0.758 + 0.521 * x + 0.625 * x * x

#: Name -> clear-sky emissivity correlation, all ``f(temp_air, temp_dew, pressure, *, solar_hour)``.
CLEAR_SKY_MODELS: dict[str, Callable[..., Array]] = {
    "swinbank": emissivity_swinbank,
    "brunt": emissivity_brunt,
    "brutsaert": emissivity_brutsaert,
    "idso_jackson": emissivity_idso_jackson,
    "idso": emissivity_idso,
    "berdahl_fromberg": emissivity_berdahl_fromberg,
    "berdahl_martin": emissivity_berdahl_martin,
    "clark_allen": emissivity_clark_allen,
    "prata": emissivity_prata,
    "dilley_obrien": emissivity_dilley_obrien,
    "li_jiang_coimbra": emissivity_li_jiang_coimbra,
}

#: Every name :func:`get_sky_temperature` accepts.
SKY_MODELS = frozenset({"auto", "infrared", *CLEAR_SKY_MODELS})


def clear_sky_emissivity(
    temp_air: ArrayLike,
    temp_dew: ArrayLike,
    pressure: ArrayLike = 101325.0,
    *,
    model: str = "clark_allen",
    solar_hour: ArrayLike | None = None,
) -> Array:
    """Clear-sky emissivity [-] by the named correlation (a key of :data:`CLEAR_SKY_MODELS`).

    Inputs as in the module docstring; the result broadcasts over them.
    Raises :class:`ConfigurationError` for an unknown name.
    """
    if not isinstance(model, str) or model not in CLEAR_SKY_MODELS:
        raise ConfigurationError(
            f"clear-sky model {model!r} is not one of {sorted(CLEAR_SKY_MODELS)}")
    eps = CLEAR_SKY_MODELS[model](temp_air, temp_dew, pressure, solar_hour=solar_hour)
    shape = np.broadcast_shapes(np.shape(temp_air), np.shape(temp_dew), np.shape(pressure),
                                np.shape(eps))
    return np.broadcast_to(np.asarray(eps, dtype=float), shape).copy()


def _check_range(values: Array, low: float, high: float, name: str, unit: str) -> None:
    bad = np.isfinite(values) & ((values < low) | (values > high))
    if np.any(bad):
        raise ConfigurationError(
            f"{name} {values[bad].ravel()[:3].tolist()} {unit} is outside the allowed range "
            f"[{low:g}, {high:g}] {unit}")


def cloud_factor_clark_allen(opaque_sky_cover: ArrayLike) -> Array:
    r"""Cloud factor of Clark & Allen (1978) as given by Walton (1983) [-].

    .. math:: C(N) = 1 + 0.0224\,N - 0.0035\,N^2 + 0.00028\,N^3, \qquad
              \varepsilon_{sky} = C(N)\,\varepsilon_{clear}

    N is the opaque sky cover in **tenths** (0-10); C(10) = 1.154. NaN passes
    through; a finite value outside [0, 10] raises :class:`ConfigurationError`.

    References
    ----------
    .. [1] Clark, G., Allen, C. (1978). Proc. 2nd National Passive Solar
       Conference, Philadelphia, pp. 675-678.
    .. [2] Walton, G.N. (1983). NBSIR 83-2655, National Bureau of Standards, p. 21.
    """
    n = np.asarray(opaque_sky_cover, dtype=float)
    _check_range(n, 0.0, 10.0, "opaque_sky_cover", "tenths")
    return 1.0 + 0.0224 * n - 0.0035 * n**2 + 0.00028 * n**3


def cloud_emissivity_martin_berdahl(
    emissivity_clear: ArrayLike,
    cloud_fraction: ArrayLike,
    cloud_base_height: ArrayLike | None = None,
    *,
    cloud_emissivity: ArrayLike = 1.0,
    scale_height: float = 8200.0,
) -> Array:
    r"""All-sky emissivity after Martin & Berdahl (1984), one cloud layer [-].

    .. math:: \varepsilon = \varepsilon_0 + (1 - \varepsilon_0)\,n\,\varepsilon_c\,\Gamma,
              \qquad \Gamma = \exp(-z/8200\ \mathrm{m})

    n is the cloud cover as a **fraction** (0-1), z the cloud-base height [m]
    (None: Γ = 1, cloud at the ground, the upper bound; z ≥ 77777, the files'
    codes for "unlimited"/"missing", gives Γ = 0), ε_c the cloud emissivity
    (≈ 1 for low or thick cloud, ≈ 0.4 for thin cirrus).

    References
    ----------
    .. [1] Martin, M., Berdahl, P. (1984). Characteristics of infrared sky
       radiation in the United States. Solar Energy 33(3/4), 321-336.
       doi:10.1016/0038-092X(84)90162-2
    """
    eps0 = np.asarray(emissivity_clear, dtype=float)
    n = np.asarray(cloud_fraction, dtype=float)
    _check_range(n, 0.0, 1.0, "cloud_fraction", "(fraction)")
    if cloud_base_height is None:
        gamma = 1.0
    else:
        z = np.asarray(cloud_base_height, dtype=float)
        gamma = np.where(z >= 77777.0, 0.0, np.exp(-np.clip(z, 0.0, None) / scale_height))
    return eps0 + (1.0 - eps0) * n * np.asarray(cloud_emissivity, dtype=float) * gamma


def cloud_emissivity_crawford_duchon(emissivity_clear: ArrayLike,
                                     cloud_fraction: ArrayLike) -> Array:
    r"""All-sky emissivity of Crawford & Duchon (1999) [-].

    .. math:: \varepsilon = c + (1 - c)\,\varepsilon_{clear}

    c is the cloud fraction (0-1), estimated from the daytime ratio of measured
    to clear-sky solar irradiance (:func:`cloud_fraction_from_irradiance`). It
    is the Martin-Berdahl form with black clouds at the ground.

    References
    ----------
    .. [1] Crawford, T.M., Duchon, C.E. (1999). An improved parameterization
       for estimating effective atmospheric emissivity for use in calculating
       daytime downwelling longwave radiation. J. Appl. Meteorol. 38, 474-480.
       doi:10.1175/1520-0450(1999)038<0474:AIPFEE>2.0.CO;2
    """
    c = np.asarray(cloud_fraction, dtype=float)
    _check_range(c, 0.0, 1.0, "cloud_fraction", "(fraction)")
    return c + (1.0 - c) * np.asarray(emissivity_clear, dtype=float)


def temp_sky_from_emissivity(temp_air: ArrayLike, emissivity: ArrayLike) -> Array:
    r"""Effective sky temperature :math:`T_{sky} = \varepsilon^{1/4} T_a` [°C] (K inside)."""
    return np.asarray(emissivity, dtype=float) ** 0.25 * _kelvin(temp_air) - KELVIN


def temp_sky_from_infrared(ghi_infrared: ArrayLike, *, sigma: float = SIGMA) -> Array:
    r"""Sky temperature [°C] from the horizontal infrared L↓ [W m-2].

    :math:`T_{sky} = (L\downarrow/\sigma)^{1/4}`.

    NaN where the irradiance is not finite or not positive (the EPW field
    "horizontal infrared radiation intensity", pvlib column ``ghi_infrared``).
    """
    ir = np.asarray(ghi_infrared, dtype=float)
    with np.errstate(invalid="ignore"):
        k = np.where(np.isfinite(ir) & (ir > 0.0), np.abs(ir) / sigma, np.nan) ** 0.25
    return k - KELVIN


def infrared_is_valid(
    ghi_infrared: ArrayLike,
    temp_air: ArrayLike,
    *,
    valid_range: tuple[float, float] = INFRARED_VALID_RANGE,
    sigma: float = SIGMA,
) -> NDArray[np.bool_]:
    """Hours where the file's horizontal infrared [W m-2] is usable (bool array).

    Valid means finite and within ``valid_range`` × σT_a⁴ (default 0.5-1.1,
    T_a from ``temp_air`` [°C]): effective sky emissivities below 0.5 do not
    occur even in cold, dry, clear skies, and values well above 1 are a
    missing-value code (EPW 9999) or a bad record; a night-time inversion can
    lift L↓ a few per cent above σT_a⁴, hence the 1.1 (our choice, common
    practice).
    """
    ir = np.asarray(ghi_infrared, dtype=float)
    black = sigma * _kelvin(temp_air) ** 4
    low, high = valid_range
    with np.errstate(invalid="ignore"):
        return np.isfinite(ir) & np.isfinite(black) & (ir >= low * black) & (ir <= high * black)


def cloud_fraction_from_irradiance(
    ghi: ArrayLike,
    ghi_clear: ArrayLike,
    *,
    min_clear: float = 50.0,
    solar_zenith: ArrayLike | None = None,
    max_zenith: float = 80.0,
    fill_value: float = 0.0,
) -> Array:
    r"""Cloud fraction [-] from the daytime clearness, carried across the night.

    By day, where the clear-sky GHI exceeds ``min_clear`` [W m-2] (and, if
    ``solar_zenith`` [°] is given, the zenith is below ``max_zenith``),
    Crawford & Duchon (1999):

    .. math:: c = 1 - s, \qquad s = \mathrm{GHI}/\mathrm{GHI}_{clear}, \qquad 0 \le c \le 1

    The other hours (night, low sun) are filled by linear interpolation in time
    between the last daytime value of the evening and the first of the next
    morning; before the first and after the last daytime value the nearest one
    is held; with no daytime value at all the result is ``fill_value``. No NaN.

    Parameters
    ----------
    ghi, ghi_clear : array_like, 1-D
        Measured and clear-sky (e.g. pvlib Ineichen) GHI [W m-2] of a contiguous
        hourly series.

    References
    ----------
    .. [1] Crawford, T.M., Duchon, C.E. (1999). J. Appl. Meteorol. 38, 474-480.
       doi:10.1175/1520-0450(1999)038<0474:AIPFEE>2.0.CO;2
    """
    g = np.asarray(ghi, dtype=float)
    gc = np.asarray(ghi_clear, dtype=float)
    if g.ndim != 1 or gc.shape != g.shape:
        raise ConfigurationError(
            f"ghi and ghi_clear must be 1-D series of the same length, got shapes "
            f"{g.shape} and {gc.shape}")
    day = np.isfinite(g) & np.isfinite(gc) & (gc > min_clear)
    if solar_zenith is not None:
        z = np.broadcast_to(np.asarray(solar_zenith, dtype=float), g.shape)
        day &= np.isfinite(z) & (z < max_zenith)
    if not np.any(day):
        return np.full(g.shape, float(fill_value))
    idx = np.arange(g.size)
    return np.interp(idx, idx[day], np.clip(1.0 - g[day] / gc[day], 0.0, 1.0))


def cloud_fraction_needed(model: str, temp_air: ArrayLike, *,
                          ghi_infrared: ArrayLike | None = None,
                          opaque_sky_cover: ArrayLike | None = None, spread: bool = False) -> bool:
    """Whether any hour's sky temperature would come from the irradiance cloud fraction.

    It is used only in hours with neither a finite sky cover nor (models "auto",
    "infrared") a valid file infrared; with ``spread`` (:func:`sky_temperature_all_models`)
    in hours without sky cover. If False, ``cloud_fraction=None`` gives the same result.
    """
    ta = np.asarray(temp_air, dtype=float)
    uncovered = np.ones(ta.shape, dtype=bool)
    if opaque_sky_cover is not None:
        uncovered = ~np.isfinite(np.asarray(opaque_sky_cover, dtype=float))
    if spread and uncovered.any():
        return True
    if model in ("auto", "infrared") and ghi_infrared is not None:
        uncovered = uncovered & ~infrared_is_valid(ghi_infrared, ta)
    return bool(uncovered.any())


def _sky_emissivity_corrected(eps_clear, opaque_sky_cover, cloud_fraction):
    """Cloud-correct a clear-sky emissivity; return it and the source code per element."""
    eps = eps_clear.copy()
    source = np.full(eps.shape, 3, dtype=np.int8)
    if cloud_fraction is not None:
        c = np.broadcast_to(np.asarray(cloud_fraction, dtype=float), eps.shape)
        m = np.isfinite(c)
        eps = np.where(m, cloud_emissivity_crawford_duchon(eps_clear, np.where(m, c, 0.0)), eps)
        source[m] = 2
    if opaque_sky_cover is not None:
        n = np.broadcast_to(np.asarray(opaque_sky_cover, dtype=float), eps.shape)
        m = np.isfinite(n)
        eps = np.where(m, eps_clear * cloud_factor_clark_allen(np.where(m, n, 0.0)), eps)
        source[m] = 1
    return np.minimum(eps, 1.0), source


def get_sky_temperature(
    temp_air: ArrayLike,
    temp_dew: ArrayLike,
    pressure: ArrayLike = 101325.0,
    *,
    model: str = "auto",
    ghi_infrared: ArrayLike | None = None,
    opaque_sky_cover: ArrayLike | None = None,
    cloud_fraction: ArrayLike | None = None,
    solar_hour: ArrayLike | None = None,
    clear_sky_model: str = "clark_allen",
) -> tuple[Array, NDArray[np.int8]]:
    r"""Effective sky temperature [°C] per hour and the source code it came from.

    ``model="auto"`` picks, hour by hour, the first available of
    (codes of :data:`SKY_SOURCES`):

    0. the file's horizontal infrared ``ghi_infrared`` [W m-2] where valid
       (:func:`infrared_is_valid`): :math:`T_{sky} = (L\downarrow/\sigma)^{1/4}`;
    1. the opaque sky cover ``opaque_sky_cover`` [tenths] where finite:
       Clark-Allen clear sky times the Clark-Allen/Walton cloud factor C(N);
    2. the irradiance cloud fraction ``cloud_fraction`` [-] where finite:
       Clark-Allen clear sky corrected after Crawford & Duchon (1999),
       :math:`\varepsilon = c + (1 - c)\varepsilon_{clear}`;
    3. the Clark-Allen clear sky alone.

    ``model="infrared"`` is the same but requires ``ghi_infrared``. A
    correlation name (a key of :data:`CLEAR_SKY_MODELS`) uses that correlation
    in steps 1-3, without the file infrared. ``clear_sky_model`` changes the
    correlation behind "auto"/"infrared". Modelled emissivities are capped at
    1 (T_sky ≤ T_a). NaN in the optional inputs means "missing in this hour".

    Returns
    -------
    temp_sky : ndarray [°C]
    sky_source : ndarray of int8

    Raises
    ------
    ConfigurationError
        For an unknown model name, "infrared" without infrared data, or
        non-finite temperatures.
    """
    if not isinstance(model, str) or model not in SKY_MODELS:
        raise ConfigurationError(f"sky model {model!r} is not one of {sorted(SKY_MODELS)}")
    use_ir = model in ("auto", "infrared")
    if model == "infrared" and (ghi_infrared is None or not np.any(np.isfinite(ghi_infrared))):
        raise ConfigurationError(
            "sky model 'infrared' needs the weather file's horizontal infrared (ghi_infrared), "
            "which is missing; use 'auto' or a clear-sky model")
    base = clear_sky_model if use_ir else model
    eps_clear = clear_sky_emissivity(temp_air, temp_dew, pressure, model=base,
                                     solar_hour=solar_hour)
    optional = (ghi_infrared, opaque_sky_cover, cloud_fraction)
    shape = np.broadcast_shapes(eps_clear.shape, *(np.shape(a) for a in optional if a is not None))
    eps_clear = np.broadcast_to(eps_clear, shape).copy()
    eps, source = _sky_emissivity_corrected(eps_clear, opaque_sky_cover, cloud_fraction)
    ta = np.broadcast_to(np.asarray(temp_air, dtype=float), shape)
    temp_sky = temp_sky_from_emissivity(ta, eps)
    if use_ir and ghi_infrared is not None:
        ir = np.broadcast_to(np.asarray(ghi_infrared, dtype=float), shape)
        valid = infrared_is_valid(ir, ta)
        temp_sky = np.where(valid, temp_sky_from_infrared(np.where(valid, ir, 1.0)), temp_sky)
        source[valid] = 0
    if not np.all(np.isfinite(temp_sky)):
        raise ConfigurationError(
            "sky temperature is not finite in some hours: temp_air, temp_dew and pressure "
            "must be finite")
    return temp_sky, source


def sky_temperature_all_models(
    temp_air: ArrayLike,
    temp_dew: ArrayLike,
    pressure: ArrayLike = 101325.0,
    *,
    opaque_sky_cover: ArrayLike | None = None,
    cloud_fraction: ArrayLike | None = None,
    solar_hour: ArrayLike | None = None,
) -> dict[str, Array]:
    """Sky temperature [°C] by every clear-sky correlation, with the same cloud correction.

    For the sky-model spread: model name -> temp_sky, each correlation of
    :data:`CLEAR_SKY_MODELS` cloud-corrected exactly as
    :func:`get_sky_temperature` does with that name.
    """
    return {
        name: get_sky_temperature(temp_air, temp_dew, pressure, model=name,
                                  opaque_sky_cover=opaque_sky_cover,
                                  cloud_fraction=cloud_fraction, solar_hour=solar_hour)[0]
        for name in CLEAR_SKY_MODELS
    }
