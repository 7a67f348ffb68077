"""The TOML project file: parsing, defaults and validation with clear messages.

A project file is checked against :data:`SCHEMA` (``schema.py``) in one pass
(``validation.py``); every problem found is reported together, each naming the
file, the table and the key. Unknown keys are errors that suggest the nearest
valid key. The result is a :class:`Project` (``model.py``) in SI units.
"""
from __future__ import annotations

import tomllib
from dataclasses import fields
from pathlib import Path

from routesag.errors import ProjectError
from routesag.physics.thermal import Weather
from routesag.project.model import (
    DEFAULT_WIRE, ClearanceRules, Conductor, LoadCase, PointCloudSettings, Project, Stringing, TensionLimit, Wire,
)
from routesag.project.schema import MAX_ATTACH_HEIGHT_M, REQUIRED, SCHEMA, TENSION_KEYS, Key
from routesag.project.validation import _conductor_from, _wire_label, resolve_conductor, validate_settings

__all__ = [
    "load_project", "validate_settings", "resolve_conductor", "SCHEMA", "Key", "REQUIRED", "TENSION_KEYS",
    "MAX_ATTACH_HEIGHT_M", "Project", "Conductor", "LoadCase", "Stringing", "TensionLimit", "Wire",
    "ClearanceRules",
]


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


#: Some editors start UTF-8 files with a byte-order mark, which TOML does not allow; it is dropped.
UTF8_BOM = b"\xef\xbb\xbf"


def _read_toml(path: Path) -> dict:
    if not path.is_file():
        raise ProjectError(f"project file {path}: not found")
    try:
        text = path.read_bytes().removeprefix(UTF8_BOM).decode("utf-8")
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProjectError(f"project file {path}: TOML syntax error: {exc}") from None
    except RecursionError:
        raise ProjectError(f"project file {path}: tables or lists are nested too deeply to read") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ProjectError(f"project file {path}: cannot be read: {exc}") from None


def _build_project(path: Path, s: dict, output) -> Project:
    base = path.parent
    conductor = _conductor_from(s["conductor"])
    stringing = Stringing(**s["stringing"])
    load_cases = [LoadCase(name=e["name"], temperature_c=e["temperature_c"], ice_m=e["ice_mm"] / 1e3,
                           wind_pa=e["wind_pa"], constant_n_m=e["constant_n_m"], wind_side=e["wind_side"],
                           condition=e["condition"], current_a=e["current_a"], weather=_weather(e))
                  for e in s["load_cases"]]
    out = Path(output) if output is not None else base / s["output"]["path"]
    inputs = s["inputs"]
    wires = [_build_wire(path, i, e, conductor, stringing) for i, e in enumerate(s["wires"])]
    _check_resistances(path, load_cases, [w.conductor for w in wires] or [conductor])
    _check_creep_model(path, [(w.conductor, w.stringing) for w in wires] or [(conductor, stringing)])
    return Project(
        path=path.resolve(), structures_path=(base / s["inputs"]["structures"]).resolve(),
        structures_layer=s["inputs"]["structures_layer"], terrain_path=(base / s["inputs"]["terrain"]).resolve(),
        structures_crs=s["inputs"]["crs"], terrain_z_units=s["inputs"]["terrain_z_units"],
        attach_height_m=s["line"]["attach_height_m"], conductor=conductor,
        stringing=stringing, load_cases=load_cases,
        station_m=s["clearance"]["station_m"],
        ice_density_kg_m3=s["loads"]["ice_density_kg_m3"], output_path=out.resolve(),
        pipeline_stages=list(s["pipeline"]["stages"]), settings=s,
        wires=wires,
        insulator_weight_n=s["insulators"]["weight_n"], insulator_wind_area_m2=s["insulators"]["wind_area_m2"],
        insulator_max_swing_deg=s["insulators"]["max_swing_deg"],
        limits=[TensionLimit(**e) for e in s["limits"]],
        crossings_path=None if inputs["crossings"] is None else (base / inputs["crossings"]).resolve(),
        crossings_layer=inputs["crossings_layer"],
        surface_path=None if inputs["surface"] is None else (base / inputs["surface"]).resolve(),
        surface_values=inputs["surface_values"], clearance=_clearance_rules(s["clearance"]),
        point_cloud=_point_cloud_settings(path, s, wires or [Wire(DEFAULT_WIRE, conductor, stringing)]))


