"""Benchmark: a long synthetic line over a large terrain raster.

Measures, in one run and as ratios against baselines measured in the same run:

- time: the whole ``routesag.run`` against one full read of the terrain raster
  (what a tool that loads the whole raster would pay before doing any work);
- memory: peak resident memory of a process running the pipeline against a
  process that only imports the same libraries, compared with the raster's
  size in memory (windowed reads must keep the difference far below it).

Usage: python scripts/bench_pipeline.py [--spans 100] [--res 1.0] [--margin 1000] [--repeat 3]
Everything is generated in a temporary folder; nothing is written elsewhere.
"""
from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
from tests.conftest import DRAKE_TOML  # noqa: E402  (conductor properties with their cited source)


def make_case(folder: Path, spans: int, res: float, margin: float = 1000.0) -> Path:
    import geopandas as gpd
    import rasterio
    import shapely
    from rasterio.transform import from_origin

    span_m = 300.0
    length = spans * span_m
    width = 2 * margin
    cols, rows = int((length + 2 * margin) / res), int(width / res)
    x0, y0 = 500000.0 - margin, 5600000.0 + margin
    profile = dict(driver="GTiff", width=cols, height=rows, count=1, dtype="float32", crs="EPSG:32633",
                   transform=from_origin(x0, y0, res, res), nodata=-9999.0, tiled=True, blockxsize=512,
                   blockysize=512, compress="deflate")
    with rasterio.open(folder / "terrain.tif", "w", **profile) as dst:
        for _, window in dst.block_windows(1):
            r, c = np.mgrid[window.row_off:window.row_off + window.height, window.col_off:window.col_off + window.width]
            x = x0 + (c + 0.5) * res
            z = 200.0 + 15.0 * np.sin(x / 700.0) + 0.002 * r
            dst.write(z.astype("float32"), 1, window=window)
    xs = 500000.0 + np.arange(spans + 1) * span_m
    kinds = ["strain" if i % 10 == 0 else "suspension" for i in range(spans + 1)]
    gdf = gpd.GeoDataFrame({"structure_id": [f"B{i:04d}" for i in range(spans + 1)],
                            "seq": np.arange(spans + 1), "kind": kinds},
                           geometry=shapely.points(np.c_[xs, np.full(spans + 1, 5600000.0)]), crs="EPSG:32633")
    gdf.to_file(folder / "structures.gpkg", layer="structures")
    project = folder / "project.toml"
    project.write_text(textwrap.dedent("""
        [inputs]
        structures = "structures.gpkg"
        terrain = "terrain.tif"
        [line]
        attach_height_m = 22.0
        """) + DRAKE_TOML + textwrap.dedent("""
        [stringing]
        temperature_c = 15.0
        horizontal_tension_kn = 28.0
        [[load_cases]]
        name = "hot"
        temperature_c = 90.0
        [[load_cases]]
        name = "ice"
        temperature_c = 0.0
        ice_mm = 12.5
        [[load_cases]]
        name = "wind"
        temperature_c = 15.0
        wind_pa = 430.0
        [clearance]
        ground_m = 7.5
        station_m = 1.0
        [output]
        path = "out.gpkg"
        """))
    return project


CHILD_RUN = """
import resource, sys, time, json
import routesag
t = time.perf_counter()
r = routesag.run(sys.argv[1])
print(json.dumps({"seconds": time.perf_counter() - t,
                  "peak_kb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss,
                  "stations": int(sum(len(g.coords) for g in r["conductors"].geometry))}))
"""

CHILD_FULL_READ = """
import resource, sys, time, json
import routesag.api, rasterio
t = time.perf_counter()
with rasterio.open(sys.argv[1]) as src:
    z = src.read(1, masked=True)
print(json.dumps({"seconds": time.perf_counter() - t,
                  "peak_kb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, "bytes": int(z.nbytes)}))
"""

CHILD_IMPORTS = """
import resource, json
import routesag.api, rasterio, geopandas
print(json.dumps({"peak_kb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss}))
"""


def child(code: str, *args) -> dict:
    out = subprocess.run([sys.executable, "-c", code, *map(str, args)], check=True, capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--spans", type=int, default=100)
    parser.add_argument("--res", type=float, default=1.0, help="terrain pixel size [m]")
    parser.add_argument("--margin", type=float, default=1000.0,
                        help="terrain beyond the line on each side [m] (LiDAR tiles are wider than the corridor)")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        t = time.perf_counter()
        project = make_case(folder, args.spans, args.res, args.margin)
        print(f"case: {args.spans} spans, raster at {args.res} m, {args.margin:.0f} m each side, generated in {time.perf_counter() - t:.1f} s")
        base = child(CHILD_IMPORTS)
        runs = [child(CHILD_RUN, project) for _ in range(args.repeat)]
        reads = [child(CHILD_FULL_READ, folder / "terrain.tif") for _ in range(args.repeat)]
    run_s = float(np.median([r["seconds"] for r in runs]))
    read_s = float(np.median([r["seconds"] for r in reads]))
    raster_mb = reads[0]["bytes"] / 2**20
    extra_mb = (max(r["peak_kb"] for r in runs) - base["peak_kb"]) / 1024
    print(f"stations checked per run     : {runs[0]['stations']}")
    print(f"time  run / full raster read : {run_s / read_s:.2f}  (median of {args.repeat})")
    print(f"memory above imports, run    : {extra_mb:.0f} MB")
    print(f"raster size in memory        : {raster_mb:.0f} MB")
    print(f"memory ratio run / raster    : {extra_mb / raster_mb:.2f}  (windowed reads keep this well below 1)")


if __name__ == "__main__":
    main()
