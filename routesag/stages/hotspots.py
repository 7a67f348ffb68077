"""Stage: merge violations that lie close together into ranked hotspots.

Violations of every wire, load case and category whose points lie within
``[clearance] hotspot_merge_m`` of each other in plan are merged by single
linkage (a chain of close violations is one hotspot). Each hotspot is
represented by its worst violation (largest deficit), which gives its
governing load case, wire and category; hotspots are ranked by that deficit.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from routesag.pipeline import Stage

#: Identity columns listed per hotspot when present in the violations: column -> list column.
LISTED = {"load_case": "load_cases", "wire": "wires", "category": "categories", "span_id": "span_ids"}
HOTSPOT_COLUMNS = ["rank", "deficit_m", "clearance_m", "required_m", "load_case", "category", "span_id",
                   "station_m", "n_violations", "load_cases", "categories", "span_ids", "x", "y", "z"]


class FindHotspots(Stage):
    name = "find_hotspots"
    requires = ("project", "violations")
    provides = ("hotspots",)
    description = "merge violations of all wires and load cases within hotspot_merge_m; rank by worst deficit"

    def run(self, data, ctx):
        merge_m = data["project"].clearance.hotspot_merge_m
        ctx.notes["hotspot_rule"] = (f"violations within {merge_m:g} m of each other in plan are one hotspot "
                                     "(single linkage); the worst deficit governs; rank 1 is the worst")
        return {"hotspots": merge_hotspots(data["violations"], merge_m)}


def cluster_labels(x, y, merge_m) -> np.ndarray:
    """Single-linkage groups of plan points: chains of neighbours within ``merge_m`` [m] share a label."""
    points = np.column_stack([x, y])
    pairs = cKDTree(points).query_pairs(merge_m, output_type="ndarray")
    adjacency = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(len(points),) * 2)
    return connected_components(adjacency, directed=False)[1]


def merge_hotspots(violations: pd.DataFrame, merge_m: float) -> pd.DataFrame:
    """One row per hotspot, worst first.

    Parameters
    ----------
    violations : pandas.DataFrame
        Violation records with x, y, conductor_z_m, deficit_m, clearance_m,
        required_m, load_case, category, span_id, station_m and, when present, wire.
    merge_m : float
        Merge distance in plan [m].

    Returns
    -------
    pandas.DataFrame
        The governing violation's values, ``n_violations``, the distinct
        load cases, categories, spans (and wires) joined by ", ", and ``rank``.
    """
    listed = {c: name for c, name in LISTED.items() if c in violations.columns}
    columns = HOTSPOT_COLUMNS + (["wire", "wires"] if "wire" in listed else [])
    if len(violations) == 0:
        return pd.DataFrame(columns=columns)
    v = violations.reset_index(drop=True).assign(
        group=cluster_labels(violations["x"].to_numpy(float), violations["y"].to_numpy(float), merge_m))
    order = [c for c in ("deficit_m", "span_id", "load_case", "station_m") if c in v.columns]
    worst_first = v.sort_values(order, ascending=[c != "deficit_m" for c in order], kind="stable")
    governing = worst_first.drop_duplicates("group").set_index("group")
    grouped = worst_first.groupby("group")
    lists = {name: distinct_in_order(worst_first, c) for c, name in listed.items()}
    hotspots = governing.assign(n_violations=grouped.size(), z=governing["conductor_z_m"], **lists)
    hotspots = hotspots.reset_index(drop=True)
    hotspots["rank"] = np.arange(1, len(hotspots) + 1)
    return hotspots.reindex(columns=columns)


def distinct_in_order(frame: pd.DataFrame, column: str) -> pd.Series:
    """Per ``group``, the distinct values of ``column`` as text, in the frame's order, joined by ", "."""
    seen: dict = {}
    for group, value in zip(frame["group"].tolist(), frame[column].tolist()):
        seen.setdefault(group, {})[str(value)] = None  # a dict keeps the first-seen order
    groups = sorted(seen)
    return pd.Series([", ".join(seen[g]) for g in groups], index=pd.Index(groups, name="group"), name=column)
