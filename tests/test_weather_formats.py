"""Reading the real open weather files: canonical names, SI units, the hour-ending convention.

Sources: NREL TMY3 files (Greensboro NC, Sand Point AK) and TMY2 (Miami FL) shipped
with pvlib; the ERA-derived EPW from pvlib's source distribution (tests/data).
Expected values are read from the files' own text with the csv module or taken
from pvlib's readers, never from solair.
"""

from __future__ import annotations

import csv
import warnings

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from solair.errors import WeatherFileError
from solair.weather import OPTIONAL, REQUIRED, WeatherWarning, detect_format, read_weather

CANONICAL = set(REQUIRED) | set(OPTIONAL)


def _check_canonical(w):
    idx = w.data.index
    assert len(w.data) == 8760
    assert idx.tz is not None
    assert idx[0] == pd.Timestamp("2001-01-01 01:00", tz=idx.tz)
    assert idx[-1] == pd.Timestamp("2002-01-01 00:00", tz=idx.tz)
    assert idx.is_monotonic_increasing and not idx.has_duplicates
    assert (np.diff(idx.asi8) == np.diff(idx.asi8)[0]).all()
    assert idx.tz.utcoffset(None) == pd.Timedelta(hours=w.site.utc_offset)
    assert list(w.data.columns[:len(REQUIRED)]) == list(REQUIRED)
    assert set(w.data.columns) <= CANONICAL
    assert not w.data[list(REQUIRED)].isna().any().any()


def test_greensboro_tmy3_canonical_and_si(greensboro_path, greensboro_weather):
    w = greensboro_weather
    _check_canonical(w)
    assert w.site.source_format == "tmy3"
    # header of the NREL file: 723170,"GREENSBORO PIEDMONT TRIAD INT",NC,-5.0,36.100,-79.950,273
    assert (w.site.latitude, w.site.longitude, w.site.altitude, w.site.utc_offset) == (
        36.1, -79.95, 273.0, -5.0)
    with open(greensboro_path, newline="") as f:
        rows = list(csv.reader(f))
    head, first = rows[1], rows[2]
    # first data row, 01/01/1988 01:00 (hour ending 01:00)
    assert first[1] == "01:00"
    row = w.data.iloc[0]
    assert_allclose(row["temp_air"], float(first[head.index("Dry-bulb (C)")]), atol=1e-12)
    assert_allclose(row["temp_dew"], float(first[head.index("Dew-point (C)")]), atol=1e-12)
    # TMY3 pressure is in mbar; solair gives Pa
    assert_allclose(row["pressure"], 100 * float(first[head.index("Pressure (mbar)")]),
                    atol=1e-9)
    assert_allclose(row["wind_speed"], float(first[head.index("Wspd (m/s)")]), atol=1e-12)
    # the last row is 12/31 24:00, i.e. the hour ending at midnight -> 2002-01-01 00:00
    assert rows[-1][1] == "24:00"


def test_tmy3_index_equals_pvlib_hour_ending(greensboro_path, greensboro_weather):
    """pvlib.iotools.read_tmy3 already labels the hour's end (pvlib docs)."""
    import pvlib

    df, _ = pvlib.iotools.read_tmy3(greensboro_path, coerce_year=2001, map_variables=True)
    assert greensboro_weather.data.index.equals(df.index)
    assert_allclose(greensboro_weather.data["ghi"], df["ghi"], atol=0)


def test_sand_point_tmy3(sand_point_path):
    w = read_weather(sand_point_path)
    _check_canonical(w)
    assert w.site.utc_offset == -9.0
    assert_allclose(w.site.longitude, -160.517)
    assert "albedo" in w.data and w.data["albedo"].between(0.0, 1.0).all()


