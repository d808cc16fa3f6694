"""One-dimensional transient conduction through a layered construction.

Vertex-centred finite volumes: nodes sit on both faces of the construction and
on every layer interface, each layer is split into equal cells, and each node
carries the heat capacity of the half cells next to it. Time stepping is
implicit: backward Euler, which is unconditionally stable and free of the
oscillations Crank–Nicolson shows on thin, highly conductive layers (metal
sheets) with sub-hourly steps; the second-order backward differentiation
formula (BDF2, also L-stable) is the default for its smaller phase and
amplitude error at 10-minute steps. The tridiagonal systems of all columns
(surface × finish) are solved together by a batched Thomas algorithm.

The elimination runs from the inside face to the outside face, so that each
step ends with one scalar equation for the exterior surface node,

    e_0 T_0 = r_0 + q_ext(T_0),

which the caller closes with its exterior boundary (linear, nonlinear, with or
without latent heat) before back-substituting the other nodes. The interior
coefficients stay the same from step to step and are factorised once; the two
sweeps are then precomputed as matrices, so a step costs two batched products
(:meth:`Factorisation.reduce`, :meth:`Factorisation.solve`).

References
----------
.. [1] Patankar S.V. (1980), Numerical Heat Transfer and Fluid Flow, Hemisphere,
   ch. 4 (finite-volume discretisation of conduction, practice B grid).
.. [2] Curtiss C.F., Hirschfelder J.O. (1952), Integration of stiff equations,
   PNAS 38(3):235–243, doi:10.1073/pnas.38.3.235 (backward differentiation
   formulas); Hairer E., Wanner G. (1996), Solving Ordinary Differential
   Equations II, Springer, §V.1 (BDF2 is A- and L-stable).
.. [3] Thomas L.H. (1949), Elliptic problems in linear difference equations
   over a network, Watson Sci. Comput. Lab. Rept., Columbia University; see
   also Press W.H. et al. (2007), Numerical Recipes, 3rd ed., §2.4.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from solair.constructions import Construction
from solair.errors import ConfigurationError

__all__ = ["Grid", "build_grid", "solve_tridiagonal", "Factorisation", "factorise", "select",
           "eliminate", "back_substitute"]

#: Period used to size the cells: the daily cycle [s].
_PERIOD = 86400.0


@dataclass(frozen=True)
class Grid:
    """Finite-volume grid of a construction.

    Attributes
    ----------
    capacity : ndarray, shape (n_nodes,)
        Heat capacity of each node per unit area [J m-2 K-1].
    conductance : ndarray, shape (n_nodes - 1,)
        Conductance between node j and j+1 [W m-2 K-1].
    position : ndarray, shape (n_nodes,)
        Depth of each node from the exterior face [m].
    """

    capacity: np.ndarray
    conductance: np.ndarray
    position: np.ndarray

    @property
    def n_nodes(self) -> int:
        return int(self.capacity.size)

    @property
    def resistance(self) -> float:
        """Face-to-face resistance [m2 K W-1]."""
        return float(np.sum(1.0 / self.conductance))


def build_grid(construction: Construction, *, max_cell: float = 0.02,
               depth_fraction: float = 0.125) -> Grid:
    """Split each layer into equal cells no thicker than a fraction of its daily penetration depth.

    The cell size of a layer is at most ``max_cell`` and at most
    ``depth_fraction`` × δ, with δ = sqrt(λ P / (π ρ c)) the periodic
    penetration depth of the layer for the daily period P (ISO 13786:2017,
    eq. for δ).

    Parameters
    ----------
    construction : Construction
    max_cell : float
        Largest cell [m].
    depth_fraction : float
        Largest cell as a fraction of the penetration depth [-].

    Returns
    -------
    Grid
    """
    if not (max_cell > 0 and depth_fraction > 0):
        raise ConfigurationError("grid: max_cell and depth_fraction must be > 0")
    caps = [0.0]
    conds = []
    pos = [0.0]
    for layer in construction.layers:
        delta = np.sqrt(layer.diffusivity * _PERIOD / np.pi)
        cell = min(max_cell, depth_fraction * delta)
        n = max(1, int(np.ceil(layer.thickness / cell - 1e-9)))
        dx = layer.thickness / n
        c_half = 0.5 * layer.density * layer.specific_heat * dx
        for _ in range(n):
            caps[-1] += c_half
            caps.append(c_half)
            conds.append(layer.conductivity / dx)
            pos.append(pos[-1] + dx)
    return Grid(capacity=np.asarray(caps), conductance=np.asarray(conds),
                position=np.asarray(pos))


def solve_tridiagonal(lower, diag, upper, rhs):
    """Solve many tridiagonal systems at once (Thomas algorithm).

    Row j reads ``lower[j] x[j-1] + diag[j] x[j] + upper[j] x[j+1] = rhs[j]``
    (``lower[0]`` and ``upper[-1]`` are ignored). The first axis is the row;
    trailing axes are independent systems and broadcast.

    Parameters
    ----------
    lower, diag, upper, rhs : array_like, shape (n, ...)

    Returns
    -------
    ndarray, shape (n, ...)

    References
    ----------
    .. [1] Press W.H. et al. (2007), Numerical Recipes, 3rd ed., §2.4 (tridag).
    """
    lower, diag, upper, rhs = np.broadcast_arrays(
        *(np.asarray(a, dtype=float) for a in (lower, diag, upper, rhs)))
    n = diag.shape[0]
    cp = np.empty_like(diag)
    dp = np.empty_like(diag)
    cp[0] = upper[0] / diag[0]
    dp[0] = rhs[0] / diag[0]
    for j in range(1, n):
        denom = diag[j] - lower[j] * cp[j - 1]
        cp[j] = upper[j] / denom
        dp[j] = (rhs[j] - lower[j] * dp[j - 1]) / denom
    x = np.empty_like(diag)
    x[-1] = dp[-1]
    for j in range(n - 2, -1, -1):
        x[j] = dp[j] - cp[j] * x[j + 1]
    return x


@dataclass
class Factorisation:
    """Inside-to-outside elimination of the backward-Euler conduction matrix.

    With C/Δt on the diagonal, conductances K_j off it and the interior film
    coefficient h_i on the last node, eliminating from the inside gives for
    each node ``e_j T_j − K_{j−1} T_{j−1} = r_j`` with
    ``e_j = d_j − K_j g_j``, ``g_j = K_j / e_{j+1}`` and
    ``r_j = b_j + g_j r_{j+1}``.

    Attributes
    ----------
    cdt : ndarray (n_nodes, 1)   C_j / Δt
    e : ndarray (n_nodes, cols)  reduced diagonals (exterior boundary excluded)
    g : ndarray (n_nodes - 1, cols)
    inv_e : ndarray (n_nodes, cols)
    h_in : ndarray (cols,)
    """

    cdt: np.ndarray
    e: np.ndarray
    g: np.ndarray
    inv_e: np.ndarray
    h_in: np.ndarray
    first_row: np.ndarray | None = None
    solve_matrix: np.ndarray | None = None
    from_surface: np.ndarray | None = None

    def reduce(self, b: np.ndarray) -> np.ndarray:
        """r_0 = Σ_k N_0k b_k: the exterior node's reduced right-hand side, shape (cols,)."""
        return np.einsum("kc,kc->c", self.first_row, b)

    def solve(self, b: np.ndarray, temp_0: np.ndarray) -> np.ndarray:
        """All node temperatures from the right-hand side and the exterior node's value.

        T = W b + P T_0, the closed form of the elimination and back-substitution
        (W and P built by :func:`factorise`), one batched product per step.
        """
        return np.einsum("jkc,kc->jc", self.solve_matrix, b) + self.from_surface * temp_0


