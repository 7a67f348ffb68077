"""What the wires do at a structure: cross-arm axes, insulator swing, spans and loads.

Plan geometry at one structure: *along* is the unit bisector of the back and
ahead span directions (the single span's direction at a line end), *across*
is *along* turned 90 degrees clockwise, i.e. to the right looking along
increasing seq. Cross-arm offsets lie along *across*, so at an angle
structure every wire sits on the bisector of the line angle.

Sign conventions of the loads a wire puts on a structure: vertical
positive downward (a negative value is uplift), transverse positive to the
right, longitudinal positive along increasing seq.

References
----------
.. [1] ASCE Manual of Practice No. 74, Guidelines for Electrical
   Transmission Line Structural Loading, 3rd ed., 2010 (wind span, weight
   span, line-angle load on a structure).
.. [2] Kiessling, F., Nefzger, P., Nolasco, J.F. and Kaintzyk, U., Overhead
   Power Lines: Planning, Design, Construction, Springer, 2003 (insulator
   set swing under wind; weight and wind spans).
"""

import numpy as np

__all__ = [
    "structure_axes",
    "weight_span_m",
    "wind_span_m",
    "line_tension_load_n",
    "insulator_swing_rad",
    "swing_displacement_m",
]


def _unit(vectors):
    norm = np.hypot(vectors[:, 0], vectors[:, 1])
    return vectors / np.where(norm > 0, norm, 1.0)[:, None], norm


def structure_axes(x_m, y_m):
    """Along and across unit vectors and the line deviation at each structure of one line.

    Parameters
    ----------
    x_m, y_m : array-like, shape (n,)
        Plan coordinates of the structures in line order, projected CRS [m];
        n >= 2, consecutive structures apart.

    Returns
    -------
    along : numpy.ndarray, shape (n, 2)
        Unit bisector of the back and ahead span directions [-].
    across : numpy.ndarray, shape (n, 2)
        *along* turned clockwise: the direction of a positive offset [-].
    deviation_rad : numpy.ndarray, shape (n,)
        Line angle: turn from the back to the ahead direction, positive to
        the right (clockwise), 0 at the line ends [rad].

    Notes
    -----
    A line that doubles back on itself has no bisector; there *along* falls
    back to the ahead (or back) span direction.

    References
    ----------
    .. [1] ASCE Manual 74 (line angle and the bisector of a structure).
    """
    x = np.asarray(x_m, dtype=float)
    y = np.asarray(y_m, dtype=float)
    spans, _ = _unit(np.column_stack([np.diff(x), np.diff(y)]))
    zero = np.zeros((1, 2))
    back = np.vstack([zero, spans])
    ahead = np.vstack([spans, zero])
    along, norm = _unit(back + ahead)
    fallback = np.where((np.hypot(ahead[:, 0], ahead[:, 1]) > 0)[:, None], ahead, back)
    along = np.where((norm > 1e-9)[:, None], along, fallback)
    across = np.column_stack([along[:, 1], -along[:, 0]])
    # Clockwise turn from back to ahead: cross product sign flipped (z of back x ahead is + for a left turn).
    turn = np.arctan2(back[:, 1] * ahead[:, 0] - back[:, 0] * ahead[:, 1],
                      back[:, 0] * ahead[:, 0] + back[:, 1] * ahead[:, 1])
    return along, across, turn


def weight_span_m(back_span_m, back_low_point_m, ahead_low_point_m):
    """Horizontal distance between the low points of the two spans at a structure.

    Parameters
    ----------
    back_span_m : float or array
        Horizontal length of the back span; 0 when there is none [m].
    back_low_point_m : float or array
        Low point of the back span, horizontal distance from its own
        from-support (may lie outside the span); 0 when there is none [m].
    ahead_low_point_m : float or array
        Low point of the ahead span, horizontal distance from this
        structure (may be negative); 0 when there is none [m].

    Returns
    -------
    float or array
        Weight span [m]: ``(S_back - x_back) + x_ahead``; negative when the
        low points cross, i.e. the wire pulls the structure up.

    References
    ----------
    .. [1] ASCE Manual 74; Kiessling et al. (2003) (weight span).
    """
    return (np.asarray(back_span_m, dtype=float) - np.asarray(back_low_point_m, dtype=float)
            + np.asarray(ahead_low_point_m, dtype=float))


def wind_span_m(back_span_m, ahead_span_m):
    """Half the sum of the two adjacent horizontal spans (0 for a missing span).

    Parameters
    ----------
    back_span_m, ahead_span_m : float or array
        Horizontal spans on either side of the structure [m].

    Returns
    -------
    float or array
        Wind span [m].

    References
    ----------
    .. [1] ASCE Manual 74; Kiessling et al. (2003) (wind span).
    """
    return (np.asarray(back_span_m, dtype=float) + np.asarray(ahead_span_m, dtype=float)) / 2.0


