"""The sol-air balance: T_eq, h_e, R_se, the massless adiabatic surface."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.optimize import brentq

from solair import balance, longwave, sky
from solair.convection import h_conv_iso6946
from solair.errors import ConfigurationError

HORIZONTAL = {"view_sky": 1.0, "view_air": 0.0, "view_ground": 0.0}
K = 273.15


def _brentq_surface(alpha_g, eps, h_c, ta_k, tsky_k, fs=1.0, fa=0.0, fg=0.0, tg_k=None,
                    sigma=longwave.SIGMA):
    """Root of the exact quartic balance, independently by scipy's bracketing solver [K]."""
    tg_k = ta_k if tg_k is None else tg_k

    def net(t):
        return (alpha_g + h_c * (ta_k - t)
                + eps * sigma * (fs * (tsky_k**4 - t**4) + fa * (ta_k**4 - t**4)
                                 + fg * (tg_k**4 - t**4)))

    return brentq(net, 1.0, 5000.0, xtol=1e-10, rtol=1e-14)


# ASTM E1980-11 standard conditions: I = 1000 W m-2, T_a = 310 K, T_sky = 300 K, eps = 0.90;
# temperatures computed from the standard's surface balance with its sigma = 5.66961e-8
ASTM_CASES = [
    (0.95, 5.0, 376.85), (0.95, 12.0, 355.61), (0.95, 30.0, 334.22),  # black reference
    (0.20, 5.0, 322.40), (0.20, 12.0, 317.76), (0.20, 30.0, 313.93),  # white reference
]


@pytest.mark.parametrize(("alpha", "h_c", "t_expected"), ASTM_CASES)
def test_astm_e1980_surface_temperatures(alpha, h_c, t_expected):
    # ASTM E1980-11: the surface mode is the standard's steady-state surface temperature
    out = balance.temp_sol_air(310.0 - K, 1000.0, alpha, 0.90, h_c, 300.0 - K, **HORIZONTAL,
                               linearisation="surface", sigma=longwave.SIGMA_ASTM_E1980)
    assert_allclose(out["temp_sol_air"] + K, t_expected, atol=0.1)
    # and independently: scipy brentq on the same quartic
    root = _brentq_surface(alpha * 1000.0, 0.90, h_c, 310.0, 300.0,
                           sigma=longwave.SIGMA_ASTM_E1980)
    assert_allclose(out["temp_sol_air"] + K, root, atol=1e-6)


def test_iso6946_conventional_rse():
    # ISO 6946:2017 Annex C: R_se = 1/(h_c + eps h_r0) ≈ 0.04 at v = 4 m/s, eps = 0.9, 0 °C
    out = balance.temp_sol_air(0.0, 0.0, 0.5, 0.9, h_conv_iso6946(4.0), 0.0, **HORIZONTAL)
    assert_allclose(out["r_se"], 0.04, atol=0.002)
    assert_allclose(out["h_rad"], 0.9 * 4.6, atol=0.05)


def test_conventional_mode_fixes_h_e():
    # ISO 6946:2017 6.8: conventional R_se = 0.04, h_e = 25, convective part = the rest
    for lin in ("air", "surface"):
        out = balance.temp_sol_air(np.array([0.0, 25.0]), np.array([0.0, 700.0]), 0.7, 0.9,
                                   999.0, np.array([-12.0, 10.0]), view_sky=0.5, view_air=0.0,
                                   view_ground=0.5, linearisation=lin, conventional=True)
        assert_allclose(out["r_se"], 0.04)
        assert_allclose(out["h_e"], 25.0)
        assert_allclose(out["h_conv"], 25.0 - out["h_rad"])
    # surface linearisation: the coefficients are those at the solution itself
    t = out["temp_sol_air"]
    assert_allclose(out["h_rad_sky"], longwave.h_rad_secant(0.9, 0.5, [-12.0, 10.0], t))


