"""Risk metrics (solair.metrics) on small hand-made series with known answers.

The definitions (docs/finishes.md, solair.metrics) are common practice; each
check states the hand count it reproduces.
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal

from solair import metrics as m


def test_peak_percentile_hours_above():
    t = np.array([[10.0, 1.0], [70.0, 2.0], [61.0, 3.0], [60.0, 80.0]])
    assert_array_equal(m.peak(t), [70.0, 80.0])
    assert_array_equal(m.hours_above(t, 60.0), [2, 1])       # strictly above
    assert_allclose(m.percentile(np.arange(101.0), 99.0), 99.0)


def test_max_daily_range_groups_consecutive_days():
    t = np.array([0.0, 10.0, 5.0, 20.0, 21.0, 30.0])[:, None]
    day = np.array([1, 1, 1, 2, 2, 2])
    assert_array_equal(m.max_daily_range(t, day), [10.0])
    assert_array_equal(m.max_daily_range(t, np.array([1, 1, 2, 2, 3, 3])), [15.0])


def test_dew_and_frost_hours():
    ts = np.array([5.0, 1.0, -1.0, -3.0, 2.0])
    td = np.array([4.0, 2.0, 0.0, -4.0, 2.0])
    dew, frost = m.hours_below_dew_point(ts, td)
    assert (dew, frost) == (1, 1)     # 1 < 2 (dew); -1 < 0 (frost); -3 > -4; 2 == 2 not below


def test_freeze_thaw_definition():
    # one cycle = thawed -> frozen -> thawed, counted when the thaw completes
    assert m.freeze_thaw_cycles(np.array([1.0, -1.0, 1.0])) == 1
    assert m.freeze_thaw_cycles(np.array([1.0, -1.0, -2.0])) == 0      # no thaw yet
    assert m.freeze_thaw_cycles(np.array([-1.0, 1.0, -1.0, 1.0])) == 1  # starts frozen
    assert m.freeze_thaw_cycles(np.array([1, -1, 1, -1, 1, -1, 1.0])) == 3
    # exactly 0 °C is neither: the state carries over
    assert m.freeze_thaw_cycles(np.array([1.0, 0.0, 1.0])) == 0
    # dead band: small excursions around 0 do not count
    t = np.array([1.0, -0.1, 0.1, -0.1, 0.1, -2.0, 2.0])
    assert m.freeze_thaw_cycles(t) == 3
    assert m.freeze_thaw_cycles(t, band=0.5) == 1
    # vectorised over trailing axes
    assert_array_equal(m.freeze_thaw_cycles(np.array([[1, -1], [-1, 1], [1, -1.0]])), [1, 0])


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(-10, 10), min_size=2, max_size=60))
def test_freeze_thaw_matches_a_plain_loop(values):
    t = np.asarray(values)
    state, seen_freeze, count = None, False, 0
    for v in t:
        new = True if v < 0 else (False if v > 0 else state)
        if state is False and new is True:
            seen_freeze = True
        if state is True and new is False and seen_freeze:
            count += 1
        state = new
    assert m.freeze_thaw_cycles(t) == count


def test_undercooling_counts_night_hours_only():
    ts = np.array([5.0, 3.0, 9.0, 1.0])
    ta = np.array([6.0, 6.0, 10.0, 0.0])
    ghi = np.array([0.0, 0.0, 300.0, 0.0])
    hours, dh = m.undercooling(ts, ta, ghi)
    assert hours == 2
    assert_allclose(dh, 1.0 + 3.0)


def test_heat_gain_and_loss():
    q = np.array([100.0, -50.0, 20.0, -10.0])
    gain, loss = m.heat_gain_loss(q)
    assert_allclose([gain, loss], [0.12, 0.06])


# ---- the compiled metrics against plain per-column loops (their definitions above) on
# random data: ndim 1, 2 and 3, C-contiguous, Fortran-ordered and strided views


def _columns(x):
    x = np.asarray(x, dtype=float)
    return x.reshape(x.shape[0], -1).T, x.shape[1:]


def _ref_percentile(col, q):
    # Hyndman & Fan (1996), "Sample quantiles in statistical packages", definition 7
    s = sorted(col)
    h = (len(s) - 1) * q / 100.0
    lo = int(np.floor(h))
    hi = min(lo + 1, len(s) - 1)
    return s[lo] + (h - lo) * (s[hi] - s[lo])


def _ref_daily_range(col, day):
    out, start = -np.inf, 0
    for i in range(1, len(col) + 1):
        if i == len(col) or day[i] != day[i - 1]:
            out = max(out, max(col[start:i]) - min(col[start:i]))
            start = i
    return out


def _ref_freeze_thaw(col, band):
    state, seen_freeze, count = None, False, 0
    for v in col:
        new = True if v < -band else (False if v > band else state)
        if state is False and new is True:
            seen_freeze = True
        if state is True and new is False and seen_freeze:
            count += 1
        state = new
    return count


def _reference(ts, td, ta, ghi, q, day, threshold, band, pct):
    """Every metric of surface_table by plain loops over each column (time-only td/ta/ghi)."""
    cols, trailing = _columns(ts)
    qcols, _ = _columns(q)
    night = [g <= 0.0 for g in ghi]
    out = {k: [] for k in ("peak", "p", "above", "range", "dew", "frost", "ft", "uc_h", "uc_dh",
                           "gain", "loss", "in", "out")}
    for c, qc in zip(cols, qcols):
        out["peak"].append(max(c))
        out["p"].append(_ref_percentile(c, pct))
        out["above"].append(sum(v > threshold for v in c))
        out["range"].append(_ref_daily_range(c, day))
        out["dew"].append(sum(v < d and v >= 0 for v, d in zip(c, td)))
        out["frost"].append(sum(v < d and v < 0 for v, d in zip(c, td)))
        out["ft"].append(_ref_freeze_thaw(c, band))
        out["uc_h"].append(sum(n and v < a for v, a, n in zip(c, ta, night)))
        out["uc_dh"].append(sum(max(a - v, 0.0) for v, a, n in zip(c, ta, night) if n))
        out["gain"].append(sum(max(v, 0.0) for v in qc) / 1000.0)
        out["loss"].append(sum(max(-v, 0.0) for v in qc) / 1000.0)
        out["in"].append(max(max(qc), 0.0))
        out["out"].append(max(-min(qc), 0.0))
    return {k: np.array(v).reshape(trailing) for k, v in out.items()}


_LAYOUTS = ("c", "fortran", "reversed", "strided")


def _layout(x, how):
    """The same values in another memory layout (time stays the first axis)."""
    if how == "fortran":
        return np.asfortranarray(x)
    if how == "reversed" and x.ndim > 1:
        return np.flip(np.flip(x, axis=-1).copy(), axis=-1)  # negative strides
    if how == "strided":
        wide = np.zeros(x.shape[:-1] + (2 * x.shape[-1],)) if x.ndim > 1 else np.zeros(2 * x.size)
        wide[..., ::2] = x
        return wide[..., ::2]
    return x


@settings(max_examples=60, deadline=None)
@given(
    n=st.integers(1, 80),
    trailing=st.sampled_from([(), (1,), (3,), (2, 3), (4, 1)]),
    layout=st.sampled_from(_LAYOUTS),
    band=st.sampled_from([0.0, 0.3, 1.0]),
    pct=st.sampled_from([0.0, 1.0, 37.5, 50.0, 99.0, 100.0]),
    rounded=st.booleans(),
    seed=st.integers(0, 2**32 - 1),
)
def test_compiled_metrics_match_plain_loops(n, trailing, layout, band, pct, rounded, seed):
    """Random temperatures around 0 °C (rounded: ties and exact zeros, the dead-band edges):
    each public metric and surface_table equal the loops of their definitions."""
    rng = np.random.default_rng(seed)
    ts = rng.normal(0.0, 2.0, (n, *trailing))
    if rounded:
        ts = np.round(ts * 2.0) / 2.0
    q = rng.normal(0.0, 40.0, ts.shape)
    td = rng.normal(-0.5, 2.0, n)
    ta = rng.normal(0.5, 2.0, n)
    ghi = np.where(rng.random(n) < 0.5, 0.0, 300.0)
    day = np.sort(rng.integers(0, max(1, n // 5), n))
    t_shape = (n,) + (1,) * len(trailing)  # time-only series broadcast against the columns
    ts_l, q_l = _layout(ts, layout), _layout(q, layout)
    ref = _reference(ts, td, ta, ghi, q, day, 0.5, band, pct)

    exact = {"rtol": 0, "atol": 0}
    close = {"rtol": 1e-12, "atol": 1e-12}  # sums in another order (1-D: numpy is pairwise)
    assert_allclose(m.peak(ts_l), ref["peak"], **exact)
    assert_allclose(m.percentile(ts_l, pct), ref["p"], **close)
    assert_allclose(m.percentile(ts_l, pct), np.percentile(ts, pct, axis=0), **close)
    assert_array_equal(m.hours_above(ts_l, 0.5), ref["above"])
    assert_allclose(m.max_daily_range(ts_l, day), ref["range"], **exact)
    dew, frost = m.hours_below_dew_point(ts_l, td.reshape(t_shape))
    assert_array_equal(dew, ref["dew"])
    assert_array_equal(frost, ref["frost"])
    assert_array_equal(m.freeze_thaw_cycles(ts_l, band), ref["ft"])
    uc_h, uc_dh = m.undercooling(ts_l, ta.reshape(t_shape), ghi.reshape(t_shape))
    assert_array_equal(uc_h, ref["uc_h"])
    assert_allclose(uc_dh, ref["uc_dh"], **close)
    gain, loss = m.heat_gain_loss(q_l)
    assert_allclose(gain, ref["gain"], **close)
    assert_allclose(loss, ref["loss"], **close)
    p_in, p_out = m.heat_flux_peaks(q_l)
    assert_allclose(p_in, ref["in"], **exact)
    assert_allclose(p_out, ref["out"], **exact)
    for got in (dew, uc_h, m.freeze_thaw_cycles(ts_l), m.hours_above(ts_l)):
        assert np.asarray(got).dtype == np.int64

    tab = m.surface_table(ts_l, ta.reshape(t_shape), td.reshape(t_shape), ghi.reshape(t_shape),
                          q_l, day, threshold=0.5, q=pct, band=band)
    label = f"temp_surface_p{pct:g}".replace(".", "_")
    for key, want in [("temp_surface_max", "peak"), (label, "p"),
                      ("hours_above_threshold", "above"), ("daily_range_max", "range"),
                      ("dew_hours", "dew"), ("frost_hours", "frost"),
                      ("freeze_thaw_cycles", "ft"), ("undercooling_hours", "uc_h"),
                      ("undercooling_degree_hours", "uc_dh"), ("heat_gain", "gain"),
                      ("heat_loss", "loss"), ("heat_flux_peak_in", "in"),
                      ("heat_flux_peak_out", "out")]:
        assert np.shape(tab[key]) == trailing
        assert_allclose(tab[key], ref[want], **close)


def test_percentile_equals_numpy_default_on_a_year_of_columns():
    """numpy's default (linear) np.percentile, 8760 hours x 17 x 4 columns, with ties."""
    rng = np.random.default_rng(7)
    hours = np.arange(8760)
    t = 15 * np.sin(hours * 2 * np.pi / 24)[:, None, None] + rng.normal(0, 5, (8760, 17, 4))
    t[:, 0, 0] = np.round(t[:, 0, 0])
    for q in (0.0, 1.0, 50.0, 99.0, 99.9, 100.0):
        assert_allclose(m.percentile(t, q), np.percentile(t, q, axis=0), rtol=1e-12, atol=0)


def test_nan_propagates_like_numpy():
    t = np.array([[1.0, 2.0], [np.nan, 5.0], [3.0, -1.0]])
    assert_array_equal(np.isnan(m.peak(t)), [True, False])
    assert_array_equal(np.isnan(m.percentile(t, 99.0)), [True, False])
    assert_array_equal(np.isnan(m.heat_gain_loss(t)[0]), [True, False])
    assert_array_equal(np.isnan(m.max_daily_range(t, [1, 1, 1])), [True, False])


def test_bad_inputs_name_what_was_given():
    import pytest

    from solair.errors import ConfigurationError

    t = np.zeros((4, 2))
    with pytest.raises(ConfigurationError, match=r"q = 101.0 is outside \[0, 100\]"):
        m.percentile(t, 101.0)
    with pytest.raises(ConfigurationError, match=r"day labels of shape \(3,\)"):
        m.max_daily_range(t, [1, 1, 2])
    with pytest.raises(ConfigurationError, match="do not broadcast"):
        m.hours_below_dew_point(t, np.zeros(3))
    with pytest.raises(ConfigurationError, match="needs at least one hourly value"):
        m.peak(np.zeros((0, 2)))
