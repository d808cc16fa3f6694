"""Risk metrics of an exterior surface over a year, per surface × finish.

Every function takes hourly arrays with time on the first axis and reduces that
axis; all other axes (surface, finish, ...) are kept, so a whole comparison is
summarised in one call per metric. :func:`surface_table` evaluates the metrics
of a finish comparison together in one compiled call.

Definitions
-----------
* hours: counts of hourly values (hour-ending labels, each value the hour's mean).
* dew hour: T_s < T_dp and T_s ≥ 0 °C; frost hour: T_s < T_dp and T_s < 0 °C
  (common practice, e.g. Zillig et al. 2003 count the hours below the dew point).
* freeze–thaw cycle: the surface is *frozen* while T_s < 0 °C − band and
  *thawed* while T_s > 0 °C + band (in between it keeps its last state); one
  cycle is a thawed → frozen → thawed sequence, counted when the thaw completes.
  A year starting frozen does not count its first thaw.
* night-time undercooling hour: T_s < T_a while the sun is down (ghi == 0).
* heat gain / loss: Σ max(±q, 0) × 1 h over the year [kWh m-2], q the heat flux
  into the building.

Implementation
--------------
The reductions are compiled loops (numba) over a C-contiguous float64
(time, column) view of the inputs, the trailing axes flattened into columns;
time-only operands (air temperature, ghi, dew point) stay (time, 1) and are not
broadcast to the full shape. Each loop runs time-outer, column-inner, keeping
one state value per column, without branches where it can (so it vectorises
over the columns). Sums add the hours in time order, like numpy's reduction
over the first axis of a 2-D or 3-D array (a 1-D sum differs from numpy's
pairwise one by rounding only); NaN propagates into peaks, ranges, sums and
percentiles as it does in numpy. The percentile is numpy's default ("linear",
Hyndman & Fan 1996, "Sample quantiles in statistical packages", definition 7)
from a partition of a per-column contiguous copy.
"""

from __future__ import annotations

import numba
import numpy as np

from solair.errors import ConfigurationError

__all__ = [
    "peak",
    "percentile",
    "hours_above",
    "max_daily_range",
    "hours_below_dew_point",
    "freeze_thaw_cycles",
    "undercooling",
    "heat_gain_loss",
    "heat_flux_peaks",
    "surface_table",
]

_jit = numba.njit(cache=True)


# ---------------------------------------------------------------- input normalisation

def _operands(name, main, *others):
    """(main (n, ncol), others (1|n, 1|ncol), trailing shape): C-contiguous writable float64.

    ``main`` is broadcast to the common shape (materialised only if it must
    be); an operand that varies only along time (or not at all) stays one
    column, so time-only weather series are never copied to the full shape.
    """
    arrs = [np.asarray(a, dtype=float) for a in (main, *others)]
    try:
        full = np.broadcast_shapes(*(a.shape for a in arrs))
    except ValueError:
        raise ConfigurationError(
            f"{name}: operand shapes {[a.shape for a in arrs]} do not broadcast together"
        ) from None
    if len(full) == 0:
        raise ConfigurationError(f"{name}: needs hourly values along a first (time) axis, "
                                 "got scalars")
    n, trailing = full[0], full[1:]
    ncol = int(np.prod(trailing, dtype=int))
    m = arrs[0]
    if m.shape != full:
        m = np.broadcast_to(m, full)
    out = [_c2d(m, (n, ncol))]
    for a in arrs[1:]:
        padded = (1,) * (len(full) - a.ndim) + a.shape
        if all(s == 1 for s in padded[1:]):
            out.append(_c2d(a, (padded[0], 1)))
        else:
            out.append(_c2d(np.broadcast_to(a.reshape(padded), (padded[0],) + trailing),
                            (padded[0], ncol)))
    return out, trailing


def _c2d(a, shape2):
    """``a`` as a C-contiguous, writable float64 array of shape ``shape2`` (one kernel type)."""
    b = np.reshape(a, shape2)
    if not (b.flags.c_contiguous and b.flags.writeable and b.dtype == np.float64):
        b = np.array(b, dtype=np.float64, order="C")
    return b


