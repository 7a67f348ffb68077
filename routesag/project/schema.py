"""The project file's schema: every table, key, type, default and value check."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

from routesag.physics.stress_strain import curve_problem
from routesag.physics.clearance_rules import DEFAULT_ADDER_ABOVE_KV, DEFAULT_ADDER_PER_KV_M, DEFAULT_REQUIRED_M

REQUIRED = object()
#: Highest credible conductor attachment above ground [m]; more is a unit or typing error.
MAX_ATTACH_HEIGHT_M = 200.0
#: Largest credible wire position from the structure centre, across or up [m] (common practice: the widest
#: cross-arms and the tallest earth-wire peaks are a few tens of metres).
MAX_WIRE_POSITION_M = 100.0


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


def within(limit):
    def check(value):
        return None if abs(value) <= limit else f"must be between -{limit:g} and {limit:g}"
    return check


def up_to(high):
    def check(value):
        return None if 0 < value <= high else f"must be > 0 and <= {high:g}"
    return check


def above_absolute_zero(value):
    return None if value > -273.15 else "is below absolute zero (-273.15 degC)"


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


def las_classes(value):
    bad = [v for v in value if isinstance(v, bool) or not isinstance(v, int) or not 0 <= v <= 255]
    return f"must list LAS classes as whole numbers 0-255 (not {bad[0]!r})" if bad else None


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

#: [inputs.fields]: routesag's field names of the structures and crossings layers.
FIELDS_TABLE = {name: Key(str, None, doc=f"the file's name of field {name}")
                for name in ("structure_id", "seq", "line_id", "kind", "attach_height_m", "ground_z_m",
                             "insulator_m", "category", "required_m", "width_m")}

def stress_strain_curve(value):
    """Five numbers a0..a4 of a usable curve (:func:`routesag.physics.stress_strain.curve_problem`)."""
    if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value):
        return "must be a list of numbers"
    return curve_problem([float(v) for v in value])


#: [conductor.stress_strain]: the maker's polynomial curves of the two members (model = "two_material").
STRESS_STRAIN_TABLE = {
    f"{member}_{condition}": Key(list, None, stress_strain_curve,
                                 f"{member} {condition} curve: a0..a4 of stress [MPa, over the conductor's area] "
                                 f"= sum a_i e^i, e the strain [%]")
    for member in ("aluminium", "core") for condition in ("initial", "final")}

#: [conductor]: AC resistances for the heat balance (load cases given by current_a) and, for a composite
#: conductor, its two members for model = "two_material".
CONDUCTOR_OPTIONAL_KEYS = {
    "resistance_25c_ohm_km": Key(NUMBER, None, positive, "AC resistance at 25 degC [ohm/km]"),
    "resistance_75c_ohm_km": Key(NUMBER, None, positive, "AC resistance at 75 degC [ohm/km]"),
    "model": Key(str, "auto", one_of("auto", "linear", "two_material"),
                 "linear-elastic composite, or aluminium and core as two members (knee point); auto: two "
                 "members when the core and aluminium data are known (catalog ACSR), else linear"),
    "aluminium_area_mm2": Key(NUMBER, None, positive, "area of the aluminium layers [mm2]"),
    "aluminium_modulus_gpa": Key(NUMBER, None, positive, "final modulus of the aluminium layers [GPa]"),
    "aluminium_expansion_per_c": Key(NUMBER, None, positive, "expansion coefficient of the aluminium [1/degC]"),
    "aluminium_compression_mpa": Key(NUMBER, 0.0, non_negative,
                                     "largest compressive stress the aluminium layers take [MPa]"),
    "core_area_mm2": Key(NUMBER, None, positive, "area of the core [mm2]"),
    "core_modulus_gpa": Key(NUMBER, None, positive, "modulus of the core [GPa]"),
    "core_expansion_per_c": Key(NUMBER, None, positive, "expansion coefficient of the core [1/degC]"),
    "stress_strain": Key(dict, {}, doc="the maker's polynomial stress-strain curves", table=STRESS_STRAIN_TABLE),
}

#: [[load_cases]]: the weather of a case given by its current (IEEE Std 738 heat balance).
WEATHER_KEYS = {
    "current_a": Key(NUMBER, None, non_negative, "line current; the conductor temperature follows from the "
                                                  "heat balance (instead of temperature_c) [A]"),
    "ambient_c": Key(NUMBER, None, above_absolute_zero, "air temperature [degC]"),
    "wind_speed_m_s": Key(NUMBER, None, non_negative, "wind speed for the heat balance [m/s]"),
    "wind_angle_deg": Key(NUMBER, 90.0, None, "angle between the wind and the line [deg]"),
    "elevation_m": Key(NUMBER, 0.0, None, "elevation above sea level [m]"),
    "emissivity": Key(NUMBER, 0.5, up_to(1.0), "conductor emissivity [-]"),
    "absorptivity": Key(NUMBER, 0.5, up_to(1.0), "conductor solar absorptivity [-]"),
    "solar_flux_w_m2": Key(NUMBER, None, non_negative, "solar flux on the conductor (instead of the sun's "
                                                        "position) [W/m2]"),
    "latitude_deg": Key(NUMBER, None, None, "latitude for the sun's position [deg, north +]"),
    "day_of_year": Key(NUMBER, None, None, "day of the year for the sun's position (1 = 1 January)"),
    "solar_hour": Key(NUMBER, None, None, "local solar time for the sun's position [h, 12 = noon]"),
    "line_azimuth_deg": Key(NUMBER, 90.0, None, "azimuth of the line for the sun's angle [deg from north]"),
    "atmosphere": Key(str, "clear", one_of("clear", "industrial"), "atmosphere of the solar flux"),
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
        "terrain_crs": Key(str, None, crs_text, doc="CRS of a terrain raster that has none"),
        "terrain_nodata": Key(NUMBER, None, doc="stored value of terrain voids the raster does not tag"),
        "surface_nodata": Key(NUMBER, None, doc="stored value of surface model voids the raster does not tag"),
        "ground_z_tolerance_m": Key(NUMBER, 5.0, positive,
                                    "largest difference between a surveyed ground_z_m and the terrain [m]"),
        "ground_z_mismatch": Key(str, "refuse", one_of("refuse", "warn"),
                                 "a ground_z_m beyond the tolerance: refuse the run, or warn and use it"),
        "x_column": Key(str, None, doc="CSV column of the x (easting or longitude) coordinate"),
        "y_column": Key(str, None, doc="CSV column of the y (northing or latitude) coordinate"),
        "height_units": Key(str, None, one_of("m", "ft", "ftUS"),
                            "unit of attach_height_m, insulator_m and ground_z_m in the structures file "
                            "(default m)"),
        "point_cloud": Key(str, None, doc="LiDAR point cloud: LAS/LAZ, or a point layer with Z (GeoPackage, "
                                          "FlatGeobuf, CSV with x, y, z), optional classification field"),
        "point_cloud_layer": Key(str, None, doc="layer name inside a multi-layer point source"),
        "point_cloud_crs": Key(str, None, crs_text, doc="CRS of a point cloud whose file names none (CSV)"),
        "fields": Key(dict, {}, doc="the file's field names: routesag name = \"file's name\"",
                      table=FIELDS_TABLE),
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
        **CONDUCTOR_OPTIONAL_KEYS,
    },
    "stringing": {
        "temperature_c": Key(NUMBER, check=above_absolute_zero,
                             doc="conductor temperature of the known state [degC]"),
        "horizontal_tension_kn": Key(NUMBER, None, positive, "horizontal tension of the known state [kN]"),
        "tension_percent_rts": Key(NUMBER, None, positive, "horizontal tension as % of rated strength"),
        "catenary_m": Key(NUMBER, None, positive, "catenary constant H/w of the bare wire [m]"),
        "creep_allowance_c": Key(NUMBER, None, non_negative,
                                 "creep as an equivalent temperature increase of the final state [degC]"),
        "creep_strain": Key(NUMBER, None, non_negative,
                            "model = \"two_material\": creep strain of the aluminium in the final state [-]"),
        "final_horizontal_tension_kn": Key(NUMBER, None, positive,
                                           "model = \"two_material\": known final horizontal tension at the "
                                           "stringing temperature, which fixes the aluminium's creep [kN]"),
        "from_limits": Key(bool, False, doc="stringing tension: the largest that meets every [[limits]] entry"),
        "method": Key(str, "section", one_of("section", "ruling_span"),
                      "change of state of the whole section (exact inclined spans) or on the level ruling span"),
        "source": Key(str, "design", one_of("design", "as_found"),
                      "state the load cases start from: this table, or each section's fitted survey state"),
    },
    "load_cases": {
        "name": Key(str),
        "temperature_c": Key(NUMBER, None, above_absolute_zero, "conductor temperature [degC] (or current_a)"),
        **WEATHER_KEYS,
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
        "offset_m": Key(NUMBER, 0.0, within(MAX_WIRE_POSITION_M), doc="horizontal offset from the structure centre, + to the right "
                                          "looking along increasing seq [m]"),
        "dz_m": Key(NUMBER, 0.0, within(MAX_WIRE_POSITION_M), doc="height above the structure's attach_height_m [m]"),
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
        "max_swing_deg": Key(NUMBER, 60.0, positive,
                             "a suspension string swinging further than this from plumb is warned of [deg]"),
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
    "point_cloud": {
        "corridor_m": Key(NUMBER, None, positive, "half width of the kept corridor around the line [m] "
                                                  "(default: wire offset + blowout + clearance reach + margin)"),
        "wire_classes": Key(list, [14], las_classes, "LAS classes of wire points (14 conductor, 13 shield)"),
        "surface_classes": Key(list, [3, 4, 5, 6], las_classes,
                               "LAS classes of surface points (3-5 vegetation, 6 building); [] for none"),
        "structure_gap_m": Key(NUMBER, 5.0, non_negative, "wire points this close to a structure are ignored "
                                                          "(jumpers, hardware) [m]"),
        "wire_search_m": Key(NUMBER, 1.5, positive, "largest plan distance of a wire point from its wire [m]"),
        "fit_attachments": Key(str, "free", one_of("free", "fixed"),
                               "attachment heights fitted with the curve, or held at the structures' clamps"),
        "write_points": Key(bool, False, doc="write the assigned wire points as the wire_points layer"),
    },
    "survey": {
        "conductor_temperature_c": Key(NUMBER, None, above_absolute_zero,
                                       "conductor temperature during the survey flight [degC]"),
        "wire_temperature_c": Key(dict, {}, doc="a wire's own survey temperature: wire name = degC", table={},
                                  other=Key(NUMBER, check=above_absolute_zero,
                                            doc="survey conductor temperature of that wire [degC]")),
        "span_temperature_c": Key(dict, {}, doc="a span's own survey temperature: span id = degC (overrides "
                                                "the others for that span)", table={},
                                  other=Key(NUMBER, check=above_absolute_zero,
                                            doc="survey conductor temperature in that span [degC]")),
        **WEATHER_KEYS,
        "current_a": Key(NUMBER, None, non_negative, "line current during the flight; the survey temperature "
                                                      "follows from the heat balance (instead of "
                                                      "conductor_temperature_c) [A]"),
    },
    "output": {
        "path": Key(str, "results.gpkg", doc="GeoPackage to write"),
        "gpkg_version": Key(str, "1.2", one_of("1.2", "1.3", "1.4"),
                            "GeoPackage version the file declares (1.2 opens in older desktop GIS)"),
    },
    "report": {
        "units": Key(str, "si", one_of("si", "imperial"),
                     "units shown in the summary and sag tables besides SI (files stay SI)"),
        "dir": Key(str, None, doc="folder (beside the project file) for an HTML report built with every run"),
        "title": Key(str, None, doc="the job's one-line description at the top of the report"),
        "all_spans": Key(bool, False, doc="draw a profile for every span, not only those with findings"),
    },
    "pipeline": {
        "stages": Key(list, [], list_of_text, doc="stages to add to (or replace in) the built-in chain"),
    },
    "engine": {
        "workers": Key(int, 0, non_negative, doc="worker processes for the tension sections (0: one per core)"),
        "scheduler": Key(str, "", doc="dask scheduler address (tcp://host:port) or local:N; empty: no dask"),
    },
}

# Tables given as [[name]] arrays rather than [name].
ARRAY_TABLES = {"load_cases", "wires", "limits"}
REQUIRED_TABLES = {"inputs", "conductor", "stringing", "load_cases"}
TENSION_KEYS = ("horizontal_tension_kn", "tension_percent_rts", "catenary_m")
#: Ways to give the final (crept) condition; at most one per stringing table.
CREEP_KEYS = ("creep_allowance_c", "creep_strain", "final_horizontal_tension_kn")
#: Members of a two-material conductor, required with model = "two_material" (auto: all known picks it).
MEMBER_KEYS = ("aluminium_area_mm2", "aluminium_modulus_gpa", "aluminium_expansion_per_c", "core_area_mm2",
               "core_modulus_gpa", "core_expansion_per_c")