def test_ashrae_horizontal_longwave_correction():
    # ASHRAE Handbook-Fundamentals, sol-air method (from memory): for a horizontal surface at
    # h_o ≈ 17 W m-2 K-1 in summer, eps dR / h_o ≈ 3.9 K (7 °F) with eps = 1. Our summer clear
    # sky: T_a = 30 °C, T_dp = 20 °C, Clark-Allen; h_c chosen so that h_e = 17
    ta, td = 30.0, 20.0
    tsky, src = sky.get_sky_temperature(ta, td, 101325.0, model="clark_allen")
    assert src == 3
    h_r = longwave.h_rad_secant(1.0, 1.0, tsky, ta)
    out = balance.temp_sol_air(ta, 0.0, 0.9, 1.0, 17.0 - h_r, tsky, **HORIZONTAL)
    assert_allclose(out["h_e"], 17.0)
    correction = ta - out["temp_sol_air"]
    assert correction == pytest.approx(3.9, abs=1.5)


def test_surface_mode_converges_in_extremes():
    # tiny emissivity with huge solar gain and no convection, and a black surface under a
    # very cold sky: Newton must converge and agree with brentq
    cases = [(1e4, 0.04, 0.0, 30.0, -10.0), (0.0, 1.0, 0.0, 20.0, -100.0),
             (1200.0, 0.04, 0.5, 45.0, 20.0), (1000.0, 1.0, 200.0, -40.0, -70.0)]
    for ag, eps, hc, ta, tsky in cases:
        out = balance.temp_sol_air(ta, ag, 1.0, eps, hc, tsky, **HORIZONTAL,
                                   linearisation="surface")
        assert_allclose(out["temp_sol_air"] + K, _brentq_surface(ag, eps, hc, ta + K, tsky + K),
                        atol=1e-6)


def test_surface_mode_vectorised_year_by_surfaces():
    # one call for a year x 17 orientations, no Python loop over elements
    rng = np.random.default_rng(1)
    n = 8760
    ta = rng.uniform(-20, 40, (n, 1))
    tsky = ta - rng.uniform(0, 25, (n, 1))
    hc = rng.uniform(4, 30, (n, 1))
    g = np.clip(rng.normal(300, 300, (n, 17)), 0, 1100)
    tilt = np.r_[0.0, np.full(8, 45.0), np.full(8, 90.0)]
    fs, fa, fg = longwave.view_factors(tilt, sky_air_split=True)
    kw = {"view_sky": fs, "view_air": fa, "view_ground": fg}
    out = balance.temp_sol_air(ta, g, 0.9, 0.9, hc, tsky, **kw, linearisation="surface")
    assert out["temp_sol_air"].shape == (n, 17)
    res = balance.surface_balance_residual(out["temp_sol_air"], ta, g, 0.9, 0.9, hc, tsky, **kw)
    assert_allclose(res, 0.0, atol=1e-5)


@pytest.mark.parametrize("lin", ["air", "surface"])
@pytest.mark.parametrize("conventional", [False, True])
def test_broadcast_time_surface_finish(lin, conventional):
    # (time, 1, 1) weather, (1, surface, 1) geometry, (1, 1, finish) optics: each output has
    # the full shape and equals the element-by-element result
    ta = np.array([-5.0, 12.0, 31.0])[:, None, None]
    tsky = ta - np.array([18.0, 9.0, 3.0])[:, None, None]
    g = np.array([0.0, 300.0, 850.0])[:, None, None] * np.array([1.0, 0.6])[None, :, None]
    fs, fa, fg = (x[None, :, None] for x in longwave.view_factors(np.array([0.0, 90.0])))
    alpha = np.array([0.2, 0.5, 0.95])[None, None, :]
    kw = {"linearisation": lin, "conventional": conventional}
    out = balance.temp_sol_air(ta, g, alpha, 0.9, 10.0, tsky, view_sky=fs, view_air=fa,
                               view_ground=fg, **kw)
    for key in ("temp_sol_air", "h_rad", "h_e", "r_se", "h_conv"):
        assert out[key].shape == (3, 2, 3)
    i, j, k = 2, 1, 0
    one = balance.temp_sol_air(float(ta[i, 0, 0]), float(g[i, j, 0]), float(alpha[0, 0, k]), 0.9,
                               10.0, float(tsky[i, 0, 0]), view_sky=float(fs[0, j, 0]),
                               view_air=float(fa[0, j, 0]), view_ground=float(fg[0, j, 0]), **kw)
    assert_allclose(out["temp_sol_air"][i, j, k], one["temp_sol_air"], rtol=1e-12)


