"""Project file parsing and validation."""

import pytest

from routesag.errors import ProjectError
from routesag.project import load_project, validate_settings


def test_valid_project_loads_in_si_units(survey):
    project = load_project(survey)
    assert project.conductor.diameter_m == pytest.approx(0.02814)
    assert project.conductor.area_m2 == pytest.approx(468.6e-6)
    assert project.conductor.rated_strength_n == pytest.approx(140.1e3)
    assert project.conductor.modulus_pa == pytest.approx(70e9)
    assert [c.name for c in project.load_cases] == ["hot", "cold"]
    assert project.structures_path == (survey.parent / "structures.gpkg").resolve()
    assert project.output_path == (survey.parent / "out.gpkg").resolve()
    assert project.ice_density_kg_m3 == 913.0  # FIELD.md §4 default


def test_unknown_key_suggests_nearest(survey):
    survey.write_text(survey.read_text().replace("station_m =", "staton_m ="))
    with pytest.raises(ProjectError, match=r"unknown key 'staton_m'; did you mean 'station_m'"):
        load_project(survey)


def test_unknown_table_suggests_nearest(survey):
    survey.write_text(survey.read_text() + "\n[clearence]\nground_m = 1\n")
    with pytest.raises(ProjectError, match=r"unknown table \[clearence\]; did you mean 'clearance'"):
        load_project(survey)


def test_syntax_error_gives_line_and_column(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text("[inputs]\nstructures = = 'a.gpkg'\nterrain = 'b.tif'\n")
    with pytest.raises(ProjectError, match=r"bad.toml: TOML syntax error: .*line 2, column"):
        load_project(path)


def test_missing_file(tmp_path):
    with pytest.raises(ProjectError, match="not found"):
        load_project(tmp_path / "nope.toml")


def test_all_problems_reported_together(survey):
    text = survey.read_text().replace("diameter_mm = 28.14", "diameter_mm = 'thick'")
    text = text.replace("station_m = 1.0", "station_m = -1.0")
    survey.write_text(text)
    with pytest.raises(ProjectError) as info:
        load_project(survey)
    problems = info.value.problems
    assert any("diameter_mm = 'thick' has the wrong type: expected a number" in p for p in problems)
    assert any("station_m = -1.0 must be > 0" in p for p in problems)


@pytest.mark.parametrize("keys, found", [((), 0), (("horizontal_tension_kn", "catenary_m"), 2)])
def test_exactly_one_stringing_tension(keys, found):
    stringing = {"temperature_c": 15.0, **{k: 1.0 for k in keys}}
    _, problems = validate_settings({"stringing": stringing})
    assert any("give exactly one of" in p and f"found {found}" in p for p in problems)


def test_duplicate_load_case_names():
    cases = [{"name": "hot", "temperature_c": 90}, {"name": "hot", "temperature_c": 80}]
    _, problems = validate_settings({"load_cases": cases})
    assert any("name 'hot' is used more than once" in p for p in problems)


def test_boolean_is_not_a_number():
    _, problems = validate_settings({"clearance": {"ground_m": True}})
    assert any("ground_m = True has the wrong type" in p for p in problems)


def test_output_override(survey, tmp_path):
    project = load_project(survey, output=tmp_path / "x.gpkg")
    assert project.output_path == (tmp_path / "x.gpkg").resolve()
