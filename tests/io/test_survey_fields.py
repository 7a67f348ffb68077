"""A survey's own data: field mapping, look-alike names, CSV coordinates, height units, kinds, extents, terrain CRS."""
from pathlib import Path

import geopandas as gpd
import numpy as np
import pyproj
import pytest
import shapely

import routesag
from routesag.errors import DataError
from routesag.io.structures import KIND_WORDS, check_structures, read_structures_file
from routesag.io.terrain import TerrainSampler
from tests.conftest import CRS, X0, Y0, write_plane_raster, write_project

FEET_CRS = "EPSG:2263"  # a State Plane CRS in US survey feet (EPSG registry)


def frame(crs=CRS, **columns):
    n = len(next(iter(columns.values())))
    geometry = shapely.points(np.c_[X0 + np.arange(n) * 200.0, np.full(n, Y0)])
    return gpd.GeoDataFrame(columns, geometry=geometry, crs=crs)


def collect(gdf, **kwargs):
    warnings = []
    out = check_structures(gdf, "s.shp", kwargs.pop("default", 20.0), warn=warnings.append, **kwargs)
    return out, warnings


# -- field mapping ------------------------------------------------------------------------------------------

def test_shapefile_with_ten_character_names_through_a_mapping(tmp_path):
    gdf = frame(TOWER_NO=["T1", "T2", "T3"], ORDER_NO=[1, 2, 3], TYPE=["Dead-End", "tangent", "anchor"],
                attach_hei=[21.0, 19.5, 22.0], insulator_=[0.0, 2.1, 0.0])
    path = tmp_path / "towers.shp"
    gdf.to_file(path)
    raw = read_structures_file(path)
    assert "attach_hei" in raw.columns  # dBASE cut the name: the case the mapping is for
    mapping = {"structure_id": "TOWER_NO", "seq": "ORDER_NO", "kind": "TYPE",
               "attach_height_m": "attach_hei", "insulator_m": "insulator_"}
    out, warnings = collect(raw, fields=mapping)
    assert list(out["structure_id"]) == ["T1", "T2", "T3"]
    assert list(out["attach_height_m"]) == [21.0, 19.5, 22.0]
    assert list(out["insulator_m"]) == [0.0, 2.1, 0.0]
    assert list(out["kind"]) == ["strain", "suspension", "strain"]
    assert list(out["kind_given"]) == ["Dead-End", "tangent", "anchor"]
    assert warnings == []


def test_mapping_to_a_field_the_file_lacks_names_the_close_ones():
    gdf = frame(TOWER_NO=["T1", "T2"], seq=[1, 2])
    with pytest.raises(DataError, match=r"structure_id = 'TOWER_N': the file has no field 'TOWER_N' "
                                        r"\(did you mean 'TOWER_NO'"):
        collect(gdf, fields={"structure_id": "TOWER_N"})


def test_unmapped_look_alike_field_warns_naming_both():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], attach_hei=[31.0, 32.0])
    out, warnings = collect(gdf)
    assert list(out["attach_height_m"]) == [20.0, 20.0]  # the default, as the warning says
    assert len(warnings) == 1
    assert "'attach_hei' looks like routesag's 'attach_height_m'" in warnings[0]
    assert "[inputs.fields] attach_height_m = 'attach_hei'" in warnings[0]


def test_look_alike_by_case_and_underscores():
    gdf = frame(Structure_ID=["a", "b"], seq=[1, 2], GroundZM=[100.0, 101.0])
    with pytest.raises(DataError, match=r"found 'Structure_ID': map it with \[inputs.fields\] structure_id"):
        collect(gdf)
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], GroundZM=[100.0, 101.0])
    _, warnings = collect(gdf)
    assert any("'GroundZM' looks like routesag's 'ground_z_m'" in w for w in warnings)


def test_unrelated_extra_fields_are_fine():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], owner_note=["x", "y"], paint=["grey", "grey"])
    _, warnings = collect(gdf)
    assert warnings == []


def test_missing_optional_field_is_never_called_empty():
    gdf = frame(structure_id=["a", "b", "c"], seq=[1, 2, 3])
    with pytest.raises(DataError) as info:
        collect(gdf, default=None)
    text = str(info.value)
    assert "empty" not in text
    assert text.count("no field 'attach_height_m'") == 1
    # a field that is there but blank in a row is empty, and said so for that row only
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], attach_height_m=[20.0, None])
    with pytest.raises(DataError, match=r"structure b \(row 2\): field 'attach_height_m' is empty"):
        collect(gdf, default=None)


# -- CSV coordinates and separators -------------------------------------------------------------------------

