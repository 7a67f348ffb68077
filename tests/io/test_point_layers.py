"""Point clouds as vector layers with Z (GeoPackage, FlatGeobuf) and as CSV: same points as LAS, chunked."""
import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely
from pyproj import Transformer

from routesag.errors import DataError
from routesag.io.pointcloud import UNCLASSIFIED, chord_corridor, read_points


def points(n=2500, seed=1):
    rng = np.random.default_rng(seed)
    return (500_000.0 + rng.uniform(0, 500, n), 5_000_000.0 + rng.uniform(-100, 100, n), rng.uniform(100, 140, n),
            rng.choice([2, 5, 6, 14], n))


@pytest.mark.parametrize("suffix, driver", [(".gpkg", "GPKG"), (".fgb", "FlatGeobuf")])
def test_point_z_layer_round_trip_in_chunks_and_corridor(tmp_path, suffix, driver):
    x, y, z, cls = points()
    path = tmp_path / f"cloud{suffix}"
    gpd.GeoDataFrame({"classification": cls}, geometry=shapely.points(x, y, z), crs="EPSG:32633").to_file(
        path, driver=driver)
    corridor = chord_corridor([500_000.0], [5_000_000.0], [500_500.0], [5_000_000.0], 40.0)
    cloud = read_points(path, "EPSG:32633", corridor, chunk_points=700)
    keep = np.abs(y - 5_000_000.0) <= 40.0
    assert cloud.n_read == x.size and cloud.n_kept == keep.sum()
    order = np.argsort(x[keep])
    np.testing.assert_allclose(np.sort(cloud.x), x[keep][order])
    np.testing.assert_allclose(cloud.z[np.argsort(cloud.x)], z[keep][order])
    assert cloud.per_class == {int(c): int((cls[keep] == c).sum()) for c in np.unique(cls[keep])}


def test_csv_with_classification_in_another_crs(tmp_path):
    lon, lat = np.array([15.0, 15.001, 15.002]), np.array([45.0, 45.0005, 45.001])
    pd.DataFrame({"X": lon, "Y": lat, "Z": [100.0, 101.0, 102.0], "Classification": [14, 5, 6]}).to_csv(
        tmp_path / "cloud.csv", index=False)
    with pytest.raises(DataError, match="names no CRS"):
        read_points(tmp_path / "cloud.csv", "EPSG:32633")
    cloud = read_points(tmp_path / "cloud.csv", "EPSG:32633", crs="EPSG:4326", chunk_points=2)
    ex, ey = Transformer.from_crs("EPSG:4326", "EPSG:32633", always_xy=True).transform(lon, lat)
    np.testing.assert_allclose(cloud.x, ex, atol=1e-6)
    np.testing.assert_allclose(cloud.y, ey, atol=1e-6)
    assert list(cloud.classification) == [14, 5, 6]


def test_layer_without_classification_is_unclassified_and_2d_is_refused(tmp_path):
    x, y, z, _ = points(50)
    gpd.GeoDataFrame(geometry=shapely.points(x, y, z), crs="EPSG:32633").to_file(tmp_path / "a.gpkg")
    cloud = read_points(tmp_path / "a.gpkg", "EPSG:32633")
    assert set(cloud.classification) == {UNCLASSIFIED}
    gpd.GeoDataFrame(geometry=shapely.points(x, y), crs="EPSG:32633").to_file(tmp_path / "flat.gpkg")
    with pytest.raises(DataError, match=r"flat\.gpkg: geometry is .*; expected Point Z"):
        read_points(tmp_path / "flat.gpkg", "EPSG:32633")


def test_a_local_grid_cannot_be_placed(tmp_path):
    pd.DataFrame({"x": [1.0], "y": [2.0], "z": [3.0]}).to_csv(tmp_path / "c.csv", index=False)
    grid = ('ENGCRS["site grid",EDATUM["site"],CS[Cartesian,2],AXIS["x",east,LENGTHUNIT["metre",1]],'
            'AXIS["y",north,LENGTHUNIT["metre",1]]]')
    with pytest.raises(DataError, match=r"c\.csv: CRS .* cannot be transformed to the working CRS"):
        read_points(tmp_path / "c.csv", "EPSG:32633", crs=grid)
