"""Root finding that pays once for each point: a residual here is a whole change of state.

The solvers check the signs at the ends of their bracket before calling
``brentq``, which evaluates the same two ends again; :func:`remembered` hands
it the values already computed (the same floats, so the root is unchanged).
"""
from __future__ import annotations

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
