"""Stage: true 3D distance from the wire to the surface model (vegetation, buildings).

The surface raster (a DSM, or heights above the terrain such as a canopy
height model) is read one window per span. Its cell centres that stand more
than ``surface_min_height_m`` above the terrain are surface objects; bare
ground is left to the terrain check so it is not reported twice. For every
station the nearest object cell centre in 3D is found with a k-d tree.

Rules, per span:

- search corridor: cells within R of the span's chord in plan, with
  R = largest required clearance (after the adder) + the largest horizontal
  blowout of the span's wire in any load case + half a cell diagonal;
- a station is *unknown* when a surface or terrain nodata cell lies within
  the surface clearance + half a cell diagonal of it in plan, or when that
  reach runs off the surface raster: an object could hide there, so the
  station is never reported as clear.
"""
from __future__ import annotations

import numpy as np
import pyproj
from scipy.spatial import cKDTree

from routesag.errors import DataError
from routesag.io.terrain import TerrainSampler, _first_line, _horizontal_part
from routesag.pipeline import Stage
from routesag.profiles import StationField, SurfaceProfile, by_span, profile_keys
from routesag.stages.terrain import warn_implausible


class SampleSurface(Stage):
    name = "sample_surface"
    requires = ("project", "conductors", "terrain", "work_crs")
    provides = ("surface",)
    per_section = True
    description = "3D distance from every station to surface objects (DSM cells above the terrain); one window per span"

    def run(self, data, ctx):
        project, profiles = data["project"], data["conductors"]
        if project.surface_path is None:
            return {"surface": StationField.fromkeys(profile_keys(profiles))}
        rules = project.clearance
        try:
            nodata = project.settings.get("inputs", {}).get("surface_nodata")
            with TerrainSampler(project.surface_path, z_units=project.terrain_z_units, nodata=nodata) as raster:
                model = SurfaceModel(raster, data["terrain"], data["work_crs"],
                                     heights=project.surface_values == "height",
                                     min_height_m=rules.surface_min_height_m,
                                     required_m=rules.required_m["surface"],
                                     largest_required_m=max(rules.required_m.values()))
                result = model.sample(profiles, checked=rules.checks)
                ctx.notes["surface_window_reads"] = raster.sample_window_count
                warn_implausible(ctx, raster, "surface model", "surface_nodata")
                warn_implausible(ctx, data["terrain"])
        except DataError as exc:  # the raster reader names it "terrain"
            surface = f"surface model {project.surface_path}"
            raise DataError([p.replace(f"terrain {project.surface_path}", surface) for p in exc.problems]) from None
        ctx.notes["surface_rule"] = model.describe()
        return {"surface": result}


