"""Figures: the data shaping behind each plot, rendering, and the user-facing errors.

The shaping checks use hand-made inputs whose answer is known by construction
(an hour counter, constant months, a linear ramp): they test the placement and
statistics, not the physics. Rendering from real outputs (Greensboro TMY3) is at the end.
"""

from __future__ import annotations

import functools
import struct
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal

from solair import plots
from solair.cli import cli
from solair.errors import ConfigurationError
from solair.plots import shaping

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
LOCAL = pd.date_range("2001-01-01 01:00", periods=8760, freq="h")  # hour ending, 2001


def png_size(data: bytes) -> tuple[int, int]:
    """Width and height from a PNG's IHDR chunk (PNG specification, ISO/IEC 15948)."""
    assert data[:8] == PNG_SIGNATURE
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def hand_made_run(offset: float = -5.0, surfaces=("roof", "north", "south"),
                  finishes=None, spread: bool = True) -> xr.Dataset:
    """A small result following docs/architecture.md: naive UTC, utc_offset_hours attr."""
    mid = LOCAL - pd.Timedelta(minutes=30)
    doy, hour = mid.day_of_year.to_numpy(), mid.hour.to_numpy() + 0.5
    temp_air = (12 - 10 * np.cos(2 * np.pi * (doy - 15) / 365)
                - 5 * np.cos(2 * np.pi * (hour - 3) / 24))
    sun = np.clip(np.sin(np.pi * (hour - 6) / 12), 0, None) * 800
    tilt = {"roof": 0.0, "north": 90.0, "south": 90.0, "east": 90.0}
    azim = {"roof": 180.0, "north": 0.0, "south": 180.0, "east": 90.0}
    gain = {"roof": 1.0, "north": 0.3, "south": 0.8, "east": 0.6}
    surfaces = list(surfaces)
    poa = np.stack([sun * gain[s] for s in surfaces], axis=1)
    tsa = temp_air[:, None] + 0.7 * poa / 18 - 3
    deg = {"units": "degC"}
    data = {
        "temp_air": ("time", temp_air, {**deg, "long_name": "air temperature"}),
        "temp_dew": ("time", temp_air - 4, {**deg, "long_name": "dew point"}),
        "temp_sky": ("time", temp_air - 15, {**deg, "long_name": "sky temperature"}),
        "poa_global": (("time", "surface"), poa, {"units": "W m-2", "long_name": "irradiance"}),
    }
    coords = {"time": LOCAL - pd.Timedelta(hours=offset), "surface": surfaces,
              "surface_tilt": ("surface", [tilt[s] for s in surfaces]),
              "surface_azimuth": ("surface", [azim[s] for s in surfaces])}
    if finishes is None:
        data["temp_sol_air"] = (("time", "surface"), tsa, {**deg, "long_name": "sol-air"})
        coords["absorptance"] = ("surface", [0.7] * len(surfaces))
        coords["emissivity"] = ("surface", [0.9] * len(surfaces))
        if spread:
            data["temp_sky_min"] = ("time", temp_air - 18, {**deg, "long_name": "min sky"})
            data["temp_sky_max"] = ("time", temp_air - 11, {**deg, "long_name": "max sky"})
            data["temp_sol_air_min"] = (("time", "surface"), tsa - 1, {**deg, "long_name": "m"})
            data["temp_sol_air_max"] = (("time", "surface"), tsa + 1.5, {**deg, "long_name": "M"})
    else:
        alpha = np.array([a for _, a in finishes])
        ts = temp_air[:, None, None] + alpha * poa[:, :, None] / 18 - 3
        dims = ("time", "surface", "finish")
        data["temp_sol_air"] = (dims, ts, {**deg, "long_name": "sol-air"})
        data["temp_surface"] = (dims, ts - 1, {**deg, "long_name": "surface temperature"})
        data["heat_flux"] = (dims, 0.3 * (ts - 21), {"units": "W m-2", "long_name": "heat flux"})
        coords["finish"] = [n for n, _ in finishes]
        coords["absorptance"] = ("finish", alpha)
        coords["emissivity"] = ("finish", [0.9] * len(finishes))
    return xr.Dataset(data, coords=coords,
                      attrs={"site_name": "Test Harbour", "utc_offset_hours": offset,
                             "latitude": 36.1, "longitude": -79.9, "altitude": 270.0,
                             "sky_model": "auto", "transposition_model": "perez",
                             "convection_model": "iso6946"})


