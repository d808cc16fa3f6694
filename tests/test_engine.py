"""Engine orchestration (solair.engine): structure, provenance, wiring and real-data checks."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from hypothesis import given
from hypothesis import strategies as st
from numpy.testing import assert_allclose

import solair
from solair import engine
from solair.errors import ConfigurationError
from solair.surfaces import Surface, default_surfaces, parse_surface


@pytest.fixture(scope="module")
def greensboro_result(greensboro_weather):
    return solair.compute(greensboro_weather)


def _write_epw(weather, path):
    """Write a canonical Weather as an EPW (EnergyPlus weather format, fields as documented
    in the EnergyPlus Auxiliary Programs guide) with the same hourly values."""
    s, df = weather.site, weather.data
    start = df.index - pd.Timedelta(hours=1)  # EPW hour h covers (h-1, h]
    cover = {c: df[c].to_numpy() if c in df else np.full(len(df), np.nan)
             for c in ("total_sky_cover", "opaque_sky_cover")}
    lines = [
        f"LOCATION,TestSite,-,-,converted,{0:06d},{s.latitude},{s.longitude},"
        f"{s.utc_offset},{s.altitude}",
        "DESIGN CONDITIONS,0", "TYPICAL/EXTREME PERIODS,0", "GROUND TEMPERATURES,0",
        "HOLIDAYS/DAYLIGHT SAVING,No,0,0,0", "COMMENTS 1,converted from TMY3 for a test",
        "COMMENTS 2,", "DATA PERIODS,1,1,Data,Monday, 1/ 1,12/31",
    ]
    for k, (t, row) in enumerate(zip(start, df.itertuples())):
        tsc = 99 if np.isnan(cover["total_sky_cover"][k]) else int(cover["total_sky_cover"][k])
        osc = 99 if np.isnan(cover["opaque_sky_cover"][k]) else int(cover["opaque_sky_cover"][k])
        fields = [
            2001, t.month, t.day, t.hour + 1, 60, "?9?9?9?9E0?9?9?9?9?9?9?9?9?9?9?9*9*9?9?9?9",
            f"{row.temp_air:.1f}", f"{row.temp_dew:.1f}", f"{row.relative_humidity:.0f}",
            f"{row.pressure:.0f}", 9999, 9999, 9999,
            f"{row.ghi:.0f}", f"{row.dni:.0f}", f"{row.dhi:.0f}", 999999, 999999, 999999, 9999,
            f"{row.wind_direction:.0f}", f"{row.wind_speed:.1f}", tsc, osc, 9999, 99999, 9,
            999999999, 999, 0.999, 999, 99, 999, 999, 99,
        ]
        lines.append(",".join(str(x) for x in fields))
    path.write_text("\n".join(lines) + "\n")
    return path


def test_result_structure_units_and_provenance(greensboro_result):
    ds = greensboro_result
    assert ds["temp_sol_air"].dims == ("time", "surface")
    assert ds.sizes == {"time": 8760, "surface": 9}
    assert list(ds["surface"].values) == ["roof", "N", "NE", "E", "SE", "S", "SW", "W", "NW"]
    for c in ("surface", "surface_tilt", "surface_azimuth", "absorptance", "emissivity"):
        assert c in ds.coords
    for v in ("temp_air", "temp_sky", "sky_source", "poa_global", "h_conv", "h_rad", "r_se",
              "temp_sol_air"):
        assert "units" in ds[v].attrs and "long_name" in ds[v].attrs, v
    # CF standard names where CF has one; none for the sol-air temperature
    assert ds["temp_air"].attrs["standard_name"] == "air_temperature"
    assert "standard_name" not in ds["temp_sol_air"].attrs
    assert ds["temp_sol_air"].attrs["units"] == "degC"
    assert set(ds["sky_source"].attrs["flag_values"]) == {0, 1, 2, 3}
    assert "file_infrared" in ds["sky_source"].attrs["flag_meanings"]
    a = ds.attrs
    for key in ("solair_version", "pvlib_version", "sky_model", "transposition_model",
                "convection_model", "weather_file", "site_name", "latitude", "longitude",
                "altitude", "utc_offset_hours", "time_convention", "perez_fallback_hours",
                "sunrise_sunset_hours", "caution"):
        assert key in a, key
    assert sum(a[f"sky_source_hours_{m}"] for m in solair.sky.SKY_SOURCES.values()) == 8760
    # time: naive UTC, hour-ending: first label 2001-01-01 01:00 local (UTC-5) = 06:00 UTC
    assert ds["time"].values[0] == np.datetime64("2001-01-01T06:00")
    assert a["utc_offset_hours"] == -5.0
    assert_allclose(ds["r_se"], 1.0 / ds["h_e"], rtol=1e-12)
    for v in ds.data_vars:
        if ds[v].dtype.kind == "f":
            assert np.all(np.isfinite(ds[v].values)), v


def test_common_practice_clear_humid_nights_greensboro(greensboro_weather, greensboro_result):
    # Common practice (no source): on clear (opaque cover <= 1/10), humid (RH >= 85 %) nights
    # the sky lies 10-15 K below the air. Real data: Greensboro TMY3 (NREL, via pvlib).
    df, ds = greensboro_weather.data, greensboro_result
    night = ds["solar_zenith"].values > 90.0
    m = (df["opaque_sky_cover"].to_numpy() <= 1) & (df["relative_humidity"].to_numpy() >= 85)
    m &= night
    assert m.sum() > 100
    depression = (ds["temp_air"] - ds["temp_sky"]).values[m]
    assert 10.0 <= np.median(depression) <= 15.0


def test_same_weather_as_epw_and_tmy3_gives_identical_results(greensboro_weather, tmp_path):
    # The same hourly values read from a TMY3 and from an EPW must give the same results.
    epw = _write_epw(greensboro_weather, tmp_path / "greensboro_copy.epw")
    w2 = solair.read_weather(epw)
    surfaces = [Surface("roof", 0, 180), Surface("S", 90, 180), Surface("tilt", 30, 135)]
    a = solair.compute(greensboro_weather, surfaces)
    b = solair.compute(w2, surfaces)
    assert b.attrs["weather_format"] == "epw" and a.attrs["weather_format"] == "tmy3"
    xr.testing.assert_allclose(a.reset_coords(drop=True)[list(a.data_vars)],
                               b.reset_coords(drop=True)[list(b.data_vars)], rtol=1e-9)


def test_unknown_model_names_raise_before_reading(tmp_path):
    missing = tmp_path / "does_not_exist.epw"
    cases = [
        (dict(sky="nope"), r"sky model 'nope' is not one of \[.*'auto'.*'clark_allen'"),
        (dict(transposition="nope"), r"transposition model 'nope' is not one of \[.*'perez'"),
        (dict(convection="nope"), r"convection model 'nope' is not one of \[.*'iso6946'"),
        (dict(linearisation="nope"), r"linearisation 'nope' is not one of \['air', 'surface'\]"),
        (dict(terrain="nope"), r"terrain 'nope' is not one of"),
    ]
    for kwargs, pattern in cases:
        with pytest.raises(ConfigurationError, match=pattern):
            solair.compute(missing, **kwargs)


def test_bad_albedo_and_surfaces_raise():
    with pytest.raises(ConfigurationError, match=r"albedo 1.5 is outside \[0, 1\]"):
        solair.exterior_forcing("unused.epw", albedo=1.5)
    with pytest.raises(ConfigurationError, match="given more than once"):
        solair.compute("unused.epw", [Surface("a", 0, 0), Surface("a", 90, 0)])


def test_sky_spread_brackets_the_default_sky(greensboro_weather):
    # The default sky at Greensboro (opaque cover in the file) is Clark & Allen with the
    # cover correction, itself one of the correlations of the spread: it must lie inside.
    surfaces = [Surface("roof", 0, 180), Surface("N", 90, 0)]
    ds = solair.compute(greensboro_weather, surfaces, sky_spread=True)
    assert np.all(ds["temp_sky_min"] <= ds["temp_sky"] + 1e-9)
    assert np.all(ds["temp_sky"] <= ds["temp_sky_max"] + 1e-9)
    assert np.all(ds["temp_sol_air_min"] <= ds["temp_sol_air"] + 1e-9)
    assert np.all(ds["temp_sol_air"] <= ds["temp_sol_air_max"] + 1e-9)
    assert float((ds["temp_sky_max"] - ds["temp_sky_min"]).mean()) > 1.0
    assert ds["temp_sol_air_min"].dims == ("time", "surface")


def test_sol_air_broadcasts_a_finish_dimension(greensboro_weather):
    surfaces = [Surface("roof", 0, 180, 0.3, 0.9), Surface("W", 90, 270, 0.3, 0.9)]
    forcing = solair.exterior_forcing(greensboro_weather, surfaces)
    alpha = xr.DataArray([0.2, 0.5, 0.9], dims="finish", coords={"finish": ["w", "g", "b"]})
    res = engine.sol_air(forcing, alpha, 0.9)
    assert res["temp_sol_air"].dims == ("time", "surface", "finish")
    ref = engine.sol_air(forcing, 0.5, 0.9)
    assert_allclose(res["temp_sol_air"].sel(finish="g"), ref["temp_sol_air"], rtol=1e-12)
    # darker finish, hotter by day; same by night
    day = forcing["poa_global"].sel(surface="roof").values > 100
    t = res["temp_sol_air"].sel(surface="roof").values
    assert np.all(t[day, 2] > t[day, 0])


def test_alpha_zero_with_sky_at_air_temperature_gives_air_temperature(greensboro_weather):
    # Limit of the sol-air definition: no solar absorption and long-wave surroundings at
    # the air temperature leave T_eq = T_a (through the engine's wiring).
    f = solair.exterior_forcing(greensboro_weather, default_surfaces())
    f = f.assign(temp_sky=f["temp_air"], temp_ground=f["temp_air"])
    res = engine.sol_air(f, 0.0, 0.9)
    assert_allclose(res["temp_sol_air"], f["temp_air"].broadcast_like(res["temp_sol_air"]),
                    atol=1e-9)


def test_clear_night_roof_below_air_and_sunny_roof_above(greensboro_result):
    ds = greensboro_result
    roof = ds.sel(surface="roof")
    night = ds["solar_zenith"].values > 90
    assert np.median((roof["temp_sol_air"] - roof["temp_air"]).values[night]) < 0
    sunny = roof["poa_global"].values > 600
    assert np.all((roof["temp_sol_air"] - roof["temp_air"]).values[sunny] > 5)


def test_conventional_r_se_is_0_04(greensboro_weather):
    # ISO 6946:2017, 5.x / Annex C: the conventional external surface resistance 0.04 m2K/W.
    ds = solair.compute(greensboro_weather, [Surface("S", 90, 180)],
                        convection="iso6946_conventional")
    assert_allclose(ds["r_se"], 0.04, rtol=1e-12)


def test_albedo_override_adds_ground_reflection(greensboro_weather):
    # Isotropic ground reflection (Liu & Jordan 1963, as pvlib.irradiance.get_ground_diffuse):
    # G_ground = GHI * albedo * (1 - cos β) / 2, so +0.2 albedo adds 0.1 GHI on a wall.
    s = [Surface("N", 90, 0)]
    a = solair.exterior_forcing(greensboro_weather, s, albedo=0.2)
    b = solair.exterior_forcing(greensboro_weather, s, albedo=0.4)
    ghi = greensboro_weather.data["ghi"].to_numpy()
    assert_allclose((b["poa_global"] - a["poa_global"]).values[:, 0], 0.1 * ghi, atol=1e-9)
    assert "user value" in b.attrs["albedo_source"]


def test_file_infrared_is_used_for_the_era_epw(era_weather):
    # The ERA-derived EPW carries real horizontal infrared: the auto sky uses it.
    ds = solair.compute(era_weather, [Surface("roof", 0, 180)])
    assert ds.attrs["sky_source_hours_file_infrared"] > 8000
    ir = era_weather.data["ghi_infrared"].to_numpy()
    use = ds["sky_source"].values == 0
    sigma = 5.670374419e-8
    assert_allclose(ds["temp_sky"].values[use], (ir[use] / sigma) ** 0.25 - 273.15, atol=1e-9)


def test_assert_finite_names_the_variable():
    ds = xr.Dataset({"temp_sol_air": (("time",), np.array([1.0, np.nan]))},
                    coords={"time": np.array(["2001-01-01T01", "2001-01-01T02"],
                                             dtype="datetime64[ns]")})
    with pytest.raises(ConfigurationError, match="temp_sol_air is not finite in 1 values"):
        engine._assert_finite(ds)


def test_every_model_choice_runs_and_stays_finite(greensboro_weather, era_weather):
    # Smoke test of the wiring: every sky, transposition, convection and linearisation
    # choice gives finite results on real data (Greensboro TMY3; ERA EPW for the infrared).
    s = [Surface("roof", 0, 180, 0.7, 0.9), Surface("E", 90, 90, 0.7, 0.9)]
    runs = [dict(sky=m) for m in sorted(engine.sky_models()) if m != "infrared"]
    runs += [dict(transposition=m) for m in ("isotropic", "haydavies")]
    runs += [dict(convection=m) for m in ("iso6946_conventional", "yazdanian_klems", "walton")]
    runs += [dict(linearisation="surface"), dict(sky_air_split=True, temp_ground=5.0),
             dict(terrain="city", height=6.0)]
    for kw in runs:
        ds = solair.compute(greensboro_weather, s, **kw)
        assert np.isfinite(ds["temp_sol_air"].values).all(), kw
    ds = solair.compute(era_weather, s, sky="infrared")
    assert ds.attrs["sky_source_hours_file_infrared"] > 8000
    with pytest.raises(ConfigurationError, match="infrared"):
        solair.compute(greensboro_weather, s, sky="infrared")


def test_surface_linearisation_is_the_adiabatic_surface_temperature(greensboro_weather):
    # "surface" mode: T_eq is the massless adiabatic surface temperature, i.e. the surface
    # balance residual vanishes there (ASTM E1980-11 surface balance, solved to 1e-6 K).
    from solair import balance

    f = solair.exterior_forcing(greensboro_weather, [Surface("roof", 0, 180)])
    res = engine.sol_air(f, 0.9, 0.9, linearisation="surface")
    t = res["temp_sol_air"].values[:, 0]
    r = balance.surface_balance_residual(
        t, f["temp_air"].values, f["poa_global"].values[:, 0], 0.9, 0.9,
        f["h_conv"].values[:, 0], f["temp_sky"].values, temp_ground=f["temp_air"].values,
        view_sky=1.0, view_air=0.0, view_ground=0.0,
    )
    assert np.abs(r).max() < 1e-3  # W/m2, i.e. well inside 1e-6 K x h_e


# --- surfaces (solair.surfaces) ---------------------------------------------------------


def test_default_surfaces_are_the_roof_and_eight_facades():
    s = default_surfaces()
    assert [x.name for x in s] == ["roof", "N", "NE", "E", "SE", "S", "SW", "W", "NW"]
    assert s[0].surface_tilt == 0.0
    assert [x.surface_azimuth for x in s[1:]] == [0, 45, 90, 135, 180, 225, 270, 315]
    assert all(x.surface_tilt == 90.0 for x in s[1:])


@given(tilt=st.floats(0, 180), azimuth=st.floats(0, 360), a=st.floats(0, 1), e=st.floats(0, 1))
def test_valid_surfaces_round_trip_through_the_cli_form(tilt, azimuth, a, e):
    s = parse_surface(f"wall,{tilt!r},{azimuth!r}", a, e)
    assert (s.surface_tilt, s.surface_azimuth, s.absorptance, s.emissivity) == (tilt, azimuth, a, e)


@pytest.mark.parametrize(
    "kwargs, field",
    [(dict(surface_tilt=-1), "surface_tilt"), (dict(surface_tilt=181), "surface_tilt"),
     (dict(surface_azimuth=361), "surface_azimuth"), (dict(absorptance=1.2), "absorptance"),
     (dict(emissivity=-0.1), "emissivity"), (dict(surface_tilt="steep"), "surface_tilt"),
     (dict(absorptance=float("nan")), "absorptance")],
)
def test_invalid_surface_names_the_field(kwargs, field):
    base = dict(name="x", surface_tilt=0.0, surface_azimuth=0.0)
    with pytest.raises(ConfigurationError, match=f"surface 'x': {field} = "):
        Surface(**{**base, **kwargs})


def test_parse_surface_errors_and_compass_points():
    assert parse_surface("w,90,SW").surface_azimuth == 225.0
    with pytest.raises(ConfigurationError, match="NAME,TILT,AZIMUTH"):
        parse_surface("w,90")
    with pytest.raises(ConfigurationError, match="non-empty"):
        parse_surface(" ,90,0")


def test_clear_sky_estimate_skipped_when_no_hour_needs_it(greensboro_weather, monkeypatch):
    # Greensboro TMY3 has the opaque sky cover in every hour, so no hour's sky temperature
    # comes from the irradiance cloud estimate (Crawford & Duchon 1999, against the Ineichen
    # clear sky): the engine skips the clear-sky GHI. Forcing the estimate to be computed
    # must change nothing.
    s = [Surface("roof", 0, 180)]
    calls = []
    real = engine._clear_sky_ghi
    monkeypatch.setattr(engine, "_clear_sky_ghi", lambda *a: calls.append(1) or real(*a))
    for kw in (dict(), dict(sky="brunt", sky_spread=True)):
        skipped = engine.exterior_forcing(greensboro_weather, s, **kw)
        assert not calls
        with monkeypatch.context() as m:
            m.setattr(engine._sky, "cloud_fraction_needed", lambda *a, **k: True)
            computed = engine.exterior_forcing(greensboro_weather, s, **kw)
        assert calls
        calls.clear()
        for v in ("temp_sky", "sky_source", *(("temp_sky_models",) if kw else ())):
            np.testing.assert_array_equal(skipped[v].values, computed[v].values)
        assert skipped.attrs == computed.attrs
    # without the sky cover the estimate is needed and used
    w = type(greensboro_weather)(greensboro_weather.site,
                                 greensboro_weather.data.drop(columns=["opaque_sky_cover"]))
    ds = engine.exterior_forcing(w, s)
    assert calls and ds.attrs["sky_source_hours_irradiance_cloud_estimate"] == 8760


@pytest.mark.parametrize("lin", ["air", "surface"])
def test_sol_air_variables_subset_equals_full_call(greensboro_weather, lin):
    """``variables`` gives a Dataset of those variables only, identical to the full call's."""
    surfaces = [Surface("roof", 0, 180), Surface("W", 90, 270)]
    forcing = solair.exterior_forcing(greensboro_weather, surfaces)
    alpha = xr.DataArray([0.2, 0.9], dims="finish", coords={"finish": ["w", "b"]})
    full = engine.sol_air(forcing, alpha, 0.9, linearisation=lin)
    part = engine.sol_air(forcing, alpha, 0.9, linearisation=lin,
                          variables=["h_e", "temp_sol_air", "h_conv"])
    assert list(part.data_vars) == ["temp_sol_air", "h_conv", "h_e"]
    xr.testing.assert_identical(part, full[["temp_sol_air", "h_conv", "h_e"]])
    only = engine.sol_air(forcing, alpha, 0.9, linearisation=lin, variables="r_se")
    assert_allclose(only["r_se"].values, full["r_se"].values, rtol=0, atol=0)


def test_sol_air_unknown_variable_lists_the_allowed_ones(greensboro_weather):
    forcing = solair.exterior_forcing(greensboro_weather, [Surface("roof", 0, 180)])
    with pytest.raises(ConfigurationError,
                       match=r"\['h_rad_sky'\].*allowed.*'temp_sol_air', 'h_conv'"):
        engine.sol_air(forcing, 0.5, 0.9, variables=("h_e", "h_rad_sky"))