def test_miami_tmy2_units_against_pvlib(miami_path):
    """TMY2 raw tenths (°C/10, m/s/10) and mbar converted; index hour-ending.

    pvlib.iotools.read_tmy2 returns the raw values (its docs: "values ... unchanged
    from the TMY2 file") labelled by the hour's start, all stamped with the first
    row's year.
    """
    import pvlib

    w = read_weather(miami_path)
    _check_canonical(w)
    assert w.site.source_format == "tmy2"
    df, meta = pvlib.iotools.read_tmy2(miami_path)
    assert_allclose(w.site.latitude, meta["latitude"])
    assert_allclose(w.site.longitude, meta["longitude"])
    assert_allclose(w.data["temp_air"], df["DryBulb"] / 10.0, atol=1e-12)
    assert_allclose(w.data["temp_dew"], df["DewPoint"] / 10.0, atol=1e-12)
    assert_allclose(w.data["wind_speed"], df["Wspd"] / 10.0, atol=1e-12)
    assert_allclose(w.data["pressure"], df["Pressure"] * 100.0, atol=1e-9)
    assert_allclose(w.data["relative_humidity"], df["RHum"], atol=0)
    assert_allclose(w.data["ghi"], df["GHI"], atol=0)
    assert_allclose(w.data["total_sky_cover"], df["TotCld"], atol=0)
    # pvlib's stamps are hour-start: shift +1 h and move onto 2001
    start = df.index.map(lambda t: t.replace(year=2001))
    assert w.data.index.equals(pd.DatetimeIndex(start) + pd.Timedelta(hours=1))


def test_era_epw_hour_shift_against_pvlib(era_epw_path):
    """pvlib.iotools.read_epw labels the hour's start (EPW hour 1 -> 00:00): solair +1 h."""
    import pvlib

    with pytest.warns(WeatherWarning, match="utc_offset=0"):
        w = read_weather(era_epw_path)
    _check_canonical(w)
    df, _ = pvlib.iotools.read_epw(era_epw_path, coerce_year=2001)
    assert w.data.index.equals(df.index + pd.Timedelta(hours=1))
    assert_allclose(w.data["ghi_infrared"], df["ghi_infrared"], atol=0)
    assert_allclose(w.data["pressure"], df["atmospheric_pressure"], atol=0)  # EPW is in Pa


def test_era_epw_with_utc_offset_override(era_weather):
    """utc_offset=0 reads the UTC rows as UTC; irradiance then fits the sun's timing."""
    from solair.weather.validate import irradiance_timing_offset

    w = era_weather
    _check_canonical(w)
    assert w.site.utc_offset == 0.0
    assert any("UTC+0" in n for n in w.notes)
    d = irradiance_timing_offset(w.data["ghi"].to_numpy(), w.data.index, w.site.longitude, 0.0)
    assert abs(d) < 0.5
    # the file's own horizontal infrared is kept: 8760 valid hours
    assert w.data["ghi_infrared"].notna().all()


def test_epw_and_tmy3_of_the_same_data_give_identical_tables(greensboro_epw_path,
                                                            greensboro_weather):
    """The same Greensboro data as TMY3 (NREL) and as EPW (written in conftest)."""
    w = read_weather(greensboro_epw_path)
    assert w.site.source_format == "epw"
    pd.testing.assert_frame_equal(w.data, greensboro_weather.data, check_exact=False,
                                  rtol=1e-12, atol=1e-9)
    assert w.site.utc_offset == greensboro_weather.site.utc_offset


def test_format_is_detected_from_content_not_suffix(tmp_path, greensboro_path, miami_path,
                                                    greensboro_epw_path):
    for src, fmt in ((greensboro_path, "tmy3"), (miami_path, "tmy2"),
                     (greensboro_epw_path, "epw")):
        text = src.read_text(encoding="latin-1")
        assert detect_format(text) == fmt
        odd = tmp_path / f"{fmt}_renamed.txt"
        odd.write_text(text, encoding="latin-1")
        assert read_weather(odd).site.source_format == fmt


def test_real_files_have_no_fills_and_no_warnings(greensboro_path, sand_point_path,
                                                  miami_path):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for p in (greensboro_path, sand_point_path, miami_path):
            w = read_weather(p)
            assert sum(w.filled.values()) == 0
            assert set(w.filled) == set(w.data.columns)


