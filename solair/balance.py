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

import functools
import math
from collections.abc import Iterable

import numpy as np
from numpy.typing import ArrayLike, NDArray

from solair.errors import ConfigurationError
from solair.longwave import KELVIN, SIGMA

__all__ = ["LINEARISATIONS", "H_E_CONVENTIONAL", "OUTPUTS", "temp_sol_air",
           "surface_balance_residual"]

Array = NDArray[np.float64]

#: Allowed linearisation points of the radiative coefficients.
LINEARISATIONS = frozenset({"air", "surface"})
#: Outputs of :func:`temp_sol_air` (names of its ``variables``).
OUTPUTS = ("temp_sol_air", "h_rad", "h_rad_sky", "h_rad_air", "h_rad_ground", "h_e", "h_conv",
           "r_se")
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
    variables: Iterable[str] | None = None,
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
      element by element by Newton iteration on the exact quartic to ``tol`` K,
      starting from the "air" solution (the residual is concave and decreasing
      in T_s, so Newton converges from any positive start); then
      :math:`T_{eq} = T_{ref}`, ASTM E1980's surface temperature.
    * ``conventional=True``: ISO 6946's conventional R_se = 0.04 m2 K W-1, i.e.
      h_e fixed at 25 W m-2 K-1 and h_c = 25 - Σ h_r,x (the given ``h_conv`` is
      not used); with "surface" the h_r,x are evaluated at the solution by
      fixed-point iteration.

    Without ``conventional`` one compiled loop (numba) computes every output
    element in a single pass over the broadcast inputs.

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
        uses only their sum). Not used when ``variables`` is given.
    variables : iterable of str, optional
        Names of the outputs wanted (of :data:`OUTPUTS`); default all (the components
        as ``components`` says). The others are neither computed into arrays nor
        returned; the values of those returned are the same as in the full call.

    Returns
    -------
    dict of ndarray, all broadcast to a common shape
        ``temp_sol_air`` [°C], ``h_rad`` (Σ h_r,x), ``h_rad_sky``, ``h_rad_air``,
        ``h_rad_ground`` (with ``components``), ``h_e``, ``h_conv`` [W m-2 K-1] and
        ``r_se`` [m2 K W-1]; every value finite (callers need no second check). With
        ``variables``, exactly those keys.

    Raises
    ------
    ConfigurationError
        Unknown linearisation or output name, non-finite or out-of-range inputs, h_e ≤ 0, a
        conventional h_rad above 25, no convergence, or a T_eq that overflows
        (α G too large to be represented).

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
    wanted = _wanted(variables, components)
    ta, g, a, e, hc, tsky, tg, fs, fa, fg = _inputs(
        temp_air, poa_global, absorptance, emissivity, h_conv, temp_sky, temp_ground,
        view_sky, view_air, view_ground)
    shape = np.broadcast_shapes(*(x.shape for x in (ta, g, a, e, hc, tsky, tg, fs, fa, fg)))
    if not conventional:
        return _compiled_balance(ta, g, a, e, hc, tsky, tg, fs, fa, fg, sigma, tol, max_iter,
                                 shape, linearisation == "surface", wanted)
    # Conventional R_se: work at the inputs' own shapes and let numpy broadcast (the
    # temperature factors depend on time only, the optical factors on surface and finish).
    ta_k, tsky_k, tg_k = ta + KELVIN, tsky + KELVIN, tg + KELVIN
    ag = a * g
    efs, efa, efg = e * fs, e * fa, e * fg
    d_sky, d_gnd = tsky - ta, tg - ta

    def coefficients(t_ref_k):
        return _secant(efs, efa, efg, tsky_k, ta_k, tg_k, t_ref_k, sigma)

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
    h_e = h_rad + hc
    if np.min(h_e) < H_E_MIN:
        raise ConfigurationError("h_e = h_conv + h_rad is zero for some element: no heat exchange")
    # T_eq = (h_c T_a + sum h_x T_x + alpha G) / h_e, written relative to T_a
    t_eq = np.multiply(hs, d_sky, out=np.empty(shape))
    t_eq += hg * d_gnd
    t_eq += ag
    t_eq /= h_e
    t_eq += ta
    if t_eq.size and not (np.isfinite(np.min(t_eq)) and np.isfinite(np.max(t_eq))):
        raise _overflow_error(tuple(int(i) for i in np.argwhere(~np.isfinite(t_eq))[0]))
    out = {"temp_sol_air": t_eq, "h_rad": h_rad, "h_e": h_e, "h_conv": hc,
           "r_se": (1.0 / h_e) if "r_se" in wanted else None,
           "h_rad_sky": hs, "h_rad_air": ha, "h_rad_ground": hg}
    return {k: np.broadcast_to(np.asarray(v, dtype=float), shape)
            for k, v in out.items() if k in wanted}


