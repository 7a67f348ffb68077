"""Whole runs with a crossings layer, the voltage adder, checked cases and hotspots."""
import math

import geopandas as gpd
import pytest
import shapely

import routesag
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project, write_structures

G = 9.80665  # standard gravity [m/s2] (CGPM 1901)
DRAKE_W_N_M = 1.628 * G  # Drake bare weight (FIELD.md §5: 1.628 kg/m)


def write_crossings(folder, geometries, **fields):
    path = folder / "crossings.gpkg"
    gpd.GeoDataFrame(fields, geometry=list(geometries), crs=CRS).to_file(path, layer="crossings", driver="GPKG")
    return path


def with_crossings(project, clearance_text=""):
    text = project.read_text().replace('terrain = "terrain.tif"',
                                       'terrain = "terrain.tif"\ncrossings = "crossings.gpkg"')
    text = text.replace("station_m = 1.0", "station_m = 1.0\n" + clearance_text)
    project.write_text(text)
    return project


def test_road_raises_required_clearance_there_and_only_there(survey):
    # The survey line runs along y = Y0 + 200; a 20 m wide road crosses the first span at 140-160 m.
    write_crossings(survey.parent, [shapely.box(X0 + 140, Y0 + 150, X0 + 160, Y0 + 250)], category=["road"])
    with_crossings(survey)
    survey.write_text(survey.read_text() + "\n[clearance.required_m]\nroad = 40.0\n")
    result = routesag.run(survey)
    v = result["clearance_violations"]
    assert len(v) == 2  # one per load case (hot, cold), only over the road
    assert set(v["category"]) == {"road"} and set(v["span_id"]) == {"A:P1-P2"}
    assert (v["required_m"] == 40.0).all()
    assert v["start_m"].between(139.0, 141.0).all() and v["end_m"].between(159.0, 161.0).all()
    status = result["conductors"].set_index(["span_id", "load_case"])["status"]
    assert (status.loc["A:P1-P2"] == "violation").all()
    assert (status.drop(index="A:P1-P2", level=0) == "clear").all()


def level_span(folder, attach_height_m, tension_kn, span_m=300.0):
    """Two structures over flat ground at z = 100 m; the one load case equals the stringing state."""
    write_plane_raster(folder / "terrain.tif", a=100.0)
    write_structures(folder / "structures.gpkg", [(X0, Y0 + 200.0), (X0 + span_m, Y0 + 200.0)],
                     kinds=["strain", "strain"])
    return write_project(folder, tension_kn=tension_kn, attach_height_m=attach_height_m, ground_m=1.0,
                         cases=[("still", 15.0, 0.0, 0.0)])


def midspan_clearance_m(attach_height_m, tension_kn, span_m=300.0):
    """Exact catenary sag of a level span, D = c (cosh(S/2c) - 1), c = H/w (FIELD.md §1)."""
    c = tension_kn * 1e3 / DRAKE_W_N_M
    return attach_height_m - c * (math.cosh(span_m / (2 * c)) - 1.0)


def test_voltage_adder_turns_a_road_crossing_into_a_violation(tmp_path):
    # Road base 5.6 m; 138 kV with 145 kV maximum gives 6.22 m (FIELD.md §6, derived from NESC 232C1a).
    clearance = midspan_clearance_m(20.0, 12.8)
    assert 5.6 < clearance < 6.2  # clears the base value, not the value with the adder
    project = level_span(tmp_path, 20.0, 12.8)
    write_crossings(tmp_path, [shapely.LineString([(X0 + 150, Y0 + 100), (X0 + 150, Y0 + 300)])],
                    category=["road"], width_m=[12.0])
    with_crossings(project)
    assert len(routesag.run(project)["clearance_violations"]) == 0
    project.write_text(project.read_text().replace("ground_m", "voltage_kv = 138.0\nmax_voltage_kv = 145.0\nground_m"))
    result = routesag.run(project)
    v = result["clearance_violations"]
    assert len(v) == 1 and v["category"].iloc[0] == "road"
    assert v["required_m"].iloc[0] == pytest.approx(6.22, abs=0.005)  # FIELD.md §6
    assert v["clearance_m"].iloc[0] == pytest.approx(clearance, abs=0.01)
    info = result["run_info"].set_index("key")["value"]
    assert '"road": 6.217' in info["note.clearance_required_m"]
    assert '"adder_m": 0.6172' in info["note.clearance_adder"]


def test_only_the_listed_cases_are_checked(survey):
    survey.write_text(survey.read_text().replace("ground_m = 7.5", 'ground_m = 19.0\ncases = ["cold"]'))
    result = routesag.run(survey)
    assert set(result["clearance_violations"]["load_case"]) == {"cold"}
    conductors = result["conductors"]
    assert (conductors.loc[conductors.load_case == "hot", "status"] == "unchecked").all()
    assert conductors.loc[conductors.load_case == "hot", "min_clearance_m"].notna().all()


def test_hotspots_merge_cases_and_rank_by_deficit(survey):
    survey.write_text(survey.read_text().replace("ground_m = 7.5", "ground_m = 19.0\nhotspot_merge_m = 60.0"))
    result = routesag.run(survey)
    v, hotspots = result["clearance_violations"], result["hotspots"]
    assert hotspots["n_violations"].sum() == len(v)
    assert len(hotspots) < len(v)  # hot and cold violations of a span lie within 60 m of each other
    assert hotspots["rank"].tolist() == list(range(1, len(hotspots) + 1))
    assert hotspots["deficit_m"].is_monotonic_decreasing
    worst = v.loc[v["deficit_m"].idxmax()]
    assert hotspots["deficit_m"].iloc[0] == worst["deficit_m"]
    assert hotspots["load_case"].iloc[0] == worst["load_case"] == "hot"  # the hot wire hangs lowest
    assert hotspots.geometry.has_z.all()


def test_empty_new_layers_keep_their_columns(survey):
    import pyogrio

    routesag.run(survey)  # the fixture line clears everywhere and has no nodata
    path = survey.parent / "out.gpkg"
    hotspots = pyogrio.read_info(path, layer="hotspots")
    assert hotspots["features"] == 0 and hotspots["geometry_type"] == "Point Z"
    assert {"rank", "deficit_m", "load_case", "category", "n_violations"} <= set(hotspots["fields"])
    stretches = pyogrio.read_info(path, layer="unknown_stretches")
    assert stretches["features"] == 0 and stretches["geometry_type"] == "LineString Z"
    assert {"span_id", "load_case", "start_m", "end_m", "length_m", "reason"} <= set(stretches["fields"])
    violations = pyogrio.read_info(path, layer="clearance_violations")
    assert {"category", "surface_x", "surface_y", "surface_z"} <= set(violations["fields"])
