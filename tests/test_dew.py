"""Dew and frost on the exterior surface (solair.dew and the closure in solair.response).

Sources: Lewis (1922) / Chilton & Colburn (1934) heat and mass transfer analogy
(ASHRAE HoF 2017 ch. 6); latent heats checked against psychrolib 2.5.0
(ASHRAE HoF 2017 ch. 1): the moist-air enthalpy's 2501 kJ/kg, and the
Clausius-Clapeyron slope of psychrolib's saturation pressure over ice.
"""

from __future__ import annotations

import numpy as np
import psychrolib
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from solair import dew as dewmod
from solair.constructions import CONSTRUCTIONS
from solair.psychrometrics import saturation_vapor_pressure
from solair.response import surface_response

psychrolib.SetUnitSystem(psychrolib.SI)


def test_latent_heat_of_vaporisation_matches_psychrolib_enthalpy():
    # psychrolib (ASHRAE HoF 2017 ch. 1 eq. 32): h = 1.006 t + W (2501 + 1.86 t) kJ/kg
    w = 0.01
    l_psy = psychrolib.GetMoistAirEnthalpy(0.0, w) / w
    assert_allclose(dewmod.LATENT_HEAT_VAPORISATION, l_psy, rtol=1e-3)


@pytest.mark.parametrize(("temp", "latent"), [
    (-0.5, dewmod.LATENT_HEAT_SUBLIMATION), (0.5, dewmod.LATENT_HEAT_VAPORISATION)])
def test_latent_heats_match_clausius_clapeyron_of_psychrolib(temp, latent):
    # L = R_v T^2 d ln p_sat / dT with psychrolib's Hyland-Wexler saturation pressure
    h = 1e-3
    dlnp = (np.log(psychrolib.GetSatVapPres(temp + h))
            - np.log(psychrolib.GetSatVapPres(temp - h))) / (2 * h)
    assert_allclose(latent, dewmod.R_VAPOUR * (temp + 273.15) ** 2 * dlnp, rtol=2e-3)


def test_lewis_analogy():
    # Chilton-Colburn: h_c / (beta rho c_p) = Le^(2/3); beta_p = beta / (R_v T)
    h_c, ta, p = 10.0, 10.0, 101325.0
    beta_p = dewmod.mass_transfer_coefficient(h_c, ta, p)
    rho = p / (dewmod.R_DRY_AIR * (ta + 273.15))
    beta = beta_p * dewmod.R_VAPOUR * (ta + 273.15)
    assert_allclose(h_c / (beta * rho * dewmod.CP_AIR), dewmod.LEWIS_NUMBER ** (2 / 3),
                    rtol=1e-12)
    # order of magnitude often quoted: beta_p ~ 7e-9 h_c kg/(m2 s Pa) [from memory]
    assert_allclose(beta_p / h_c, 7e-9, rtol=0.05)


def _night(n=12, t_eq=-2.0, t_dew=4.0, t_air=6.0, h_c=4.0, h_e=9.0):
    shape = (n, 1)
    dew = {"temp_air": np.full(shape, t_air), "temp_dew": np.full(shape, t_dew),
           "pressure": 101325.0, "h_conv": h_c}
    return np.full(shape, t_eq), np.full(shape, h_e), dew


def test_latent_heat_limits_cooling_of_a_massless_surface():
    t_eq, h_e, dew = _night(t_eq=2.0, t_dew=8.0, t_air=10.0)
    dry = surface_response(t_eq, h_e, model="massless")
    wet = surface_response(t_eq, h_e, model="massless", dew=dew, spinup_days=0)
    ts = wet["temp_surface"][:, 0]
    assert np.all(ts > dry["temp_surface"][:, 0] + 1.0)
    assert np.all((ts > 0.0) & (ts < 8.0))        # dew, still below the dew point
    # massless balance: h_e (T_eq - T_s) + q_lat = 0, with q_lat = L beta_p (p_v - p_sat(T_s))
    q_lat = wet["latent_flux"][:, 0]
    assert_allclose(9.0 * (2.0 - ts) + q_lat, 0.0, atol=1e-6)
    beta = dewmod.mass_transfer_coefficient(4.0, 10.0, 101325.0)
    p_v = saturation_vapor_pressure(8.0)
    assert_allclose(q_lat, dewmod.LATENT_HEAT_VAPORISATION * beta
                    * (p_v - saturation_vapor_pressure(ts)), rtol=1e-6)
    # the condensate accumulates: one hour of g = q_lat / L
    assert_allclose(wet["condensation"][:, 0], q_lat / dewmod.LATENT_HEAT_VAPORISATION * 3600,
                    rtol=1e-9)
    assert_allclose(wet["condensate"][:, 0], np.cumsum(wet["condensation"][:, 0]), rtol=1e-12)
    assert wet["wet"].all()