@pytest.fixture(scope="module")
def run_ds() -> xr.Dataset:
    return hand_made_run()


@pytest.fixture(scope="module")
def compare_ds() -> xr.Dataset:
    return hand_made_run(finishes=[("white", 0.2), ("black", 0.9)])


@pytest.fixture(scope="module")
def summary() -> pd.DataFrame:
    return pd.DataFrame([{"climate": c, "surface": s, "finish": f, "peak_temperature": 50.0 + i + j,
                          "hours_below_dew_point": 100 * i + j}
                         for i, c in enumerate(["alpha", "beta"])
                         for j, s in enumerate(["roof", "north", "south"])
                         for f in ["white", "black"]])


# --------------------------------------------------------------------------- carpet grid

def test_carpet_grid_is_365_by_24_with_each_hour_in_its_cell():
    """Hour counter k on the hour-ending labels lands in cell (k // 24, k % 24): mid-hour rule."""
    grid = shaping.carpet_grid(np.arange(8760.0), LOCAL)
    assert grid.shape == (365, 24)
    assert not np.isnan(grid).any()
    assert_array_equal(grid.ravel(), np.arange(8760.0))


def test_carpet_grid_first_and_last_label():
    """2001-01-01 01:00 -> day 1 hour 0; 2002-01-01 00:00 -> day 365 hour 23 (no 366th column)."""
    labels = pd.DatetimeIndex(["2001-01-01 01:00", "2002-01-01 00:00", "2001-07-01 13:00"])
    grid = shaping.carpet_grid([1.0, 2.0, 3.0], labels)
    assert grid[0, 0] == 1.0
    assert grid[364, 23] == 2.0
    assert grid[181, 12] == 3.0  # 1 July = day 182; the hour 12:00-13:00
    assert np.isfinite(grid).sum() == 3


def test_carpet_grid_through_local_time_of_a_utc_result(run_ds):
    """The dataset stores naive UTC; local labels = UTC + utc_offset_hours put 01:00 local first."""
    labels = shaping.local_labels(run_ds)
    assert labels[0] == pd.Timestamp("2001-01-01 01:00")
    assert labels[-1] == pd.Timestamp("2002-01-01 00:00")
    assert pd.Timestamp(run_ds.time.values[0]) == pd.Timestamp("2001-01-01 06:00")
    grid = shaping.carpet_grid(run_ds["temp_air"].values, labels)
    assert_allclose(grid[0, 0], run_ds["temp_air"].values[0], atol=0)
    assert_allclose(grid[364, 23], run_ds["temp_air"].values[-1], atol=0)


def test_carpet_grid_leap_year_drops_29_february_and_averages_repeats():
    labels = pd.date_range("2004-01-01 01:00", periods=8784, freq="h")  # 2004 is a leap year
    values = np.where(labels.month == 2, 1.0, 0.0)
    values[(labels - pd.Timedelta(minutes=30)).strftime("%m-%d") == "02-29"] = 99.0
    grid = shaping.carpet_grid(values, labels)
    assert grid.shape == (365, 24) and not np.isnan(grid).any()
    assert grid.max() == 1.0  # 29 February left out
    two_years = labels[:48].append(labels[:48] + pd.DateOffset(years=2))
    grid = shaping.carpet_grid(np.r_[np.zeros(48), np.full(48, 2.0)], two_years)
    assert_allclose(grid[:2], 1.0, atol=1e-12)


def test_carpet_grid_length_mismatch():
    with pytest.raises(ConfigurationError, match="3 values for 2 time labels"):
        shaping.carpet_grid([1, 2, 3], LOCAL[:2])


# --------------------------------------------------------------------------- duration curve

