"""Violations with a required clearance and a category per station."""
import numpy as np
import pytest

from routesag.stages.clearance import find_surface_violations, find_violations, summarise
from routesag.stages.conductors import ConductorProfile
from routesag.stages.surface import SurfaceProfile


def profile(z):
    stations = np.arange(len(z), dtype=float)
    xyz = np.c_[stations, np.zeros_like(stations), np.asarray(z, dtype=float)]
    return ConductorProfile("s1", "S1", "hot", stations, xyz, 1.0, 1.0, 0.0, 0.0, 1.0, 0.0)


def test_stretch_splits_where_the_category_changes():
    clearance = np.array([10, 6, 6, 6, 6, 6, 10.0])
    required = np.array([7, 7, 7, 9, 9, 7, 7.0])
    category = np.array(["ground"] * 3 + ["road"] * 2 + ["ground"] * 2, dtype=object)
    found = find_violations(profile(clearance), np.zeros(7), clearance, required, category)
    assert [(v["category"], v["start_m"], v["end_m"], v["required_m"]) for v in found] == [
        ("ground", 0.5, 2, 7.0), ("road", 3, 4, 9.0), ("ground", 5, 5.5, 7.0)]
    # towards a clear station the end is at the crossing (margins 3 -> -1: 0.5; -1 -> 3: 5.5, zero_crossing_bounds);
    # at a category change it stays at the station


def test_worst_station_is_the_largest_deficit_not_the_lowest_wire():
    clearance = np.array([10, 6.5, 7.0, 10.0])
    required = np.array([7, 7, 9, 7.0])
    category = np.array(["road"] * 4, dtype=object)
    (v,) = find_violations(profile(clearance), np.zeros(4), clearance, required, category)
    assert v["station_m"] == 2 and v["deficit_m"] == pytest.approx(2.0)


def test_road_makes_status_violation_though_the_lowest_point_clears_ground():
    clearance = np.array([8.0, 9.0, 8.0])
    summary = summarise(profile(clearance), clearance, np.array([7.0, 10.0, 7.0]))
    assert summary["status"] == "violation"
    assert summary["required_m"] == 7.0 and summary["min_clearance_m"] == 8.0


def test_surface_violation_carries_the_surface_point():
    distance = np.array([np.inf, 4.0, 2.0, 2.5, np.inf])
    near = SurfaceProfile(distance, np.arange(5.0), np.full(5, 3.0), np.full(5, 15.0), np.zeros(5, bool))
    (v,) = find_surface_violations(profile(np.full(5, 20.0)), np.zeros(5), near, 3.0)
    assert (v["category"], v["station_m"], v["start_m"], v["end_m"]) == ("surface", 2, 2, 3)
    assert (v["clearance_m"], v["deficit_m"]) == (2.0, 1.0)
    assert (v["surface_x"], v["surface_y"], v["surface_z"]) == (2.0, 3.0, 15.0)
