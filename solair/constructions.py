"""Layered constructions: library, TOML loading, U-value after ISO 6946.

A construction is a list of homogeneous layers from the outside to the inside.
The library ships as ``solair/data/constructions.toml``; users load their own
with :func:`load_constructions` (same schema).

References
----------
.. [1] ISO 6946:2017, Building components and building elements — Thermal
   resistance and thermal transmittance — Calculation methods (clause 6.8 and
   Table 7: surface resistances R_si 0.10 / 0.13 / 0.17, R_se 0.04 m2 K W-1).
.. [2] ISO 10456:2007, Building materials and products — Hygrothermal
   properties — Tabulated design values (Table 3).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from solair import catalogue
from solair.errors import ConfigurationError

__all__ = [
    "Layer",
    "Construction",
    "CONSTRUCTIONS",
    "R_SI",
    "R_SE",
    "load_constructions",
    "get_construction",
    "resolve_construction",
    "heat_flow_class",
    "r_si",
]

_LAYER_FIELDS = ("thickness", "conductivity", "density", "specific_heat")
_LAYER_KEYS = {"name", "source", *_LAYER_FIELDS}
_KEYS = {"label", "kind", "source", "layers"}

#: Internal surface resistance by heat-flow direction [m2 K W-1], ISO 6946:2017 Table 7.
R_SI: dict[str, float] = {"up": 0.10, "horizontal": 0.13, "down": 0.17}
#: Conventional external surface resistance [m2 K W-1], ISO 6946:2017 Table 7.
R_SE = 0.04


@dataclass(frozen=True)
class Layer:
    """A homogeneous layer.

    Attributes
    ----------
    name : str
    thickness : float  [m]
    conductivity : float  [W m-1 K-1]
    density : float  [kg m-3]
    specific_heat : float  [J kg-1 K-1]
    """

    name: str
    thickness: float
    conductivity: float
    density: float
    specific_heat: float

    @property
    def resistance(self) -> float:
        """Thermal resistance d/λ [m2 K W-1]."""
        return self.thickness / self.conductivity

    @property
    def heat_capacity(self) -> float:
        """Areal heat capacity ρ c d [J m-2 K-1]."""
        return self.density * self.specific_heat * self.thickness

    @property
    def diffusivity(self) -> float:
        """Thermal diffusivity λ/(ρ c) [m2 s-1]."""
        return self.conductivity / (self.density * self.specific_heat)


@dataclass(frozen=True)
class Construction:
    """Layers from the outside to the inside.

    Attributes
    ----------
    name : str
    layers : tuple of Layer
    label, kind, source : str
    """

    name: str
    layers: tuple[Layer, ...]
    label: str = ""
    kind: str = ""
    source: str = ""

    def __post_init__(self) -> None:
        if not self.layers:
            raise ConfigurationError(f"construction {self.name!r} has no layers")
        for layer in self.layers:
            for field in _LAYER_FIELDS:
                value = getattr(layer, field)
                if not (np.isfinite(value) and value > 0):
                    raise ConfigurationError(
                        f"construction {self.name!r}, layer {layer.name!r}: "
                        f"{field} = {value!r} must be > 0"
                    )

    @property
    def resistance(self) -> float:
        """Sum of the layer resistances, surface resistances excluded [m2 K W-1]."""
        return float(sum(layer.resistance for layer in self.layers))

    @property
    def heat_capacity(self) -> float:
        """Areal heat capacity of all layers [J m-2 K-1]."""
        return float(sum(layer.heat_capacity for layer in self.layers))

    def u_value(self, surface_tilt: float = 0.0, *, heat_flow: str = "outward",
                r_se: float = R_SE) -> float:
        """Thermal transmittance after ISO 6946:2017 [W m-2 K-1].

        U = 1 / (R_si + Σ d/λ + R_se), R_si by :func:`r_si`.
        """
        inward = {"outward": False, "inward": True}.get(heat_flow)
        if inward is None:
            raise ConfigurationError(
                f"heat_flow {heat_flow!r} is not one of ['inward', 'outward']"
            )
        return float(1.0 / (r_si(surface_tilt, inward) + self.resistance + r_se))


def heat_flow_class(surface_tilt, inward):
    """ISO 6946 heat-flow class of a surface: "up", "horizontal" or "down".

    Heat flow is "horizontal" within ±30° of the horizontal plane, i.e. for a
    surface tilt between 60° and 120° (ISO 6946:2017, note to Table 7). For a
    roof (tilt < 60°) heat flowing out of the building flows up; for a soffit
    (tilt > 120°) it flows down; inward flow reverses the direction.

    Parameters
    ----------
    surface_tilt : array_like
        [°], 0 = facing up, 90 = vertical, 180 = facing down.
    inward : array_like of bool
        True where heat flows from outside to inside.

    Returns
    -------
    ndarray of str
    """
    tilt = np.asarray(surface_tilt, dtype=float)
    inward = np.asarray(inward, dtype=bool)
    up = np.where(tilt < 60.0, ~inward, inward)
    return np.where((tilt >= 60.0) & (tilt <= 120.0), "horizontal",
                    np.where(up, "up", "down"))


def r_si(surface_tilt, inward):
    """Internal surface resistance after ISO 6946:2017 Table 7 [m2 K W-1].

    0.10 heat flow up, 0.13 horizontal, 0.17 down (see :func:`heat_flow_class`).

    Parameters
    ----------
    surface_tilt : array_like
        [°].
    inward : array_like of bool
        True where heat flows from outside to inside.

    Returns
    -------
    ndarray
        R_si [m2 K W-1].

    References
    ----------
    .. [1] ISO 6946:2017, Table 7.
    """
    tilt = np.asarray(surface_tilt, dtype=float)
    inward = np.asarray(inward, dtype=bool)
    up = np.where(tilt < 60.0, ~inward, inward)
    horizontal = (tilt >= 60.0) & (tilt <= 120.0)
    out = np.where(horizontal, R_SI["horizontal"], np.where(up, R_SI["up"], R_SI["down"]))
    return out if out.ndim else float(out)


def _parse_constructions(table: dict[str, Any], where: str) -> dict[str, Construction]:
    out: dict[str, Construction] = {}
    for name, entry in catalogue.entries(table, "constructions", "construction", _KEYS,
                                         where):
        raw_layers = entry.get("layers")
        if not isinstance(raw_layers, list) or not raw_layers:
            raise ConfigurationError(
                f"{where}: construction {name!r} has no [[constructions.{name}.layers]]"
            )
        layers = []
        for i, raw in enumerate(raw_layers, start=1):
            lname = raw.get("name", f"layer {i}") if isinstance(raw, dict) else f"layer {i}"
            ctx = f"{where}: construction {name!r}, layer {lname!r}"
            if not isinstance(raw, dict):
                raise ConfigurationError(f"{ctx} must be a table")
            catalogue.unknown_fields(raw, _LAYER_KEYS, ctx)
            values = {}
            for field in _LAYER_FIELDS:
                if field not in raw:
                    raise ConfigurationError(f"{ctx}: field {field!r} is missing")
                value = catalogue.number(raw[field], ctx, field)
                if not (np.isfinite(value) and value > 0):
                    raise ConfigurationError(f"{ctx}: {field} = {raw[field]!r} must be > 0")
                values[field] = value
            layers.append(Layer(name=str(lname), **values))
        out[name] = Construction(
            name=name,
            layers=tuple(layers),
            label=str(entry.get("label", name)),
            kind=str(entry.get("kind", "")),
            source=str(entry.get("source", f"user file {where}")),
        )
    return out


def load_constructions(path: str | Path) -> dict[str, Construction]:
    """Read constructions from a TOML file (schema of ``solair/data/constructions.toml``).

    Raises
    ------
    ConfigurationError
        Unreadable file, bad name, missing field or a non-positive thickness,
        conductivity, density or specific heat; the message names the file,
        the construction, the layer and the field.
    """
    table = catalogue.read_catalogue(path, "construction")
    return _parse_constructions(table, str(path))


def _load_library() -> dict[str, Construction]:
    return _parse_constructions(catalogue.read_shipped("constructions.toml"),
                                "solair/data/constructions.toml")


#: The shipped library, name -> Construction.
CONSTRUCTIONS: dict[str, Construction] = _load_library()


def get_construction(name: str) -> Construction:
    """A library construction by name."""
    if name not in CONSTRUCTIONS:
        raise ConfigurationError(
            f"construction {name!r} is not one of {sorted(CONSTRUCTIONS)} "
            "(or give a TOML file)"
        )
    return CONSTRUCTIONS[name]


def resolve_construction(spec: str | Construction) -> Construction:
    """A construction from a library name, ``FILE.toml`` or ``FILE.toml:NAME``.

    A file holding one construction needs no name.
    """
    if isinstance(spec, Construction):
        return spec
    spec = str(spec)
    path, _, name = spec.partition(".toml:")
    if name:
        path = path + ".toml"
    elif spec.endswith(".toml") or Path(spec).is_file():
        path = spec
    else:
        return get_construction(spec)
    table = load_constructions(path)
    if name:
        if name not in table:
            raise ConfigurationError(
                f"{path}: construction {name!r} is not one of {sorted(table)}"
            )
        return table[name]
    if len(table) != 1:
        raise ConfigurationError(
            f"{path} holds {len(table)} constructions {sorted(table)}; "
            f"choose one with {path}:NAME"
        )
    return next(iter(table.values()))
