"""Reading and checking the structures layer."""
import geopandas as gpd
import numpy as np
import pytest
import shapely

from routesag.errors import DataError
from routesag.io.structures import check_structures, read_structures_file, to_working_crs
from tests.conftest import CRS, X0, Y0


def frame(**columns):
    n = len(next(iter(columns.values())))
    geometry = columns.pop("geometry", shapely.points(np.c_[X0 + np.arange(n) * 200.0, np.full(n, Y0)]))
    return gpd.GeoDataFrame(columns, geometry=geometry, crs=CRS)


def test_clean_layer_normalised():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], kind=["Strain", None], attach_height_m=[18.0, None])
    out = check_structures(gdf, "s.gpkg", default_attach_height_m=20.0)
    assert list(out["kind"]) == ["strain", "suspension"]
    assert list(out["attach_height_m"]) == [18.0, 20.0]
    assert list(out["line_id"]) == ["line", "line"]
    assert np.isnan(out["ground_z_m"]).all()


def test_missing_field_suggests_near_name():
    gdf = frame(structureid=["a", "b"], seq=[1, 2])
    with pytest.raises(DataError, match=r"s.gpkg: missing required field 'structure_id' \(found 'structureid'"):
        check_structures(gdf, "s.gpkg", 20.0)


def test_every_problem_is_collected():
    gdf = frame(structure_id=["a", "a", "c", "d"], seq=[1, 2, 2, "x"], kind=["pole", "strain", None, None],
                attach_height_m=[250.0, -1.0, 20.0, 20.0])
    with pytest.raises(DataError) as info:
        check_structures(gdf, "s.gpkg", 20.0)
    text = str(info.value)
    assert "structure a (row 1): field 'kind' = 'pole'" in text
    assert "structure a (row 1): field 'attach_height_m' = 250 m" in text
    assert "structure a (row 2): field 'attach_height_m' = -1 m" in text
    assert "structure d (row 4): field 'seq' = 'x' is not a number" in text
    assert "structure_id 'a' appears more than once" in text
    assert "seq 2 is used by structure a (row 2), structure c (row 3)" in text


def test_non_point_geometry_named():
    lines = [shapely.LineString([(0, 0), (1, 1)]), shapely.Point(5, 5)]
    gdf = frame(structure_id=["a", "b"], seq=[1, 2], geometry=lines)
    with pytest.raises(DataError, match=r"structure a \(row 1\): geometry is LineString; expected Point"):
        check_structures(gdf, "s.gpkg", 20.0)


def test_single_structure_line():
    gdf = frame(structure_id=["a", "b", "c"], seq=[1, 2, 3], line_id=["L1", "L1", "L2"])
    with pytest.raises(DataError, match="line L2 has only one structure"):
        check_structures(gdf, "s.gpkg", 20.0)


def test_missing_attach_height_without_default():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2])
    with pytest.raises(DataError, match="no field 'attach_height_m' and the project sets no"):
        check_structures(gdf, "s.gpkg", None)


def test_no_crs():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2]).set_crs(None, allow_override=True)
    with pytest.raises(DataError, match="s.gpkg: no CRS"):
        check_structures(gdf, "s.gpkg", 20.0)


def test_unknown_layer_lists_layers(tmp_path):
    path = tmp_path / "s.gpkg"
    frame(structure_id=["a", "b"], seq=[1, 2]).to_file(path, layer="poles")
    with pytest.raises(DataError, match=r"no layer 'towers'; layers: poles"):
        read_structures_file(path, "towers")


def test_missing_and_garbage_files(tmp_path):
    with pytest.raises(DataError, match="not found"):
        read_structures_file(tmp_path / "none.gpkg")
    junk = tmp_path / "junk.gpkg"
    junk.write_bytes(b"\x00garbage" * 50)
    with pytest.raises(DataError, match="junk.gpkg: cannot be read"):
        read_structures_file(junk)


def test_csv_needs_crs_and_xy(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text(f"structure_id,seq,x,y\na,1,{X0},{Y0}\nb,2,{X0 + 250},{Y0}\n")
    with pytest.raises(DataError, match="CSV carries no CRS"):
        read_structures_file(path)
    gdf = read_structures_file(path, crs=CRS)
    assert gdf.crs.to_epsg() == 32633 and len(gdf) == 2
    path.write_text("structure_id,seq,left,right\na,1,1,1\n")
    with pytest.raises(DataError, match="no coordinate columns: expected one of x/y, easting/northing"):
        read_structures_file(path, crs=CRS)


def test_lat_lon_reprojected_to_utm():
    gdf = frame(structure_id=["a", "b"], seq=[1, 2]).to_crs(4326)
    out, crs, note = to_working_crs(gdf)
    assert crs.to_epsg() == 32633  # 15 degE, northern hemisphere -> UTM 33N
    assert "reprojected to EPSG:32633" in note
    assert out.geometry.x.iloc[1] - out.geometry.x.iloc[0] == pytest.approx(200.0, abs=1e-3)


def test_feet_crs_reprojected_to_metres():
    # EPSG:2229: NAD83 / California zone 5 (ftUS).
    gdf = gpd.GeoDataFrame({"structure_id": ["a", "b"], "seq": [1, 2]},
                           geometry=shapely.points([(6.5e6, 1.8e6), (6.5e6 + 1000.0, 1.8e6)]), crs="EPSG:2229")
    out, crs, note = to_working_crs(gdf)
    assert "horizontal unit" in note and crs.axis_info[0].unit_name == "metre"
    span = out.geometry.iloc[0].distance(out.geometry.iloc[1])
    assert span == pytest.approx(1000.0 * 1200 / 3937, rel=2e-3)  # US survey foot definition
