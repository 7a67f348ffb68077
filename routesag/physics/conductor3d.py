"""The conductor of one span in 3D, hanging in the plane swung out by the wind.

Under a transverse wind the resultant load per unit length ``w_r`` is tilted
from vertical by the blowout angle ``phi``; the wire hangs as a catenary
with ``c = H / w_r`` in the plane that contains the chord and the load
direction. Local axes: *along* (horizontal, A towards B), *across*
(horizontal, to the right of along) and *up*. With ``side`` = +1 the load
points ``u = (0, sin phi, -cos phi)``; the swung plane has::

    e2 = -u                                   "up" of the swung plane
    h' = chord . e2 = h cos phi               height of B in the swung plane
    e1 = (chord - h' e2) / S'                 in-plane, perpendicular to e2
    S' = |chord - h' e2| = sqrt(S^2 + h^2 sin^2 phi)

``(e1, e2)`` is orthonormal, so lengths and tensions in the swung plane are
the real ones, and ``H`` is the tension component along ``e1`` (the
horizontal tension when ``phi = 0``).

References
----------
.. [1] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (blowout: the conductor sags in
   the plane of the resultant load).
.. [2] Irvine, H.M., Cable Structures, MIT Press, 1981, ch. 1 (catenary).
"""

from dataclasses import dataclass

import numpy as np

from .catenary import arc_length, low_point_x, midspan_sag, support_tensions, vertical_reactions
from .stacked import StackedStations

__all__ = ["swung_span", "conductor_points", "conductor_stations", "conductor_stations_stacked", "span_geometry",
           "SpanGeometry"]

#: Stations evaluated together in :func:`conductor_points` (their temporaries then stay in the CPU cache).
_CHUNK = 32768


def swung_span(span_m, dz_m, blowout_rad):
    """Span and height difference measured in the swung plane.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    blowout_rad : float or array
        Blowout angle of the resultant load from vertical [rad].

    Returns
    -------
    (span_in_plane_m, dz_in_plane_m) : tuple of float or array
        ``S' = sqrt(S^2 + h^2 sin^2 phi)`` and ``h' = h cos phi`` [m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14 (sag in the plane of the resultant load);
       the projection is derived in the module docstring.
    """
    span = np.asarray(span_m, dtype=float)
    dz = np.asarray(dz_m, dtype=float)
    phi = np.asarray(blowout_rad, dtype=float)
    return np.hypot(span, dz * np.sin(phi)), dz * np.cos(phi)


def _swung_axes(start_xyz, end_xyz, blowout_rad, side):
    """World unit vectors ``e1``, ``e2`` of each span's swung plane (rows) and the span data, one entry per span."""
    chord = end_xyz - start_xyz
    span_m = np.hypot(chord[:, 0], chord[:, 1])
    flat = np.flatnonzero(span_m <= 0)
    if len(flat):
        k = flat[0]
        raise ValueError(f"span has no horizontal length: start {start_xyz[k].tolist()} and end "
                         f"{end_xyz[k].tolist()}")
    zero = np.zeros(len(span_m))
    along = np.column_stack([chord[:, 0], chord[:, 1], zero]) / span_m[:, None]
    right = np.column_stack([along[:, 1], -along[:, 0], zero])
    up = np.array([0.0, 0.0, 1.0])
    e2 = (-side * np.sin(blowout_rad))[:, None] * right + np.cos(blowout_rad)[:, None] * up
    dz_swung = np.einsum("ij,ij->i", chord, e2)
    in_plane = chord - dz_swung[:, None] * e2
    span_swung = np.linalg.norm(in_plane, axis=1)
    return in_plane / span_swung[:, None], e2, span_m, span_swung, dz_swung


