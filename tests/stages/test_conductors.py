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


def test_span_batched_profiles_equal_the_per_span_ones(tmp_path):
    """span_profiles (a section at once, the terrain read span by span) gives exactly span_profile's stations and
    points (one profile at a time)."""
    import rasterio
    from rasterio.transform import from_origin

    from routesag.api import compute
    from routesag.io.terrain import TerrainSampler
    from routesag.stages.conductors import TerrainView, span_cases, span_profile, span_profiles
    from routesag.stages.inputs import HELD_TERRAIN_WINDOWS
    from tests.conftest import CRS, X0, Y0, write_project, write_structures

    rng = np.random.default_rng(9)
    z = (100.0 + rng.uniform(0.0, 3.0, size=(300, 800))).astype("float32")  # rough: many kinks, vertices
    z[140:150, 300:320] = -9999.0                                            # and a nodata hole
    with rasterio.open(tmp_path / "terrain.tif", "w", driver="GTiff", width=800, height=300, count=1,
                       dtype="float32", crs=CRS, transform=from_origin(X0 - 100, Y0 + 300, 1.5, 1.5),
                       nodata=-9999.0) as dst:
        dst.write(z, 1)
    write_structures(tmp_path / "structures.gpkg", [(X0, Y0 + 100), (X0 + 380, Y0 + 130), (X0 + 700, Y0 + 90),
                                                    (X0 + 1000, Y0 + 110)],
                     kinds=["strain", "suspension", "strain", "strain"], extra={"insulator_m": [0, 2.0, 0, 0]})
    wires = '\n[[wires]]\nname = "left"\noffset_m = -4.0\n\n[[wires]]\nname = "right"\noffset_m = 4.0\n'
    project = write_project(tmp_path, cases=[("hot", 80.0, 0.0, 0.0), ("wind", 15.0, 0.0, 500.0)],
                            station_m=1.5, extra=wires)
    data = compute(project, ("wire_spans", "tensions", "structure_loads", "work_crs"))  # closes its terrain
    # a sampler of the test's own, held windows as the run holds them, open for the whole comparison
    with TerrainSampler(tmp_path / "terrain.tif", hold_windows=HELD_TERRAIN_WINDOWS) as terrain:
        cases = span_cases(data["wire_spans"], data["tensions"], data["structure_loads"])
        rows = [dict(zip(cases, values)) for values in zip(*cases.values())]
        view = TerrainView(terrain, data["work_crs"])
        batched = span_profiles(cases, 1.5, view)
        single = [span_profile(row, 1.5, view) for row in rows]
    assert len(rows) == 12 and len(batched) == len(single)
    assert any(p.blowout_deg > 10 for p in single)
    for a, b in zip(batched, single, strict=True):
        assert a.key == b.key
        assert len(a.stations_m) > 1.2 * (a.stations_m[-1] / 1.5)  # exact-minimum stations were added
        np.testing.assert_array_equal(a.stations_m, b.stations_m)
        np.testing.assert_array_equal(a.xyz, b.xyz)
        assert (a.sag_m, a.blowout_m, a.max_tension_n) == (b.sag_m, b.blowout_m, b.max_tension_n)
