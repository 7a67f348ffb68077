"""Units shown to people: SI inside, imperial (feet, pounds-force, degrees Fahrenheit) on request.

Results stay SI in every file; only the summary and the sag tables can show
imperial values as well.

References
----------
.. [1] NIST Special Publication 811 (2008), Guide for the Use of the SI,
   Appendix B.8: 1 ft = 0.3048 m exactly, 1 lbf = 4.448 221 615 260 5 N
   exactly (with the standard acceleration 9.806 65 m/s2), and
   t/degF = 1.8 t/degC + 32.
"""
from __future__ import annotations

import numpy as np

M_PER_FT = 0.3048
N_PER_LBF = 4.4482216152605
UNIT_SYSTEMS = ("si", "imperial")


def m_to_ft(metres):
    return np.asarray(metres, dtype=float) / M_PER_FT


def n_to_lbf(newtons):
    return np.asarray(newtons, dtype=float) / N_PER_LBF


def c_to_f(celsius):
    return np.asarray(celsius, dtype=float) * 1.8 + 32.0


def f_to_c(fahrenheit):
    return (np.asarray(fahrenheit, dtype=float) - 32.0) / 1.8


def imperial_suffix(metres: float, digits: int = 1) -> str:
    """`` (17.4 ft)``: a length in feet, for a text beside the metres."""
    return f" ({float(m_to_ft(metres)):.{digits}f} ft)"
