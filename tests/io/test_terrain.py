"""TerrainSampler: bilinear sampling, nodata, CRS handling, windowed reads.

Every raster is built in tmp_path. Expected elevations come from the plane
z = a + b (x - x0) + c (y - y0) used to fill the raster: bilinear
interpolation reproduces any plane exactly (it is exact for functions linear
in x and y, Press et al., Numerical Recipes 3rd ed., sec. 3.6), so the plane
formula is an independent check of the sampler.
"""

import numpy as np
import pyproj
import pytest
import rasterio
from numpy.testing import assert_allclose
from affine import Affine

from routesag.errors import DataError
from routesag.io.terrain import TerrainSampler

X0, Y0 = 500_000.0, 6_000_000.0  # top-left corner in EPSG:32633 [m]
RES = 2.0                          # pixel size [m]
ROWS, COLS = 150, 200
A, B, C = 120.0, 0.03, -0.02       # plane: z = A + B (x - X0) + C (y - Y0)
NODATA = -9999.0


def plane(x, y):
    return A + B * (np.asarray(x) - X0) + C * (np.asarray(y) - Y0)


def cell_centre(row, col):
    """World coordinates of a pixel centre (north-up raster)."""
    return X0 + (col + 0.5) * RES, Y0 - (row + 0.5) * RES


def write_raster(path, data, crs="EPSG:32633", nodata=NODATA, transform=None):
    if data.ndim == 2:
        data = data[np.newaxis]
    profile = dict(driver="GTiff", width=data.shape[2], height=data.shape[1],
                   count=data.shape[0], dtype=data.dtype.name, nodata=nodata,
                   transform=transform or Affine(RES, 0.0, X0, 0.0, -RES, Y0))
    if crs is not None:
        profile["crs"] = crs
    with rasterio.open(path, "w", **profile) as ds:
        ds.write(data)
    return path


def plane_grid():
    rows, cols = np.mgrid[0:ROWS, 0:COLS]
    return plane(*cell_centre(rows, cols)).astype(np.float64)


@pytest.fixture
def plane_tif(tmp_path):
    return write_raster(tmp_path / "plane.tif", plane_grid())


@pytest.fixture
def rng():
    return np.random.default_rng(20240611)


def interior_points(rng, n, x_lo=None, x_hi=None, y_lo=None, y_hi=None):
    """Random points between the outermost pixel centres (no edge clamping)."""
    x_lo = X0 + RES / 2 if x_lo is None else x_lo
    x_hi = X0 + (COLS - 0.5) * RES if x_hi is None else x_hi
    y_hi = Y0 - RES / 2 if y_hi is None else y_hi
    y_lo = Y0 - (ROWS - 0.5) * RES if y_lo is None else y_lo
    return rng.uniform(x_lo, x_hi, n), rng.uniform(y_lo, y_hi, n)


def test_bilinear_reproduces_plane_exactly(plane_tif, rng):
    x, y = interior_points(rng, 500)
    with TerrainSampler(plane_tif) as terrain:
        z = terrain.sample(x, y)
    assert z.dtype == np.float64 and z.shape == (500,)
    assert_allclose(z, plane(x, y), rtol=0, atol=1e-9)  # plane: derived, see module docstring


def test_scalar_and_2d_inputs_keep_their_shape(plane_tif):
    x, y = cell_centre(np.array([[3, 4], [5, 6]]), np.array([[7, 8], [9, 10]]))
    with TerrainSampler(plane_tif) as terrain:
        assert terrain.sample(x, y).shape == (2, 2)
        assert terrain.sample(x[0, 0], y[0, 0]).shape == ()
        assert_allclose(terrain.sample(x[0, 0], y[0, 0]), plane(x[0, 0], y[0, 0]), atol=1e-9)


def test_compact_point_set_reads_one_small_window(plane_tif, rng):
    x, y = interior_points(rng, 300, X0 + 101.0, X0 + 121.0, Y0 - 81.0, Y0 - 61.0)
    with TerrainSampler(plane_tif) as terrain:
        terrain.sample(x, y)
        assert terrain.sample_window_count == 1
        window = terrain.last_window
    # 20 m x 20 m box at 2 m cells needs at most 11 centres + 1 neighbour each way.
    assert window.height <= 12 and window.width <= 12
    assert window.height * window.width < ROWS * COLS / 100


