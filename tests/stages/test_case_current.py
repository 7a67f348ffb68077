"""Load cases given by their current: the heat balance sets the conductor temperature of the change of state."""
import pytest

from routesag.errors import ProjectError
from routesag.physics.thermal import ThermalConductor, Weather, conductor_temperature_c
from routesag.stages.tensions import section_tensions
from tests.stages.test_tensions import by_case, project_file, section

WEATHER = ("ambient_c = 40.0\nwind_speed_m_s = 0.61\nemissivity = 0.8\nabsorptivity = 0.8\n"
           "latitude_deg = 30.0\nday_of_year = 161\nsolar_hour = 11.0")
STRINGING = "temperature_c = 15.0\nhorizontal_tension_kn = 28.0"


def test_current_sets_the_case_temperature(tmp_path):
    cases = [f'name = "rating"\ncurrent_a = 1025.0\n{WEATHER}', 'name = "at_100"\ntemperature_c = 100.0']
    project = project_file(tmp_path, STRINGING, cases)
    rows = by_case(section_tensions(section(300.0), project))
    # the catalog Drake's resistances (IEEE 738-2006 example values, from memory) give the example's 100 C
    expected = conductor_temperature_c(1025.0, Weather(40.0, 0.61, emissivity=0.8, absorptivity=0.8,
                                                       latitude_deg=30.0, day_of_year=161, solar_hour=11.0),
                                       ThermalConductor(0.02814, 7.283e-5, 8.688e-5))
    assert rows["rating"]["temperature_c"] == pytest.approx(expected, rel=1e-12)
    assert rows["rating"]["temperature_c"] == pytest.approx(100.0, abs=0.1)
    assert rows["rating"]["current_a"] == 1025.0
    # the change of state runs at that temperature
    assert rows["rating"]["horizontal_tension_n"] == pytest.approx(rows["at_100"]["horizontal_tension_n"], rel=2e-4)


@pytest.mark.parametrize("body, message", [
    ('temperature_c = 90.0\ncurrent_a = 800.0\n' + WEATHER, r"'hot'.*exactly one of temperature_c.*both are given"),
    ('wind_speed_m_s = 1.0', r"'hot'.*exactly one of temperature_c"),
    ('current_a = 800.0\nsolar_flux_w_m2 = 900.0', r"'hot'.*current_a needs ambient_c, wind_speed_m_s"),
    ('current_a = 800.0\nambient_c = 30.0\nwind_speed_m_s = 1.0\nlatitude_deg = 40.0',
     r"'hot'.*current_a needs solar_flux_w_m2 or all of latitude_deg, day_of_year, solar_hour"),
    ('temperature_c = 90.0\nambient_c = 30.0', r"'hot'.*ambient_c only serve current_a"),
])
def test_bad_current_cases_are_refused(tmp_path, body, message):
    with pytest.raises(ProjectError, match=message):
        project_file(tmp_path, STRINGING, [f'name = "hot"\n{body}'])


def test_current_needs_the_conductor_resistances(tmp_path):
    with pytest.raises(ProjectError, match=r"'hot'.*resistance_25c_ohm_km.*Hawk"):
        project_file(tmp_path, STRINGING, [f'name = "hot"\ncurrent_a = 500.0\n{WEATHER}'], conductor='name = "Hawk"')
