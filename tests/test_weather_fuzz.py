"""Fuzzing the readers: any corruption of a real file is either read or refused with a
WeatherFileError, never another exception (no pandas/pvlib traceback for a user's file).

Base files: the Greensboro NC TMY3 (NREL, shipped with pvlib) as EPW (conftest) and as
TMY3, and the Miami FL TMY2.
"""

from __future__ import annotations

import warnings

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from solair.errors import WeatherFileError
from solair.weather import Weather, read_weather

EDITS = st.one_of(
    st.tuples(st.just("replace_field"), st.integers(0, 8800), st.integers(0, 40),
              st.text(max_size=8)),
    st.tuples(st.just("truncate"), st.integers(0, 1_600_000), st.just(0), st.just("")),
    st.tuples(st.just("delete_line"), st.integers(0, 8800), st.just(0), st.just("")),
    st.tuples(st.just("insert_line"), st.integers(0, 8800), st.just(0), st.text(max_size=60)),
)


def _apply(text: str, edit) -> str:
    kind, a, b, s = edit
    lines = text.splitlines()
    if kind == "truncate":
        return text[: a % (len(text) + 1)]
    i = a % len(lines)
    if kind == "delete_line":
        del lines[i]
    elif kind == "insert_line":
        lines.insert(i, s)
    else:
        sep = "," if "," in lines[i] else None
        if sep:
            parts = lines[i].split(",")
            parts[b % len(parts)] = s
            lines[i] = ",".join(parts)
        else:  # fixed-width TMY2: overwrite characters
            j = b % max(len(lines[i]), 1)
            lines[i] = lines[i][:j] + s + lines[i][j + len(s):]
    return "\n".join(lines) + "\n"


@pytest.fixture(scope="module")
def texts(greensboro_epw_path, greensboro_path, miami_path):
    return {"epw": greensboro_epw_path.read_text(encoding="utf-8"),
            "CSV": greensboro_path.read_text(encoding="latin-1"),
            "tm2": miami_path.read_text(encoding="latin-1")}


@pytest.mark.parametrize("fmt", ["epw", "CSV", "tm2"])
@settings(max_examples=20, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(edit=EDITS)
def test_corruption_is_read_or_refused_cleanly(fmt, edit, texts, tmp_path):
    path = tmp_path / f"fuzz.{fmt}"
    path.write_text(_apply(texts[fmt], edit), encoding="utf-8", errors="surrogatepass")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            w = read_weather(path)
        except WeatherFileError as exc:
            msg = str(exc)
            assert msg.startswith("fuzz.") and "\n" not in msg
            return
    assert isinstance(w, Weather) and len(w.data) == 8760
    assert not w.data[["temp_air", "ghi"]].isna().any().any()
