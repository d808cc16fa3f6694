"""Validation rules: gap filling, derivations, leap years, irradiance limits and timing.

Files are built from the Greensboro NC TMY3 (NREL, shipped with pvlib) written as
EPW in conftest; the expected values come from the unmodified file or from pvlib.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from solair.errors import WeatherFileError
from solair.weather import MAX_GAP_HOURS, Site, Weather, WeatherWarning, read_weather
from solair.weather.validate import extraterrestrial_horizontal


def _edit(epw_text: str, edits: dict[tuple[int, int], str]) -> str:
    """Apply {(file line, field number): value} edits (both 1-based) to EPW text."""
    lines = epw_text.splitlines()
    for (ln, fno), value in edits.items():
        parts = lines[ln - 1].split(",")
        parts[fno - 1] = value
        lines[ln - 1] = ",".join(parts)
    return "\n".join(lines) + "\n"


@pytest.fixture(scope="module")
def epw_text(greensboro_epw_path):
    return greensboro_epw_path.read_text(encoding="utf-8")


@pytest.fixture(scope="module")
def reference(greensboro_epw_path):
    return read_weather(greensboro_epw_path)


def _write(tmp_path, text, name="case.epw"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _line(ts: pd.Timestamp) -> int:
    """EPW file line of a reference-year hour-ending label (line 9 = 01-01 01:00)."""
    start = pd.Timestamp("2001-01-01 01:00", tz=ts.tz)
    return 9 + int((ts - start) / pd.Timedelta(hours=1))


def test_dataclasses(reference):
    assert isinstance(reference, Weather) and isinstance(reference.site, Site)
    with pytest.raises(AttributeError):
        reference.site.latitude = 0.0  # frozen
    assert reference.filled == {c: 0 for c in reference.data.columns}


def test_short_gap_filled_linearly_and_counted(tmp_path, epw_text, reference):
    # temp_air missing (99.9) for 4 hours from 03-15 10:00
    idx = reference.data.index
    i0 = idx.get_loc(pd.Timestamp("2001-03-15 10:00", tz=idx.tz))
    text = _edit(epw_text, {(_line(idx[i]), 7): "99.9" for i in range(i0, i0 + 4)})
    w = read_weather(_write(tmp_path, text))
    assert w.filled["temp_air"] == 4
    assert sum(w.filled.values()) == 4
    ref = reference.data["temp_air"].to_numpy()
    a, b = ref[i0 - 1], ref[i0 + 4]
    expected = a + (b - a) * np.arange(1, 5) / 5.0  # linear in time between the neighbours
    assert_allclose(w.data["temp_air"].to_numpy()[i0:i0 + 4], expected, atol=1e-12)


def test_gap_at_limit_filled_and_one_hour_longer_refused(tmp_path, epw_text, reference):
    idx = reference.data.index
    i0 = idx.get_loc(pd.Timestamp("2001-07-02 03:00", tz=idx.tz))
    ok = _edit(epw_text, {(_line(idx[i]), 22): "999" for i in range(i0, i0 + MAX_GAP_HOURS)})
    assert read_weather(_write(tmp_path, ok)).filled["wind_speed"] == MAX_GAP_HOURS
    bad = _edit(epw_text, {(_line(idx[i]), 22): "999"
                           for i in range(i0, i0 + MAX_GAP_HOURS + 1)})
    with pytest.raises(WeatherFileError, match=r"wind_speed is missing for 7 consecutive hours, "
                       r"from the hour ending 07-02 03:00 .* to the hour ending 07-02 09:00"):
        read_weather(_write(tmp_path, bad))


def test_irradiance_fill_stays_non_negative(tmp_path, epw_text, reference):
    # ghi missing from 16:00 to 20:00 on 12-01 (sunset inside the gap)
    idx = reference.data.index
    i0 = idx.get_loc(pd.Timestamp("2001-12-01 16:00", tz=idx.tz))
    text = _edit(epw_text, {(_line(idx[i]), 14): "9999" for i in range(i0, i0 + 5)})
    w = read_weather(_write(tmp_path, text))
    assert w.filled["ghi"] == 5
    assert (w.data["ghi"] >= 0).all()


def test_gap_at_year_start_wraps_to_december(tmp_path, epw_text, reference):
    """A typical year is cyclic: hours 1-2 of 1 January are filled from 31 December."""
    text = _edit(epw_text, {(9, 7): "99.9", (10, 7): "99.9"})
    w = read_weather(_write(tmp_path, text))
    ref = reference.data["temp_air"].to_numpy()
    a, b = ref[-1], ref[2]
    assert_allclose(w.data["temp_air"].to_numpy()[:2], a + (b - a) * np.array([1, 2]) / 3)


def test_leap_year_accepted_leap_day_dropped_with_note(tmp_path, epw_text, reference):
    lines = epw_text.splitlines()
    start = next(i for i, ln in enumerate(lines) if ln.split(",")[1:4] == ["2", "28", "1"])
    leap = [ln.replace(",2,28,", ",2,29,", 1) for ln in lines[start:start + 24]]
    lines = lines[:start + 24] + leap + lines[start + 24:]
    assert len(lines) - 8 == 8784
    w = read_weather(_write(tmp_path, "\n".join(lines) + "\n"))
    assert any("29 February dropped (24 rows" in n for n in w.notes)
    pd.testing.assert_frame_equal(w.data, reference.data)


def test_dew_point_derived_from_rh_with_warning(tmp_path, epw_text, reference):
    """ASHRAE HoF 2017 ch. 1 (Hyland–Wexler) dew point over water from the file's integer RH.

    The Greensboro TMY3 humidity is consistent with saturation over water below 0 °C
    (WMO convention) to about 1.4 % RH at the 95th percentile.
    """
    n = len(epw_text.splitlines())
    text = _edit(epw_text, {(ln, 8): "99.9" for ln in range(9, n + 1)})
    with pytest.warns(WeatherWarning, match="derived temp_dew from relative_humidity"):
        w = read_weather(_write(tmp_path, text))
    assert any(n.startswith("derived temp_dew") for n in w.notes)
    assert w.derived == {"temp_dew": 8760}
    err = np.abs(w.data["temp_dew"] - reference.data["temp_dew"])
    # the file stores RH in whole percent and dew point in 0.1 K: rounding only
    assert np.percentile(err, 50) < 0.1
    assert np.percentile(err, 95) < 0.5


def test_rh_derived_from_dew_point_with_warning(tmp_path, epw_text, reference):
    n = len(epw_text.splitlines())
    text = _edit(epw_text, {(ln, 9): "999" for ln in range(9, n + 1)})
    with pytest.warns(WeatherWarning, match="derived relative_humidity from temp_dew"):
        w = read_weather(_write(tmp_path, text))
    err = np.abs(w.data["relative_humidity"] - reference.data["relative_humidity"])
    assert np.percentile(err, 50) < 0.5
    assert np.percentile(err, 95) < 1.5


def test_pressure_derived_from_altitude_with_warning(tmp_path, epw_text):
    import pvlib

    n = len(epw_text.splitlines())
    text = _edit(epw_text, {(ln, 10): "999999" for ln in range(9, n + 1)})
    with pytest.warns(WeatherWarning, match=r"pvlib.atmosphere.alt2pres"):
        w = read_weather(_write(tmp_path, text))
    assert_allclose(w.data["pressure"], pvlib.atmosphere.alt2pres(273.0), rtol=1e-12)


def test_small_negative_irradiance_clipped_with_note(tmp_path, epw_text):
    text = _edit(epw_text, {(9, 14): "-3", (10, 16): "-2"})
    w = read_weather(_write(tmp_path, text))
    assert w.data["ghi"].iloc[0] == 0.0 and w.data["dhi"].iloc[1] == 0.0
    assert any("ghi: 1 slightly negative" in n for n in w.notes)


def test_large_negative_irradiance_refused(tmp_path, epw_text):
    with pytest.raises(WeatherFileError, match=r"line 9: ghi = -50 W/m² is outside"):
        read_weather(_write(tmp_path, _edit(epw_text, {(9, 14): "-50"})))


def test_wrong_time_zone_detected_from_irradiance_timing(greensboro_path):
    """Greensboro is UTC-5; read as UTC-4, the sun appears an hour late in the data."""
    with pytest.warns(WeatherWarning, match=r"rows look stamped in UTC-5 h.*utc_offset=-5"):
        w = read_weather(greensboro_path, utc_offset=-4)
    assert w.site.utc_offset == -4.0
    assert any("header says UTC-5" in n for n in w.notes)


def test_era_epw_header_zone_warns_and_override_is_silent(era_epw_path):
    """tests/data EPW: rows in UTC although the header says TZ=1 (pvlib test data)."""
    with pytest.warns(WeatherWarning, match=r"rows look stamped in UTC\+0 h"):
        w = read_weather(era_epw_path)
    assert w.site.utc_offset == 1.0
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        w0 = read_weather(era_epw_path, utc_offset=0)
    assert w0.site.utc_offset == 0.0
    # the same rows, the labels now in UTC: identical values, same wall-clock labels
    assert_allclose(w0.data["ghi"], w.data["ghi"], atol=0)
    assert (w0.data.index.tz_localize(None) == w.data.index.tz_localize(None)).all()


def test_utc_offset_out_of_range_refused(greensboro_path):
    with pytest.raises(WeatherFileError, match=r"does not fit longitude|outside \[-12, 14\]"):
        read_weather(greensboro_path, utc_offset=20)


def test_extraterrestrial_horizontal_against_nrel_etr(greensboro_path, greensboro_weather):
    """solair's hourly E0h vs the ETR column NREL computed for the Greensboro TMY3."""
    import pvlib

    df, _ = pvlib.iotools.read_tmy3(greensboro_path, coerce_year=2001, map_variables=True)
    w = greensboro_weather
    e0h, _, _ = extraterrestrial_horizontal(w.data.index, w.site.latitude, w.site.longitude)
    assert_allclose(e0h, df["ghi_extra"], atol=15.0)
    assert_allclose(e0h.sum(), df["ghi_extra"].sum(), rtol=5e-3)


