"""Conductor physics: catenary geometry, loads, change of state, the wire in 3D, supports.

Plain numpy/scipy functions in SI units (m, N, N/m, C); no file or GIS
imports, so the physics can be used and tested on its own.
"""

from .catenary import (
    arc_length,
    catenary_constant,
    catenary_z,
    low_point_x,
    max_chord_sag,
    mean_tension,
    midspan_sag,
    parabolic_arc_length,
    parabolic_low_point_x,
    parabolic_sag,
    support_tensions,
    vertical_reactions,
)
from .conductor3d import SpanGeometry, conductor_points, conductor_stations, span_geometry, swung_span
from .loads import (
    AIR_DENSITY_KG_M3,
    G,
    ICE_DENSITY_KG_M3,
    LoadPerLength,
    bare_weight_n_m,
    blowout_angle_rad,
    conductor_load,
    ice_weight_n_m,
    resultant_load_n_m,
    vertical_load_n_m,
    wind_load_n_m,
    wind_pressure_pa,
)
from .state_change import change_of_state, parabolic_change_of_state, ruling_span
from .supports import (
    insulator_swing_rad,
    line_tension_load_n,
    structure_axes,
    swing_displacement_m,
    weight_span_m,
    wind_span_m,
)

__all__ = [
    # catenary
    "catenary_constant",
    "low_point_x",
    "catenary_z",
    "arc_length",
    "midspan_sag",
    "max_chord_sag",
    "support_tensions",
    "vertical_reactions",
    "mean_tension",
    "parabolic_sag",
    "parabolic_low_point_x",
    "parabolic_arc_length",
    # loads
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
    # state change
    "ruling_span",
    "change_of_state",
    "parabolic_change_of_state",
    # 3D conductor
    "swung_span",
    "conductor_points",
    "conductor_stations",
    "span_geometry",
    "SpanGeometry",
    # supports
    "structure_axes",
    "weight_span_m",
    "wind_span_m",
    "line_tension_load_n",
    "insulator_swing_rad",
    "swing_displacement_m",
]
