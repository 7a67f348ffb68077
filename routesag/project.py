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

from routesag.catalog import PROPERTY_FIELDS, close_matches, find_conductor
from routesag.errors import ProjectError
from routesag.physics.loads import G
from routesag.physics.clearance_rules import (
    DEFAULT_ADDER_ABOVE_KV, DEFAULT_ADDER_PER_KV_M, DEFAULT_REQUIRED_M, phase_to_ground_kv, voltage_adder_m,
)

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
    table: dict[str, "Key"] | None = None   # the keys of a nested table ([a.b]); kind is dict
    other: "Key | None" = None              # spec of any further (user-named) key in that nested table


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


def text_list(value):
    if not value:
        return "must name at least one entry"
    return None if all(isinstance(v, str) and v for v in value) else "must be a list of names (text)"


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

# [clearance.required_m]: the default set plus any user-defined category. "ground" has no default
# here because `[clearance] ground_m` is its shorthand; see _check_clearance.
REQUIRED_M_TABLE = {
    name: Key(NUMBER, None if name == "ground" else value, positive,
              f"base clearance for {name} before the voltage adder [m]")
    for name, value in DEFAULT_REQUIRED_M.items()}
ADDER_TABLE = {
    "per_kv_m": Key(NUMBER, DEFAULT_ADDER_PER_KV_M, non_negative,
                    "metres per kV of phase-to-ground voltage above the threshold [m/kV]"),
    "above_kv": Key(NUMBER, DEFAULT_ADDER_ABOVE_KV, non_negative, "phase-to-ground threshold [kV]"),
}

