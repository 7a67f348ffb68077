"""A finished GeoPackage read back for the report: layers, run_info and per-span profiles."""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio
import shapely

from routesag.errors import DataError
from routesag.io.gpkg import read_layer

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
        """The input raster named in run_info (``terrain``, ``surface``) if the file is still there."""
        value = self.run_info.get(f"input.{key}")
        return Path(value) if value and Path(value).is_file() else None

    def case_order(self) -> list[str]:
        return list(dict.fromkeys(self["conductors"]["load_case"].astype(str)))


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
    return Results(path, layers, dict(zip(info["key"].astype(str), info["value"].astype(str), strict=True)))


def stations_along(span_row, xyz: np.ndarray) -> np.ndarray:
    """Horizontal distance [m] of wire vertices along the span chord from the from-support."""
    start, end = np.asarray(span_row.geometry.coords)[[0, -1], :2]
    direction = (end - start) / np.linalg.norm(end - start)
    return (xyz[:, :2] - start) @ direction


def wire_coords(geometry) -> np.ndarray:
    return np.asarray(shapely.get_coordinates(geometry, include_z=True))


def sample_raster(path: Path | None, xy: np.ndarray) -> np.ndarray | None:
    """Raster values at points (nearest cell, read through rasterio's windowed sampler); NaN on nodata."""
    if path is None or len(xy) == 0:
        return None
    import rasterio

    with rasterio.open(path) as src:
        values = np.array([v[0] for v in src.sample(map(tuple, xy), masked=True)], dtype=object)
    return np.array([np.nan if np.ma.is_masked(v) else float(v) for v in values])


def span_violations(results: Results, span_id) -> pd.DataFrame:
    frame = results["clearance_violations"]
    return frame[frame["span_id"].astype(str) == str(span_id)]


def spans_of_interest(results: Results) -> list[str]:
    """Spans with a violation, a hotspot or an unknown stretch, in span order."""
    ids = set(results["clearance_violations"]["span_id"].astype(str))
    ids |= set(results["unknown_stretches"]["span_id"].astype(str))
    ids |= set(results["hotspots"]["span_id"].astype(str))
    return [s for s in results["spans"]["span_id"].astype(str) if s in ids]
