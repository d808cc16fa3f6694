"""Transient conduction (solair.conduction, solair.response) and constructions.

Sources: ISO 13786:2017 (periodic heat transfer matrix of a homogeneous layer and
of surface resistances, periodic thermal transmittance Y_12, decrement factor
f = |Y_12|/U and time shift); ISO 6946:2017 (U = 1/(R_si + sum d/lambda + R_se),
Table 7 surface resistances); scipy.linalg.solve_banded as the reference
tridiagonal solver.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg
from numpy.testing import assert_allclose

from solair import conduction
from solair.constructions import CONSTRUCTIONS, R_SI, Construction, Layer, r_si
from solair.errors import ConfigurationError
from solair.response import surface_response

PERIOD = 86400.0
OMEGA = 2 * np.pi / PERIOD


def iso13786_y12(layers, r_se, r_si_):
    """Periodic thermal transmittance Y_12 after ISO 13786:2017 (24 h period).

    Layer matrix: Z11 = Z22 = cosh((1+i) xi), Z12 = -(delta / 2 lambda)(1-i) sinh((1+i) xi),
    Z21 = -(lambda / delta)(1+i) sinh((1+i) xi), xi = d / delta,
    delta = sqrt(lambda T / (pi rho c)); surface matrix [[1, -R], [0, 1]];
    Z = Z_si Z_n ... Z_1 Z_se and Y_12 = -1 / Z12.
    """
    z = np.array([[1, -r_se], [0, 1]], dtype=complex)
    for d, lam, rho, c in layers:
        delta = np.sqrt(lam * PERIOD / (np.pi * rho * c))
        x = (1 + 1j) * d / delta
        zl = np.array([[np.cosh(x), -(delta / (2 * lam)) * (1 - 1j) * np.sinh(x)],
                       [-(lam / delta) * (1 + 1j) * np.sinh(x), np.cosh(x)]])
        z = zl @ z
    z = np.array([[1, -r_si_], [0, 1]]) @ z
    return -1.0 / z[0, 1]


def _fit(values, t_mid):
    m = np.c_[np.ones_like(t_mid), np.cos(OMEGA * t_mid), np.sin(OMEGA * t_mid)]
    c = np.linalg.lstsq(m, values, rcond=None)[0]
    return c[0], np.hypot(c[1], c[2]), np.arctan2(c[2], c[1])


@pytest.mark.parametrize("layers", [
    [(0.20, 1.0, 2000.0, 1000.0)],   # dense concrete-like slab
    [(0.30, 2.0, 2400.0, 1000.0)],   # heavy slab, long time shift
    [(0.25, 0.2, 800.0, 1000.0)],    # light masonry block
])
def test_iso13786_decrement_factor_and_time_shift(layers):
    h_e, r_si_ = 25.0, 0.13
    cons = Construction("slab", tuple(Layer(f"l{i}", *ly) for i, ly in enumerate(layers)))
    n_days = 20
    t_end = np.arange(1, n_days * 24 + 1) * 3600.0
    # hourly means over (t - 1 h, t] of T_eq = 30 + 10 sin(omega t), as a weather file holds
    t_eq = 30.0 + 10.0 * (np.cos(OMEGA * (t_end - 3600)) - np.cos(OMEGA * t_end)) / (OMEGA * 3600)
    res = surface_response(t_eq[:, None], h_e, model="transient", construction=cons,
                           temp_indoor=20.0, r_inside=r_si_, spinup_days=0)
    last = slice(-5 * 24, None)                      # start-up died out after 15 days
    t_mid = t_end[last] - 1800.0
    mean_q, amp_q, ph_q = _fit(res["heat_flux"][last, 0], t_mid)
    mean_e, amp_e, ph_e = _fit(t_eq[last], t_mid)
    u = 1.0 / (1 / h_e + sum(d / lam for d, lam, _, _ in layers) + r_si_)
    y = iso13786_y12(layers, 1 / h_e, r_si_)
    # Holding hourly means for the hour and averaging the output over the hour each damp
    # the daily harmonic by sinc(omega 1h / 2): exact property of hourly data, applied here.
    hold = np.sinc(OMEGA * 3600 / 2 / np.pi) ** 2
    f_num = amp_q / (u * amp_e)
    assert_allclose(f_num, abs(y) / u * hold, rtol=0.01)
    lag_num = ((ph_q - ph_e) / OMEGA / 3600) % 24
    lag_iso = (-np.angle(y) / OMEGA / 3600) % 24
    assert abs(lag_num - lag_iso) < 0.1
    # long-run mean flux = steady U (mean T_eq - T_i)
    assert_allclose(mean_q, u * (mean_e - 20.0), rtol=0.01)


def test_iso13786_two_layers_insulated_outside():
    # ISO 13786:2017 matrix product for a layered element; same tolerances.
    layers = [(0.10, 0.035, 20.0, 1450.0), (0.20, 2.0, 2400.0, 1000.0)]
    cons = Construction("two", tuple(Layer(f"l{i}", *ly) for i, ly in enumerate(layers)))
    t_end = np.arange(1, 30 * 24 + 1) * 3600.0
    t_eq = 20.0 + 10.0 * (np.cos(OMEGA * (t_end - 3600)) - np.cos(OMEGA * t_end)) / (OMEGA * 3600)
    res = surface_response(t_eq[:, None], 25.0, model="transient", construction=cons,
                           temp_indoor=20.0, r_inside=0.13, spinup_days=0)
    last = slice(-5 * 24, None)
    t_mid = t_end[last] - 1800.0
    _, amp_q, ph_q = _fit(res["heat_flux"][last, 0], t_mid)
    _, amp_e, ph_e = _fit(t_eq[last], t_mid)
    u = 1.0 / (0.04 + 0.10 / 0.035 + 0.20 / 2.0 + 0.13)
    y = iso13786_y12(layers, 0.04, 0.13)
    hold = np.sinc(OMEGA * 3600 / 2 / np.pi) ** 2
    assert_allclose(amp_q / (u * amp_e), abs(y) / u * hold, rtol=0.01)
    assert abs(((ph_q - ph_e) / OMEGA / 3600) % 24 - (-np.angle(y) / OMEGA / 3600) % 24) < 0.1


def _synthetic_year(shape=(3, 2), seed=1):
    rng = np.random.default_rng(seed)
    h = np.arange(8760)
    t_eq = (12 + 12 * np.sin(2 * np.pi * h / 24) + 10 * np.sin(2 * np.pi * (h / 8760 - 0.25)))
    t_eq = t_eq.reshape((-1,) + (1,) * len(shape)) + rng.normal(0, 4, (8760, *shape))
    h_e = 12 + 10 * rng.random((8760, *shape))
    return t_eq, h_e


@pytest.mark.parametrize("scheme", ["bdf2", "euler"])
def test_energy_conservation_over_a_year(scheme):
    # discrete energy balance of the implicit scheme: stored heat change = net boundary
    # heat over the year, to 1e-6 of the heat passing the boundaries
    t_eq, h_e = _synthetic_year()
    res = surface_response(t_eq, h_e, model="transient",
                           construction=CONSTRUCTIONS["insulated_membrane_roof"],
                           surface_tilt=np.array([0.0, 90.0]), scheme=scheme)
    e = res["energy"]
    err = (e["stored_end"] - e["stored_start"]) - (e["into"] - e["out_of"])
    assert np.all(np.abs(err) <= 1e-6 * e["gross"])


def test_energy_conservation_with_dew_and_nonlinear_exterior():
    rng = np.random.default_rng(3)
    n = 24 * 60
    h = np.arange(n)
    ta = 5 + 6 * np.sin(2 * np.pi * h / 24)
    shape = (n, 2, 2)
    balance = {"temp_air": ta[:, None, None], "poa_global": np.maximum(0, 600 * np.sin(
        2 * np.pi * (h - 6) / 24))[:, None, None], "absorptance": np.array([0.3, 0.9]),
        "emissivity": np.array([[0.9], [0.1]]), "h_conv": 5 + 10 * rng.random(shape),
        "temp_sky": (ta - 18)[:, None, None], "temp_ground": ta[:, None, None],
        "view_sky": 1.0, "view_air": 0.0, "view_ground": 0.0}
    dew = {"temp_air": ta[:, None, None], "temp_dew": (ta - 2)[:, None, None],
           "pressure": 101325.0, "h_conv": balance["h_conv"]}
    res = surface_response(np.zeros(shape), 20.0, model="transient", exterior="nonlinear",
                           balance=balance, dew=dew,
                           construction=CONSTRUCTIONS["metal_deck_roof"])
    e = res["energy"]
    err = (e["stored_end"] - e["stored_start"]) - (e["into"] - e["out_of"])
    assert np.all(np.abs(err) <= 1e-6 * e["gross"])
    assert res["condensation"].max() > 0


def test_batched_equals_one_column_at_a_time():
    t_eq, h_e = _synthetic_year(shape=(2, 2))
    t_eq, h_e = t_eq[:1500], h_e[:1500]
    cons = CONSTRUCTIONS["etics_wall"]
    tilt = np.array([[0.0], [90.0]])
    allc = surface_response(t_eq, h_e, construction=cons, surface_tilt=tilt)["temp_surface"]
    one = surface_response(t_eq[:, 1, 0], h_e[:, 1, 0], construction=cons,
                           surface_tilt=90.0)["temp_surface"]
    assert_allclose(allc[:, 1, 0], one, atol=1e-9)


def test_batched_thomas_matches_scipy_solve_banded():
    rng = np.random.default_rng(0)
    n, cols = 12, 5
    lower = -rng.random((n, cols))
    upper = -rng.random((n, cols))
    diag = 3 + rng.random((n, cols))
    rhs = rng.normal(size=(n, cols))
    x = conduction.solve_tridiagonal(lower, diag, upper, rhs)
    for c in range(cols):
        ab = np.zeros((3, n))
        ab[0, 1:] = upper[:-1, c]
        ab[1] = diag[:, c]
        ab[2, :-1] = lower[1:, c]
        assert_allclose(x[:, c], scipy.linalg.solve_banded((1, 1), ab, rhs[:, c]), rtol=1e-12)


def test_closed_form_sweeps_equal_recursive_sweeps():
    grid = conduction.build_grid(CONSTRUCTIONS["insulated_membrane_roof"])
    fac = conduction.factorise(grid, 600.0, np.array([10.0, 7.7]), storage=1.5)
    rng = np.random.default_rng(2)
    b = rng.normal(size=(grid.n_nodes, 2)) * 100
    r = conduction.eliminate(fac, b.copy(), 0.0)
    assert_allclose(fac.reduce(b), r[0], rtol=1e-12)
    t0 = np.array([3.0, -4.0])
    assert_allclose(fac.solve(b, t0), conduction.back_substitute(fac, r, t0), rtol=1e-10,
                    atol=1e-10)
    # and the result solves the full tridiagonal system with the surface node fixed
    k = grid.conductance
    d = 1.5 * grid.capacity / 600.0
    diag = np.repeat(d[:, None], 2, axis=1)
    diag[:-1] += k[:, None]
    diag[1:] += k[:, None]
    diag[-1] += fac.h_in
    t = fac.solve(b, t0)
    lhs = diag * t
    lhs[:-1] -= k[:, None] * t[1:]
    lhs[1:] -= k[:, None] * t[:-1]
    assert_allclose(lhs[1:], b[1:], rtol=1e-9, atol=1e-9)


def test_grid_cells_follow_the_penetration_depth():
    cons = CONSTRUCTIONS["heavy_concrete_roof"]
    grid = conduction.build_grid(cons)
    assert_allclose(grid.resistance, cons.resistance, rtol=1e-12)
    assert_allclose(grid.capacity.sum(), cons.heat_capacity, rtol=1e-12)
    dx = np.diff(grid.position)
    assert dx.max() <= 0.02 + 1e-12


def test_steady_response_is_the_resistance_network():
    # ISO 6946 network: T_s = (h_e T_eq + U' T_i) / (h_e + U'), q = U' (T_s - T_i)
    cons = CONSTRUCTIONS["etics_wall"]
    t_eq = np.array([-10.0, 0.0, 35.0, 50.0])
    res = surface_response(t_eq[:, None], 20.0, model="steady", construction=cons,
                           surface_tilt=90.0, temp_indoor=20.0)
    up = 1 / (cons.resistance + R_SI["horizontal"])
    ts = (20 * t_eq + up * 20) / (20 + up)
    assert_allclose(res["temp_surface"][:, 0], ts, rtol=1e-12)
    assert_allclose(res["heat_flux"][:, 0], up * (ts - 20), rtol=1e-12)


def test_steady_roof_uses_direction_dependent_r_si():
    res = surface_response(np.array([[-5.0], [45.0]]), 25.0, model="steady", resistance=2.0,
                           surface_tilt=0.0, temp_indoor=20.0)
    u_loss = 1 / (1 / 25 + 2.0 + 0.10)     # heat flowing out of a roof: up, R_si 0.10
    u_gain = 1 / (1 / 25 + 2.0 + 0.17)     # into the building through a roof: down, 0.17
    assert_allclose(res["heat_flux"][:, 0], [u_loss * -25, u_gain * 25], rtol=1e-12)


def test_massless_linear_is_the_sol_air_temperature():
    t_eq = np.array([[1.0, 2.0], [30.0, 60.0]])
    res = surface_response(t_eq, 17.0, model="massless")
    assert_allclose(res["temp_surface"], t_eq, rtol=1e-14)
    assert np.all(res["heat_flux"] == 0)


def test_iso6946_u_values_and_r_si():
    # ISO 6946:2017 Table 7: R_si 0.10 up, 0.13 horizontal (within 30 deg), 0.17 down
    assert_allclose(r_si([0, 45, 59, 60, 90, 120, 150, 180], False),
                    [0.10, 0.10, 0.10, 0.13, 0.13, 0.13, 0.17, 0.17])
    assert_allclose(r_si(0, True), 0.17)
    c = CONSTRUCTIONS["insulated_membrane_roof"]
    r = 0.0015 / 0.17 + 0.12 / 0.025 + 0.20 / 2.3 + 0.015 / 0.57
    assert_allclose(c.u_value(0.0), 1 / (0.10 + r + 0.04), rtol=1e-12)
    assert_allclose(c.u_value(90.0), 1 / (0.13 + r + 0.04), rtol=1e-12)
    assert_allclose(c.u_value(0.0, heat_flow="inward"), 1 / (0.17 + r + 0.04), rtol=1e-12)


def test_library_has_the_typical_constructions():
    for name in ("insulated_membrane_roof", "metal_deck_roof", "heavy_concrete_roof",
                 "etics_wall", "cavity_brick_wall"):
        assert CONSTRUCTIONS[name].source
    assert (CONSTRUCTIONS["heavy_concrete_roof"].heat_capacity
            > 10 * CONSTRUCTIONS["metal_deck_roof"].heat_capacity)


def test_errors():
    t = np.zeros((24, 1))
    with pytest.raises(ConfigurationError, match="'transient' needs a construction"):
        surface_response(t, 20.0)
    with pytest.raises(ConfigurationError, match="response model 'fast' is not one of"):
        surface_response(t, 20.0, model="fast")
    with pytest.raises(ConfigurationError, match="time scheme 'rk4' is not one of"):
        surface_response(t, 20.0, scheme="rk4", construction=CONSTRUCTIONS["etics_wall"])
    with pytest.raises(ConfigurationError, match="needs the balance inputs"):
        surface_response(t, 20.0, model="massless", exterior="nonlinear")
    with pytest.raises(ConfigurationError, match="h_ext must be > 0"):
        surface_response(t, 0.0, model="massless")
    with pytest.raises(ConfigurationError, match="NaN"):
        surface_response(t + np.nan, 10.0, model="massless")
    with pytest.raises(ConfigurationError, match="needs a construction or a resistance"):
        surface_response(t, 10.0, model="steady")
    with pytest.raises(ConfigurationError, match="layer 'x': thickness = 0.0 must be > 0"):
        Construction("c", (Layer("x", 0.0, 1.0, 1.0, 1.0),))
