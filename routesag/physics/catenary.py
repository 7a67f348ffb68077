"""Exact catenary geometry of one span, and its parabolic approximation.

Frame: support A at (0, 0), support B at (S, h), x horizontal along the span,
z up. The wire carries a uniform load ``w`` per unit of its own length, so it
hangs as a catenary with constant ``c = H / w``.

Two dimensionless angles keep every formula compact and overflow-free:

- ``a = S / (2c)``, half the span in units of ``c``;
- ``b = asinh(h / (2c sinh a))``, the shift of the low point from midspan in
  units of ``c`` (zero on a level span).

With them: ``x_m = S/2 - c b``, ``h = 2c sinh(a) sinh(b)``,
``L = 2c sinh(a) cosh(b)``.

References
----------
.. [1] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (level-span catenary, parabola,
   inclined spans).
.. [2] Irvine, H.M., Cable Structures, MIT Press, 1981, ch. 1 (the inelastic
   catenary between supports at different heights).
"""

import numpy as np

__all__ = [
    "catenary_constant",
    "low_point_x",
    "catenary_z",
    "arc_length",
    "midspan_sag",
    "max_chord_sag",
    "support_tensions",
    "vertical_reactions",
    "mean_tension",
    "length_and_mean_tension",
    "parabolic_sag",
    "parabolic_low_point_x",
    "parabolic_arc_length",
]


def catenary_constant(horizontal_tension_n, weight_n_m):
    """Catenary constant ``c = H / w``.

    Parameters
    ----------
    horizontal_tension_n : float or array
        Horizontal tension component [N].
    weight_n_m : float or array
        Load per unit length of wire [N/m].

    Returns
    -------
    float or array
        Catenary constant [m].

    References
    ----------
    .. [1] Grigsby (ed.), Electric Power Generation, Transmission and
       Distribution, ch. 14 (Douglass & Thrash).
    """
    return np.asarray(horizontal_tension_n, dtype=float) / np.asarray(weight_n_m, dtype=float)


def _half_span_angle(span_m, catenary_m):
    """``a = S / 2c`` [-]."""
    return np.asarray(span_m, dtype=float) / (2.0 * np.asarray(catenary_m, dtype=float))


def _low_point_shift(span_m, dz_m, catenary_m):
    """``b = asinh(h / (2c sinh a))`` [-], the low-point shift from midspan over c.

    ``1 / sinh a`` is written as ``2 exp(-a) / (1 - exp(-2a))`` so that long,
    slack spans (large ``a``) cannot overflow.
    """
    c = np.asarray(catenary_m, dtype=float)
    return _low_point_shift_at(dz_m, c, _half_span_angle(span_m, c))


def _low_point_shift_at(dz_m, c, a):
    """:func:`_low_point_shift` from ``c`` and ``a = S / 2c`` already at hand [-]."""
    inv_sinh_a = 2.0 * np.exp(-a) / -np.expm1(-2.0 * a)
    return np.arcsinh(np.asarray(dz_m, dtype=float) / (2.0 * c) * inv_sinh_a)


def low_point_x(span_m, dz_m, catenary_m):
    """Horizontal distance from support A to the low point (vertex) of the catenary.

    ``x_m = S/2 - c asinh(h / (2c sinh(S/2c)))``. The result lies outside
    ``[0, S]`` when the lower support is pulled up (uplift).

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    catenary_m : float or array
        Catenary constant H/w [m].

    Returns
    -------
    float or array
        Distance of the low point from A, along the span [m]; may be < 0 or > S.

    References
    ----------
    .. [1] Irvine, Cable Structures, 1981, ch. 1.
    .. [2] Grigsby (ed.), ch. 14, "Inclined spans".
    """
    shift = _low_point_shift(span_m, dz_m, catenary_m)
    return np.asarray(span_m, dtype=float) / 2.0 - np.asarray(catenary_m, dtype=float) * shift


def catenary_z(x_m, span_m, dz_m, catenary_m):
    """Elevation of the wire above support A at horizontal distance ``x_m`` from A.

    ``z(x) = c (cosh((x - x_m)/c) - cosh(x_m/c))``, evaluated as the equivalent
    product ``2c sinh((x - 2 x_m)/2c) sinh(x/2c)``, which avoids the
    cancellation of two large cosh terms.

    Parameters
    ----------
    x_m : float or array
        Horizontal distance from A [m]; any value, not only 0..S.
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    catenary_m : float or array
        Catenary constant H/w [m].

    Returns
    -------
    float or array
        Elevation relative to A [m] (negative below A).

    References
    ----------
    .. [1] Irvine, Cable Structures, 1981, ch. 1.
    """
    x = np.asarray(x_m, dtype=float)
    c = np.asarray(catenary_m, dtype=float)
    x_low = low_point_x(span_m, dz_m, c)
    return 2.0 * c * np.sinh((x - 2.0 * x_low) / (2.0 * c)) * np.sinh(x / (2.0 * c))


