"""The section checks over stacked stations give what the simple per-profile code gives, row for row.

Data built in code: profiles of different lengths (2 to 61 stations) for two spans, two wires and three load
cases (one not checked), terrain holes (one profile over no terrain at all), crossings of two categories, stretches
that touch the ends of a profile (so a run must not join two profiles), a surface model and surface points.
"""
from types import SimpleNamespace

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely

from routesag.profiles import ConductorProfile, Profiles, StationField, StationStack, SurfaceProfile
from routesag.stages.clearance import check_profiles, find_surface_violations, find_violations, summarise
from routesag.stages.crossings import classify_points, empty_crossings, station_rules
from routesag.stages.point_clearance import PointSurfaceProfile, closer_surface, find_point_violations
from routesag.stages.unknowns import incomplete_profiles, unknown_stretches

REQUIRED = {"ground": 7.5, "road": 9.0, "railway": 11.0, "surface": 3.0, "vegetation": 2.5, "building": 4.0}
CASES = ("hot", "ice", "cold")


def rules(cases=("hot", "ice")):
    return SimpleNamespace(required_m=REQUIRED, checks=lambda case: case in cases)


def make_profiles(seed: int) -> Profiles:
    rng = np.random.default_rng(seed)
    profiles = []
    for span in ("P1-P2", "P2-P3"):
        for wire in ("A", "B"):
            for case in CASES:
                n = int(rng.choice([2, 3, 9, 24, 61]))
                stations = np.sort(rng.uniform(0, 100, n))
                stations[0], stations[-1] = 0.0, 100.0
                if n == 2:
                    stations = np.array([0.0, 100.0])
                z = 7.5 + rng.normal(0, 3, n)  # about half the stations below the ground rule
                xyz = np.column_stack([stations, rng.uniform(-6, 6, n), z])
                profiles.append(ConductorProfile(span, "S1", case, stations, xyz, 1e4, 1e4, 3.0, 50.0, 900.0,
                                                 0.0, wire=wire))
    return Profiles(profiles)


def make_ground(profiles, seed: int) -> StationField:
    rng = np.random.default_rng(seed + 100)
    ground = StationField()
    for i, p in enumerate(profiles):
        g = rng.normal(0, 0.5, len(p.xyz))
        g[rng.random(len(g)) < 0.1] = np.nan  # terrain holes
        if i == 4:
            g[:] = np.nan  # no terrain under this profile at all
        ground[p.key] = g
    return ground


def crossing_areas():
    areas = [shapely.box(20, -10, 35, 10), shapely.box(30, -10, 45, 10), shapely.box(70, -2, 90, 10)]
    return gpd.GeoDataFrame({"feature": [0, 1, 2], "category": ["road", "railway", "road"],
                             "required_m": [9.0, 11.0, 9.0]}, geometry=areas, crs="EPSG:32633")


def reference(profiles, ground, rules_by_key, surface, points, checks):
    """The per-profile loop the stage ran before the stations were stacked."""
    summaries, violations = [], []
    for p in profiles:
        g, (required, category) = ground[p.key], rules_by_key[p.key]
        near_model, near_points = surface[p.key], points[p.key]
        clearance = p.xyz[:, 2] - g
        if not checks.checks(p.load_case):
            summaries.append(summarise(p, clearance, np.nan, status="unchecked"))
            continue
        found = find_violations(p, g, clearance, required, category)
        unknown, near, nearer = np.isnan(clearance), [], near_model
        if near_model is not None:
            near = find_surface_violations(p, g, near_model, REQUIRED["surface"])
            unknown = unknown | near_model.unknown
        if near_points is not None:
            near = near + find_point_violations(p, g, near_points, REQUIRED)
            unknown, nearer = unknown | near_points.unknown, closer_surface(near_model, near_points)
        summaries.append(summarise(p, clearance, required, unknown, bool(near), nearer))
        violations.extend(found + near)
    return pd.DataFrame(summaries), pd.DataFrame(violations)


