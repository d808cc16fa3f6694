"""Dew and frost on an exterior surface: mass transfer and latent heat.

When the surface is colder than the dew (or frost) point of the air, water
vapour condenses (or deposits as hoar frost) at the rate

    g = β_p (p_v − p_sat(T_s))            [kg m-2 s-1]

and releases the latent heat L g into the surface; a wet surface evaporates at
the same rate with the opposite sign as long as it holds water. The vapour
transfer coefficient follows from the convective coefficient by the Lewis
(Chilton–Colburn) analogy,

    β = h_c / (ρ c_p Le^(2/3))  [m s-1],   β_p = β / (R_v T)  [kg m-2 s-1 Pa-1].

References
----------
.. [1] Lewis W.K. (1922), The evaporation of a liquid into a gas, Trans. ASME
   44:325–340.
.. [2] Chilton T.H., Colburn A.P. (1934), Mass transfer (absorption)
   coefficients — prediction from data on heat transfer and fluid friction,
   Ind. Eng. Chem. 26(11):1183–1187, doi:10.1021/ie50299a012.
.. [3] ASHRAE Handbook — Fundamentals (2017), ch. 6 "Mass transfer" (analogy
   between convective heat and mass transfer) and ch. 1 "Psychrometrics",
   Table 3 (enthalpies of vaporisation and sublimation of water at 0 °C:
   2501 and 2834 kJ kg-1) [table numbers from memory].
"""

from __future__ import annotations

import numpy as np

from solair.psychrometrics import saturation_vapor_pressure, vapor_pressure

__all__ = [
    "LATENT_HEAT_VAPORISATION",
    "LATENT_HEAT_SUBLIMATION",
    "LEWIS_NUMBER",
    "mass_transfer_coefficient",
    "latent_heat",
    "saturation_pressure_and_slope",
    "vapor_pressure",
]

#: Enthalpy of vaporisation of water at 0 °C [J kg-1] (ASHRAE HoF 2017 ch. 1).
LATENT_HEAT_VAPORISATION = 2.501e6
#: Enthalpy of sublimation of ice at 0 °C [J kg-1] (ASHRAE HoF 2017 ch. 1).
LATENT_HEAT_SUBLIMATION = 2.834e6
#: Lewis number of water vapour in air, α/D ≈ 2.2e-5 / 2.5e-5 m2 s-1 near 20 °C
#: [from memory of air/vapour property tables, e.g. Incropera & DeWitt App. A].
LEWIS_NUMBER = 0.86
#: Specific gas constants of dry air and water vapour [J kg-1 K-1].
R_DRY_AIR = 287.05
R_VAPOUR = 461.52
#: Specific heat of (moist) air at constant pressure [J kg-1 K-1].
CP_AIR = 1006.0
_K = 273.15


def mass_transfer_coefficient(h_conv, temp_air, pressure=101325.0):
    r"""Vapour-pressure mass transfer coefficient from the Lewis analogy.

    .. math:: \beta_p = \frac{h_c}{\rho c_p Le^{2/3}} \frac{1}{R_v T_a},
              \qquad \rho = \frac{p}{R_d T_a}

    Parameters
    ----------
    h_conv : array_like
        Exterior convective coefficient [W m-2 K-1].
    temp_air : array_like
        Air temperature [°C].
    pressure : array_like
        Air pressure [Pa].

    Returns
    -------
    ndarray
        β_p [kg m-2 s-1 Pa-1] (≈ 7e-9 h_c near 10 °C).

    References
    ----------
    .. [1] Lewis (1922); Chilton & Colburn (1934); ASHRAE HoF (2017) ch. 6.
    """
    t_k = np.asarray(temp_air, dtype=float) + _K
    rho = np.asarray(pressure, dtype=float) / (R_DRY_AIR * t_k)
    beta = np.asarray(h_conv, dtype=float) / (rho * CP_AIR * LEWIS_NUMBER ** (2.0 / 3.0))
    return beta / (R_VAPOUR * t_k)


def latent_heat(temp_surface):
    """Latent heat released by condensation [J kg-1]: sublimation below 0 °C, vaporisation above.

    The phase of the deposit follows the surface temperature; the heat of
    fusion of a film that freezes or thaws in place is not tracked.
    """
    return np.where(np.asarray(temp_surface) < 0.0, LATENT_HEAT_SUBLIMATION,
                    LATENT_HEAT_VAPORISATION)


def saturation_pressure_and_slope(temp, dt: float = 1e-3):
    """Saturation vapour pressure [Pa] (over ice at or below 0.01 °C) and its slope [Pa K-1].

    The slope is a central difference of
    :func:`solair.psychrometrics.saturation_vapor_pressure` (Hyland & Wexler).
    """
    temp = np.asarray(temp, dtype=float)
    p = saturation_vapor_pressure(temp)
    slope = (saturation_vapor_pressure(temp + dt) - saturation_vapor_pressure(temp - dt)) / (
        2.0 * dt)
    return p, slope
