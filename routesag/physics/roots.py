"""Root finding that pays once for each point: a residual here is a whole change of state.

The solvers check the signs at the ends of their bracket before calling
``brentq``, which evaluates the same two ends again; :func:`remembered` hands
it the values already computed (the same floats, so the root is unchanged).
"""
from __future__ import annotations


def remembered(function):
    """``function`` of one float, each distinct argument computed once (for the life of the wrapper)."""
    values = {}

    def once(x):
        key = float(x)
        if key not in values:
            values[key] = function(x)
        return values[key]

    return once