SCHEMA: dict[str, dict[str, Key]] = {
    "inputs": {
        "structures": Key(str, doc="structures layer: any vector source GDAL reads, or CSV with x, y"),
        "structures_layer": Key(str, None, doc="layer name inside a multi-layer source"),
        "terrain": Key(str, doc="single-band elevation raster [m]"),
        "crs": Key(str, None, crs_text, doc="CRS of the structures when the source has none (CSV)"),
        "terrain_z_units": Key(str, "m", one_of("m", "ft", "ftUS"), "vertical unit of the terrain"),
        "crossings": Key(str, None, doc="crossings layer: lines or polygons with a category field"),
        "crossings_layer": Key(str, None, doc="layer name inside a multi-layer crossings source"),
        "surface": Key(str, None, doc="surface model raster: top of vegetation and buildings"),
        "surface_values": Key(str, "elevation", one_of("elevation", "height"),
                              "surface raster holds elevations (DSM) or heights above the terrain"),
    },
    "line": {
        "attach_height_m": Key(NUMBER, None, up_to(MAX_ATTACH_HEIGHT_M),
                               "attachment height above ground for structures without attach_height_m [m]"),
    },
    "conductor": {
        # Without a catalog name all six properties are required (checked in _complete_conductor).
        "name": Key(str, None, doc="catalog conductor: designation or code word (see `routesag conductors`)"),
        "diameter_mm": Key(NUMBER, None, positive, "overall diameter [mm]"),
        "area_mm2": Key(NUMBER, None, positive, "total cross-section area [mm2]"),
        "mass_kg_m": Key(NUMBER, None, positive, "mass per unit length [kg/m]"),
        "rated_strength_kn": Key(NUMBER, None, positive, "rated tensile strength [kN]"),
        "modulus_gpa": Key(NUMBER, None, positive, "final modulus of elasticity [GPa]"),
        "expansion_per_c": Key(NUMBER, None, positive, "thermal expansion coefficient [1/degC]"),
    },
    "stringing": {
        "temperature_c": Key(NUMBER, doc="conductor temperature of the known state [degC]"),
        "horizontal_tension_kn": Key(NUMBER, None, positive, "horizontal tension of the known state [kN]"),
        "tension_percent_rts": Key(NUMBER, None, positive, "horizontal tension as % of rated strength"),
        "catenary_m": Key(NUMBER, None, positive, "catenary constant H/w of the bare wire [m]"),
        "creep_allowance_c": Key(NUMBER, None, non_negative,
                                 "creep as an equivalent temperature increase of the final state [degC]"),
        "from_limits": Key(bool, False, doc="stringing tension: the largest that meets every [[limits]] entry"),
    },
    "load_cases": {
        "name": Key(str),
        "temperature_c": Key(NUMBER, doc="conductor temperature [degC]"),
        "ice_mm": Key(NUMBER, 0.0, non_negative, "radial ice thickness [mm]"),
        "wind_pa": Key(NUMBER, 0.0, non_negative, "wind pressure on the iced conductor [Pa]"),
        "constant_n_m": Key(NUMBER, 0.0, non_negative, "load constant added to the resultant (NESC K) [N/m]"),
        "wind_side": Key(str, "right", one_of("right", "left"),
                         "side the wire blows to, looking along increasing seq"),
        "condition": Key(str, None, one_of("initial", "final"),
                         "initial (as strung) or final (after creep); default final when "
                         "[stringing] creep_allowance_c is given, else initial"),
    },
    "limits": {
        "load_case": Key(str, doc="name of the [[load_cases]] entry the limit applies to"),
        "max_percent_rts": Key(NUMBER, None, positive, "largest tension as % of rated strength"),
        "max_catenary_m": Key(NUMBER, None, positive, "largest catenary constant H/w [m]"),
        "applies_to": Key(str, "horizontal", one_of("horizontal", "support"),
                          "horizontal tension, or the largest support tension of the section's spans"),
    },
    "loads": {
        "ice_density_kg_m3": Key(NUMBER, 913.0, positive, "ice density [kg/m3]"),
    },
    "wires": {
        "name": Key(str, doc="wire name, e.g. a phase label or the earth wire"),
        "offset_m": Key(NUMBER, 0.0, doc="horizontal offset from the structure centre, + to the right "
                                          "looking along increasing seq [m]"),
        "dz_m": Key(NUMBER, 0.0, doc="height above the structure's attach_height_m [m]"),
        "insulated": Key(bool, True, doc="hangs from the structure's suspension string (insulator_m); "
                                         "false for a wire clamped to the structure, e.g. an earth wire"),
        "conductor": Key(dict, None, doc="the wire's own conductor (keys as [conductor])"),
        "stringing": Key(dict, None, doc="the wire's own stringing state (keys as [stringing])"),
    },
    "insulators": {
        "weight_n": Key(NUMBER, 0.0, non_negative, "weight of one suspension string [N]"),
        "wind_area_m2": Key(NUMBER, 0.0, non_negative,
                            "area of one suspension string facing the wind; its wind load is the load "
                            "case's wind_pa times this area [m2]"),
    },
    "clearance": {
        "ground_m": Key(NUMBER, None, positive, "shorthand for required_m.ground [m]"),
        "station_m": Key(NUMBER, 1.0, positive, "sampling interval along each span [m]"),
        "voltage_kv": Key(NUMBER, None, positive, "nominal line-to-line voltage for the adder [kV]"),
        "max_voltage_kv": Key(NUMBER, None, positive, "maximum operating line-to-line voltage [kV]"),
        "cases": Key(list, None, text_list, "load cases checked for clearance (default: all)"),
        "hotspot_merge_m": Key(NUMBER, 10.0, positive, "violations closer than this form one hotspot [m]"),
        "surface_min_height_m": Key(NUMBER, 0.5, non_negative,
                                    "surface cells count as objects when this far above the terrain [m]"),
        "crossing_width_m": Key(NUMBER, 10.0, positive, "width of a line crossing without width_m [m]"),
        "required_m": Key(dict, {}, doc="base clearances by category", table=REQUIRED_M_TABLE,
                          other=Key(NUMBER, check=positive, doc="base clearance of a user category [m]")),
        "adder": Key(dict, {}, doc="voltage adder", table=ADDER_TABLE),
    },
    "output": {
        "path": Key(str, "results.gpkg", doc="GeoPackage to write"),
    },
    "pipeline": {
        "stages": Key(list, [], list_of_text, doc="stages to add to (or replace in) the built-in chain"),
    },
}

