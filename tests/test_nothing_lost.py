"""Nothing lost: a failed or interrupted run leaves the earlier output byte-identical and no temporary file.

Failures are injected the way a plugin would bring them: a stage registered in the pipeline
registry that replaces a built-in one and fails mid-way; or an interruption (Ctrl-C) raised
while the GeoPackage is being written.
"""
from __future__ import annotations

import os

import pyogrio
import pytest
from click.testing import CliRunner

import routesag
from routesag import pipeline
from routesag.cli import main
from routesag.errors import DataError, OutputError
from routesag.io import gpkg
from routesag.pipeline import Stage


class FailingTerrainSampler(Stage):
    """Replaces sample_terrain (same output), so the run stops after the wires are built."""

    name = "failing_sampler"
    requires = ("conductors", "terrain", "work_crs")
    provides = ("ground",)
    description = "test stage that fails mid-run"

    def __init__(self, error):
        self.error = error
        self.ran = False

    def run(self, data, ctx):
        self.ran = True
        raise self.error


def register(monkeypatch, stage):
    """Add ``stage`` to the registry every run reads."""
    real = pipeline.available_stages

    def with_stage():
        return {**real(), stage.name: stage}

    monkeypatch.setattr(pipeline, "available_stages", with_stage)


def use_stage(project, name):
    project.write_text(project.read_text() + f'\n[pipeline]\nstages = ["{name}"]\n')


def snapshot(folder):
    """Every file in the folder with its bytes."""
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


@pytest.fixture
def earlier(survey):
    """A survey with a good earlier output; returns (project, output path, folder snapshot)."""
    routesag.run(survey)
    out = survey.parent / "out.gpkg"
    assert out.is_file()
    return survey, out, snapshot(survey.parent)


@pytest.mark.parametrize("error", [RuntimeError("plugin bug"), DataError("plugin found bad data"),
                                   KeyboardInterrupt()], ids=["internal", "input", "ctrl-c"])
def test_failing_stage_leaves_earlier_output_identical(monkeypatch, earlier, error):
    project, out, before = earlier
    stage = FailingTerrainSampler(error)
    register(monkeypatch, stage)
    use_stage(project, stage.name)
    before["project.toml"] = project.read_bytes()
    with pytest.raises(type(error)):
        routesag.run(project)
    assert stage.ran
    assert snapshot(project.parent) == before  # output byte-identical, no temporary file


@pytest.mark.parametrize("error, code, text", [
    (RuntimeError("plugin bug"), 1, "internal error: RuntimeError: plugin bug"),
    (DataError("plugin found bad data"), 2, "plugin found bad data"),
    (KeyboardInterrupt(), 1, "Aborted"),
], ids=["internal", "input", "ctrl-c"])
def test_failing_stage_through_cli_has_no_traceback(monkeypatch, earlier, error, code, text):
    project, out, before = earlier
    stage = FailingTerrainSampler(error)
    register(monkeypatch, stage)
    use_stage(project, stage.name)
    before["project.toml"] = project.read_bytes()
    result = CliRunner().invoke(main, ["run", str(project)])
    assert result.exit_code == code, result.output
    assert text in result.output and "Traceback" not in result.output
    assert snapshot(project.parent) == before


@pytest.mark.parametrize("error", [KeyboardInterrupt(), OSError(28, "No space left on device")],
                         ids=["ctrl-c", "disk-full"])
def test_interrupted_write_leaves_earlier_output_identical(monkeypatch, earlier, error):
    """Interrupt the real pipeline while the third layer is being written to the temporary file."""
    project, out, before = earlier
    real_write = gpkg._write_one
    layers_written = []

    def write_then_interrupt(path, layer, *args, **kwargs):
        if len(layers_written) == 2:
            assert os.path.exists(path) and path != out  # a temporary file beside the output
            raise error
        real_write(path, layer, *args, **kwargs)
        layers_written.append(layer)

    monkeypatch.setattr(gpkg, "_write_one", write_then_interrupt)
    # A disk-full error is told in words (OutputError, exit 2); Ctrl-C stays what it is.
    with pytest.raises(OutputError if isinstance(error, OSError) else type(error)):
        routesag.run(project)
    assert layers_written == ["structures", "spans"]
    assert snapshot(project.parent) == before


def test_interrupted_write_through_cli(monkeypatch, earlier):
    project, out, before = earlier

    def interrupt(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(gpkg, "_write_one", interrupt)
    result = CliRunner().invoke(main, ["run", str(project)])
    assert result.exit_code == 1 and "Aborted" in result.output and "Traceback" not in result.output
    assert snapshot(project.parent) == before


@pytest.mark.parametrize("role", ["project.toml", "structures.gpkg", "terrain.tif"])
def test_refuses_to_write_over_an_input(earlier, role):
    project, out, before = earlier
    with pytest.raises(OutputError, match=rf"output .*{role.replace('.', '[.]')} is one of the input files"):
        routesag.run(project, out=project.parent / role)
    assert snapshot(project.parent) == before


def test_refuses_an_input_reached_through_a_link(earlier):
    project, out, before = earlier
    link = project.parent / "link.gpkg"
    os.symlink(project.parent / "structures.gpkg", link)
    with pytest.raises(OutputError, match="is one of the input files"):
        routesag.run(project, out=link)
    hard = project.parent / "hard.gpkg"
    os.link(project.parent / "structures.gpkg", hard)
    with pytest.raises(OutputError, match="hard.gpkg is one of the input files"):
        routesag.run(project, out=hard)
    assert (project.parent / "structures.gpkg").read_bytes() == before["structures.gpkg"]


def test_refuses_a_folder_as_output(earlier):
    project, out, before = earlier
    (project.parent / "results").mkdir()
    with pytest.raises(OutputError, match="results is a folder"):
        routesag.run(project, out=project.parent / "results")


class LateCheck(Stage):
    """A plugin whose output nothing requires: it must still run before the writer."""

    name = "late_check"
    requires = ("violations",)
    provides = ("late_result",)

    def __init__(self, fail):
        self.fail = fail

    def run(self, data, ctx):
        if self.fail:
            raise RuntimeError("late plugin bug")
        ctx.warn("late_check: a warning from a stage nothing depends on")
        ctx.notes["late_check"] = "ran"
        return {"late_result": 1}


def test_writer_runs_after_a_stage_nothing_requires(monkeypatch, earlier):
    project, out, before = earlier
    register(monkeypatch, LateCheck(fail=True))
    use_stage(project, "late_check")
    before["project.toml"] = project.read_bytes()
    with pytest.raises(RuntimeError, match="late plugin bug"):
        routesag.run(project)
    assert snapshot(project.parent) == before
    chain = [s.name for s in pipeline.assemble_chain(["late_check"], pipeline.available_stages())]
    assert chain[-1] == "write_geopackage"


def test_notes_and_warnings_of_every_stage_reach_run_info(monkeypatch, earlier):
    project, out, _ = earlier
    register(monkeypatch, LateCheck(fail=False))
    use_stage(project, "late_check")
    routesag.run(project)
    info = pyogrio.read_dataframe(out, layer="run_info").set_index("key")["value"]
    assert info["note.late_check"] == "ran"
    assert "late_check: a warning from a stage nothing depends on" in set(info)
