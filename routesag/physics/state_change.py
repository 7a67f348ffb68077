"""Ruling span and change of state (new tension after a change of load or temperature).

A tension section of free-swinging suspension spans behaves like one level
span, the ruling span. Between two states (load ``w``, temperature ``t``) the
conductor keeps its unstressed length; with a linear-elastic conductor of
axial stiffness ``EA`` and expansion coefficient ``alpha``::

    L(H) / ((1 + T_mean(H) / EA) (1 + alpha (t - t_ref)))  is the same in both states.

:func:`change_of_state` solves this exactly (catenary arc length, mean
tension); :func:`parabolic_change_of_state` solves the classic cubic that
follows from the parabolic arc length with ``T = H``.

References
----------
.. [1] Douglass, D.A. and Thrash, R., "Sag and tension of conductor", ch. 14
   in L.L. Grigsby (ed.), Electric Power Generation, Transmission and
   Distribution, 3rd ed., CRC Press, 2012 (ruling span, change of state
   cubic, Table 14.5 Drake example).
.. [2] IEC 60050-466, International Electrotechnical Vocabulary, Overhead
   lines: "equivalent span".
.. [3] Irvine, H.M., Cable Structures, MIT Press, 1981 (elastic catenary).
"""

from functools import lru_cache

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from routesag.errors import SolveError

from .catenary import length_and_mean_tension, mean_tension
from .roots import bracketed_roots, remembered, tension_root, widen_bracket, widen_brackets
from .two_material import LinearLaw

__all__ = ["ruling_span", "change_of_state", "change_of_state_by_law", "changes_of_state_by_law",
           "parabolic_change_of_state", "physical_tension_range"]

#: Largest half-span angle S/2c tried by the exact solver; cosh overflows near 710.
_MAX_HALF_SPAN_ANGLE = 300.0


def ruling_span(spans_m):
    """Ruling (equivalent) span of a tension section, ``sqrt(sum S^3 / sum S)``.

    Parameters
    ----------
    spans_m : array-like
        Horizontal spans of the section [m].

    Returns
    -------
    float
        Ruling span [m].

    References
    ----------
    .. [1] IEC 60050-466, "equivalent span".
    .. [2] Grigsby (ed.), ch. 14, "Ruling span".
    """
    spans = np.asarray(spans_m, dtype=float)
    return float(np.sqrt(np.sum(spans**3) / np.sum(spans)))


def _describe(span_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c):
    return (f"span {span_m:g} m, from state 1 (H = {tension1_n:g} N, w = {weight1_n_m:g} N/m, "
            f"t = {temperature1_c:g} C) to state 2 (w = {weight2_n_m:g} N/m, t = {temperature2_c:g} C)")


def _check_positive(what, **values):
    for name, value in values.items():
        if not (np.isfinite(value) and value > 0):
            raise SolveError(f"change of state impossible: {name} must be a positive number, got {value!r} ({what})")


def change_of_state(span_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c,
                    modulus_pa, area_m2, expansion_per_c, reference_temperature_c=None):
    """Horizontal tension in state 2 of a level span, exact catenary (scalar).

    Solves, with ``brentq``, for ``H2`` such that the unstressed length
    ``L / ((1 + T_mean / EA)(1 + alpha (t - t_ref)))`` of state 2 equals that
    of state 1, with the exact catenary arc length ``L`` and the arc-length
    mean tension ``T_mean`` of each state.

    Parameters
    ----------
    span_m : float
        Level (ruling) span [m].
    tension1_n : float
        Horizontal tension in state 1 [N].
    weight1_n_m : float
        Load per unit length in state 1 (resultant) [N/m].
    temperature1_c : float
        Conductor temperature in state 1 [C].
    weight2_n_m : float
        Load per unit length in state 2 [N/m].
    temperature2_c : float
        Conductor temperature in state 2 [C].
    modulus_pa : float
        Elastic modulus of the conductor [Pa].
    area_m2 : float
        Total cross-section area [m^2].
    expansion_per_c : float
        Linear thermal expansion coefficient [1/C].
    reference_temperature_c : float, optional
        Temperature ``t_ref`` at which the linear expansion law is anchored
        [C]; default ``temperature1_c``. The linear law is not symmetric
        (``(1 + a dt)(1 - a dt) != 1``), so chains of state changes that
        start from different states agree exactly only with one fixed
        reference (e.g. the 20 C of the conductor data sheet); the
        difference is second order in ``alpha dt``.

    Returns
    -------
    float
        Horizontal tension in state 2 [N].

    Raises
    ------
    routesag.errors.SolveError
        If an input is not positive, state 1 has a mean tension of ``EA``
        or more, or no physical tension (mean tension below ``EA``, see
        :func:`physical_tension_range`) satisfies the state equation.

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, "Sag-tension calculation" (unstressed length
       kept between states).
    .. [2] Irvine, Cable Structures, 1981 (elastic catenary).
    """
    span_m, tension1_n, weight1_n_m, weight2_n_m = map(float, (span_m, tension1_n, weight1_n_m, weight2_n_m))
    if reference_temperature_c is None:
        reference_temperature_c = temperature1_c
    law = LinearLaw(float(modulus_pa) * float(area_m2), float(expansion_per_c), float(reference_temperature_c))
    return change_of_state_by_law(span_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c,
                                  law, law)