# Tables given as [[name]] arrays rather than [name].
ARRAY_TABLES = {"load_cases", "wires", "limits"}
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
    source: str = "project file"


@dataclass(frozen=True)
class LoadCase:
    """One design load case: conductor temperature, ice and wind."""

    name: str
    temperature_c: float
    ice_m: float = 0.0
    wind_pa: float = 0.0
    constant_n_m: float = 0.0
    wind_side: str = "right"
    condition: str = "initial"

    @property
    def side_sign(self) -> float:
        return 1.0 if self.wind_side == "right" else -1.0


@dataclass(frozen=True)
class TensionLimit:
    """Largest tension (as % of rated strength) and/or catenary constant allowed in one load case."""

    load_case: str
    max_percent_rts: float | None = None
    max_catenary_m: float | None = None
    applies_to: str = "horizontal"

    def describe(self) -> str:
        parts = []
        if self.max_percent_rts is not None:
            parts.append(f"{self.max_percent_rts:g} % RTS {self.applies_to}")
        if self.max_catenary_m is not None:
            parts.append(f"H/w {self.max_catenary_m:g} m")
        return " and ".join(parts)


@dataclass(frozen=True)
class Stringing:
    """The known state of the conductor: temperature and one tension key."""

    temperature_c: float
    horizontal_tension_kn: float | None = None
    tension_percent_rts: float | None = None
    catenary_m: float | None = None
    creep_allowance_c: float | None = None
    from_limits: bool = False

    def state_temperature_c(self, temperature_c: float, condition: str) -> float:
        """Temperature at which the initial state stands for ``condition`` [degC].

        The final (crept) state at T is the initial state at T + creep allowance.
        """
        if condition == "final":
            return temperature_c + (self.creep_allowance_c or 0.0)
        return temperature_c

    def horizontal_tension_n(self, conductor: Conductor, bare_weight_n_m: float) -> float:
        """Horizontal tension of the known state [N]."""
        if self.horizontal_tension_kn is not None:
            return self.horizontal_tension_kn * 1e3
        if self.tension_percent_rts is not None:
            return self.tension_percent_rts / 100.0 * conductor.rated_strength_n
        return self.catenary_m * bare_weight_n_m


@dataclass(frozen=True)
class Wire:
    """One wire strung along the line: a phase conductor or an earth wire.

    ``offset_m`` is horizontal, perpendicular to the line (along the bisector
    at an angle structure), positive to the right looking along increasing
    seq; ``dz_m`` is vertical from the structure's attachment height.
    """

    name: str
    conductor: Conductor
    stringing: Stringing
    offset_m: float = 0.0
    dz_m: float = 0.0
    insulated: bool = True


