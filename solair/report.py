"""A self-contained HTML report of solair results.

:func:`build_report` turns loaded results (run / compare / batch NetCDF, compare
metrics or batch summary tables) into one HTML page: inline CSS, figures
embedded as base64 PNG ``data:`` URIs, no script and no link to anything outside
the file, so it opens in a browser without network access and can be attached
to a design note. :func:`write_report` reads the files and writes the page
atomically. Every piece of text taken from a result is escaped with
:func:`html.escape`.

Sections (``id`` of each ``<section>``): ``caution``, ``site``, ``surfaces``,
``models``, ``tables``, ``figures``, ``cautions``.
"""

from __future__ import annotations

import datetime as _dt
import os
import re
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd
import xarray as xr

from solair.errors import ConfigurationError
from solair.output import atomic_path
from solair.plots import detect_result_type, draw, figure_png, load_result, shaping
from solair.plots.shaping import design_values_table, monthly_means_table
from solair.provenance import CAUTION as _CAUTION
from solair.report_html import CSS as _CSS
from solair.report_html import esc as _e
from solair.report_html import figure as _img
from solair.report_html import fmt as _fmt
from solair.report_html import is_numeric as _numeric
from solair.report_html import table as _table

__all__ = ["CAUTION", "MODEL_SOURCES", "SECTIONS", "build_report", "write_report",
           "design_values_table", "monthly_means_table"]

#: the caution as a sentence, for the report's text
CAUTION = _CAUTION[:1].upper() + _CAUTION[1:] + "."

#: section id -> heading, in the order of the page
SECTIONS: dict[str, str] = {
    "caution": "Caution",
    "site": "Site and weather",
    "surfaces": "Surfaces and finishes",
    "models": "Models, assumptions and sources",
    "tables": "Key tables",
    "figures": "Figures",
    "cautions": "Cautions and limits",
}

