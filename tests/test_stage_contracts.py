"""A stage's outputs are checked against their dataset's contract, and a breach names the stage."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.contracts import check_outputs
from routesag.errors import PipelineError
from routesag.pipeline import Stage
from routesag.profiles import ConductorProfile, Profiles, StationField
from tests.test_nothing_lost import register, snapshot, use_stage


class FlatGround(Stage):
    """Replaces sample_terrain and returns one number per profile: numpy would broadcast it over every station."""

    name = "flat_ground"
    requires = ("conductors", "terrain", "work_crs")
    provides = ("ground",)
    per_section = True

    def run(self, data, ctx):
        return {"ground": StationField({p.key: np.array([0.0]) for p in data["conductors"]})}


def test_plugin_ground_of_length_one_fails_naming_the_stage(monkeypatch, earlier_output):
    project, before = earlier_output
    register(monkeypatch, FlatGround())
    use_stage(project, "flat_ground")
    before["project.toml"] = project.read_bytes()
    with pytest.raises(PipelineError, match=r"stage 'flat_ground' returned datasets that break their contract: "
                                            r"'ground' has wrong values for \d+ profile\(s\): A:P1-P3/A:P1-P2/A/hot: "
                                            r"array of shape \(1,\), expected \(\d+,\)"):
        routesag.run(project)
    result = CliRunner().invoke(main, ["run", str(project)])
    assert result.exit_code == 2 and "flat_ground" in result.output and "Traceback" not in result.output
    assert snapshot(project.parent) == before


@pytest.fixture
def earlier_output(survey):
    routesag.run(survey)
    return survey, snapshot(survey.parent)


def profile(span="S1-S2", n=4):
    xyz = np.column_stack([np.arange(n, dtype=float), np.zeros(n), np.full(n, 20.0)])
    return ConductorProfile(span, "S1", "hot", np.arange(n, dtype=float), xyz, 1.0, 1.0, 1.0, 1.0, 1.0, 0.0, "A")


@pytest.mark.parametrize("name, value, message", [
    ("ground", [np.zeros(4)], r"'ground' must be a mapping from profile key"),
    ("ground", {}, r"'ground' has no entry for 1 profile\(s\), e.g. S1/S1-S2/A/hot"),
    ("ground", {("x", "y", "z", "w"): np.zeros(4), ("S1", "S1-S2", "A", "hot"): np.zeros(4)},
     r"entries for 1 unknown profile"),
    ("ground", {("S1", "S1-S2", "A", "hot"): np.zeros((4, 1))}, r"array of shape \(4, 1\), expected \(4,\)"),
    ("ground", {("S1", "S1-S2", "A", "hot"): np.array(["a"] * 4)}, r"values of type <U1, expected numbers"),
    ("station_rules", {("S1", "S1-S2", "A", "hot"): np.zeros(4)}, r"expected a \(required_m, category\) pair"),
    ("surface", {("S1", "S1-S2", "A", "hot"): 3.0}, r"float, expected a SurfaceProfile or None"),
    ("clearance", [], r"'clearance' must be a DataFrame, not list"),
    ("conductors", [profile()], r"'conductors' must be a Profiles collection"),
])
def test_contract_breaches(name, value, message):
    with pytest.raises(PipelineError, match=rf"stage 'plug'.*{message}"):
        check_outputs("plug", {name: value}, {"conductors": Profiles([profile()])})


def test_good_outputs_pass():
    key = ("S1", "S1-S2", "A", "hot")
    check_outputs("plug", {"ground": {key: np.zeros(4)}, "surface": {key: None},
                           "station_rules": {key: (np.zeros(4), np.array(["ground"] * 4, dtype=object))},
                           "clearance": pd.DataFrame()}, {"conductors": Profiles([profile()])})
