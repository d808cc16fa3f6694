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
