"""Default layer styles stored in the GeoPackage, so the file opens styled in a desktop GIS.

Styles go into the ``layer_styles`` table, the convention the desktop GIS reads from a GeoPackage (one row
per layer and style: QML and SLD bodies, ``useAsDefault``), registered in ``gpkg_contents`` as an attributes
table. Colours come from :mod:`routesag.visual.palette`, the same as the report's figures.

References
----------
.. [1] OGC GeoPackage Encoding Standard 1.3.1 (OGC 12-128r18), 2021: gpkg_contents, attribute tables (2.4).
.. [2] OGC Symbology Encoding 1.1.0 (05-077r4) and Styled Layer Descriptor 1.1.0 (05-078r4), 2007.
"""
from __future__ import annotations

import sqlite3
import xml.etree.ElementTree as ET
from contextlib import closing
from datetime import datetime, timezone

from routesag.visual import palette

STYLE_TABLE = "layer_styles"
DEFICIT_TOP_M = 1000.0  # upper end of the last deficit class [m]: no real deficit reaches it
#: Line dash patterns per load case in the desktop GIS's words, matching palette.CASE_DASHES in spirit.
QML_DASHES = ["solid", "dash", "dash dot", "dot", "dash dot dot", "dot"]
SLD_DASHES = [None, "6 3", "6 2 1 2", "1 2", "5 1 1 1", "1 1"]

CREATE_TABLE = f"""CREATE TABLE IF NOT EXISTS "{STYLE_TABLE}" (
  "id" INTEGER PRIMARY KEY AUTOINCREMENT NOT NULL, "f_table_catalog" TEXT(256), "f_table_schema" TEXT(256),
  "f_table_name" TEXT(256), "f_geometry_column" TEXT(256), "styleName" TEXT(30), "styleQML" TEXT,
  "styleSLD" TEXT, "useAsDefault" BOOLEAN, "description" TEXT, "owner" TEXT(30), "ui" TEXT(30),
  "update_time" DATETIME DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')))"""


# ---- the styles: what each layer shows ---------------------------------------------------------------------------
def styles_for(con: sqlite3.Connection, load_cases=None) -> dict:
    """{layer: (geometry column, rules, label field or None)} for the styled layers present in the file.

    A rule is (label, filter, symbol); filter is ('=', field, value), ('range', field, low, high) or None.
    ``load_cases``: the conductors' load cases in the order of their first row, when the writer knows them
    (else they are read from the file, a scan of the whole layer).
    """
    geometry = dict(con.execute("SELECT table_name, column_name FROM gpkg_geometry_columns"))
    wanted = {"conductors": lambda: _case_rules(con, load_cases), "clearance_violations": lambda: _deficit_rules("violation"),
              "hotspots": lambda: _deficit_rules("hotspot"), "unknown_stretches": _unknown_rules,
              "structures": _structure_rules, "spans": _span_rules}
    labels = {"structures": "structure_id", "hotspots": "rank"}
    return {name: (geometry[name], rules(), labels.get(name)) for name, rules in wanted.items() if name in geometry}


def _case_rules(con, cases=None):
    if cases is None:
        cases = [row[0] for row in con.execute(
            'SELECT "load_case" FROM "conductors" GROUP BY "load_case" ORDER BY MIN(rowid)')]
    return [(f"load case {case}", ("=", "load_case", case),
             {"kind": "line", "colour": palette.case_colour(i), "width_mm": 0.6, "dash": i}) for i, case in
            enumerate(cases)]


def _deficit_rules(what):
    breaks = list(palette.DEFICIT_BREAKS_M) + [DEFICIT_TOP_M]
    shape, size = ("triangle", 3.2) if what == "violation" else ("circle", 5.0)
    rules = []
    for k, colour in enumerate(palette.DEFICIT_COLOURS):
        low, high = breaks[k], breaks[k + 1]
        label = f"{what}: deficit {low:g} m or more" if high == DEFICIT_TOP_M else \
            f"{what}: deficit {low:g} to {high:g} m"
        rules.append((label, ("range", "deficit_m", low, high),
                      {"kind": "marker", "shape": shape, "colour": colour, "size_mm": size + 0.6 * k}))
    return rules


