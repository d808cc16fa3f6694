"""Shared fixtures: paths to the real open weather files used across the test suite.

* Greensboro NC TMY3 (``723170TYA.CSV``), Sand Point AK TMY3 (``703165TY.csv``) and
  Miami FL TMY2 (``12839.tm2``) are installed with pvlib (NREL TMY data, public).
* ``tests/data/tmy_45.000_8.000_2005_2023.epw`` is copied from pvlib 0.16.1's source
  distribution (see tests/data/README.md); its rows are in UTC although its header says TZ=1.
"""

from __future__ import annotations

from pathlib import Path

import pytest

DATA_DIR = Path(__file__).parent / "data"


def _pvlib_data_dir() -> Path:
    import pvlib

    return Path(pvlib.__path__[0]) / "data"


@pytest.fixture(scope="session")
def pvlib_data_dir() -> Path:
    """pvlib's installed data folder."""
    return _pvlib_data_dir()


@pytest.fixture(scope="session")
def greensboro_path() -> Path:
    """Greensboro NC TMY3 (NREL, shipped with pvlib)."""
    return _pvlib_data_dir() / "723170TYA.CSV"


@pytest.fixture(scope="session")
def sand_point_path() -> Path:
    """Sand Point AK TMY3 (NREL, shipped with pvlib)."""
    return _pvlib_data_dir() / "703165TY.csv"


@pytest.fixture(scope="session")
def miami_path() -> Path:
    """Miami FL TMY2 (NREL, shipped with pvlib)."""
    return _pvlib_data_dir() / "12839.tm2"


@pytest.fixture(scope="session")
def era_epw_path() -> Path:
    """ERA-derived EPW at 45 N 8 E with real horizontal infrared (rows in UTC, header TZ=1)."""
    return DATA_DIR / "tmy_45.000_8.000_2005_2023.epw"


@pytest.fixture(scope="session")
def greensboro_weather(greensboro_path):
    """The Greensboro TMY3 read through :func:`solair.read_weather` (read once per session)."""
    from solair.weather import read_weather

    return read_weather(greensboro_path)


@pytest.fixture(scope="session")
def era_weather(era_epw_path):
    """The ERA EPW read with its rows taken as UTC (``utc_offset=0``)."""
    from solair.weather import read_weather

    return read_weather(era_epw_path, utc_offset=0)


# ----------------------------------------------------------------------------- EPW fixture

def tmy3_to_epw_text(tmy3_path: Path, *, city: str = "GREENSBORO", state: str = "NC") -> str:
    """Write a TMY3 file's data as EPW text, independently of solair's reader.

    Uses only pvlib's raw parse (``map_variables=False``) and the EPW data
    dictionary's field order (EnergyPlus Auxiliary Programs, "EPW Data Dictionary"):
    the TMY3 hour-ending ``HH:00`` becomes EPW hour HH (1-24, also hour-ending),
    pressure mbar -> Pa, missing TMY3 values (-9900) -> the EPW missing codes.
    """
    import pvlib

    df, meta = pvlib.iotools.read_tmy3(tmy3_path, map_variables=False)

    def val(col, code, fmt="{:g}", scale=1.0):
        x = df[col].to_numpy(dtype=float)
        return [code if v <= -9900 else fmt.format(v * scale) for v in x]

    date = df["Date (MM/DD/YYYY)"].str.split("/")
    hour = df["Time (HH:MM)"].str.split(":").str[0].astype(int)
    cols = {
        "temp_air": val("Dry-bulb (C)", "99.9", "{:.1f}"),
        "temp_dew": val("Dew-point (C)", "99.9", "{:.1f}"),
        "rh": val("RHum (%)", "999", "{:.0f}"),
        "p": val("Pressure (mbar)", "999999", "{:.0f}", 100.0),
        "etr": val("ETR (W/m^2)", "9999", "{:.0f}"),
        "etrn": val("ETRN (W/m^2)", "9999", "{:.0f}"),
        "ghi": val("GHI (W/m^2)", "9999", "{:.0f}"),
        "dni": val("DNI (W/m^2)", "9999", "{:.0f}"),
        "dhi": val("DHI (W/m^2)", "9999", "{:.0f}"),
        "wdir": val("Wdir (degrees)", "999", "{:.0f}"),
        "wspd": val("Wspd (m/s)", "999", "{:.1f}"),
        "tot": val("TotCld (tenths)", "99", "{:.0f}"),
        "opq": val("OpqCld (tenths)", "99", "{:.0f}"),
    }
    lat, lon, tz, alt = meta["latitude"], meta["longitude"], meta["TZ"], meta["altitude"]
    out = [
        f"LOCATION,{city},{state},USA,TMY3 test fixture,{meta['USAF']},{lat},{lon},{tz},{alt}",
        "DESIGN CONDITIONS,0",
        "TYPICAL/EXTREME PERIODS,0",
        "GROUND TEMPERATURES,0",
        "HOLIDAYS/DAYLIGHT SAVING,No,0,0,0",
        "COMMENTS 1,written from an NREL TMY3 file for the solair tests",
        "COMMENTS 2,horizontal infrared not in TMY3 (9999)",
        "DATA PERIODS,1,1,Data,Sunday, 1/ 1,12/31",
    ]
    for i in range(len(df)):
        fields = [date.iloc[i][2], str(int(date.iloc[i][0])), str(int(date.iloc[i][1])),
                  str(int(hour.iloc[i])), "60", "?9?9?9?9E0?9?9?9?9?9?9?9?9?9?9?9?9?9?9*9*9?9",
                  cols["temp_air"][i], cols["temp_dew"][i], cols["rh"][i], cols["p"][i],
                  cols["etr"][i], cols["etrn"][i], "9999", cols["ghi"][i], cols["dni"][i],
                  cols["dhi"][i], "999999", "999999", "999999", "9999", cols["wdir"][i],
                  cols["wspd"][i], cols["tot"][i], cols["opq"][i], "9999", "99999", "9",
                  "999999999", "999", "0.999", "999", "99", "999", "999", "99"]
        assert len(fields) == 35
        out.append(",".join(fields))
    return "\n".join(out) + "\n"


@pytest.fixture(scope="session")
def greensboro_epw_path(tmp_path_factory, greensboro_path) -> Path:
    """The Greensboro TMY3 data written as an EPW file (see :func:`tmy3_to_epw_text`)."""
    path = tmp_path_factory.mktemp("epw") / "greensboro_from_tmy3.epw"
    path.write_text(tmy3_to_epw_text(greensboro_path), encoding="utf-8")
    return path
