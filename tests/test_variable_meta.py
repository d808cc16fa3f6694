"""Variable metadata of the results (solair.variable_meta)."""

from __future__ import annotations

import numpy as np
import xarray as xr

from solair.variable_meta import META, label


def test_label_writes_cf_attributes_in_place_through_the_dataset_variables():
    # CF Conventions 1.11, sec. 3.1-3.3: units, long_name and standard_name attributes
    # ("air_temperature" is in the CF standard name table; temp_sky has no standard name)
    ds = xr.Dataset({"temp_air": ("time", np.zeros(3)), "temp_sky": ("time", np.zeros(3))})
    label(ds.variables["temp_air"], "temp_air")
    label(ds.variables["temp_sky"], "temp_sky")
    assert ds["temp_air"].attrs == {"units": "degC", "long_name": "dry-bulb air temperature",
                                    "standard_name": "air_temperature"}
    assert ds["temp_sky"].attrs["units"] == "degC"
    assert "standard_name" not in ds["temp_sky"].attrs


def test_every_entry_has_units_and_a_long_name():
    for name, (units, long_name, standard) in META.items():
        assert units and long_name, name
        assert standard is None or standard.replace("_", "").isalpha(), name
