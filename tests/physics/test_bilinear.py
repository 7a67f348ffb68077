"""Property test: the minimum over exact_minimum_stations is never above the brute-force minimum by more than
the stated bound, on random rasters, spans and angles (pure numpy; the bilinear surface is written here)."""
import numpy as np
from hypothesis import given, settings, strategies as st

from routesag.physics.bilinear import (BOUND_M, exact_minimum_stations, exact_minimum_stations_stacked,
                                      grid_line_crossings, quadratic_vertex_stations)
from routesag.physics.stacked import StackedStations


def exact_minimum_stations_many(stations_m, grid_uv, clearance_m):
    """exact_minimum_stations_stacked behind a list-per-wire interface: the terrain asked once per step for all.

    Parameters
    ----------
    stations_m : list of numpy.ndarray
        Each wire's increasing stations [m].
    grid_uv : callable
        ``grid_uv(list of stations) -> list of (u, v)``, one pair per wire.
    clearance_m : callable
        ``clearance_m(list of stations) -> list of g`` [m], one array per wire.

    Returns
    -------
    list of numpy.ndarray
        Each wire's stations, as :func:`exact_minimum_stations` gives them.
    """
    n = len(stations_m)

    def per_wire(values, wire):
        bounds = np.searchsorted(wire, np.arange(n + 1))
        return [values[a:b] for a, b in zip(bounds[:-1], bounds[1:])]

    def stacked_uv(values, wire):  # asked in any order: sorted by wire for the lists, and back
        order = np.argsort(wire, kind="stable")
        uv = grid_uv(per_wire(values[order], wire[order]))
        u, v = np.empty(len(values)), np.empty(len(values))
        u[order], v[order] = np.concatenate([u for u, _ in uv]), np.concatenate([v for _, v in uv])
        return u, v

    def stacked_clearance(values, wire):
        return np.concatenate(clearance_m(per_wire(values, wire)))

    return exact_minimum_stations_stacked(StackedStations.of(stations_m), stacked_uv, stacked_clearance).split()


def bilinear(grid, u, v):
    n_rows, n_cols = grid.shape
    u, v = np.clip(u, 0, n_cols - 1), np.clip(v, 0, n_rows - 1)
    c0, r0 = np.minimum(np.floor(u).astype(int), n_cols - 2), np.minimum(np.floor(v).astype(int), n_rows - 2)
    fu, fv = u - c0, v - r0
    return ((grid[r0, c0] * (1 - fu) + grid[r0, c0 + 1] * fu) * (1 - fv)
            + (grid[r0 + 1, c0] * (1 - fu) + grid[r0 + 1, c0 + 1] * fu) * fv)


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), angle=st.floats(0.0, 2 * np.pi), span=st.floats(5.0, 40.0),
       catenary=st.floats(50.0, 3000.0), bend=st.floats(-0.01, 0.01))
def test_reported_minimum_within_bound_of_brute_force(seed, angle, span, catenary, bend):
    rng = np.random.default_rng(seed)
    grid = rng.uniform(0.0, 10.0, (60, 60))          # cell steps up to 10 m on 1 m cells
    start = np.array([10.0, 10.0]) + rng.uniform(0, 1, 2)
    direction = np.array([np.cos(angle), np.sin(angle)])
    normal = np.array([-direction[1], direction[0]])

    def plan(s):  # a straight path, or bent like a blown-out wire (a parabola in plan)
        offset = bend * s * (span - s) / span
        return start[:, None] + direction[:, None] * s + normal[:, None] * offset

    def wire_z(s):  # a catenary sagging into the terrain
        return 12.0 + catenary * (np.cosh((s - span / 2) / catenary) - np.cosh(span / 2 / catenary))

    def clearance(s):
        u, v = plan(np.asarray(s))
        return wire_z(np.asarray(s)) - bilinear(grid, u, v)

    stations = np.linspace(0.0, span, int(np.ceil(span)) + 1)
    found = exact_minimum_stations(stations, lambda s: tuple(plan(np.asarray(s))), clearance)
    dense = np.linspace(0.0, span, 200_001)
    brute = clearance(dense).min()
    slope_margin = 10.0 * 1.5 * (span / 200_000) / 2   # the brute force's own sampling error
    assert clearance(found).min() <= brute + BOUND_M
    assert clearance(found).min() >= brute - slope_margin


