"""Portfolio files: schema, key-path error messages, path tokens, globbing, config hash.

The weather files are the real NREL TMY3/TMY2 files installed with pvlib (Greensboro NC,
Sand Point AK, Miami FL); most tests use inline surfaces and finishes so that they check
the schema alone.
"""

from __future__ import annotations

import re
import shutil
import textwrap
from pathlib import Path

import pytest
from click.testing import CliRunner
from hypothesis import given
from hypothesis import strategies as st

from solair.cli import cli
from solair.errors import ConfigurationError
from solair.portfolio import config_hash, key_path, load_portfolio, portfolio_from_dict

REPO = Path(__file__).resolve().parents[1]

BASE = """\
name = "test"
output = "out"

[[climates]]
path = "greensboro.csv"
label = "greensboro"

[[climates]]
path = "alaska/*.csv"
label = "north_site"

[surfaces]
set = "none"

[[surfaces.custom]]
name = "roof"
surface_tilt = 0
surface_azimuth = 180

[[finishes]]
name = "client_grey"
absorptance = 0.65
emissivity = 0.9
"""


@pytest.fixture
def folder(tmp_path, greensboro_path, sand_point_path):
    shutil.copy(greensboro_path, tmp_path / "greensboro.csv")
    (tmp_path / "alaska").mkdir()
    shutil.copy(sand_point_path, tmp_path / "alaska" / "sand_point.csv")
    return tmp_path


def write(folder: Path, text: str, name: str = "portfolio.toml") -> Path:
    path = folder / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def test_base_portfolio_resolves(folder):
    res = load_portfolio(write(folder, BASE)).resolve()
    assert [c.label for c in res.climates] == ["greensboro", "north_site-sand_point"]
    assert res.climates[1].path == str(folder / "alaska" / "sand_point.csv")
    assert res.output_dir == str(folder / "out")
    (finish,) = res.settings["finishes"]
    assert (finish["name"], finish["absorptance"], finish["emissivity"]) == ("client_grey", 0.65,
                                                                              0.9)
    assert res.settings["surfaces"] == [
        {"name": "roof", "surface_tilt": 0.0, "surface_azimuth": 180.0}]


def test_output_override_is_relative_to_cwd(folder, monkeypatch, tmp_path):
    monkeypatch.chdir(tmp_path)
    res = load_portfolio(write(folder, BASE)).resolve("elsewhere")
    assert res.output_dir == str(tmp_path / "elsewhere")


def test_pvlib_data_token(folder, pvlib_data_dir):
    text = BASE.replace('path = "greensboro.csv"', 'path = "{pvlib_data}/12839.tm2"')
    res = load_portfolio(write(folder, text)).resolve()
    assert res.climates[0].path == str(pvlib_data_dir / "12839.tm2")
    assert res.climates[0].label == "greensboro"


def test_glob_without_label_names_by_stem(folder, pvlib_data_dir):
    text = BASE.replace('path = "greensboro.csv"\nlabel = "greensboro"',
                        'path = "{pvlib_data}/*.tm2"')
    res = load_portfolio(write(folder, text)).resolve()
    assert res.climates[0].label == "12839"


def test_unknown_token(folder):
    text = BASE.replace('path = "greensboro.csv"', 'path = "{weather}/greensboro.csv"')
    with pytest.raises(ConfigurationError,
                       match=r'climates\[0\] \("greensboro"\)\.path = .*unknown token \{weather\}'):
        load_portfolio(write(folder, text)).resolve()


@pytest.mark.parametrize(
    ("old", "new", "pattern"),
    [
        # unknown key (a typo) in a climate entry: named by its label, with the allowed keys
        ('label = "north_site"', 'label = "north_site"\nlable = "x"',
         r'climates\[1\] \("north_site"\)\.lable = \'x\': unknown key; allowed keys: '
         r"\['label', 'path', 'utc_offset'\]"),
        # unknown top-level key
        ('name = "test"', 'name = "test"\noutptu = "x"', r"outptu = 'x': unknown key"),
        # unknown key in a nested table
        ('set = "none"', 'set = "none"\nsett = 1', r"surfaces\.sett = 1: unknown key"),
        # wrong type
        ("surface_tilt = 0", 'surface_tilt = "flat"',
         r'surfaces\.custom\[0\] \("roof"\)\.surface_tilt = \'flat\': input should be a valid '
         r"number"),
        # absorptance out of range
        ("absorptance = 0.65", "absorptance = 1.3",
         r'finishes\[0\] \("client_grey"\)\.absorptance = 1\.3: input should be less than or '
         r"equal to 1"),
        ("emissivity = 0.9", "emissivity = -0.1",
         r'finishes\[0\] \("client_grey"\)\.emissivity = -0\.1: input should be greater than'),
        # azimuth outside [0, 360)
        ("surface_azimuth = 180", "surface_azimuth = 360",
         r"surface_azimuth = 360: input should be less than 360"),
        # an unknown surface set lists the allowed ones
        ('set = "none"', 'set = "everything"',
         r"surfaces\.set = 'everything': surface set 'everything' is not one of \['default', "),
        # a label that cannot name a file
        ('label = "north_site"', 'label = "north site/1"',
         r'climates\[1\] \("north site/1"\)\.label = \'north site/1\': a label starts with'),
    ],
)
def test_schema_errors_name_the_key_path(folder, old, new, pattern):
    text = BASE.replace(old, new, 1)
    assert text != BASE
    with pytest.raises(ConfigurationError, match=r"portfolio\.toml: .*" + pattern):
        load_portfolio(write(folder, text)).resolve()