def arc_length(span_m, dz_m, catenary_m):
    """Length of wire between the supports, ``sqrt(h^2 + (2c sinh(S/2c))^2)``.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    catenary_m : float or array
        Catenary constant H/w [m].

    Returns
    -------
    float or array
        Arc length [m].

    References
    ----------
    .. [1] Irvine, Cable Structures, 1981, ch. 1.
    .. [2] Grigsby (ed.), ch. 14 (level span ``L = 2c sinh(S/2c)``).
    """
    c = np.asarray(catenary_m, dtype=float)
    a = _half_span_angle(span_m, c)
    return np.hypot(np.asarray(dz_m, dtype=float), 2.0 * c * np.sinh(a))


def midspan_sag(span_m, dz_m, catenary_m):
    """Vertical distance from the chord down to the wire at ``x = S/2``.

    Exact closed form: ``c (cosh a - 1) cosh b`` (the level-span sag scaled by
    ``L / L_level``), with ``cosh a - 1`` written as ``2 sinh^2(a/2)``.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    catenary_m : float or array
        Catenary constant H/w [m].

    Returns
    -------
    float or array
        Mid-span sag, positive downward [m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14: level-span sag ``D = c (cosh(S/2c) - 1)``;
       inclined form derived from the catenary of [2].
    .. [2] Irvine, Cable Structures, 1981, ch. 1.
    """
    c = np.asarray(catenary_m, dtype=float)
    a = _half_span_angle(span_m, c)
    b = _low_point_shift(span_m, dz_m, c)
    return 2.0 * c * np.sinh(a / 2.0) ** 2 * np.cosh(b)


def max_chord_sag(span_m, dz_m, catenary_m):
    """Largest vertical distance from the chord down to the wire.

    It occurs where the wire slope equals the chord slope ``h/S``, i.e. at
    ``x* = x_m + c asinh(h/S)``; on a level span it equals :func:`midspan_sag`.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    catenary_m : float or array
        Catenary constant H/w [m].

    Returns
    -------
    float or array
        Maximum chord-to-wire vertical distance, positive downward [m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, "Inclined spans".
    """
    span = np.asarray(span_m, dtype=float)
    dz = np.asarray(dz_m, dtype=float)
    c = np.asarray(catenary_m, dtype=float)
    x_star = low_point_x(span, dz, c) + c * np.arcsinh(dz / span)
    return dz / span * x_star - catenary_z(x_star, span, dz, c)


def support_tensions(span_m, dz_m, horizontal_tension_n, weight_n_m):
    """Total wire tension at each support, ``T = H cosh(slope angle)``.

    ``T_A = H cosh(x_m/c)``, ``T_B = H cosh((S - x_m)/c)``.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    horizontal_tension_n : float or array
        Horizontal tension [N].
    weight_n_m : float or array
        Load per unit length of wire [N/m].

    Returns
    -------
    (T_A, T_B) : tuple of float or array
        Tension at support A and at support B [N].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14: ``T = H + w D`` at a support.
    """
    h_n = np.asarray(horizontal_tension_n, dtype=float)
    c = catenary_constant(h_n, weight_n_m)
    x_low = low_point_x(span_m, dz_m, c)
    span = np.asarray(span_m, dtype=float)
    return h_n * np.cosh(x_low / c), h_n * np.cosh((span - x_low) / c)


def vertical_reactions(span_m, dz_m, horizontal_tension_n, weight_n_m):
    """Vertical force each support exerts on the wire (upward positive).

    ``V_A = H sinh(x_m/c)``, ``V_B = H sinh((S - x_m)/c)``; ``V_A + V_B = w L``.
    A negative value is uplift: the wire pulls that support up.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    horizontal_tension_n : float or array
        Horizontal tension [N].
    weight_n_m : float or array
        Load per unit length of wire [N/m].

    Returns
    -------
    (V_A, V_B) : tuple of float or array
        Vertical reactions at A and B [N].

    References
    ----------
    .. [1] Wadhwa, C.L., Electrical Power Systems, ch. 15 (supports at
       different levels, uplift); catenary form from Irvine, Cable
       Structures, ch. 1.
    """
    h_n = np.asarray(horizontal_tension_n, dtype=float)
    c = catenary_constant(h_n, weight_n_m)
    x_low = low_point_x(span_m, dz_m, c)
    span = np.asarray(span_m, dtype=float)
    return h_n * np.sinh(x_low / c), h_n * np.sinh((span - x_low) / c)


