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
