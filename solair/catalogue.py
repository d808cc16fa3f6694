"""Reading the TOML catalogues of finishes and constructions.

Both catalogues (the shipped ones under ``solair/data/`` and a user's own file of
the same schema) are a TOML table of named sub-tables, ``[finishes.<name>]`` or
``[constructions.<name>]``. This module reads such a file and walks its entries
with the checks they share: the file is readable and valid TOML, the section
exists and is not empty, each name is a lower_snake_case identifier, each entry
is a table and holds no unknown field. The fields themselves are checked by the
module that owns them (:mod:`solair.finishes`, :mod:`solair.constructions`).
Every error is a :class:`~solair.errors.ConfigurationError` that names the file,
the entry and the field.
"""

from __future__ import annotations

import re
import tomllib
from collections.abc import Iterator
from importlib import resources
from pathlib import Path
from typing import Any

from solair.errors import ConfigurationError

__all__ = ["read_catalogue", "read_shipped", "entries", "unknown_fields", "number"]

NAME = re.compile(r"^[a-z][a-z0-9]*(_[a-z0-9]+)*$")


def read_catalogue(path: str | Path, kind: str) -> dict[str, Any]:
    """The TOML table of a user's catalogue file.

    Parameters
    ----------
    path : str or Path
        The TOML file.
    kind : str
        What the file holds, for the message (``"finish"``, ``"construction"``).

    Raises
    ------
    ConfigurationError
        The file cannot be read or is not valid TOML.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise ConfigurationError(f"{path}: cannot read {kind} file ({exc.strerror})") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigurationError(f"{path}: not valid TOML ({exc})") from None


def read_shipped(name: str) -> dict[str, Any]:
    """The TOML table of a catalogue shipped as ``solair/data/<name>``."""
    text = resources.files("solair").joinpath(f"data/{name}").read_text(encoding="utf-8")
    return tomllib.loads(text)


def entries(table: dict[str, Any], section: str, kind: str, allowed: set[str],
            where: str) -> Iterator[tuple[str, dict[str, Any]]]:
    """The ``(name, entry)`` pairs of ``[section.<name>]``, each checked for shape.

    Parameters
    ----------
    table : dict
        The whole TOML table.
    section : str
        The top-level key (``"finishes"``).
    kind : str
        One entry's kind, for the message (``"finish"``).
    allowed : set of str
        The fields an entry may hold.
    where : str
        The file, for the message.

    Raises
    ------
    ConfigurationError
        The section is missing or empty, a name is not lower_snake_case, an entry
        is not a table or holds a field not in ``allowed``.
    """
    items = table.get(section)
    if not isinstance(items, dict) or not items:
        raise ConfigurationError(f"{where}: no [{section}.<name>] tables found")
    for name, entry in items.items():
        if not NAME.match(name):
            raise ConfigurationError(
                f"{where}: {kind} name {name!r} is not a lower_snake_case identifier"
            )
        if not isinstance(entry, dict):
            raise ConfigurationError(f"{where}: {kind} {name!r} must be a table")
        unknown_fields(entry, allowed, f"{where}: {kind} {name!r}")
        yield name, entry


def unknown_fields(entry: dict[str, Any], allowed: set[str], context: str) -> None:
    """Raise if ``entry`` holds a field not in ``allowed`` (typos must not pass)."""
    unknown = sorted(set(entry) - allowed)
    if unknown:
        raise ConfigurationError(
            f"{context}: unknown field(s) {unknown}; allowed {sorted(allowed)}"
        )


def number(value: Any, context: str, field: str) -> float:
    """``value`` as a float; booleans and text are refused."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ConfigurationError(f"{context}: {field} = {value!r} is not a number")
    return float(value)