def _shaped(out, trailing):
    """Column results to the trailing shape; a numpy scalar for a 1-D input."""
    return out.reshape(trailing)[()]


def _need_hours(name, n):
    if n < 1:
        raise ConfigurationError(f"{name}: needs at least one hourly value, got none")


def _new_days(day, n):
    """True at the first hour of each day (``day`` labels, consecutive hours per day)."""
    day = np.asarray(day)
    if day.shape != (n,):
        raise ConfigurationError(
            f"max_daily_range: day labels of shape {day.shape}; give one per hour ({n},)")
    new = np.empty(n, dtype=np.bool_)
    if n:
        new[0] = True
        np.not_equal(day[1:], day[:-1], out=new[1:])
    return new


def _check_band(band):
    try:
        return float(band)
    except (TypeError, ValueError):
        raise ConfigurationError(f"freeze_thaw_cycles: band {band!r} is not a number") from None


def _check_q(q):
    if np.ndim(q) != 0:
        raise ConfigurationError(f"percentile: q = {q!r}; give one number in [0, 100]")
    q = float(q)
    if not 0.0 <= q <= 100.0:
        raise ConfigurationError(f"percentile: q = {q!r} is outside [0, 100]")
    return q / 100.0


# ---------------------------------------------------------------- per-hour scalar steps
# Scalars in, scalar out (no arrays: the calls compile away); the loops below keep
# one state value per column and update it without branches where they can.

@_jit
def _hi(acc, v):
    """max(acc, v), NaN kept (as np.max)."""
    return v if (v > acc or v != v) else acc


@_jit
def _lo(acc, v):
    """min(acc, v), NaN kept (as np.min)."""
    return v if (v < acc or v != v) else acc


@_jit
def _pos(v):
    """max(v, 0), NaN kept (as np.maximum(v, 0))."""
    return v if (v > 0.0 or v != v) else 0.0


@_jit
def _phase(state, v, band):
    """1 frozen (v < −band), 0 thawed (v > band), else the last state (−1: none yet)."""
    return 1 if v < -band else (0 if v > band else state)


@_jit
def _thaw_result(first, thaws):
    """Completed cycles: a column that starts frozen does not count its first thaw."""
    out = thaws.copy()
    for j in range(out.size):
        if first[j] == 1 and thaws[j] > 0:
            out[j] -= 1
    return out


def _percentile_rows(cols, frac, nan):
    """numpy's linear percentile of each row of ``cols`` (rows reordered in place).

    The same steps as ``np.percentile(..., method="linear")``: virtual index
    (n − 1) q, its floor and the next order statistic (the last value for both
    at q = 100 %), then numpy's ``_lerp``. The order statistics come from
    ``ndarray.partition`` along the contiguous rows; a row holding NaN gives NaN.
    """
    m, n = cols.shape
    virtual = (n - 1) * frac
    if virtual >= n - 1:  # numpy takes the last value for both neighbours
        prev, k = -1.0, n - 1
    else:
        prev = float(np.floor(virtual))
        k = int(prev)
    cols.partition(k, axis=1)
    lower = cols[:, k]
    upper = lower if k == n - 1 else np.min(cols[:, k + 1:], axis=1)
    gamma = virtual - prev
    diff = upper - lower
    out = upper - diff * (1.0 - gamma) if gamma >= 0.5 else lower + diff * gamma
    out[nan] = np.nan
    return out


# ---------------------------------------------------------------- one kernel per metric
# x: (time, column); a second operand o: (1|time, 1|column), read as o[i * ro, j * co].

@_jit
def _k_peak(x):
    n, m = x.shape
    hi = np.full(m, -np.inf)
    for i in range(n):
        for j in range(m):
            hi[j] = _hi(hi[j], x[i, j])
    return hi


@_jit
def _gather(x):
    """(x transposed, C-contiguous (column, time); per column: holds NaN)."""
    n, m = x.shape
    cols = np.empty((m, n))
    nan = np.zeros(m, dtype=np.bool_)
    for i0 in range(0, n, 64):  # tiles of 64 hours: strided reads stay in L1
        i1 = min(i0 + 64, n)
        for j in range(m):
            f = False
            for i in range(i0, i1):
                v = x[i, j]
                cols[j, i] = v
                f |= v != v
            nan[j] |= f
    return cols, nan


