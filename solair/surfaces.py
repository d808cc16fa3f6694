"""Building surfaces: orientation and the two radiative properties of the finish.

A :class:`Surface` is a plane exposed to the outdoors: tilt β (0° = horizontal
facing up, 90° = vertical, 180° = horizontal facing down), azimuth in pvlib's
convention (degrees clockwise from north: N = 0, E = 90, S = 180, W = 270),
solar absorptance α and thermal (long-wave) emissivity ε.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

from solair.errors import ConfigurationError

__all__ = [
    "Surface",
    "default_surfaces",
    "parse_surface",
    "check_unique_names",
    "FACADE_AZIMUTHS",
]

#: Compass points of the default facades and their azimuth [deg from north, clockwise].
FACADE_AZIMUTHS: dict[str, float] = {
    "N": 0.0, "NE": 45.0, "E": 90.0, "SE": 135.0,
    "S": 180.0, "SW": 225.0, "W": 270.0, "NW": 315.0,
}


def _number(field: str, value, low: float, high: float, name: str) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ConfigurationError(
            f"surface {name!r}: {field} = {value!r} is not a number"
        ) from None
    if not math.isfinite(x) or not low <= x <= high:
        raise ConfigurationError(
            f"surface {name!r}: {field} = {value!r} is outside [{low:g}, {high:g}]"
        )
    return x


@dataclass(frozen=True)
class Surface:
    """One exterior surface.

    Parameters
    ----------
    name : str
        Label used as the ``surface`` coordinate of results (non-empty, no
        comma).
    surface_tilt : float
        Tilt from horizontal [deg], 0-180 (0 = roof facing up, 90 = wall).
    surface_azimuth : float
        Direction the surface faces [deg clockwise from north], 0-360.
    absorptance : float
        Solar absorptance α [-], 0-1 (default 0.6, a mid-grey finish).
    emissivity : float
        Thermal emissivity ε [-], 0-1 (default 0.9, most non-metallic
        building finishes).

    Raises
    ------
    ConfigurationError
        Naming the field and the allowed range.
    """

    name: str
    surface_tilt: float
    surface_azimuth: float
    absorptance: float = 0.6
    emissivity: float = 0.9

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name.strip() or "," in self.name:
            raise ConfigurationError(
                f"surface name {self.name!r} must be a non-empty text without commas"
            )
        checks = (
            ("surface_tilt", 0.0, 180.0),
            ("surface_azimuth", 0.0, 360.0),
            ("absorptance", 0.0, 1.0),
            ("emissivity", 0.0, 1.0),
        )
        for field, low, high in checks:
            object.__setattr__(
                self, field, _number(field, getattr(self, field), low, high, self.name)
            )


def default_surfaces(absorptance: float = 0.6, emissivity: float = 0.9) -> list[Surface]:
    """The default set: a flat roof and eight vertical facades.

    Returns ``roof`` (tilt 0) and the facades ``N``, ``NE``, ``E``, ``SE``,
    ``S``, ``SW``, ``W``, ``NW`` (tilt 90, azimuths 0, 45, ... 315), all
    with the given absorptance and emissivity.
    """
    out = [Surface("roof", 0.0, 180.0, absorptance, emissivity)]
    out += [
        Surface(name, 90.0, az, absorptance, emissivity)
        for name, az in FACADE_AZIMUTHS.items()
    ]
    return out


def parse_surface(text: str, absorptance: float = 0.6, emissivity: float = 0.9) -> Surface:
    """Parse the command-line form ``NAME,TILT,AZIMUTH`` into a :class:`Surface`.

    ``AZIMUTH`` may also be a compass point (N, NE, ... NW).

    Examples
    --------
    >>> parse_surface("south_wall,90,S").surface_azimuth
    180.0
    """
    parts = [p.strip() for p in str(text).split(",")]
    if len(parts) != 3:
        raise ConfigurationError(
            f"surface {text!r} is not of the form NAME,TILT,AZIMUTH (e.g. roof,0,180)"
        )
    name, tilt, azimuth = parts
    azimuth = FACADE_AZIMUTHS.get(azimuth.upper(), azimuth)
    return Surface(name, tilt, azimuth, absorptance, emissivity)


def check_unique_names(surfaces: Iterable[Surface]) -> list[Surface]:
    """The surfaces as a list; ConfigurationError for an empty set or a repeated name."""
    surfaces = list(surfaces)
    if not surfaces:
        raise ConfigurationError("no surfaces given: give at least one NAME,TILT,AZIMUTH")
    seen: set[str] = set()
    for s in surfaces:
        if not isinstance(s, Surface):
            raise ConfigurationError(f"surface {s!r} is not a solair.Surface")
        if s.name in seen:
            raise ConfigurationError(f"surface name {s.name!r} is given more than once")
        seen.add(s.name)
    return surfaces