@pytest.mark.parametrize("header, sep, expect", [
    ("structure_id,seq,X,Y", ",", ("X", "Y")),
    ("structure_id;seq;Easting;Northing", ";", ("Easting", "Northing")),
    ("structure_id\tseq\teast\tnorth", "\t", ("east", "north")),
])
def test_csv_coordinate_columns_and_separator(tmp_path, header, sep, expect):
    path = tmp_path / "s.csv"
    rows = [sep.join(["P1", "1", f"{X0}", f"{Y0}"]), sep.join(["P2", "2", f"{X0 + 250}", f"{Y0}"])]
    path.write_text("\n".join([header] + rows) + "\n")
    gdf = read_structures_file(path, crs=CRS)
    assert list(gdf.geometry.x) == [X0, X0 + 250]
    assert f"columns {expect[0]!r}, {expect[1]!r}" in gdf.attrs["note"]
    assert f"separator {sep!r}" in gdf.attrs["note"]


def test_csv_semicolon_with_decimal_commas(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text("structure_id;seq;x;y;attach_height_m\nP1;1;500000,5;5600000,25;18,5\n"
                    "P2;2;500250,0;5600000,0;19\n")
    gdf = read_structures_file(path, crs=CRS)
    assert gdf.geometry.x.tolist() == [500000.5, 500250.0]
    assert gdf["attach_height_m"].tolist() == [18.5, 19.0]


def test_csv_lon_lat_defaults_to_wgs84(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text("structure_id,seq,Lon,Lat\nP1,1,15.0,50.5\nP2,2,15.003,50.5\n")
    gdf = read_structures_file(path)
    assert gdf.crs.to_epsg() == 4326
    assert "WGS 84 lon/lat" in gdf.attrs["note"]


def test_csv_named_columns_and_the_hint(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text("structure_id,seq,E_coord,N_coord\nP1,1,500000,5600000\nP2,2,500250,5600000\n")
    with pytest.raises(DataError, match=r"no coordinate columns: .*name them with \[inputs\] x_column"):
        read_structures_file(path, crs=CRS)
    gdf = read_structures_file(path, crs=CRS, x_column="E_coord", y_column="N_coord")
    assert gdf.geometry.x.tolist() == [500000.0, 500250.0]
    with pytest.raises(DataError, match=r"x_column = 'E_cord': no such column \(did you mean 'E_coord'"):
        read_structures_file(path, crs=CRS, x_column="E_cord", y_column="N_coord")


# -- height units ---------------------------------------------------------------------------------------------

def test_heights_in_feet_are_converted():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], attach_height_m=[65.0, 70.0], insulator_m=[5.0, 0.0],
                ground_z_m=[328.0, 330.0])
    out, warnings = collect(gdf, height_units="ft")
    # 1 ft = 0.3048 m exactly (international foot, 1959 agreement)
    assert np.allclose(out["attach_height_m"], [65 * 0.3048, 70 * 0.3048], rtol=0, atol=1e-12)
    assert np.allclose(out["insulator_m"], [5 * 0.3048, 0.0], rtol=0, atol=1e-12)
    assert np.allclose(out["ground_z_m"], [328 * 0.3048, 330 * 0.3048], rtol=0, atol=1e-12)
    out, _ = collect(gdf, height_units="ftUS")
    # US survey foot = 1200/3937 m (NIST, US survey foot definition)
    assert np.allclose(out["attach_height_m"], [65 * 1200 / 3937, 70 * 1200 / 3937], rtol=0, atol=1e-12)
    assert warnings == []


def test_feet_crs_with_feet_looking_heights_and_no_unit_warns_loudly():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], attach_height_m=[62.0, 68.0]).to_crs(FEET_CRS)
    out, warnings = collect(gdf)
    assert list(out["attach_height_m"]) == [62.0, 68.0]  # read as metres, as the warning says
    assert len(warnings) == 1 and warnings[0].count("HEIGHTS MAY BE IN FEET") == 1
    assert 'height_units = "ft"' in warnings[0]
    _, warnings = collect(gdf, height_units="m")  # declared: no warning
    assert warnings == []
    metric = frame(structure_id=["a", "b"], seq=[1, 2], attach_height_m=[62.0, 68.0])
    assert collect(metric)[1] == []  # a metre CRS: no guess


def test_feet_crs_with_metre_looking_heights_is_quiet():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], attach_height_m=[18.0, 21.0]).to_crs(FEET_CRS)
    assert collect(gdf)[1] == []


# -- kinds ------------------------------------------------------------------------------------------------------

@pytest.mark.parametrize("word, kind", [
    ("tangent", "suspension"), ("Suspension", "suspension"), ("TANGENT", "suspension"),
    ("dead-end", "strain"), ("Dead End", "strain"), ("deadend", "strain"), ("dead_end", "strain"),
    ("Anchor", "strain"), ("angle-strain", "strain"), ("Angle Strain", "strain"), ("terminal", "strain"),
    ("STRAIN", "strain"), ("", "suspension"),
])
def test_kind_words(word, kind):
    out, _ = collect(frame(structure_id=["a", "b"], seq=[1, 2], kind=[word, "strain"]))
    assert out["kind"].iloc[0] == kind