def _wanted(variables, components) -> tuple[str, ...]:
    """The names of the outputs to return: ``variables`` checked, or all by ``components``."""
    if variables is None and not components:
        return tuple(k for k in OUTPUTS if k not in ("h_rad_sky", "h_rad_air", "h_rad_ground"))
    return select_outputs(variables, OUTPUTS)


def select_outputs(variables: Iterable[str] | str | None,
                   allowed: tuple[str, ...]) -> tuple[str, ...]:
    """The names of ``allowed`` that ``variables`` lists (all when None), in allowed's order.

    Raises
    ------
    ConfigurationError
        A name that is not in ``allowed`` (the message lists the allowed names).
    """
    if variables is None:
        return tuple(allowed)
    names = [variables] if isinstance(variables, str) else list(variables)
    unknown = [k for k in names if k not in allowed]
    if unknown:
        raise ConfigurationError(
            f"sol-air variable(s) {unknown} not available; allowed {list(allowed)}")
    return tuple(k for k in allowed if k in names)


def _secant(efs, efa, efg, tsky_k, ta_k, tg_k, t_ref_k, sigma):
    """Secant h_r,x about T_ref [K] (the algebra of longwave.h_rad_secant), ef_x = ε F_x."""
    t2 = t_ref_k * t_ref_k
    return tuple(ef * (sigma * (tx * tx + t2) * (tx + t_ref_k))
                 for ef, tx in ((efs, tsky_k), (efa, ta_k), (efg, tg_k)))


def _overflow_error(at: tuple[int, ...]) -> ConfigurationError:
    return ConfigurationError(
        f"the sol-air temperature overflows at element {at}: alpha x poa_global is too large "
        "for float64 against h_e; give irradiances of physical magnitude [W m-2]")


def _canonical_shape(shape: tuple[int, ...]) -> tuple[int, int, int]:
    """The 3-D shape a kernel loops over: leading size-1 axes added, or leading axes merged."""
    if len(shape) <= 3:
        return (1,) * (3 - len(shape)) + tuple(shape)
    return (int(np.prod(shape[:-2])), shape[-2], shape[-1])


def _compiled_balance(ta, g, a, e, hc, tsky, tg, fs, fa, fg, sigma, tol, max_iter, shape,
                      surface, wanted):
    """:func:`temp_sol_air` without ``conventional``, by one compiled pass (:func:`_balance_loop`).

    The ten checked inputs are broadcast (read-only views, no copies up to 3-D) to a
    canonical 3-D shape (:func:`_canonical_shape`); the kernel writes C-contiguous outputs
    that are reshaped back to ``shape``; an output not in ``wanted`` gets a 0-size array,
    which the kernel does not write (T_eq is still needed for the components). Every call
    uses the one compiled specialisation of :func:`_balance_kernel`.
    """
    canon = _canonical_shape(shape)
    args = [np.broadcast_to(x, shape).reshape(canon)
            for x in (ta, g, a, e, hc, tsky, tg, fs, fa, fg)]
    comps = [k for k in ("h_rad_sky", "h_rad_air", "h_rad_ground") if k in wanted]
    stored = set(wanted) | ({"temp_sol_air"} if comps and surface else set())
    t, h_rad, h_e, r_se = (np.empty(canon if k in stored else (0, 0, 0))
                           for k in ("temp_sol_air", "h_rad", "h_e", "r_se"))
    status, largest, where = _balance_kernel()(*args, float(sigma), float(tol), int(max_iter),
                                               bool(surface), t, h_rad, h_e, r_se)
    if status == _NO_EXCHANGE:
        at = tuple(int(i) for i in np.unravel_index(where, shape)) if shape else ()
        raise ConfigurationError(
            f"h_e = h_conv + h_rad is below {H_E_MIN:g} W m-2 K-1 at element {at}: h_conv and "
            "emissivity x view factors are all zero there, so the surface exchanges no heat; "
            "give h_conv > 0, or emissivity > 0 with a non-zero view factor")
    if status == _NOT_FINITE:
        raise _overflow_error(tuple(int(i) for i in np.unravel_index(where, shape)))
    if status == _NOT_CONVERGED:
        raise ConfigurationError(
            f"surface balance did not converge to {tol:g} K in {max_iter} Newton steps "
            f"(largest last step {largest:.3g} K); check the inputs' magnitudes"
        )
    out = {k: np.broadcast_to(v.reshape(np.shape(v) if v is hc else shape), shape)
           for k, v in (("temp_sol_air", t), ("h_rad", h_rad), ("h_e", h_e), ("h_conv", hc),
                        ("r_se", r_se)) if k in wanted}
    if comps:
        t_ref_k = (t.reshape(shape) if surface else ta) + KELVIN
        hs, ha, hg = _secant(e * fs, e * fa, e * fg, tsky + KELVIN, ta + KELVIN, tg + KELVIN,
                             t_ref_k, sigma)
        out.update({k: np.broadcast_to(v, shape) for k, v in
                    (("h_rad_sky", hs), ("h_rad_air", ha), ("h_rad_ground", hg)) if k in comps})
    return {k: out[k] for k in OUTPUTS if k in out}


