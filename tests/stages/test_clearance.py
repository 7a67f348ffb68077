"""Clearance summary and violation stretches."""
import numpy as np
import pytest

from routesag.stages.clearance import find_violations, runs, station_lengths, summarise
from routesag.stages.conductors import ConductorProfile


def profile(z):
    stations = np.arange(len(z), dtype=float)
    xyz = np.c_[stations, np.zeros_like(stations), np.asarray(z, dtype=float)]
    return ConductorProfile("s1", "S1", "hot", stations, xyz, 1.0, 1.0, 0.0, 0.0, 1.0, 0.0)


def test_runs_finds_each_stretch():
    mask = np.array([0, 1, 1, 0, 0, 1, 0, 1], dtype=bool)
    assert runs(mask) == [(1, 2), (5, 5), (7, 7)]
    assert runs(np.zeros(3, bool)) == []


def test_station_lengths_sum_to_span():
    stations = np.array([0.0, 1.0, 2.0, 2.5, 3.0])
    lengths = station_lengths(stations)
    assert lengths.sum() == pytest.approx(3.0)
    assert lengths[0] == pytest.approx(0.5)


def test_one_violation_per_stretch_at_worst_station():
    ground = np.zeros(10)
    z = np.array([10, 9, 6, 5, 7, 10, 10, 6.5, 10, 10.0])
    found = find_violations(profile(z), ground, z - ground, 7.5)
    assert [v["station_m"] for v in found] == [3, 7]
    # ends at the outermost threshold crossing a quadratic piece allows (zero_crossing_bounds), written out:
    # margins 1.5 -> -1.5 (r = 1/2), -0.5 -> 2.5 (r = 1/6), 2.5 -> -1 (r = 5/7), -1 -> 2.5 (r = 2/7)
    expected = [(1 + 1 - np.sqrt(1 - 1 / 2), 4 + np.sqrt(1 / 6)), (6 + 1 - np.sqrt(1 - 5 / 7), 7 + np.sqrt(2 / 7))]
    np.testing.assert_allclose([(v["start_m"], v["end_m"]) for v in found], expected, atol=1e-12)
    # never inside the stations' stretch, never past the clear neighbours
    assert all(a - 1 <= v["start_m"] <= a and b <= v["end_m"] <= b + 1
               for v, (a, b) in zip(found, [(2, 4), (7, 7)]))
    assert found[0]["deficit_m"] == pytest.approx(2.5)


def test_nodata_is_unknown_never_clear():
    ground = np.array([0, 0, np.nan, np.nan, 0, 0.0])
    z = np.full(6, 20.0)
    summary = summarise(profile(z), z - ground, 7.5)
    assert summary["status"] == "unknown"
    assert summary["unknown_m"] == pytest.approx(2.0)
    assert find_violations(profile(z), ground, z - ground, 7.5) == []


def test_all_unknown_has_no_minimum():
    ground = np.full(4, np.nan)
    summary = summarise(profile(np.full(4, 20.0)), np.full(4, 20.0) - ground, 7.5)
    assert np.isnan(summary["min_clearance_m"]) and summary["status"] == "unknown"


def test_violation_beats_unknown():
    ground = np.array([0, np.nan, 15.0])
    z = np.full(3, 20.0)
    assert summarise(profile(z), z - ground, 7.5)["status"] == "violation"
