"""Running the tension sections elsewhere: worker processes and a dask LocalCluster give the serial output.

The outputs are compared table by table in the written GeoPackage: every layer, every row in file order, every
value (geometry blobs byte for byte); only run_info's timing, host and engine entries may differ.
"""
from __future__ import annotations

import signal
import sqlite3
import subprocess
import sys
import time

import pytest
from click.testing import CliRunner

from routesag.cli import main
from tests.conftest import X0, Y0, write_plane_raster, write_project, write_structures

#: run_info entries that say when, where and how the run went, not what it found.
RUN_INFO_VARYING = ("run_utc", "output_file", "note.engine", "note.stage_seconds", "note.section_seconds",
                    "note.section_stage_seconds", "param.engine")


@pytest.fixture(scope="module")
def three_sections(tmp_path_factory):
    """Five structures, three tension sections (strain at P1, P3, P4, P5), a terrain hole and tight clearance,
    so violations and unknown stretches have rows too."""
    folder = tmp_path_factory.mktemp("three_sections")
    xs = [0.0, 300.0, 550.0, 900.0, 1150.0]
    write_plane_raster(folder / "terrain.tif", a=100.0, bx=0.01, cy=0.02, holes=[(0, 400, 165, 185)])
    write_structures(folder / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in xs],
                     kinds=["strain", "suspension", "strain", "strain", "strain"])
    return write_project(folder, ground_m=14.0, station_m=2.0)


def gpkg_tables(path) -> dict[str, list[tuple]]:
    """Every table of a GeoPackage's contents, rows in file order; run_info without its varying entries."""
    with sqlite3.connect(path) as db:
        names = [n for (n,) in db.execute("SELECT table_name FROM gpkg_contents ORDER BY table_name")]
        tables = {n: db.execute(f'SELECT * FROM "{n}" ORDER BY rowid').fetchall() for n in names}
        styles_time = [d[1] for d in db.execute("PRAGMA table_info(layer_styles)")].index("update_time")
    tables["run_info"] = [row[1:] for row in tables["run_info"] if row[1] not in RUN_INFO_VARYING]
    # when the styles were written, not what they are
    tables["layer_styles"] = [row[:styles_time] + row[styles_time + 1:] for row in tables["layer_styles"]]
    return tables


def run_cli(project, out, *options) -> dict[str, list[tuple]]:
    result = CliRunner().invoke(main, ["-q", "run", str(project), "--out", str(out), *options])
    assert result.exit_code == 0, result.output
    return gpkg_tables(out)


@pytest.fixture(scope="module")
def serial(three_sections):
    tables = run_cli(three_sections, three_sections.parent / "serial.gpkg", "--workers", "1")
    assert len({row[1] for row in tables["sections"]}) == 3  # fid, section_id, ...
    assert tables["clearance_violations"] and tables["unknown_stretches"]  # the comparison covers them
    return tables


def assert_same_tables(got, expected):
    assert list(got) == list(expected)
    for name in expected:
        assert got[name] == expected[name], f"layer {name} differs"


def test_worker_processes_give_the_serial_output(three_sections, serial):
    got = run_cli(three_sections, three_sections.parent / "pool.gpkg", "--workers", "2")
    assert_same_tables(got, serial)


@pytest.mark.parametrize("fork", [True, False], ids=["forked", "forkserver"])
def test_both_ways_of_starting_workers_give_the_serial_output(three_sections, serial, fork):
    """A pool started at the run's start is forked from it; one started later comes from the forkserver."""
    from routesag.api import run_project
    from routesag.engine import WorkerPool
    from routesag.project import load_project

    out = three_sections.parent / f"pool-{fork}.gpkg"
    pool = WorkerPool(2, fork=fork)
    try:
        run_project(load_project(three_sections, output=out), pool)
    finally:
        pool.close()
    assert_same_tables(gpkg_tables(out), serial)


def test_a_prepared_pool_exists_before_the_inputs_are_read_and_goes_when_the_run_fails(survey, monkeypatch):
    import routesag
    import routesag.engine
    import routesag.stages.inputs

    pools, processes = [], []

    def fail(self, data, ctx):
        processes.extend(pools[0]._pool._processes.values())  # made before the first stage ran
        raise routesag.InputError(["the structures are gone"])

    real_started = routesag.engine.WorkerPool.started
    monkeypatch.setattr(routesag.engine.WorkerPool, "started",
                        classmethod(lambda cls, n: pools.append(real_started.__func__(cls, n)) or pools[-1]))
    monkeypatch.setattr(routesag.stages.inputs.ReadInputs, "run", fail)
    with pytest.raises(routesag.InputError):
        routesag.run(survey, workers=2)
    assert len(pools) == 1 and pools[0].workers == 2 and processes
    assert all(p.exitcode is not None for p in processes)  # shut down with the failed run


@pytest.mark.slow  # starting a LocalCluster of 2 processes takes 10-25 s here
def test_dask_local_cluster_gives_the_serial_output(three_sections, serial):
    pytest.importorskip("dask.distributed")
    got = run_cli(three_sections, three_sections.parent / "dask.gpkg", "--scheduler", "local:2")
    assert_same_tables(got, serial)


def test_the_comparison_sees_a_changed_value(three_sections, serial, tmp_path):
    """The equality above can fail: one changed setting changes the tables."""
    changed = tmp_path / "project.toml"
    changed.write_text(three_sections.read_text().replace("ground_m = 14.0", "ground_m = 13.0"))
    for name in ("terrain.tif", "structures.gpkg"):
        (tmp_path / name).symlink_to(three_sections.parent / name)
    got = run_cli(changed, tmp_path / "changed.gpkg", "--workers", "1")
    assert got["clearance_violations"] != serial["clearance_violations"]


