"""Stage: clearance of every station, violations and unknown stretches."""
from __future__ import annotations

import numpy as np
import pandas as pd

from routesag.pipeline import Stage


class CheckClearance(Stage):
    name = "check_clearance"
    requires = ("project", "conductors", "ground")
    provides = ("clearance", "violations")
    description = "vertical clearance per station against the required value; one violation per stretch"

    def run(self, data, ctx):
        required_m = data["project"].ground_clearance_m
        summaries, violations = [], []
        for profile, ground in zip(data["conductors"], data["ground"]):
            clearance = profile.xyz[:, 2] - ground
            summaries.append(summarise(profile, clearance, required_m))
            violations.extend(find_violations(profile, ground, clearance, required_m))
        return {"clearance": pd.DataFrame(summaries), "violations": pd.DataFrame(violations)}


def station_lengths(stations_m: np.ndarray) -> np.ndarray:
    """Length of conductor (horizontal) each station stands for: half the gap to each neighbour [m]."""
    edges = np.concatenate([[stations_m[0]], (stations_m[1:] + stations_m[:-1]) / 2.0, [stations_m[-1]]])
    return np.diff(edges)


def runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges [first, last] of each contiguous True stretch."""
    padded = np.concatenate([[False], mask, [False]]).astype(np.int8)
    change = np.flatnonzero(np.diff(padded))
    return [(int(a), int(b) - 1) for a, b in zip(change[::2], change[1::2])]


def summarise(profile, clearance: np.ndarray, required_m: float) -> dict:
    """Worst clearance and unknown length of one profile. Unknown stations never count as clear."""
    known = ~np.isnan(clearance)
    unknown_m = float(station_lengths(profile.stations_m)[~known].sum())
    if known.any():
        worst = int(np.nanargmin(clearance))
        min_clearance, at = float(clearance[worst]), float(profile.stations_m[worst])
    else:
        min_clearance = at = float("nan")
    if known.any() and min_clearance < required_m:
        status = "violation"
    elif not known.all():
        status = "unknown"
    else:
        status = "clear"
    return {"span_id": profile.span_id, "wire": profile.wire, "load_case": profile.load_case,
            "min_clearance_m": min_clearance,
            "min_clearance_station_m": at, "unknown_m": unknown_m, "required_m": required_m, "status": status}


def find_violations(profile, ground, clearance, required_m) -> list[dict]:
    """One record per contiguous stretch below the required clearance, at its worst station."""
    below = np.nan_to_num(clearance, nan=np.inf) < required_m
    records = []
    for first, last in runs(below):
        worst = first + int(np.argmin(clearance[first:last + 1]))
        x, y, z = profile.xyz[worst]
        records.append({
            "span_id": profile.span_id, "wire": profile.wire, "load_case": profile.load_case,
            "station_m": float(profile.stations_m[worst]), "start_m": float(profile.stations_m[first]),
            "end_m": float(profile.stations_m[last]), "x": float(x), "y": float(y),
            "conductor_z_m": float(z), "ground_z_m": float(ground[worst]),
            "clearance_m": float(clearance[worst]), "required_m": required_m,
            "deficit_m": float(required_m - clearance[worst]),
        })
    return records
