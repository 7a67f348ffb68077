"""Inputs that once gave a silently wrong answer: each now gives a documented conversion or a loud warning.

The refusals (exit 2) of the same family are rows of the case table in tests/test_validation.py.
"""
from __future__ import annotations

import numpy as np
import pytest
import rasterio

import routesag
from tests.conftest import write_plane_raster, write_structures
from tests.test_validation import KINDS, edit, good_survey, line_xy, with_structures

# Rows and columns of the terrain cells under the middle of the first span (x = X0 + 150, y = Y0 + 200).
HOLE = (90, 110, 165, 185)


def untagged_void(tmp, value, tag=None):
    """The good survey over a terrain whose void under span 1 holds ``value``; the raster's nodata is ``tag``."""
    project = good_survey(tmp)
    write_plane_raster(tmp / "terrain.tif", a=100.0, bx=0.01, cy=0.02, holes=[HOLE], nodata=value)
    with rasterio.open(tmp / "terrain.tif", "r+") as ds:
        ds.nodata = tag
    return project


def first_span_status(result):
    clearance = result["conductors"]
    return set(clearance.loc[clearance["span_id"] == "A:P1-P2", "status"])


@pytest.mark.parametrize("value", [-9999.0, -32768.0, -32767.0, -3.4028235e38, 3.4028235e38, 32767.0, -99999.0])
def test_untagged_fill_value_is_unknown_with_a_loud_warning(tmp_path, value):
    result = routesag.run(untagged_void(tmp_path, value))
    assert first_span_status(result) == {"unknown"}
    assert len(result["unknown_stretches"]) > 0
    warnings = [w for w in result.warnings if "READ AS NODATA" in w]
    assert warnings and "terrain.tif" in warnings[0] and f"{np.float32(value):.10g}" in warnings[0], result.warnings
    info = dict(zip(result["run_info"]["key"], result["run_info"]["value"]))
    assert any("READ AS NODATA" in v for k, v in info.items() if k.startswith("warning."))


def test_a_fill_value_beside_the_tagged_nodata_is_also_unknown(tmp_path):
    project = untagged_void(tmp_path, -32768.0, tag=-9999.0)
    result = routesag.run(project)
    assert first_span_status(result) == {"unknown"}
    assert any("-32768" in w for w in result.warnings)


def test_declared_nodata_value_inside_the_plausible_range(tmp_path):
    """A void written as 0 on terrain near 100 m cannot be guessed; [inputs] terrain_nodata = 0 declares it."""
    project = untagged_void(tmp_path, 0.0)
    assert first_span_status(routesag.run(project)) == {"clear"}   # undeclared: 0 m is a possible elevation
    edit(project, 'terrain = "terrain.tif"', 'terrain = "terrain.tif"\nterrain_nodata = 0')
    result = routesag.run(project)
    assert first_span_status(result) == {"unknown"}
    assert not [w for w in result.warnings if "READ AS NODATA" in w]


def test_untagged_fill_value_in_the_surface_model(tmp_path):
    project = good_survey(tmp_path)
    write_plane_raster(tmp_path / "dsm.tif", a=100.0, bx=0.01, cy=0.02, holes=[HOLE], nodata=-9999.0)
    with rasterio.open(tmp_path / "dsm.tif", "r+") as ds:
        ds.nodata = None
    edit(project, 'terrain = "terrain.tif"', 'terrain = "terrain.tif"\nsurface = "dsm.tif"')
    result = routesag.run(project)
    assert "clear" not in first_span_status(result)
    assert any(w.startswith("surface model") and "dsm.tif" in w and "surface_nodata = -9999" in w
               for w in result.warnings), result.warnings


def test_structure_on_an_untagged_void_is_refused_and_warned(tmp_path):
    """P1 stands on the fill value: its ground is unknown, so the run stops (naming it) rather than guess."""
    project = good_survey(tmp_path)
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, bx=0.01, cy=0.02, holes=[(95, 105, 95, 105)],
                       nodata=-9999.0)
    with rasterio.open(tmp_path / "terrain.tif", "r+") as ds:
        ds.nodata = None
    with pytest.raises(routesag.DataError, match=r"structure P1: no ground_z_m .*over nodata"):
        routesag.run(project)


def test_structures_in_web_mercator_give_true_spans(tmp_path):
    """At 50.5 deg N Web Mercator stretches lengths by sec(50.5) = 1.57; spans must still be 300, 250, 350 m."""
    project = good_survey(tmp_path)
    write_structures(tmp_path / "structures.gpkg", line_xy(), kinds=KINDS, crs="EPSG:3857")
    (tmp_path / "metric").mkdir()
    metric = routesag.run(good_survey(tmp_path / "metric"))
    result = routesag.run(project)
    # The reference run has the same structures in UTM 33N, where X0 lies on the central meridian (k = 0.9996).
    assert result["spans"]["span_m"].to_numpy() == pytest.approx(metric["spans"]["span_m"].to_numpy(), rel=1e-6)
    assert result["spans"]["span_m"].to_numpy() == pytest.approx([300.0, 250.0, 350.0], rel=1e-6)
    assert result["conductors"]["sag_m"].to_numpy() == pytest.approx(metric["conductors"]["sag_m"].to_numpy(),
                                                                      rel=1e-6)
    info = dict(zip(result["run_info"]["key"], result["run_info"]["value"]))
    assert "EPSG:3857 is projected but its scale factor" in info["note.crs_note"]
    assert "reprojected to EPSG:32633" in info["note.crs_note"]


def test_ground_z_mismatch_warn_uses_the_surveyed_value(tmp_path):
    project = with_structures(tmp_path, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3],
                                         "ground_z_m": [None, 120.0, None]})
    edit(project, 'terrain = "terrain.tif"', 'terrain = "terrain.tif"\nground_z_mismatch = "warn"')
    result = routesag.run(project)
    assert result["structures"].set_index("structure_id").loc["P2", "ground_z_m"] == 120.0
    assert any("structure P2: field 'ground_z_m' = 120.00 m but the terrain" in w and "is used" in w
               for w in result.warnings), result.warnings


def test_ground_z_within_the_tolerance_is_quiet(tmp_path):
    project = with_structures(tmp_path, {"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3],
                                         "ground_z_m": [None, 111.0, None]})   # terrain 107 m there
    result = routesag.run(project)
    assert not [w for w in result.warnings if "ground_z_m" in w]


def test_span_ids_unique_when_structure_ids_hold_hyphens(tmp_path):
    """A, B-C, A-B, C: the first and last spans would both be 'A:A-B-C'."""
    project = with_structures(tmp_path, {"structure_id": ["A", "B-C", "A-B", "C"], "seq": [1, 2, 3, 4],
                                         "kind": KINDS})
    result = routesag.run(project)
    ids = list(result["spans"]["span_id"])
    assert ids == ["A-B-C#1", "B-C-A-B", "A-B-C#3"]
    assert not result["conductors"].duplicated(["span_id", "wire", "load_case"]).any()
    assert set(result["conductors"]["span_id"]) == set(ids)


def test_no_numpy_warnings_before_a_solve_error_in_a_real_process(tmp_path):
    """pytest records warnings itself, so the terminal is checked in a child process."""
    import subprocess
    import sys

    project = edit(good_survey(tmp_path), "modulus_gpa = 70.0", "modulus_gpa = 1e-9")
    done = subprocess.run([sys.executable, "-c", "from routesag.cli import main; main()", "run", str(project)],
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 2, done.stderr
    assert "change of state cannot be solved" in done.stderr
    assert "RuntimeWarning" not in done.stderr + done.stdout
