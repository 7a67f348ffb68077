"""Change of state of a whole tension section, each span an exact inclined catenary.

With free-swinging suspension strings every span of a section carries the
same horizontal tension ``H``; the strings let wire slide between spans, so
what is conserved between two states is the section's total unstressed
length::

    sum_i L_i(H) / (1 + T_mean,i(H) / EA)  /  (1 + alpha (t - t_ref))   is the same in both states,

with ``L_i`` the exact inclined-catenary arc length and ``T_mean,i`` its
arc-length mean tension (the elastic stretch of each span from its own mean
tension). A level section of equal spans reduces to the ruling-span
equation; a steep span, whose wire is longer and more tensioned than the
level ruling span assumes, no longer does.

References
----------
.. [1] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (ruling span and its limits on
   inclined spans; unstressed length kept between states).
.. [2] Irvine, H.M., Cable Structures, MIT Press, 1981, ch. 1 (elastic
   catenary between supports at different heights).
"""

import math

import numpy as np
from scipy.optimize import brentq

from routesag.errors import SolveError

from .catenary import length_and_mean_tension
from .roots import bracketed_roots, remembered, tension_root, widen_bracket, widen_brackets
from .state_change import parabolic_change_of_state, ruling_span
from .two_material import KNEE_SEARCH_C, LinearLaw

__all__ = ["section_unstressed_length", "section_change_of_state", "section_unstressed_length_by_law",
           "section_change_of_state_by_law", "section_changes_of_state_by_law", "section_knee_point_temperature_c",
           "section_knee_points_c"]

#: Slackest state tried, as in the ruling-span solver: half-span angle S/2c of the longest span.
_MAX_HALF_SPAN_ANGLE = 300.0


def section_unstressed_length(spans_m, dz_m, horizontal_tension_n, weight_n_m, axial_stiffness_n):
    """Total unstressed length of the section's wire at the reference temperature [m].

    Parameters
    ----------
    spans_m, dz_m : array-like
        Horizontal span and height difference of each span [m].
    horizontal_tension_n : float
        Horizontal tension shared by the spans [N].
    weight_n_m : float
        Load per unit length [N/m].
    axial_stiffness_n : float
        EA [N].
    """
    no_expansion = LinearLaw(float(axial_stiffness_n), 0.0, 0.0)
    return section_unstressed_length_by_law(spans_m, dz_m, horizontal_tension_n, weight_n_m, 0.0, no_expansion)


def section_change_of_state(spans_m, dz_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c,
                            modulus_pa, area_m2, expansion_per_c, loaded_spans=None):
    """Horizontal tension in state 2 shared by every span of a tension section (scalar) [N].

    Solves with ``brentq`` for the ``H2`` that keeps the section's total
    unstressed length (see the module docstring), searching only tensions
    up to ``EA`` (larger ones are a strain of 100 % or more, not physical).
    ``loaded_spans = (spans_m, dz_m)`` of state 2 when it hangs elsewhere
    (in the plane swung by the wind: ``conductor3d.swung_span``); default
    the spans of state 1.

    Raises
    ------
    routesag.errors.SolveError
        If no tension between a half-span angle of 300 and ``EA`` satisfies it.
    """
    law = LinearLaw(float(modulus_pa) * float(area_m2), float(expansion_per_c), float(temperature1_c))
    return section_change_of_state_by_law(spans_m, dz_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m,
                                          temperature2_c, law, law, loaded_spans)


def section_unstressed_length_by_law(spans_m, dz_m, horizontal_tension_n, weight_n_m, temperature_c, law):
    """Total unstressed length ``sum L_i / x(T_mean,i, t)`` of the section's wire [m] under a stretch law."""
    spans, dz = np.asarray(spans_m, dtype=float), np.asarray(dz_m, dtype=float)
    length, tension = length_and_mean_tension(spans, dz, horizontal_tension_n, weight_n_m)
    return float(np.sum(length / law.stretch_ratio(tension, temperature_c)))


