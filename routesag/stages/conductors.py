"""Stage: exact 3D catenary of every span, wire and load case."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from routesag.physics.catenary import low_point_x, support_tensions
from routesag.physics.conductor3d import conductor_points, conductor_stations, swung_span
from routesag.pipeline import Stage


@dataclass
class ConductorProfile:
    """One wire of one span in one load case: stations along the span and the wire's 3D points."""

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
    wire: str = ""


class BuildConductors(Stage):
    name = "build_conductors"
    requires = ("project", "wire_spans", "tensions", "structure_loads")
    provides = ("conductors",)
    description = ("exact inclined catenary per span, wire and load case between the (swung) clamps, "
                   "swung by the blowout angle, as 3D stations")

    def run(self, data, ctx):
        station_m = data["project"].station_m
        rows = span_cases(data["wire_spans"], data["tensions"], data["structure_loads"])
        return {"conductors": [span_profile(row, station_m) for _, row in rows.iterrows()]}


def span_cases(wire_spans, tensions, structure_loads) -> pd.DataFrame:
    """One row per span, wire and load case: the solved tension and both clamps in that case.

    Clamps (start x0, y0, z0; end x1, y1, z1) come from ``structure_loads``,
    where a suspension string has swung them out under the load case.
    """
    clamps = structure_loads[["line_id", "structure_id", "wire", "load_case", "x", "y", "z"]]
    rows = wire_spans.drop(columns=["x0", "y0", "z0", "x1", "y1", "z1"]).merge(
        tensions, on=["section_id", "wire"], sort=False)
    for end, structure in (("0", "from_id"), ("1", "to_id")):
        rows = rows.merge(clamps.rename(columns={"structure_id": structure, "x": f"x{end}", "y": f"y{end}",
                                                 "z": f"z{end}"}),
                          on=["line_id", structure, "wire", "load_case"], how="left", sort=False)
    return rows


def span_profile(row, station_m: float) -> ConductorProfile:
    """Build the :class:`ConductorProfile` of one span, wire and solved load case.

    ``row`` holds the clamps x0, y0, z0, x1, y1, z1 [m], horizontal_tension_n,
    resultant_n_m, blowout_rad, blowout_deg, side, span_id, section_id,
    load_case and (optionally) wire.
    """
    start = np.array([row["x0"], row["y0"], row["z0"]], dtype=float)
    end = np.array([row["x1"], row["y1"], row["z1"]], dtype=float)
    s, dz = float(np.hypot(*(end - start)[:2])), float(end[2] - start[2])
    h, w, phi = float(row["horizontal_tension_n"]), float(row["resultant_n_m"]), float(row["blowout_rad"])
    side = float(row["side"])
    s_plane, dz_plane = swung_span(s, dz, phi)
    c = h / w
    low_m = float(low_point_x(s_plane, dz_plane, c)) * s / s_plane
    stations = conductor_stations(s, station_m, low_m)
    xyz = conductor_points(start, end, h, w, phi, stations, side=side)
    mid = conductor_points(start, end, h, w, phi, np.array([s / 2.0]), side=side)[0]
    tension_a, tension_b = support_tensions(s_plane, dz_plane, h, w)
    return ConductorProfile(
        span_id=row["span_id"], section_id=row["section_id"], load_case=row["load_case"],
        stations_m=stations, xyz=xyz, horizontal_tension_n=h,
        max_tension_n=float(max(tension_a, tension_b)), sag_m=float((start[2] + end[2]) / 2.0 - mid[2]),
        low_point_m=low_m, catenary_m=c, blowout_deg=float(row["blowout_deg"]), wire=str(row.get("wire", "")))