def test_duration_curve_orders_descending_with_hour_ranks():
    hours, values = shaping.duration_curve([3.0, 10.0, -1.0, np.nan, 5.0])
    assert_array_equal(values, [10.0, 5.0, 3.0, -1.0])
    assert_array_equal(hours, [1, 2, 3, 4])
    pct, _ = shaping.duration_curve(np.arange(8760.0), percent=True)
    assert_allclose(pct[[0, -1]], [100 / 8760, 100.0], rtol=1e-12)


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(-60, 90, allow_nan=False), min_size=1, max_size=300))
def test_duration_curve_property_sorted_permutation(values):
    hours, ordered = shaping.duration_curve(values)
    assert np.all(np.diff(ordered) <= 0)
    assert_array_equal(np.sort(ordered), np.sort(values))
    # the value at rank k is reached or exceeded in exactly >= k hours
    for k in (0, len(ordered) - 1):
        assert (np.asarray(values) >= ordered[k]).sum() >= hours[k]


# --------------------------------------------------------------------------- monthly statistics

def test_monthly_statistics_of_constant_months_and_a_ramp():
    mid_month = (LOCAL - pd.Timedelta(minutes=30)).month.to_numpy()
    stats = shaping.monthly_statistics(mid_month.astype(float), LOCAL)
    assert list(stats.index) == list(range(1, 13))
    assert_allclose(stats["mean"], np.arange(1, 13), atol=1e-12)
    assert_allclose(stats["p_low"], np.arange(1, 13), atol=1e-12)
    assert stats.loc[1, "hours"] == 744 and stats.loc[2, "hours"] == 672
    # January as a ramp 0..743: the p-th percentile of 0..N-1 is p/100*(N-1) (linear rule)
    ramp = np.where(mid_month == 1, np.arange(8760.0), 0.0)
    jan = shaping.monthly_statistics(ramp, LOCAL).loc[1]
    assert_allclose([jan["mean"], jan["p_low"], jan["p_high"], jan["max"]],
                    [371.5, 74.3, 668.7, 743.0], atol=1e-9)


def test_monthly_statistics_puts_the_hour_ending_at_midnight_in_the_month_before():
    labels = pd.DatetimeIndex(["2001-02-01 00:00", "2001-02-01 01:00"])
    stats = shaping.monthly_statistics([5.0, 7.0], labels)
    assert stats.loc[1, "mean"] == 5.0 and stats.loc[2, "mean"] == 7.0


def test_monthly_statistics_bad_band():
    with pytest.raises(ConfigurationError, match="percentile band"):
        shaping.monthly_statistics([1.0], LOCAL[:1], percentiles=(90, 10))


# --------------------------------------------------------------------------- week window

def test_week_mask_by_number_and_by_date():
    week1 = LOCAL[shaping.week_mask(LOCAL, week=1)]
    assert len(week1) == 168
    assert week1[0] == pd.Timestamp("2001-01-01 01:00")
    assert week1[-1] == pd.Timestamp("2001-01-08 00:00")
    july = LOCAL[shaping.week_mask(LOCAL, start="07-15")]
    assert len(july) == 168 and july[0] == pd.Timestamp("2001-07-15 01:00")
    assert shaping.week_mask(LOCAL, start="2001-07-15").sum() == 168
    assert shaping.week_mask(LOCAL, week=53).sum() == 24  # 31 December only


@pytest.mark.parametrize("kwargs, message", [
    ({"week": 0}, "outside 1-53"),
    ({"start": "15/07"}, "not of the form"),
    ({"start": "02-30"}, "not a date"),
    ({}, "exactly one of"),
    ({"week": 2, "start": "01-01"}, "exactly one of"),
])
def test_week_mask_errors(kwargs, message):
    with pytest.raises(ConfigurationError, match=message):
        shaping.week_mask(LOCAL, **kwargs)


# ----------------------------------------------------------------- finish metrics, portfolio

