"""Finish comparison on the real Greensboro NC TMY3 (NREL, shipped with pvlib).

Physical orderings a correct model must show on real weather: a dark finish runs
hotter than a white one; a low-emissivity metal spends fewer hours below the
dew point than a high-emissivity render of the same absorptance (less long-wave
loss to the night sky: Krus, Fitz & Holm, coatings with lowered long-wave
emission; Zillig et al. 2003); the latent heat of dew reduces night undercooling
(latent heat release, ASHRAE HoF 2017 ch. 6); a heavier construction has a
smaller daily surface temperature range (thermal mass, ISO 13786:2017).
Plus the result contract of docs/architecture.md and the command line.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from click.testing import CliRunner
from numpy.testing import assert_allclose

import solair
from solair.cli import cli
from solair.compare import CAUTION, compare
from solair.finishes import FINISHES, Finish, get_finish

ROOF = solair.Surface("roof", 0.0, 180.0)
NORTH = solair.Surface("north", 90.0, 0.0)
# a high-emissivity render with the absorptance of bare galvanised steel
RENDER_SAME_ALPHA = Finish("render_same_alpha", FINISHES["galvanised_steel"].absorptance, 0.90,
                           source="test: alpha of galvanised_steel, render emissivity")


@pytest.fixture(scope="module")
def result(greensboro_weather):
    fins = ["black_membrane", "white_single_ply_membrane", FINISHES["galvanised_steel"],
            RENDER_SAME_ALPHA, "vegetated_roof"]
    return compare(greensboro_weather, [ROOF, NORTH], fins, "metal_deck_roof")


def _row(df, surface, finish):
    return df[(df.surface == surface) & (df.finish == finish)].iloc[0]


def test_dark_finish_peaks_above_white(result):
    _, df = result
    for s in ("roof", "north"):
        assert (_row(df, s, "black_membrane").temp_surface_max
                > _row(df, s, "white_single_ply_membrane").temp_surface_max + 5)
    roof_black = _row(df, "roof", "black_membrane")
    assert roof_black.temp_surface_max > 60 and roof_black.hours_above_threshold > 0
    assert roof_black.heat_gain > _row(df, "roof", "white_single_ply_membrane").heat_gain


def test_low_emissivity_metal_fewer_hours_below_dew_point(result):
    _, df = result
    for s in ("roof", "north"):
        metal = _row(df, s, "galvanised_steel")
        render = _row(df, s, "render_same_alpha")
        assert metal.dew_hours + metal.frost_hours < render.dew_hours + render.frost_hours
        assert metal.condensate_total < render.condensate_total


def test_latent_heat_of_dew_reduces_undercooling(greensboro_weather):
    kw = {"response": "massless"}
    fins = ["white_render", "dark_render"]
    _, with_dew = compare(greensboro_weather, [ROOF, NORTH], fins, dew=True, **kw)
    _, without = compare(greensboro_weather, [ROOF, NORTH], fins, dew=False, **kw)
    assert np.all(with_dew.undercooling_degree_hours.values
                  < without.undercooling_degree_hours.values)
    assert np.all(with_dew.undercooling_hours.values <= without.undercooling_hours.values)
    assert np.all(with_dew.condensate_total > 1.0) and np.all(without.condensate_total == 0)


def test_heavier_construction_smaller_daily_range(greensboro_weather):
    _, light = compare(greensboro_weather, [ROOF], ["grey_concrete"], "metal_deck_roof")
    _, heavy = compare(greensboro_weather, [ROOF], ["grey_concrete"], "heavy_concrete_roof")
    assert heavy.daily_range_max.iloc[0] < light.daily_range_max.iloc[0] - 5
    assert heavy.temp_surface_max.iloc[0] < light.temp_surface_max.iloc[0]


def test_result_contract(result):
    ds, df = result
    assert ds["temp_surface"].dims == ("time", "surface", "finish")
    assert ds.sizes == {"time": 8760, "surface": 2, "finish": 5}
    for name in ("temp_surface", "heat_flux", "temp_sol_air", "condensate"):
        assert ds[name].attrs["units"] and ds[name].attrs["long_name"]
    assert ds["absorptance"].dims == ("finish",) and ds["emissivity"].dims == ("finish",)
    assert ds["surface_tilt"].dims == ("surface",)
    for key in ("solair_version", "pvlib_version", "weather_file", "site_name", "latitude",
                "longitude", "altitude", "utc_offset_hours", "time_convention",
                "response_model", "construction"):
        assert key in ds.attrs, key
    assert ds.attrs["caution"] == CAUTION
    assert "evapotranspiration" in ds.attrs["notes"]
    assert "evapotranspiration" in _row(df, "roof", "vegetated_roof").note
    assert _row(df, "roof", "black_membrane").note == ""
    assert len(df) == 10
    assert_allclose(df.sri[df.finish == "black_membrane"], -1.0, atol=0.1)
    assert not df.select_dtypes("number").isna().any().any()
    from solair.compare import METRIC_COLUMNS

    assert set(METRIC_COLUMNS) <= set(df.columns)
    assert np.isfinite(ds["temp_surface"].values).all()
    assert (ds["condensate"].values >= 0).all()


def test_hourly_result_variable_order(result):
    # the order the NetCDF writers store the variables in: results, coordinates, the air
    ds, _ = result
    assert list(ds.variables) == [
        "temp_surface", "heat_flux", "heat_flux_exterior", "temp_sol_air", "h_e",
        "latent_flux", "condensation", "condensate", "time", "surface", "surface_tilt",
        "surface_azimuth", "finish", "absorptance", "emissivity", "sri", "temp_air",
        "temp_dew"]
    assert list(ds.coords) == ["time", "surface", "surface_tilt", "surface_azimuth", "finish",
                               "absorptance", "emissivity", "sri"]
    assert list(ds.indexes) == ["time", "surface", "finish"]
    assert ds["finish"].attrs == {"long_name": "exterior finish"}
    assert list(ds["temp_surface"].attrs) == ["units", "long_name"]


def test_hourly_result_holds_air_and_dew_point(result, greensboro_weather):
    """temp_air and temp_dew (time only, CF standard names) are the weather file's hours.

    With them the hourly file alone gives the dew-point check: the table's dew + frost
    hours equal the hours with T_s below the stored dew point.
    """
    ds, df = result
    for name, standard in (("temp_air", "air_temperature"),
                           ("temp_dew", "dew_point_temperature")):
        assert ds[name].dims == ("time",)
        assert ds[name].attrs["units"] == "degC" and ds[name].attrs["long_name"]
        assert ds[name].attrs["standard_name"] == standard
        # Greensboro TMY3 dry-bulb and dew-point columns, as read (°C)
        assert_allclose(ds[name].values, greensboro_weather.data[name].to_numpy(), atol=1e-12)
    below = (ds["temp_surface"] < ds["temp_dew"]).sum("time")
    for surface in ("roof", "north"):
        for finish in ("black_membrane", "galvanised_steel"):
            row = _row(df, surface, finish)
            assert int(below.sel(surface=surface, finish=finish)) == row.dew_hours + \
                row.frost_hours


def test_massless_default_equals_surface_mode_sol_air(greensboro_weather):
    ds, _ = compare(greensboro_weather, [ROOF], ["black_membrane"], dew=False)
    assert ds.attrs["response_model"] == "massless"
    assert_allclose(ds["temp_surface"].values, ds["temp_sol_air"].values, atol=1e-12)


def test_steady_response_heat_flux(greensboro_weather):
    ds, df = compare(greensboro_weather, [ROOF], ["white_render"], "etics_wall",
                     response="steady", dew=False)
    r = get_finish("white_render")
    assert r.name == "white_render"
    q, ts = ds["heat_flux"].values[:, 0, 0], ds["temp_surface"].values[:, 0, 0]
    assert np.all(np.sign(q) == np.sign(ts - 20.0))
    assert_allclose(df.heat_gain.iloc[0], np.maximum(q, 0).sum() / 1000)


def test_unknown_names(greensboro_weather):
    with pytest.raises(solair.ConfigurationError, match="finish 'gold' is not one of"):
        compare(greensboro_weather, [ROOF], ["gold"])
    with pytest.raises(solair.ConfigurationError, match="construction 'igloo' is not one of"):
        compare(greensboro_weather, [ROOF], ["white_render"], "igloo")
    with pytest.raises(solair.ConfigurationError, match="response 'steady' needs a construction"):
        compare(greensboro_weather, [ROOF], ["white_render"], response="steady")


# ---------------------------------------------------------------- command line


def test_cli_compare_writes_table_and_hourly(greensboro_path, tmp_path):
    out, nc = tmp_path / "t.csv", tmp_path / "h.nc"
    res = CliRunner().invoke(cli, [
        "compare", str(greensboro_path), "--finish", "black_membrane", "--finish",
        "white_single_ply_membrane_aged", "--surface", "roof,0,180", "--response", "massless",
        "-o", str(out), "--hourly", str(nc)])
    assert res.exit_code == 0, res.output
    assert "caution: " + CAUTION in res.output
    table = pd.read_csv(out)
    assert list(table.finish) == ["black_membrane", "white_single_ply_membrane_aged"]
    assert {"sri", "temp_surface_max", "dew_hours", "heat_gain"} <= set(table.columns)
    ds = xr.open_dataset(nc, engine="h5netcdf")
    assert ds["temp_surface"].dims == ("time", "surface", "finish")
    assert ds["temp_air"].dims == ("time",) and ds["temp_dew"].dims == ("time",)
    assert ds["temp_dew"].attrs["standard_name"] == "dew_point_temperature"
    ds.close()
    # the carpet of the excess over the air is drawn from the hourly file alone
    png = tmp_path / "carpet.png"
    res = CliRunner().invoke(cli, ["plot", str(nc), "--kind", "carpet", "--minus-air",
                                   "--variable", "temp_surface", "-o", str(png)])
    assert res.exit_code == 0, res.output
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


@pytest.mark.parametrize(("args", "message"), [
    (["--finish", "gold"], "finish 'gold' is not one of"),
    (["--finish", "white_render", "--construction", "igloo"], "construction 'igloo' is not one of"),
    ([], "give at least one --finish"),
    (["--finish", "white_render", "--response", "fast"], "Invalid value for '--response'"),
])
def test_cli_errors_exit_2_with_one_line(greensboro_path, tmp_path, args, message):
    res = CliRunner().invoke(cli, ["compare", str(greensboro_path), *args, "-o",
                                   str(tmp_path / "t.csv")])
    assert res.exit_code == 2
    assert message in res.output
    assert len(res.output.strip().splitlines()) == 1
    assert not (tmp_path / "t.csv").exists()


def test_cli_bad_construction_and_finish_files(greensboro_path, tmp_path):
    cons = tmp_path / "wall.toml"
    cons.write_text('[constructions.thin]\n[[constructions.thin.layers]]\nname = "skin"\n'
                    'thickness = -0.01\nconductivity = 1.0\ndensity = 1000\n'
                    'specific_heat = 1000\n', encoding="utf-8")
    res = CliRunner().invoke(cli, ["compare", str(greensboro_path), "--finish", "white_render",
                                   "--construction", str(cons), "-o", str(tmp_path / "t.csv")])
    assert res.exit_code == 2
    assert "construction 'thin', layer 'skin': thickness = -0.01 must be > 0" in res.output
    cons.write_text(cons.read_text().replace("thickness = -0.01\nconductivity = 1.0",
                                             "thickness = 0.1\nconductivity = 0"))
    res = CliRunner().invoke(cli, ["compare", str(greensboro_path), "--finish", "white_render",
                                   "--construction", str(cons), "-o", str(tmp_path / "t.csv")])
    assert res.exit_code == 2 and "conductivity = 0 must be > 0" in res.output
    fin = tmp_path / "f.toml"
    fin.write_text("[finishes.shiny]\nabsorptance = 0.3\nemissivity = 1.5\n", encoding="utf-8")
    res = CliRunner().invoke(cli, ["compare", str(greensboro_path), "--finish", "shiny",
                                   "--finish-file", str(fin), "-o", str(tmp_path / "t.csv")])
    assert res.exit_code == 2
    assert "f.toml: finish 'shiny': emissivity = 1.5 is outside [0, 1]" in res.output


def test_nonlinear_massless_equals_engine_surface_mode(greensboro_weather):
    # two independent solutions of the same exact balance: solair.balance's surface mode
    # (via the engine) and the response module's Newton closure with exterior="nonlinear"
    fins = ["black_membrane", "galvanised_steel"]
    a, _ = compare(greensboro_weather, [ROOF, NORTH], fins, dew=False)
    b, _ = compare(greensboro_weather, [ROOF, NORTH], fins, dew=False, exterior="nonlinear")
    assert_allclose(b["temp_surface"].values, a["temp_surface"].values, atol=1e-6)


def test_hourly_indoor_temperature(greensboro_weather):
    t_in = np.where(np.arange(8760) % 24 < 8, 16.0, 22.0)
    ds, _ = compare(greensboro_weather, [ROOF], ["white_render"], "etics_wall",
                    response="steady", dew=False, temp_indoor=t_in)
    q = ds["heat_flux"].values[:, 0, 0]
    ts = ds["temp_surface"].values[:, 0, 0]
    assert np.all(np.sign(q) == np.sign(ts - t_in))
    with pytest.raises(solair.ConfigurationError, match="temp_indoor has 3 values"):
        compare(greensboro_weather, [ROOF], ["white_render"], "etics_wall", response="steady",
                temp_indoor=[1.0, 2.0, 3.0])


@pytest.mark.parametrize(("response", "construction"), [("steady", "metal_deck_roof"),
                                                        ("massless", None)])
def test_all_hours_path_equals_hourly_loop_greensboro(greensboro_weather, monkeypatch,
                                                      response, construction):
    """Regression against the stepped loop: the all-hours evaluation of the massless and
    steady responses (linear exterior, dew off) reproduces it to 1e-9 K on real weather."""
    from solair import response as resp

    surfaces = [ROOF, NORTH, solair.Surface("south_30", 30.0, 180.0),
                solair.Surface("soffit", 180.0, 0.0)]
    fins = ["black_membrane", "white_single_ply_membrane", "grey_concrete", "galvanised_steel"]
    t_in = 20.0 + 2.0 * np.sin(np.arange(8760) * 2 * np.pi / 24)
    got = {}
    for fast in (True, False):
        monkeypatch.setattr(resp, "_FAST_PATH", fast)
        got[fast] = compare(greensboro_weather, surfaces, fins, construction, response=response,
                            dew=False, temp_indoor=t_in)
    for name in ("temp_surface", "heat_flux", "heat_flux_exterior"):
        assert_allclose(got[True][0][name].values, got[False][0][name].values, rtol=0,
                        atol=1e-9)
    pd.testing.assert_frame_equal(got[True][1], got[False][1], rtol=0, atol=1e-9)


def test_all_hours_steady_is_series_resistance_and_tie_takes_heat_loss_r_si(monkeypatch):
    """Steady flux = (T_eq − T_i) / (R_se + R + R_si), ISO 6946:2017 §6.7.1 (resistances in
    series), with R_si of ISO 6946 Table 7 by the heat-flow direction; where T_eq = T_i
    exactly both candidates give q = 0 and the heat-loss R_si is used, as in the loop."""
    from solair import response as resp
    from solair.constructions import r_si

    t_eq = np.array([[35.0, 20.0], [5.0, 20.0], [20.0, -10.0]])
    h_e = np.array([[20.0, 15.0], [25.0, 8.0], [12.0, 30.0]])
    tilt = np.array([0.0, 90.0])
    out = {}
    for fast in (True, False):
        monkeypatch.setattr(resp, "_FAST_PATH", fast)
        out[fast] = resp.surface_response(t_eq, h_e, model="steady", resistance=0.5,
                                          surface_tilt=tilt, temp_indoor=20.0)
    for k in ("temp_surface", "heat_flux", "heat_flux_exterior"):
        assert_allclose(out[True][k], out[False][k], rtol=0, atol=1e-12)
    rsi = r_si(tilt[None, :], t_eq > 20.0)
    q = (t_eq - 20.0) / (1.0 / h_e + 0.5 + rsi)
    assert_allclose(out[True]["heat_flux"], q, rtol=1e-12, atol=1e-12)
    assert_allclose(out[True]["heat_flux_exterior"], q, rtol=1e-12, atol=1e-12)
    assert out[True]["heat_flux"][0, 1] == 0.0
    assert_allclose(out[True]["temp_surface"][0, 1], 20.0, atol=1e-12)


@pytest.mark.parametrize(("response", "construction"), [("steady", "metal_deck_roof"),
                                                        ("massless", None)])
def test_dew_skips_dry_hours_equal_to_hourly_loop_greensboro(greensboro_weather, monkeypatch,
                                                             response, construction):
    """Regression against the fully stepped loop: with dew on, stepping only the hours that
    hold water or come within 1 K of the dew point gives the same results on real weather."""
    from solair import response as resp

    surfaces = [ROOF, NORTH, solair.Surface("south_30", 30.0, 180.0)]
    fins = ["black_membrane", "white_single_ply_membrane", "galvanised_steel"]
    got = {}
    for fast in (True, False):
        monkeypatch.setattr(resp, "_FAST_PATH", fast)
        got[fast] = compare(greensboro_weather, surfaces, fins, construction, response=response,
                            dew=True)
    for name in ("temp_surface", "heat_flux", "heat_flux_exterior", "latent_flux",
                 "condensation", "condensate"):
        assert_allclose(got[True][0][name].values, got[False][0][name].values, rtol=0,
                        atol=1e-9)
    assert got[True][0]["condensate"].values.max() > 0.0  # dew did form
    pd.testing.assert_frame_equal(got[True][1], got[False][1], rtol=0, atol=1e-9)


@pytest.mark.parametrize("model", ["steady", "massless"])
@pytest.mark.parametrize("indoor", ["constant", "hourly", "per_column", "r_inside"])
def test_all_hours_kernel_equals_hourly_loop_random(monkeypatch, model, indoor):
    """The compiled all-hours pass against the stepped loop on random forcing (T_eq around
    and exactly at T_i, so both ISO 6946 R_si candidates and the tie occur), with the
    indoor temperature constant, hourly and per column, and non-contiguous inputs."""
    from solair import response as resp

    rng = np.random.default_rng(3)
    n = 200
    t_eq = np.swapaxes(rng.normal(20.0, 12.0, (n, 4, 3)), 1, 2)  # (n, 3, 4), not C-contiguous
    t_eq[::9, 0, :] = 20.0
    h_e = rng.uniform(4.0, 35.0, (n, 3, 4))
    tilt = np.array([0.0, 90.0, 180.0])[:, None]
    t_in = {"constant": 20.0, "hourly": 20.0 + 0.0 * np.arange(n),
            "per_column": np.full((n, 3, 4), 20.0), "r_inside": 20.0}[indoor]
    kw = {"model": model, "resistance": 0.8, "surface_tilt": tilt, "temp_indoor": t_in,
          "r_inside": 0.13 if indoor == "r_inside" else None}
    out = {}
    for fast in (True, False):
        monkeypatch.setattr(resp, "_FAST_PATH", fast)
        out[fast] = resp.surface_response(t_eq, h_e, **kw)
    for k in ("temp_surface", "heat_flux", "heat_flux_exterior"):
        assert out[True][k].shape == (n, 3, 4)
        assert_allclose(out[True][k], out[False][k], rtol=0, atol=1e-12)
    for k in ("latent_flux", "condensation", "condensate", "wet"):
        assert not out[True][k].any()


@pytest.mark.parametrize(("where", "message"), [
    ("h_nan", "h_ext holds NaN or infinite values"),
    ("h_zero", "h_ext must be > 0"),
    ("t_eq_inf", "temp_sol_air holds NaN or infinite values"),
    ("t_in_nan", "temp_indoor holds NaN or infinite values"),
])
def test_all_hours_rejects_bad_inputs(where, message):
    """The checks of the stepped path, now made inside the compiled pass."""
    from solair import response as resp

    t_eq = np.full((6, 2), 25.0)
    h_e = np.full((6, 2), 15.0)
    t_in = np.full(6, 20.0)
    {"h_nan": h_e, "h_zero": h_e, "t_eq_inf": t_eq, "t_in_nan": t_in}[where][3] = {
        "h_nan": np.nan, "h_zero": 0.0, "t_eq_inf": np.inf, "t_in_nan": np.nan}[where]
    with pytest.raises(solair.ConfigurationError, match=message):
        resp.surface_response(t_eq, h_e, model="steady", resistance=0.5, temp_indoor=t_in)


def test_all_hours_dry_outputs_keep_keys_shapes_and_zero_values():
    """Without dew the water outputs of the all-hours path are zeros of the full shape (read-only
    broadcast views of one zero, not full arrays), as the stepped loop's zero arrays."""
    from solair import response as resp

    t_eq = np.full((5, 2, 3), 30.0)
    h_e = np.full((5, 2, 3), 18.0)
    out = resp.surface_response(t_eq, h_e, model="steady", resistance=0.5, temp_indoor=20.0)
    for k, dtype in (("latent_flux", float), ("condensation", float), ("condensate", float),
                     ("wet", bool)):
        assert out[k].shape == (5, 2, 3) and out[k].dtype == dtype
        assert_allclose(out[k], np.zeros((5, 2, 3), dtype=dtype), rtol=0, atol=0)
        assert not out[k].flags.writeable
