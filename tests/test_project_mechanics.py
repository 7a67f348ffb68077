"""Project file: catalog conductors, creep condition, tension limits and design-tension settings."""
import pytest

from routesag.errors import ProjectError
from routesag.project import Stringing, load_project, resolve_conductor, validate_settings
from tests.conftest import DRAKE_TOML


def with_text(survey, old, new):
    text = survey.read_text()
    assert old in text
    survey.write_text(text.replace(old, new))
    return survey


def catalog_drake(survey, extra=""):
    return with_text(survey, DRAKE_TOML.strip(), '[conductor]\nname = "DRAKE"\n' + extra)


def test_catalog_name_fills_every_property(survey):
    conductor = load_project(catalog_drake(survey)).conductor
    # Drake: FIELD.md section 5 (ASTM B232 via CPUC GO 95 Table 23); 74 GPa, 18.9e-6 /C FIELD.md section 3.
    assert conductor.diameter_m == pytest.approx(0.02814)
    assert conductor.area_m2 == pytest.approx(468.6e-6)
    assert conductor.mass_kg_m == pytest.approx(1.628)
    assert conductor.rated_strength_n == pytest.approx(140.1e3)
    assert conductor.modulus_pa == pytest.approx(74e9)
    assert conductor.expansion_per_c == pytest.approx(18.9e-6)
    assert conductor.name == "ACSR 795 kcmil 26/7 Drake"
    assert "GO 95" in conductor.source


def test_explicit_fields_override_the_catalog(survey):
    project = load_project(catalog_drake(survey, "modulus_gpa = 70.0\n"))
    assert project.conductor.modulus_pa == pytest.approx(70e9)
    assert project.conductor.mass_kg_m == pytest.approx(1.628)
    assert "given: modulus_gpa" in project.conductor.source
    assert project.settings["conductor"]["modulus_gpa"] == 70.0  # the effective value goes to run_info


def test_unknown_name_lists_close_matches(survey):
    with_text(survey, DRAKE_TOML.strip(), '[conductor]\nname = "Drak"')
    with pytest.raises(ProjectError, match=r"\[conductor\]: name = 'Drak' is not in the conductor catalog; "
                                           r"close matches: ACSR 795 kcmil 26/7 Drake"):
        load_project(survey)


def test_without_name_all_six_properties_are_required(survey):
    with_text(survey, "mass_kg_m = 1.628\n", "")
    with pytest.raises(ProjectError, match=r"\[conductor\]: missing 'mass_kg_m'"):
        load_project(survey)


def test_resolve_conductor_for_another_table():
    conductor = resolve_conductor({"name": "partridge", "rated_strength_kn": 49.0}, "x.toml: [[wires]] #4 conductor")
    assert conductor.diameter_m == pytest.approx(0.01631)  # FIELD.md section 5, GO 95
    assert conductor.rated_strength_n == pytest.approx(49e3)
    with pytest.raises(ProjectError) as info:
        resolve_conductor({"name": "Nope", "diameter_mmm": 3}, "x.toml: [[wires]] #4 conductor")
    problems = info.value.problems
    assert any(p.startswith("x.toml: [[wires]] #4 conductor: unknown key 'diameter_mmm'") for p in problems)
    assert any("name = 'Nope' is not in the conductor catalog" in p for p in problems)


def test_condition_defaults_follow_the_creep_allowance(survey):
    assert {c.condition for c in load_project(survey).load_cases} == {"initial"}
    with_text(survey, "horizontal_tension_kn = 30.0", "horizontal_tension_kn = 30.0\ncreep_allowance_c = 15.0")
    with_text(survey, 'name = "cold"', 'name = "cold"\ncondition = "initial"')
    project = load_project(survey)
    assert {c.name: c.condition for c in project.load_cases} == {"hot": "final", "cold": "initial"}
    assert project.stringing.state_temperature_c(50.0, "final") == 65.0
    assert project.stringing.state_temperature_c(50.0, "initial") == 50.0


def test_final_condition_needs_an_allowance(survey):
    with_text(survey, 'name = "hot"', 'name = "hot"\ncondition = "final"')
    with pytest.raises(ProjectError, match=r"#1: condition = 'final' needs \[stringing\] creep_allowance_c"):
        load_project(survey)


