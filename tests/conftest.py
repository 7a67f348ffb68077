"""Shared fixtures: small surveys built in code (structures layer, terrain raster, project file)."""
from __future__ import annotations

import os
import textwrap
from pathlib import Path

import geopandas as gpd
import numpy as np
import pytest
import rasterio
import shapely
from hypothesis import settings
from rasterio.transform import from_origin

# CI runs the property tests with a fixed seed, so a submission's result does not depend on the draw;
# locally they keep exploring new examples.
settings.register_profile("ci", derandomize=True)
if os.environ.get("CI"):
    settings.load_profile("ci")

CRS = "EPSG:32633"
X0, Y0 = 500000.0, 5600000.0

# Drake ACSR 795 kcmil 26/7: ASTM B232 via CPUC GO 95 Table 23 (FIELD.md §5); modulus/expansion from FIELD.md §3.
DRAKE_TOML = """
[conductor]
diameter_mm = 28.14
area_mm2 = 468.6
mass_kg_m = 1.628
rated_strength_kn = 140.1
modulus_gpa = 70.0
expansion_per_c = 18.9e-6
"""


def write_plane_raster(path, *, a=100.0, bx=0.0, cy=0.0, res=2.0, origin=(X0 - 200, Y0 + 400),
                       shape=(400, 800), nodata=-9999.0, holes=(), crs=CRS):
    """Terrain z = a + bx*(x - X0) + cy*(y - Y0) sampled at pixel centres; holes are (row0,row1,col0,col1)."""
    rows, cols = np.mgrid[0:shape[0], 0:shape[1]]
    x = origin[0] + (cols + 0.5) * res
    y = origin[1] - (rows + 0.5) * res
    z = (a + bx * (x - X0) + cy * (y - Y0)).astype("float32")
    for r0, r1, c0, c1 in holes:
        z[r0:r1, c0:c1] = nodata
    profile = dict(driver="GTiff", width=shape[1], height=shape[0], count=1, dtype="float32", crs=crs,
                   transform=from_origin(origin[0], origin[1], res, res), nodata=nodata,
                   tiled=True, blockxsize=256, blockysize=256, compress="deflate")
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(z, 1)
    return path


def write_structures(path, xy, *, ids=None, kinds=None, heights=None, crs=CRS, line_id="A", extra=None,
                     layer="structures"):
    n = len(xy)
    data = {"structure_id": ids or [f"P{i + 1}" for i in range(n)], "seq": list(range(1, n + 1)),
            "line_id": [line_id] * n, "kind": kinds or ["suspension"] * n}
    if heights is not None:
        data["attach_height_m"] = heights
    data.update(extra or {})
    gdf = gpd.GeoDataFrame(data, geometry=shapely.points(np.asarray(xy, dtype=float)), crs=CRS)
    if crs != CRS:
        gdf = gdf.to_crs(crs)
    gdf.to_file(path, layer=layer, driver="GPKG")
    return path


def write_project(folder, *, structures="structures.gpkg", terrain="terrain.tif", tension_kn=30.0,
                  cases=None, ground_m=7.5, station_m=1.0, attach_height_m=20.0, extra=""):
    cases = cases or [("hot", 90.0, 0.0, 0.0), ("cold", -20.0, 0.0, 0.0)]
    case_text = "\n".join(textwrap.dedent(f"""
        [[load_cases]]
        name = "{name}"
        temperature_c = {t}
        ice_mm = {ice}
        wind_pa = {wind}
        """) for name, t, ice, wind in cases)
    text = textwrap.dedent(f"""
        [inputs]
        structures = "{structures}"
        terrain = "{terrain}"

        [line]
        attach_height_m = {attach_height_m}
        """) + DRAKE_TOML + textwrap.dedent(f"""
        [stringing]
        temperature_c = 15.0
        horizontal_tension_kn = {tension_kn}
        """) + case_text + textwrap.dedent(f"""
        [clearance]
        ground_m = {ground_m}
        station_m = {station_m}

        [output]
        path = "out.gpkg"
        """) + extra
    path = Path(folder) / "project.toml"
    path.write_text(text)
    return path


@pytest.fixture
def survey(tmp_path):
    """A straight 4-structure line (spans 300, 250, 350 m) over a tilted plane; P3 is a strain structure."""
    xs = [0.0, 300.0, 550.0, 900.0]
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, bx=0.01, cy=0.02)
    write_structures(tmp_path / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in xs],
                     kinds=["strain", "suspension", "strain", "strain"])
    return write_project(tmp_path)
