"""The TOML project file: parsing, defaults and validation with clear messages.

A project file is checked against :data:`SCHEMA` in one pass; every problem
found is reported together, each naming the file, the table and the key.
Unknown keys are errors that suggest the nearest valid key.
"""
from __future__ import annotations

import difflib
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

from routesag.errors import ProjectError

REQUIRED = object()
#: Highest credible conductor attachment above ground [m]; more is a unit or typing error.
MAX_ATTACH_HEIGHT_M = 200.0


@dataclass(frozen=True)
class Key:
    """One setting of the project file: its type, default and a value check."""

    kind: type | tuple
    default: Any = REQUIRED
    check: Callable[[Any], str | None] | None = None
    doc: str = ""


def positive(value):
    return None if value > 0 else "must be > 0"


def non_negative(value):
    return None if value >= 0 else "must be >= 0"


def up_to(high):
    def check(value):
        return None if 0 < value <= high else f"must be > 0 and <= {high:g}"
    return check


def one_of(*choices):
    def check(value):
        return None if value in choices else f"must be one of {', '.join(map(repr, choices))}"
    return check


def crs_text(value):
    from pyproj import CRS  # lazy: reading a project file needs no GIS stack otherwise
    from pyproj.exceptions import CRSError

    try:
        CRS.from_user_input(value)
    except CRSError:
        return "is not a CRS PROJ knows (give e.g. 'EPSG:32633')"
    return None


def list_of_text(value):
    bad = [item for item in value if not isinstance(item, str)]
    return f"must list stage names as text (not {bad[0]!r})" if bad else None


NUMBER = (int, float)

SCHEMA: dict[str, dict[str, Key]] = {
    "inputs": {
        "structures": Key(str, doc="structures layer: any vector source GDAL reads, or CSV with x, y"),
        "structures_layer": Key(str, None, doc="layer name inside a multi-layer source"),
        "terrain": Key(str, doc="single-band elevation raster [m]"),
        "crs": Key(str, None, crs_text, doc="CRS of the structures when the source has none (CSV)"),
        "terrain_z_units": Key(str, "m", one_of("m", "ft", "ftUS"), "vertical unit of the terrain"),
    },
    "line": {
        "attach_height_m": Key(NUMBER, None, up_to(MAX_ATTACH_HEIGHT_M),
                               "attachment height above ground for structures without attach_height_m [m]"),
    },
    "conductor": {
        "diameter_mm": Key(NUMBER, check=positive, doc="overall diameter [mm]"),
        "area_mm2": Key(NUMBER, check=positive, doc="total cross-section area [mm2]"),
        "mass_kg_m": Key(NUMBER, check=positive, doc="mass per unit length [kg/m]"),
        "rated_strength_kn": Key(NUMBER, check=positive, doc="rated tensile strength [kN]"),
        "modulus_gpa": Key(NUMBER, check=positive, doc="final modulus of elasticity [GPa]"),
        "expansion_per_c": Key(NUMBER, check=positive, doc="thermal expansion coefficient [1/degC]"),
    },
    "stringing": {
        "temperature_c": Key(NUMBER, doc="conductor temperature of the known state [degC]"),
        "horizontal_tension_kn": Key(NUMBER, None, positive, "horizontal tension of the known state [kN]"),
        "tension_percent_rts": Key(NUMBER, None, positive, "horizontal tension as % of rated strength"),
        "catenary_m": Key(NUMBER, None, positive, "catenary constant H/w of the bare wire [m]"),
    },
    "load_cases": {
        "name": Key(str),
        "temperature_c": Key(NUMBER, doc="conductor temperature [degC]"),
        "ice_mm": Key(NUMBER, 0.0, non_negative, "radial ice thickness [mm]"),
        "wind_pa": Key(NUMBER, 0.0, non_negative, "wind pressure on the iced conductor [Pa]"),
        "constant_n_m": Key(NUMBER, 0.0, non_negative, "load constant added to the resultant (NESC K) [N/m]"),
        "wind_side": Key(str, "right", one_of("right", "left"),
                         "side the wire blows to, looking along increasing seq"),
    },
    "loads": {
        "ice_density_kg_m3": Key(NUMBER, 913.0, positive, "ice density [kg/m3]"),
    },
    "clearance": {
        "ground_m": Key(NUMBER, check=positive, doc="required vertical clearance to terrain [m]"),
        "station_m": Key(NUMBER, 1.0, positive, "sampling interval along each span [m]"),
    },
    "output": {
        "path": Key(str, "results.gpkg", doc="GeoPackage to write"),
    },
    "pipeline": {
        "stages": Key(list, [], list_of_text, doc="stages to add to (or replace in) the built-in chain"),
    },
}

