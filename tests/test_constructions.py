"""Construction files: loading a user's TOML file, resolving ``FILE.toml[:NAME]``, and errors.

Source of the U-value check: ISO 6946:2017, U = 1 / (R_si + sum d / lambda + R_se), with
Table 7's R_si = 0.10 (heat flow upward), 0.13 (horizontal) and R_se = 0.04 m2 K W-1.
The layer values below are an example of our own, not design values.
"""

from __future__ import annotations

import pytest
from numpy.testing import assert_allclose

from solair.constructions import load_constructions, resolve_construction
from solair.errors import ConfigurationError

TWO = """\
[constructions.timber_roof]
label = "Ventilated timber roof (example)"
kind = "roof"

[[constructions.timber_roof.layers]]
name = "plywood"
thickness = 0.018
conductivity = 0.13
density = 500
specific_heat = 1600

[[constructions.timber_roof.layers]]
name = "wood fibre"
thickness = 0.20
conductivity = 0.040
density = 160
specific_heat = 2100

[constructions.block_wall]
[[constructions.block_wall.layers]]
name = "block"
thickness = 0.2
conductivity = 1.0
density = 1800
specific_heat = 1000
"""


def test_user_file_loads_and_u_value_is_iso6946(tmp_path):
    p = tmp_path / "mine.toml"
    p.write_text(TWO, encoding="utf-8")
    table = load_constructions(p)
    assert sorted(table) == ["block_wall", "timber_roof"]
    roof = table["timber_roof"]
    assert [ly.name for ly in roof.layers] == ["plywood", "wood fibre"]
    assert roof.label == "Ventilated timber roof (example)" and roof.kind == "roof"
    assert roof.source == f"user file {p}"
    r = 0.018 / 0.13 + 0.20 / 0.040
    # ISO 6946:2017 Table 7: R_si 0.10 upward (a roof losing heat), 0.13 horizontal
    assert_allclose(roof.u_value(0.0), 1.0 / (0.10 + r + 0.04), rtol=1e-12)
    assert_allclose(table["block_wall"].u_value(90.0), 1.0 / (0.13 + 0.2 + 0.04), rtol=1e-12)
    assert_allclose(roof.heat_capacity, 0.018 * 500 * 1600 + 0.20 * 160 * 2100, rtol=1e-12)


def test_resolve_file_and_name(tmp_path):
    p = tmp_path / "mine.toml"
    p.write_text(TWO, encoding="utf-8")
    assert resolve_construction(f"{p}:block_wall").name == "block_wall"
    with pytest.raises(ConfigurationError, match=r"holds 2 constructions .*choose one with"):
        resolve_construction(str(p))
    with pytest.raises(ConfigurationError, match=r"construction 'slab' is not one of "
                                                 r"\['block_wall', 'timber_roof'\]"):
        resolve_construction(f"{p}:slab")
    one = tmp_path / "one.toml"
    one.write_text(TWO.split("[constructions.block_wall]")[0], encoding="utf-8")
    assert resolve_construction(str(one)).name == "timber_roof"
    with pytest.raises(ConfigurationError, match=r"construction 'no_such_roof' is not one of"):
        resolve_construction("no_such_roof")


LAYER = "[[constructions.c1.layers]]\nname = \"slab\"\n"
GOOD = "thickness = 0.1\nconductivity = 1.0\ndensity = 2000\nspecific_heat = 900\n"


@pytest.mark.parametrize("body, message", [
    ("[constructions.c1]\n" + LAYER + GOOD.replace("0.1", "0"),
     r"mine\.toml: construction 'c1', layer 'slab': thickness = 0 must be > 0"),
    ("[constructions.c1]\n" + LAYER + GOOD.replace("1.0", '"high"'),
     r"construction 'c1', layer 'slab': conductivity = 'high' is not a number"),
    ("[constructions.c1]\n" + LAYER + GOOD.replace("density = 2000\n", ""),
     r"construction 'c1', layer 'slab': field 'density' is missing"),
    ("[constructions.c1]\n" + LAYER + GOOD + "colour = 1\n",
     r"construction 'c1', layer 'slab': unknown field\(s\) \['colour'\]; allowed"),
    ("[constructions.c1]\nlayer = 1\n" + LAYER + GOOD,
     r"construction 'c1': unknown field\(s\) \['layer'\]; allowed \['kind', 'label', "
     r"'layers', 'source'\]"),
    ("[constructions.c1]\nlabel = \"no layers\"\n",
     r"construction 'c1' has no \[\[constructions\.c1\.layers\]\]"),
    ("[constructions.Roof-1]\n" + LAYER.replace("c1", "Roof-1") + GOOD,
     "construction name 'Roof-1' is not a lower_snake_case identifier"),
    ("constructions = 3\n", r"no \[constructions\.<name>\] tables found"),
    ("[constructions.c1\n", r"mine\.toml: not valid TOML"),
])
def test_user_file_errors_name_file_construction_layer_and_field(tmp_path, body, message):
    p = tmp_path / "mine.toml"
    p.write_text(body, encoding="utf-8")
    with pytest.raises(ConfigurationError, match=message):
        load_constructions(p)


def test_missing_file(tmp_path):
    with pytest.raises(ConfigurationError, match=r"none\.toml: cannot read construction file"):
        load_constructions(tmp_path / "none.toml")
