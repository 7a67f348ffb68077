"""TerrainSampler.sample_scattered: the same elevations as sample, read by the smallest windows, in threads too."""
import numpy as np
import pytest
import rasterio
from affine import Affine

from routesag.io.terrain import TerrainSampler

X0, Y0, RES = 500_000.0, 6_000_000.0, 1.0
ROWS, COLS = 400, 3000
NODATA = -9999.0


@pytest.fixture
def rough_tif(tmp_path):
    """Invented rough terrain (random cells, so no interpolation shortcut can pass), with a nodata hole and
    cells of an untagged fill value, deflate-tiled like a LiDAR DTM."""
    rng = np.random.default_rng(5)
    z = (200.0 + rng.uniform(0.0, 30.0, (ROWS, COLS))).astype("float32")
    z[100:140, 900:960] = NODATA
    z[300:302, 2000:2010] = -32768.0  # an implausible value, read as nodata
    path = tmp_path / "rough.tif"
    with rasterio.open(path, "w", driver="GTiff", width=COLS, height=ROWS, count=1, dtype="float32",
                       crs="EPSG:32633", transform=Affine(RES, 0.0, X0, 0.0, -RES, Y0), nodata=NODATA,
                       tiled=True, blockxsize=256, blockysize=256, compress="deflate") as ds:
        ds.write(z, 1)
    return path


def structures_like_points():
    """Points far apart along the raster, some on the hole, the fill cells, the edge and outside it."""
    rng = np.random.default_rng(6)
    x = X0 + np.concatenate([rng.uniform(0.0, COLS, 40), [930.0, 2005.0, 0.2, COLS + 50.0]])
    y = Y0 - np.concatenate([rng.uniform(0.0, ROWS, 40), [120.0, 301.0, 0.2, 10.0]])
    return x, y


@pytest.mark.parametrize("threads", [1, 2, 3])
def test_scattered_points_give_the_samples_of_sample(rough_tif, threads):
    x, y = structures_like_points()
    with TerrainSampler(rough_tif, hold_windows=16) as held, TerrainSampler(rough_tif, hold_windows=16) as plain:
        expected = plain.sample(x, y)
        got = held.sample_scattered(x, y, threads=threads)
        assert held.hold_windows == 16 and held._held == []  # nothing kept, the setting restored
        # what the other threads' samplers met is reported by this one (cell counts depend on how points
        # share windows, so only the values are compared)
        assert set(held.implausible_values) == set(plain.implausible_values) == {-32768.0}
        assert held.sample_window_count >= len(x) // 2
    np.testing.assert_array_equal(got, expected)
    hole, fill, edge, outside = got[-4:]
    assert np.isnan(hole) and np.isnan(fill) and np.isfinite(edge) and np.isnan(outside)


def test_scattered_points_read_only_their_cells(rough_tif):
    x, y = structures_like_points()
    with TerrainSampler(rough_tif, hold_windows=16) as terrain:
        terrain.sample_scattered(x[:40], y[:40])
        # one read per 64-cell tile of points (two of the 40 share one), none grown by the hold margin
        assert 30 <= terrain.sample_window_count <= 40
        assert terrain.last_window.width <= 64 and terrain.last_window.height <= 64


def test_compact_points_are_one_held_window(rough_tif):
    x, y = X0 + np.array([10.0, 40.0, 70.0]), Y0 - np.array([10.0, 30.0, 20.0])
    with TerrainSampler(rough_tif, hold_windows=16) as terrain, TerrainSampler(rough_tif) as plain:
        np.testing.assert_array_equal(terrain.sample_scattered(x, y, threads=2), plain.sample(x, y))
        assert terrain.sample_window_count == 1 and len(terrain._held) == 1
