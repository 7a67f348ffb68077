"""Default layer styles in the GeoPackage's layer_styles table (the convention the desktop GIS reads)."""
import sqlite3
import xml.etree.ElementTree as ET

import geopandas as gpd
import pytest
import shapely

from routesag.io.gpkg import write_layers
from routesag.io.layer_styles import write_layer_styles
from routesag.visual import palette

STYLED = {"conductors", "clearance_violations", "hotspots", "unknown_stretches", "structures", "spans"}
SLD = "{http://www.opengis.net/sld}"
SE = "{http://www.opengis.net/se}"


def rows(path):
    with sqlite3.connect(path) as con:
        con.row_factory = sqlite3.Row
        return [dict(r) for r in con.execute("SELECT * FROM layer_styles")]


def test_demo_geopackage_has_a_default_style_per_styled_layer(demo_gpkg):
    found = rows(demo_gpkg)
    assert {r["f_table_name"] for r in found} == STYLED
    with sqlite3.connect(demo_gpkg) as con:
        geometry = dict(con.execute("SELECT table_name, column_name FROM gpkg_geometry_columns"))
        contents = con.execute("SELECT data_type, identifier FROM gpkg_contents WHERE table_name = 'layer_styles'")
        assert contents.fetchall() == [("attributes", "layer_styles")]
    for r in found:
        assert r["useAsDefault"] == 1 and r["f_geometry_column"] == geometry[r["f_table_name"]]
        assert r["f_table_catalog"] == "" and r["f_table_schema"] == "" and r["update_time"]
        assert ET.fromstring(r["styleQML"]).tag == "qgis"
        assert ET.fromstring(r["styleSLD"]).tag == f"{SLD}StyledLayerDescriptor"


def test_conductor_style_has_a_category_per_load_case_in_the_report_colours(demo_gpkg):
    cases = list(dict.fromkeys(gpd.read_file(demo_gpkg, layer="conductors")["load_case"]))
    qml = next(r["styleQML"] for r in rows(demo_gpkg) if r["f_table_name"] == "conductors")
    renderer = ET.fromstring(qml).find("renderer-v2")
    assert renderer.get("type") == "categorizedSymbol" and renderer.get("attr") == "load_case"
    assert [c.get("value") for c in renderer.iter("category")] == cases
    colours = [s.find("layer/Option/Option[@name='line_color']").get("value") for s in renderer.iter("symbol")]
    expected = [palette.case_colour(i).lstrip("#") for i in range(len(cases))]
    assert [",".join(v.split(",")[:3]) for v in colours] == [
        ",".join(str(int(e[k:k + 2], 16)) for k in (0, 2, 4)) for e in expected]


@pytest.mark.parametrize("name", ["hotspots", "clearance_violations"])
def test_deficit_classes_follow_the_palette_breaks_in_qml_and_sld(demo_gpkg, name):
    row = next(r for r in rows(demo_gpkg) if r["f_table_name"] == name)
    ranges = list(ET.fromstring(row["styleQML"]).iter("range"))
    assert [float(r.get("lower")) for r in ranges] == list(palette.DEFICIT_BREAKS_M)
    # Every deficit the layer holds falls in a class.
    deficits = gpd.read_file(demo_gpkg, layer=name)["deficit_m"]
    assert (deficits < float(ranges[-1].get("upper"))).all()
    fills = [p.text for p in ET.fromstring(row["styleSLD"]).iter(f"{SE}SvgParameter") if p.get("name") == "fill"]
    assert fills == palette.DEFICIT_COLOURS


def _write(path, *names):
    frame = gpd.GeoDataFrame({"kind": ["strain"]}, geometry=[shapely.Point(0, 0, 1)], crs="EPSG:32633")
    write_layers(path, {n: (frame, "Point Z") for n in names})


def test_no_styled_layer_writes_no_table(tmp_path):
    path = tmp_path / "plain.gpkg"
    _write(path, "poles")
    assert write_layer_styles(path) == []
    with sqlite3.connect(path) as con:
        assert not con.execute("SELECT 1 FROM sqlite_master WHERE name = 'layer_styles'").fetchone()


def test_writing_twice_keeps_one_default_per_layer(tmp_path):
    path = tmp_path / "s.gpkg"
    _write(path, "structures")
    assert write_layer_styles(path) == ["structures"]
    write_layer_styles(path)
    assert len(rows(path)) == 1


def test_a_failing_finalize_leaves_no_output(tmp_path):
    path = tmp_path / "s.gpkg"
    frame = gpd.GeoDataFrame({"kind": ["strain"]}, geometry=[shapely.Point(0, 0, 1)], crs="EPSG:32633")

    def broken(temporary):
        raise RuntimeError("styles failed")

    with pytest.raises(RuntimeError):
        write_layers(path, {"structures": (frame, "Point Z")}, finalize=broken)
    assert list(tmp_path.iterdir()) == []