def select(mask, when_true: Factorisation, when_false: Factorisation) -> Factorisation:
    """Column-wise choice between two factorisations of the same grid (e.g. two R_si)."""
    def pick(x, y):
        return np.where(mask, x, y)

    return Factorisation(
        cdt=when_true.cdt, e=pick(when_true.e, when_false.e), g=pick(when_true.g, when_false.g),
        inv_e=pick(when_true.inv_e, when_false.inv_e), h_in=pick(when_true.h_in, when_false.h_in),
        first_row=pick(when_true.first_row, when_false.first_row),
        solve_matrix=pick(when_true.solve_matrix, when_false.solve_matrix),
        from_surface=pick(when_true.from_surface, when_false.from_surface))


def factorise(grid: Grid, dt: float, h_in, *, storage: float = 1.0) -> Factorisation:
    """Factorise the implicit conduction matrix for interior film coefficients ``h_in``.

    Parameters
    ----------
    grid : Grid
    dt : float
        Time step [s].
    h_in : array_like, shape (cols,)
        Interior surface coefficient 1/R_si [W m-2 K-1].
    storage : float
        Factor on C/Δt on the diagonal: 1 for backward Euler, 3/2 for BDF2.
    """
    h_in = np.atleast_1d(np.asarray(h_in, dtype=float))
    n = grid.n_nodes
    k = grid.conductance[:, None]
    cdt = (grid.capacity / dt)[:, None]
    diag = np.repeat(storage * cdt, h_in.size, axis=1).astype(float)
    if n > 1:
        diag[:-1] += k
        diag[1:] += k
    diag[-1] += h_in
    e = np.empty_like(diag)
    g = np.empty((max(n - 1, 0), h_in.size))
    e[-1] = diag[-1]
    for j in range(n - 2, -1, -1):
        g[j] = k[j] / e[j + 1]
        e[j] = diag[j] - k[j] * g[j]
    inv_e = 1.0 / e
    # closed form of the two sweeps: r = N b with N_jk = prod_{i=j}^{k-1} g_i (k >= j),
    # T_j = sum_{k>=1} N_kj r_k / e_k + N_0j T_0
    big_n = np.zeros((n, n, h_in.size))
    for j in range(n - 1, -1, -1):
        big_n[j, j] = 1.0
        if j < n - 1:
            big_n[j, j + 1:] = g[j] * big_n[j + 1, j + 1:]
    back = big_n.copy()
    back[0] = 0.0
    solve_matrix = np.einsum("kjc,kc,kmc->jmc", back, inv_e, big_n)
    return Factorisation(cdt=cdt, e=e, g=g, inv_e=inv_e, h_in=h_in,
                         first_row=np.ascontiguousarray(big_n[0]),
                         solve_matrix=np.ascontiguousarray(solve_matrix),
                         from_surface=np.ascontiguousarray(big_n[0]))


