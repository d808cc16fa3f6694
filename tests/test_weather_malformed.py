"""A corpus of malformed weather files, each refused with a WeatherFileError naming it.

Every case is built in tmp_path from the real open files (Greensboro NC TMY3 and
Miami FL TMY2 shipped with pvlib, and the Greensboro data written as EPW in
conftest). Each must raise :class:`solair.errors.WeatherFileError` whose message
names the file and the line or field; through the CLI (``solair info``) each gives
exit status 2 and exactly one line on stderr, no traceback.
"""

from __future__ import annotations

import subprocess
import sys

import pytest
from click.testing import CliRunner

from solair.cli import cli
from solair.errors import WeatherFileError
from solair.weather import read_weather

# EPW: lines 1-8 are the header, line 9 is 1 January hour 1 (index 8 of the list)


def _epw_set(lines, line_no, field_no, value):
    """Set EPW field ``field_no`` (1-based) on file line ``line_no`` (1-based)."""
    parts = lines[line_no - 1].split(",")
    parts[field_no - 1] = value
    lines[line_no - 1] = ",".join(parts)
    return lines


def _first_line(lines, month, day, hour):
    for i, ln in enumerate(lines[8:], start=9):
        p = ln.split(",")
        if (int(p[1]), int(p[2]), int(p[3])) == (month, day, hour):
            return i
    raise AssertionError("stamp not found")


def epw_header_only(t):
    return "\n".join(t.splitlines()[:8]) + "\n"


def epw_truncated_48(t):
    return "\n".join(t.splitlines()[:8 + 48]) + "\n"


def epw_seven_line_header(t):
    lines = t.splitlines()
    del lines[6]  # drop COMMENTS 2: pvlib would then eat the first data row
    return "\n".join(lines) + "\n"


def epw_too_many_fields(t):
    lines = t.splitlines()
    lines[99] += ",42"
    return "\n".join(lines) + "\n"


def epw_too_few_fields(t):
    lines = t.splitlines()
    lines[199] = ",".join(lines[199].split(",")[:20])
    return "\n".join(lines) + "\n"


def epw_non_numeric(t):
    return "\n".join(_epw_set(t.splitlines(), 500, 7, "warm")) + "\n"


def epw_temp_missing_everywhere(t):
    lines = t.splitlines()
    for i in range(9, len(lines) + 1):
        _epw_set(lines, i, 7, "99.9")
    return "\n".join(lines) + "\n"


def epw_temp_out_of_range(t):
    return "\n".join(_epw_set(t.splitlines(), 1000, 7, "85.0")) + "\n"


def epw_wind_negative(t):
    return "\n".join(_epw_set(t.splitlines(), 2000, 22, "-3.0")) + "\n"


def epw_duplicate_hour(t):
    lines = t.splitlines()
    lines[299] = lines[298]  # line 300 repeats line 299's stamp
    return "\n".join(lines) + "\n"


def epw_shuffled_hours(t):
    lines = t.splitlines()
    lines[399], lines[400] = lines[400], lines[399]  # lines 400 and 401 swapped
    return "\n".join(lines) + "\n"


def epw_bad_latitude(t):
    lines = t.splitlines()
    p = lines[0].split(",")
    p[6] = "123.0"
    lines[0] = ",".join(p)
    return "\n".join(lines) + "\n"


def epw_non_numeric_longitude(t):
    lines = t.splitlines()
    p = lines[0].split(",")
    p[7] = "west"
    lines[0] = ",".join(p)
    return "\n".join(lines) + "\n"


def epw_time_zone_sign_error(t):
    lines = t.splitlines()
    p = lines[0].split(",")
    p[8] = "5.0"  # Greensboro is UTC-5
    lines[0] = ",".join(p)
    return "\n".join(lines) + "\n"


def epw_long_gap(t):
    lines = t.splitlines()
    start = _first_line(lines, 1, 5, 10)
    for i in range(start, start + 10):
        _epw_set(lines, i, 7, "99.9")
    return "\n".join(lines) + "\n"


def epw_sun_at_night(t):
    return "\n".join(_epw_set(t.splitlines(), 9, 14, "500")) + "\n"  # 1 Jan, 00-01 h


def epw_dni_above_extraterrestrial(t):
    lines = t.splitlines()
    i = _first_line(lines, 6, 21, 13)
    return "\n".join(_epw_set(lines, i, 15, "1399")) + "\n"


def epw_month_13(t):
    return "\n".join(_epw_set(t.splitlines(), 50, 2, "13")) + "\n"


def epw_hour_25(t):
    return "\n".join(_epw_set(t.splitlines(), 60, 4, "25")) + "\n"


def epw_day_31_april(t):
    lines = t.splitlines()
    i = _first_line(lines, 4, 30, 5)
    return "\n".join(_epw_set(lines, i, 3, "31")) + "\n"


def epw_dew_above_air(t):
    lines = t.splitlines()
    air = float(lines[700].split(",")[6])
    return "\n".join(_epw_set(lines, 701, 8, f"{air + 5:.1f}")) + "\n"


