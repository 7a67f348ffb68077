"""Read and check the crossings layer: roads, railways, water and other places with their own clearance.

Raw layer -> polygons in the working CRS, each with its category and the
required clearance after the voltage adder. Lines are buffered by their
width. Every problem is collected and raised together as one DataError, each
naming the file, the feature and the field.
"""
from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import shapely
from pyproj import CRS

from routesag.errors import DataError
from routesag.io.fields import apply_field_map, hint_for_missing
from routesag.io.structures import _near, _numeric, _short, finite_coordinates, reproject

#: routesag's fields of a crossings layer (the file's names map to them with [inputs.fields]).
FIELDS = ("category", "required_m", "width_m")

#: Categories measured against something other than a place on the ground.
RESERVED_CATEGORIES = ("surface",)
LINE_TYPES = ("LineString", "MultiLineString")
AREA_TYPES = ("Polygon", "MultiPolygon")


def read_crossings_file(path, layer=None) -> gpd.GeoDataFrame:
    """Read a crossings layer from any vector source GDAL reads.

    Parameters
    ----------
    path : str or Path
        Vector file (GeoPackage, Shapefile, GeoJSON, ...).
    layer : str, optional
        Layer inside a multi-layer source.
    """
    path = Path(path)
    where = f"crossings file {path}"
    if not path.exists():  # a folder may be a dataset (FileGDB, a folder of shapefiles): GDAL decides
        raise DataError(f"{where}: not found")
    try:
        layers = [name for name, _ in pyogrio.list_layers(path)]
        if layer is not None and layer not in layers:
            raise DataError(f"{where}: no layer {layer!r}; layers: {', '.join(layers) or 'none'}")
        gdf = pyogrio.read_dataframe(path, layer=layer)
    except DataError:
        raise
    except Exception as exc:  # GDAL raises several types for unreadable files
        raise DataError(f"{where}: cannot be read as a vector dataset ({_short(exc)})") from None
    if not isinstance(gdf, gpd.GeoDataFrame) or gdf.geometry is None:
        raise DataError(f"{where}: layer has no geometry; expected lines or polygons")
    return gdf


def check_crossings(gdf: gpd.GeoDataFrame, source, rules, work_crs, default_crs=None,
                    layer=None, fields=None, warn=None) -> gpd.GeoDataFrame:
    """Validate a crossings layer and turn it into areas with their required clearance.

    Parameters
    ----------
    gdf : geopandas.GeoDataFrame
        Raw layer: ``category`` (text, required), ``required_m`` (optional
        base clearance of the feature [m], overriding its category's),
        ``width_m`` (optional width of a line crossing [m]).
    source : str or Path
        File name for messages.
    rules : routesag.project.ClearanceRules
        Base clearances by category, the voltage adder and the default line width.
    work_crs : pyproj.CRS
        Projected working CRS in metres.
    default_crs : str, optional
        CRS for a layer that has none (``[inputs] crs``).
    layer : str, optional
        Layer name for messages.
    fields : dict, optional
        ``[inputs.fields]``: routesag field name -> the file's field name.
    warn : callable, optional
        Called with each warning (fields that look like routesag's but are not mapped).

    Returns
    -------
    geopandas.GeoDataFrame
        Columns ``feature`` (row number), ``category``, ``required_m`` (after the
        adder) [m]; (multi)polygon geometry in ``work_crs``.

    Raises
    ------
    DataError
        Every problem found, each naming the file, the feature and its category:
        bad fields, geometry that is not a line or polygon, a CRS that cannot be
        transformed to ``work_crs``, a feature the transformation cannot place, or
        one with no area.
    """
    where = f"crossings file {source}" + ("" if layer is None else f", layer {layer!r}")
    problems: list[str] = []
    gdf, warnings = apply_field_map(gdf, fields, FIELDS, where)
    for message in warnings:
        (warn or (lambda m: None))(message)
    if gdf.crs is None and default_crs:
        gdf = gdf.set_crs(default_crs)
    if gdf.crs is None:
        problems.append(f"{where}: no CRS; give the layer a CRS or set [inputs] crs in the project file")
    if "category" not in gdf.columns:
        problems.append(f"{where}: missing required field 'category'{hint_for_missing('category', gdf.columns)}")
    if problems:
        raise DataError(problems)
    categories = gdf["category"].astype("string").str.strip()
    labels = [f"feature {i + 1}" + ("" if pd.isna(c) else f" (category {c!r})") for i, c in enumerate(categories)]
    own = _optional_positive(gdf, "required_m", labels, where, problems)
    width = _optional_positive(gdf, "width_m", labels, where, problems)
    for i, category in enumerate(categories):
        problems.extend(f"{where}: {labels[i]}: {p}"
                        for p in _category_problems(category, own[i], rules.base_m))
        problems.extend(f"{where}: {labels[i]}: {p}" for p in _geometry_problems(gdf.geometry.iloc[i]))
    if problems:
        raise DataError(problems)
    base = np.where(np.isnan(own), [rules.base_m.get(c, np.nan) for c in categories], own)
    geometries = _in_working_crs(gdf, work_crs, labels, where)
    areas = _as_areas(geometries, np.where(np.isnan(width), rules.crossing_width_m, width))
    for i in np.flatnonzero(shapely.is_empty(areas) | (shapely.area(areas) <= 0.0)):
        problems.append(f"{where}: {labels[i]}: geometry has no area in the working CRS (a collapsed polygon "
                        "or a zero-length line): fix or remove the feature")
    if problems:
        raise DataError(problems)
    return gpd.GeoDataFrame({"feature": np.arange(1, len(gdf) + 1), "category": categories.to_numpy(dtype=object),
                             "required_m": base + rules.adder_m}, geometry=areas, crs=work_crs)


