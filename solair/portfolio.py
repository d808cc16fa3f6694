"""Portfolio files: many climates x surfaces x finishes in one TOML file.

A portfolio file is read with the standard library's :mod:`tomllib` and
validated with pydantic v2 (``extra="forbid"`` everywhere, so a misspelt key is
an error, never silently ignored). Every error is raised as one
:class:`solair.errors.ConfigurationError` whose message names the key path
(list indices mapped back to the entry's label or name, e.g.
``climates[2] ("north_site").path``), the value given and what is allowed.

Paths in the file are relative to the folder of the portfolio file. Two tokens
are expanded in climate paths before globbing:

``{pvlib_data}``
    the ``data`` folder of the installed pvlib (real TMY3/TMY2 files ship
    there: ``723170TYA.CSV`` Greensboro NC, ``703165TY.csv`` Sand Point AK,
    ``12839.tm2`` Miami FL);
``{portfolio_dir}``
    the folder of the portfolio file (the default base of relative paths).

Example::

    name = "depots"
    output = "results"

    [[climates]]
    path = "weather/*.epw"
    label = "current"

    [surfaces]
    set = "default"

    [[finishes]]
    name = "client_grey"
    absorptance = 0.65
    emissivity = 0.9

:func:`load_portfolio` returns a :class:`Portfolio` (the validated file) and
:meth:`Portfolio.resolve` turns it into the plain, JSON-serialisable settings
that travel to the workers (:class:`ResolvedPortfolio`).
"""

from __future__ import annotations

import dataclasses
import glob
import hashlib
import json
import os
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator

from solair.errors import ConfigurationError
from solair.provenance import solair_version

__all__ = [
    "PATH_TOKENS",
    "SURFACE_SETS",
    "ClimateEntry",
    "FinishEntry",
    "ModelChoices",
    "Portfolio",
    "ResolvedClimate",
    "ResolvedPortfolio",
    "SurfaceEntry",
    "config_hash",
    "expand_path_tokens",
    "load_portfolio",
]

#: tokens expanded in climate paths, with what they stand for
PATH_TOKENS = {
    "pvlib_data": "the data folder of the installed pvlib (pvlib.__path__[0] + '/data')",
    "portfolio_dir": "the folder that holds the portfolio file",
}

#: named surface sets (see :func:`_surface_set`)
SURFACE_SETS = {
    "default": "the engine's default set: the roof and 8 vertical facades N, NE, ... NW",
    "roof": "the horizontal roof only",
    "facades": "the 8 vertical facades N, NE, ... NW",
    "orientations_17": "the horizontal plus tilts 30 and 90 degrees at 8 azimuths (17 surfaces)",
    "none": "no preset surface (only the [[surfaces.custom]] entries)",
}

_LABEL_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.\-]*$")
_AZIMUTHS = {"N": 0.0, "NE": 45.0, "E": 90.0, "SE": 135.0, "S": 180.0, "SW": 225.0,
             "W": 270.0, "NW": 315.0}


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=False, frozen=True)


class ClimateEntry(_Strict):
    """One weather file, or a glob pattern of weather files, with an optional label."""

    path: str = Field(min_length=1, description="weather file or glob pattern")
    label: str | None = Field(default=None, description="name of the climate in the outputs")
    utc_offset: float | None = Field(
        default=None, ge=-12.0, le=14.0,
        description="[h] UTC offset of the file's time stamps, overriding its header")

    @field_validator("label")
    @classmethod
    def _label_is_safe(cls, value: str | None) -> str | None:
        if value is not None and not _LABEL_RE.match(value):
            raise ValueError(
                "a label starts with a letter or digit and holds only letters, digits, "
                "'_', '.' and '-' (it names the output file)"
            )
        return value


class SurfaceEntry(_Strict):
    """One surface given inline."""

    name: str = Field(min_length=1)
    surface_tilt: float = Field(ge=0.0, le=180.0, description="[deg] 0 = facing up")
    surface_azimuth: float = Field(ge=0.0, lt=360.0, description="[deg] clockwise from north")

    @field_validator("name")
    @classmethod
    def _name_is_safe(cls, value: str) -> str:
        if not _LABEL_RE.match(value):
            raise ValueError("a surface name holds only letters, digits, '_', '.' and '-'")
        return value


class SurfaceChoice(_Strict):
    """The surfaces of every climate: a named set plus inline surfaces."""

    set: str = "default"
    custom: list[SurfaceEntry] = Field(default_factory=list)

    @field_validator("set")
    @classmethod
    def _known_set(cls, value: str) -> str:
        if value not in SURFACE_SETS:
            raise ValueError(f"surface set {value!r} is not one of {sorted(SURFACE_SETS)}")
        return value


