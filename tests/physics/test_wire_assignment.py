"""Assignment of wire points to span and wire by plan geometry."""
import numpy as np
import pytest

from routesag.physics.wire_assignment import AMBIGUOUS, UNMATCHED, assign_points

# two parallel wires 4 m apart on a 200 m span along +x, then the next span turning north
X0, Y0 = np.array([0.0, 0.0, 200.0]), np.array([0.0, -4.0, 0.0])
X1, Y1 = np.array([200.0, 200.0, 200.0]), np.array([0.0, -4.0, 150.0])


def test_points_go_to_the_nearest_chord_within_reach():
    chord, along, offset = assign_points([50.0, 120.0, 200.5], [0.3, -3.6, 60.0], X0, Y0, X1, Y1, 1.5)
    np.testing.assert_array_equal(chord, [0, 1, 2])
    np.testing.assert_allclose(along, [50.0, 120.0, 60.0])
    # + to the right looking along the chord: y = +0.3 on an eastward chord is to the left
    np.testing.assert_allclose(offset, [-0.3, -0.4, 0.5])


def test_points_near_structures_or_far_from_wires_are_unmatched():
    chord, _, _ = assign_points([3.0, 198.0, 100.0], [0.0, 0.0, -2.0], X0, Y0, X1, Y1, 1.5, gap_m=5.0)
    np.testing.assert_array_equal(chord, [UNMATCHED] * 3)


def test_a_point_within_reach_of_two_wires_is_ambiguous():
    chord, along, _ = assign_points([100.0], [-2.0], X0, Y0, X1, Y1, 2.5)
    assert chord[0] == AMBIGUOUS and np.isnan(along[0])


@pytest.mark.parametrize("search_m, expected", [(1.0, UNMATCHED), (2.0, 0)])
def test_search_distance_per_chord(search_m, expected):
    chord, _, _ = assign_points([100.0], [1.5], X0, Y0, X1, Y1, np.array([search_m, 1.0, 1.0]))
    assert chord[0] == expected
