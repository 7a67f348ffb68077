"""The whole pipeline on surveys built in code."""
import math

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import rasterio
import shapely
from pyproj import Transformer
from rasterio.transform import from_origin

import routesag
from routesag.errors import DataError
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project, write_structures

LAYERS = {
    "structures": ("Point Z", {"structure_id", "line_id", "seq", "kind", "ground_z_m", "attach_z_m",
                               "section_id"}),
    "spans": ("LineString Z", {"span_id", "line_id", "from_id", "to_id", "section_id", "span_m", "dz_m",
                               "ruling_span_m"}),
    "conductors": ("LineString Z", {"span_id", "from_id", "to_id", "load_case", "horizontal_tension_n",
                                    "max_tension_n", "sag_m", "low_point_m", "min_clearance_m",
                                    "min_clearance_station_m", "unknown_m"}),
    "clearance_violations": ("Point Z", {"span_id", "from_id", "to_id", "load_case", "station_m", "start_m",
                                         "end_m", "conductor_z_m", "ground_z_m", "clearance_m", "required_m",
                                         "deficit_m"}),
}


def plane(x, y, a=100.0, bx=0.01, cy=0.02):
    return a + bx * (x - X0) + cy * (y - Y0)


def test_geopackage_schema_and_3d(survey):
    result = routesag.run(survey)
    path = survey.parent / "out.gpkg"
    assert result.path == path.resolve()
    listed = {name: kind for name, kind in pyogrio.list_layers(path)}
    for name, (geometry_type, columns) in LAYERS.items():
        info = pyogrio.read_info(path, layer=name)
        assert info["geometry_type"] == geometry_type, name
        assert columns <= set(info["fields"]), (name, columns - set(info["fields"]))
        assert info["crs"].endswith("32633")
    assert "run_info" in listed and "sections" in listed
    conductors = result["conductors"]
    assert len(conductors) == 3 * 2 and conductors.geometry.has_z.all()
    assert set(result["spans"]["section_id"]) == {"A:P1-P3", "A:P3-P4"}


def test_structures_take_the_sections_of_their_own_line(tmp_path):
    # Structure ids are unique only within a line (README): lines A and B both use P1-P3.
    write_plane_raster(tmp_path / "terrain.tif")
    xs = [0.0, 300.0, 600.0]
    layer = gpd.GeoDataFrame(
        {"structure_id": ["P1", "P2", "P3"] * 2, "seq": [1, 2, 3] * 2, "line_id": ["A"] * 3 + ["B"] * 3,
         "kind": ["strain", "suspension", "strain"] + ["strain"] * 3},
        geometry=shapely.points([(X0 + x, Y0 + 100.0) for x in xs] + [(X0 + x, Y0 + 300.0) for x in xs]), crs=CRS)
    layer.to_file(tmp_path / "structures.gpkg", layer="structures", driver="GPKG")
    structures = routesag.run(write_project(tmp_path))["structures"]
    sections = {(row.line_id, row.structure_id): row.section_id for row in structures.itertuples()}
    # A: one section P1-P3. B: strain at P2 too, so P2 starts B's second section and P3 ends it.
    assert sections == {("A", "P1"): "A:P1-P3", ("A", "P2"): "A:P1-P3", ("A", "P3"): "A:P1-P3",
                        ("B", "P1"): "B:P1-P2", ("B", "P2"): "B:P2-P3", ("B", "P3"): "B:P2-P3"}


def test_clearance_on_plane_is_analytic(survey):
    result = routesag.run(survey)
    for _, row in result["conductors"].iterrows():
        xyz = shapely.get_coordinates(row.geometry, include_z=True)
        analytic = xyz[:, 2] - plane(xyz[:, 0], xyz[:, 1])
        # Terrain is a plane, which bilinear interpolation reproduces exactly.
        assert row["min_clearance_m"] == pytest.approx(analytic.min(), abs=0.01)


def test_wire_follows_exact_catenary(survey):
    """Independent check of the 3D wire: z(x) = c(cosh((x-xm)/c) - cosh(xm/c)) (FIELD.md §1)."""
    result = routesag.run(survey)
    spans = result["spans"].set_index("span_id")
    for _, row in result["conductors"].iterrows():
        span = spans.loc[row["span_id"]]
        s, h = span["span_m"], span["dz_m"]
        c = row["catenary_m"]
        xm = s / 2 - c * math.asinh(h / (2 * c * math.sinh(s / (2 * c))))
        xyz = shapely.get_coordinates(row.geometry, include_z=True)
        start = shapely.get_coordinates(span.geometry, include_z=True)[0]
        x = np.hypot(xyz[:, 0] - start[0], xyz[:, 1] - start[1])
        z = start[2] + c * (np.cosh((x - xm) / c) - np.cosh(xm / c))
        np.testing.assert_allclose(xyz[:, 2], z, atol=1e-6)
        assert row["low_point_m"] == pytest.approx(xm, abs=1e-6)
        mid = start[2] + c * (np.cosh((s / 2 - xm) / c) - np.cosh(xm / c))
        assert row["sag_m"] == pytest.approx(start[2] + h / 2 - mid, abs=1e-6)