class FinishEntry(_Strict):
    """A finish: a catalogue name, or a name with its own absorptance and emissivity."""

    name: str = Field(min_length=1)
    absorptance: float | None = Field(default=None, ge=0.0, le=1.0, description="solar [-]")
    emissivity: float | None = Field(default=None, ge=0.0, le=1.0, description="thermal [-]")


class ModelChoices(_Strict):
    """Model choices passed to the finish comparison; a key left out takes its default."""

    sky: str | None = None
    transposition: str | None = None
    convection: str | None = None
    linearisation: str | None = None
    albedo: float | None = Field(default=None, ge=0.0, le=1.0)
    response: str | None = None
    exterior: str | None = None
    dew: bool | None = None
    substeps: int | None = Field(default=None, ge=1, le=120)
    temp_indoor: float | None = Field(default=None, ge=-30.0, le=60.0, description="[degC]")


class MetricChoice(_Strict):
    """Which metric columns to keep in the summary table (all when empty), and the threshold."""

    keep: list[str] = Field(default_factory=list)
    threshold: float | None = Field(default=None, ge=-50.0, le=150.0,
                                    description="[degC] for hours_above_threshold")


class HourlyChoice(_Strict):
    """What the per-climate NetCDF files keep: the variables (all when empty) and the precision."""

    variables: list[str] = Field(default_factory=list)
    dtype: str = "float64"

    @field_validator("dtype")
    @classmethod
    def _known_dtype(cls, value: str) -> str:
        if value not in ("float64", "float32"):
            raise ValueError(f"dtype {value!r} is not one of ['float32', 'float64']")
        return value


class Portfolio(_Strict):
    """A validated portfolio file (see the module docstring for the layout)."""

    name: str = "portfolio"
    output: str = "results"
    climates: list[ClimateEntry] = Field(min_length=1)
    surfaces: SurfaceChoice = Field(default_factory=SurfaceChoice)
    finishes: list[FinishEntry] = Field(min_length=1)
    construction: str | None = None
    models: ModelChoices = Field(default_factory=ModelChoices)
    metrics: MetricChoice = Field(default_factory=MetricChoice)
    hourly: HourlyChoice = Field(default_factory=HourlyChoice)
    source: str = Field(default="<memory>", exclude=True, description="the file it came from")

    def resolve(self, output: str | os.PathLike | None = None) -> ResolvedPortfolio:
        """Expand globs, look finishes up, check model names: the settings a run uses.

        Raises
        ------
        ConfigurationError
            A missing file, an empty glob, duplicate labels, an unknown finish,
            construction or model name; the message names the key path.
        """
        return _resolve(self, output)


@dataclass(frozen=True)
class ResolvedClimate:
    """One task of a batch: a weather file and the name of its outputs."""

    label: str
    path: str
    entry: str  # key path of the portfolio entry it came from, for messages
    utc_offset: float | None = None


@dataclass(frozen=True)
class ResolvedPortfolio:
    """The plain settings of a run. ``settings`` is JSON-serialisable and travels to workers."""

    name: str
    source: str
    output_dir: str
    climates: tuple[ResolvedClimate, ...]
    settings: dict[str, Any] = field(default_factory=dict)

    @property
    def config_hash(self) -> str:
        """sha256 of the canonical JSON of the settings that affect results."""
        return config_hash(self.settings)

    def task_config_hash(self, climate: ResolvedClimate) -> str:
        """The configuration hash of one climate: the settings plus its own options."""
        if climate.utc_offset is None:
            return self.config_hash
        return config_hash({"settings": self.config_hash, "utc_offset": climate.utc_offset})