class SurfaceModel:
    """Surface objects around the spans, with the terrain they stand on.

    Parameters
    ----------
    raster : TerrainSampler
        The surface raster.
    terrain : TerrainSampler
        The terrain raster, to tell objects from bare ground.
    crs : pyproj.CRS
        Working CRS of the profiles [m].
    heights : bool
        The raster holds heights above the terrain rather than elevations.
    min_height_m : float
        A cell is an object when it stands more than this above the terrain [m].
    required_m : float
        Required distance to the surface (after the adder) [m].
    largest_required_m : float
        Largest required clearance of any category [m]; sets the search radius.
    """

    def __init__(self, raster, terrain, crs, *, heights, min_height_m, required_m, largest_required_m):
        self.raster, self.terrain, self.crs = raster, terrain, pyproj.CRS.from_user_input(crs)
        self.heights, self.min_height_m = heights, min_height_m
        self.required_m, self.largest_required_m = required_m, largest_required_m
        self.half_cell_m = 0.5 * float(np.hypot(*raster.cell_size_m))
        source = _horizontal_part(raster.crs)
        self._to_work = None if source == self.crs else _transformer(source, self.crs, raster.path)

    def describe(self) -> str:
        return (f"surface cells more than {self.min_height_m:g} m above the terrain are objects; 3D distance "
                f"from each station to the nearest object cell centre within R = {self.largest_required_m:.2f} m "
                f"(largest required) + the span's largest horizontal blowout + {self.half_cell_m:.2f} m (half a "
                f"cell diagonal) of the span chord; stations with nodata within {self.reach_m:.2f} m are unknown")

    @property
    def reach_m(self) -> float:
        """Plan distance within which a nodata cell could hide an object closer than required [m]."""
        return self.required_m + self.half_cell_m

    def sample(self, profiles, checked=lambda case: True) -> StationField:
        """A :class:`SurfaceProfile` per profile of a checked load case, None for the others, by key."""
        result = StationField.fromkeys(profile_keys(profiles))
        for span_profiles in by_span(p for p in profiles if checked(p.load_case)):
            result.update(zip((p.key for p in span_profiles), self.sample_span(span_profiles), strict=True))
        return result

    def sample_span(self, profiles) -> list[SurfaceProfile]:
        """Distances for the profiles of one span (its load cases and wires), from one window read."""
        xyz = np.concatenate([p.xyz for p in profiles])
        chord = profiles[0].xyz[[0, -1], :2]
        radius_m = self.largest_required_m + _largest_offset(xyz[:, :2], chord) + self.half_cell_m
        x, y, z = self._cells(xyz, chord, radius_m)
        ground = self.terrain.sample(x, y, crs=self.crs)
        if self.heights:
            z = z + ground
        known = np.isfinite(z) & np.isfinite(ground)
        objects = known & (z - ground > self.min_height_m)
        tree = cKDTree(np.column_stack([x, y, z])[objects]) if objects.any() else None
        holes = cKDTree(np.column_stack([x, y])[~known]) if (~known).any() else None
        found = self._nearest(xyz, tree, holes, radius_m)  # all the span's stations in one query per tree
        bounds = np.cumsum([0] + [len(p.xyz) for p in profiles])
        return [SurfaceProfile(*(v[a:b] for v in found)) for a, b in zip(bounds[:-1], bounds[1:])]

    def _cells(self, xyz, chord, radius_m):
        """Surface cell centres (NaN z over nodata) within ``radius_m`` of the chord, in the working CRS."""
        x, y, z = self.raster.read_window_points(xyz[:, 0], xyz[:, 1], radius_m, crs=self.crs, keep_nodata=True)
        if self._to_work is not None and len(x):
            x, y = (np.asarray(v, dtype=float) for v in self._to_work.transform(x, y))
        near = _distance_to_segment(x, y, chord[0], chord[1]) <= radius_m
        return x[near], y[near], z[near]

    def _nearest(self, xyz, tree, holes, radius_m) -> tuple[np.ndarray, ...]:
        """Distance, nearest object cell (x, y, z) and unknown flag of stations ``xyz``, as SurfaceProfile fields."""
        n = len(xyz)
        distance, nearest = np.full(n, np.inf), np.full((n, 3), np.nan)
        if tree is not None:
            distance, index = tree.query(xyz, distance_upper_bound=radius_m)
            found = np.isfinite(distance)
            nearest[found] = tree.data[index[found]]
        unknown = ~self._covered(xyz[:, :2])
        if holes is not None:
            unknown |= np.isfinite(holes.query(xyz[:, :2], distance_upper_bound=self.reach_m)[0])
        return distance, nearest[:, 0], nearest[:, 1], nearest[:, 2], unknown

    def _covered(self, xy) -> np.ndarray:
        """The surface raster covers the reach around each point (checked at four points)."""
        covered = np.ones(len(xy), dtype=bool)
        for dx, dy in ((1, 0), (-1, 0), (0, 1), (0, -1)):
            covered &= self.raster.contains(xy[:, 0] + dx * self.reach_m, xy[:, 1] + dy * self.reach_m, crs=self.crs)
        return covered


def _transformer(source, target, path) -> pyproj.Transformer:
    """Surface raster CRS -> working CRS; a pair PROJ cannot relate (a local grid) is a DataError."""
    try:
        return pyproj.Transformer.from_crs(source, target, always_xy=True)
    except pyproj.exceptions.ProjError as exc:
        raise DataError(f"surface model {path}: CRS {source.name!r} cannot be transformed to the working CRS "
                        f"{target.name!r} ({_first_line(exc)}); give the surface model the terrain's CRS") from None


def _largest_offset(xy, chord) -> float:
    """Largest plan distance of points from the chord line: the wire's horizontal blowout [m]."""
    a, b = chord
    d = b - a
    return float(np.max(np.abs(d[0] * (xy[:, 1] - a[1]) - d[1] * (xy[:, 0] - a[0]))) / np.hypot(*d))


def _distance_to_segment(x, y, a, b) -> np.ndarray:
    """Plan distance of points from the segment a-b [m]."""
    d = b - a
    t = np.clip(((x - a[0]) * d[0] + (y - a[1]) * d[1]) / (d @ d), 0.0, 1.0)
    return np.hypot(x - (a[0] + t * d[0]), y - (a[1] + t * d[1]))