@_jit
def _k_above(x, threshold):
    n, m = x.shape
    count = np.zeros(m, dtype=np.int64)
    for i in range(n):
        for j in range(m):
            count[j] += x[i, j] > threshold
    return count


@_jit
def _range_rows(x, new_day, hi, lo, best):
    """Fold the hours into the per-day max/min and the largest day range so far."""
    n, m = x.shape
    for i in range(n):
        if i > 0 and new_day[i]:
            for j in range(m):
                best[j] = _hi(best[j], hi[j] - lo[j])
                hi[j] = x[i, j]
                lo[j] = x[i, j]
        else:
            for j in range(m):
                hi[j] = _hi(hi[j], x[i, j])
                lo[j] = _lo(lo[j], x[i, j])


@_jit
def _k_daily_range(x, new_day):
    m = x.shape[1]
    hi = np.full(m, -np.inf)
    lo = np.full(m, np.inf)
    best = np.full(m, -np.inf)
    _range_rows(x, new_day, hi, lo, best)
    for j in range(m):
        best[j] = _hi(best[j], hi[j] - lo[j])
    return best


@_jit
def _k_dew(ts, td):
    n, m = ts.shape
    rt = 1 if td.shape[0] > 1 else 0
    ct = 1 if td.shape[1] > 1 else 0
    dew = np.zeros(m, dtype=np.int64)
    frost = np.zeros(m, dtype=np.int64)
    for i in range(n):
        for j in range(m):
            v = ts[i, j]
            below = v < td[i * rt, j * ct]
            dew[j] += below & (v >= 0.0)
            frost[j] += below & (v < 0.0)
    return dew, frost


@_jit
def _k_freeze_thaw(x, band):
    n, m = x.shape
    state = np.full(m, -1, dtype=np.int64)
    first = np.full(m, -1, dtype=np.int64)
    thaws = np.zeros(m, dtype=np.int64)
    for i in range(n):
        for j in range(m):
            s = state[j]
            new = _phase(s, x[i, j], band)
            thaws[j] += (s == 1) & (new == 0)
            if s == -1:
                first[j] = new
            state[j] = new
    return _thaw_result(first, thaws)


@_jit
def _k_undercooling(ts, ta, ghi):
    n, m = ts.shape
    ra = 1 if ta.shape[0] > 1 else 0
    ca = 1 if ta.shape[1] > 1 else 0
    rg = 1 if ghi.shape[0] > 1 else 0
    cg = 1 if ghi.shape[1] > 1 else 0
    hours = np.zeros(m, dtype=np.int64)
    deficit = np.zeros(m)
    for i in range(n):
        if cg == 0 and not ghi[i * rg, 0] <= 0.0:
            continue  # a day hour of every column: adds nothing
        for j in range(m):
            night = ghi[i * rg, j * cg] <= 0.0
            v = ts[i, j]
            a = ta[i * ra, j * ca]
            hours[j] += night & (v < a)
            deficit[j] += _pos(a - v) if night else 0.0
    return hours, deficit


@_jit
def _k_flux(q):
    n, m = q.shape
    gain = np.zeros(m)
    loss = np.zeros(m)
    hi = np.full(m, -np.inf)
    lo = np.full(m, np.inf)
    for i in range(n):
        for j in range(m):
            v = q[i, j]
            gain[j] += _pos(v)
            loss[j] += _pos(-v)
            hi[j] = _hi(hi[j], v)
            lo[j] = _lo(lo[j], v)
    return gain, loss, hi, lo


@_jit
def _k_table(ts, td, ta, ghi, q, new_day, threshold, band):
    """The kernels of :func:`surface_table` in one compiled call (the same loops)."""
    cols, nan = _gather(ts)
    dew, frost = _k_dew(ts, td)
    uc_h, uc_dh = _k_undercooling(ts, ta, ghi)
    gain, loss, q_hi, q_lo = _k_flux(q)
    return (_k_peak(ts), cols, nan, _k_above(ts, threshold), _k_daily_range(ts, new_day),
            dew, frost, _k_freeze_thaw(ts, band), uc_h, uc_dh, gain, loss, q_hi, q_lo)