@dataclass(frozen=True)
class ClearanceRules:
    """Required clearances by category, the voltage adder and the clearance options.

    ``base_m`` holds the values before the adder; :attr:`required_m` after it.
    """

    base_m: dict = field(default_factory=lambda: dict(DEFAULT_REQUIRED_M))
    voltage_kv: float | None = None
    max_voltage_kv: float | None = None
    adder_per_kv_m: float = DEFAULT_ADDER_PER_KV_M
    adder_above_kv: float = DEFAULT_ADDER_ABOVE_KV
    cases: tuple[str, ...] | None = None
    hotspot_merge_m: float = 10.0
    surface_min_height_m: float = 0.5
    crossing_width_m: float = 10.0

    @property
    def phase_to_ground_kv(self) -> float | None:
        if self.voltage_kv is None:
            return None
        return float(phase_to_ground_kv(self.voltage_kv, self.max_voltage_kv))

    @property
    def adder_m(self) -> float:
        """Clearance added to every base value for the voltage [m] (0 without a voltage)."""
        if self.voltage_kv is None:
            return 0.0
        return float(voltage_adder_m(self.phase_to_ground_kv, self.adder_per_kv_m, self.adder_above_kv))

    @property
    def required_m(self) -> dict[str, float]:
        """Required clearance by category after the adder [m]."""
        return {name: base + self.adder_m for name, base in self.base_m.items()}

    def checks(self, load_case: str) -> bool:
        """Whether a load case is checked for clearance."""
        return self.cases is None or load_case in self.cases


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
    wires: list[Wire] = field(default_factory=list)
    insulator_weight_n: float = 0.0
    insulator_wind_area_m2: float = 0.0
    limits: list[TensionLimit] = field(default_factory=list)
    crossings_path: Path | None = None
    crossings_layer: str | None = None
    surface_path: Path | None = None
    surface_values: str = "elevation"
    clearance: ClearanceRules = field(default_factory=ClearanceRules)

    @property
    def base_dir(self) -> Path:
        return self.path.parent

    def line_wires(self, line_id) -> list[Wire]:
        """The wires of a line: the ``[[wires]]`` entries, or one wire named after the line at offset 0."""
        if self.wires:
            return list(self.wires)
        return [Wire(name=str(line_id), conductor=self.conductor, stringing=self.stringing)]

    def input_paths(self) -> dict[str, Path]:
        """Every input file by role, for provenance."""
        paths = {"project": self.path, "structures": self.structures_path, "terrain": self.terrain_path,
                 "crossings": self.crossings_path, "surface": self.surface_path}
        return {role: path for role, path in paths.items() if path is not None}


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
    if isinstance(raw.get("conductor"), dict):
        settings["conductor"] = _complete_conductor(f"{source}: [conductor]", settings["conductor"], problems)
    _check_stringing(source, settings.get("stringing", {}), problems)
    _check_stringing_strength(source, settings.get("stringing", {}), settings.get("conductor", {}), problems)
    _check_wires(source, settings.get("wires", []), problems)
    _set_conditions(source, settings, problems)
    _check_limits(source, settings, problems)
    _check_clearance(source, raw.get("clearance"), settings, problems)
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


def _check_table(source, label, given: dict, keys: dict[str, Key], problems, other: Key | None = None) -> dict:
    return _check_keys(f"{source}: {label}", given, keys, problems, other)


def _check_keys(where: str, given: dict, keys: dict[str, Key], problems, other: Key | None = None) -> dict:
    """Check one table's keys; ``where`` (file and table) starts every message.

    ``other``, when given, checks every key not in ``keys`` (user-named keys,
    such as clearance categories) instead of reporting it as unknown.
    """
    out = {}
    for key in given:
        if key not in keys and other is None:
            problems.append(f"{where}: unknown key {key!r}{_suggest(key, keys)}")
    for key, spec in keys.items():
        if spec.table is not None:
            out[key] = _check_subtable(where, key, given.get(key, {}), spec, problems)
        elif key in given:
            _check_value(where, key, given[key], spec, problems, out)
        elif spec.default is REQUIRED:
            problems.append(f"{where}: missing key {key!r} ({spec.doc or spec.kind.__name__})")
        else:
            out[key] = spec.default
    if other is not None:
        for key in given:
            if key not in keys:
                _check_value(where, key, given[key], other, problems, out)
    return out


def resolve_conductor(table: dict, where: str) -> Conductor:
    """Conductor from a ``[conductor]``-style table: a catalog name, explicit fields, or both.

    Explicit fields override the catalog's values; without ``name`` all six
    properties are required.

    Parameters
    ----------
    table : dict
        The raw TOML table (``name`` and/or the six properties).
    where : str
        File and table for messages, e.g. ``"line.toml: [[wires]] #4 conductor"``.

    Raises
    ------
    ProjectError
        Every problem found: unknown keys, bad values, an unknown catalog name
        (with close matches), missing properties.
    """
    problems: list[str] = []
    if not isinstance(table, dict):
        raise ProjectError(f"{where}: must be a table")
    checked = _check_keys(where, table, SCHEMA["conductor"], problems)
    complete = _complete_conductor(where, checked, problems)
    if problems:
        raise ProjectError(problems)
    return _conductor_from(complete)


