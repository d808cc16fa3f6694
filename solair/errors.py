"""Error classes of solair, one per domain.

The command-line interface turns each of them into one line on stderr and exit
status 2; library users catch them as ``ValueError``.
"""

from __future__ import annotations

__all__ = ["SolairError", "WeatherFileError", "ConfigurationError", "one_line"]


class SolairError(ValueError):
    """Base class of the errors solair raises for a user's input."""


class WeatherFileError(SolairError):
    """A weather file cannot be read or fails validation.

    The message names the file, the line where there is one, the field and
    what is wrong, e.g. ``"greensboro.epw, line 57: temp_air = 99.9 °C is
    outside [-90, 70] °C"``.
    """


class ConfigurationError(SolairError):
    """A model choice, surface, finish, construction or portfolio setting is invalid.

    The message names the setting (or key path), the value given and what is
    allowed.
    """


def one_line(exc: BaseException) -> str:
    """An exception as one line: solair's own message as is, others prefixed by their type."""
    text = " ".join(str(exc).split())
    if isinstance(exc, SolairError):
        return text
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__