def test_unknown_kind_lists_every_accepted_word():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], kind=["pole", "strain"])
    with pytest.raises(DataError) as info:
        collect(gdf)
    text = str(info.value)
    assert "field 'kind' = 'pole' is not a known kind" in text
    for word in KIND_WORDS:
        assert word in text


# -- extents: most structures miss the raster -------------------------------------------------------------

def _line_project(tmp_path, terrain_crs=CRS, structures_text=None, extra=""):
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, crs=terrain_crs)
    if structures_text is None:
        gdf = frame(structure_id=["P1", "P2", "P3"], seq=[1, 2, 3])
        gdf.to_file(tmp_path / "structures.gpkg", layer="structures")
        return write_project(tmp_path, extra=extra)
    (tmp_path / "s.csv").write_text(structures_text)
    return write_project(tmp_path, structures="s.csv", extra=extra)


def test_wrong_crs_label_gives_one_extent_message(tmp_path):
    project = _line_project(tmp_path, terrain_crs="EPSG:32634")
    with pytest.raises(DataError) as info:
        routesag.run(project)
    problems = info.value.problems
    assert len(problems) == 1
    assert "3 of 3 structures lie outside the terrain" in problems[0]
    assert "EPSG:32634" in problems[0] and "terrain x" in problems[0]
    assert "wrong CRS label" in problems[0]
    assert not (tmp_path / "out.gpkg").exists()


def test_swapped_lon_lat_columns_are_named_as_the_cause(tmp_path):
    lon_lat = pyproj.Transformer.from_crs(CRS, "EPSG:4326", always_xy=True)
    rows = []
    for i in range(3):
        lon, lat = lon_lat.transform(X0 + 200.0 * i, Y0)
        rows.append(f"P{i + 1},{i + 1},{lat:.8f},{lon:.8f}")  # lat written in the lon column
    project = _line_project(tmp_path, structures_text="structure_id,seq,lon,lat\n" + "\n".join(rows) + "\n")
    with pytest.raises(DataError) as info:
        routesag.run(project)
    assert len(info.value.problems) == 1
    assert "x and y are swapped" in info.value.problems[0]


def test_one_structure_outside_keeps_the_per_structure_message(tmp_path):
    write_plane_raster(tmp_path / "terrain.tif", a=100.0)
    gdf = gpd.GeoDataFrame({"structure_id": ["P1", "P2", "P3"], "seq": [1, 2, 3]},
                           geometry=shapely.points([(X0, Y0), (X0 + 200, Y0), (X0 + 5000, Y0)]), crs=CRS)
    gdf.to_file(tmp_path / "structures.gpkg", layer="structures")
    with pytest.raises(DataError, match=r"structure P3: no ground_z_m") as info:
        routesag.run(write_project(tmp_path))
    assert "lie outside the terrain" not in str(info.value)


# -- terrain_crs ------------------------------------------------------------------------------------------

def test_terrain_crs_labels_a_raster_without_crs(tmp_path):
    path = write_plane_raster(tmp_path / "t.tif", crs=None, shape=(50, 50))
    with pytest.raises(DataError, match=r"has no CRS; set \[inputs\] terrain_crs"):
        TerrainSampler(path)
    with TerrainSampler(path, crs=CRS) as terrain:
        assert terrain.crs.to_epsg() == 32633
        assert "from [inputs] terrain_crs (the file has none)" in terrain.crs_note
        assert np.isfinite(terrain.sample([X0 - 150.0], [Y0 + 350.0]))[0]


def test_terrain_crs_never_overrides_the_files_own(tmp_path):
    path = write_plane_raster(tmp_path / "t.tif", shape=(50, 50))
    with pytest.raises(DataError, match=r"has its own CRS EPSG:32633, but \[inputs\] terrain_crs = 'EPSG:32634'"):
        TerrainSampler(path, crs="EPSG:32634")
    with TerrainSampler(path, crs="EPSG:32633") as terrain:  # agreeing is fine
        assert terrain.crs.to_epsg() == 32633


def test_terrain_crs_through_the_project_file(tmp_path):
    write_plane_raster(tmp_path / "terrain.tif", a=100.0, crs=None)
    gdf = frame(structure_id=["P1", "P2", "P3"], seq=[1, 2, 3])
    gdf.to_file(tmp_path / "structures.gpkg", layer="structures")
    project = write_project(tmp_path)
    text = Path(project).read_text().replace("[inputs]\n", f'[inputs]\nterrain_crs = "{CRS}"\n', 1)
    Path(project).write_text(text)
    result = routesag.run(project)
    info = dict(zip(result["run_info"]["key"], result["run_info"]["value"]))
    assert any("terrain_crs" in str(v) for v in info.values())