# ---------------------------------------------------------------- public metrics

def peak(temp) -> np.ndarray:
    """Highest hourly value [°C]."""
    (x,), trailing = _operands("peak", temp)
    _need_hours("peak", x.shape[0])
    return _shaped(_k_peak(x), trailing)


def percentile(temp, q: float = 99.0) -> np.ndarray:
    """q-th percentile of the hourly values [°C].

    numpy's default ``np.percentile`` (linear interpolation between the
    order statistics, Hyndman & Fan 1996, "Sample quantiles in statistical
    packages", definition 7); NaN where a column holds NaN.
    """
    frac = _check_q(q)
    (x,), trailing = _operands("percentile", temp)
    _need_hours("percentile", x.shape[0])
    cols, nan = _gather(x)
    return _shaped(_percentile_rows(cols, frac, nan), trailing)


def hours_above(temp, threshold: float = 60.0) -> np.ndarray:
    """Number of hours with T_s > threshold [h]."""
    (x,), trailing = _operands("hours_above", temp)
    return _shaped(_k_above(x, float(threshold)), trailing)


def max_daily_range(temp, day) -> np.ndarray:
    """Largest (max − min) of the hourly values within one day [K].

    Parameters
    ----------
    temp : array_like (time, ...)
    day : array_like (time,)
        Day label of each hour (e.g. local date of the hour's start); hours of
        a day must be consecutive.
    """
    (x,), trailing = _operands("max_daily_range", temp)
    _need_hours("max_daily_range", x.shape[0])
    return _shaped(_k_daily_range(x, _new_days(day, x.shape[0])), trailing)


def hours_below_dew_point(temp_surface, temp_dew) -> tuple[np.ndarray, np.ndarray]:
    """Hours with the surface below the air dew point, split into dew and frost.

    Returns
    -------
    (dew_hours, frost_hours) : ndarray
        T_s < T_dp with T_s ≥ 0 °C, and with T_s < 0 °C [h].
    """
    (ts, td), trailing = _operands("hours_below_dew_point", temp_surface, temp_dew)
    dew, frost = _k_dew(ts, td)
    return _shaped(dew, trailing), _shaped(frost, trailing)


def freeze_thaw_cycles(temp, band: float = 0.0) -> np.ndarray:
    """Completed freeze–thaw cycles (see the module definition) [-].

    Parameters
    ----------
    temp : array_like (time, ...)
        Surface temperature [°C].
    band : float
        Half-width of the dead band around 0 °C [K] (0: plain crossings).
    """
    band = _check_band(band)
    (x,), trailing = _operands("freeze_thaw_cycles", temp)
    return _shaped(_k_freeze_thaw(x, band), trailing)


def undercooling(temp_surface, temp_air, ghi) -> tuple[np.ndarray, np.ndarray]:
    """Night-time undercooling: hours with T_s < T_a while ghi == 0, and the degree-hours.

    Returns
    -------
    (hours, degree_hours) : ndarray
        [h] and Σ max(T_a − T_s, 0) over those night hours [K h].
    """
    (ts, ta, g), trailing = _operands("undercooling", temp_surface, temp_air, ghi)
    hours, deficit = _k_undercooling(ts, ta, g)
    return _shaped(hours, trailing), _shaped(deficit, trailing)