def test_missing_required_keys(folder):
    with pytest.raises(ConfigurationError, match=r"climates: required key is missing"):
        load_portfolio(write(folder, 'name = "x"\n[[finishes]]\nname = "a"\n'))
    text = BASE.replace("path = \"greensboro.csv\"\n", "")
    with pytest.raises(ConfigurationError,
                       match=r'climates\[0\] \("greensboro"\)\.path: required key is missing'):
        load_portfolio(write(folder, text))


def test_missing_file(folder):
    text = BASE.replace('path = "greensboro.csv"', 'path = "greensbro.csv"')
    with pytest.raises(ConfigurationError,
                       match=r'climates\[0\] \("greensboro"\)\.path = \'greensbro\.csv\': no such '
                             r"file"):
        load_portfolio(write(folder, text)).resolve()


def test_empty_glob(folder):
    text = BASE.replace('path = "alaska/*.csv"', 'path = "alaska/*.epw"')
    with pytest.raises(ConfigurationError,
                       match=r'climates\[1\] \("north_site"\)\.path = \'alaska/\*\.epw\': the glob '
                             r"pattern matches no file"):
        load_portfolio(write(folder, text)).resolve()


def test_duplicate_labels(folder):
    text = BASE.replace('label = "north_site"', 'label = "greensboro"').replace(
        'path = "alaska/*.csv"', 'path = "alaska/sand_point.csv"')
    with pytest.raises(ConfigurationError, match=r"climate label 'greensboro' .* already used"):
        load_portfolio(write(folder, text)).resolve()


def test_inline_finish_needs_both_properties(folder):
    text = BASE.replace("emissivity = 0.9\n", "")
    with pytest.raises(ConfigurationError,
                       match=r'finishes\[0\] \("client_grey"\)\.emissivity: required key'):
        load_portfolio(write(folder, text)).resolve()


def test_duplicate_finish_and_surface(folder):
    text = BASE + '\n[[finishes]]\nname = "client_grey"\nabsorptance = 0.2\nemissivity = 0.9\n'
    with pytest.raises(ConfigurationError, match=r'finishes\[1\] \("client_grey"\)\.name = '
                                                 r"'client_grey': the finish is listed twice"):
        load_portfolio(write(folder, text)).resolve()
    text = BASE + '\n[[surfaces.custom]]\nname = "roof"\nsurface_tilt = 30\nsurface_azimuth = 0\n'
    with pytest.raises(ConfigurationError,
                       match=r'surfaces\.custom\[1\] \("roof"\)\.name = \'roof\': the name is '
                             r"already used"):
        load_portfolio(write(folder, text)).resolve()


def test_unknown_model_name(folder):
    text = BASE + '\n[models]\nlinearisation = "secant"\n'
    with pytest.raises(ConfigurationError,
                       match=r"models\.linearisation = 'secant': not one of \['air', 'surface'\]"):
        load_portfolio(write(folder, text)).resolve()


def test_not_toml_and_not_found(folder):
    with pytest.raises(ConfigurationError, match=r"bad\.toml: not valid TOML"):
        load_portfolio(write(folder, "[[climates]\npath = 1\n", "bad.toml"))
    with pytest.raises(ConfigurationError, match=r"nothere\.toml: cannot read the portfolio"):
        load_portfolio(folder / "nothere.toml")


def test_key_path_maps_indices_to_names():
    data = {"climates": [{"path": "a.epw"}, {"path": "b.epw", "label": "north_site"}]}
    assert key_path(("climates", 1, "path"), data) == 'climates[1] ("north_site").path'
    assert key_path(("climates", 0, "label"), data) == 'climates[0] ("a.epw").label'
    assert key_path(("climates", 5, "path"), data) == "climates[5].path"


def test_orientations_17_set(folder):
    text = BASE.replace('set = "none"', 'set = "orientations_17"').replace(
        'name = "roof"', 'name = "skylight"')
    surfaces = load_portfolio(write(folder, text)).resolve().settings["surfaces"]
    assert len(surfaces) == 18
    assert sorted({s["surface_tilt"] for s in surfaces}) == [0.0, 30.0, 90.0]


