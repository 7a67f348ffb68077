"""Stage: terrain elevation under every conductor station (windowed, bilinear)."""
from __future__ import annotations

import numpy as np

from routesag.pipeline import Stage


class SampleTerrain(Stage):
    name = "sample_terrain"
    requires = ("conductors", "terrain", "work_crs")
    provides = ("ground",)
    description = "bilinear terrain elevation under each 3D station; one window read per span"

    def run(self, data, ctx):
        return {"ground": sample_under(data["conductors"], data["terrain"], data["work_crs"])}


def sample_under(profiles, terrain, crs) -> list[np.ndarray]:
    """Ground elevation [m] under each profile's stations (NaN over nodata or off the raster).

    Profiles of the same span (its load cases) are sampled together, so each
    span costs one window read whatever the number of load cases.
    """
    ground: list[np.ndarray | None] = [None] * len(profiles)
    by_span: dict[str, list[int]] = {}
    for i, p in enumerate(profiles):
        by_span.setdefault(p.span_id, []).append(i)
    for indices in by_span.values():
        xyz = np.concatenate([profiles[i].xyz for i in indices])
        z = terrain.sample(xyz[:, 0], xyz[:, 1], crs=crs)
        bounds = np.cumsum([0] + [len(profiles[i].xyz) for i in indices])
        for i, a, b in zip(indices, bounds[:-1], bounds[1:]):
            ground[i] = z[a:b]
    return ground