#: model or method name (as it appears in a result's attributes) -> published source.
#: Bibliographic details are as collected in the project's method notes; page
#: ranges and titles not checked against the original are the usual citations
#: recalled from the literature (from memory) and are marked so in docs/figures.md.
MODEL_SOURCES: dict[str, str] = {
    # transposition of solar irradiance to the plane of the surface
    "perez": "Perez R., Ineichen P., Seals R., Michalsky J., Stewart R. (1990). Modeling "
             "daylight availability and irradiance components from direct and global "
             "irradiance. Solar Energy 44(5):271-289. doi:10.1016/0038-092X(90)90055-H",
    "haydavies": "Hay J.E., Davies J.A. (1980). Calculation of the solar radiation incident on "
                 "an inclined surface. Proc. First Canadian Solar Radiation Data Workshop, "
                 "59-72.",
    "isotropic": "Liu B.Y.H., Jordan R.C. (1963). A rational procedure for predicting the "
                 "long-term average performance of flat-plate solar-energy collectors. "
                 "Solar Energy 7(2):53-74 (isotropic sky diffuse).",
    "reindl": "Reindl D.T., Beckman W.A., Duffie J.A. (1990). Evaluation of hourly tilted "
              "surface radiation models. Solar Energy 45(1):9-17.",
    "klucher": "Klucher T.M. (1979). Evaluation of models to predict insolation on tilted "
               "surfaces. Solar Energy 23(2):111-114.",
    # solar position
    "nrel_numpy": "Reda I., Andreas A. (2004). Solar position algorithm for solar radiation "
                  "applications. Solar Energy 76(5):577-589. doi:10.1016/j.solener.2003.12.003",
    "spa_nodes": "Reda I., Andreas A. (2004). Solar position algorithm for solar radiation "
                 "applications. Solar Energy 76(5):577-589. doi:10.1016/j.solener.2003.12.003 "
                 "(evaluated at daily nodes and interpolated).",
    "ephemeris": "Grover Hughes D. (1985). Engineering Astronomy. Sandia National Laboratories "
                 "(the ephemeris solar position of pvlib).",
    "ineichen": "Ineichen P., Perez R. (2002). A new airmass independent formulation for the "
                "Linke turbidity coefficient. Solar Energy 73(3):151-157 (clear-sky "
                "irradiance for the cloud estimate).",
    "spa": "Reda I., Andreas A. (2004). Solar position algorithm for solar radiation "
           "applications. Solar Energy 76(5):577-589. doi:10.1016/j.solener.2003.12.003",
    # sky temperature
    "infrared": "Sky temperature from the weather file's horizontal infrared irradiance L, "
                "T_sky = (L/sigma)^(1/4) (Stefan-Boltzmann law).",
    "file_infrared": "Sky temperature from the weather file's horizontal infrared irradiance L, "
                     "T_sky = (L/sigma)^(1/4) (Stefan-Boltzmann law).",
    "swinbank": "Swinbank W.C. (1963). Long-wave radiation from clear skies. Q. J. R. "
                "Meteorol. Soc. 89:339-348.",
    "brunt": "Brunt D. (1932). Notes on radiation in the atmosphere. Q. J. R. Meteorol. Soc. "
             "58:389-420.",
    "brutsaert": "Brutsaert W. (1975). On a derivable formula for long-wave radiation from "
                 "clear skies. Water Resources Research 11(5):742-744.",
    "idso_jackson": "Idso S.B., Jackson R.D. (1969). Thermal radiation from the atmosphere. "
                    "J. Geophys. Res. 74:5397-5403.",
    "idso": "Idso S.B. (1981). A set of equations for full spectrum and 8- to 14-um and "
            "10.5- to 12.5-um thermal radiation from cloudless skies. Water Resources "
            "Research 17(2):295-304.",
    "berdahl_fromberg": "Berdahl P., Fromberg R. (1982). The thermal radiance of clear skies. "
                        "Solar Energy 29(4):299-314.",
    "berdahl_martin": "Berdahl P., Martin M. (1984). Emissivity of clear skies. Solar Energy "
                      "32(5):663-664.",
    "clark_allen": "Clark G., Allen C. (1978). The estimation of atmospheric radiation for "
                   "clear and cloudy skies. Proc. 2nd National Passive Solar Conference, "
                   "675-678.",
    "sky_cover_clark_allen": "Clark G., Allen C. (1978), Proc. 2nd National Passive Solar "
                             "Conference, 675-678, with the cloud factor of Walton G.N. (1983), "
                             "NBSIR 83-2655, National Bureau of Standards (opaque sky cover).",
    "irradiance_cloud_estimate": "Crawford T.M., Duchon C.E. (1999). An improved "
                                 "parameterization for estimating effective atmospheric "
                                 "emissivity for use in calculating daytime downwelling "
                                 "longwave radiation. J. Appl. Meteorol. 38:474-480 (cloud "
                                 "fraction from measured / clear-sky irradiance).",
    "clear_sky_only": "Clear-sky correlation without cloud correction (no cloud information "
                      "in the weather file for these hours).",
    "prata": "Prata A.J. (1996). A new long-wave formula for estimating downward clear-sky "
             "radiation at the surface. Q. J. R. Meteorol. Soc. 122:1127-1151.",
    "dilley_obrien": "Dilley A.C., O'Brien D.M. (1998). Estimating downward clear sky "
                     "long-wave irradiance at the surface from screen temperature and "
                     "precipitable water. Q. J. R. Meteorol. Soc. 124:1391-1401.",
    "li_jiang_coimbra": "Li M., Jiang Y., Coimbra C.F.M. (2017). On the determination of "
                        "atmospheric longwave irradiance under all-sky conditions. Solar "
                        "Energy 144:40-48.",
    # convection
    "iso6946": "ISO 6946:2017, Building components and building elements - Thermal "
               "resistance and thermal transmittance - Calculation methods, Annex C "
               "(external surface resistance, h_c = 4 + 4v).",
    "iso6946_conventional": "ISO 6946:2017, conventional external surface resistance "
                            "R_se = 0.04 m2K/W (h_e = 25 W/(m2K)).",
    "yazdanian_klems": "Yazdanian M., Klems J.H. (1994). Measurement of the exterior "
                       "convective film coefficient for windows in low-rise buildings. "
                       "ASHRAE Transactions 100(1).",
    "walton": "Walton G.N. (1983). NBSIR 83-2655, National Bureau of Standards; forced "
              "convection after Sparrow E.M., Ramsey J.W., Mass E.A. (1979), J. Heat "
              "Transfer 101:199-204.",
    # long-wave split, psychrometrics, finishes
    "sky_air_split": "McClellan T.M., Pedersen C.O. (1997). Investigation of outside heat "
                     "balance models for use in a heat balance cooling load calculation "
                     "procedure. ASHRAE Transactions 103(2):469-484.",
    "hyland_wexler": "Hyland R.W., Wexler A. (1983). Formulations for the thermodynamic "
                     "properties of the saturated phases of H2O from 173.15 K to 473.15 K. "
                     "ASHRAE Transactions 89(2A):500-519; ASHRAE Handbook - Fundamentals "
                     "(2017), ch. 1.",
    "sri": "ASTM E1980-11 (2019). Standard Practice for Calculating Solar Reflectance Index "
           "of Horizontal and Low-Sloped Opaque Surfaces.",
}

