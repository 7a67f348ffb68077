"""Property: over a plane terrain the pipeline's clearance is the exact clearance.

Independent derivation. A level-or-inclined catenary from A (0, z_A) to B (S, z_B) is
z(x) = z_A + c (cosh((x - x_m)/c) - cosh(x_m/c)) with x_m = S/2 - c asinh(h / (2c sinh(S/2c)))
(FIELD.md §1). Over a plane the ground under the span line is linear, g(x) = g_A + k x, with k the
plane's gradient along the span. The clearance f = z - g is convex (f'' = cosh((x - x_m)/c)/c > 0),
so its minimum over the span is at x* = x_m + c asinh(k) clamped to [0, S]. The pipeline samples
stations at most ``station_m`` apart, so its minimum lies between f(x*) and f(x*) plus
max f'' (station_m/2)^2 / 2.
"""
from __future__ import annotations

import math
import tempfile
from pathlib import Path

import numpy as np
import rasterio
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from rasterio.transform import from_origin

import routesag
from tests.conftest import CRS, X0, Y0, write_project, write_structures

RES_M = 4.0
MARGIN_M = 40.0


def write_plane(path, a, bx, cy, xs, ys):
    """Float64 raster of z = a + bx (x - X0) + cy (y - Y0) covering the points with a margin."""
    left, top = min(xs) - MARGIN_M, max(ys) + MARGIN_M
    cols = int(math.ceil((max(xs) - min(xs) + 2 * MARGIN_M) / RES_M))
    rows = int(math.ceil((max(ys) - min(ys) + 2 * MARGIN_M) / RES_M))
    r, c = np.mgrid[0:rows, 0:cols]
    x, y = left + (c + 0.5) * RES_M, top - (r + 0.5) * RES_M
    with rasterio.open(path, "w", driver="GTiff", width=cols, height=rows, count=1, dtype="float64", crs=CRS,
                       transform=from_origin(left, top, RES_M, RES_M)) as dst:
        dst.write(a + bx * (x - X0) + cy * (y - Y0), 1)


def exact_min_clearance(span_m, z_a, z_b, g_a, slope, c):
    """Minimum of wire minus ground over the span, and the curvature bound for the sampling error."""
    h = z_b - z_a
    x_m = span_m / 2 - c * math.asinh(h / (2 * c * math.sinh(span_m / (2 * c))))
    x_star = min(max(x_m + c * math.asinh(slope), 0.0), span_m)

    def clearance(x):
        return z_a + c * (math.cosh((x - x_m) / c) - math.cosh(x_m / c)) - (g_a + slope * x)

    max_curvature = math.cosh(max(abs(x_m), abs(span_m - x_m)) / c) / c
    return clearance(x_star), max_curvature


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(a=st.floats(0.0, 800.0), bx=st.floats(-0.08, 0.08), cy=st.floats(-0.08, 0.08),
       bearing=st.floats(0.0, 2 * math.pi), spans=st.lists(st.floats(60.0, 450.0), min_size=1, max_size=3),
       heights=st.lists(st.floats(8.0, 45.0), min_size=4, max_size=4), tension_kn=st.floats(12.0, 45.0),
       station_m=st.sampled_from([0.5, 1.0, 2.5]), required_m=st.floats(0.01, 30.0))
def test_clearance_on_plane_terrain_is_exact(a, bx, cy, bearing, spans, heights, tension_kn, station_m,
                                             required_m):
    along = np.concatenate([[0.0], np.cumsum(spans)])
    xs = X0 + along * math.sin(bearing)
    ys = Y0 + along * math.cos(bearing)
    heights = heights[:len(xs)]

    def plane(x, y):
        return a + bx * (x - X0) + cy * (y - Y0)

    with tempfile.TemporaryDirectory() as folder:
        folder = Path(folder)
        write_plane(folder / "terrain.tif", a, bx, cy, xs, ys)
        write_structures(folder / "structures.gpkg", list(zip(xs, ys)), heights=heights)
        project = write_project(folder, tension_kn=tension_kn, station_m=station_m, ground_m=required_m)
        result = routesag.run(project)

    structures = result["structures"].set_index("structure_id")
    np.testing.assert_allclose(structures["ground_z_m"], plane(xs, ys), atol=1e-6)  # bilinear on a plane
    spans_layer = result["spans"].set_index("span_id")
    for _, row in result["conductors"].iterrows():
        i = int(row["from_id"][1:]) - 1
        span_m = spans_layer.loc[row["span_id"], "span_m"]
        assert abs(span_m - spans[i]) < 1e-6
        slope = bx * math.sin(bearing) + cy * math.cos(bearing)  # plane gradient along the span
        g_a, g_b = plane(xs[i], ys[i]), plane(xs[i + 1], ys[i + 1])
        exact, curvature = exact_min_clearance(spans[i], g_a + heights[i], g_b + heights[i + 1], g_a, slope,
                                               row["catenary_m"])
        sampling = curvature * (station_m / 2) ** 2 / 2
        assert exact - 1e-6 <= row["min_clearance_m"] <= exact + sampling + 1e-6, (row["span_id"], exact)
        required = row["required_m"]
        if exact + sampling + 1e-6 < required:
            assert row["status"] == "violation"
        elif exact - 1e-6 > required:
            assert row["status"] == "clear"