def _unknown_rules():
    return [("clearance unknown (no data)", None,
             {"kind": "line", "colour": palette.UNKNOWN, "width_mm": 1.6, "dash": 1})]


def _structure_rules():
    return [("strain structure", ("=", "kind", "strain"),
             {"kind": "marker", "shape": "square", "colour": palette.STRUCTURE, "size_mm": 2.6}),
            ("suspension structure", ("=", "kind", "suspension"),
             {"kind": "marker", "shape": "circle", "colour": "#FFFFFF", "size_mm": 2.0})]


def _span_rules():
    return [("span", None, {"kind": "line", "colour": palette.SPAN, "width_mm": 0.4, "dash": 0})]


# ---- QML (the desktop GIS's own style document) -------------------------------------------------------------------
def _rgba(colour: str) -> str:
    c = colour.lstrip("#")
    return ",".join(str(int(c[i:i + 2], 16)) for i in (0, 2, 4)) + ",255"


def _props(layer, values: dict) -> None:
    """Symbol layer properties in both spellings: the Option map and the older prop list."""
    options = ET.SubElement(layer, "Option", type="Map")
    for key, value in values.items():
        ET.SubElement(options, "Option", type="QString", name=key, value=str(value))
    for key, value in values.items():
        ET.SubElement(layer, "prop", k=key, v=str(value))


def _qml_symbol(parent, name, symbol):
    kind = symbol["kind"]
    element = ET.SubElement(parent, "symbol", type=kind, name=name, alpha="1", clip_to_extent="1",
                            force_rhr="0")
    if kind == "line":
        layer = ET.SubElement(element, "layer", {"class": "SimpleLine", "enabled": "1", "locked": "0", "pass": "0"})
        _props(layer, {"line_color": _rgba(symbol["colour"]), "line_width": symbol["width_mm"],
                       "line_width_unit": "MM", "line_style": QML_DASHES[symbol["dash"] % len(QML_DASHES)],
                       "capstyle": "round", "joinstyle": "round"})
    else:
        layer = ET.SubElement(element, "layer", {"class": "SimpleMarker", "enabled": "1", "locked": "0",
                                                 "pass": "0"})
        _props(layer, {"name": symbol["shape"], "color": _rgba(symbol["colour"]),
                       "outline_color": "0,0,0,255", "outline_width": "0.3", "outline_width_unit": "MM",
                       "size": symbol["size_mm"], "size_unit": "MM",
                       "angle": "180" if symbol["shape"] == "triangle" else "0"})


def _qml_renderer(root, rules):
    first = rules[0][1]
    if first is None:
        renderer = ET.SubElement(root, "renderer-v2", type="singleSymbol", forceraster="0", symbollevels="0",
                                 enableorderby="0")
    elif first[0] == "=":
        renderer = ET.SubElement(root, "renderer-v2", type="categorizedSymbol", attr=first[1], forceraster="0",
                                 symbollevels="0", enableorderby="0")
        categories = ET.SubElement(renderer, "categories")
        for k, (label, (_, _, value), _) in enumerate(rules):
            ET.SubElement(categories, "category", render="true", symbol=str(k), value=str(value), label=label)
    else:
        renderer = ET.SubElement(root, "renderer-v2", type="graduatedSymbol", attr=first[1],
                                 graduatedMethod="GraduatedColor", forceraster="0", symbollevels="0",
                                 enableorderby="0")
        ranges = ET.SubElement(renderer, "ranges")
        for k, (label, (_, _, low, high), _) in enumerate(rules):
            ET.SubElement(ranges, "range", render="true", symbol=str(k), lower=f"{low:.6f}", upper=f"{high:.6f}",
                          label=label)
    symbols = ET.SubElement(renderer, "symbols")
    for k, (_, _, symbol) in enumerate(rules):
        _qml_symbol(symbols, str(k), symbol)