def test_surface_mode_zeroes_the_residual():
    ta, g, tsky = np.array([[5.0], [30.0]]), np.array([[0.0], [900.0]]), np.array([[-15.0], [15.0]])
    fs, fa, fg = longwave.view_factors(np.array([0.0, 45.0, 90.0]), sky_air_split=True)
    kw = {"view_sky": fs, "view_air": fa, "view_ground": fg}
    out = balance.temp_sol_air(ta, g, 0.8, 0.9, 8.0, tsky, linearisation="surface", **kw)
    res = balance.surface_balance_residual(out["temp_sol_air"], ta, g, 0.8, 0.9, 8.0, tsky, **kw)
    assert_allclose(res, 0.0, atol=1e-5)


def test_errors():
    with pytest.raises(ConfigurationError, match=r"linearisation 'exact' is not one of"):
        balance.temp_sol_air(20.0, 0.0, 0.5, 0.9, 10.0, 5.0, **HORIZONTAL, linearisation="exact")
    with pytest.raises(ConfigurationError,
                       match=r"temp_air holds 1 value\(s\) that are not finite"):
        balance.temp_sol_air(np.array([20.0, np.nan]), 0.0, 0.5, 0.9, 10.0, 5.0, **HORIZONTAL)
    with pytest.raises(ConfigurationError, match=r"emissivity .* in \[0, 1\]"):
        balance.temp_sol_air(20.0, 0.0, 0.5, 1.9, 10.0, 5.0, **HORIZONTAL)
    with pytest.raises(ConfigurationError, match="no heat"):
        balance.temp_sol_air(20.0, 100.0, 0.5, 0.0, 0.0, 5.0, **HORIZONTAL,
                             linearisation="surface")


# --- properties (hypothesis) -----------------------------------------------------------------

temps = st.floats(-40.0, 45.0)
fracs = st.floats(0.0, 1.0)
tilts = st.floats(0.0, 180.0)
lins = st.sampled_from(["air", "surface"])


def _views(tilt, split=True):
    fs, fa, fg = longwave.view_factors(tilt, sky_air_split=split)
    return {"view_sky": fs, "view_air": fa, "view_ground": fg}


@given(temps, st.floats(0.0, 1200.0), st.floats(0.01, 1.0), st.floats(0.0, 50.0), tilts, lins)
def test_no_absorption_and_sky_at_air_gives_air(ta, g, eps, hc, tilt, lin):
    # limit: alpha = 0 with T_sky = T_gnd = T_a leaves nothing to drive T_eq away from T_a
    out = balance.temp_sol_air(ta, g, 0.0, eps, hc, ta, **_views(tilt), linearisation=lin)
    assert_allclose(out["temp_sol_air"], ta, atol=1e-9)


@given(temps, st.floats(0.0, 1200.0), fracs, st.floats(0.05, 1.0), st.floats(0.0, 30.0), tilts)
def test_strong_wind_drives_teq_to_air(ta, g, alpha, eps, depression, tilt):
    # limit: T_eq -> T_a as the wind speed grows without bound (h_c = 4 + 4v)
    tsky = ta - depression
    diffs = [abs(balance.temp_sol_air(ta, g, alpha, eps, h_conv_iso6946(v), tsky,
                                      **_views(tilt))["temp_sol_air"] - ta)
             for v in (1.0, 100.0, 1e5)]
    assert diffs[0] + 1e-12 >= diffs[1] and diffs[1] + 1e-12 >= diffs[2]
    assert diffs[2] < 1e-2


@settings(max_examples=60)
@given(temps, st.floats(0.0, 1200.0), st.floats(0.0, 0.9), st.floats(0.01, 0.1),
       st.floats(0.05, 1.0), st.floats(1.0, 40.0), st.floats(0.0, 30.0), tilts, lins)
def test_teq_rises_with_absorptance_and_irradiance(ta, g, alpha, d_alpha, eps, hc, dep, tilt,
                                                   lin):
    kw = {**_views(tilt), "linearisation": lin}
    base = balance.temp_sol_air(ta, g, alpha, eps, hc, ta - dep, **kw)["temp_sol_air"]
    more_alpha = balance.temp_sol_air(ta, g, alpha + d_alpha, eps, hc, ta - dep, **kw)
    more_sun = balance.temp_sol_air(ta, g + 50.0, alpha + d_alpha, eps, hc, ta - dep, **kw)
    assert more_alpha["temp_sol_air"] >= base - 1e-9
    assert more_sun["temp_sol_air"] > more_alpha["temp_sol_air"]