def test_frost_uses_the_latent_heat_of_sublimation():
    t_eq, h_e, dew = _night(t_eq=-15.0, t_dew=-5.0, t_air=-3.0)
    res = surface_response(t_eq, h_e, model="massless", dew=dew, spinup_days=0)
    assert np.all(res["temp_surface"] < 0)
    assert_allclose(res["latent_flux"][:, 0] * 3600 / res["condensation"][:, 0],
                    dewmod.LATENT_HEAT_SUBLIMATION, rtol=1e-12)


def test_dew_evaporates_when_conditions_allow():
    n = 24
    t_eq = np.where(np.arange(n) < 10, -2.0, 30.0)[:, None]
    _, h_e, dew = _night(n=n)
    res = surface_response(t_eq, h_e, model="massless", dew=dew, spinup_days=0)
    m = res["condensate"][:, 0]
    assert m[9] > 0.01
    assert m[-1] == 0.0 and np.all(m >= 0)
    assert res["condensation"][10:, 0].min() < 0          # evaporation
    # mass adds up: held water = condensed minus evaporated
    assert_allclose(m, np.cumsum(res["condensation"][:, 0]), atol=1e-12)
    # while evaporating, the latent heat cools the surface below its dry temperature
    assert res["temp_surface"][10, 0] < 30.0


def test_dry_air_gives_no_dew():
    t_eq, h_e, dew = _night(t_eq=5.0, t_dew=-10.0)
    res = surface_response(t_eq, h_e, model="massless", dew=dew)
    assert np.all(res["condensation"] == 0) and not res["wet"].any()
    assert_allclose(res["temp_surface"], 5.0)


@pytest.mark.parametrize("substeps", [1, 6])
def test_implicit_coupling_is_stable_at_hourly_steps(substeps):
    # a light, strongly undercooled roof: no oscillation of T_s under constant forcing
    t_eq, h_e, dew = _night(n=48, t_eq=-10.0, t_dew=8.0, t_air=10.0, h_c=15.0, h_e=20.0)
    res = surface_response(t_eq, h_e, model="transient", construction=CONSTRUCTIONS[
        "metal_deck_roof"], dew=dew, substeps=substeps, spinup_days=0, temp_indoor=20.0)
    ts = res["temp_surface"][:, 0]
    assert np.all(np.abs(np.diff(ts[6:])) < 0.05)
    assert np.all(ts < 8.0)


@settings(max_examples=25, deadline=None)
@given(t_eq=st.lists(st.floats(-25, 60), min_size=6, max_size=6),
       t_dew=st.floats(-20, 20), h_c=st.floats(0.5, 40))
def test_condensate_is_never_negative_and_results_finite(t_eq, t_dew, h_c):
    n = len(t_eq)
    dew = {"temp_air": np.full((n, 1), t_dew + 2.0), "temp_dew": np.full((n, 1), t_dew),
           "pressure": 95000.0, "h_conv": h_c}
    res = surface_response(np.asarray(t_eq)[:, None], h_c + 4.0, model="massless", dew=dew,
                           spinup_days=0)
    assert np.all(res["condensate"] >= 0)
    assert np.all(np.isfinite(res["temp_surface"]))
    assert_allclose(res["condensate"][:, 0], np.cumsum(res["condensation"][:, 0]), atol=1e-12)
