"""Stages: read the crossings layer; give every station its category and required clearance.

A station whose ground point (the wire's x, y in that load case) lies in a
crossing area takes the crossing's category and required clearance; where
areas overlap, the largest required clearance wins. Every other station is
``ground``.
"""
from __future__ import annotations

import geopandas as gpd
import numpy as np
import shapely

from routesag.io.crossings import check_crossings, read_crossings_file
from routesag.pipeline import Stage
from routesag.profiles import StationField, split_by_profile, stacked_xy


class ReadCrossings(Stage):
    name = "read_crossings"
    requires = ("project", "work_crs", "structures")
    provides = ("crossings",)
    description = "read crossing areas (roads, railways, water ...) with their required clearance; lines buffered"

    def run(self, data, ctx):
        project, crs = data["project"], data["work_crs"]
        if project.crossings_path is None:
            return {"crossings": empty_crossings(crs)}
        raw = read_crossings_file(project.crossings_path, project.crossings_layer)
        crossings = check_crossings(raw, project.crossings_path, project.clearance, crs, project.structures_crs,
                                    layer=project.crossings_layer,
                                    fields=project.settings.get("inputs", {}).get("fields"), warn=ctx.warn)
        message = far_from_line(crossings, data["structures"][["x", "y"]].to_numpy(dtype=float))
        if message:
            ctx.warn(f"crossings {project.crossings_path}: {message}")
        ctx.notes["crossings"] = crossings["category"].value_counts().sort_index().to_dict()
        return {"crossings": crossings}


class ClassifyStations(Stage):
    name = "classify_stations"
    requires = ("project", "conductors", "crossings")
    provides = ("station_rules",)
    per_section = True
    description = "category and required clearance of every station: ground, or the crossing it lies in"

    def run(self, data, ctx):
        ground_m = data["project"].clearance.required_m["ground"]
        return {"station_rules": station_rules(data["conductors"], data["crossings"], ground_m)}


#: A crossings layer none of whose features comes this close to the line is probably in the wrong CRS [m].
FAR_FROM_LINE_M = 1000.0


def far_from_line(crossings, xy) -> str | None:
    """A warning when the layer has features but none within :data:`FAR_FROM_LINE_M` of the structures ``xy``.

    The structures (not the wires) stand for the line so the check is made
    once for the whole line, before it is cut into sections; a wire strays
    from its structures' bounding box by far less than that distance.
    """
    if len(crossings) == 0 or not len(xy):
        return None
    area = shapely.box(*(xy.min(axis=0) - FAR_FROM_LINE_M), *(xy.max(axis=0) + FAR_FROM_LINE_M))
    if crossings.sindex.query(area, predicate="intersects").size:
        return None
    return (f"none of its {len(crossings)} features lies within {FAR_FROM_LINE_M:.0f} m of the line, so no "
            "crossing rule applies; check the layer's CRS")


def empty_crossings(crs) -> gpd.GeoDataFrame:
    """A crossings frame with no areas."""
    return gpd.GeoDataFrame({"feature": np.empty(0, int), "category": np.empty(0, object),
                             "required_m": np.empty(0)}, geometry=gpd.GeoSeries([], crs=crs), crs=crs)


def station_rules(profiles, crossings, ground_required_m) -> StationField:
    """(required clearance [m], category) per station of each profile, by key; all profiles in one query.

    Without crossing areas every station is ``ground``: both arrays are then
    read-only views of one value, not one value stored per station.
    """
    profiles = list(profiles)
    if len(crossings) == 0:
        n = sum(len(p.xyz) for p in profiles)
        ground = (np.broadcast_to(np.float64(ground_required_m), (n,)),
                  np.broadcast_to(np.array("ground", dtype=object), (n,)))
        return split_by_profile(ground, profiles)
    return split_by_profile(classify_points(stacked_xy(profiles), crossings, ground_required_m), profiles)


def classify_points(xy, crossings, ground_required_m) -> tuple[np.ndarray, np.ndarray]:
    """Required clearance [m] and category at plan points; the largest where crossing areas overlap.

    Parameters
    ----------
    xy : numpy.ndarray, shape (n, 2)
        Plan points in the crossings' CRS [m].
    crossings : geopandas.GeoDataFrame
        Areas with ``category`` and ``required_m`` [m].
    ground_required_m : float
        Required clearance outside every crossing [m].
    """
    required = np.full(len(xy), float(ground_required_m))
    if len(xy) == 0 or len(crossings) == 0:
        return required, np.full(len(xy), "ground", dtype=object)
    point, area = points_in_areas(xy, crossings.geometry.values)
    area_required = crossings["required_m"].to_numpy(dtype=float)[area]
    order = np.lexsort((area, -area_required, point))  # per point: largest required first
    point, area = point[order], area[order]
    first = np.r_[True, point[1:] != point[:-1]] if len(point) else np.empty(0, bool)
    required[point[first]] = crossings["required_m"].to_numpy(dtype=float)[area[first]]
    # the category as an index into ["ground", each area's category]: one gather instead of a string per point
    names = np.concatenate([np.array(["ground"], dtype=object), crossings["category"].to_numpy(dtype=object)])
    code = np.zeros(len(xy), dtype=np.int64)
    code[point[first]] = area[first] + 1
    return required, names[code]


def points_in_areas(xy, areas) -> tuple[np.ndarray, np.ndarray]:
    """(point, area) index pairs of every plan point inside an area, boundary included (``intersects``).

    Each area near the points tests only the points in its bounding box
    (found on the points sorted by x), as a prepared geometry: far fewer
    predicate calls than asking a tree of areas about every point. The
    same pairs as ``STRtree(areas).query(points, predicate="intersects")``.
    """
    finite = np.isfinite(xy).all(axis=1)
    if not finite.any():
        return np.empty(0, np.int64), np.empty(0, np.int64)
    near = shapely.STRtree(areas).query(shapely.box(*xy[finite].min(axis=0), *xy[finite].max(axis=0)))
    order = np.argsort(xy[:, 0], kind="stable")
    x_sorted = xy[order, 0]
    points, found = [], []
    for a in np.sort(near):
        x0, y0, x1, y1 = areas[a].bounds
        candidates = order[np.searchsorted(x_sorted, x0, "left"):np.searchsorted(x_sorted, x1, "right")]
        candidates = candidates[(xy[candidates, 1] >= y0) & (xy[candidates, 1] <= y1)]
        shapely.prepare(areas[a])  # kept on the geometry, so the next section reuses it
        inside = candidates[shapely.intersects_xy(areas[a], xy[candidates, 0], xy[candidates, 1])]
        points.append(inside)
        found.append(np.full(len(inside), a, dtype=np.int64))
    if not points:
        return np.empty(0, np.int64), np.empty(0, np.int64)
    return np.concatenate(points).astype(np.int64), np.concatenate(found)