_ALWAYS = [
    ("Sol-air (exterior equivalent) temperature",
     "ASHRAE Handbook - Fundamentals (2017), ch. 18, sol-air temperature; external surface "
     "resistance R_se = 1/h_e as in ISO 6946:2017."),
    ("Psychrometrics",
     "Saturation vapour pressure over water and ice after Hyland R.W., Wexler A. (1983), "
     "ASHRAE Transactions 89(2A):500-519, as in ASHRAE Handbook - Fundamentals (2017), ch. 1."),
    ("Weather data conventions",
     "Hour-ending labels in local standard time; solar position at mid-hour "
     "(see the result's time_convention attribute)."),
]

_CAUTIONS = [
    CAUTION,
    "The sol-air temperature is that of a surface exchanging heat with its surroundings only: "
    "it ignores evaporation (wet surfaces, vegetated roofs), snow cover and shading by "
    "neighbouring buildings.",
    "Sky-temperature correlations differ by several kelvin from each other (see the sky-model "
    "spread), and external convection correlations scatter by tens of percent.",
    "Typical-year weather files describe a typical year, not extremes; design values from "
    "them are percentiles of that year.",
    "Hours below the dew point computed from a massless surface are an upper bound for heavy "
    "constructions and a fair estimate for lightweight claddings.",
]

_WEATHER_VARS = ("temp_air", "temp_dew", "relative_humidity", "pressure", "wind_speed",
                 "temp_sky")
_PROVENANCE_SKIP = re.compile(r"^(_|history$|Conventions$)")


def _unit(da: xr.DataArray) -> str:
    from solair.plots.figures import unit_text

    return unit_text(da)


# --------------------------------------------------------------------------- sections

def _site_section(name: str, ds: xr.Dataset) -> str:
    a = ds.attrs
    labels = shaping.local_labels(ds)
    facts = [
        ("Site", a.get("site_name", "")), ("Latitude [°]", a.get("latitude", "")),
        ("Longitude [°, east positive]", a.get("longitude", "")),
        ("Altitude [m]", a.get("altitude", "")),
        ("UTC offset of local standard time [h]", a.get("utc_offset_hours", "")),
        ("Weather file", a.get("weather_file", "")),
        ("Weather format", a.get("source_format", a.get("weather_format", ""))),
        ("Hours", f"{ds.sizes['time']}, {labels[0]:%Y-%m-%d %H:%M} to "
                  f"{labels[-1]:%Y-%m-%d %H:%M} (hour ending, local standard time)"),
    ]
    rows = "".join(f'<tr><th class="t">{_e(k)}</th><td class="t">{_e(v)}</td></tr>'
                   for k, v in facts if v != "")
    out = [f"<h3>{_e(name)}</h3><table><tbody>{rows}</tbody></table>"]
    stats = {}
    for var in _WEATHER_VARS:
        if var in ds.data_vars and ds[var].dims == ("time",):
            v = np.asarray(ds[var].values, dtype=float)
            label = f"{var} [{_unit(ds[var])}]"
            stats[label] = {"min": np.nanmin(v), "mean": np.nanmean(v), "max": np.nanmax(v)}
    if stats:
        frame = pd.DataFrame.from_dict(stats, orient="index")
        frame.index.name = "variable"
        out.append(_table(frame, caption="Weather over the year (hourly values)"))
    if "sky_source" in ds.data_vars:
        codes, counts = np.unique(np.asarray(ds["sky_source"].values), return_counts=True)
        names = _sky_source_names()
        frame = pd.DataFrame({"source": [names.get(int(c), str(int(c))) for c in codes],
                              "hours": counts.astype(int)})
        out.append(_table(frame, index=False, caption="Source of the sky temperature"))
    return "".join(out)