def conductor_points(start_xyz, end_xyz, horizontal_tension_n, resultant_n_m, blowout_rad, stations_m, side=1.0,
                     wire=None, plan_only=False):
    """World coordinates of the wire at given stations along the span, or of many spans' wires at once.

    Parameters
    ----------
    start_xyz : array-like of 3 floats, or (K, 3)
        Attachment point at support A, projected CRS [m]; one row per wire
        when ``wire`` is given.
    end_xyz : array-like of 3 floats, or (K, 3)
        Attachment point at support B, projected CRS [m].
    horizontal_tension_n : float or array of K
        Tension component perpendicular to the load in the swung plane [N]
        (the horizontal tension when there is no wind).
    resultant_n_m : float or array of K
        Resultant load per unit length that sets the catenary [N/m].
    blowout_rad : float or array of K
        Blowout angle of the load from vertical [rad].
    stations_m : array-like
        Horizontal distances from A along the line A->B [m], normally 0..S.
    side : float or array of K, default +1
        +1 blows the wire to the right of A->B (seen from A), -1 to the left.
    wire : array-like of int, optional
        For K wires at once: the wire (row of the parameters) of each
        station, e.g. :attr:`routesag.physics.stacked.StackedStations.wire`.
    plan_only : bool, default False
        Return x, y only (the same values); the catenary is then evaluated
        only for wires blown out of their vertical plane.

    Returns
    -------
    numpy.ndarray, shape (N, 3), or (N, 2) with ``plan_only``
        x, y, z of the wire [m]. Stations 0 and S return the attachment
        points exactly. A point depends only on its station and its wire's
        parameters, whatever else is asked in the same call.

    Notes
    -----
    A station ``s`` maps to the in-plane parameter ``x' = s S'/S`` (the
    along-line part of ``e1`` is ``S/S'``); the point is
    ``A + x' e1 + z'(x') e2`` with ``z'`` the catenary in the swung frame,
    ``z' = 2c sinh((x' - 2 x'_m)/2c) sinh(x'/2c)`` as in
    :func:`routesag.physics.catenary.catenary_z` with its low point ``x'_m``
    found once per wire. Without blowout ``e2`` is vertical, so the plan
    position is ``A + x' e1`` exactly.

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14 (blowout); Irvine, Cable Structures, ch. 1.
    """
    start = np.atleast_2d(np.asarray(start_xyz, dtype=float))
    end = np.atleast_2d(np.asarray(end_xyz, dtype=float))
    stations = np.atleast_1d(np.asarray(stations_m, dtype=float))
    wire = np.zeros(len(stations), dtype=np.int64) if wire is None else np.asarray(wire, dtype=np.int64)
    n = len(start)
    phi = np.broadcast_to(np.asarray(blowout_rad, dtype=float), (n,))
    side = np.copysign(1.0, np.broadcast_to(np.asarray(side, dtype=float), (n,)))
    e1, e2, span_m, span_swung, dz_swung = _swung_axes(start, end, phi, side)
    catenary_m = np.broadcast_to(np.asarray(horizontal_tension_n, dtype=float) / np.asarray(resultant_n_m, dtype=float),
                                 (n,))
    two_c, two_low = 2.0 * catenary_m, 2.0 * low_point_x(span_swung, dz_swung, catenary_m)
    ratio, tolerance = span_swung / span_m, 1e-9 * np.maximum(span_m, 1.0)
    axes = 2 if plan_only else 3
    points = np.empty((len(stations), axes))
    for a in range(0, len(stations), _CHUNK):  # chunks keep the temporaries in cache
        s, k = stations[a:a + _CHUNK], wire[a:a + _CHUNK]
        per = _per_station(k)
        out = points[a:a + _CHUNK]
        x_swung = s * per(ratio)
        for axis in range(axes):  # one coordinate at a time: flat arrays are several times faster
            out[:, axis] = per(start[:, axis]) + x_swung * per(e1[:, axis])
        # e2 is vertical without blowout: its plan part only moves the blown-out wires
        blown = np.flatnonzero(per(phi != 0.0))
        if plan_only:
            x_blown, c2 = x_swung[blown], two_c[k[blown]]
            z_blown = c2 * np.sinh((x_blown - two_low[k[blown]]) / c2) * np.sinh(x_blown / c2)
        else:
            c2 = per(two_c)
            z_swung = c2 * np.sinh((x_swung - per(two_low)) / c2) * np.sinh(x_swung / c2)
            out[:, 2] += z_swung * per(e2[:, 2])
            z_blown = z_swung[blown]
        for axis in range(2):
            out[blown, axis] += z_blown * e2[:, axis][k[blown]]
        span_k, tolerance_k = per(span_m), per(tolerance)
        near = np.flatnonzero(np.minimum(np.abs(s), np.abs(s - span_k)) <= tolerance_k)
        at_start = near[np.abs(s[near]) <= tolerance_k[near]]
        at_end = near[np.abs(s[near] - span_k[near]) <= tolerance_k[near]]
        out[at_start] = start[k[at_start], :axes]
        out[at_end] = end[k[at_end], :axes]
    return points


