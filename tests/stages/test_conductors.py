"""Stations and low point of the 3D conductors."""
import numpy as np
import pytest
import shapely

import routesag
from tests.conftest import X0, Y0, write_plane_raster, write_project, write_structures


def line_survey(tmp_path, holes=(), station_m=1.0, ground_m=7.5):
    write_plane_raster(tmp_path / "terrain.tif", holes=holes)
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0 + 250, Y0 + 200), (X0 + 550, Y0 + 200)])
    return write_project(tmp_path, station_m=station_m, ground_m=ground_m)


def test_coarse_stations_do_not_skip_a_nodata_strip(tmp_path):
    # An 8 m strip of nodata (4 columns of 2 m cells) across span P1-P2, 150 m from P1.
    project = line_survey(tmp_path, holes=[(0, 400, 175, 179)], station_m=100.0)
    result = routesag.run(project)
    first = result["conductors"][result["conductors"].span_id == "A:P1-P2"]
    assert (first["status"] == "unknown").all() and (first["unknown_m"] >= 6.0).all()
    assert any("coarser than the terrain cells" in w for w in result.warnings)
    assert result.notes["station_m"] == pytest.approx(2.0)


def test_coarse_stations_do_not_skip_a_ridge(tmp_path):
    """A narrow ridge between two requested stations is still found (stations capped at the cell size)."""
    import rasterio

    project = line_survey(tmp_path, station_m=100.0, ground_m=7.5)
    with rasterio.open(tmp_path / "terrain.tif", "r+") as dst:
        z = dst.read(1)
        z[:, 175:179] += 14.0  # an 8 m wide ridge, 14 m high, under span P1-P2 at about 150 m
        dst.write(z, 1)
    conductors = routesag.run(project)["conductors"]
    hot = conductors[(conductors.span_id == "A:P1-P2") & (conductors.load_case == "hot")].iloc[0]
    assert hot["status"] == "violation"
    assert 145.0 <= hot["min_clearance_station_m"] <= 155.0


def test_low_point_is_the_lowest_point_of_the_wire_under_wind(tmp_path):
    """Inclined span with blowout: low_point_m is where the 3D wire is lowest, not the swung-plane vertex."""
    write_plane_raster(tmp_path / "terrain.tif")
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 200), (X0 + 350, Y0 + 200)],
                     heights=[20.0, 35.0])
    project = write_project(tmp_path, cases=[("wind", 15.0, 0.0, 1500.0)], station_m=0.25)
    row = routesag.run(project)["conductors"].iloc[0]
    xyz = shapely.get_coordinates(row.geometry, include_z=True)
    lowest_x = xyz[np.argmin(xyz[:, 2]), 0] - X0  # independent: the lowest of the dense 3D points
    assert row["low_point_m"] == pytest.approx(lowest_x, abs=0.3)
    assert 0.0 < row["low_point_m"] < 350.0