def _sky_source_names() -> dict[int, str]:
    try:
        from solair.sky import SKY_SOURCES
    except ImportError:  # the sky module is optional for reading a result
        return {}
    return {int(k): str(v) for k, v in SKY_SOURCES.items()}


def _clear_sky_names() -> list[str]:
    try:
        from solair.sky import CLEAR_SKY_MODELS
    except ImportError:
        return []
    return list(CLEAR_SKY_MODELS)


def _surfaces_section(name: str, ds: xr.Dataset) -> str:
    frame = pd.DataFrame(index=pd.Index([str(s) for s in ds["surface"].values], name="surface"))
    for coord, label in (("surface_tilt", "tilt [°]"), ("surface_azimuth", "azimuth [°]")):
        if coord in ds.coords:
            frame[label] = np.asarray(ds[coord].values, dtype=float)
    for coord in ("absorptance", "emissivity"):
        if coord in ds.coords and ds[coord].dims == ("surface",):
            frame[coord] = np.asarray(ds[coord].values, dtype=float)
    if "poa_global" in ds.data_vars:
        poa = ds["poa_global"].sum("time") / 1000.0
        frame["solar irradiation [kWh/m² per year]"] = np.asarray(poa.values, dtype=float)
    out = [f"<h3>{_e(name)}</h3>", _table(frame, digits=2)]
    if "finish" in ds.dims:
        fin = pd.DataFrame(index=pd.Index([str(f) for f in ds["finish"].values], name="finish"))
        for coord in ("absorptance", "emissivity", "sri"):
            if coord in ds.coords and ds[coord].dims == ("finish",):
                fin[coord] = np.asarray(ds[coord].values, dtype=float)
        out.append(_table(fin, digits=2, caption="Finishes"))
    build = [(label, ds.attrs[key]) for key, label in _CONSTRUCTION_ATTRS if key in ds.attrs]
    if build:
        rows = "".join(f'<tr><th class="t">{_e(k)}</th><td class="t">{_e(_fmt(v, 2))}</td></tr>'
                       for k, v in build)
        out.append(f"<table><caption>Construction behind the finish</caption><tbody>{rows}"
                   "</tbody></table>")
    return "".join(out)


_CONSTRUCTION_ATTRS = [("construction", "Construction"), ("construction_layers", "Layers"),
                       ("construction_resistance", "Thermal resistance of the layers [m²·K/W]"),
                       ("temp_indoor", "Indoor air temperature [°C]"),
                       ("response_model", "Surface response model"),
                       ("finish_sources", "Sources of the finish properties")]


_OFF = {"", "0", "false", "no", "none", "off", "0.0"}


def _model_tokens(attrs: dict) -> list[str]:
    """Model names in a result's attributes: values naming a model, or switches that are on."""
    found = []
    for key, value in attrs.items():
        words = re.split(r"[\s,;:=/()]+", str(value).lower())
        tokens = [w for w in words if w in MODEL_SOURCES]
        if str(key).lower() in MODEL_SOURCES and str(value).strip().lower() not in _OFF:
            tokens.append(str(key).lower())
        for token in tokens:
            if token not in found:
                found.append(token)
    return found