def _optional_positive(gdf, name, labels, where, problems) -> np.ndarray:
    if name not in gdf.columns:
        return np.full(len(gdf), np.nan)
    values = _numeric(gdf[name], name, labels, where, problems)
    for i in np.flatnonzero(values <= 0):
        problems.append(f"{where}: {labels[i]}: field {name!r} = {values[i]:g} must be > 0")
    return values


def _category_problems(category, own_required, base_m) -> list[str]:
    if pd.isna(category) or category == "":
        return ["field 'category' is empty"]
    if category in RESERVED_CATEGORIES:
        return [f"category {category!r} is reserved for the surface model; name the crossing's kind"]
    if category not in base_m and np.isnan(own_required):
        return [f"category {category!r} has no required clearance: add it to [clearance.required_m] or give "
                f"the feature a required_m{_near(category, base_m)}"]
    return []


def _geometry_problems(geom) -> list[str]:
    if geom is None or geom.is_empty:
        return ["geometry is empty"]
    if geom.geom_type not in LINE_TYPES + AREA_TYPES:
        return [f"geometry is {geom.geom_type}; expected a line or a polygon"]
    return []


def _in_working_crs(gdf, work_crs, labels, where) -> np.ndarray:
    """The layer's geometries in the working CRS; refuses a CRS pair PROJ cannot relate and any feature the
    transformation cannot place (infinite coordinates would become empty areas, and the rule be lost)."""
    work_name = CRS(work_crs).name
    moved = reproject(gdf, work_crs, where, f"the working CRS {work_name!r}",
                      advice="give the crossings layer the structures' CRS").geometry.values
    bad = np.flatnonzero(~finite_coordinates(moved))
    if len(bad):
        raise DataError([f"{where}: {labels[i]}: coordinates cannot be placed in the working CRS {work_name!r} "
                         f"from the layer's CRS {CRS(gdf.crs).to_string()}; check the layer's CRS (projected "
                         "metres labelled as lat/lon?)" for i in bad])
    return moved


def _as_areas(geometries, width_m) -> np.ndarray:
    """Polygons as they are (repaired if invalid); lines buffered by half their width, flat ends."""
    is_line = np.isin(shapely.get_type_id(geometries), [1, 5])  # LineString, MultiLineString
    areas = shapely.make_valid(geometries)
    areas[is_line] = shapely.buffer(geometries[is_line], width_m[is_line] / 2.0, cap_style="flat")
    return areas
