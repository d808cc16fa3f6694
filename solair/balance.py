"""The exterior surface balance: sol-air temperature T_eq, h_e and R_se.

A sunlit outer surface gains α G of solar radiation, exchanges heat by
convection with the air and by long-wave radiation with the sky, the
near-horizon air and the ground:

.. math::

    q = \\alpha G + h_c (T_a - T_s)
        + \\varepsilon\\sigma \\sum_x F_x (T_x^4 - T_s^4), \\qquad x \\in \\{sky, air, gnd\\}

With secant radiative coefficients :math:`h_{r,x}` (:func:`solair.longwave.h_rad_secant`)
it becomes :math:`q = h_e (T_{eq} - T_s)` with

.. math::

    T_{eq} = \\frac{h_c T_a + \\sum_x h_{r,x} T_x + \\alpha G}{h_e}, \\qquad
    h_e = h_c + \\sum_x h_{r,x}, \\qquad R_{se} = 1/h_e

The linearisation point of :math:`h_{r,x}` is the air temperature
(``linearisation="air"``, one pass) or the surface solution itself
(``"surface"``): then T_eq is the temperature of a massless adiabatic surface,
the surface temperature of ASTM E1980-11.

References
----------
.. [1] ASHRAE (2017). Handbook - Fundamentals, ch. 18, "Sol-air temperature".
.. [2] ASTM E1980-11 (2019). Standard Practice for Calculating Solar
   Reflectance Index of Horizontal and Low-Sloped Opaque Surfaces.
.. [3] ISO 6946:2017, Annex C.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from solair.errors import ConfigurationError
from solair.longwave import KELVIN, SIGMA

__all__ = ["LINEARISATIONS", "H_E_CONVENTIONAL", "temp_sol_air", "surface_balance_residual"]

Array = NDArray[np.float64]

#: Allowed linearisation points of the radiative coefficients.
LINEARISATIONS = frozenset({"air", "surface"})
#: h_e = 1/R_se of the ISO 6946 conventional R_se = 0.04 m2 K W-1.
H_E_CONVENTIONAL = 25.0
#: Smallest h_e accepted [W m-2 K-1]: below it the surface is taken to exchange no heat.
H_E_MIN = 1e-6


def _as_checked(name: str, value: ArrayLike, low: float = -np.inf, high: float = np.inf) -> Array:
    arr = np.asarray(value, dtype=float)
    if arr.size == 0:
        return arr
    lo, hi = np.min(arr), np.max(arr)  # NaN propagates: one pass each, no temporaries
    if np.isfinite(lo) and np.isfinite(hi) and lo >= low and hi <= high:
        return arr
    bad = ~np.isfinite(arr) | (arr < low) | (arr > high)
    if np.any(bad):
        bounded = not (np.isinf(low) and np.isinf(high))
        allowed = f"finite and in [{low:g}, {high:g}]" if bounded else "finite"
        raise ConfigurationError(
            f"{name} holds {int(np.count_nonzero(bad))} value(s) that are not {allowed}, "
            f"e.g. {arr[bad].ravel()[0]!r}"
        )
    return arr


def _inputs(temp_air, poa_global, absorptance, emissivity, h_conv, temp_sky, temp_ground,
            view_sky, view_air, view_ground):
    ta = _as_checked("temp_air", temp_air, -KELVIN, 1e4)
    tg = ta if temp_ground is None else _as_checked("temp_ground", temp_ground, -KELVIN, 1e4)
    return (
        ta,
        _as_checked("poa_global", poa_global),
        _as_checked("absorptance", absorptance, 0.0, 1.0),
        _as_checked("emissivity", emissivity, 0.0, 1.0),
        _as_checked("h_conv", h_conv, 0.0),
        _as_checked("temp_sky", temp_sky, -KELVIN, 1e4),
        tg,
        _as_checked("view_sky", view_sky, 0.0, 1.0),
        _as_checked("view_air", view_air, 0.0, 1.0),
        _as_checked("view_ground", view_ground, 0.0, 1.0),
    )


def surface_balance_residual(
    temp_surface: ArrayLike,
    temp_air: ArrayLike,
    poa_global: ArrayLike,
    absorptance: ArrayLike,
    emissivity: ArrayLike,
    h_conv: ArrayLike,
    temp_sky: ArrayLike,
    *,
    temp_ground: ArrayLike | None = None,
    view_sky: ArrayLike,
    view_air: ArrayLike,
    view_ground: ArrayLike,
    sigma: float = SIGMA,
) -> Array:
    r"""Net heat flux into the outer surface at a given surface temperature [W m-2].

    .. math::

        q = \alpha G + h_c (T_a - T_s) + \varepsilon\sigma\left[F_{sky}(T_{sky}^4 - T_s^4)
            + F_{air}(T_a^4 - T_s^4) + F_{gnd}(T_{gnd}^4 - T_s^4)\right]

    Zero at the massless adiabatic surface temperature. Temperatures in °C
    (K inside); the ground is at air temperature when ``temp_ground`` is None.
    """
    ta, g, a, e, hc, tsky, tg, fs, fa, fg = _inputs(
        temp_air, poa_global, absorptance, emissivity, h_conv, temp_sky, temp_ground,
        view_sky, view_air, view_ground)
    ts = np.asarray(temp_surface, dtype=float) + KELVIN
    ta_k, tsky_k, tg_k = ta + KELVIN, tsky + KELVIN, tg + KELVIN
    ts4 = ts**4
    lw = e * sigma * (fs * (tsky_k**4 - ts4) + fa * (ta_k**4 - ts4) + fg * (tg_k**4 - ts4))
    return a * g + hc * (ta_k - ts) + lw


def _newton_surface(q0, hc, esf, t0, tol, max_iter, shape):
    """Solve q0 - hc T - esf T^4 = 0 for T [K] by vectorised Newton (global for T > 0)."""
    t = np.broadcast_to(np.maximum(t0, 1.0), shape).copy()
    # full-shape contiguous operands: numpy's inner loops then run over the whole array
    # instead of over a size-4 finish axis broadcast against a time x surface one
    hc = np.array(np.broadcast_to(hc, shape), dtype=float)
    esf = np.array(np.broadcast_to(esf, shape), dtype=float)
    q0 = np.array(np.broadcast_to(q0, shape), dtype=float)
    step = np.empty(shape)
    den = np.empty(shape)
    for _ in range(max_iter):
        np.multiply(t, t, out=step)
        step *= t
        step *= esf  # esf T^3
        np.multiply(step, 4.0, out=den)
        den += hc  # derivative of hc T + esf T^4
        step += hc
        step *= t  # hc T + esf T^4
        np.subtract(q0, step, out=step)
        step /= den
        t += step
        largest = max(np.max(step), -np.min(step))
        if largest <= tol:
            return t
        if not np.isfinite(largest):  # hc + 4 esf T^3 = 0 somewhere: nothing to balance
            raise ConfigurationError(
                "h_conv and emissivity x view factors are all zero for some element: "
                "the surface exchanges no heat (h_e = 0)")
    raise ConfigurationError(
        f"surface balance did not converge to {tol:g} K in {max_iter} Newton steps "
        f"(largest last step {largest:.3g} K); check the inputs' magnitudes"
    )


def temp_sol_air(
    temp_air: ArrayLike,
    poa_global: ArrayLike,
    absorptance: ArrayLike,
    emissivity: ArrayLike,
    h_conv: ArrayLike,
    temp_sky: ArrayLike,
    *,
    temp_ground: ArrayLike | None = None,
    view_sky: ArrayLike,
    view_air: ArrayLike,
    view_ground: ArrayLike,
    linearisation: str = "air",
    conventional: bool = False,
    tol: float = 1e-6,
    sigma: float = SIGMA,
    max_iter: int = 100,
    components: bool = True,
) -> dict[str, Array]:
    r"""Sol-air (exterior equivalent) temperature, h_e and R_se of an outer surface.

    .. math::

        T_{eq} = \frac{h_c T_a + h_{r,sky} T_{sky} + h_{r,air} T_a + h_{r,gnd} T_{gnd}
                       + \alpha G}{h_e},
        \qquad h_e = h_c + \sum_x h_{r,x}, \qquad R_{se} = 1/h_e

    with :math:`h_{r,x} = \varepsilon\sigma F_x (T_x^2 + T_{ref}^2)(T_x + T_{ref})`.

    * ``linearisation="air"``: :math:`T_{ref} = T_a` (one pass). Then
      :math:`h_e (T_{eq} - T_a)` equals the net exchange of a surface at T_a.
    * ``linearisation="surface"``: :math:`T_{ref}` is the massless adiabatic
      surface temperature, the root of :func:`surface_balance_residual`, found
      by vectorised Newton iteration on the exact quartic to ``tol`` K (the
      residual is concave and decreasing in T_s, so Newton converges from any
      positive start); then :math:`T_{eq} = T_{ref}`, ASTM E1980's surface
      temperature.
    * ``conventional=True``: ISO 6946's conventional R_se = 0.04 m2 K W-1, i.e.
      h_e fixed at 25 W m-2 K-1 and h_c = 25 - Σ h_r,x (the given ``h_conv`` is
      not used); with "surface" the h_r,x are evaluated at the solution by
      fixed-point iteration.

    Parameters
    ----------
    temp_air : array_like
        Air temperature [°C].
    poa_global : array_like
        Solar irradiance on the plane G [W m-2].
    absorptance : array_like
        Solar absorptance α [-].
    emissivity : array_like
        Thermal emissivity ε [-].
    h_conv : array_like
        Convective coefficient h_c [W m-2 K-1].
    temp_sky : array_like
        Effective sky temperature [°C].
    temp_ground : array_like, optional
        Ground and surroundings temperature [°C]; default the air temperature.
    view_sky, view_air, view_ground : array_like
        View factors (:func:`solair.longwave.view_factors`) [-].
    linearisation : {"air", "surface"}, default "air"
    conventional : bool, default False
    tol : float, default 1e-6
        Convergence tolerance of the "surface" solution [K].
    sigma : float, default CODATA 5.670374419e-8
        Stefan-Boltzmann constant [W m-2 K-4] (ASTM E1980 uses 5.66961e-8).
    max_iter : int, default 100
    components : bool, default True
        Also return the three h_r,x; False spares their full-shape arrays (the engine
        uses only their sum).

    Returns
    -------
    dict of ndarray, all broadcast to a common shape
        ``temp_sol_air`` [°C], ``h_rad`` (Σ h_r,x), ``h_rad_sky``, ``h_rad_air``,
        ``h_rad_ground`` (with ``components``), ``h_e``, ``h_conv`` [W m-2 K-1] and
        ``r_se`` [m2 K W-1].

    Raises
    ------
    ConfigurationError
        Unknown linearisation, non-finite or out-of-range inputs, h_e ≤ 0, a
        conventional h_rad above 25, or no convergence.

    References
    ----------
    .. [1] ASHRAE (2017). Handbook - Fundamentals, ch. 18.
    .. [2] ASTM E1980-11 (2019), surface balance of the SRI calculation.
    .. [3] ISO 6946:2017, 6.8 and Annex C (R_se = 0.04 m2 K W-1).
    """
    if linearisation not in LINEARISATIONS:
        raise ConfigurationError(
            f"linearisation {linearisation!r} is not one of {sorted(LINEARISATIONS)}"
        )
    ta, g, a, e, hc, tsky, tg, fs, fa, fg = _inputs(
        temp_air, poa_global, absorptance, emissivity, h_conv, temp_sky, temp_ground,
        view_sky, view_air, view_ground)
    shape = np.broadcast_shapes(*(x.shape for x in (ta, g, a, e, hc, tsky, tg, fs, fa, fg)))
    # Work at the inputs' own shapes and let numpy broadcast: the temperature factors of the
    # coefficients depend on time only, the optical factors on surface (and finish) only.
    ta_k, tsky_k, tg_k = ta + KELVIN, tsky + KELVIN, tg + KELVIN
    ag = a * g
    efs, efa, efg = e * fs, e * fa, e * fg
    d_sky, d_gnd = tsky - ta, tg - ta

    def coefficients(t_ref_k):
        """Secant h_r,x about T_ref [K] (the algebra of longwave.h_rad_secant)."""
        t2 = t_ref_k * t_ref_k
        return tuple(ef * (sigma * (tx * tx + t2) * (tx + t_ref_k))
                     for ef, tx in ((efs, tsky_k), (efa, ta_k), (efg, tg_k)))

    if conventional:
        # h_e fixed: T = T_a + (alpha G + h_sky (T_sky - T_a) + h_gnd (T_gnd - T_a)) / 25
        t_ref_k = ta_k
        for _ in range(max_iter):
            hs, ha, hg = coefficients(t_ref_k)
            if linearisation == "air":
                break
            t_new_k = ta_k + (ag + hs * d_sky + hg * d_gnd) / H_E_CONVENTIONAL
            step = np.max(np.abs(t_new_k - t_ref_k), initial=0.0)
            t_ref_k = t_new_k
            if step <= tol:
                hs, ha, hg = coefficients(t_ref_k)
                break
        else:
            raise ConfigurationError(
                f"conventional surface balance did not converge to {tol:g} K in {max_iter} steps")
        h_rad = hs + ha + hg
        if np.any(h_rad >= H_E_CONVENTIONAL):
            raise ConfigurationError(
                f"conventional R_se: h_rad up to {np.max(h_rad):.3g} W m-2 K-1 leaves no room "
                f"for convection within h_e = {H_E_CONVENTIONAL:g}")
        hc = H_E_CONVENTIONAL - h_rad
    elif linearisation == "air":
        hs, ha, hg = coefficients(ta_k)
    else:
        return _surface_solution(ta, ta_k, tsky_k, tg_k, d_sky, d_gnd, ag, e, fs, fa, fg, hc,
                                 sigma, tol, max_iter, shape, coefficients, components)
    h_rad = hs + ha + hg
    h_e = h_rad + hc
    if np.min(h_e) < H_E_MIN:
        raise ConfigurationError("h_e = h_conv + h_rad is zero for some element: no heat exchange")
    # T_eq = (h_c T_a + sum h_x T_x + alpha G) / h_e, written relative to T_a
    t_eq = np.multiply(hs, d_sky, out=np.empty(shape))
    t_eq += hg * d_gnd
    t_eq += ag
    t_eq /= h_e
    t_eq += ta
    out = {"temp_sol_air": t_eq, "h_rad": h_rad, "h_e": h_e, "h_conv": hc, "r_se": 1.0 / h_e}
    if components:
        out.update(h_rad_sky=hs, h_rad_air=ha, h_rad_ground=hg)
    return {k: np.broadcast_to(np.asarray(v, dtype=float), shape) for k, v in out.items()}


def _surface_solution(ta, ta_k, tsky_k, tg_k, d_sky, d_gnd, ag, e, fs, fa, fg, hc, sigma,
                      tol, max_iter, shape, coefficients, components):
    """The ``linearisation="surface"`` branch of :func:`temp_sol_air`.

    Every long-wave term is ε F_x g(T_x), so the emissivity factors out of the sum over
    x: the sums over sky, air and ground are formed at the weather's and geometry's own
    (time, surface) shape and multiplied by ε once, instead of once per term at the full
    (time, surface, finish) shape. At the root T of the balance the secant coefficients
    sum to

    .. math::

        h_{rad} = \\varepsilon\\sigma \\sum_x F_x (T_x^2 + T^2)(T_x + T)
                = \\varepsilon\\sigma (P_0 + P_1 T + P_2 T^2 + P_3 T^3),
        \\qquad P_k = \\sum_x F_x T_x^{3-k}

    (one Horner pass at the full shape), and T_eq = T: the secant linearisation about the
    root is exact there, so the equivalent temperature is the root itself, to the Newton
    tolerance.
    """
    sig_e = sigma * e
    esf = sig_e * (fs + fa + fg)
    # q0 = alpha G + h_c T_a + eps sigma sum_x F_x T_x^4: the balance is q0 = h_c T + esf T^4
    q0 = ag + hc * ta_k + sig_e * (fs * tsky_k**4 + fa * ta_k**4 + fg * tg_k**4)
    # start: the air-linearised solution (coefficients at T_a, factored the same way)
    a_sky = sigma * (tsky_k * tsky_k + ta_k * ta_k) * (tsky_k + ta_k)
    a_gnd = sigma * (tg_k * tg_k + ta_k * ta_k) * (tg_k + ta_k)
    a_air = 4.0 * sigma * ta_k**3
    h_e_air = hc + e * (fs * a_sky + fa * a_air + fg * a_gnd)
    if np.min(h_e_air) < H_E_MIN:
        raise ConfigurationError(
            "h_conv and emissivity x view factors are all zero for some element: "
            "the surface exchanges no heat (h_e = 0)")
    t0 = ta_k + (ag + e * (fs * a_sky * d_sky + fg * a_gnd * d_gnd)) / h_e_air
    t = _newton_surface(q0, hc, esf, t0, tol, max_iter, shape)
    h_rad = np.multiply(t, fs + fa + fg, out=np.empty(shape))  # Horner in T
    h_rad += fs * tsky_k + fa * ta_k + fg * tg_k
    h_rad *= t
    h_rad += fs * tsky_k**2 + fa * ta_k**2 + fg * tg_k**2
    h_rad *= t
    h_rad += fs * tsky_k**3 + fa * ta_k**3 + fg * tg_k**3
    h_rad *= sig_e
    h_e = np.add(h_rad, hc, out=np.empty(shape))
    if np.min(h_e) < H_E_MIN:
        raise ConfigurationError("h_e = h_conv + h_rad is zero for some element: no heat exchange")
    t -= KELVIN
    out = {"temp_sol_air": t, "h_rad": h_rad, "h_e": h_e, "h_conv": hc,
           "r_se": np.divide(1.0, h_e, out=np.empty(shape))}
    if components:
        hs, ha, hg = coefficients(t + KELVIN)
        out.update(h_rad_sky=hs, h_rad_air=ha, h_rad_ground=hg)
    return {k: np.broadcast_to(np.asarray(v, dtype=float), shape) for k, v in out.items()}
