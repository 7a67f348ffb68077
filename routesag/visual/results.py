"""A finished GeoPackage read back for the report: layers, run_info and per-span profiles."""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import functools
import json

import numpy as np
import pandas as pd
import pyogrio
import shapely

from routesag.errors import DataError
from routesag.io.gpkg import read_layer
from routesag.io.hashing import sha256_file

LAYERS = ("structures", "spans", "sections", "conductors", "clearance_violations", "hotspots",
          "unknown_stretches", "tension_exceedances", "run_info")


@dataclass
class Results:
    path: Path
    layers: dict
    run_info: dict

    def __getitem__(self, name):
        return self.layers[name]

    def raster_path(self, key: str) -> Path | None:
        """The input file named in run_info (``terrain``, ``surface``, ``crossings``) if it is still there."""
        value = self.run_info.get(f"input.{key}")
        return Path(value) if value and Path(value).is_file() else None

    def case_order(self) -> list[str]:
        return list(dict.fromkeys(self["conductors"]["load_case"].astype(str)))

    def input_settings(self) -> dict:
        return json.loads(self.run_info.get("param.inputs", "{}"))

    def unchanged_input(self, key: str) -> Path | None:
        """The input file ``key`` when it is still there with the SHA-256 the run recorded, else None."""
        path = self.raster_path(key)
        recorded = self.run_info.get(f"input.{key}.sha256")
        return path if path is not None and recorded and sha256_file(path) == recorded else None

    @functools.cached_property
    def crossing_areas(self):
        """The run's crossing areas (category, required_m after the adder); "none" when the run had no crossings
        file; None when they cannot be had.

        They come from the crossings file and project file the run named, and only when both are unchanged
        (same SHA-256): then the areas are exactly those the clearances were checked against.
        """
        if self.run_info.get("input.crossings") is None:
            return "none"
        project_file, crossings_file = self.unchanged_input("project"), self.unchanged_input("crossings")
        if project_file is None or crossings_file is None:
            return None
        import pyproj

        from routesag.errors import RoutesagError
        from routesag.io.crossings import check_crossings, read_crossings_file
        from routesag.project import load_project

        try:
            project = load_project(project_file)
            raw = read_crossings_file(crossings_file, project.crossings_layer)
            return check_crossings(raw, crossings_file, project.clearance, pyproj.CRS(self.run_info["note.crs"]),
                                   project.structures_crs, layer=project.crossings_layer,
                                   fields=project.settings.get("inputs", {}).get("fields"))
        except (RoutesagError, KeyError):
            return None

    def raster_note(self, key: str) -> str | None:
        """Why the ``key`` raster's ground line is missing or may not match the run, or None."""
        path = self.raster_path(key)
        if path is None:
            named = self.run_info.get(f"input.{key}")
            return f"{key} raster {named} not found: not drawn" if named else None
        recorded = self.run_info.get(f"input.{key}.sha256")
        if recorded and sha256_file(path) != recorded:
            return f"{key} raster {path} changed since the run (SHA-256 differs): drawn from the current file"
        return None


def read_results(path) -> Results:
    """Read the layers a report needs; a file that is not a routesag GeoPackage is a DataError."""
    path = Path(path)
    if not path.is_file():
        raise DataError(f"results file {path}: not found")
    try:
        present = {name for name, _ in pyogrio.list_layers(path)}
    except Exception as exc:
        raise DataError(f"results file {path}: cannot be read as a GeoPackage ({exc})") from exc
    missing = [name for name in LAYERS if name not in present]
    if missing:
        raise DataError(f"results file {path}: missing layer(s) {', '.join(missing)}; "
                        "is it a routesag output?")
    layers = {name: read_layer(path, name) for name in LAYERS}
    info = layers["run_info"]
    if not {"key", "value"} <= set(info.columns) or "routesag_version" not in set(info["key"].astype(str)):
        raise DataError(f"results file {path}: layer run_info has no routesag_version key; "
                        "is it a routesag output?")
    return Results(path, layers, dict(zip(info["key"].astype(str), info["value"].astype(str), strict=True)))


def stations_along(span_row, xyz: np.ndarray) -> np.ndarray:
    """Horizontal distance [m] of wire vertices along the span chord from the from-support."""
    start, end = np.asarray(span_row.geometry.coords)[[0, -1], :2]
    direction = (end - start) / np.linalg.norm(end - start)
    return (xyz[:, :2] - start) @ direction


def wire_coords(geometry) -> np.ndarray:
    return np.asarray(shapely.get_coordinates(geometry, include_z=True))


def sample_raster(results: Results, key: str, xy: np.ndarray) -> np.ndarray | None:
    """Raster ``key`` (``terrain``, ``surface``) at points [m], as the run sampled it; None without the file.

    Uses the run's own sampler (windowed bilinear reads, the raster's CRS and the run's vertical unit),
    so the drawn ground line is the one the clearances were computed against; NaN on nodata.
    """
    path = results.raster_path(key)
    if path is None or len(xy) == 0:
        return None
    from routesag.io.terrain import TerrainSampler

    inputs = results.input_settings()
    crs = results.run_info.get("note.crs")
    assigned = inputs.get("terrain_crs") if key == "terrain" else None
    with TerrainSampler(path, z_units=inputs.get("terrain_z_units", "m"), crs=assigned) as raster:
        return raster.sample(xy[:, 0], xy[:, 1], crs=crs)


def span_violations(results: Results, span_id) -> pd.DataFrame:
    frame = results["clearance_violations"]
    return frame[frame["span_id"].astype(str) == str(span_id)]


def spans_of_interest(results: Results) -> list[str]:
    """Spans with a violation, a hotspot or an unknown stretch, in span order."""
    ids = set(results["clearance_violations"]["span_id"].astype(str))
    ids |= set(results["unknown_stretches"]["span_id"].astype(str))
    ids |= set(results["hotspots"]["span_id"].astype(str))
    return [s for s in results["spans"]["span_id"].astype(str) if s in ids]
