"""Benchmark routesag on a long invented line, as ratios against baselines measured in the same run.

Builds or reuses (scripts/make_large_survey.py) a 10 km case, a ``--km`` case and the ``--km`` case on a
raster three times wider, then prints one table and a final line of ratios:

- routesag end to end (``routesag.run``) with ``workers=1`` and ``workers=2`` against the I/O floor measured in
  this process: decoding once every raster block the corridor touches, plus writing the same LineString Z rows
  (the conductors layer) to a GeoPackage;
- against a naive loop of rasterio ``sample()`` calls, one per station (timed on a subset and scaled);
- ``--km`` km against 10 km (time);
- peak resident memory of a 10 km and a ``--km`` km run, each in its own process (``ru_maxrss``);
- the same run on the raster three times wider (the cost must not grow with the raster's extent).

Usage: python scripts/bench.py --km 100 [--res 1] [--repeat 1] [--cases /tmp/routesag-bench]
``--km 10`` is a quick check (the km ratio is then 1 by construction).
Timings are wall-clock; on a shared machine repeat (``--repeat 3``) and read the spread.
"""
from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
import make_large_survey  # noqa: E402

#: Half width of the corridor whose blocks the floor decodes: wire offset + blowout + interpolation margin [m].
CORRIDOR_HALF_M = 30.0
#: Stations timed with the naive loop before scaling to all stations.
NAIVE_SUBSET = 20_000
TARGETS = {"workers1/floor": 3.0, "workers2/floor": 1.5, "naive/workers1": 50.0, "km/10km": 10.5}


def timed(function, *args, **kwargs):
    start = time.perf_counter()
    value = function(*args, **kwargs)
    return time.perf_counter() - start, value


def run_routesag(project: Path, workers: int, out: Path) -> float:
    import routesag

    seconds, _ = timed(routesag.run, project, out=out, workers=workers, read_back=False)
    return seconds


def warm_up(project: Path, scratch: Path) -> None:
    """One untimed run, so the timed runs pay neither imports nor a cold file cache."""
    run_routesag(project, 1, scratch / "warm.gpkg")