def _complete_conductor(where: str, given: dict, problems) -> dict:
    """Fill properties not given from the catalog entry ``name``; report what is still missing."""
    out = dict(given)
    name = given.get("name")
    out["source"] = "project file"
    if name is not None:
        entry = find_conductor(name)
        if entry is None:
            close = close_matches(name)
            hint = (f"close matches: {', '.join(e.label for e in close)}" if close
                    else "list the catalog with `routesag conductors`")
            problems.append(f"{where}: name = {name!r} is not in the conductor catalog; {hint}")
            return out
        explicit = [k for k in PROPERTY_FIELDS if given.get(k) is not None]
        for key, value in entry.properties().items():
            if out.get(key) is None:
                out[key] = value
        out["name"] = entry.label
        out["source"] = f"catalog ({entry.source})" + (f"; given: {', '.join(explicit)}" if explicit else "")
    missing = [k for k in PROPERTY_FIELDS if out.get(k) is None]
    if missing:
        problems.append(f"{where}: missing {', '.join(map(repr, missing))}: give name = \"...\" "
                        f"(a catalog conductor) or all of {', '.join(PROPERTY_FIELDS)}")
    return out


def _conductor_from(c: dict) -> Conductor:
    """SI Conductor from a completed ``[conductor]`` table."""
    return Conductor(
        diameter_m=c["diameter_mm"] / 1e3, area_m2=c["area_mm2"] / 1e6, mass_kg_m=c["mass_kg_m"],
        rated_strength_n=c["rated_strength_kn"] * 1e3, modulus_pa=c["modulus_gpa"] * 1e9,
        expansion_per_c=c["expansion_per_c"], name=c.get("name") or "conductor",
        source=c.get("source", "project file"))


def _check_subtable(where: str, key, value, spec: Key, problems) -> dict:
    """A nested table such as [clearance.required_m]: its own keys, and optionally user-named ones."""
    sub_where = f"{where[:-1]}.{key}]" if where.endswith("]") else f"{where}.{key}"
    if not isinstance(value, dict):
        problems.append(f"{where}: {key} must be a table ({sub_where.rsplit(': ', 1)[-1]})")
        value = {}
    return _check_keys(sub_where, value, spec.table, problems, spec.other)


def _check_value(where: str, key, value, spec: Key, problems, out: dict) -> None:
    message = _type_problem(value, spec)
    if message is None and spec.check is not None:
        message = spec.check(value)
    if message:
        problems.append(f"{where}: {key} = {value!r} {message}")
    else:
        out[key] = float(value) if spec.kind is NUMBER else value


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
    names = {str: "text", list: "a list", bool: "true/false", dict: "a table"}
    return names.get(kind, getattr(kind, "__name__", str(kind)))


def _check_stringing(source, stringing: dict, problems, label="[stringing]") -> None:
    given = [k for k in TENSION_KEYS if stringing.get(k) is not None]
    if stringing.get("from_limits"):
        if given:
            problems.append(f"{source}: {label}: from_limits = true finds the tension; remove "
                            f"{', '.join(given)}")
    elif len(given) != 1 and "temperature_c" in stringing:
        problems.append(f"{source}: {label}: give exactly one of {', '.join(TENSION_KEYS)}"
                        f" (found {len(given)}{': ' + ', '.join(given) if given else ''})"
                        f", or from_limits = true")