def test_spread_points_are_read_tile_by_tile_with_same_result(plane_tif, rng):
    x, y = interior_points(rng, 400)
    with TerrainSampler(plane_tif) as terrain:
        terrain.max_window_cells = 32 * 32
        z = terrain.sample(x, y)
        assert terrain.sample_window_count > 1
        assert terrain.last_window.height * terrain.last_window.width <= 32 * 32
    assert_allclose(z, plane(x, y), atol=1e-9)  # plane: derived


def test_nodata_neighbour_gives_nan(tmp_path):
    grid = plane_grid()
    grid[40, 50] = NODATA
    path = write_raster(tmp_path / "hole.tif", grid)
    xc, yc = cell_centre(40, 50)
    # Between centre (40, 50) and its neighbours; then a point whose four
    # neighbours are rows 41-42, cols 51-52 (clear of the hole).
    x = np.array([xc, xc + 0.3 * RES, xc - 0.7 * RES, xc + 1.5 * RES])
    y = np.array([yc, yc - 0.4 * RES, yc + 0.2 * RES, yc - 1.5 * RES])
    with TerrainSampler(path) as terrain:
        z = terrain.sample(x, y)
    assert np.isnan(z[:3]).all()
    assert_allclose(z[3], plane(x[3], y[3]), atol=1e-9)  # plane: derived


def test_nan_nodata_is_masked(tmp_path):
    grid = plane_grid().astype(np.float32)
    grid[10, 10] = np.nan
    path = write_raster(tmp_path / "nan.tif", grid, nodata=np.nan)
    with TerrainSampler(path) as terrain:
        assert np.isnan(terrain.sample(*cell_centre(10.3, 10.3)))
        assert np.isfinite(terrain.sample(*cell_centre(20, 20)))


def test_outside_is_nan_and_edge_half_pixel_is_clamped(plane_tif):
    row = 30
    _, y_row = cell_centre(row, 0)
    x = np.array([X0 - 0.01, X0 + COLS * RES + 0.01, X0 + 0.25 * RES, X0 + (COLS - 0.1) * RES])
    y = np.full(4, y_row)
    with TerrainSampler(plane_tif) as terrain:
        z = terrain.sample(x, y)
        inside = terrain.contains(x, y)
    assert np.isnan(z[:2]).all()
    assert inside.tolist() == [False, False, True, True]
    # Documented clamp: the outer half pixel takes the edge pixel-centre value.
    assert_allclose(z[2], plane(*cell_centre(row, 0)), atol=1e-9)
    assert_allclose(z[3], plane(*cell_centre(row, COLS - 1)), atol=1e-9)


def test_nonfinite_coordinates_give_nan(plane_tif):
    with TerrainSampler(plane_tif) as terrain:
        z = terrain.sample([np.nan, X0 + 11.0], [Y0 - 11.0, np.inf])
    assert np.isnan(z).all()


def test_points_in_another_crs_give_same_elevation(plane_tif, rng):
    x, y = interior_points(rng, 200)
    lon, lat = pyproj.Transformer.from_crs("EPSG:32633", "EPSG:4326", always_xy=True).transform(x, y)
    with TerrainSampler(plane_tif) as terrain:
        native = terrain.sample(x, y)
        via_geographic = terrain.sample(lon, lat, crs="EPSG:4326")
        again = terrain.sample(lon, lat, crs="EPSG:4326")
        assert len(terrain._transformers) == 1  # one cached transformer for EPSG:4326
        assert terrain.contains(lon, lat, crs="EPSG:4326").all()
    assert_allclose(via_geographic, native, rtol=0, atol=1e-6)
    assert_allclose(again, via_geographic, rtol=0, atol=0)


@pytest.mark.parametrize("z_units, metres_per_unit", [
    ("ft", 0.3048),           # international foot, exact by definition (1959 yard and pound agreement)
    ("ftUS", 1200 / 3937),    # US survey foot, exact by definition (Mendenhall Order, 1893)
])
def test_feet_z_units_scale_samples(plane_tif, rng, z_units, metres_per_unit):
    x, y = interior_points(rng, 50)
    with TerrainSampler(plane_tif, z_units=z_units) as terrain:
        z = terrain.sample(x, y)
        assert terrain.z_factor == pytest.approx(metres_per_unit, rel=1e-15)
        assert z_units in terrain.z_unit_note
    assert_allclose(z, plane(x, y) * metres_per_unit, rtol=1e-12)