# A wire with its own conductor and stringing (no creep allowance of its own).
OWN_WIRE = """
[[wires]]
name = "C"

[[wires]]
name = "E"
dz_m = 5.0
insulated = false
[wires.conductor]
name = "Partridge"
[wires.stringing]
temperature_c = 15.0
tension_percent_rts = 18.0
"""
CREEP_20 = "horizontal_tension_kn = 30.0\ncreep_allowance_c = 20.0"


def test_own_stringing_without_allowance_is_refused_when_a_case_is_final(survey):
    # The line's allowance (20 C) belongs to its conductor; the earth wire must not silently get none (or 20).
    survey.write_text(with_text(survey, "horizontal_tension_kn = 30.0", CREEP_20).read_text() + OWN_WIRE)
    with pytest.raises(ProjectError) as info:
        load_project(survey)
    assert info.value.problems == [
        f"{survey}: [[wires]] #2 ('E') stringing: missing key 'creep_allowance_c': load case(s) 'hot', 'cold' "
        "are final (after creep); give creep_allowance_c (0 for a wire that does not creep)"]


def test_own_stringing_without_allowance_is_fine_when_every_case_is_initial(survey):
    survey.write_text(survey.read_text() + OWN_WIRE)
    project = load_project(survey)
    assert {c.condition for c in project.load_cases} == {"initial"}
    assert project.wires[1].stringing.creep_allowance_c is None


def test_own_stringing_creeps_by_its_own_allowance(survey):
    survey.write_text(with_text(survey, "horizontal_tension_kn = 30.0", CREEP_20).read_text()
                      + OWN_WIRE.replace("tension_percent_rts = 18.0", "tension_percent_rts = 18.0\n"
                                                                       "creep_allowance_c = 5.0"))
    phase, earth = load_project(survey).wires
    assert phase.stringing.state_temperature_c(90.0, "final") == 110.0
    assert earth.stringing.state_temperature_c(90.0, "final") == 95.0
    assert earth.stringing.state_temperature_c(90.0, "initial") == 90.0


def test_final_state_without_an_allowance_is_never_taken_as_no_creep():
    stringing = Stringing(temperature_c=15.0, horizontal_tension_kn=30.0)
    assert stringing.state_temperature_c(90.0, "initial") == 90.0
    with pytest.raises(ValueError, match="final condition needs creep_allowance_c"):
        stringing.state_temperature_c(90.0, "final")


LIMIT = '\n[[limits]]\nload_case = "{case}"\nmax_percent_rts = 25.0\n'


def test_limits_load(survey):
    survey.write_text(survey.read_text() + LIMIT.format(case="cold")
                      + '\n[[limits]]\nload_case = "hot"\nmax_catenary_m = 1400\napplies_to = "support"\n')
    limits = load_project(survey).limits
    assert [(lim.load_case, lim.max_percent_rts, lim.max_catenary_m, lim.applies_to) for lim in limits] == [
        ("cold", 25.0, None, "horizontal"), ("hot", None, 1400.0, "support")]
    assert limits[0].describe() == "25 % RTS horizontal"


def test_limit_on_unknown_load_case_is_an_error(survey):
    survey.write_text(survey.read_text() + LIMIT.format(case="colt"))
    with pytest.raises(ProjectError, match=r"\[\[limits\]\] #1: load_case = 'colt' is not a \[\[load_cases\]\] "
                                           r"name; did you mean 'cold'"):
        load_project(survey)


@pytest.mark.parametrize("limit, message", [
    ({"load_case": "a"}, "give max_percent_rts, max_catenary_m or both"),
    ({"load_case": "a", "max_percent_rts": 120}, "must be below 100"),
    ({"load_case": "a", "max_percent_rts": 20, "applies_to": "sag"}, "must be one of 'horizontal', 'support'"),
])
def test_bad_limits(limit, message):
    _, problems = validate_settings({"load_cases": [{"name": "a", "temperature_c": 0}], "limits": [limit]})
    assert any(message in p for p in problems), problems


def test_from_limits_replaces_the_tension_key(survey):
    with_text(survey, "horizontal_tension_kn = 30.0", "from_limits = true")
    with pytest.raises(ProjectError, match="from_limits = true needs at least one"):
        load_project(survey)
    survey.write_text(survey.read_text() + LIMIT.format(case="cold"))
    assert load_project(survey).stringing.from_limits
    with_text(survey, "from_limits = true", "from_limits = true\ncatenary_m = 1500")
    with pytest.raises(ProjectError, match="from_limits = true finds the tension; remove catenary_m"):
        load_project(survey)
