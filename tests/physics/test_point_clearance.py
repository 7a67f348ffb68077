"""3D distance from wire stations to surveyed tree and building points."""
import numpy as np
import pytest

from routesag.physics.point_clearance import nearest_surface, surface_category


def sphere_points(centre, radius_m, n):
    """Fibonacci lattice on a sphere: a tree crown surveyed evenly."""
    i = np.arange(n) + 0.5
    polar = np.arccos(1.0 - 2.0 * i / n)
    azimuth = np.pi * (1.0 + 5.0 ** 0.5) * i
    unit = np.column_stack([np.cos(azimuth) * np.sin(polar), np.sin(azimuth) * np.sin(polar), np.cos(polar)])
    return np.asarray(centre) + radius_m * unit


def test_tree_crown_gives_the_analytic_3d_distance():
    centre, radius_m = np.array([50.0, 4.0, 20.0]), 3.0
    crown = sphere_points(centre, radius_m, 20_000)
    # a wire sagging through the crown's neighbourhood, stations every metre
    x = np.arange(0.0, 101.0)
    stations = np.column_stack([x, np.full(x.size, 0.5), 26.0 + 0.002 * (x - 50.0) ** 2])
    distance, index = nearest_surface(stations, crown)
    analytic = np.linalg.norm(stations - centre, axis=1) - radius_m   # distance to a sphere
    np.testing.assert_allclose(distance, analytic, atol=0.02)
    np.testing.assert_allclose(np.linalg.norm(crown[index] - stations, axis=1), distance)


def test_no_points_means_no_clearance_limit_found():
    distance, index = nearest_surface(np.zeros((3, 3)), np.empty((0, 3)))
    assert np.all(np.isinf(distance)) and np.all(index == -1)


def test_categories_follow_the_las_classes():
    # ASPRS LAS 1.4 R15, Table 17: 3-5 vegetation, 6 building
    assert list(surface_category([3, 4, 5, 6, 20])) == ["vegetation"] * 3 + ["building", "surface"]