def _models_section(results: Sequence[tuple[str, xr.Dataset | pd.DataFrame]]) -> str:
    out = []
    tokens: list[str] = []
    for name, res in results:
        if not isinstance(res, xr.Dataset):
            continue
        rows = "".join(
            f'<tr><th class="t">{_e(k)}</th><td class="t">{_e(v)}</td></tr>'
            for k, v in res.attrs.items() if not _PROVENANCE_SKIP.match(str(k)))
        out.append(f"<h3>{_e(name)}: settings and provenance</h3><table><tbody>{rows}"
                   "</tbody></table>")
        for tok in _model_tokens(res.attrs):
            if tok not in tokens:
                tokens.append(tok)
        if "sri" in res.coords and "sri" not in tokens:
            tokens.append("sri")
        if "temp_sky_min" in res.data_vars:  # the spread runs every clear-sky correlation
            for tok in _clear_sky_names():
                if tok in MODEL_SOURCES and tok not in tokens:
                    tokens.append(tok)
        if "sky_source" in res.data_vars:
            names = _sky_source_names()
            for code in np.unique(np.asarray(res["sky_source"].values)):
                tok = names.get(int(code), "")
                if tok in MODEL_SOURCES and tok not in tokens:
                    tokens.append(tok)
    items = [f"<li><b>{_e(what)}</b>: {_e(src)}</li>" for what, src in _ALWAYS]
    seen = set()
    for tok in tokens:
        text = MODEL_SOURCES[tok]
        if text in seen:
            continue
        seen.add(text)
        items.append(f"<li><b>{_e(tok)}</b>: {_e(text)}</li>")
    out.append("<h3>Published sources of the models used</h3>"
               f'<ol class="sources">{"".join(items)}</ol>')
    return "".join(out)


_KEY_METRICS = ["absorptance", "emissivity", "sri", "temp_surface_max", "temp_surface_p99",
                "hours_above_threshold", "dew_hours", "frost_hours", "freeze_thaw_cycles",
                "heat_gain", "heat_loss", "condensate_total"]


def _metrics_table(frame: pd.DataFrame, caption: str) -> str:
    """Key columns of a compare metrics table / batch summary, with their definitions."""
    ids = [c for c in ("climate", "surface", "finish") if c in frame.columns]
    keys = [c for c in _KEY_METRICS if c in frame.columns]
    if not keys:
        return _table(frame, index=False, digits=2, caption=caption)
    shown = frame[ids + keys]
    defs = []
    for c in keys:
        label, unit = shaping.metric_label(c)
        defs.append(f"<li><b>{_e(c)}</b>: {_e(label)}" + (f" [{_e(unit)}]" if unit else "")
                    + "</li>")
    rest = [c for c in frame.columns if c not in ids + keys]
    more = (f'<p class="meta">Further columns in the file: {_e(", ".join(rest))}.</p>'
            if rest else "")
    return (_table(shown, index=False, digits=2, caption=caption)
            + f'<ul class="meta">{"".join(defs)}</ul>' + more)


_SUMMARY_METRICS = ("peak_temperature", "hours_below_dew_point", "heat_gain")


def _summary_tables(frame: pd.DataFrame) -> str:
    """Portfolio summary as climate x surface tables of the key metrics, one per finish."""
    table = shaping.metrics_from_table(frame)
    metrics = [m for m in _SUMMARY_METRICS if m in table.columns and table[m].notna().any()]
    if not metrics:
        return _metrics_table(frame, "Portfolio summary")
    finishes = list(dict.fromkeys(table["finish"])) if "finish" in table.columns else [None]
    out = ['<p class="meta">Key metrics per climate (rows) and surface (columns); the summary '
           "file holds every metric per climate, surface and finish.</p>"]
    for metric in metrics:
        label, unit = shaping.metric_label(metric)
        for fin in finishes:
            grid = shaping.portfolio_grid(table, metric, finish=fin)
            grid.index.name = "climate"
            grid.columns = [str(c) for c in grid.columns]
            caption = f"{label}" + (f" [{unit}]" if unit else "") + (f", finish {fin}"
                                                                      if fin else "")
            out.append(_table(grid, digits=0 if metric != "heat_gain" else 1, caption=caption))
    return "".join(out)


