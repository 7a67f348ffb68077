"""Stations at which the minimum of (wire z - bilinear terrain) along a wire is exact.

A raster's bilinear surface is, along a straight plan path, a different
quadratic in every cell of pixel centres it crosses: it has a kink wherever
the path crosses a row or a column of cell centres, and inside a cell its own
vertex whenever the path runs oblique to the grid (the ``u v`` term). Regular
stations, one per cell, miss both, so a ridge one cell wide can be cut by a
metre or more.

:func:`exact_minimum_stations` adds, to given stations,

1. every point where the wire's plan path crosses a row or a column of cell
   centres (integer grid coordinate ``u`` or ``v``, see below), found on the
   chord between two stations and corrected by one secant step on the real
   (possibly curved, under wind) path;
2. inside each piece between two such points, the vertex of the quadratic
   through the clearance at its two ends and its middle, when that quadratic
   opens upwards and the vertex lies inside the piece.

:func:`exact_minimum_stations_stacked` does the same for many wires held in
one array (a tension section's spans, wires and load cases) and gives each
wire the stations it would get alone, so the bound below holds for each.

On each piece the terrain is exactly quadratic along a straight path, so the
three-point quadratic differs from the clearance only by the wire's departure
from its local parabola, at most ``e = M3 d^3 / (72 sqrt 3)`` with
``M3 = max |z'''|`` and ``d`` the piece length (Lagrange remainder of
quadratic interpolation on three equally spaced nodes). The clearance at the
added vertex then exceeds the true minimum of the piece by at most ``2 e``.
For a catenary ``z''' = sinh(x/c) / c^2 <= tan(slope) / c^2``; with
``c >= 50 m``, slopes below 45 degrees and pieces up to a 2 m cell diagonal
(2.83 m), ``2 e < 0.1 mm``. Under wind the plan path bends by about
``d^2 / (8 c)`` over a piece; its quadratic part is caught by the same
three-point fit, and the remainder is of the order of
``|d_uv| (d^2 / 8c) d`` (the bilinear cross term times the bend times the
piece), below 1 mm for cell steps up to 10 m of height on 1 m cells. The
stated bound, :data:`BOUND_M`, is 1 mm; the tests check it against a dense
brute-force evaluation.

Grid coordinates: ``u = col - 0.5``, ``v = row - 0.5`` in continuous pixel
coordinates, so integer ``u`` / ``v`` are the columns / rows of cell
centres.

References
----------
.. [1] W.H. Press et al., Numerical Recipes, 3rd ed., Cambridge University
   Press, 2007, sec. 3.6 (bilinear interpolation: linear in each coordinate
   inside a cell, so quadratic along a straight line).
.. [2] K.E. Atkinson, An Introduction to Numerical Analysis, 2nd ed., Wiley,
   1989, sec. 3.2 (error of polynomial interpolation).
"""

import numpy as np


__all__ = ["BOUND_M", "grid_line_crossings", "quadratic_vertex_stations", "exact_minimum_stations",
           "exact_minimum_stations_stacked", "zero_crossing_bounds"]

#: Stated bound [m]: the reported minimum clearance exceeds the true minimum along the path by at most this.
BOUND_M = 1e-3


def grid_line_crossings(stations_m, u, v, joined=None):
    """Where the chords between consecutive stations cross integer ``u`` or ``v``.

    Parameters
    ----------
    stations_m : numpy.ndarray
        Increasing stations [m].
    u, v : numpy.ndarray
        Grid coordinates of the wire's plan position at each station [-].
    joined : numpy.ndarray of bool, optional
        One per chord (``len(stations_m) - 1``): False where two
        consecutive stations are no chord of one wire (where one wire ends
        and the next begins in a :class:`~routesag.physics.stacked.StackedStations`).

    Returns
    -------
    (stations_m, axis, level, slope) : tuple of numpy.ndarray
        Station of each crossing on the chord [m], which coordinate crosses
        (0 for ``u``, 1 for ``v``), the integer it crosses, and that
        coordinate's rate along the chord [1/m]. Non-finite coordinates give
        no crossing.
    """
    return _crossings(stations_m, u, v, joined)[:4]


def _crossings(stations_m, u, v, joined=None):
    """:func:`grid_line_crossings` and, fifth, the index of the chord (its first station) of each crossing."""
    s = np.asarray(stations_m, dtype=float)
    found = [_axis_crossings(s, np.asarray(coord, dtype=float), axis, joined) for axis, coord in enumerate((u, v))]
    return tuple(np.concatenate(parts) for parts in zip(*found))


