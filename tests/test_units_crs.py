"""Inputs in other CRSs and units are converted, give the same clearances, and say so in run_info.

The reference is the same survey in metres (UTM 33N), whose clearances the end-to-end tests check
against the analytic plane. Each variant stores the same terrain and structures another way.
"""
from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import rasterio
import shapely
from pyproj import Transformer
from rasterio.transform import from_origin

import routesag
from routesag.io.structures import to_working_crs
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project, write_structures
from tests.test_validation import local_grid

XS = [0.0, 300.0, 550.0, 900.0]
KINDS = ["strain", "suspension", "strain", "strain"]
PLANE = dict(a=100.0, bx=0.01, cy=0.02)
FOOT_M = 0.3048              # international foot, exact by definition (1959 agreement)
US_FOOT_M = 1200.0 / 3937.0  # US survey foot, exact by definition (Mendenhall Order, 1893)
UTM33_FEET = "+proj=utm +zone=33 +datum=WGS84 +units=ft +no_defs"


def plane(x, y):
    return PLANE["a"] + PLANE["bx"] * (x - X0) + PLANE["cy"] * (y - Y0)


def survey(folder: Path, *, terrain_factor=1.0, terrain_crs=CRS, structures_crs=CRS, z_units=None,
           surveyed_ground=False) -> Path:
    """The conftest survey; terrain elevations divided by ``terrain_factor`` (metres per stored unit).

    With ``surveyed_ground`` the structures carry ``ground_z_m`` in metres, so the terrain's vertical
    unit shows in the clearance directly instead of shifting wire and ground together.
    """
    folder.mkdir(exist_ok=True)
    write_plane_raster(folder / "terrain.tif", crs=terrain_crs,
                       **{k: v / terrain_factor for k, v in PLANE.items()})
    xy = [(X0 + x, Y0 + 200.0) for x in XS]
    extra = {"ground_z_m": [plane(x, y) for x, y in xy]} if surveyed_ground else None
    write_structures(folder / "structures.gpkg", xy, kinds=KINDS, crs=structures_crs, extra=extra)
    project = write_project(folder)
    if z_units is not None:
        project.write_text(project.read_text().replace(
            'terrain = "terrain.tif"', f'terrain = "terrain.tif"\nterrain_z_units = "{z_units}"'))
    return project


def run_info(result) -> dict:
    """run_info as written to the GeoPackage (not only as returned)."""
    table = pyogrio.read_dataframe(result.path, layer="run_info")
    return dict(zip(table["key"], table["value"]))


@pytest.fixture
def metric(tmp_path):
    return routesag.run(survey(tmp_path / "metric"))["conductors"]


@pytest.fixture
def metric_surveyed(tmp_path):
    return routesag.run(survey(tmp_path / "metric_surveyed", surveyed_ground=True))["conductors"]


def assert_same_clearances(result, metric, atol):
    got = result["conductors"].set_index(["span_id", "load_case"])["min_clearance_m"]
    want = metric.set_index(["span_id", "load_case"])["min_clearance_m"]
    np.testing.assert_allclose(got.loc[want.index], want, atol=atol)


def test_lat_lon_structures_are_reprojected_and_run_info_says_so(tmp_path, metric):
    result = routesag.run(survey(tmp_path / "ll", structures_crs="EPSG:4326"))
    assert_same_clearances(result, metric, atol=0.01)  # lat/lon round trip moves points by < 1 mm
    info = run_info(result)
    assert info["note.crs"] == "EPSG:32633"
    assert "geographic (lat/lon): reprojected to EPSG:32633 (UTM zone 33)" in info["note.crs_note"]


def test_horizontal_feet_structures_are_converted_and_run_info_says_so(tmp_path, metric):
    result = routesag.run(survey(tmp_path / "ft", structures_crs=UTM33_FEET))
    assert_same_clearances(result, metric, atol=1e-3)
    note = run_info(result)["note.crs_note"]
    assert "horizontal unit 'foot'" in note and "reprojected to EPSG:32633" in note
    # Spans are measured in metres, not feet.
    np.testing.assert_allclose(result["spans"]["span_m"], [300.0, 250.0, 350.0], atol=1e-3)


