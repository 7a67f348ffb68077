"""Build (or reuse) an invented long-line survey for benchmarks.

A synthetic line of about ``--km`` kilometres: spans of 250-450 m (seeded
random), a strain structure every 12 spans, gentle line angles, three phase
wires and four load cases (hot, cold, ice, wind) as in the sample project; a
1-band float32 terrain of ``--res`` metre cells, deflate-compressed and tiled,
written window by window (no whole raster is ever held in memory); a
structures GeoPackage and a project TOML.

``--width-factor F`` makes the raster F times wider across the line (same
line, same terrain under it), to show that a run's cost does not grow with the
raster's extent.

Usage::

    python scripts/make_large_survey.py --km 10 --res 1 --out /tmp/routesag-bench/km10
    python scripts/make_large_survey.py --km 100 --res 1 --width-factor 3 --out /tmp/routesag-bench/km100w3

A folder that already holds a case built with the same parameters is reused.
Everything is invented: no real line, place or operator.
"""
from __future__ import annotations

import argparse
import json
import sys
import textwrap
from pathlib import Path

import numpy as np

#: Parameters of the case; a folder is reused only when its stamp matches.
STAMP = "case.json"
CRS = "EPSG:32633"
X_START, Y_MID = 400000.0, 5500000.0   # invented location in a UTM zone
SPAN_RANGE_M = (250.0, 450.0)
SPANS_PER_SECTION = 12
#: Half the raster width across the line at width factor 1 [m]; the line wanders at most MEANDER_M from its axis.
HALF_WIDTH_M = 500.0
MEANDER_M = 150.0
BLOCK = 256
#: Rows of blocks written per step: bounds the writer's memory to a strip of the raster.
STRIP_BLOCKS = 4

PROJECT = """
[inputs]
structures = "structures.gpkg"
structures_layer = "structures"
terrain = "terrain.tif"

[line]
attach_height_m = 24.0

[conductor]
name = "Drake"

{phases}
{load_cases}
[clearance]
ground_m = 7.5
station_m = 1.0

[output]
path = "results.gpkg"
"""


def demo_block(first: str, stop: str) -> str:
    """A part of the sample project's TOML, from ``first`` up to ``stop``: its stringing and three phases, its
    insulator strings and four load cases (hot, cold, ice, wind)."""
    from routesag.sample import PROJECT_TOML

    return PROJECT_TOML[PROJECT_TOML.index(first):PROJECT_TOML.index(stop)].rstrip() + "\n"


def line_axis_y(x_m):
    """The line's wandering axis: plan y of the route at easting x [m]."""
    t = (np.asarray(x_m, dtype=float) - X_START) / 1000.0
    return Y_MID + MEANDER_M * np.sin(t / 7.0) * np.cos(t / 23.0)


def terrain_z(x_m, y_m):
    """Invented rolling terrain [m]: long hills, valleys, short-wave relief and centimetre roughness.

    The roughness (a hash of the position, so any window gives the same cells) stands for LiDAR ground noise:
    without it deflate would squeeze a smooth synthetic surface far better, and decode it far faster, than a
    real DTM.
    """
    x = np.asarray(x_m, dtype=np.float64) - X_START
    y = np.asarray(y_m, dtype=np.float64) - Y_MID
    z = (300.0 + 25.0 * np.sin(x / 1900.0) + 12.0 * np.sin(x / 610.0 + y / 830.0)
         + 6.0 * np.cos(y / 270.0 - x / 1300.0) + 0.8 * np.sin(x / 37.0) * np.cos(y / 53.0))
    noise = np.modf(np.abs(np.sin(x * 12.9898 + y * 78.233)) * 43758.5453)[0]
    z = z + 0.05 * (noise - 0.5)
    return z.astype(np.float32)


def structure_positions(km: float, seed: int = 8) -> np.ndarray:
    """(n, 2) structure plan points along the axis, spans drawn from SPAN_RANGE_M."""
    rng = np.random.default_rng(seed)
    xs = [X_START]
    while xs[-1] - X_START < km * 1000.0:
        xs.append(xs[-1] + rng.uniform(*SPAN_RANGE_M) * 0.995)  # the axis is nearly straight: x step ~ span
    xs = np.asarray(xs)
    return np.column_stack([xs, line_axis_y(xs)])