#: Status codes of :func:`_balance_loop`.
_OK, _NO_EXCHANGE, _NOT_CONVERGED, _NOT_FINITE = 0, 1, 2, 3
#: Elements per Newton block of :func:`_balance_loop`.
_BLOCK = 256


def _balance_loop(ta, g, a, e, hc, tsky, tg, fs, fa, fg, sigma, tol, max_iter, surface,
                  t_out, h_rad_out, h_e_out, r_se_out):
    """T_eq, h_rad, h_e and R_se element by element (compiled by numba).

    Each element first gets the air-linearised solution from the secant coefficients
    :math:`h_{r,x}` about T_a (the operations of :func:`_secant` and of the T_eq of the
    conventional branch of :func:`temp_sol_air`, in the same order, so the "air" results
    equal the former numpy ones to the last bit):

    .. math::

        T_{eq} = T_a + \\frac{h_{r,sky} (T_{sky} - T_a) + h_{r,gnd} (T_{gnd} - T_a)
                 + \\alpha G}{h_c + \\sum_x h_{r,x}}

    With ``surface`` that is the start of Newton's iteration on the exact balance
    (:func:`surface_balance_residual` = 0), in which the emissivity factors out of the
    sum over x ∈ {sky, air, gnd}:

    .. math::

        q_0 = h_c T + \\varepsilon\\sigma F T^4, \\qquad
        q_0 = \\alpha G + h_c T_a + \\varepsilon\\sigma \\sum_x F_x T_x^4, \\qquad
        F = \\sum_x F_x

    (temperatures in K). The right side is convex and increasing in T > 0, so Newton
    converges from any positive start (monotonically after the first step); an element
    stops once its step is at most ``tol`` [K]. The steps run on blocks of ``_BLOCK``
    elements at once (a sweep over the block per step, an element's T moved only while it
    iterates), so each element takes exactly the steps of its own loop while the sweep,
    free of a branch per element, vectorises across the block.
    At the root T the secant coefficients sum to

    .. math::

        h_{rad} = \\varepsilon\\sigma \\sum_x F_x (T_x^2 + T^2)(T_x + T)
                = \\varepsilon\\sigma (P_0 + P_1 T + P_2 T^2 + P_3 T^3),
        \\qquad P_k = \\sum_x F_x T_x^{3-k}

    (Horner's scheme), and T_eq = T: the secant linearisation about the root is exact
    there, so the equivalent temperature is the root itself, to the Newton tolerance.

    Inputs are 3-D arrays of one shape (broadcast views) in °C, W m-2, W m-2 K-1 and [-];
    ``t_out`` [°C], ``h_rad_out``, ``h_e_out`` [W m-2 K-1] and ``r_se_out`` [m2 K W-1]
    are written in place; an output of size 0 is not written (not wanted). Returns
    ``(status, largest last step [K], flat index)``:
    ``_NO_EXCHANGE`` at the first element whose h_e is below ``H_E_MIN``,
    ``_NOT_CONVERGED`` with the largest last step of the elements that did not converge
    in ``max_iter`` steps, ``_NOT_FINITE`` at the first element whose T_eq or Newton
    step overflows, else ``_OK``.
    """
    n0, n1, n2 = ta.shape
    keep_t, keep_rad = t_out.size > 0, h_rad_out.size > 0
    keep_e, keep_r = h_e_out.size > 0, r_se_out.size > 0
    t_flat, rad_flat = t_out.reshape(t_out.size), h_rad_out.reshape(h_rad_out.size)
    e_flat, r_flat = h_e_out.reshape(h_e_out.size), r_se_out.reshape(r_se_out.size)
    total = n0 * n1 * n2
    nb = min(_BLOCK, total)
    # one block of elements (flat C order) for Newton: start/iterate T, q0, esf, h_c, the
    # Horner factors of h_rad, the last step and whether the element still iterates
    t_b, q0_b, esf_b, hc_b = np.empty(nb), np.empty(nb), np.empty(nb), np.empty(nb)
    sig_b, f_b, p1_b, p2_b, p3_b = (np.empty(nb), np.empty(nb), np.empty(nb), np.empty(nb),
                                    np.empty(nb))
    step_b = np.empty(nb)
    act_b = np.empty(nb, dtype=np.bool_)
    status = _OK
    largest = 0.0
    # The factors of the coefficients that depend on the temperatures and view factors only
    # are computed once per (i, j) when none of those inputs varies along the last axis
    # (stride 0: a broadcast finish axis), else for every element.
    rep = (ta.strides[2] == 0 and tsky.strides[2] == 0 and tg.strides[2] == 0
           and fs.strides[2] == 0 and fa.strides[2] == 0 and fg.strides[2] == 0)
    ta_c = tsky_c = tg_c = s = f_a = f_g = 0.0
    ta_k = f_sum = a_sky = a_air = a_gnd = l_4 = p_1 = p_2 = p_3 = 0.0
    m = 0  # elements in the block
    for i in range(n0):
        for j in range(n1):
            for k in range(n2):
                at = (i * n1 + j) * n2 + k
                bad = _OK
                if k == 0 or not rep:
                    ta_c, tsky_c, tg_c = ta[i, j, k], tsky[i, j, k], tg[i, j, k]
                    s, f_a, f_g = fs[i, j, k], fa[i, j, k], fg[i, j, k]
                    ta_k, tsky_k, tg_k = ta_c + KELVIN, tsky_c + KELVIN, tg_c + KELVIN
                    t2 = ta_k * ta_k
                    a_sky = sigma * (tsky_k * tsky_k + t2) * (tsky_k + ta_k)
                    a_air = sigma * (ta_k * ta_k + t2) * (ta_k + ta_k)
                    a_gnd = sigma * (tg_k * tg_k + t2) * (tg_k + ta_k)
                    # sum_x F_x T_x^4 of q0, and P_1 .. P_3 of the Horner form
                    f_sum = s + f_a + f_g
                    p_1 = s * tsky_k + f_a * ta_k + f_g * tg_k
                    p_2 = s * tsky_k * tsky_k + f_a * ta_k * ta_k + f_g * tg_k * tg_k
                    p_3 = (s * tsky_k * tsky_k * tsky_k + f_a * ta_k * ta_k * ta_k
                           + f_g * tg_k * tg_k * tg_k)
                    l_4 = (s * (tsky_k * tsky_k) * (tsky_k * tsky_k)
                           + f_a * (ta_k * ta_k) * (ta_k * ta_k)
                           + f_g * (tg_k * tg_k) * (tg_k * tg_k))
                ev = e[i, j, k]
                h_c = hc[i, j, k]
                ag = a[i, j, k] * g[i, j, k]
                h_s, h_g = (ev * s) * a_sky, (ev * f_g) * a_gnd
                h_rad = h_s + (ev * f_a) * a_air + h_g
                h_e = h_rad + h_c
                t_eq = (h_s * (tsky_c - ta_c) + h_g * (tg_c - ta_c) + ag) / h_e + ta_c
                if not h_e >= H_E_MIN:
                    bad = _NO_EXCHANGE
                elif not math.isfinite(t_eq):
                    bad = _NOT_FINITE
                elif not surface:
                    if keep_t:
                        t_flat[at] = t_eq
                    if keep_rad:
                        rad_flat[at] = h_rad
                    if keep_e:
                        e_flat[at] = h_e
                    if keep_r:
                        r_flat[at] = 1.0 / h_e
                else:  # the element joins the block of Newton's iteration
                    sig_e = sigma * ev
                    t_b[m] = max(t_eq + KELVIN, 1.0)
                    esf_b[m] = sig_e * f_sum
                    q0_b[m] = ag + h_c * ta_k + sig_e * l_4
                    hc_b[m] = h_c
                    sig_b[m], f_b[m], p1_b[m], p2_b[m], p3_b[m] = sig_e, f_sum, p_1, p_2, p_3
                    m += 1
                if m > 0 and (m == nb or bad != _OK or at == total - 1):
                    # Newton's steps for the whole block at once, each element's own
                    # sequence: a step moves T only while the element iterates (it stops after
                    # its first step of at most tol), so every element takes exactly the steps
                    # of a loop of its own; with no branch per element the sweep vectorises.
                    f0 = at + 1 - m if bad == _OK else at - m  # flat index of the first
                    for b in range(m):
                        act_b[b] = True
                        step_b[b] = math.inf
                    n_act = m
                    for _ in range(max_iter):
                        n_act = 0
                        for b in range(m):
                            t = t_b[b]
                            t3 = t * t * t * esf_b[b]  # esf T^3
                            h_c = hc_b[b]
                            step = (q0_b[b] - (t3 + h_c) * t) / (4.0 * t3 + h_c)
                            go = act_b[b]
                            t_b[b] = t + step if go else t
                            step_b[b] = step if go else step_b[b]
                            go = go and not abs(step) <= tol
                            act_b[b] = go
                            n_act += go
                        if n_act == 0:
                            break
                    # h_rad at the root and the outputs, without a branch per element; any
                    # element still iterating or with h_e < H_E_MIN: the loop below instead,
                    # which stops at the first of them
                    n_bad = n_act
                    for b in range(m):
                        t = t_b[b]
                        h_rad = (((f_b[b] * t + p1_b[b]) * t + p2_b[b]) * t + p3_b[b]) * sig_b[b]
                        h_e = h_rad + hc_b[b]
                        n_bad += not h_e >= H_E_MIN
                        if keep_t:
                            t_flat[f0 + b] = t - KELVIN
                        if keep_rad:
                            rad_flat[f0 + b] = h_rad
                        if keep_e:
                            e_flat[f0 + b] = h_e
                        if keep_r:
                            r_flat[f0 + b] = 1.0 / h_e
                    for b in range(m if n_bad > 0 else 0):
                        if act_b[b]:  # max_iter steps, the last one above tol
                            step = step_b[b]
                            if not math.isfinite(step):  # h_e > 0 here, so T^4 overflowed
                                return _NOT_FINITE, 0.0, f0 + b
                            status = _NOT_CONVERGED
                            largest = max(largest, abs(step))
                        t = t_b[b]
                        h_rad = (((f_b[b] * t + p1_b[b]) * t + p2_b[b]) * t + p3_b[b]) * sig_b[b]
                        h_e = h_rad + hc_b[b]
                        if not h_e >= H_E_MIN:
                            return _NO_EXCHANGE, 0.0, f0 + b
                        # the outputs of the block are stored above already
                    m = 0
                if bad != _OK:
                    return bad, 0.0, at
    return status, largest, -1


@functools.cache
def _balance_kernel():
    """:func:`_balance_loop` compiled once, for read-only 3-D float64 inputs of any layout.

    The one signature takes every input as a read-only 'A'-layout array (broadcast views;
    C, F and writable arrays convert to it) and C-contiguous outputs; compiling other
    specialisations at call time is disabled. ``error_model="numpy"``: IEEE division
    (h_e = 0 and an overflowed step are reported by the status), no check per division,
    so the Newton sweep vectorises. numba is imported here, on first use, so that
    importing this module stays cheap; ``cache=True`` keeps the machine code on disk.
    """
    import numba
    from numba import types

    ro = types.Array(types.float64, 3, "A", readonly=True)
    out = types.Array(types.float64, 3, "C")
    kernel = numba.njit(cache=True, error_model="numpy")(_balance_loop)
    kernel.compile((ro,) * 10 + (types.float64, types.float64, types.int64, types.boolean)
                   + (out,) * 4)
    kernel.disable_compile()
    return kernel
