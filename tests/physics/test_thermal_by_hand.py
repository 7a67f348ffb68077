"""A second, straight-line computation of each IEEE Std 738 term (FIELD.md section 10 formulas), written out here
with scalars and no call into routesag.physics.thermal's helpers, against the module, for the standard's Drake
example; and the emissivity/absorptivity doubt settled by the formulas.

The doubt: FIELD.md section 10 recalls the worked example (IEEE Std 738-2006 clause 4.6, from memory) with
emissivity and absorptivity 0.5 giving about 1025 A. By the formulas, 0.5 and 0.5 give about 992 A, and only 0.8
and 0.8 give 1025 A; so do the example's printed intermediate terms as recalled (radiated 39.1 W/m and solar
22.44 W/m are 17.8 D eps [...] and alpha Q_se sin(theta) D with 0.8; with 0.5 they would be 24.4 and 14.0 W/m).
So the tests use 0.8 and 0.8; the printed example itself was not at hand to confirm (every printed value here is
from memory).
"""
import math

import pytest

from routesag.physics.thermal import ThermalConductor, Weather, conductor_current_a, heat_balance_terms

D_M, R25, R75 = 0.02814, 7.283e-5, 8.688e-5         # Drake (FIELD.md section 10)
AMBIENT_C, CONDUCTOR_C, WIND_M_S = 40.0, 100.0, 0.61
LATITUDE, DAY, HOUR, LINE_AZIMUTH = 30.0, 161, 11.0, 90.0
# IEEE Std 738-2006 Table 3, clear atmosphere, total heat flux against solar altitude [W/m^2] (from memory)
CLEAR = (-42.2391, 63.8044, -1.9220, 3.46921e-2, -3.61118e-4, 1.94318e-6, -4.07608e-9)


def by_hand(emissivity, absorptivity):
    """Each term of q_c + q_r = q_s + I^2 R at 100 C, straight from the formulas [W/m, ohm/m, A]."""
    rise = CONDUCTOR_C - AMBIENT_C
    film = (CONDUCTOR_C + AMBIENT_C) / 2
    viscosity = 1.458e-6 * (film + 273) ** 1.5 / (film + 383.4)              # air, film temperature
    density = 1.293 / (1 + 0.00367 * film)                                   # sea level
    conductivity = 2.424e-2 + 7.477e-5 * film - 4.407e-9 * film ** 2
    reynolds = D_M * density * WIND_M_S / viscosity
    # wind across the line: K_angle = 1
    forced_low = (1.01 + 1.35 * reynolds ** 0.52) * conductivity * rise
    forced_high = 0.754 * reynolds ** 0.6 * conductivity * rise
    natural = 3.645 * density ** 0.5 * D_M ** 0.75 * rise ** 1.25
    convective = max(forced_low, forced_high, natural)
    radiated = 17.8 * D_M * emissivity * (((CONDUCTOR_C + 273) / 100) ** 4 - ((AMBIENT_C + 273) / 100) ** 4)
    declination = 23.4583 * math.sin(math.radians((284 + DAY) / 365 * 360))
    omega = 15 * (HOUR - 12)
    lat, dec, om = map(math.radians, (LATITUDE, declination, omega))
    altitude = math.degrees(math.asin(math.cos(lat) * math.cos(dec) * math.cos(om) + math.sin(lat) * math.sin(dec)))
    chi = math.sin(om) / (math.sin(lat) * math.cos(om) - math.cos(lat) * math.tan(dec))
    azimuth = (180.0 if chi < 0 else 0.0) + math.degrees(math.atan(chi))    # morning: C = 0 or 180
    flux = sum(a * altitude ** i for i, a in enumerate(CLEAR))
    theta = math.acos(math.cos(math.radians(altitude)) * math.cos(math.radians(azimuth - LINE_AZIMUTH)))
    solar = absorptivity * flux * math.sin(theta) * D_M
    resistance = R25 + (R75 - R25) / (75 - 25) * (CONDUCTOR_C - 25)
    current = math.sqrt((convective + radiated - solar) / resistance)
    return {"convective_w_m": convective, "radiated_w_m": radiated, "solar_w_m": solar,
            "resistance_ohm_m": resistance, "current_a": current}


def module(emissivity, absorptivity):
    weather = Weather(ambient_c=AMBIENT_C, wind_speed_m_s=WIND_M_S, wind_angle_deg=90.0, emissivity=emissivity,
                      absorptivity=absorptivity, latitude_deg=LATITUDE, day_of_year=DAY, solar_hour=HOUR,
                      line_azimuth_deg=LINE_AZIMUTH)
    drake = ThermalConductor(D_M, R25, R75)
    return {**heat_balance_terms(CONDUCTOR_C, weather, drake),
            "current_a": conductor_current_a(CONDUCTOR_C, weather, drake)}


@pytest.mark.parametrize("emissivity, absorptivity", [(0.5, 0.5), (0.8, 0.8), (0.9, 0.3)])
def test_module_equals_the_straight_line_computation(emissivity, absorptivity):
    hand, got = by_hand(emissivity, absorptivity), module(emissivity, absorptivity)
    for term, value in hand.items():
        assert got[term] == pytest.approx(value, rel=1e-12), term


def test_which_emissivity_the_example_uses():
    # printed (from memory): 1025 A, radiated 39.1 W/m, solar 22.44 W/m
    half, usual = by_hand(0.5, 0.5), by_hand(0.8, 0.8)
    assert half["current_a"] == pytest.approx(992.0, abs=2.0)       # 0.5 / 0.5 cannot give the printed 1025 A
    assert usual["current_a"] == pytest.approx(1025.0, abs=1.0)
    assert half["radiated_w_m"] == pytest.approx(24.4, abs=0.1) and usual["radiated_w_m"] == pytest.approx(39.1,
                                                                                                            abs=0.05)
    assert half["solar_w_m"] == pytest.approx(14.0, abs=0.1) and usual["solar_w_m"] == pytest.approx(22.44, abs=0.05)