def test_finish_metrics_against_hand_counts():
    time = pd.date_range("2001-01-01 06:00", periods=4, freq="h")
    surf = np.array([[[10.0, 20.0]], [[1.0, 30.0]], [[-2.0, 5.0]], [[8.0, 8.0]]])  # t x s x f
    flux = np.array([[[100.0, -50.0]], [[200.0, 300.0]], [[-10.0, 0.0]], [[0.0, 700.0]]])
    ds = xr.Dataset({"temp_surface": (("time", "surface", "finish"), surf),
                     "temp_dew": ("time", [2.0, 2.0, 2.0, 9.0]),
                     "heat_flux": (("time", "surface", "finish"), flux)},
                    coords={"time": time, "surface": ["roof"], "finish": ["a", "b"]})
    table = shaping.finish_metrics(ds).set_index("finish")
    assert_allclose(table["peak_temperature"], [10.0, 30.0], atol=0)
    assert_array_equal(table["hours_below_dew_point"], [3, 1])  # a: 1<2, -2<2, 8<9; b: 8<9
    assert_allclose(table["heat_gain"], [0.3, 1.0], atol=1e-12)  # kWh/m2 of the positive part
    assert table.attrs["variable"] == "temp_surface"


def test_finish_metrics_needs_finishes(run_ds):
    with pytest.raises(ConfigurationError, match="compare or batch result"):
        shaping.finish_metrics(run_ds)


def test_portfolio_grid_pivots_climate_by_surface(summary):
    grid = shaping.portfolio_grid(summary, "peak_temperature", finish="black")
    assert list(grid.index) == ["alpha", "beta"]
    assert list(grid.columns) == ["roof", "north", "south"]
    assert_allclose(grid.to_numpy(), [[50, 51, 52], [51, 52, 53]], atol=0)
    with pytest.raises(ConfigurationError, match="several finishes"):
        shaping.portfolio_grid(summary, "peak_temperature")
    with pytest.raises(ConfigurationError, match="metric 'nope' is not one of"):
        shaping.portfolio_grid(summary, "nope", finish="black")


# --------------------------------------------------------------------------- rendering

KINDS_RUN = [("carpet", {}), ("carpet", {"minus_air": True, "surfaces": ["roof", "south"]}),
             ("duration", {}), ("duration", {"percent": True}), ("monthly", {}),
             ("sky-spread", {"surfaces": ["roof", "south"]}), ("sky-spread", {"week": 30})]


@pytest.mark.parametrize("kind, opts", KINDS_RUN)
def test_each_run_kind_renders_a_png(run_ds, kind, opts):
    data = plots.figure_png(plots.draw(run_ds, kind, **opts), dpi=80)
    width, height = png_size(data)
    assert width == round(7.5 * 80)
    assert 150 < height < 1400


@pytest.mark.parametrize("kind, opts", [("finishes", {}), ("carpet", {"finish": "black"}),
                                        ("monthly", {"variable": "temp_surface"}),
                                        ("finishes", {"metric": "heat_gain"})])
def test_compare_kinds_render(compare_ds, kind, opts):
    width, _ = png_size(plots.figure_png(plots.draw(compare_ds, kind, **opts), dpi=80))
    assert width == 600


def test_portfolio_renders(summary):
    fig = plots.draw(summary, "portfolio", metric="hours_below_dew_point", finish="white")
    assert png_size(plots.figure_png(fig, dpi=80))[0] == 600


def test_figure_text_is_at_least_8_pt(run_ds):
    fig = plots.draw(run_ds, "monthly")
    sizes = [t.get_fontsize() for t in fig.findobj(lambda a: hasattr(a, "get_fontsize"))
             if getattr(t, "get_text", lambda: "")()]
    assert sizes and min(sizes) >= 8
    assert fig.get_figwidth() == 7.5
    texts = [t.get_text() for t in fig.findobj(lambda a: hasattr(a, "get_text"))]
    assert any("Test Harbour" in t for t in texts)
    assert any("verify against local codes" in t for t in texts)


def test_diverging_carpet_is_centred_on_zero(run_ds):
    fig = plots.draw(run_ds, "carpet", minus_air=True)
    image = fig.axes[0].images[0]
    assert image.norm.vcenter == 0.0
    assert image.get_cmap().name == "RdBu_r"