def _tables_section(results: Sequence[tuple[str, xr.Dataset | pd.DataFrame]]) -> str:
    out = []
    has_table = any(detect_result_type(r) == "metrics" for _, r in results)
    for name, res in results:
        rtype = detect_result_type(res)
        if isinstance(res, xr.Dataset):
            finish = shaping.most_absorbing_finish(res)
            var = shaping.main_variable(res)
            what = "sol-air" if var == "temp_sol_air" else "surface"
            fin = f", finish {finish}" if finish else ""
            out.append(f"<h3>{_e(name)}</h3>")
            air = "air and " if "temp_air" in res.data_vars else ""
            out.append(_table(shaping.monthly_means_table(res, finish=finish),
                              caption=f"Monthly mean {air}{what} temperature [°C]{fin} "
                                      "(local standard time)"))
            out.append(_table(shaping.design_values_table(res, finish=finish),
                              caption=f"Design values of the {what} temperature [°C]{fin}: "
                                      "annual percentiles of the hourly values"))
            if "finish" in res.dims and not has_table:
                metrics = shaping.finish_metrics(res)
                out.append(_table(metrics, index=False,
                                  caption="Finish metrics recomputed from the hourly result: "
                                          "peak [°C], hours below the air dew point [h], "
                                          "heat gain [kWh/m²]"))
        else:
            out.append(f"<h3>{_e(name)}</h3>")
            if rtype == "summary":
                out.append(_summary_tables(res))
            else:
                out.append(_metrics_table(res, "Finish metrics"))
    return "".join(out)


def _report_surfaces(ds: xr.Dataset) -> list[str]:
    """The most horizontal surface and the vertical one facing the equator (for carpets)."""
    names = [str(s) for s in ds["surface"].values]
    if "surface_tilt" not in ds.coords or "surface_azimuth" not in ds.coords:
        return names[:2]
    tilt = np.asarray(ds["surface_tilt"].values, dtype=float)
    azim = np.asarray(ds["surface_azimuth"].values, dtype=float)
    chosen = [names[int(np.argmin(tilt))]]
    equator = 0.0 if float(ds.attrs.get("latitude", 1.0)) < 0 else 180.0
    vertical = np.abs(tilt - 90.0) < 1.0
    if vertical.any():
        gap = np.abs((azim - equator + 180.0) % 360.0 - 180.0)
        gap[~vertical] = np.inf
        pick = names[int(np.argmin(gap))]
        if pick not in chosen:
            chosen.append(pick)
    return chosen


def _figures_for(name: str, res: xr.Dataset | pd.DataFrame, dpi: float,
                 has_table: bool = False) -> list[str]:
    rtype = detect_result_type(res)
    out = []
    plans: list[tuple[str, dict, str]] = []
    if isinstance(res, xr.Dataset):
        site = res.attrs.get("site_name", name)
        finish = shaping.most_absorbing_finish(res)
        var = "temp_surface" if "temp_surface" in res.data_vars else "temp_sol_air"
        what = "surface" if var == "temp_surface" else "sol-air"
        fin = f", finish {finish}" if finish else ""
        opts = {"variable": var, "finish": finish}
        plans += [("duration", opts, f"{site}: duration curves of the {what} temperature{fin}"),
                  ("monthly", opts, f"{site}: monthly mean and 10-90 % band of the {what} "
                                    f"temperature{fin}")]
        carpet = {**opts, "surfaces": _report_surfaces(res)}
        if "temp_air" in res.data_vars:
            plans.append(("carpet", {**carpet, "minus_air": True},
                          f"{site}: {what} minus air temperature, day of year x hour{fin}"))
        else:
            plans.append(("carpet", carpet, f"{site}: {what} temperature, day of year x hour{fin}"))
        if "temp_sky_min" in res.data_vars and "temp_sol_air_min" in res.data_vars:
            plans.append(("sky-spread", {"surfaces": _report_surfaces(res)[:2], "finish": finish},
                          f"{site}: spread over the sky-temperature models"))
        if "finish" in res.dims and not has_table:
            plans.append(("finishes", {}, f"{site}: finish comparison"))
    elif rtype == "metrics":
        plans.append(("finishes", {}, f"{name}: finish comparison"))
    else:
        numeric = [c for c in res.columns if c not in ("climate", "surface", "finish")
                   and _numeric(res[c])]
        finishes = list(dict.fromkeys(res["finish"])) if "finish" in res.columns else [None]
        for metric in numeric[:2]:
            for fin in finishes[:3]:
                plans.append(("portfolio", {"metric": metric, "finish": fin},
                              f"{name}: {metric} per climate and surface"
                              + (f", finish {fin}" if fin else "")))
    for kind, opts, caption in plans:
        fig = draw(res, kind, **opts)
        out.append(_img(figure_png(fig, dpi=dpi), caption))
    return out


