"""Required clearances: base values by category and the voltage adder.

A required vertical clearance is a base value for the kind of place the wire
passes over (a road, a railway, water, open ground) plus an allowance that
grows with the line's phase-to-ground voltage above a threshold.

References
----------
.. [1] IEEE C2, National Electrical Safety Code (NESC), Table 232-1 (base
   vertical clearances of wires above ground, roadways, rail and water) and
   Rule 232C1a (additional clearance of 10 mm per kV above 22 kV to ground;
   above 50 kV the maximum operating voltage is used).
"""

import math

import numpy as np

__all__ = [
    "DEFAULT_REQUIRED_M",
    "DEFAULT_ADDER_PER_KV_M",
    "DEFAULT_ADDER_ABOVE_KV",
    "MAX_VOLTAGE_ABOVE_KV",
    "phase_to_ground_kv",
    "voltage_adder_m",
]

#: Base required vertical clearances by category, before the voltage adder [m].
#: From memory (NESC Table 232-1, 750 V - 22 kV to ground) - verify against the
#: governing code before relying on them. "ground" is land crossed by vehicles;
#: "surface" (the radial distance to vegetation and buildings in a surface
#: model) is a placeholder to be set from the operator's own rule.
DEFAULT_REQUIRED_M = {
    "ground": 5.6,
    "road": 5.6,
    "railway": 8.1,
    "water": 5.2,
    "pedestrian": 4.4,
    "surface": 3.0,
}

#: Additional clearance per kV of phase-to-ground voltage above the threshold [m/kV] (NESC 232C1a).
DEFAULT_ADDER_PER_KV_M = 0.01
#: Phase-to-ground voltage above which the adder applies [kV] (NESC 232C1a).
DEFAULT_ADDER_ABOVE_KV = 22.0
#: Nominal line-to-line voltage above which the maximum operating voltage is used [kV] (NESC 232C1a).
MAX_VOLTAGE_ABOVE_KV = 50.0


def phase_to_ground_kv(voltage_kv, max_voltage_kv=None, max_voltage_above_kv=MAX_VOLTAGE_ABOVE_KV):
    """Phase-to-ground voltage of a three-phase line for the clearance adder.

    Parameters
    ----------
    voltage_kv : float or array
        Nominal line-to-line voltage [kV].
    max_voltage_kv : float or array, optional
        Maximum operating line-to-line voltage [kV]. Used instead of the
        nominal voltage where the nominal voltage exceeds
        ``max_voltage_above_kv``.
    max_voltage_above_kv : float, default 50
        Nominal voltage above which the maximum operating voltage governs [kV].

    Returns
    -------
    float or array
        Phase-to-ground voltage ``V / sqrt(3)`` [kV].

    References
    ----------
    .. [1] NESC (IEEE C2) Rule 232C1a: above 50 kV the additional clearance
       is computed with the maximum operating voltage.
    """
    nominal = np.asarray(voltage_kv, dtype=float)
    governing = nominal
    if max_voltage_kv is not None:
        governing = np.where(nominal > max_voltage_above_kv, np.asarray(max_voltage_kv, dtype=float), nominal)
    return (governing / math.sqrt(3.0))[()]


def voltage_adder_m(phase_to_ground_kv, per_kv_m=DEFAULT_ADDER_PER_KV_M, above_kv=DEFAULT_ADDER_ABOVE_KV):
    """Clearance added to every base value for the line's voltage.

    Parameters
    ----------
    phase_to_ground_kv : float or array
        Phase-to-ground voltage [kV].
    per_kv_m : float, default 0.01
        Additional clearance per kV above the threshold [m/kV].
    above_kv : float, default 22
        Phase-to-ground voltage above which the adder applies [kV].

    Returns
    -------
    float or array
        ``per_kv_m * max(V_pg - above_kv, 0)`` [m].

    References
    ----------
    .. [1] NESC (IEEE C2) Rule 232C1a: 10 mm per kV in excess of 22 kV.
    """
    excess = np.maximum(np.asarray(phase_to_ground_kv, dtype=float) - above_kv, 0.0)
    return (per_kv_m * excess)[()]
