"""HTML report: every section, embedded images that decode, nothing outside the page.

Built from the hand-made results of ``tests/test_plots.py``; the report of real
outputs (Greensboro TMY3) is checked at the end.
"""

from __future__ import annotations

import base64
import html
import re

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from numpy.testing import assert_allclose
from test_plots import (
    PNG_SIGNATURE,
    greensboro_compare_files,
    greensboro_run_file,
    hand_made_run,
    png_size,
    portfolio_files,
)

from solair import report
from solair.cli import cli
from solair.errors import ConfigurationError
from solair.plots import load_result


def assert_self_contained(text: str) -> None:
    """No network or file reference: no http(s):, no <link>, no <script>, src= only data:."""
    low = text.lower()
    assert "http:" not in low and "https:" not in low
    assert "<link" not in low and "<script" not in low
    assert "@import" not in low and "url(" not in low
    for src in re.findall(r"""<[a-z][^>]*?\ssrc\s*=\s*["']?([^"'\s>]+)""", low):
        assert src.startswith("data:image/png;base64,"), src[:40]
    assert not re.search(r"<[a-z][^>]*?\s(href|action|poster|srcset)\s*=", low)


def embedded_pngs(text: str) -> list[bytes]:
    return [base64.b64decode(b, validate=True)
            for b in re.findall(r'src="data:image/png;base64,([A-Za-z0-9+/=]+)"', text)]


@pytest.fixture(scope="module")
def results():
    run = hand_made_run()
    cmp = hand_made_run(finishes=[("white", 0.2), ("black", 0.9)], surfaces=("roof", "south"))
    summary = pd.DataFrame([{"climate": c, "surface": s, "finish": "black",
                             "peak_temperature": 50.0 + i + j}
                            for i, c in enumerate(["alpha", "beta"])
                            for j, s in enumerate(["roof", "south"])])
    return [("run.nc", run), ("finishes.nc", cmp), ("summary.csv", summary)]


@pytest.fixture(scope="module")
def page(results) -> str:
    return report.build_report(results, dpi=60)


def test_report_has_every_section_in_order(page):
    positions = [page.index(f'<section id="{key}">') for key in report.SECTIONS]
    assert positions == sorted(positions)
    for heading in report.SECTIONS.values():
        assert f"<h2>{heading}</h2>" in page


def test_report_images_decode(page):
    images = embedded_pngs(page)
    # run: duration, monthly, carpet, sky-spread; compare: + finishes; summary: portfolio
    assert len(images) == 4 + 4 + 1
    assert len(images) == page.count("<img ")
    for data in images:
        assert data[:8] == PNG_SIGNATURE
        assert png_size(data)[0] == 450  # 7.5 in at 60 dpi


def test_report_is_self_contained(page):
    assert_self_contained(page)
    assert page.startswith("<!DOCTYPE html>") and "<style>" in page


def test_report_carries_the_caution_and_sources(page):
    assert "verify against local codes and licensed professional practice" in page
    assert report.MODEL_SOURCES["perez"].split(".")[0] in page  # the transposition attr
    assert "ISO 6946:2017" in page
    assert "Test Harbour" in page


def test_report_tables_match_the_data(results, page):
    run = results[0][1]
    design = report.design_values_table(run)
    v = run["temp_sol_air"].sel(surface="roof").values
    assert_allclose(design.loc["roof", "exceeded 1 % of hours"], np.percentile(v, 99), atol=1e-12)
    assert_allclose(design.loc["air", "max"], run["temp_air"].max(), atol=1e-12)
    monthly = report.monthly_means_table(run)
    assert list(monthly.index) == [*["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug",
                                     "Sep", "Oct", "Nov", "Dec"], "year"]
    assert_allclose(monthly.loc["year", "air"], run["temp_air"].mean(), atol=1e-12)
    assert "Design values" in page and "Monthly mean" in page and "Finish metrics" in page
    # the portfolio summary as a climate x surface table per finish
    assert "<caption>Peak temperature [°C], finish black</caption>" in page
    assert '<td class="t">beta</td><td>51</td><td>52</td>' in page


def test_every_offered_model_has_a_published_source():
    """Each model name the library offers must have a citation in the report's list."""
    from solair.convection import CONVECTION_MODELS
    from solair.irradiance import TRANSPOSITION_MODELS
    from solair.sky import CLEAR_SKY_MODELS, SKY_SOURCES
    from solair.sun import SOLAR_POSITION_METHODS

    names = [*CLEAR_SKY_MODELS, *CONVECTION_MODELS, *SKY_SOURCES.values(),
             *TRANSPOSITION_MODELS, *SOLAR_POSITION_METHODS]
    missing = [n for n in names if n not in report.MODEL_SOURCES]
    assert not missing


def test_report_escapes_text_from_results():
    nasty = hand_made_run().assign_attrs(site_name='<script>alert("x")</script> & Co',
                                         weather_file="a<b>.epw")
    page = report.build_report([("<img src=x>.nc", nasty)], dpi=40)
    assert "<script>" not in page and "&lt;script&gt;" in page
    assert "<img src=x>" not in page
    assert_self_contained(page)


def test_write_report_atomic_and_errors(results, tmp_path):
    run_path = tmp_path / "run.nc"
    results[0][1].to_netcdf(run_path, engine="h5netcdf")
    out = report.write_report([run_path], tmp_path / "r.html", dpi=40)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.html", "run.nc"]
    assert_self_contained(out.read_text(encoding="utf-8"))
    with pytest.raises(ConfigurationError, match=r"report suffix '.pdf'"):
        report.write_report([run_path], tmp_path / "r.pdf")
    with pytest.raises(ConfigurationError, match="no such result file"):
        report.write_report([tmp_path / "nope.nc"], tmp_path / "s.html")
    assert not (tmp_path / "s.html").exists()


