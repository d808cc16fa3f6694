"""`solair info WEATHER` on the real open files (NREL TMY3/TMY2 shipped with pvlib, the
ERA-derived EPW in tests/data) and on the bundled demo file."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from solair.cli import cli
from solair.weather import REQUIRED

SAMPLE = Path(__file__).parent.parent / "weather_samples" / "harbourside_depot.epw"


@pytest.mark.parametrize(
    ("fixture", "site", "fmt"),
    [
        ("greensboro_path", "GREENSBORO PIEDMONT TRIAD INT", "TMY3"),
        ("sand_point_path", "SAND POINT", "TMY3"),
        ("miami_path", "MIAMI", "TMY2"),
    ],
)
def test_info_on_real_files(request, fixture, site, fmt):
    path = request.getfixturevalue(fixture)
    result = CliRunner().invoke(cli, ["info", str(path)])
    assert result.exit_code == 0, result.output
    assert result.stderr == ""
    out = result.stdout
    assert site in out and f"({fmt})" in out
    assert "2001-01-01 01:00 to 2002-01-01 00:00, 8760 hours" in out
    assert "labelled by the end of the hour" in out
    for col in REQUIRED:
        assert f"\n{col} " in out
    assert "100.0%" in out


def test_info_on_era_epw_warns_once_and_exits_0(era_epw_path):
    """The tests/data EPW (rows in UTC, header TZ=1): usable for vetting, with a warning."""
    result = CliRunner().invoke(cli, ["info", str(era_epw_path)])
    assert result.exit_code == 0, result.output
    warn = result.stderr.splitlines()
    assert len(warn) == 1 and warn[0].startswith("solair: warning: ")
    assert "--utc-offset 0" in warn[0]
    assert "ghi_infrared" in result.stdout and "horizontal infrared 8760 h" in result.stdout


def test_info_with_utc_offset_option(era_epw_path):
    result = CliRunner().invoke(cli, ["info", str(era_epw_path), "--utc-offset", "0"])
    assert result.exit_code == 0, result.output
    assert result.stderr == ""
    assert "UTC+0 h" in result.stdout


def test_info_real_subprocess(greensboro_path):
    proc = subprocess.run([sys.executable, "-m", "solair", "info", str(greensboro_path)],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert "GREENSBORO" in proc.stdout and proc.stderr == ""


def test_info_on_bundled_sample():
    result = CliRunner().invoke(cli, ["info", str(SAMPLE)])
    assert result.exit_code == 0, result.output
    assert result.stderr == ""
    assert "Harbourside Depot" in result.stdout
    assert "opaque sky cover 8760 h" in result.stdout


def test_info_counts_derived_values_out_of_in_file(tmp_path, greensboro_epw_path):
    lines = greensboro_epw_path.read_text(encoding="utf-8").splitlines()
    for i in range(8, len(lines)):
        parts = lines[i].split(",")
        parts[9] = "999999"  # pressure missing everywhere -> derived from altitude
        lines[i] = ",".join(parts)
    p = tmp_path / "no_pressure.epw"
    p.write_text("\n".join(lines) + "\n", encoding="utf-8")
    result = CliRunner().invoke(cli, ["info", str(p)])
    assert result.exit_code == 0, result.output
    assert "solair: warning: " in result.stderr and "alt2pres" in result.stderr
    row = next(ln for ln in result.stdout.splitlines() if ln.startswith("pressure "))
    assert "0.0%" in row and " 8760 " in row
