"""The command line: exit codes, summary, stage listing with a plugin."""
import importlib
import textwrap

import pytest
from click.testing import CliRunner

from routesag.cli import main


@pytest.fixture
def runner():
    return CliRunner()


def install_distribution(root, monkeypatch, name, module, code, entry_points):
    """A distribution on sys.path as pip leaves it: a module and a dist-info folder with its entry points."""
    root.mkdir()
    (root / f"{module}.py").write_text(textwrap.dedent(code))
    dist = root / f"{name.replace('-', '_')}-1.0.dist-info"
    dist.mkdir()
    (dist / "METADATA").write_text(f"Metadata-Version: 2.1\nName: {name}\nVersion: 1.0\n")
    (dist / "entry_points.txt").write_text("[routesag.stages]\n" + entry_points)
    monkeypatch.syspath_prepend(str(root))
    importlib.invalidate_caches()
    return root


@pytest.fixture
def plugin(tmp_path, monkeypatch):
    """Register a third-party stage through a real entry point (a dist-info folder on sys.path)."""
    return install_distribution(tmp_path / "plugin", monkeypatch, "demo-plugin-stage", "demo_plugin_stage", """
        from routesag.pipeline import Stage

        class CountViolations(Stage):
            name = "count_violations"
            requires = ("violations",)
            provides = ("violation_count",)
            description = "counts violations (test plugin)"

            def run(self, data, ctx):
                ctx.notes["violation_count"] = len(data["violations"])
                return {"violation_count": len(data["violations"])}
        """, "count_violations = demo_plugin_stage:CountViolations\nbroken_one = demo_plugin_missing:Nothing\n")


def test_run_prints_summary_and_exits_0(runner, survey):
    result = runner.invoke(main, ["run", str(survey)])
    assert result.exit_code == 0, result.output
    assert "3 spans in 2 tension sections" in result.output
    assert "worst clearance per load case" in result.output and "hot" in result.output
    assert "CAUTION" in result.output
    assert (survey.parent / "out.gpkg").is_file()


def test_fail_on_violation_exits_3(runner, survey, tmp_path):
    out = tmp_path / "strict.gpkg"
    survey.write_text(survey.read_text().replace("ground_m = 7.5", "ground_m = 30.0"))
    result = runner.invoke(main, ["run", str(survey), "--out", str(out), "--fail-on-violation"])
    assert result.exit_code == 3, result.output
    assert "violations:" in result.output and out.is_file()


def test_bad_input_exits_2_without_traceback(runner, survey):
    survey.write_text(survey.read_text().replace("station_m", "statio_m"))
    result = runner.invoke(main, ["run", str(survey)])
    assert result.exit_code == 2
    assert "did you mean 'station_m'" in result.output
    assert "Traceback" not in result.output
    assert not (survey.parent / "out.gpkg").exists()


def test_missing_project_exits_2(runner, tmp_path):
    result = runner.invoke(main, ["run", str(tmp_path / "none.toml")])
    assert result.exit_code == 2 and "not found" in result.output


def test_output_over_input_refused(runner, survey):
    result = runner.invoke(main, ["run", str(survey), "--out", str(survey.parent / "structures.gpkg")])
    assert result.exit_code == 2 and "is one of the input files" in result.output


def test_stages_lists_builtin_and_plugin(runner, plugin):
    result = runner.invoke(main, ["stages"])
    assert result.exit_code == 0, result.output
    assert "read_inputs  [built-in, from routesag]" in result.output
    assert "build_conductors  [built-in, per section, from routesag]" in result.output
    assert "count_violations  [plugin, from demo-plugin-stage]" in result.output
    assert "requires: violations" in result.output
    assert "broken_one  [plugin, from demo-plugin-stage]" in result.output and "failed to load" in result.output


@pytest.fixture
def clashing(tmp_path, monkeypatch):
    """A distribution that registers a stage under the built-in name 'sample_terrain'."""
    return install_distribution(tmp_path / "clash", monkeypatch, "other-ground", "other_ground", """
        from routesag.stages.terrain import SampleTerrain

        class OtherGround(SampleTerrain):
            description = "another package's terrain sampler (test plugin)"

            def run(self, data, ctx):
                ctx.notes["other_ground"] = "used"
                return super().run(data, ctx)
        """, "sample_terrain = other_ground:OtherGround\n")


def test_a_built_in_name_claimed_by_another_package_is_refused(runner, clashing, survey):
    import routesag
    from routesag.pipeline import available_stages

    assert available_stages()["sample_terrain"].distribution == "routesag"   # the built-in is never displaced
    listing = runner.invoke(main, ["stages"]).output
    assert "sample_terrain  [built-in, per section, from routesag]" in listing and "CLASH: also registered by other-ground" in listing
    result = runner.invoke(main, ["run", str(survey)])
    assert result.exit_code == 2, result.output
    assert ("stage name 'sample_terrain' is registered by several distributions (other-ground, routesag); it is a "
            "built-in name, reserved for routesag") in result.output
    assert not (survey.parent / "out.gpkg").exists()
    survey.write_text(survey.read_text() + '\n[pipeline]\nstages = ["other-ground:sample_terrain"]\n')
    assert routesag.run(survey).notes["other_ground"] == "used"
    survey.write_text(survey.read_text().replace("other-ground:sample_terrain", "routesag:sample_terrain"))
    assert "other_ground" not in routesag.run(survey).notes


def test_project_can_add_plugin_stage(runner, plugin, survey):
    survey.write_text(survey.read_text() + '\n[pipeline]\nstages = ["count_violations"]\n')
    import routesag

    result = routesag.run(survey)
    assert result.notes["violation_count"] == len(result["clearance_violations"])


def test_broken_plugin_reports_only_when_used(runner, plugin, survey):
    survey.write_text(survey.read_text() + '\n[pipeline]\nstages = ["broken_one"]\n')
    result = runner.invoke(main, ["run", str(survey)])
    assert result.exit_code == 2
    assert "broken_one" in result.output and "cannot be used" in result.output


def test_quiet_prints_nothing(runner, survey):
    result = runner.invoke(main, ["-q", "run", str(survey)])
    assert result.exit_code == 0 and result.output == ""


def test_version(runner):
    result = runner.invoke(main, ["--version"])
    assert result.exit_code == 0 and "routesag" in result.output



def test_output_piped_into_a_reader_that_stops_early_is_not_an_error(runner):
    """`routesag ... | head -1`: a closed pipe ends the command quietly with exit 0, not "internal error"."""
    import click

    from routesag.cli.options import handle_errors

    @click.command()
    @handle_errors
    def writes_into_closed_pipe():
        raise BrokenPipeError(32, "Broken pipe")

    result = runner.invoke(writes_into_closed_pipe, [])
    assert result.exit_code == 0 and "internal error" not in result.output
