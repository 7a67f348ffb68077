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
from routesag.profiles import (  # noqa: F401 (runs, station_edges, station_lengths re-exported)
    StationStack, identity_columns, profile_identity, profile_keys, runs, station_edges, station_lengths)
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
        summaries, violations = check_profiles(data["conductors"], data["ground"], data["station_rules"],
                                               data["surface"], data["point_surface"], rules)
        return {"clearance": summaries, "violations": violations}


def check_profiles(profiles, ground, station_rules, surface, point_surface, rules) -> tuple[pd.DataFrame,
                                                                                            pd.DataFrame]:
    """The summary (one row per profile) and the violations of a set of profiles, as two frames.

    The same rows and values as :func:`summarise` and :func:`find_violations`
    profile by profile, from array operations over all stations at once; only
    profiles with a surface model or surface points take the per-profile path.
    """
    keys = profile_keys(profiles)
    stack = StationStack(profiles)
    if not stack.profiles:
        return pd.DataFrame([]), pd.DataFrame([])
    checked = np.array([rules.checks(p.load_case) for p in stack.profiles], dtype=bool)
    ground_z = stack.stack(ground[k] for k in keys)
    clearance = stack.z() - ground_z
    station_required = [station_rules[k] for k in keys]
    required = _stacked_required(stack, [r for r, _ in station_required])
    unknown = np.isnan(clearance)
    known_or_inf = np.where(unknown, np.inf, clearance)
    below = known_or_inf < required
    if not checked.all():
        below &= stack.per_station(checked)
    found = ground_stretches(stack, ground_z, clearance, required, [c for _, c in station_required], below)
    extras = _surface_checks(stack, keys, checked, ground_z, surface, point_surface, rules, unknown)
    frame = _summary_frame(stack, checked, clearance, required, known_or_inf, unknown, below, extras)
    return frame, _violation_frame(found, extras)


def _stacked_required(stack, arrays) -> np.ndarray:
    """Required clearance of every station; a read-only view of one value when all stations share it."""
    if all(getattr(r, "strides", None) == (0,) or _one_value(r) for r in arrays):
        values = np.array([r[0] if len(r) else np.nan for r in arrays], dtype=float)
        if (values == values[0]).all():
            return np.broadcast_to(values[0], (len(stack),))
        return stack.per_station(values)
    return stack.stack(arrays)


def _violation_frame(found: dict[str, np.ndarray], extras: dict) -> pd.DataFrame:
    """Ground violations and, per profile after its own, the surface ones (the rows :func:`find_violations`
    and the surface checks give profile by profile)."""
    owner = found.pop("profile")
    if not any(near for near, _ in extras.values()):
        return pd.DataFrame(found) if len(owner) else pd.DataFrame([])
    rows = [dict(zip(found, values)) for values in zip(*found.values())]
    by_profile: dict[int, list[dict]] = {}
    for i, row in zip(owner.tolist(), rows):
        by_profile.setdefault(i, []).append(row)
    for i, (near, _) in extras.items():
        by_profile.setdefault(i, []).extend(near)
    return pd.DataFrame([row for i in sorted(by_profile) for row in by_profile[i]])