def test_config_hash_tracks_results_not_paths(folder):
    a = load_portfolio(write(folder, BASE)).resolve()
    b = load_portfolio(write(folder, BASE.replace('output = "out"', 'output = "other"'))).resolve()
    c = load_portfolio(write(folder, BASE.replace("0.65", "0.66"))).resolve()
    assert a.config_hash == b.config_hash  # the output folder does not change results
    assert a.config_hash != c.config_hash
    assert len(a.config_hash) == 64


@given(st.dictionaries(st.text(max_size=5), st.integers() | st.text(max_size=5), max_size=6))
def test_config_hash_ignores_key_order(settings):
    reordered = dict(reversed(list(settings.items())))
    assert config_hash(settings) == config_hash(reordered)


def test_source_is_not_a_user_key():
    with pytest.raises(ConfigurationError, match=r"unknown key 'source'"):
        portfolio_from_dict({"source": "x", "climates": [], "finishes": []})


@pytest.mark.parametrize(
    ("old", "new", "pattern"),
    [
        ('label = "north_site"', 'label = "north_site"\ncolour = "red"',
         r'climates\[1\] \("north_site"\)\.colour'),
        ("surface_tilt = 0", "surface_tilt = [0]", r"surface_tilt = \[0\]"),
        ("absorptance = 0.65", "absorptance = 2", r"absorptance = 2"),
        ('path = "greensboro.csv"', 'path = "lost.csv"', r"no such file"),
        ('path = "alaska/*.csv"', 'path = "arctic/*.csv"', r"matches no file"),
    ],
)
def test_cli_check_exit_2_with_key_path(folder, old, new, pattern):
    path = write(folder, BASE.replace(old, new, 1))
    result = CliRunner().invoke(cli, ["batch", "--check", str(path)])
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    lines = [ln for ln in result.output.splitlines() if ln.strip()]
    assert len(lines) == 1
    assert lines[0].startswith("solair: error: portfolio.toml: ")
    assert re.search(pattern, lines[0]), lines[0]


def test_cli_check_valid(folder):
    result = CliRunner().invoke(cli, ["batch", "--check", str(write(folder, BASE))])
    assert result.exit_code == 0, result.output
    assert "valid: 2 weather file(s), 1 surface(s), 1 finish(es)" in result.output


def test_example_portfolio_is_valid():
    """The shipped example resolves: its weather files exist in a fresh clone."""
    res = load_portfolio(REPO / "weather_samples" / "portfolio_example.toml").resolve()
    assert len(res.climates) >= 2
    for clim in res.climates:
        assert Path(clim.path).is_file()


def test_hourly_and_metric_names_are_checked(folder):
    text = BASE + '\n[hourly]\nvariables = ["temp_surface", "temp_surfce"]\n'
    with pytest.raises(ConfigurationError,
                       match=r"hourly\.variables\[1\] = 'temp_surfce': not an hourly variable"):
        load_portfolio(write(folder, text)).resolve()
    text = BASE + '\n[metrics]\nkeep = ["peak"]\n'
    with pytest.raises(ConfigurationError, match=r"metrics\.keep\[0\] = 'peak': not a metric"):
        load_portfolio(write(folder, text)).resolve()
    text = BASE + '\n[hourly]\ndtype = "float16"\n'
    with pytest.raises(ConfigurationError, match=r"hourly\.dtype = 'float16'"):
        load_portfolio(write(folder, text)).resolve()


def test_response_needing_a_construction(folder):
    text = BASE + '\n[models]\nresponse = "transient"\n'
    with pytest.raises(ConfigurationError,
                       match=r"models\.response = 'transient': needs a construction"):
        load_portfolio(write(folder, text)).resolve()


def test_catalogue_finish_and_construction(folder):
    text = BASE.replace('name = "test"', 'name = "test"\nconstruction = "metal_deck_roof"') + (
        '\n[[finishes]]\nname = "white_single_ply_membrane"\n')
    res = load_portfolio(write(folder, text)).resolve()
    names = [f["name"] for f in res.settings["finishes"]]
    assert names == ["client_grey", "white_single_ply_membrane"]
    assert res.settings["construction"]["name"] == "metal_deck_roof"
    assert len(res.settings["construction"]["layers"]) >= 1
    bad = text.replace('"metal_deck_roof"', '"tin_shed"')
    with pytest.raises(ConfigurationError, match=r"construction = 'tin_shed': construction"):
        load_portfolio(write(folder, bad)).resolve()
    bad = text.replace('name = "white_single_ply_membrane"', 'name = "chrome"')
    with pytest.raises(ConfigurationError,
                       match=r'finishes\[1\] \("chrome"\)\.name = \'chrome\': not a catalogue'):
        load_portfolio(write(folder, bad)).resolve()
