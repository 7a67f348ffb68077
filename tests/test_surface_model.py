"""Whole runs with a surface model: 3D distance to a synthetic tree, bare ground, nodata."""
import math

import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin

import routesag
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project, write_structures

G = 9.80665  # standard gravity [m/s2] (CGPM 1901)
DRAKE_W_N_M = 1.628 * G  # Drake bare weight (FIELD.md §5: 1.628 kg/m)
GROUND_Z = 100.0
SPAN_M, ATTACH_M, TENSION_KN = 200.0, 20.0, 30.0
LINE_Y = Y0 + 200.0

# A conical tree beside mid-span: apex 19 m above the ground, 5 m base radius, axis 3 m off the line.
TREE_H, TREE_R, TREE_OFFSET = 19.0, 5.0, 3.0
PIXEL = 0.25
ORIGIN = (X0 - 40.0, LINE_Y + 30.0)
SHAPE = (240, 1120)  # rows, cols: 60 m x 280 m around the span


def cell_centres():
    rows, cols = np.mgrid[0:SHAPE[0], 0:SHAPE[1]]
    return ORIGIN[0] + (cols + 0.5) * PIXEL, ORIGIN[1] - (rows + 0.5) * PIXEL


def tree_height(x, y):
    rho = np.hypot(x - (X0 + SPAN_M / 2), y - (LINE_Y + TREE_OFFSET))
    return np.clip(TREE_H * (1.0 - rho / TREE_R), 0.0, None)


def write_surface(path, values, nodata=-9999.0):
    profile = dict(driver="GTiff", width=SHAPE[1], height=SHAPE[0], count=1, dtype="float32", crs=CRS,
                   transform=from_origin(ORIGIN[0], ORIGIN[1], PIXEL, PIXEL), nodata=nodata)
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(values.astype("float32"), 1)


def project_with_surface(folder, values, surface_m=3.0, extra_inputs=""):
    """One level 200 m span over flat ground; the only load case is the stringing state itself."""
    write_plane_raster(folder / "terrain.tif", a=GROUND_Z)
    write_structures(folder / "structures.gpkg", [(X0, LINE_Y), (X0 + SPAN_M, LINE_Y)], kinds=["strain", "strain"])
    write_surface(folder / "surface.tif", values)
    project = write_project(folder, tension_kn=TENSION_KN, attach_height_m=ATTACH_M, ground_m=5.0,
                            cases=[("still", 15.0, 0.0, 0.0)],
                            extra=f"\n[clearance.required_m]\nsurface = {surface_m}\n")
    text = project.read_text().replace('terrain = "terrain.tif"',
                                       'terrain = "terrain.tif"\nsurface = "surface.tif"' + extra_inputs)
    project.write_text(text)
    return project


def analytic_tree_distance():
    """Distance from the wire's low point to the cone, in the cone's meridian plane through that point.

    The wire: exact catenary of a level span, sag D = c (cosh(S/2c) - 1), c = H/w (FIELD.md §1); its
    low point is abeam the tree's axis, and the wire rises away from it, so it is the nearest point.
    The cone's generatrix runs from the apex (0, h) to (R, 0); the distance is point to segment.
    """
    c = TENSION_KN * 1e3 / DRAKE_W_N_M
    wire_z = ATTACH_M - c * (math.cosh(SPAN_M / (2 * c)) - 1.0)  # above the ground
    apex, foot = np.array([0.0, TREE_H]), np.array([TREE_R, 0.0])
    p = np.array([TREE_OFFSET, wire_z])
    d = foot - apex
    t = np.clip((p - apex) @ d / (d @ d), 0.0, 1.0)
    nearest = apex + t * d
    return float(np.hypot(*(p - nearest))), nearest


def test_cone_tree_gives_analytic_3d_distance(tmp_path):
    x, y = cell_centres()
    project = project_with_surface(tmp_path, GROUND_Z + tree_height(x, y))
    result = routesag.run(project)
    v = result["clearance_violations"]
    expected, nearest = analytic_tree_distance()
    assert expected < 3.0  # the tree is inside the 3 m surface clearance
    assert len(v) == 1 and v["category"].iloc[0] == "surface"
    assert v["clearance_m"].iloc[0] == pytest.approx(expected, abs=0.05)
    assert v["station_m"].iloc[0] == pytest.approx(SPAN_M / 2, abs=1.0)
    # The offending surface point lies on the cone near the foot of the perpendicular.
    rho, height = nearest
    assert v["surface_y"].iloc[0] == pytest.approx(LINE_Y + TREE_OFFSET - rho, abs=0.3)
    assert v["surface_z"].iloc[0] == pytest.approx(GROUND_Z + height, abs=0.3)
    assert v["required_m"].iloc[0] == 3.0
    conductors = result["conductors"]
    assert conductors["min_surface_m"].iloc[0] == pytest.approx(expected, abs=0.05)
    assert conductors["status"].iloc[0] == "violation"


def test_canopy_heights_give_the_same_distance(tmp_path):
    x, y = cell_centres()
    project = project_with_surface(tmp_path, tree_height(x, y), extra_inputs='\nsurface_values = "height"')
    v = routesag.run(project)["clearance_violations"]
    assert v["clearance_m"].iloc[0] == pytest.approx(analytic_tree_distance()[0], abs=0.05)


def test_bare_ground_is_not_a_surface_object(tmp_path):
    # Surface == terrain everywhere: nothing stands above the ground, even with a huge surface clearance.
    x, _ = cell_centres()
    # 25 m: more than the wire's height, and its reach still lies on the 60 m wide raster.
    project = project_with_surface(tmp_path, np.full(x.shape, GROUND_Z), surface_m=25.0)
    result = routesag.run(project)
    assert len(result["clearance_violations"]) == 0
    assert result["conductors"]["status"].iloc[0] == "clear"
    assert np.isnan(result["conductors"]["min_surface_m"].iloc[0])


