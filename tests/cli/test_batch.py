"""``routesag batch``: several projects through one worker pool, each to its own output; all checked first."""
import sqlite3

import pytest
from click.testing import CliRunner

from routesag.cli import main
from tests.conftest import X0, Y0, write_plane_raster, write_project, write_structures
from tests.test_engine import assert_same_tables, gpkg_tables


def tiny_line(folder, xs, kinds, line_id):
    folder.mkdir()
    write_plane_raster(folder / "terrain.tif", a=100.0, bx=0.01, cy=0.02)
    write_structures(folder / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in xs], kinds=kinds, line_id=line_id)
    return write_project(folder, ground_m=13.0, station_m=2.0)


@pytest.fixture
def two_lines(tmp_path):
    return (tiny_line(tmp_path / "north", [0.0, 300.0, 550.0, 900.0], ["strain", "suspension", "strain", "strain"],
                      "N"),
            tiny_line(tmp_path / "south", [0.0, 250.0, 600.0], ["strain", "strain", "strain"], "S"))


def invoke(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def test_batch_writes_each_project_as_a_single_run_would(two_lines):
    result = invoke("batch", *two_lines, "--workers", "2")
    assert result.exit_code == 0, result.output
    for project in two_lines:
        assert f"== {project.resolve()}" in result.output
    batch = [gpkg_tables(p.parent / "out.gpkg") for p in two_lines]
    assert {row[1] for row in batch[0]["sections"]} == {"N:P1-P3", "N:P3-P4"}
    assert {row[1] for row in batch[1]["sections"]} == {"S:P1-P2", "S:P2-P3"}
    for project in two_lines:
        with sqlite3.connect(project.parent / "out.gpkg") as db:
            assert db.execute("SELECT value FROM run_info WHERE key = 'note.engine'").fetchall() == [
                ("2 worker processes",)]
    for project, tables in zip(two_lines, batch, strict=True):
        single = project.parent / "single.gpkg"
        assert invoke("-q", "run", project, "--out", single, "--workers", "1").exit_code == 0
        assert_same_tables(tables, gpkg_tables(single))


def test_an_invalid_project_stops_the_batch_before_anything_runs(two_lines, tmp_path):
    north, south = two_lines
    south.write_text(south.read_text().replace("station_m", "statio_m"))
    missing = tmp_path / "missing.toml"
    result = invoke("batch", north, south, missing)
    assert result.exit_code == 2, result.output
    assert "2 problems found" in result.output
    assert f"{south}" in result.output and "did you mean 'station_m'" in result.output
    assert f"{missing}: not found" in result.output and "Traceback" not in result.output
    assert not (north.parent / "out.gpkg").exists()


def test_two_projects_with_one_output_are_refused(two_lines):
    north, south = two_lines
    shared = north.parent / "both.gpkg"
    for project in two_lines:
        project.write_text(project.read_text().replace('path = "out.gpkg"', f'path = "{shared}"'))
    result = invoke("batch", north, south, "--workers", "1")
    assert result.exit_code == 2, result.output
    assert f"output {shared} is also the output of {north.resolve()}" in result.output
    assert not shared.exists()


def test_violations_in_any_project_exit_3_with_the_flag(two_lines):
    north, south = two_lines
    south.write_text(south.read_text().replace("ground_m = 13.0", "ground_m = 40.0"))
    result = invoke("-q", "batch", north, south, "--workers", "1", "--fail-on-violation")
    assert result.exit_code == 3, result.output
    assert (north.parent / "out.gpkg").is_file() and (south.parent / "out.gpkg").is_file()
