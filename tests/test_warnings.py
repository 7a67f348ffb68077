"""Warnings that matter reach the terminal summary and the run_info layer, and only when due."""
from __future__ import annotations

import re

import numpy as np
import pyogrio
import pytest
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.stages.checks import adjacent_span_ratios, edge_band_m
from tests.conftest import X0, Y0, write_plane_raster, write_project, write_structures

ORIGIN = (X0 - 200.0, Y0 + 400.0)  # raster top-left corner; cells 2 m


def line(tmp, xs, *, kinds=None, tension_kn=30.0, shape=(400, 800), extra=None, station_m=1.0):
    """Structures along y = Y0 + 200 at X0 + xs over the conftest plane; returns the project file."""
    write_plane_raster(tmp / "terrain.tif", a=100.0, bx=0.01, cy=0.02, shape=shape)
    write_structures(tmp / "structures.gpkg", [(X0 + x, Y0 + 200.0) for x in xs], kinds=kinds, extra=extra)
    return write_project(tmp, tension_kn=tension_kn, station_m=station_m)


def warnings_of(result, kind):
    return [w for w in result.warnings if kind in w]


def written_warnings(result):
    table = pyogrio.read_dataframe(result.path, layer="run_info")
    return list(table.loc[table["key"].str.startswith("warning."), "value"])


def test_the_reference_survey_has_no_warnings(survey):
    result = routesag.run(survey)
    assert result.warnings == [] and written_warnings(result) == []


def test_slack_wire_sag_ratio_warned_for_exactly_the_spans_over_5_percent(tmp_path):
    # About 4.9 kN on Drake (15.97 N/m) in the hot case: the parabolic sag ratio wS/(8H) (FIELD.md §1) is
    # 8.2 % for the 200 m span and 4.5 % for the 110 m span: only the first is warned of.
    result = routesag.run(line(tmp_path, [0.0, 200.0, 310.0], tension_kn=5.0))
    conductors = result["conductors"].merge(result["spans"][["span_id", "span_m"]], on="span_id")
    over = sorted(set(conductors.loc[conductors["sag_m"] / conductors["span_m"] > 0.05, "span_id"]))
    assert over == ["A:P1-P2"]
    (message,) = warnings_of(result, "more than 5 % of")
    assert re.search(r"^1 span sags more than 5 % of its length: A:P1-P2 \(8\.\d % in hot\);", message)
    assert message in written_warnings(result)


def test_long_span_warned(tmp_path):
    result = routesag.run(line(tmp_path, [0.0, 1600.0, 2000.0], kinds=["strain"] * 3, shape=(400, 1200),
                               tension_kn=40.0))
    (message,) = warnings_of(result, "longer than 1500 m")
    assert "1 span longer than 1500 m: A:P1-P2 (1600 m)" in message
    assert message in written_warnings(result)


@pytest.mark.parametrize("xs, pairs", [
    ([0.0, 100.0, 350.0, 650.0], ["A:P1-P2 (100 m) next to A:P2-P3 (250 m)"]),      # 2.5x
    ([0.0, 150.0, 450.0, 600.0], ["A:P1-P2 (150 m) next to A:P2-P3 (300 m)",        # exactly 2x
                                  "A:P2-P3 (300 m) next to A:P3-P4 (150 m)"]),
    ([0.0, 300.0, 550.0, 900.0], []),                                                 # at most 1.4x
])
def test_uneven_adjacent_spans_warned(tmp_path, xs, pairs):
    result = routesag.run(line(tmp_path, xs))
    found = warnings_of(result, "ruling-span tension is a weak approximation")
    if not pairs:
        assert found == []
        return
    (message,) = found
    assert message.startswith(f"{len(pairs)} pair(s) of adjacent spans")
    for pair in pairs:
        assert f"A:P1-P4: {pair}" in message


def test_adjacent_span_ratio_is_symmetric():
    np.testing.assert_allclose(adjacent_span_ratios(np.array([100.0, 250.0, 125.0])), [2.5, 2.0])


def test_structures_near_or_beyond_the_terrain_edge_warned(tmp_path):
    # P1 5 m inside the left raster edge, P2 15 m inside, P4 beyond the right edge with a surveyed ground.
    xs = [ORIGIN[0] - X0 + 5.0, ORIGIN[0] - X0 + 15.0 + 300.0, 700.0, 1700.0]
    ground = [float("nan")] * 3 + [120.0]
    assert edge_band_m(1.0) == 10.0
    result = routesag.run(line(tmp_path, xs, extra={"ground_z_m": ground}))
    (message,) = warnings_of(result, "terrain edge")
    assert message.startswith("2 structures within 10 m of the terrain edge or outside it: P4 (outside), P1;")
    assert "P2" not in message and "P3" not in message
    assert message in written_warnings(result)


def test_edge_band_grows_with_the_station_spacing(tmp_path):
    # P1 15 m inside the edge: clear of a 10 m band, inside the 2 x 8 m = 16 m band.
    result = routesag.run(line(tmp_path, [ORIGIN[0] - X0 + 15.0, 300.0, 600.0], station_m=8.0))
    (message,) = warnings_of(result, "terrain edge")
    assert "within 16 m of the terrain edge" in message and ": P1;" in message


def test_warnings_are_printed_in_the_summary(tmp_path):
    project = line(tmp_path, [0.0, 200.0, 310.0], tension_kn=5.0)
    result = CliRunner().invoke(main, ["run", str(project)])
    assert result.exit_code == 0, result.output
    assert re.search(r"^warning: 1 span sags more than 5 %", result.output, re.M)
