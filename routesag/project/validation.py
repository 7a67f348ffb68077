"""Checking raw TOML data against the schema: every problem at once, each naming file, table and key."""
from __future__ import annotations

import difflib
import math
from typing import Any

from routesag.catalog import PROPERTY_FIELDS, close_matches, find_conductor
from routesag.errors import ProjectError, cut
from routesag.physics.clearance_rules import DEFAULT_REQUIRED_M
from routesag.physics.loads import G
from routesag.physics.stress_strain import StressStrainCurves
from routesag.physics.two_material import TwoMaterialConductor
from routesag.project.model import Conductor
from routesag.project.point_cloud_checks import check_point_cloud
from routesag.project.schema import (
    ARRAY_TABLES, CREEP_KEYS, MEMBER_KEYS, NUMBER, REQUIRED, REQUIRED_TABLES, SCHEMA, STRESS_STRAIN_TABLE,
    TENSION_KEYS, Key,
)

STRESS_STRAIN_KEYS = tuple(STRESS_STRAIN_TABLE)


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
    _check_case_temperatures(source, settings.get("load_cases", []), problems)
    _set_conditions(source, settings, problems)
    _check_limits(source, settings, problems)
    _check_clearance(source, raw.get("clearance"), settings, problems)
    check_point_cloud(source, raw, settings, problems)
    _check_survey_temperature(source, settings.get("survey", {}), problems)
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
    out["model"] = _resolve_model(out, given)
    if out["model"] == "two_material":
        members = [k for k in MEMBER_KEYS if out.get(k) is None]
        if members:
            problems.append(f"{where}: model = 'two_material' needs {', '.join(map(repr, members))} "
                            f"(the catalog holds them for ACSR)")
    _check_curves(where, out, problems)
    missing = [k for k in PROPERTY_FIELDS if out.get(k) is None]
    if missing:
        problems.append(f"{where}: missing {', '.join(map(repr, missing))}: give name = \"...\" "
                        f"(a catalog conductor) or all of {', '.join(PROPERTY_FIELDS)}")
    return out


def _curves_given(table: dict) -> list[str]:
    return [k for k, v in (table.get("stress_strain") or {}).items() if v is not None]


def _check_curves(where: str, out: dict, problems) -> None:
    """Stress-strain curves belong to the two-material model and need both initial curves."""
    given = _curves_given(out)
    if not given:
        return
    if out["model"] != "two_material":
        problems.append(f"{where}: stress_strain curves ({', '.join(given)}) need the two-material model: "
                        f"set model = \"two_material\" with the members' areas and expansions")
    missing = [k for k in ("aluminium_initial", "core_initial") if k not in given]
    if missing:
        problems.append(f"{where}.stress_strain: missing {', '.join(map(repr, missing))} (with any curve, "
                        f"both initial curves are needed)")


def _resolve_model(out: dict, given: dict) -> str:
    """The stretch model of a conductor: as given, or for ``model = "auto"`` chosen from its data.

    Auto picks the two members when all their data are known (a catalog ACSR, or given) and linear otherwise
    (AAC, AAAC, a conductor given without core data). An explicit ``modulus_gpa`` or ``expansion_per_c``
    without any member key asks for the linear composite with those values, so auto keeps it linear rather
    than ignore them.
    """
    model = out.get("model", "auto")
    if model != "auto":
        return model
    linear_given = any(given.get(k) is not None for k in ("modulus_gpa", "expansion_per_c"))
    members_given = any(given.get(k) is not None for k in MEMBER_KEYS) or bool(_curves_given(given))
    if all(out.get(k) is not None for k in MEMBER_KEYS) and (members_given or not linear_given):
        return "two_material"
    return "linear"


