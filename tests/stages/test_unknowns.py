"""Unknown stretches: where, why and how long."""
import numpy as np
import pytest
import shapely

from routesag.stages.conductors import ConductorProfile
from routesag.stages.surface import SurfaceProfile
from routesag.stages.unknowns import unknown_stretches


def profile(n=11):
    stations = np.arange(n, dtype=float)
    xyz = np.c_[stations, np.zeros(n), 20.0 + stations]
    return ConductorProfile("s1", "S1", "hot", stations, xyz, 1.0, 1.0, 0.0, 0.0, 1.0, 0.0)


def surface(unknown):
    n = len(unknown)
    return SurfaceProfile(np.full(n, np.inf), *np.full((3, n), np.nan), np.asarray(unknown, bool))


def test_terrain_gap_gives_one_stretch_with_half_station_edges():
    ground = np.zeros(11)
    ground[3:6] = np.nan
    (stretch,) = unknown_stretches(profile(), ground)
    # Stations 3, 4, 5 stand for the wire from 2.5 m to 5.5 m.
    assert (stretch["start_m"], stretch["end_m"], stretch["length_m"]) == (2.5, 5.5, 3.0)
    assert stretch["reason"] == "terrain"
    coords = shapely.get_coordinates(stretch["geometry"], include_z=True)
    assert coords[0].tolist() == [2.5, 0.0, 22.5] and coords[-1].tolist() == [5.5, 0.0, 25.5]


def test_reasons_are_combined_over_a_joined_stretch():
    ground = np.zeros(11)
    ground[3:5] = np.nan
    stretches = unknown_stretches(profile(), ground, surface(np.isin(np.arange(11), [5, 6, 10])))
    assert [(s["start_m"], s["end_m"], s["reason"]) for s in stretches] == [
        (2.5, 6.5, "terrain, surface"), (9.5, 10.0, "surface")]


def test_nothing_unknown_nothing_reported():
    assert unknown_stretches(profile(), np.zeros(11), surface(np.zeros(11))) == []


def test_wire_identity_is_carried_when_present():
    p = profile()
    p.wire = "B"  # a profile of one wire of several
    (stretch,) = unknown_stretches(p, np.r_[np.nan, np.zeros(10)])
    assert stretch["wire"] == "B" and stretch["length_m"] == pytest.approx(0.5)
