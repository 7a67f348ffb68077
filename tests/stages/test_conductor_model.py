"""model = "auto" (the default): two members for a composite catalog conductor, linear otherwise."""
import math

import pytest

from routesag.stages.tensions import section_tensions
from tests.stages.test_tensions import by_case, project_file, section

STRINGING = "temperature_c = 15.0\nhorizontal_tension_kn = 28.0"


@pytest.mark.parametrize("conductor, model", [
    ('name = "Drake"', "two_material"),                               # catalog ACSR: core and aluminium known
    ('name = "Drake"\nmodel = "linear"', "linear"),                   # chosen
    ('name = "Drake"\nmodulus_gpa = 70.0', "linear"),                 # the linear modulus asked for is kept
    ('name = "Drake"\nmodulus_gpa = 70.0\ncore_modulus_gpa = 200.0', "two_material"),
    ('name = "Arbutus"', "linear"),                                   # AAC: homogeneous
    ('name = "Darien"', "linear"),                                    # AAAC: homogeneous
    ('diameter_mm = 28.14\narea_mm2 = 468.6\nmass_kg_m = 1.628\nrated_strength_kn = 140.1\n'
     'modulus_gpa = 70.0\nexpansion_per_c = 18.9e-6', "linear"),       # given without core data
])
def test_auto_model_follows_the_conductor_data(tmp_path, conductor, model):
    project = project_file(tmp_path, STRINGING, ['name = "hot"\ntemperature_c = 80.0'], conductor=conductor)
    assert project.conductor.model == model
    row = section_tensions(section(300.0), project)[0]
    assert row["conductor_model"] == model
    assert math.isnan(row["knee_point_initial_c"]) == (model == "linear")


def test_auto_model_with_only_a_creep_allowance_solves_the_final_condition(tmp_path):
    # The default path of existing projects: creep_allowance_c only. The two-material final condition turns it
    # into an aluminium creep strain that lengthens the wire as much as the allowance does below the knee, so
    # final at 30 C is the initial state at 50 C to first order in the strains (the product terms are ~1e-7).
    cases = ['name = "final_30"\ntemperature_c = 30.0',
             'name = "initial_50"\ntemperature_c = 50.0\ncondition = "initial"',
             'name = "initial_30"\ntemperature_c = 30.0\ncondition = "initial"']
    project = project_file(tmp_path, "temperature_c = 15.0\nhorizontal_tension_kn = 30.0\ncreep_allowance_c = 20.0",
                           cases, conductor='name = "Drake"')
    rows = by_case(section_tensions(section(320.0), project))
    assert rows["final_30"]["conductor_model"] == "two_material"
    assert rows["final_30"]["condition"] == "final"
    assert rows["final_30"]["horizontal_tension_n"] == pytest.approx(rows["initial_50"]["horizontal_tension_n"],
                                                                     rel=1e-4)
    assert rows["final_30"]["horizontal_tension_n"] < 0.97 * rows["initial_30"]["horizontal_tension_n"]
    # the crept aluminium goes slack at a lower temperature than the new one
    assert rows["final_30"]["knee_point_final_c"] < rows["final_30"]["knee_point_initial_c"]


def curves_table(aluminium, core):
    return f"\n[conductor.stress_strain]\naluminium_initial = {list(aluminium)}\ncore_initial = {list(core)}"


def test_project_stress_strain_curves_that_are_linear_change_nothing(tmp_path):
    from tests.physics.test_stress_strain import LINEAR

    cases = ['name = "hot"\ntemperature_c = 150.0', 'name = "cold"\ntemperature_c = -20.0']
    plain = project_file(tmp_path, STRINGING, cases, conductor='name = "Drake"')
    curved = project_file(tmp_path, STRINGING, cases, conductor='name = "Drake"' + curves_table(
        LINEAR["aluminium_initial"], LINEAR["core_initial"]))
    assert curved.conductor.two_material.curves is not None
    for a, b in zip(section_tensions(section(300.0), plain), section_tensions(section(300.0), curved)):
        assert b["horizontal_tension_n"] == pytest.approx(a["horizontal_tension_n"], rel=1e-9)


@pytest.mark.parametrize("conductor, message", [
    ('name = "Drake"' + curves_table((5.0, 400.0, 0, 0, 0), (0, 267.0, 0, 0, 0)),
     r"\[conductor.stress_strain\]: aluminium_initial = .* a0 = 0"),
    ('name = "Drake"\nmodel = "linear"' + curves_table((0, 400.0, 0, 0, 0), (0, 267.0, 0, 0, 0)),
     "need the two-material model"),
    ('name = "Drake"\n[conductor.stress_strain]\naluminium_initial = [0, 400.0, 0, 0, 0]', "missing 'core_initial'"),
])
def test_bad_stress_strain_curves_are_refused(tmp_path, conductor, message):
    from routesag.errors import ProjectError

    with pytest.raises(ProjectError, match=message):
        project_file(tmp_path, STRINGING, ['name = "hot"\ntemperature_c = 80.0'], conductor=conductor)
