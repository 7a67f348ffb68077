"""Inputs in the forms GDAL reads (folder datasets), and inputs that change while a run reads them."""
from __future__ import annotations

import geopandas as gpd
import pyogrio
import pytest

import routesag
from routesag.errors import DataError
from routesag.io import hashing
from tests.test_nothing_lost import snapshot
from tests.test_validation import edit, good_survey


@pytest.mark.parametrize("driver, name", [("ESRI Shapefile", "poles"), ("OpenFileGDB", "poles.gdb")])
def test_folder_datasets_are_read(tmp_path, driver, name):
    project = good_survey(tmp_path)
    structures = gpd.read_file(tmp_path / "structures.gpkg")
    if driver == "ESRI Shapefile":
        (tmp_path / name).mkdir()
        structures.to_file(tmp_path / name / "structures.shp", driver=driver)
    else:
        if driver not in pyogrio.list_drivers(write=True):
            pytest.skip("this GDAL cannot write FileGDB")
        structures.to_file(tmp_path / name, driver=driver, layer="structures")
    assert (tmp_path / name).is_dir()
    edit(project, 'structures = "structures.gpkg"', f'structures = "{name}"')
    if driver == "ESRI Shapefile":   # field names are cut to 10 characters there
        project.write_text(project.read_text() + '\n[inputs.fields]\nstructure_id = "structure_"\n')
    result = routesag.run(project)
    assert len(result["spans"]) == 3
    info = dict(zip(result["run_info"]["key"], result["run_info"]["value"]))
    assert info["input.structures.sha256"] == hashing.sha256_path(tmp_path / name)


def test_hashes_are_those_of_the_files_read(tmp_path):
    project = good_survey(tmp_path)
    before = hashing.sha256_path(tmp_path / "terrain.tif")
    info = routesag.run(project)["run_info"].set_index("key")["value"]
    assert info["input.terrain.sha256"] == before


def test_an_input_replaced_during_the_run_is_refused(tmp_path, monkeypatch):
    """The terrain is swapped for another file while the run works: nothing is written, the earlier output stays."""
    project = good_survey(tmp_path)
    routesag.run(project)
    before = snapshot(tmp_path)
    from routesag.stages import output

    real = output.run_info_table

    def swap_then_report(project_, ctx):
        (tmp_path / "terrain.tif").rename(tmp_path / "old.tif")
        (tmp_path / "terrain.tif").write_bytes((tmp_path / "old.tif").read_bytes())
        return real(project_, ctx)

    monkeypatch.setattr(output, "run_info_table", swap_then_report)
    with pytest.raises(DataError, match=r"terrain file .*terrain\.tif changed while the run was reading it"):
        routesag.run(project)
    after = snapshot(tmp_path)
    assert after["out.gpkg"] == before["out.gpkg"]
