"""Benchmark: solair's engine against a hand-written pvlib/pandas loop doing the same work.

One climate-year (Greensboro NC TMY3, shipped with pvlib) x 17 orientations (tilts 0, 30 and
90 at 8 azimuths, the horizontal once), Perez transposition, cloud-aware sky (the file's
opaque sky cover with Clark & Allen), ISO 6946 convection, the "air" linearisation; the
weather file is read inside each timed run. Both sides run in this process, in the same
session, alternately; the script prints both medians and the ratio, and the largest
difference of the sol-air temperatures.

The loop is what a careful pvlib user would write by hand: ``pvlib.iotools.read_tmy3``,
``pvlib.solarposition.get_solarposition`` (pvlib's default method, NREL SPA ``nrel_numpy``)
at mid-hour and at the hour boundaries, the sunrise/sunset hours re-evaluated at the middle
of their sunlit part (crossing found by linear interpolation of the elevation, refined by
three false-position steps), ``Location.get_clearsky`` (Ineichen) for the irradiance cloud estimate,
then one ``get_total_irradiance`` call per surface on pandas Series, with solair's own sky,
convection, view-factor and balance functions.

Run: /work/venv/bin/python benchmarks/bench_engine.py [--repeat N]
"""

from __future__ import annotations

import argparse
import os
import statistics
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pvlib

import solair
from solair import balance, convection, longwave, sky
from solair.surfaces import Surface

PATH = Path(pvlib.__path__[0]) / "data" / "723170TYA.CSV"
AZIMUTHS = (0.0, 45.0, 90.0, 135.0, 180.0, 225.0, 270.0, 315.0)
SURFACES = [Surface("h", 0.0, 180.0)] + [
    Surface(f"t{int(t)}_a{int(a)}", t, a) for t in (30.0, 90.0) for a in AZIMUTHS
]


def engine_read():
    return solair.read_weather(PATH)


def engine_compute(weather) -> np.ndarray:
    ds = solair.compute(weather, SURFACES, sky="auto", transposition="perez")
    return ds["temp_sol_air"].values


def engine_run() -> np.ndarray:
    return engine_compute(engine_read())


def _position(times: pd.DatetimeIndex, lat, lon, alt, p, t) -> pd.DataFrame:
    return pvlib.solarposition.get_solarposition(times, lat, lon, alt, pressure=p, temperature=t)


def loop_read():
    return pvlib.iotools.read_tmy3(PATH, coerce_year=2001, map_variables=True)


def loop_run() -> np.ndarray:
    return loop_compute(loop_read())


