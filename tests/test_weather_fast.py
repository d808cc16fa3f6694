"""The fast path of the EPW/TMY3 readers gives the line-by-line reader's table, or steps aside.

Sources: the NREL TMY3 files Greensboro NC and Sand Point AK shipped with pvlib, the
ERA-derived EPW from pvlib's source distribution (tests/data), the Greensboro data
written as EPW (conftest). Reference tables come from :func:`pvlib.iotools.read_tmy3`
and :func:`pvlib.iotools.read_epw` (converted here to solair's units and missing-value
rules as the TMY3 manual, Wilcox & Marion 2008, and the EPW data dictionary give them)
and from solair's own line-by-line reader (``parse(..., fast=False)``).
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pvlib
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_array_equal

from solair.errors import WeatherFileError
from solair.weather import _fast, read_weather
from solair.weather.formats import _EPW_FIELDS, _TMY3_FIELDS, parse


def _text(path):
    raw = path.read_bytes()
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        return raw.decode("latin-1")


def _same_raw(a, b):
    assert a.source_format == b.source_format
    assert a.meta == b.meta
    pd.testing.assert_frame_equal(a.data, b.data, check_exact=True)
    for k in ("month", "day", "hour", "line"):
        assert_array_equal(getattr(a, k), getattr(b, k))


@pytest.fixture(scope="module")
def real_files(greensboro_path, sand_point_path, era_epw_path, greensboro_epw_path):
    return {"greensboro.tmy3": greensboro_path, "sand_point.tmy3": sand_point_path,
            "era.epw": era_epw_path, "greensboro.epw": greensboro_epw_path}


@pytest.mark.parametrize("key", ["greensboro.tmy3", "sand_point.tmy3", "era.epw",
                                 "greensboro.epw"])
def test_fast_path_taken_and_equal_to_line_by_line(real_files, key):
    text = _text(real_files[key])
    n = 8 if key.endswith("epw") else 2
    head, body = _fast.split_head(text, n)
    assert head == text.splitlines()[:n]
    fast = parse(text, key)
    if key.endswith("epw"):
        from solair.weather.formats import _epw_header

        assert _fast.epw_body(body, _epw_header(head, key)) is not None  # really the fast path
    else:
        from solair.weather.formats import _tmy3_header

        meta, cols = _tmy3_header(head, key)
        assert _fast.tmy3_body(body, meta, head[0], cols) is not None
    _same_raw(fast, parse(text, key, fast=False))


@pytest.mark.parametrize("key", ["greensboro.tmy3", "sand_point.tmy3"])
def test_tmy3_fast_path_equals_pvlib_read_tmy3(real_files, key):
    """pvlib.iotools.read_tmy3, then the TMY3 manual's conventions: -9900 missing, mbar ->
    Pa, a '?' source flag marks an optional value as missing."""
    path = real_files[key]
    df, meta = pvlib.iotools.read_tmy3(path, map_variables=True)
    raw = parse(_text(path), key)
    assert raw.meta["utc_offset"] == meta["TZ"] and raw.meta["altitude"] == meta["altitude"]
    assert raw.meta["latitude"] == meta["latitude"]
    assert raw.meta["longitude"] == meta["longitude"]
    for col, (src, flag, scale) in _TMY3_FIELDS.items():
        if src not in df:
            assert col not in raw.data
            continue
        v = df[src].to_numpy(dtype=float).copy()
        v[v <= -9900] = np.nan
        if col in ("total_sky_cover", "opaque_sky_cover", "albedo"):
            v[(df[flag].astype(str).str.strip() == "?").to_numpy()] = np.nan
        assert_array_equal(raw.data[col].to_numpy(), v * scale, err_msg=col)
    date, time = df["Date (MM/DD/YYYY)"].str, df["Time (HH:MM)"].str  # as pvlib read them
    assert_array_equal(raw.month, date[:2].astype(int).to_numpy())
    assert_array_equal(raw.day, date[3:5].astype(int).to_numpy())
    assert_array_equal(raw.hour, time[:2].astype(int).to_numpy())


@pytest.mark.parametrize("key", ["era.epw", "greensboro.epw"])
def test_epw_fast_path_equals_pvlib_read_epw(real_files, key):
    """pvlib.iotools.read_epw, then the EPW data dictionary's missing codes."""
    path = real_files[key]
    df, meta = pvlib.iotools.read_epw(path, coerce_year=2000)
    raw = parse(_text(path), key)
    assert raw.meta["utc_offset"] == meta["TZ"] and raw.meta["altitude"] == meta["altitude"]
    for col, (src, _fno, code) in _EPW_FIELDS.items():
        v = df[src].to_numpy(dtype=float).copy()
        v[v >= code] = np.nan
        assert_array_equal(raw.data[col].to_numpy(), v, err_msg=col)
    assert_array_equal(raw.month, df["month"].to_numpy())
    assert_array_equal(raw.day, df["day"].to_numpy())
    assert_array_equal(raw.hour, df["hour"].to_numpy())


def test_crlf_file_takes_the_fast_path_with_the_same_table(real_files, tmp_path):
    text = _text(real_files["greensboro.tmy3"])
    crlf = text.replace("\n", "\r\n")
    head, body = _fast.split_head(crlf, 2)
    from solair.weather.formats import _tmy3_header

    meta, cols = _tmy3_header(head, "x")
    assert _fast.tmy3_body(body, meta, head[0], cols) is not None
    _same_raw(parse(crlf, "x"), parse(text, "x", fast=False))