def _per_station(wire):
    """A function spreading per-wire values onto the stations of ``wire`` (by np.repeat when they come wire by
    wire, several times faster than indexing)."""
    if len(wire) > 1 and np.all(wire[1:] >= wire[:-1]):
        runs = np.diff(np.searchsorted(wire, np.arange(wire[0], wire[-1] + 2)))
        return lambda values: np.repeat(values[wire[0]:wire[-1] + 1], runs)
    return lambda values: values[wire]


def conductor_stations(span_m, station_m, low_point_m=None):
    """Stations 0, d, 2d, ..., S along a span, plus the low point when inside it.

    Parameters
    ----------
    span_m : float
        Horizontal span [m].
    station_m : float
        Station interval [m], > 0.
    low_point_m : float, optional
        Low-point distance from A [m]; added when ``0 < low_point_m < S``.

    Returns
    -------
    numpy.ndarray
        Sorted unique stations [m], first 0, last S.
    """
    span_m = float(span_m)
    station_m = float(station_m)
    if not station_m > 0:
        raise ValueError(f"station interval must be positive, got {station_m!r} m")
    # Drop a regular station within a hair of S so S is not duplicated by rounding.
    count = int(np.ceil(span_m / station_m - 1e-9))
    stations = np.arange(count) * station_m
    extra = [span_m]
    if low_point_m is not None and 0.0 < low_point_m < span_m:
        extra.append(float(low_point_m))
    return np.unique(np.concatenate([stations, extra]))


def conductor_stations_stacked(span_m, station_m, low_point_m) -> StackedStations:
    """:func:`conductor_stations` of many spans at once, stacked.

    Parameters
    ----------
    span_m : array of K floats
        Horizontal spans [m].
    station_m : float
        Station interval [m], > 0.
    low_point_m : array of K floats
        Low-point distances from A [m]; each is added when inside its span.

    Returns
    -------
    StackedStations
        Wire ``k``'s stations equal ``conductor_stations(span_m[k], station_m, low_point_m[k])``.
    """
    span = np.asarray(span_m, dtype=float)
    low = np.asarray(low_point_m, dtype=float)
    station_m = float(station_m)
    if not station_m > 0:
        raise ValueError(f"station interval must be positive, got {station_m!r} m")
    count = np.ceil(span / station_m - 1e-9).astype(np.int64)
    starts = np.cumsum(count) - count
    regular = (np.arange(count.sum()) - np.repeat(starts, count)) * station_m
    wires = np.arange(len(span))
    inside = (0.0 < low) & (low < span)
    return StackedStations.gather(np.concatenate([regular, span, low[inside]]),
                                  np.concatenate([np.repeat(wires, count), wires, wires[inside]]), len(span))


@dataclass(frozen=True)
class SpanGeometry:
    """Key numbers of one span hanging in its swung plane.

    Attributes
    ----------
    catenary_m : float
        ``c = H / w_resultant`` [m].
    low_point_m : float
        Lowest point of the 3D wire in elevation, as horizontal distance from
        A along the line [m]; may lie outside 0..S (then the wire is lowest at
        a support). It is the catenary vertex when ``phi = 0`` or ``h = 0``.
    sag_m : float
        Vertical distance from the chord down to the 3D wire at the midspan
        station ``S/2``; equals ``swung_sag_m * cos(phi)`` [m].
    swung_sag_m : float
        Mid-span sag in the swung plane: distance from the chord to the wire
        along the load direction, at in-plane mid-point ``S'/2`` (the same
        point as station ``S/2``) [m].
    max_tension_n : float
        Larger of the two support tensions [N].
    arc_length_m : float
        Length of wire between the attachments [m].
    vertical_reaction_a_n, vertical_reaction_b_n : float
        Vertical (world z) force of each support on the wire, upward positive,
        negative = uplift [N]; they sum to the vertical part of the physical
        load times the arc length (no design constant K in it).
    """

    catenary_m: float
    low_point_m: float
    sag_m: float
    swung_sag_m: float
    max_tension_n: float
    arc_length_m: float
    vertical_reaction_a_n: float
    vertical_reaction_b_n: float