def write_structures(path: Path, xy: np.ndarray) -> None:
    import geopandas as gpd
    import shapely

    n = len(xy)
    kinds = ["strain" if i % SPANS_PER_SECTION == 0 or i == n - 1 else "suspension" for i in range(n)]
    frame = gpd.GeoDataFrame({"structure_id": [f"T{i + 1:05d}" for i in range(n)], "seq": np.arange(1, n + 1),
                              "line_id": "L1", "kind": kinds, "insulator_m": [0.0 if k == "strain" else 2.0
                                                                            for k in kinds]},
                             geometry=shapely.points(xy), crs=CRS)
    frame.to_file(path, layer="structures", driver="GPKG")


def write_terrain(path: Path, xy: np.ndarray, res_m: float, width_factor: float) -> dict:
    """The DTM as a tiled deflate GeoTIFF, written strip by strip of blocks."""
    import rasterio
    from rasterio.transform import from_origin
    from rasterio.windows import Window

    margin = 600.0
    left, right = xy[:, 0].min() - margin, xy[:, 0].max() + margin
    half = HALF_WIDTH_M * width_factor
    top = Y_MID + half
    width, height = int(np.ceil((right - left) / res_m)), int(np.ceil(2 * half / res_m))
    profile = dict(driver="GTiff", width=width, height=height, count=1, dtype="float32", crs=CRS,
                   transform=from_origin(left, top, res_m, res_m), nodata=-9999.0, tiled=True,
                   blockxsize=BLOCK, blockysize=BLOCK, compress="deflate", BIGTIFF="IF_SAFER")
    strip_rows = BLOCK * STRIP_BLOCKS
    with rasterio.open(path, "w", **profile) as dst:
        for row0 in range(0, height, strip_rows):
            rows = min(strip_rows, height - row0)
            y = top - (row0 + np.arange(rows) + 0.5) * res_m
            for col0 in range(0, width, strip_rows * 4):
                cols = min(strip_rows * 4, width - col0)
                x = left + (col0 + np.arange(cols) + 0.5) * res_m
                dst.write(terrain_z(x[None, :], y[:, None]), 1, window=Window(col0, row0, cols, rows))
    return {"width": width, "height": height}


def build(out: Path, km: float, res_m: float, width_factor: float = 1.0) -> Path:
    """Build the case in ``out`` (or reuse it); returns the project file."""
    params = {"km": km, "res_m": res_m, "width_factor": width_factor, "version": 2}
    project = out / "project.toml"
    stamp = out / STAMP
    if stamp.is_file() and project.is_file() and json.loads(stamp.read_text()).get("params") == params:
        return project
    out.mkdir(parents=True, exist_ok=True)
    stamp.unlink(missing_ok=True)
    xy = structure_positions(km)
    write_structures(out / "structures.gpkg", xy)
    shape = write_terrain(out / "terrain.tif", xy, res_m, width_factor)
    project.write_text(textwrap.dedent(PROJECT).lstrip().format(
        phases=demo_block("[stringing]", '[[wires]]\nname = "earth"'), load_cases=demo_block("[insulators]", "[[limits]]")))
    span_m = np.hypot(*np.diff(xy, axis=0).T)
    stamp.write_text(json.dumps({"params": params, "structures": len(xy), "spans": len(span_m),
                                 "line_km": round(float(span_m.sum()) / 1000.0, 3), "raster": shape}, indent=1))
    return project


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--km", type=float, required=True, help="line length [km]")
    parser.add_argument("--res", type=float, default=1.0, help="terrain cell size [m]")
    parser.add_argument("--width-factor", type=float, default=1.0, help="raster width across the line, x 1 km")
    parser.add_argument("--out", type=Path, required=True, help="folder of the case")
    args = parser.parse_args(argv)
    project = build(args.out, args.km, args.res, args.width_factor)
    print(project)
    print((args.out / STAMP).read_text())
    return 0


if __name__ == "__main__":
    sys.exit(main())