def test_surface_nodata_is_an_unknown_stretch_not_clear(tmp_path):
    # A nodata hole 10 m long under the middle of the span hides the tree: no violation, but no clear either.
    x, y = cell_centres()
    values = GROUND_Z + tree_height(x, y)
    values[np.abs(x - (X0 + SPAN_M / 2)) < 5.0] = -9999.0
    result = routesag.run(project_with_surface(tmp_path, values))
    assert len(result["clearance_violations"]) == 0
    conductors = result["conductors"]
    assert conductors["status"].iloc[0] == "unknown"
    stretches = result["unknown_stretches"]
    assert len(stretches) == 1 and stretches["reason"].iloc[0] == "surface"
    # The hole (10 m) plus the reach on each side: 3 m clearance + half a cell diagonal (0.18 m).
    assert stretches["length_m"].iloc[0] == pytest.approx(10.0 + 2 * (3.0 + 0.177), abs=1.5)
    assert stretches["length_m"].sum() == pytest.approx(conductors["unknown_m"].iloc[0])
    assert stretches.geometry.has_z.all()


def test_terrain_nodata_is_an_unknown_stretch_not_clear(tmp_path):
    # A 40 m hole in the terrain under the first span (columns at x = X0 + 130 ... X0 + 170).
    write_plane_raster(tmp_path / "terrain.tif", holes=[(0, 400, 165, 185)])
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0 + 300, Y0 + 200), (X0 + 600, Y0 + 200)])
    result = routesag.run(write_project(tmp_path))
    stretches = result["unknown_stretches"]
    assert set(stretches["span_id"]) == {"A:P1-P2"} and set(stretches["reason"]) == {"terrain"}
    assert len(stretches) == 2  # one per load case
    # Bilinear sampling needs the four cell centres around a station: the stretch reaches one
    # 2 m cell past each side of the hole.
    assert stretches["start_m"].between(127.0, 131.0).all() and stretches["end_m"].between(169.0, 173.0).all()
    first = result["conductors"][result["conductors"].span_id == "A:P1-P2"]
    assert (first["status"] == "unknown").all()


def test_surface_run_reads_one_window_per_span(tmp_path):
    x, y = cell_centres()
    result = routesag.run(project_with_surface(tmp_path, GROUND_Z + tree_height(x, y)))
    assert result.notes["surface_window_reads"] == 1
    assert "above the terrain are objects" in result.notes["surface_rule"]


def test_surface_in_a_geographic_crs_is_refused_by_name(tmp_path):
    x, y = cell_centres()
    project = project_with_surface(tmp_path, GROUND_Z + tree_height(x, y))
    with rasterio.open(tmp_path / "surface.tif", "w", driver="GTiff", width=10, height=10, count=1,
                       dtype="float32", crs="EPSG:4326", transform=from_origin(15.0, 50.6, 1e-4, 1e-4)) as dst:
        dst.write(np.zeros((1, 10, 10), "float32"))
    with pytest.raises(routesag.DataError, match=r"surface model .*surface.tif has a geographic CRS"):
        routesag.run(project)


def test_surface_in_a_local_grid_is_refused_by_name(tmp_path):
    # A site grid PROJ cannot relate to the structures' UTM zone: a data error naming the file, not a crash.
    x, y = cell_centres()
    project = project_with_surface(tmp_path, GROUND_Z + tree_height(x, y))
    site = ('ENGCRS["site grid",EDATUM["site"],CS[Cartesian,2],AXIS["x",east,LENGTHUNIT["metre",1]],'
            'AXIS["y",north,LENGTHUNIT["metre",1]]]')
    with rasterio.open(tmp_path / "surface.tif", "w", driver="GTiff", width=10, height=10, count=1,
                       dtype="float32", crs=site, transform=from_origin(0.0, 100.0, 1.0, 1.0)) as dst:
        dst.write(np.zeros((1, 10, 10), "float32"))
    with pytest.raises(routesag.DataError, match=r"surface model .*surface.tif: CRS 'site grid' cannot be "
                                                 r"transformed to the working CRS 'WGS 84 / UTM zone 33N'"):
        routesag.run(project)


def test_surface_in_another_projected_crs_gives_the_same_distance(tmp_path):
    # The same cone, sampled at the cell centres of a raster in EPSG:3035 (LAEA Europe).
    from pyproj import Transformer

    to_laea = Transformer.from_crs(CRS, "EPSG:3035", always_xy=True)
    x0, y0 = to_laea.transform(ORIGIN[0], ORIGIN[1] + 20.0)
    rows, cols = np.mgrid[0:400, 0:1300]
    lx, ly = x0 + (cols + 0.5) * PIXEL, y0 - (rows + 0.5) * PIXEL
    ux, uy = Transformer.from_crs("EPSG:3035", CRS, always_xy=True).transform(lx, ly)
    project = project_with_surface(tmp_path, GROUND_Z + tree_height(*cell_centres()))
    with rasterio.open(tmp_path / "surface.tif", "w", driver="GTiff", width=1300, height=400, count=1,
                       dtype="float32", crs="EPSG:3035", transform=from_origin(x0, y0, PIXEL, PIXEL)) as dst:
        dst.write((GROUND_Z + tree_height(ux, uy)).astype("float32"), 1)
    v = routesag.run(project)["clearance_violations"]
    assert len(v) == 1 and v["clearance_m"].iloc[0] == pytest.approx(analytic_tree_distance()[0], abs=0.05)