def section_change_of_state_by_law(spans_m, dz_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m,
                                   temperature2_c, law1, law2, loaded_spans=None):
    """As :func:`section_change_of_state`, each state with its own stretch law (:mod:`.two_material`) [N]."""
    spans = np.asarray(spans_m, dtype=float)
    if not (law1.stretch_ratio(0.0, temperature1_c) > 0 and law2.stretch_ratio(0.0, temperature2_c) > 0):
        raise SolveError("section change of state impossible: thermal strain shrinks the wire to nothing")
    target_m = section_unstressed_length_by_law(spans, dz_m, tension1_n, weight1_n_m, temperature1_c, law1)
    spans2, dz2 = (spans, dz_m) if loaded_spans is None else loaded_spans

    @remembered
    def residual(tension_n):
        return section_unstressed_length_by_law(spans2, dz2, tension_n, weight2_n_m, temperature2_c, law2) - target_m

    low = weight2_n_m * float(np.max(spans2)) / (2.0 * _MAX_HALF_SPAN_ANGLE)
    high = float(law2.least_stiffness_n)  # H < T_mean < EA (the core's alone for a two-material conductor)
    if not residual(low) > 0 > residual(high):
        raise SolveError(f"section change of state has no solution with a horizontal tension between {low:.4g} N "
                         f"and EA = {high:.4g} N (state 1 H = {tension1_n:g} N, t = {temperature1_c:g} C; "
                         f"state 2 w = {weight2_n_m:g} N/m, t = {temperature2_c:g} C)")
    # the root of the same residual, from a narrower bracket around the ruling span's parabolic estimate
    try:
        with np.errstate(all="ignore"):  # an absurd modulus overflows the estimate: then it is not finite
            guess = float(parabolic_change_of_state(ruling_span(spans2), tension1_n, weight1_n_m, temperature1_c,
                                                    weight2_n_m, temperature2_c, float(law2.axial_stiffness_n),
                                                    1.0, law2.expansion_per_c))
    except SolveError:  # no estimate: search the whole range
        guess = math.nan
    if math.isfinite(guess):
        low, high = widen_bracket(residual, min(max(guess, low), high), low, high)
    return tension_root(residual, low, high, "section change of state")


def section_knee_point_temperature_c(spans_m, dz_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m,
                                     law1, law2, search_c=KNEE_SEARCH_C) -> float:
    """Knee-point temperature of a section's wire in state 2's law, solved as one root [degC].

    The knee is the temperature ``t`` at which the wire, carried there from
    state 1 (a change of state of the section, as
    :func:`section_change_of_state_by_law`), has a span-weighted mean
    tension equal to the knee tension of ``law2`` at ``t``
    (:func:`.two_material.knee_point_temperature_c` finds it as a root over
    ``t`` of roots over ``H``). Here the unknown is the horizontal tension
    ``H``: it fixes the mean tension, the mean tension fixes the temperature
    at which it is the knee tension (``law2.knee_temperature_c``, or a search
    over ``t``), and ``H`` is the tension whose section unstressed length at
    that temperature is state 1's. The residual falls with ``H`` (tighter
    and hotter wire, both shorter unstressed), so one bracketed root
    (1e-9 N) gives the knee, far inside the 1e-6 degC of the other form.
    The temperature is held inside ``search_c`` while searching; NaN when
    the knee lies outside it. A level ruling span is one span with
    ``dz_m = 0``.

    Raises
    ------
    routesag.errors.SolveError
        The residual does not change sign on the physical range (use the other form then).
    """
    spans, dz = np.asarray(spans_m, dtype=float), np.asarray(dz_m, dtype=float)
    lowest_c, highest_c = map(float, search_c)
    target_m = section_unstressed_length_by_law(spans, dz, tension1_n, weight1_n_m, temperature1_c, law1)
    knee_at = _knee_temperature_function(law2, lowest_c, highest_c)

    def state(tension_n):
        length, mean_n = length_and_mean_tension(spans, dz, tension_n, weight2_n_m)
        return length, mean_n, knee_at(float(np.average(mean_n, weights=spans)))

    @remembered
    def residual(tension_n):
        length, mean_n, knee_c = state(tension_n)
        held_c = min(max(knee_c, lowest_c), highest_c)
        return float(np.sum(length / law2.stretch_ratio(mean_n, held_c))) - target_m

    low = weight2_n_m * float(np.max(spans)) / (2.0 * _MAX_HALF_SPAN_ANGLE)
    high = float(law2.least_stiffness_n)
    if not residual(low) > 0 > residual(high):
        raise SolveError("knee point: no sign change of the one-root form on the physical range")
    low, high = widen_bracket(residual, min(max(float(tension1_n), low), high), low, high)
    knee_c = state(tension_root(residual, low, high, "knee point"))[2]
    return knee_c if lowest_c < knee_c < highest_c else math.nan


