"""Conductor temperature from current and current from temperature: the IEEE Std 738 steady-state heat balance.

Per metre of conductor, in steady state the heat gained equals the heat lost::

    q_c(T_c) + q_r(T_c) = q_s + I^2 R(T_c)

with ``q_c`` the convective loss (the larger of forced convection, in its
low-wind and high-wind forms, and natural convection), ``q_r`` the radiated
loss, ``q_s`` the solar gain and ``R(T_c)`` the AC resistance, linear between
two tabulated temperatures. :func:`conductor_current_a` solves the balance for
``I`` directly; :func:`conductor_temperature_c` finds ``T_c`` by ``brentq``
(the loss minus the Joule gain rises with ``T_c``).

Every formula below is the SI form with the conductor diameter in metres and
the Reynolds number ``N_Re = D rho_f V_w / mu_f`` dimensionless, as written in
the 2012 edition; the 2006 edition writes the same relations with D in mm
(constants 0.0372, 0.0119, 0.0205, 0.0178, which are 1.35, 0.754, 3.645 and
17.8 rescaled).

References
----------
.. [1] IEEE Std 738-2006, IEEE Standard for Calculating the Current-Temperature
   of Bare Overhead Conductors: clause 4.4.3 (convective heat loss, equations
   3a, 3b, 4a, 5), 4.4.4 (radiated heat loss, equation 7), 4.4.5 (solar heat
   gain, equations 8 to 19 and Tables 2 and 3), 4.4.6 (resistance, equation
   10), 4.5 and Annex B (air properties); worked example for Drake in
   clause 4.6 (clause numbers from memory). Same relations in
   IEEE Std 738-2012.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from routesag.errors import SolveError

__all__ = ["Weather", "ThermalConductor", "heat_balance_terms", "conductor_temperature_c", "conductor_current_a",
           "solar_position_deg", "solar_heat_flux_w_m2", "air_properties", "wind_direction_factor",
           "resistance_ohm_m"]

#: Total heat flux polynomial coefficients A..G against the solar altitude in degrees
#: (IEEE Std 738-2006, Table 3, SI units, W/m^2; from memory).
SOLAR_FLUX_COEFFICIENTS = {
    "clear": (-42.2391, 63.8044, -1.9220, 3.46921e-2, -3.61118e-4, 1.94318e-6, -4.07608e-9),
    "industrial": (53.1821, 14.2110, 6.6138e-1, -3.1658e-2, 5.4654e-4, -4.3446e-6, 1.3236e-8),
}
#: Hottest conductor temperature searched for [degC]: past any conductor's rating.
MAX_SEARCH_C = 500.0


@dataclass(frozen=True)
class Weather:
    """The weather of one rating: what the heat balance takes besides the conductor.

    ``solar_flux_w_m2`` given overrides the computed flux and is taken as the
    flux on the conductor (``alpha q_s = alpha Q D``, sun normal to the
    conductor: the conservative reading); without it, the sun's position comes
    from ``latitude_deg``, ``day_of_year`` and ``solar_hour`` (local solar time,
    12 = noon) and the flux from the clear or industrial atmosphere polynomial
    corrected for ``elevation_m``.
    """

    ambient_c: float
    wind_speed_m_s: float
    wind_angle_deg: float = 90.0         # angle between wind and the line's axis [deg]
    elevation_m: float = 0.0
    emissivity: float = 0.5
    absorptivity: float = 0.5
    solar_flux_w_m2: float | None = None
    latitude_deg: float | None = None
    day_of_year: float | None = None
    solar_hour: float | None = None
    line_azimuth_deg: float = 90.0       # azimuth of the line's axis, clockwise from north [deg]
    atmosphere: str = "clear"


@dataclass(frozen=True)
class ThermalConductor:
    """What the heat balance needs of a conductor: diameter [m] and AC resistance [ohm/m] at two temperatures."""

    diameter_m: float
    resistance_low_ohm_m: float
    resistance_high_ohm_m: float
    temperature_low_c: float = 25.0
    temperature_high_c: float = 75.0


def resistance_ohm_m(conductor: ThermalConductor, temperature_c):
    """AC resistance at ``temperature_c`` [ohm/m], linear through the two tabulated values (IEEE 738 eq. 10)."""
    c = conductor
    slope = (c.resistance_high_ohm_m - c.resistance_low_ohm_m) / (c.temperature_high_c - c.temperature_low_c)
    return c.resistance_low_ohm_m + slope * (np.asarray(temperature_c, dtype=float) - c.temperature_low_c)


def air_properties(film_c, elevation_m):
    """Dynamic viscosity [Pa s], density [kg/m^3] and thermal conductivity [W/(m C)] of air at the film temperature.

    IEEE Std 738-2006, equations 13a to 15a (Annex B fits).
    """
    film = np.asarray(film_c, dtype=float)
    viscosity = 1.458e-6 * (film + 273.0) ** 1.5 / (film + 383.4)
    density = (1.293 - 1.525e-4 * elevation_m + 6.379e-9 * elevation_m**2) / (1.0 + 0.00367 * film)
    conductivity = 2.424e-2 + 7.477e-5 * film - 4.407e-9 * film**2
    return viscosity, density, conductivity


def wind_direction_factor(wind_angle_deg):
    """``K_angle = 1.194 - cos(phi) + 0.194 cos(2 phi) + 0.368 sin(2 phi)``, 1 for a wind across the line (eq. 4a)."""
    phi = np.radians(wind_angle_deg)
    return 1.194 - np.cos(phi) + 0.194 * np.cos(2 * phi) + 0.368 * np.sin(2 * phi)


def convective_loss_w_m(conductor_c, weather: Weather, diameter_m):
    """Convective heat loss [W/m]: the largest of the two forced forms and natural convection (eq. 3a, 3b, 5)."""
    t_c = np.asarray(conductor_c, dtype=float)
    rise = np.maximum(t_c - weather.ambient_c, 0.0)
    viscosity, density, conductivity = air_properties((t_c + weather.ambient_c) / 2.0, weather.elevation_m)
    reynolds = diameter_m * density * weather.wind_speed_m_s / viscosity
    k_angle = wind_direction_factor(weather.wind_angle_deg)
    low_wind = k_angle * (1.01 + 1.35 * reynolds**0.52) * conductivity * rise
    high_wind = k_angle * 0.754 * reynolds**0.6 * conductivity * rise
    natural = 3.645 * np.sqrt(density) * diameter_m**0.75 * rise**1.25
    return np.maximum(np.maximum(low_wind, high_wind), natural)


def radiated_loss_w_m(conductor_c, weather: Weather, diameter_m):
    """``q_r = 17.8 D eps [((T_c + 273)/100)^4 - ((T_a + 273)/100)^4]`` [W/m], D in m (eq. 7)."""
    t_c = np.asarray(conductor_c, dtype=float)
    return 17.8 * diameter_m * weather.emissivity * (((t_c + 273.0) / 100.0) ** 4
                                                      - ((weather.ambient_c + 273.0) / 100.0) ** 4)


def solar_position_deg(latitude_deg, day_of_year, solar_hour):
    """Solar altitude ``H_c`` and azimuth ``Z_c`` [deg] (IEEE Std 738-2006, equations 16 to 18, Table 2).

    Declination ``delta = 23.4583 sin((284 + N)/365 * 360)``, hour angle
    ``omega = 15 (hour - 12)``; ``Z_c = C + atan(chi)`` with
    ``chi = sin(omega) / (sin(Lat) cos(omega) - cos(Lat) tan(delta))`` and the
    constant ``C`` of the standard's Table 2.
    """
    lat = np.radians(latitude_deg)
    declination = np.radians(23.4583 * np.sin(np.radians((284.0 + day_of_year) / 365.0 * 360.0)))
    omega_deg = 15.0 * (solar_hour - 12.0)
    omega = np.radians(omega_deg)
    altitude = np.degrees(np.arcsin(np.cos(lat) * np.cos(declination) * np.cos(omega)
                                    + np.sin(lat) * np.sin(declination)))
    chi = np.sin(omega) / (np.sin(lat) * np.cos(omega) - np.cos(lat) * np.tan(declination))
    if omega_deg < 0:
        constant = 0.0 if chi >= 0 else 180.0
    else:
        constant = 180.0 if chi >= 0 else 360.0
    return float(altitude), float(constant + np.degrees(np.arctan(chi)))


def solar_heat_flux_w_m2(altitude_deg, elevation_m=0.0, atmosphere="clear"):
    """Total solar and sky heat flux on a surface normal to the sun [W/m^2] (Table 3 polynomial, eq. 19 elevation).

    0 with the sun below the horizon.
    """
    if altitude_deg <= 0:
        return 0.0
    try:
        coefficients = SOLAR_FLUX_COEFFICIENTS[atmosphere]
    except KeyError:
        raise SolveError(f"solar heat flux: atmosphere must be 'clear' or 'industrial', got {atmosphere!r}") from None
    flux = sum(a * altitude_deg**i for i, a in enumerate(coefficients))
    elevation_factor = 1.0 + 1.148e-4 * elevation_m - 1.108e-8 * elevation_m**2
    return float(max(flux, 0.0) * elevation_factor)


def solar_gain_w_m(weather: Weather, diameter_m) -> float:
    """``q_s = alpha Q_se sin(theta) D`` [W/m], ``theta = acos(cos(H_c) cos(Z_c - Z_l))`` (eq. 8, 9)."""
    if weather.solar_flux_w_m2 is not None:
        return weather.absorptivity * weather.solar_flux_w_m2 * diameter_m
    if None in (weather.latitude_deg, weather.day_of_year, weather.solar_hour):
        raise SolveError("solar heat gain needs either solar_flux_w_m2 or latitude_deg, day_of_year and solar_hour")
    altitude, azimuth = solar_position_deg(weather.latitude_deg, weather.day_of_year, weather.solar_hour)
    flux = solar_heat_flux_w_m2(altitude, weather.elevation_m, weather.atmosphere)
    theta = np.arccos(np.cos(np.radians(altitude)) * np.cos(np.radians(azimuth - weather.line_azimuth_deg)))
    return float(weather.absorptivity * flux * np.sin(theta) * diameter_m)


def heat_balance_terms(conductor_c, weather: Weather, conductor: ThermalConductor) -> dict:
    """The terms of the balance at one conductor temperature: convective, radiated, solar [W/m], resistance [ohm/m]."""
    d = conductor.diameter_m
    return {"convective_w_m": float(convective_loss_w_m(conductor_c, weather, d)),
            "radiated_w_m": float(radiated_loss_w_m(conductor_c, weather, d)),
            "solar_w_m": solar_gain_w_m(weather, d),
            "resistance_ohm_m": float(resistance_ohm_m(conductor, conductor_c))}


def conductor_current_a(temperature_c, weather: Weather, conductor: ThermalConductor) -> float:
    """Steady-state current that holds the conductor at ``temperature_c`` [A]: ``sqrt((q_c + q_r - q_s) / R)``.

    Raises
    ------
    routesag.errors.SolveError
        If the sun alone heats the conductor past ``temperature_c`` (no current can hold it there).
    """
    terms = heat_balance_terms(temperature_c, weather, conductor)
    net_w_m = terms["convective_w_m"] + terms["radiated_w_m"] - terms["solar_w_m"]
    if net_w_m < 0:
        raise SolveError(f"heat balance: sun and ambient alone hold the conductor above {temperature_c:g} C; "
                         f"no current gives that temperature")
    return float(np.sqrt(net_w_m / terms["resistance_ohm_m"]))


def conductor_temperature_c(current_a, weather: Weather, conductor: ThermalConductor) -> float:
    """Steady-state conductor temperature that carries ``current_a`` [degC] (``brentq`` on the balance).

    Parameters
    ----------
    current_a : float
        RMS current [A].
    weather : Weather
    conductor : ThermalConductor

    Raises
    ------
    routesag.errors.SolveError
        If the current is negative or the balance has no root below 500 C.
    """
    if not (np.isfinite(current_a) and current_a >= 0):
        raise SolveError(f"heat balance: current must be a non-negative number, got {current_a!r} A")
    d = conductor.diameter_m
    solar = solar_gain_w_m(weather, d)

    def surplus(t_c):  # heat lost minus heat gained; rises with the conductor temperature
        return (float(convective_loss_w_m(t_c, weather, d) + radiated_loss_w_m(t_c, weather, d)) - solar
                - current_a**2 * float(resistance_ohm_m(conductor, t_c)))

    low, high = weather.ambient_c, MAX_SEARCH_C
    if surplus(high) <= 0:
        raise SolveError(f"heat balance: {current_a:g} A heats the conductor past {MAX_SEARCH_C:g} C")
    return float(brentq(surplus, low, high, xtol=1e-9)) if surplus(low) < 0 else float(low)