def none_for(profiles) -> StationField:
    return StationField.fromkeys(profiles.keys())


@pytest.mark.parametrize("seed", range(6))
def test_stacked_clearance_equals_the_per_profile_code_with_crossings_and_holes(seed):
    profiles = make_profiles(seed)
    ground = make_ground(profiles, seed)
    rules_by_key = station_rules(profiles, crossing_areas(), REQUIRED["ground"])
    assert {c for _, cats in rules_by_key.values() for c in cats} >= {"road", "railway"}
    summary, violations = check_profiles(profiles, ground, rules_by_key, none_for(profiles), none_for(profiles),
                                         rules())
    want_summary, want_violations = reference(profiles, ground, rules_by_key, none_for(profiles),
                                              none_for(profiles), rules())
    assert len(want_violations) > 3
    pd.testing.assert_frame_equal(summary, want_summary, check_exact=True)
    pd.testing.assert_frame_equal(violations, want_violations, check_exact=True)


@pytest.mark.parametrize("seed", range(3))
def test_stacked_clearance_without_crossings_equals_the_per_profile_code(seed):
    profiles = make_profiles(seed)
    ground = make_ground(profiles, seed)
    shared = station_rules(profiles, empty_crossings("EPSG:32633"), REQUIRED["ground"])
    stored = StationField({k: (np.full(len(r), 7.5), np.full(len(r), "ground", dtype=object))
                           for k, (r, _) in shared.items()})
    want = reference(profiles, ground, stored, none_for(profiles), none_for(profiles), rules())
    for rules_by_key in (shared, stored):  # one value viewed throughout, or one stored per station
        got = check_profiles(profiles, ground, rules_by_key, none_for(profiles), none_for(profiles), rules())
        pd.testing.assert_frame_equal(got[0], want[0], check_exact=True)
        pd.testing.assert_frame_equal(got[1], want[1], check_exact=True)


def surface_for(profiles, seed, kind):
    rng = np.random.default_rng(seed + 200)
    field = none_for(profiles)
    for i, p in enumerate(profiles):
        if i % 3 == (0 if kind is SurfaceProfile else 1):
            n = len(p.xyz)
            distance = np.where(rng.random(n) < 0.2, np.inf, rng.uniform(0.5, 8.0, n))
            parts = [distance, rng.uniform(0, 100, n), rng.uniform(-5, 5, n), rng.uniform(0, 20, n),
                     rng.random(n) < 0.15]
            if kind is PointSurfaceProfile:
                parts.append(rng.choice(np.array([0, 3, 5, 6], dtype=np.uint8), n))
            field[p.key] = kind(*parts)
    return field


@pytest.mark.parametrize("seed", range(3))
def test_stacked_clearance_with_a_surface_model_and_points_equals_the_per_profile_code(seed):
    profiles = make_profiles(seed)
    ground = make_ground(profiles, seed)
    rules_by_key = station_rules(profiles, crossing_areas(), REQUIRED["ground"])
    surface, points = surface_for(profiles, seed, SurfaceProfile), surface_for(profiles, seed, PointSurfaceProfile)
    got = check_profiles(profiles, ground, rules_by_key, surface, points, rules())
    want = reference(profiles, ground, rules_by_key, surface, points, rules())
    assert "surface_class" in want[1].columns
    pd.testing.assert_frame_equal(got[0], want[0], check_exact=True)
    pd.testing.assert_frame_equal(got[1], want[1], check_exact=True)