def ground_stretches(stack, ground_z, clearance, required, categories, below) -> dict[str, np.ndarray]:
    """The :func:`violation_record` columns of every stretch below the required clearance, over stacked stations.

    ``categories`` holds one array per profile; a stretch is cut where the
    category changes. The ``profile`` column (the owner's index) comes first.
    """
    firsts, lasts = stack.runs(below)
    uniform = {i: _one_value(categories[i]) for i in set(stack.profile_of(firsts).tolist())}  # owners only
    firsts, lasts = _cut_at_category_changes(stack, categories, uniform, firsts, lasts)
    owner = stack.profile_of(firsts)
    worst = _largest_deficit(below, clearance, required, firsts)
    start_m, end_m = _stretch_ends(stack, clearance, required, categories, uniform, firsts, lasts, owner)
    xyz = stack.take([p.xyz for p in stack.profiles], worst).reshape(-1, 3)
    ids = identity_columns([stack.profiles[i] for i in owner])
    return {"profile": owner, **{k: np.array(v, dtype=object) for k, v in ids.items()},
            "category": np.array([str(c) for c in stack.take(categories, worst, dtype=object)], dtype=object),
            "station_m": stack.take([p.stations_m for p in stack.profiles], worst), "start_m": start_m,
            "end_m": end_m, "x": xyz[:, 0], "y": xyz[:, 1], "conductor_z_m": xyz[:, 2],
            "ground_z_m": ground_z[worst], "clearance_m": clearance[worst], "required_m": required[worst],
            "deficit_m": required[worst] - clearance[worst]}


def _one_value(categories) -> bool:
    """The array is one value repeated by stride 0 (``ground`` everywhere): no category change to look for."""
    categories = np.asarray(categories)
    return categories.ndim == 0 or len(categories) <= 1 or categories.strides[0] == 0


def _cut_at_category_changes(stack, categories, uniform, firsts, lasts) -> tuple[np.ndarray, np.ndarray]:
    """Runs [first, last] (stacked indices) cut where the category changes, in order."""
    owner = stack.profile_of(firsts)
    if all(uniform[i] for i in set(owner.tolist())):
        return firsts, lasts
    cut_firsts, cut_lasts = [], []
    for first, last, i in zip(firsts.tolist(), lasts.tolist(), owner.tolist()):
        offset = int(stack.bounds[i])
        cats = np.broadcast_to(np.asarray(categories[i], dtype=object), (int(stack.lengths[i]),))
        a, b = first - offset, last - offset
        cuts = (a + 1 + np.flatnonzero(cats[a + 1:b + 1] != cats[a:b])) if not uniform[i] else np.empty(0, int)
        cut_firsts += (offset + np.r_[a, cuts]).tolist()
        cut_lasts += (offset + np.r_[cuts - 1, b]).tolist()
    return np.array(cut_firsts, dtype=np.int64), np.array(cut_lasts, dtype=np.int64)


def _largest_deficit(below, clearance, required, firsts) -> np.ndarray:
    """Stacked index of the first station with the largest deficit in each stretch (stretches cover ``below``)."""
    at = np.flatnonzero(below)
    if not len(firsts):
        return np.empty(0, np.int64)
    values = required[at] - clearance[at]
    begin = np.searchsorted(at, firsts)
    peak = np.maximum.reduceat(values, begin)
    hit = np.flatnonzero(values == np.repeat(peak, np.diff(np.r_[begin, len(at)])))
    return at[hit[np.searchsorted(hit, begin)]]


def _stretch_ends(stack, clearance, required, categories, uniform, firsts, lasts, owner) -> tuple[np.ndarray,
                                                                                                  np.ndarray]:
    """:func:`stretch_ends_m` of every stretch: threshold crossings towards a clear neighbour of its category."""
    stations = [p.stations_m for p in stack.profiles]
    ends = []
    for at, step, side in ((firsts, -1, 0), (lasts, 1, 1)):
        here = stack.take(stations, at)
        beside = at + step
        inside = beside == np.clip(beside, stack.starts[owner], stack.bounds[owner + 1] - 1)
        beside = np.where(inside, beside, at)
        m_at, m_beside = _margin(clearance, required, at), _margin(clearance, required, beside)
        move = inside & (m_beside >= 0) & _same_category(stack, categories, uniform, owner, at, beside)
        if move.any():
            s_at, s_beside = here[move], stack.take(stations, beside[move])
            pair = (s_beside, s_at, m_beside[move], m_at[move]) if step < 0 else \
                (s_at, s_beside, m_at[move], m_beside[move])
            here[move] = zero_crossing_bounds(*pair)[side]
        ends.append(here)
    return ends[0], ends[1]