def _conductor_from(c: dict) -> Conductor:
    """SI Conductor from a completed ``[conductor]`` table."""
    return Conductor(
        diameter_m=c["diameter_mm"] / 1e3, area_m2=c["area_mm2"] / 1e6, mass_kg_m=c["mass_kg_m"],
        rated_strength_n=c["rated_strength_kn"] * 1e3, modulus_pa=c["modulus_gpa"] * 1e9,
        expansion_per_c=c["expansion_per_c"], name=c.get("name") or "conductor",
        source=c.get("source", "project file"), two_material=_two_material_from(c), **_resistances_from(c))


def _two_material_from(c: dict) -> TwoMaterialConductor | None:
    """The two members in SI units with model = "two_material" (their keys checked), else None."""
    if c.get("model") != "two_material":
        return None
    return TwoMaterialConductor(
        aluminium_area_m2=c["aluminium_area_mm2"] / 1e6, aluminium_modulus_pa=c["aluminium_modulus_gpa"] * 1e9,
        aluminium_expansion_per_c=c["aluminium_expansion_per_c"], core_area_m2=c["core_area_mm2"] / 1e6,
        core_modulus_pa=c["core_modulus_gpa"] * 1e9, core_expansion_per_c=c["core_expansion_per_c"],
        aluminium_compression_pa=c["aluminium_compression_mpa"] * 1e6, curves=_curves_from(c))


def _curves_from(c: dict) -> StressStrainCurves | None:
    """The maker's curves (their stresses over the conductor's area), None when not given."""
    if not _curves_given(c):
        return None
    table = c["stress_strain"]
    return StressStrainCurves(area_m2=c["area_mm2"] / 1e6, **{
        k: None if table.get(k) is None else tuple(float(v) for v in table[k]) for k in STRESS_STRAIN_KEYS})


def _resistances_from(c: dict) -> dict:
    """AC resistances [ohm/m] from the table's [ohm/km], None where not given."""
    return {f"resistance_{t}c_ohm_m": None if c.get(f"resistance_{t}c_ohm_km") is None
            else c[f"resistance_{t}c_ohm_km"] / 1e3 for t in (25, 75)}


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
        problems.append(f"{where}: {key} = {cut(repr(value))} {message}")
    else:
        out[key] = float(value) if spec.kind is NUMBER else value


#: Largest number a setting may hold; a bigger TOML integer cannot become a float (OverflowError).
MAX_NUMBER = 1e300


def _type_problem(value, spec: Key) -> str | None:
    kinds = spec.kind if isinstance(spec.kind, tuple) else (spec.kind,)
    if isinstance(value, bool) and bool not in kinds:
        return f"has the wrong type: expected {_kind_name(spec.kind)}, got true/false"
    if not isinstance(value, kinds):
        return f"has the wrong type: expected {_kind_name(spec.kind)}, got {type(value).__name__}"
    if isinstance(value, float) and not math.isfinite(value):
        return "must be a finite number"
    if isinstance(value, int) and not isinstance(value, bool) and float in kinds and abs(value) > MAX_NUMBER:
        return "is too large to be a number"
    return None


def _kind_name(kind) -> str:
    if kind is NUMBER:
        return "a number"
    names = {str: "text", list: "a list", bool: "true/false", dict: "a table"}
    return names.get(kind, getattr(kind, "__name__", str(kind)))


def _check_stringing(source, stringing: dict, problems, label="[stringing]") -> None:
    creep = [k for k in CREEP_KEYS if stringing.get(k) is not None]
    if len(creep) > 1:
        problems.append(f"{source}: {label}: give at most one of {', '.join(CREEP_KEYS)} (found "
                        f"{', '.join(creep)})")
    if stringing.get("final_horizontal_tension_kn") is not None and stringing.get("from_limits"):
        problems.append(f"{source}: {label}: final_horizontal_tension_kn belongs to a known stringing tension; "
                        f"with from_limits = true give creep_strain or creep_allowance_c")
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


#: Weather keys of a load case that only a case given by current_a uses.
WEATHER_ONLY = ("ambient_c", "wind_speed_m_s", "solar_flux_w_m2", "latitude_deg", "day_of_year", "solar_hour")
SUN_POSITION = ("latitude_deg", "day_of_year", "solar_hour")


