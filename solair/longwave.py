"""Long-wave exchange of an exterior surface: view factors and radiative coefficients.

A surface at tilt β exchanges long-wave radiation with the sky, with the
near-horizon air and with the ground. This module gives the view factors and
the linearised (secant) radiative coefficients; the balance itself is in
:mod:`solair.balance`.

All temperatures at the interface are in °C; they are converted to K inside the
radiative terms.

References
----------
.. [1] Walton, G.N. (1983). Thermal Analysis Research Program reference manual.
   NBSIR 83-2655, National Bureau of Standards, Washington DC.
.. [2] McClellan, T.M., Pedersen, C.O. (1997). Investigation of outside heat
   balance models for use in a heat balance cooling load calculation procedure.
   ASHRAE Transactions 103(2), 469-484.
.. [3] ISO 6946:2017, Building components and building elements - Thermal
   resistance and thermal transmittance - Calculation methods, Annex C.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from solair.errors import ConfigurationError

__all__ = ["SIGMA", "SIGMA_ASTM_E1980", "KELVIN", "view_factors", "h_rad_secant", "h_r0_iso6946"]

#: Stefan-Boltzmann constant [W m-2 K-4], CODATA 2018 (exact in the 2019 SI).
SIGMA = 5.670374419e-8
#: The value ASTM E1980-11 uses in its SRI balance [W m-2 K-4].
SIGMA_ASTM_E1980 = 5.66961e-8
#: 0 °C in kelvin.
KELVIN = 273.15


def view_factors(
    surface_tilt: ArrayLike, *, sky_air_split: bool = False
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    r"""View factors of a plane at tilt β to the sky, the near-horizon air and the ground.

    .. math::

        F_{sky,tot} = \frac{1 + \cos\beta}{2}, \qquad F_{gnd} = \frac{1 - \cos\beta}{2}

    With ``sky_air_split=True`` the sky view is split into a part that sees the
    sky temperature, :math:`F_{sky} = F_{sky,tot}\cos(\beta/2)`, and a part
    that sees air at the air temperature,
    :math:`F_{air} = F_{sky,tot}\,(1 - \cos(\beta/2))`: an empirical allowance
    for the warm near-horizon sky seen by tilted surfaces (Walton 1983 [1]_;
    McClellan & Pedersen 1997 [2]_, who write the factor as
    :math:`\sqrt{(1+\cos\beta)/2} = \cos(\beta/2)`). Without the split
    :math:`F_{air} = 0`.

    Parameters
    ----------
    surface_tilt : array_like
        Tilt from horizontal [°], 0 = facing up, 90 = vertical, 180 = facing down.
    sky_air_split : bool, default False
        Split the sky view into sky and air as above.

    Returns
    -------
    view_sky, view_air, view_ground : ndarray
        View factors [-]; they sum to 1.

    Raises
    ------
    ConfigurationError
        If a tilt is not finite or outside [0, 180] °.

    References
    ----------
    .. [1] Walton, G.N. (1983). NBSIR 83-2655, National Bureau of Standards.
    .. [2] McClellan, T.M., Pedersen, C.O. (1997). ASHRAE Transactions
       103(2), 469-484.
    """
    tilt = np.asarray(surface_tilt, dtype=float)
    bad = ~np.isfinite(tilt) | (tilt < 0.0) | (tilt > 180.0)
    if np.any(bad):
        raise ConfigurationError(
            f"surface_tilt {tilt[bad].ravel()[:3].tolist()} ° is outside the allowed range "
            "[0, 180] °"
        )
    beta = np.radians(tilt)
    cos_b = np.cos(beta)
    f_sky_total = 0.5 * (1.0 + cos_b)
    view_ground = 0.5 * (1.0 - cos_b)
    if sky_air_split:
        split = np.cos(0.5 * beta)
        view_sky = f_sky_total * split
        view_air = f_sky_total - view_sky
    else:
        view_sky = f_sky_total
        view_air = np.zeros_like(f_sky_total)
    return view_sky, view_air, view_ground


def h_rad_secant(
    emissivity: ArrayLike,
    view: ArrayLike,
    temp_other: ArrayLike,
    temp_ref: ArrayLike,
    *,
    sigma: float = SIGMA,
) -> NDArray[np.float64]:
    r"""Secant radiative coefficient between a surface and one radiating environment.

    .. math::

        h_{r,x} = \varepsilon\,\sigma\,F_x\,(T_x^2 + T_{ref}^2)(T_x + T_{ref})

    so that :math:`h_{r,x}(T_x - T_{ref}) = \varepsilon\sigma F_x (T_x^4 - T_{ref}^4)`
    exactly. :math:`T_{ref}` is the linearisation point: the air temperature
    (single pass) or the surface temperature (exact). With
    :math:`T_x = T_{ref} = T_m` it reduces to ISO 6946's
    :math:`\varepsilon h_{r0} = 4\varepsilon\sigma T_m^3` [1]_.

    Parameters
    ----------
    emissivity : array_like
        Thermal (long-wave) emissivity of the surface [-].
    view : array_like
        View factor to the environment [-].
    temp_other : array_like
        Temperature of the environment (sky, air, ground) [°C].
    temp_ref : array_like
        Linearisation temperature [°C].
    sigma : float, default :data:`SIGMA`
        Stefan-Boltzmann constant [W m-2 K-4].

    Returns
    -------
    h_rad : ndarray
        Radiative coefficient [W m-2 K-1].

    References
    ----------
    .. [1] ISO 6946:2017, Annex C (h_r = ε h_r0, h_r0 = 4 σ T_m³).
    """
    tx = np.asarray(temp_other, dtype=float) + KELVIN
    tr = np.asarray(temp_ref, dtype=float) + KELVIN
    return (
        np.asarray(emissivity, dtype=float)
        * sigma
        * np.asarray(view, dtype=float)
        * (tx * tx + tr * tr)
        * (tx + tr)
    )


def h_r0_iso6946(temp_mean: ArrayLike, *, sigma: float = SIGMA) -> NDArray[np.float64]:
    r"""Black-body radiative coefficient of ISO 6946:2017 Annex C.

    .. math:: h_{r0} = 4\sigma T_m^3

    Parameters
    ----------
    temp_mean : array_like
        Mean of the surface and surroundings temperature [°C].
    sigma : float, default :data:`SIGMA`
        Stefan-Boltzmann constant [W m-2 K-4].

    Returns
    -------
    h_r0 : ndarray
        [W m-2 K-1]; multiply by the emissivity to get h_r.

    References
    ----------
    .. [1] ISO 6946:2017, Annex C, Table C.1 (h_r0 = 4.6 W m-2 K-1 at 0 °C).
    """
    tm = np.asarray(temp_mean, dtype=float) + KELVIN
    return 4.0 * sigma * tm**3