def test_a_stretch_never_runs_from_one_profile_into_the_next():
    # profile 1 ends below the rule and profile 2 starts below it: two violations, each ending at its span end
    stations = np.array([0.0, 10.0, 20.0])
    first = ConductorProfile("P1-P2", "S1", "hot", stations, np.c_[stations, np.zeros(3), [9.0, 9.0, 5.0]],
                             1.0, 1.0, 0.0, 0.0, 1.0, 0.0, wire="A")
    second = ConductorProfile("P2-P3", "S1", "hot", stations, np.c_[stations, np.zeros(3), [5.0, 9.0, 9.0]],
                              1.0, 1.0, 0.0, 0.0, 1.0, 0.0, wire="A")
    profiles = Profiles([first, second])
    ground = StationField({p.key: np.zeros(3) for p in profiles})
    rules_by_key = station_rules(profiles, empty_crossings("EPSG:32633"), 7.5)
    _, violations = check_profiles(profiles, ground, rules_by_key, none_for(profiles), none_for(profiles), rules())
    assert violations[["span_id", "station_m", "end_m"]].values.tolist()[0][:2] == ["P1-P2", 20.0]
    assert violations["span_id"].tolist() == ["P1-P2", "P2-P3"]
    assert violations["end_m"].iloc[0] == 20.0 and violations["start_m"].iloc[1] == 0.0


@pytest.mark.parametrize("seed", range(4))
def test_unknown_stretches_only_skip_profiles_with_nothing_unknown(seed):
    profiles = make_profiles(seed)
    ground = make_ground(profiles, seed)
    surface = surface_for(profiles, seed, SurfaceProfile)
    points = none_for(profiles)
    checks = rules().checks
    want = [row for p in profiles if checks(p.load_case)
            for row in unknown_stretches(p, ground[p.key], surface[p.key], points[p.key])]
    got = [row for p in incomplete_profiles(profiles, ground, surface, points, checks)
           for row in unknown_stretches(p, ground[p.key], surface[p.key], points[p.key])]
    assert len(want) > 2
    assert [{k: v for k, v in row.items() if k != "geometry"} for row in got] == \
        [{k: v for k, v in row.items() if k != "geometry"} for row in want]
    assert all(a["geometry"].equals_exact(b["geometry"], 0) for a, b in zip(got, want, strict=True))


def test_station_classes_equal_a_point_by_point_check():
    # the largest required value of the areas a point touches (boundary included), else ground
    rng = np.random.default_rng(3)
    xy = np.vstack([rng.uniform(0, 100, (400, 2)) - [0, 50], [[20.0, 0.0], [45.0, 0.0], [35.0, 10.0]],
                    [[np.nan, 0.0], [80.0, np.nan]]])  # a point that could not be placed touches nothing
    areas = crossing_areas()
    required, category = classify_points(xy, areas, 7.5)
    for (x, y), r, c in zip(xy, required, category, strict=True):
        point = shapely.Point(x, y)
        touched = [(a.required_m, a.category) for a in areas.itertuples() if a.geometry.intersects(point)]
        assert (r, c) == (max(touched, key=lambda t: t[0]) if touched else (7.5, "ground"))


def test_station_stack_reductions_and_runs():
    lengths = [3, 1, 4, 2]
    profiles = [SimpleNamespace(xyz=np.zeros((n, 3))) for n in lengths]
    stack = StationStack(profiles)
    values = np.array([3.0, 1.0, 1.0, 5.0, 2.0, np.inf, 2.0, 0.5, np.inf, np.inf])
    smallest, first = stack.first_minimum(values)
    assert smallest.tolist() == [1.0, 5.0, 0.5, np.inf] and first.tolist() == [1, 3, 7, 8]
    mask = np.array([0, 1, 1, 1, 1, 1, 0, 1, 1, 1], dtype=bool)
    firsts, lasts = stack.runs(mask)
    assert list(zip(firsts.tolist(), lasts.tolist())) == [(1, 2), (3, 3), (4, 5), (7, 7), (8, 9)]
    assert stack.any(mask).tolist() == [True, True, True, True]
    assert stack.any_nan(np.r_[values[:9], np.nan]).tolist() == [False, False, False, True]
    assert stack.take([np.arange(n) * 10 for n in lengths], np.array([2, 3, 6])).tolist() == [20, 0, 20]
