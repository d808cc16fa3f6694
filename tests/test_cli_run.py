"""`solair run` on the real open weather files, its outputs and its one-line errors."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from click.testing import CliRunner

import solair
from solair.cli import cli
from solair.cli import run as run_cmd


def _run(*args):
    return CliRunner().invoke(cli, ["run", *map(str, args)])


@pytest.mark.parametrize(
    "which, extra",
    [("greensboro_path", []), ("sand_point_path", []), ("miami_path", []),
     ("era_epw_path", ["--utc-offset", "0"])],
)
def test_run_each_real_file_gives_a_sensible_year(which, extra, request, tmp_path):
    # Real data: NREL TMY3 Greensboro NC and Sand Point AK, TMY2 Miami FL (shipped with
    # pvlib), and an ERA-derived EPW at 45 N 8 E whose rows are in UTC.
    path = request.getfixturevalue(which)
    out = tmp_path / "year.csv"
    r = _run(path, "-o", out, *extra)
    assert r.exit_code == 0, r.output
    assert "caution: engineering estimate; verify against local codes" in r.stdout
    assert "sky sources:" in r.stdout and str(out) in r.stdout
    # the metadata lines above the header are '#' comments (see solair.output.write_result)
    df = pd.read_csv(out, comment="#")
    assert len(df) == 8760
    tsa = df[[c for c in df.columns if c.startswith("temp_sol_air[")]]
    assert tsa.shape[1] == 9
    assert np.isfinite(tsa.to_numpy()).all()
    ta = df["temp_air (°C)"]
    # common practice (no source): sol-air lies within ~30 K below the coldest air (sky
    # cooling) and ~70 K above the warmest (dark roof in full sun)
    assert tsa.min().min() > ta.min() - 30 and tsa.max().max() < ta.max() + 70
    # sunny facades: the south wall beats the north wall on average in the northern hemisphere
    assert tsa["temp_sol_air[S] (°C)"].mean() > tsa["temp_sol_air[N] (°C)"].mean()
    # the same run as NetCDF reopens with xarray and holds the same values
    nc = tmp_path / "year.nc"
    assert _run(path, "-o", nc, *extra).exit_code == 0
    with xr.open_dataset(nc, engine="h5netcdf") as ds:
        np.testing.assert_allclose(ds["temp_sol_air"].sel(surface="roof").values,
                                   df["temp_sol_air[roof] (°C)"], rtol=1e-5, atol=1e-4)
        assert ds.sizes["time"] == 8760 and ds.attrs["weather_format"] in ("epw", "tmy3", "tmy2")


def test_run_netcdf_monthly_design_round_trip(greensboro_path, greensboro_weather, tmp_path):
    nc, mon, des = tmp_path / "g.nc", tmp_path / "m.csv", tmp_path / "d.csv"
    r = _run(greensboro_path, "-o", nc, "--surface", "roof,0,180", "--surface", "wall,90,S",
             "--absorptance", "0.8", "--emissivity", "0.85", "--sky-spread",
             "--monthly", mon, "--design", des)
    assert r.exit_code == 0, r.output
    ref = solair.compute(
        greensboro_weather,
        [solair.Surface("roof", 0, 180, 0.8, 0.85), solair.Surface("wall", 90, 180, 0.8, 0.85)],
        sky_spread=True,
    )
    with xr.open_dataset(nc, engine="h5netcdf") as back:
        xr.testing.assert_allclose(back[["temp_sol_air", "r_se", "temp_sol_air_max"]].load(),
                                   ref[["temp_sol_air", "r_se", "temp_sol_air_max"]])
    m = pd.read_csv(mon, index_col="month")
    assert list(m.index) == list(range(1, 13)) and "temp_sol_air[wall] (°C)" in m.columns
    d = pd.read_csv(des, index_col="surface")
    assert list(d.index) == ["roof", "wall"]
    assert (d["temp_sol_air_p99 (°C)"] > d["temp_sol_air_p01 (°C)"]).all()


@pytest.mark.parametrize(
    "args, pattern",
    [
        (["--sky", "nope"], "Invalid value for '--sky'"),
        (["--albedo", "2"], "'--albedo': 2 is outside"),
        (["--surface", "roof,0"], "not of the form NAME,TILT,AZIMUTH"),
        (["--surface", "roof,200,0"], "surface_tilt = '200' is outside"),
        (["--linearisation", "both"], "Invalid value for '--linearisation'"),
        (["--monthly", "m.txt"], "--monthly file"),
    ],
)
def test_bad_options_exit_2_with_one_line_and_no_output(args, pattern, greensboro_path, tmp_path,
                                                        monkeypatch):
    monkeypatch.chdir(tmp_path)
    out = tmp_path / "out.csv"
    r = _run(greensboro_path, "-o", out, *args)
    assert r.exit_code == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("solair: error:")
    assert pattern in lines[0]
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_bad_weather_file_exits_2_with_one_line_and_no_output(tmp_path):
    bad = tmp_path / "broken.epw"
    bad.write_text("LOCATION,x\nnot a weather file\n")
    out = tmp_path / "out.nc"
    for path in (bad, tmp_path / "missing.epw"):
        r = _run(path, "-o", out)
        assert r.exit_code == 2
        lines = r.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("solair: error:")
        assert path.name in lines[0]
    assert not out.exists()


def test_missing_output_and_bad_suffix(greensboro_path, tmp_path):
    r = _run(greensboro_path)
    assert r.exit_code == 2 and "Missing option '-o'" in r.stderr
    r = _run(greensboro_path, "-o", tmp_path / "x.xlsx")
    assert r.exit_code == 2 and "suffix '.xlsx'" in r.stderr


def test_help_documents_every_option_and_imports_nothing_heavy():
    r = CliRunner().invoke(cli, ["run", "--help"])
    assert r.exit_code == 0
    for opt in ("--surface", "--absorptance", "--emissivity", "--sky", "--transposition",
                "--convection", "--linearisation", "--albedo", "--sky-spread", "--monthly",
                "--design", "--output", "--utc-offset"):
        assert opt in r.output
    for p in run_cmd.run.params:
        if isinstance(p, __import__("click").Option):
            assert p.help, p.name
    code = "import sys, solair.cli.run; print(sorted(m for m in ('pvlib', 'xarray', 'pandas') " \
           "if m in sys.modules))"
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert res.stdout.strip() == "[]"


def test_cli_choices_match_the_library():
    from solair import balance, convection, irradiance, sky

    assert set(run_cmd.SKY_CHOICES) == {"auto", "infrared", *sky.CLEAR_SKY_MODELS}
    assert set(run_cmd.TRANSPOSITION_CHOICES) == set(irradiance.TRANSPOSITION_MODELS)
    assert set(run_cmd.CONVECTION_CHOICES) == set(convection.CONVECTION_MODELS)
    assert set(run_cmd.LINEARISATION_CHOICES) == set(balance.LINEARISATIONS)
