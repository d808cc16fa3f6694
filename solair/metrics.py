"""Risk metrics of an exterior surface over a year, per surface × finish.

Every function takes hourly arrays with time on the first axis and reduces that
axis; all other axes (surface, finish, ...) are kept, so a whole comparison is
summarised in one call per metric.

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
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "peak",
    "percentile",
    "hours_above",
    "max_daily_range",
    "hours_below_dew_point",
    "freeze_thaw_cycles",
    "undercooling",
    "heat_gain_loss",
]


def peak(temp) -> np.ndarray:
    """Highest hourly value [°C]."""
    return np.max(np.asarray(temp, dtype=float), axis=0)


def percentile(temp, q: float = 99.0) -> np.ndarray:
    """q-th percentile of the hourly values (linear interpolation) [°C]."""
    return np.percentile(np.asarray(temp, dtype=float), q, axis=0)


def hours_above(temp, threshold: float = 60.0) -> np.ndarray:
    """Number of hours with T_s > threshold [h]."""
    return np.sum(np.asarray(temp, dtype=float) > threshold, axis=0)


def max_daily_range(temp, day) -> np.ndarray:
    """Largest (max − min) of the hourly values within one day [K].

    Parameters
    ----------
    temp : array_like (time, ...)
    day : array_like (time,)
        Day label of each hour (e.g. local date of the hour's start); hours of
        a day must be consecutive.
    """
    temp = np.asarray(temp, dtype=float)
    day = np.asarray(day)
    starts = np.flatnonzero(np.r_[True, day[1:] != day[:-1]])
    hi = np.maximum.reduceat(temp, starts, axis=0)
    lo = np.minimum.reduceat(temp, starts, axis=0)
    return np.max(hi - lo, axis=0)


def hours_below_dew_point(temp_surface, temp_dew):
    """Hours with the surface below the air dew point, split into dew and frost.

    Returns
    -------
    (dew_hours, frost_hours) : ndarray
        T_s < T_dp with T_s ≥ 0 °C, and with T_s < 0 °C [h].
    """
    ts = np.asarray(temp_surface, dtype=float)
    below = ts < np.asarray(temp_dew, dtype=float)
    return np.sum(below & (ts >= 0.0), axis=0), np.sum(below & (ts < 0.0), axis=0)


def freeze_thaw_cycles(temp, band: float = 0.0) -> np.ndarray:
    """Completed freeze–thaw cycles (see the module definition) [-].

    Parameters
    ----------
    temp : array_like (time, ...)
        Surface temperature [°C].
    band : float
        Half-width of the dead band around 0 °C [K] (0: plain crossings).
    """
    t = np.asarray(temp, dtype=float)
    frozen = t < -band
    thawed = t > band
    defined = frozen | thawed
    n = t.shape[0]
    idx = np.where(defined, np.arange(n).reshape((n,) + (1,) * (t.ndim - 1)), -1)
    last = np.maximum.accumulate(idx, axis=0)
    state = np.take_along_axis(frozen, np.maximum(last, 0), axis=0) & (last >= 0)
    known = last >= 0
    thaw = np.sum(state[:-1] & ~state[1:], axis=0)
    first = np.argmax(known, axis=0)[None, ...]
    starts_frozen = np.take_along_axis(state, first, axis=0)[0]
    return thaw - (starts_frozen & (thaw > 0)).astype(int)


def undercooling(temp_surface, temp_air, ghi):
    """Night-time undercooling: hours with T_s < T_a while ghi == 0, and the degree-hours.

    Returns
    -------
    (hours, degree_hours) : ndarray
        [h] and Σ max(T_a − T_s, 0) over those night hours [K h].
    """
    ts = np.asarray(temp_surface, dtype=float)
    ta = np.asarray(temp_air, dtype=float)
    night = np.asarray(ghi, dtype=float) <= 0.0
    deficit = np.where(night, np.maximum(ta - ts, 0.0), 0.0)
    return np.sum(night & (ts < ta), axis=0), np.sum(deficit, axis=0)


def heat_gain_loss(heat_flux, hours: float = 1.0):
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
    q = np.asarray(heat_flux, dtype=float)
    return (np.sum(np.maximum(q, 0.0), axis=0) * hours / 1000.0,
            np.sum(np.maximum(-q, 0.0), axis=0) * hours / 1000.0)