def _knee_temperature_function(law, lowest_c, highest_c):
    """``mean tension [N] -> temperature [degC]`` at which it is ``law``'s knee tension (+-inf beyond the search
    when the law has no closed-form inverse)."""
    closed_form = getattr(law, "knee_temperature_c", None)
    if closed_form is not None:
        return lambda tension_n: float(closed_form(tension_n))
    at_lowest, at_highest = float(law.knee_tension_n(lowest_c)), float(law.knee_tension_n(highest_c))

    def by_search(tension_n):
        if tension_n <= at_lowest:
            return -math.inf
        if tension_n >= at_highest:
            return math.inf
        return float(brentq(lambda t: float(law.knee_tension_n(t)) - tension_n, lowest_c, highest_c, xtol=1e-10))

    return by_search


def section_changes_of_state_by_law(spans_m, dz_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m,
                                    temperature2_c, law1, law2, loaded_spans=None):
    """:func:`section_change_of_state_by_law` for many sections of equally many spans at once, vectorised [N].

    ``spans_m``, ``dz_m`` (and ``loaded_spans``) are ``(n, m)``: ``n`` sections
    of ``m`` spans; the other arguments broadcast to ``(n,)``. Each row is the
    scalar solver's problem: the same physical range and end checks, a
    bracket near the ruling span's parabolic estimate (widened to the whole
    range where that misses), and the root to 1e-9 N plus 1e-13 relative
    (:func:`.roots.bracketed_roots`). Rows whose range has no sign change go
    to the scalar solver, which raises its error.

    Raises
    ------
    routesag.errors.SolveError
        As :func:`section_change_of_state_by_law`, for the first failing row.
    """
    spans, dz = np.atleast_2d(np.asarray(spans_m, dtype=float)), np.atleast_2d(np.asarray(dz_m, dtype=float))
    n = spans.shape[0]
    h1, w1, t1, w2, t2 = (np.broadcast_to(np.asarray(v, dtype=float), (n,)) for v in
                          (tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c))
    spans2, dz2 = (spans, dz) if loaded_spans is None else (np.atleast_2d(np.asarray(a, dtype=float))
                                                           for a in loaded_spans)
    if n == 0:
        return np.empty(0)
    if not (np.all(law1.stretch_ratio(0.0, t1) > 0) and np.all(law2.stretch_ratio(0.0, t2) > 0)):
        raise SolveError("section change of state impossible: thermal strain shrinks the wire to nothing")
    target_m = _unstressed_lengths(spans, dz, h1, w1, t1, law1)

    def residual(tension_n, rows=slice(None)):
        return _unstressed_lengths(spans2[rows], dz2[rows], tension_n, w2[rows], t2[rows], law2) - target_m[rows]

    low = w2 * np.max(spans2, axis=1) / (2.0 * _MAX_HALF_SPAN_ANGLE)
    high = np.full(n, float(law2.least_stiffness_n))
    with np.errstate(all="ignore"):
        solvable = (residual(low) > 0) & (residual(high) < 0)
        guess = parabolic_change_of_state(np.sqrt(np.sum(spans2**3, axis=1) / np.sum(spans2, axis=1)), h1, w1, t1,
                                          w2, t2, float(law2.axial_stiffness_n), 1.0, law2.expansion_per_c)
    out = np.full(n, np.nan)
    if solvable.any():
        near_low, near_high = widen_brackets(lambda h: residual(h, solvable), guess[solvable], low[solvable],
                                             high[solvable])
        out[solvable] = bracketed_roots(lambda h: residual(h, solvable), near_low, near_high, 1e-9, 1e-13,
                                        what="section change of state")
    for i in np.flatnonzero(~solvable):  # the scalar solver raises its message
        out[i] = section_change_of_state_by_law(spans[i], dz[i], h1[i], w1[i], t1[i], w2[i], t2[i], law1, law2,
                                                (spans2[i], dz2[i]))
    return out


