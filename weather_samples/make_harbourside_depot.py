"""Regenerate ``harbourside_depot.epw``, solair's demo weather file.

The hourly data are NREL's TMY3 for Greensboro NC (USAF 723170), as shipped with
pvlib (``pvlib/data/723170TYA.CSV``), written in the EPW layout of the EnergyPlus
data dictionary. Only the site name is ours: "Harbourside Depot" is a fictional
logistics depot used in solair's examples. Coordinates, elevation and time zone
are kept, so that the sun and the data agree.

Conversions: TMY3 hour-ending ``HH:00`` -> EPW hour HH (also hour-ending);
pressure mbar -> Pa; TMY3 missing values (-9900) -> EPW missing codes. TMY3 has no
horizontal infrared, so that field holds the EPW missing code 9999 and solair
derives the sky temperature from the opaque sky cover.

Run: ``python weather_samples/make_harbourside_depot.py``
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pvlib

OUT = Path(__file__).with_name("harbourside_depot.epw")


def _fmt(values, missing: str, spec: str, scale: float = 1.0) -> list[str]:
    return [missing if v <= -9900 else format(v * scale, spec) for v in values]


def main() -> Path:
    src = Path(pvlib.__path__[0]) / "data" / "723170TYA.CSV"
    df, meta = pvlib.iotools.read_tmy3(src, map_variables=False)
    date = df["Date (MM/DD/YYYY)"].str.split("/")
    hour = df["Time (HH:MM)"].str.split(":").str[0].astype(int).to_numpy()

    def col(name: str) -> np.ndarray:
        return df[name].to_numpy(dtype=float)

    fields = {
        "temp_air": _fmt(col("Dry-bulb (C)"), "99.9", ".1f"),
        "temp_dew": _fmt(col("Dew-point (C)"), "99.9", ".1f"),
        "rh": _fmt(col("RHum (%)"), "999", ".0f"),
        "pressure": _fmt(col("Pressure (mbar)"), "999999", ".0f", 100.0),
        "etr": _fmt(col("ETR (W/m^2)"), "9999", ".0f"),
        "etrn": _fmt(col("ETRN (W/m^2)"), "9999", ".0f"),
        "ghi": _fmt(col("GHI (W/m^2)"), "9999", ".0f"),
        "dni": _fmt(col("DNI (W/m^2)"), "9999", ".0f"),
        "dhi": _fmt(col("DHI (W/m^2)"), "9999", ".0f"),
        "ghi_lux": _fmt(col("GH illum (lx)"), "999999", ".0f"),
        "dni_lux": _fmt(col("DN illum (lx)"), "999999", ".0f"),
        "dhi_lux": _fmt(col("DH illum (lx)"), "999999", ".0f"),
        "zen_lum": _fmt(col("Zenith lum (cd/m^2)"), "9999", ".0f"),
        "wdir": _fmt(col("Wdir (degrees)"), "999", ".0f"),
        "wspd": _fmt(col("Wspd (m/s)"), "999", ".1f"),
        "tot": _fmt(col("TotCld (tenths)"), "99", ".0f"),
        "opq": _fmt(col("OpqCld (tenths)"), "99", ".0f"),
        "vis": _fmt(col("Hvis (m)"), "9999", ".1f", 0.001),  # m -> km
        "ceil": _fmt(col("CeilHgt (m)"), "99999", ".0f"),
        "pwat": _fmt(col("Pwat (cm)"), "999", ".0f", 10.0),  # cm -> mm
    }
    header = [
        f"LOCATION,Harbourside Depot,NC,USA,NREL TMY3 723170 via pvlib,{meta['USAF']},"
        f"{meta['latitude']:.3f},{meta['longitude']:.3f},{meta['TZ']:.1f},{meta['altitude']:.1f}",
        "DESIGN CONDITIONS,0",
        "TYPICAL/EXTREME PERIODS,0",
        "GROUND TEMPERATURES,0",
        "HOLIDAYS/DAYLIGHT SAVING,No,0,0,0",
        "COMMENTS 1,solair demo weather: fictional site name; hourly data = NREL TMY3 723170 "
        "(Greensboro NC) as shipped with pvlib 0.16.1",
        "COMMENTS 2,no horizontal infrared in the source (9999): sky temperature from opaque "
        "sky cover",
        "DATA PERIODS,1,1,Data,Sunday, 1/ 1,12/31",
    ]
    rows = []
    for i in range(len(df)):
        f = {k: v[i] for k, v in fields.items()}
        row = [date.iloc[i][2], str(int(date.iloc[i][0])), str(int(date.iloc[i][1])),
               str(int(hour[i])), "60", "?9?9?9?9E0?9?9?9?9?9?9?9?9?9?9?9?9?9?9*9*9?9",
               f["temp_air"], f["temp_dew"], f["rh"], f["pressure"], f["etr"], f["etrn"],
               "9999", f["ghi"], f["dni"], f["dhi"], f["ghi_lux"], f["dni_lux"], f["dhi_lux"],
               f["zen_lum"], f["wdir"], f["wspd"], f["tot"], f["opq"], f["vis"], f["ceil"],
               "9", "999999999", f["pwat"], "0.999", "999", "99", "999", "999", "99"]
        assert len(row) == 35
        rows.append(",".join(row))
    OUT.write_text("\n".join(header + rows) + "\n", encoding="utf-8")
    return OUT


if __name__ == "__main__":
    print(main())