def test_summary_table(greensboro_weather):
    s = greensboro_weather.summary()
    assert list(s.columns) == ["unit", "valid", "filled", "min", "mean", "max"]
    assert s.loc["pressure", "unit"] == "Pa"
    assert s.loc["temp_air", "valid"] == 8760
    assert_allclose(s.loc["temp_air", "mean"], greensboro_weather.data["temp_air"].mean())
    assert s.loc["ghi", "min"] == 0.0


def test_crlf_line_ends_and_utf8_bom(tmp_path, greensboro_epw_path, greensboro_path,
                                     greensboro_weather):
    epw = greensboro_epw_path.read_bytes()
    (tmp_path / "crlf.epw").write_bytes(epw.replace(b"\n", b"\r\n"))
    (tmp_path / "bom.epw").write_bytes(b"\xef\xbb\xbf" + epw + b"\n\n")
    (tmp_path / "crlf.csv").write_bytes(greensboro_path.read_bytes().replace(b"\n", b"\r\n"))
    for name in ("crlf.epw", "bom.epw", "crlf.csv"):
        pd.testing.assert_frame_equal(read_weather(tmp_path / name).data,
                                      greensboro_weather.data)


def test_tmy2_city_with_spaces(tmp_path, miami_path):
    """pvlib's read_tmy2 header parser splits on blanks; solair reads the fixed layout."""
    lines = miami_path.read_text(encoding="latin-1").splitlines()
    lines[0] = " 12839 MIAMI INTL AIRPORT     FL  -5 N 25 48 W  80 16     2"
    p = tmp_path / "miami_spaces.tm2"
    p.write_text("\n".join(lines) + "\n", encoding="latin-1")
    w = read_weather(p)
    assert w.site.name == "MIAMI INTL AIRPORT, FL"
    assert_allclose((w.site.latitude, w.site.longitude), (25.8, -(80 + 16 / 60)))


@pytest.mark.parametrize("record5", ["HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0",
                                     "HOLIDAYS/DAYLIGHT SAVING,No,0,0,0"])
def test_epw_record5_both_spellings(greensboro_epw_path, tmp_path, record5):
    """EPW header record 5: "HOLIDAYS/DAYLIGHT SAVINGS" as the EnergyPlus EPW data
    dictionary (Auxiliary Programs, Weather Converter Program) names it, and
    "HOLIDAYS/DAYLIGHT SAVING" as pvlib's bundled EPW and many converters write it;
    both give the same year."""
    lines = greensboro_epw_path.read_text(encoding="utf-8").splitlines()
    assert lines[4].upper().startswith("HOLIDAYS/DAYLIGHT SAVING")
    lines[4] = record5
    path = tmp_path / "record5.epw"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", WeatherWarning)
        w = read_weather(path)
        ref = read_weather(greensboro_epw_path)
    pd.testing.assert_frame_equal(w.data, ref.data, check_exact=True)


def test_epw_record5_other_text_still_refused(greensboro_epw_path, tmp_path):
    lines = greensboro_epw_path.read_text(encoding="utf-8").splitlines()
    lines[4] = "HOLIDAYS,No,0,0,0"
    path = tmp_path / "record5_bad.epw"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(WeatherFileError, match=r"record5_bad\.epw, line 5: EPW header record 5 "
                       r"is 'HOLIDAYS', expected 'HOLIDAYS/DAYLIGHT SAVINGS'"):
        read_weather(path)


@pytest.mark.parametrize("char", ["\x0c", "\x0b", "\x1c"])
def test_line_separating_control_character_named_by_line(greensboro_path, tmp_path, char):
    """Form feed, vertical tab and file separator are control characters that
    str.splitlines() also splits at: still refused as binary content on their line."""
    lines = greensboro_path.read_text(encoding="latin-1").splitlines()
    lines[2] = char + lines[2][1:]
    path = tmp_path / "ff.csv"
    path.write_text("\n".join(lines) + "\n", encoding="latin-1")
    with pytest.raises(WeatherFileError, match=r"ff\.csv, line 3: binary content"):
        read_weather(path)