def section_knee_points_c(spans_m, dz_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, law1, law2,
                          search_c=KNEE_SEARCH_C):
    """:func:`section_knee_point_temperature_c` for many sections of equally many spans at once [degC].

    Needs a law with a closed-form ``knee_temperature_c``. A row whose
    residual has no sign change on the physical range is NaN in the second
    array returned, ``solved`` False: solve it the other way.

    Returns
    -------
    (knee_c, solved) : numpy.ndarray, numpy.ndarray of bool
    """
    spans, dz = np.atleast_2d(np.asarray(spans_m, dtype=float)), np.atleast_2d(np.asarray(dz_m, dtype=float))
    n = spans.shape[0]
    h1, w1, t1, w2 = (np.broadcast_to(np.asarray(v, dtype=float), (n,)) for v in
                      (tension1_n, weight1_n_m, temperature1_c, weight2_n_m))
    lowest_c, highest_c = map(float, search_c)
    target_m = _unstressed_lengths(spans, dz, h1, w1, t1, law1)

    def state(tension_n, rows=slice(None)):
        length, mean_n = length_and_mean_tension(spans[rows], dz[rows], np.asarray(tension_n)[:, None],
                                                 w2[rows][:, None])
        weights = spans[rows]
        knee_c = law2.knee_temperature_c(np.sum(mean_n * weights, axis=1) / np.sum(weights, axis=1))
        return length, mean_n, knee_c

    def residual(tension_n, rows=slice(None)):
        length, mean_n, knee_c = state(tension_n, rows)
        held_c = np.clip(knee_c, lowest_c, highest_c)[:, None]
        return np.sum(length / law2.stretch_ratio(mean_n, held_c), axis=1) - target_m[rows]

    low = w2 * np.max(spans, axis=1) / (2.0 * _MAX_HALF_SPAN_ANGLE)
    high = np.full(n, float(law2.least_stiffness_n))
    with np.errstate(all="ignore"):
        solved = (residual(low) > 0) & (residual(high) < 0)
    knee = np.full(n, np.nan)
    if solved.any():
        start_n = np.clip(h1[solved], low[solved], high[solved])
        near_low, near_high = widen_brackets(lambda h: residual(h, solved), start_n, low[solved], high[solved])
        root = bracketed_roots(lambda h: residual(h, solved), near_low, near_high, 1e-9, 1e-13, what="knee point")
        found = state(root, solved)[2]
        knee[solved] = np.where((found > lowest_c) & (found < highest_c), found, np.nan)
    return knee, solved


def _unstressed_lengths(spans, dz, tension_n, weight_n_m, temperature_c, law):
    """Row sums ``sum_j L_ij / x(T_mean,ij, t_i)`` of ``(n, m)`` spans, each row its own state [m]."""
    length, mean_n = length_and_mean_tension(spans, dz, np.asarray(tension_n)[:, None],
                                             np.asarray(weight_n_m)[:, None])
    return np.sum(length / law.stretch_ratio(mean_n, np.asarray(temperature_c)[:, None]), axis=1)