def _distinct_sites(datasets: Sequence[tuple[str, xr.Dataset]]) -> list[tuple[str, xr.Dataset]]:
    """One dataset per (site, weather file): results of one weather file share a summary."""
    seen, out = set(), []
    for name, ds in datasets:
        key = (str(ds.attrs.get("site_name", name)), str(ds.attrs.get("weather_file", name)))
        if key not in seen:
            seen.add(key)
            out.append((name, ds))
    return out


def build_report(results: Sequence[tuple[str, xr.Dataset | pd.DataFrame]], *,
                 title: str | None = None, dpi: float = 110) -> str:
    """The report as one self-contained HTML page.

    Parameters
    ----------
    results : sequence of (name, result)
        Loaded results with the name shown for each (usually the file name):
        datasets of run / compare / batch, compare metrics or batch summary tables.
    title : str, optional
        Page title (default: the site names).
    dpi : float, default 110
        Resolution of the embedded figures (7.5 in wide: 825 px at 110 dpi).

    Returns
    -------
    str
        The HTML text. Figures are ``data:image/png;base64`` URIs; there is no
        script and no reference outside the page.
    """
    if not results:
        raise ConfigurationError("report: no result given")
    datasets = [(n, r) for n, r in results if isinstance(r, xr.Dataset)]
    has_table = any(detect_result_type(r) == "metrics" for _, r in results)
    sites = list(dict.fromkeys(str(r.attrs.get("site_name", n)) for n, r in datasets))
    title = title or ("solair report: " + (", ".join(sites) if sites else "portfolio"))
    stamp = _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%d %H:%M UTC")
    version = next((str(r.attrs["solair_version"]) for _, r in datasets
                    if "solair_version" in r.attrs), "")
    body: dict[str, str] = {
        "caution": f'<p class="caution">{_e(CAUTION)}</p>',
        "site": "".join(_site_section(n, r) for n, r in _distinct_sites(datasets))
        or "<p>No hourly result given (tables only).</p>",
        "surfaces": "".join(_surfaces_section(n, r) for n, r in datasets)
        or "<p>No hourly result given (tables only).</p>",
        "models": _models_section(results),
        "tables": _tables_section(results),
        "figures": "".join(f"<h3>{_e(n)}</h3>" + "".join(_figures_for(n, r, dpi, has_table))
                           for n, r in results),
        "cautions": "<ul>" + "".join(f"<li>{_e(c)}</li>" for c in _CAUTIONS) + "</ul>",
    }
    sources = ", ".join(_e(n) for n, _ in results)
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        f"<title>{_e(title)}</title><style>{_CSS}</style></head><body>",
        f"<h1>{_e(title)}</h1>",
        f'<p class="meta">Results: {sources}. Written {_e(stamp)}'
        + (f" by solair {_e(version)}" if version else "") + ".</p>",
    ]
    for key, heading in SECTIONS.items():
        parts.append(f'<section id="{key}"><h2>{_e(heading)}</h2>{body[key]}</section>')
    parts.append("</body></html>")
    return "\n".join(parts)


def write_report(paths: Sequence[str | os.PathLike[str]], output: str | os.PathLike[str], *,
                 title: str | None = None, dpi: float = 110) -> Path:
    """Read result files and write the HTML report atomically.

    Raises
    ------
    ConfigurationError
        An unreadable result, or an output that is not ``.html``/``.htm`` or whose
        folder does not exist.
    """
    output = Path(output)
    if output.suffix.lower() not in (".html", ".htm"):
        raise ConfigurationError(f"{output}: report suffix {output.suffix!r} is not one of "
                                 "['.html', '.htm']")
    folder = output.parent if str(output.parent) else Path(".")
    if not folder.is_dir():
        raise ConfigurationError(f"{output}: folder {folder} does not exist")
    results = [(Path(p).name, load_result(p)) for p in paths]
    text = build_report(results, title=title, dpi=dpi)
    with atomic_path(output) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return output
