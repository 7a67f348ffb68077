"""Output hygiene: the .gpkg extension, GeoPackage version, integer columns, exact zeros, stable columns,
line-end kinds, names without a line_id, plural forms."""
from pathlib import Path

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import shapely
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.errors import OutputError
from routesag.io.gpkg_version import GPKG_APPLICATION_ID, declared_version
from routesag.report import summary_text
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project


def layer(path, name):
    return pyogrio.read_dataframe(path, layer=name)


@pytest.fixture
def plain(tmp_path):
    """Structures without line_id or kind (a file as a survey team might send it), three spans, one load case."""
    tmp_path = tmp_path / "plain"
    tmp_path.mkdir()
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, bx=0.01)
    xs = [0.0, 300.0, 550.0, 900.0]
    gdf = gpd.GeoDataFrame({"structure_id": ["P1", "P2", "P3", "P4"], "seq": [1, 2, 3, 4]},
                           geometry=shapely.points([(X0 + x, Y0 + 200.0) for x in xs]), crs=CRS)
    gdf.to_file(tmp_path / "structures.gpkg", layer="structures")
    return write_project(tmp_path, cases=[("hot", 90.0, 0.0, 0.0)])


@pytest.mark.parametrize("name", ["result.shp", "result", "result.gpkg.tmp"])
def test_output_must_end_in_gpkg(plain, name):
    out = plain.parent / name
    with pytest.raises(OutputError, match=r"give a path ending in \.gpkg"):
        routesag.run(plain, out=out)
    assert not out.exists()
    result = CliRunner().invoke(main, ["run", str(plain), "--out", str(out)])
    assert result.exit_code == 2 and "ending in .gpkg" in result.output
    assert not out.exists()


def test_upper_case_extension_is_fine(plain):
    assert routesag.run(plain, out=plain.parent / "R.GPKG").path.is_file()


def test_geopackage_declares_version_1_2(plain):
    path = routesag.run(plain).path
    # OGC 12-128r15 (GeoPackage 1.2.1) Req. 2: application_id 'GPKG', user_version 10200
    assert declared_version(path) == (GPKG_APPLICATION_ID, 10200)
    assert GPKG_APPLICATION_ID == int.from_bytes(b"GPKG", "big")
    assert len(layer(path, "conductors")) == 3  # still reads back


def test_geopackage_version_on_request(plain):
    plain.write_text(plain.read_text().replace('path = "out.gpkg"', 'path = "out.gpkg"\ngpkg_version = "1.4"'))
    assert declared_version(routesag.run(plain).path)[1] == 10400


def test_integer_columns_stay_integers(plain):
    path = routesag.run(plain).path
    structures = layer(path, "structures")
    assert structures["seq"].dtype.kind == "i" and structures["seq"].tolist() == [1, 2, 3, 4]
    assert layer(path, "sections")["n_spans"].dtype.kind == "i"


def test_exact_zeros_are_zero(plain):
    path = routesag.run(plain).path
    loads = layer(path, "structure_loads")
    inside = loads[loads["structure_id"].isin(["P2", "P3"])]
    # one section, equal tensions: no longitudinal load inside it (README: 0 inside a section)
    assert (inside["longitudinal_n"] == 0.0).all()
    assert (layer(path, "conductors")["blowout_m"] == 0.0).all()  # no wind: the wire stays in its plane


def test_line_ends_say_strain_with_a_forced_column(plain):
    structures = layer(routesag.run(plain).path, "structures")
    assert structures["kind"].tolist() == ["strain", "suspension", "suspension", "strain"]
    assert structures["kind_forced"].astype(bool).tolist() == [True, False, False, True]


def test_names_read_well_without_line_id(plain):
    result = routesag.run(plain)
    assert result["spans"]["span_id"].tolist() == ["P1-P2", "P2-P3", "P3-P4"]
    assert result["sections"]["section_id"].tolist() == ["P1-P4"]  # named by its end strain structures
    assert set(result["conductors"]["wire"]) == {"conductor"}
    text = summary_text(result)
    assert "line:" not in text and "wire line" not in text
    assert "3 spans in 1 tension section, 1 load case, 1 wire" in text


def test_same_columns_in_every_run(plain, survey):
    one = routesag.run(plain)
    plain.write_text(plain.read_text() + '\n[[limits]]\nload_case = "hot"\nmax_percent_rts = 1.0\n')
    limited = routesag.run(plain)
    assert len(one["tension_exceedances"]) == 0 and len(limited["tension_exceedances"]) > 0
    for name in ("tension_exceedances", "sections", "hotspots", "unknown_stretches", "clearance_violations"):
        a = list(one[name].columns)
        b = list(limited[name].columns)
        assert "wire" in a, name
        assert a == b, name
    written = layer(limited.path, "tension_exceedances")
    assert written["wire"].tolist() == ["conductor"] * len(written)
    other = routesag.run(survey)  # a line_id, two strain structures inside, violations
    for name in ("tension_exceedances", "hotspots", "structures", "sections"):
        assert list(other[name].columns) == list(one[name].columns), name