def _check_stringing_strength(source, stringing: dict, conductor: dict, problems) -> None:
    """A stringing tension at or above the rated strength, found before any input is read."""
    rated_kn, mass_kg_m = conductor.get("rated_strength_kn"), conductor.get("mass_kg_m")
    if rated_kn is None or mass_kg_m is None:
        return
    if stringing.get("horizontal_tension_kn") is not None:
        tension_kn = stringing["horizontal_tension_kn"]
    elif stringing.get("tension_percent_rts") is not None:
        tension_kn = stringing["tension_percent_rts"] / 100.0 * rated_kn
    elif stringing.get("catenary_m") is not None:
        tension_kn = stringing["catenary_m"] * mass_kg_m * G / 1e3
    else:
        return
    if tension_kn >= rated_kn:
        problems.append(f"{source}: [stringing] tension {tension_kn:.1f} kN is not below the rated strength "
                        f"{rated_kn:.1f} kN")


def _set_conditions(source, settings: dict, problems) -> None:
    """Default each load case's condition: final when a creep allowance is given, else initial."""
    allowance = settings.get("stringing", {}).get("creep_allowance_c")
    for i, case in enumerate(settings.get("load_cases", [])):
        if case.get("condition") is None:
            case["condition"] = "initial" if allowance is None else "final"
        elif case["condition"] == "final" and allowance is None:
            problems.append(f"{source}: [[load_cases]] #{i + 1}: condition = 'final' needs [stringing] "
                            f"creep_allowance_c (give 0 for a conductor that does not creep)")


def _check_limits(source, settings: dict, problems) -> None:
    """Each limit names a known load case and holds a criterion; from_limits needs a limit."""
    names = [c.get("name") for c in settings.get("load_cases", [])]
    for i, limit in enumerate(settings.get("limits", [])):
        where = f"{source}: [[limits]] #{i + 1}"
        case = limit.get("load_case")
        if case is not None and names and case not in names:
            problems.append(f"{where}: load_case = {case!r} is not a [[load_cases]] name"
                            f"{_suggest(case, [n for n in names if n])}")
        if limit.get("max_percent_rts") is None and limit.get("max_catenary_m") is None:
            problems.append(f"{where}: give max_percent_rts, max_catenary_m or both")
        elif limit.get("max_percent_rts") is not None and limit["max_percent_rts"] >= 100:
            problems.append(f"{where}: max_percent_rts = {limit['max_percent_rts']!r} must be below 100")
    if settings.get("stringing", {}).get("from_limits") and not settings.get("limits"):
        problems.append(f"{source}: [stringing] from_limits = true needs at least one [[limits]] entry")


def _wire_label(index: int, entry: dict) -> str:
    name = entry.get("name")
    return f"[[wires]] #{index + 1}" + (f" ({name!r})" if name is not None else "")


def _check_wires(source, wires: list[dict], problems) -> None:
    """Check each wire's own conductor and stringing tables, in place (defaults filled)."""
    for i, entry in enumerate(wires):
        label = _wire_label(i, entry)
        if entry.get("conductor") is not None:
            try:
                resolve_conductor(entry["conductor"], f"{source}: {label} conductor")
            except ProjectError as exc:
                problems.extend(exc.problems)
        if entry.get("stringing") is not None:
            where = f"{label} stringing"
            entry["stringing"] = _check_keys(f"{source}: {where}", entry["stringing"], SCHEMA["stringing"],
                                             problems)
            _check_stringing(source, entry["stringing"], problems, label=where)



def _check_clearance(source, raw, settings, problems) -> None:
    """Cross-checks of [clearance]: ground_m vs required_m.ground, voltages, load case names.

    Fills ``required_m.ground`` with the effective base ground clearance.
    """
    clearance = settings.get("clearance", {})
    required = clearance.get("required_m")
    if required is None:
        return
    given_required = (raw or {}).get("required_m")
    if clearance.get("ground_m") is not None and isinstance(given_required, dict) and "ground" in given_required:
        problems.append(f"{source}: [clearance]: give ground_m or [clearance.required_m] ground, not both")
    if required.get("ground") is None:
        ground = clearance.get("ground_m")
        required["ground"] = DEFAULT_REQUIRED_M["ground"] if ground is None else ground
    voltage, maximum = clearance.get("voltage_kv"), clearance.get("max_voltage_kv")
    if maximum is not None and voltage is None:
        problems.append(f"{source}: [clearance]: max_voltage_kv needs voltage_kv (the nominal voltage)")
    elif maximum is not None and maximum < voltage:
        problems.append(f"{source}: [clearance]: max_voltage_kv = {maximum:g} is below voltage_kv = {voltage:g}")
    names = [case.get("name") for case in settings.get("load_cases", [])]
    for name in clearance.get("cases") or []:
        if names and name not in names:
            problems.append(f"{source}: [clearance]: cases names {name!r}, which is not a load case"
                            f"{_suggest(name, names)}")


