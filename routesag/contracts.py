"""What each named dataset must look like, checked as every stage hands it over.

A stage (built-in or a plugin replacing one) that returns a dataset of the
wrong type, or per-station arrays of the wrong length or for the wrong
profiles, would otherwise be broadcast by numpy into results that look fine:
a length-1 ``ground`` array makes every station "clear" by the same amount.
:func:`check_outputs` refuses such a result, naming the stage and the dataset.
"""
from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Callable

import numpy as np
import pandas as pd

from routesag.errors import PipelineError
from routesag.profiles import Profiles, SurfaceProfile

#: Datasets that are one table each.
TABLES = ("structures", "spans", "sections", "attachments", "wire_spans", "tensions", "structure_loads",
          "clearance", "violations", "hotspots", "tension_exceedances", "sag_table", "unknown_stretches",
          "crossings")
#: Most profile keys named in one message.
_SHOWN = 3


def check_outputs(stage_name: str, result: Mapping[str, Any], data: Mapping[str, Any]) -> None:
    """Raise PipelineError when a dataset in ``result`` breaks its contract; ``data`` holds what came before."""
    problems = []
    for name, value in result.items():
        check = CONTRACTS.get(name)
        if check is not None:
            problems += [f"{name!r} {problem}" for problem in check(value, {**data, **result})]
    if problems:
        raise PipelineError(f"stage {stage_name!r} returned datasets that break their contract: "
                            + "; ".join(problems) + " (a plugin stage must return what the built-in one does)")


def _table(value, data) -> list[str]:
    return [] if isinstance(value, pd.DataFrame) else [f"must be a DataFrame, not {type(value).__name__}"]


def _profiles(value, data) -> list[str]:
    return [] if isinstance(value, Profiles) else [f"must be a Profiles collection, not {type(value).__name__}"]


def _per_station(check_entry: Callable[[Any, int], str | None], none_ok=False):
    """A contract for a mapping with one entry per conductor profile, checked against each profile's stations."""
    def check(value, data) -> list[str]:
        if not isinstance(value, Mapping):
            return [f"must be a mapping from profile key to per-station values, not {type(value).__name__}"]
        profiles = data.get("conductors")
        if not isinstance(profiles, Profiles):
            return []
        problems, known = [], set(profiles.keys())
        missing = [k for k in profiles.keys() if k not in value]
        if missing:
            problems.append(f"has no entry for {len(missing)} profile(s), e.g. {_keys(missing)}")
        extra = [k for k in value if k not in known]
        if extra:
            problems.append(f"has entries for {len(extra)} unknown profile(s), e.g. {_keys(extra)}")
        wrong = []
        for profile in profiles:
            entry = value.get(profile.key)
            if entry is None and (none_ok or profile.key not in value):
                continue
            problem = check_entry(entry, len(profile.xyz))
            if problem:
                wrong.append(f"{_keys([profile.key])}: {problem}")
        if wrong:
            problems.append(f"has wrong values for {len(wrong)} profile(s): " + "; ".join(wrong[:_SHOWN]))
        return problems
    return check


def _array_problem(values, n: int, what="array") -> str | None:
    array = np.asarray(values)
    if array.ndim != 1 or len(array) != n:
        return f"{what} of shape {array.shape}, expected ({n},) (one value per station)"
    return None


def _ground_entry(values, n):
    if values is None:
        return "None, expected an array of elevations"
    problem = _array_problem(values, n)
    if problem is None and not np.issubdtype(np.asarray(values).dtype, np.number):
        return f"values of type {np.asarray(values).dtype}, expected numbers [m]"
    return problem


def _rules_entry(values, n):
    if not isinstance(values, tuple) or len(values) != 2:
        return "expected a (required_m, category) pair of arrays"
    return _array_problem(values[0], n, "required_m") or _array_problem(values[1], n, "category")


def _surface_entry(values, n):
    if not isinstance(values, SurfaceProfile):
        return f"{type(values).__name__}, expected a SurfaceProfile or None"
    for field in ("distance_m", "x", "y", "z", "unknown"):
        problem = _array_problem(getattr(values, field), n, field)
        if problem:
            return problem
    return None


def _keys(keys) -> str:
    return ", ".join("/".join(map(str, k)) if isinstance(k, tuple) else repr(k) for k in list(keys)[:_SHOWN])


CONTRACTS: dict[str, Callable[[Any, Mapping], list[str]]] = {
    **{name: _table for name in TABLES},
    "conductors": _profiles,
    "ground": _per_station(_ground_entry),
    "station_rules": _per_station(_rules_entry),
    "surface": _per_station(_surface_entry, none_ok=True),
}