def mean_tension(span_m, dz_m, horizontal_tension_n, weight_n_m):
    """Arc-length-weighted mean tension along the wire, ``(1/L) * integral T ds``.

    With ``T = H cosh u`` and ``ds = c cosh u du`` the integral is closed:
    ``T_mean = H (2a + cosh(2b) sinh(2a)) / (4 sinh(a) cosh(b))``, written here
    as ``H (a / sinh a + cosh(2b) cosh a) / (2 cosh b)`` to avoid overflow.
    On a level span it tends to ``(H + T_support) / 2`` for small sag.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    horizontal_tension_n : float or array
        Horizontal tension [N].
    weight_n_m : float or array
        Load per unit length of wire [N/m].

    Returns
    -------
    float or array
        Mean tension [N].

    References
    ----------
    .. [1] Irvine, Cable Structures, 1981, ch. 1 (elastic catenary: the
       stretch is the integral of T/EA along the wire).
    """
    h_n = np.asarray(horizontal_tension_n, dtype=float)
    c = catenary_constant(h_n, weight_n_m)
    a = _half_span_angle(span_m, c)
    return _mean_tension_at(h_n, a, np.sinh(a), _low_point_shift(span_m, dz_m, c))


def _mean_tension_at(h_n, a, sinh_a, b):
    """:func:`mean_tension` from ``H``, ``a``, ``sinh a`` and ``b`` [N]."""
    a_over_sinh_a = np.where(a > 0, a / np.where(a > 0, sinh_a, 1.0), 1.0)
    return h_n * (a_over_sinh_a + np.cosh(2.0 * b) * np.cosh(a)) / (2.0 * np.cosh(b))


def length_and_mean_tension(span_m, dz_m, horizontal_tension_n, weight_n_m):
    """``(arc_length, mean_tension)`` of the same spans and state, sharing ``c``, ``a`` and ``sinh a``.

    The same numbers as the two functions called apart, at about half the cost: a change of state
    evaluates both many times per solve.
    """
    h_n = np.asarray(horizontal_tension_n, dtype=float)
    c = catenary_constant(h_n, weight_n_m)
    a = _half_span_angle(span_m, c)
    sinh_a = np.sinh(a)
    length = np.hypot(np.asarray(dz_m, dtype=float), 2.0 * c * sinh_a)
    return length, _mean_tension_at(h_n, a, sinh_a, _low_point_shift_at(dz_m, c, a))


def parabolic_sag(span_m, horizontal_tension_n, weight_n_m):
    """Parabolic mid-span sag ``w S^2 / (8 H)``.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    horizontal_tension_n : float or array
        Horizontal tension [N].
    weight_n_m : float or array
        Load per unit length [N/m].

    Returns
    -------
    float or array
        Sag [m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, parabolic approximation.
    """
    span = np.asarray(span_m, dtype=float)
    return np.asarray(weight_n_m, dtype=float) * span**2 / (8.0 * np.asarray(horizontal_tension_n, dtype=float))


def parabolic_low_point_x(span_m, dz_m, horizontal_tension_n, weight_n_m):
    """Parabolic distance of the low point from support A, ``S/2 - H h / (w S)``.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    dz_m : float or array
        Height of support B above support A [m].
    horizontal_tension_n : float or array
        Horizontal tension [N].
    weight_n_m : float or array
        Load per unit length [N/m].

    Returns
    -------
    float or array
        Low-point distance from A [m]; negative when it lies beyond A.

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14; Wadhwa, Electrical Power Systems, ch. 15.
    """
    span = np.asarray(span_m, dtype=float)
    return span / 2.0 - np.asarray(horizontal_tension_n, dtype=float) * np.asarray(dz_m, dtype=float) / (
        np.asarray(weight_n_m, dtype=float) * span)


def parabolic_arc_length(span_m, horizontal_tension_n, weight_n_m):
    """Parabolic arc length of a level span, ``S + w^2 S^3 / (24 H^2)``.

    Parameters
    ----------
    span_m : float or array
        Horizontal span [m].
    horizontal_tension_n : float or array
        Horizontal tension [N].
    weight_n_m : float or array
        Load per unit length [N/m].

    Returns
    -------
    float or array
        Arc length [m].

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, parabolic approximation.
    """
    span = np.asarray(span_m, dtype=float)
    ratio = np.asarray(weight_n_m, dtype=float) / np.asarray(horizontal_tension_n, dtype=float)
    return span + ratio**2 * span**3 / 24.0
