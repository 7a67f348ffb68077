"""Loads per unit length on a conductor: weight, radial ice, wind, resultant.

All loads are forces per metre of conductor [N/m]. Ice is a uniform radial
sleeve of thickness ``t`` on a bare diameter ``d``; wind acts on the iced
diameter ``d + 2t``.

References
----------
.. [1] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (ice and wind loads, Table 14.5).
.. [2] IEEE/ANSI C2, National Electrical Safety Code, Rule 250B (district
   loading: ice, wind pressure and the constant K added to the resultant).
"""

import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "G",
    "ICE_DENSITY_KG_M3",
    "AIR_DENSITY_KG_M3",
    "bare_weight_n_m",
    "ice_weight_n_m",
    "wind_load_n_m",
    "wind_pressure_pa",
    "vertical_load_n_m",
    "resultant_load_n_m",
    "blowout_angle_rad",
    "LoadPerLength",
    "conductor_load",
]

#: Standard gravity [m/s^2] (CGPM 1901).
G = 9.80665
#: Density of radial glaze ice behind NESC district loads [kg/m^3] (57 lb/ft^3).
ICE_DENSITY_KG_M3 = 913.0
#: Air density at 15 C and sea level, ISO 2533 standard atmosphere [kg/m^3].
AIR_DENSITY_KG_M3 = 1.225


def bare_weight_n_m(mass_kg_m):
    """Weight per unit length of the bare conductor, ``m g``.

    Parameters
    ----------
    mass_kg_m : float or array
        Conductor mass per unit length [kg/m].

    Returns
    -------
    float or array
        Weight per unit length [N/m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14.
    """
    return np.asarray(mass_kg_m, dtype=float) * G


def ice_weight_n_m(diameter_m, ice_thickness_m, ice_density_kg_m3=ICE_DENSITY_KG_M3):
    """Weight per unit length of a radial ice sleeve, ``rho g pi t (d + t)``.

    Parameters
    ----------
    diameter_m : float or array
        Bare conductor diameter [m].
    ice_thickness_m : float or array
        Radial ice thickness [m].
    ice_density_kg_m3 : float or array, default 913
        Ice density [kg/m^3].

    Returns
    -------
    float or array
        Ice weight per unit length [N/m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, Table 14.5 (Drake under NESC heavy ice).
    """
    d = np.asarray(diameter_m, dtype=float)
    t = np.asarray(ice_thickness_m, dtype=float)
    return np.asarray(ice_density_kg_m3, dtype=float) * G * np.pi * t * (d + t)


def wind_load_n_m(diameter_m, ice_thickness_m, wind_pressure_pa, drag_coefficient=1.0):
    """Transverse wind force per unit length on the iced conductor, ``q Cd (d + 2t)``.

    Parameters
    ----------
    diameter_m : float or array
        Bare conductor diameter [m].
    ice_thickness_m : float or array
        Radial ice thickness [m]; 0 for a bare conductor.
    wind_pressure_pa : float or array
        Wind pressure on the projected area [Pa].
    drag_coefficient : float or array, default 1.0
        Drag (force) coefficient [-]; NESC district loads use 1.0.

    Returns
    -------
    float or array
        Wind load per unit length [N/m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, Table 14.5.
    .. [2] NESC Rule 250B.
    """
    d = np.asarray(diameter_m, dtype=float)
    t = np.asarray(ice_thickness_m, dtype=float)
    q = np.asarray(wind_pressure_pa, dtype=float)
    return q * np.asarray(drag_coefficient, dtype=float) * (d + 2.0 * t)


def wind_pressure_pa(wind_speed_m_s, air_density_kg_m3=AIR_DENSITY_KG_M3):
    """Dynamic pressure of the wind, ``0.5 rho V^2``.

    Parameters
    ----------
    wind_speed_m_s : float or array
        Wind speed [m/s].
    air_density_kg_m3 : float or array, default 1.225
        Air density [kg/m^3].

    Returns
    -------
    float or array
        Wind pressure [Pa] (0.613 V^2 at the default density).

    References
    ----------
    .. [1] IEC 60826, Design criteria of overhead transmission lines (dynamic
       reference wind pressure ``q0 = 0.5 rho V^2``).
    """
    v = np.asarray(wind_speed_m_s, dtype=float)
    return 0.5 * np.asarray(air_density_kg_m3, dtype=float) * v**2


