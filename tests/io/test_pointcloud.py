"""LAS/LAZ reading: round trips through laspy, chunked reading, corridor cut, CRS from the file or the project."""
import time
import tracemalloc

import laspy
import numpy as np
import pytest
from pyproj import CRS, Transformer

from routesag.errors import DataError
from routesag.io.pointcloud import chord_corridor, read_point_cloud


def write_cloud(path, x, y, z, cls, crs="EPSG:32633", scale=0.001):
    header = laspy.LasHeader(point_format=6, version="1.4")
    header.scales = np.array([scale, scale, 0.001])
    header.offsets = np.array([np.floor(x.min()), np.floor(y.min()), 0.0])
    if crs:
        header.add_crs(CRS.from_user_input(crs))
    las = laspy.LasData(header)
    las.x, las.y, las.z = x, y, z
    las.classification = cls
    las.write(str(path))
    return path


def random_points(n, seed=0):
    rng = np.random.default_rng(seed)
    x = 500_000.0 + rng.uniform(0, 1000, n)
    y = 5_000_000.0 + rng.uniform(-200, 200, n)
    return x, y, rng.uniform(100, 150, n), rng.choice([2, 5, 6, 14], n).astype(np.uint8)


@pytest.mark.parametrize("suffix", [".las", ".laz"])
def test_round_trip(tmp_path, suffix):
    x, y, z, cls = random_points(5000)
    path = write_cloud(tmp_path / f"cloud{suffix}", x, y, z, cls)
    cloud = read_point_cloud(path, work_crs="EPSG:32633", chunk_points=1234)
    assert cloud.n_read == cloud.n_kept == 5000
    np.testing.assert_allclose(cloud.x, x, atol=0.0006)  # 1 mm scale: half a unit of rounding
    np.testing.assert_allclose(cloud.z, z, atol=0.0006)
    np.testing.assert_array_equal(cloud.classification, cls)
    assert cloud.per_class == {int(c): int((cls == c).sum()) for c in np.unique(cls)}


def test_corridor_keeps_only_points_near_the_line(tmp_path):
    x, y, z, cls = random_points(20_000)
    path = write_cloud(tmp_path / "cloud.las", x, y, z, cls)
    corridor = chord_corridor([500_000.0], [5_000_000.0], [501_000.0], [5_000_000.0], 30.0)
    cloud = read_point_cloud(path, chunk_points=3000, corridor=corridor)
    assert cloud.n_read == 20_000
    assert cloud.n_kept == int((np.abs(y - 5_000_000.0) <= 30.0).sum())
    assert np.all(np.abs(cloud.y - 5_000_000.0) <= 30.0 + 1e-3)


def test_chunked_reading_is_bounded_in_memory(tmp_path):
    """A file ten times the chunk, nearly all cut by the corridor: peak memory far below the whole file's."""
    n = 300_000
    x, y, z, cls = random_points(n)
    path = write_cloud(tmp_path / "big.las", x, y, z, cls)
    corridor = chord_corridor([500_000.0], [5_000_000.0], [501_000.0], [5_000_000.0], 2.0)
    tracemalloc.start()
    cloud = read_point_cloud(path, chunk_points=n // 10, corridor=corridor)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    whole_xyz_bytes = n * 3 * 8  # x, y, z as float64 for the whole file, without the record itself
    assert cloud.n_read == n
    assert peak < 0.6 * whole_xyz_bytes


def test_other_crs_is_transformed_to_the_working_crs(tmp_path):
    # points written in geographic WGS 84, read into UTM 33N
    lon, lat = np.array([15.0, 15.01]), np.array([45.0, 45.005])
    path = write_cloud(tmp_path / "geo.las", lon, lat, np.array([100.0, 101.0]), np.array([14, 14], np.uint8),
                       crs=None, scale=1e-8)
    with pytest.raises(DataError, match="names no CRS"):
        read_point_cloud(path, work_crs="EPSG:32633")
    cloud = read_point_cloud(path, work_crs="EPSG:32633", crs="EPSG:4326")
    ex, ey = Transformer.from_crs("EPSG:4326", "EPSG:32633", always_xy=True).transform(lon, lat)
    # a 1e-8 deg scale rounds positions by about 1 mm
    np.testing.assert_allclose(cloud.x, ex, atol=0.005)
    np.testing.assert_allclose(cloud.y, ey, atol=0.005)
    assert cloud.x.min() > 400_000  # really in metres of UTM, not degrees


def test_not_a_point_cloud_is_a_data_error(tmp_path):
    bad = tmp_path / "bad.laz"
    bad.write_bytes(b"not a point cloud at all")
    with pytest.raises(DataError, match="bad.laz"):
        read_point_cloud(bad)


@pytest.mark.parametrize("suffix", [".las", ".laz"])
def test_truncated_or_corrupted_files_are_data_errors(tmp_path, suffix):
    """Whatever the bytes: the points or a DataError naming the file, never another exception.

    One damaged LAZ case claims millions of VLRs (laspy used to build them all, for about a minute); the header
    check refuses it at once, so the whole set is bounded in time.
    """
    x, y, z, cls = random_points(3000)
    good = write_cloud(tmp_path / f"good{suffix}", x, y, z, cls).read_bytes()
    rng = np.random.default_rng(11)
    cases = [good[:n] for n in (10, 200, 400, len(good) // 2, len(good) - 7)]
    for _ in range(12):
        damaged = bytearray(good)
        for i in rng.integers(0, len(good), 20):
            damaged[i] = int(rng.integers(0, 256))
        cases.append(bytes(damaged))
    start = time.perf_counter()
    for i, data in enumerate(cases):
        path = tmp_path / f"case{i}{suffix}"
        path.write_bytes(data)
        try:
            read_point_cloud(path, work_crs="EPSG:32633", chunk_points=700)
        except DataError as exc:
            assert path.name in str(exc)
    # a generous bound on a shared 2-core machine; the unbounded case alone took 35-60 s
    assert time.perf_counter() - start < 15.0


def test_a_header_claiming_more_records_than_fit_is_refused_at_once(tmp_path):
    x, y, z, cls = random_points(100)
    data = bytearray(write_cloud(tmp_path / "good.laz", x, y, z, cls).read_bytes())
    data[100:104] = (50_000_000).to_bytes(4, "little")  # number of VLRs (ASPRS LAS 1.4 R15, Table 3)
    bad = tmp_path / "bad.laz"
    bad.write_bytes(bytes(data))
    with pytest.raises(DataError, match=r"bad\.laz: the header claims 50000000 variable-length records"):
        read_point_cloud(bad)