def config_hash(settings: dict[str, Any]) -> str:
    """sha256 (hex) of the canonical JSON of ``settings`` (sorted keys, no spaces)."""
    text = json.dumps(settings, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def expand_path_tokens(path: str, base: Path) -> str:
    """Expand ``{pvlib_data}``, ``{portfolio_dir}``, ``~``; make ``path`` absolute on ``base``."""
    for token in re.findall(r"\{([^{}]*)\}", path):
        if token not in PATH_TOKENS:
            raise ValueError(f"unknown token {{{token}}}; allowed tokens: "
                             + ", ".join(f"{{{t}}}" for t in sorted(PATH_TOKENS)))
    if "{pvlib_data}" in path:
        import pvlib

        path = path.replace("{pvlib_data}", os.path.join(pvlib.__path__[0], "data"))
    path = path.replace("{portfolio_dir}", str(base))
    path = os.path.expanduser(path)
    if not os.path.isabs(path):
        path = os.path.join(str(base), path)
    return os.path.normpath(path)


def load_portfolio(path: str | os.PathLike) -> Portfolio:
    """Read and validate a portfolio TOML file.

    Parameters
    ----------
    path : path-like
        The portfolio file.

    Returns
    -------
    Portfolio

    Raises
    ------
    ConfigurationError
        The file is missing, is not TOML, or fails the schema; the message names
        the file, the key path, the value given and what is allowed.
    """
    path = Path(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise ConfigurationError(
            f"{path}: cannot read the portfolio file ({exc.strerror})") from None
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError:
        raise ConfigurationError(f"{path}: the portfolio file is not UTF-8 text") from None
    except tomllib.TOMLDecodeError as exc:
        raise ConfigurationError(f"{path}: not valid TOML: {exc}") from None
    return portfolio_from_dict(data, source=str(path.resolve()))


def portfolio_from_dict(data: dict[str, Any], source: str = "<memory>") -> Portfolio:
    """Validate an already parsed portfolio (e.g. a dict built in Python)."""
    if "source" in data:
        raise ConfigurationError(
            f"{Path(source).name}: unknown key 'source'; allowed keys: {_allowed_keys(Portfolio)}")
    try:
        return Portfolio.model_validate({**data, "source": source})
    except ValidationError as exc:
        raise ConfigurationError(_format_errors(exc, data, Path(source).name)) from None


# --------------------------------------------------------------------------- errors

def _allowed_keys(model: type[BaseModel]) -> list[str]:
    return sorted(name for name, f in model.model_fields.items() if not f.exclude)


def _model_at(loc: tuple) -> type[BaseModel] | None:
    """The pydantic model class that holds the key at ``loc`` (for unknown-key messages)."""
    model: Any = Portfolio
    for part in loc[:-1]:
        if isinstance(part, int):
            continue
        fld = model.model_fields.get(part) if isinstance(model, type) else None
        if fld is None:
            return None
        ann = fld.annotation
        args = getattr(ann, "__args__", ())
        candidates = [ann, *args]
        nxt = None
        for cand in candidates:
            if isinstance(cand, type) and issubclass(cand, BaseModel):
                nxt = cand
                break
            for sub in getattr(cand, "__args__", ()):
                if isinstance(sub, type) and issubclass(sub, BaseModel):
                    nxt = sub
        if nxt is None:
            return None
        model = nxt
    return model if isinstance(model, type) else None


def _entry_name(item: Any) -> str | None:
    if isinstance(item, dict):
        for key in ("label", "name", "path"):
            if isinstance(item.get(key), str):
                return item[key]
    return None


def key_path(loc: tuple, data: Any) -> str:
    """Render a pydantic ``loc`` as ``climates[2] ("north_site").path``."""
    out = ""
    node = data
    for part in loc:
        if isinstance(part, int):
            name = None
            if isinstance(node, list) and 0 <= part < len(node):
                name = _entry_name(node[part])
                node = node[part]
            else:
                node = None
            out += f"[{part}]" + (f" ({name!r})".replace("'", '"') if name else "")
        else:
            out += ("." if out else "") + str(part)
            node = node.get(part) if isinstance(node, dict) else None
    return out or "(top level)"


def _format_errors(exc: ValidationError, data: dict, filename: str) -> str:
    parts = []
    for err in exc.errors(include_url=False):
        loc = tuple(err["loc"])
        where = key_path(loc, data)
        kind = err["type"]
        if kind == "extra_forbidden":
            model = _model_at(loc)
            allowed = _allowed_keys(model) if model is not None else "see docs"
            parts.append(f"{where} = {err.get('input')!r}: unknown key; allowed keys: {allowed}")
            continue
        if kind == "missing":
            parts.append(f"{where}: required key is missing")
            continue
        msg = err["msg"]
        if msg.startswith("Value error, "):
            msg = msg[len("Value error, "):]
        given = err.get("input")
        parts.append(f"{where} = {given!r}: {msg[0].lower() + msg[1:] if msg else msg}")
    return f"{filename}: " + "; ".join(parts)


# --------------------------------------------------------------------------- resolution

def _resolve(pf: Portfolio, output: str | os.PathLike | None) -> ResolvedPortfolio:
    fname = Path(pf.source).name
    base = Path(pf.source).parent if pf.source != "<memory>" else Path.cwd()
    raw_climates = [c.model_dump() for c in pf.climates]

    def where(kind: str, i: int, key: str, name: str | None) -> str:
        return f"{fname}: {kind}[{i}]" + (f' ("{name}")' if name else "") + f".{key}"

    climates: list[ResolvedClimate] = []
    seen: dict[str, str] = {}
    for i, entry in enumerate(pf.climates):
        name = _entry_name(raw_climates[i])
        try:
            pattern = expand_path_tokens(entry.path, base)
        except ValueError as exc:
            raise ConfigurationError(
                f"{where('climates', i, 'path', name)} = {entry.path!r}: {exc}") from None
        if glob.has_magic(pattern):
            files = sorted(p for p in glob.glob(pattern, recursive=True) if os.path.isfile(p))
            if not files:
                raise ConfigurationError(
                    f"{where('climates', i, 'path', name)} = {entry.path!r}: the glob pattern "
                    f"matches no file (looked for {pattern})")
        else:
            if not os.path.isfile(pattern):
                raise ConfigurationError(
                    f"{where('climates', i, 'path', name)} = {entry.path!r}: no such file "
                    f"({pattern})")
            files = [pattern]
        for f in files:
            stem = Path(f).stem
            if entry.label is None:
                label = _safe_label(stem)
            elif len(files) == 1 and not glob.has_magic(pattern):
                label = entry.label
            else:
                label = f"{entry.label}-{_safe_label(stem)}"
            entry_key = f"climates[{i}]" + (f' ("{name}")' if name else "")
            if label in seen:
                raise ConfigurationError(
                    f"{fname}: {entry_key}: the climate label {label!r} ({f}) is already used by "
                    f"{seen[label]}; give the entries distinct labels")
            seen[label] = f"{entry_key} ({f})"
            climates.append(ResolvedClimate(label=label, path=f, entry=entry_key,
                                            utc_offset=entry.utc_offset))

    settings = {
        "surfaces": _resolve_surfaces(pf, fname),
        "finishes": _resolve_finishes(pf, fname),
        "construction": _resolve_construction(pf, fname, base),
        "models": _resolve_models(pf, fname),
        "metrics": _resolve_metrics(pf, fname),
        "hourly": _resolve_hourly(pf, fname),
        "solair_version": solair_version(),
    }
    out = Path(output) if output is not None else Path(pf.output)
    if not out.is_absolute():
        out = (Path.cwd() if output is not None else base) / out
    return ResolvedPortfolio(name=pf.name, source=pf.source, output_dir=os.path.normpath(out),
                             climates=tuple(climates), settings=settings)


def _safe_label(stem: str) -> str:
    label = re.sub(r"[^A-Za-z0-9_.\-]+", "_", stem).strip("_.-")
    return label or "climate"


def _surface_set(name: str) -> list[dict[str, Any]]:
    if name == "none":
        return []
    if name == "orientations_17":
        out = [{"name": "roof", "surface_tilt": 0.0, "surface_azimuth": 180.0}]
        for tilt in (30.0, 90.0):
            for key, az in _AZIMUTHS.items():
                out.append({"name": f"tilt{int(tilt)}_{key}", "surface_tilt": tilt,
                            "surface_azimuth": az})
        return out
    from solair.surfaces import default_surfaces

    out = [{"name": s.name, "surface_tilt": float(s.surface_tilt),
            "surface_azimuth": float(s.surface_azimuth)} for s in default_surfaces()]
    if name == "roof":
        out = [s for s in out if s["surface_tilt"] < 45.0]
    elif name == "facades":
        out = [s for s in out if s["surface_tilt"] >= 45.0]
    return out


def _resolve_surfaces(pf: Portfolio, fname: str) -> list[dict[str, Any]]:
    surfaces = _surface_set(pf.surfaces.set)
    names = {s["name"] for s in surfaces}
    for i, s in enumerate(pf.surfaces.custom):
        if s.name in names:
            raise ConfigurationError(
                f'{fname}: surfaces.custom[{i}] ("{s.name}").name = {s.name!r}: the name is '
                f"already used (surface set {pf.surfaces.set!r} holds {sorted(names)})")
        names.add(s.name)
        surfaces.append(s.model_dump())
    if not surfaces:
        raise ConfigurationError(
            f"{fname}: surfaces: no surface to compute (set = 'none' and no [[surfaces.custom]])")
    return surfaces


def _resolve_finishes(pf: Portfolio, fname: str) -> list[dict[str, Any]]:
    from solair.finishes import Finish, available_finishes, get_finish

    out: list[dict[str, Any]] = []
    seen: set[str] = set()
    for i, f in enumerate(pf.finishes):
        here = f'{fname}: finishes[{i}] ("{f.name}")'
        if f.name in seen:
            raise ConfigurationError(f"{here}.name = {f.name!r}: the finish is listed twice")
        seen.add(f.name)
        if f.absorptance is None and f.emissivity is None:
            if f.name not in available_finishes():
                raise ConfigurationError(
                    f"{here}.name = {f.name!r}: not a catalogue finish; give absorptance and "
                    f"emissivity inline or use one of {available_finishes()}")
            finish = get_finish(f.name)
        elif f.absorptance is None or f.emissivity is None:
            missing = "absorptance" if f.absorptance is None else "emissivity"
            raise ConfigurationError(
                f"{here}.{missing}: required key is missing (an inline finish gives both "
                f"absorptance and emissivity; a catalogue finish gives neither)")
        else:
            try:
                finish = Finish(name=f.name, absorptance=f.absorptance, emissivity=f.emissivity,
                                label=f.name, source="given inline in the portfolio file")
            except ConfigurationError as exc:
                raise ConfigurationError(f"{here}: {exc}") from None
        out.append(dataclasses.asdict(finish))
    return out


def _resolve_construction(pf: Portfolio, fname: str, base: Path) -> dict[str, Any] | None:
    """The construction as a plain dict: a library name, ``FILE.toml`` or ``FILE.toml:NAME``."""
    if pf.construction is None:
        return None
    from solair.constructions import resolve_construction

    spec = pf.construction
    if ".toml" in spec:
        path, sep, name = spec.partition(".toml")
        spec = str(Path(expand_path_tokens(path + ".toml", base))) + name
    try:
        construction = resolve_construction(spec)
    except ConfigurationError as exc:
        raise ConfigurationError(f"{fname}: construction = {pf.construction!r}: {exc}") from None
    return dataclasses.asdict(construction)


def _resolve_models(pf: Portfolio, fname: str) -> dict[str, Any]:
    m = pf.models.model_dump()
    for key, allowed in _allowed_models().items():
        value = m.get(key)
        if value is not None and value not in allowed:
            raise ConfigurationError(
                f"{fname}: models.{key} = {value!r}: not one of {sorted(allowed)}")
    if m.get("response") in ("steady", "transient") and pf.construction is None:
        raise ConfigurationError(
            f"{fname}: models.response = {m['response']!r}: needs a construction; give "
            f"`construction = ...` or use response = 'massless'")
    return m


def _resolve_metrics(pf: Portfolio, fname: str) -> dict[str, Any]:
    from solair.compare import METRIC_COLUMNS

    for i, name in enumerate(pf.metrics.keep):
        if name not in METRIC_COLUMNS:
            raise ConfigurationError(
                f"{fname}: metrics.keep[{i}] = {name!r}: not a metric; allowed: "
                f"{sorted(METRIC_COLUMNS)}")
    return pf.metrics.model_dump()


#: the hourly variables of a comparison result, per climate (see solair.compare)
HOURLY_VARIABLES = ("temp_surface", "heat_flux", "heat_flux_exterior", "temp_sol_air", "h_e",
                    "latent_flux", "condensation", "condensate")


def _resolve_hourly(pf: Portfolio, fname: str) -> dict[str, Any]:
    for i, name in enumerate(pf.hourly.variables):
        if name not in HOURLY_VARIABLES:
            raise ConfigurationError(
                f"{fname}: hourly.variables[{i}] = {name!r}: not an hourly variable; allowed: "
                f"{sorted(HOURLY_VARIABLES)}")
    return pf.hourly.model_dump()


def _allowed_models() -> dict[str, frozenset[str]]:
    """Allowed model names, taken from the modules that implement them."""
    from solair.balance import LINEARISATIONS
    from solair.convection import CONVECTION_MODELS
    from solair.engine import sky_models
    from solair.irradiance import TRANSPOSITION_MODELS
    from solair.response import EXTERIOR_MODELS, RESPONSE_MODELS

    return {
        "sky": sky_models(),
        "transposition": frozenset(TRANSPOSITION_MODELS),
        "convection": frozenset(CONVECTION_MODELS),
        "linearisation": frozenset(LINEARISATIONS),
        "response": frozenset(RESPONSE_MODELS),
        "exterior": frozenset(EXTERIOR_MODELS),
    }
