"""Psychrometrics against ASHRAE Handbook—Fundamentals 2017 ch. 1 and psychrolib 2.5.0.

psychrolib (Meyer & Thevenard 2019, doi:10.21105/joss.01137) is ASHRAE's reference
implementation of the same chapter; it is scalar, so it is called in loops here.
numba is never imported (with numba present psychrolib.GetUnitSystem crashed).
"""

from __future__ import annotations

import numpy as np
import psychrolib
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from solair import psychrometrics as ps

psychrolib.SetUnitSystem(psychrolib.SI)


@pytest.mark.parametrize(
    ("temp", "p_table"),
    [
        # ASHRAE HoF 2017 ch. 1 Table 3 (saturation pressure p_ws), the values
        # psychrolib's SI test-suite also checks; ASHRAE states eqs. 5-6 reproduce
        # the table within 300 ppm.
        (-20.0, 103.24),  # over ice
        (-5.0, 401.74),  # over ice
        (0.0, 611.2),
        (5.0, 872.6),
        (20.0, 2339.0),
        (25.0, 3169.7),
        (50.0, 12351.3),
        (100.0, 101418.0),
    ],
)
def test_ashrae_2017_table3_saturation_pressure(temp, p_table):
    assert_allclose(ps.saturation_vapor_pressure(temp), p_table, rtol=3e-4)


def test_saturation_pressure_against_psychrolib_grid():
    """psychrolib.GetSatVapPres over -100..200 °C, ice at or below 0.01 °C."""
    t = np.concatenate([np.linspace(-100.0, 200.0, 601), [0.0, 0.01, 0.011, -0.01]])
    ref = np.array([psychrolib.GetSatVapPres(float(x)) for x in t])
    assert_allclose(ps.saturation_vapor_pressure(t), ref, rtol=1e-12)


def test_water_and_ice_branches():
    # ASHRAE HoF 2017 ch. 1 eq. 5 (ice) and 6 (water) meet at the triple point,
    # 611.657 Pa (psychrolib value at 0.01 °C)
    assert_allclose(ps.saturation_vapor_pressure_ice(0.01), 611.657, rtol=1e-5)
    assert_allclose(ps.saturation_vapor_pressure_water(0.01), 611.657, rtol=1e-4)
    # below freezing, ice has the lower saturation pressure (physics)
    t = np.linspace(-40, -1, 40)
    assert (ps.saturation_vapor_pressure_ice(t) < ps.saturation_vapor_pressure_water(t)).all()
    assert_allclose(ps.saturation_vapor_pressure(t), ps.saturation_vapor_pressure_ice(t))


def test_dew_point_against_psychrolib_grid():
    """psychrolib.GetTDewPointFromRelHum over -40..50 °C × 1..100 % RH."""
    t = np.linspace(-40.0, 50.0, 46)
    rh = np.linspace(1.0, 100.0, 34)
    td = ps.dew_point(t[:, None], rh[None, :])
    ref = np.array([[psychrolib.GetTDewPointFromRelHum(float(a), float(b) / 100.0)
                     for b in rh] for a in t])
    assert td.shape == (46, 34)
    assert_allclose(td, ref, atol=1e-6)


def test_relative_humidity_and_vapor_pressure_against_psychrolib():
    t = np.linspace(-30.0, 45.0, 16)
    td = t - 7.5
    ref_rh = [psychrolib.GetRelHumFromTDewPoint(float(a), float(b)) for a, b in zip(t, td)]
    assert_allclose(ps.relative_humidity(t, td), 100.0 * np.array(ref_rh), rtol=1e-10)
    ref_pw = [psychrolib.GetVapPresFromTDewPoint(float(b)) for b in td]
    assert_allclose(ps.vapor_pressure(td), ref_pw, rtol=1e-12)


def test_dew_point_at_saturation_is_air_temperature():
    t = np.array([-20.0, 0.0, 0.01, 15.0, 35.0])
    assert_allclose(ps.dew_point(t, 100.0), t, atol=1e-9)


@settings(max_examples=200, deadline=None)
@given(t=st.floats(-60.0, 60.0), depression=st.floats(0.0, 40.0))
def test_dew_point_inverts_relative_humidity(t, depression):
    """Property: dew_point(t, RH(t, td)) == td (the inversion is exact to 1e-6 K)."""
    td = t - depression
    rh = ps.relative_humidity(t, td)
    assert 0.0 < rh <= 100.0 + 1e-9
    assert_allclose(ps.dew_point(t, rh), td, atol=1e-6)


def test_dry_air_holds_at_validity_limit():
    # RH 0 has no finite dew point: it is held at -100 °C, the bottom of Hyland–Wexler's range
    assert_allclose(ps.dew_point(20.0, 0.0), -100.0)


def test_water_phase_for_meteorological_humidity():
    """phase="water": saturation over liquid water (ASHRAE eq. 6) at every temperature."""
    t = np.array([-30.0, -10.0, 0.0, 10.0])
    td = t - 5.0
    expected = 100.0 * ps.saturation_vapor_pressure_water(td) / \
        ps.saturation_vapor_pressure_water(t)
    assert_allclose(ps.relative_humidity(t, td, phase="water"), expected, rtol=1e-12)
    rh = ps.relative_humidity(t, td, phase="water")
    assert_allclose(ps.dew_point(t, rh, phase="water"), td, atol=1e-6)
    # above the triple point both phases coincide
    assert_allclose(ps.dew_point(25.0, 60.0, phase="water"), ps.dew_point(25.0, 60.0))


def test_unknown_phase_is_configuration_error():
    from solair.errors import ConfigurationError

    with pytest.raises(ConfigurationError, match=r"phase 'steam' is not one of"):
        ps.relative_humidity(20.0, 10.0, phase="steam")
