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
        return {"ground": sample_under(data["conductors"], data["terrain"], data["work_crs"])}


def sample_under(profiles, terrain, crs) -> StationField:
    """Ground elevation [m] under each profile's stations (NaN over nodata or off the raster), by profile key.

    Profiles of the same span (its wires and load cases) are sampled together,
    so each span costs one window read whatever the number of load cases.
    """
    ground = StationField()
    for span_profiles in by_span(profiles):
        xyz = np.concatenate([p.xyz for p in span_profiles])
        ground.update(split_by_profile(terrain.sample(xyz[:, 0], xyz[:, 1], crs=crs), span_profiles))
    return ground
