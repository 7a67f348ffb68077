"""Stage: true 3D distance from every station to the nearest surveyed vegetation or building point.

Per tension section, one k-d tree over the section's kept surface points
(``[point_cloud] surface_classes``); every station of every checked load case,
in the wire's position in that case (swung under wind), gets the distance to
the nearest point, that point and its LAS class. A station whose reach (the
largest required distance) runs past the kept corridor is *unknown*: points
beyond it were not kept, so it is never reported as clear.

The required distance of a station is that of its nearest point's category
(``vegetation`` for LAS classes 3-5, ``building`` for 6, ``surface`` for any
other class asked for) in ``[clearance.required_m]``, falling back to
``surface`` when the category has no value of its own.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from routesag.physics.point_clearance import nearest_surface, surface_category
from routesag.pipeline import Stage
from routesag.profiles import StationField, StationStack, SurfaceProfile, profile_keys


@dataclass
class PointSurfaceProfile(SurfaceProfile):
    """Distance from each station to the nearest surface point, with that point's LAS class."""

    classification: np.ndarray = None   # class of the nearest point; 0 where none within reach


class MeasurePointClearance(Stage):
    name = "measure_point_clearance"
    requires = ("project", "conductors", "wire_spans", "surface_points", "point_corridor_m")
    provides = ("point_surface",)
    per_section = True
    description = "3D distance from every station to the nearest surveyed vegetation or building point"

    def run(self, data, ctx):
        project, profiles = data["project"], data["conductors"]
        result = StationField.fromkeys(profile_keys(profiles))
        if project.point_cloud is None or not project.point_cloud.surface_classes:
            return {"point_surface": result}
        points = data["surface_points"]
        xyz = points[["x", "y", "z"]].to_numpy(dtype=float)
        classes = points["classification"].to_numpy().astype(np.uint8)
        rules = project.clearance
        reach_m = max(required_of(rules.required_m, c) for c in ("vegetation", "building", "surface"))
        chords = _chords(data["wire_spans"])
        ctx.notes["point_clearance_rule"] = (
            f"3D distance from each station to the nearest surface point (classes "
            f"{', '.join(map(str, project.point_cloud.surface_classes))}); stations within {reach_m:.2f} m of "
            "the edge of the kept corridor are unknown")
        checked = [(p, key) for p, key in zip(profiles, profile_keys(profiles), strict=True)
                   if rules.checks(p.load_case)]
        stack = StationStack(p for p, _ in checked)
        # one k-d tree for the section: every station of every checked profile asks it at once
        distance, index = nearest_surface(stack.stack((p.xyz for p, _ in checked)).reshape(-1, 3), xyz)
        for i, (profile, key) in enumerate(checked):
            part = stack.slice(i)
            result[key] = measured(profile.xyz, distance[part], index[part], xyz, classes, reach_m,
                                   data["point_corridor_m"], chords[(profile.span_id, profile.wire)])
        return {"point_surface": result}


def _chords(wire_spans) -> dict:
    """Rest chord (x0, y0, x1, y1) [m] of each wire span, by (span_id, wire)."""
    ends = wire_spans[["x0", "y0", "x1", "y1"]].to_numpy(dtype=float)
    return {key: dict(zip(("x0", "y0", "x1", "y1"), row))
            for key, row in zip(zip(wire_spans["span_id"], wire_spans["wire"]), ends)}


def required_of(required_m: dict, category: str) -> float:
    """Required distance of a surface category [m]: its own value, else ``surface``'s."""
    return float(required_m.get(category, required_m["surface"]))


def measure(stations_xyz, points_xyz, classes, reach_m, corridor_m, chord) -> PointSurfaceProfile:
    """Nearest surface point of every station, and whether its reach stays inside the corridor."""
    distance, index = nearest_surface(stations_xyz, points_xyz)
    return measured(stations_xyz, distance, index, points_xyz, classes, reach_m, corridor_m, chord)


def measured(stations_xyz, distance, index, points_xyz, classes, reach_m, corridor_m, chord) -> PointSurfaceProfile:
    """:func:`measure` from the nearest points already found (``index`` -1 where none)."""
    found = index >= 0
    nearest = np.full((len(stations_xyz), 3), np.nan)
    nearest[found] = points_xyz[index[found]]
    cls = np.zeros(len(stations_xyz), dtype=np.uint8)
    cls[found] = classes[index[found]]
    off_chord = _plan_distance(stations_xyz[:, 0], stations_xyz[:, 1], chord)
    unknown = off_chord + reach_m > corridor_m
    return PointSurfaceProfile(distance, nearest[:, 0], nearest[:, 1], nearest[:, 2], unknown, cls)


def _plan_distance(x, y, chord) -> np.ndarray:
    """Plan distance of points from the wire's rest chord (x0, y0)-(x1, y1) [m]."""
    a = np.array([chord["x0"], chord["y0"]], dtype=float)
    d = np.array([chord["x1"], chord["y1"]], dtype=float) - a
    t = np.clip(((x - a[0]) * d[0] + (y - a[1]) * d[1]) / (d @ d), 0.0, 1.0)
    return np.hypot(x - (a[0] + t * d[0]), y - (a[1] + t * d[1]))


def find_point_violations(profile, ground, points: PointSurfaceProfile, required_m: dict) -> list[dict]:
    """Stretches closer to a surface point than its category requires, one violation each at the worst station.

    ``clearance_m`` is the 3D distance and ``surface_x/y/z``, ``surface_class`` the offending point.
    """
    from routesag.stages.clearance import violation_record, violation_stretches  # it imports this module

    # a few classes, many stations: category and required distance looked up once per class
    classes, where = np.unique(points.classification, return_inverse=True)
    names = np.where(classes > 0, surface_category(classes), "surface").astype(object)
    categories = names[where.reshape(-1)]
    required = np.array([required_of(required_m, c) for c in names], dtype=float)[where.reshape(-1)]
    found = []
    for first, last, worst in violation_stretches(points.distance_m, required, categories):
        row = violation_record(profile, ground, points.distance_m, required, categories, first, last, worst)
        row.update(surface_x=float(points.x[worst]), surface_y=float(points.y[worst]),
                   surface_z=float(points.z[worst]), surface_class=int(points.classification[worst]))
        found.append(row)
    return found


def closer_surface(raster: SurfaceProfile | None, points: SurfaceProfile) -> SurfaceProfile:
    """Per station, whichever of the surface model and the surface points is nearer (for min_surface_m)."""
    if raster is None:
        return points
    take = points.distance_m < raster.distance_m
    pick = [np.where(take, p, r) for p, r in ((points.distance_m, raster.distance_m), (points.x, raster.x),
                                               (points.y, raster.y), (points.z, raster.z))]
    return SurfaceProfile(*pick, raster.unknown | points.unknown)