@given(temps, st.floats(0.05, 1.0), st.floats(0.0, 60.0), st.floats(0.5, 30.0), lins)
def test_clear_night_horizontal_below_air(ta, eps, hc, dep, lin):
    # a horizontal surface on a clear night (no sun, sky colder than air) sits below the air
    out = balance.temp_sol_air(ta, 0.0, 0.9, eps, hc, ta - dep, **HORIZONTAL, linearisation=lin)
    assert out["temp_sol_air"] < ta


@given(temps, st.floats(0.0, 1200.0), fracs, fracs, st.floats(0.5, 60.0), st.floats(0.0, 40.0),
       st.floats(-10.0, 10.0), tilts, st.booleans())
def test_air_linearisation_reproduces_net_exchange_at_air(ta, g, alpha, eps, hc, dep, dground,
                                                          tilt, split):
    # identity of the secant linearisation about T_s = T_a:
    # h_e (T_eq - T_a) = alpha G + convection + long-wave at T_s = T_a
    kw = {**_views(tilt, split), "temp_ground": ta + dground}
    out = balance.temp_sol_air(ta, g, alpha, eps, hc, ta - dep, **kw)
    net = balance.surface_balance_residual(ta, ta, g, alpha, eps, hc, ta - dep, **kw)
    assert_allclose(out["h_e"] * (out["temp_sol_air"] - ta), net, rtol=0, atol=1e-9)


@settings(max_examples=60)
@given(temps, st.floats(0.0, 1200.0), fracs, st.floats(0.02, 1.0), st.floats(0.0, 60.0),
       st.floats(0.0, 40.0), tilts)
def test_surface_mode_matches_brentq(ta, g, alpha, eps, hc, dep, tilt):
    v = _views(tilt)
    out = balance.temp_sol_air(ta, g, alpha, eps, hc, ta - dep, **v, linearisation="surface")
    root = _brentq_surface(alpha * g, eps, hc, ta + K, ta - dep + K, float(v["view_sky"]),
                           float(v["view_air"]), float(v["view_ground"]))
    assert_allclose(out["temp_sol_air"] + K, root, atol=2e-6)


# --- the compiled element-wise kernel -----------------------------------------------------------

def _random_inputs(rng, shapes):
    """Balance inputs drawn at the given (broadcastable) shapes, keyed as temp_sol_air's."""
    ta = rng.uniform(-30.0, 45.0, shapes["ta"])
    tilt = rng.uniform(0.0, 180.0, shapes["view"])
    fs, fa, fg = longwave.view_factors(tilt, sky_air_split=True)
    return {
        "temp_air": ta,
        "poa_global": rng.uniform(0.0, 1100.0, shapes["g"]),
        "absorptance": rng.uniform(0.0, 1.0, shapes["optics"]),
        "emissivity": rng.uniform(0.02, 1.0, shapes["optics"]),
        "h_conv": rng.uniform(0.0, 60.0, shapes["g"]),
        "temp_sky": ta - rng.uniform(0.0, 35.0, shapes["ta"]),
        "temp_ground": ta + rng.uniform(-10.0, 15.0, shapes["ta"]),
        "view_sky": fs, "view_air": fa, "view_ground": fg,
    }


def _call(kw, **options):
    pos = [kw[k] for k in ("temp_air", "poa_global", "absorptance", "emissivity", "h_conv",
                           "temp_sky")]
    rest = {k: kw[k] for k in ("temp_ground", "view_sky", "view_air", "view_ground")}
    return balance.temp_sol_air(*pos, **rest, **options)


