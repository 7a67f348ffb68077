"""The wire in 3D: swung plane, world points, stations, span summary."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from routesag.physics import catenary as cat
from routesag.physics import conductor3d as c3d

# Invented attachment points in a projected CRS (metres); the span runs north-east and climbs 18 m.
START = np.array([500120.0, 5600340.0, 131.5])
END = START + np.array([240.0, 180.0, 18.0])  # horizontal span 300 m
SPAN_M = 300.0
H_N = 22000.0
W_N_M = 18.0


def right_of(start, end):
    d = (end - start)[:2] / np.hypot(*(end - start)[:2])
    return np.array([d[1], -d[0], 0.0])


def test_swung_span_matches_vector_derivation():
    # Independent construction: u = (0, sin phi, -cos phi), e2 = -u, h' = chord.e2, S' = |chord - h' e2|.
    rng = np.random.default_rng(7)
    for span, dz, phi in zip(rng.uniform(50, 800, 20), rng.uniform(-100, 100, 20), rng.uniform(0, 1.4, 20)):
        chord = np.array([span, 0.0, dz])
        e2 = np.array([0.0, -np.sin(phi), np.cos(phi)])
        dz_prime = chord @ e2
        span_prime = np.linalg.norm(chord - dz_prime * e2)
        assert_allclose(c3d.swung_span(span, dz, phi), (span_prime, dz_prime), rtol=1e-12)


@pytest.mark.parametrize("phi", [0.0, 0.5])
@pytest.mark.parametrize("side", [1.0, -1.0])
def test_endpoints_are_the_attachments_exactly(phi, side):
    points = c3d.conductor_points(START, END, H_N, W_N_M, phi, [0.0, 100.0, SPAN_M], side=side)
    assert points.shape == (3, 3)
    assert np.array_equal(points[0], START)
    assert np.array_equal(points[-1], END)


def test_no_blowout_stays_in_vertical_plane_and_follows_catenary():
    stations = np.linspace(0.0, SPAN_M, 61)
    points = c3d.conductor_points(START, END, H_N, W_N_M, 0.0, stations)
    offsets = points - START
    assert_allclose(offsets[:, :2] @ right_of(START, END)[:2], 0.0, atol=1e-8)  # no sideways offset
    assert_allclose(np.hypot(offsets[:, 0], offsets[:, 1]), stations, atol=1e-8)
    assert_allclose(offsets[:, 2], cat.catenary_z(stations, SPAN_M, 18.0, H_N / W_N_M), atol=1e-8)


@pytest.mark.parametrize("phi_deg", [10.0, 26.86, 60.0])
def test_level_span_midspan_blowout_displacement(phi_deg):
    # FIELD.md §8 (Grigsby ch. 14): the wire sags D in the plane of the resultant load: sideways D sin(phi),
    # down D cos(phi), D = c (cosh(S/2c) - 1) with c = H / w_resultant.
    phi = np.radians(phi_deg)
    start = np.array([1000.0, 2000.0, 50.0])
    end = np.array([1000.0, 2400.0, 50.0])  # due north, level, 400 m
    c = H_N / W_N_M
    sag = c * (np.cosh(400.0 / (2 * c)) - 1.0)
    mid = c3d.conductor_points(start, end, H_N, W_N_M, phi, [200.0])[0]
    displacement = mid - np.array([1000.0, 2200.0, 50.0])
    assert_allclose(displacement, [sag * np.sin(phi), 0.0, -sag * np.cos(phi)], atol=1e-9)  # east = right of north


def test_side_minus_one_mirrors_across_vertical_plane():
    stations = np.linspace(0.0, SPAN_M, 31)
    right = c3d.conductor_points(START, END, H_N, W_N_M, 0.4, stations, side=1.0)
    left = c3d.conductor_points(START, END, H_N, W_N_M, 0.4, stations, side=-1.0)
    normal = right_of(START, END)
    across_right = (right - START) @ normal
    across_left = (left - START) @ normal
    assert np.all(across_right[1:-1] > 0)
    assert_allclose(across_left, -across_right, atol=1e-9)
    assert_allclose(left[:, 2], right[:, 2], atol=1e-9)


def test_arc_length_of_points_matches_span_geometry():
    stations = np.linspace(0.0, SPAN_M, 100001)
    points = c3d.conductor_points(START, END, H_N, W_N_M, 0.6, stations)
    length = np.linalg.norm(np.diff(points, axis=0), axis=1).sum()
    geometry = c3d.span_geometry(SPAN_M, 18.0, H_N, W_N_M, 0.6)
    assert_allclose(length, geometry.arc_length_m, rtol=1e-8)


@pytest.mark.parametrize("phi", [0.0, 0.35, 0.9])
def test_span_geometry_sag_and_low_point_from_points(phi):
    stations = np.linspace(0.0, SPAN_M, 300001)
    points = c3d.conductor_points(START, END, H_N, W_N_M, phi, stations)
    geometry = c3d.span_geometry(SPAN_M, 18.0, H_N, W_N_M, phi)
    mid = c3d.conductor_points(START, END, H_N, W_N_M, phi, [SPAN_M / 2])[0]
    assert_allclose(geometry.sag_m, (START[2] + END[2]) / 2 - mid[2], rtol=1e-10)
    assert_allclose(geometry.sag_m, geometry.swung_sag_m * np.cos(phi), rtol=1e-12)
    assert_allclose(geometry.low_point_m, stations[np.argmin(points[:, 2])], atol=2e-3)


def test_span_geometry_without_wind_is_the_plain_catenary():
    geometry = c3d.span_geometry(SPAN_M, 18.0, H_N, W_N_M, 0.0)
    c = H_N / W_N_M
    assert_allclose(geometry.catenary_m, c)
    assert_allclose(geometry.low_point_m, cat.low_point_x(SPAN_M, 18.0, c))
    assert_allclose(geometry.sag_m, cat.midspan_sag(SPAN_M, 18.0, c))
    assert_allclose(geometry.max_tension_n, max(cat.support_tensions(SPAN_M, 18.0, H_N, W_N_M)))
    assert_allclose((geometry.vertical_reaction_a_n, geometry.vertical_reaction_b_n),
                    cat.vertical_reactions(SPAN_M, 18.0, H_N, W_N_M))


def test_span_geometry_vertical_reactions_carry_vertical_load():
    phi = 0.5
    geometry = c3d.span_geometry(SPAN_M, 40.0, H_N, W_N_M, phi)
    vertical_load = W_N_M * np.cos(phi)  # wind carries no vertical force
    assert_allclose(geometry.vertical_reaction_a_n + geometry.vertical_reaction_b_n,
                    vertical_load * geometry.arc_length_m, rtol=1e-12)


def test_textbook_level_span_swung_sag():
    # FIELD.md §7 (published textbook example): resultant 2.717 kgf/m, 4000 kgf, span 275 m -> sag 6.42 m along the
    # resultant (parabola; the exact catenary is within 0.2 %). Blowout from 1.7745 kgf/m wind on 2.058 kgf/m.
    g = 9.80665
    phi = np.arctan2(1.7745, 2.058)
    geometry = c3d.span_geometry(275.0, 0.0, 4000.0 * g, 2.717 * g, phi)
    assert_allclose(geometry.swung_sag_m, 6.42, rtol=2e-3)
    assert_allclose(geometry.sag_m, 6.42 * np.cos(phi), rtol=2e-3)


def test_span_geometry_broadcasts():
    geometry = c3d.span_geometry(np.array([200.0, 300.0, 400.0]), 10.0, 20000.0, 16.0, 0.3)
    assert geometry.sag_m.shape == (3,)
    assert np.all(np.diff(geometry.sag_m) > 0)


def test_stations_regular_with_end_and_low_point():
    assert_allclose(c3d.conductor_stations(25.0, 10.0), [0.0, 10.0, 20.0, 25.0])
    assert_allclose(c3d.conductor_stations(25.0, 10.0, low_point_m=12.5), [0.0, 10.0, 12.5, 20.0, 25.0])
    assert_allclose(c3d.conductor_stations(25.0, 10.0, low_point_m=-3.0), [0.0, 10.0, 20.0, 25.0])
    assert_allclose(c3d.conductor_stations(25.0, 10.0, low_point_m=10.0), [0.0, 10.0, 20.0, 25.0])


def test_stations_do_not_duplicate_the_end():
    stations = c3d.conductor_stations(100.0 + 1e-12, 10.0)
    assert len(stations) == 11
    assert stations[-1] == 100.0 + 1e-12
    assert np.all(np.diff(stations) > 1.0)


def test_stations_reject_bad_interval():
    with pytest.raises(ValueError, match="station interval"):
        c3d.conductor_stations(100.0, 0.0)


def test_zero_length_span_rejected():
    with pytest.raises(ValueError, match="no horizontal length"):
        c3d.conductor_points(START, START + [0.0, 0.0, 5.0], H_N, W_N_M, 0.0, [0.0])