def epw_missing_day(t):
    lines = t.splitlines()
    i = _first_line(lines, 3, 10, 1)
    del lines[i - 1:i - 1 + 24]
    return "\n".join(lines) + "\n"


def epw_blank_line_inside(t):
    lines = t.splitlines()
    lines.insert(1000, "")
    return "\n".join(lines) + "\n"


def epw_leap_day_wrong_count(t):
    lines = t.splitlines()
    i = _first_line(lines, 2, 28, 1)
    leap = [ln.replace(",2,28,", ",2,29,", 1) for ln in lines[i - 1:i - 1 + 12]]
    return "\n".join(lines[:i - 1 + 24] + leap + lines[i - 1 + 24:]) + "\n"


def tmy3_truncated(t):
    return "\n".join(t.splitlines()[:2 + 48]) + "\n"


def tmy3_non_numeric(t):
    lines = t.splitlines()
    p = lines[9].split(",")
    p[31] = "n/a"  # Dry-bulb (C), line 10
    lines[9] = ",".join(p)
    return "\n".join(lines) + "\n"


def tmy3_wrong_field_count(t):
    lines = t.splitlines()
    lines[19] = ",".join(lines[19].split(",")[:-3])
    return "\n".join(lines) + "\n"


def tmy3_bad_date(t):
    lines = t.splitlines()
    lines[30] = "13/02/1988" + lines[30][10:]
    return "\n".join(lines) + "\n"


def tmy3_missing_code_gap(t):
    lines = t.splitlines()
    for i in range(1000, 1024):
        p = lines[i].split(",")
        p[31] = "-9900"
        lines[i] = ",".join(p)
    return "\n".join(lines) + "\n"


def tmy3_bad_site_line(t):
    lines = t.splitlines()
    lines[0] = "723170,GREENSBORO,NC,-5.0,36.1"
    return "\n".join(lines) + "\n"


def tmy2_short_line(t):
    lines = t.splitlines()
    lines[29] = lines[29][:100]
    return "\n".join(lines) + "\n"


def tmy2_non_numeric(t):
    lines = t.splitlines()
    lines[39] = lines[39][:67] + "abcd" + lines[39][71:]  # DryBulb, columns 68-71
    return "\n".join(lines) + "\n"


def tmy2_temp_missing_everywhere(t):
    lines = t.splitlines()
    lines[1:] = [ln[:67] + "9999" + ln[71:] for ln in lines[1:]]
    return "\n".join(lines) + "\n"