def _weather(case: dict) -> Weather | None:
    """The heat balance's weather of a load case given by current_a (validated)."""
    if case["current_a"] is None:
        return None
    return Weather(**{f.name: case[f.name] for f in fields(Weather)})


def _check_resistances(path: Path, cases: list[LoadCase], conductors) -> None:
    """A case given by its current needs every conductor it is solved for to hold AC resistances."""
    current = [c.name for c in cases if c.current_a is not None]
    lacking = sorted({c.name for c in conductors if c.thermal() is None})
    if current and lacking:
        raise ProjectError(f"project file {path}: [[load_cases]] {', '.join(map(repr, current))} give current_a, "
                           f"which needs the AC resistance of the conductor: add resistance_25c_ohm_km and "
                           f"resistance_75c_ohm_km to [conductor] (or the wire's conductor) for "
                           f"{', '.join(lacking)}")


def _check_creep_model(path: Path, pairs) -> None:
    """creep_strain and final_horizontal_tension_kn are the aluminium's: they need the two-material model."""
    for conductor, stringing in pairs:
        given = [k for k in ("creep_strain", "final_horizontal_tension_kn") if getattr(stringing, k) is not None]
        if given and conductor.two_material is None:
            raise ProjectError(f"project file {path}: [stringing] {', '.join(given)} is the aluminium's creep of "
                               f"the two-material model: set model = \"two_material\" in the conductor "
                               f"({conductor.name}) or give creep_allowance_c")


def _build_wire(path: Path, index: int, entry: dict, conductor: Conductor, stringing: Stringing) -> Wire:
    """A :class:`Wire`; without its own tables it takes the line's conductor and stringing."""
    own = entry["conductor"]
    return Wire(
        name=entry["name"], offset_m=entry["offset_m"], dz_m=entry["dz_m"], insulated=entry["insulated"],
        conductor=conductor if own is None else resolve_conductor(own, f"{path}: {_wire_label(index, entry)} "
                                                                        "conductor"),
        stringing=stringing if entry["stringing"] is None else Stringing(**entry["stringing"]))


def _point_cloud_settings(path: Path, s: dict, wires: list[Wire]) -> PointCloudSettings | None:
    base, inputs, cloud, survey = path.parent, s["inputs"], s["point_cloud"], s["survey"]
    if inputs["point_cloud"] is None:
        return None
    current = None
    if survey["current_a"] is not None:
        current = LoadCase(name="[survey]", temperature_c=None, current_a=survey["current_a"],
                           weather=_weather(survey))
        lacking = [w.name for w in wires if w.conductor.thermal() is None and w.name not in
                   survey["wire_temperature_c"]]
        if lacking:
            raise ProjectError(f"project file {path}: [survey] current_a needs the AC resistances "
                               f"(resistance_25c_ohm_km and resistance_75c_ohm_km) of the conductor of wire(s) "
                               f"{', '.join(map(repr, lacking))}")
    return PointCloudSettings(
        path=(base / inputs["point_cloud"]).resolve(), layer=inputs["point_cloud_layer"],
        crs=inputs["point_cloud_crs"], corridor_m=cloud["corridor_m"], wire_classes=tuple(cloud["wire_classes"]),
        surface_classes=tuple(cloud["surface_classes"]), structure_gap_m=cloud["structure_gap_m"],
        wire_search_m=cloud["wire_search_m"], fit_attachments=cloud["fit_attachments"],
        write_points=cloud["write_points"], survey_temperature_c=survey["conductor_temperature_c"],
        wire_temperature_c=dict(survey["wire_temperature_c"]), survey_current=current,
        span_temperature_c={str(k): v for k, v in survey["span_temperature_c"].items()})


def _clearance_rules(c: dict) -> ClearanceRules:
    return ClearanceRules(
        base_m=dict(c["required_m"]), voltage_kv=c["voltage_kv"], max_voltage_kv=c["max_voltage_kv"],
        adder_per_kv_m=c["adder"]["per_kv_m"], adder_above_kv=c["adder"]["above_kv"],
        cases=None if c["cases"] is None else tuple(c["cases"]), hotspot_merge_m=c["hotspot_merge_m"],
        surface_min_height_m=c["surface_min_height_m"], crossing_width_m=c["crossing_width_m"])