def line_tension_load_n(back_tension_n, back_dir, ahead_tension_n, ahead_dir, along, across):
    """Longitudinal and transverse load on a structure from the wire's horizontal tensions.

    The ahead span pulls the structure along its direction, the back span
    along the reverse of its own: ``F = H_a u_a - H_b u_b``. With equal
    tensions and a line angle theta, the transverse part is the classic
    ``2 H sin(theta/2)`` towards the inside of the angle and the
    longitudinal part is 0; at a dead end the longitudinal part is the
    full tension.

    Parameters
    ----------
    back_tension_n, ahead_tension_n : array, shape (n,)
        Horizontal tensions of the back and ahead spans; 0 for a missing span [N].
    back_dir, ahead_dir : array, shape (n, 2)
        Plan unit directions of the back and ahead spans (from-support to
        to-support) [-].
    along, across : array, shape (n, 2)
        The structure's axes (see :func:`structure_axes`) [-].

    Returns
    -------
    (longitudinal_n, transverse_n) : tuple of numpy.ndarray
        Along increasing seq, and to the right [N].

    References
    ----------
    .. [1] ASCE Manual 74 (line-angle load ``2 T sin(theta/2)``).
    """
    ahead_n, back_n = np.asarray(ahead_tension_n, dtype=float), np.asarray(back_tension_n, dtype=float)
    force = ahead_n[:, None] * np.asarray(ahead_dir, dtype=float) - back_n[:, None] * np.asarray(back_dir, dtype=float)
    # Equal tensions on both sides of a bisector axis cancel along it exactly; the sum leaves rounding (1e-12 N).
    balanced = (ahead_n == back_n) & (ahead_n > 0)
    return np.where(balanced, 0.0, (force * along).sum(axis=1)), (force * across).sum(axis=1)


def insulator_swing_rad(transverse_n, vertical_n, string_wind_n=0.0, string_weight_n=0.0, tolerance_n=0.0):
    """Swing angle of a suspension insulator string from vertical.

    ``psi = atan((P_wire + P_ins/2) / (V_wire + W_ins/2))``: the string's
    lower end is held by the wire's transverse and vertical loads, and half
    of the string's own wind load and weight act there. With ``P_wire =
    F x wind span`` and ``V_wire = w x weight span`` this is the usual form;
    a line-angle load belongs in ``P_wire`` too.

    Parameters
    ----------
    transverse_n : float or array
        Transverse load of the wire on the string, signed (positive to the
        right) [N].
    vertical_n : float or array
        Downward load of the wire on the string [N].
    string_wind_n : float or array, default 0
        Wind load on the whole string, signed like ``transverse_n`` [N].
    string_weight_n : float or array, default 0
        Weight of the whole string [N].
    tolerance_n : float or array, default 0
        A net transverse load no larger than this in magnitude counts as
        none: rounding in the line-angle load of a straight line (a few
        1e-7 N on tensions of 1e4 N) must not swing the string [N].

    Returns
    -------
    float or array
        Swing angle, positive to the right, within (-pi/2, pi/2) [rad]. NaN
        where the net vertical load at the clamp is zero or points up: the
        string is in uplift, has no hanging equilibrium, and this model does
        not say where it goes (callers keep the clamp plumb and flag it).

    References
    ----------
    .. [1] Kiessling et al. (2003), insulator set swing under wind (the
       form above is recalled, not checked against the print).
    """
    horizontal = np.asarray(transverse_n, dtype=float) + np.asarray(string_wind_n, dtype=float) / 2.0
    vertical = np.asarray(vertical_n, dtype=float) + np.asarray(string_weight_n, dtype=float) / 2.0
    horizontal = np.where(np.abs(horizontal) <= np.asarray(tolerance_n, dtype=float), 0.0, horizontal)
    hanging = vertical > 0.0
    swing = np.where(hanging, np.arctan2(horizontal, np.where(hanging, vertical, 1.0)), np.nan)
    return swing[()]


def swing_displacement_m(string_m, swing_rad):
    """Movement of the string's lower end when it swings by ``psi``.

    Parameters
    ----------
    string_m : float or array
        String length, top to the wire clamp [m].
    swing_rad : float or array
        Swing angle from vertical [rad].

    Returns
    -------
    (sideways_m, up_m) : tuple of float or array
        ``l sin(psi)`` towards the swing side and ``l (1 - cos(psi))`` up [m].

    References
    ----------
    .. [1] Kiessling et al. (2003) (geometry of a swung insulator set).
    """
    length = np.asarray(string_m, dtype=float)
    psi = np.asarray(swing_rad, dtype=float)
    return (length * np.sin(psi))[()], (length * (1.0 - np.cos(psi)))[()]