def test_cli_report(results, tmp_path):
    run_path = tmp_path / "run.nc"
    results[0][1].to_netcdf(run_path, engine="h5netcdf")
    csv = tmp_path / "summary.csv"
    results[2][1].to_csv(csv, index=False)
    out = tmp_path / "report.html"
    res = CliRunner().invoke(cli, ["report", str(run_path), str(csv), "--dpi", "50",
                                   "-o", str(out)])
    assert res.exit_code == 0, res.output
    text = out.read_text(encoding="utf-8")
    assert "summary.csv" in text and len(embedded_pngs(text)) == 5
    bad = CliRunner().invoke(cli, ["report", str(tmp_path / "x.nc"), "-o", str(out)])
    assert bad.exit_code == 2 and len(bad.output.strip().splitlines()) == 1


# --------------------------------------------------------------------------- real outputs

@pytest.fixture(scope="module")
def greensboro_page(tmp_path_factory) -> str:
    out = tmp_path_factory.mktemp("report") / "greensboro.html"
    report.write_report([greensboro_run_file()], out, dpi=60)
    return out.read_text(encoding="utf-8")


def test_greensboro_report_sections_images_and_sources(greensboro_page):
    page = greensboro_page
    for key in report.SECTIONS:
        assert f'<section id="{key}">' in page
    images = embedded_pngs(page)
    assert len(images) == 4  # duration, monthly, carpet, sky-spread
    assert all(png_size(data)[0] == 450 for data in images)
    assert_self_contained(page)
    assert "GREENSBORO PIEDMONT TRIAD INT, NC" in page
    # the models recorded in the result's attributes get their published source
    for name in ("perez", "iso6946", "sky_cover_clark_allen", "spa_nodes", "swinbank",
                 "dilley_obrien"):
        assert html.escape(report.MODEL_SOURCES[name]) in page
    # a switch that is off in the result (sky_air_split = 0) is not cited
    assert html.escape(report.MODEL_SOURCES["sky_air_split"]) not in page
    assert "<td>-0.0</td>" not in page


def test_design_values_agree_with_solair_output(greensboro_page):
    """Two implementations of the annual 1 %/99 % levels give the same numbers."""
    from solair.output import design_values

    ds = load_result(greensboro_run_file())
    mine = report.design_values_table(ds)
    theirs = design_values(ds)
    for surface in ds["surface"].values:
        assert_allclose(mine.loc[surface, "exceeded 1 % of hours"],
                        theirs.loc[surface, "temp_sol_air_p99 (°C)"], atol=1e-9)
        assert_allclose(mine.loc[surface, "exceeded 99 % of hours"],
                        theirs.loc[surface, "temp_sol_air_p01 (°C)"], atol=1e-9)


@pytest.mark.slow
def test_report_of_real_compare_and_batch_outputs(tmp_path):
    """run + compare (NetCDF and metrics CSV) + batch summary in one self-contained page."""
    nc, table = greensboro_compare_files()
    summary, _ = portfolio_files()
    out = report.write_report([greensboro_run_file(), nc, table, summary], tmp_path / "all.html",
                              dpi=50)
    page = out.read_text(encoding="utf-8")
    assert_self_contained(page)
    for key in report.SECTIONS:
        assert f'<section id="{key}">' in page
    images = embedded_pngs(page)
    # run 4, compare 3 (+ finishes from its table), summary: 2 metrics x 2 finishes
    assert len(images) == 4 + 3 + 1 + 4
    assert all(data[:8] == PNG_SIGNATURE for data in images)
    assert "insulated_membrane_roof" in page  # the construction behind the finishes
    assert html.escape(report.MODEL_SOURCES["sri"]) in page
    assert "Key metrics per climate" in page and "<td class=\"t\">piedmont</td>" in page


def test_report_from_the_csv_of_a_real_run_names_the_site_and_model_sources(
        greensboro_path, greensboro_weather, tmp_path):
    """The README's path: `solair run WEATHER -o x.csv`, then `solair report x.csv`.

    The CSV's metadata lines carry the provenance, so the page names the site (NREL TMY3
    Greensboro NC, shipped with pvlib), its coordinates, the surfaces' geometry and the
    published sources of the models the run used, as a report from the NetCDF does.
    """
    run_csv, page_path = tmp_path / "greensboro.csv", tmp_path / "r.html"
    r = CliRunner().invoke(cli, ["run", str(greensboro_path), "-o", str(run_csv),
                                 "--surface", "roof,0,180", "--surface", "wall,90,S"])
    assert r.exit_code == 0, r.output
    res = CliRunner().invoke(cli, ["report", str(run_csv), "--dpi", "50", "-o", str(page_path)])
    assert res.exit_code == 0, res.output
    page = page_path.read_text(encoding="utf-8")
    assert_self_contained(page)
    assert "GREENSBORO PIEDMONT TRIAD INT, NC" in page
    site = greensboro_weather.site
    assert (f'Latitude [°]</th><td class="t">{html.escape(str(site.latitude))}</td>'
            in page), site.latitude
    assert "723170TYA.CSV" in page  # the weather file, not only the CSV's own name
    for name in ("perez", "iso6946", "sky_cover_clark_allen", "spa_nodes"):
        assert html.escape(report.MODEL_SOURCES[name]) in page, name
    # the surfaces table has the geometry back (tilt 90 of the wall, azimuth 180)
    surfaces = page[page.index('<section id="surfaces">'):page.index('<section id="models">')]
    assert "tilt [°]" in surfaces and "azimuth [°]" in surfaces and "absorptance" in surfaces
    assert "90.00" in surfaces and "180.00" in surfaces
    assert len(embedded_pngs(page)) == 3  # duration, monthly, carpet (no sky spread asked)