def _qml_labels(root, field):
    labeling = ET.SubElement(root, "labeling", type="simple")
    settings = ET.SubElement(labeling, "settings", calloutType="simple")
    ET.SubElement(settings, "text-style", fieldName=field, isExpression="0", fontSize="8", fontSizeUnit="Point",
                  textColor="0,0,0,255", fontWeight="75" if field == "rank" else "50")
    ET.SubElement(settings, "text-buffer", bufferDraw="1", bufferSize="0.8", bufferSizeUnits="MM",
                  bufferColor="255,255,255,255")
    # A hotspot's rank sits on its circle (1: over the point); a structure's id beside its marker (0: around it).
    ET.SubElement(settings, "placement", placement="1" if field == "rank" else "0", dist="1.5", distUnits="MM")


def qml(rules, label_field=None) -> str:
    root = ET.Element("qgis", version="3.22.0", styleCategories="Symbology|Labeling",
                      labelsEnabled="1" if label_field else "0")
    _qml_renderer(root, rules)
    if label_field:
        _qml_labels(root, label_field)
    ET.indent(root)
    return "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n" + ET.tostring(root, encoding="unicode")


# ---- SLD 1.1 (the open exchange format) ---------------------------------------------------------------------------
SLD_NS = {"": "http://www.opengis.net/sld", "se": "http://www.opengis.net/se", "ogc": "http://www.opengis.net/ogc",
          "xlink": "http://www.w3.org/1999/xlink", "xsi": "http://www.w3.org/2001/XMLSchema-instance"}


def _se(parent, tag, text=None, **attrs):
    element = ET.SubElement(parent, f"{{{SLD_NS['se']}}}{tag}", attrs)
    if text is not None:
        element.text = str(text)
    return element


def _sld_parameter(parent, name, value):
    _se(parent, "SvgParameter", value, name=name)


def _sld_filter(rule, condition):
    if condition is None:
        return
    ogc = SLD_NS["ogc"]
    where = ET.SubElement(rule, f"{{{ogc}}}Filter")
    if condition[0] == "=":
        _, field, value = condition
        test = ET.SubElement(where, f"{{{ogc}}}PropertyIsEqualTo")
        ET.SubElement(test, f"{{{ogc}}}PropertyName").text = field
        ET.SubElement(test, f"{{{ogc}}}Literal").text = str(value)
        return
    _, field, low, high = condition
    both = ET.SubElement(where, f"{{{ogc}}}And")
    for tag, bound in (("PropertyIsGreaterThanOrEqualTo", low), ("PropertyIsLessThan", high)):
        test = ET.SubElement(both, f"{{{ogc}}}{tag}")
        ET.SubElement(test, f"{{{ogc}}}PropertyName").text = field
        ET.SubElement(test, f"{{{ogc}}}Literal").text = f"{bound:g}"


def _sld_symbolizer(rule, symbol):
    if symbol["kind"] == "line":
        stroke = _se(_se(rule, "LineSymbolizer"), "Stroke")
        _sld_parameter(stroke, "stroke", symbol["colour"])
        _sld_parameter(stroke, "stroke-width", f"{symbol['width_mm'] * 3.78:.1f}")  # mm to pixels at 96 dpi
        dash = SLD_DASHES[symbol["dash"] % len(SLD_DASHES)]
        if dash:
            _sld_parameter(stroke, "stroke-dasharray", dash)
        return
    graphic = _se(_se(rule, "PointSymbolizer"), "Graphic")
    mark = _se(graphic, "Mark")
    _se(mark, "WellKnownName", symbol["shape"])
    _sld_parameter(_se(mark, "Fill"), "fill", symbol["colour"])
    stroke = _se(mark, "Stroke")
    _sld_parameter(stroke, "stroke", "#000000")
    _sld_parameter(stroke, "stroke-width", "1")
    _se(graphic, "Size", f"{symbol['size_mm'] * 3.78:.0f}")
    if symbol["shape"] == "triangle":
        _se(graphic, "Rotation", "180")


