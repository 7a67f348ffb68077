"""Stage: terrain elevation under every conductor station (windowed, bilinear)."""
from __future__ import annotations

import numpy as np

from routesag.pipeline import Stage
from routesag.profiles import StationField, by_span, split_by_profile


class SampleTerrain(Stage):
    name = "sample_terrain"
    requires = ("conductors", "terrain", "work_crs")
    provides = ("ground",)
    per_section = True
    description = "bilinear terrain elevation under each 3D station; one window read per span"

    def run(self, data, ctx):
        ground = sample_under(data["conductors"], data["terrain"], data["work_crs"])
        warn_implausible(ctx, data["terrain"])
        return {"ground": ground}


def warn_implausible(ctx, raster, label="terrain", key="terrain_nodata") -> None:
    """Warn loudly about every untagged fill value the raster has shown so far (read as nodata)."""
    for message in getattr(raster, "implausible_warnings", lambda *a: [])(label, key):
        ctx.warn(message)


def sample_under(profiles, terrain, crs) -> StationField:
    """Ground elevation [m] under each profile's stations (NaN over nodata or off the raster), by profile key.

    Profiles of the same span (its wires and load cases) are sampled together,
    so each span costs one window read whatever the number of load cases.
    """
    ground = StationField()
    for span_profiles in by_span(profiles):
        x = np.concatenate([p.xyz[:, 0] for p in span_profiles])
        y = np.concatenate([p.xyz[:, 1] for p in span_profiles])
        ground.update(split_by_profile(terrain.sample(x, y, crs=crs), span_profiles))
    return ground
