"""Exterior finishes: the catalogue and the Solar Reflectance Index (SRI).

A finish is a named pair of solar absorptance α (= 1 − solar reflectance) and
thermal (long-wave) emissivity ε, new and, where known, aged. The catalogue is
shipped as ``solair/data/finishes.toml``; users load their own finishes from a
TOML file of the same schema with :func:`load_finishes`.

The SRI follows ASTM E1980-11: the steady surface temperature of a horizontal,
massless, adiabatic surface under standard conditions, scaled between a black
(SRI 0) and a white (SRI 100) reference.

References
----------
.. [1] ASTM E1980-11 (reapproved 2019), Standard Practice for Calculating Solar
   Reflectance Index of Horizontal and Low-Sloped Opaque Surfaces. ASTM
   International, West Conshohocken PA.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from solair import catalogue
from solair.errors import ConfigurationError

__all__ = [
    "Finish",
    "FINISHES",
    "load_finishes",
    "get_finish",
    "available_finishes",
    "SRI_WIND",
    "SRI_METHODS",
    "SIGMA_E1980",
    "sri",
    "sri_balance",
    "sri_polynomial",
    "temp_surface_e1980",
]

_KEYS = {
    "label", "absorptance", "emissivity", "absorptance_aged", "emissivity_aged",
    "source", "note", "indicative",
}
_FRACTIONS = ("absorptance", "emissivity", "absorptance_aged", "emissivity_aged")


@dataclass(frozen=True)
class Finish:
    """A named exterior finish.

    Parameters
    ----------
    name : str
        lower_snake_case identifier.
    absorptance : float
        Solar absorptance α [-], 1 − solar reflectance.
    emissivity : float
        Thermal (long-wave) hemispherical emissivity ε [-].
    label : str
        Text for tables.
    source : str
        Where the numbers come from ("from memory" where not checked).
    absorptance_aged, emissivity_aged : float or None
        Aged values where known.
    note : str
        A caveat printed with the results (empty when none).
    indicative : bool
        True when results for this finish are indicative only (e.g. a
        vegetated roof, whose evapotranspiration the sol-air balance ignores).
    """

    name: str
    absorptance: float
    emissivity: float
    label: str = ""
    source: str = ""
    absorptance_aged: float | None = None
    emissivity_aged: float | None = None
    note: str = ""
    indicative: bool = False

    @property
    def has_aged(self) -> bool:
        """True when aged values are known."""
        return self.absorptance_aged is not None or self.emissivity_aged is not None

    def aged(self) -> Finish:
        """The aged variant, named ``<name>_aged``."""
        if not self.has_aged:
            raise ConfigurationError(f"finish {self.name!r} has no aged values")
        return replace(
            self,
            name=f"{self.name}_aged",
            label=f"{self.label or self.name} (aged)",
            absorptance=(self.absorptance if self.absorptance_aged is None
                         else self.absorptance_aged),
            emissivity=(self.emissivity if self.emissivity_aged is None
                        else self.emissivity_aged),
            absorptance_aged=None,
            emissivity_aged=None,
        )

    def sri(self, wind: str = "medium") -> float:
        """SRI of this finish after ASTM E1980-11 (exact balance)."""
        return float(sri(self.absorptance, self.emissivity, wind=wind))


def _parse_finishes(table: dict[str, Any], where: str) -> dict[str, Finish]:
    out: dict[str, Finish] = {}
    for name, entry in catalogue.entries(table, "finishes", "finish", _KEYS, where):
        for key in ("absorptance", "emissivity"):
            if key not in entry:
                raise ConfigurationError(f"{where}: finish {name!r}: field {key!r} is missing")
        for key in _FRACTIONS:
            if key not in entry:
                continue
            value = catalogue.number(entry[key], f"{where}: finish {name!r}", key)
            if not 0.0 <= value <= 1.0:
                raise ConfigurationError(
                    f"{where}: finish {name!r}: {key} = {entry[key]!r} is outside [0, 1]"
                )
        for key in ("label", "source", "note"):
            if key in entry and not isinstance(entry[key], str):
                raise ConfigurationError(f"{where}: finish {name!r}: {key} must be text")
        indicative = entry.get("indicative", False)
        if not isinstance(indicative, bool):
            raise ConfigurationError(
                f"{where}: finish {name!r}: indicative = {indicative!r} is not true/false"
            )
        out[name] = Finish(
            name=name,
            absorptance=float(entry["absorptance"]),
            emissivity=float(entry["emissivity"]),
            label=entry.get("label", name),
            source=entry.get("source", f"user file {where}"),
            absorptance_aged=(None if "absorptance_aged" not in entry
                              else float(entry["absorptance_aged"])),
            emissivity_aged=(None if "emissivity_aged" not in entry
                             else float(entry["emissivity_aged"])),
            note=entry.get("note", ""),
            indicative=indicative,
        )
    return out


def load_finishes(path: str | Path) -> dict[str, Finish]:
    """Read finishes from a TOML file (schema of ``solair/data/finishes.toml``).

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    dict of str to Finish

    Raises
    ------
    ConfigurationError
        Unreadable file, bad name, missing field or a value outside [0, 1]; the
        message names the file, the finish and the field.
    """
    table = catalogue.read_catalogue(path, "finish")
    return _parse_finishes(table, str(path))


def _load_catalogue() -> dict[str, Finish]:
    return _parse_finishes(catalogue.read_shipped("finishes.toml"), "solair/data/finishes.toml")


#: The shipped catalogue, name -> Finish.
FINISHES: dict[str, Finish] = _load_catalogue()


def available_finishes(extra: dict[str, Finish] | None = None) -> list[str]:
    """All finish names accepted by :func:`get_finish`, aged variants included."""
    table = {**FINISHES, **(extra or {})}
    names = set(table)
    names.update(f"{n}_aged" for n, f in table.items() if f.has_aged)
    return sorted(names)


def get_finish(name: str, extra: dict[str, Finish] | None = None) -> Finish:
    """Look a finish up by name in ``extra`` (user finishes) then the catalogue.

    ``<name>_aged`` returns the aged variant of a finish with aged values.
    """
    table = {**FINISHES, **(extra or {})}
    if name in table:
        return table[name]
    if name.endswith("_aged") and name[:-5] in table and table[name[:-5]].has_aged:
        return table[name[:-5]].aged()
    raise ConfigurationError(
        f"finish {name!r} is not one of {available_finishes(extra)}"
    )


# ---------------------------------------------------------------------------
# Solar Reflectance Index, ASTM E1980-11
# ---------------------------------------------------------------------------

#: Stefan-Boltzmann constant as ASTM E1980-11 uses it [W m-2 K-4].
SIGMA_E1980 = 5.66961e-8
#: Convection coefficient of the standard's wind classes [W m-2 K-1].
SRI_WIND: dict[str, float] = {"low": 5.0, "medium": 12.0, "high": 30.0}
SRI_METHODS = frozenset({"balance", "polynomial"})
_E1980_SOLAR = 1000.0  # W m-2
_E1980_TEMP_AIR = 310.0  # K
_E1980_TEMP_SKY = 300.0  # K
_BLACK = (0.95, 0.90)  # (absorptance, emissivity), SRI 0
_WHITE = (0.20, 0.90)  # SRI 100


def _h_conv(wind: str | float) -> float:
    if isinstance(wind, str):
        if wind not in SRI_WIND:
            raise ConfigurationError(f"SRI wind class {wind!r} is not one of {sorted(SRI_WIND)}")
        return SRI_WIND[wind]
    value = float(wind)
    if not value > 0:
        raise ConfigurationError(f"SRI convection coefficient {wind!r} must be > 0 W m-2 K-1")
    return value


def temp_surface_e1980(absorptance, emissivity, h_conv=12.0, *, tol=1e-10):
    r"""Steady surface temperature under ASTM E1980-11 standard conditions.

    Solves, by Newton's method from above (the residual is increasing and
    convex in T_s, so the iterates fall monotonically onto the root for any
    ε ≥ 0),

    .. math:: \alpha I = \varepsilon \sigma (T_s^4 - T_{sky}^4) + h_c (T_s - T_a)

    with I = 1000 W m-2, T_a = 310 K, T_sky = 300 K and σ = 5.66961e-8.

    Parameters
    ----------
    absorptance, emissivity : array_like
        Solar absorptance and thermal emissivity [-]; broadcast.
    h_conv : array_like
        Convection coefficient [W m-2 K-1]: 5, 12, 30 for low, medium, high wind.
    tol : float
        Convergence of the Newton step [K].

    Returns
    -------
    ndarray
        Surface temperature [K].

    References
    ----------
    .. [1] ASTM E1980-11 (2019), clause 5 (steady-state surface temperature).
    """
    a, e, h = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in
                                    (absorptance, emissivity, h_conv)))
    t = _E1980_TEMP_AIR + a * _E1980_SOLAR / h + 0.0  # upper bound of the root
    t = np.maximum(t, _E1980_TEMP_SKY)
    for _ in range(100):
        f = e * SIGMA_E1980 * (t**4 - _E1980_TEMP_SKY**4) + h * (t - _E1980_TEMP_AIR) \
            - a * _E1980_SOLAR
        df = 4.0 * e * SIGMA_E1980 * t**3 + h
        step = f / df
        t = t - step
        if np.all(np.abs(step) < tol):
            break
    return t


def sri_balance(absorptance, emissivity, h_conv=12.0):
    """SRI from the exact steady balance of ASTM E1980-11.

    SRI = 100 (T_b − T_s) / (T_b − T_w), with T_b and T_w the temperatures of
    the black (α 0.95, ε 0.90) and white (α 0.20, ε 0.90) references at the same
    h_conv.

    Parameters
    ----------
    absorptance, emissivity : array_like
        [-], broadcast.
    h_conv : array_like
        [W m-2 K-1].

    Returns
    -------
    ndarray
        SRI [-].

    References
    ----------
    .. [1] ASTM E1980-11 (2019), clause 5, equations for SRI.
    """
    t_s = temp_surface_e1980(absorptance, emissivity, h_conv)
    t_b = temp_surface_e1980(*_BLACK, h_conv)
    t_w = temp_surface_e1980(*_WHITE, h_conv)
    return 100.0 * (t_b - t_s) / (t_b - t_w)


def sri_polynomial(absorptance, emissivity, h_conv=12.0):
    r"""SRI from the closed form of ASTM E1980-11.

    .. math::
        \chi = \frac{(\alpha - 0.029\varepsilon)(8.797 + h_c)}{9.5205\varepsilon + h_c},\qquad
        SRI = 123.97 - 141.35\chi + 9.655\chi^2

    The standard states it agrees with the exact balance to a mean 0.9 and a
    maximum 2 SRI units for α > 0.1, except "collector" surfaces (α > 0.8 with
    ε < 0.2).

    References
    ----------
    .. [1] ASTM E1980-11 (2019), clause 5.
    """
    a = np.asarray(absorptance, dtype=float)
    e = np.asarray(emissivity, dtype=float)
    h = np.asarray(h_conv, dtype=float)
    chi = (a - 0.029 * e) * (8.797 + h) / (9.5205 * e + h)
    return 123.97 - 141.35 * chi + 9.655 * chi**2


def sri(absorptance, emissivity, *, wind: str | float = "medium", method: str = "balance"):
    """Solar Reflectance Index after ASTM E1980-11 (vectorised).

    Parameters
    ----------
    absorptance, emissivity : array_like
        Solar absorptance and thermal emissivity [-].
    wind : {"low", "medium", "high"} or float
        Wind class (h_c = 5, 12, 30 W m-2 K-1) or an h_c value. A single
        reported SRI is by convention the medium-wind one.
    method : {"balance", "polynomial"}
        Exact steady balance (default) or the standard's closed form.

    Returns
    -------
    ndarray or float
        SRI [-].

    References
    ----------
    .. [1] ASTM E1980-11 (2019).
    """
    h = _h_conv(wind)
    if method not in SRI_METHODS:
        raise ConfigurationError(f"SRI method {method!r} is not one of {sorted(SRI_METHODS)}")
    a = np.asarray(absorptance, dtype=float)
    e = np.asarray(emissivity, dtype=float)
    if np.any((a < 0) | (a > 1)) or np.any((e < 0) | (e > 1)):
        raise ConfigurationError("SRI: absorptance and emissivity must lie in [0, 1]")
    out = sri_balance(a, e, h) if method == "balance" else sri_polynomial(a, e, h)
    return out