def test_real_irradiance_below_the_extraterrestrial_limit(greensboro_weather):
    """Real data (NREL TMY3) pass the limit ghi <= 1.1·E0h + 30 W/m² with room to spare."""
    w = greensboro_weather
    e0h, _, _ = extraterrestrial_horizontal(w.data.index, w.site.latitude, w.site.longitude)
    assert (w.data["ghi"] <= 1.1 * e0h + 30.0).all()
    assert (w.data["ghi"] <= e0h + 30.0).mean() > 0.999


@settings(max_examples=60, deadline=None)
@given(gaps=st.lists(st.tuples(st.integers(1, 8700), st.integers(1, MAX_GAP_HOURS)),
                     min_size=1, max_size=8))
def test_fill_short_gaps_property(gaps):
    """Property (common practice): linear fills stay between the gap's neighbours and are
    counted exactly; irradiance fills are never negative."""
    from solair.weather.validate import _fill_short_gaps

    rng = np.random.default_rng(0)
    temp = 10 + 8 * np.sin(np.arange(8760) * 2 * np.pi / 24) + rng.normal(0, 1, 8760)
    ghi = np.clip(600 * np.sin(np.arange(8760) * 2 * np.pi / 24), 0, None)
    mask = np.zeros(8760, dtype=bool)
    for start, length in gaps:
        mask[start:start + length] = True
    # keep every run within the limit (merged runs could exceed it)
    runs = np.diff(np.concatenate([[0], mask.astype(int), [0]]))
    starts, stops = np.flatnonzero(runs == 1), np.flatnonzero(runs == -1)
    for a, b in zip(starts, stops):
        if b - a > MAX_GAP_HOURS:
            mask[a + MAX_GAP_HOURS:b] = False
    data = pd.DataFrame({"temp_air": np.where(mask, np.nan, temp),
                         "ghi": np.where(mask, np.nan, ghi)})
    filled: dict[str, int] = {}
    _fill_short_gaps(data, filled)
    assert filled == {"temp_air": int(mask.sum()), "ghi": int(mask.sum())}
    assert not data.isna().any().any()
    assert (data["ghi"] >= 0).all()
    runs = np.diff(np.concatenate([[0], mask.astype(int), [0]]))
    for a, b in zip(np.flatnonzero(runs == 1), np.flatnonzero(runs == -1)):
        lo, hi = sorted((temp[a - 1], temp[b % 8760]))
        seg = data["temp_air"].to_numpy()[a:b]
        assert ((seg >= lo - 1e-9) & (seg <= hi + 1e-9)).all()
        assert_allclose(data["temp_air"].to_numpy()[~mask], temp[~mask])