# Tables given as [[name]] arrays rather than [name].
ARRAY_TABLES = {"load_cases"}
REQUIRED_TABLES = {"inputs", "conductor", "stringing", "load_cases", "clearance"}
TENSION_KEYS = ("horizontal_tension_kn", "tension_percent_rts", "catenary_m")


@dataclass(frozen=True)
class Conductor:
    """Conductor properties in SI units."""

    diameter_m: float
    area_m2: float
    mass_kg_m: float
    rated_strength_n: float
    modulus_pa: float
    expansion_per_c: float
    name: str = "conductor"


@dataclass(frozen=True)
class LoadCase:
    """One design load case: conductor temperature, ice and wind."""

    name: str
    temperature_c: float
    ice_m: float = 0.0
    wind_pa: float = 0.0
    constant_n_m: float = 0.0
    wind_side: str = "right"

    @property
    def side_sign(self) -> float:
        return 1.0 if self.wind_side == "right" else -1.0


@dataclass(frozen=True)
class Stringing:
    """The known state of the conductor: temperature and one tension key."""

    temperature_c: float
    horizontal_tension_kn: float | None = None
    tension_percent_rts: float | None = None
    catenary_m: float | None = None

    def horizontal_tension_n(self, conductor: Conductor, bare_weight_n_m: float) -> float:
        """Horizontal tension of the known state [N]."""
        if self.horizontal_tension_kn is not None:
            return self.horizontal_tension_kn * 1e3
        if self.tension_percent_rts is not None:
            return self.tension_percent_rts / 100.0 * conductor.rated_strength_n
        return self.catenary_m * bare_weight_n_m


@dataclass
class Project:
    """A validated project: every setting in SI units, paths resolved."""

    path: Path
    structures_path: Path
    structures_layer: str | None
    terrain_path: Path
    structures_crs: str | None
    terrain_z_units: str
    attach_height_m: float | None
    conductor: Conductor
    stringing: Stringing
    load_cases: list[LoadCase]
    ground_clearance_m: float
    station_m: float
    ice_density_kg_m3: float
    output_path: Path
    pipeline_stages: list[str]
    settings: dict = field(default_factory=dict)

    @property
    def base_dir(self) -> Path:
        return self.path.parent

    def input_paths(self) -> dict[str, Path]:
        """Every input file by role, for provenance."""
        return {"project": self.path, "structures": self.structures_path,
                "terrain": self.terrain_path}


def load_project(path, output=None) -> Project:
    """Read and validate a project file.

    Parameters
    ----------
    path : str or Path
        The TOML project file.
    output : str or Path, optional
        Overrides ``[output] path``.

    Raises
    ------
    ProjectError
        With every problem found, each naming the file, table and key.
    """
    path = Path(path)
    raw = _read_toml(path)
    settings, problems = validate_settings(raw, source=str(path))
    if problems:
        raise ProjectError(problems)
    return _build_project(path, settings, output)


def _read_toml(path: Path) -> dict:
    if not path.is_file():
        raise ProjectError(f"project file {path}: not found")
    try:
        with path.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise ProjectError(f"project file {path}: TOML syntax error: {exc}") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ProjectError(f"project file {path}: cannot be read: {exc}") from None


def validate_settings(raw: dict, source: str = "project") -> tuple[dict, list[str]]:
    """Check raw TOML data against :data:`SCHEMA`; fill defaults.

    Returns the effective settings and the list of problems (empty when valid).
    """
    problems: list[str] = []
    settings: dict[str, Any] = {}
    for table in raw:
        if table not in SCHEMA:
            problems.append(f"{source}: unknown table [{table}]{_suggest(table, SCHEMA)}")
    for table, keys in SCHEMA.items():
        given = raw.get(table)
        if table in ARRAY_TABLES:
            settings[table] = _check_array_table(source, table, given, keys, problems)
        else:
            if given is None and table in REQUIRED_TABLES:
                problems.append(f"{source}: missing table [{table}] (keys: {', '.join(keys)})")
                settings[table] = {}
                continue
            if given is not None and not isinstance(given, dict):
                problems.append(f"{source}: [{table}] must be a table")
                given = None
            settings[table] = _check_table(source, f"[{table}]", given or {}, keys, problems)
    _check_stringing(source, settings.get("stringing", {}), problems)
    return settings, problems


