"""The demo's point cloud: the sample generator's survey.laz, and `routesag demo` running the as-found chain."""
from pathlib import Path

import laspy
import numpy as np
import pytest
from click.testing import CliRunner

from routesag.cli import main
from routesag.sample import write_sample_survey
from routesag.sample_cloud import AS_BUILT_PHASE_N, POINT_CLOUD_FILE, RETENSIONED_SECTION

REPO_ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def fresh(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sample")
    write_sample_survey(folder)
    return folder


def read(path):
    las = laspy.read(str(path))
    return np.column_stack([las.x, las.y, las.z, las.classification])


def test_point_cloud_classes_and_crs(fresh):
    las = laspy.read(str(fresh / POINT_CLOUD_FILE))
    assert las.header.parse_crs().to_epsg() == 32633
    classes = set(np.unique(las.classification))
    assert {2, 5, 6, 13, 14} == classes  # ground, vegetation, building, shield wire, conductor (LAS 1.4 R15 Table 17)


def test_committed_point_cloud_matches_the_generator(fresh):
    committed = REPO_ROOT / "sample_survey" / POINT_CLOUD_FILE
    if not committed.exists():
        pytest.skip("no committed sample_survey/ in this tree")
    np.testing.assert_array_equal(read(committed), read(fresh / POINT_CLOUD_FILE))


def test_demo_runs_the_as_found_chain_in_a_fresh_folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = CliRunner().invoke(main, ["demo"])
    assert result.exit_code == 0, result.output
    out = result.output
    assert (tmp_path / "routesag-demo.gpkg").is_file()
    # the re-strung section is found, within 1 % of its as-built tension, and the load cases start from it
    lines = [line for line in out.splitlines() if line.strip().startswith(f"{RETENSIONED_SECTION} phase_")]
    assert len(lines) == 3, out
    for line in lines:
        found_kn = float(line.split(": ")[1].split(" kN")[0])
        assert found_kn == pytest.approx(AS_BUILT_PHASE_N / 1e3, rel=0.01)
        assert "load cases from the as_found state" in line
    # the tree row grown into the clearance of span T14-T15, measured from its points
    assert "span L1:T14-T15 wire phase_a [hot] vegetation" in out
    # the one-sided span is reported weak
    assert "L1:T10-T11 phase_c: weak (one-sided coverage" in out