def test_crossings_of_a_diagonal_chord():
    # From (0.2, 0.3) to (2.2, 2.3) over 2 m: crosses u = 1, 2 and v = 1, 2, at stations found by hand.
    s, axis, level, _ = grid_line_crossings(np.array([0.0, 2.0]), np.array([0.2, 2.2]), np.array([0.3, 2.3]))
    order = np.argsort(s)
    np.testing.assert_allclose(s[order], [0.7, 0.8, 1.7, 1.8])
    assert list(axis[order]) == [1, 0, 1, 0] and list(level[order]) == [1, 1, 2, 2]


def test_many_wires_at_once_equal_one_at_a_time():
    # Three wires: oblique over a rough grid, one inside a single cell (no grid line crossed), and a short one.
    grid = np.random.default_rng(3).uniform(0.0, 10.0, (40, 40))
    starts = [np.array([5.3, 6.1]), np.array([20.2, 20.2]), np.array([30.6, 8.4])]
    directions = [np.array([0.8, 0.6]), np.array([1.0, 0.0]), np.array([0.0, 1.0])]
    spans = [25.0, 0.5, 3.0]

    def plan(k, s):
        return tuple(starts[k][:, None] + directions[k][:, None] * np.asarray(s))

    def clearance(k, s):
        s = np.asarray(s)
        return 15.0 + 0.01 * (s - spans[k] / 2) ** 2 - bilinear(grid, *plan(k, s))

    stations = [np.linspace(0.0, span, max(int(np.ceil(span)), 1) + 1) for span in spans]
    asked = []

    def many_uv(lists):
        asked.append(len(lists))
        return [plan(k, s) for k, s in enumerate(lists)]

    together = exact_minimum_stations_many(stations, many_uv,
                                           lambda lists: [clearance(k, s) for k, s in enumerate(lists)])
    alone = [exact_minimum_stations(s, lambda x, k=k: plan(k, x), lambda x, k=k: clearance(k, x))
             for k, s in enumerate(stations)]
    assert len(grid_line_crossings(stations[1], *plan(1, stations[1]))[0]) == 0  # the wire that crosses none
    for a, b in zip(together, alone, strict=True):
        np.testing.assert_array_equal(a, b)
    assert asked == [3, 3]  # all wires in each query, also those that cross no grid line


def test_vertex_stations_equal_the_formula_over_every_piece():
    """Computing vertices only for pieces that curve up and fall must keep exactly the pieces (and the bits) of
    the formula applied to every piece, NaN, infinite and underflowing clearances included."""
    rng = np.random.default_rng(7)
    start = np.cumsum(rng.uniform(0.1, 1.0, 5000))
    end = start + rng.uniform(0.1, 1.0, 5000)
    g = rng.normal(5.0, 0.05, (3, 5000))
    g[:, :5] = [[np.nan, np.inf, 1.0, 1e300, 5e-324], [1.0, 1.0, np.inf, -1e300, 0.0], [1.0, -np.inf, 1.0, 1e300,
                                                                                        0.0]]
    with np.errstate(all="ignore"):
        curvature = 2.0 * (g[0] - 2.0 * g[1] + g[2])
        t = -(-3.0 * g[0] + 4.0 * g[1] - g[2]) / (2.0 * curvature)
        keep = (curvature > 0) & (t > 0) & (t < 1)
        expected = (start + t * (end - start))[keep]
    got = quadratic_vertex_stations(start, end, *g)
    assert 0 < keep.sum() < len(keep)
    np.testing.assert_array_equal(got, expected)
