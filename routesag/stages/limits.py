"""Tension limits: check every solved load case, and find the stringing tension they allow.

A limit (``[[limits]]`` in the project file) caps, in one load case, the
tension as a percentage of the conductor's rated strength (applied to the
horizontal tension, or to the largest support tension of the section's
spans) and/or the catenary constant H/w. Its *utilisation* is the largest
ratio of value to allowed value; above 1 the limit is exceeded.

The design stringing tension of a section is the largest stringing tension
for which no limit is exceeded. Every load-case tension grows with the
stringing tension, so the worst utilisation does too, and bisection between a
slack stringing (every limit met) and the rated strength (some limit exceeded)
finds it; the search keeps the met side, so the result never exceeds a limit.

References
----------
.. [1] IEEE/ANSI C2, National Electrical Safety Code, Rule 261H1 (tension
   limits as % of rated breaking strength: loaded, initial and final unloaded).
.. [2] CIGRE Technical Brochure 273 (2005), Overhead conductor safe design
   tension with respect to aeolian vibrations (H/w limits).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from routesag.errors import SolveError
from routesag.pipeline import Stage

#: Relative rounding allowance before a limit counts as exceeded.
TOLERANCE = 1e-9
#: Bisection stops when the bracket is this small relative to the tension.
DESIGN_RTOL = 1e-10

EXCEEDANCE_COLUMNS = ["section_id", "load_case", "condition", "limit", "applies_to", "tension_n", "percent_rts",
                      "max_percent_rts", "catenary_m", "max_catenary_m", "utilisation"]


class CheckTensionLimits(Stage):
    name = "check_tension_limits"
    requires = ("project", "tensions")
    provides = ("tension_exceedances",)
    description = "compare every load case's tension with the [[limits]] entries; list the limits exceeded"

    def run(self, data, ctx):
        checks = limit_checks(data["tensions"], data["project"].limits)
        ctx.notes["tension_limits_checked"] = len(checks)
        exceeded = checks[checks["utilisation"] > 1.0 + TOLERANCE]
        return {"tension_exceedances": exceeded.reset_index(drop=True)}


def utilisation(limit, horizontal_n, support_n, catenary_m, rated_strength_n):
    """Largest ratio of value to allowed value over the limit's criteria (> 1: exceeded).

    Parameters
    ----------
    limit : routesag.project.TensionLimit
    horizontal_n : float or array
        Horizontal tension [N].
    support_n : float or array
        Largest support tension [N].
    catenary_m : float or array
        Catenary constant H/w [m].
    rated_strength_n : float or array
        Rated tensile strength [N].

    Returns
    -------
    float or array
        Utilisation [-].
    """
    ratio = np.zeros_like(np.asarray(horizontal_n, dtype=float))
    if limit.max_percent_rts is not None:
        tension = support_n if limit.applies_to == "support" else horizontal_n
        ratio = np.maximum(ratio, np.asarray(tension) / (limit.max_percent_rts / 100.0 * rated_strength_n))
    if limit.max_catenary_m is not None:
        ratio = np.maximum(ratio, np.asarray(catenary_m) / limit.max_catenary_m)
    return ratio[()] if ratio.ndim == 0 else ratio


def limit_checks(tensions: pd.DataFrame, limits) -> pd.DataFrame:
    """One row per limit and tension row (section, and wire where present) of its load case."""
    frames = []
    for limit in limits:
        rows = tensions[tensions["load_case"] == limit.load_case]
        tension = rows["max_support_tension_n" if limit.applies_to == "support" else "horizontal_tension_n"]
        ids = [c for c in ("section_id", "wire") if c in rows.columns]
        frames.append(rows[ids + ["load_case", "condition"]].assign(
            limit=limit.describe(), applies_to=limit.applies_to, tension_n=tension,
            percent_rts=100.0 * tension / rows["rated_strength_n"],
            max_percent_rts=limit.max_percent_rts, catenary_m=rows["catenary_m"],
            max_catenary_m=limit.max_catenary_m,
            utilisation=utilisation(limit, rows["horizontal_tension_n"].to_numpy(),
                                    rows["max_support_tension_n"].to_numpy(), rows["catenary_m"].to_numpy(),
                                    rows["rated_strength_n"].to_numpy())))
    if not frames:
        return _empty_checks()
    checks = pd.concat(frames, ignore_index=True)
    return checks.astype({"max_percent_rts": float, "max_catenary_m": float})


def _empty_checks() -> pd.DataFrame:
    text = {"section_id", "load_case", "condition", "limit", "applies_to"}
    return pd.DataFrame({c: pd.Series(dtype=object if c in text else float) for c in EXCEEDANCE_COLUMNS})


@dataclass(frozen=True)
class Design:
    """The design stringing tension of a section and the limit that sets it."""

    tension_n: float
    governing_case: str
    governing_limit: str
    utilisation: float


def design_stringing_tension(solve, limits, rated_strength_n, lowest_n, highest_n, where) -> Design:
    """Largest stringing tension in ``[lowest_n, highest_n]`` that exceeds no limit.

    Parameters
    ----------
    solve : callable
        ``solve(stringing_tension_n, case_names)`` -> dict of case name to a
        state with ``horizontal_tension_n``, ``max_support_tension_n`` and
        ``catenary_m``.
    limits : list of routesag.project.TensionLimit
    rated_strength_n : float
        Rated tensile strength [N].
    lowest_n, highest_n : float
        Search bracket for the stringing tension [N].
    where : str
        The section, for messages.

    Raises
    ------
    routesag.errors.SolveError
        A limit is exceeded even at ``lowest_n``, or none binds below ``highest_n``.
    """
    names = {limit.load_case for limit in limits}

    def worst(tension_n):
        """(utilisation, limit) of the most used limit at this stringing tension."""
        states = solve(tension_n, names)
        uses = [(_state_utilisation(limit, states[limit.load_case], rated_strength_n), limit) for limit in limits]
        return max(uses, key=lambda pair: pair[0])

    low_use, low_limit = worst(lowest_n)
    if low_use > 1.0:
        raise SolveError(f"{where}: the tension limits cannot be met: even a slack stringing tension of "
                         f"{lowest_n / 1e3:.2f} kN gives {100 * low_use:.0f} % of the limit "
                         f"{low_limit.describe()} in load case {low_limit.load_case!r}")
    if worst(highest_n)[0] <= 1.0:
        raise SolveError(f"{where}: no tension limit binds below the rated strength "
                         f"{rated_strength_n / 1e3:.1f} kN; add a limit on a loaded or everyday load case")
    low, high = lowest_n, highest_n
    while high - low > DESIGN_RTOL * high:
        middle = 0.5 * (low + high)
        if worst(middle)[0] > 1.0:
            high = middle
        else:
            low = middle
    use, limit = worst(low)
    return Design(low, limit.load_case, limit.describe(), use)


def _state_utilisation(limit, state, rated_strength_n) -> float:
    return float(utilisation(limit, state.horizontal_tension_n, state.max_support_tension_n, state.catenary_m,
                             rated_strength_n))