@pytest.mark.parametrize("edit, match", [
    (lambda ln: ln.replace(",", ", ", 1), None),            # a space: left to the slow path
    (lambda ln: ln + ",", r"line 9: 36 comma-separated fields, expected 35"),
    (lambda ln: ln.replace("1988,1,1,1", "1988,1,1,1.0", 1), r"line 9: hour \(field 4\)"),
])
def test_fast_path_steps_aside_and_the_line_is_named(real_files, edit, match, tmp_path):
    lines = _text(real_files["greensboro.epw"]).splitlines()
    lines[8] = edit(lines[8])
    text = "\n".join(lines) + "\n"
    assert _fast.epw_body("\n".join(lines[8:]), {"utc_offset": -5.0}) is None
    if match is None:
        _same_raw(parse(text, "x.epw"), parse(text, "x.epw", fast=False))
    else:
        with pytest.raises(WeatherFileError, match=match):
            parse(text, "x.epw")


# ------------------------------------------------------------------ property: same outcome

_EDITS = st.one_of(
    st.tuples(st.just("field"), st.integers(0, 8800), st.integers(0, 80),
              st.one_of(st.text(max_size=6),
                        st.sampled_from(["", " 1", "1 ", "+1", "01", "1.0", "1e1", "nan",
                                         "NA", "inf", "-0", "?", " ?", "\"1\"", "9999",
                                         "-9900", "24", "00", "13", "02/29/1988",
                                         "12/31/1900", "24:00", "1:00", "01:30", "1,2"]))),
    st.tuples(st.just("delete_line"), st.integers(0, 8800), st.just(0), st.just("")),
    st.tuples(st.just("dup_line"), st.integers(0, 8800), st.just(0), st.just("")),
    st.tuples(st.just("truncate"), st.integers(0, 1_700_000), st.just(0), st.just("")),
)


def _apply(text: str, edit) -> str:
    kind, a, b, s = edit
    lines = text.splitlines()
    if kind == "truncate":
        return text[: a % (len(text) + 1)]
    i = a % len(lines)
    if kind == "delete_line":
        del lines[i]
    elif kind == "dup_line":
        lines.insert(i, lines[i])
    else:
        parts = lines[i].split(",")
        parts[b % len(parts)] = s
        lines[i] = ",".join(parts)
    return "\n".join(lines) + "\n"


def _outcome(text: str, fast: bool):
    try:
        return parse(text, "f.x", fast=fast)
    except WeatherFileError as exc:
        return str(exc)
    except (ValueError, KeyError, IndexError, TypeError) as exc:  # read_weather wraps these
        return type(exc).__name__


@pytest.mark.parametrize("key", ["greensboro.tmy3", "greensboro.epw"])
@settings(max_examples=25, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(edit=_EDITS)
def test_fast_and_line_by_line_agree_on_corrupted_files(real_files, key, edit):
    """Whatever the corruption, the fast path gives the same table or the same error."""
    text = _apply(_text(real_files[key]), edit)
    a, b = _outcome(text, True), _outcome(text, False)
    if isinstance(b, str):
        assert a == b
    else:
        _same_raw(a, b)


def test_read_weather_fast_path_year_unchanged(greensboro_path):
    """End to end: the validated year from the fast path is the line-by-line one."""
    from solair.weather import _read_text
    from solair.weather.validate import validate

    text = _read_text(greensboro_path, "g")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        slow = validate(parse(text, "g", fast=False), "g")
        w = read_weather(greensboro_path)
    pd.testing.assert_frame_equal(w.data, slow[0], check_exact=True)
    assert w.filled == slow[2] and w.notes == slow[3]


@pytest.mark.parametrize("text, accepted", [
    ("0", True), ("-0", True), ("-0.0", True), ("0.1", True), ("12.3", True), ("-9900", True),
    ("00012.50", True), ("999999999", True), ("0.999", True), ("123456789012345", True),
    ("-1.23456789012345", True), ("1234567890123456", False), ("1.", False), (".5", False),
    ("-.5", False), ("1e5", False), ("+1", False), ("--1", False), ("1.2.3", False),
    ("-", False), ("1-2", False), ("NA", False), ("A", False),
    # the compiled parse (solair.weather._fast_kernels): widths, signs and points at the edges
    ("-0.00000000000001", True), ("0.00000000000000001", False), ("", False), ("0.", False),
    ("-0.5", True), ("1.0.", False), ("12-", False), ("1/2", False), ("7:00", False),
])
def test_fast_number_parse_is_pandas_bit_for_bit_or_steps_aside(text, accepted):
    # Reference: pandas.read_csv's C parser (the one behind pvlib's readers). A plain decimal
    # of up to 15 digits is parsed to the same float64 bits (-0.0 included); anything else
    # makes the fast path step aside for the line-by-line reader.
    body = "\n".join(f"7,{text},1" for _ in range(3)) + "\n"
    v = _fast._block(body, 3).floats([0, 1, 2])
    if not accepted:
        assert v is None
        return
    import io

    ref = pd.read_csv(io.StringIO(body), header=None, dtype=np.float64).to_numpy()
    assert v is not None
    assert_array_equal(v.view(np.int64), ref.view(np.int64))
