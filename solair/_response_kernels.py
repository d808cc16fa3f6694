"""The all-hours closure of the massless and steady surface responses, compiled (numba).

Used by :func:`solair.response.surface_response` when nothing couples one hour to
the next (no storage, no condensate, linear exterior): the hourly closure of its
time loop is evaluated for the whole (time, column) array in one compiled pass,
with the same floating-point operations in the same order.

numba is imported on the first call of the kernel (:func:`_kernel`), not on import.
"""

from __future__ import annotations

import functools

import numpy as np

from solair.constructions import r_si
from solair.errors import ConfigurationError


def _checked(value, shape, name):
    """``value`` as float64 (a (time,) series aligned to the time axis of ``shape``), after
    the checks every response input gets: it broadcasts to ``shape`` and holds only finite
    values. Not broadcast itself."""
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 1 and len(shape) > 1 and arr.size == shape[0] and arr.size != shape[-1]:
        arr = arr.reshape((shape[0],) + (1,) * (len(shape) - 1))
    try:
        np.broadcast_to(arr, shape)
    except ValueError:
        raise ConfigurationError(
            f"surface response: {name} of shape {np.shape(value)} does not broadcast to {shape}"
        ) from None
    if not np.all(np.isfinite(arr)):
        raise ConfigurationError(f"surface response: {name} holds NaN or infinite values")
    return arr


def _compact(value, shape, name):
    """Like ``solair.response._flat``, but an axis of size 1 stays 1: (1|time, 1|column),
    not the full (time, column) shape (e.g. a constant or hourly indoor temperature)."""
    arr = _checked(value, shape, name)
    padded = (1,) * (len(shape) - arr.ndim) + arr.shape
    rows = padded[0]
    if all(s == 1 for s in padded[1:]):
        return _c2d(arr, (rows, 1))
    cols = tuple(shape[1:])
    return _c2d(np.broadcast_to(arr.reshape(padded), (rows,) + cols),
                (rows, int(np.prod(cols, dtype=int))))


def _full2d(value, shape):
    """``value`` broadcast to ``shape`` as a C-contiguous float64 (time, column) array."""
    arr = np.asarray(value, dtype=float)
    if arr.shape != tuple(shape):
        arr = np.broadcast_to(arr, shape)
    return _c2d(arr, (shape[0], int(np.prod(shape[1:], dtype=int))))


def _c2d(arr, shape2):
    """``arr`` as a read-only C-contiguous float64 2-D array (the one input type of the
    kernel): a view when ``arr`` already is C-contiguous float64, writable or not (e.g. the
    engine's read-only sol-air arrays), else a copy."""
    out = np.reshape(arr, shape2)
    if not (out.flags.c_contiguous and out.dtype == np.float64):
        out = np.ascontiguousarray(out, dtype=np.float64)
    if out.flags.writeable:
        out = out.view()
        out.flags.writeable = False
    return out


def _all_hours_loop(x, h, premultiplied, t_in, steady, resistance, h_inward, h_outward,
                    out_t, out_q, out_qe):
    """The closure of every (time, column) element, the loop's operations in its order.

    Returns flags: 1 non-finite h_e, 2 h_e <= 0, 4 non-finite ``x``. U' is picked by the
    heat-flow direction with a select, not a branch (which would mispredict at random).
    The checks accumulate per column and the indoor temperature is read from a row buffer,
    so the column loop (innermost, contiguous) has no loop-carried scalar and vectorises.
    """
    n, m = x.shape
    rt = 1 if t_in.shape[0] > 1 else 0
    ct = 1 if t_in.shape[1] > 1 else 0
    u_out = np.empty(m)
    u_in = np.empty(m)
    for j in range(m):
        u_out[j] = 1.0 / (resistance + 1.0 / h_outward[j])
        u_in[j] = 1.0 / (resistance + 1.0 / h_inward[j])
    nan_h = np.zeros(m)  # v * 0 is 0 for a finite v, NaN otherwise
    nan_x = np.zeros(m)
    low_h = np.zeros(m, dtype=np.int64)  # count of h_e <= 0
    ti_row = np.empty(m)
    row = -1  # the row of t_in in ti_row
    for i in range(n):
        if steady:
            if i * rt != row:
                row = i * rt
                for j in range(m):
                    ti_row[j] = t_in[row, j * ct]
            for j in range(m):
                hh = h[i, j]
                xx = x[i, j]
                nan_h[j] += hh * 0.0
                nan_x[j] += xx * 0.0
                low_h[j] += hh <= 0.0
                a = xx if premultiplied else hh * xx
                ti = ti_row[j]
                u = u_in[j] if a / hh > ti else u_out[j]
                r0 = u * ti
                t = (r0 + a) / (u + hh)
                out_q[i, j] = u * t - r0
                out_t[i, j] = t
                out_qe[i, j] = a - hh * t
        else:
            for j in range(m):
                hh = h[i, j]
                xx = x[i, j]
                nan_h[j] += hh * 0.0
                nan_x[j] += xx * 0.0
                low_h[j] += hh <= 0.0
                a = xx if premultiplied else hh * xx
                t = a / hh
                out_q[i, j] = 0.0
                out_t[i, j] = t
                out_qe[i, j] = a - hh * t
    flags = 0
    for j in range(m):
        flags |= ((1 if nan_h[j] != nan_h[j] else 0) | (2 if low_h[j] > 0 else 0)
                  | (4 if nan_x[j] != nan_x[j] else 0))
    return flags


