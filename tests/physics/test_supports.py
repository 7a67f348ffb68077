"""Structure axes, weight and wind spans, line-angle load and insulator string swing."""
import math

import numpy as np
import pytest

from routesag.physics.supports import (insulator_swing_rad, line_tension_load_n, structure_axes,
                                       swing_displacement_m, weight_span_m, wind_span_m)

LBF_N, FT_M = 4.4482216, 0.3048
PSF_PA = LBF_N / FT_M**2


def turn_right(angle_deg, span_m=300.0):
    """Three structures: east, then turning right by ``angle_deg``."""
    heading = math.radians(-angle_deg)
    return (np.array([0.0, span_m, span_m + span_m * math.cos(heading)]),
            np.array([0.0, 0.0, span_m * math.sin(heading)]))


def distance_to_line(point, a, b):
    """Perpendicular distance from a point to the infinite line through a and b (plan)."""
    d = (b - a) / np.linalg.norm(b - a)
    v = point - a
    return abs(v[0] * d[1] - v[1] * d[0])


def test_offset_at_30_degree_angle_lies_on_the_bisector():
    x, y = turn_right(30.0)
    along, across, turn = structure_axes(x, y)
    assert math.degrees(turn[1]) == pytest.approx(30.0)
    p = [np.array([x[i], y[i]]) for i in range(3)]
    arm = p[1] + 4.5 * across[1]
    # A point on the bisector of the line angle is equally far from both span lines (elementary geometry),
    # and an arm of 4.5 m on the bisector sits 4.5 cos(15 deg) from each.
    assert distance_to_line(arm, p[0], p[1]) == pytest.approx(distance_to_line(arm, p[1], p[2]), abs=1e-9)
    assert distance_to_line(arm, p[0], p[1]) == pytest.approx(4.5 * math.cos(math.radians(15.0)), abs=1e-9)
    # Positive offsets go to the right: the inside of a right turn, i.e. south of the first span here.
    assert arm[1] < 0


def test_line_ends_are_perpendicular_to_their_span():
    x, y = turn_right(30.0)
    along, across, turn = structure_axes(x, y)
    np.testing.assert_allclose(across[0], [0.0, -1.0], atol=1e-12)  # first span heads east: right is south
    ahead_last = np.array([x[2] - x[1], y[2] - y[1]]) / 300.0
    assert across[2] @ ahead_last == pytest.approx(0.0, abs=1e-12)
    assert turn[0] == turn[2] == 0.0


def test_left_turn_is_negative():
    x, y = turn_right(-20.0)
    assert math.degrees(structure_axes(x, y)[2][1]) == pytest.approx(-20.0)


def test_weight_span_is_between_low_points_and_negative_when_they_cross():
    # Level 300 m spans: low points at midspan, weight span 300 m = wind span (symmetry).
    assert weight_span_m(300.0, 150.0, 150.0) == pytest.approx(300.0)
    assert wind_span_m(300.0, 300.0) == pytest.approx(300.0)
    # Wadhwa's inclined span (FIELD.md §7): low point 123.68 m beyond the lower support on both sides
    # of a low structure -> the low points cross: weight span -247.36 m.
    assert weight_span_m(250.0, 250.0 + 123.68, -123.68) == pytest.approx(-247.36)
    assert wind_span_m(0.0, 250.0) == pytest.approx(125.0)  # a line end has one span


def test_line_angle_load_is_2h_sin_half_angle_and_dead_end_takes_full_tension():
    x, y = turn_right(30.0)
    along, across, _ = structure_axes(x, y)
    dirs = np.array([[1.0, 0.0], [math.cos(math.radians(-30)), math.sin(math.radians(-30))]])
    h = 30e3
    longitudinal, transverse = line_tension_load_n(np.array([h]), dirs[:1], np.array([h]), dirs[1:],
                                                   along[1:2], across[1:2])
    # Standard statics (ASCE Manual 74, line-angle load 2 T sin(theta/2)).
    assert transverse[0] == pytest.approx(2 * h * math.sin(math.radians(15.0)), rel=1e-12)
    assert longitudinal[0] == pytest.approx(0.0, abs=1e-9)
    # A dead end: only the ahead span pulls, along the line.
    longitudinal, transverse = line_tension_load_n(np.array([0.0]), np.zeros((1, 2)), np.array([h]), dirs[:1],
                                                   along[:1], across[:1])
    assert longitudinal[0] == pytest.approx(h) and transverse[0] == pytest.approx(0.0, abs=1e-9)


def test_drake_string_swing_at_6_psf_equals_conductor_blowout():
    # FIELD.md §8: Drake at 6 psf swings 26.86 deg (pub/derived). Drake d = 28.14 mm, 1.094 lb/ft
    # (ASTM B232 via CPUC GO 95 Table 23, FIELD.md §5). With weight span = wind span and a weightless,
    # windless string, the string swing equals the conductor's blowout angle.
    wind_n_m = 6 * PSF_PA * 0.02814
    weight_n_m = 1.094 * LBF_N / FT_M
    span_m = 300.0
    psi = insulator_swing_rad(wind_n_m * span_m, weight_n_m * span_m)
    assert math.degrees(psi) == pytest.approx(26.86, abs=0.01)


def test_string_weight_and_wind_count_half():
    # psi = atan((F*wind span + P/2) / (w*weight span + W/2)), FIELD.md §8 (from memory).
    psi = insulator_swing_rad(1000.0, 3000.0, string_wind_n=200.0, string_weight_n=600.0)
    assert psi == pytest.approx(math.atan(1100.0 / 3300.0))


def test_string_in_uplift_has_no_swing_angle():
    # A string pulled up (net vertical load at the clamp <= 0) has no hanging equilibrium: no angle, whatever the
    # transverse load, not a horizontal string (statics: atan(P / V) needs V > 0).
    assert np.isnan(insulator_swing_rad(100.0, -500.0))
    assert np.isnan(insulator_swing_rad(-1.6e-7, -500.0))
    assert np.isnan(insulator_swing_rad(0.0, 0.0))
    # Half the string weight at the clamp can keep it hanging: V = -200 + 600/2 > 0 (FIELD.md §8 form, from memory).
    assert insulator_swing_rad(100.0, -200.0, string_weight_n=600.0) == pytest.approx(math.atan(100.0 / 100.0))


def test_rounding_noise_is_no_transverse_load():
    # -1.6e-7 N is what a straight line's line-angle load comes to in floating point; below the tolerance it is 0.
    assert insulator_swing_rad(-1.6e-7, 1e-3, tolerance_n=1e-5) == 0.0
    assert insulator_swing_rad(-1.6e-7, 1e-3) == pytest.approx(-1.6e-4)  # without it the noise would swing
    # A load above the tolerance is kept, and arrays are handled element by element.
    psi = insulator_swing_rad(np.array([2e-5, 1000.0, 5.0]), np.array([1.0, 1000.0, -1.0]), tolerance_n=1e-5)
    np.testing.assert_allclose(psi[:2], [math.atan(2e-5), math.pi / 4])
    assert np.isnan(psi[2])


def test_swing_displacement():
    sideways, up = swing_displacement_m(1.8, math.radians(30.0))
    assert sideways == pytest.approx(0.9)  # 1.8 sin 30
    assert up == pytest.approx(1.8 * (1 - math.sqrt(3) / 2))
