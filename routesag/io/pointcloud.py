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
    x, y, z, cls = (np.concatenate([p[i] for p in parts]) if parts else np.empty(0) for i in range(4))
    cls = cls.astype(np.uint8)
    values, counts = np.unique(cls, return_counts=True)
    return PointCloud(x, y, z, cls, n_read, str(work_crs or source_crs),
                      {int(v): int(n) for v, n in zip(values, counts)})


#: Largest credible LAZ compression ratio; LAZ typically holds a point in 1/5 to 1/10 of its LAS size.
MAX_LAZ_RATIO = 50


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
    if transform is not None:
        x, y, z = transform.transform(x, y, z)
    cls = np.asarray(chunk.classification, dtype=np.uint8)
    mask = corridor(x, y) if corridor is not None else np.ones(x.size, dtype=bool)
    return x[mask], y[mask], z[mask], cls[mask]


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
    source, target = CRS.from_user_input(source_crs), CRS.from_user_input(work_crs)
    if source == target:
        return None
    return Transformer.from_crs(source, target, always_xy=True)


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