def test_terrain_feet_declared_in_project_converted(tmp_path, metric_surveyed):
    result = routesag.run(survey(tmp_path / "zft", terrain_factor=FOOT_M, z_units="ft", surveyed_ground=True))
    # float32 rasters: the stored feet and metres round differently, by < 1e-4 m at 100 m elevations.
    assert_same_clearances(result, metric_surveyed, atol=1e-4)
    assert "z_units='ft': elevations x0.3048 to metres" in run_info(result)["note.terrain_z_note"]


def test_terrain_feet_not_declared_is_wrong_by_the_foot_factor(tmp_path, metric_surveyed):
    """The control for the test above: undeclared feet put the ground 3.28x too high (about 230 m).

    The surveyed ground_z_m then disagrees with the terrain by far more than 5 m, so the run is refused;
    with the mismatch allowed (a warning) the clearances come out wrong by the foot factor."""
    project = survey(tmp_path / "zft", terrain_factor=FOOT_M, surveyed_ground=True)
    with pytest.raises(routesag.DataError, match=r"structure P1: field 'ground_z_m' = .* but the terrain"):
        routesag.run(project)
    project.write_text(project.read_text().replace("[inputs]\n", "[inputs]\nground_z_mismatch = \"warn\"\n", 1))
    result = routesag.run(project)
    assert any("structure P1: field 'ground_z_m'" in w for w in result.warnings)
    got = result["conductors"]["min_clearance_m"].to_numpy()
    assert (got < metric_surveyed["min_clearance_m"].to_numpy() - 200.0).all()


@pytest.mark.parametrize("configured", ["m", "ft"])
def test_terrain_feet_declared_by_crs_converted_once(tmp_path, metric_surveyed, configured):
    # EPSG:6360 is NAVD88 height in US survey feet; the compound CRS carries that vertical unit.
    result = routesag.run(survey(tmp_path / "crsft", terrain_factor=US_FOOT_M, terrain_crs="EPSG:32633+6360",
                                 z_units=configured, surveyed_ground=True))
    assert_same_clearances(result, metric_surveyed, atol=1e-4)
    note = run_info(result)["note.terrain_z_note"]
    assert "raster CRS declares vertical unit 'US survey foot'" in note
    assert ("ignored in favour of the CRS" in note) == (configured == "ft")


def test_terrain_in_horizontal_feet_crs(tmp_path, metric):
    """The same plane stored on a grid in UTM 33N feet: sampled through the coordinate transform."""
    folder = tmp_path / "hft"
    project = survey(folder)
    to_m = Transformer.from_crs(UTM33_FEET, CRS, always_xy=True)
    res_ft, shape = 6.0, (300, 700)
    left, top = (X0 - 200.0) / FOOT_M, (Y0 + 400.0) / FOOT_M
    rows, cols = np.mgrid[0:shape[0], 0:shape[1]]
    xm, ym = to_m.transform(left + (cols + 0.5) * res_ft, top - (rows + 0.5) * res_ft)
    z = PLANE["a"] + PLANE["bx"] * (xm - X0) + PLANE["cy"] * (ym - Y0)
    with rasterio.open(folder / "terrain.tif", "w", driver="GTiff", width=shape[1], height=shape[0], count=1,
                       dtype="float64", crs=UTM33_FEET, transform=from_origin(left, top, res_ft, res_ft)) as dst:
        dst.write(z, 1)
    result = routesag.run(project)
    assert_same_clearances(result, metric, atol=1e-4)
    assert 'UNIT["foot",0.3048' in run_info(result)["note.terrain_crs"]


def test_local_grid_in_metres_is_used_as_is():
    """A site grid in metres cannot be placed on earth; spans are measured in it directly."""
    gdf = gpd.GeoDataFrame({"structure_id": ["a", "b"]}, geometry=shapely.points([(0.0, 0.0), (300.0, 0.0)]),
                           crs=local_grid("metre", 1))
    out, crs, note = to_working_crs(gdf, "s.gpkg")
    assert out is gdf and crs.is_engineering
    assert note == "structures CRS 'site grid' is a local grid in metres: used as is"