def eliminate(fac: Factorisation, storage_rhs: np.ndarray, temp_in) -> np.ndarray:
    """Right-hand-side sweep from the inside face to the outside face.

    Parameters
    ----------
    fac : Factorisation
    storage_rhs : ndarray (n_nodes, cols)
        Storage part of the right-hand side [W m-2]: (C/Δt) T^n for backward
        Euler, (C/Δt)(2 T^n − T^(n−1)/2) for BDF2. Overwritten.
    temp_in : array_like (cols,)
        Indoor temperature over the step [°C].

    Returns
    -------
    ndarray (n_nodes, cols)
        Reduced right-hand sides r_j; ``r[0]`` closes the exterior node.
    """
    r = storage_rhs
    r[-1] += fac.h_in * temp_in
    g = fac.g
    for j in range(r.shape[0] - 2, -1, -1):
        r[j] += g[j] * r[j + 1]
    return r


def back_substitute(fac: Factorisation, r: np.ndarray, temp_0: np.ndarray,
                    out: np.ndarray | None = None) -> np.ndarray:
    """Node temperatures from the exterior node outwards: T_{j+1} = (r_{j+1} + K_j T_j) / e_{j+1}.

    Uses K_j / e_{j+1} = g_j.
    """
    t = np.empty_like(r) if out is None else out
    t[0] = temp_0
    g, inv_e = fac.g, fac.inv_e
    for j in range(r.shape[0] - 1):
        t[j + 1] = r[j + 1] * inv_e[j + 1] + g[j] * t[j]
    return t
