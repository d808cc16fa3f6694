"""Result writers (solair.output): CSV/NetCDF round trips, atomic writes, summaries."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from numpy.testing import assert_allclose

import solair
from solair import output
from solair.errors import ConfigurationError
from solair.surfaces import Surface


@pytest.fixture(scope="module")
def result(greensboro_weather):
    return solair.compute(greensboro_weather, [Surface("roof", 0, 180), Surface("S", 90, 180)])


def test_local_time_is_hour_ending_local_standard_time(result):
    t = output.local_time(result)
    assert str(t[0]) == "2001-01-01 01:00:00-05:00"
    assert str(t[-1]) == "2002-01-01 00:00:00-05:00"


def test_csv_round_trip_with_pandas(result, tmp_path):
    path = output.write_result(result, tmp_path / "run.csv")
    df = pd.read_csv(path, comment="#")
    assert df.columns[0] == "time_local"
    assert df["time_local"].iloc[0] == "2001-01-01T01:00:00-05:00"
    assert "temp_sol_air[roof] (°C)" in df.columns and "r_se[S] (m2 K W-1)" in df.columns
    assert "temp_air (°C)" in df.columns and "sky_source" in df.columns
    t = pd.to_datetime(df["time_local"])
    assert (t.dt.tz_convert("UTC").dt.tz_localize(None).to_numpy() == result["time"].values).all()
    assert_allclose(df["temp_sol_air[roof] (°C)"], result["temp_sol_air"].sel(surface="roof"),
                    rtol=1e-5, atol=1e-4)
    assert_allclose(df["poa_global[S] (W m-2)"], result["poa_global"].sel(surface="S"),
                    rtol=1e-5, atol=1e-3)
    assert not list(tmp_path.glob(".*.part"))


def test_csv_metadata_lines_name_site_surfaces_models_and_caution(result, tmp_path):
    path = output.write_result(result, tmp_path / "run.csv")
    raw = path.read_bytes()
    assert raw.startswith(b"\xef\xbb\xbf# solair ")  # UTF-8 byte-order mark, for spreadsheets
    lines = raw.decode("utf-8-sig").splitlines()
    head = [line for line in lines if line.startswith("#")]
    # the block sits above the header row and nowhere else
    assert lines[: len(head)] == head and lines[len(head)].startswith("time_local,")
    text = "\n".join(head)
    assert head[0].startswith(f"# solair {solair.__version__} — exterior equivalent (sol-air)")
    assert "# caution: engineering estimate; verify against local codes and licensed " \
           "professional practice" in text
    assert f"# site: {result.attrs['site_name']} (latitude " in text
    assert "# surface roof: tilt 0°, azimuth 180°, absorptance 0.6, emissivity 0.9" in text
    assert "# surface S: tilt 90°, azimuth 180°" in text
    assert "# models: sky auto; transposition perez; convection iso6946" in text
    assert "local standard time (UTC-05:00)" in text
    assert "# sky sources: " in text and "sky_cover_clark_allen" in text
    # the line number of the header row, for spreadsheet import dialogs
    assert f"# reading: the header row is line {len(head) + 1};" in text
    # the JSON record holds the attributes exactly
    record = output.read_csv_metadata(path)
    assert record["attrs"]["site_name"] == result.attrs["site_name"]
    assert record["attrs"]["latitude"] == float(result.attrs["latitude"])
    assert record["coords"]["surface_azimuth"]["values"] == [180.0, 180.0]
    assert record["variables"]["temp_sol_air"]["units"] == "degC"


def test_csv_header_with_a_hash_in_a_surface_name_is_quoted(result, tmp_path):
    # comment="#" cuts a line at any '#' outside quotes: such header fields are quoted
    renamed = result.assign_coords(surface=["roof#1", "S"])
    path = output.write_result(renamed, tmp_path / "run.csv")
    df = pd.read_csv(path, comment="#")
    assert "temp_sol_air[roof#1] (°C)" in df.columns and len(df) == 8760
    assert_allclose(df["temp_sol_air[roof#1] (°C)"], result["temp_sol_air"].sel(surface="roof"),
                    rtol=1e-5, atol=1e-4)


def test_csv_metadata_bad_record_is_a_one_line_error(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("# solair 0.1.0\n" + output.CSV_RECORD_PREFIX + "{not json\ntime_local\n")
    with pytest.raises(ConfigurationError, match=r"bad.csv, line 2: the solair record is not "
                                                 r"valid JSON"):
        output.read_csv_metadata(bad)
    plain = tmp_path / "plain.csv"
    plain.write_text("time_local,temp_air (°C)\n")
    assert output.read_csv_metadata(plain) == {}


def test_netcdf_round_trip_with_xarray(result, tmp_path):
    path = output.write_result(result, tmp_path / "run.nc")
    with xr.open_dataset(path, engine="h5netcdf") as back:
        back = back.load()
    xr.testing.assert_allclose(back[["temp_sol_air", "r_se", "temp_sky", "poa_global"]],
                               result[["temp_sol_air", "r_se", "temp_sky", "poa_global"]])
    assert back["time"].values[0] == np.datetime64("2001-01-01T06:00")
    assert back.attrs["utc_offset_hours"] == -5.0
    assert back["temp_sol_air"].attrs["units"] == "degC"
    assert back.attrs["caution"].startswith("engineering estimate")
    assert list(back["sky_source"].attrs["flag_values"]) == [0, 1, 2, 3]


def test_unknown_suffix_and_missing_folder(result, tmp_path):
    with pytest.raises(ConfigurationError, match=r"suffix '.xlsx' is not one of \['.csv', '.nc'\]"):
        output.write_result(result, tmp_path / "run.xlsx")
    with pytest.raises(ConfigurationError, match="output folder .* does not exist"):
        output.write_result(result, tmp_path / "nope" / "run.csv")


def test_failed_write_leaves_no_file(result, tmp_path, monkeypatch):
    # an error in the middle of writing (simulated) must leave neither the target nor a
    # temporary file behind
    target = tmp_path / "run.csv"

    def boom(self, path, *a, **k):
        with open(path, "w") as fh:
            fh.write("time_local,partial\n")
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(pd.DataFrame, "to_csv", boom)
    with pytest.raises(OSError, match="simulated"):
        output.write_result(result, target)
    assert not target.exists()
    assert list(tmp_path.iterdir()) == []


def test_failed_write_keeps_the_previous_file(result, tmp_path, monkeypatch):
    target = tmp_path / "run.nc"
    target.write_text("previous result")

    def boom(self, *a, **k):
        raise KeyboardInterrupt

    monkeypatch.setattr(xr.Dataset, "to_netcdf", boom)
    with pytest.raises(KeyboardInterrupt):
        output.write_result(result, target)
    assert target.read_text() == "previous result"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.nc"]


def test_monthly_means_match_a_direct_groupby(result):
    m = output.monthly_means(result)
    assert list(m.index) == list(range(1, 13))
    local = output.local_time(result) - pd.Timedelta(minutes=30)
    roof = pd.Series(result["temp_sol_air"].sel(surface="roof").values, index=local)
    expect = roof.groupby(roof.index.month).mean()
    assert_allclose(m["temp_sol_air[roof] (°C)"].to_numpy(), expect.to_numpy(), rtol=1e-12)
    assert "temp_air (°C)" in m.columns


def test_design_values_are_the_1_and_99_percentiles(result):
    d = output.design_values(result)
    assert list(d.index) == ["roof", "S"]
    v = result["temp_sol_air"].sel(surface="S").values
    assert_allclose(d.loc["S", "temp_sol_air_p01 (°C)"], np.percentile(v, 1))
    assert_allclose(d.loc["S", "temp_sol_air_p99 (°C)"], np.percentile(v, 99))
    # 1 % of the hours lie above the 99th percentile
    assert abs((v > d.loc["S", "temp_sol_air_p99 (°C)"]).mean() - 0.01) < 0.001


def test_h5py_writer_reads_back_identical_to_xarrays_writer(greensboro_path, tmp_path):
    """The batch's direct h5py NetCDF writer gives the file xarray's own writer gives.

    Reference: xarray's ``to_netcdf(engine="h5netcdf")`` on the same compare result;
    read back with ``xarray.open_dataset`` both must be identical (values, attrs, encodings).
    """
    from solair.compare import compare
    from solair.netcdf_h5py import write_netcdf_h5py
    from solair.output import _netcdf_ready

    weather = solair.read_weather(greensboro_path)
    ds, _ = compare(weather, [Surface("roof", 0, 0), Surface("south", 90, 180)],
                           ["black_membrane", "white_single_ply_membrane"])
    ready = _netcdf_ready(ds)
    ref, new = tmp_path / "ref.nc", tmp_path / "new.nc"
    ready.to_netcdf(ref, engine="h5netcdf")
    write_netcdf_h5py(ready, new)
    with xr.open_dataset(ref, engine="h5netcdf") as a, xr.open_dataset(new, engine="h5netcdf") as b:
        xr.testing.assert_identical(a.load(), b.load())
        for name in a.variables:
            assert a[name].encoding.get("dtype") == b[name].encoding.get("dtype"), name


def _h5_attr_types(path):
    """Per object and attribute: HDF5 type class, string size/cset/padding, dataspace shape."""
    import h5py

    out = {}
    with h5py.File(path, "r") as f:
        objects = {"/": f, **{name: f[name] for name in f}}
        for oname, obj in objects.items():
            for key in obj.attrs:
                attr = obj.attrs.get_id(key)
                htype = attr.get_type()
                text = None
                if isinstance(htype, h5py.h5t.TypeStringID):
                    text = (htype.is_variable_str(), htype.get_cset(), htype.get_strpad(),
                            None if htype.is_variable_str() or key == "_NCProperties"
                            else htype.get_size())
                out[oname, key] = (htype.get_class(), text, attr.shape)
    return out


def test_h5py_writer_attribute_types_match_xarrays_writer(greensboro_path, tmp_path):
    """Every attribute of the direct h5py file has the HDF5 type xarray's writer gives it.

    Reference: xarray's ``to_netcdf(engine="h5netcdf")`` (through h5netcdf/h5py) on
    the same compare result, float32 data variables: same attribute names per
    object, and per attribute the same HDF5 type class, string kind (variable
    length or fixed), character set, padding and size, and dataspace shape (the
    length of ``_NCProperties`` holds the writer's name, so only its size may differ).
    """
    from solair.compare import compare
    from solair.netcdf_h5py import write_netcdf_h5py
    from solair.output import _netcdf_ready

    weather = solair.read_weather(greensboro_path)
    ds, _ = compare(weather, [Surface("roof", 0, 0), Surface("south", 90, 180)],
                    ["black_membrane", "white_single_ply_membrane"])
    ready = _netcdf_ready(ds[["temp_surface", "heat_flux"]])
    ready.attrs.update(an_int=3, a_float=0.5, an_int8=np.int8(2), int_list=[1, 2, 3],
                       float_array=np.arange(2.0), a_zero_d=np.array(1.5), some_bytes=b"ascii",
                       text_é="°C — unicode")
    encoding = {name: {"dtype": "float32"} for name in ready.data_vars}
    ref, new = tmp_path / "ref.nc", tmp_path / "new.nc"
    ready.to_netcdf(ref, engine="h5netcdf", encoding=encoding)
    write_netcdf_h5py(ready, new, encoding)
    expected, got = _h5_attr_types(ref), _h5_attr_types(new)
    assert sorted(got) == sorted(expected)
    for key, value in expected.items():
        assert got[key] == value, key
    with xr.open_dataset(ref, engine="h5netcdf") as a, xr.open_dataset(new, engine="h5netcdf") as b:
        xr.testing.assert_identical(a.load(), b.load())


def test_h5py_writer_rejects_attributes_netcdf_cannot_hold(result, tmp_path):
    """A dict attribute is a TypeError naming the attribute; a dimension without coordinate is
    a ConfigurationError (behaviour of the h5py writer kept by the low-level attribute path)."""
    from solair.netcdf_h5py import write_netcdf_h5py

    ds = xr.Dataset({"x": ("time", np.arange(3.0))}, coords={"time": np.arange(3)})
    ds.attrs["bad"] = {"a": 1}
    with pytest.raises(TypeError, match="'bad'"):
        write_netcdf_h5py(ds, tmp_path / "bad.nc")
    with pytest.raises(ConfigurationError, match="no coordinate variable"):
        write_netcdf_h5py(xr.Dataset({"x": ("n", np.arange(3.0))}), tmp_path / "nocoord.nc")