def test_library_draws_without_pyplot():
    """Object API only: drawing and saving never imports matplotlib.pyplot."""
    code = ("import sys, numpy as np, pandas as pd\n"
            "from solair.plots import figures, figure_png\n"
            "import tests.test_plots as t\n"
            "png = figure_png(figures.duration_figure(t.hand_made_run()))\n"
            "assert png[:4] == b'\\x89PNG'\n"
            "assert 'matplotlib.pyplot' not in sys.modules, 'pyplot imported'\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          cwd=str(Path(__file__).parents[1]))
    assert proc.returncode == 0, proc.stderr


# --------------------------------------------------------------------------- errors

def test_unknown_surface_lists_the_allowed(run_ds):
    with pytest.raises(ConfigurationError, match=r"surface 'west' is not one of \['roof', 'north'"):
        plots.draw(run_ds, "carpet", surfaces=["west"])


def test_missing_variable(run_ds):
    with pytest.raises(ConfigurationError, match="variable 'temp_surface' is not in the result"):
        plots.draw(run_ds, "duration", variable="temp_surface")
    no_spread = hand_made_run(spread=False)
    with pytest.raises(ConfigurationError, match="sky-spread"):
        plots.draw(no_spread, "sky-spread")


def test_wrong_kind_for_the_file(run_ds, summary):
    with pytest.raises(ConfigurationError, match="'portfolio' needs a summary result, the file "
                                                 "is a run result"):
        plots.draw(run_ds, "portfolio", metric="x")
    with pytest.raises(ConfigurationError, match="'carpet' needs a"):
        plots.draw(summary, "carpet")
    with pytest.raises(ConfigurationError, match="plot kind 'pie' is not one of"):
        plots.draw(run_ds, "pie")
    with pytest.raises(ConfigurationError, match="needs --metric"):
        plots.draw(summary, "portfolio")


def test_detect_result_type(run_ds, compare_ds, summary):
    assert plots.detect_result_type(run_ds) == "run"
    assert plots.detect_result_type(compare_ds) == "compare"
    assert plots.detect_result_type(compare_ds.assign_attrs(climate_label="x")) == "batch"
    assert plots.detect_result_type(summary) == "summary"
    assert plots.detect_result_type(summary.drop(columns="climate")) == "metrics"


def test_unreadable_and_missing_files(tmp_path):
    bad = tmp_path / "broken.nc"
    bad.write_bytes(b"not a netcdf file")
    with pytest.raises(ConfigurationError, match="broken.nc: cannot be read as a solair result"):
        plots.load_result(bad)
    with pytest.raises(ConfigurationError, match="no such result file"):
        plots.load_result(tmp_path / "absent.nc")
    other = tmp_path / "table.txt"
    other.write_text("x")
    with pytest.raises(ConfigurationError, match=r"suffix '.txt' is not one of"):
        plots.load_result(other)


def test_save_figure_is_atomic_and_checks_suffix(run_ds, tmp_path):
    fig = plots.draw(run_ds, "duration")
    out = plots.save_figure(fig, tmp_path / "d.png", dpi=60)
    assert out.read_bytes()[:8] == PNG_SIGNATURE
    assert [p.name for p in tmp_path.iterdir()] == ["d.png"]
    with pytest.raises(ConfigurationError, match="figure suffix '.jpg'"):
        plots.save_figure(fig, tmp_path / "d.jpg")


# --------------------------------------------------------------------------- CLI

@pytest.fixture(scope="module")
def run_file(tmp_path_factory, run_ds):
    path = tmp_path_factory.mktemp("res") / "run.nc"
    run_ds.to_netcdf(path, engine="h5netcdf")
    return path


def test_cli_plot_writes_png(run_file, tmp_path):
    out = tmp_path / "carpet.png"
    res = CliRunner().invoke(cli, ["plot", str(run_file), "--kind", "carpet", "--surface",
                                   "south", "--minus-air", "--dpi", "60", "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert out.read_bytes()[:8] == PNG_SIGNATURE


@pytest.mark.parametrize("args, message", [
    (["--kind", "carpet", "--surface", "attic"], "surface 'attic' is not one of"),
    (["--kind", "duration", "--variable", "temp_x"], "variable 'temp_x' is not in the result"),
    (["--kind", "finishes"], "'finishes' needs a"),
    (["--kind", "sky-spread", "--week", "1", "--start", "01-01"], "--week or --start"),
])
def test_cli_plot_errors_are_one_line_exit_2(run_file, tmp_path, args, message):
    res = CliRunner().invoke(cli, ["plot", str(run_file), *args, "-o", str(tmp_path / "f.png")])
    assert res.exit_code == 2
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and message in lines[0], res.output
    assert not (tmp_path / "f.png").exists()


def test_cli_plot_unreadable_file(tmp_path):
    bad = tmp_path / "x.nc"
    bad.write_text("garbage")
    res = CliRunner().invoke(cli, ["plot", str(bad), "--kind", "carpet", "-o",
                                   str(tmp_path / "f.png")])
    assert res.exit_code == 2 and "cannot be read" in res.output
    assert len(res.output.strip().splitlines()) == 1


# --------------------------------------------------------------------------- real outputs
# Greensboro NC TMY3 (NREL, shipped with pvlib) through solair.compute, written with
# solair.output.write_result and read back: every plot kind must draw from it.

@functools.lru_cache(maxsize=1)
def greensboro_run_file() -> Path:
    """Compute once per test process: roof + three facades, with the sky-model spread."""
    import pvlib

    import solair
    from solair.output import write_result
    from solair.surfaces import Surface

    weather = solair.read_weather(Path(pvlib.__path__[0]) / "data" / "723170TYA.CSV")
    surfaces = [Surface("roof", 0.0, 180.0, 0.9, 0.9), Surface("S", 90.0, 180.0),
                Surface("N", 90.0, 0.0), Surface("W", 90.0, 270.0)]
    ds = solair.compute(weather, surfaces, sky_spread=True)
    folder = Path(tempfile.mkdtemp(prefix="solair-plots-"))
    return write_result(ds, folder / "greensboro_run.nc")


@pytest.fixture(scope="module")
def greensboro_run():
    return plots.load_result(greensboro_run_file())


REAL_RUN_KINDS = [("carpet", {}), ("carpet", {"minus_air": True, "surfaces": ["roof", "S"]}),
                  ("duration", {}), ("monthly", {}), ("sky-spread", {"surfaces": ["roof", "S"]}),
                  ("sky-spread", {"start": "07-15"})]


@pytest.mark.parametrize("kind, opts", REAL_RUN_KINDS)
def test_each_kind_renders_from_the_greensboro_run(greensboro_run, kind, opts):
    assert plots.detect_result_type(greensboro_run) == "run"
    data = plots.figure_png(plots.draw(greensboro_run, kind, **opts), dpi=72)
    width, height = png_size(data)
    assert width == 540 and 150 < height < 1200


def test_greensboro_carpet_grid_is_full_and_in_local_time(greensboro_run):
    """A full TMY3 year fills 365 x 24 cells; the sun is up around local noon, not 5 h off."""
    labels = shaping.local_labels(greensboro_run)
    assert labels[0] == pd.Timestamp("2001-01-01 01:00")  # TMY3 hour 1 of 1 January, local
    poa = greensboro_run["poa_global"].sel(surface="roof").values
    grid = shaping.carpet_grid(poa, labels)
    assert grid.shape == (365, 24) and not np.isnan(grid).any()
    mean_by_hour = grid.mean(axis=0)
    assert int(np.argmax(mean_by_hour)) in (11, 12)  # Greensboro 79.95 W, zone meridian 75 W
    assert_allclose(mean_by_hour[[0, 1, 2, 3, 22, 23]], 0.0, atol=1e-9)


def test_greensboro_duration_and_monthly_agree_with_the_data(greensboro_run):
    values = greensboro_run["temp_sol_air"].sel(surface="roof").values
    hours, ordered = shaping.duration_curve(values)
    assert hours[-1] == 8760 and ordered[0] == values.max() and ordered[-1] == values.min()
    stats = shaping.monthly_statistics(values, shaping.local_labels(greensboro_run))
    assert stats["hours"].sum() == 8760
    assert_allclose((stats["mean"] * stats["hours"]).sum() / 8760, values.mean(), rtol=1e-12)
    assert stats.loc[7, "mean"] > stats.loc[1, "mean"] + 15  # NC summer vs winter


def test_cli_plot_from_a_real_run(tmp_path):
    out = tmp_path / "sky.png"
    res = CliRunner().invoke(cli, ["plot", str(greensboro_run_file()), "--kind", "sky-spread",
                                   "--week", "28", "--surface", "roof", "--dpi", "60",
                                   "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert png_size(out.read_bytes())[0] == 450


@functools.lru_cache(maxsize=1)
def greensboro_compare_files() -> tuple[Path, Path]:
    """solair.compare on Greensboro TMY3: 2 surfaces x 2 catalogue finishes, massless response."""
    import pvlib

    import solair
    from solair.compare import compare
    from solair.output import write_result
    from solair.surfaces import Surface

    weather = solair.read_weather(Path(pvlib.__path__[0]) / "data" / "723170TYA.CSV")
    ds, table = compare(weather, [Surface("roof", 0.0, 180.0), Surface("S", 90.0, 180.0)],
                        ["white_single_ply_membrane", "black_membrane"],
                        "insulated_membrane_roof", response="massless")
    folder = Path(tempfile.mkdtemp(prefix="solair-plots-"))
    table_path = folder / "greensboro_metrics.csv"
    table.to_csv(table_path, index=False)
    return write_result(ds, folder / "greensboro_finishes.nc"), table_path


@functools.lru_cache(maxsize=1)
def portfolio_files() -> tuple[Path, Path]:
    """`solair batch` (serial) over Greensboro and Sand Point TMY3 (NREL, shipped with pvlib)."""
    import pvlib

    data = Path(pvlib.__path__[0]) / "data"
    folder = Path(tempfile.mkdtemp(prefix="solair-batch-"))
    (folder / "p.toml").write_text(
        'name = "plots_check"\noutput = "out"\nconstruction = "metal_deck_roof"\n'
        f'[[climates]]\npath = "{(data / "723170TYA.CSV").as_posix()}"\nlabel = "piedmont"\n'
        f'[[climates]]\npath = "{(data / "703165TY.csv").as_posix()}"\nlabel = "north_site"\n'
        '[surfaces]\nset = "none"\n'
        '[[surfaces.custom]]\nname = "roof"\nsurface_tilt = 0\nsurface_azimuth = 180\n'
        '[[surfaces.custom]]\nname = "S"\nsurface_tilt = 90\nsurface_azimuth = 180\n'
        '[[finishes]]\nname = "dark_bitumen"\n[[finishes]]\nname = "white_single_ply_membrane"\n'
        '[models]\nresponse = "massless"\n', encoding="utf-8")
    res = CliRunner().invoke(cli, ["batch", str(folder / "p.toml"), "--workers", "0"])
    assert res.exit_code == 0, res.output
    return folder / "out" / "summary.csv", folder / "out" / "climates" / "piedmont.nc"


@pytest.mark.parametrize("kind, opts", [
    ("finishes", {}), ("carpet", {"variable": "temp_surface", "finish": "black_membrane"}),
    ("duration", {"variable": "temp_surface"}), ("monthly", {"finish": "black_membrane"})])
def test_each_kind_renders_from_the_greensboro_compare(kind, opts):
    nc, table = greensboro_compare_files()
    ds = plots.load_result(nc)
    assert plots.detect_result_type(ds) == "compare"
    assert png_size(plots.figure_png(plots.draw(ds, kind, **opts), dpi=60))[0] == 450
    if kind == "finishes":
        metrics = plots.load_result(table)
        assert plots.detect_result_type(metrics) == "metrics"
        assert png_size(plots.figure_png(plots.draw(metrics, kind), dpi=60))[0] == 450


def test_recomputed_metrics_agree_with_the_compare_table():
    """Peak and heat gain recomputed from the hourly NetCDF equal compare's own table."""
    nc, table = greensboro_compare_files()
    mine = shaping.finish_metrics(plots.load_result(nc)).set_index(["surface", "finish"])
    theirs = shaping.metrics_from_table(pd.read_csv(table)).set_index(["surface", "finish"])
    assert_allclose(mine["peak_temperature"], theirs.loc[mine.index, "peak_temperature"],
                    atol=1e-4)
    assert_allclose(mine["heat_gain"], theirs.loc[mine.index, "heat_gain"], atol=1e-3)


def test_portfolio_and_batch_climate_render_from_a_real_batch():
    summary_path, climate_nc = portfolio_files()
    summary = plots.load_result(summary_path)
    assert plots.detect_result_type(summary) == "summary"
    grid = shaping.portfolio_grid(shaping.metrics_from_table(summary), "hours_below_dew_point",
                                  finish="dark_bitumen")
    assert list(grid.index) == ["piedmont", "north_site"] and list(grid.columns) == ["roof", "S"]
    for metric in ("temp_surface_max", "hours_below_dew_point"):
        fig = plots.draw(summary, "portfolio", metric=metric, finish="dark_bitumen")
        assert png_size(plots.figure_png(fig, dpi=60))[0] == 450
    ds = plots.load_result(climate_nc)
    assert plots.detect_result_type(ds) == "batch"
    for kind in ("finishes", "carpet", "monthly"):
        assert png_size(plots.figure_png(plots.draw(ds, kind), dpi=60))[0] == 450


def test_hourly_csv_of_a_run_is_read_back(tmp_path):
    """solair.output.write_result's CSV (local time with offset) round-trips to the dataset."""
    from solair.output import write_result

    ds = hand_made_run(spread=False)
    path = write_result(ds, tmp_path / "r.csv")
    back = plots.load_result(path)
    assert plots.detect_result_type(back) == "run"
    assert back.attrs["utc_offset_hours"] == -5.0
    assert shaping.local_labels(back)[0] == pd.Timestamp("2001-01-01 01:00")
    assert list(back["surface"].values) == ["roof", "north", "south"]
    assert_allclose(back["temp_sol_air"].values, ds["temp_sol_air"].values, rtol=1e-5)
    assert back["temp_sol_air"].attrs["units"] == "degC"
    assert png_size(plots.figure_png(plots.draw(back, "carpet", minus_air=True), dpi=40))[0] == 300
    # the metadata lines above the header bring back the attributes and the geometry
    for key in ("site_name", "latitude", "transposition_model"):
        assert back.attrs[key] == ds.attrs[key], key
    for coord in ("surface_tilt", "surface_azimuth", "absorptance", "emissivity"):
        assert_allclose(back[coord].values, ds[coord].values, rtol=1e-12)
    assert back["temp_sol_air"].attrs["long_name"] == ds["temp_sol_air"].attrs["long_name"]
    assert back["time"].dims == ("time",) and (back["time"].values == ds["time"].values).all()
    # a CSV without the metadata lines (older file, or edited) still reads, with the file name
    lines = path.read_text(encoding="utf-8-sig").splitlines()
    bare = tmp_path / "bare.csv"
    bare.write_text("\n".join(x for x in lines if not x.startswith("#")) + "\n",
                    encoding="utf-8")
    plain = plots.load_result(bare)
    assert plain.attrs["site_name"] == "bare" and "surface_tilt" not in plain.coords
    assert_allclose(plain["temp_sol_air"].values, ds["temp_sol_air"].values, rtol=1e-5)
    bad = tmp_path / "bad.csv"
    bad.write_text("time_local,x[a|b] (K)\n2001-01-01T01:00:00-05:00,1\n")
    with pytest.raises(ConfigurationError, match="plot the NetCDF output instead"):
        plots.load_result(bad)
