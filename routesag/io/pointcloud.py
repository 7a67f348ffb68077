"""Read a LAS/LAZ point cloud in chunks, keeping only the points in a corridor.

Never reads the whole file at once: laspy's chunk iterator (lazrs backend
for LAZ) gives ``chunk_points`` points at a time; each chunk is reprojected
to the working CRS and cut to the corridor before the next is read, so the
memory held is one chunk plus the kept points.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from routesag.errors import DataError

#: Points per chunk; about 30 bytes each in a LAS 1.4 point format 6 record.
CHUNK_POINTS = 1_000_000


@dataclass
class PointCloud:
    """Kept points in the working CRS: x, y, z [m] and the LAS class."""

    x: np.ndarray
    y: np.ndarray
    z: np.ndarray
    classification: np.ndarray
    n_read: int = 0
    crs: str | None = None
    per_class: dict = field(default_factory=dict)

    @property
    def n_kept(self) -> int:
        return int(self.x.size)


LAS_SUFFIXES = (".las", ".laz")
#: LAS class of a point in a vector layer without a classification field (ASPRS LAS 1.4 R15: 1 unclassified).
UNCLASSIFIED = 1


def read_points(path, work_crs=None, corridor=None, crs=None, layer=None, chunk_points=CHUNK_POINTS) -> PointCloud:
    """Any point source by its suffix: LAS/LAZ (:func:`read_point_cloud`), a CSV with x, y, z
    (:func:`read_point_csv`) or a vector point layer with Z (:func:`read_point_layer`)."""
    suffix = Path(path).suffix.lower()
    if not Path(path).is_file():
        raise DataError(f"point cloud {path}: not found")
    if suffix in LAS_SUFFIXES:
        return read_point_cloud(path, work_crs, corridor, crs, chunk_points)
    if suffix == ".csv":
        return read_point_csv(path, work_crs, corridor, crs, chunk_points)
    return read_point_layer(path, work_crs, corridor, crs, layer, chunk_points)


def read_point_cloud(path, work_crs=None, corridor=None, crs=None, chunk_points=CHUNK_POINTS) -> PointCloud:
    """Read a LAS/LAZ file chunk by chunk.

    Parameters
    ----------
    path : str or Path
        LAS or LAZ 1.2-1.4.
    work_crs : CRS-like, optional
        Target CRS; points are transformed to it when the file's CRS differs.
    corridor : callable, optional
        ``corridor(x, y) -> bool mask`` of points to keep (working CRS).
    crs : CRS-like, optional
        CRS of the file when its header has none (``[inputs] point_cloud_crs``);
        when given it overrides the header.
    chunk_points : int
        Points per chunk.

    Raises
    ------
    DataError
        Naming the file: unreadable, no CRS to transform from.
    """
    import laspy

    path = Path(path)
    _check_vlr_count(path)
    try:
        reader_cm = laspy.open(str(path))
    except Exception as exc:  # laspy and its decoders raise many types (struct, lazrs, numpy) for bad bytes
        raise DataError(f"point cloud {path}: cannot be read as LAS/LAZ: {exc}") from None
    parts, n_read = [], 0
    with reader_cm as reader:
        _check_point_count(reader.header, path)
        source_crs = crs or _header_crs(reader.header, path)
        transform = _transformer(source_crs, work_crs, path)
        try:
            for chunk in reader.chunk_iterator(chunk_points):
                n_read += len(chunk)
                parts.append(_keep(chunk, transform, corridor))
        except DataError:
            raise
        except Exception as exc:  # a damaged chunk: any decoder error, never a partial cloud
            raise DataError(f"point cloud {path}: damaged after {n_read} points: {exc}") from None
    return _cloud(parts, n_read, work_crs or source_crs)


def _cloud(parts, n_read, crs) -> PointCloud:
    x, y, z, cls = (np.concatenate([p[i] for p in parts]) if parts else np.empty(0) for i in range(4))
    cls = cls.astype(np.uint8)
    values, counts = np.unique(cls, return_counts=True)
    return PointCloud(x, y, z, cls, n_read, None if crs is None else str(crs),
                      {int(v): int(n) for v, n in zip(values, counts)})


def read_point_csv(path, work_crs=None, corridor=None, crs=None, chunk_points=CHUNK_POINTS) -> PointCloud:
    """A CSV with columns x, y, z [m] and an optional ``classification`` (LAS class), read in chunks.

    A CSV carries no CRS: ``crs`` (``[inputs] point_cloud_crs``) is needed to transform it.
    """
    import pandas as pd

    path = Path(path)
    transform = _transformer(crs, work_crs, path)
    parts, n_read, row = [], 0, 1
    try:
        for chunk in pd.read_csv(path, chunksize=chunk_points):
            columns = {c.strip().lower(): c for c in chunk.columns}
            missing = [c for c in ("x", "y", "z") if c not in columns]
            if missing:
                raise DataError(f"point cloud {path}: missing column(s) {', '.join(missing)} "
                                f"(found {', '.join(map(str, chunk.columns))})")
            xyz = [_numbers(chunk[columns[c]], path, c, row) for c in ("x", "y", "z")]
            cls = (_classes(chunk[columns["classification"]], path, row) if "classification" in columns
                   else np.full(len(chunk), UNCLASSIFIED, dtype=np.uint8))
            parts.append(_cut(*xyz, cls, transform, corridor))
            n_read += len(chunk)
            row += len(chunk)
    except DataError:
        raise
    except Exception as exc:  # pandas raises several types for bad CSV bytes
        raise DataError(f"point cloud {path}: cannot be read as CSV: {exc}") from None
    return _cloud(parts, n_read, work_crs or crs)


def read_point_layer(path, work_crs=None, corridor=None, crs=None, layer=None,
                     chunk_points=CHUNK_POINTS) -> PointCloud:
    """A vector layer of Point Z features (GeoPackage, FlatGeobuf, ...), with an optional ``classification``
    field, read ``chunk_points`` features at a time."""
    import pyogrio
    import shapely

    path = Path(path)
    try:
        info = pyogrio.read_info(path, layer=layer)
    except Exception as exc:  # GDAL errors for a missing or foreign file, or a wrong layer name
        raise DataError(f"point cloud {path}: cannot be read as a point layer: {exc}") from None
    if "Point" not in str(info.get("geometry_type")) or "Z" not in str(info.get("geometry_type")):
        raise DataError(f"point cloud {path}: geometry is {info.get('geometry_type')}; expected Point Z")
    has_class = "classification" in list(info["fields"])
    source_crs = crs or info.get("crs")
    transform = _transformer(source_crs, work_crs, path)
    parts, total = [], int(info["features"])
    for start in range(0, total, chunk_points):
        try:
            frame = pyogrio.read_dataframe(path, layer=layer, skip_features=start, max_features=chunk_points,
                                           columns=["classification"] if has_class else [])
        except Exception as exc:  # a damaged page of features
            raise DataError(f"point cloud {path}: damaged after {start} points: {exc}") from None
        coords = shapely.get_coordinates(frame.geometry.values, include_z=True)
        if len(coords) != len(frame):
            raise DataError(f"point cloud {path}: features {start + 1}-{start + len(frame)} include empty or "
                            "multi-part geometries; expected one point each")
        cls = (_classes(frame["classification"], path, start + 1) if has_class
               else np.full(len(frame), UNCLASSIFIED, dtype=np.uint8))
        parts.append(_cut(coords[:, 0], coords[:, 1], coords[:, 2], cls, transform, corridor))
    return _cloud(parts, total, work_crs or source_crs)


def _numbers(column, path, name, first_row):
    import pandas as pd

    values = pd.to_numeric(column, errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        raise DataError(f"point cloud {path}: row {first_row + int(bad[0])}: field {name!r} = "
                        f"{column.iloc[bad[0]]!r} is not a number")
    return values


def _classes(column, path, first_row):
    values = _numbers(column, path, "classification", first_row)
    bad = np.flatnonzero((values != np.round(values)) | (values < 0) | (values > 255))
    if bad.size:
        raise DataError(f"point cloud {path}: row {first_row + int(bad[0])}: field 'classification' = "
                        f"{values[bad[0]]!r}; expected a LAS class 0-255")
    return values.astype(np.uint8)


def _cut(x, y, z, cls, transform, corridor):
    if transform is not None:
        x, y, z = (np.asarray(v, dtype=float) for v in transform.transform(x, y, z))
    mask = corridor(x, y) if corridor is not None else np.ones(np.size(x), dtype=bool)
    return x[mask], y[mask], z[mask], cls[mask]


#: Largest credible LAZ compression ratio; LAZ typically holds a point in 1/5 to 1/10 of its LAS size.
MAX_LAZ_RATIO = 50


#: Size of a variable-length record's header in a LAS file [bytes] (ASPRS LAS 1.4 R15, sec. 2.5).
VLR_HEADER_BYTES = 54


def _check_vlr_count(path):
    """A damaged header claiming millions of VLRs would make laspy build them all (a minute for one file):
    the VLRs must fit between the header and the points (header size at byte 94, offset to the points at
    96, number of VLRs at 100; ASPRS LAS 1.4 R15, Table 3)."""
    import struct

    with open(path, "rb") as handle:
        head = handle.read(104)
    if len(head) < 104 or head[:4] != b"LASF":
        return  # not a LAS header at all: laspy names the problem
    header_size, to_points, n_vlrs = struct.unpack_from("<HII", head, 94)
    if n_vlrs * VLR_HEADER_BYTES > max(to_points - header_size, 0):
        raise DataError(f"point cloud {path}: the header claims {n_vlrs} variable-length records, more than fit "
                        f"in the {max(to_points - header_size, 0)} bytes before the points (a damaged file)")


def _check_point_count(header, path):
    """A damaged header claiming more points than the file can hold would decode for a very long time."""
    size = path.stat().st_size
    record_bytes = header.point_count * header.point_format.size
    compressed = header.point_format.id >= 128 or path.suffix.lower() == ".laz" or header.are_points_compressed
    if record_bytes > size * (MAX_LAZ_RATIO if compressed else 1):
        raise DataError(f"point cloud {path}: the header claims {header.point_count} points, more than its "
                        f"{size} bytes can hold (a damaged file)")


def _keep(chunk, transform, corridor):
    x, y, z = (np.asarray(chunk[a], dtype=float) for a in ("x", "y", "z"))
    return _cut(x, y, z, np.asarray(chunk.classification, dtype=np.uint8), transform, corridor)


def _header_crs(header, path):
    try:
        return header.parse_crs()
    except Exception as exc:  # laspy raises several types for a malformed WKT/GeoTIFF record
        raise DataError(f"point cloud {path}: its CRS record cannot be read ({exc}); "
                        "give [inputs] point_cloud_crs") from None


def _transformer(source_crs, work_crs, path):
    from pyproj import CRS, Transformer

    if work_crs is None:
        return None
    if source_crs is None:
        raise DataError(f"point cloud {path}: the file names no CRS; give [inputs] point_cloud_crs")
    try:
        source, target = CRS.from_user_input(source_crs), CRS.from_user_input(work_crs)
        if source == target:
            return None
        return Transformer.from_crs(source, target, always_xy=True)
    except Exception as exc:  # pyproj's CRSError/ProjError: a local grid or a CRS PROJ cannot relate
        raise DataError(f"point cloud {path}: CRS {str(source_crs)[:80]!r} cannot be transformed to the working "
                        f"CRS ({str(exc).splitlines()[0] if str(exc) else type(exc).__name__}); give the point "
                        "cloud the structures' CRS") from None


def chord_corridor(x0, y0, x1, y1, half_width_m):
    """``corridor(x, y)``: points within ``half_width_m`` in plan of any of the segments (x0, y0)-(x1, y1) [m]."""
    a = np.column_stack([x0, y0]).astype(float)
    d = np.column_stack([x1, y1]).astype(float) - a
    length2 = np.maximum((d ** 2).sum(axis=1), 1e-12)

    def inside(x, y):
        keep = np.zeros(np.size(x), dtype=bool)
        p = np.column_stack([x, y])
        for ai, di, li in zip(a, d, length2):  # one pass per span, vectorised over the chunk's points
            t = np.clip(((p - ai) @ di) / li, 0.0, 1.0)
            keep |= ((p - ai - t[:, None] * di) ** 2).sum(axis=1) <= half_width_m ** 2
        return keep
    return inside