def sld(layer, rules, label_field=None) -> str:
    for prefix, uri in SLD_NS.items():
        ET.register_namespace(prefix, uri)
    root = ET.Element(f"{{{SLD_NS['']}}}StyledLayerDescriptor", {
        "version": "1.1.0",
        f"{{{SLD_NS['xsi']}}}schemaLocation": "http://www.opengis.net/sld StyledLayerDescriptor.xsd"})
    named = ET.SubElement(root, f"{{{SLD_NS['']}}}NamedLayer")
    _se(named, "Name", layer)
    style = ET.SubElement(named, f"{{{SLD_NS['']}}}UserStyle")
    _se(style, "Name", layer)
    feature_style = _se(style, "FeatureTypeStyle")
    for label, condition, symbol in rules:
        rule = _se(feature_style, "Rule")
        _se(rule, "Name", label)
        _se(_se(rule, "Description"), "Title", label)
        _sld_filter(rule, condition)
        _sld_symbolizer(rule, symbol)
    if label_field:
        rule = _se(feature_style, "Rule")
        text = _se(rule, "TextSymbolizer")
        value = _se(text, "Label")
        ET.SubElement(value, f"{{{SLD_NS['ogc']}}}PropertyName").text = label_field
    ET.indent(root)
    return ET.tostring(root, encoding="unicode", xml_declaration=True)


# ---- writing into the GeoPackage -----------------------------------------------------------------------------------
def write_layer_styles(path, load_cases=None) -> list[str]:
    """Store default styles for the styled layers present in the GeoPackage at ``path``; returns their names.

    Replaces earlier default styles of those layers; writes nothing when none of them is present.
    ``load_cases`` as in :func:`styles_for`.
    """
    with closing(sqlite3.connect(path)) as con, con:
        styles = styles_for(con, load_cases)
        if not styles:
            return []
        con.execute(CREATE_TABLE)
        _register(con)
        now = _now()
        for layer, (column, rules, label_field) in styles.items():
            con.execute(f'DELETE FROM "{STYLE_TABLE}" WHERE f_table_name = ? AND styleName = ?', (layer, layer))
            con.execute(f'UPDATE "{STYLE_TABLE}" SET useAsDefault = 0 WHERE f_table_name = ?', (layer,))
            con.execute(
                f'INSERT INTO "{STYLE_TABLE}" (f_table_catalog, f_table_schema, f_table_name, f_geometry_column, '
                'styleName, styleQML, styleSLD, useAsDefault, description, owner, ui, update_time) '
                'VALUES (?, ?, ?, ?, ?, ?, ?, 1, ?, ?, NULL, ?)',
                ("", "", layer, column, layer, qml(rules, label_field), sld(layer, rules, label_field),
                 f"routesag default style of {layer}", "routesag", now))
        count = con.execute(f'SELECT COUNT(*) FROM "{STYLE_TABLE}"').fetchone()[0]
        if con.execute("SELECT 1 FROM sqlite_master WHERE name = 'gpkg_ogr_contents'").fetchone():
            con.execute("INSERT OR REPLACE INTO gpkg_ogr_contents (table_name, feature_count) VALUES (?, ?)",
                        (STYLE_TABLE, count))
    return list(styles)


def _register(con):
    """The table in gpkg_contents as an attributes table, as the GeoPackage standard asks of every user table."""
    con.execute("INSERT OR REPLACE INTO gpkg_contents (table_name, data_type, identifier, description, last_change, "
                "srs_id) VALUES (?, 'attributes', ?, 'default layer styles', ?, 0)", (STYLE_TABLE, STYLE_TABLE, _now()))


def _now() -> str:
    return datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%f")[:-3] + "Z"