def change_of_state_by_law(span_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c,
                           law1, law2):
    """Horizontal tension in state 2 of a level span [N], each state with its own stretch law (scalar).

    As :func:`change_of_state`, with the stretch ``x = L / L0`` of each state
    given by ``law1`` and ``law2`` (:mod:`.two_material`: a linear composite,
    or aluminium and core with the knee point; the final condition is a law
    whose aluminium has crept). Solves ``L2 / x2(T_mean2, t2) = L1 / x1(T_mean1, t1)``.

    Raises
    ------
    routesag.errors.SolveError
        As :func:`change_of_state`.
    """
    span_m, tension1_n, weight1_n_m, weight2_n_m = map(float, (span_m, tension1_n, weight1_n_m, weight2_n_m))
    describe = _describe(span_m, tension1_n, weight1_n_m, float(temperature1_c), weight2_n_m, float(temperature2_c))
    axial_stiffness_n = float(law2.axial_stiffness_n)
    _check_positive(describe, span_m=span_m, tension1_n=tension1_n, weight1_n_m=weight1_n_m,
                    weight2_n_m=weight2_n_m, axial_stiffness_n=axial_stiffness_n)
    if not (law1.stretch_ratio(0.0, temperature1_c) > 0 and law2.stretch_ratio(0.0, temperature2_c) > 0):
        raise SolveError(f"change of state impossible: thermal strain shrinks the wire to nothing ({describe})")
    if mean_tension(span_m, 0.0, tension1_n, weight1_n_m) >= law1.least_stiffness_n:
        raise SolveError(f"change of state impossible: the mean tension of state 1 is not below EA = "
                         f"{law1.least_stiffness_n:.4g} N (the core's for a two-material conductor), a strain "
                         f"of 100 % or more ({describe})")
    target_m = _unstressed_length(span_m, tension1_n, weight1_n_m, temperature1_c, law1)

    @remembered
    def residual(tension_n):
        return _unstressed_length(span_m, tension_n, weight2_n_m, temperature2_c, law2) - target_m

    low_limit, high_limit = physical_tension_range(span_m, weight2_n_m, float(law2.least_stiffness_n), describe)
    guess = parabolic_change_of_state(span_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m,
                                      temperature2_c, axial_stiffness_n, 1.0, law2.expansion_per_c)
    low, high = widen_bracket(residual, float(np.clip(guess, low_limit, high_limit)), low_limit, high_limit)
    if low is None:
        raise SolveError(f"change of state has no solution with a horizontal tension between "
                         f"{low_limit:.4g} N and {high_limit:.4g} N ({describe})")
    return tension_root(residual, low, high, "change of state")


