"""Root finding that pays once for each point: a residual here is a whole change of state.

The solvers check the signs at the ends of their bracket before calling
``brentq``, which evaluates the same two ends again; :func:`remembered` hands
it the values already computed (the same floats, so the root is unchanged).
"""
from __future__ import annotations

import numpy as np
from scipy.optimize import brentq

from routesag.errors import SolveError


def remembered(function):
    """``function`` of one float, each distinct argument computed once (for the life of the wrapper)."""
    values = {}

    def once(x):
        key = float(x)
        if key not in values:
            values[key] = function(x)
        return values[key]

    return once


def widen_bracket(residual, guess, low_limit, high_limit):
    """Widen ``[guess/2, 2 guess]`` by factors of 4 inside the limits until the decreasing
    ``residual`` changes sign; return ``(low, high)`` or ``(None, None)``."""
    low = min(max(guess / 2.0, low_limit), high_limit)
    high = max(min(guess * 2.0, high_limit), low_limit)
    while residual(low) < 0 and low > low_limit:
        low, high = max(low / 4.0, low_limit), low
    while residual(high) > 0 and high < high_limit:
        low, high = high, min(high * 4.0, high_limit)
    if residual(low) >= 0 >= residual(high):
        return low, high
    return None, None


def widen_brackets(residual, guess, low, high):
    """:func:`widen_bracket` over arrays: ``[g/2, 2g]`` inside ``[low, high]``, widened by 4 towards the sign
    change of the falling ``residual`` up to three times; ``[low, high]`` itself where that still misses."""
    near_low = np.clip(guess / 2.0, low, high)
    near_high = np.clip(guess * 2.0, low, high)
    at_low, at_high = residual(near_low), residual(near_high)
    for _ in range(3):
        below, above = at_low < 0, at_high > 0
        if not (below.any() or above.any()):
            break
        near_low, near_high = (np.where(below, np.maximum(near_low / 4.0, low), np.where(above, near_high, near_low)),
                               np.where(below, near_low, np.where(above, np.minimum(near_high * 4.0, high),
                                                                  near_high)))
        at_low, at_high = residual(near_low), residual(near_high)
    missed = ~((at_low >= 0) & (at_high <= 0))
    return np.where(missed, low, near_low), np.where(missed, high, near_high)


def tension_root(residual, low_n, high_n, what: str) -> float:
    """The horizontal tension [N] in ``[low_n, high_n]`` where ``residual`` is zero (``brentq``, 1e-9 N).

    Raises
    ------
    SolveError
        No convergence: the properties are so far from a real wire that the residual is flat.
    """
    try:
        return brentq(residual, low_n, high_n, xtol=1e-9, rtol=1e-13, maxiter=200)
    except RuntimeError as exc:
        raise SolveError(f"{what} did not converge ({exc}); check the conductor's modulus, mass and "
                         "expansion for a unit or typing error") from None


def bracketed_roots(residual, low, high, xtol, rtol, maxiter=200, what="root"):
    """Roots of many decreasing (or increasing) functions at once, each bracketed by ``[low_i, high_i]``.

    Chandrupatla's method vectorised over the elements: inverse quadratic
    interpolation where it is safe, bisection otherwise, so each bracket
    shrinks at least as fast as by bisection. An element stops when its
    bracket is at most ``xtol + rtol |x|`` wide, so the returned ``x`` lies
    within that distance of its root: the tolerance ``brentq`` states
    (``xtol``, ``rtol``) or tighter.

    Parameters
    ----------
    residual : callable
        ``residual(x)`` with ``x`` an array of the elements' shape; returns the
        residual of every element (elements already converged may be evaluated
        again, their value is ignored).
    low, high : array-like
        Bracket ends; ``residual`` must differ in sign (or be zero) at them.
    xtol, rtol : float
        Absolute and relative tolerance on ``x``.

    Returns
    -------
    numpy.ndarray
        The roots.

    Raises
    ------
    SolveError
        An end pair does not bracket a sign change, or no convergence in ``maxiter`` steps.

    References
    ----------
    .. [1] Chandrupatla, T.R., "A new hybrid quadratic/bisection algorithm for
       finding the zero of a nonlinear function without using derivatives",
       Advances in Engineering Software 28 (1997) 145-149.
    """
    x1, x2 = np.broadcast_arrays(np.asarray(low, dtype=float), np.asarray(high, dtype=float))
    x1, x2 = x1.copy(), x2.copy()
    f1, f2 = np.asarray(residual(x1), dtype=float).copy(), np.asarray(residual(x2), dtype=float).copy()
    if np.any(np.sign(f1) * np.sign(f2) > 0) or not (np.all(np.isfinite(f1)) and np.all(np.isfinite(f2))):
        raise SolveError(f"{what}: an interval does not bracket a sign change")
    x3, f3 = x2.copy(), f2.copy()
    best, f_best = np.where(np.abs(f1) <= np.abs(f2), x1, x2), np.minimum(np.abs(f1), np.abs(f2))
    active = (f1 != 0) & (f2 != 0) & (np.abs(x2 - x1) > xtol + rtol * np.abs(best))
    t = np.full(x1.shape, 0.5)
    for _ in range(maxiter):
        if not active.any():
            return best
        xt = np.where(active, x1 + t * (x2 - x1), best)
        ft = np.asarray(residual(xt), dtype=float)
        same = np.sign(ft) == np.sign(f1)
        upd = active
        # keep x1 (newest) and x2 on opposite sides; x3 is the point dropped
        x3 = np.where(upd, np.where(same, x1, x2), x3)
        f3 = np.where(upd, np.where(same, f1, f2), f3)
        x2 = np.where(upd & ~same, x1, x2)
        f2 = np.where(upd & ~same, f1, f2)
        x1, f1 = np.where(upd, xt, x1), np.where(upd, ft, f1)
        closer = np.abs(f1) < np.abs(f2)
        best = np.where(upd, np.where(closer, x1, x2), best)
        f_best = np.where(upd, np.minimum(np.abs(f1), np.abs(f2)), f_best)
        width = np.abs(x2 - x1)
        # stop when the bracket is within the tolerance (half of it on each side of its midpoint suffices)
        tol = 0.5 * (xtol + rtol * np.abs(best))
        with np.errstate(divide="ignore", invalid="ignore"):
            tl = np.where(width > 0, tol / width, np.inf)
            active = upd & (f_best != 0) & (tl <= 0.5)
            xi = (x1 - x2) / (x3 - x2)
            phi = (f1 - f2) / (f3 - f2)
            quadratic = (phi**2 < xi) & ((1.0 - phi) ** 2 < 1.0 - xi)
            t_iqi = (f1 / (f2 - f1) * f3 / (f2 - f3)
                     + (x3 - x1) / (x2 - x1) * f1 / (f3 - f1) * f2 / (f3 - f2))
        t = np.where(quadratic & np.isfinite(t_iqi), t_iqi, 0.5)
        t = np.clip(t, np.minimum(tl, 0.5), np.maximum(1.0 - tl, 0.5))
    raise SolveError(f"{what} did not converge in {maxiter} steps")