def test_compound_crs_with_foot_vertical_is_detected(tmp_path, rng):
    # EPSG:6360 is a vertical CRS in US survey feet.
    path = write_raster(tmp_path / "ftvert.tif", plane_grid(), crs="EPSG:32633+6360")
    x, y = interior_points(rng, 20)
    with TerrainSampler(path) as terrain:  # default z_units="m": the CRS must win
        assert terrain.crs.is_compound
        assert terrain.z_factor == pytest.approx(1200 / 3937, rel=1e-12)  # US survey foot, exact by definition
        assert "foot" in terrain.z_unit_note
        assert_allclose(terrain.sample(x, y), plane(x, y) * 1200 / 3937, rtol=1e-12)  # applied once
        # A compound raster CRS still accepts points in its horizontal CRS.
        assert_allclose(terrain.sample(x, y, crs="EPSG:32633"), terrain.sample(x, y))


def test_compound_crs_in_metres_keeps_z_units(tmp_path):
    # EPSG:5773 is a vertical CRS in metres.
    path = write_raster(tmp_path / "mvert.tif", plane_grid(), crs="EPSG:32633+5773")
    with TerrainSampler(path) as terrain:
        assert terrain.z_factor == 1.0


def test_read_window_points_returns_only_cells_in_box(tmp_path):
    grid = plane_grid()
    grid[20, 21] = NODATA
    path = write_raster(tmp_path / "cells.tif", grid)
    # Box edges fall between cell centres so the window read holds border
    # cells whose centres lie outside the box: x 37.6..50.6, y -44.5..-33.4.
    px = np.array([X0 + 41.1, X0 + 47.1])
    py = np.array([Y0 - 36.9, Y0 - 41.0])
    radius = 3.5
    # Expected: every pixel centre inside the expanded box, minus the nodata cell.
    rows, cols = np.mgrid[0:ROWS, 0:COLS]
    cx, cy = cell_centre(rows, cols)
    in_box = ((cx >= px.min() - radius) & (cx <= px.max() + radius)
              & (cy >= py.min() - radius) & (cy <= py.max() + radius))
    in_box[20, 21] = False
    with TerrainSampler(path) as terrain:
        xs, ys, zs = terrain.read_window_points(px, py, radius)
        assert terrain.sample_window_count == 1
        window = terrain.last_window
    assert window.width * window.height > in_box.sum() + 1  # border cells were read, then dropped
    assert sorted(zip(xs, ys)) == sorted(zip(cx[in_box], cy[in_box]))
    assert_allclose(zs, plane(xs, ys), atol=1e-9)  # plane: derived


def test_read_window_points_outside_raster_is_empty(plane_tif):
    with TerrainSampler(plane_tif) as terrain:
        xs, ys, zs = terrain.read_window_points([X0 - 500.0], [Y0 + 500.0], 10.0)
        assert terrain.sample_window_count == 0
    assert xs.size == ys.size == zs.size == 0


def test_no_crs_is_data_error_naming_the_file(tmp_path):
    path = write_raster(tmp_path / "nocrs.tif", plane_grid(), crs=None)
    with pytest.raises(DataError, match=r"terrain .*nocrs\.tif has no CRS"):
        TerrainSampler(path)


def test_two_bands_is_data_error(tmp_path):
    path = write_raster(tmp_path / "two.tif", np.stack([plane_grid(), plane_grid()]))
    with pytest.raises(DataError, match=r"two\.tif has 2 bands"):
        TerrainSampler(path)


def test_unreadable_file_is_data_error(tmp_path):
    path = tmp_path / "junk.tif"
    path.write_text("not a raster")
    with pytest.raises(DataError, match=r"junk\.tif cannot be opened"):
        TerrainSampler(path)
    with pytest.raises(DataError, match=r"missing\.tif cannot be opened"):
        TerrainSampler(tmp_path / "missing.tif")


def test_unknown_z_units_is_data_error(plane_tif):
    with pytest.raises(DataError, match="z_units 'yd'"):
        TerrainSampler(plane_tif, z_units="yd")


def test_properties(plane_tif):
    with TerrainSampler(plane_tif) as terrain:
        assert terrain.crs == pyproj.CRS("EPSG:32633")
        assert terrain.res == (RES, RES)
        assert terrain.nodata == NODATA
        assert tuple(terrain.bounds) == (X0, Y0 - ROWS * RES, X0 + COLS * RES, Y0)
        assert terrain.path == plane_tif