@functools.cache
def _kernel():
    """:func:`_all_hours_loop` compiled once: read-only C-contiguous 2-D float64 inputs
    (``x``, ``h``, ``t_in``; see :func:`_c2d`), writable C-contiguous 1-D coefficients
    and 2-D outputs. Other specialisations are not compiled at call time.
    ``error_model="numpy"``: IEEE division (h_e = 0 is reported by the flags), no check
    per division; ``cache=True`` keeps the machine code on disk.
    """
    import numba
    from numba import types

    ro = types.Array(types.float64, 2, "C", readonly=True)
    vec = types.Array(types.float64, 1, "C")
    out = types.Array(types.float64, 2, "C")
    kernel = numba.njit(cache=True, error_model="numpy")(_all_hours_loop)
    kernel.compile((ro, ro, types.boolean, ro, types.boolean, types.float64, vec, vec,
                    out, out, out))
    kernel.disable_compile()
    return kernel


def _all_hours(x, h, premultiplied, t_in, model, resistance, tilt, r_inside, shape):
    """Massless or steady response with the linear exterior and no dew, all hours at once.

    Without storage and without condensate nothing couples one hour to the
    next, so the hourly closure of the time loop is evaluated for the whole
    (time, column) array in one compiled pass (:func:`_all_hours_loop`), with the
    same floating-point operations in the same order (the results are bit for
    bit those of the loop, checked in ``tests/test_compare.py``).

    The ISO 6946 R_si depends on the direction of the heat flow, which itself
    depends on R_si only through the size of the flux: with the linear
    exterior, T_s − T_i = h_e (T_eq − T_i) / (h_e + U'), whose sign is that of
    T_eq − T_i for either candidate R_si. The self-consistent candidate of
    every element is therefore the one picked by T_eq > T_i. Where
    T_eq = T_i exactly, both candidates give q = 0 and T_s = T_i; the
    outward (heat-loss) value is taken, as the stepped loop does.

    ``x``, ``h``: T_eq [°C] (or A = h_e T_eq with ``premultiplied``) and h_e
    [W m-2 K-1], (time, column); ``t_in`` (1|time, 1|column) [°C]. The dry surface
    holds no water: ``latent_flux``, ``condensation``, ``condensate`` (zeros) and
    ``wet`` (False) are read-only broadcast views of one zero, not full arrays.
    """
    n_time, ncol = x.shape
    if model == "steady":
        if r_inside is not None:
            h_inward = h_outward = np.full(ncol, 1.0 / float(r_inside))
        else:
            h_inward = np.ascontiguousarray(1.0 / np.broadcast_to(r_si(tilt, True), (ncol,)))
            h_outward = np.ascontiguousarray(1.0 / np.broadcast_to(r_si(tilt, False), (ncol,)))
        r = float(resistance)
    else:
        h_inward = h_outward = np.ones(ncol)
        r = 0.0
    out_t = np.empty((n_time, ncol))
    out_q = np.empty((n_time, ncol))
    out_qe = np.empty((n_time, ncol))
    bad = _kernel()(_c2d(x, x.shape), _c2d(h, h.shape), bool(premultiplied),
                    _c2d(t_in, t_in.shape), model == "steady", r, h_inward, h_outward,
                    out_t, out_q, out_qe)
    if bad and not premultiplied:  # in the order of the stepped path's checks
        raise ConfigurationError("surface response: " + (
            "h_ext holds NaN or infinite values" if bad & 1 else
            "h_ext must be > 0 W m-2 K-1" if bad & 2 else
            "temp_sol_air holds NaN or infinite values"))
    def zero(dtype=float):
        return np.broadcast_to(np.zeros((), dtype=dtype), shape)

    return {
        "temp_surface": out_t.reshape(shape),
        "heat_flux": out_q.reshape(shape),
        "heat_flux_exterior": out_qe.reshape(shape),
        "latent_flux": zero(),
        "condensation": zero(),
        "condensate": zero(),
        "wet": zero(bool),
        "energy": {},
        "n_nodes": 0,
    }
