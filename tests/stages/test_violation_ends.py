"""Violation stretches end at the threshold crossings between stations, never inside the true stretch."""
import numpy as np
import pytest

from routesag.physics.bilinear import zero_crossing_bounds
from routesag.profiles import ConductorProfile
from routesag.stages.clearance import find_violations


def profile_with_clearance(stations_m, clearance_m):
    stations = np.asarray(stations_m, dtype=float)
    xyz = np.column_stack([stations, np.zeros_like(stations), np.asarray(clearance_m, dtype=float)])
    return ConductorProfile(span_id="P1-P2", section_id="S1", load_case="hot", stations_m=stations, xyz=xyz,
                            horizontal_tension_n=20e3, max_tension_n=20e3, sag_m=5.0, low_point_m=10.0,
                            catenary_m=1000.0, blowout_deg=0.0)


def test_convex_dip_ends_exactly_at_the_crossings_when_its_vertex_is_a_station():
    # margin (s - 10)^2 - 4 on stations that hold the vertex (as the exact-minimum stations do): truth 8 .. 12
    stations = np.array([0.0, 3.0, 6.0, 10.0, 14.0, 17.0, 20.0])
    required = 7.5
    clearance = (stations - 10.0) ** 2 - 4.0 + required
    profile = profile_with_clearance(stations, clearance)
    (violation,) = find_violations(profile, np.zeros_like(stations), clearance, required)
    assert violation["start_m"] == pytest.approx(8.0, abs=1e-12)
    assert violation["end_m"] == pytest.approx(12.0, abs=1e-12)
    assert violation["station_m"] == 10.0


def test_stretch_bounds_cover_every_quadratic_piece():
    # property: concave pieces and convex pieces with no vertex inside, random; the first bound never after a
    # falling crossing, the second never before a rising one
    rng = np.random.default_rng(9)
    checked = 0
    for _ in range(4000):
        a, b, c = rng.normal(size=3) * [1.0, 3.0, 2.0]
        s0, s1 = 0.0, rng.uniform(0.1, 3.0)
        f = lambda s: a * s * s + b * s + c
        vertex = -b / (2 * a)
        if a > 0 and s0 < vertex < s1:
            continue  # a convex vertex inside is a station, never inside a piece
        f0, f1 = f(s0), f(s1)
        if f0 * f1 >= 0:
            continue
        roots = np.roots([a, b, c]).real
        zero = roots[(roots >= s0 - 1e-12) & (roots <= s1 + 1e-12)]
        assert len(zero) == 1
        first, second = zero_crossing_bounds(s0, s1, f0, f1)
        if f0 > 0:
            assert first <= zero[0] + 1e-9
        else:
            assert second >= zero[0] - 1e-9
        checked += 1
    assert checked > 1000


def test_stretch_stays_at_its_station_next_to_unknown_or_another_category():
    stations = np.arange(6, dtype=float)
    clearance = np.array([9.0, np.nan, 5.0, 5.0, 9.0, 9.0])
    categories = np.array(["ground", "ground", "ground", "road", "road", "road"], dtype=object)
    required = np.array([7.5, 7.5, 7.5, 8.1, 8.1, 8.1])
    profile = profile_with_clearance(stations, clearance)
    found = find_violations(profile, np.zeros(6), clearance, required, categories)
    ground = next(v for v in found if v["category"] == "ground")
    road = next(v for v in found if v["category"] == "road")
    assert (ground["start_m"], ground["end_m"]) == (2.0, 2.0)   # unknown before, another category after
    assert road["start_m"] == 3.0                                # category change: at the station
    assert 3.0 < road["end_m"] < 4.0                             # a clear neighbour: at the crossing


@pytest.mark.parametrize("angle_deg", [0.0, 30.0, 77.0])
def test_ridge_violation_stretch_covers_the_brute_force_stretch(tmp_path, angle_deg):
    # issue 9's ridge (tests/stages/test_exact_minimum.py): the required value set 1 m above the true minimum,
    # so the true stretch is a few decimetres long on the ridge's flanks; the reported one must cover it
    import math

    from routesag.io.terrain import TerrainSampler
    from routesag.physics.conductor3d import conductor_points
    from routesag.stages.conductors import TerrainView, span_profile
    from tests.stages.test_exact_minimum import CRS, SPAN_M, brute_bilinear, case

    path, row, grid, truth = case(tmp_path, angle_deg, wind=False)
    required = truth + 1.0
    with TerrainSampler(path) as sampler:
        profile = span_profile(row, 1.0, TerrainView(sampler, CRS))
        ground = sampler.sample(profile.xyz[:, 0], profile.xyz[:, 1], crs=CRS)
    (violation,) = find_violations(profile, ground, profile.xyz[:, 2] - ground, required)
    start, end = np.array([row["x0"], row["y0"], row["z0"]]), np.array([row["x1"], row["y1"], row["z1"]])
    stations = np.linspace(0.0, SPAN_M, 300_001)   # 1 mm
    dense = conductor_points(start, end, row["horizontal_tension_n"], row["resultant_n_m"], 0.0, stations, side=1.0)
    below = stations[dense[:, 2] - brute_bilinear(grid, dense[:, 0], dense[:, 1]) < required]
    assert below.max() - below.min() > 0.1 and math.isfinite(violation["start_m"])
    # covers the truth (to the 1 mm of the brute force), and not by more than a station interval each side
    assert violation["start_m"] <= below.min() + 1e-3 and violation["end_m"] >= below.max() - 1e-3
    assert violation["start_m"] > below.min() - 1.0 and violation["end_m"] < below.max() + 1.0