def test_held_windows_give_the_same_samples_with_fewer_reads(tmp_path, rng):
    # Rough terrain (random cells, nodata holes, the raster edge) so any misplaced cell would show.
    data = rng.uniform(100.0, 140.0, size=(ROWS, COLS)).astype("float32")
    data[40:44, 60:63] = NODATA
    path = write_raster(tmp_path / "rough.tif", data)
    # Three nearby point sets (like the wires of one span) and their union (like the terrain stage after them).
    sets = [interior_points(rng, 200, X0 + 60.0 + k, X0 + 190.0 + k, Y0 - 140.0, Y0 - 2.0) for k in (0.0, 6.0, 12.0)]
    sets.append(tuple(np.concatenate(parts) for parts in zip(*sets)))
    with TerrainSampler(path) as plain, TerrainSampler(path, hold_windows=4) as holding:
        for x, y in sets:
            np.testing.assert_array_equal(holding.sample(x, y), plain.sample(x, y))  # same cells: bit-identical
        assert plain.sample_window_count == 4
        assert holding.sample_window_count == 1  # the first window, grown by the margin, serves the rest
    assert holding.reference().hold_windows == 4


def test_a_long_corridor_is_read_by_tiles_near_its_points(tmp_path, rng):
    # A diagonal corridor (a tension section's wires) across a raster: its bounding box is the whole raster, but
    # only tiles near the points are read, each small enough to be held; the samples equal one-window reads.
    data = rng.uniform(100.0, 140.0, size=(600, 600)).astype("float32")
    path = write_raster(tmp_path / "wide.tif", data)
    t = rng.uniform(0.0, 1.0, 20_000)
    x = X0 + 10.0 + t * 1180.0 + rng.uniform(-4.0, 4.0, t.size)
    y = Y0 - 10.0 - t * 1180.0 + rng.uniform(-4.0, 4.0, t.size)
    with TerrainSampler(path) as whole, TerrainSampler(path, hold_windows=16) as tiled:
        whole.hold_max_cells = whole.max_window_cells  # the old way: one window around everything
        tiled.hold_max_cells = 100 * 100
        tiled.hold_margin_cells = 4
        read = []
        original_read = tiled._read
        tiled._read = lambda window: read.append(window) or original_read(window)
        np.testing.assert_array_equal(tiled.sample(x, y), whole.sample(x, y))
        assert whole.sample_window_count == 1
    assert len(read) > 1 and all(w.width * w.height <= 100 * 100 for w in read)
    assert sum(w.width * w.height for w in read) < 0.25 * 600 * 600


def test_held_windows_do_not_grow_into_blocks_the_read_would_not_decode(tmp_path, rng):
    # A tiled raster (64-cell blocks): points near the corner of one block. The held window grows by the margin
    # only up to that block's edges, so no neighbouring block is decoded for it; samples stay bit-identical.
    data = rng.uniform(100.0, 140.0, size=(256, 256)).astype("float32")
    path = tmp_path / "tiled.tif"
    with rasterio.open(path, "w", driver="GTiff", width=256, height=256, count=1, dtype="float32", crs="EPSG:32633",
                       transform=Affine(RES, 0.0, X0, 0.0, -RES, Y0), tiled=True, blockxsize=64,
                       blockysize=64) as ds:
        ds.write(data, 1)
    x, y = interior_points(rng, 100, X0 + 2 * RES * 70, X0 + 2 * RES * 80, Y0 - 2 * RES * 80, Y0 - 2 * RES * 70)
    with TerrainSampler(path) as plain, TerrainSampler(path, hold_windows=4) as holding:
        holding.hold_margin_cells = 20
        np.testing.assert_array_equal(holding.sample(x, y), plain.sample(x, y))
        window = holding.last_window
    # the points' cells lie in rows and columns 140..161, within the block 128..191 each way
    assert (window.row_off, window.col_off) == (128, 128)
    assert window.row_off + window.height <= 192 and window.col_off + window.width <= 192
    assert window.height > plain.last_window.height  # it did grow, inside the block


def test_samplers_closed_in_the_order_they_were_opened_close_cleanly(tmp_path, rng):
    """A terrain and a second raster (a surface model, a helper thread's own handle) may be closed first-opened
    first: the later one must still read and then close without a GDAL environment error."""
    data = rng.uniform(100.0, 140.0, size=(ROWS, COLS)).astype("float32")
    path = write_raster(tmp_path / "two.tif", data)
    x, y = interior_points(rng, 50, X0 + 10.0, X0 + 100.0, Y0 - 100.0, Y0 - 10.0)
    first, second = TerrainSampler(path), TerrainSampler(path)
    expected = second.sample(x, y)
    first.close()
    np.testing.assert_array_equal(second.sample(x, y), expected)
    second.close()
    second.close()  # twice is still safe
