"""The terrain the conductor build samples is handed to sample_terrain: it must equal a fresh sample at every
station (nodata holes included), and a profile whose points changed in between, or another terrain, must be
sampled afresh.

Invented section and raster (see test_section_build): rough ground with a nodata hole under the second span.
"""
from dataclasses import replace

import numpy as np
import pytest

from routesag.io.terrain import TerrainSampler
from routesag.profiles import Profiles
from routesag.stages.conductors import TerrainView, profiles_and_ground
from routesag.stages.terrain import HANDED_OVER, hand_over_ground, handed_over, sample_under
from tests.stages.test_section_build import CRS, X0, Y0, rough_raster, section_cases


def built_section(sampler):
    cases, _ = section_cases(np.array([X0, Y0, 0.0]))
    built, ground = profiles_and_ground(cases, 1.0, TerrainView(sampler, CRS))
    profiles = Profiles(built)
    hand_over_ground(profiles, ground, sampler, CRS)
    return profiles


def fresh(path, profiles):
    with TerrainSampler(path) as alone:  # no held windows, one call per profile
        return {p.key: alone.sample(p.xyz[:, 0], p.xyz[:, 1], crs=CRS) for p in profiles}


def assert_fresh(ground, path, profiles):
    expected = fresh(path, profiles)
    assert list(ground) == list(expected)
    for key, values in expected.items():
        np.testing.assert_array_equal(ground[key], values)   # bit for bit; NaN where NaN
    assert sum(int(np.isnan(v).sum()) for v in expected.values()) > 0   # the nodata hole is under the wires


@pytest.mark.parametrize("geographic", [False, True])
def test_handed_over_terrain_equals_a_fresh_sample(tmp_path, geographic):
    path = tmp_path / "terrain.tif"
    rough_raster(path, geographic)
    with TerrainSampler(path, hold_windows=16) as sampler:
        profiles = built_section(sampler)
        assert handed_over(profiles, sampler, CRS) is not None   # the hand-over is what is checked here
        ground = sample_under(profiles, sampler, CRS)
    assert_fresh(ground, path, profiles)


def test_changed_points_or_terrain_are_sampled_afresh(tmp_path):
    path = tmp_path / "terrain.tif"
    rough_raster(path)
    with TerrainSampler(path, hold_windows=16) as sampler, TerrainSampler(path) as other:
        profiles = built_section(sampler)
        assert handed_over(profiles, other, CRS) is None          # sampled from another terrain
        assert handed_over(profiles, sampler, "EPSG:4326") is None
        moved = [replace(p, xyz=p.xyz + [7.3, -2.1, 0.0]) if k == 4 else p for k, p in enumerate(profiles)]
        carried = Profiles(moved)
        setattr(carried, HANDED_OVER, getattr(profiles, HANDED_OVER))   # as if carried over by a plugin's stage
        assert handed_over(carried, sampler, CRS) is None          # a plugin moved one profile's points
        ground = sample_under(carried, sampler, CRS)
    assert_fresh(ground, path, carried)


def test_handed_over_points_cannot_move_in_place(tmp_path):
    path = tmp_path / "terrain.tif"
    rough_raster(path)
    with TerrainSampler(path, hold_windows=16) as sampler:
        profiles = built_section(sampler)
    with pytest.raises(ValueError, match="read-only"):
        profiles[0].xyz[:, 0] += 1.0       # the terrain handed over would no longer lie under the wire


def test_no_hand_over_without_terrain():
    cases, _ = section_cases(np.array([X0, Y0, 0.0]))
    built, ground = profiles_and_ground(cases, 1.0)
    assert ground is None and built
    profiles = Profiles(built)
    hand_over_ground(profiles, ground, None, CRS)
    assert handed_over(profiles, None, CRS) is None