def test_sections_share_tension_and_hot_sags_more(survey):
    conductors = routesag.run(survey)["conductors"]
    per_section = conductors.groupby(["section_id", "load_case"])["horizontal_tension_n"].nunique()
    assert (per_section == 1).all()
    hot = conductors[conductors.load_case == "hot"].set_index("span_id")
    cold = conductors[conductors.load_case == "cold"].set_index("span_id")
    assert (hot["sag_m"] > cold["sag_m"]).all()
    assert (hot["horizontal_tension_n"] < cold["horizontal_tension_n"]).all()


def test_violation_found_where_clearance_too_small(survey, tmp_path):
    # Require more than the wire can give: violations appear, each at a stretch's worst point.
    write_project(tmp_path, ground_m=19.0)
    result = routesag.run(tmp_path / "project.toml")
    v = result["clearance_violations"]
    assert len(v) > 0
    assert (v["clearance_m"] < 19.0).all()
    np.testing.assert_allclose(v["deficit_m"], 19.0 - v["clearance_m"])
    np.testing.assert_allclose(v["ground_z_m"], plane(v.geometry.x, v.geometry.y), atol=0.01)
    assert ((v["start_m"] <= v["station_m"]) & (v["station_m"] <= v["end_m"])).all()


def test_structures_in_lat_lon_give_same_result(survey, tmp_path):
    base = routesag.run(survey)["conductors"]
    other = tmp_path / "ll"
    other.mkdir()
    write_plane_raster(other / "terrain.tif", a=100.0, bx=0.01, cy=0.02)
    xs = [0.0, 300.0, 550.0, 900.0]
    write_structures(other / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in xs], crs="EPSG:4326",
                     kinds=["strain", "suspension", "strain", "strain"])
    result = routesag.run(write_project(other))
    np.testing.assert_allclose(result["conductors"]["min_clearance_m"], base["min_clearance_m"], atol=0.01)
    assert "reprojected" in result.notes["crs_note"]


def test_terrain_in_other_crs_gives_same_result(survey, tmp_path):
    base = routesag.run(survey)["conductors"]
    other = tmp_path / "laea"
    other.mkdir()
    # The same plane, sampled at the pixel centres of a raster in EPSG:3035.
    to_laea = Transformer.from_crs(CRS, "EPSG:3035", always_xy=True)
    x0, y0 = to_laea.transform(X0 - 300, Y0 + 600)
    res, shape = 2.0, (500, 700)
    rows, cols = np.mgrid[0:shape[0], 0:shape[1]]
    lx, ly = x0 + (cols + 0.5) * res, y0 - (rows + 0.5) * res
    ux, uy = Transformer.from_crs("EPSG:3035", CRS, always_xy=True).transform(lx, ly)
    with rasterio.open(other / "terrain.tif", "w", driver="GTiff", width=shape[1], height=shape[0], count=1,
                       dtype="float64", crs="EPSG:3035", transform=from_origin(x0, y0, res, res)) as dst:
        dst.write(plane(ux, uy), 1)
    xs = [0.0, 300.0, 550.0, 900.0]
    write_structures(other / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in xs],
                     kinds=["strain", "suspension", "strain", "strain"])
    result = routesag.run(write_project(other))
    np.testing.assert_allclose(result["conductors"]["min_clearance_m"], base["min_clearance_m"], atol=0.01)


def test_nodata_hole_is_unknown_not_clear(tmp_path):
    # A hole under the middle of the first span (columns around x = X0 + 150 m).
    write_plane_raster(tmp_path / "terrain.tif", holes=[(0, 400, 165, 185)])
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0 + 300, Y0 + 200), (X0 + 600, Y0 + 200)])
    result = routesag.run(write_project(tmp_path))
    first = result["conductors"][result["conductors"].span_id == "A:P1-P2"]
    assert (first["status"] == "unknown").all()
    assert first["unknown_m"].iloc[0] == pytest.approx(40.0, abs=2.0)
    second = result["conductors"][result["conductors"].span_id == "A:P2-P3"]
    assert (second["status"] == "clear").all() and (second["unknown_m"] == 0).all()


def test_structure_off_terrain_is_refused(tmp_path):
    write_plane_raster(tmp_path / "terrain.tif")
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0 + 5000, Y0 + 200)])
    with pytest.raises(DataError, match="structure P2: no ground_z_m and the terrain .* has no elevation"):
        routesag.run(write_project(tmp_path))


def test_zero_length_span_is_refused(tmp_path):
    write_plane_raster(tmp_path / "terrain.tif")
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0, Y0 + 200), (X0 + 300, Y0 + 200)])
    with pytest.raises(DataError, match="P1 and P2 stand at the same spot"):
        routesag.run(write_project(tmp_path))


def test_failed_run_leaves_earlier_output_untouched(survey):
    routesag.run(survey)
    out = survey.parent / "out.gpkg"
    before = out.read_bytes()
    survey.write_text(survey.read_text().replace("horizontal_tension_kn = 30.0", "horizontal_tension_kn = 900.0"))
    with pytest.raises(routesag.InputError, match="not below the rated strength"):
        routesag.run(survey)
    assert out.read_bytes() == before
    assert sorted(p.name for p in survey.parent.iterdir() if "tmp" in p.name) == []


def test_run_info_records_provenance(survey):
    info = routesag.run(survey)["run_info"].set_index("key")["value"]
    assert info["routesag_version"] == routesag.__version__
    assert len(info["input.terrain.sha256"]) == 64
    assert "EPSG:32633" in info["note.crs"]
    assert '"ground_m": 7.5' in info["param.clearance"]