def _check_case_temperatures(source, cases: list[dict], problems) -> None:
    """Each case gives temperature_c or current_a (not both); a current needs its weather."""
    for i, case in enumerate(cases):
        where = f"{source}: [[load_cases]] #{i + 1}" + (f" ({case['name']!r})" if case.get("name") else "")
        given = [k for k in ("temperature_c", "current_a") if case.get(k) is not None]
        if len(given) != 1:
            problems.append(f"{where}: give exactly one of temperature_c (the conductor temperature) or "
                            f"current_a (the line current, with its weather)"
                            + (" — both are given" if given else ""))
            continue
        if given == ["temperature_c"]:
            extra = [k for k in WEATHER_ONLY if case.get(k) is not None]
            if extra:
                problems.append(f"{where}: {', '.join(extra)} only serve current_a; remove them or give "
                                f"current_a instead of temperature_c")
            continue
        _check_weather(where, case, problems)


def _check_weather(where: str, entry: dict, problems) -> None:
    """A table given by current_a (a load case, or [survey]) needs the heat balance's weather."""
    missing = [k for k in ("ambient_c", "wind_speed_m_s") if entry.get(k) is None]
    sun = [k for k in SUN_POSITION if entry.get(k) is not None]
    if entry.get("solar_flux_w_m2") is None and len(sun) != len(SUN_POSITION):
        missing.append("solar_flux_w_m2 or all of " + ", ".join(SUN_POSITION))
    elif entry.get("solar_flux_w_m2") is not None and sun:
        problems.append(f"{where}: give solar_flux_w_m2 or the sun's position ({', '.join(sun)}), not both")
    if missing:
        problems.append(f"{where}: current_a needs {', '.join(missing)}")


def _check_survey_temperature(source, survey: dict, problems) -> None:
    """[survey] gives the flight's conductor temperature directly or by its line current, not both."""
    if survey.get("conductor_temperature_c") is not None and survey.get("current_a") is not None:
        problems.append(f"{source}: [survey]: give conductor_temperature_c or current_a (the line current "
                        "during the flight, with its weather), not both")
    elif survey.get("current_a") is not None:
        _check_weather(f"{source}: [survey]", survey, problems)


def _set_conditions(source, settings: dict, problems) -> None:
    """Default each load case's condition: final when a creep allowance is given, else initial.

    Every stringing table a final case is solved from must give its own allowance.
    """
    allowance = _creep_given(settings.get("stringing", {}))
    final = []
    for i, case in enumerate(settings.get("load_cases", [])):
        if case.get("condition") is None:
            case["condition"] = "initial" if allowance is None else "final"
        elif case["condition"] == "final" and allowance is None:
            problems.append(f"{source}: [[load_cases]] #{i + 1}: condition = 'final' needs [stringing] "
                            f"creep_allowance_c (give 0 for a conductor that does not creep; with model = "
                            f"'two_material' also creep_strain or final_horizontal_tension_kn)")
        if case["condition"] == "final":
            final.append(case.get("name") or f"#{i + 1}")
    if final:
        _check_wire_creep(source, settings.get("wires", []), final, problems)


def _creep_given(stringing: dict):
    """The creep key a stringing table gives, or None."""
    return next((k for k in CREEP_KEYS if stringing.get(k) is not None), None)


def _check_wire_creep(source, wires: list[dict], final_cases: list[str], problems) -> None:
    """A wire's own stringing needs its own creep allowance when a case is final.

    Creep depends on the conductor, so the line's allowance is not carried over
    to a wire strung on its own terms.
    """
    for i, entry in enumerate(wires):
        own = entry.get("stringing")
        if isinstance(own, dict) and _creep_given(own) is None:
            problems.append(f"{source}: {_wire_label(i, entry)} stringing: missing key 'creep_allowance_c': "
                            f"load case(s) {', '.join(map(repr, final_cases))} are final (after creep); give "
                            f"creep_allowance_c (0 for a wire that does not creep)")


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


