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


class ReadCrossings(Stage):
    name = "read_crossings"
    requires = ("project", "work_crs")
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
        ctx.notes["crossings"] = crossings["category"].value_counts().sort_index().to_dict()
        return {"crossings": crossings}


class ClassifyStations(Stage):
    name = "classify_stations"
    requires = ("project", "conductors", "crossings")
    provides = ("station_rules",)
    description = "category and required clearance of every station: ground, or the crossing it lies in"

    def run(self, data, ctx):
        ground_m = data["project"].clearance.required_m["ground"]
        message = far_from_line(data["crossings"], data["conductors"])
        if message:
            ctx.warn(f"crossings {data['project'].crossings_path}: {message}")
        return {"station_rules": station_rules(data["conductors"], data["crossings"], ground_m)}


#: A crossings layer none of whose features comes this close to the line is probably in the wrong CRS [m].
FAR_FROM_LINE_M = 1000.0


def far_from_line(crossings, profiles) -> str | None:
    """A warning when the layer has features but none within :data:`FAR_FROM_LINE_M` of any wire."""
    if len(crossings) == 0 or not profiles:
        return None
    xy = np.concatenate([p.xyz[:, :2] for p in profiles])
    area = shapely.box(*(xy.min(axis=0) - FAR_FROM_LINE_M), *(xy.max(axis=0) + FAR_FROM_LINE_M))
    if crossings.sindex.query(area, predicate="intersects").size:
        return None
    return (f"none of its {len(crossings)} features lies within {FAR_FROM_LINE_M:.0f} m of the line, so no "
            "crossing rule applies; check the layer's CRS")


def empty_crossings(crs) -> gpd.GeoDataFrame:
    """A crossings frame with no areas."""
    return gpd.GeoDataFrame({"feature": np.empty(0, int), "category": np.empty(0, object),
                             "required_m": np.empty(0)}, geometry=gpd.GeoSeries([], crs=crs), crs=crs)


def station_rules(profiles, crossings, ground_required_m) -> list[tuple[np.ndarray, np.ndarray]]:
    """(required clearance [m], category) per station of each profile, all profiles in one query."""
    counts = [len(p.stations_m) for p in profiles]
    xy = np.concatenate([p.xyz[:, :2] for p in profiles]) if profiles else np.empty((0, 2))
    required, category = classify_points(xy, crossings, ground_required_m)
    bounds = np.cumsum([0] + counts)
    return [(required[a:b], category[a:b]) for a, b in zip(bounds[:-1], bounds[1:])]


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
    category = np.full(len(xy), "ground", dtype=object)
    if len(xy) == 0 or len(crossings) == 0:
        return required, category
    tree = shapely.STRtree(crossings.geometry.values)
    point, area = tree.query(shapely.points(xy), predicate="intersects")
    area_required = crossings["required_m"].to_numpy(dtype=float)[area]
    order = np.lexsort((area, -area_required, point))  # per point: largest required first
    point, area = point[order], area[order]
    first = np.r_[True, point[1:] != point[:-1]] if len(point) else np.empty(0, bool)
    required[point[first]] = crossings["required_m"].to_numpy(dtype=float)[area[first]]
    category[point[first]] = crossings["category"].to_numpy(dtype=object)[area[first]]
    return required, category
