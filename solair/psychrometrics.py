"""Psychrometrics of moist air: saturation vapour pressure, dew point and relative humidity.

Vectorised numpy functions after ASHRAE Handbook—Fundamentals (2017), chapter 1,
equations 5 and 6 (Hyland and Wexler 1983). Saturation is taken over ice at and
below the triple point of water (0.01 °C) and over liquid water above it, as
ASHRAE's reference implementation psychrolib does. All temperatures are in °C at
the interface and evaluated in K inside the formulas; pressures are in Pa.

References
----------
.. [1] ASHRAE (2017). *ASHRAE Handbook—Fundamentals*, chapter 1 "Psychrometrics",
   equations 5, 6, 36 and Table 3.
.. [2] Hyland, R. W. and Wexler, A. (1983). "Formulations for the thermodynamic
   properties of the saturated phases of H2O from 173.15 K to 473.15 K".
   *ASHRAE Transactions* 89(2A), 500–519.
.. [3] Meyer, D. and Thevenard, D. (2019). "PsychroLib: a library of
   psychrometric functions to calculate thermodynamic properties of air".
   *Journal of Open Source Software* 4(33), 1137. doi:10.21105/joss.01137
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = [
    "TRIPLE_POINT_WATER",
    "saturation_vapor_pressure",
    "saturation_vapor_pressure_water",
    "saturation_vapor_pressure_ice",
    "vapor_pressure",
    "dew_point",
    "relative_humidity",
    "PHASES",
]

#: triple point of water [°C]; ice below or at it, liquid water above
TRIPLE_POINT_WATER = 0.01
_K = 273.15
#: validity range of the Hyland–Wexler fits [°C] (173.15 K to 473.15 K)
T_MIN, T_MAX = -100.0, 200.0

# ASHRAE HoF 2017 ch. 1 eq. (5), over ice, -100 to 0 °C
_C1, _C2, _C3, _C4, _C5, _C6, _C7 = (-5.6745359e03, 6.3925247e00, -9.6778430e-03,
                                     6.2215701e-07, 2.0747825e-09, -9.4840240e-13,
                                     4.1635019e00)
# ASHRAE HoF 2017 ch. 1 eq. (6), over liquid water, 0 to 200 °C
_C8, _C9, _C10, _C11, _C12, _C13 = (-5.8002206e03, 1.3914993e00, -4.8640239e-02,
                                    4.1764768e-05, -1.4452093e-08, 6.5459673e00)


def _ln_pws_ice(t_k):
    return (_C1 / t_k + _C2 + _C3 * t_k + _C4 * t_k**2 + _C5 * t_k**3 + _C6 * t_k**4
            + _C7 * np.log(t_k))


def _ln_pws_water(t_k):
    return _C8 / t_k + _C9 + _C10 * t_k + _C11 * t_k**2 + _C12 * t_k**3 + _C13 * np.log(t_k)


def _dln_pws_ice(t_k):
    return (-_C1 / t_k**2 + _C3 + 2 * _C4 * t_k + 3 * _C5 * t_k**2 + 4 * _C6 * t_k**3
            + _C7 / t_k)


def _dln_pws_water(t_k):
    return -_C8 / t_k**2 + _C10 + 2 * _C11 * t_k + 3 * _C12 * t_k**2 + _C13 / t_k


def saturation_vapor_pressure_water(temp: ArrayLike) -> np.ndarray:
    r"""Saturation vapour pressure over liquid water [Pa].

    .. math:: \ln p_{ws} = C_8/T + C_9 + C_{10} T + C_{11} T^2 + C_{12} T^3 + C_{13} \ln T

    Parameters
    ----------
    temp : array_like
        Temperature [°C]; the fit holds from 0 to 200 °C (and is used down to the
        supercooled range by callers who ask for water explicitly).

    Returns
    -------
    numpy.ndarray
        Saturation vapour pressure [Pa].

    References
    ----------
    ASHRAE Handbook—Fundamentals (2017), ch. 1, eq. (6); Hyland & Wexler (1983).
    """
    return np.exp(_ln_pws_water(np.asarray(temp, dtype=float) + _K))


def saturation_vapor_pressure_ice(temp: ArrayLike) -> np.ndarray:
    r"""Saturation vapour pressure over ice [Pa].

    .. math:: \ln p_{ws} = C_1/T + C_2 + C_3 T + C_4 T^2 + C_5 T^3 + C_6 T^4 + C_7 \ln T

    Parameters
    ----------
    temp : array_like
        Temperature [°C], from -100 to 0 °C.

    Returns
    -------
    numpy.ndarray
        Saturation vapour pressure [Pa].

    References
    ----------
    ASHRAE Handbook—Fundamentals (2017), ch. 1, eq. (5); Hyland & Wexler (1983).
    """
    return np.exp(_ln_pws_ice(np.asarray(temp, dtype=float) + _K))


def _ln_pws(temp_k):
    return np.where(temp_k <= TRIPLE_POINT_WATER + _K, _ln_pws_ice(temp_k), _ln_pws_water(temp_k))


def saturation_vapor_pressure(temp: ArrayLike) -> np.ndarray:
    """Saturation vapour pressure [Pa]: over ice at or below 0.01 °C, over water above.

    Parameters
    ----------
    temp : array_like
        Temperature [°C], -100 to 200 °C (Hyland & Wexler's range).

    Returns
    -------
    numpy.ndarray
        Saturation vapour pressure [Pa], same shape as ``temp``.

    References
    ----------
    ASHRAE Handbook—Fundamentals (2017), ch. 1, eqs. (5)-(6); Hyland & Wexler (1983).
    """
    return np.exp(_ln_pws(np.asarray(temp, dtype=float) + _K))


def vapor_pressure(temp_dew: ArrayLike) -> np.ndarray:
    """Partial pressure of water vapour [Pa] from the dew (or frost) point [°C].

    By definition of the dew point, p_w = p_ws(t_d) (ASHRAE HoF 2017 ch. 1, eq. 36
    with the saturation pressure of eqs. 5-6).
    """
    return saturation_vapor_pressure(temp_dew)


#: saturation phases: "auto" = ice at or below 0.01 °C, water above (ASHRAE, psychrolib);
#: "water" = liquid water at every temperature (the WMO convention for meteorological RH
#: and dew point, used when weather fields are derived)
PHASES = frozenset({"auto", "water"})


def _ln_pws_phase(temp_k, phase: str):
    if phase not in PHASES:
        from solair.errors import ConfigurationError

        raise ConfigurationError(f"phase {phase!r} is not one of {sorted(PHASES)}")
    return _ln_pws(temp_k) if phase == "auto" else _ln_pws_water(temp_k)


def relative_humidity(temp_air: ArrayLike, temp_dew: ArrayLike, *,
                      phase: str = "auto") -> np.ndarray:
    """Relative humidity [%] from air temperature and dew point [°C].

    RH = 100 · p_ws(t_d) / p_ws(t) (ASHRAE HoF 2017 ch. 1, eq. 24 with eqs. 5-6).
    ``phase="water"`` takes saturation over liquid water at all temperatures.
    """
    t = np.asarray(temp_air, dtype=float)
    td = np.asarray(temp_dew, dtype=float)
    return 100.0 * np.exp(_ln_pws_phase(td + _K, phase) - _ln_pws_phase(t + _K, phase))


def _dew_point_from_vapor_pressure(p_w: np.ndarray, phase: str = "auto") -> np.ndarray:
    """Invert p_ws(t_d) = p_w by Newton's method on ln p_ws [°C]."""
    ln_p = np.log(np.clip(p_w, saturation_vapor_pressure(T_MIN), None))
    # start: Magnus-type inversion over water, 6.112 hPa at 0 °C (common practice)
    g = ln_p - np.log(611.2)
    t_k = 243.12 * g / (17.62 - g) + _K
    t_k = np.clip(t_k, T_MIN + _K, T_MAX + _K)
    for _ in range(50):
        ice = (t_k <= TRIPLE_POINT_WATER + _K) & (phase == "auto")
        f = np.where(ice, _ln_pws_ice(t_k), _ln_pws_water(t_k)) - ln_p
        df = np.where(ice, _dln_pws_ice(t_k), _dln_pws_water(t_k))
        step = f / df
        t_k = np.clip(t_k - step, T_MIN + _K, T_MAX + _K)
        if np.all(np.abs(step[np.isfinite(step)]) < 1e-9):
            break
    return t_k - _K


def dew_point(temp_air: ArrayLike, relative_humidity: ArrayLike, *,
              phase: str = "auto") -> np.ndarray:
    """Dew point [°C] (frost point below 0.01 °C) from air temperature and RH.

    Solves p_ws(t_d) = RH/100 · p_ws(t) for t_d by Newton iteration on
    ln p_ws (Hyland & Wexler 1983; ASHRAE HoF 2017 ch. 1), converged to 1e-9 K.
    RH above 100 % gives a dew point above the air temperature (supersaturation as
    stored in the file); RH of 0 is held at the bottom of the validity range,
    -100 °C.

    Parameters
    ----------
    temp_air : array_like
        Dry-bulb temperature [°C].
    relative_humidity : array_like
        Relative humidity [%].
    phase : {"auto", "water"}
        "auto": saturation over ice at or below 0.01 °C (a frost point), as ASHRAE
        and psychrolib; "water": over liquid water throughout (WMO convention for
        meteorological humidity).

    Returns
    -------
    numpy.ndarray
        Dew point [°C], broadcast shape of the inputs.

    References
    ----------
    ASHRAE Handbook—Fundamentals (2017), ch. 1, eqs. (5), (6), (24).
    """
    t = np.asarray(temp_air, dtype=float)
    rh = np.asarray(relative_humidity, dtype=float)
    p_w = rh / 100.0 * np.exp(_ln_pws_phase(t + _K, phase))
    return _dew_point_from_vapor_pressure(np.asarray(p_w, dtype=float), phase)