def corridor_blocks(dataset, spans_xy: np.ndarray, half_m: float) -> list:
    """Block windows of the raster that a corridor of ``half_m`` around each span chord touches."""
    from rasterio.windows import Window

    inverse = ~dataset.transform
    block_rows, block_cols = dataset.block_shapes[0]
    touched = set()
    for (x0, y0), (x1, y1) in spans_xy:
        length = float(np.hypot(x1 - x0, y1 - y0))
        along = np.linspace(0.0, 1.0, max(int(length / (block_cols * dataset.res[0] / 4)) + 2, 2))
        nx, ny = (y1 - y0) / length, (x0 - x1) / length
        for side in np.linspace(-half_m, half_m, 5):
            xs, ys = x0 + (x1 - x0) * along + side * nx, y0 + (y1 - y0) * along + side * ny
            cols, rows = inverse * (xs, ys)
            for r, c in zip(np.asarray(rows) // block_rows, np.asarray(cols) // block_cols):
                if 0 <= r * block_rows < dataset.height and 0 <= c * block_cols < dataset.width:
                    touched.add((int(r), int(c)))
    return [Window(c * block_cols, r * block_rows, min(block_cols, dataset.width - c * block_cols),
                   min(block_rows, dataset.height - r * block_rows)) for r, c in sorted(touched)]


def io_floor(project: Path, result_gpkg: Path, scratch: Path) -> dict:
    """Seconds to decode each corridor block once and to write the conductors' LineString Z rows."""
    import pyogrio
    import rasterio

    spans = pyogrio.read_dataframe(result_gpkg, layer="spans")
    conductors = pyogrio.read_dataframe(result_gpkg, layer="conductors")
    chords = np.array([np.asarray(g.coords)[[0, -1], :2] for g in spans.geometry])
    with rasterio.Env(GDAL_CACHEMAX=64 * 1024 * 1024), rasterio.open(project.parent / "terrain.tif") as ds:
        blocks = corridor_blocks(ds, chords, CORRIDOR_HALF_M)
        decode_s, _ = timed(lambda: [ds.read(1, window=w) for w in blocks])
    target = scratch / "floor.gpkg"
    target.unlink(missing_ok=True)
    write_s, _ = timed(pyogrio.write_dataframe, conductors, target, layer="conductors", driver="GPKG",
                       geometry_type="LineString Z")
    stations = sum(len(g.coords) for g in conductors.geometry)
    return {"decode_s": decode_s, "write_s": write_s, "floor_s": decode_s + write_s, "blocks": len(blocks),
            "stations": stations, "rows": len(conductors)}


def naive_seconds(project: Path, result_gpkg: Path) -> tuple[float, int]:
    """A per-station rasterio ``sample()`` loop over the first NAIVE_SUBSET stations, scaled to all of them."""
    import pyogrio
    import rasterio

    conductors = pyogrio.read_dataframe(result_gpkg, layer="conductors")
    xyz = np.concatenate([np.asarray(g.coords) for g in conductors.geometry])
    subset = xyz[:NAIVE_SUBSET]
    with rasterio.Env(GDAL_CACHEMAX=64 * 1024 * 1024), rasterio.open(project.parent / "terrain.tif") as ds:
        def loop():
            clearances = []
            for x, y, z in subset:
                ground = next(ds.sample([(x, y)]))[0]
                clearances.append(z - ground)
            return clearances
        seconds, _ = timed(loop)
    return seconds * len(xyz) / len(subset), len(subset)


def peak_rss_mb(project: Path, out: Path) -> float:
    """Peak resident memory [MB] of a fresh process that runs the project with one worker.

    Read from the child's own ``VmHWM``: ``ru_maxrss`` survives ``exec`` on Linux, so a child started from this
    (large) process would report this process's peak instead of its own.
    """
    code = ("import sys, routesag; routesag.run(sys.argv[1], out=sys.argv[2], workers=1, read_back=False); "
            "print(next(l.split()[1] for l in open('/proc/self/status') if l.startswith('VmHWM:')))")
    done = subprocess.run([sys.executable, "-c", code, str(project), str(out)], capture_output=True, text=True,
                          check=True, env={**os.environ, "PYTHONWARNINGS": "ignore"})
    return int(done.stdout.strip().splitlines()[-1]) / 1024.0  # kB


def spread(values: list[float]) -> str:
    if len(values) == 1:
        return f"{values[0]:.2f}"
    return f"{statistics.median(values):.2f} ({min(values):.2f}-{max(values):.2f})"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--km", type=float, default=100.0)
    parser.add_argument("--res", type=float, default=1.0)
    parser.add_argument("--repeat", type=int, default=1, help="timed repetitions (medians and spread)")
    parser.add_argument("--cases", type=Path, default=Path("/tmp/routesag-bench"))
    args = parser.parse_args(argv)

    def case(km, width=1.0):
        name = f"km{km:g}-res{args.res:g}" + (f"-w{width:g}" if width != 1.0 else "")
        return make_large_survey.build(args.cases / name, km, args.res, width)

    small, large, wide = case(10.0), case(args.km), case(args.km, 3.0)
    scratch = args.cases / "scratch"
    scratch.mkdir(parents=True, exist_ok=True)
    warm_up(small, scratch)
    times: dict[str, list[float]] = {k: [] for k in ("workers1", "workers2", "10km", "wide", "floor", "decode",
                                                      "write")}
    for _ in range(args.repeat):
        times["workers1"].append(run_routesag(large, 1, scratch / "w1.gpkg"))
        times["workers2"].append(run_routesag(large, 2, scratch / "w2.gpkg"))
        times["10km"].append(run_routesag(small, 1, scratch / "small.gpkg") if small != large
                             else times["workers1"][-1])
        times["wide"].append(run_routesag(wide, 1, scratch / "wide.gpkg"))
        floor = io_floor(large, scratch / "w1.gpkg", scratch)
        times["floor"].append(floor["floor_s"])
        times["decode"].append(floor["decode_s"])
        times["write"].append(floor["write_s"])
    naive_s, naive_n = naive_seconds(large, scratch / "w1.gpkg")
    rss_small = peak_rss_mb(small, scratch / "rss-small.gpkg")
    rss_large = peak_rss_mb(large, scratch / "rss-large.gpkg")

    def ratios(a, b):
        return [x / y for x, y in zip(times[a], times[b])]

    stamp = json.loads((large.parent / make_large_survey.STAMP).read_text())
    print(f"case: {stamp['line_km']} km, {stamp['spans']} spans, raster {stamp['raster']['width']} x "
          f"{stamp['raster']['height']} cells of {args.res:g} m; {floor['rows']} conductor rows, "
          f"{floor['stations']} stations; corridor {floor['blocks']} blocks; repeats {args.repeat} "
          "(median (min-max))")
    rows = [("routesag workers=1 [s]", spread(times["workers1"])),
            ("routesag workers=2 [s]", spread(times["workers2"])),
            ("I/O floor [s] (decode + write)", f"{spread(times['floor'])} = {spread(times['decode'])} + "
                                               f"{spread(times['write'])}"),
            (f"naive sample() loop [s] (timed on {naive_n} stations, scaled)", f"{naive_s:.1f}"),
            ("routesag 10 km workers=1 [s]", spread(times["10km"])),
            ("routesag, raster 3x wider, workers=1 [s]", spread(times["wide"])),
            ("peak RSS 10 km [MB]", f"{rss_small:.0f}"),
            (f"peak RSS {args.km:g} km [MB]", f"{rss_large:.0f}")]
    width = max(len(r[0]) for r in rows)
    for label, value in rows:
        print(f"  {label:<{width}}  {value}")
    naive_ratio = naive_s / statistics.median(times["workers1"])
    rss_limit = 1.3 * rss_small + 100.0
    checks = [("workers1/floor", spread(ratios("workers1", "floor")), statistics.median(ratios("workers1", "floor"))
               <= TARGETS["workers1/floor"]),
              ("workers2/floor", spread(ratios("workers2", "floor")), statistics.median(ratios("workers2", "floor"))
               <= TARGETS["workers2/floor"]),
              ("naive/workers1", f"{naive_ratio:.0f}", naive_ratio >= TARGETS["naive/workers1"]),
              (f"{args.km:g}km/10km", spread(ratios("workers1", "10km")),
               statistics.median(ratios("workers1", "10km")) <= TARGETS["km/10km"]),
              ("wide/normal", spread(ratios("wide", "workers1")), None),
              ("rss", f"{rss_large:.0f} MB vs limit {rss_limit:.0f} MB", rss_large <= rss_limit)]
    print("ratios: " + "; ".join(f"{name} {value}" + ("" if ok is None else (" ok" if ok else " MISSED"))
                                 for name, value, ok in checks))
    return 0


if __name__ == "__main__":
    sys.exit(main())
