"""Vegetation and buildings from the point cloud in a whole run: the true 3D distance from the wire.

One level 200 m span over flat ground. A tree crown is a sphere of points (radius 3 m) beside mid-span. On a
level span the wire's lowest point lies at mid-span (the catenary vertex, FIELD.md §1), and by symmetry it is
the wire point nearest to a centre abeam it, so the distance is |low point - centre| - radius. Under wind the
wire hangs in the plane swung by the blowout angle phi: its low point moves D sin(phi) sideways and rises by
D (1 - cos(phi)), D the sag in that plane (Grigsby (ed.), ch. 14; FIELD.md §8).
"""
import math

import numpy as np
import pytest

import routesag
from tests.cloud_survey import DRAKE_W_N_M, write_las
from tests.conftest import X0, Y0, write_plane_raster, write_project, write_structures

GROUND_Z, SPAN_M, ATTACH_M, TENSION_KN = 100.0, 200.0, 20.0, 30.0
LINE_Y = Y0 + 200.0
CROWN_R, CROWN_OFFSET_M, CROWN_TOP_BELOW_WIRE_M = 3.0, 3.5, 0.5


def sphere_points(centre, radius, n=20_000):
    """Evenly spread points on a sphere (golden-angle spiral): spacing about 7.5 cm for 3 m and 20 000."""
    k = np.arange(n) + 0.5
    polar = np.arccos(1.0 - 2.0 * k / n)
    azimuth = math.pi * (1.0 + math.sqrt(5.0)) * k
    return (centre[0] + radius * np.sin(polar) * np.cos(azimuth), centre[1] + radius * np.sin(polar) * np.sin(azimuth),
            centre[2] + radius * np.cos(polar))


def low_point_z(catenary_m):
    return GROUND_Z + ATTACH_M - catenary_m * (math.cosh(SPAN_M / (2 * catenary_m)) - 1.0)


def crown_centre():
    z = low_point_z(TENSION_KN * 1e3 / DRAKE_W_N_M) - CROWN_TOP_BELOW_WIRE_M  # at rest: the low point at 15 degC
    return np.array([X0 + SPAN_M / 2, LINE_Y + CROWN_OFFSET_M, z])


def tree_project(tmp_path, required="surface = 3.0"):
    write_plane_raster(tmp_path / "terrain.tif", a=GROUND_Z)
    write_structures(tmp_path / "structures.gpkg", [(X0, LINE_Y), (X0 + SPAN_M, LINE_Y)], kinds=["strain", "strain"])
    x, y, z = sphere_points(crown_centre(), CROWN_R)
    # a building (class 6) 30 m off the line: far from the wire, never a violation
    bx, by = np.meshgrid(np.linspace(X0 + 50, X0 + 60, 11), np.linspace(LINE_Y - 30, LINE_Y - 20, 11))
    x = np.concatenate([x, bx.ravel()]); y = np.concatenate([y, by.ravel()])
    z = np.concatenate([z, np.full(bx.size, GROUND_Z + 8.0)])
    cls = np.concatenate([np.full(x.size - bx.size, 5), np.full(bx.size, 6)])
    write_las(tmp_path / "survey.laz", x, y, z, cls)
    project = write_project(tmp_path, tension_kn=TENSION_KN, attach_height_m=ATTACH_M, ground_m=5.0,
                            cases=[("still", 15.0, 0.0, 0.0), ("wind", 15.0, 0.0, 300.0)],
                            extra=f"\n[clearance.required_m]\n{required}\n")
    project.write_text(project.read_text().replace('terrain = "terrain.tif"',
                                                   'terrain = "terrain.tif"\npoint_cloud = "survey.laz"'))
    return project


@pytest.fixture
def tree_run(tmp_path):
    return routesag.run(tree_project(tmp_path))


def test_a_vegetation_rule_of_its_own_replaces_the_surface_rule(tmp_path):
    """[clearance.required_m] vegetation = 0.5 m: the crown 0.54 m from the wire at rest is no violation."""
    result = routesag.run(tree_project(tmp_path, "surface = 3.0\nvegetation = 0.5"))
    assert len(result["clearance_violations"]) == 0
    assert (result["conductors"]["status"] == "clear").all()