def changes_of_state_by_law(span_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c,
                            law1, law2):
    """:func:`change_of_state_by_law` for many level spans and state pairs at once, vectorised [N].

    Every argument but the two laws broadcasts against the others; the
    result has the broadcast shape. Each element is solved to the scalar
    solver's tolerance (1e-9 N plus 1e-13 relative, :func:`.roots.bracketed_roots`)
    on a bracket around the parabolic estimate whose both ends are physical
    (mean tension below the law's least EA: inside :func:`physical_tension_range`,
    where the residual falls with ``H`` and has one root), so both find the same
    root within that tolerance. An element without such a bracket (out of
    range inputs, a root far from the estimate) is solved by the scalar solver
    instead, which also raises its errors.

    Raises
    ------
    routesag.errors.SolveError
        As :func:`change_of_state_by_law`, for the first failing element.
    """
    args = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                 (span_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c)))
    shape = args[0].shape
    span, h1, w1, t1, w2, t2 = (a.ravel() for a in args)
    out = np.full(span.size, np.nan)
    with np.errstate(all="ignore"):
        ok = (np.isfinite(span) & np.isfinite(h1) & np.isfinite(w1) & np.isfinite(w2) & np.isfinite(t1)
              & np.isfinite(t2) & (span > 0) & (h1 > 0) & (w1 > 0) & (w2 > 0) & (float(law2.axial_stiffness_n) > 0)
              & (law1.stretch_ratio(0.0, t1) > 0) & (law2.stretch_ratio(0.0, t2) > 0)
              & (mean_tension(span, 0.0, h1, w1) < law1.least_stiffness_n))
    if ok.any():
        out[ok] = _vector_changes(span[ok], h1[ok], w1[ok], t1[ok], w2[ok], t2[ok], law1, law2)
    for i in np.flatnonzero(np.isnan(out)):  # the scalar solver: its answer, or its error
        out[i] = change_of_state_by_law(span[i], h1[i], w1[i], t1[i], w2[i], t2[i], law1, law2)
    return out.reshape(shape)


def _vector_changes(span, h1, w1, t1, w2, t2, law1, law2):
    """Roots where a physical bracket around the parabolic estimate is found; NaN elsewhere."""
    target_m = _unstressed_length_array(span, h1, w1, t1, law1)

    def residual(tension_n, keep=slice(None)):
        return _unstressed_length_array(span[keep], tension_n, w2[keep], t2[keep], law2) - target_m[keep]

    guess = parabolic_change_of_state(span, h1, w1, t1, w2, t2, float(law2.axial_stiffness_n), 1.0,
                                      law2.expansion_per_c)
    with np.errstate(all="ignore"):
        low, high = widen_brackets(residual, guess, np.zeros(span.size), np.full(span.size, np.inf))
        # physical ends (mean tension below the least EA) and a sign change between them
        good = ((mean_tension(span, 0.0, low, w2) < law2.least_stiffness_n)
                & (mean_tension(span, 0.0, high, w2) < law2.least_stiffness_n)
                & (residual(low) >= 0) & (residual(high) <= 0) & (low > 0))
    out = np.full(span.size, np.nan)
    if good.any():
        out[good] = bracketed_roots(lambda h: residual(h, good), low[good], high[good], 1e-9, 1e-13,
                                    what="change of state")
    return out


def _unstressed_length_array(span_m, horizontal_tension_n, weight_n_m, temperature_c, law):
    stretched, tension = length_and_mean_tension(span_m, 0.0, horizontal_tension_n, weight_n_m)
    return stretched / law.stretch_ratio(tension, temperature_c)


def _unstressed_length(span_m, horizontal_tension_n, weight_n_m, temperature_c, law):
    """Unstressed length ``L / x(T_mean, t)`` of a level span [m]."""
    stretched, tension = length_and_mean_tension(span_m, 0.0, horizontal_tension_n, weight_n_m)
    return float(stretched / law.stretch_ratio(tension, temperature_c))


def physical_tension_range(span_m, weight_n_m, axial_stiffness_n, describe=""):
    """Horizontal tensions [N] of a level span whose mean tension stays below ``EA``.

    Only these are physical: at ``T_mean = EA`` the linear law gives an
    elastic strain of 100 % (the wire twice its unstressed length), far past
    any conductor's breaking strain of a few per cent. Beyond it the
    unstressed length ``L / (1 + T_mean / EA)`` stops growing with the sag
    (it tends to ``EA L / T_mean``), so the state equation gains a second,
    spurious root; restricting the search to this interval keeps the one
    physical root. ``T_mean(H)`` falls and then rises with ``H`` (sag, then
    stretch), so the set is one interval around the tension of least mean
    tension; its ends are where ``T_mean = EA``, found by ``brentq``.

    Returns
    -------
    (low_n, high_n) : tuple of float

    Raises
    ------
    routesag.errors.SolveError
        If no horizontal tension gives a mean tension below ``EA``.
    """
    found = _physical_tension_range(float(span_m), float(weight_n_m), float(axial_stiffness_n))
    if found is None:
        raise SolveError(f"change of state impossible: every horizontal tension gives a mean tension of at "
                         f"least EA = {axial_stiffness_n:.4g} N ({describe})")
    return found


