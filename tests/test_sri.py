"""Solar Reflectance Index after ASTM E1980-11 (reapproved 2019).

Sources: ASTM E1980-11 (standard conditions, reference surfaces, closed form and
its stated accuracy); LBNL Heat Island Group measurements of roofing products
(solar reflectance, thermal emittance, SRI) as reported in cool-roof literature.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from solair.errors import ConfigurationError
from solair.finishes import SIGMA_E1980, SRI_WIND, sri, temp_surface_e1980


@pytest.mark.parametrize("wind", ["low", "medium", "high"])
def test_astm_e1980_reference_surfaces_are_0_and_100(wind):
    # ASTM E1980-11: black reference (reflectance 0.05, emittance 0.90) has SRI 0,
    # white reference (reflectance 0.80, emittance 0.90) has SRI 100, at every wind class.
    assert_allclose(sri(0.95, 0.90, wind=wind), 0.0, atol=1e-9)
    assert_allclose(sri(0.20, 0.90, wind=wind), 100.0, atol=1e-9)


@pytest.mark.parametrize("wind", ["low", "medium", "high"])
def test_astm_e1980_balance_is_satisfied(wind):
    # ASTM E1980-11 steady balance: alpha I = eps sigma (Ts^4 - Tsky^4) + hc (Ts - Ta),
    # I = 1000 W/m2, Ta = 310 K, Tsky = 300 K, sigma = 5.66961e-8; residual recomputed here.
    a = np.array([0.95, 0.2, 0.5, 0.39, 0.8])
    e = np.array([0.9, 0.9, 0.5, 0.04, 0.0])
    h = SRI_WIND[wind]
    ts = temp_surface_e1980(a, e, h)
    resid = e * SIGMA_E1980 * (ts**4 - 300.0**4) + h * (ts - 310.0) - a * 1000.0
    assert_allclose(resid, 0.0, atol=1e-8)
    # emissivity 0: pure convection, Ts = Ta + alpha I / hc
    assert_allclose(ts[-1], 310.0 + 0.8 * 1000.0 / h, rtol=1e-12)


@pytest.mark.parametrize(
    ("name", "reflectance", "emittance", "published"),
    [
        ("black EPDM", 0.06, 0.86, -1.0),
        ("white granular-surfaced bitumen", 0.26, 0.92, 28.0),
        ("light gravel on built-up roof", 0.34, 0.90, 37.0),
        ("white PVC membrane", 0.83, 0.92, 104.0),
    ],
)
def test_lbnl_published_sri_at_medium_wind(name, reflectance, emittance, published):
    # LBNL cool-roof measurements as reported in cool-roof literature; a single
    # reported SRI is the medium-wind one (h_c = 12 W/m2K, ASTM E1980-11).
    assert abs(float(sri(1.0 - reflectance, emittance, wind="medium")) - published) <= 1.5


def test_astm_e1980_closed_form_within_stated_accuracy_at_medium_wind():
    # ASTM E1980-11 states the closed form agrees with the exact balance to a mean of
    # 0.9 and a maximum of 2 SRI units for alpha > 0.1, collectors (alpha > 0.8 with
    # eps < 0.2) excepted. Checked on a grid of alpha in (0.1, 0.95], eps in [0.1, 1]
    # at medium wind (h_c = 12). At low wind the grid maximum reaches 7.4 (alpha 0.8,
    # eps 0.1) and the mean 1.0: the claim is not met there (docs/finishes.md).
    a, e = np.meshgrid(np.linspace(0.1, 0.95, 86)[1:], np.linspace(0.1, 1.0, 91), indexing="ij")
    keep = ~((a > 0.8) & (e < 0.2))
    d = np.abs(sri(a, e, wind="medium") - sri(a, e, wind="medium", method="polynomial"))[keep]
    assert d.mean() <= 0.9
    assert d.max() <= 2.0


def test_lbnl_values_agree_with_closed_form():
    # ASTM E1980-11 closed form against the LBNL published values (same four products).
    r = np.array([0.06, 0.26, 0.34, 0.83])
    e = np.array([0.86, 0.92, 0.90, 0.92])
    assert_allclose(sri(1 - r, e, method="polynomial"), [-1, 28, 37, 104], atol=1.5)


def test_sri_broadcasts_over_finishes_and_winds():
    a = np.array([0.2, 0.5, 0.9])[:, None]
    h = np.array([5.0, 12.0, 30.0])[None, :]
    out = sri(a, 0.9, wind=12.0)
    assert np.shape(out) == (3, 1)
    from solair.finishes import sri_balance

    assert sri_balance(a, 0.9, h).shape == (3, 3)


@settings(max_examples=60, deadline=None)
@given(a=st.floats(0.0, 1.0), e=st.floats(0.0, 1.0), da=st.floats(0.01, 0.5))
def test_sri_falls_with_absorptance_rises_with_emissivity(a, e, da):
    # property of the E1980 balance: more absorbed sun -> hotter -> lower SRI; higher
    # emittance -> cooler -> higher SRI (monotone residual in Ts)
    assert sri(min(a + da, 1.0), e) <= sri(a, e) + 1e-9
    assert sri(a, min(e + da, 1.0)) >= sri(a, e) - 1e-9


def test_low_emissivity_converges():
    ts = temp_surface_e1980(0.39, np.array([0.0, 1e-6, 0.04, 0.13]), 5.0)
    assert np.all(np.isfinite(ts)) and np.all(np.diff(ts) < 0)


def test_bad_inputs():
    with pytest.raises(ConfigurationError, match="wind class 'storm' is not one of"):
        sri(0.5, 0.9, wind="storm")
    with pytest.raises(ConfigurationError, match="method 'fit' is not one of"):
        sri(0.5, 0.9, method="fit")
    with pytest.raises(ConfigurationError, match=r"must lie in \[0, 1\]"):
        sri(1.2, 0.9)


def test_sri_table_three_wind_classes():
    from solair.compare import sri_table
    from solair.finishes import FINISHES

    t = sri_table([FINISHES["black_membrane"], FINISHES["white_render"]])
    assert list(t.columns) == ["finish", "absorptance", "emissivity", "sri_low", "sri_medium",
                               "sri_high"]
    assert_allclose(t.sri_medium, [FINISHES[n].sri() for n in ("black_membrane", "white_render")])
