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


def stacked():
    """A phase and, 6.8 m above it on the same plan line, an earth wire; 300 m level span, c 1800 and 1500 m."""
    return dict(x0_m=[0.0, 0.0], y0_m=[0.0, 0.0], z0_m=[100.0, 106.8], x1_m=[300.0, 300.0], y1_m=[0.0, 0.0],
                z1_m=[100.0, 106.8])


def test_stacked_wires_are_told_apart_by_height_even_with_a_wrong_prior():
    from routesag.physics.catenary import catenary_z
    from routesag.physics.wire_assignment import assign_points_by_height

    along = np.array([20.0, 150.0, 280.0, 20.0, 150.0, 280.0])
    # truth: the phase at c 1800 m, the earth wire at c 1500 m; the priors are 20 % off
    z = np.r_[100.0 + catenary_z(along[:3], 300.0, 0.0, 1800.0), 106.8 + catenary_z(along[3:], 300.0, 0.0, 1500.0)]
    chord, got_along, _ = assign_points_by_height(along, np.zeros(6), z, **stacked(), catenary_m=[1440.0, 1800.0],
                                                  search_m=1.5)
    np.testing.assert_array_equal(chord, [0, 0, 0, 1, 1, 1])
    np.testing.assert_allclose(got_along, along)
    # plan alone cannot tell them apart
    assert (assign_points(along, np.zeros(6), [0.0, 0.0], [0.0, 0.0], [300.0, 300.0], [0.0, 0.0], 1.5)[0]
            == AMBIGUOUS).all()


def test_a_point_half_way_between_stacked_wires_stays_ambiguous():
    from routesag.physics.catenary import catenary_z
    from routesag.physics.wire_assignment import assign_points_by_height

    mid = 100.0 + catenary_z(150.0, 300.0, 0.0, 1800.0) + 3.4
    chord, _, _ = assign_points_by_height([150.0, 150.0], [0.0, 5.0], [mid, mid], **stacked(),
                                          catenary_m=[1800.0, 1800.0], search_m=1.5)
    np.testing.assert_array_equal(chord, [AMBIGUOUS, UNMATCHED])