def _margin(clearance, required, at) -> np.ndarray:
    """Clearance minus required at stations ``at``; NaN where not finite (an unknown neighbour is no crossing)."""
    margin = clearance[at] - required[at]
    return np.where(np.isfinite(margin), margin, np.nan)


def _same_category(stack, categories, uniform, owner, at, beside) -> np.ndarray:
    """Whether the stations ``at`` and ``beside`` (of the same profile) share a category."""
    differ = [not uniform[i] for i in owner.tolist()]
    same = np.ones(len(at), dtype=bool)
    for k in np.flatnonzero(differ):
        cats, offset = categories[owner[k]], stack.bounds[owner[k]]
        same[k] = cats[at[k] - offset] == cats[beside[k] - offset]
    return same


def _surface_checks(stack, keys, checked, ground_z, surface, point_surface, rules, unknown) -> dict:
    """Surface model and surface points of the checked profiles that have them: profile index ->
    (violation records, nearer surface); ``unknown`` takes their incomplete stations."""
    extras = {}
    for i in np.flatnonzero(checked):
        near_model, points = surface[keys[i]], point_surface[keys[i]]
        if near_model is None and points is None:
            continue
        part = stack.slice(i)
        profile, g = stack.profiles[i], ground_z[part]
        near, nearer = [], near_model
        if near_model is not None:
            near = find_surface_violations(profile, g, near_model, rules.required_m["surface"])
            unknown[part] |= near_model.unknown
        if points is not None:  # vegetation and buildings from the point cloud
            near = near + find_point_violations(profile, g, points, rules.required_m)
            unknown[part] |= points.unknown
            nearer = closer_surface(near_model, points)
        extras[int(i)] = (near, nearer)
    return extras


def _summary_frame(stack, checked, clearance, required, known_or_inf, unknown, below, extras) -> pd.DataFrame:
    """One :func:`summarise` row per profile, built as columns."""
    smallest, worst = stack.first_minimum(known_or_inf)
    known = smallest < np.inf  # the profile has a station with terrain
    safe_worst = np.maximum(worst, 0)
    required_at = required[safe_worst] if len(required) else np.full(len(known), np.nan)
    for i in np.flatnonzero(~known):  # no terrain under the whole profile: its largest required value
        required_at[i] = np.max(required[stack.slice(i)])
    any_unknown = stack.any(unknown)
    unknown_m = np.zeros(len(stack.profiles))
    for i in np.flatnonzero(any_unknown):
        unknown_m[i] = float(station_lengths(stack.profiles[i].stations_m)[unknown[stack.slice(i)]].sum())
    violation = stack.any(below) | np.isin(np.arange(len(checked)), [i for i, e in extras.items() if e[0]])
    status = np.where(~checked, "unchecked", np.where(violation, "violation",
                                                      np.where(any_unknown, "unknown", "clear")))
    min_surface = np.full(len(known), np.nan)
    for i, (_, nearer) in extras.items():
        min_surface[i] = _min_surface(nearer)
    at = np.full(len(known), np.nan)
    at[known] = stack.take([p.stations_m for p in stack.profiles], worst[known])
    return pd.DataFrame({
        **identity_columns(stack.profiles),
        "min_clearance_m": np.where(known, clearance[safe_worst], np.nan),
        "min_clearance_station_m": at, "unknown_m": unknown_m,
        "required_m": np.where(checked, required_at, np.nan), "status": status.astype(object),
        "min_surface_m": min_surface})


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
    return [stretch for first, last in runs(below)
            for stretch in category_stretches(clearance, required, categories, first, last)]


def category_stretches(clearance, required, categories, first, last) -> list[tuple[int, int, int]]:
    """The stretch [first, last] below the required value cut where the category changes: (first, last, worst)."""
    cuts = first + 1 + np.flatnonzero(categories[first + 1:last + 1] != categories[first:last])
    stretches = []
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
