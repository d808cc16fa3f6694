"""View factors and radiative coefficients."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from solair import longwave as lw
from solair.errors import ConfigurationError


def test_iso6946_annex_c_hr0():
    # ISO 6946:2017 Annex C, Table C.1: h_r0 = 4.1 / 4.6 / 5.1 / 5.7 / 6.3 W m-2 K-1 at
    # -10 / 0 / 10 / 20 / 30 °C (table rounding: +-0.05)
    tm = np.array([-10.0, 0.0, 10.0, 20.0, 30.0])
    table = [4.1, 4.6, 5.1, 5.7, 6.3]
    assert_allclose(lw.h_r0_iso6946(tm), table, atol=0.05)
    # the secant coefficient with T_x = T_ref = T_m is the same 4 sigma T_m^3
    assert_allclose(lw.h_rad_secant(1.0, 1.0, tm, tm), table, atol=0.05)


def test_codata_sigma():
    # CODATA 2018 Stefan-Boltzmann constant, as scipy carries it
    from scipy.constants import Stefan_Boltzmann

    assert_allclose(lw.SIGMA, Stefan_Boltzmann, rtol=1e-9)
    assert lw.SIGMA_ASTM_E1980 == 5.66961e-8


def test_view_factors_standard():
    # infinite plane: F_sky = (1 + cos b)/2, F_gnd = (1 - cos b)/2 (e.g. Duffie & Beckman)
    fs, fa, fg = lw.view_factors(np.array([0.0, 60.0, 90.0, 180.0]))
    assert_allclose(fs, [1.0, 0.75, 0.5, 0.0], atol=1e-15)
    assert_allclose(fg, [0.0, 0.25, 0.5, 1.0], atol=1e-15)
    assert_allclose(fa, 0.0)


def test_view_factors_sky_air_split_vertical():
    # Walton (1983) / McClellan & Pedersen (1997): cos(b/2) of the sky view sees the sky;
    # vertical wall: 0.354 sky, 0.146 air, 0.5 ground
    fs, fa, fg = lw.view_factors(90.0, sky_air_split=True)
    assert_allclose([fs, fa, fg], [0.5 * np.sqrt(0.5), 0.5 - 0.5 * np.sqrt(0.5), 0.5], rtol=1e-12)
    assert_allclose([fs, fa], [0.354, 0.146], atol=5e-4)
    # McClellan & Pedersen's form sqrt((1 + cos b)/2) is the same factor
    b = np.radians(40.0)
    fs, fa, _ = lw.view_factors(40.0, sky_air_split=True)
    assert_allclose(fs / (fs + fa), np.sqrt((1 + np.cos(b)) / 2), rtol=1e-12)


@given(st.floats(0.0, 180.0), st.booleans())
def test_view_factors_sum_to_one(tilt, split):
    fs, fa, fg = lw.view_factors(tilt, sky_air_split=split)
    assert_allclose(fs + fa + fg, 1.0, rtol=1e-12)
    assert min(fs, fa, fg) >= 0.0


def test_view_factor_tilt_errors():
    with pytest.raises(ConfigurationError, match=r"surface_tilt \[190.0\] .* \[0, 180\]"):
        lw.view_factors([0.0, 190.0])


@given(st.floats(0.0, 1.0), st.floats(0.0, 1.0), st.floats(-80.0, 80.0), st.floats(-60.0, 90.0))
def test_secant_is_exact_for_the_fourth_power_difference(eps, view, tx, tr):
    # the secant form: h (T_x - T_r) = eps sigma F (T_x^4 - T_r^4) exactly (algebra)
    h = lw.h_rad_secant(eps, view, tx, tr)
    exact = eps * lw.SIGMA * view * ((tx + 273.15) ** 4 - (tr + 273.15) ** 4)
    assert_allclose(h * (tx - tr), exact, rtol=1e-9, atol=1e-9)