@lru_cache(maxsize=4096)
def _physical_tension_range(span_m, weight_n_m, axial_stiffness_n):
    """(low_n, high_n) of :func:`physical_tension_range`, or None when there is none.

    It depends on the span, the load and EA only, so a sag table's temperatures and the load cases of equal
    weight share one search (cached; the same floats give the same result).
    """
    def excess(log_h):
        return float(mean_tension(span_m, 0.0, np.exp(log_h), weight_n_m)) / axial_stiffness_n - 1.0

    slackest = np.log(weight_n_m * span_m / (2.0 * _MAX_HALF_SPAN_ANGLE))
    tightest = np.log(axial_stiffness_n)  # T_mean >= H, so H < EA
    best = minimize_scalar(excess, bounds=(slackest, tightest), method="bounded",
                           options={"xatol": 1e-10}).x
    if excess(best) >= 0:
        return None
    low = slackest if excess(slackest) < 0 else brentq(excess, slackest, best, xtol=1e-14)
    high = brentq(excess, best, tightest, xtol=1e-14)
    return float(np.exp(low)), float(np.exp(high))


def parabolic_change_of_state(span_m, tension1_n, weight1_n_m, temperature1_c, weight2_n_m, temperature2_c,
                              modulus_pa, area_m2, expansion_per_c):
    """Horizontal tension in state 2 from the classic parabolic state-change cubic.

    ``H2^2 [H2 - H1 + EA w1^2 S^2 / (24 H1^2) + EA alpha (t2 - t1)] = EA w2^2 S^2 / 24``.
    The cubic ``H^3 + b H^2 - k`` (``k > 0``) has exactly one positive root; it
    is found by Newton's method started above it, where the cubic is convex,
    so the iterates fall monotonically onto the root. Broadcasts over arrays.

    Parameters
    ----------
    span_m : float or array
        Level (ruling) span [m].
    tension1_n : float or array
        Horizontal tension in state 1 [N].
    weight1_n_m : float or array
        Load per unit length in state 1 [N/m].
    temperature1_c : float or array
        Conductor temperature in state 1 [C].
    weight2_n_m : float or array
        Load per unit length in state 2 [N/m].
    temperature2_c : float or array
        Conductor temperature in state 2 [C].
    modulus_pa : float or array
        Elastic modulus [Pa].
    area_m2 : float or array
        Cross-section area [m^2].
    expansion_per_c : float or array
        Linear thermal expansion coefficient [1/C].

    Returns
    -------
    float or array
        Horizontal tension in state 2 [N].

    Raises
    ------
    routesag.errors.SolveError
        If a span, tension, weight or EA is not positive.

    References
    ----------
    .. [1] Grigsby (ed.), ch. 14, change-of-state equation (parabolic form).
    """
    span = np.asarray(span_m, dtype=float)
    h1 = np.asarray(tension1_n, dtype=float)
    w1 = np.asarray(weight1_n_m, dtype=float)
    w2 = np.asarray(weight2_n_m, dtype=float)
    ea = np.asarray(modulus_pa, dtype=float) * np.asarray(area_m2, dtype=float)
    for name, value in (("span_m", span), ("tension1_n", h1), ("weight1_n_m", w1), ("weight2_n_m", w2),
                        ("modulus_pa * area_m2", ea)):
        if not np.all(np.isfinite(value) & (value > 0)):
            raise SolveError(f"parabolic change of state impossible: {name} must be positive, got {value!r}")
    delta_t = np.asarray(temperature2_c, dtype=float) - np.asarray(temperature1_c, dtype=float)
    b = -h1 + ea * w1**2 * span**2 / (24.0 * h1**2) + ea * np.asarray(expansion_per_c, dtype=float) * delta_t
    k = ea * w2**2 * span**2 / 24.0
    return _positive_cubic_root(b, k)


def _positive_cubic_root(b, k):
    """Positive root of ``H^3 + b H^2 - k`` for ``k > 0``.

    It lies below ``max(-b, 0) + k^(1/3)``; the cubic is convex and increasing
    from there down to the root, so Newton's method converges monotonically.
    """
    b, k = np.broadcast_arrays(b, k)
    root = np.maximum(-b, 0.0) + np.cbrt(k)
    for _ in range(200):
        value = root**3 + b * root**2 - k
        slope = 3.0 * root**2 + 2.0 * b * root
        step = value / slope
        root = root - step
        if np.all(np.abs(step) <= 1e-14 * np.abs(root)):
            break
    return root[()] if root.ndim == 0 else root
