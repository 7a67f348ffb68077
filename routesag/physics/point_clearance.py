"""Clearance from wire stations to the nearest surveyed surface point (vegetation, building), in 3D.

A k-d tree over one section's kept surface points answers, for every station
of the wire (swung or at rest, whatever positions are given), the true 3D
distance to the nearest point and which point it is.

References
----------
.. [1] Maneewongvatana, S. and Mount, D.M., "Analysis of approximate nearest
   neighbor searching with clustered point sets", 1999 (the sliding-midpoint
   k-d tree of ``scipy.spatial.cKDTree``).
.. [2] ASPRS, LAS Specification 1.4 R15, 2019, Table 17 (classes 3-5 low,
   medium and high vegetation, 6 building).
"""
from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

__all__ = ["VEGETATION_CLASSES", "BUILDING_CLASSES", "nearest_surface", "surface_category"]

VEGETATION_CLASSES = (3, 4, 5)
BUILDING_CLASSES = (6,)


def nearest_surface(stations_xyz_m, points_xyz_m):
    """3D distance from each station to the nearest point, and that point's index.

    Parameters
    ----------
    stations_xyz_m : array (n, 3)
        Wire stations [m].
    points_xyz_m : array (m, 3)
        Surface points of the section [m].

    Returns
    -------
    tuple of arrays
        (distance [m], index into ``points_xyz_m``); inf and -1 without points.
    """
    stations = np.asarray(stations_xyz_m, dtype=float).reshape(-1, 3)
    points = np.asarray(points_xyz_m, dtype=float).reshape(-1, 3)
    if points.shape[0] == 0:
        return np.full(stations.shape[0], np.inf), np.full(stations.shape[0], -1, dtype=np.int64)
    distance, index = cKDTree(points).query(stations, k=1)
    return distance, index.astype(np.int64)


def surface_category(classification):
    """``vegetation`` or ``building`` by LAS class [2]; ``surface`` for any other class asked for."""
    cls = np.asarray(classification)
    return np.where(np.isin(cls, BUILDING_CLASSES), "building",
                    np.where(np.isin(cls, VEGETATION_CLASSES), "vegetation", "surface"))
