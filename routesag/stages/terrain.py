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


#: Attribute of a :class:`~routesag.profiles.Profiles` that carries the terrain sampled while it was built.
HANDED_OVER = "_ground_handed_over"


def hand_over_ground(profiles, ground, terrain, crs) -> None:
    """Leave on ``profiles`` the terrain [m] already sampled from ``terrain`` (points in ``crs``) under all
    their stations (stacked in profile order; None for none), so :func:`sample_under` need not sample it again.

    It is kept with each profile's ``xyz`` array itself: a profile whose points were replaced afterwards (a
    plugin's stage in between) no longer matches, and its terrain is sampled afresh. The arrays are made
    read-only, so no stage can move the points in place behind the terrain sampled under them.
    """
    if ground is None:
        return
    bounds = np.cumsum([0] + [len(p.xyz) for p in profiles])
    if bounds[-1] != len(ground):
        raise ValueError("handed-over terrain does not match the profiles' stations")
    for p in profiles:
        p.xyz.flags.writeable = False
    setattr(profiles, HANDED_OVER, (terrain, crs, [(p.xyz, ground[a:b]) for p, a, b in
                                                   zip(profiles, bounds[:-1], bounds[1:])]))


def handed_over(profiles, terrain, crs) -> StationField | None:
    """The terrain :func:`hand_over_ground` left on ``profiles``, by profile key, when it was sampled from this
    ``terrain`` in this ``crs`` and every profile still has the very points it was sampled under; else None."""
    sampled_from, sampled_crs, kept = getattr(profiles, HANDED_OVER, (None, None, None))
    same_crs = sampled_crs is crs or sampled_crs == crs
    if sampled_from is not terrain or not same_crs or kept is None or len(kept) != len(profiles):
        return None
    if not all(p.xyz is xyz for p, (xyz, _) in zip(profiles, kept)):
        return None
    return StationField((p.key, ground) for p, (_, ground) in zip(profiles, kept))


def sample_under(profiles, terrain, crs) -> StationField:
    """Ground elevation [m] under each profile's stations (NaN over nodata or off the raster), by profile key.

    What the conductor build sampled under the same points is taken as it is (the bilinear terrain is a
    function of each point alone, so the values are the same to the bit). Otherwise profiles of the same
    span (its wires and load cases) are sampled together, so each span costs one window read whatever the
    number of load cases.
    """
    ground = handed_over(profiles, terrain, crs)
    if ground is not None:
        return ground
    ground = StationField()
    for span_profiles in by_span(profiles):
        x = np.concatenate([p.xyz[:, 0] for p in span_profiles])
        y = np.concatenate([p.xyz[:, 1] for p in span_profiles])
        ground.update(split_by_profile(terrain.sample(x, y, crs=crs), span_profiles))
    return ground