def loop_compute(read) -> np.ndarray:
    df, meta = read
    df = df.copy()
    # pvlib labels the year's last hour (31 Dec 24:00) 1 Jan 00:00 of the coerced year: move it
    # to the end of the year, as hour-ending labels want
    idx = df.index.to_series()
    idx.iloc[-1] = idx.iloc[-1] + pd.DateOffset(years=1)
    df.index = pd.DatetimeIndex(idx)
    lat, lon, alt = meta["latitude"], meta["longitude"], meta["altitude"]
    pressure = df["pressure"] * 100.0  # mbar -> Pa
    p_mean, t_mean = float(pressure.mean()), float(df["temp_air"].mean())
    end = df.index
    mid = end - pd.Timedelta(minutes=30)
    sp = _position(mid, lat, lon, alt, p_mean, t_mean)
    edges = _position(end.insert(0, end[0] - pd.Timedelta(hours=1)), lat, lon, alt, p_mean,
                      t_mean)
    el = (90.0 - edges["apparent_zenith"]).to_numpy()
    e0, e1 = el[:-1], el[1:]
    cross = (e0 > 0) != (e1 > 0)
    # crossing instant: linear interpolation of the elevation, then false-position steps
    start_s = (end - pd.Timedelta(hours=1)).as_unit("ns").asi8[cross] / 1e9
    ta_, fa = start_s, e0[cross]
    tb_, fb = start_s + 3600.0, e1[cross]
    for _ in range(3):
        tc = ta_ - fa * (tb_ - ta_) / (fb - fa)
        ec = (90.0 - _position(pd.to_datetime(tc, unit="s", utc=True), lat, lon, alt, p_mean,
                               t_mean)["apparent_zenith"]).to_numpy()
        lo_side = (ec > 0) == (fa > 0)
        ta_, fa = np.where(lo_side, tc, ta_), np.where(lo_side, ec, fa)
        tb_, fb = np.where(lo_side, tb_, tc), np.where(lo_side, fb, ec)
    tc = ta_ - fa * (tb_ - ta_) / (fb - fa)
    rising = e1[cross] > 0
    seg0 = np.where(rising, tc, start_s)
    seg1 = np.where(rising, start_s + 3600.0, tc)
    t_eval = mid.as_unit("ns").asi8.astype(float) / 1e9
    t_eval[cross] = 0.5 * (seg0 + seg1)
    sunlit = (sp["apparent_zenith"].to_numpy() < 90).astype(float)
    sunlit[cross] = (seg1 - seg0) / 3600.0
    fix = _position(pd.to_datetime(t_eval[cross], unit="s", utc=True), lat, lon, alt, p_mean,
                    t_mean)
    zen = sp["apparent_zenith"].to_numpy().copy()
    azi = sp["azimuth"].to_numpy().copy()
    zen[cross] = fix["apparent_zenith"].to_numpy()
    azi[cross] = fix["azimuth"].to_numpy()
    t_geom = pd.to_datetime(t_eval, unit="s", utc=True)
    zen_s = pd.Series(zen, index=end)
    azi_s = pd.Series(azi, index=end)

    dni_extra = pd.Series(pvlib.irradiance.get_extra_radiation(t_geom).to_numpy(), index=end)
    airmass = pvlib.atmosphere.get_relative_airmass(zen_s)
    loc = pvlib.location.Location(lat, lon, altitude=alt)
    am_abs = pvlib.atmosphere.get_absolute_airmass(airmass.to_numpy(), p_mean)
    cs = loc.get_clearsky(t_geom, solar_position=pd.DataFrame(
        {"apparent_zenith": zen, "apparent_elevation": 90.0 - zen}, index=t_geom),
        dni_extra=dni_extra.to_numpy(), airmass_absolute=am_abs)
    ghi_clear = cs["ghi"].fillna(0.0).to_numpy() * sunlit
    cloud = sky.cloud_fraction_from_irradiance(df["ghi"].to_numpy(), ghi_clear, solar_zenith=zen)
    temp_sky, _ = sky.get_sky_temperature(
        df["temp_air"].to_numpy(), df["temp_dew"].to_numpy(), pressure.to_numpy(), model="auto",
        opaque_sky_cover=df["OpqCld (tenths)"].to_numpy(dtype=float), cloud_fraction=cloud,
        solar_hour=None,
    )
    dni = df["dni"].where(zen_s < 90, 0.0)
    out = []
    for s in SURFACES:
        irr = pvlib.irradiance.get_total_irradiance(
            s.surface_tilt, s.surface_azimuth, zen_s, azi_s, dni, df["ghi"], df["dhi"],
            dni_extra=dni_extra, airmass=airmass, albedo=0.2, model="perez",
        )
        iso = df["dhi"] * (1 + np.cos(np.radians(s.surface_tilt))) / 2
        sky_d = irr["poa_sky_diffuse"].where(irr["poa_sky_diffuse"].notna(), iso)
        sky_d = sky_d.where(~((zen_s >= 90) & (df["dhi"] > 0)), iso)
        poa = irr["poa_direct"].fillna(0.0) + sky_d + irr["poa_ground_diffuse"]
        h_conv = convection.get_convection_coefficient(df["wind_speed"].to_numpy())
        vs, va, vg = longwave.view_factors(s.surface_tilt)
        res = balance.temp_sol_air(
            df["temp_air"].to_numpy(), poa.to_numpy(), s.absorptance, s.emissivity, h_conv,
            temp_sky, view_sky=vs, view_air=va, view_ground=vg,
        )
        out.append(res["temp_sol_air"])
    return np.stack(out, axis=-1)


def _median_ms(fn, arg, repeat):
    out = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn(arg) if arg is not None else fn()
        out.append(time.perf_counter() - t0)
    return statistics.median(out) * 1e3


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=15)
    args = ap.parse_args()
    a, b = engine_run(), loop_run()  # warm-up: imports, caches, first-call costs
    diff = np.abs(a - b)
    times = {"engine": [], "loop": []}
    for _ in range(args.repeat):  # alternate, so both see the same machine load
        for name, fn in (("engine", engine_run), ("loop", loop_run)):
            t0 = time.perf_counter()
            fn()
            times[name].append(time.perf_counter() - t0)
    med = {k: statistics.median(v) * 1e3 for k, v in times.items()}
    w, raw = engine_read(), loop_read()
    stage = {
        "engine read (solair.read_weather)": _median_ms(engine_read, None, args.repeat),
        "engine compute (solair.compute)": _median_ms(engine_compute, w, args.repeat),
        "loop read (pvlib.iotools.read_tmy3)": _median_ms(loop_read, None, args.repeat),
        "loop compute": _median_ms(loop_compute, raw, args.repeat),
    }
    print(f"Greensboro TMY3, {a.shape[0]} h x {a.shape[1]} surfaces, Perez, cloud-aware sky, "
          f"file read included, {args.repeat} runs each, {os.cpu_count()} CPUs, "
          f"load average {os.getloadavg()[0]:.1f}")
    print(f"engine median: {med['engine']:7.1f} ms")
    print(f"loop median:   {med['loop']:7.1f} ms")
    print(f"ratio loop/engine: {med['loop'] / med['engine']:.2f}x  (target >= 3.5x)")
    for k, v in stage.items():
        print(f"  {k:40s} {v:7.1f} ms")
    print(f"ratio without the file read: "
          f"{stage['loop compute'] / stage['engine compute (solair.compute)']:.2f}x")
    print(f"max |T_sol_air engine - loop|: {diff.max():.4f} K  (target <= 0.05 K); "
          f"hours > 0.05 K: {int((diff.max(axis=1) > 0.05).sum())}")


if __name__ == "__main__":
    main()
