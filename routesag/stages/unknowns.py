"""Stage: stretches of conductor whose clearance is unknown (terrain or surface nodata).

Nothing over nodata is reported as clear: each contiguous stretch of stations
without a complete check becomes one LineString Z along the wire, with the
reason (``terrain``, ``surface`` or both) and its horizontal length.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import shapely

from routesag.pipeline import Stage
from routesag.profiles import StationStack, profile_identity, profile_keys, runs, station_edges

UNKNOWN_COLUMNS = ["span_id", "load_case", "start_m", "end_m", "length_m", "reason"]


class FindUnknowns(Stage):
    name = "find_unknowns"
    requires = ("project", "conductors", "ground", "surface", "point_surface")
    provides = ("unknown_stretches",)
    per_section = True
    description = "stretches of wire over terrain or surface nodata (unknown clearance, never clear)"

    def run(self, data, ctx):
        rules = data["project"].clearance
        ground, surface, points = data["ground"], data["surface"], data["point_surface"]
        rows = [row for profile in incomplete_profiles(data["conductors"], ground, surface, points, rules.checks)
                for row in unknown_stretches(profile, ground.of(profile), surface.of(profile), points.of(profile))]
        frame = pd.DataFrame(rows) if rows else pd.DataFrame(columns=UNKNOWN_COLUMNS + ["geometry"])
        return {"unknown_stretches": frame}


def incomplete_profiles(profiles, ground, surface, points, checked=lambda case: True) -> list:
    """The profiles of checked load cases with at least one station of unknown clearance, in order.

    Terrain holes are found over all stations at once; a profile with a surface
    model or surface points is always kept (its own stations say more).
    """
    chosen = [(p, key) for p, key in zip(profiles, profile_keys(profiles), strict=True) if checked(p.load_case)]
    stack = StationStack(p for p, _ in chosen)
    holes = stack.any_nan(stack.stack(ground[key] for _, key in chosen))
    return [p for (p, key), hole in zip(chosen, holes, strict=True)
            if hole or surface[key] is not None or points[key] is not None]


def unknown_stretches(profile, ground, surface=None, points=None) -> list[dict]:
    """One record per contiguous stretch of stations with unknown clearance.

    A station stands for the wire from half-way to its previous station to
    half-way to its next, so ``length_m`` (horizontal, ``end_m - start_m``)
    adds up to the profile's ``unknown_m``.
    """
    reasons = {"terrain": np.isnan(ground)}
    if surface is not None:
        reasons["surface"] = surface.unknown
    if points is not None:  # the reach runs past the point cloud's kept corridor
        reasons["points"] = points.unknown
    unknown = np.logical_or.reduce(list(reasons.values()))
    stations = profile.stations_m
    edges = station_edges(stations)
    records = []
    for first, last in runs(unknown):
        start, end = float(edges[first]), float(edges[last + 1])
        along = np.unique(np.r_[start, stations[first:last + 1], end])
        if len(along) < 2:
            along = np.r_[along, along]
        coords = np.column_stack([np.interp(along, stations, profile.xyz[:, k]) for k in range(3)])
        why = ", ".join(name for name, mask in reasons.items() if mask[first:last + 1].any())
        records.append({**profile_identity(profile), "start_m": start, "end_m": end, "length_m": end - start,
                        "reason": why, "geometry": shapely.linestrings(coords)})
    return records
