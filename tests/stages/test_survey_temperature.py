"""The survey conductor temperature given by the flight's line current (heat balance) or per span."""
import numpy as np
import pytest
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.errors import ProjectError
from routesag.physics.thermal import ThermalConductor, Weather, conductor_temperature_c
from tests.cloud_survey import SURVEY_C, cloud_project, wire_points, write_las

# AC resistances for the test conductor: invented inputs, the checks below compare two runs, not outside values
RESISTANCES = "resistance_25c_ohm_km = 0.0727\nresistance_75c_ohm_km = 0.0872\n"
CURRENT_A, AMBIENT_C, WIND_M_S, SOLAR_W_M2 = 700.0, 18.0, 1.2, 850.0
SURVEY_WEATHER = (f"current_a = {CURRENT_A}\nambient_c = {AMBIENT_C}\nwind_speed_m_s = {WIND_M_S}\n"
                  f"solar_flux_w_m2 = {SOLAR_W_M2}\n")


def survey_project(tmp_path, survey_text, extra=""):
    tmp_path.mkdir(exist_ok=True)
    project = cloud_project(tmp_path, source="as_found", extra=extra)
    text = project.read_text().replace("mass_kg_m = 1.628\n", "mass_kg_m = 1.628\n" + RESISTANCES)
    project.write_text(text.replace(f"conductor_temperature_c = {SURVEY_C}\n", survey_text))
    write_las(tmp_path / "survey.laz", *wire_points(project))
    return project


def expected_temperature_c() -> float:
    conductor = ThermalConductor(28.14e-3, 0.0727e-3, 0.0872e-3)
    weather = Weather(ambient_c=AMBIENT_C, wind_speed_m_s=WIND_M_S, solar_flux_w_m2=SOLAR_W_M2)
    return conductor_temperature_c(CURRENT_A, weather, conductor)


def test_a_survey_by_current_equals_the_survey_at_its_heat_balance_temperature(tmp_path):
    t_c = expected_temperature_c()
    assert abs(t_c - SURVEY_C) > 5.0  # the two runs below would agree by accident otherwise
    by_current = routesag.run(survey_project(tmp_path / "a", SURVEY_WEATHER))
    direct = routesag.run(survey_project(tmp_path / "b", f"conductor_temperature_c = {t_c!r}\n"))
    np.testing.assert_allclose(by_current["wire_fits"]["survey_temperature_c"], t_c, rtol=1e-9)
    np.testing.assert_allclose(by_current["wire_fits"]["horizontal_tension_n"],
                               direct["wire_fits"]["horizontal_tension_n"], rtol=1e-9)
    for table in ("as_found", "conductors"):
        column = "as_found_tension_n" if table == "as_found" else "horizontal_tension_n"
        np.testing.assert_allclose(by_current[table][column], direct[table][column], rtol=1e-9)
    notes = by_current["run_info"].set_index("key")["value"]
    assert "current_a" in notes["note.survey_temperature_source"]
    assert f"{t_c:.3f}"[:5] in notes["note.survey_temperature_c"]


def test_temperature_and_current_together_are_refused_naming_survey(tmp_path):
    project = survey_project(tmp_path, SURVEY_WEATHER)
    project.write_text(project.read_text().replace(SURVEY_WEATHER, f"conductor_temperature_c = 25.0\n"
                                                                   f"{SURVEY_WEATHER}"))
    with pytest.raises(ProjectError, match=r"\[survey\]: give conductor_temperature_c or current_a"):
        routesag.run(project)
    result = CliRunner().invoke(main, ["run", str(project)])
    assert result.exit_code == 2 and "[survey]: give conductor_temperature_c or current_a" in result.output
    assert "Traceback" not in result.output
    assert not (tmp_path / "out.gpkg").exists()


def test_a_current_on_a_conductor_without_resistances_names_the_wire(tmp_path):
    project = survey_project(tmp_path, SURVEY_WEATHER)
    project.write_text(project.read_text().replace(RESISTANCES, ""))
    with pytest.raises(ProjectError, match=r"\[survey\] current_a needs the AC resistances.*'conductor'"):
        routesag.run(project)


def test_a_span_temperature_applies_to_that_span_only(tmp_path):
    base = routesag.run(survey_project(tmp_path / "a", f"conductor_temperature_c = {SURVEY_C}\n"))
    span = base["wire_fits"]["span_id"].iloc[-1]
    own = routesag.run(survey_project(tmp_path / "b", f"conductor_temperature_c = {SURVEY_C}\n",
                                      extra=f'[survey.span_temperature_c]\n"{span}" = 40.0\n'))
    temperatures = own["wire_fits"].set_index("span_id")["survey_temperature_c"]
    assert temperatures[span] == 40.0
    assert (temperatures.drop(span) == SURVEY_C).all()
    # the last span is its section's only one in this line, so that section's state is at 40 degC
    survey = own["as_found"].query("state == 'survey'").set_index("span_id")["temperature_c"]
    assert survey[span] == 40.0 and (survey.drop(span) == SURVEY_C).all()


def test_an_unknown_span_id_is_refused_naming_it(tmp_path):
    project = survey_project(tmp_path, f"conductor_temperature_c = {SURVEY_C}\n",
                             extra='[survey.span_temperature_c]\n"A:P7-P8" = 40.0\n')
    with pytest.raises(ProjectError, match=r"span_temperature_c.*'A:P7-P8'"):
        routesag.run(project)