def _axis_crossings(s, coord, axis, joined):
    a, b = coord[:-1], coord[1:]
    with np.errstate(invalid="ignore"):
        low, high = np.minimum(a, b), np.maximum(a, b)
        first = np.floor(low) + 1.0          # integers strictly above the lower end ...
        chord = np.isfinite(low + high) if joined is None else np.isfinite(low + high) & joined
        count = np.where(chord, np.ceil(high) - first, 0.0)  # ... and strictly below the upper
    count = np.maximum(count, 0).astype(np.int64)
    segment = np.repeat(np.arange(len(a)), count)
    offset = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
    level = first[segment] + offset
    length = s[segment + 1] - s[segment]
    slope = (b[segment] - a[segment]) / length
    station = s[segment] + (level - a[segment]) / slope
    return station, np.full(len(station), axis), level, slope, segment


def _onto_path(crossing_m, axis, level, slope, uv_at_crossing, first_m, last_m):
    """One secant step from the chord's crossing onto the real plan path (curved under wind), kept in the span."""
    residual = np.where(axis == 0, uv_at_crossing[0], uv_at_crossing[1]) - level
    return np.clip(crossing_m - np.nan_to_num(residual) / slope, first_m, last_m)


def quadratic_vertex_stations(start_m, end_m, g_start, g_mid, g_end):
    """Stations of the vertex of the quadratic through three equally spaced clearances, where it is a minimum.

    Parameters
    ----------
    start_m, end_m : numpy.ndarray
        Ends of each piece [m].
    g_start, g_mid, g_end : numpy.ndarray
        Clearance at the start, the middle and the end of each piece [m].

    Returns
    -------
    numpy.ndarray
        Vertex stations [m] of the pieces whose quadratic opens upwards with
        its vertex strictly inside the piece (NaN clearances give none).
    """
    vertex, _ = _vertices(*(np.asarray(a, dtype=float) for a in (start_m, end_m, g_start, g_mid, g_end)))
    return vertex


def _vertices(start_m, end_m, g_start, g_mid, g_end, among=None):
    """(vertex stations [m], piece indices) of the pieces whose vertex counts (see
    :func:`quadratic_vertex_stations`), only among the pieces where ``among`` is True when it is given."""
    with np.errstate(invalid="ignore", divide="ignore", under="ignore", over="ignore"):  # non-finite: no vertex
        # q(t) = g_start + slope t + curvature t^2 on t in [0, 1], through the three clearances
        curvature = 2.0 * (g_start - 2.0 * g_mid + g_end)
        slope = -3.0 * g_start + 4.0 * g_mid - g_end
        # With curvature > 0, t > 0 needs slope < 0: only those few pieces get a vertex computed.
        candidate = (curvature > 0) & (slope < 0)
        if among is not None:
            candidate &= among
        index = np.flatnonzero(candidate)
        t = -slope[index] / (2.0 * curvature[index])
    inside = (t > 0) & (t < 1)  # t can still underflow to 0, or be NaN from infinite clearances
    index, t = index[inside], t[inside]
    return start_m[index] + t * (end_m[index] - start_m[index]), index


def exact_minimum_stations(stations_m, grid_uv, clearance_m):
    """Stations, given ones included, at which the minimum clearance along the wire is exact to :data:`BOUND_M`.

    Parameters
    ----------
    stations_m : numpy.ndarray
        Increasing stations along the span, no further apart than a cell [m].
    grid_uv : callable
        ``grid_uv(stations) -> (u, v)``: grid coordinates of the wire's plan
        position at any stations (see the module docstring).
    clearance_m : callable
        ``clearance_m(stations) -> g``: wire elevation minus bilinear terrain
        at any stations [m] (NaN over nodata).

    Returns
    -------
    numpy.ndarray
        Sorted unique stations within the span [m]: the given ones, the grid
        line crossings and the vertices of the pieces between them.

    See Also
    --------
    exact_minimum_stations_stacked : the same for many wires in one array.
    """
    s = np.asarray(stations_m, dtype=float)
    crossing, axis, level, slope = grid_line_crossings(s, *grid_uv(s))
    if len(crossing):
        crossing = _onto_path(crossing, axis, level, slope, grid_uv(crossing), s[0], s[-1])
    pieces = np.unique(np.concatenate([s, crossing]))
    g = clearance_m(np.concatenate([pieces, (pieces[:-1] + pieces[1:]) / 2.0]))
    g_ends, g_mid = g[:len(pieces)], g[len(pieces):]
    vertex = quadratic_vertex_stations(pieces[:-1], pieces[1:], g_ends[:-1], g_mid, g_ends[1:])
    return np.unique(np.concatenate([pieces, vertex]))