def test_tree_points_give_the_analytic_3d_distance_within_2_cm(tree_run):
    v = tree_run["clearance_violations"].set_index("load_case")
    still = v.loc["still"]
    centre = crown_centre()
    low = np.array([X0 + SPAN_M / 2, LINE_Y, low_point_z(TENSION_KN * 1e3 / DRAKE_W_N_M)])
    expected = float(np.linalg.norm(centre - low)) - CROWN_R
    assert expected < 3.0  # inside the 3 m surface clearance: the check must find it
    assert still["category"] == "vegetation" and still["surface_class"] == 5
    assert still["clearance_m"] == pytest.approx(expected, abs=0.02)
    assert still["station_m"] == pytest.approx(SPAN_M / 2, abs=0.01)
    offending = np.array([still["surface_x"], still["surface_y"], still["surface_z"]])
    assert np.linalg.norm(offending - centre) == pytest.approx(CROWN_R, abs=1e-3)  # a point of the crown
    conductors = tree_run["conductors"].set_index("load_case")
    assert conductors.loc["still", "min_surface_m"] == pytest.approx(expected, abs=0.02)
    assert conductors.loc["still", "status"] == "violation"


def test_the_swung_wire_is_measured_where_the_wind_blows_it(tree_run):
    """The wind blows the wire to the right (-y here), away from the crown on the left: a larger distance."""
    v = tree_run["clearance_violations"].set_index("load_case")
    wind = tree_run["conductors"].set_index("load_case").loc["wind"]
    phi = math.radians(wind["blowout_deg"])
    sag = wind["swung_sag_m"]
    side = -1.0  # wind_side "right" looking along +x is towards -y
    low = np.array([X0 + SPAN_M / 2, LINE_Y + side * sag * math.sin(phi), GROUND_Z + ATTACH_M - sag * math.cos(phi)])
    expected = float(np.linalg.norm(crown_centre() - low)) - CROWN_R
    assert phi > math.radians(10)  # a real swing, so the check can tell it from the rest position
    assert v.loc["still", "clearance_m"] + 1.0 < expected < 3.0  # moved away, still inside the clearance
    assert v.loc["wind", "clearance_m"] == pytest.approx(expected, abs=0.02)
    assert wind["min_surface_m"] == pytest.approx(expected, abs=0.02)


def test_a_reach_past_the_kept_corridor_is_unknown_not_clear(tmp_path):
    """corridor_m 3.5 m with a 3 m clearance: the wind case swings the wire more than 0.5 m off its chord, where
    points that matter could lie beyond the corridor and were never kept."""
    write_plane_raster(tmp_path / "terrain.tif", a=GROUND_Z)
    write_structures(tmp_path / "structures.gpkg", [(X0, LINE_Y), (X0 + SPAN_M, LINE_Y)], kinds=["strain", "strain"])
    write_las(tmp_path / "survey.laz", np.array([X0 + 50.0]), np.array([LINE_Y + 3.0]), np.array([GROUND_Z]),
              np.array([5]))
    project = write_project(tmp_path, tension_kn=TENSION_KN, attach_height_m=ATTACH_M, ground_m=5.0,
                            cases=[("still", 15.0, 0.0, 0.0), ("wind", 15.0, 0.0, 300.0)],
                            extra="\n[clearance.required_m]\nsurface = 3.0\n[point_cloud]\ncorridor_m = 3.5\n")
    project.write_text(project.read_text().replace('terrain = "terrain.tif"',
                                                   'terrain = "terrain.tif"\npoint_cloud = "survey.laz"'))
    result = routesag.run(project)
    status = result["conductors"].set_index("load_case")["status"]
    assert status["still"] == "clear" and status["wind"] == "unknown"
    stretches = result["unknown_stretches"]
    assert set(stretches["load_case"]) == {"wind"} and set(stretches["reason"]) == {"points"}
    middle = stretches.iloc[0]
    assert middle["start_m"] < SPAN_M / 2 < middle["end_m"]
