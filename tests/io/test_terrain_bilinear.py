"""TerrainSampler's bilinear values, bit for bit, against the plain formula on the whole grid in memory.

The oracle is the sampler's former arithmetic written on the full array with 2-D indexing: clamp onto the
outermost cell centres, the four neighbours, ((z00 (1 - fu) + z01 fu) (1 - fv) + (z10 (1 - fu) + z11 fu) fv)
(Press et al., Numerical Recipes 3rd ed., sec. 3.6), NaN outside the raster and wherever a neighbour is nodata.
Any other order of operations, a cell off by one or a nodata neighbour missed shows as a difference.
"""
import numpy as np
import pytest
import rasterio
from affine import Affine

from routesag.io.terrain import TerrainSampler

X0, Y0 = 500_000.0, 6_000_000.0
NODATA = -9999.0


def reference_bilinear(z, transform, x, y):
    """Bilinear values of grid ``z`` (NaN = no data) at world points, as the sampler defines them."""
    inv = ~transform
    col_f = inv.a * x + inv.b * y + inv.c
    row_f = inv.d * x + inv.e * y + inv.f
    height, width = z.shape
    with np.errstate(invalid="ignore"):
        inside = (col_f >= 0) & (col_f <= width) & (row_f >= 0) & (row_f <= height)
    out = np.full(x.shape, np.nan)
    u = np.clip(col_f[inside] - 0.5, 0.0, width - 1.0)
    v = np.clip(row_f[inside] - 0.5, 0.0, height - 1.0)
    c0 = np.minimum(u.astype(np.int64), max(width - 2, 0))
    r0 = np.minimum(v.astype(np.int64), max(height - 2, 0))
    c1, r1 = np.minimum(c0 + 1, width - 1), np.minimum(r0 + 1, height - 1)
    fu, fv = u - c0, v - r0
    out[inside] = ((z[r0, c0] * (1.0 - fu) + z[r0, c1] * fu) * (1.0 - fv)
                   + (z[r1, c0] * (1.0 - fu) + z[r1, c1] * fu) * fv)
    return out


def write(path, z, transform, block=None):
    profile = dict(driver="GTiff", width=z.shape[1], height=z.shape[0], count=1, dtype="float32",
                   crs="EPSG:32633", transform=transform, nodata=NODATA)
    if block:
        profile.update(tiled=True, blockxsize=block, blockysize=block, compress="deflate")
    with rasterio.open(path, "w", **profile) as ds:
        ds.write(z.astype("float32"), 1)
    return path


def points_over(transform, shape, rng, n):
    """Points inside, on cell centres and edges, on and beyond the raster's border, and NaN ones."""
    rows, cols = shape
    col = np.concatenate([rng.uniform(-0.3, cols + 0.3, n), rng.integers(0, cols + 1, n // 4) + 0.0,
                          rng.integers(0, cols, n // 4) + 0.5, [0.0, cols, 0.0, cols, np.nan, 1e-300]])
    row = np.concatenate([rng.uniform(-0.3, rows + 0.3, n), rng.integers(0, rows + 1, n // 4) + 0.0,
                          rng.integers(0, rows, n // 4) + 0.5, [0.0, 0.0, rows, rows, 0.5, -1e-300]])
    x = transform.a * col + transform.b * row + transform.c
    y = transform.d * col + transform.e * row + transform.f
    return x, y


@pytest.mark.parametrize("shape", [(1, 1), (1, 9), (9, 1), (2, 2), (37, 53), (300, 290)])
@pytest.mark.parametrize("rotated", [False, True])
def test_samples_equal_the_formula_bit_for_bit(tmp_path, shape, rotated):
    rng = np.random.default_rng(shape[0] * 1000 + shape[1])
    z = rng.uniform(100.0, 140.0, shape).astype("float32").astype(np.float64)
    holes = (rng.uniform(size=shape) < 0.03) & (z.size > 4)  # a tiny raster keeps its cells
    z[holes] = np.nan
    transform = (Affine(0.8, 0.3, X0, 0.25, -0.9, Y0) if rotated else Affine(1.5, 0.0, X0, 0.0, -1.5, Y0))
    path = write(tmp_path / "z.tif", np.where(holes, NODATA, z), transform, block=64 if shape[0] > 64 else None)
    x, y = points_over(transform, shape, rng, 3000)
    expected = reference_bilinear(z, transform, x, y)
    assert np.isnan(expected).any() and np.isfinite(expected).any()
    with TerrainSampler(path) as plain, TerrainSampler(path, hold_windows=4) as holding, \
            TerrainSampler(path, hold_windows=4) as tiled:
        tiled.max_window_cells = tiled.hold_max_cells = 24 * 24  # forces tile-by-tile reads
        tiled.hold_margin_cells = 3
        for sampler in (plain, holding, tiled):
            np.testing.assert_array_equal(sampler.sample(x, y), expected)
            np.testing.assert_array_equal(sampler.sample(x[:7], y[:7]), expected[:7])  # from a held window
            np.testing.assert_array_equal(sampler.sample(x.reshape(-1, 2), y.reshape(-1, 2)),
                                          expected.reshape(-1, 2))
            inside = np.isfinite(expected)
            np.testing.assert_array_equal(sampler.sample(x[inside], y[inside]), expected[inside])
        if z.size > 24 * 24:
            assert tiled.sample_window_count > plain.sample_window_count


def test_grid_coords_are_centre_based_and_the_inputs_stay_untouched(tmp_path):
    transform = Affine(0.8, 0.3, X0, 0.25, -0.9, Y0)
    path = write(tmp_path / "z.tif", np.full((20, 30), 120.0), transform)
    x, y = transform @ (np.array([0.5, 3.25, 29.5]), np.array([0.5, 7.75, 19.5]))
    x0, y0 = x.copy(), y.copy()
    with TerrainSampler(path) as terrain:
        u, v = terrain.grid_coords(x, y)
        terrain.sample(x, y)
    inv = ~transform
    np.testing.assert_array_equal(u, (inv.a * x0 + inv.b * y0 + inv.c) - 0.5)
    np.testing.assert_array_equal(v, (inv.d * x0 + inv.e * y0 + inv.f) - 0.5)
    np.testing.assert_allclose(u, [0.0, 2.75, 29.0], atol=1e-9)
    np.testing.assert_array_equal(x, x0)  # sampling works on arrays of its own
    np.testing.assert_array_equal(y, y0)


def test_a_corner_outside_its_window_is_an_error_not_a_clamped_height(tmp_path):
    # The corners are read without numpy's bound check; a wrong box must fail loudly, never clamp silently.
    path = write(tmp_path / "z.tif", np.arange(400.0).reshape(20, 20), Affine(1.0, 0.0, X0, 0.0, -1.0, Y0))
    with TerrainSampler(path) as terrain:
        u, v = np.array([5.25]), np.array([9.5])
        c0, r0 = u.astype(np.int64), v.astype(np.int64)
        assert terrain._interpolate_in_window(u.copy(), v.copy(), c0, r0, box=(9, 9, 5, 5))[0] == 9.5 * 20 + 5.25
        with pytest.raises(RuntimeError, match="outside window"):
            terrain._interpolate_in_window(u.copy(), v.copy(), c0, r0, box=(0, 0, 0, 0))