def exact_minimum_stations_stacked(stations, grid_uv, clearance_m, with_source=False):
    """:func:`exact_minimum_stations` of many wires at once, on stacked stations.

    Parameters
    ----------
    stations : routesag.physics.stacked.StackedStations
        Each wire's increasing stations, no further apart than a cell [m].
    grid_uv : callable
        ``grid_uv(stations_m, wire) -> (u, v)``: grid coordinates of wire
        ``wire[i]``'s plan position at ``stations_m[i]``.
    clearance_m : callable
        ``clearance_m(stations_m, wire) -> g``: that wire's elevation minus
        the bilinear terrain there [m] (NaN over nodata). It is called once,
        for every wire's piece ends and middles (a wire's last end twice).
    with_source : bool, default False
        Also return, for each station, its place among the points given to
        ``clearance_m`` (-1 for a vertex, a station not asked there), so a
        caller can keep what it computed for them.

    Returns
    -------
    StackedStations, or (StackedStations, numpy.ndarray of int)
        Each wire's stations, equal to :func:`exact_minimum_stations` of
        that wire alone, and with ``with_source`` their places as above.

    Notes
    -----
    ``clearance_m`` is given points grouped by wire, in wire order (all of
    wire 0's, then wire 1's, ...), so a caller can read the terrain under
    neighbouring wires together; ``grid_uv`` needs no terrain and gets
    them in any order.
    """
    s, wire = stations.values, stations.wire
    crossing, axis, level, slope, chord = _crossings(s, *grid_uv(s, wire), wire[1:] == wire[:-1])
    crossing_wire = wire[chord]
    if len(crossing):
        crossing = _onto_path(crossing, axis, level, slope, grid_uv(crossing, crossing_wire),
                              s[stations.bounds[:-1][crossing_wire]], s[stations.bounds[1:][crossing_wire] - 1])
    pieces = stations.with_extra(crossing, crossing_wire)
    p, wire = pieces.values, pieces.wire
    joined = wire[1:] == wire[:-1]
    asked, asked_wire = _ends_and_middles(p, wire, joined)
    g = clearance_m(asked, asked_wire)
    g_ends = g[0::2]
    vertex, piece = _vertices(p[:-1], p[1:], g_ends[:-1], g[1::2], g_ends[1:], among=joined)
    result, source = pieces.with_extra(vertex, wire[piece], with_source=True)
    if not with_source:
        return result
    return result, np.where(source < len(p), 2 * source, -1)


def _ends_and_middles(p, wire, joined):
    """Each piece end followed by the middle of the piece it starts: ``asked[2 i]`` is ``p[i]``, ``asked[2 i + 1]``
    the middle of ``p[i]`` and ``p[i + 1]``, and their wires. Where one wire ends and the next begins, the middle
    is taken as the last end again (a station of that wire, whose piece counts for nothing)."""
    middles = (p[:-1] + p[1:]) / 2.0
    middles[~joined] = p[:-1][~joined]
    asked = np.empty(max(2 * len(p) - 1, 0))
    asked_wire = np.empty(len(asked), dtype=np.int64)
    asked[0::2], asked[1::2] = p, middles
    asked_wire[0::2], asked_wire[1::2] = wire, wire[:-1]
    return asked, asked_wire


def zero_crossing_bounds(s0_m, s1_m, f0, f1):
    """Earliest and latest place [m] where a quadratic piece with ``f(s0) = f0``, ``f(s1) = f1`` of opposite
    signs can cross zero.

    Between two adjacent stations of :func:`exact_minimum_stations` the
    clearance margin is one quadratic piece (to :data:`BOUND_M`) whose
    minimum, if it has one inside, is a station; so it is either concave or
    monotone convex there; it crosses zero once. With ``r = f0 / (f0 - f1)``
    and ``d = s1 - s0``: a monotone convex piece crosses between
    ``s0 + d (1 - sqrt(1 - r))`` (vertex at ``s1``) and ``s0 + d sqrt(r)``
    (vertex at ``s0``), with the chord's ``s0 + d r`` between them; a concave
    piece lies above its chord, so it crosses after the chord's zero when
    falling and before it when rising. So a falling piece never crosses
    before the first bound and a rising one never after the second: a
    violation stretch that starts at the first and ends at the second is
    never shorter than the true one.
    """
    s0, s1, f0, f1 = (np.asarray(a, dtype=float) for a in (s0_m, s1_m, f0, f1))
    ratio = np.clip(f0 / (f0 - f1), 0.0, 1.0)
    d = s1 - s0
    return s0 + d * (1.0 - np.sqrt(1.0 - ratio)), s0 + d * np.sqrt(ratio)
