"""IEEE Std 738 heat balance: the standard's Drake example, the inverse, and each term's behaviour."""
import math

import pytest

from routesag.errors import SolveError
from routesag.physics.thermal import (
    ThermalConductor, Weather, conductor_current_a, conductor_temperature_c, heat_balance_terms,
    solar_heat_flux_w_m2, solar_position_deg, wind_direction_factor,
)

# IEEE Std 738-2006, clause 4.6 worked example (clause number and every printed value from memory; FIELD.md §10):
# Drake 26/7 ACSR, D = 28.14 mm, R(25 C) = 7.283e-5 ohm/m, R(75 C) = 8.688e-5 ohm/m, conductor 100 C,
# air 40 C, wind 0.61 m/s across the line, emissivity and absorptivity 0.8, latitude 30 N, line east-west,
# 10 June (day 161), 11:00 solar time, clear atmosphere, sea level.
# Doubt, stated plainly: FIELD.md §10 recalls emissivity and absorptivity 0.5. By the formulas 0.5 gives about
# 992 A; 0.8 gives the printed 1025 A and the printed terms (radiated 39.1 W/m, solar 22.44 W/m), so 0.8 is used.
# The printed example was not at hand; test_thermal_by_hand.py recomputes every term straight from the formulas.
DRAKE = ThermalConductor(diameter_m=0.02814, resistance_low_ohm_m=7.283e-5, resistance_high_ohm_m=8.688e-5)
EXAMPLE = Weather(ambient_c=40.0, wind_speed_m_s=0.61, wind_angle_deg=90.0, elevation_m=0.0, emissivity=0.8,
                  absorptivity=0.8, latitude_deg=30.0, day_of_year=161, solar_hour=11.0, line_azimuth_deg=90.0)


def test_standard_example_terms():
    terms = heat_balance_terms(100.0, EXAMPLE, DRAKE)
    # printed: forced convection (low-wind form) 81.93 W/m; the example rounds the air properties, hence 0.3 %
    assert terms["convective_w_m"] == pytest.approx(81.93, rel=3e-3)
    assert terms["radiated_w_m"] == pytest.approx(39.1, abs=0.05)     # printed 39.1 W/m
    assert terms["solar_w_m"] == pytest.approx(22.44, abs=0.05)       # printed 22.44 W/m
    assert terms["resistance_ohm_m"] == pytest.approx(9.390e-5, abs=5e-9)  # printed 9.390e-5 ohm/m


def test_standard_example_sun():
    altitude, azimuth = solar_position_deg(30.0, 161, 11.0)
    assert altitude == pytest.approx(74.8, abs=0.1)   # printed H_c = 74.8 deg
    assert azimuth == pytest.approx(114.0, abs=0.5)   # printed Z_c = 114 deg
    assert solar_heat_flux_w_m2(altitude) == pytest.approx(1027.0, abs=1.5)  # printed Q_s = 1027 W/m2


def test_standard_example_rating():
    # printed: I = 1025 A at 100 C
    assert conductor_current_a(100.0, EXAMPLE, DRAKE) == pytest.approx(1025.0, abs=1.0)
    assert conductor_temperature_c(1025.0, EXAMPLE, DRAKE) == pytest.approx(100.0, abs=0.1)


@pytest.mark.parametrize("temperature_c", [45.0, 75.0, 100.0, 150.0, 250.0])
@pytest.mark.parametrize("wind_m_s, angle_deg", [(0.0, 90.0), (0.61, 90.0), (3.0, 30.0), (10.0, 0.0)])
def test_inverse_round_trips(temperature_c, wind_m_s, angle_deg):
    weather = Weather(ambient_c=25.0, wind_speed_m_s=wind_m_s, wind_angle_deg=angle_deg, solar_flux_w_m2=900.0)
    current = conductor_current_a(temperature_c, weather, DRAKE)
    assert conductor_temperature_c(current, weather, DRAKE) == pytest.approx(temperature_c, abs=1e-6)


def test_more_current_is_hotter_and_more_wind_is_cooler():
    calm = Weather(ambient_c=35.0, wind_speed_m_s=0.0, solar_flux_w_m2=1000.0)
    windy = Weather(ambient_c=35.0, wind_speed_m_s=2.0, solar_flux_w_m2=1000.0)
    temps = [conductor_temperature_c(i, calm, DRAKE) for i in (0.0, 400.0, 800.0, 1200.0)]
    assert temps == sorted(temps) and temps[0] > 35.0  # the sun alone warms it above the air
    assert conductor_temperature_c(800.0, windy, DRAKE) < temps[2]


def test_natural_convection_governs_in_still_air():
    # IEEE 738: the larger of forced and natural convection; with no wind the forced forms vanish above 1.01 k dT.
    still = Weather(ambient_c=20.0, wind_speed_m_s=0.0, solar_flux_w_m2=0.0)
    rise = 60.0
    density = 1.293 / (1.0 + 0.00367 * 50.0)  # eq. 14a at sea level, film 50 C
    natural = 3.645 * math.sqrt(density) * 0.02814**0.75 * rise**1.25
    assert heat_balance_terms(80.0, still, DRAKE)["convective_w_m"] == pytest.approx(natural, rel=1e-9)


def test_wind_direction_factor():
    # IEEE 738 eq. 4a: 1 across the line, 0.388 along it
    assert wind_direction_factor(90.0) == pytest.approx(1.0)
    assert wind_direction_factor(0.0) == pytest.approx(0.388)


def test_sun_below_horizon_gives_no_gain():
    night = Weather(ambient_c=20.0, wind_speed_m_s=1.0, latitude_deg=45.0, day_of_year=172, solar_hour=0.0)
    assert heat_balance_terms(50.0, night, DRAKE)["solar_w_m"] == 0.0


def test_impossible_balances_raise():
    hot_sun = Weather(ambient_c=40.0, wind_speed_m_s=0.0, solar_flux_w_m2=1200.0)
    with pytest.raises(SolveError, match="no current gives that temperature"):
        conductor_current_a(40.5, hot_sun, DRAKE)
    with pytest.raises(SolveError, match="past 500 C"):
        conductor_temperature_c(20000.0, hot_sun, DRAKE)
    with pytest.raises(SolveError, match="non-negative"):
        conductor_temperature_c(-5.0, hot_sun, DRAKE)
