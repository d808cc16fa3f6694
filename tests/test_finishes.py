"""Finish catalogue and TOML loading (solair/data/finishes.toml).

Catalogue values with a published source are checked against that source:
LBNL measurements as reported in cool-roof literature (white PVC 0.83/0.92,
black EPDM 0.06/0.86, white granular bitumen 0.26/0.92, light gravel 0.34/0.90,
white PVDF metal 0.67/0.85) and pvlib's surface albedo table (concrete 0.30).
"""

from __future__ import annotations

import pytest
from numpy.testing import assert_allclose

from solair.errors import ConfigurationError
from solair.finishes import FINISHES, available_finishes, get_finish, load_finishes

REQUIRED = [
    "white_single_ply_membrane", "white_elastomeric_coating", "light_grey_membrane",
    "black_membrane", "dark_bitumen", "white_granular_bitumen", "light_gravel",
    "galvanised_steel", "weathered_galvanised_steel", "aluminium_roof_coating",
    "red_clay_tile", "grey_concrete", "white_render", "dark_render", "vegetated_roof",
]


def test_catalogue_has_the_required_finishes_with_sources():
    for name in REQUIRED:
        f = FINISHES[name]
        assert 0 <= f.absorptance <= 1 and 0 <= f.emissivity <= 1
        assert f.source, name


@pytest.mark.parametrize(("name", "reflectance", "emittance"), [
    ("white_single_ply_membrane", 0.83, 0.92),   # LBNL white PVC
    ("black_membrane", 0.06, 0.86),              # LBNL black EPDM
    ("white_granular_bitumen", 0.26, 0.92),      # LBNL
    ("light_gravel", 0.34, 0.90),                # LBNL
    ("white_painted_metal", 0.67, 0.85),         # LBNL white PVDF metal
])
def test_lbnl_measured_values(name, reflectance, emittance):
    f = FINISHES[name]
    assert_allclose([f.absorptance, f.emissivity], [1 - reflectance, emittance], atol=1e-12)
    assert "LBNL" in f.source


def test_concrete_from_pvlib_albedo_table():
    import pvlib.albedo

    assert_allclose(FINISHES["grey_concrete"].absorptance,
                    1 - pvlib.albedo.SURFACE_ALBEDOS["concrete"], atol=1e-12)


def test_unverified_values_are_marked_from_memory():
    for name in ("light_grey_membrane", "galvanised_steel", "weathered_galvanised_steel",
                 "white_render", "dark_render", "vegetated_roof"):
        assert "from memory" in FINISHES[name].source


def test_galvanised_steel_has_low_emissivity():
    assert 0.04 <= FINISHES["galvanised_steel"].emissivity <= 0.13


def test_vegetated_roof_is_indicative():
    assert FINISHES["vegetated_roof"].indicative


def test_aged_variants():
    f = get_finish("white_single_ply_membrane_aged")
    assert f.name == "white_single_ply_membrane_aged"
    assert f.absorptance == FINISHES["white_single_ply_membrane"].absorptance_aged
    assert "white_single_ply_membrane_aged" in available_finishes()
    assert "light_gravel_aged" not in available_finishes()
    with pytest.raises(ConfigurationError, match="has no aged values"):
        FINISHES["light_gravel"].aged()


def test_unknown_finish_lists_allowed_names():
    with pytest.raises(ConfigurationError,
                       match=r"finish 'chrome' is not one of \[.*black_membrane"):
        get_finish("chrome")


def test_user_file(tmp_path):
    p = tmp_path / "mine.toml"
    p.write_text('[finishes.green_paint]\nabsorptance = 0.7\nemissivity = 0.9\n'
                 'source = "our measurement"\n', encoding="utf-8")
    table = load_finishes(p)
    assert table["green_paint"].absorptance == 0.7
    assert get_finish("green_paint", table).source == "our measurement"


@pytest.mark.parametrize(("body", "message"), [
    ('[finishes.x1]\nabsorptance = 1.2\nemissivity = 0.9\n',
     r"mine.toml: finish 'x1': absorptance = 1.2 is outside \[0, 1\]"),
    ('[finishes.x1]\nabsorptance = 0.5\nemissivity = -0.1\n',
     r"finish 'x1': emissivity = -0.1 is outside \[0, 1\]"),
    ('[finishes.x1]\nabsorptance = 0.5\nemissivity = 0.9\nabsorptance_aged = 2\n',
     r"finish 'x1': absorptance_aged = 2 is outside"),
    ('[finishes.x1]\nabsorptance = 0.5\n', r"finish 'x1': field 'emissivity' is missing"),
    ('[finishes.x1]\nabsorptance = "dark"\nemissivity = 0.9\n',
     r"absorptance = 'dark' is not a number"),
    ('[finishes.Bad-Name]\nabsorptance = 0.5\nemissivity = 0.9\n', "not a lower_snake_case"),
    ('[finishes.x1]\nabsorptance = 0.5\nemissivity = 0.9\ncolour = 1\n',
     r"unknown field\(s\) \['colour'\]"),
    ('absorptance = 0.5\n', r"no \[finishes.<name>\] tables"),
    ('[finishes.x1\n', "not valid TOML"),
])
def test_user_file_errors_name_file_finish_and_field(tmp_path, body, message):
    p = tmp_path / "mine.toml"
    p.write_text(body, encoding="utf-8")
    with pytest.raises(ConfigurationError, match=message):
        load_finishes(p)


def test_missing_file(tmp_path):
    with pytest.raises(ConfigurationError, match="cannot read finish file"):
        load_finishes(tmp_path / "none.toml")
