"""Atomic GeoPackage writing, reading back, and file hashing.

Every layer is built in code in tmp_path.
"""

import os

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from numpy.testing import assert_allclose

from routesag.errors import DataError, OutputError
from routesag.io import gpkg
from routesag.io.gpkg import read_layer, write_layers
from routesag.io.hashing import sha256_file

CRS = "EPSG:32633"


def points_z():
    xyz = np.array([[500010.0, 6000020.0, 101.5], [500030.0, 6000025.0, 103.25]])
    return gpd.GeoDataFrame({"structure_id": ["T1", "T2"], "height_m": [24.0, 27.5]},
                            geometry=shapely.points(xyz), crs=CRS)


def line_z():
    coords = np.array([[500010.0, 6000020.0, 125.5], [500020.0, 6000022.0, 121.0],
                       [500030.0, 6000025.0, 130.75]])
    return gpd.GeoDataFrame({"span_id": [1]}, geometry=[shapely.linestrings(coords)], crs=CRS)


def summary_table():
    return pd.DataFrame({"span_id": [1], "min_clearance_m": [7.25], "load_case": ["hot"]})


def empty_spatial(crs=CRS):
    return gpd.GeoDataFrame({"span_id": pd.Series([], dtype="int64")},
                            geometry=gpd.GeoSeries([], crs=crs))


def normal_layers():
    return {"structures": (points_z(), "Point Z"),
            "conductors": (line_z(), "LineString Z"),
            "summary": (summary_table(), None)}


def folder_listing(folder):
    return sorted(p.name for p in folder.iterdir())


def test_round_trip_spatial_and_attribute_layers(tmp_path):
    out = tmp_path / "result.gpkg"
    write_layers(out, normal_layers())
    assert [name for name, _ in pyogrio.list_layers(out)] == ["structures", "conductors", "summary"]
    assert pyogrio.read_info(out, layer="structures")["geometry_type"] == "Point Z"
    assert pyogrio.read_info(out, layer="conductors")["geometry_type"] == "LineString Z"
    assert pyogrio.read_info(out, layer="summary")["geometry_type"] is None

    structures = read_layer(out, "structures")
    assert structures.crs == CRS
    assert_allclose(shapely.get_coordinates(structures.geometry, include_z=True),
                    shapely.get_coordinates(points_z().geometry, include_z=True))
    summary = read_layer(out, "summary")
    assert not isinstance(summary, gpd.GeoDataFrame)
    assert summary.to_dict("list") == summary_table().to_dict("list")
    assert folder_listing(tmp_path) == ["result.gpkg"]


def test_empty_layers_keep_geometry_type_and_crs(tmp_path):
    out = tmp_path / "empty.gpkg"
    write_layers(out, {
        "violations": (empty_spatial(), "Point Z"),
        "profile": (empty_spatial(crs=None), "LineString Z", CRS),  # CRS given beside the frame
        "notes": (pd.DataFrame({"text": pd.Series([], dtype="object")}), None),
    })
    for layer, geometry_type in [("violations", "Point Z"), ("profile", "LineString Z")]:
        info = pyogrio.read_info(out, layer=layer)
        assert info["features"] == 0
        assert info["geometry_type"] == geometry_type
        assert info["crs"] == CRS
    assert pyogrio.read_info(out, layer="notes")["features"] == 0


@pytest.mark.parametrize("error", [RuntimeError("disk on fire"), KeyboardInterrupt()])
def test_failure_midway_leaves_earlier_file_identical_and_no_temp(tmp_path, monkeypatch, error):
    out = tmp_path / "result.gpkg"
    write_layers(out, {"summary": (summary_table(), None)})
    before = out.read_bytes()

    real_write = gpkg._write_one
    written = []

    def write_then_fail(path, layer, *args, **kwargs):
        if layer == "conductors":  # second layer: the temp file already exists
            assert os.path.exists(path) and written == ["structures"]
            raise error
        real_write(path, layer, *args, **kwargs)
        written.append(layer)

    monkeypatch.setattr(gpkg, "_write_one", write_then_fail)
    with pytest.raises(type(error)):
        write_layers(out, normal_layers())
    assert out.read_bytes() == before
    assert folder_listing(tmp_path) == ["result.gpkg"]


def test_protect_refuses_to_overwrite_an_input(tmp_path, monkeypatch):
    source = tmp_path / "structures.gpkg"
    write_layers(source, {"structures": (points_z(), "Point Z")})
    before = source.read_bytes()
    (tmp_path / "sub").mkdir()
    monkeypatch.chdir(tmp_path / "sub")
    for spelling in [source, "../structures.gpkg", tmp_path / "sub" / ".." / "structures.gpkg"]:
        with pytest.raises(OutputError, match="structures.gpkg"):
            write_layers(spelling, normal_layers(), protect=[source])
    os.link(source, tmp_path / "hardlink.gpkg")
    with pytest.raises(OutputError, match="input"):
        write_layers(tmp_path / "hardlink.gpkg", normal_layers(), protect=[source])
    assert source.read_bytes() == before
    assert folder_listing(tmp_path) == ["hardlink.gpkg", "structures.gpkg", "sub"]


def test_missing_folder_is_refused(tmp_path):
    with pytest.raises(OutputError, match="does not exist"):
        write_layers(tmp_path / "nowhere" / "out.gpkg", normal_layers())


