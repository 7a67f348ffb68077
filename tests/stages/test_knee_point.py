"""Two-material Drake through the tension stage: Grigsby Table 14.5 final rows, both stringing methods."""
import math

import pandas as pd
import pytest

from routesag.errors import ProjectError, SolveError
from routesag.stages.tensions import section_tensions
from tests.stages.test_tensions import FT, LB_FT, LBF, PSF, by_case, fahrenheit, project_file, section

# Grigsby (ed.), Electric Power Generation, Transmission and Distribution, ch. 14, Table 14.5 (FIELD.md §7, §9):
# Drake, 700 ft level span, 6300 lb initial and 5429 lb final at 60 F (these two fix the aluminium's final creep
# strain). Final rows: tension lb; the tolerance: 2 % up to 120 F, 8 % at 212 F (the table comes from nonlinear
# stress-strain curves; a linear two-material model lands about 5-7 % low, FIELD.md §9).
FINAL_ROWS = {"heavy_0f": (11318.0, 0.02), "iced_32f": (9224.0, 0.02), "bare_120f": (4330.0, 0.02),
              "bare_212f": (3728.0, 0.08)}
CASES = [
    f'name = "heavy_0f"\ntemperature_c = {fahrenheit(0.0)}\nice_mm = 12.7\nwind_pa = {4 * PSF}\n'
    f'constant_n_m = {0.30 * LB_FT}',
    'name = "iced_32f"\ntemperature_c = 0.0\nice_mm = 12.7',
    f'name = "bare_120f"\ntemperature_c = {fahrenheit(120.0)}',
    f'name = "bare_212f"\ntemperature_c = {fahrenheit(212.0)}',
    f'name = "initial_60f"\ntemperature_c = {fahrenheit(60.0)}\ncondition = "initial"',
    f'name = "final_60f"\ntemperature_c = {fahrenheit(60.0)}',
]
STRINGING = (f"temperature_c = {fahrenheit(60.0)}\nhorizontal_tension_kn = {6300.0 * LBF / 1e3}\n"
             f"final_horizontal_tension_kn = {5429.0 * LBF / 1e3}\nmethod = \"{{method}}\"")
SPANS = pd.DataFrame({"span_m": [700.0 * FT], "dz_m": [0.0]})


def drake_rows(tmp_path, method):
    project = project_file(tmp_path, STRINGING.format(method=method), CASES,
                           conductor='name = "Drake"\nmodel = "two_material"')
    return by_case(section_tensions(section(700.0 * FT), project, spans=SPANS))


@pytest.mark.parametrize("method", ["section", "ruling_span"])
def test_two_material_drake_reproduces_the_final_rows(tmp_path, method):
    rows = drake_rows(tmp_path, method)
    assert rows["initial_60f"]["horizontal_tension_n"] / LBF == pytest.approx(6300.0, rel=1e-9)
    assert rows["final_60f"]["horizontal_tension_n"] / LBF == pytest.approx(5429.0, rel=1e-7)
    for case, (tension_lb, tolerance) in FINAL_ROWS.items():
        assert rows[case]["horizontal_tension_n"] / LBF == pytest.approx(tension_lb, rel=tolerance), case


def test_two_material_is_closer_at_212f_than_the_linear_model(tmp_path):
    # the linear model strung at the final 5429 lb (no further creep) is 9.8 % low at 212 F (issue record);
    # the knee point takes it to within 8 %
    linear_project = project_file(tmp_path, f"temperature_c = {fahrenheit(60.0)}\n"
                                  f"horizontal_tension_kn = {5429.0 * LBF / 1e3}", CASES[3:4])
    linear = by_case(section_tensions(section(700.0 * FT), linear_project))["bare_212f"]
    two = drake_rows(tmp_path, "section")["bare_212f"]
    linear_error = linear["horizontal_tension_n"] / LBF / 3728.0 - 1.0
    two_error = two["horizontal_tension_n"] / LBF / 3728.0 - 1.0
    assert linear_error == pytest.approx(-0.098, abs=0.003)
    assert abs(two_error) < 0.08 and abs(two_error) < abs(linear_error) - 0.02


def test_knee_points_go_into_every_row(tmp_path):
    rows = drake_rows(tmp_path, "section")
    knees = {(r["knee_point_initial_c"], r["knee_point_final_c"]) for r in rows.values()}
    assert len(knees) == 1
    initial, final = knees.pop()
    # final: the aluminium goes slack between the 120 F row (still within 2 % of the composite model) and the
    # 212 F row; the crept aluminium goes slack earlier than the new one
    assert fahrenheit(120.0) < final < fahrenheit(212.0)
    assert initial > final + 20.0
    assert rows["bare_212f"]["stringing_method"] == "section"


def test_linear_conductor_has_no_knee(tmp_path):
    project = project_file(tmp_path, "temperature_c = 15.0\nhorizontal_tension_kn = 28.0", CASES[2:3])
    row = section_tensions(section(300.0), project)[0]
    assert math.isnan(row["knee_point_initial_c"]) and math.isnan(row["knee_point_final_c"])


@pytest.mark.parametrize("conductor, stringing, message", [
    ('name = "Drake"\nmodel = "linear"', "creep_strain = 4e-4",
     r"creep_strain is the aluminium's creep.*model = \"two_material\""),
    ('name = "Drake"\nmodel = "two_material"', "creep_strain = 4e-4\ncreep_allowance_c = 15.0",
     r"at most one of creep_allowance_c, creep_strain, final_horizontal_tension_kn"),
    ('name = "Arbutus"\nmodel = "two_material"', "", r"model = 'two_material' needs 'aluminium_area_mm2'"),
])
def test_bad_two_material_settings_are_refused(tmp_path, conductor, stringing, message):
    with pytest.raises(ProjectError, match=message):
        project_file(tmp_path, "temperature_c = 15.0\nhorizontal_tension_kn = 28.0\n" + stringing, CASES[2:3],
                     conductor=conductor)


def test_final_tension_above_the_initial_is_refused(tmp_path):
    stringing = "temperature_c = 15.0\nhorizontal_tension_kn = 28.0\nfinal_horizontal_tension_kn = 30.0"
    project = project_file(tmp_path, stringing, CASES[2:3], conductor='name = "Drake"\nmodel = "two_material"')
    with pytest.raises(SolveError, match="creep only slackens"):
        section_tensions(section(300.0), project)


def test_two_material_level_section_agrees_with_its_ruling_span(tmp_path):
    # on a level section both methods agree within 0.05 % (issue 9, item 2), with the knee point too
    spans = pd.DataFrame({"span_m": [100.0, 150.0, 200.0], "dz_m": [0.0, 0.0, 0.0]})  # ruling span 165.83 m
    rows = {}
    for method in ("section", "ruling_span"):
        stringing = f"temperature_c = 15.0\nhorizontal_tension_kn = 28.0\ncreep_strain = 4e-4\nmethod = \"{method}\""
        project = project_file(tmp_path, stringing, CASES[:4], conductor='name = "Drake"\nmodel = "two_material"')
        rows[method] = by_case(section_tensions(section(165.83), project, spans=spans))
    for case in ("heavy_0f", "bare_212f"):
        assert rows["section"][case]["horizontal_tension_n"] == pytest.approx(
            rows["ruling_span"][case]["horizontal_tension_n"], rel=5e-4)
