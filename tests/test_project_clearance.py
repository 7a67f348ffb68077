"""The [clearance] table: categories, nested tables, voltage adder, checked cases."""
import math

import pytest

from routesag.project import load_project, validate_settings

CASES = [{"name": "hot", "temperature_c": 90}, {"name": "ice", "temperature_c": 0, "ice_mm": 12.5}]


def clearance(**table):
    settings, problems = validate_settings({"clearance": table, "load_cases": CASES})
    return settings["clearance"], problems


def test_ground_m_is_shorthand_for_required_ground(survey):
    rules = load_project(survey).clearance  # the fixture project gives ground_m = 7.5
    assert rules.base_m["ground"] == 7.5
    assert rules.required_m["ground"] == 7.5  # no voltage: no adder
    assert rules.cases is None and rules.checks("anything")


def test_ground_clearance_has_one_home(survey):
    # The ground rule lives in project.clearance only; a second copy on Project (unread) could drift from it.
    project = load_project(survey)
    assert not hasattr(project, "ground_clearance_m")
    assert project.clearance.required_m["ground"] == 7.5


def test_default_set_is_used_when_nothing_is_given():
    # FIELD.md §6 (NESC Table 232-1, from memory): ground/road 5.6, railway 8.1, water 5.2, pedestrian 4.4.
    table, problems = clearance()
    assert not [p for p in problems if "clearance" in p]
    assert table["required_m"] == {"ground": 5.6, "road": 5.6, "railway": 8.1, "water": 5.2,
                                   "pedestrian": 4.4, "surface": 3.0}


def test_nested_tables_and_user_categories(survey):
    text = survey.read_text().replace("ground_m = 7.5\n", "voltage_kv = 138.0\nmax_voltage_kv = 145.0\n")
    survey.write_text(text + '\n[clearance.required_m]\nground = 6.0\nfootpath = 3.5\n'
                      '\n[clearance.adder]\nper_kv_m = 0.01\nabove_kv = 22.0\n')
    rules = load_project(survey).clearance
    adder = 0.01 * (145.0 / math.sqrt(3.0) - 22.0)  # NESC 232C1a summary (FIELD.md §6)
    assert rules.adder_m == pytest.approx(adder)
    assert rules.required_m["road"] == pytest.approx(6.22, abs=0.005)  # FIELD.md §6, derived: 138 kV road
    assert rules.required_m["ground"] == pytest.approx(6.0 + adder)
    assert rules.required_m["footpath"] == pytest.approx(3.5 + adder)
    assert rules.required_m["railway"] == pytest.approx(8.1 + adder)


def test_ground_given_twice_is_refused():
    _, problems = clearance(ground_m=7.5, required_m={"ground": 6.0})
    assert any("give ground_m or [clearance.required_m] ground, not both" in p for p in problems)


def test_nested_problems_name_the_nested_table():
    _, problems = clearance(required_m={"road": -1.0, "canal": "deep"}, adder={"per_kv": 0.01})
    assert any("[clearance.required_m]: road = -1.0 must be > 0" in p for p in problems)
    assert any("[clearance.required_m]: canal = 'deep' has the wrong type" in p for p in problems)
    assert any("[clearance.adder]: unknown key 'per_kv'; did you mean 'per_kv_m'" in p for p in problems)


def test_required_m_must_be_a_table():
    _, problems = clearance(required_m=5.0)
    assert any("required_m must be a table ([clearance.required_m])" in p for p in problems)


@pytest.mark.parametrize("table, message", [
    ({"max_voltage_kv": 145.0}, "max_voltage_kv needs voltage_kv"),
    ({"voltage_kv": 138.0, "max_voltage_kv": 120.0}, "max_voltage_kv = 120 is below voltage_kv = 138"),
    ({"cases": ["hott"]}, "cases names 'hott', which is not a load case; did you mean 'hot'"),
    ({"cases": []}, "cases = [] must name at least one entry"),
    ({"hotspot_merge_m": 0}, "hotspot_merge_m = 0 must be > 0"),
])
def test_clearance_cross_checks(table, message):
    _, problems = clearance(**table)
    assert any(message in p for p in problems), problems


def test_checked_cases(survey):
    survey.write_text(survey.read_text().replace("station_m = 1.0", 'station_m = 1.0\ncases = ["hot"]'))
    rules = load_project(survey).clearance
    assert rules.checks("hot") and not rules.checks("cold")


def test_optional_inputs_resolve_and_count_as_inputs(survey):
    text = survey.read_text().replace('terrain = "terrain.tif"',
                                      'terrain = "terrain.tif"\ncrossings = "x.gpkg"\nsurface = "dsm.tif"')
    survey.write_text(text)
    project = load_project(survey)
    assert project.crossings_path == (survey.parent / "x.gpkg").resolve()
    assert project.surface_path == (survey.parent / "dsm.tif").resolve()
    assert {"crossings", "surface"} <= set(project.input_paths())


def test_surface_values_is_checked():
    _, problems = validate_settings({"inputs": {"structures": "s", "terrain": "t", "surface_values": "dsm"}})
    assert any("surface_values = 'dsm' must be one of 'elevation', 'height'" in p for p in problems)
