"""When most structures miss the terrain: one message comparing both extents in one CRS, with the likely cause.

One "outside the raster" line per structure hides the real problem, which is
nearly always a wrong CRS label, swapped coordinate columns or another UTM
zone, not a raster that is a little too small.
"""
from __future__ import annotations

import numpy as np
import pyproj

#: Share of structures outside the raster above which the extents are compared.
MOSTLY_OUTSIDE = 0.5


def _fmt_box(box) -> str:
    left, bottom, right, top = box
    return f"x {left:.1f} .. {right:.1f}, y {bottom:.1f} .. {top:.1f}"


def _utm_zone(crs: pyproj.CRS):
    """UTM zone number of a CRS, or None."""
    name = crs.name or ""
    if "UTM zone" not in name:
        return None
    digits = "".join(ch for ch in name.split("UTM zone", 1)[1] if ch.isdigit())
    return int(digits) if digits else None


def _inside(box, x, y) -> np.ndarray:
    left, bottom, right, top = box
    return (x >= left) & (x <= right) & (y >= bottom) & (y <= top)


def extent_message(x, y, crs, terrain, where: str) -> str | None:
    """The message when more than half of the points (x, y in ``crs``) miss the raster, else None.

    Parameters
    ----------
    x, y : array_like
        Structure coordinates [CRS units].
    crs : pyproj.CRS
        Their CRS.
    terrain : routesag.io.terrain.TerrainSampler
        The open raster (its bounds and CRS).
    where : str
        Structures file for the message.
    """
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    raster_crs = pyproj.CRS(terrain.crs)
    try:
        moved = pyproj.Transformer.from_crs(crs, raster_crs, always_xy=True).transform(x, y)
    except pyproj.exceptions.ProjError:
        return None
    rx, ry = np.asarray(moved[0], dtype=float), np.asarray(moved[1], dtype=float)
    box = tuple(terrain.bounds)
    outside = ~_inside(box, rx, ry)
    if outside.mean() <= MOSTLY_OUTSIDE:
        return None
    finite = np.isfinite(rx) & np.isfinite(ry)
    line_box = ((rx[finite].min(), ry[finite].min(), rx[finite].max(), ry[finite].max())
                if finite.any() else (np.nan,) * 4)
    return (f"{where}: {int(outside.sum())} of {len(x)} structures lie outside the terrain {terrain.path}. "
            f"In the terrain's CRS {raster_crs.to_string()}: structures {_fmt_box(line_box)}; "
            f"terrain {_fmt_box(box)}. Likely cause: {_likely_cause(x, y, crs, raster_crs, box, line_box)}")


def _likely_cause(x, y, crs, raster_crs, box, line_box) -> str:
    """The most probable reason, tried in order: swapped axes, another UTM zone, a wrong CRS, a small raster."""
    try:
        sx, sy = pyproj.Transformer.from_crs(crs, raster_crs, always_xy=True).transform(y, x)
        if _inside(box, np.asarray(sx), np.asarray(sy)).mean() > MOSTLY_OUTSIDE:
            return ("x and y are swapped (lat/lon or easting/northing columns exchanged); swap them or name "
                    "them with [inputs] x_column / y_column")
    except pyproj.exceptions.ProjError:
        pass
    if _inside(box, x, y).mean() > MOSTLY_OUTSIDE:
        return (f"the structures' coordinates fit the terrain as they are: one of the two layers has the wrong "
                f"CRS label (structures {crs.to_string()}, terrain {raster_crs.to_string()}); fix the label "
                "or set [inputs] crs / terrain_crs")
    zones = _utm_zone(crs), _utm_zone(raster_crs)
    if None not in zones and zones[0] != zones[1]:
        return (f"the structures are in UTM zone {zones[0]} and the terrain in zone {zones[1]}; check which "
                "zone the survey used")
    width = max(box[2] - box[0], box[3] - box[1])
    gap = max(box[0] - line_box[2], line_box[0] - box[2], box[1] - line_box[3], line_box[1] - box[3])
    if np.isfinite(gap) and gap > 10 * width:
        return ("the two extents are far apart: a wrong CRS on the structures or the terrain (check [inputs] "
                "crs, terrain_crs and the files' own CRS)")
    return "the terrain does not cover the line: extend the raster or survey ground_z_m"