def _check_array_table(source, table, given, keys, problems):
    label = f"[[{table}]]"
    if given is None:
        if table in REQUIRED_TABLES:
            problems.append(f"{source}: missing {label}: give at least one")
        return []
    if not isinstance(given, list) or not given:
        problems.append(f"{source}: {label} must be a list of tables with at least one entry")
        return []
    entries = [_check_table(source, f"{label} #{i + 1}", entry if isinstance(entry, dict) else {},
                            keys, problems) for i, entry in enumerate(given)]
    names = [e.get("name") for e in entries if e.get("name") is not None]
    for name in sorted({n for n in names if names.count(n) > 1}):
        problems.append(f"{source}: {label}: name {name!r} is used more than once")
    return entries


def _check_table(source, label, given: dict, keys: dict[str, Key], problems) -> dict:
    out = {}
    for key in given:
        if key not in keys:
            problems.append(f"{source}: {label}: unknown key {key!r}{_suggest(key, keys)}")
    for key, spec in keys.items():
        if key not in given:
            if spec.default is REQUIRED:
                problems.append(f"{source}: {label}: missing key {key!r} ({spec.doc or spec.kind.__name__})")
            else:
                out[key] = spec.default
            continue
        value = given[key]
        message = _type_problem(value, spec)
        if message is None and spec.check is not None:
            message = spec.check(value)
        if message:
            problems.append(f"{source}: {label}: {key} = {value!r} {message}")
        else:
            out[key] = float(value) if spec.kind is NUMBER else value
    return out


def _type_problem(value, spec: Key) -> str | None:
    kinds = spec.kind if isinstance(spec.kind, tuple) else (spec.kind,)
    if isinstance(value, bool) and bool not in kinds:
        return f"has the wrong type: expected {_kind_name(spec.kind)}, got true/false"
    if not isinstance(value, kinds):
        return f"has the wrong type: expected {_kind_name(spec.kind)}, got {type(value).__name__}"
    if isinstance(value, float) and not math.isfinite(value):
        return "must be a finite number"
    return None


def _kind_name(kind) -> str:
    if kind is NUMBER:
        return "a number"
    return {str: "text", list: "a list", bool: "true/false"}.get(kind, getattr(kind, "__name__", str(kind)))


def _check_stringing(source, stringing: dict, problems) -> None:
    given = [k for k in TENSION_KEYS if stringing.get(k) is not None]
    if len(given) != 1 and "temperature_c" in stringing:
        problems.append(f"{source}: [stringing]: give exactly one of {', '.join(TENSION_KEYS)}"
                        f" (found {len(given)}{': ' + ', '.join(given) if given else ''})")


def _suggest(word: str, valid) -> str:
    close = difflib.get_close_matches(word, list(valid), n=1, cutoff=0.5)
    return f"; did you mean {close[0]!r}?" if close else f"; valid: {', '.join(valid)}"


def _build_project(path: Path, s: dict, output) -> Project:
    base = path.parent
    c = s["conductor"]
    conductor = Conductor(
        diameter_m=c["diameter_mm"] / 1e3, area_m2=c["area_mm2"] / 1e6, mass_kg_m=c["mass_kg_m"],
        rated_strength_n=c["rated_strength_kn"] * 1e3, modulus_pa=c["modulus_gpa"] * 1e9,
        expansion_per_c=c["expansion_per_c"])
    load_cases = [LoadCase(name=e["name"], temperature_c=e["temperature_c"], ice_m=e["ice_mm"] / 1e3,
                           wind_pa=e["wind_pa"], constant_n_m=e["constant_n_m"], wind_side=e["wind_side"])
                  for e in s["load_cases"]]
    out = Path(output) if output is not None else base / s["output"]["path"]
    return Project(
        path=path.resolve(), structures_path=(base / s["inputs"]["structures"]).resolve(),
        structures_layer=s["inputs"]["structures_layer"], terrain_path=(base / s["inputs"]["terrain"]).resolve(),
        structures_crs=s["inputs"]["crs"], terrain_z_units=s["inputs"]["terrain_z_units"],
        attach_height_m=s["line"]["attach_height_m"], conductor=conductor,
        stringing=Stringing(**s["stringing"]), load_cases=load_cases,
        ground_clearance_m=s["clearance"]["ground_m"], station_m=s["clearance"]["station_m"],
        ice_density_kg_m3=s["loads"]["ice_density_kg_m3"], output_path=out.resolve(),
        pipeline_stages=list(s["pipeline"]["stages"]), settings=s)
