"""Verbosity levels, global options after the command, warnings printed once, the summary's violation list."""
import logging

import geopandas as gpd
import numpy as np
import pytest
import shapely
from click.testing import CliRunner

from routesag.cli import logs, main
from routesag.report import MAX_LISTED_VIOLATIONS, _violation_lines
from tests.conftest import X0, Y0, write_plane_raster, write_project, write_structures


@pytest.fixture
def runner():
    return CliRunner()


@pytest.fixture(autouse=True)
def restore_logging():
    root, own = logging.getLogger(), logging.getLogger("routesag")
    saved = root.level, own.level, list(root.handlers)
    yield
    root.setLevel(saved[0])
    own.setLevel(saved[1])
    root.handlers[:] = saved[2]


@pytest.fixture
def slack(tmp_path):
    """A slack line: its 200 m span sags more than 5 % in the hot case, which is warned of."""
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, bx=0.01, cy=0.02)
    write_structures(tmp_path / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in (0.0, 200.0, 310.0)])
    return write_project(tmp_path, tension_kn=5.0)


def test_levels_of_the_flags():
    assert logs.levels(0, True) == (logging.ERROR, logging.ERROR)
    assert logs.levels(0, False) == (logging.WARNING, logging.WARNING)
    assert logs.levels(1, False) == (logging.WARNING, logging.INFO)  # own stage log, no third-party INFO
    assert logs.levels(2, False) == (logging.DEBUG, logging.DEBUG)


def test_third_party_info_only_with_vv(runner, slack):
    def third_party_info():
        logging.getLogger("pyogrio._io").info("Created 3 records")
        logging.getLogger("routesag").info("stage own: 0.01 s")

    for flags, own, other in (([], False, False), (["-v"], True, False), (["-vv"], True, True)):
        logs.configure(*_parse(flags))
        result = runner.invoke(main, flags + ["stages"])
        assert result.exit_code == 0
        with _capture() as seen:
            third_party_info()
        assert ("stage own" in seen.text) is own, flags
        assert ("Created 3 records" in seen.text) is other, flags


def _parse(flags):
    return flags.count("-v") + 2 * flags.count("-vv"), "-q" in flags


class _capture:
    """Records that pass the installed terminal handler's level and filters."""

    def __enter__(self):
        self.text = ""
        capture = self

        class Collect(logging.Handler):
            def emit(self, record):
                capture.text += record.getMessage() + "\n"

        self.handler = Collect(level=logging.NOTSET)
        root = logging.getLogger()
        installed = [h for h in root.handlers if isinstance(h, logs._Handler)][0]
        for f in installed.filters:
            self.handler.addFilter(f)
        root.addHandler(self.handler)
        return self

    def __exit__(self, *exc):
        logging.getLogger().removeHandler(self.handler)


def test_v_after_the_command_shows_the_stage_log(runner, slack):
    result = runner.invoke(main, ["run", str(slack), "-v"])
    assert result.exit_code == 0, result.output
    assert "INFO: stage read_inputs" in result.stderr
    assert "Created" not in result.stderr  # pyogrio's INFO needs -vv


def test_quiet_after_the_command_and_for_demo(runner, slack, tmp_path):
    result = runner.invoke(main, ["run", str(slack), "-q"])
    assert result.exit_code == 0 and result.output == ""
    result = runner.invoke(main, ["demo", "-q", "--out", str(tmp_path / "demo.gpkg")])
    assert result.exit_code == 0 and result.output == ""
    assert (tmp_path / "demo.gpkg").is_file()


def test_each_warning_printed_once(runner, slack):
    result = runner.invoke(main, ["run", str(slack)])
    assert result.exit_code == 0, result.output
    assert result.output.count("more than 5 % of") == 1
    assert "warning: 1 span sags more than 5 % of its length" in result.stdout


def test_summary_ends_with_what_was_written(runner, slack):
    result = runner.invoke(main, ["run", str(slack)])
    lines = result.stdout.rstrip().splitlines()
    assert lines[-2].startswith("written: ") and "out.gpkg (GeoPackage, layers structures, spans" in lines[-2]
    assert "desktop GIS" in lines[-1] and "geopandas.read_file" in lines[-1]


def _violations(n):
    rng = np.random.default_rng(1)
    deficit = rng.uniform(0.1, 3.0, n)
    return gpd.GeoDataFrame({"span_id": [f"S{i}" for i in range(n)], "load_case": "hot", "category": "ground",
                             "station_m": 10.0, "start_m": 5.0, "end_m": 15.0, "clearance_m": 5.0 - deficit,
                             "required_m": 5.0, "deficit_m": deficit},
                            geometry=shapely.points(np.c_[np.arange(n), np.zeros(n)]))


def test_at_most_20_worst_violations_unless_all():
    violations = _violations(45)
    lines = _violation_lines(violations, MAX_LISTED_VIOLATIONS)
    assert lines[0] == "violations: 45 (the 20 worst; --all lists every one)"
    assert len(lines) == 21
    worst = violations.sort_values("deficit_m", ascending=False)["span_id"].head(20)
    assert [line.split()[1] for line in lines[1:]] == list(worst)
    assert len(_violation_lines(violations, None)) == 46
    assert _violation_lines(_violations(3), MAX_LISTED_VIOLATIONS)[0] == "violations: 3"


def test_all_flag_accepted(runner, survey):
    survey.write_text(survey.read_text().replace("ground_m = 7.5", "ground_m = 30.0"))
    result = runner.invoke(main, ["run", str(survey), "--all"])
    assert result.exit_code == 0, result.output
    assert "violations:" in result.stdout and "hotspots:" in result.stdout


def test_hoist_stops_at_double_dash():
    assert logs.hoist_global_flags(["run", "p.toml", "-v", "-q"]) == ["-v", "-q", "run", "p.toml"]
    assert logs.hoist_global_flags(["run", "--", "-v"]) == ["run", "--", "-v"]