def span_geometry(span_m, dz_m, horizontal_tension_n, resultant_n_m, blowout_rad, physical_load_n_m=None):
    """Sag, low point, tensions, length and reactions of one span in its swung plane.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    horizontal_tension_n : float or array
        Tension component perpendicular to the load in the swung plane [N].
    resultant_n_m : float or array
        Resultant load per unit length that sets the catenary, including
        any design constant K [N/m].
    blowout_rad : float or array
        Blowout angle [rad].
    physical_load_n_m : float or array, optional
        Load per unit length the wire really puts on its supports:
        ``sqrt((w + w_ice)^2 + F^2)``, the resultant without K [N/m].
        Default ``resultant_n_m`` (no K).

    Returns
    -------
    SpanGeometry
        Fields are floats or arrays, following the inputs.

    Notes
    -----
    The midspan 3D point lies ``h/2 - D' cos(phi)`` above A, so the vertical
    sag is ``D' cos(phi)`` with ``D'`` the in-plane mid-span sag. The support
    force on the wire is ``-H e1 + V'_A e2`` at A and ``H e1 + V'_B e2`` at B;
    their world-z parts give the vertical reactions (``e1_z = h sin^2 phi / S'``).
    ``V'`` is the load on the arc from the vertex to the support; K (NESC
    Rule 250B) is added to the resultant to set the tension and sag, it is
    not a weight, so ``V'`` is taken with the physical load (scaled by
    ``physical / resultant``) while ``H`` keeps its design value.
    The elevation of the wire is ``x' e1_z + z'(x') cos(phi)``; it is lowest
    where ``sinh((x' - x'_m)/c) = -e1_z / cos(phi)``, which gives
    ``low_point_m``.

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14 (blowout, support tension);
       Irvine, Cable Structures, ch. 1.
    .. [2] NESC Rule 250B (the constant K added to the resultant load).
    """
    span = np.asarray(span_m, dtype=float)
    dz = np.asarray(dz_m, dtype=float)
    phi = np.asarray(blowout_rad, dtype=float)
    h_n = np.asarray(horizontal_tension_n, dtype=float)
    span_swung, dz_swung = swung_span(span, dz, phi)
    catenary_m = h_n / np.asarray(resultant_n_m, dtype=float)
    swung_sag = midspan_sag(span_swung, dz_swung, catenary_m)
    tension_a, tension_b = support_tensions(span_swung, dz_swung, h_n, resultant_n_m)
    reaction_a, reaction_b = vertical_reactions(span_swung, dz_swung, h_n, resultant_n_m)
    if physical_load_n_m is not None:
        carried = np.asarray(physical_load_n_m, dtype=float) / np.asarray(resultant_n_m, dtype=float)
        reaction_a, reaction_b = reaction_a * carried, reaction_b * carried
    e1_z = dz * np.sin(phi) ** 2 / span_swung
    return SpanGeometry(
        catenary_m=catenary_m[()],
        low_point_m=(_lowest_in_plane(span_swung, dz_swung, catenary_m, dz, phi) * span / span_swung)[()],
        sag_m=(swung_sag * np.cos(phi))[()],
        swung_sag_m=swung_sag[()],
        max_tension_n=np.maximum(tension_a, tension_b)[()],
        arc_length_m=arc_length(span_swung, dz_swung, catenary_m)[()],
        vertical_reaction_a_n=(reaction_a * np.cos(phi) - h_n * e1_z)[()],
        vertical_reaction_b_n=(reaction_b * np.cos(phi) + h_n * e1_z)[()],
    )


def _lowest_in_plane(span_swung, dz_swung, catenary_m, dz_m, blowout_rad):
    """In-plane parameter ``x'`` where the 3D wire is lowest in elevation [m]."""
    e1_z = dz_m * np.sin(blowout_rad) ** 2 / span_swung
    slope = -e1_z / np.cos(blowout_rad)
    return low_point_x(span_swung, dz_swung, catenary_m) + catenary_m * np.arcsinh(slope)
