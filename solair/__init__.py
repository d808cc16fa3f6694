"""solair: hourly exterior equivalent (sol-air) temperature for building envelopes.

The public names are loaded lazily so that ``solair --help`` does not pay for
importing pvlib, pandas and xarray.
"""

from __future__ import annotations

import importlib
from typing import Any

from solair.errors import ConfigurationError, SolairError, WeatherFileError

__version__ = "0.1.0"

# public name -> module that defines it
_LAZY = {
    "read_weather": "solair.weather",
    "Weather": "solair.weather",
    "Site": "solair.weather",
    "WeatherWarning": "solair.weather",
    "Surface": "solair.surfaces",
    "default_surfaces": "solair.surfaces",
    "compute": "solair.engine",
    "exterior_forcing": "solair.engine",
    "sol_air": "solair.engine",
    "Finish": "solair.finishes",
    "load_finishes": "solair.finishes",
}

__all__ = [
    "ConfigurationError",
    "SolairError",
    "WeatherFileError",
    "__version__",
    *_LAZY,
]


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'solair' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
