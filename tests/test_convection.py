"""Exterior convection coefficients and the local wind profile."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from solair import convection as cv
from solair.errors import ConfigurationError
from solair.longwave import h_r0_iso6946


def test_iso6946_annex_c_formula():
    # ISO 6946:2017 Annex C: h_c = 4 + 4 v
    v = np.array([0.0, 1.0, 4.0, 10.0])
    assert_allclose(cv.h_conv_iso6946(v), [4.0, 8.0, 20.0, 44.0])
    assert_allclose(cv.get_convection_coefficient(v), [4.0, 8.0, 20.0, 44.0])


def test_iso6946_rse_against_wind_table():
    # ISO 6946 annex table of R_se against wind speed (from memory; values rounded to 0.01):
    # v = 1, 2, 3, 4, 5, 7, 10 m/s -> 0.08, 0.06, 0.05, 0.04, 0.04, 0.03, 0.02, with
    # eps = 0.9 and h_r0 at 0 °C
    v = np.array([1.0, 2.0, 3.0, 4.0, 5.0, 7.0, 10.0])
    r_se = 1.0 / (cv.h_conv_iso6946(v) + 0.9 * h_r0_iso6946(0.0))
    assert_allclose(r_se, [0.08, 0.06, 0.05, 0.04, 0.04, 0.03, 0.02], atol=0.005)


def test_conventional_stand_in_is_iso13789_h_ce():
    # ISO 13789:2017 Table 8: conventional h_ce = 20 W m-2 K-1 (the balance replaces it)
    out = cv.get_convection_coefficient(np.array([0.0, 7.0]), model="iso6946_conventional")
    assert_allclose(out, 20.0)


def _dir(model, v, wind_from, tilt, azimuth, dt=None, **kw):
    return cv.get_convection_coefficient(v, model=model, wind_direction=wind_from,
                                         surface_tilt=tilt, surface_azimuth=azimuth,
                                         temp_difference=dt, **kw)


@pytest.mark.parametrize("model", ["yazdanian_klems", "walton"])
def test_windward_exceeds_leeward(model):
    # wind from the south: the south wall is windward, the north wall leeward (common practice).
    # Yazdanian & Klems' leeward fit 3.55 V^0.617 exceeds the windward 3.26 V^0.89 below
    # V = (3.55/3.26)^(1/0.273) = 1.37 m/s, a property of the published fits, so check above it
    for v in (2.0, 5.0, 10.0):
        south = _dir(model, v, 180.0, 90.0, 180.0)
        north = _dir(model, v, 180.0, 90.0, 0.0)
        assert south > north


def test_yazdanian_klems_coefficients():
    # Yazdanian & Klems (1994), ASHRAE Trans. 100(1): sqrt((0.84 dT^1/3)^2 + (a V^b)^2),
    # windward a 3.26 b 0.89, leeward a 3.55 b 0.617 (values from memory, see docstring)
    v, dt = 3.0, 8.0
    ww = _dir("yazdanian_klems", v, 90.0, 90.0, 90.0, dt)
    lw = _dir("yazdanian_klems", v, 90.0, 90.0, 270.0, dt)
    assert_allclose(ww, np.hypot(0.84 * 2.0, 3.26 * v**0.89), rtol=1e-12)
    assert_allclose(lw, np.hypot(0.84 * 2.0, 3.55 * v**0.617), rtol=1e-12)


def test_walton_natural_convection_limits():
    # Walton (1983) NBSIR 83-2655: vertical 1.31 dT^1/3; horizontal unstable 9.482/6.238 = 1.52,
    # stable 1.810/2.382 = 0.76 (x dT^1/3)
    dt = 8.0
    assert_allclose(cv.h_natural_walton(90.0, dt), 1.31 * 2.0, rtol=1e-3)
    assert_allclose(cv.h_natural_walton(0.0, dt), 1.52 * 2.0, rtol=1e-3)  # warm roof, facing up
    assert_allclose(cv.h_natural_walton(0.0, -dt), 0.76 * 2.0, rtol=1e-3)  # cold roof
    assert_allclose(cv.h_natural_walton(180.0, -dt), 1.52 * 2.0, rtol=1e-3)  # cold soffit
    assert_allclose(cv.h_natural_walton(45.0, None), 1.31 * np.cbrt(cv.DEFAULT_TEMP_DIFFERENCE))


def test_walton_forced_term_and_roughness():
    # Walton (1983): h_f = 2.537 W_f R_f sqrt(P V / A); W_f 1 windward, 0.5 leeward
    v, pa = 4.0, 0.4
    hn = cv.h_natural_walton(90.0, 3.0)
    for rough, rf in [("very_rough", 2.17), ("medium_rough", 1.52), ("very_smooth", 1.00)]:
        ww = _dir("walton", v, 0.0, 90.0, 0.0, 3.0, roughness=rough, perimeter_over_area=pa)
        lw = _dir("walton", v, 0.0, 90.0, 180.0, 3.0, roughness=rough, perimeter_over_area=pa)
        assert_allclose(ww, hn + 2.537 * rf * np.sqrt(pa * v), rtol=1e-12)
        assert_allclose(lw, hn + 0.5 * 2.537 * rf * np.sqrt(pa * v), rtol=1e-12)


def test_horizontal_roof_is_windward():
    # common practice: a horizontal roof has no lee side
    for wind_from in (0.0, 90.0, 200.0):
        assert cv.is_windward(wind_from, 0.0, 0.0)
        assert_allclose(_dir("yazdanian_klems", 3.0, wind_from, 0.0, 0.0),
                        _dir("yazdanian_klems", 3.0, 0.0, 90.0, 0.0))


def test_windward_angle_wraps_around_north():
    wd = np.array([350.0, 10.0, 95.0, 265.0, 271.0])
    assert cv.is_windward(wd, 0.0, 90.0).tolist() == [True, True, False, False, True]


def test_calm_wind():
    # calm: ISO keeps 4 W m-2 K-1; the direction-aware models fall back to natural convection
    assert_allclose(cv.get_convection_coefficient(0.0), 4.0)
    assert_allclose(_dir("yazdanian_klems", 0.0, np.nan, 90.0, 0.0, 8.0), 0.84 * 2.0)
    assert_allclose(_dir("walton", 0.0, 0.0, 90.0, 180.0, 8.0), cv.h_natural_walton(90.0, 8.0))
    out = _dir("walton", np.array([0.0, 0.0]), np.array([0.0, np.nan]), 90.0, 180.0)
    assert np.all(np.isfinite(out)) and np.all(out > 0)


def test_broadcast_time_by_surface():
    v = np.array([[0.0], [2.0], [6.0]])
    wd = np.array([[0.0], [90.0], [180.0]])
    tilt = np.array([0.0, 90.0, 90.0, 90.0])
    az = np.array([180.0, 0.0, 90.0, 180.0])
    for model in cv.CONVECTION_MODELS:
        out = cv.get_convection_coefficient(v, model=model, wind_direction=wd, surface_tilt=tilt,
                                            surface_azimuth=az)
        assert out.shape == (3, 4)
        assert np.all(np.isfinite(out)) and np.all(out > 0)


@given(st.floats(0.0, 40.0), st.floats(0.0, 360.0), st.floats(0.0, 180.0), st.floats(0.0, 360.0),
       st.floats(-40.0, 40.0))
def test_direction_models_positive_and_rising_with_wind(v, wd, tilt, az, dt):
    for model in ("yazdanian_klems", "walton"):
        h1 = _dir(model, v, wd, tilt, az, dt)
        h2 = _dir(model, v + 1.0, wd, tilt, az, dt)
        assert np.isfinite(h1) and h1 >= 0.0 and h2 > h1


def test_dispatcher_errors():
    with pytest.raises(ConfigurationError,
                       match=r"convection model 'mcadams' is not one of \['iso6946', "
                             r"'iso6946_conventional', 'walton', 'yazdanian_klems'\]"):
        cv.get_convection_coefficient(3.0, model="mcadams")
    with pytest.raises(ConfigurationError, match="needs wind_direction"):
        cv.get_convection_coefficient(3.0, model="walton", surface_tilt=90, surface_azimuth=0)
    with pytest.raises(ConfigurationError, match=r"roughness 'glassy' is not one of"):
        cv.get_convection_coefficient(3.0, roughness="glassy")
    with pytest.raises(ConfigurationError, match="wind_speed .* must be finite and >= 0"):
        cv.get_convection_coefficient(np.array([1.0, -2.0]))


def test_local_wind_default_factor_one():
    # with the defaults (open terrain, 10 m, station in open terrain at 10 m) the factor is 1
    v = np.array([0.0, 3.0, 12.0])
    assert_allclose(cv.local_wind_speed(v), v, rtol=1e-12)
    assert_allclose(cv.local_wind_speed(v, terrain="station", height=3.0), v)


def test_local_wind_ashrae_power_law():
    # ASHRAE HoF ch. 24 Eq. 4 and Table 1 (from memory): V_H = V_met (270/10)^0.14 (H/delta)^a
    v = 5.0
    for terrain, a, delta in [("city", 0.33, 460.0), ("suburban", 0.22, 370.0),
                              ("open", 0.14, 270.0), ("flat", 0.10, 210.0)]:
        for h in (3.0, 10.0, 30.0):
            expected = v * (270.0 / 10.0) ** 0.14 * (h / delta) ** a
            assert_allclose(cv.local_wind_speed(v, terrain=terrain, height=h), expected, rtol=1e-12)
    assert cv.local_wind_speed(v, terrain="city", height=10.0) < v


def test_local_wind_errors():
    with pytest.raises(ConfigurationError, match=r"terrain 'forest' is not one of \['station'"):
        cv.local_wind_speed(3.0, terrain="forest")
    with pytest.raises(ConfigurationError, match="height"):
        cv.local_wind_speed(3.0, terrain="city", height=0.0)