def test_kernel_matches_brentq_on_random_broadcast_inputs():
    # independent check: scipy's bracketing root finder (brentq) on the exact quartic, element by
    # element, for (time, 1, 1) weather, (time, surface, 1) irradiance and h_c, (1, surface, 1)
    # view factors (sky/air split, ground warmer or colder than air), (1, 1, finish) optics
    rng = np.random.default_rng(7)
    shapes = {"ta": (12, 1, 1), "g": (12, 5, 1), "view": (1, 5, 1), "optics": (1, 1, 5)}
    kw = _random_inputs(rng, shapes)
    out = _call(kw, linearisation="surface")
    t = out["temp_sol_air"]
    assert t.shape == (12, 5, 5)
    full = {k: np.broadcast_to(v, t.shape) for k, v in kw.items()}
    roots = np.empty(t.shape)
    for idx in np.ndindex(t.shape):
        v = {k: float(x[idx]) for k, x in full.items()}
        roots[idx] = _brentq_surface(v["absorptance"] * v["poa_global"], v["emissivity"],
                                     v["h_conv"], v["temp_air"] + K, v["temp_sky"] + K,
                                     v["view_sky"], v["view_air"], v["view_ground"],
                                     v["temp_ground"] + K)
    assert_allclose(t + K, roots, rtol=0, atol=1e-6)
    # and h_rad is the sum of the secant coefficients about that root (longwave.h_rad_secant)
    h = sum(longwave.h_rad_secant(full["emissivity"], full[f"view_{x}"], full[temp], t)
            for x, temp in (("sky", "temp_sky"), ("air", "temp_air"), ("ground", "temp_ground")))
    assert_allclose(out["h_rad"], h, rtol=1e-12)
    assert_allclose(out["h_e"], out["h_rad"] + out["h_conv"], rtol=1e-14)
    assert_allclose(out["r_se"], 1.0 / out["h_e"], rtol=1e-14)


SHAPES_BY_NDIM = {
    0: {"ta": (), "g": (), "view": (), "optics": ()},
    1: {"ta": (6,), "g": (6,), "view": (1,), "optics": ()},
    2: {"ta": (6, 1), "g": (6, 3), "view": (3,), "optics": (1, 1)},
    3: {"ta": (4, 1, 1), "g": (4, 3, 1), "view": (1, 3, 1), "optics": (2,)},
    4: {"ta": (2, 3, 1, 1), "g": (2, 3, 4, 1), "view": (1, 1, 4, 1), "optics": (1, 3, 1, 2)},
}


@pytest.mark.parametrize("lin", ["air", "surface"])
@pytest.mark.parametrize("ndim", sorted(SHAPES_BY_NDIM))
def test_any_ndim_equals_elementwise_calls(ndim, lin):
    # the kernel loops over a canonical 3-D shape (leading axes added or merged): every shape
    # gives, element by element, the values of one call with scalar inputs
    rng = np.random.default_rng(ndim)
    kw = _random_inputs(rng, SHAPES_BY_NDIM[ndim])
    out = _call(kw, linearisation=lin)
    shape = np.broadcast_shapes(*(np.shape(v) for v in kw.values()))
    assert len(shape) == ndim
    for key in ("temp_sol_air", "h_rad", "h_e", "h_conv", "r_se", "h_rad_sky", "h_rad_air",
                "h_rad_ground"):
        assert out[key].shape == shape
        assert np.all(np.isfinite(out[key]))
    for idx in np.ndindex(shape):
        one = _call({k: float(np.broadcast_to(v, shape)[idx]) for k, v in kw.items()},
                    linearisation=lin)
        for key in ("temp_sol_air", "h_rad", "h_e", "r_se", "h_rad_sky"):
            assert_allclose(out[key][idx], one[key], rtol=1e-13, atol=1e-13)
    assert_allclose(out["h_rad_sky"] + out["h_rad_air"] + out["h_rad_ground"], out["h_rad"],
                    rtol=1e-12)