def vertical_load_n_m(bare_weight_n_m, ice_weight_n_m):
    """Vertical load per unit length, conductor plus ice.

    Parameters
    ----------
    bare_weight_n_m : float or array
        Bare conductor weight [N/m].
    ice_weight_n_m : float or array
        Ice weight [N/m].

    Returns
    -------
    float or array
        Vertical load [N/m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, Table 14.5.
    """
    return np.asarray(bare_weight_n_m, dtype=float) + np.asarray(ice_weight_n_m, dtype=float)


def resultant_load_n_m(vertical_load_n_m, wind_load_n_m, constant_n_m=0.0):
    """Resultant load per unit length, ``sqrt(v^2 + F^2) + K``.

    Parameters
    ----------
    vertical_load_n_m : float or array
        Vertical load (conductor plus ice) [N/m].
    wind_load_n_m : float or array
        Transverse wind load [N/m].
    constant_n_m : float or array, default 0
        Constant added to the resultant (NESC district constant K) [N/m].

    Returns
    -------
    float or array
        Resultant load [N/m].

    References
    ----------
    .. [1] NESC Rule 250B; Grigsby (ed.), ch. 14, Table 14.5.
    """
    v = np.asarray(vertical_load_n_m, dtype=float)
    f = np.asarray(wind_load_n_m, dtype=float)
    return np.hypot(v, f) + np.asarray(constant_n_m, dtype=float)


def blowout_angle_rad(vertical_load_n_m, wind_load_n_m):
    """Swing angle of the conductor plane from vertical, ``atan(F / v)``.

    Parameters
    ----------
    vertical_load_n_m : float or array
        Vertical load (conductor plus ice) [N/m].
    wind_load_n_m : float or array
        Transverse wind load [N/m].

    Returns
    -------
    float or array
        Blowout angle [rad].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14 (conductor blowout under wind).
    """
    return np.arctan2(np.asarray(wind_load_n_m, dtype=float), np.asarray(vertical_load_n_m, dtype=float))


@dataclass(frozen=True)
class LoadPerLength:
    """Loads per unit length on a conductor for one load case.

    Attributes
    ----------
    vertical_n_m : float
        Conductor plus ice weight [N/m].
    wind_n_m : float
        Transverse wind load [N/m].
    resultant_n_m : float
        ``sqrt(vertical^2 + wind^2) + K`` [N/m]; the load that sets the sag.
    blowout_rad : float
        Swing angle of the sag plane from vertical, ``atan(wind / vertical)``
        (K does not turn the plane) [rad].
    """

    vertical_n_m: float
    wind_n_m: float
    resultant_n_m: float
    blowout_rad: float


def conductor_load(mass_kg_m, diameter_m, ice_thickness_m=0.0, wind_pressure_pa=0.0, constant_n_m=0.0,
                   ice_density_kg_m3=ICE_DENSITY_KG_M3):
    """Loads per unit length on one conductor for one load case (scalars).

    Parameters
    ----------
    mass_kg_m : float
        Conductor mass per unit length [kg/m].
    diameter_m : float
        Bare conductor diameter [m].
    ice_thickness_m : float, default 0
        Radial ice thickness [m].
    wind_pressure_pa : float, default 0
        Wind pressure on the iced diameter [Pa].
    constant_n_m : float, default 0
        Constant added to the resultant (NESC K) [N/m].
    ice_density_kg_m3 : float, default 913
        Ice density [kg/m^3].

    Returns
    -------
    LoadPerLength

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, Table 14.5; NESC Rule 250B.
    """
    vertical = float(vertical_load_n_m(bare_weight_n_m(mass_kg_m),
                                       ice_weight_n_m(diameter_m, ice_thickness_m, ice_density_kg_m3)))
    wind = float(wind_load_n_m(diameter_m, ice_thickness_m, wind_pressure_pa))
    return LoadPerLength(
        vertical_n_m=vertical,
        wind_n_m=wind,
        resultant_n_m=float(resultant_load_n_m(vertical, wind, constant_n_m)),
        blowout_rad=math.atan2(wind, vertical),
    )