@pytest.mark.parametrize("options, message", [
    (["--workers", "0"], "0 is not in the range x>=1"),
    (["--workers", "-3"], "-3 is not in the range x>=1"),
    (["--scheduler", "localhost"], "'localhost' is not a scheduler address"),
    (["--scheduler", "tcp://10.0.0.5"], "is not a scheduler address"),
    (["--scheduler", "local:0"], "give local:N with N >= 1"),
    (["--scheduler", "local:two"], "give local:N with N >= 1"),
])
def test_bad_engine_option_exits_2_before_anything_is_written(survey, options, message):
    result = CliRunner().invoke(main, ["run", str(survey), *options])
    assert result.exit_code == 2, result.output
    assert message in result.output and "Traceback" not in result.output
    assert not (survey.parent / "out.gpkg").exists()


def test_bad_project_scheduler_names_the_file_and_key(survey):
    survey.write_text(survey.read_text() + '\n[engine]\nscheduler = "cluster-7"\n')
    result = CliRunner().invoke(main, ["run", str(survey)])
    assert result.exit_code == 2, result.output
    assert f"{survey.resolve()}: [engine] scheduler 'cluster-7' is not a scheduler address" in result.output


def test_command_line_wins_over_the_engine_table(survey):
    """[engine] names a bad scheduler, but --workers on the command line decides, so it is never used."""
    survey.write_text(survey.read_text() + '\n[engine]\nscheduler = "cluster-7"\nworkers = 2\n')
    result = CliRunner().invoke(main, ["run", str(survey), "--workers", "1"])
    assert result.exit_code == 0, result.output


def test_engine_table_workers_is_used_without_the_option(survey):
    import routesag

    survey.write_text(survey.read_text() + '\n[engine]\nworkers = 1\n')
    assert routesag.run(survey, workers=None).notes["engine"] == "in process"
    survey.write_text(survey.read_text().replace("workers = 1", "workers = 2"))
    assert routesag.run(survey, workers=None).notes["engine"] == "2 worker processes"


def test_an_error_in_a_worker_is_the_serial_error(survey):
    """A section that fails in a worker process ends the run as it would in process: exit 2, same message."""
    text = survey.read_text().replace('terrain = "terrain.tif"', 'terrain = "terrain.tif"\nsurface = "dsm.tif"')
    survey.write_text(text)
    (survey.parent / "dsm.tif").write_bytes((survey.parent / "terrain.tif").read_bytes()[:3000])  # truncated
    outputs = []
    for workers in ("1", "2"):
        result = CliRunner().invoke(main, ["run", str(survey), "--workers", workers])
        assert result.exit_code == 2, result.output
        assert "Traceback" not in result.output and not (survey.parent / "out.gpkg").exists()
        outputs.append(result.output)
    assert "dsm.tif" in outputs[0] and outputs[0] == outputs[1]


def test_sample_survey_with_crossings_and_surface_gives_the_serial_output_in_workers(tmp_path):
    """The invented sample survey has road/rail/water crossings and a surface model, which the small line lacks:
    crossings travel to the workers as frames, the surface model is opened in each worker."""
    from routesag.sample import write_sample_survey

    project = write_sample_survey(tmp_path)
    import pyogrio

    serial_tables = run_cli(project, tmp_path / "serial.gpkg", "--workers", "1")
    assert len({row[1] for row in serial_tables["sections"]}) > 2
    categories = set(pyogrio.read_dataframe(tmp_path / "serial.gpkg", layer="clearance_violations")["category"])
    assert categories - {"ground"}, categories  # the comparison covers crossing or surface violations
    assert_same_tables(run_cli(project, tmp_path / "pool.gpkg", "--workers", "2"), serial_tables)


def test_the_api_raises_an_engine_error_before_reading_anything(survey, monkeypatch):
    import routesag
    import routesag.stages.inputs

    def never(*args, **kwargs):
        raise AssertionError("inputs read before the engine was checked")

    monkeypatch.setattr(routesag.stages.inputs.ReadInputs, "run", never)
    for kwargs, message in (({"scheduler": "tcp://nowhere"}, "is not a scheduler address"),
                            ({"workers": -1}, "give a whole number of worker processes")):
        with pytest.raises(routesag.EngineError, match=message):
            routesag.run(survey, **kwargs)


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="workers end with their parent on Linux")
@pytest.mark.parametrize("fork", [True, False], ids=["forked", "forkserver"])
def test_workers_of_a_killed_run_end_with_it(fork):
    """A run killed with SIGKILL cannot shut its pool down: its workers must not wait for sections forever."""
    code = ("import os, signal, sys; from routesag.engine import WorkerPool; "
            "pool = WorkerPool(2, fork=sys.argv[1] == '1'); [f.result() for f in [pool._pool.submit(os.getpid) for _ in range(4)]]; "
            "print(' '.join(map(str, pool._pool._processes)), flush=True); os.kill(os.getpid(), signal.SIGKILL)")
    done = subprocess.run([sys.executable, "-c", code, "1" if fork else "0"], capture_output=True, text=True,
                          timeout=120)
    workers = [int(pid) for pid in done.stdout.split()]
    assert done.returncode == -signal.SIGKILL and workers

    def alive(pid):
        try:
            with open(f"/proc/{pid}/status") as status:
                return not any(line.startswith("State:") and "Z" in line.split()[1] for line in status)
        except FileNotFoundError:
            return False

    deadline = time.monotonic() + 30
    while any(map(alive, workers)) and time.monotonic() < deadline:
        time.sleep(0.05)
    assert not any(map(alive, workers))