@pytest.mark.parametrize("lin", ["air", "surface"])
def test_broadcast_finish_axis_equals_materialised_inputs(lin):
    # the kernel computes the weather and view-factor terms once per (time, surface) when
    # those inputs are broadcast along the finish axis (stride 0), else per element: both
    # paths do the same operations (ASTM E1980-11 surface balance), so the results are equal
    # to the last bit
    rng = np.random.default_rng(11)
    ta = rng.uniform(-20.0, 40.0, (50, 1, 1))
    tsky = ta - rng.uniform(0.0, 25.0, (50, 1, 1))
    g = rng.uniform(0.0, 1000.0, (50, 3, 1))
    fs, fa, fg = (x[None, :, None] for x in longwave.view_factors(np.array([0.0, 45.0, 90.0])))
    alpha = np.array([0.1, 0.5, 0.9, 0.95])[None, None, :]
    eps = np.array([0.9, 0.3, 0.85, 0.05])[None, None, :]
    hc = rng.uniform(2.0, 30.0, (50, 3, 1))
    kw = {"linearisation": lin}
    ref = balance.temp_sol_air(ta, g, alpha, eps, hc, tsky, view_sky=fs, view_air=fa,
                               view_ground=fg, **kw)

    def full(x):  # a writable C array of the full shape: finish-axis stride not 0
        return np.ascontiguousarray(np.broadcast_to(x, (50, 3, 4)))

    out = balance.temp_sol_air(full(ta), g, alpha, eps, hc, full(tsky), view_sky=full(fs),
                               view_air=full(fa), view_ground=full(fg), **kw)
    for key in ("temp_sol_air", "h_rad", "h_e", "r_se"):
        assert_allclose(out[key], ref[key], rtol=0, atol=0, err_msg=key)


@pytest.mark.parametrize("lin", ["air", "surface"])
def test_read_only_and_non_contiguous_inputs(lin):
    # broadcast views (read-only), Fortran order, strided slices and writable C arrays all give
    # the same values, through one compiled specialisation of the kernel
    rng = np.random.default_rng(3)
    kw = _random_inputs(rng, {"ta": (10, 6), "g": (10, 6), "view": (10, 6), "optics": (10, 6)})
    ref = _call(kw, linearisation=lin)
    variants = {
        "fortran": {k: np.asfortranarray(v) for k, v in kw.items()},
        "strided": {k: np.repeat(v, 2, axis=1)[:, ::2] for k, v in kw.items()},
        "read-only": {k: np.broadcast_to(v, v.shape) for k, v in kw.items()},
        "transposed": {k: np.ascontiguousarray(v.T).T for k, v in kw.items()},
    }
    for name, args in variants.items():
        assert not args["temp_air"].flags.c_contiguous or name == "read-only", name
        out = _call(args, linearisation=lin)
        for key in ("temp_sol_air", "h_rad", "h_e", "r_se"):
            assert_allclose(out[key], ref[key], rtol=0, atol=0, err_msg=f"{name} {key}")
    assert len(balance._balance_kernel().signatures) == 1


def test_kernel_error_paths():
    kw = {**HORIZONTAL, "linearisation": "surface"}
    # no exchange at one element: it is named by its index in the broadcast shape
    eps = np.array([[0.9, 0.9], [0.9, 0.0]])
    for lin in ("air", "surface"):
        with pytest.raises(ConfigurationError,
                           match=r"h_e = h_conv \+ h_rad is below 1e-06 .* at element \(1, 1\)"):
            balance.temp_sol_air(20.0, 100.0, 0.5, eps, 0.0, 5.0, **{**kw, "linearisation": lin})
    # too few Newton steps: the largest last step is reported
    with pytest.raises(ConfigurationError,
                       match=r"did not converge to 1e-06 K in 1 Newton steps \(largest last step "
                             r"[0-9.e+-]+ K\)"):
        balance.temp_sol_air(20.0, 1000.0, 0.9, 0.9, 5.0, -20.0, **kw, max_iter=1)
    # alpha G so large that T_eq is not representable: an error, never inf
    for lin in ("air", "surface"):
        with pytest.raises(ConfigurationError, match=r"overflows at element \(1,\)"):
            balance.temp_sol_air(20.0, np.array([100.0, 1e308]), 1.0, 1e-9, 1e-6, 5.0,
                                 **{**kw, "linearisation": lin})


@pytest.mark.parametrize("lin", ["air", "surface"])
@pytest.mark.parametrize("conventional", [False, True])
@pytest.mark.parametrize("wanted", [("temp_sol_air", "h_e", "h_conv"), ("r_se",), ("h_rad",),
                                    ("h_rad_air", "temp_sol_air"), ("h_rad_ground",)])