def heat_gain_loss(heat_flux, hours: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Annual heat gain and loss through the construction [kWh m-2].

    Parameters
    ----------
    heat_flux : array_like (time, ...)
        Heat flux into the building [W m-2], hourly means.
    hours : float
        Length of a value [h].

    Returns
    -------
    (gain, loss) : ndarray
        Σ max(q, 0) Δt and Σ max(−q, 0) Δt [kWh m-2].
    """
    (q,), trailing = _operands("heat_gain_loss", heat_flux)
    gain, loss, _, _ = _k_flux(q)
    return (_shaped(gain * hours / 1000.0, trailing),
            _shaped(loss * hours / 1000.0, trailing))


def heat_flux_peaks(heat_flux) -> tuple[np.ndarray, np.ndarray]:
    """Peak hourly heat flux into and out of the building [W m-2].

    Returns
    -------
    (peak_in, peak_out) : ndarray
        max(q, 0) and max(−q, 0) over the hours (0 when the flux never goes
        that way).
    """
    (q,), trailing = _operands("heat_flux_peaks", heat_flux)
    _need_hours("heat_flux_peaks", q.shape[0])
    _, _, hi, lo = _k_flux(q)
    return _shaped(np.maximum(hi, 0.0), trailing), _shaped(np.maximum(-lo, 0.0), trailing)


def surface_table(temp_surface, temp_air, temp_dew, ghi, heat_flux, day, *,
                  threshold: float = 60.0, q: float = 99.0, band: float = 0.0,
                  hours: float = 1.0) -> dict[str, np.ndarray]:
    """The metrics of a finish comparison, computed together.

    Equal to calling :func:`peak`, :func:`percentile`, :func:`hours_above`,
    :func:`max_daily_range`, :func:`hours_below_dew_point`,
    :func:`freeze_thaw_cycles`, :func:`undercooling`, :func:`heat_gain_loss`
    and :func:`heat_flux_peaks` one by one (the same kernels, in one compiled
    call, with the inputs normalised once).

    Parameters
    ----------
    temp_surface : array_like (time, ...)
        Surface temperature [°C].
    temp_air, temp_dew, ghi : array_like
        Air and dew-point temperature [°C] and global horizontal irradiance
        [W m-2], broadcast against ``temp_surface`` (time-only series stay
        one column).
    heat_flux : array_like, shape of ``temp_surface``
        Heat flux into the building [W m-2].
    day : array_like (time,)
        Day label of each hour (see :func:`max_daily_range`).
    threshold, q, band, hours : float
        As in :func:`hours_above`, :func:`percentile`,
        :func:`freeze_thaw_cycles` and :func:`heat_gain_loss`.

    Returns
    -------
    dict
        ``temp_surface_max``, ``temp_surface_p<q>`` (e.g. ``temp_surface_p99``),
        ``hours_above_threshold``, ``daily_range_max``, ``dew_hours``,
        ``frost_hours``, ``freeze_thaw_cycles``, ``undercooling_hours``,
        ``undercooling_degree_hours``, ``heat_gain``, ``heat_loss``,
        ``heat_flux_peak_in``, ``heat_flux_peak_out``, each over the trailing
        axes.
    """
    frac = _check_q(q)
    band = _check_band(band)
    (ts, ta, td, g), trailing = _operands("surface_table", temp_surface, temp_air,
                                          temp_dew, ghi)
    flux = np.asarray(heat_flux, dtype=float)
    if flux.shape != np.shape(temp_surface) or ts.shape[0] * ts.shape[1] != flux.size:
        raise ConfigurationError(
            f"surface_table: heat_flux of shape {flux.shape}; give the shape of "
            f"temp_surface {np.shape(temp_surface)}")
    n = ts.shape[0]
    _need_hours("surface_table", n)
    out = _k_table(ts, td, ta, g, _c2d(flux, ts.shape), _new_days(day, n), float(threshold),
                   band)
    (p_max, cols, nan, above, rng, dew, frost, ft, uc_h, uc_dh, gain, loss, q_hi, q_lo) = out
    p_q = _percentile_rows(cols, frac, nan)
    label = f"{float(q):g}".replace(".", "_")
    return {k: _shaped(v, trailing) for k, v in {
        "temp_surface_max": p_max,
        f"temp_surface_p{label}": p_q,
        "hours_above_threshold": above,
        "daily_range_max": rng,
        "dew_hours": dew,
        "frost_hours": frost,
        "freeze_thaw_cycles": ft,
        "undercooling_hours": uc_h,
        "undercooling_degree_hours": uc_dh,
        "heat_gain": gain * hours / 1000.0,
        "heat_loss": loss * hours / 1000.0,
        "heat_flux_peak_in": np.maximum(q_hi, 0.0),
        "heat_flux_peak_out": np.maximum(-q_lo, 0.0),
    }.items()}
