"""Stage: clearance of every station against its required value; one violation per stretch.

Two checks per station of every checked load case: the vertical clearance to
the terrain against the required value of the station's category (ground or
the crossing it lies in), and the 3D distance to the surface model (when one
is given) against the ``surface`` value.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from routesag.physics.bilinear import zero_crossing_bounds
from routesag.pipeline import Stage
from routesag.profiles import profile_identity, runs, station_edges, station_lengths  # noqa: F401 (re-exported)
from routesag.stages.point_clearance import closer_surface, find_point_violations


class CheckClearance(Stage):
    name = "check_clearance"
    requires = ("project", "conductors", "ground", "station_rules", "surface", "point_surface")
    provides = ("clearance", "violations")
    per_section = True
    description = ("vertical clearance per station against its category's required value, 3D distance to the "
                   "surface model; one violation per stretch")

    def run(self, data, ctx):
        rules = data["project"].clearance
        record_rules(rules, ctx)
        summaries, violations = [], []
        for profile in data["conductors"]:
            ground, (required, category) = data["ground"].of(profile), data["station_rules"].of(profile)
            surface = data["surface"].of(profile)
            clearance = profile.xyz[:, 2] - ground
            if not rules.checks(profile.load_case):
                summaries.append(summarise(profile, clearance, np.nan, status="unchecked"))
                continue
            found = find_violations(profile, ground, clearance, required, category)
            unknown = np.isnan(clearance)
            near = []
            if surface is not None:
                near = find_surface_violations(profile, ground, surface, rules.required_m["surface"])
                unknown = unknown | surface.unknown
            points = data["point_surface"].of(profile)
            if points is not None:  # vegetation and buildings from the point cloud
                near = near + find_point_violations(profile, ground, points, rules.required_m)
                unknown, surface = unknown | points.unknown, closer_surface(surface, points)
            summaries.append(summarise(profile, clearance, required, unknown, bool(near), surface))
            violations.extend(found + near)
        return {"clearance": pd.DataFrame(summaries), "violations": pd.DataFrame(violations)}


def record_rules(rules, ctx) -> None:
    """Required values after the adder, and how the adder was found, for run_info."""
    ctx.notes["clearance_required_m"] = {name: round(value, 4) for name, value in rules.required_m.items()}
    ctx.notes["clearance_adder"] = {
        "voltage_kv": rules.voltage_kv, "max_voltage_kv": rules.max_voltage_kv,
        "phase_to_ground_kv": None if rules.voltage_kv is None else round(rules.phase_to_ground_kv, 3),
        "per_kv_m": rules.adder_per_kv_m, "above_kv": rules.adder_above_kv, "adder_m": round(rules.adder_m, 4)}
    ctx.notes["clearance_cases"] = "all" if rules.cases is None else list(rules.cases)


def summarise(profile, clearance: np.ndarray, required_m, unknown=None, surface_violation=False,
              surface=None, status=None) -> dict:
    """Worst clearance, unknown length and status of one profile. Unknown stations never count as clear.

    ``required_m`` is a value or one per station; the row's ``required_m`` is the one at the worst
    station. ``unknown`` (default: NaN clearance) marks stations whose check is incomplete.
    """
    required = np.broadcast_to(np.asarray(required_m, dtype=float), clearance.shape)
    unknown = np.isnan(clearance) if unknown is None else unknown
    known = ~np.isnan(clearance)
    unknown_m = float(station_lengths(profile.stations_m)[unknown].sum())
    if known.any():
        worst = int(np.nanargmin(clearance))
        min_clearance, at, required_at = float(clearance[worst]), float(profile.stations_m[worst]), required[worst]
    else:
        min_clearance = at = float("nan")
        required_at = np.max(required)
    if status is None:
        below = (np.nan_to_num(clearance, nan=np.inf) < required).any()
        status = "violation" if below or surface_violation else "unknown" if unknown.any() else "clear"
    return {**profile_identity(profile), "min_clearance_m": min_clearance, "min_clearance_station_m": at,
            "unknown_m": unknown_m, "required_m": float(required_at), "status": status,
            "min_surface_m": _min_surface(surface)}


def _min_surface(surface) -> float:
    if surface is None or not np.isfinite(surface.distance_m).any():
        return float("nan")
    return float(np.min(surface.distance_m[np.isfinite(surface.distance_m)]))


def violation_stretches(clearance, required, categories) -> list[tuple[int, int, int]]:
    """(first, last, worst) of each contiguous stretch below the required value within one category.

    The worst station is the one with the largest deficit (required minus clearance).
    """
    below = np.nan_to_num(clearance, nan=np.inf) < required
    stretches = []
    for first, last in runs(below):
        cuts = first + 1 + np.flatnonzero(categories[first + 1:last + 1] != categories[first:last])
        for a, b in zip(np.r_[first, cuts], np.r_[cuts - 1, last]):
            worst = int(a) + int(np.argmax(required[a:b + 1] - clearance[a:b + 1]))
            stretches.append((int(a), int(b), worst))
    return stretches


def stretch_ends_m(stations_m, margin, categories, first, last) -> tuple[float, float]:
    """Where a stretch below the required value starts and ends [m], at the threshold crossings.

    Towards a clear neighbour station of the same category the end moves to the
    outermost place the margin (clearance - required) can cross zero between
    the two stations (:func:`routesag.physics.bilinear.zero_crossing_bounds`),
    so the stretch is never shorter than the truth; otherwise it stays at its
    station (a span end, an unknown neighbour, a change of category).
    """
    start, end = float(stations_m[first]), float(stations_m[last])
    margin = np.where(np.isfinite(margin), margin, np.nan)  # an unknown neighbour is never a crossing
    if first > 0 and margin[first - 1] >= 0 and categories[first - 1] == categories[first]:
        start = float(zero_crossing_bounds(stations_m[first - 1], stations_m[first], margin[first - 1],
                                           margin[first])[0])
    if last + 1 < len(stations_m) and margin[last + 1] >= 0 and categories[last + 1] == categories[last]:
        end = float(zero_crossing_bounds(stations_m[last], stations_m[last + 1], margin[last],
                                         margin[last + 1])[1])
    return start, end


def violation_record(profile, ground, clearance, required, categories, first, last, worst,
                     at_crossings=True) -> dict:
    """One violation at the worst station of a stretch, from one threshold crossing to the next.

    ``at_crossings=False`` keeps the ends at stations (the surface distance is no quadratic piece).
    """
    x, y, z = profile.xyz[worst]
    if at_crossings:
        start_m, end_m = stretch_ends_m(profile.stations_m, clearance - required, categories, first, last)
    else:
        start_m, end_m = float(profile.stations_m[first]), float(profile.stations_m[last])
    return {
        **profile_identity(profile), "category": str(categories[worst]),
        "station_m": float(profile.stations_m[worst]), "start_m": start_m,
        "end_m": end_m, "x": float(x), "y": float(y),
        "conductor_z_m": float(z), "ground_z_m": float(ground[worst]),
        "clearance_m": float(clearance[worst]), "required_m": float(required[worst]),
        "deficit_m": float(required[worst] - clearance[worst]),
    }


def find_violations(profile, ground, clearance, required_m, category="ground") -> list[dict]:
    """One record per contiguous stretch below the required clearance (per category), at its worst station.

    ``required_m`` and ``category`` are one value or one per station.
    """
    required = np.broadcast_to(np.asarray(required_m, dtype=float), clearance.shape)
    categories = np.broadcast_to(np.asarray(category, dtype=object), clearance.shape)
    return [violation_record(profile, ground, clearance, required, categories, *stretch)
            for stretch in violation_stretches(clearance, required, categories)]


def find_surface_violations(profile, ground, surface, required_m) -> list[dict]:
    """Stretches where the 3D distance to the surface model is below ``required_m``.

    ``clearance_m`` is that distance; ``surface_x/y/z`` the nearest surface point.
    """
    distance = surface.distance_m
    required = np.full(distance.shape, float(required_m))
    categories = np.full(distance.shape, "surface", dtype=object)
    records = []
    for first, last, worst in violation_stretches(distance, required, categories):
        record = violation_record(profile, ground, distance, required, categories, first, last, worst,
                                  at_crossings=False)
        record.update(surface_x=float(surface.x[worst]), surface_y=float(surface.y[worst]),
                      surface_z=float(surface.z[worst]))
        records.append(record)
    return records