def _suggest(word: str, valid) -> str:
    close = difflib.get_close_matches(word, list(valid), n=1, cutoff=0.5)
    return f"; did you mean {close[0]!r}?" if close else f"; valid: {', '.join(valid)}"


def _build_project(path: Path, s: dict, output) -> Project:
    base = path.parent
    conductor = _conductor_from(s["conductor"])
    stringing = Stringing(**s["stringing"])
    load_cases = [LoadCase(name=e["name"], temperature_c=e["temperature_c"], ice_m=e["ice_mm"] / 1e3,
                           wind_pa=e["wind_pa"], constant_n_m=e["constant_n_m"], wind_side=e["wind_side"],
                           condition=e["condition"])
                  for e in s["load_cases"]]
    out = Path(output) if output is not None else base / s["output"]["path"]
    inputs = s["inputs"]
    return Project(
        path=path.resolve(), structures_path=(base / s["inputs"]["structures"]).resolve(),
        structures_layer=s["inputs"]["structures_layer"], terrain_path=(base / s["inputs"]["terrain"]).resolve(),
        structures_crs=s["inputs"]["crs"], terrain_z_units=s["inputs"]["terrain_z_units"],
        attach_height_m=s["line"]["attach_height_m"], conductor=conductor,
        stringing=stringing, load_cases=load_cases,
        ground_clearance_m=s["clearance"]["required_m"]["ground"], station_m=s["clearance"]["station_m"],
        ice_density_kg_m3=s["loads"]["ice_density_kg_m3"], output_path=out.resolve(),
        pipeline_stages=list(s["pipeline"]["stages"]), settings=s,
        wires=[_build_wire(path, i, e, conductor, stringing) for i, e in enumerate(s["wires"])],
        insulator_weight_n=s["insulators"]["weight_n"], insulator_wind_area_m2=s["insulators"]["wind_area_m2"],
        limits=[TensionLimit(**e) for e in s["limits"]],
        crossings_path=None if inputs["crossings"] is None else (base / inputs["crossings"]).resolve(),
        crossings_layer=inputs["crossings_layer"],
        surface_path=None if inputs["surface"] is None else (base / inputs["surface"]).resolve(),
        surface_values=inputs["surface_values"], clearance=_clearance_rules(s["clearance"]))


def _build_wire(path: Path, index: int, entry: dict, conductor: Conductor, stringing: Stringing) -> Wire:
    """A :class:`Wire`; without its own tables it takes the line's conductor and stringing."""
    own = entry["conductor"]
    return Wire(
        name=entry["name"], offset_m=entry["offset_m"], dz_m=entry["dz_m"], insulated=entry["insulated"],
        conductor=conductor if own is None else resolve_conductor(own, f"{path}: {_wire_label(index, entry)} "
                                                                        "conductor"),
        stringing=stringing if entry["stringing"] is None else Stringing(**entry["stringing"]))


def _clearance_rules(c: dict) -> ClearanceRules:
    return ClearanceRules(
        base_m=dict(c["required_m"]), voltage_kv=c["voltage_kv"], max_voltage_kv=c["max_voltage_kv"],
        adder_per_kv_m=c["adder"]["per_kv_m"], adder_above_kv=c["adder"]["above_kv"],
        cases=None if c["cases"] is None else tuple(c["cases"]), hotspot_merge_m=c["hotspot_merge_m"],
        surface_min_height_m=c["surface_min_height_m"], crossing_width_m=c["crossing_width_m"])
