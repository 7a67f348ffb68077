"""Stage: exact 3D catenary of every span in every load case."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from routesag.physics.catenary import low_point_x, support_tensions
from routesag.physics.conductor3d import conductor_points, conductor_stations, swung_span
from routesag.pipeline import Stage


@dataclass
class ConductorProfile:
    """One span in one load case: stations along the span and the wire's 3D points."""

    span_id: str
    section_id: str
    load_case: str
    stations_m: np.ndarray      # horizontal distance from the from-support [m]
    xyz: np.ndarray             # (n, 3) wire points in the working CRS [m]
    horizontal_tension_n: float
    max_tension_n: float
    sag_m: float                # vertical distance chord to wire at mid-span [m]
    low_point_m: float          # low point's horizontal distance from the from-support [m]
    catenary_m: float
    blowout_deg: float


class BuildConductors(Stage):
    name = "build_conductors"
    requires = ("project", "spans", "tensions")
    provides = ("conductors",)
    description = "exact inclined catenary per span and load case, swung by the blowout angle, as 3D stations"

    def run(self, data, ctx):
        station_m = data["project"].station_m
        tensions = data["tensions"].set_index(["section_id", "load_case"])
        profiles = []
        for _, span in data["spans"].iterrows():
            section = tensions.loc[span["section_id"]]
            for case, t in section.iterrows():
                profiles.append(span_profile(span, case, t, station_m))
        return {"conductors": profiles}


def span_profile(span, load_case: str, t, station_m: float) -> ConductorProfile:
    """Build the :class:`ConductorProfile` of one span for one solved load case."""
    s, dz = float(span["span_m"]), float(span["dz_m"])
    h, w, phi = float(t["horizontal_tension_n"]), float(t["resultant_n_m"]), float(t["blowout_rad"])
    s_plane, dz_plane = swung_span(s, dz, phi)
    c = h / w
    low_m = float(low_point_x(s_plane, dz_plane, c)) * s / s_plane
    stations = conductor_stations(s, station_m, low_m)
    start = np.array([span["x0"], span["y0"], span["z0"]], dtype=float)
    end = np.array([span["x1"], span["y1"], span["z1"]], dtype=float)
    xyz = conductor_points(start, end, h, w, phi, stations, side=float(t["side"]))
    mid = conductor_points(start, end, h, w, phi, np.array([s / 2.0]), side=float(t["side"]))[0]
    tension_a, tension_b = support_tensions(s_plane, dz_plane, h, w)
    return ConductorProfile(
        span_id=span["span_id"], section_id=span["section_id"], load_case=load_case,
        stations_m=stations, xyz=xyz, horizontal_tension_n=h,
        max_tension_n=float(max(tension_a, tension_b)), sag_m=float((start[2] + end[2]) / 2.0 - mid[2]),
        low_point_m=low_m, catenary_m=c, blowout_deg=float(t["blowout_deg"]))
