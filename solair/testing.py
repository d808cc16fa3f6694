"""Helpers shared by the test suite and the benchmarks (not part of the modelling API).

:func:`tmy3_variant` makes synthetic weather files for exercising the batch machinery
at scale from the real NREL TMY3 files installed with pvlib: the air and dew-point
temperatures shifted, the irradiance and the wind scaled. The variants are not
climates of any place (the irradiance components are scaled alike, so the
closure GHI ≈ DNI cos z + DHI still holds, to the rounding; the sky and the humidity no longer match
the site); use them for throughput, failure isolation and resume checks only.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["tmy3_variant"]


def tmy3_variant(src: str | Path, dst: str | Path, d_temp: float = 0.0,
                 irradiance: float = 1.0, wind: float = 1.0) -> Path:
    """Copy a TMY3 file with shifted temperatures and scaled irradiance and wind.

    Parameters
    ----------
    src, dst : str or Path
        The TMY3 file read and the one written (same two-line header layout).
    d_temp : float
        Shift of the dry-bulb and dew-point temperatures [K].
    irradiance : float
        Factor on GHI, DNI and DHI [-].
    wind : float
        Factor on the wind speed [-].

    Returns
    -------
    Path
        ``dst``.
    """
    import pandas as pd

    with open(src, newline="", encoding="utf-8") as fh:
        head = fh.readline()
        df = pd.read_csv(fh, dtype=str, keep_default_na=False)
    for col in ("Dry-bulb (C)", "Dew-point (C)"):
        df[col] = (df[col].astype(float) + d_temp).round(1).astype(str)
    for col in ("GHI (W/m^2)", "DNI (W/m^2)", "DHI (W/m^2)"):
        df[col] = (df[col].astype(float) * irradiance).round(0).astype(int).astype(str)
    df["Wspd (m/s)"] = (df["Wspd (m/s)"].astype(float) * wind).round(1).astype(str)
    with open(dst, "w", newline="", encoding="utf-8") as fh:
        fh.write(head)
        df.to_csv(fh, index=False, lineterminator="\n")
    return Path(dst)