def test_unwritable_folder_is_refused_before_writing(tmp_path, monkeypatch):
    # Running as root makes a chmod-based test pass vacuously, so stub the check.
    monkeypatch.setattr(gpkg.os, "access", lambda path, mode: False)
    with pytest.raises(OutputError, match="not writable"):
        write_layers(tmp_path / "out.gpkg", normal_layers())
    assert folder_listing(tmp_path) == []


def test_plain_dataframe_with_geometry_type_is_rejected_before_writing(tmp_path):
    with pytest.raises(ValueError, match="attribute table"):
        write_layers(tmp_path / "out.gpkg", {"structures": (points_z(), "Point Z"),
                                             "summary": (summary_table(), "Point")})
    assert folder_listing(tmp_path) == []


def test_read_layer_missing_layer_is_data_error(tmp_path):
    out = tmp_path / "result.gpkg"
    write_layers(out, {"summary": (summary_table(), None)})
    with pytest.raises(DataError, match="'absent'"):
        read_layer(out, "absent")
    with pytest.raises(DataError, match="nofile.gpkg"):
        read_layer(tmp_path / "nofile.gpkg", "summary")


def test_sha256_matches_published_vectors(tmp_path):
    abc = tmp_path / "abc.txt"
    abc.write_bytes(b"abc")
    empty = tmp_path / "empty.bin"
    empty.write_bytes(b"")
    # FIPS 180-2, Appendix B.1 (one-block message "abc"); chunk=1 exercises streaming.
    assert sha256_file(abc, chunk=1) == (
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad")
    # SHA-256 of the empty message, NIST CSRC example values (from memory).
    assert sha256_file(empty) == (
        "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855")


def mixed_columns():
    """Every kind of column the layers hold: text (with a gap), numbers (with NaN), whole numbers, flags."""
    coords = np.array([[[500010.0, 6000020.0, 125.5], [500020.0, 6000022.0, 121.0]],
                       [[500030.0, 6000025.0, 130.75], [500040.0, 6000027.0, 128.0]],
                       [[500050.0, 6000029.0, 131.0], [500060.0, 6000031.0, 129.5]]])
    frame = pd.DataFrame({"span_id": pd.array(["S1", None, "S3"], dtype="str"),
                          "note": np.array(["a", None, "c"], dtype=object),
                          "sag_m": [1.5, np.nan, 2.25], "rank": np.array([1, 2, 3], dtype="int64"),
                          "count": pd.array([1, None, 3], dtype="Int64"), "forced": [True, False, True]})
    return gpd.GeoDataFrame(frame, geometry=shapely.linestrings(coords), crs=CRS), coords


def test_rows_written_from_arrays_read_back_as_pyogrios_own_writer_writes_them(tmp_path):
    layer, coords = mixed_columns()
    ours, theirs, encoded = tmp_path / "ours.gpkg", tmp_path / "theirs.gpkg", tmp_path / "encoded.gpkg"
    write_layers(ours, {"c": (layer, "LineString Z"), "t": (pd.DataFrame(layer.drop(columns="geometry")), None)})
    pyogrio.write_dataframe(layer, theirs, layer="c", driver="GPKG", geometry_type="LineString Z")
    pyogrio.write_dataframe(pd.DataFrame(layer.drop(columns="geometry")), theirs, layer="t", driver="GPKG",
                            append=False)
    with gpkg.GeoPackageWriter(encoded) as writer:  # geometry as WKB built from the coordinates, no objects
        attributes = pd.DataFrame(layer.drop(columns="geometry"))
        writer.write("c", attributes.iloc[:1], "LineString Z", wkb=gpkg.linestrings_z_wkb(coords[:1]),
                     crs=gpkg.crs_label(CRS))
        writer.write("c", attributes.iloc[1:], "LineString Z", wkb=gpkg.linestrings_z_wkb(coords[1:]),
                     crs=gpkg.crs_label(CRS))
        writer.commit()
    for name in ("c", "t"):
        expected = pyogrio.read_dataframe(theirs, layer=name)
        for path in (ours, encoded) if name == "c" else (ours,):
            info, reference = pyogrio.read_info(path, layer=name), pyogrio.read_info(theirs, layer=name)
            assert list(info["fields"]) == list(reference["fields"])
            assert list(info["dtypes"]) == list(reference["dtypes"])
            assert info["geometry_type"] == reference["geometry_type"] and info["crs"] == reference["crs"]
            got = pyogrio.read_dataframe(path, layer=name)
            pd.testing.assert_frame_equal(pd.DataFrame(got.drop(columns="geometry", errors="ignore")),
                                          pd.DataFrame(expected.drop(columns="geometry", errors="ignore")))
            if name == "c":
                assert list(shapely.to_wkb(got.geometry.array)) == list(shapely.to_wkb(expected.geometry.array))


def test_linestring_wkb_is_shapelys():
    _, coords = mixed_columns()
    assert list(gpkg.linestrings_z_wkb(list(coords))) == list(shapely.to_wkb(shapely.linestrings(coords)))


def test_background_digest_is_the_files_sha256_and_passes_on_a_read_error(tmp_path):
    from routesag.io.hashing import BackgroundDigest, fingerprint

    data = tmp_path / "terrain.bin"
    data.write_bytes(os.urandom(3 << 20) + b"tail")  # several read chunks
    digest, _ = fingerprint(data)
    assert digest.result() == sha256_file(data)
    with pytest.raises(FileNotFoundError):
        BackgroundDigest(tmp_path / "gone.bin").result()
