"""A survey team's data as it comes: its own field names, heights in feet, a CSV with easting/northing and
semicolons, a crossings layer with its own names; the project maps them and runs without editing a file."""
import textwrap

import geopandas as gpd
import numpy as np
import pyogrio
import shapely

import routesag
from tests.conftest import CRS, DRAKE_TOML, X0, Y0, write_plane_raster

FT = 0.3048  # international foot [m], exact (NIST SP 811, Appendix B.8)


def survey_team_folder(tmp_path):
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, bx=0.01, cy=0.02)
    rows = [("T-1", 1, "Dead End", 66.0, ""), ("T-2", 2, "Tangent", 72.0, "6.0"),
            ("T-3", 3, "ANCHOR", 64.0, ""), ("T-4", 4, "tangent", 70.0, "6.0"), ("T-5", 5, "terminal", 66.0, "")]
    xs = [0.0, 300.0, 550.0, 800.0, 1100.0]
    lines = ["TowerNo;Order;Type;Easting;Northing;AttHt_ft;Insul_ft"]
    lines += [f"{sid};{seq};{kind};{X0 + x:.2f};{Y0 + 200.0:.2f};{h};{ins}"
              for (sid, seq, kind, h, ins), x in zip(rows, xs)]
    (tmp_path / "towers.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    road = shapely.LineString([(X0 + 150.0, Y0 + 100.0), (X0 + 150.0, Y0 + 300.0)])
    gpd.GeoDataFrame({"CLASS": ["road"], "WIDTH": [8.0]}, geometry=[road], crs=CRS).to_file(
        tmp_path / "crossings.gpkg", layer="crossings")
    project = tmp_path / "project.toml"
    project.write_text(textwrap.dedent(f"""
        [inputs]
        structures = "towers.csv"
        crs = "{CRS}"
        terrain = "terrain.tif"
        crossings = "crossings.gpkg"
        height_units = "ft"

        [inputs.fields]
        structure_id = "TowerNo"
        seq = "Order"
        kind = "Type"
        attach_height_m = "AttHt_ft"
        insulator_m = "Insul_ft"
        category = "CLASS"
        width_m = "WIDTH"
        """) + DRAKE_TOML + textwrap.dedent("""
        [stringing]
        temperature_c = 15.0
        horizontal_tension_kn = 30.0

        [[load_cases]]
        name = "hot"
        temperature_c = 90.0

        [output]
        path = "result.gpkg"
        """), encoding="utf-8")
    return project


def test_survey_team_data_runs_without_editing_the_files(tmp_path):
    project = survey_team_folder(tmp_path)
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    result = routesag.run(project)  # no [clearance] table: every key has its default
    assert {p.name: p.read_bytes() for p in tmp_path.iterdir() if p.name in before} == before
    structures = pyogrio.read_dataframe(result.path, layer="structures")
    assert structures["structure_id"].tolist() == ["T-1", "T-2", "T-3", "T-4", "T-5"]
    assert structures["kind"].tolist() == ["strain", "suspension", "strain", "suspension", "strain"]
    np.testing.assert_allclose(structures["attach_height_m"], np.array([66.0, 72.0, 64.0, 70.0, 66.0]) * FT,
                               rtol=0, atol=1e-9)
    np.testing.assert_allclose(structures["insulator_m"], np.array([0.0, 6.0, 0.0, 6.0, 0.0]) * FT, rtol=0,
                               atol=1e-9)
    # the wire hangs at the attachment less the string, all in metres: attach_z = ground + height
    np.testing.assert_allclose(structures["attach_z_m"] - structures["ground_z_m"], structures["attach_height_m"])
    assert result["sections"]["section_id"].tolist() == ["T-1-T-3", "T-3-T-5"]  # named by their end strain structures
    info = dict(zip(result["run_info"]["key"], result["run_info"]["value"]))
    noted = " ".join(str(v) for v in info.values())
    assert "'Easting', 'Northing'" in noted and "separator ';'" in noted
    assert result.warnings == []  # every field is mapped: nothing looks like an unused routesag field
    # the road, named CLASS in the file, is checked with its own rule on the first span
    conductors = result["conductors"]
    assert len(conductors) == 4 and conductors["status"].isin(["clear", "violation"]).all()
    assert result.notes.get("crossings") == {"road": 1}