def test_variables_subset_equals_full_call(lin, conventional, wanted):
    """``variables`` returns exactly the outputs asked for, each equal to the full call's
    (the compiled kernel then skips the stores of the others)."""
    ta = np.array([-5.0, 12.0, 31.0])[:, None, None]
    tsky = ta - np.array([18.0, 9.0, 3.0])[:, None, None]
    g = np.array([0.0, 300.0, 850.0])[:, None, None] * np.array([1.0, 0.6])[None, :, None]
    fs, fa, fg = (x[None, :, None] for x in longwave.view_factors(np.array([0.0, 90.0])))
    alpha = np.array([0.2, 0.5, 0.95])[None, None, :]
    kw = {"view_sky": fs, "view_air": fa, "view_ground": fg, "linearisation": lin,
          "conventional": conventional}
    full = balance.temp_sol_air(ta, g, alpha, 0.9, 10.0, tsky, **kw)
    part = balance.temp_sol_air(ta, g, alpha, 0.9, 10.0, tsky, variables=wanted, **kw)
    assert set(part) == set(wanted)
    for key in wanted:
        assert part[key].shape == (3, 2, 3)
        assert_allclose(part[key], full[key], rtol=0, atol=0)


def test_variables_unknown_name_lists_the_allowed_ones():
    with pytest.raises(ConfigurationError, match=r"\['h_sky'\].*allowed.*'temp_sol_air'.*'r_se'"):
        balance.temp_sol_air(20.0, 500.0, 0.5, 0.9, 10.0, 5.0, view_sky=1.0, view_air=0.0,
                             view_ground=0.0, variables=("temp_sol_air", "h_sky"))


def test_unconverged_block_reports_the_largest_last_step_of_its_elements():
    # a block where some elements do not converge in max_iter Newton steps goes through the
    # kernel's element-by-element path: the largest last step reported is the largest of
    # the one-element calls' (the same steps; ASTM E1980-11 balance)
    rng = np.random.default_rng(5)
    n = balance._BLOCK + 9
    kw = {"temp_air": rng.uniform(-30, 45, n), "poa_global": rng.uniform(0, 1100, n),
          "absorptance": rng.uniform(0, 1, n), "emissivity": rng.uniform(0.05, 0.95, n),
          "h_conv": rng.uniform(0.5, 40, n), "temp_sky": rng.uniform(-60, 20, n)}

    def largest(**args):
        try:
            balance.temp_sol_air(**args, **HORIZONTAL, linearisation="surface", max_iter=2)
        except ConfigurationError as err:
            return float(str(err).split("largest last step ")[1].split(" K")[0])
        return 0.0

    each = max(largest(**{k: v[i] for k, v in kw.items()}) for i in range(n))
    assert each > 0.0
    assert_allclose(largest(**kw), each, rtol=1e-2)  # the message prints 3 digits


def test_kernel_blocks_equal_one_element_calls_and_name_the_failing_element():
    # the kernel iterates Newton on blocks of balance._BLOCK elements at once; more than two
    # blocks of mixed inputs (each element needing its own number of steps) give the values
    # of one call per element (the same steps: identical), and an element without exchange
    # in the middle of a later block is the one named, as element by element
    rng = np.random.default_rng(11)
    n = 2 * balance._BLOCK + 37
    kw = {"temp_air": rng.uniform(-30, 45, n), "poa_global": rng.uniform(0, 1100, n),
          "absorptance": rng.uniform(0, 1, n), "emissivity": rng.uniform(0.05, 0.95, n),
          "h_conv": rng.uniform(0.5, 40, n), "temp_sky": rng.uniform(-60, 20, n)}
    out = balance.temp_sol_air(**kw, **HORIZONTAL, linearisation="surface")
    for idx in (0, 1, balance._BLOCK - 1, balance._BLOCK, n - 1):
        one = balance.temp_sol_air(**{k: v[idx] for k, v in kw.items()}, **HORIZONTAL,
                                   linearisation="surface")
        for key in ("temp_sol_air", "h_rad", "h_e", "r_se"):
            assert_allclose(out[key][idx], one[key], rtol=0, atol=0)
    at = balance._BLOCK + 100
    eps, hc = kw["emissivity"].copy(), kw["h_conv"].copy()
    eps[at], hc[at] = 0.0, 0.0
    for lin in ("air", "surface"):
        with pytest.raises(ConfigurationError, match=rf"below 1e-06 .* at element \({at},\)"):
            balance.temp_sol_air(**{**kw, "emissivity": eps, "h_conv": hc}, **HORIZONTAL,
                                 linearisation=lin)