# (case id, base file, builder or raw bytes, regex the message must match)
CASES = [
    ("empty", "epw", b"", r"\.epw: the file is empty"),
    ("blank_lines_only", "epw", b"\n\n  \n", r"only blank lines"),
    ("binary_junk", "epw", bytes(range(256)) * 40, r"line 1: binary content"),
    ("control_characters", "epw", b"LOCATION,x\x1b\x07,,\n", r"line 1: binary content"),
    ("not_weather", "epw", b"a,b,c\n1,2,3\n", r"line 1: not a recognised weather file"),
    ("epw_header_only", "epw", epw_header_only, r"line 9: the file has a header but no data"),
    ("epw_truncated_48_rows", "epw", epw_truncated_48, r"has 48 hourly rows, expected 8760"),
    ("epw_seven_line_header", "epw", epw_seven_line_header,
     r"line 7: EPW header record 7 is 'DATA PERIODS', expected 'COMMENTS 2'"),
    ("epw_too_many_fields", "epw", epw_too_many_fields,
     r"line 100: 36 comma-separated fields, expected 35"),
    ("epw_too_few_fields", "epw", epw_too_few_fields,
     r"line 200: 20 comma-separated fields, expected 35"),
    ("epw_non_numeric", "epw", epw_non_numeric,
     r"line 500: temp_air \(field 7\) = 'warm' is not a number"),
    ("epw_missing_codes_everywhere", "epw", epw_temp_missing_everywhere,
     r"temp_air has no valid value"),
    ("epw_out_of_range", "epw", epw_temp_out_of_range,
     r"line 1000: temp_air = 85 °C is outside \[-90, 70\] °C"),
    ("epw_negative_wind", "epw", epw_wind_negative,
     r"line 2000: wind_speed = -3 m/s is outside \[0, 40\]"),
    ("epw_duplicate_hour", "epw", epw_duplicate_hour,
     r"line 300: duplicate time stamp 01/13 hour 3 \(hour-ending\), already on line 299"),
    ("epw_shuffled_hours", "epw", epw_shuffled_hours, r"line 401: time stamp .* time order"),
    ("epw_bad_latitude", "epw", epw_bad_latitude,
     r"line 1: header latitude = 123 ° is outside \[-90, 90\]"),
    ("epw_non_numeric_longitude", "epw", epw_non_numeric_longitude,
     r"line 1: header longitude = 'west' is not a number"),
    ("epw_time_zone_sign_error", "epw", epw_time_zone_sign_error,
     r"line 1: header time zone UTC\+5 h does not fit longitude -79.95"),
    ("epw_gap_longer_than_limit", "epw", epw_long_gap,
     r"temp_air is missing for 10 consecutive hours, from the hour ending 01-05 10:00 "
     r"\(line 114\) to the hour ending 01-05 19:00"),
    ("epw_sun_at_night", "epw", epw_sun_at_night,
     r"line 9: ghi = 500 W/m² in the hour ending 01-01 01:00 exceeds what the sun"),
    ("epw_dni_above_extraterrestrial", "epw", epw_dni_above_extraterrestrial,
     r"dni = 1399 W/m² in the hour ending 06-21 13:00 exceeds what the sun"),
    ("epw_month_13", "epw", epw_month_13, r"line 50: month = 13 is outside 1-12"),
    ("epw_hour_25", "epw", epw_hour_25, r"line 60: hour = 25 is outside 1-24"),
    ("epw_day_31_april", "epw", epw_day_31_april, r"day = 31 does not exist in month 4"),
    ("epw_dew_above_air", "epw", epw_dew_above_air, r"line 701: temp_dew = .* is above temp_air"),
    ("epw_missing_day", "epw", epw_missing_day,
     r"has 8736 hourly rows, expected 8760.*first missing hour ends 03-10 01:00"),
    ("epw_blank_line_inside", "epw", epw_blank_line_inside,
     r"line 1001: empty line inside the data"),
    ("epw_leap_day_incomplete", "epw", epw_leap_day_wrong_count,
     r"has 8772 hourly rows with 12 on 29 February; a leap year has 8784"),
    ("tmy3_truncated", "tmy3", tmy3_truncated, r"\.CSV: has 48 hourly rows, expected 8760"),
    ("tmy3_non_numeric", "tmy3", tmy3_non_numeric,
     r"line 10: temp_air \(column 'Dry-bulb \(C\)'\) = 'n/a' is not a number"),
    ("tmy3_wrong_field_count", "tmy3", tmy3_wrong_field_count,
     r"line 20: 68 comma-separated fields, expected 71"),
    ("tmy3_bad_date", "tmy3", tmy3_bad_date, r"line 31: month = 13 is outside 1-12"),
    ("tmy3_missing_code_gap", "tmy3", tmy3_missing_code_gap,
     r"temp_air is missing for 24 consecutive hours.*\(line 1001\)"),
    ("tmy3_bad_site_line", "tmy3", tmy3_bad_site_line,
     r"line 1: TMY3 site line has 5 fields, expected 7"),
    ("tmy2_short_line", "tmy2", tmy2_short_line,
     r"line 30: data line is 100 characters long, a TMY2 record has 142"),
    ("tmy2_non_numeric", "tmy2", tmy2_non_numeric,
     r"line 40: temp_air \(TMY2 DryBulb, columns 68-71\) = 'abcd' is not a number"),
    ("tmy2_missing_codes_everywhere", "tmy2", tmy2_temp_missing_everywhere,
     r"temp_air has no valid value"),
]
SUFFIX = {"epw": ".epw", "tmy3": ".CSV", "tmy2": ".tm2"}


@pytest.fixture(scope="module")
def base_texts(greensboro_epw_path, greensboro_path, miami_path):
    return {
        "epw": greensboro_epw_path.read_text(encoding="utf-8"),
        "tmy3": greensboro_path.read_text(encoding="latin-1"),
        "tmy2": miami_path.read_text(encoding="latin-1"),
    }


def _make(case, base_texts, tmp_path):
    cid, base, build, _ = case
    path = tmp_path / f"{cid}{SUFFIX[base]}"
    if isinstance(build, bytes):
        path.write_bytes(build)
    else:
        path.write_text(build(base_texts[base]), encoding="latin-1")
    return path


def test_corpus_is_large_enough():
    assert len(CASES) >= 20


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_malformed_file_raises_weather_file_error(case, base_texts, tmp_path):
    path = _make(case, base_texts, tmp_path)
    with pytest.raises(WeatherFileError, match=case[3]) as info:
        read_weather(path)
    msg = str(info.value)
    assert msg.startswith(path.name)  # the file is named first
    assert "\n" not in msg
    assert isinstance(info.value, ValueError)


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_cli_info_refuses_malformed_file_with_one_line(case, base_texts, tmp_path):
    path = _make(case, base_texts, tmp_path)
    result = CliRunner().invoke(cli, ["info", str(path)])
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("solair: error: ") and path.name in lines[0]
    assert "Traceback" not in result.output
    assert result.stdout == ""


def test_missing_file_is_weather_file_error(tmp_path):
    with pytest.raises(WeatherFileError, match=r"nowhere\.epw: file not found"):
        read_weather(tmp_path / "nowhere.epw")


def test_cli_subprocess_bad_file_exit_2_one_line(base_texts, tmp_path):
    """A real `solair info` process: exit 2, one stderr line, nothing on stdout."""
    path = _make(CASES[6], base_texts, tmp_path)  # truncated EPW
    proc = subprocess.run([sys.executable, "-m", "solair", "info", str(path)],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert proc.stderr.strip().count("\n") == 0
    assert "has 48 hourly rows" in proc.stderr
