"""What every result carries: the caution and the versions that produced it.

:data:`CAUTION` goes into every output (NetCDF attribute, CSV header, report, CLI line);
:func:`solair_version` and :func:`versions` into the provenance attributes and the batch
manifest, and the latter into the client/worker version check of :mod:`solair.cluster`.
"""

from __future__ import annotations

import functools
import platform

__all__ = ["CAUTION", "SKEW_PACKAGES", "solair_version", "versions"]

CAUTION = "engineering estimate; verify against local codes and licensed professional practice"

#: packages whose versions shape the results (and must agree between a client and its workers)
SKEW_PACKAGES = ("solair", "pvlib", "xarray", "numpy", "pandas", "h5netcdf", "h5py")


@functools.lru_cache(maxsize=1)
def solair_version() -> str:
    """The installed solair version (the source tree's ``__version__`` when not installed)."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("solair")
    except PackageNotFoundError:  # pragma: no cover - running from a source tree
        from solair import __version__

        return __version__


def versions() -> dict[str, str]:
    """Versions of Python and of the packages that shape the results."""
    from importlib.metadata import PackageNotFoundError, version

    out = {"python": platform.python_version()}
    for pkg in (*SKEW_PACKAGES, "dask", "distributed"):
        try:
            out[pkg] = version(pkg)
        except PackageNotFoundError:
            out[pkg] = "not installed"
    return out
